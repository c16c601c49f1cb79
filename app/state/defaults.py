"""Compute settings that fit the input, for a window whose user has not chosen any.

A solvated simulation box gets a 12 A cutoff with reaction field (the usual treatment of a
periodic snapshot; all pairs would also count every water with every other).  A large system
without a cell gets the same cutoff, non-periodic, since all pairs grow with N^2.  Anything else
keeps the exact all-pairs default.  Each choice comes with a line for the status bar.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from energy.model.cell import cell_volume, check_cell
from energy.model.settings import EnergySettings

#: Atoms per A^3 in liquid water: 0.997 g/cm^3 / 18.015 g/mol x N_A x 3 atoms = 0.100
#: (density of water at 25 C, CRC Handbook of Chemistry and Physics).
WATER_ATOM_DENSITY = 0.100
#: A cell counts as a filled simulation box from half of water's atom density on: a crystal's
#: asymmetric unit without its symmetry mates fills a fraction of its cell and stays below.
FILLED_BOX_DENSITY = 0.5 * WATER_ATOM_DENSITY
#: Above this many atoms without a cell, the window starts with a cutoff (all pairs of 50,000
#: atoms are 1.25e9 atom pairs).
LARGE_WITHOUT_CELL = 50_000
#: The cutoff these defaults use, A (common practice for reaction-field setups).
DEFAULT_CUTOFF = 12.0


def is_filled_box(box, n_atoms: int) -> bool:
    """True if ``box`` is a usable periodic cell holding ``n_atoms`` at liquid-like density."""
    usable = check_cell(box, n_atoms).box
    return usable is not None and n_atoms / cell_volume(usable) >= FILLED_BOX_DENSITY


def settings_for_input(n_atoms: int, box, base: EnergySettings | None = None) -> tuple[EnergySettings, str]:
    """(settings, status-bar note) for a system of ``n_atoms`` with cell ``box`` (or None).

    ``base`` (default: the engine's defaults) is returned unchanged, with an empty note, unless
    the input calls for a cutoff.
    """
    base = base or EnergySettings()
    if base.cutoff_angstrom is not None:
        return base, ""
    if box is not None and np.asarray(box, float)[:3].min() > 0 and is_filled_box(box, n_atoms):
        edge = float(np.asarray(box, float)[:3].min())
        cutoff = min(DEFAULT_CUTOFF, 0.5 * edge)   # the minimum image needs cutoff <= half the edge
        chosen = replace(base, cutoff_angstrom=cutoff, electrostatics="reaction-field", use_periodic=True)
        return chosen, (f"periodic box of {n_atoms:,} atoms: computed with a {cutoff:g} Å cutoff and "
                        "reaction field (change it under Compute settings)")
    if n_atoms > LARGE_WITHOUT_CELL:
        chosen = replace(base, cutoff_angstrom=DEFAULT_CUTOFF, electrostatics="reaction-field")
        return chosen, (f"{n_atoms:,} atoms without a periodic cell: computed with a {DEFAULT_CUTOFF:g} Å "
                        "cutoff and reaction field (Compute settings > untick Cutoff for all pairs)")
    return base, ""
