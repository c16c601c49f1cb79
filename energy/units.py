"""Base units and physical constants of Tessera.

Base units, used everywhere inside :mod:`energy`: length in angstrom (A), energy in kcal/mol,
charge in elementary charges (e), angles in radians internally (degrees in files and reports).
Conversion happens once, when a file is read.
"""
from __future__ import annotations

import math

# CODATA 2018 exact / recommended values (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)).
ELEMENTARY_CHARGE_C = 1.602176634e-19          # exact (SI 2019)
AVOGADRO_PER_MOL = 6.02214076e23               # exact (SI 2019)
VACUUM_PERMITTIVITY_F_PER_M = 8.8541878128e-12  # CODATA 2018
THERMOCHEMICAL_CALORIE_J = 4.184               # exact by definition (thermochemical calorie)

KJ_PER_KCAL = THERMOCHEMICAL_CALORIE_J
ANGSTROM_PER_NM = 10.0

#: Coulomb constant k = e^2 N_A / (4 pi eps0), in kcal/mol * A / e^2, from the CODATA 2018
#: constants above: 332.0637 (OpenMM's ONE_4PI_EPS0 = 138.935456 kJ/mol nm/e^2 is the same value).
COULOMB_CONSTANT = (ELEMENTARY_CHARGE_C ** 2 * AVOGADRO_PER_MOL
                    / (4.0 * math.pi * VACUUM_PERMITTIVITY_F_PER_M)
                    / 1e-10 / (THERMOCHEMICAL_CALORIE_J * 1000.0))

ENERGY_UNITS = {"kcal/mol": 1.0, "kJ/mol": KJ_PER_KCAL}


def convert_energy(value, to_unit: str):
    """Convert an energy (or array) from kcal/mol to ``to_unit`` (``kcal/mol`` or ``kJ/mol``).

    Parameters
    ----------
    value : float or numpy.ndarray of float
        Energy or energies, kcal/mol; any shape.
    to_unit : str
        Target unit, a key of :data:`ENERGY_UNITS` (``"kcal/mol"`` or ``"kJ/mol"``;
        1 kcal = 4.184 kJ exactly, thermochemical calorie).

    Returns
    -------
    float or numpy.ndarray of float
        ``value`` in ``to_unit``, same type and shape as ``value``.

    Raises
    ------
    ValueError
        If ``to_unit`` is not a known unit.
    """
    try:
        return value * ENERGY_UNITS[to_unit]
    except KeyError:
        raise ValueError(f"unknown energy unit {to_unit!r}; known: {', '.join(ENERGY_UNITS)}") from None
