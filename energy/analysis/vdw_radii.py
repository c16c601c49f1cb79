"""Van der Waals radii by element, for the clash finder (:mod:`energy.analysis.clashes`).

Source: A. Bondi, "van der Waals Volumes and Radii", *J. Phys. Chem.* 68, 441-451 (1964),
Table I (radii in angstrom).  Only the elements of biomolecular models asked for here are
tabulated (``resources/bondi_radii.json``): H, C, N, O, P, S and the halogens F, Cl, Br, I.  The
values are the ones universally
quoted from that table; they were typed in from memory of the table, not from a scan of the paper,
and are checked in ``tests/test_clashes.py`` against the same published values written
independently there.

Elements are matched case-insensitively on their symbol ("CL" and "Cl" are chlorine).  An element
not in the table has no Bondi radius; the clash finder then falls back to the force-field radius
and says so (see ``docs/clashes.md``).
"""
from __future__ import annotations

import resources

_TABLE = resources.json_table("bondi_radii.json")
#: Bondi (1964), Table I, angstrom (the table ``resources/bondi_radii.json``).
BONDI_RADII: dict[str, float] = {k: float(v) for k, v in _TABLE["radii"].items()}

BONDI_SOURCE = _TABLE["citation"]

_BY_UPPER = {k.upper(): v for k, v in BONDI_RADII.items()}
# deuterium is hydrogen for the purpose of size
_BY_UPPER["D"] = BONDI_RADII["H"]


def bondi_radius(element: str) -> float | None:
    """Bondi radius (A) of ``element`` (symbol, any case), or ``None`` if it is not tabulated.

    Deuterium (``D``) takes hydrogen's radius.

    Parameters
    ----------
    element : str
        Element symbol (surrounding blanks ignored).

    Returns
    -------
    float or None
        Radius, angstrom (Bondi 1964, Table I).
    """
    return _BY_UPPER.get(str(element).strip().upper())
