"""Small invented systems built directly as arrays (no force-field files), for analytic checks,
brute-force comparisons and property tests."""
from __future__ import annotations

import numpy as np

from energy.model.system import Frame, MolecularSystem, ResidueTable, TermTable


def make_system(charges, rmin_half, eps, resindex, chains=None, exceptions=None,
                bonds=None, elements=None):
    """A system whose atoms each have their own LJ type (Rmin/2, eps) with Lorentz-Berthelot-like
    CHARMM combination: Rmin_ij = Rmin/2_i + Rmin/2_j, eps_ij = sqrt(eps_i eps_j).

    ``exceptions``: optional list of (i, j, qq, rmin, eps).  ``bonds``: optional (i, j, k, r0).
    """
    n = len(charges)
    resindex = np.asarray(resindex, np.intp)
    n_res = int(resindex.max()) + 1
    rmin_half = np.asarray(rmin_half, float)
    eps = np.asarray(eps, float)
    chains = chains if chains is not None else ["A"] * n_res
    exceptions = exceptions or []
    bonds = bonds or []
    return MolecularSystem(
        names=[f"X{i}" for i in range(n)], types=[f"T{i}" for i in range(n)],
        elements=elements if elements is not None else ["C"] * n,
        charges=np.asarray(charges, float), resindex=resindex,
        residues=ResidueTable(np.array(chains), np.arange(1, n_res + 1), np.array(["UNK"] * n_res),
                              np.array([""] * n_res)),
        lj_type=np.arange(n), lj_rmin=rmin_half[:, None] + rmin_half[None, :],
        lj_eps=np.sqrt(eps[:, None] * eps[None, :]),
        exception_pairs=np.array([e[:2] for e in exceptions], np.intp).reshape(-1, 2),
        exception_qq=np.array([e[2] for e in exceptions], float),
        exception_rmin=np.array([e[3] for e in exceptions], float),
        exception_eps=np.array([e[4] for e in exceptions], float),
        bonds=TermTable(np.array([b[:2] for b in bonds], np.intp).reshape(-1, 2),
                        {"k": [b[2] for b in bonds], "r0": [b[3] for b in bonds]}),
        urey_bradley=TermTable.empty(3, "k", "s0"), angles=TermTable.empty(3, "k", "theta0"),
        dihedrals=TermTable.empty(4, "k", "periodicity", "phase"),
        impropers=TermTable.empty(4, "k", "psi0"),
        periodic_impropers=TermTable.empty(4, "k", "periodicity", "phase"),
        cmap=TermTable.empty(8, "map"))


def random_system(rng, n_residues=6, atoms_per_residue=(2, 6), box=30.0, n_exceptions=10):
    """A random invented system: charges in [-0.8, 0.8] e, Rmin/2 in [1.0, 2.2] A, eps in
    [0.02, 0.3] kcal/mol, atoms at least 1.2 A apart inside a cube of side ``box``."""
    sizes = rng.integers(atoms_per_residue[0], atoms_per_residue[1] + 1, n_residues)
    resindex = np.repeat(np.arange(n_residues), sizes)
    n = len(resindex)
    pos = []
    while len(pos) < n:
        p = rng.uniform(0, box, 3)
        if all(np.linalg.norm(p - q) > 1.2 for q in pos):
            pos.append(p)
    charges = rng.uniform(-0.8, 0.8, n)
    rmin_half = rng.uniform(1.0, 2.2, n)
    eps = rng.uniform(0.02, 0.3, n)
    pairs = set()
    while len(pairs) < min(n_exceptions, n * (n - 1) // 2):
        i, j = sorted(rng.choice(n, 2, replace=False))
        pairs.add((int(i), int(j)))
    exceptions = [(i, j, float(rng.uniform(-0.3, 0.3)), float(rng.uniform(2.5, 4.0)),
                   float(rng.uniform(0.0, 0.2))) for i, j in sorted(pairs)]
    system = make_system(charges, rmin_half, eps, resindex, exceptions=exceptions,
                         chains=["A" if r < n_residues // 2 else "B" for r in range(n_residues)])
    return system, Frame(np.array(pos))
