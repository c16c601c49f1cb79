"""Solvent blocks: water and ions aggregated into one entry each.

In a solvated snapshot most residues are waters and ions.  :func:`block_residue_pairs` turns a
residue-pair table into one over the *solute* residues (in their order) followed by one block
per solvent class present: ``Water (4,611)``, ``Ions (19)``.  A block's pair with a solute
residue is the sum over all the block's residues; its diagonal holds the solvent-solvent energy
(within and between its residues); the water-ion pair holds their mutual energy.  Every
original entry lands in exactly one blocked entry, so the blocked table sums to the same totals
(up to floating-point summation order), and so do its per-residue sums.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from energy._kernels.csr import mapped_pair_keys
from energy._kernels.pair_key import split_keys
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.model.residue_classes import SOLVENT_CLASSES
from energy.terms.registry import TERMS

#: Up to this many (row, row) keys the blocked table is binned directly on the key (an array of
#: that size, 8 bytes each); above it, the keys are sorted (np.unique).
DIRECT_KEY_SPACE = 4_000_000
#: Label of each solvent block (the count of residues is appended).
BLOCK_NAMES = {"water": "Water", "ion": "Ions"}


@dataclass(frozen=True)
class BlockedPairs:
    """A residue-pair table over solute residues and solvent blocks.

    ``pairs``: :class:`ResiduePairEnergies` over ``n = len(labels)`` rows; ``labels`` (n,) str
    (solute residue labels, then ``Water (N)``...); ``members`` (n,) object: for each row the
    original residue indices it stands for ((1,) for a solute residue); ``residue_to_row``
    (n_residues,) intp: the row of every original residue; ``n_blocks``: solvent blocks at the
    end of the rows.
    """

    pairs: ResiduePairEnergies
    labels: np.ndarray
    members: np.ndarray
    residue_to_row: np.ndarray
    n_blocks: int

    @property
    def n_solute(self) -> int:
        return len(self.labels) - self.n_blocks


def has_solvent(classes: np.ndarray) -> bool:
    """True if any residue's class is a solvent class (water, ion).

    Parameters
    ----------
    classes : (n_residues,) str array
        Residue classes (``MolecularSystem.residue_classes``).

    Returns
    -------
    bool
    """
    return bool(np.isin(np.asarray(classes, dtype=object), SOLVENT_CLASSES).any())


def block_residue_pairs(rp: ResiduePairEnergies, classes: np.ndarray, labels) -> BlockedPairs:
    """Aggregate the solvent residues of ``rp`` into one block per solvent class.

    Parameters
    ----------
    rp : ResiduePairEnergies
        The full table over ``n_residues`` residues (kcal/mol; A for distances).
    classes : (n_residues,) str array
        Class of every residue (``MolecularSystem.residue_classes``).
    labels : (n_residues,) sequence of str
        Residue labels (``A:LYS12``...).

    Returns
    -------
    BlockedPairs
        Rows: the solute residues in their original order, then ``Water (N)`` and ``Ions (N)``
        (only the classes present).  Each blocked value is the sum of the original entries
        mapped onto it; ``min_heavy_distance`` is the smallest over them.
    """
    classes = np.asarray(classes, dtype=object)
    n = rp.n_residues
    solute = np.flatnonzero(~np.isin(classes, SOLVENT_CLASSES))
    row = np.empty(n, np.intp)
    row[solute] = np.arange(len(solute))
    out_labels = [str(labels[k]) for k in solute]
    members = [np.array([k]) for k in solute]
    for cls in SOLVENT_CLASSES:
        idx = np.flatnonzero(classes == cls)
        if len(idx):
            row[idx] = len(out_labels)
            out_labels.append(f"{BLOCK_NAMES[cls]} ({len(idx):,})")
            members.append(idx)
    m = len(out_labels)
    keys = mapped_pair_keys(rp.pair_i, rp.pair_j, row, m)
    if m * m <= DIRECT_KEY_SPACE:
        # few rows (the usual protein in water): bin straight on the key, no sort of the pairs
        count = np.bincount(keys, minlength=m * m)
        uniq = np.flatnonzero(count)
        slot = np.full(m * m, -1, np.intp)
        slot[uniq] = np.arange(len(uniq))
        inverse = slot[keys]
    else:
        uniq, inverse = np.unique(keys, return_inverse=True)
    values = {}
    for t in TERMS:
        v = np.bincount(inverse, weights=rp.values[t], minlength=len(uniq))
        v.flags.writeable = False
        values[t] = v
    dist = np.full(len(uniq), np.inf)
    np.minimum.at(dist, inverse, rp.min_heavy_distance)
    pair_i, pair_j = split_keys(uniq, m)
    blocked = ResiduePairEnergies(m, pair_i, pair_j, values, dist)
    member_array = np.empty(m, dtype=object)
    member_array[:] = members
    return BlockedPairs(blocked, np.array(out_labels, dtype=object), member_array, row, m - len(solute))


@dataclass(frozen=True)
class SolventContacts:
    """The residues of one solvent block that interact with one solute residue.

    ``residues`` (k,) intp: residue indices of the block's members with a listed pair with the
    solute residue, most favourable total first; ``values`` {term: (k,) float64} kcal/mol;
    ``total`` (k,) float64 kcal/mol; ``min_heavy_distance`` (k,) float64 A.
    """

    residue: int
    residues: np.ndarray
    values: dict
    total: np.ndarray
    min_heavy_distance: np.ndarray

    def __len__(self) -> int:
        return len(self.residues)


def solvent_contacts(rp: ResiduePairEnergies, residue: int, members: np.ndarray) -> SolventContacts:
    """Expand a block for one solute residue: every block member it has a listed pair with.

    Parameters
    ----------
    rp : ResiduePairEnergies
        The full (not blocked) table over the system's residues, kcal/mol.
    residue : int
        Residue index of the solute residue (0-based).
    members : (m,) int array
        Residue indices the block stands for (``BlockedPairs.members[row]``).

    Returns
    -------
    SolventContacts
        One entry per member with a listed pair, sorted by total energy (most favourable
        first; ties by distance).  Their values sum to the blocked entry of ``residue`` with
        the block.
    """
    in_block = np.zeros(rp.n_residues, bool)
    in_block[np.asarray(members, np.intp)] = True
    # the residue's own rows first (two scans of the index columns), then only those rows
    rows = np.union1d(np.flatnonzero(rp.pair_i == residue), np.flatnonzero(rp.pair_j == residue))
    other = np.where(rp.pair_i[rows] == residue, rp.pair_j[rows], rp.pair_i[rows])
    keep = in_block[other] & (other != residue)
    rows, other = rows[keep], other[keep]
    total = sum(rp.values[t][rows] for t in TERMS)
    dist = rp.min_heavy_distance[rows]
    order = np.lexsort((dist, total))
    rows, other = rows[order], other[order]
    return SolventContacts(int(residue), other.astype(np.intp), {t: rp.values[t][rows] for t in TERMS},
                           total[order], dist[order])
