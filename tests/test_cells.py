"""Periodic cells done right: bonded terms never use the minimum image, implausible cells (the
PDB's 1 A placeholder, a cell too small for its atoms) are ignored with a note, and molecules
wrapped across a periodic box are made whole on reading."""
from __future__ import annotations

import json

import MDAnalysis as mda
import numpy as np
import pytest
from data import NMR_NEOPETROSIAMIDE_PDB, OPENMM_TEST_PDB
from openmm import app
from openmm_reference import assert_close, openmm_force_energies
from test_builtin_vs_openmm import _compare, _openmm_system
from tiny import random_system

from app.cli.main import main
from energy._kernels.pbc import box_matrix
from energy.decomposition.pipeline import compute
from energy.io.builtin import load_builtin
from energy.io.loaders import load_system
from energy.io.whole import split_bonds
from energy.model.cell import MIN_VOLUME_PER_ATOM, cell_volume, check_cell
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.terms.registry import TERMS


def _sme_as_met(path, out):
    """nmr_neopetrosiamide.pdb (MDAnalysisTests; PDB 2JUY, solution NMR, 24 models, CRYST1
    1.000 1.000 1.000) with its one methionine sulfoxide (SME 24) turned into its parent MET by
    dropping the sulfoxide oxygen OE, so that Amber 14 matches every residue."""
    lines = []
    for line in open(path):
        if line.startswith(("ATOM", "HETATM")) and line[17:20] == "SME":
            if line[12:16].strip() == "OE":
                continue
            line = "ATOM  " + line[6:17] + "MET" + line[20:]
        lines.append(line)
    out.write_text("".join(lines))
    return str(out)


@pytest.fixture(scope="module")
def nmr_entry(tmp_path_factory):
    path = _sme_as_met(NMR_NEOPETROSIAMIDE_PDB, tmp_path_factory.mktemp("nmr") / "2juy_met.pdb")
    system, frame, topology, _ = load_builtin(path)
    return path, system, frame, topology


def test_placeholder_cell_of_an_nmr_entry_is_ignored(nmr_entry):
    """The issue's case: with the defaults, the 1 A placeholder cell must change nothing. Expected:
    every term equal to the --no-periodic run to 1e-9 kcal/mol, and equal to OpenMM's
    createSystem (NoCutoff, no periodic box) on the same topology by the project's rule."""
    _, system, frame, topology = nmr_entry
    assert np.allclose(frame.box, [1, 1, 1, 90, 90, 90])  # the file's CRYST1 reached the frame
    default = compute(system, frame, EnergySettings())
    plain = compute(system, frame, EnergySettings(use_periodic=False))
    for term in (*TERMS, "total"):
        assert default.totals[term] == pytest.approx(plain.totals[term], abs=1e-9, rel=0)
    assert "placeholder" in default.cell_note and not default.periodic
    assert plain.cell_note == ""
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(default, ref)
    # 28 residues of a small peptide: a thermal structure's bonds are far below 1 kcal/mol each
    # on average (common practice); the minimum image in a 1 A cell gave tens of kcal/mol each.
    assert default.totals["bond"] / len(system.bonds) < 1.0


def test_placeholder_cell_with_a_cutoff_equals_no_periodic(nmr_entry):
    """With a cutoff the placeholder used to stop the run (cell narrower than twice the cutoff);
    now it is ignored. Expected: equal to the --no-periodic run to 1e-9 kcal/mol."""
    _, system, frame, _ = nmr_entry
    s = dict(cutoff_angstrom=9.0, electrostatics="reaction-field")
    default = compute(system, frame, EnergySettings(**s))
    plain = compute(system, frame, EnergySettings(**s, use_periodic=False))
    for term in (*TERMS, "total"):
        assert default.totals[term] == pytest.approx(plain.totals[term], abs=1e-9, rel=0)


def test_cli_reports_the_ignored_cell(nmr_entry, tmp_path, capsys):
    path = nmr_entry[0]
    out = tmp_path / "nmr.json"
    assert main(["scan", path, "--json", str(out)]) == 0
    text = capsys.readouterr().out
    doc = json.loads(out.read_text())
    assert doc["settings"]["cell_note"].startswith("unit cell ignored: CRYST1 1 x 1 x 1 A")
    assert "note: unit cell ignored: CRYST1 1 x 1 x 1 A" in text
    assert main(["scan", path, "--json", str(out), "--no-periodic", "--quiet"]) == 0
    assert json.loads(out.read_text())["settings"]["cell_note"] is None


def test_cell_volume_of_a_rhombic_dodecahedron():
    """A rhombic dodecahedron of edge a (a = b = c, angles 60, 60, 90 degrees; the CRYST1 of
    MDAnalysisTests' adk_open.pdb) has volume a^3 / sqrt(2) (textbook geometry)."""
    a = 80.017
    assert cell_volume([a, a, a, 60, 60, 90]) == pytest.approx(a ** 3 / np.sqrt(2), rel=1e-12)
    assert cell_volume([a, a, a, 60, 60, 90]) == pytest.approx(abs(np.linalg.det(box_matrix(
        np.array([a, a, a, 60, 60, 90.0])))), rel=1e-12)


def test_cell_too_small_for_its_atoms_is_ignored():
    """100 atoms in a cell of 5 x 5 x 5 A (1.25 A^3 per atom, below the 2 A^3 floor; liquid water
    has about 10 A^3 per atom, common practice). Expected: ignored with a note; energies equal to
    --no-periodic to 1e-9; a cell of 3 A^3 per atom is accepted."""
    system, frame = random_system(np.random.default_rng(3), n_residues=20, box=30.0, n_exceptions=0)
    n = system.n_atoms
    edge = (1.25 * n) ** (1 / 3)
    small = Frame(frame.positions, [edge, edge, edge, 90, 90, 90])
    check = check_cell(small.box, n)
    assert check.box is None and f"below the {MIN_VOLUME_PER_ATOM:g} A^3 floor" in check.note
    s = dict(cutoff_angstrom=1.0)
    ours = compute(system, small, EnergySettings(**s))
    plain = compute(system, small, EnergySettings(**s, use_periodic=False))
    assert ours.totals == pytest.approx(plain.totals, abs=1e-9, rel=0) and "1.25 A^3 per atom" in ours.cell_note
    assert check_cell([(3.0 * n) ** (1 / 3)] * 3 + [90, 90, 90], n).box is not None


@pytest.fixture(scope="module")
def wrapped_dcds(tmp_path_factory):
    """OpenMM's test.pdb (protein in a periodic water box) written to two DCDs: as it is, and
    with every atom wrapped into the box (as simulation programs write trajectories), which
    splits molecules across the faces."""
    folder = tmp_path_factory.mktemp("wrapped")
    u = mda.Universe(OPENMM_TEST_PDB)
    as_is, wrapped = folder / "as_is.dcd", folder / "wrapped.dcd"
    with mda.Writer(str(as_is), len(u.atoms)) as w:
        w.write(u.atoms)
    u.atoms.wrap(compound="atoms")
    with mda.Writer(str(wrapped), len(u.atoms)) as w:
        w.write(u.atoms)
    return str(as_is), str(wrapped)


def test_molecules_wrapped_across_the_box_are_made_whole(wrapped_dcds):
    """Expected: the wrapped frame has split bonds; after reading, none; every term with a
    periodic 10 A cutoff equals the run on the unwrapped coordinates (1e-6 relative: the same
    float32 DCD values, shifted by whole cell vectors), and OpenMM CutoffPeriodic on the same
    topology by the project's rule."""
    as_is, wrapped = wrapped_dcds
    settings = EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field")
    raw = mda.Universe(OPENMM_TEST_PDB, wrapped)
    loaded = load_system(OPENMM_TEST_PDB, wrapped)
    bonds = loaded.system.bonds.atoms
    assert len(split_bonds(raw.atoms.positions.astype(float), raw.dimensions, bonds)) > 10
    assert len(split_bonds(loaded.frame.positions, loaded.frame.box, bonds)) == 0
    ours = compute(loaded.system, loaded.frame, settings)
    reference_loaded = load_system(OPENMM_TEST_PDB, as_is)
    reference = compute(reference_loaded.system, reference_loaded.frame, settings)
    for term in (*TERMS, "total"):
        assert ours.totals[term] == pytest.approx(reference.totals[term], rel=1e-6, abs=1e-6)
    _, _, topology, _ = load_builtin(OPENMM_TEST_PDB)
    ref = openmm_force_energies(_openmm_system(topology, app.CutoffPeriodic, 1.0),
                                reference_loaded.frame.positions)
    _compare(ours, ref)
    assert_close(ours.totals["bond"], ref["HarmonicBondForce"], "bond after making molecules whole")


def test_placeholder_cell_through_the_command_line_with_repair(tmp_path):
    """nmr_neopetrosiamide.pdb (MDAnalysisTests; PDB 2JUY) as a user runs it: --repair (SME ->
    MET), defaults vs --no-periodic, and with a 10 A cutoff. Expected: the JSON totals equal to
    1e-9 kcal/mol, the first run noting the ignored cell."""
    docs = {}
    for name, extra in (("default", []), ("plain", ["--no-periodic"]),
                        ("cutoff", ["--cutoff", "10"]), ("cutoff_plain", ["--cutoff", "10", "--no-periodic"])):
        out = tmp_path / f"{name}.json"
        assert main(["scan", NMR_NEOPETROSIAMIDE_PDB, "--repair", *extra, "--json", str(out), "--quiet"]) == 0
        docs[name] = json.loads(out.read_text())
    for a, b in (("default", "plain"), ("cutoff", "cutoff_plain")):
        for term in (*TERMS, "total"):
            assert docs[a]["totals"][term] == pytest.approx(docs[b]["totals"][term], abs=1e-9, rel=0)
    assert "placeholder" in docs["default"]["settings"]["cell_note"]
    assert docs["plain"]["settings"]["cell_note"] is None


def test_a_crystal_in_a_narrow_lattice_cell_stays_as_deposited():
    """1YJP.cif (MDAnalysisTests; PDB 1YJP): its lattice cell is only 4.87 A wide along b, so half
    the width (2.43 A) is shorter than a stretched S-S bond (2.6 A, seen in poorly refined
    entries: common practice). Expected: such a bond is not taken for a wrapped one (only bonds
    over 3 A are), a wrapped bond (4.0 A apparent) is, and 1YJP itself loads with the file's
    coordinates untouched."""
    from data import MMCIF_1YJP

    from energy.io.builtin import load_builtin_prepared
    from energy.io.preparation import PreparationOptions
    options = PreparationOptions(add_hydrogens=True)
    loaded = load_system(MMCIF_1YJP, preparation=options)
    box = loaded.frame.box
    assert check_cell(box, loaded.system.n_atoms).box is not None
    x = np.array([[0.0, 0.0, 0.0], [0.0, 2.6, 0.0], [5.0, 0.0, 0.0], [5.0, 4.0, 0.0]])
    assert split_bonds(x, box, np.array([[0, 1], [2, 3]])).tolist() == [1]
    assert np.array_equal(loaded.frame.positions, load_builtin_prepared(MMCIF_1YJP, options)[1].positions)
