"""ATOM/HETATM records of PDB text read by their fixed columns, all at once with numpy.

The record checks (:mod:`energy.io.coordinate_text`, :mod:`energy.io.structure_text`) use
:func:`plain_decimal_fields` to pass every record whose coordinates are plainly written decimals
without looking at it line by line; only a file with anything else is read line by line, so
its message names the line.  :mod:`energy.io.repeated_molecules` reads names, residue fields
and coordinates from :func:`atom_columns`.
"""
from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

#: Width of a PDB record (wwPDB format 3.3).
RECORD_WIDTH = 80


@dataclass(frozen=True)
class AtomColumns:
    """ATOM/HETATM records of PDB text as columns (all arrays have one row per record).

    ``line``: (n,) intp line index in the text.  ``names``, ``resnames`` (4 characters, as
    OpenMM reads them), ``chains``, ``resseq``, ``icodes``, ``elements``, ``serials``: (n,) str,
    stripped.  ``altloc``: (n,) bool, an alternate-location label is set.  ``positions``: (n, 3)
    float64 A, or None when a coordinate field is not a plain decimal number (the strict checks
    of :mod:`energy.io.structure_text` name it).  ``plain``: every record fits its columns (54 to
    80 characters) with plainly written coordinates and occupancy (:func:`text_records_plain`).
    """

    line: np.ndarray
    names: np.ndarray
    resnames: np.ndarray
    chains: np.ndarray
    resseq: np.ndarray
    icodes: np.ndarray
    elements: np.ndarray
    serials: np.ndarray
    altloc: np.ndarray
    positions: np.ndarray | None
    plain: bool = False


def _text_column(matrix, lo: int, hi: int) -> np.ndarray:
    block = np.ascontiguousarray(matrix[:, lo:hi])
    return np.char.strip(block.view(f"S{hi - lo}").ravel().astype(f"U{hi - lo}"))


_DIGIT = np.zeros(256, bool)
_DIGIT[ord("0"):ord("9") + 1] = True


def plain_decimals(field: np.ndarray) -> np.ndarray:
    """Which fixed-width fields are plainly written decimal numbers.

    A plain decimal is spaces, then an optional sign, then digits with at most one decimal
    point and at least one digit, and nothing after: a subset of what
    :func:`energy.io.numbers.parse_float` accepts, and never out of its range in 8 columns.

    Parameters
    ----------
    field : (n, w) uint8
        The fields' characters.

    Returns
    -------
    (n,) bool
    """
    space = field == ord(" ")
    body = ~space
    has_body = body.any(axis=1)
    start = np.argmax(body, axis=1)
    columns = np.arange(field.shape[1])[None, :]
    after_start = columns >= start[:, None]
    leading_ok = ~(body & ~after_start).any(axis=1)               # only spaces before the number
    no_gap = ~(space & after_start).any(axis=1)                    # no space inside or after it
    sign = (field == ord("-")) | (field == ord("+"))
    sign_ok = ~(sign & (columns != start[:, None])).any(axis=1)    # a sign only in front
    digit = _DIGIT[field]
    dot = field == ord(".")
    allowed = ~(body & ~(digit | dot | sign)).any(axis=1)
    return has_body & leading_ok & no_gap & sign_ok & allowed & (dot.sum(axis=1) <= 1) & digit.any(axis=1)


def record_names(lines: list[str]) -> np.ndarray:
    """(n_lines,) str: the record name of every line (its first six characters).

    Parameters
    ----------
    lines : list of str

    Returns
    -------
    (n_lines,) <U6 array
    """
    return np.array([ln[:6] for ln in lines], dtype="U6")


def atom_record_lines(records: np.ndarray) -> np.ndarray:
    """(n,) intp: the lines that are ATOM or HETATM records.

    Parameters
    ----------
    records : (n_lines,) str
        :func:`record_names` of the text.

    Returns
    -------
    (n,) intp
    """
    return np.flatnonzero((records == "ATOM  ") | (records == "HETATM"))


def record_matrix(lines: list[str], index: np.ndarray) -> np.ndarray:
    """The records ``lines[index]`` as an (n, 80) uint8 character matrix (padded with spaces,
    cut at column 80, characters outside Latin-1 replaced by ``?``).

    Parameters
    ----------
    lines : list of str
        The text's lines.
    index : (n,) intp
        Which lines.

    Returns
    -------
    (n, 80) uint8
    """
    body = "".join(lines[k].rstrip("\r\n")[:RECORD_WIDTH].ljust(RECORD_WIDTH) for k in index)
    return np.frombuffer(body.encode("latin-1", "replace"), np.uint8).reshape(len(index), RECORD_WIDTH)


def atom_columns(lines: list[str]) -> AtomColumns:
    """Read the ATOM/HETATM records among ``lines`` by their fixed columns.

    Parameters
    ----------
    lines : list of str
        PDB text split into lines.

    Returns
    -------
    AtomColumns
    """
    index = atom_record_lines(record_names(lines))
    widths = np.array([len(lines[k].rstrip()) for k in index], np.intp)
    matrix = record_matrix(lines, index)
    fields = matrix[:, 30:54].reshape(len(index), 3, 8)
    positions = None
    if all(plain_decimals(fields[:, axis]).all() for axis in range(3)):
        positions = np.ascontiguousarray(fields).view("S8").reshape(-1, 3).astype(np.float64)
    occupancy = matrix[:, 54:60]
    plain = bool(positions is not None and (not len(index) or (widths.min() >= 54 and widths.max() <= RECORD_WIDTH))
                 and ((occupancy == ord(" ")).all(axis=1) | plain_decimals(occupancy)).all())
    resnames = _text_column(matrix, 17, 21)
    return AtomColumns(line=index, names=_text_column(matrix, 12, 16), resnames=resnames,
                       chains=_text_column(matrix, 21, 22), resseq=_text_column(matrix, 22, 26),
                       icodes=_text_column(matrix, 26, 27), elements=_text_column(matrix, 76, 78),
                       serials=_text_column(matrix, 6, 11), altloc=matrix[:, 16] != ord(" "),
                       positions=positions, plain=plain)


@functools.lru_cache(maxsize=2)
def text_atom_columns(text: str) -> AtomColumns:
    """:func:`atom_columns` of a whole PDB text, kept for the last two texts: the strict
    coordinate check, the record check and the split of the solvent read the same text one
    after the other, and the columns are read once for all three.

    Parameters
    ----------
    text : str
        PDB text.

    Returns
    -------
    AtomColumns
        ``line`` indexes ``text.splitlines()`` (the same lines with or without their ends).
    """
    return atom_columns(text.splitlines())


def text_records_plain(text: str) -> bool:
    """True when a single-model PDB text's ATOM/HETATM records all fit their columns (54 to 80
    characters), with x, y, z (columns 31-54) plain decimals (:func:`plain_decimals`) and an
    occupancy (columns 55-60) blank or one.

    Parameters
    ----------
    text : str
        PDB text.

    Returns
    -------
    bool
        False for a text with MODEL records (those are compared line by line) or with any record
        that is not plainly written: "read it line by line", not that anything is wrong.
    """
    return not (text.startswith("MODEL") or "\nMODEL" in text) and text_atom_columns(text).plain


__all__ = ["AtomColumns", "RECORD_WIDTH", "atom_columns", "plain_decimals", "text_atom_columns",
           "atom_record_lines", "record_matrix", "record_names", "text_records_plain"]
