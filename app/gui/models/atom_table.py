"""Atom contributions behind one residue-pair entry (engine calls, no arithmetic of our own)."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.gui.models.array_table import ArrayTableModel, Column
from energy.decomposition.atom_pairs import residue_pair_atom_energies
from energy.decomposition.residue_pairs import bonded_terms_for_pair
from energy.terms.registry import long_label, short_label


@dataclass(frozen=True)
class PairContributions:
    """Rows: nonbonded atom pairs first (``atom_pairs`` (n, 2), aligned with ``energies``), then
    bonded terms touching the pair (``bonded``: dicts from the engine)."""

    residues: tuple
    energies: object           # energy.decomposition.atom_pairs.AtomPairEnergies
    bonded: list

    @property
    def n_nonbonded(self) -> int:
        return len(self.energies)

    def __len__(self) -> int:
        return self.n_nonbonded + len(self.bonded)


def pair_contributions(snapshot, i: int, j: int) -> PairContributions:
    s, f, res = snapshot.system, snapshot.frame, snapshot.result
    solvation = (getattr(res, "interactions", None) or {}).get("solvation") or {}
    e = residue_pair_atom_energies(s, f, res.settings, i, j, solvation.get("born_radius"))
    return PairContributions((i, j), e, bonded_terms_for_pair(s, res, i, j))


def bonded_atoms_label(system, atoms) -> str:
    """``A:ALA25 N–CA–CB``: the first atom's residue, then the atom names in order; an atom of
    another residue is written with its own label (``A:ALA25 C–A:GLY26 N``)."""
    first = int(system.resindex[atoms[0]])
    names = [str(system.names[x]) if int(system.resindex[x]) == first else system.atom_label(int(x))
             for x in atoms]
    return f"{system.residues.label(first)} {'–'.join(names)}"


class AtomTableModel(ArrayTableModel):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.contrib = None
        self.system = None

    def set_contributions(self, system, contrib: PairContributions | None) -> None:
        self.contrib, self.system = contrib, system
        if contrib is None:
            self.set_columns([], 0)
            return
        s, e = system, contrib.energies
        a, b = e.pairs[:, 0], e.pairs[:, 1]
        kind = np.where(e.is_exception, np.where((e.coulomb == 0) & (e.lj == 0), "1-2/1-3 (excluded)", "1-4 pair"),
                        "nonbonded").astype(object)
        bonded = contrib.bonded
        kinds = list(kind) + [long_label(d["term"]) for d in bonded]
        atom_i = [s.atom_label(x) for x in a] + [bonded_atoms_label(s, d["atoms"]) for d in bonded]
        atom_j = [s.atom_label(x) for x in b] + [""] * len(bonded)
        types = [f"{s.types[x]} / {s.types[y]}" for x, y in zip(a, b)] + [
            "–".join(str(s.types[x]) for x in d["atoms"]) for d in bonded]
        charges = [f"{s.charges[x]:+.3f} / {s.charges[y]:+.3f}" for x, y in zip(a, b)] + [""] * len(bonded)
        nan = np.full(len(bonded), np.nan)
        share = np.array([d["share"] for d in bonded])
        # the energies right after the two atoms; the less used columns last (Types hidden:
        # the header's column menu shows it)
        cols = [Column("Atom i", np.array(atom_i, dtype=object)),
                Column("Atom j", np.array(atom_j, dtype=object)),
                Column("r", np.concatenate([e.distance, nan]), "distance", "distance between the two atoms (Å)"),
                Column(short_label("coulomb"), np.concatenate([e.coulomb, nan]), "energy"),
                Column(short_label("lj"), np.concatenate([e.lj, nan]), "energy"),
                Column("Total", np.concatenate([e.total, share]), "energy",
                       "for a bonded term: the share attributed to this residue pair"),
                *([] if e.solvation_polar is None else [
                    Column(short_label("solvation_polar"), np.concatenate([e.solvation_polar, nan]), "energy",
                           "generalized Born pair term (not in Total; the residues' self terms sit on "
                           "the diagonal entry)")]),
                Column("Kind", np.array(kinds, dtype=object)),
                Column("Charges (e)", np.array(charges, dtype=object)),
                Column("Types", np.array(types, dtype=object), hidden=True)]
        self.set_columns(cols, len(contrib))

    def atom_pair_of_row(self, row: int):
        rec = self.record(row)
        if rec < self.contrib.n_nonbonded:
            p = self.contrib.energies.pairs[rec]
            return int(p[0]), int(p[1])
        return None

    def row_of_atom_pair(self, pair) -> int:
        if self.contrib is None or pair is None:
            return -1
        p = self.contrib.energies.pairs
        hit = np.flatnonzero(((p[:, 0] == pair[0]) & (p[:, 1] == pair[1]))
                             | ((p[:, 0] == pair[1]) & (p[:, 1] == pair[0])))
        return self.row_of(int(hit[0])) if len(hit) else -1
