"""Write the bad-input catalogue: one small damaged file per class of damage (issue 14).

    python tests/bad_inputs/make_catalogue.py        # rewrites tests/bad_inputs/

The undamaged base is an invented pair of water molecules (``base/water2.*``): a PSF with
invented types QOW/QHW and invented parameters for the PSF route, and a PDB whose names match
OpenMM's TIP3P template (``HOH``: O, H1, H2) for the built-in route.  Each entry of
:data:`CASES` derives one damaged file from the base, names the files it is loaded with, and
states the exact message Tessera gives, what it means and what to do.  ``catalogue.json`` is
written from :data:`CASES`; ``tests/test_bad_inputs.py`` loads every entry and compares the
message; ``scripts/troubleshooting.py`` turns the catalogue into the README's troubleshooting
section.  The messages are a regression snapshot of Tessera's own output, reviewed by hand
against the damage each file carries.
"""
from __future__ import annotations

import json
import struct
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
REL = HERE.relative_to(ROOT).as_posix()           # "tests/bad_inputs"

PSF = """PSF EXT XPLOR

         1 !NTITLE
* two invented water molecules (Tessera bad-input catalogue)

         6 !NATOM
         1 W        1        HOH      O        QOW     -0.834000       15.9990           0
         2 W        1        HOH      H1       QHW      0.417000        1.0080           0
         3 W        1        HOH      H2       QHW      0.417000        1.0080           0
         4 W        2        HOH      O        QOW     -0.834000       15.9990           0
         5 W        2        HOH      H1       QHW      0.417000        1.0080           0
         6 W        2        HOH      H2       QHW      0.417000        1.0080           0

         4 !NBOND: bonds
         1         2         1         3         4         5         4         6

         2 !NTHETA: angles
         2         1         3         5         4         6

         0 !NPHI: dihedrals

         0 !NIMPHI: impropers

"""

PRM = """* invented water parameters (Tessera bad-input catalogue)
*
ATOMS
MASS     1 QOW       15.99900
MASS     2 QHW        1.00800

BONDS
QOW      QHW      450.000000 0.957200

ANGLES
QHW      QOW      QHW      55.000000 104.520000

DIHEDRALS
QHW      QOW      QOW      QHW      0.100000 3 0.000000

NONBONDED nbxmod 5 atom cdiel shift vatom vdistance vswitch -
cutnb 14.0 ctofnb 12.0 ctonnb 10.0 eps 1.0 e14fac 1.0 wmin 1.5
QOW      0.0 -0.152100 1.768200
QHW      0.0 -0.046000 0.224500

END
"""

ATOMS = (("O", 1, 0.000, 0.000, 0.000, "O"), ("H1", 1, 0.957, 0.000, 0.000, "H"),
         ("H2", 1, -0.240, 0.927, 0.000, "H"), ("O", 2, 0.000, 0.000, 3.000, "O"),
         ("H1", 2, 0.957, 0.000, 3.000, "H"), ("H2", 2, -0.240, 0.927, 3.000, "H"))


def pdb_atom(serial, name, resid, x, y, z, element):
    return (f"ATOM  {serial:5d} {name:<4s} HOH W{resid:4d}    {x:8.3f}{y:8.3f}{z:8.3f}"
            f"  1.00  0.00           {element:>2s}")


PDB_ATOMS = [pdb_atom(k + 1, *a) for k, a in enumerate(ATOMS)]
PDB = "REMARK   1 TWO INVENTED WATER MOLECULES\n" + "\n".join(PDB_ATOMS) + "\nEND\n"
CELL = "CRYST1   30.000   30.000   30.000  90.00  90.00  90.00 P 1           1"


def dcd_bytes(frames, cell=(30.0, 30.0, 30.0, 90.0, 90.0, 90.0)) -> bytes:
    """A CHARMM DCD (the layout MDAnalysis and CHARMM write: 84-byte header with the unit-cell
    flag, a title block, the atom count, then per frame the 6 cell doubles and x, y, z float32
    blocks, each record framed by its byte length)."""
    n = len(frames[0])

    def record(payload: bytes) -> bytes:
        return struct.pack("<i", len(payload)) + payload + struct.pack("<i", len(payload))
    icntrl = [len(frames), 0, 1, len(frames), 0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 24]
    head = record(b"CORD" + struct.pack("<9i", *icntrl[:9]) + struct.pack("<f", 0.02045)
                  + struct.pack("<10i", *icntrl[10:]))
    title = record(struct.pack("<i", 1) + b"Tessera bad-input catalogue".ljust(80))
    out = head + title + record(struct.pack("<i", n))
    a, b, c, alpha, beta, gamma = cell
    for xyz in frames:
        out += record(struct.pack("<6d", a, gamma, b, beta, alpha, c))  # CHARMM's cell order
        for axis in range(3):
            out += record(struct.pack(f"<{n}f", *[p[axis] for p in xyz]))
    return out


BASE_XYZ = [a[2:5] for a in ATOMS]
SHIFTED_XYZ = [(x + 0.01, y, z - 0.01) for x, y, z in BASE_XYZ]
DCD = dcd_bytes([BASE_XYZ, SHIFTED_XYZ])


def replace(text: str, old: str, new: str, count: int = 1) -> str:
    assert old in text, old
    return text.replace(old, new, count)


def psf_route(damaged: str, role: str, coords="base/water2.pdb", frame=0):
    inputs = {"structure": "base/water2.psf", "coords": coords, "params": ["base/water2.prm"], "frame": frame}
    if role == "params":
        inputs["params"] = [damaged]
    else:
        inputs[role] = damaged
    return inputs


def builtin(damaged: str, frame=0):
    return {"structure": damaged, "coords": None, "params": [], "frame": frame}


def pdb_with(xyz=None, extra_first="", atoms=None):
    atoms = list(PDB_ATOMS if atoms is None else atoms)
    if xyz is not None:
        atoms = [pdb_atom(k + 1, a[0], a[1], *p, a[5]) for k, (a, p) in enumerate(zip(ATOMS, xyz))]
    return (extra_first + "\n" if extra_first else "") + "\n".join(atoms) + "\nEND\n"


def cell_line(a, b, c, alpha, beta, gamma):
    return f"CRYST1{a:>9s}{b:>9s}{c:>9s}{alpha:>7s}{beta:>7s}{gamma:>7s} P 1           1"


# name, class (what is damaged), file content, inputs(path), expected message, cause, fix
CASES = [
    ("psf_nbond_deleted.psf", "PSF: a required section deleted",
     lambda: replace(PSF, "         4 !NBOND: bonds\n         1         2         1         3         4         5"
                     "         4         6\n\n", ""), "structure",
     "PATH: no !NBOND section (bonds) although a residue has more than one atom: the file is truncated or the "
     "section was deleted",
     "A section the bond graph needs is missing (!NBOND when a residue has several atoms, !NTHETA, !NPHI, "
     "!NIMPHI when the bonds imply angles, dihedrals or impropers, !NCRTERM with the CMAP flag).",
     "Regenerate the PSF with the program that built it; do not edit sections by hand."),
    ("psf_nbond_truncated.psf", "PSF: entries missing, count kept",
     lambda: replace(PSF, "         4         5         4         6\n", "\n"), "structure",
     "PATH:14: !NBOND: the header says 4 bonds but the section holds 2 (lines 14-15)",
     "A section holds fewer (or more) entries than its header says: lines were lost or added.",
     "Regenerate the PSF; if you edited it, fix the count or the entries."),
    ("psf_nbond_count_lowered.psf", "PSF: a section count lowered",
     lambda: replace(PSF, "         4 !NBOND", "         3 !NBOND"), "structure",
     "PATH:14: !NBOND: the header says 3 bonds but the section holds 4 (lines 14-15)",
     "The count in a section header is wrong (every count is checked against the entries).",
     "Regenerate the PSF, or correct the count."),
    ("psf_ntheta_count_lowered.psf", "PSF: an angle count lowered",
     lambda: replace(PSF, "         2 !NTHETA", "         1 !NTHETA"), "structure",
     "PATH:17: !NTHETA: the header says 1 angles but the section holds 2 (lines 17-18)",
     "As above, for the angles: a lowered count used to drop angles without a word.",
     "Regenerate the PSF, or correct the count."),
    ("psf_natom_count_raised.psf", "PSF: the atom count raised",
     lambda: replace(PSF, "         6 !NATOM", "         7 !NATOM"), "structure",
     "PATH:6: !NATOM: the header says 7 atoms but the section holds 6 records",
     "The !NATOM count differs from the atom records.", "Regenerate the PSF, or correct the count."),
    ("psf_index_out_of_range.psf", "PSF: an atom index out of range",
     lambda: replace(PSF, "4         6\n", "4         7\n"), "structure",
     "PATH:15: !NBOND: atom index 7 outside 1..6",
     "An entry names an atom the file does not have.", "Regenerate the PSF."),
    ("psf_index_20_digits.psf", "PSF: an atom index of 20 digits",
     lambda: replace(PSF, "4         6\n", "4 99999999999999999999\n"), "structure",
     "PATH:15: !NBOND atom index: '99999999999999999999' is out of range (at most 18 digits)",
     "A number is too long for any count or index.", "Regenerate the PSF."),
    ("psf_count_5000_digits.psf", "PSF: a count of 5,000 digits",
     lambda: replace(PSF, "         4 !NBOND", "9" * 5000 + " !NBOND"), "structure",
     "PATH:14: !NBOND header count: '" + "9" * 80 + "'... (4920 more characters) is out of range "
     "(at most 18 digits)",
     "As above; the message quotes at most 80 characters of the field.", "Regenerate the PSF."),
    ("psf_charge_underscore.psf", "PSF: a charge written 1_000",
     lambda: replace(PSF, "-0.834000       15.9990", "1_000           15.9990"), "structure",
     "PATH:7: !NATOM atom 1 charge (e): expected a number (ASCII digits, sign, decimal point, exponent), "
     "got '1_000'",
     "A number uses characters outside ASCII digits, sign, decimal point and exponent (Python would "
     "read 1_000 as 1000).", "Write plain numbers."),
    ("psf_charge_arabic_digits.psf", "PSF: a charge in Arabic-Indic digits",
     lambda: replace(PSF, "0.417000        1.0080           0\n         3",
                     "\u0660.\u0664\u0661\u0667        1.0080           0\n         3"), "structure",
     "PATH:8: !NATOM record 2: non-ASCII or control character in '2 W 1 HOH H1 QHW "
     "\u0660.\u0664\u0661\u0667 1.0080 0'",
     "Digits of another script (Python's float() accepts them).", "Write ASCII digits."),
    ("psf_charge_nan.psf", "PSF: a charge nan",
     lambda: replace(PSF, "-0.834000       15.9990", "nan             15.9990"), "structure",
     "PATH:7: !NATOM atom 1 charge (e): expected a number (ASCII digits, sign, decimal point, exponent), "
     "got 'nan'",
     "nan and inf are not numbers of a file.", "Regenerate the file."),
    ("psf_atoms_out_of_order.psf", "PSF: atom records swapped",
     lambda: replace(replace(PSF, "         2 W        1        HOH      H1", "         X W"),
                     "         3 W        1        HOH      H2", "         2 W        1        HOH      H1")
     .replace("         X W", "         3 W        1        HOH      H2"), "structure",
     "PATH:8: !NATOM: record 2 is numbered 3: atom records must be numbered 1, 2, 3, ... in order",
     "Atom records out of order (the indices of every other section refer to positions).",
     "Regenerate the PSF."),
    ("psf_entry_repeats_atom.psf", "PSF: an entry naming one atom twice",
     lambda: replace(PSF, "4         6\n", "4         4\n"), "structure",
     "PATH:15: !NBOND: entry 4 names atom 4 twice",
     "A bond, angle, dihedral or improper names the same atom twice (its geometry is undefined).",
     "Regenerate the PSF."),
    ("psf_section_twice.psf", "PSF: a section repeated",
     lambda: PSF + "         0 !NBOND: bonds\n\n", "structure",
     "PATH:24: !NBOND appears twice (lines 14 and 24)",
     "A section appears twice.", "Regenerate the PSF."),
    ("psf_not_a_psf.psf", "PSF: binary junk",
     lambda: "\x00\x01\x02\u00ff\u00fe junk\n" + PSF, "structure",
     "PATH:1: not a PSF file: first line must start with 'PSF', got '\\x00\\x01\\x02\u00ff\u00fe junk'",
     "The file is not a PSF (or its first line was damaged).", "Pass the PSF topology first."),
    ("psf_huge_field.psf", "PSF: a 5,000-character field",
     lambda: replace(PSF, "-0.834000       15.9990", "x" * 5000 + " 15.9990"), "structure",
     "PATH:7: !NATOM atom 1 charge (e): expected a number (ASCII digits, sign, decimal point, exponent), "
     "got '" + "x" * 80 + "'... (4920 more characters)",
     "A huge field (a damaged line): messages quote at most 80 characters of it.", "Regenerate the file."),
    ("psf_control_character.psf", "PSF: a control character in a type",
     lambda: replace(PSF, "QHW      0.417000        1.0080           0\n         3",
                     "Q\x1bHW     0.417000        1.0080           0\n         3"), "structure",
     "PATH:8: !NATOM record 2: non-ASCII or control character in '2 W 1 HOH H1 Q\\x1bHW 0.417000 "
     "1.0080 '... (1 more characters)",
     "A control or non-ASCII character inside a record (it would silently make a name another one).",
     "Regenerate the file."),
    ("psf_ndon_count_raised.psf", "PSF: a donor count raised",
     lambda: PSF + "         1 !NDON: donors\n\n", "structure",
     "PATH:24: !NDON: the header says 1 donors but the section holds 0 (line 24)",
     "Sections that do not enter the energy (!NDON, !NACC) are checked too: a wrong count means a "
     "damaged file.", "Regenerate the PSF."),
    ("prm_negative_bond_k.prm", "parameters: a negative force constant",
     lambda: replace(PRM, "450.000000", "-450.000000"), "params",
     "PATH:8: BONDS Kb must be >= 0, got '-450.000000'",
     "A value outside the limits of its form (harmonic force constants >= 0, theta0 within 0..180, "
     "radii >= 0, periodicities 1..6, E14FAC within 0..1).", "Correct the parameter file."),
    ("prm_epsilon_nan.prm", "parameters: epsilon nan",
     lambda: replace(PRM, "-0.152100", "nan"), "params",
     "PATH:18: NONBONDED QOW epsilon: expected a number (ASCII digits, sign, decimal point, exponent), "
     "got 'NAN'",
     "nan/inf in a parameter.", "Correct the parameter file."),
    ("prm_bond_1e999.prm", "parameters: a value 1e999",
     lambda: replace(PRM, "0.957200", "1e999"), "params",
     "PATH:8: BONDS b0: '1E999' is out of range (|value| <= 1e+06)",
     "A value too large to be a parameter (1e999 reads as infinity).", "Correct the parameter file."),
    ("prm_cmap_1e999.prm", "parameters: a CMAP grid value 1e999",
     lambda: replace(PRM, "NONBONDED", "CMAP\nQOW QHW QHW QOW QHW QHW QOW QHW 2\n0.0 1e999 0.0 0.0\n\nNONBONDED"),
     "params",
     "PATH:18: CMAP grid value (kcal/mol): '1E999' is out of range (|value| <= 1e+06)",
     "As above, in a CMAP grid (used to stop scipy's spline with a traceback).", "Correct the parameter file."),
    ("prm_periodicity_inf.prm", "parameters: a dihedral periodicity inf",
     lambda: replace(PRM, "0.100000 3 0.000000", "0.100000 inf 0.000000"), "params",
     "PATH:14: DIHEDRALS periodicity: expected a number (ASCII digits, sign, decimal point, exponent), "
     "got 'INF'",
     "A periodicity that is no integer.", "Correct the parameter file."),
    ("prm_periodicity_7.prm", "parameters: a dihedral periodicity 7",
     lambda: replace(PRM, "0.100000 3 0.000000", "0.100000 7 0.000000"), "params",
     "PATH:14: DIHEDRALS: periodicity must be an integer 1..6, got '7'",
     "Periodicities are small integers (1..6 for dihedrals, 0..6 for impropers).",
     "Correct the parameter file."),
    ("prm_e14fac_nan.prm", "parameters: E14FAC nan",
     lambda: replace(PRM, "e14fac 1.0", "e14fac nan"), "params",
     "PATH:16: NONBONDED header E14FAC: expected a number (ASCII digits, sign, decimal point, exponent), "
     "got 'NAN'",
     "The 1-4 electrostatic scale is no number.", "Correct the NONBONDED header."),
    ("prm_rmin_negative.prm", "parameters: a negative Rmin/2",
     lambda: replace(PRM, "1.768200", "-1.768200"), "params",
     "PATH:18: NONBONDED QOW Rmin/2 must be >= 0, got '-1.768200'",
     "Radii are >= 0 (and > 0 wherever the well depth is not 0).", "Correct the parameter file."),
    ("prm_theta0_200.prm", "parameters: theta0 of 200 degrees",
     lambda: replace(PRM, "104.520000", "200.000000"), "params",
     "PATH:11: ANGLES theta0 must be <= 180, got '200.000000'",
     "An equilibrium angle outside 0..180 degrees.", "Correct the parameter file."),
    ("prm_truncated.prm", "parameters: truncated (no END)",
     lambda: PRM[:PRM.index("QHW      0.0")], "params",
     "PATH:18: no END line: CHARMM parameter files end with END, so this one was truncated",
     "The file ends before its END line: entries after the cut would silently be missing.",
     "Copy the file again; CHARMM-style parameter files end with END."),
    ("prm_text_after_end.prm", "parameters: entries after END",
     lambda: PRM.replace("\nEND\n", "\n") .replace("NONBONDED", "END\nNONBONDED"), "params",
     "PATH:17: 'NONBONDED nbxmod 5 atom cdiel shift vatom vdistance vswitch cutnb 14.0 ctofnb 1'... "
     "(43 more characters) after END: the END line closes the parameters (a misplaced END "
     "would hide what follows)",
     "END closes a parameter file; anything after it would be ignored.", "Move END to the end of the file."),
    ("prm_bond_arabic_digits.prm", "parameters: Arabic-Indic digits",
     lambda: replace(PRM, "450.000000", "\u0664\u0665\u0660"), "params",
     "PATH:8: non-ASCII or control character outside a comment: 'QOW QHW \u0664\u0665\u0660 "
     "0.957200'",
     "Characters outside ASCII in a parameter line.", "Write ASCII digits."),
    ("prm_atoms_section_junk.prm", "parameters: a parameter line in the ATOMS section",
     lambda: replace(PRM, "\nBONDS\n", "\n"), "params",
     "PATH:7: ATOMS section: expected MASS records, got 'QOW QHW 450.000000 0.957200'",
     "A line other than MASS in the ATOMS section (a section keyword was lost).",
     "Restore the section keyword."),
    ("pdb_coincident_atoms.pdb", "coordinates: two atoms at one point",
     lambda: pdb_with([BASE_XYZ[0], BASE_XYZ[1], BASE_XYZ[2], BASE_XYZ[1], BASE_XYZ[4], BASE_XYZ[5]]),
     "coords",
     "atom 2 (W:HOH1 H1) and atom 4 (W:HOH2 O) are 0.0000 A apart, closer than 0.01 A: coincident atoms "
     "give infinite energies; check the coordinates",
     "Two atoms closer than 0.01 A (under the minimum image when a cell is known).",
     "Fix the coordinates (a duplicated or misplaced atom)."),
    ("pdb_all_atoms_one_point.pdb", "coordinates: every atom at one point",
     lambda: pdb_with([(1.0, 2.0, 3.0)] * 6), "coords",
     "atom 1 (W:HOH1 O) and atom 2 (W:HOH1 H1) are 0.0000 A apart, closer than 0.01 A: coincident atoms "
     "give infinite energies; check the coordinates",
     "As above: the coordinates collapsed.", "Fix the coordinates."),
    ("pdb_far_atom.pdb", "coordinates: one atom far from its residue",
     lambda: pdb_with([BASE_XYZ[0], (9000.957, 0.0, 0.0)] + BASE_XYZ[2:]), "coords",
     "residue W:HOH1 spreads 6000.7 A from its centre (limit 50 A; farthest: atom 2 (W:HOH1 H1)): the "
     "residue is broken or was wrapped across a periodic cell; make molecules whole or give the cell",
     "An atom lies more than 50 A from its residue's centre: the residue is broken, or was wrapped "
     "into a periodic cell that the file does not give.",
     "Make molecules whole (unwrap), or give the cell (CRYST1)."),
    ("crd_column_overflow.crd", "coordinates: a number wider than its CRD column",
     lambda: "* two invented waters\n*\n         6  EXT\n" + "\n".join(
         f"{k + 1:10d}{a[1]:10d}  {'HOH':<8s}  {a[0]:<8s}{x:20.10f}{a[3]:20.10f}{a[4]:20.10f}  {'W':<8s}  "
         f"{a[1]:<8d}{0.0:20.10f}"
         for k, (a, x) in enumerate(zip(ATOMS, [a[2] + (2e4 if k < 3 else 0) for k, a in enumerate(ATOMS)])))
     + "\n", "coords",
     "PATH: atom 1: the coordinate fields hold (20000, 0, 0) but the reader took (0, 0, 0): a number "
     "overflows its column",
     "MDAnalysis reads CRD coordinates from fixed windows and cuts the leading digits of a wider "
     "number; Tessera compares its own reading of the fields with MDAnalysis's.",
     "Write the coordinates in another format (PDB, DCD)."),
    ("dcd_beyond_bound.dcd", "trajectory: coordinates beyond 100,000 A",
     lambda: dcd_bytes([BASE_XYZ, [(2e5, 0.0, 0.0)] + SHIFTED_XYZ[1:]]), "dcd",
     "PATH: 1 atom(s) lie beyond 100000 A of the origin, first: atom 1 (W:HOH1 O) at (200000, 0, 0)",
     "Coordinates beyond 100,000 A (no molecular model is that large).", "Fix the coordinates."),
    ("pdb_coordinate_underscore.pdb", "coordinates: a coordinate 1_000",
     lambda: pdb_with().replace("   0.957   0.000   0.000", "   1_000   0.000   0.000", 1), "coords",
     "PATH:2: ATOM x coordinate (columns 31-38): expected a number (ASCII digits, sign, decimal point, "
     "exponent), got '1_000'",
     "A coordinate that is not a plain number (OpenMM and MDAnalysis would read 1_000 as 1000).",
     "Fix the coordinates."),
    ("pdb_cryst1_180.pdb", "cell: angles of 180 degrees",
     lambda: pdb_with(extra_first=cell_line("60.000", "60.000", "60.000", "180.00", "180.00", "180.00")),
     "coords",
     "PATH:1: the unit cell (60 60 60 180 180 180) has an angle outside the open interval (0, 180) degrees",
     "A degenerate cell (used to stop with ZeroDivisionError).", "Fix or remove the CRYST1 record."),
    ("pdb_cryst1_inf.pdb", "cell: an edge inf",
     lambda: pdb_with(extra_first=cell_line("inf", "30.000", "30.000", "90.00", "90.00", "90.00")), "coords",
     "PATH:1: CRYST1 a (columns 7-15): expected a number (ASCII digits, sign, decimal point, exponent), "
     "got 'inf'",
     "A cell edge that is no number (used to stop in the cell-grid search with IndexError).",
     "Fix or remove the CRYST1 record."),
    ("pdb_cryst1_no_cell.pdb", "cell: angles that form no cell",
     lambda: pdb_with(extra_first=cell_line("30.000", "30.000", "30.000", "60.00", "60.00", "150.00")),
     "coords",
     "PATH:1: the unit cell angles (60 60 150 degrees) form no cell (its volume would be zero or imaginary)",
     "Three angles that no parallelepiped has (one exceeds the sum of the other two).",
     "Fix or remove the CRYST1 record."),
    ("pdb_atom_count_mismatch.pdb", "coordinates: an atom missing",
     lambda: pdb_with(atoms=PDB_ATOMS[:5]), "coords",
     "PATH has 5 atoms but the PSF has 6",
     "The coordinates and the topology hold different atoms.", "Use the coordinates written for this PSF."),
    ("pdb_atoms_swapped.pdb", "coordinates: two atoms swapped",
     lambda: pdb_with(atoms=[PDB_ATOMS[0], PDB_ATOMS[2], PDB_ATOMS[1]] + PDB_ATOMS[3:]), "coords",
     "atom names differ between the PSF and PATH (2 atoms), e.g. atom 2: PSF 'H1' vs coordinates 'H2', "
     "atom 3: PSF 'H2' vs coordinates 'H1'",
     "The atoms of the coordinates are in another order than the topology's (names, residue names and "
     "where residues start are compared).", "Write the coordinates in the topology's order."),
    ("pdb_models_differ.pdb", "coordinates: models that differ",
     lambda: "MODEL        1\n" + "\n".join(PDB_ATOMS) + "\nENDMDL\nMODEL        2\n"
     + "\n".join(PDB_ATOMS[:5]) + "\nENDMDL\nEND\n", "builtin",
     "PATH:15: model 2 has 5 atoms but model 1 has 6: every model must hold the same atoms",
     "A multi-model PDB whose models hold different atoms (used to stop with ValueError/IndexError).",
     "Split the models into separate files, or make them consistent."),
    ("pdb_builtin_cryst1_180.pdb", "cell (built-in route): angles of 180 degrees",
     lambda: pdb_with(extra_first=cell_line("60.000", "60.000", "60.000", "180.00", "180.00", "180.00")),
     "builtin",
     "PATH:1: the unit cell (60 60 60 180 180 180) has an angle outside the open interval (0, 180) degrees",
     "As above, through the built-in force field.", "Fix or remove the CRYST1 record."),
    ("dcd_truncated_frame.dcd", "trajectory: the last frame cut off",
     lambda: DCD[:-40], "dcd",
     "PATH: frame 1 requested but the file has 1 frame(s) (0..0)",
     "A truncated trajectory: the frame asked for is not complete.", "Copy the trajectory again."),
    ("dcd_not_a_dcd.dcd", "trajectory: a damaged header",
     lambda: b"\x00" * 16 + DCD[16:], "dcd",
     "PATH: not a DCD file: it does not start with the 84-byte CORD header record",
     "The file is no DCD, or its header was damaged (this used to end in an OSError without the "
     "file name; messages of the trajectory reader are shortened to one line with the file name).",
     "Check the file and its format."),
    ("dcd_nan_coordinates.dcd", "trajectory: nan coordinates",
     lambda: dcd_bytes([BASE_XYZ, [(float("nan"), 0.0, 0.0)] + SHIFTED_XYZ[1:]]), "dcd",
     "PATH: frame 1 holds non-finite (NaN/inf) coordinates",
     "A frame with nan or inf coordinates.", "Check the trajectory."),
]


def entry_inputs(name: str, role: str) -> dict:
    damaged = f"{REL}/{name}"
    if role == "builtin":
        return builtin(damaged, frame=1 if "models" in name else 0)
    inputs = psf_route(damaged, "coords", frame=1) if role == "dcd" else psf_route(damaged, role)
    return {k: (v if k == "frame" else [p if p.startswith(REL) else f"{REL}/{p}" for p in v]
                if isinstance(v, list) else (v if v is None or v.startswith(REL) else f"{REL}/{v}"))
            for k, v in inputs.items()}


def catalogue() -> list[dict]:
    """The entries of ``catalogue.json`` (paths relative to the repository root)."""
    out = []
    for name, what, _make, role, message, cause, fix in CASES:
        path = f"{REL}/{name}"
        out.append({"file": path, "class": what, "inputs": entry_inputs(name, role),
                    "message": message.replace("PATH", path), "cause": cause, "fix": fix})
    return out


def run_entry(entry: dict) -> str:
    """Load and compute one entry (from the repository root); the message of the EnergyError,
    or ``"no error"``.  Anything but an EnergyError propagates."""
    from energy.decomposition.pipeline import compute
    from energy.errors import EnergyError
    from energy.io.loaders import load_system
    inputs = entry["inputs"]
    try:
        loaded = load_system(inputs["structure"], inputs["coords"], inputs["params"], frame=inputs["frame"])
        compute(loaded.system, loaded.frame)
    except EnergyError as exc:
        return str(exc)
    return "no error"


def write() -> None:
    base = HERE / "base"
    base.mkdir(exist_ok=True)
    (base / "water2.psf").write_text(PSF)
    (base / "water2.prm").write_text(PRM)
    (base / "water2.pdb").write_text(PDB)
    (base / "water2.dcd").write_bytes(DCD)
    for name, _what, make, _role, _message, _cause, _fix in CASES:
        content = make()
        path = HERE / name
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8", newline="\n")
    (HERE / "catalogue.json").write_text(json.dumps(catalogue(), indent=1, ensure_ascii=False) + "\n",
                                         encoding="utf-8")


def show() -> int:
    """Print every entry whose message differs from the expected one (run from the root)."""
    import os
    import sys
    os.chdir(ROOT)
    sys.path.insert(0, str(ROOT))
    bad = 0
    for entry in catalogue():
        got = run_entry(entry)
        if got != entry["message"]:
            bad += 1
            print(f"{entry['file']}\n  expected: {entry['message']}\n  got:      {got}")
    print(f"{len(CASES)} entries, {bad} differ")
    return 1 if bad else 0


if __name__ == "__main__":
    import sys
    write()
    if "--show" in sys.argv:
        sys.exit(show())
