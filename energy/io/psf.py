"""Reader of PSF topology files (standard and EXT layouts).

Reads the header flags (``EXT``, ``CMAP``, ``CHEQ``, ``XPLOR``, ...), the title and the sections
!NATOM, !NBOND, !NTHETA, !NPHI, !NIMPHI and !NCRTERM.  Every other section is skipped.  Atom
types may be names (``XPLOR`` style) or numbers (resolved later through the MASS records of the
parameter files).  Indices are converted to 0-based.  Charges in e, masses in amu.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from energy.errors import StructureFileError

#: Section name -> number of atom indices per entry, for the index sections we keep.
INDEX_SECTIONS = {"NBOND": 2, "NTHETA": 3, "NPHI": 4, "NIMPHI": 4, "NCRTERM": 8}
_RESID = re.compile(r"^(-?\d+)([A-Za-z]*)$")
_HEADER = re.compile(r"^\s*((?:-?\d+\s+)*-?\d+)\s*!\s*(\w+(?:\s+\w+)*)")


@dataclass(frozen=True)
class PsfTopology:
    """A PSF file as plain per-atom arrays and 0-based index arrays.

    Per-atom (n_atoms,) arrays: ``segids``, ``resids`` (int), ``icodes`` (insertion letters, ''
    if none), ``resnames``, ``names``, ``types`` (as written: names or numbers as text),
    ``charges`` (e), ``masses`` (amu).  Index arrays: ``bonds`` (n, 2), ``angles`` (n, 3),
    ``dihedrals`` (n, 4), ``impropers`` (n, 4), ``cmaps`` (n, 8).
    """

    path: str
    flags: tuple
    title: tuple
    segids: np.ndarray
    resids: np.ndarray
    icodes: np.ndarray
    resnames: np.ndarray
    names: np.ndarray
    types: np.ndarray
    charges: np.ndarray
    masses: np.ndarray
    bonds: np.ndarray
    angles: np.ndarray
    dihedrals: np.ndarray
    impropers: np.ndarray
    cmaps: np.ndarray

    @property
    def n_atoms(self) -> int:
        return len(self.names)


def _parse_atom_line(path, lineno: int, text: str):
    """One !NATOM record -> (segid, resid, icode, resname, name, type, charge, mass).

    Whitespace-separated fields; a blank segment id (8 fields instead of 9+) is accepted.
    """
    words = text.split()
    layouts = []
    if len(words) >= 9:
        layouts.append(words[1:8])
    if len(words) >= 8:
        layouts.append([""] + words[1:7])
    for seg, resid, resname, name, atype, charge, mass in layouts:
        match = _RESID.match(resid)
        try:
            q, m = float(charge), float(mass)
            int(words[0])
        except ValueError:
            continue
        if match and np.isfinite(q) and np.isfinite(m):
            return seg, int(match.group(1)), match.group(2), resname, name, atype, q, m
    raise StructureFileError(path, "malformed !NATOM record: expected 'serial segid resid resname "
                                   f"name type charge mass imove', got {text.strip()!r}", lineno)


def _read_indices(path, lines, start: int, count: int, width: int, section: str):
    """Read ``count * width`` 1-based integers from ``lines[start:]``; return (array, next line)."""
    values: list[int] = []
    i = start
    need = count * width
    while len(values) < need:
        if i >= len(lines):
            raise StructureFileError(path, f"!{section}: file ended after {len(values)} of {need} "
                                           "atom indices", len(lines))
        text = lines[i].split("!")[0]
        if not text.strip():
            raise StructureFileError(path, f"!{section}: expected {need} atom indices "
                                           f"({count} entries of {width}), found {len(values)}",
                                     i + 1)
        for word in text.split():
            try:
                values.append(int(word))
            except ValueError:
                raise StructureFileError(path, f"!{section}: expected an integer atom index, "
                                               f"got {word!r}", i + 1) from None
        i += 1
    if len(values) != need:
        raise StructureFileError(path, f"!{section}: expected {need} atom indices, found "
                                       f"{len(values)}", i)
    arr = np.asarray(values, dtype=np.intp).reshape(count, width) - 1
    return arr, i


def read_psf(path) -> PsfTopology:
    """Read a PSF file.

    Parameters
    ----------
    path : str or os.PathLike
        The PSF file.

    Returns
    -------
    PsfTopology

    Raises
    ------
    StructureFileError
        If the file cannot be read or a record is malformed (message carries file and line).
    """
    path = str(path)
    try:
        with open(path, encoding="utf-8", errors="replace") as handle:
            lines = handle.read().splitlines()
    except OSError as exc:
        raise StructureFileError(path, f"cannot read PSF file: {exc.strerror or exc}") from None
    if not lines or not lines[0].lstrip().upper().startswith("PSF"):
        first = lines[0].strip() if lines else ""
        raise StructureFileError(path, f"not a PSF file: first line must start with 'PSF', got "
                                       f"{first!r}", 1)
    flags = tuple(w.upper() for w in lines[0].split()[1:])
    sections: dict[str, np.ndarray] = {}
    title: list[str] = []
    atoms = None
    i = 1
    while i < len(lines):
        header = _HEADER.match(lines[i])
        if not header:
            if lines[i].strip() and atoms is None and not lines[i].lstrip().startswith("*"):
                if "!" in lines[i]:
                    raise StructureFileError(path, "malformed section header: expected "
                                                   f"'<count> !NAME', got {lines[i].strip()!r}",
                                             i + 1)
            i += 1
            continue
        counts = [int(w) for w in header.group(1).split()]
        name = header.group(2).split()[0].upper()
        i += 1
        if counts[0] < 0:
            raise StructureFileError(path, f"!{name}: negative count {counts[0]}", i)
        if name == "NTITLE":
            title = [ln.strip() for ln in lines[i:i + counts[0]]]
            i += counts[0]
        elif name == "NATOM":
            atoms = []
            for k in range(counts[0]):
                if i + k >= len(lines) or not lines[i + k].strip():
                    raise StructureFileError(path, f"!NATOM: expected {counts[0]} atom records, "
                                                   f"found {k}", min(i + k + 1, len(lines)))
                atoms.append(_parse_atom_line(path, i + k + 1, lines[i + k]))
            i += counts[0]
        elif name in INDEX_SECTIONS:
            if atoms is None:
                raise StructureFileError(path, f"!{name} before !NATOM", i)
            width = INDEX_SECTIONS[name]
            arr, i = _read_indices(path, lines, i, counts[0], width, name)
            if arr.size and (arr.min() < 0 or arr.max() >= len(atoms)):
                raise StructureFileError(path, f"!{name}: atom index outside 1..{len(atoms)}", i)
            sections[name] = arr
    if atoms is None:
        raise StructureFileError(path, "no !NATOM section found")
    cols = list(zip(*atoms)) if atoms else [()] * 8

    def empty(width):
        return np.zeros((0, width), dtype=np.intp)

    return PsfTopology(
        path=path, flags=flags, title=tuple(title),
        segids=np.array(cols[0], dtype=object), resids=np.array(cols[1], dtype=np.int64),
        icodes=np.array(cols[2], dtype=object), resnames=np.array(cols[3], dtype=object),
        names=np.array(cols[4], dtype=object), types=np.array(cols[5], dtype=object),
        charges=np.array(cols[6], dtype=np.float64), masses=np.array(cols[7], dtype=np.float64),
        **{key: sections.get(sec, empty(w)) for key, sec, w in (
            ("bonds", "NBOND", 2), ("angles", "NTHETA", 3), ("dihedrals", "NPHI", 4),
            ("impropers", "NIMPHI", 4), ("cmaps", "NCRTERM", 8))})
