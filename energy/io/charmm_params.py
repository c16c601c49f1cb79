"""Reader of CHARMM-style parameter and stream files.

Sections read: ATOMS (MASS records), BONDS, ANGLES (with optional Urey-Bradley columns),
DIHEDRALS (multi-term, ``X`` wildcards), IMPROPER (wildcards), CMAP grids, NONBONDED (with
optional 1-4 columns), NBFIX; HBOND/THOLE sections are skipped and END closes a section.
Stream files (``read rtf card`` / ``read param card`` blocks) are recognised: RTF blocks are
skipped except for their MASS records, parameter blocks are read.  ``!`` starts a comment, a
trailing ``-`` continues a line, keywords and types are case-insensitive (types are upper-cased).

A parameter text ends with an ``END`` line (CHARMM stops reading there); a file or stream
block without one is refused as truncated, and so is anything but ``RETURN`` after it.  Outside
comments and titles a line holds printable ASCII only (a control character or a byte beyond
ASCII inside a type name would silently make it another type); the ATOMS section holds MASS
records only.

Several files are merged in order: a later definition of the same type combination replaces the
earlier one (for a dihedral, all terms of the quadruplet from the later file replace the earlier
file's terms; within one file, consecutive lines add terms and a repeated periodicity replaces).

Values are kept as in the files: kcal/mol, angstrom, degrees; energies are ``K (x - x0)^2``.

Numbers are parsed strictly (:mod:`energy.io.numbers`: ASCII, finite, |value| <= 10^6) and must
respect the limits of their form: force constants of harmonic forms (bonds, angles,
Urey-Bradley, harmonic impropers) >= 0; equilibrium lengths >= 0; theta0 within 0..180 degrees;
periodicities integers 1..6 (dihedrals) or 0..6 (impropers, 0 = harmonic); masses >= 0; Rmin/2
and Rmin >= 0, and > 0 wherever the well depth is not 0; E14FAC within 0..1; CMAP grid sizes
1..360.  The well depth is the magnitude of the written epsilon (written <= 0 by convention).
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from energy.errors import StructureFileError, quote_field
from energy.io.numbers import is_number, parse_float, parse_int

_PRINTABLE_ASCII = re.compile(r"[ -~\t]*\Z")
#: Largest periodicity of a dihedral or improper cosine term (CHARMM's limit; common practice).
MAX_PERIODICITY = 6
#: Largest CMAP grid size accepted (points per axis; CHARMM's grids have 24).
MAX_CMAP_GRID = 360

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


def _need(path, lineno, words, n, what, layout):
    if len(words) < n:
        raise StructureFileError(path, f"{what}: expected '{layout}', got {quote_field(' '.join(words))}",
                                 lineno)


def _periodicity(path, lineno, word, what, low):
    """A periodicity written as an integer (``3`` or ``3.0``) within ``low``..6."""
    n = parse_float(word, f"{what} periodicity", path, lineno)
    if n != int(n) or not low <= n <= MAX_PERIODICITY:
        raise StructureFileError(path, f"{what}: periodicity must be an integer {low}..{MAX_PERIODICITY}, "
                                       f"got {quote_field(word)}", lineno)
    return int(n)


def _radius(path, lineno, word, what, depth):
    """A radius (Rmin/2 or Rmin): >= 0, and > 0 where the well depth is not 0."""
    r = parse_float(word, what, path, lineno, low=0.0)
    if r == 0.0 and depth != 0.0:
        raise StructureFileError(path, f"{what} must be > 0 where the well depth is not 0, got "
                                       f"{quote_field(word)}", lineno)
    return r


class _FileReader:
    """Parses one parameter text into a fresh :class:`CharmmParameters` (merged later)."""

    def __init__(self, path):
        self.path = path
        self.out = CharmmParameters(e14fac=None, nbxmod=None)  # None: not set in this file
        self.section = None
        self.ended = False  # an END line was read: only RETURN may follow
        self.cmap_key, self.cmap_size, self.cmap_values, self.cmap_line = None, 0, [], 0

    def feed(self, lines, first_lineno=1):
        for lineno, text in _logical_lines(self.path, lines, first_lineno):
            if text.startswith("*"):
                continue  # title line
            if _PRINTABLE_ASCII.match(text) is None:
                raise StructureFileError(self.path, "non-ASCII or control character outside a comment: "
                                                    f"{quote_field(text)}", lineno)
            words = text.upper().split()
            if self.ended and words[0] != "RETURN":
                raise StructureFileError(self.path, f"{quote_field(text)} after END: the END line closes the "
                                                    "parameters (a misplaced END would hide what follows)", lineno)
            keyword = SECTION_KEYWORDS.get(words[0][:4], SECTION_KEYWORDS.get(words[0], "no"))
            if keyword != "no" and not (self.section == "CMAP" and is_number(words[0])):
                self._close_cmap()
                self.section = keyword
                self.ended = keyword is None
                if keyword == "NONBONDED":
                    self._nonbonded_header(lineno, words)
                continue
            if words[0] == "MASS":
                self._mass(lineno, words)
            elif self.section == "ATOMS":
                raise StructureFileError(self.path, "ATOMS section: expected MASS records, got "
                                                    f"{quote_field(text)}", lineno)
            elif self.section in (None, "SKIP"):
                continue
            else:
                getattr(self, "_" + self.section.lower())(lineno, words)
        self._close_cmap()

    def _nonbonded_header(self, lineno, words):
        for key in ("NBXMOD", "E14FAC"):
            if key in words:
                idx = words.index(key)
                _need(self.path, lineno, words, idx + 2, "NONBONDED header", f"{key} <value>")
                if key == "NBXMOD":
                    self.out.nbxmod = parse_int(words[idx + 1], "NONBONDED header NBXMOD", self.path,
                                                lineno, low=-5, high=5)
                else:
                    self.out.e14fac = parse_float(words[idx + 1], "NONBONDED header E14FAC", self.path,
                                                  lineno, low=0.0, high=1.0)

    def _mass(self, lineno, words):
        _need(self.path, lineno, words, 4, "MASS", "MASS number type mass [element]")
        number = parse_int(words[1], "MASS type number", self.path, lineno, low=-1)
        mass = parse_float(words[3], f"MASS {words[2]} mass (amu)", self.path, lineno, low=0.0)
        self.out.masses[words[2]] = mass
        if number >= 0:
            self.out.type_numbers[number] = words[2]

    def _bonds(self, lineno, words):
        _need(self.path, lineno, words, 4, "BONDS", "type1 type2 Kb b0")
        k = parse_float(words[2], "BONDS Kb", self.path, lineno, low=0.0)
        r0 = parse_float(words[3], "BONDS b0", self.path, lineno, low=0.0)
        self.out.bonds[canonical_pair(*words[:2])] = (k, r0)

    def _angles(self, lineno, words):
        _need(self.path, lineno, words, 5, "ANGLES", "type1 type2 type3 Ktheta theta0 [Kub S0]")
        fields = (("Ktheta", {"low": 0.0}), ("theta0", {"low": 0.0, "high": 180.0}),
                  ("Kub", {"low": 0.0}), ("S0", {"low": 0.0}))
        values = [parse_float(w, f"ANGLES {name}", self.path, lineno, **limits)
                  for w, (name, limits) in zip(words[3:7], fields)]
        if len(values) == 3:
            raise StructureFileError(self.path, "ANGLES: Urey-Bradley needs both Kub and S0",
                                     lineno)
        ub = tuple(values[2:4]) if len(values) == 4 else (None, None)
        self.out.angles[canonical_angle(*words[:3])] = (values[0], values[1]) + ub

    def _dihedrals(self, lineno, words):
        _need(self.path, lineno, words, 7, "DIHEDRALS", "t1 t2 t3 t4 Kchi n delta")
        k = parse_float(words[4], "DIHEDRALS Kchi", self.path, lineno)
        n = _periodicity(self.path, lineno, words[5], "DIHEDRALS", 1)
        phase = parse_float(words[6], "DIHEDRALS delta", self.path, lineno)
        terms = self.out.dihedrals.setdefault(canonical_quad(words[:4]), [])
        terms[:] = [t for t in terms if t[1] != n] + [(k, n, phase)]

    def _improper(self, lineno, words):
        _need(self.path, lineno, words, 6, "IMPROPER", "t1 t2 t3 t4 Kpsi [n] psi0")
        k = parse_float(words[4], "IMPROPER Kpsi", self.path, lineno)
        if len(words) >= 7:
            n = _periodicity(self.path, lineno, words[5], "IMPROPER", 0)
            psi0 = parse_float(words[6], "IMPROPER psi0", self.path, lineno)
        else:
            n, psi0 = 0, parse_float(words[5], "IMPROPER psi0", self.path, lineno)
        if n == 0 and k < 0:
            raise StructureFileError(self.path, "IMPROPER Kpsi of a harmonic improper (periodicity 0) must "
                                                f"be >= 0, got {quote_field(words[4])}", lineno)
        self.out.impropers[canonical_quad(words[:4])] = (k, n, psi0)

    def _cmap(self, lineno, words):
        if is_number(words[0]):
            if self.cmap_key is None:
                raise StructureFileError(self.path, "CMAP: grid values before a header line "
                                                    "(8 types and the grid size)", lineno)
            self.cmap_values.extend(parse_float(w, "CMAP grid value (kcal/mol)", self.path, lineno)
                                    for w in words)
            return
        self._close_cmap()
        _need(self.path, lineno, words, 9, "CMAP", "t1 ... t8 gridsize")
        size = parse_int(words[8], "CMAP grid size", self.path, lineno, low=1, high=MAX_CMAP_GRID)
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
        for k in (1, 4):  # the "ignored" columns are numbers too
            if k < len(words):
                parse_float(words[k], f"NONBONDED {words[0]} column {k + 1}", self.path, lineno)
        eps = parse_float(words[2], f"NONBONDED {words[0]} epsilon", self.path, lineno)
        half = _radius(self.path, lineno, words[3], f"NONBONDED {words[0]} Rmin/2", eps)
        eps14 = rmin14 = None
        if len(words) in (5, 6):
            raise StructureFileError(self.path, f"NONBONDED {words[0]}: the 1-4 columns need all three values "
                                                f"('ignored eps14 Rmin14/2'), got {quote_field(' '.join(words))}",
                                     lineno)
        if len(words) >= 7:
            eps14 = parse_float(words[5], f"NONBONDED {words[0]} eps14", self.path, lineno)
            rmin14 = _radius(self.path, lineno, words[6], f"NONBONDED {words[0]} Rmin14/2", eps14)
        self.out.nonbonded[words[0]] = (eps, half, eps14, rmin14)

    def _nbfix(self, lineno, words):
        _need(self.path, lineno, words, 4, "NBFIX", "type1 type2 Emin Rmin [Emin14 Rmin14]")
        emin = parse_float(words[2], "NBFIX Emin", self.path, lineno)
        rmin = _radius(self.path, lineno, words[3], "NBFIX Rmin", emin)
        e14 = r14 = None
        if len(words) == 5:
            raise StructureFileError(self.path, "NBFIX: Emin14 needs Rmin14 too, got "
                                                f"{quote_field(' '.join(words))}", lineno)
        if len(words) >= 6:
            e14 = abs(parse_float(words[4], "NBFIX Emin14", self.path, lineno))
            r14 = _radius(self.path, lineno, words[5], "NBFIX Rmin14", e14)
        self.out.nbfix[canonical_pair(*words[:2])] = (abs(emin), rmin, e14, r14)


def _first_word(line: str) -> str:
    words = line.split("!", 1)[0].split()
    return words[0].lower() if words else ""


def _read_one(path) -> CharmmParameters:
    """One parameter or stream file.  A parameter text (the file, or each ``read param`` /
    ``read rtf`` block of a stream file) must end with an ``END`` line, as CHARMM requires: a
    text without one was truncated."""
    try:
        with open(path, encoding="utf-8", errors="replace") as handle:
            lines = handle.read().splitlines()
    except OSError as exc:
        raise StructureFileError(path, f"cannot read parameter file: {exc.strerror or exc}") from None
    reader = _FileReader(str(path))
    is_stream = any(_first_word(ln) == "read" for ln in lines)
    if not is_stream:
        if not any(_first_word(ln) == "end" for ln in lines):
            raise StructureFileError(path, "no END line: CHARMM parameter files end with END, so this "
                                           "one was truncated", len(lines))
        reader.feed(lines)
        return reader.out
    i = 0
    while i < len(lines):
        words = lines[i].split("!", 1)[0].lower().split()
        if words[:1] == ["read"] and len(words) >= 2:
            start = i + 1
            i = start
            while i < len(lines) and _first_word(lines[i])[:3] != "end" and _first_word(lines[i]) != "read":
                i += 1
            if i >= len(lines) or _first_word(lines[i]) == "read":
                raise StructureFileError(path, f"the 'read {words[1]}' block has no END line: the file was "
                                               "truncated", start)
            block = lines[start:i]
            if words[1].startswith("para"):
                reader.section, reader.ended = None, False
                reader.feed(block, start + 1)
            else:  # topology block: only its MASS records matter here
                reader.section, reader.ended = None, False
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
