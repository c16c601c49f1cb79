"""Strict parsing of the numbers in input files, and the limits every value must respect.

Python's ``int`` and ``float`` accept more than a file format means: ``1_000``, digits of other
scripts (Arabic-Indic, full-width), ``nan``, ``inf``, ``infinity``, surrounding whitespace and
integers of any length.  Here a number is ASCII only: an optional sign, digits with at most one
decimal point, and an optional exponent (``[eE][+-]digits``).  A value must be finite after
conversion (``1e999`` is refused) and lie within the limits of its field.  Messages quote at most
:data:`energy.errors.FIELD_CAP` characters of the field.
"""
from __future__ import annotations

import math
import re

from energy.errors import StructureFileError, quote_field

_FLOAT = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\Z")
_INT = re.compile(r"[+-]?[0-9]+\Z")
#: Longest integer accepted (digits): every count and index of a file fits in 64 bits.
MAX_INT_DIGITS = 18
#: Largest magnitude of any force-field parameter (force constant, energy, length, angle,
#: charge, mass): far beyond every force field (common practice), and small enough that no
#: energy of coordinates within :data:`energy.model.checks.COORDINATE_BOUND_ANGSTROM` overflows.
PARAMETER_BOUND = 1.0e6


def is_number(word: str) -> bool:
    """True if ``word`` is a number in the strict sense of this module.

    Parameters
    ----------
    word : str
        The field as written.

    Returns
    -------
    bool
    """
    return _FLOAT.match(word) is not None


def parse_float(word: str, what: str, path, line: int | None = None, *, low: float | None = None,
                high: float | None = None, low_open: bool = False, bound: float = PARAMETER_BOUND) -> float:
    """A strictly written, finite number within ``[low, high]`` (``(low, high]`` with ``low_open``)
    and ``|value| <= bound``.

    Parameters
    ----------
    word : str
        The field as written.
    what : str
        Name of the field in messages (``"BONDS Kb"``).
    path, line
        Where the field is, for the :class:`StructureFileError`.
    low, high : float or None
        Limits of the value (None: no limit).
    low_open : bool
        Exclude ``low`` itself.
    bound : float
        Largest magnitude accepted (default :data:`PARAMETER_BOUND`).

    Returns
    -------
    float

    Raises
    ------
    StructureFileError
        The field is not a plain ASCII number, not finite, or outside its limits.
    """
    if _FLOAT.match(word) is None:
        raise StructureFileError(path, f"{what}: expected a number (ASCII digits, sign, decimal point, "
                                       f"exponent), got {quote_field(word)}", line)
    value = float(word)
    if value == 0.0 and re.search(r"[1-9]", re.split(r"[eE]", word)[0]):
        raise StructureFileError(path, f"{what}: {quote_field(word)} is out of range (it underflows to 0)", line)
    if not math.isfinite(value) or abs(value) > bound:
        raise StructureFileError(path, f"{what}: {quote_field(word)} is out of range (|value| <= {bound:g})",
                                 line)
    if low is not None and (value <= low if low_open else value < low):
        raise StructureFileError(path, f"{what} must be {'>' if low_open else '>='} {low:g}, got "
                                       f"{quote_field(word)}", line)
    if high is not None and value > high:
        raise StructureFileError(path, f"{what} must be <= {high:g}, got {quote_field(word)}", line)
    return value


def parse_int(word: str, what: str, path, line: int | None = None, *, low: int | None = None,
              high: int | None = None) -> int:
    """A strictly written integer (ASCII digits, optional sign, at most :data:`MAX_INT_DIGITS`
    digits) within ``[low, high]``.

    Parameters
    ----------
    word : str
        The field as written.
    what : str
        Name of the field in messages.
    path, line
        Where the field is, for the :class:`StructureFileError`.
    low, high : int or None
        Inclusive limits of the value (None: no limit).

    Returns
    -------
    int

    Raises
    ------
    StructureFileError
        Not an integer, too long, or outside its limits (the message quotes the field).
    """
    if _INT.match(word) is None:
        raise StructureFileError(path, f"{what}: expected an integer, got {quote_field(word)}", line)
    if len(word.lstrip("+-")) > MAX_INT_DIGITS:
        raise StructureFileError(path, f"{what}: {quote_field(word)} is out of range "
                                       f"(at most {MAX_INT_DIGITS} digits)", line)
    value = int(word)
    if (low is not None and value < low) or (high is not None and value > high):
        limits = f"{'' if low is None else low}..{'' if high is None else high}"
        raise StructureFileError(path, f"{what} must lie in {limits}, got {quote_field(word)}", line)
    return value
