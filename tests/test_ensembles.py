"""Ensembles and formats: multi-model PDB files as trajectories (first model the topology),
gzip-compressed structures and trajectories, malformed MODEL/ATOM records named with file and
line."""
from __future__ import annotations

import gzip
import json
import shutil

import MDAnalysis as mda
import numpy as np
import pytest
from data import NMR_NEOPETROSIAMIDE_PDB, OPENMM_TEST_PDB
from openmm import app
from openmm_reference import openmm_force_energies
from test_builtin_vs_openmm import _compare, _openmm_system

from app.cli.main import main
from energy.decomposition.pipeline import compute
from energy.errors import StructureFileError
from energy.io.builtin import load_builtin_prepared
from energy.io.loaders import load_system
from energy.io.preparation import PreparationOptions
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.terms.registry import TERMS

REPAIR = PreparationOptions(repair=True)


def test_models_of_an_nmr_ensemble_are_frames(tmp_path):
    """nmr_neopetrosiamide.pdb (MDAnalysisTests; PDB 2JUY, 24 models, SME 24 made MET by
    --repair keeping every deposited atom). Expected: --frames over the models gives, frame by
    frame, the totals of --frame N to 1e-9 kcal/mol; model 12 equals OpenMM createSystem on the
    prepared topology with that model's coordinates (project rule); the placeholder cell is noted."""
    out = tmp_path / "ensemble.json"
    assert main(["scan", NMR_NEOPETROSIAMIDE_PDB, "--repair", "--frames", "0:24:6", "--json", str(out),
                 "--quiet"]) == 0
    doc = json.loads(out.read_text())
    assert doc["frames"] == [0, 6, 12, 18] and doc["inputs"]["n_frames_in_file"] == 24
    assert doc["settings"]["cell_note"].startswith("unit cell ignored: CRYST1 1 x 1 x 1 A")
    assert doc["preparation"]["residues_replaced"] == [{"residue": "A:SME24", "by": "MET"}]
    assert doc["preparation"]["n_models"] == 24
    for k, frame in enumerate(doc["frames"]):
        single = load_system(NMR_NEOPETROSIAMIDE_PDB, frame=frame, preparation=REPAIR)
        totals = compute(single.system, single.frame, EnergySettings()).totals
        for term in (*TERMS, "total"):
            assert doc["per_frame_totals"][term][k] == pytest.approx(totals[term], abs=1e-9, rel=0)
    system, _, topology, prepared = load_builtin_prepared(NMR_NEOPETROSIAMIDE_PDB, REPAIR)
    model = prepared.models[12]
    u = mda.Universe(NMR_NEOPETROSIAMIDE_PDB)  # independent reader of the same model
    u.trajectory[12]
    assert np.allclose(model[0], u.atoms.positions[0], atol=1e-3)
    ours = compute(system, Frame(model), EnergySettings())
    _compare(ours, openmm_force_energies(_openmm_system(topology, app.NoCutoff), model))


def test_frame_of_an_ensemble_on_the_command_line(tmp_path):
    """--frame 5 of the ensemble (failed before on H/H1 naming with a message about a PSF).
    Expected: exit 0 and frame 5 in the JSON."""
    out = tmp_path / "frame5.json"
    assert main(["scan", NMR_NEOPETROSIAMIDE_PDB, "--repair", "--frame", "5", "--json", str(out), "--quiet"]) == 0
    assert json.loads(out.read_text())["inputs"]["frame"] == 5
    with pytest.raises(StructureFileError, match=r"model 24 requested but the file has 24 model\(s\) \(0..23\)"):
        load_system(NMR_NEOPETROSIAMIDE_PDB, frame=24, preparation=REPAIR)


def _edited(tmp_path, name, old, new):
    text = open(NMR_NEOPETROSIAMIDE_PDB).read()
    assert old in text
    path = tmp_path / name
    path.write_text(text.replace(old, new, 1))
    line = text[:text.index(old)].count("\n") + 1
    return str(path), line


def test_malformed_model_record_names_file_and_line(tmp_path):
    path, line = _edited(tmp_path, "bad_model.pdb", "MODEL        2", "MODEL      two")
    with pytest.raises(StructureFileError) as err:
        load_system(path, preparation=REPAIR)
    assert str(err.value) == (f"{path}:{line}: MODEL record: the model number 'two' is not an integer "
                              "(wwPDB format: columns 11-14)")


def test_model_number_in_other_columns_is_accepted(tmp_path):
    """'MODEL 2' (the number not in columns 11-14) is read as model 2: 24 models as before."""
    path, _ = _edited(tmp_path, "loose_model.pdb", "MODEL        2", "MODEL 2")
    assert len(load_system(path, preparation=REPAIR).models) == 24


def test_malformed_atom_record_names_file_and_line(tmp_path):
    first_atom = next(line for line in open(NMR_NEOPETROSIAMIDE_PDB) if line.startswith("ATOM"))
    broken = first_atom[:38] + "   1.2x5" + first_atom[46:]
    path, line = _edited(tmp_path, "bad_atom.pdb", first_atom, broken)
    with pytest.raises(StructureFileError) as err:
        load_system(path, preparation=REPAIR)
    # the strict coordinate parser (energy/io/coordinate_text.py) reads the record first
    assert str(err.value) == (f"{path}:{line}: ATOM y coordinate (columns 39-46): expected a number "
                              "(ASCII digits, sign, decimal point, exponent), got '1.2x5'")


def test_gzipped_structure_and_trajectory(tmp_path):
    """OpenMM's test.pdb (gzipped) with a 3-frame DCD of it (gzipped). Expected: per-frame totals
    bit-identical to the plain files."""
    u = mda.Universe(OPENMM_TEST_PDB)
    dcd = tmp_path / "three.dcd"
    with mda.Writer(str(dcd), len(u.atoms)) as w:
        for shift in (0.0, 0.1, 0.2):
            u.atoms.positions = u.atoms.positions + shift
            w.write(u.atoms)
    for src in (dcd, OPENMM_TEST_PDB):
        with open(src, "rb") as fh, gzip.open(str(tmp_path / (str(src).rsplit("/", 1)[-1] + ".gz")), "wb") as gz:
            shutil.copyfileobj(fh, gz)
    runs = []
    for structure, coords in ((OPENMM_TEST_PDB, dcd), (tmp_path / "test.pdb.gz", tmp_path / "three.dcd.gz")):
        out = tmp_path / "t.json"
        assert main(["scan", str(structure), str(coords), "--frames", "0:3", "--cutoff", "9",
                     "--json", str(out), "--quiet"]) == 0
        runs.append(json.loads(out.read_text())["per_frame_totals"])
    assert runs[0] == runs[1] and len(runs[0]["total"]) == 3
