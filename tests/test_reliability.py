"""Issue 14: no silently wrong number, no traceback, on damaged input.

One regression test per finding of the issue's table (the damaged probe peptide of
``samples/peptide/``, invented), then the building blocks with outside references: Python's own
``float``/``int`` (what the strict parser must refuse although Python accepts it), MDAnalysis's
``triclinic_vectors`` (which returns zero vectors for a box that is no cell) and
``self_distance_array`` (brute-force minimum-image distances) for the geometry checks.
"""
from __future__ import annotations

import io
import json
import math
import os
import re
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import numpy as np
import pytest
from tiny import make_system

from app.cli.main import main
from energy.decomposition.pipeline import EnergyResult, compute
from energy.errors import (
    MESSAGE_CAP,
    EnergyError,
    GeometryError,
    InputMismatchError,
    NonFiniteEnergyError,
    StructureFileError,
    one_line,
    quote_field,
    shown_list,
)
from energy.io.charmm_params import read_charmm_parameters
from energy.io.loaders import load_system
from energy.io.numbers import parse_float, parse_int
from energy.io.psf import read_psf
from energy.io.validation import (
    COINCIDENT_ANGSTROM,
    check_cell,
    check_coincident_atoms,
    check_frame,
)
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.output import report

ROOT = Path(__file__).resolve().parents[1]
PEPTIDE = ROOT / "samples" / "peptide"
PSF, PRM, PDB = PEPTIDE / "probe_peptide.psf", PEPTIDE / "probe_ff.prm", PEPTIDE / "probe_peptide.pdb"
PSF_TEXT, PRM_TEXT, PDB_TEXT = PSF.read_text(), PRM.read_text(), PDB.read_text()


def write(tmp_path, name, text):
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return str(path)


def load(psf=PSF, prm=PRM, coords=PDB, frame=0, settings=None):
    loaded = load_system(str(psf), str(coords), [str(prm)], frame=frame)
    return compute(loaded.system, loaded.frame, settings or EnergySettings())


def assert_one_line(message: str):
    assert "\n" not in message and message.isprintable() and len(message) <= MESSAGE_CAP, message


def cli(*argv):
    err, out = io.StringIO(), io.StringIO()
    with redirect_stderr(err), redirect_stdout(out):
        code = main(list(argv))
    return code, err.getvalue()


def _psf_without_section(name):
    lines = PSF_TEXT.split("\n")
    start = next(i for i, ln in enumerate(lines) if f"!{name}" in ln)
    end = next(i for i in range(start + 1, len(lines)) if not lines[i].strip())
    return "\n".join(lines[:start] + lines[end + 1:])


# --- the table: silently wrong energies ------------------------------------------------
def test_reference_energy_of_the_undamaged_peptide_is_finite():
    # the undamaged files load (the baseline every damaged copy below is compared with)
    totals = load().totals
    assert all(math.isfinite(v) for v in totals.values())


def test_psf_without_nbond_section_is_an_error_not_577090_kcal(tmp_path):
    path = write(tmp_path, "no_nbond.psf", _psf_without_section("NBOND"))
    with pytest.raises(StructureFileError, match=r"no !NBOND section \(bonds\) although a residue has more"):
        load(psf=path)


def test_psf_nbond_truncated_or_count_lowered(tmp_path):
    lines = PSF_TEXT.split("\n")
    header = next(i for i, ln in enumerate(lines) if "!NBOND" in ln)
    truncated = lines[:header + 2] + lines[header + 3:]           # one line of 4 bonds gone
    with pytest.raises(StructureFileError, match=r"!NBOND: the header says 39 bonds but the section holds 35"):
        load(psf=write(tmp_path, "a.psf", "\n".join(truncated)))
    lowered = PSF_TEXT.replace("        39 !NBOND", "        35 !NBOND")
    with pytest.raises(StructureFileError, match=r"header says 35 bonds but the section holds 39") as info:
        load(psf=write(tmp_path, "b.psf", lowered))
    assert info.value.line == header + 1


def test_ntheta_67_changed_to_60_no_longer_drops_7_angles(tmp_path):
    path = write(tmp_path, "t.psf", PSF_TEXT.replace("67 !NTHETA", "60 !NTHETA"))
    with pytest.raises(StructureFileError, match="!NTHETA: the header says 60 angles but the section holds 67"):
        load(psf=path)


@pytest.mark.parametrize("old, new, expect", [
    ("QCM      QHA      309.000000", "QCM      QHA      -309.000000", "BONDS Kb must be >= 0"),
    ("QHA      QCM      QHA      45.000000", "QHA      QCM      QHA      -45.000000", "ANGLES Ktheta must be >= 0"),
    ("QC       X        X        QO       96.000000 0", "QC       X        X        QO       -96.000000 0",
     "harmonic improper"),
])
def test_negative_force_constants_of_harmonic_forms_are_refused(tmp_path, old, new, expect):
    assert old in PRM_TEXT
    with pytest.raises(StructureFileError, match=expect):
        read_charmm_parameters(write(tmp_path, "neg.prm", PRM_TEXT.replace(old, new, 1)))


def test_negative_dihedral_constant_stays_allowed(tmp_path):
    # the cosine form takes either sign (CHARMM-style files use negative Kchi; common practice)
    line = "X        QCG      QN       X        0.200000 3 0.000000"
    assert line in PRM_TEXT
    read_charmm_parameters(write(tmp_path, "dih.prm", PRM_TEXT.replace(line, line.replace("0.200000", "-0.200000"))))


@pytest.mark.parametrize("charge", ["1_000", "\u0661\u0662", "\uff11.\uff15", "nan", "inf", "1e999"])
def test_charge_that_python_would_read_is_refused(tmp_path, charge):
    try:  # what Python itself makes of it (the outside fact: each of these converts)
        float(charge)
    except ValueError:
        pytest.fail(f"Python's float() refuses {charge!r}: not a case for this test")
    text = PSF_TEXT.replace("-0.270000       12.0110", f"{charge:>9s}       12.0110", 1)
    with pytest.raises(StructureFileError, match=r"!NATOM .*(charge|non-ASCII)") as info:
        read_psf(write(tmp_path, "q.psf", text))
    assert info.value.line == 8


# --- non-finite totals ------------------------------------------------------------------------
def _pdb_moving(atom: int, xyz):
    lines = PDB_TEXT.split("\n")
    records = [i for i, ln in enumerate(lines) if ln.startswith(("ATOM", "HETATM"))]
    ln = lines[records[atom]]
    lines[records[atom]] = ln[:30] + "".join(f"{v:8.3f}" for v in xyz) + ln[54:]
    return "\n".join(lines)


def _xyz(atom: int):
    ln = [ln for ln in PDB_TEXT.split("\n") if ln.startswith(("ATOM", "HETATM"))][atom]
    return [float(ln[30:38]), float(ln[38:46]), float(ln[46:54])]


@pytest.mark.parametrize("a, b, bonded", [(0, 1, True), (1, 20, False)])
def test_two_atoms_at_zero_distance_are_named(tmp_path, a, b, bonded):
    path = write(tmp_path, "zero.pdb", _pdb_moving(b, _xyz(a)))
    with pytest.raises(GeometryError, match=rf"atom {a + 1} \(PROB:\w+ \w+\) and atom {b + 1} \(PROB:\w+ \w+\) "
                                            r"are 0.0000 A apart"):
        load(coords=path)


def test_all_atoms_at_one_point(tmp_path):
    text = PDB_TEXT
    for k in range(40):
        text = _pdb_moving(k, [1.0, 2.0, 3.0]) if k == 0 else text
    lines = text.split("\n")
    records = [i for i, ln in enumerate(lines) if ln.startswith(("ATOM", "HETATM"))]
    for i in records:
        lines[i] = lines[i][:30] + "   1.000   2.000   3.000" + lines[i][54:]
    with pytest.raises(GeometryError, match="are 0.0000 A apart"):
        load(coords=write(tmp_path, "one.pdb", "\n".join(lines)))


@pytest.mark.parametrize("value", ["nan", "inf", "1e999", "-inf"])
def test_parameters_nan_inf_1e999_are_refused(tmp_path, value):
    line = "QCM      QHA      309.000000 1.100000"
    with pytest.raises(StructureFileError, match="BONDS Kb"):
        read_charmm_parameters(write(tmp_path, "p.prm", PRM_TEXT.replace(line, line.replace("309.000000", value))))


def test_e14fac_nan_is_refused(tmp_path):
    with pytest.raises(StructureFileError, match="E14FAC"):
        read_charmm_parameters(write(tmp_path, "e.prm", PRM_TEXT.replace("e14fac 1", "e14fac nan")))


def test_cell_edge_inf_is_refused_and_the_cli_prints_no_nan(tmp_path):
    cell = "CRYST1      inf   40.000   40.000  90.00  90.00  90.00 P 1           1\n"
    coords = write(tmp_path, "cell.pdb", cell + PDB_TEXT)
    with pytest.raises(StructureFileError, match="CRYST1 a"):
        load(coords=coords, settings=EnergySettings(cutoff_angstrom=9.0))
    code, err = cli("scan", str(PSF), coords, "--params", str(PRM), "--cutoff", "9", "--json",
                    str(tmp_path / "o.json"), "--csv-dir", str(tmp_path / "csv"))
    assert code == 2 and err.startswith("tessera: error: ") and "nan" not in err.lower()
    assert not (tmp_path / "o.json").exists() and not (tmp_path / "csv").exists()


def test_a_non_finite_energy_past_every_check_names_term_and_interaction():
    # a system built in code (no reader): a nan force constant is the "bug" the last check catches
    system = make_system([0.1, -0.1, 0.2], [1.5, 1.5, 1.5], [0.1, 0.1, 0.1], [0, 0, 1],
                         exceptions=[(0, 1, 0.0, 0.0, 0.0)], bonds=[(0, 1, float("nan"), 1.0)])
    frame = Frame(np.array([[0.0, 0.0, 0.0], [1.1, 0.0, 0.0], [4.0, 0.0, 0.0]]))
    with pytest.raises(NonFiniteEnergyError) as info:
        compute(system, frame)
    assert info.value.term == "bond"
    assert info.value.where == "bonds entry 1: atoms 1 (A:UNK1 X0), 2 (A:UNK1 X1)"
    assert "bug" in str(info.value)
    assert_one_line(str(info.value))


def test_a_non_finite_pair_energy_names_the_residue_pair_and_atoms():
    system = make_system([float("inf"), -0.1, 0.2], [1.5, 1.5, 1.5], [0.1, 0.1, 0.1], [0, 1, 2])
    frame = Frame(np.array([[0.0, 0.0, 0.0], [3.0, 0.0, 0.0], [6.0, 0.0, 0.0]]))
    with pytest.raises(NonFiniteEnergyError) as info:
        compute(system, frame)
    assert info.value.term == "coulomb"
    assert info.value.where.startswith("residue pair A:UNK1 - A:UNK2, atoms 1 (A:UNK1 X0), 2 (A:UNK2 X1)")


# --- uncaught exceptions (12 kinds) --------------------------------------------------------------
def _dcd(tmp_path, frames=3):
    import warnings

    import MDAnalysis as mda
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = mda.Universe(str(PDB))
        path = tmp_path / "pep.dcd"
        with mda.Writer(str(path), u.atoms.n_atoms) as w:
            for k in range(frames):
                u.atoms.positions = u.atoms.positions + 0.01
                w.write(u.atoms)
    return path


def test_damaged_dcd_names_the_file(tmp_path):
    data = _dcd(tmp_path).read_bytes()
    bad = write(tmp_path, "bad.dcd", data[:4] + b"XXXX" + data[8:])
    with pytest.raises(StructureFileError) as info:
        load(coords=bad)
    assert str(info.value).startswith(f"{bad}: ")
    truncated = write(tmp_path, "cut.dcd", data[:-30])
    with pytest.raises(StructureFileError, match=r"frame 2 requested but the file has 2 frame"):
        load(coords=truncated, frame=2)


def test_multi_model_pdb_whose_models_differ(tmp_path):
    atoms = [ln for ln in PDB_TEXT.split("\n") if ln.startswith(("ATOM", "HETATM"))]
    fewer = "MODEL        1\n" + "\n".join(atoms) + "\nENDMDL\nMODEL        2\n" + "\n".join(atoms[:-3]) + "\nENDMDL\n"
    with pytest.raises(StructureFileError, match="model 2 has 37 atoms but model 1 has 40"):
        load(coords=write(tmp_path, "m.pdb", fewer), frame=1)
    swapped = atoms[:5] + [atoms[6], atoms[5]] + atoms[7:]
    other = "MODEL        1\n" + "\n".join(atoms) + "\nENDMDL\nMODEL        2\n" + "\n".join(swapped) + "\nENDMDL\n"
    with pytest.raises(StructureFileError, match="model 2 differs from model 1 at atom 6"):
        load_system(write(tmp_path, "m2.pdb", other), frame=1)


def test_cmap_grid_value_1e999(tmp_path):
    lines = PRM_TEXT.split("\n")
    k = next(i for i, ln in enumerate(lines) if ln.startswith("CMAP")) + 3
    lines[k] = "1e999 " + lines[k].split(" ", 1)[1]
    with pytest.raises(StructureFileError, match=r"CMAP grid value \(kcal/mol\): '1E999' is out of range"):
        read_charmm_parameters(write(tmp_path, "c.prm", "\n".join(lines)))


def test_atom_index_of_20_digits_and_count_of_5000_digits(tmp_path):
    text = PSF_TEXT.replace("         1         2         1         3", "99999999999999999999 2 1 3", 1)
    with pytest.raises(StructureFileError, match="at most 18 digits"):
        read_psf(write(tmp_path, "i.psf", text))
    text = PSF_TEXT.replace("        39 !NBOND", "9" * 5000 + " !NBOND")
    with pytest.raises(StructureFileError, match=r"\(4920 more characters\) is out of range") as info:
        read_psf(write(tmp_path, "n.psf", text))
    assert_one_line(str(info.value))


def test_dihedral_periodicity_inf(tmp_path):
    line = "X        QCG      QN       X        0.200000 3 0.000000"
    with pytest.raises(StructureFileError, match="DIHEDRALS periodicity"):
        read_charmm_parameters(write(tmp_path, "d.prm", PRM_TEXT.replace(line, line.replace(" 3 ", " inf "))))


@pytest.mark.parametrize("cell", ["  60.000   60.000   60.000 180.00 180.00 180.00",
                                  "  60.000   60.000   60.000  60.00  60.00 150.00"])
def test_degenerate_cryst1_angles(tmp_path, cell):
    coords = write(tmp_path, "c.pdb", f"CRYST1{cell} P 1           1\n" + PDB_TEXT)
    with pytest.raises(GeometryError, match="unit cell"):
        load(coords=coords, settings=EnergySettings(cutoff_angstrom=9.0))
    with pytest.raises(GeometryError, match="unit cell"):
        load_system(coords)   # the built-in route (OpenMM) used to stop with ZeroDivisionError


def test_cell_edge_inf_in_a_frame_built_in_code():
    # what used to reach cells.py (IndexError): a Frame given an infinite edge directly
    loaded = load_system(str(PSF), str(PDB), [str(PRM)])
    frame = Frame(loaded.frame.positions, np.array([np.inf, 40.0, 40.0, 90.0, 90.0, 90.0]))
    with pytest.raises(GeometryError, match="non-finite"):
        compute(loaded.system, frame, EnergySettings(cutoff_angstrom=9.0))


# --- JSON writer; long and multi-line messages; the near-hang ------------------------------------
def _doctored_result():
    loaded = load_system(str(PSF), str(PDB), [str(PRM)])
    result = compute(loaded.system, loaded.frame)
    totals = dict(result.totals, total=float("nan"))
    return loaded, EnergyResult(result.settings, totals, result.interactions, result.residue_pairs,
                                result.timings)


def test_writers_refuse_non_finite_values_and_write_nothing(tmp_path):
    loaded, bad = _doctored_result()
    with pytest.raises(NonFiniteEnergyError, match="nothing was written"):
        report.write_scan_json(tmp_path / "o.json", report.scan_document(loaded, bad), bad)
    with pytest.raises(NonFiniteEnergyError):
        report.write_csv_dir(tmp_path / "csv", loaded.system, bad)
    with pytest.raises(NonFiniteEnergyError, match="document.totals.total"):
        report.write_json(tmp_path / "d.json", {"totals": {"total": float("inf")}})
    assert list(tmp_path.iterdir()) == []


def test_third_party_messages_are_one_line_with_the_file_name(tmp_path):
    # OpenMM's PDB reader on binary junk, MDAnalysis on a truncated multi-model file
    junk = write(tmp_path, "junk.pdb", b"ATOM  \x00\xff\n\n\x1b[31mred\n" * 50)
    with pytest.raises(EnergyError) as info:
        load_system(junk)
    assert_one_line(str(info.value))
    assert junk in str(info.value)


def test_a_megabyte_nul_line_is_not_echoed(tmp_path):
    lines = PSF_TEXT.split("\n")
    lines.insert(10, "\x00" * (1 << 20))
    with pytest.raises(StructureFileError) as info:
        read_psf(write(tmp_path, "nul.psf", "\n".join(lines)))
    assert_one_line(str(info.value))


def test_one_atom_a_million_angstrom_away_is_an_error_not_a_43_s_search(tmp_path):
    # |x| = 1e6 cannot be written in a PDB: the DCD route, as in the issue
    import warnings

    import MDAnalysis as mda
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = mda.Universe(str(PDB))
        u.atoms.positions[5] += [1e6, 0, 0]
        pos = u.atoms.positions.copy()
        pos[5, 0] += 1e6
        u.atoms.positions = pos
        path = tmp_path / "far.dcd"
        with mda.Writer(str(path), u.atoms.n_atoms) as w:
            w.write(u.atoms)
    with pytest.raises(GeometryError, match=r"lie beyond 100000 A of the origin, first: atom 6"):
        load(coords=path, settings=EnergySettings(cutoff_angstrom=9.0))
    pos[5, 0] -= 1e6 - 900.0   # 900 A away: within the bound, but the residue spreads
    u.atoms.positions = pos
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with mda.Writer(str(path), u.atoms.n_atoms) as w:
            w.write(u.atoms)
    with pytest.raises(GeometryError, match=r"residue PROB:ACE1 spreads .* from its centre \(limit 50 A"):
        load(coords=path, settings=EnergySettings(cutoff_angstrom=9.0))


# --- the CLI never shows a traceback -------------------------------------------------------------
def test_unexpected_exception_gives_one_line_and_a_log_file(tmp_path, monkeypatch):
    from app.cli import scan
    monkeypatch.setenv("TESSERA_LOG_DIR", str(tmp_path / "logs"))

    def broken(args):
        raise RuntimeError("a bug\nwith two lines")
    monkeypatch.setattr(scan, "run", broken)
    code, err = cli("scan", str(PSF), str(PDB), "--params", str(PRM))
    assert code == 1
    lines = err.strip().split("\n")
    assert len(lines) == 1 and "Traceback" not in err
    assert "internal error (RuntimeError: a bug with two lines)" in lines[0] and "please report it" in lines[0]
    log = re.search(r"the traceback is in (\S+)$", lines[0]).group(1)
    text = Path(log).read_text()
    assert "Traceback (most recent call last)" in text and "RuntimeError: a bug" in text


def test_nan_never_reaches_the_cli_output(tmp_path):
    coords = write(tmp_path, "zero.pdb", _pdb_moving(1, _xyz(0)))
    code, err = cli("scan", str(PSF), coords, "--params", str(PRM), "--json", str(tmp_path / "o.json"),
                    "--csv-dir", str(tmp_path / "csv"))
    assert code == 2 and len(err.strip().split("\n")) == 1 and "0.0000 A apart" in err
    assert not (tmp_path / "o.json").exists()


# --- building blocks --------------------------------------------------------------------------
def test_one_line_folds_caps_and_counts():
    assert one_line("a\n\n b\tc\x00d") == "a b c?d"
    long = one_line("x" * 1000)
    assert len(long) <= MESSAGE_CAP and long.endswith("more characters)")
    assert int(re.search(r"\((\d+) more characters\)", long).group(1)) + long.index("...") == 1000
    assert len(one_line("y" * 5_000_000)) <= MESSAGE_CAP
    assert quote_field("z" * 100) == repr("z" * 80) + "... (20 more characters)"
    assert shown_list(range(8), limit=3) == "0, 1, 2 (5 more)"
    assert str(EnergyError("two\nlines")) == "two lines"


@pytest.mark.parametrize("word", ["1_000", "\u0661\u0662", "\uff11", "nan", "inf", "Infinity", " 1",
                                  "1e999", "0x10", "1e", "--1", "+", ".", "1.2.3", "1e-999"])
def test_strict_numbers_refuse_what_the_format_does_not_mean(word):
    with pytest.raises(StructureFileError):
        parse_float(word, "field", "f.prm", 3)


@pytest.mark.parametrize("word, value", [("1", 1.0), ("-2.5", -2.5), ("+.5", 0.5), ("3.", 3.0),
                                         ("1e-3", 1e-3), ("-1.5E+2", -150.0), ("0", 0.0), ("0.0e-999", 0.0)])
def test_strict_numbers_accept_plain_numbers(word, value):
    assert parse_float(word, "field", "f.prm", 3) == value == float(word)


def test_strict_integers_and_limits():
    assert parse_int("-12", "n", "f", 1) == -12
    for word in ("1.0", "1_0", "\u0661", "9" * 19):
        with pytest.raises(StructureFileError):
            parse_int(word, "n", "f", 1)
    with pytest.raises(StructureFileError, match="must lie in 1..6"):
        parse_int("7", "n", "f", 1, low=1, high=6)
    with pytest.raises(StructureFileError, match=r"must be > 0, got '0'"):
        parse_float("0", "radius", "f", 1, low=0.0, low_open=True)


CELLS = [(30, 30, 30, 90, 90, 90), (40, 45, 50, 70, 80, 100), (30, 30, 30, 60, 60, 60),
         (30, 30, 30, 60, 60, 150), (30, 30, 30, 110, 110, 110), (30, 30, 30, 100, 100, 159),
         (30, 30, 30, 100, 100, 161), (30, 30, 30, 179.9, 90, 90)]


@pytest.mark.parametrize("cell", CELLS)
def test_cell_check_agrees_with_mdanalysis_triclinic_vectors(cell):
    """MDAnalysis.lib.mdamath.triclinic_vectors returns zero vectors for a box that forms no cell
    (angles that no parallelepiped has): our check must refuse exactly those."""
    from MDAnalysis.lib.mdamath import triclinic_vectors
    is_cell = bool(np.any(triclinic_vectors(np.array(cell, np.float32))))
    if is_cell:
        check_cell(cell)
    else:
        with pytest.raises(GeometryError):
            check_cell(cell)


def test_cell_of_three_120_degree_angles_is_flat():
    # V = abc sqrt(1 - cos^2 a - cos^2 b - cos^2 g + 2 cos a cos b cos g) (the triclinic cell volume,
    # International Tables for Crystallography vol. B): 1 - 3/4 - 1/4 = 0 for three 120 degree angles
    with pytest.raises(GeometryError, match="form no cell"):
        check_cell([30, 30, 30, 120, 120, 120])


def test_cell_check_refuses_bad_values():
    for cell in ([30, 30, np.nan, 90, 90, 90], [30, 0, 30, 90, 90, 90], [-30, 30, 30, 90, 90, 90],
                 [30, 30, 30, 0, 90, 90], [30, 30, 30, 90, 180, 90], [30, 30, 0.001, 90, 90, 90]):
        with pytest.raises(GeometryError):
            check_cell(cell)
    check_cell([0, 0, 0, 90, 90, 90])   # MDAnalysis' "no cell"
    check_cell(None)


@pytest.mark.parametrize("seed", range(6))
def test_coincident_check_agrees_with_brute_force_minimum_image(seed):
    """Random atoms with a planted close pair, with and without a (triclinic) cell; the reference
    is MDAnalysis's brute-force self_distance_array (minimum image in the given box)."""
    from MDAnalysis.lib.distances import self_distance_array
    rng = np.random.default_rng(seed)
    box = [None, np.array([20.0, 22.0, 24.0, 90.0, 90.0, 90.0]),
           np.array([20.0, 22.0, 24.0, 75.0, 85.0, 100.0])][seed % 3]
    x = rng.uniform(0, 20, (300, 3))
    if seed >= 3:   # a pair across the cell or very close
        x[7] = x[3] + rng.normal(0, 1, 3) * 0.003
        if box is not None:
            from energy._kernels.pbc import box_matrix
            x[7] += box_matrix(box)[0] * (1 if seed % 2 else -2)
    d = self_distance_array(x.astype(np.float64), box=box)
    expect_close = bool(np.min(d) < COINCIDENT_ANGSTROM)
    if expect_close:
        with pytest.raises(GeometryError, match=r"atom \d+ and atom \d+ are"):
            check_coincident_atoms(x, None, box)
    else:
        check_coincident_atoms(x, None, box)
    assert expect_close == (seed >= 3)


def test_check_frame_order_and_messages():
    system = make_system([0.0] * 3, [1.0] * 3, [0.1] * 3, [0, 0, 1])
    with pytest.raises(InputMismatchError, match="non-finite"):
        check_frame(system, Frame(np.array([[0, 0, 0], [np.nan, 0, 0], [3, 0, 0]], float)))
    with pytest.raises(InputMismatchError, match="hold 2 atoms"):
        check_frame(system, Frame(np.zeros((2, 3))))


def test_psf_files_of_mdanalysistests_still_read_and_the_bad_one_is_refused():
    """Every PSF with a full topology shipped with MDAnalysisTests reads; ``adk_notop_BAD.psf``
    (MDAnalysis's own test of a damaged file) is refused with its count mismatch."""
    import MDAnalysisTests.datafiles as data
    folder = Path(data.PSF).parent
    for name in ("adk.psf", "1a2c_ins_code.psf", "2r9r-1b.psf", "SiN_tric_namd.psf", "adk_closed_NAMD.psf",
                 "namd_cgenff.psf", "nosegid.psf", "parmed_ala3.psf", "tip125_tric_C36.psf", "watdyn.psf"):
        read_psf(folder / name)
    with pytest.raises(StructureFileError, match="!NATOM: the header says 3341 atoms but the section holds 3327"):
        read_psf(folder / "adk_notop_BAD.psf")


def test_json_output_of_a_good_run_parses_strictly(tmp_path):
    code, err = cli("scan", str(PSF), str(PDB), "--params", str(PRM), "--json", str(tmp_path / "o.json"),
                    "--quiet")
    assert code == 0, err
    def refuse(name):
        raise ValueError(name)
    doc = json.loads((tmp_path / "o.json").read_text(), parse_constant=refuse)
    assert all(math.isfinite(v) for v in doc["totals"].values())
    assert os.path.exists(tmp_path / "o.json")


def test_errors_survive_pickling_between_processes():
    # worker processes (energy.analysis.trajectory_parallel) send their errors back pickled
    import pickle
    for error in (StructureFileError("a.psf", "bad record", 3), NonFiniteEnergyError("lj", "residue pair X - Y"),
                  GeometryError("two atoms coincide")):
        back = pickle.loads(pickle.dumps(error))
        assert type(back) is type(error) and str(back) == str(error) and back.__dict__ == error.__dict__
