"""Strict check of the numbers in text coordinate files, before a library reads them.

OpenMM and MDAnalysis convert coordinate fields with Python's ``float``, which also takes
``1_000``, ``nan``, ``inf`` and digits of other scripts.  :func:`check_coordinate_text` reads
the coordinate (and unit-cell) fields of the text formats first and refuses any that is not a
plain ASCII number (:func:`energy.io.numbers.parse_float`), naming the file and line:

* PDB (``.pdb``, ``.ent``): columns 31-38, 39-46, 47-54 of ATOM/HETATM records, which hold at
  most the format's 80 columns (a widened field shifts every column after it); the six cell
  fields of CRYST1, which must form a cell (:func:`energy.io.validation.check_cell`); every
  MODEL must list the same atoms (name, residue, chain, number) in the same order as the first,
  or a frame would silently pair coordinates with the wrong atoms;
* CHARMM coordinates (``.crd``, ``.cor``): fields 5-7 of each atom record, which must also be
  what MDAnalysis reads (it takes them from fixed windows and silently cuts the leading digits
  of a number wider than its column: :func:`compare_with_reader`);
* mmCIF (``.cif``, ``.mmcif``, ``.pdbx``): ``_atom_site.Cartn_x/y/z`` and ``_cell.length_*`` /
  ``_cell.angle_*``; lines of at most 2048 characters (CIF 1.1).

Other formats are binary (their values are checked after reading) or left to their reader.
"""
from __future__ import annotations

import gzip
import os
import re

import numpy as np

from energy.errors import StructureFileError
from energy.io.numbers import parse_float
from energy.io.pdb_columns import text_records_plain
from energy.io.validation import check_cell

#: Coordinates of a text file may reach this magnitude before the geometry checks judge them.
_TEXT_BOUND = 1.0e30
_CIF_TOKEN = re.compile(r"'[^']*'|\"[^\"]*\"|\S+")
_CIF_CELL = {"_cell.length_a", "_cell.length_b", "_cell.length_c", "_cell.angle_alpha",
             "_cell.angle_beta", "_cell.angle_gamma"}


def _text(path) -> str:
    opener = gzip.open if os.fspath(path).lower().endswith(".gz") else open
    try:
        with opener(path, "rt", encoding="utf-8", errors="replace") as handle:
            return handle.read()
    except (OSError, EOFError) as exc:
        raise StructureFileError(path, f"cannot read coordinates: {getattr(exc, 'strerror', None) or exc}") from None


def _field(path, lineno, text, what):
    return parse_float(text.strip(), what, path, lineno, bound=_TEXT_BOUND)


def _model_atom(line: str) -> str:
    """The identity of an atom record: name, alternate location, residue name, chain, number."""
    return line[12:27]


def _compare_models(path, first, model, number, lineno) -> None:
    if len(model) != len(first):
        raise StructureFileError(path, f"model {number} has {len(model)} atoms but model 1 has {len(first)}: "
                                       "every model must hold the same atoms", lineno)
    for k, (a, b) in enumerate(zip(first, model)):
        if a != b:
            raise StructureFileError(path, f"model {number} differs from model 1 at atom {k + 1}: "
                                           f"{b.strip()!r} instead of {a.strip()!r}", lineno)


def _check_pdb(path, lines, text) -> None:
    if text_records_plain(text):
        _check_cryst1(path, lines)  # every coordinate plainly written: nothing to name line by line
        return
    models: list[list[str]] = []
    current: list[str] | None = None
    for lineno, line in enumerate(lines, 1):
        record = line[:6]
        if record == "MODEL ":
            if current is not None and len(models) > 1:
                _compare_models(path, models[0], current, len(models), lineno)
            current = []
            models.append(current)
        elif record == "ENDMDL" and current is not None:
            if len(models) > 1:
                _compare_models(path, models[0], current, len(models), lineno)
            current = None
        if record in ("ATOM  ", "HETATM") and current is not None:
            current.append(_model_atom(line))
        if record in ("ATOM  ", "HETATM"):
            width = len(line.rstrip())
            if width < 54:
                raise StructureFileError(path, f"{record.strip()} record too short for its coordinates "
                                               f"(columns 31-54): {width} characters", lineno)
            if width > 80:
                raise StructureFileError(path, f"{record.strip()} record of {width} characters, longer than the "
                                               "format's 80 columns: a field was widened, so the columns no longer "
                                               "line up", lineno)
            for axis, lo in (("x", 30), ("y", 38), ("z", 46)):
                _field(path, lineno, line[lo:lo + 8], f"{record.strip()} {axis} coordinate (columns "
                                                      f"{lo + 1}-{lo + 8})")
        elif record == "CRYST1":
            _check_cryst1_line(path, lineno, line)


def _check_cryst1_line(path, lineno, line) -> None:
    fields = (("a", 6, 15), ("b", 15, 24), ("c", 24, 33), ("alpha", 33, 40), ("beta", 40, 47),
              ("gamma", 47, 54))
    values = [_field(path, lineno, line[lo:hi], f"CRYST1 {name} (columns {lo + 1}-{hi})")
              for name, lo, hi in fields if line[lo:hi].strip()]
    if len(values) == 6:
        check_cell(values, f"{path}:{lineno}")


def _check_cryst1(path, lines) -> None:
    for lineno, line in enumerate(lines, 1):
        if line.startswith("CRYST1"):
            _check_cryst1_line(path, lineno, line)


def _check_crd(path, lines, text):
    """The coordinates of a CHARMM CRD file, (n, 3) float64, parsed strictly."""
    i = 0
    while i < len(lines) and lines[i].lstrip().startswith("*"):
        i += 1
    xyz = []
    for lineno in range(i + 2, len(lines) + 1):  # the line after the title holds the atom count
        words = lines[lineno - 1].split()
        if not words:
            continue
        if len(words) < 7:
            raise StructureFileError(path, "CRD atom record: expected 'atomno resno resname atomname x y z "
                                           "...'", lineno)
        xyz.append([_field(path, lineno, word, f"CRD {axis} coordinate") for axis, word in zip("xyz", words[4:7])])
    return np.array(xyz, dtype=np.float64).reshape(-1, 3)


#: Longest line of a CIF file (CIF 1.1 specification, IUCr: lines are at most 2048 characters).
CIF_MAX_LINE = 2048


def _check_cif(path, lines, text) -> None:
    for lineno, line in enumerate(lines, 1):
        if len(line) > CIF_MAX_LINE:
            raise StructureFileError(path, f"line of {len(line)} characters: CIF lines are at most "
                                           f"{CIF_MAX_LINE} characters", lineno)
    i = 0
    while i < len(lines):
        line = lines[i].strip()
        if line.split()[:1] and line.split()[0].lower() in _CIF_CELL and len(line.split()) >= 2:
            _field(path, i + 1, line.split()[1], line.split()[0])
        if line.lower() != "loop_":
            i += 1
            continue
        i += 1
        columns = []
        while i < len(lines) and lines[i].strip().startswith("_"):
            columns.append(lines[i].split()[0].lower())
            i += 1
        wanted = {k: columns.index(f"_atom_site.cartn_{axis}") for k, axis in enumerate("xyz")
                  if f"_atom_site.cartn_{axis}" in columns}
        tokens = []
        while i < len(lines):
            text = lines[i].strip()
            if text.startswith(("_", "loop_", "#", "data_")) or text.lower() == "loop_":
                break
            tokens.extend((i + 1, t) for t in _CIF_TOKEN.findall(text))
            i += 1
        if wanted and columns:
            for start in range(0, len(tokens) - len(columns) + 1, len(columns)):
                for k, column in wanted.items():
                    lineno, token = tokens[start + column]
                    _field(path, lineno, token, f"_atom_site.Cartn_{'xyz'[k]}")


def check_coordinate_text(path):
    """Refuse a text coordinate file whose coordinate or cell fields are not plain numbers.

    Parameters
    ----------
    path : str or os.PathLike
        Any coordinate file; formats other than PDB, CRD and mmCIF pass unread.

    Returns
    -------
    (n, 3) float64 array or None
        The coordinates of a CRD file (for :func:`compare_with_reader`); None otherwise.

    Raises
    ------
    StructureFileError
        A field is not an ASCII number, or not finite (file, line and the field in the message).
    """
    path = os.fspath(path)
    name = path.lower()[:-3] if path.lower().endswith(".gz") else path.lower()
    suffix = name.rsplit(".", 1)[-1] if "." in os.path.basename(name) else ""
    checker = {"pdb": _check_pdb, "ent": _check_pdb, "crd": _check_crd, "cor": _check_crd,
               "cif": _check_cif, "mmcif": _check_cif, "pdbx": _check_cif}.get(suffix)
    if checker is not None:
        text = _text(path)
        return checker(path, text.splitlines(), text)
    return None


def compare_with_reader(path, parsed, positions) -> None:
    """Refuse a file whose coordinates a library read differently from its fields.

    MDAnalysis reads CRD coordinates from fixed windows, and cuts a wide number's leading digits.

    Parameters
    ----------
    path : str or os.PathLike
        The file (named in the error).
    parsed : (n, 3) float64 array or None
        What :func:`check_coordinate_text` parsed (None: nothing to compare).
    positions : (n, 3) array
        The library's first frame (float32 in MDAnalysis: compared to 1e-6 relative).

    Raises
    ------
    StructureFileError
        A coordinate differs by more than 1e-3 A + 1e-6 relative (a number overflows its column).
    """
    if parsed is None or len(parsed) != len(positions):
        return
    got = np.asarray(positions, dtype=np.float64)
    off = np.abs(got - parsed) > 1e-3 + 1e-6 * np.abs(parsed)
    if off.any():
        i = int(np.flatnonzero(off.any(axis=1))[0])
        raise StructureFileError(path, f"atom {i + 1}: the coordinate fields hold "
                                       f"({', '.join(f'{v:.6g}' for v in parsed[i])}) but the reader took "
                                       f"({', '.join(f'{v:.6g}' for v in got[i])}): a number overflows its "
                                       "column")
