"""A toy bonded term registered by the registry tests: a harmonic distance restraint between
atom pairs, E = k (r - r0)^2 (Hooke's law in the engine's bond convention, no 1/2:
docs/physics.md), on its own table ``restraints``.  It is registered only inside the
``toy_term`` fixture, and removed again afterwards."""
from __future__ import annotations

import contextlib

import numpy as np

from energy.model.system import TermTable
from energy.terms import registry

NAME = "restraint"


def restraint_energies(table, positions, box, system):
    """E = k (r - r0)^2 per row; plain distance (the toy ignores the cell)."""
    if not len(table):
        return np.zeros(0)
    d = positions[table.atoms[:, 1]] - positions[table.atoms[:, 0]]
    r = np.sqrt(np.einsum("ij,ij->i", d, d))
    return table.params["k"] * (r - table.params["r0"]) ** 2


TOY = registry.Term(NAME, "restr", "Distance restraint", True,
                    (registry.TableForm("restraints", 2, ("k", "r0"), restraint_energies),))


@contextlib.contextmanager
def toy_term_registered():
    registry.register(TOY)
    try:
        yield TOY
    finally:
        registry.unregister(NAME)


def restraint_table(pairs, k, r0) -> TermTable:
    return TermTable(np.asarray(pairs, np.intp).reshape(-1, 2), {"k": k, "r0": r0})
