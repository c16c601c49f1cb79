"""The `tessera scan` command: its JSON and CSV outputs, and clear one-line errors on bad input."""
from __future__ import annotations

import csv
import json
import os
import subprocess
import sys

import numpy as np
import pytest
from data import REPO

from app.cli.main import main
from energy.decomposition.pipeline import compute
from energy.io.loaders import load_system
from energy.model.settings import EnergySettings
from energy.terms.registry import TERMS

PEPTIDE = os.path.join(REPO, "samples", "peptide")
PSF = os.path.join(PEPTIDE, "probe_peptide.psf")
PRM = os.path.join(PEPTIDE, "probe_ff.prm")
PDB = os.path.join(PEPTIDE, "probe_peptide.pdb")


def _scan(tmp_path, *args):
    out = tmp_path / "out.json"
    code = main(["scan", *args, "--json", str(out), "--csv-dir", str(tmp_path / "csv"), "--quiet"])
    return code, out


def test_scan_json_has_the_documented_fields_and_matches_the_api(tmp_path):
    code, out = _scan(tmp_path, PSF, PDB, "--params", PRM, "--cutoff", "10",
                      "--electrostatics", "reaction-field", "--select-a", "resid 1 2", "--select-b", "resid 3 4 5")
    assert code == 0
    doc = json.loads(out.read_text())
    for key in ("units", "n_atoms", "n_residues", "settings", "totals", "residues", "pairs", "timings"):
        assert key in doc
    assert set(doc["totals"]) == {*TERMS, "total"}
    assert {"read", "parameterise", "compute"} <= set(doc["timings"])
    loaded = load_system(PSF, PDB, [PRM])
    api = compute(loaded.system, loaded.frame, EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field"))
    for term in (*TERMS, "total"):
        assert doc["totals"][term] == pytest.approx(api.totals[term], rel=1e-12, abs=1e-12)
    assert doc["n_atoms"] == loaded.system.n_atoms and len(doc["residues"]) == doc["n_residues"]
    assert all(p["i"] <= p["j"] for p in doc["pairs"])
    pair_sum = {t: sum(p[t] for p in doc["pairs"]) for t in TERMS}
    for term in TERMS:
        assert pair_sum[term] == pytest.approx(doc["totals"][term], rel=1e-9, abs=1e-9)
    assert doc["group_interaction"]["n_atoms_a"] > 0 and np.isfinite(doc["group_interaction"]["total"])


def test_csv_tables_read_back_to_the_json_numbers(tmp_path):
    code, out = _scan(tmp_path, PSF, PDB, "--params", PRM)
    assert code == 0
    doc = json.loads(out.read_text())
    with open(tmp_path / "csv" / "residue_pairs.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(doc["pairs"])
    for row, pair in zip(rows, doc["pairs"]):
        assert (int(row["i"]), int(row["j"])) == (pair["i"], pair["j"])
        assert float(row["total"]) == pytest.approx(pair["total"], abs=1e-6)
    with open(tmp_path / "csv" / "residues.csv") as fh:
        res_rows = list(csv.DictReader(fh))
    assert sum(float(r["total"]) for r in res_rows) == pytest.approx(doc["totals"]["total"], abs=1e-4)


def _run_cli(*args, cwd=None):
    proc = subprocess.run([sys.executable, "-m", "app.cli.main", *args], capture_output=True, text=True, cwd=cwd)
    return proc.returncode, proc.stdout, proc.stderr


def _assert_one_line_error(code, err, *fragments):
    assert code == 2
    assert "Traceback" not in err
    lines = [l for l in err.strip().splitlines() if l.strip()]
    assert len(lines) == 1, err
    for f in fragments:
        assert f in lines[0], lines[0]


def test_missing_file(tmp_path):
    code, _, err = _run_cli("scan", str(tmp_path / "nope.pdb"))
    _assert_one_line_error(code, err, "nope.pdb", "not found")


def test_garbage_pdb(tmp_path):
    bad = tmp_path / "bad.pdb"
    bad.write_text("this is not a structure\nATOM  garbage\n")
    out = tmp_path / "o.json"
    code, _, err = _run_cli("scan", str(bad), "--json", str(out))
    _assert_one_line_error(code, err, "bad.pdb")
    assert not out.exists()


def test_unknown_residue_is_named(tmp_path):
    # An invented ligand (three heavy atoms, residue LIG) that no Amber 14 template matches.
    lines = [l for l in open(PDB).read().splitlines() if l.startswith(("ATOM", "HETATM"))]
    lig = [f"HETATM{9001 + k:5d}  {name:<3} LIG B 901    {20.0 + k:8.3f}{20.0:8.3f}{20.0:8.3f}"
           f"  1.00  0.00           {el:>2}"
           for k, (name, el) in enumerate([("C1", "C"), ("O1", "O"), ("S1", "S")])]
    bad = tmp_path / "ligand.pdb"
    bad.write_text("\n".join(lines + lig + ["END"]) + "\n")
    code, _, err = _run_cli("scan", str(bad))
    _assert_one_line_error(code, err, "LIG901", "template")


def test_missing_parameters_are_listed_in_one_go(tmp_path):
    text = open(PRM).read()
    start = text.upper().index("\nANGLES")
    end = text.upper().index("\nDIHEDRALS")
    cut = tmp_path / "cut.prm"
    cut.write_text(text[:start] + text[end:])  # drop every angle parameter
    code, _, err = _run_cli("scan", PSF, PDB, "--params", str(cut))
    _assert_one_line_error(code, err, "missing parameters", "angle")


def test_atom_count_mismatch_names_both(tmp_path):
    lines = [l for l in open(PDB).read().splitlines()]
    atom_lines = [i for i, l in enumerate(lines) if l.startswith(("ATOM", "HETATM"))]
    del lines[atom_lines[-1]]
    short = tmp_path / "short.pdb"
    short.write_text("\n".join(lines) + "\n")
    code, _, err = _run_cli("scan", PSF, str(short), "--params", PRM)
    _assert_one_line_error(code, err, "atoms")


def test_nan_coordinates(tmp_path):
    lines = open(PDB).read().splitlines()
    k = next(i for i, l in enumerate(lines) if l.startswith(("ATOM", "HETATM")))
    lines[k] = lines[k][:30] + "     nan" + lines[k][38:]
    bad = tmp_path / "nan.pdb"
    bad.write_text("\n".join(lines) + "\n")
    code, _, err = _run_cli("scan", PSF, str(bad), "--params", PRM)
    _assert_one_line_error(code, err)
    assert "nan" in err.lower() or "finite" in err.lower()


def test_bad_settings(tmp_path):
    code, _, err = _run_cli("scan", PSF, PDB, "--params", PRM, "--switch", "8")
    _assert_one_line_error(code, err, "cutoff")
    code, _, err = _run_cli("scan", PSF, PDB, "--params", PRM, "--electrostatics", "reaction-field")
    _assert_one_line_error(code, err, "cutoff")


def test_summary_on_stdout():
    code, out, err = _run_cli("scan", PSF, PDB, "--params", PRM)
    assert code == 0, err
    assert "per-term totals" in out and "cmap" in out


def test_window_without_a_display_says_so_in_one_line():
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")}
    proc = subprocess.run([sys.executable, "-m", "app.cli.main"], capture_output=True, text=True, env=env)
    assert proc.returncode == 3
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "no display" in lines[0] and "tessera scan" in lines[0]


def test_the_command_runs_exit_handlers_and_keeps_its_exit_status(tmp_path):
    """`tessera` ends with os._exit after its work (skipping the interpreter's slow teardown):
    the exit handlers registered during the run (e.g. removing a decompressed trajectory's
    temporary folder) still run, output is flushed, and the exit status is main()'s."""
    marker = tmp_path / "handler_ran"
    script = ("import atexit, sys\n"
              f"atexit.register(lambda: open({str(marker)!r}, 'w').write('ran'))\n"
              f"sys.argv = ['tessera', 'scan', {str(tmp_path / 'missing.pdb')!r}]\n"
              "from app.cli.main import console_main\n"
              "print('before', flush=False)\n"
              "console_main()\n")
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert proc.returncode == 2                    # the missing file's one-line error
    assert "not found" in proc.stderr
    assert proc.stdout.strip() == "before"         # buffered output is flushed before the exit
    assert marker.read_text() == "ran"
