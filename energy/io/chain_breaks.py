"""Chain breaks in a deposited structure: found from the coordinates, and the chain split there.

A break is two consecutive amino acids of one chain whose C(i)-N(i+1) distance exceeds
:data:`GAP_C_N_ANGSTROM`, or that lack one of the two atoms (docs/physics.md, "Deposited
structures").  Splitting the chain means nothing is ever bonded across the break and both ends
become chain termini.
"""
from __future__ import annotations

import numpy as np

#: A peptide C(i)-N(i+1) longer than this (A) is a chain break (a peptide bond is 1.33 A;
#: about 2 A is the common-practice threshold).
GAP_C_N_ANGSTROM = 2.0


def _atom(residue, name):
    return next((a for a in residue.atoms() if a.name == name), None)


def find_gaps(topology, positions) -> list[tuple]:
    """Chain breaks.

    Consecutive amino acids (residues with a CA) of one chain whose C-N distance exceeds
    :data:`GAP_C_N_ANGSTROM` or that lack the C or the N atom.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64, A.

    Returns
    -------
    list of tuple
        ``(residue_before, residue_after, distance or None)``, distance in A.
    """
    gaps = []
    for chain in topology.chains():
        residues = list(chain.residues())
        for a, b in zip(residues[:-1], residues[1:]):
            if _atom(a, "CA") is None or _atom(b, "CA") is None:
                continue
            c, n = _atom(a, "C"), _atom(b, "N")
            if c is None or n is None:
                gaps.append((a, b, None))
                continue
            d = float(np.linalg.norm(positions[n.index] - positions[c.index]))
            if d > GAP_C_N_ANGSTROM:
                gaps.append((a, b, d))
    return gaps


def split_chains(topology, starts) -> object:
    """A copy of ``topology`` split into new chains at ``starts``.

    A new chain (same id) starts at each residue of ``starts``; bonds between the two residues at
    a split are left out.  Atom order is unchanged.

    Parameters
    ----------
    topology : openmm.app.Topology
    starts : iterable of openmm.app.Residue
        Residues of ``topology`` that start a new chain.

    Returns
    -------
    openmm.app.Topology
    """
    from openmm import app
    starts = {r.index for r in starts}
    new = app.Topology()
    new.setPeriodicBoxVectors(topology.getPeriodicBoxVectors())
    atom_map, before_split = {}, {}
    for chain in topology.chains():
        c = new.addChain(chain.id)
        previous = None
        for res in chain.residues():
            if res.index in starts and previous is not None:
                c = new.addChain(chain.id)
                before_split[res.index] = previous.index
            r = new.addResidue(res.name, c, res.id, getattr(res, "insertionCode", ""))
            for atom in res.atoms():
                atom_map[atom] = new.addAtom(atom.name, atom.element, r, atom.id,
                                             getattr(atom, "formalCharge", None))
            previous = res
    for bond in topology.bonds():
        a1, a2 = bond[0], bond[1]
        r1, r2 = a1.residue.index, a2.residue.index
        if before_split.get(r2) == r1 or before_split.get(r1) == r2:
            continue
        new.addBond(atom_map[a1], atom_map[a2], bond.type, bond.order)
    return new
