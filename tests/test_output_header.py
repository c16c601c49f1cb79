"""Every output document starts with one header: program, version, kind, inputs, settings
(energy/output/header.py), and documents of the earlier layout read through read_header.

Inputs: the invented probe peptide (samples/peptide, PSF + CHARMM-style parameters). The checks
are on the documents' structure and on the values the commands were given (paths, frames,
settings), so the outside reference is the command line itself.
"""
from __future__ import annotations

import json
import os

import pytest
from data import REPO

from app.cli.main import main
from energy.output.header import KINDS, PROGRAM_VERSION, document_header, read_header
from energy.output.result_file import PROGRAM_VERSION as RESULT_FILE_VERSION

PEPTIDE = os.path.join(REPO, "samples", "peptide")
PSF = os.path.join(PEPTIDE, "probe_peptide.psf")
PRM = os.path.join(PEPTIDE, "probe_ff.prm")
PDB = os.path.join(PEPTIDE, "probe_peptide.pdb")
HEADER = ["program", "version", "kind", "inputs", "settings"]


def _run(tmp_path, name, argv):
    out = tmp_path / f"{name}.json"
    assert main([*argv, "--json", str(out), "--quiet"]) == 0
    return json.loads(out.read_text())


def test_every_command_writes_the_same_header(tmp_path):
    docs = {
        "scan": _run(tmp_path, "scan", ["scan", PSF, PDB, "--params", PRM, "--cutoff", "9"]),
        "trajectory": _run(tmp_path, "traj", ["scan", PSF, PDB, "--params", PRM, "--frames", "0:1"]),
        "comparison": _run(tmp_path, "cmp", ["compare", PSF, PSF, PDB, "--params", PRM]),
        "overlaps": _run(tmp_path, "ovl", ["overlaps", PSF, PDB, "--params", PRM]),
    }
    assert set(docs) == set(KINDS)
    for kind, doc in docs.items():
        assert list(doc)[:5] == HEADER, kind                     # the header comes first, in order
        assert doc["program"] == "tessera" and doc["version"] == PROGRAM_VERSION == RESULT_FILE_VERSION
        assert doc["kind"] == kind
        assert isinstance(doc["inputs"], dict) and isinstance(doc["settings"], dict)
        assert not {"source", "coords", "params", "options"} & set(doc), kind   # the old keys are gone
        assert read_header(doc) == {k: doc[k] for k in HEADER}
    # the inputs are the ones given on the command line, under one set of names
    for kind in ("scan", "trajectory", "overlaps"):
        inputs = docs[kind]["inputs"]
        assert os.path.samefile(inputs["structure"], PSF) and os.path.samefile(inputs["coordinates"], PDB)
        assert [os.path.basename(p) for p in inputs["parameters"]] == ["probe_ff.prm"]
    assert docs["scan"]["settings"]["cutoff_angstrom"] == 9.0
    assert docs["trajectory"]["inputs"]["frames"] == "0:1"
    assert docs["overlaps"]["settings"]["overlap"] == pytest.approx(0.4)    # the default of --overlap
    assert {"first", "second", "parameters"} == set(docs["comparison"]["inputs"])


def test_documents_of_the_earlier_layout_stay_readable():
    # the clash report as written before this header (kind "tessera-clashes", source/options)
    old_clashes = {"kind": "tessera-clashes", "units": {},
                   "source": {"structure": "a.psf", "coords": "a.pdb", "params": ["a.prm"], "frame": 0},
                   "options": {"overlap": 0.4}, "clashes": []}
    h = read_header(old_clashes)
    assert h["kind"] == "overlaps" and h["version"] is None
    assert h["inputs"] == {"structure": "a.psf", "coordinates": "a.pdb", "parameters": ["a.prm"], "frame": 0}
    assert h["settings"] == {"overlap": 0.4}
    old_scan = {"program": "tessera", "units": {}, "inputs": {"structure": "a.pdb"}, "settings": {},
                "totals": {}, "pairs": []}
    assert read_header(old_scan)["kind"] == "scan"
    old_cmp = {"program": "tessera", "kind": "comparison (second minus first)", "inputs": {}, "settings": {},
               "mutated_residues": []}
    assert read_header(old_cmp)["kind"] == "comparison"
    old_traj = {"program": "tessera", "kind": "trajectory", "inputs": {}, "settings": {}, "per_frame_totals": {}}
    assert read_header(old_traj)["kind"] == "trajectory"


def test_an_unknown_kind_is_refused():
    with pytest.raises(ValueError, match="unknown output kind"):
        document_header("clashes", {}, {})
