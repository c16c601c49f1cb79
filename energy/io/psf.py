"""Reader of PSF topology files (standard and EXT layouts).

Reads the header flags (``EXT``, ``CMAP``, ``CHEQ``, ``XPLOR``, ...), the title and the sections
!NATOM, !NBOND, !NTHETA, !NPHI, !NIMPHI and !NCRTERM.  Every other section is skipped.  Atom
types may be names (``XPLOR`` style) or numbers (resolved later through the MASS records of the
parameter files).  Indices are converted to 0-based.  Charges in e, masses in amu.

Nothing in the file is trusted:

* every section we read (and !NDON, !NACC) must hold exactly as many entries as its header says
  (a section ends at a blank line, the next header or the end of the file), and may appear once;
* the atom records are numbered 1, 2, 3, ... in order;
* a section is required when the bond graph implies its kind of interaction: !NBOND when a
  residue has more than one atom, !NTHETA when an atom has two bonded partners, !NPHI when a
  bond joins two atoms that both have other partners, !NIMPHI when an atom has three partners,
  !NCRTERM when the header carries the ``CMAP`` flag (CHARMM, psfgen and ParmEd write these
  sections, with count 0 when empty);
* every atom index lies in 1..NATOM, and the atoms of one entry are distinct;
* atom records hold printable ASCII only (a control character inside a name or type would
  silently make it another);
* numbers are parsed strictly (:mod:`energy.io.numbers`): charges within +-100 e, masses
  within 0..10^6 amu.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from energy.errors import StructureFileError, quote_field
from energy.io.numbers import MAX_INT_DIGITS, parse_float, parse_int

#: Section name -> number of atom indices per entry, for the index sections we keep.
INDEX_SECTIONS = {"NBOND": 2, "NTHETA": 3, "NPHI": 4, "NIMPHI": 4, "NCRTERM": 8}
#: What each index section holds, for messages.
SECTION_WHAT = {"NATOM": "atoms", "NBOND": "bonds", "NTHETA": "angles", "NPHI": "dihedrals",
                "NIMPHI": "impropers", "NCRTERM": "cross-terms", "NDON": "donors", "NACC": "acceptors"}
#: Sections not used for energies whose counts are checked too: (donor or acceptor, its
#: hydrogen or antecedent) pairs, where 0 means none.
CHECKED_ONLY = {"NDON": 2, "NACC": 2}
#: Largest |charge| of one atom (e) and largest mass (amu) accepted (common practice: no atom of
#: a molecular model comes near either).
CHARGE_BOUND_E = 100.0
MASS_BOUND_AMU = 1.0e6
_RESID = re.compile(rf"([+-]?[0-9]{{1,{MAX_INT_DIGITS}}})([A-Za-z]*)\Z")
_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_]*\Z")
_PRINTABLE_ASCII = re.compile(r"[ -~\t]*\Z")
_INDEX_LINE = re.compile(r"[0-9 \t+-]*\Z")


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


def _header(text: str):
    """``(count words, NAME)`` if ``text`` is a section header ``<count> [<count>...] !NAME``."""
    if "!" not in text:
        return None
    left, right = text.split("!", 1)
    words, names = left.split(), right.split()
    if not words or not names or _NAME.match(names[0].rstrip(":")) is None:
        return None
    if not all(w.lstrip("+-").isascii() and w.lstrip("+-").isdigit() for w in words):
        return None
    return words, names[0].rstrip(":").upper()


def _section_end(lines, start: int) -> int:
    """Index of the line that ends the section starting at ``lines[start]``: a blank line, the
    next header, or the end of the file."""
    i = start
    while i < len(lines):
        text = lines[i]
        if not text.strip() or _header(text) is not None:
            return i
        i += 1
    return i


def _parse_atom_line(path, lineno: int, text: str, serial: int):
    """One !NATOM record -> (segid, resid, icode, resname, name, type, charge, mass).

    Whitespace-separated fields ``serial segid resid resname name type charge mass ...``; a blank
    segment id (8 fields) is accepted.  The serial must be ``serial``.
    """
    if _PRINTABLE_ASCII.match(text) is None:
        raise StructureFileError(path, f"!NATOM record {serial}: non-ASCII or control character in "
                                       f"{quote_field(text.strip())}", lineno)
    words = text.split()
    if len(words) >= 9 and _RESID.match(words[2]):
        seg, resid, resname, name, atype, charge, mass = words[1:8]
    elif len(words) >= 8 and _RESID.match(words[1]):
        seg, (resid, resname, name, atype, charge, mass) = "", words[1:7]
    else:
        raise StructureFileError(path, "malformed !NATOM record: expected 'serial segid resid resname "
                                       f"name type charge mass imove', got {quote_field(text.strip())}",
                                 lineno)
    number = parse_int(words[0], "!NATOM atom serial", path, lineno)
    if number != serial:
        raise StructureFileError(path, f"!NATOM: record {serial} is numbered {number}: atom records "
                                       "must be numbered 1, 2, 3, ... in order", lineno)
    match = _RESID.match(resid)
    q = parse_float(charge, f"!NATOM atom {serial} charge (e)", path, lineno, bound=CHARGE_BOUND_E)
    m = parse_float(mass, f"!NATOM atom {serial} mass (amu)", path, lineno, low=0.0, bound=MASS_BOUND_AMU)
    return seg, int(match.group(1)), match.group(2), resname, name, atype, q, m


def _read_atoms(path, lines, start: int, count: int, header_line: int):
    """The ``count`` atom records from ``lines[start:]``; returns (records, next line index)."""
    end = _section_end(lines, start)
    found = end - start
    if found != count:
        raise StructureFileError(path, f"!NATOM: the header says {count} atoms but the section holds "
                                       f"{found} records", header_line)
    return [_parse_atom_line(path, start + k + 1, lines[start + k], k + 1) for k in range(count)], end


def _read_indices(path, lines, start: int, count: int, width: int, section: str, n_atoms: int,
                  header_line: int, lowest: int = 1, distinct: bool = True):
    """The ``count`` entries of ``width`` 1-based atom indices from ``lines[start:]``, checked
    (count, range ``lowest..n_atoms``, distinct atoms per entry unless not ``distinct``); returns
    ((count, width) 0-based array, next line)."""
    end = _section_end(lines, start)
    values: list[int] = []
    line_of: list[int] = []
    for i in range(start, end):
        text = lines[i]
        words = text.split()
        try:
            if _INDEX_LINE.match(text) is None or any(len(w) > MAX_INT_DIGITS for w in words):
                raise ValueError
            row = [int(w) for w in words]
        except ValueError:  # say which word is wrong
            row = [parse_int(w, f"!{section} atom index", path, i + 1) for w in words]
        bad = [v for v in row if not lowest <= v <= n_atoms]
        if bad:
            raise StructureFileError(path, f"!{section}: atom index {bad[0]} outside {lowest}..{n_atoms}", i + 1)
        values.extend(row)
        line_of.extend([i + 1] * len(row))
    what = SECTION_WHAT[section]
    if len(values) != count * width:
        found = f"{len(values) // width}" + (f" and {len(values) % width} stray indices"
                                              if len(values) % width else "")
        span = f"lines {header_line}-{end}" if end > header_line else f"line {header_line}"
        raise StructureFileError(path, f"!{section}: the header says {count} {what} but the section "
                                       f"holds {found} ({span})", header_line)
    arr = np.asarray(values, dtype=np.intp).reshape(count, width) - 1
    for part in ([arr] if width != 8 else [arr[:, :4], arr[:, 4:]]) if distinct else ():
        ordered = np.sort(part, axis=1)
        twice = ordered[:, 1:] == ordered[:, :-1]
        rows = np.flatnonzero(twice.any(axis=1))
        if len(rows):
            k = int(rows[0])
            atom = int(ordered[k, 1:][twice[k]][0]) + 1
            raise StructureFileError(path, f"!{section}: entry {k + 1} names atom {atom} twice",
                                     line_of[k * width])
    return arr, end


def _required_sections(flags, resindex_changes, n_atoms: int, bonds) -> dict:
    """Section -> why it is required, from the residues and the bond graph."""
    need = {}
    if n_atoms and resindex_changes < n_atoms:
        need["NBOND"] = "a residue has more than one atom"
    if bonds is not None and len(bonds):
        degree = np.bincount(bonds.ravel(), minlength=n_atoms)
        if degree.max() >= 2:
            need["NTHETA"] = "an atom has two bonded partners"
        if np.any((degree[bonds[:, 0]] >= 2) & (degree[bonds[:, 1]] >= 2)):
            need["NPHI"] = "the bonds form a chain of four atoms"
        if degree.max() >= 3:
            need["NIMPHI"] = "an atom has three bonded partners"
    if "CMAP" in flags:
        need["NCRTERM"] = "the header carries the CMAP flag"
    return need


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
        If the file cannot be read, a record is malformed, a section's count differs from its
        entries or a required section is missing (message carries file and line).
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
                                       f"{quote_field(first)}", 1)
    flags = tuple(w.upper() for w in lines[0].split()[1:])
    sections: dict[str, np.ndarray] = {}
    seen: dict[str, int] = {}
    title: list[str] = []
    atoms = None
    i = 1
    while i < len(lines):
        header = _header(lines[i])
        if not header:
            if lines[i].strip() and atoms is None and not lines[i].lstrip().startswith("*"):
                if "!" in lines[i]:
                    raise StructureFileError(path, "malformed section header: expected "
                                                   f"'<count> !NAME', got {quote_field(lines[i].strip())}",
                                             i + 1)
            i += 1
            continue
        words, name = header
        header_line = i + 1
        counts = [parse_int(w, f"!{name} header count", path, header_line, low=0) for w in words]
        i += 1
        if name in seen and (name in INDEX_SECTIONS or name in CHECKED_ONLY or name in ("NATOM", "NTITLE")):
            raise StructureFileError(path, f"!{name} appears twice (lines {seen[name]} and {header_line})",
                                     header_line)
        seen[name] = header_line
        if name == "NTITLE":
            title = [ln.strip() for ln in lines[i:i + counts[0]]]
            i += counts[0]
        elif name == "NATOM":
            atoms, i = _read_atoms(path, lines, i, counts[0], header_line)
        elif name in INDEX_SECTIONS:
            if atoms is None:
                raise StructureFileError(path, f"!{name} before !NATOM", header_line)
            sections[name], i = _read_indices(path, lines, i, counts[0], INDEX_SECTIONS[name], name,
                                              len(atoms), header_line)
        elif name in CHECKED_ONLY and atoms is not None:
            _, i = _read_indices(path, lines, i, counts[0], CHECKED_ONLY[name], name, len(atoms), header_line,
                                 lowest=0, distinct=False)
    if atoms is None:
        raise StructureFileError(path, "no !NATOM section found")
    cols = list(zip(*atoms)) if atoms else [()] * 8
    labels = list(zip(cols[0], cols[1], cols[2], cols[3])) if atoms else []
    residues = sum(1 for k in range(len(labels)) if k == 0 or labels[k] != labels[k - 1])
    missing = {sec: why for sec, why in _required_sections(flags, residues, len(atoms),
                                                            sections.get("NBOND")).items()
               if sec not in sections}
    if missing:
        sec, why = next(iter(missing.items()))
        raise StructureFileError(path, f"no !{sec} section ({SECTION_WHAT[sec]}) although {why}: the "
                                       "file is truncated or the section was deleted")

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
