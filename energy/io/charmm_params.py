"""Reader of CHARMM-style parameter and stream files.

Sections read: ATOMS (MASS records), BONDS, ANGLES (with optional Urey-Bradley columns),
DIHEDRALS (multi-term, ``X`` wildcards), IMPROPER (wildcards), CMAP grids, NONBONDED (with
optional 1-4 columns), NBFIX; HBOND/THOLE sections are skipped and END closes a section.
Stream files (``read rtf card`` / ``read param card`` blocks) are recognised: RTF blocks are
skipped except for their MASS records, parameter blocks are read.  ``!`` starts a comment, a
trailing ``-`` continues a line, keywords and types are case-insensitive (types are upper-cased).

Several files are merged in order: a later definition of the same type combination replaces the
earlier one (for a dihedral, all terms of the quadruplet from the later file replace the earlier
file's terms; within one file, consecutive lines add terms and a repeated periodicity replaces).

Values are kept as in the files: kcal/mol, angstrom, degrees; energies are ``K (x - x0)^2``.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from energy.errors import StructureFileError

#: Section keyword prefixes (first four letters, upper case) -> section name.
SECTION_KEYWORDS = {"ATOM": "ATOMS", "BOND": "BONDS", "ANGL": "ANGLES", "THET": "ANGLES",
                    "DIHE": "DIHEDRALS", "PHI": "DIHEDRALS", "IMPR": "IMPROPER",
                    "IMPH": "IMPROPER", "CMAP": "CMAP", "NONB": "NONBONDED",
                    "NBON": "NONBONDED", "NBFI": "NBFIX", "HBON": "SKIP", "THOL": "SKIP",
                    "NBTH": "SKIP", "END": None}


def canonical_pair(a: str, b: str) -> tuple:
    """The type pair in canonical order (the smaller name first): bonds read the same both ways.

    Parameters
    ----------
    a, b : str
        Atom types.

    Returns
    -------
    tuple of (str, str)
        ``(a, b)`` or ``(b, a)``.
    """
    return (a, b) if a <= b else (b, a)


def canonical_angle(a: str, b: str, c: str) -> tuple:
    """The type triplet in canonical order (outer types ascending, the vertex kept in the middle).

    Parameters
    ----------
    a, b, c : str
        Atom types, ``b`` the vertex.

    Returns
    -------
    tuple of (str, str, str)
        ``(a, b, c)`` or ``(c, b, a)``.
    """
    return (a, b, c) if a <= c else (c, b, a)


def canonical_quad(types) -> tuple:
    """The smaller of the quadruplet and its reverse (a torsion reads the same both ways).

    Parameters
    ----------
    types : sequence of str
        Four atom types (``X`` for a wildcard).

    Returns
    -------
    tuple of str
        The four types, forward or reversed.
    """
    key = tuple(types)
    return min(key, key[::-1])


def canonical_cmap(types) -> tuple:
    """Canonical key of a CMAP term: each of its two torsions in :func:`canonical_quad` order.

    Parameters
    ----------
    types : sequence of str
        Eight atom types, the phi torsion then the psi torsion.

    Returns
    -------
    tuple of str
        Eight types.
    """
    return canonical_quad(types[:4]) + canonical_quad(types[4:])


@dataclass
class CharmmParameters:
    """Merged parameter set, keyed by canonical type tuples (see the ``canonical_*`` helpers).

    masses: type -> mass (amu); type_numbers: MASS number -> type (for numeric PSF types).
    bonds: (t1, t2) -> (K kcal/mol/A^2, r0 A).
    angles: (t1, t2, t3) -> (K kcal/mol/rad^2, theta0 deg, Kub kcal/mol/A^2 or None, S0 A or None).
    dihedrals: 4 types -> list of (K kcal/mol, periodicity, phase deg).
    impropers: 4 types -> (K, periodicity (0 = harmonic), psi0 deg).
    cmaps: 8 types -> (n, n) grid in kcal/mol, [phi index, psi index] from -180 deg.
    nonbonded: type -> (epsilon (<= 0 as written), Rmin/2, eps14, Rmin14/2) (1-4 may be None).
    nbfix: (t1, t2) -> (Emin, Rmin, Emin14, Rmin14), 1-4 values None where not given.
    e14fac: 1-4 electrostatic scaling; nbxmod: exclusion mode of the NONBONDED header.
    """

    masses: dict = field(default_factory=dict)
    type_numbers: dict = field(default_factory=dict)
    bonds: dict = field(default_factory=dict)
    angles: dict = field(default_factory=dict)
    dihedrals: dict = field(default_factory=dict)
    impropers: dict = field(default_factory=dict)
    cmaps: dict = field(default_factory=dict)
    nonbonded: dict = field(default_factory=dict)
    nbfix: dict = field(default_factory=dict)
    e14fac: float = 1.0
    nbxmod: int = 5
    source_files: tuple = ()


def _logical_lines(path, raw_lines, first_lineno=1):
    """Yield (line number, text) with comments stripped and ``-`` continuations joined."""
    pending, start = "", None
    for offset, raw in enumerate(raw_lines):
        text = raw.split("!", 1)[0].rstrip()
        if start is None:
            start = first_lineno + offset
        if text.endswith("-") and not text.endswith("--"):
            pending += text[:-1] + " "
            continue
        text = (pending + text).strip()
        pending, line_start, start = "", start, None
        if text:
            yield line_start, text
    if pending.strip():
        yield start, pending.strip()


def _floats(path, lineno, words, what):
    try:
        return [float(w) for w in words]
    except ValueError:
        raise StructureFileError(path, f"{what}: expected numbers, got {' '.join(words)!r}",
                                 lineno) from None


def _need(path, lineno, words, n, what, layout):
    if len(words) < n:
        raise StructureFileError(path, f"{what}: expected '{layout}', got {' '.join(words)!r}",
                                 lineno)


class _FileReader:
    """Parses one parameter text into a fresh :class:`CharmmParameters` (merged later)."""

    def __init__(self, path):
        self.path = path
        self.out = CharmmParameters(e14fac=None, nbxmod=None)  # None: not set in this file
        self.section = None
        self.cmap_key, self.cmap_size, self.cmap_values, self.cmap_line = None, 0, [], 0

    def feed(self, lines, first_lineno=1):
        for lineno, text in _logical_lines(self.path, lines, first_lineno):
            if text.startswith("*"):
                continue  # title line
            words = text.upper().split()
            keyword = SECTION_KEYWORDS.get(words[0][:4], SECTION_KEYWORDS.get(words[0], "no"))
            if keyword != "no" and not (self.section == "CMAP" and _is_number(words[0])):
                self._close_cmap()
                self.section = keyword
                if keyword == "NONBONDED":
                    self._nonbonded_header(lineno, words)
                continue
            if words[0] == "MASS":
                self._mass(lineno, words)
            elif self.section in (None, "SKIP", "ATOMS"):
                continue
            else:
                getattr(self, "_" + self.section.lower())(lineno, words)
        self._close_cmap()

    def _nonbonded_header(self, lineno, words):
        for key, attr, conv in (("NBXMOD", "nbxmod", int), ("E14FAC", "e14fac", float)):
            if key in words:
                idx = words.index(key)
                _need(self.path, lineno, words, idx + 2, "NONBONDED header", f"{key} <value>")
                try:
                    setattr(self.out, attr, conv(words[idx + 1]))
                except ValueError:
                    raise StructureFileError(self.path, f"NONBONDED header: {key} needs a number, "
                                                        f"got {words[idx + 1]!r}", lineno) from None

    def _mass(self, lineno, words):
        _need(self.path, lineno, words, 4, "MASS", "MASS number type mass [element]")
        number, mass = _floats(self.path, lineno, [words[1], words[3]], "MASS")
        self.out.masses[words[2]] = mass
        if number >= 0:
            self.out.type_numbers[int(number)] = words[2]

    def _bonds(self, lineno, words):
        _need(self.path, lineno, words, 4, "BONDS", "type1 type2 Kb b0")
        k, r0 = _floats(self.path, lineno, words[2:4], "BONDS")
        self.out.bonds[canonical_pair(*words[:2])] = (k, r0)

    def _angles(self, lineno, words):
        _need(self.path, lineno, words, 5, "ANGLES", "type1 type2 type3 Ktheta theta0 [Kub S0]")
        values = _floats(self.path, lineno, words[3:7], "ANGLES")
        if len(values) == 3:
            raise StructureFileError(self.path, "ANGLES: Urey-Bradley needs both Kub and S0",
                                     lineno)
        ub = tuple(values[2:4]) if len(values) == 4 else (None, None)
        self.out.angles[canonical_angle(*words[:3])] = (values[0], values[1]) + ub

    def _dihedrals(self, lineno, words):
        _need(self.path, lineno, words, 7, "DIHEDRALS", "t1 t2 t3 t4 Kchi n delta")
        k, n, phase = _floats(self.path, lineno, words[4:7], "DIHEDRALS")
        if n != int(n) or n <= 0:
            raise StructureFileError(self.path, f"DIHEDRALS: periodicity must be a positive "
                                                f"integer, got {words[5]}", lineno)
        terms = self.out.dihedrals.setdefault(canonical_quad(words[:4]), [])
        terms[:] = [t for t in terms if t[1] != int(n)] + [(k, int(n), phase)]

    def _improper(self, lineno, words):
        _need(self.path, lineno, words, 6, "IMPROPER", "t1 t2 t3 t4 Kpsi [n] psi0")
        values = _floats(self.path, lineno, words[4:7], "IMPROPER")
        k, n, psi0 = (values[0], 0.0, values[1]) if len(values) == 2 else values
        self.out.impropers[canonical_quad(words[:4])] = (k, int(n), psi0)

    def _cmap(self, lineno, words):
        if _is_number(words[0]):
            if self.cmap_key is None:
                raise StructureFileError(self.path, "CMAP: grid values before a header line "
                                                    "(8 types and the grid size)", lineno)
            self.cmap_values.extend(_floats(self.path, lineno, words, "CMAP grid"))
            return
        self._close_cmap()
        _need(self.path, lineno, words, 9, "CMAP", "t1 ... t8 gridsize")
        try:
            size = int(words[8])
        except ValueError:
            size = 0
        if size <= 0:
            raise StructureFileError(self.path, f"CMAP: grid size must be a positive integer, got "
                                                f"{words[8]!r}", lineno)
        self.cmap_key, self.cmap_size, self.cmap_values = canonical_cmap(words[:8]), size, []
        self.cmap_line = lineno

    def _close_cmap(self):
        if self.cmap_key is None:
            return
        n = self.cmap_size
        if len(self.cmap_values) != n * n:
            raise StructureFileError(self.path, f"CMAP: grid of size {n} needs {n * n} values, "
                                                f"found {len(self.cmap_values)}", self.cmap_line)
        self.out.cmaps[self.cmap_key] = np.asarray(self.cmap_values, float).reshape(n, n)
        self.cmap_key = None

    def _nonbonded(self, lineno, words):
        _need(self.path, lineno, words, 4, "NONBONDED", "type ignored epsilon Rmin/2 "
                                                        "[ignored eps14 Rmin14/2]")
        values = _floats(self.path, lineno, words[1:7], "NONBONDED")
        eps14, rmin14 = (values[4], values[5]) if len(values) >= 6 else (None, None)
        self.out.nonbonded[words[0]] = (values[1], values[2], eps14, rmin14)

    def _nbfix(self, lineno, words):
        _need(self.path, lineno, words, 4, "NBFIX", "type1 type2 Emin Rmin [Emin14 Rmin14]")
        values = _floats(self.path, lineno, words[2:6], "NBFIX")
        e14, r14 = (abs(values[2]), values[3]) if len(values) >= 4 else (None, None)
        self.out.nbfix[canonical_pair(*words[:2])] = (abs(values[0]), values[1], e14, r14)


def _is_number(word: str) -> bool:
    try:
        float(word)
    except ValueError:
        return False
    return True


def _read_one(path) -> CharmmParameters:
    try:
        with open(path, encoding="utf-8", errors="replace") as handle:
            lines = handle.read().splitlines()
    except OSError as exc:
        raise StructureFileError(path, f"cannot read parameter file: {exc.strerror or exc}") from None
    reader = _FileReader(str(path))
    is_stream = any(ln.split("!", 1)[0].lower().split()[:1] == ["read"] for ln in lines)
    if not is_stream:
        reader.feed(lines)
        return reader.out
    i = 0
    while i < len(lines):
        words = lines[i].split("!", 1)[0].lower().split()
        if words[:1] == ["read"] and len(words) >= 2:
            start = i + 1
            i = start
            while i < len(lines) and lines[i].split("!", 1)[0].strip().lower()[:3] != "end":
                i += 1
            block = lines[start:i]
            if words[1].startswith("para"):
                reader.section = None
                reader.feed(block, start + 1)
            else:  # topology block: only its MASS records matter here
                reader.section = None
                reader.feed([ln if ln.split()[:1] and ln.split()[0].upper() == "MASS" else ""
                             for ln in block], start + 1)
        i += 1
    return reader.out


def merge_parameters(sets) -> CharmmParameters:
    """Merge parameter sets in order; later definitions replace earlier ones key by key.

    Parameters
    ----------
    sets : iterable of CharmmParameters
        Parameter sets, in file order.

    Returns
    -------
    CharmmParameters
        A new merged set (E14FAC and NBXMOD from the last set that gives them; source files
        concatenated).
    """
    merged = CharmmParameters()
    for part in sets:
        for name in ("masses", "type_numbers", "bonds", "angles", "dihedrals", "impropers",
                     "cmaps", "nonbonded", "nbfix"):
            getattr(merged, name).update(getattr(part, name))
        if part.e14fac is not None:
            merged.e14fac = part.e14fac
        if part.nbxmod is not None:
            merged.nbxmod = part.nbxmod
        merged.source_files = merged.source_files + part.source_files
    return merged


def read_charmm_parameters(paths) -> CharmmParameters:
    """Read and merge CHARMM-style parameter/stream files.

    Parameters
    ----------
    paths : str, os.PathLike or sequence of them
        Parameter (``.prm``/``.par``/``.inp``) or stream (``.str``) files, merged in order.

    Returns
    -------
    CharmmParameters

    Raises
    ------
    StructureFileError
        If a file cannot be read or holds a malformed record (file and line in the message).
    """
    if isinstance(paths, (str, bytes)) or hasattr(paths, "__fspath__"):
        paths = [paths]
    parts = []
    for path in paths:
        part = _read_one(str(path))
        part.source_files = (str(path),)
        parts.append(part)
    return merge_parameters(parts)
