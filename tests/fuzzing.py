"""Seeded mutation fuzzing of every reader and the pipeline (issue 14).

Base inputs (all derived from the bundled, invented probe peptide in ``samples/peptide/``):

========================  ==========================================================  ========
base                      files                                                      frame
========================  ==========================================================  ========
``psf+pdb``               probe_peptide.psf + probe_ff.prm + probe_peptide.pdb         0
``psf+pdb-cell``          the same with a 30 A cubic CRYST1 cell (periodic with a cutoff)  0
``psf+crd``               the PSF, the parameters, a CHARMM CRD written by MDAnalysis  0
``psf+dcd``               the PSF, the parameters, a 3-frame DCD (30 A cell) written by
                          MDAnalysis from the PDB with seeded displacements            2
``pdb``                   probe_peptide.pdb alone (built-in Amber 14 route)            0
``pdb-models``            the PDB as two MODELs (the second displaced), model 2        1
``cif``                   the PDB as mmCIF (written by OpenMM's PDBxFile)              0
========================  ==========================================================  ========

A case picks a base, one of three settings, one file of the base and one mutation (truncation,
byte flips, garbage numerals -- ``nan``, ``inf``, ``1e999``, ``1_000``, Arabic-Indic and
full-width digits, 5,000-digit integers --, deleted, duplicated and shuffled lines, changed PSF
section counts, binary junk, a 1 MB line, coincident, far-apart and collapsed atoms, a shifted
system, degenerate cells, models that differ, non-finite DCD coordinates, truncated DCD frames),
writes the damaged file and runs ``load_system`` + ``compute``; a few cases run ``tessera scan
--json --csv-dir`` in-process instead.

The property (:func:`judge`): the run ends either with finite totals -- equal to the undamaged
input's when the mutation is *strict* (it cannot change the meaning of a file that still
parses: truncation, count changes, deleted/duplicated/shuffled records, junk, garbage numerals,
degenerate geometry) -- or with an :class:`energy.errors.EnergyError` whose message is one
printable line of at most :data:`energy.errors.MESSAGE_CAP` characters.  Anything else is a
failure: an uncaught exception, a non-finite total, a silent change, a long or multi-line
message.  *Loose* mutations (byte flips, a deleted dihedral/improper/NBFIX line or NONBONDED
header line, shuffled CMAP grid lines or lines around a section keyword of a parameter file, an
atom moved far away in a periodic cell, a translation read in float32, a flip inside DCD data)
may change values legitimately -- the result is another valid input --; only finiteness and the
message rules apply to them.

Run a campaign with ``python scripts/fuzz.py --cases 10000`` (``make fuzz``); the test suite runs
a fixed number of seeded cases (tests/test_fuzz.py).
"""
from __future__ import annotations

import io
import json
import math
import os
import re
import shutil
import signal
import sys
import tempfile
import time
import traceback
import warnings
from contextlib import redirect_stderr, redirect_stdout
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
PEPTIDE = ROOT / "samples" / "peptide"

#: Garbage written in place of a number (the issue's list, plus a few near-misses).
GARBAGE_NUMERALS = ("nan", "NaN", "inf", "-inf", "Infinity", "1e999", "-1e999", "1_000", "0_5",
                    "\u0661\u0662\u0663", "\u0661.\u0665", "\uff11\uff12", "\u0967\u0968", "9" * 5000,
                    "-" + "9" * 5000, "1" * 40, "0x1A", "1e", "--1", "1.2.3", "+-3", "", "1e-999999")
#: Bytes used as binary junk: control characters, DEL and the upper half.
JUNK_BYTES = bytes(list(range(0, 9)) + list(range(14, 32)) + list(range(127, 256)))
ONE_MEGABYTE = 1 << 20
#: Settings sets every base is computed with.
SETTINGS_SETS = (
    {},
    {"cutoff_angstrom": 9.0, "switch_angstrom": 7.5, "electrostatics": "reaction-field"},
    {"cutoff_angstrom": 9.0, "electrostatics": "shifted", "vdw": "exp6"},
)
#: Agreement of a strict case's totals with the undamaged input's (kcal/mol): reordered sums.
TOTAL_TOLERANCE = (1e-6, 1e-7)   # absolute, relative


# --------------------------------------------------------------------------------------------
# base inputs
# --------------------------------------------------------------------------------------------
@dataclass
class Base:
    """Files of one base input (role -> file name, role -> bytes) and how it is loaded."""

    name: str
    names: dict
    data: dict
    frame: int = 0

    def roles(self):
        return list(self.data)


def _peptide_universe():
    import MDAnalysis as mda
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return mda.Universe(str(PEPTIDE / "probe_peptide.pdb"))


def make_bases(folder) -> list[Base]:
    """Write the derived base files into ``folder`` (once) and return every base."""
    import MDAnalysis as mda
    from openmm.app import PDBFile, PDBxFile

    folder = Path(folder)
    psf = (PEPTIDE / "probe_peptide.psf").read_bytes()
    prm = (PEPTIDE / "probe_ff.prm").read_bytes()
    pdb = (PEPTIDE / "probe_peptide.pdb").read_bytes()
    cell = b"CRYST1   30.000   30.000   30.000  90.00  90.00  90.00 P 1           1\n"
    lines = pdb.decode().splitlines(keepends=True)
    atoms = [ln for ln in lines if ln.startswith(("ATOM", "HETATM"))]
    rng = np.random.default_rng(1414)
    shifted = []
    for ln in atoms:
        xyz = np.array([float(ln[30:38]), float(ln[38:46]), float(ln[46:54])]) + rng.normal(0, 0.05, 3)
        shifted.append(ln[:30] + "".join(f"{v:8.3f}" for v in xyz) + ln[54:])
    models = ("MODEL        1\n" + "".join(atoms) + "ENDMDL\nMODEL        2\n" + "".join(shifted)
              + "ENDMDL\nEND\n").encode()
    u = _peptide_universe()
    crd_path, dcd_path, cif_path = folder / "base.crd", folder / "base.dcd", folder / "base.cif"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u.atoms.write(str(crd_path))
        positions = u.atoms.positions.copy()
        with mda.Writer(str(dcd_path), u.atoms.n_atoms) as writer:
            for k in range(3):
                u.atoms.positions = positions + rng.normal(0, 0.05, positions.shape)
                u.dimensions = [30.0, 30.0, 30.0, 90.0, 90.0, 90.0]
                writer.write(u.atoms)
        structure = PDBFile(str(PEPTIDE / "probe_peptide.pdb"))
        with open(cif_path, "w") as fh:
            PDBxFile.writeFile(structure.topology, structure.positions, fh)
    psf_route = {"structure": "peptide.psf", "params": "probe_ff.prm"}
    return [
        Base("psf+pdb", {**psf_route, "coords": "coords.pdb"}, {"structure": psf, "params": prm, "coords": pdb}),
        Base("psf+pdb-cell", {**psf_route, "coords": "coords.pdb"},
             {"structure": psf, "params": prm, "coords": cell + pdb}),
        Base("psf+crd", {**psf_route, "coords": "coords.crd"},
             {"structure": psf, "params": prm, "coords": crd_path.read_bytes()}),
        Base("psf+dcd", {**psf_route, "coords": "coords.dcd"},
             {"structure": psf, "params": prm, "coords": dcd_path.read_bytes()}, frame=2),
        Base("pdb", {"structure": "peptide.pdb"}, {"structure": pdb}),
        Base("pdb-models", {"structure": "models.pdb"}, {"structure": models}, frame=1),
        Base("cif", {"structure": "peptide.cif"}, {"structure": cif_path.read_bytes()}),
    ]


# --------------------------------------------------------------------------------------------
# mutations: (rng, data, context) -> (bytes, strict, label) or None when not applicable
# --------------------------------------------------------------------------------------------
@dataclass
class Context:
    """What a mutation may need to know about the file it damages."""

    kind: str          # "psf", "prm", "pdb", "crd", "cif", "dcd"
    base: Base
    role: str


def _text(data: bytes) -> str:
    return data.decode("latin-1")


def _lines(data: bytes) -> list[str]:
    return _text(data).split("\n")


def _join(lines) -> bytes:
    text = "\n".join(lines)
    try:
        return text.encode("latin-1")
    except UnicodeEncodeError:
        return text.encode("utf-8")


def _prm_sections(lines) -> list[str]:
    """Section of each line of a parameter file (upper-case keyword, '' before the first)."""
    from energy.io.charmm_params import SECTION_KEYWORDS
    out, current = [], ""
    for ln in lines:
        words = ln.split("!", 1)[0].upper().split()
        if words and (SECTION_KEYWORDS.get(words[0][:4], SECTION_KEYWORDS.get(words[0], "no")) != "no"):
            current = words[0][:4]
        out.append(current)
    return out


_LOOSE_PRM_DELETE = ("DIHE", "IMPR", "NBFI")


def _is_nonbonded_header(line: str, previous: str) -> bool:
    up = line.upper()
    return up.lstrip().startswith(("NONB", "NBON")) or previous.rstrip().endswith("-")


def mutate_truncate(rng, data, ctx):
    if len(data) < 2:
        return None
    cut = int(rng.integers(0, len(data)))
    return data[:cut], True, f"truncate at byte {cut} of {len(data)}"


def mutate_byte_flip(rng, data, ctx):
    buf = bytearray(data)
    count = int(rng.integers(1, 4))
    spots = rng.integers(0, len(buf), count)
    for spot in spots:
        buf[spot] ^= int(rng.integers(1, 256))
    return bytes(buf), False, f"flip {count} byte(s) at {sorted(int(s) for s in spots)}"


_NUMBER = re.compile(rb"(?<![\w.])[-+]?[0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?(?![\w.])")


def mutate_garbage_numeral(rng, data, ctx):
    if ctx.kind == "dcd":
        return None
    spans = [m.span() for m in _NUMBER.finditer(data)]
    if not spans:
        return None
    lo, hi = spans[int(rng.integers(0, len(spans)))]
    garbage = GARBAGE_NUMERALS[int(rng.integers(0, len(GARBAGE_NUMERALS)))]
    if ctx.kind in ("pdb",) and len(garbage) <= hi - lo:
        garbage = garbage.rjust(hi - lo)  # keep the fixed columns where they were
    new = data[:lo] + garbage.encode("utf-8") + data[hi:]
    return new, True, f"number {data[lo:hi].decode()!r} at byte {lo} -> {garbage[:12]!r}"


def mutate_delete_lines(rng, data, ctx):
    lines = _lines(data)
    k = int(rng.integers(1, 4))
    start = int(rng.integers(0, len(lines)))
    gone = lines[start:start + k]
    strict = True
    if ctx.kind == "prm":
        sections = _prm_sections(lines)
        for i in range(start, min(start + k, len(lines))):
            if sections[i] in _LOOSE_PRM_DELETE or (
                    sections[i] in ("NONB", "NBON") and _is_nonbonded_header(lines[i], lines[i - 1] if i else "")):
                strict = False
    if not any(g.strip() for g in gone):
        strict = True
    return _join(lines[:start] + lines[start + k:]), strict, f"delete lines {start + 1}-{start + len(gone)}"


def mutate_duplicate_lines(rng, data, ctx):
    lines = _lines(data)
    k = int(rng.integers(1, 4))
    start = int(rng.integers(0, len(lines)))
    block = lines[start:start + k]
    return _join(lines[:start + k] + block + lines[start + k:]), True, \
        f"duplicate lines {start + 1}-{start + len(block)}"


def mutate_shuffle_lines(rng, data, ctx):
    lines = _lines(data)
    if len(lines) < 3:
        return None
    k = int(rng.integers(2, 6))
    start = int(rng.integers(0, max(1, len(lines) - k)))
    window = lines[start:start + k]
    order = rng.permutation(len(window))
    strict = True
    if ctx.kind == "prm":
        sections = _prm_sections(lines)
        span = range(start, start + len(window))
        if any(sections[i] == "CMAP" for i in span):
            strict = False  # permuted grid values are still a grid
        if len({sections[i] for i in span} | {sections[start - 1] if start else ""}) > 1:
            strict = False  # a keyword moved: a dihedral line is a valid improper line, ...
    if ctx.kind == "cif" and any(ln.startswith("_") for ln in window):
        strict = False  # permuted loop column names: a valid file with other columns
    shuffled = [window[i] for i in order]
    return _join(lines[:start] + shuffled + lines[start + k:]), strict, \
        f"shuffle lines {start + 1}-{start + len(window)} as {order.tolist()}"


_HEADER = re.compile(rb"^(\s*)([0-9]+)(\s*!\s*N[A-Z]+)", re.M)


def mutate_section_count(rng, data, ctx):
    if ctx.kind != "psf":
        return None
    headers = list(_HEADER.finditer(data))
    if not headers:
        return None
    m = headers[int(rng.integers(0, len(headers)))]
    old = int(m.group(2))
    choices = [old + int(rng.integers(1, 6)), max(0, old - int(rng.integers(1, 6))), 0, old * 10,
               10 ** 17, int("9" * 30)]
    new = choices[int(rng.integers(0, len(choices)))]
    text = str(new) if new != int("9" * 30) else "9" * 5000
    if new == old:
        return None
    lo, hi = m.span(2)
    return data[:lo] + text.encode() + data[hi:], True, f"count {m.group(3).decode().strip()} {old} -> {text[:20]}"


def mutate_binary_junk(rng, data, ctx):
    n = int(rng.integers(1, 17))
    junk = bytes(JUNK_BYTES[int(i)] for i in rng.integers(0, len(JUNK_BYTES), n))
    spot = int(rng.integers(0, len(data) + 1))
    return data[:spot] + junk + data[spot:], ctx.kind != "dcd", f"insert {n} junk bytes at {spot}"


def mutate_huge_line(rng, data, ctx):
    if ctx.kind == "dcd":
        return None
    fill = (b"1 ", b"x", b"\x00", b"7", b"-", b"ATOM  ")[int(rng.integers(0, 6))]
    line = (fill * (ONE_MEGABYTE // len(fill) + 1))[:ONE_MEGABYTE]
    lines = data.split(b"\n")
    spot = int(rng.integers(0, len(lines) + 1))
    return b"\n".join(lines[:spot] + [line] + lines[spot:]), True, f"insert a 1 MB line of {fill!r} at line {spot + 1}"


# --- geometry, on coordinate files: PDB/CIF/CRD text, DCD through MDAnalysis -----------------
def _coordinate_fields(data: bytes, kind: str):
    """[(line index, (start, end) of x, y, z)] for the atom records of a text coordinate file."""
    lines = _lines(data)
    out = []
    if kind == "pdb":
        for i, ln in enumerate(lines):
            if ln.startswith(("ATOM  ", "HETATM")) and len(ln) >= 54:
                out.append((i, ((30, 38), (38, 46), (46, 54))))
    elif kind == "crd":
        started = False
        for i, ln in enumerate(lines):
            words = ln.split()
            if not started:
                started = bool(words) and not ln.startswith("*") and len(words) <= 2
                continue
            if len(words) >= 7:
                spans, pos = [], 0
                for w in words[:7]:
                    pos = ln.index(w, pos)
                    spans.append((pos, pos + len(w)))
                    pos += len(w)
                out.append((i, tuple(spans[4:7])))
    elif kind == "cif":
        for i, ln in enumerate(lines):
            if ln.startswith(("ATOM", "HETATM")):
                words, spans, pos = ln.split(), [], 0
                for w in words:
                    pos = ln.index(w, pos)
                    spans.append((pos, pos + len(w)))
                    pos += len(w)
                out.append((i, tuple(spans[10:13])))
    return lines, out


def _set_xyz(lines, record, xyz, kind):
    i, spans = record
    ln = lines[i]
    for (lo, hi), v in reversed(list(zip(spans, xyz))):
        text = f"{v:8.3f}" if kind == "pdb" else f"{v:.5f}"
        if kind == "pdb":
            text = text[-8:].rjust(8)
        ln = ln[:lo] + text + ln[hi:]
    lines[i] = ln


def _get_xyz(lines, record):
    i, spans = record
    return np.array([float(lines[i][lo:hi]) for lo, hi in spans])


def _dcd_rewrite(data: bytes, change, ctx):
    """Apply ``change(positions (n_frames, n, 3), dimensions (n_frames, 6))`` to a DCD."""
    import MDAnalysis as mda
    with tempfile.TemporaryDirectory() as tmp:
        src, dst = os.path.join(tmp, "in.dcd"), os.path.join(tmp, "out.dcd")
        Path(src).write_bytes(data)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            u = mda.Universe.empty(40, trajectory=False)
            u.load_new(src)
            pos = np.array([ts.positions.copy() for ts in u.trajectory])
            dims = np.array([ts.dimensions.copy() for ts in u.trajectory])
            change(pos, dims)
            with mda.Writer(dst, 40) as writer:
                for k in range(len(pos)):
                    u.trajectory[k]
                    u.atoms.positions = pos[k]
                    u.dimensions = dims[k]
                    writer.write(u.atoms)
        return Path(dst).read_bytes()


def _has_cell(base) -> bool:
    return base.name in ("psf+pdb-cell", "psf+dcd")


def mutate_geometry(rng, data, ctx):
    """Coincident atoms, one atom far away, all atoms at one point, or a translated system.

    Strictness: coincident and collapsed atoms must fail.  An atom moved far from its residue
    must fail unless a cell is known (then it is an unwrapped coordinate, a different but valid
    position modulo the cell).  A translation is neutral only where the coordinates are read in
    float64 (the built-in route's OpenMM reader); MDAnalysis and DCD files hold float32, whose
    rounding 4,000 A from the origin changes bond energies by ~1e-3 kcal/mol."""
    what = ("coincident", "far", "collapse", "translate")[int(rng.integers(0, 4))]
    strict = {"far": not _has_cell(ctx.base),
              "translate": ctx.base.name in ("pdb", "cif")}.get(what, True)
    i, j = (int(v) for v in rng.choice(40, 2, replace=False))
    far = float(rng.choice([1e3, 5e3, 9e3])) if ctx.kind == "pdb" else float(rng.choice([1e3, 1e4, 1e5, 1e6]))
    shift = np.array([4000.0, 1000.0, -900.0])
    if ctx.kind == "dcd":
        frame = ctx.base.frame

        def change(pos, dims):
            if what == "coincident":
                pos[frame, j] = pos[frame, i]
            elif what == "far":
                pos[frame, i, 0] += far
            elif what == "collapse":
                pos[frame] = pos[frame, 0]
            else:
                pos[frame] += shift
        return _dcd_rewrite(data, change, ctx), strict, f"{what} (atoms {i + 1}, {j + 1}; {far:g} A)"
    lines, records = _coordinate_fields(data, ctx.kind)
    if len(records) < 2:
        return None
    if ctx.base.frame and ctx.kind == "pdb":
        records = records[len(records) // 2:]   # the requested model
    i, j = i % len(records), j % len(records)
    if i == j:
        j = (i + 1) % len(records)
    if what == "coincident":
        _set_xyz(lines, records[j], _get_xyz(lines, records[i]), ctx.kind)
    elif what == "far":
        _set_xyz(lines, records[i], _get_xyz(lines, records[i]) + [far, 0, 0], ctx.kind)
    elif what == "collapse":
        first = _get_xyz(lines, records[0])
        for r in records:
            _set_xyz(lines, r, first, ctx.kind)
    else:
        for r in records:
            _set_xyz(lines, r, _get_xyz(lines, r) + shift, ctx.kind)
    return _join(lines), strict, f"{what} (records {i + 1}, {j + 1}; {far:g} A)"


DEGENERATE_CELLS = (
    (60, 60, 60, 180, 180, 180), (60, 60, 60, 0, 90, 90), (60, 60, 60, 90, 90, 200),
    (60, 60, 60, 60, 60, 150), (60, 60, 60, 90, 90, 179.9999), (0, 60, 60, 90, 90, 90),
    (-60, 60, 60, 90, 90, 90), (60, 60, 0.001, 90, 90, 90), (60, 60, 60, -90, 90, 90),
    (60, 60, 60, 120, 120, 120),
)
_CELL_TEXT = ("inf", "nan", "1e999", "1_000", "\u0663\u0660")


def mutate_cell(rng, data, ctx):
    """A degenerate unit cell: bad angles or edges, or a non-number in a cell field."""
    if ctx.kind == "dcd":
        cell = np.array(DEGENERATE_CELLS[int(rng.integers(0, len(DEGENERATE_CELLS)))], float)
        if rng.random() < 0.3:
            cell[int(rng.integers(0, 6))] = float(rng.choice([np.inf, np.nan]))

        def change(pos, dims):
            dims[ctx.base.frame] = cell
        return _dcd_rewrite(data, change, ctx), True, f"cell {cell.tolist()}"
    if ctx.kind not in ("pdb", "cif"):
        return None
    cell = DEGENERATE_CELLS[int(rng.integers(0, len(DEGENERATE_CELLS)))]
    fields = [f"{cell[0]:9.3f}", f"{cell[1]:9.3f}", f"{cell[2]:9.3f}", f"{cell[3]:7.2f}",
              f"{cell[4]:7.2f}", f"{cell[5]:7.2f}"]
    if rng.random() < 0.3:
        k = int(rng.integers(0, 6))
        fields[k] = _CELL_TEXT[int(rng.integers(0, len(_CELL_TEXT)))].rjust(len(fields[k]))
    lines = [ln for ln in _lines(data) if not ln.startswith("CRYST1") and not ln.startswith("_cell.")]
    if ctx.kind == "pdb":
        lines.insert(0, "CRYST1" + "".join(fields) + " P 1           1")
    else:
        keys = ("length_a", "length_b", "length_c", "angle_alpha", "angle_beta", "angle_gamma")
        at = 1
        lines[at:at] = [f"_cell.{k} {v.strip()}" for k, v in zip(keys, fields)]
    return _join(lines), True, f"cell {' '.join(f.strip() for f in fields)}"


def mutate_models(rng, data, ctx):
    """Make the models of a multi-model PDB differ (an atom removed, added, renamed or moved)."""
    if ctx.base.name != "pdb-models":
        return None
    lines = _lines(data)
    second = lines.index("MODEL        2")
    atoms = [k for k in range(second, len(lines)) if lines[k].startswith(("ATOM", "HETATM"))]
    what = ("remove", "add", "rename", "swap")[int(rng.integers(0, 4))]
    k = atoms[int(rng.integers(0, len(atoms) - 1))]
    if what == "remove":
        del lines[k]
    elif what == "add":
        lines.insert(k, lines[k])
    elif what == "rename":
        lines[k] = lines[k][:12] + " XX " + lines[k][16:]
    else:
        lines[k], lines[k + 1] = lines[k + 1], lines[k]
    return _join(lines), True, f"model 2: {what} at line {k + 1}"


def mutate_dcd_values(rng, data, ctx):
    """Non-finite or out-of-bound coordinates in the requested DCD frame."""
    if ctx.kind != "dcd":
        return None
    value = float(rng.choice([np.nan, np.inf, -np.inf, 3e38, 2e5]))
    atom, axis = int(rng.integers(0, 40)), int(rng.integers(0, 3))

    def change(pos, dims):
        pos[ctx.base.frame, atom, axis] = value
    return _dcd_rewrite(data, change, ctx), True, f"frame {ctx.base.frame} atom {atom + 1} axis {axis} -> {value}"


MUTATIONS = {
    "truncate": mutate_truncate, "byte_flip": mutate_byte_flip, "garbage_numeral": mutate_garbage_numeral,
    "delete_lines": mutate_delete_lines, "duplicate_lines": mutate_duplicate_lines,
    "shuffle_lines": mutate_shuffle_lines, "section_count": mutate_section_count,
    "binary_junk": mutate_binary_junk, "huge_line": mutate_huge_line, "geometry": mutate_geometry,
    "cell": mutate_cell, "models": mutate_models, "dcd_values": mutate_dcd_values,
}
#: Mutations a binary file takes (line operations make no sense there).
BINARY_MUTATIONS = ("truncate", "byte_flip", "binary_junk", "geometry", "cell", "dcd_values")


def file_kind(name: str) -> str:
    suffix = name.rsplit(".", 1)[-1].lower()
    return {"psf": "psf", "prm": "prm", "str": "prm", "pdb": "pdb", "crd": "crd", "cif": "cif",
            "dcd": "dcd"}[suffix]


# --------------------------------------------------------------------------------------------
# running and judging
# --------------------------------------------------------------------------------------------
@dataclass
class Case:
    index: int
    base: str
    settings: int
    role: str
    mutation: str
    label: str
    strict: bool
    via_cli: bool


@dataclass
class Outcome:
    case: Case
    status: str                 # "ok", "error", or a failure kind
    message: str = ""
    seconds: float = 0.0
    totals: dict = field(default_factory=dict)

    @property
    def failed(self) -> bool:
        return self.status not in ("ok", "error")


class CaseTimeout(Exception):
    pass


def _settings(k):
    from energy.model.settings import EnergySettings
    return EnergySettings(**SETTINGS_SETS[k])


class Fuzzer:
    """Holds the bases, their reference totals and a scratch folder; :meth:`run` one case."""

    def __init__(self, folder, hang_seconds: float = 120.0):
        from energy import prepare_kernels
        self.folder = Path(folder)
        self.folder.mkdir(parents=True, exist_ok=True)
        self.bases = {b.name: b for b in make_bases(self.folder)}
        self.hang_seconds = hang_seconds
        for s in range(len(SETTINGS_SETS)):
            prepare_kernels(_settings(s))
        self.reference = {}
        for base in self.bases.values():
            paths = self._write(base, None, None)
            for s in range(len(SETTINGS_SETS)):
                self.reference[base.name, s] = self._compute(base, paths, s)

    # -- files ------------------------------------------------------------------------------
    def _write(self, base, role, data):
        out = {}
        target = self.folder / base.name
        target.mkdir(exist_ok=True)
        for r, name in base.names.items():
            path = target / name
            content = data if r == role else base.data[r]
            if r == role or not path.exists() or path.read_bytes() != base.data[r]:
                path.write_bytes(content)
            out[r] = str(path)
        return out

    def _compute(self, base, paths, s):
        from energy.decomposition.pipeline import compute
        from energy.io.loaders import load_system
        loaded = load_system(paths["structure"], paths.get("coords"),
                             [paths["params"]] if "params" in paths else [], frame=base.frame)
        result = compute(loaded.system, loaded.frame, _settings(s))
        return {k: float(v) for k, v in result.totals.items()}

    # -- cases ------------------------------------------------------------------------------
    def make_case(self, seed: int, index: int):
        rng = np.random.default_rng([seed, index])
        names = sorted(self.bases)
        for _ in range(50):
            base = self.bases[names[int(rng.integers(0, len(names)))]]
            role = base.roles()[int(rng.integers(0, len(base.roles())))]
            kind = file_kind(base.names[role])
            pool = BINARY_MUTATIONS if kind == "dcd" else tuple(MUTATIONS)
            mutation = pool[int(rng.integers(0, len(pool)))]
            made = MUTATIONS[mutation](rng, base.data[role], Context(kind, base, role))
            if made is None:
                continue
            data, strict, label = made
            case = Case(index, base.name, int(rng.integers(0, len(SETTINGS_SETS))), role, mutation, label,
                        strict, via_cli=bool(rng.random() < 0.03))
            return case, data
        raise RuntimeError("no applicable mutation")  # pragma: no cover

    def run(self, seed: int, index: int) -> Outcome:
        case, data = self.make_case(seed, index)
        base = self.bases[case.base]
        paths = self._write(base, case.role, data)
        t0 = time.perf_counter()
        previous = signal.signal(signal.SIGALRM, _on_alarm) if hasattr(signal, "SIGALRM") else None
        if previous is not None:
            signal.setitimer(signal.ITIMER_REAL, self.hang_seconds)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # the libraries' own warnings about damaged files ...
                for ours in (r"energy(\..*)?$", r"app(\..*)?$"):  # ... but ours are failures
                    warnings.filterwarnings("error", module=ours)
                outcome = self._run_cli(case, base, paths) if case.via_cli else self._run_api(case, base, paths)
        except CaseTimeout:
            outcome = Outcome(case, "hang", f"no answer after {self.hang_seconds:g} s")
        finally:
            if previous is not None:
                signal.setitimer(signal.ITIMER_REAL, 0)
                signal.signal(signal.SIGALRM, previous)
        outcome.seconds = time.perf_counter() - t0
        self._write(base, None, None)  # restore the undamaged file
        return outcome

    def _run_api(self, case, base, paths) -> Outcome:
        from energy.errors import EnergyError
        try:
            totals = self._compute(base, paths, case.settings)
        except EnergyError as exc:
            return judge_message(case, str(exc))
        except CaseTimeout:
            raise
        except Exception as exc:  # the failure this suite exists to find
            tb = traceback.extract_tb(exc.__traceback__)[-1]
            return Outcome(case, "uncaught", f"{type(exc).__name__}: {str(exc)[:200]} "
                                             f"({os.path.basename(tb.filename)}:{tb.lineno})")
        return judge_totals(case, totals, self.reference[case.base, case.settings])

    def _run_cli(self, case, base, paths) -> Outcome:
        from app.cli.main import main
        out = self.folder / "cli"
        shutil.rmtree(out, ignore_errors=True)
        out.mkdir()
        argv = ["scan", paths["structure"]] + ([paths["coords"]] if "coords" in paths else [])
        argv += ["--params", paths["params"]] if "params" in paths else []
        argv += ["--frame", str(base.frame), "--json", str(out / "scan.json"), "--csv-dir", str(out / "csv"),
                 "--quiet"]
        settings = SETTINGS_SETS[case.settings]
        if "cutoff_angstrom" in settings:
            argv += ["--cutoff", str(settings["cutoff_angstrom"])]
        if "switch_angstrom" in settings:
            argv += ["--switch", str(settings["switch_angstrom"])]
        argv += ["--electrostatics", settings.get("electrostatics", "plain"), "--vdw", settings.get("vdw", "lj")]
        err, std = io.StringIO(), io.StringIO()
        with redirect_stderr(err), redirect_stdout(std):
            code = main(argv)
        text = err.getvalue()
        written = [p for p in out.rglob("*") if p.is_file()]
        if code == 2:
            if written:
                return Outcome(case, "written on failure", f"{[p.name for p in written]}")
            if not text.startswith("tessera: error: "):
                return Outcome(case, "cli message", text[:300])
            return judge_message(case, text[len("tessera: error: "):].rstrip("\n"), cli=True)
        if code != 0:
            return Outcome(case, "uncaught", f"exit {code}: {text[:300]}")
        try:
            doc = json.loads((out / "scan.json").read_text(), parse_constant=_refuse_constant)
        except ValueError as exc:
            return Outcome(case, "non-finite", f"scan.json: {exc}")
        for name in ("residues.csv", "residue_pairs.csv"):
            body = (out / "csv" / name).read_text().lower()
            if "nan" in body or "inf" in body:
                return Outcome(case, "non-finite", f"{name} holds nan/inf")
        return judge_totals(case, doc["totals"], self.reference[case.base, case.settings])


def _on_alarm(signum, frame):
    raise CaseTimeout


def _refuse_constant(name):
    raise ValueError(f"JSON holds {name}")


def judge_message(case, message: str, cli: bool = False) -> Outcome:
    """An expected failure passes when its message is one printable line within the cap."""
    from energy.errors import MESSAGE_CAP
    if "\n" in message or "\r" in message or not message.isprintable():
        return Outcome(case, "multi-line message", repr(message[:300]))
    if len(message) > MESSAGE_CAP:
        return Outcome(case, "message over cap", f"{len(message)} characters: {message[:120]}...")
    if not message.strip():
        return Outcome(case, "empty message")
    return Outcome(case, "error", message)


def judge_totals(case, totals: dict, reference: dict) -> Outcome:
    """Finite totals pass; a strict case must also reproduce the undamaged input's totals."""
    bad = [k for k, v in totals.items() if not math.isfinite(v)]
    if bad:
        return Outcome(case, "non-finite", f"{bad[0]} = {totals[bad[0]]}", totals=totals)
    if case.strict:
        absolute, relative = TOTAL_TOLERANCE
        diff = [k for k in reference if abs(totals[k] - reference[k]) > absolute + relative * abs(reference[k])]
        if diff:
            k = diff[0]
            return Outcome(case, "silent change", f"{k}: {totals[k]:.6f} instead of {reference[k]:.6f}",
                           totals=totals)
    return Outcome(case, "ok", totals=totals)


def campaign(cases: int, seed: int = 14, folder=None, progress=None, start: int = 0):
    """Run ``cases`` seeded cases; returns the list of :class:`Outcome`."""
    with tempfile.TemporaryDirectory(prefix="tessera-fuzz-") as tmp:
        fuzzer = Fuzzer(folder or tmp)
        outcomes = []
        for index in range(start, start + cases):
            outcomes.append(fuzzer.run(seed, index))
            if progress is not None:
                progress(outcomes[-1])
        return outcomes


def describe(outcome: Outcome) -> str:
    c = outcome.case
    return (f"case {c.index} [{c.base}/{c.role}, settings {c.settings}, {c.mutation}: {c.label}"
            f"{', CLI' if c.via_cli else ''}] {outcome.status}: {outcome.message}")


if __name__ == "__main__":  # pragma: no cover - see scripts/fuzz.py
    sys.exit("run scripts/fuzz.py")
