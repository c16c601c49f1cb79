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
BOLTZMANN_J_PER_K = 1.380649e-23               # exact (SI 2019)

KJ_PER_KCAL = THERMOCHEMICAL_CALORIE_J
ANGSTROM_PER_NM = 10.0

#: Coulomb constant k = e^2 N_A / (4 pi eps0), in kcal/mol * A / e^2, from the CODATA 2018
#: constants above: 332.0637 (OpenMM's ONE_4PI_EPS0 = 138.935456 kJ/mol nm/e^2 is the same value).
COULOMB_CONSTANT = (ELEMENTARY_CHARGE_C ** 2 * AVOGADRO_PER_MOL
                    / (4.0 * math.pi * VACUUM_PERMITTIVITY_F_PER_M)
                    / 1e-10 / (THERMOCHEMICAL_CALORIE_J * 1000.0))



def debye_kappa_per_angstrom(ionic_strength_molar: float, dielectric: float, temperature_kelvin: float) -> float:
    """Inverse Debye length of a 1:1 electrolyte (Debye-Hueckel theory).

    kappa^2 = 2 N_A e^2 I (1000 L/m^3) / (eps0 eps_r k_B T), CODATA 2018 constants above
    (e.g. Israelachvili, Intermolecular and Surface Forces, 3rd ed., eq. 14.36).

    Parameters
    ----------
    ionic_strength_molar : float
        Ionic strength I, mol/L (>= 0).
    dielectric : float
        Relative dielectric of the solvent.
    temperature_kelvin : float
        Temperature, K.

    Returns
    -------
    float
        kappa, 1/A (0 without salt).
    """
    kappa2 = (2.0 * AVOGADRO_PER_MOL * ELEMENTARY_CHARGE_C ** 2 * ionic_strength_molar * 1000.0
              / (VACUUM_PERMITTIVITY_F_PER_M * dielectric * BOLTZMANN_J_PER_K * temperature_kelvin))
    return math.sqrt(kappa2) * 1e-10


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
