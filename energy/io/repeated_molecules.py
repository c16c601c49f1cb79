"""The waters and ions of a PDB, read by columns and parameterised once per kind.

A simulation snapshot is mostly solvent: 98,729 atoms of the benchmark box are 582 atoms of
protein and 32,715 waters.  Handing all of it to OpenMM's PDB reader and ``createSystem`` costs
seconds per ten thousand waters, and every water gets the same parameters.  So the built-in
route (:mod:`energy.io.builtin`) splits the text first (:func:`split_repeated`):

* ATOM/HETATM records are read by columns with numpy
  (:class:`energy.io.pdb_columns.AtomColumns`): names, residue fields, coordinates;
* residues of the water and ion classes (:mod:`energy.model.residue_classes`) that are single
  molecules (no CONECT record names their atoms, no alternate location, unique atom names) are
  grouped by their residue name, atom names and elements;
* the first residue of each group stays in the text that OpenMM reads (the *representative*),
  the others become copies: their coordinates, chains and residue numbers come from the columns
  (numbers as OpenMM reads them: decimal, or hybrid-36 above 9,999).

After parameterising, :func:`energy.model.copies.with_copies` places the copies.  A file that
does not fit (several models, residue numbers OpenMM would invent, fewer than
:data:`MIN_COPIES` copies) is read whole, as before.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from energy.io.pdb_columns import record_names, text_atom_columns
from energy.model.copies import CopyGroup
from energy.model.residue_classes import SOLVENT_CLASSES, residue_class

#: Below this many copies in all, splitting the text saves nothing worth its bookkeeping.
MIN_COPIES = 50


def _residue_number(text: str) -> int | None:
    """The residue number OpenMM reads from columns 23-26: decimal, or hybrid-36 (``A000`` is
    10,000); None for anything else (OpenMM then numbers residues by context)."""
    try:
        return int(text)
    except ValueError:
        pass
    try:
        return int(text, 16) - 0xA000 + 10000
    except ValueError:
        return None


@dataclass(frozen=True)
class SplitStructure:
    """PDB text with its repeated molecules taken out, and where they go back.

    ``text``: what OpenMM reads (the solute and one representative per group).  ``kept``: (n_r,)
    intp, each of its atoms' index among the file's atoms.  ``groups``: one
    :class:`~energy.model.copies.CopyGroup` per kind, with ``representative`` holding positions
    in ``text``'s atom order and ``atoms`` the copies' indices among the file's atoms.
    ``positions``: (n_atoms, 3) float64 A of every atom of the file.  ``chain_starts``:
    (n_residues,) bool, the file's residues that begin a chain for OpenMM (the first, one after a
    TER record, one whose chain identifier differs from the residue before).
    """

    text: str
    kept: np.ndarray
    groups: tuple
    positions: np.ndarray
    chain_starts: np.ndarray

    @property
    def n_atoms(self) -> int:
        return len(self.positions)

    @property
    def n_copies(self) -> int:
        return sum(len(g.atoms) for g in self.groups)


def _conect_serials(lines) -> set:
    serials = set()
    for ln in lines:
        if ln.startswith("CONECT"):
            body = ln.rstrip("\r\n")
            serials.update(body[k:k + 5].strip() for k in range(6, min(len(body), 31), 5))
    serials.discard("")
    return serials


#: Largest molecule taken out as a copy (atoms): waters have 3 to 5, ions 1.
MAX_COPY_ATOMS = 8


def _kinds(cols, starts, ends, lines):
    """Residues grouped by kind: a dict (resname, atom names, elements) -> residue indices, for
    the single-molecule waters and ions (module docstring)."""
    sizes = ends - starts
    names = cols.resnames[starts]
    unique_names, name_index = np.unique(names, return_inverse=True)
    solvent = np.array([residue_class(nm) in SOLVENT_CLASSES for nm in unique_names], bool)[name_index]
    candidate = solvent & (sizes <= MAX_COPY_ATOMS)
    candidate &= ~np.logical_or.reduceat(cols.altloc, starts)
    linked = _conect_serials(lines)
    if linked:
        candidate &= ~np.logical_or.reduceat(np.isin(cols.serials, list(linked)), starts)
    kinds = {}
    for size in np.unique(sizes[candidate]):
        residues = np.flatnonzero(candidate & (sizes == size))
        atoms = starts[residues][:, None] + np.arange(size)[None, :]
        atom_names, elements = cols.names[atoms], cols.elements[atoms]
        distinct = np.ones(len(residues), bool)   # a residue with a repeated atom name is no copy
        for a in range(size):
            for b in range(a + 1, size):
                distinct &= atom_names[:, a] != atom_names[:, b]
        label = cols.resnames[starts[residues]].astype(object)
        for a in range(size):
            label = label + "|" + atom_names[:, a].astype(object) + "/" + elements[:, a].astype(object)
        label = np.where(distinct, label, None)
        for value in set(label[distinct].tolist()):
            members = residues[label == value]
            if len(members) > 1:
                resname, *fields = value.split("|")
                kinds[(resname, tuple(f.split("/")[0] for f in fields))] = members
    return kinds


def split_repeated(text: str) -> SplitStructure | None:
    """Take the repeated waters and ions out of PDB ``text`` (see the module docstring).

    Parameters
    ----------
    text : str
        PDB text after the record checks and the alternate-location choice.

    Returns
    -------
    SplitStructure or None
        None when the file does not fit: several models, coordinates that are not plain decimals,
        residue numbers OpenMM would have to invent, or fewer than :data:`MIN_COPIES` copies.
    """
    lines = text.splitlines(keepends=True)
    records = record_names(lines)
    if np.count_nonzero(records == "MODEL ") > 1:
        return None
    cols = text_atom_columns(text)  # read once for the record checks and the split
    n = len(cols.line)
    if n == 0 or cols.positions is None:
        return None
    # residues as OpenMM forms them: a new one where name, chain, number or insertion code change,
    # or after a TER record
    ter = np.zeros(len(lines) + 1, np.intp)
    is_ter = np.char.startswith(records, "TER")
    ter[1:] = np.cumsum(is_ter)
    key = np.char.add(np.char.add(cols.resnames, "|" + cols.chains), np.char.add("|" + cols.resseq, "|" + cols.icodes))
    new = np.ones(n, bool)
    new[1:] = (key[1:] != key[:-1]) | (ter[cols.line[1:]] != ter[cols.line[:-1]])
    starts = np.flatnonzero(new)
    ends = np.append(starts[1:], n)
    chain_starts = np.ones(len(starts), bool)
    previous, current = starts[1:] - 1, starts[1:]
    chain_starts[1:] = (cols.chains[current] != cols.chains[previous]) | \
        (ter[cols.line[current]] != ter[cols.line[previous]])
    kinds = _kinds(cols, starts, ends, [lines[k] for k in np.flatnonzero(records == "CONECT")])
    if sum(len(v) - 1 for v in kinds.values()) < MIN_COPIES:
        return None
    copy_residues = np.concatenate([v[1:] for v in kinds.values()])
    texts = np.unique(cols.resseq[starts[copy_residues]])
    numbers = {t: _residue_number(t) for t in texts.tolist()}
    if None in numbers.values():
        return None
    is_copy_residue = np.zeros(len(starts), bool)
    is_copy_residue[copy_residues] = True
    is_copy = np.repeat(is_copy_residue, ends - starts)
    kept = np.flatnonzero(~is_copy)
    kept_position = np.full(n, -1, np.intp)
    kept_position[kept] = np.arange(len(kept))
    raw_chain = np.array([lines[k][21:22] or " " for k in cols.line[starts[copy_residues]]], dtype=object)
    chain_of = dict(zip(copy_residues.tolist(), raw_chain))
    groups = []
    for residues in kinds.values():
        rep = residues[0]
        copies = residues[1:]
        atoms = starts[copies][:, None] + np.arange(ends[rep] - starts[rep])[None, :]
        groups.append(CopyGroup(representative=kept_position[starts[rep]:ends[rep]], atoms=atoms,
                                chain=np.array([chain_of[c] for c in copies.tolist()], dtype=object),
                                resid=np.array([numbers[t] for t in cols.resseq[starts[copies]].tolist()],
                                               np.int64)))
    # the text OpenMM reads: every line but the copies' records (and a TER or ANISOU right after one)
    atom_at = np.full(len(lines), -1, np.intp)
    atom_at[cols.line] = np.arange(n)
    last_atom = np.maximum.accumulate(np.where(atom_at >= 0, atom_at, -1))
    after_copy = (last_atom >= 0) & is_copy[np.maximum(last_atom, 0)]
    keep = ~((is_ter | (records == "ANISOU")) & after_copy)
    keep[cols.line] = ~is_copy
    out = "".join([lines[k] for k in np.flatnonzero(keep)])
    return SplitStructure(out, kept, tuple(groups), cols.positions, chain_starts)


def full_topology(reduced, sources, groups, chain_starts):
    """The OpenMM topology of the whole file, from the reduced one and the copies.

    Parameters
    ----------
    reduced : openmm.app.Topology
        The topology OpenMM built from :attr:`SplitStructure.text`.
    sources : (n_residues, 2) intp
        Where each final residue comes from (:func:`energy.model.copies.with_copies`).
    groups : sequence of CopyGroup
        The copies, ``representative`` in ``reduced``'s atom order.
    chain_starts : (n_residues,) bool
        The residues that begin a chain in the file (:attr:`SplitStructure.chain_starts`).

    Returns
    -------
    openmm.app.Topology
        Every residue in the file's order, chains as OpenMM forms them from the whole file (and
        split at the chain breaks the preparation found), the representatives' bonds repeated.
    """
    from openmm import app
    top = app.Topology()
    top.setPeriodicBoxVectors(reduced.getPeriodicBoxVectors())
    residues = list(reduced.residues())
    atoms = list(reduced.atoms())
    rep_residues = [residues[atoms[int(g.representative[0])].residue.index] for g in groups]
    rep_bonds = [[] for _ in groups]
    group_of_residue = {r.index: g for g, r in enumerate(rep_residues)}
    bonds = [(a.index, b.index, a.residue.index) for a, b in reduced.bonds()]
    for a, b, r in bonds:
        if r in group_of_residue:
            rep_bonds[group_of_residue[r]].append((a, b))
    final_atom = {}
    chain, previous = None, None
    for k, (g, j) in enumerate(sources):
        template = residues[j] if g < 0 else rep_residues[g]
        chain_id = template.chain.id if g < 0 else str(groups[g].chain[j])
        split_here = g < 0 and previous is not None and previous.chain is not template.chain
        if chain is None or chain_starts[k] or split_here:
            chain = top.addChain(chain_id)
        previous = template if g < 0 else None
        number = template.id if g < 0 else str(int(groups[g].resid[j]))
        residue = top.addResidue(template.name, chain, number, template.insertionCode)
        made = [top.addAtom(atom.name, atom.element, residue) for atom in template.atoms()]
        if g < 0:
            final_atom.update(zip((a.index for a in template.atoms()), made))
        else:
            first = next(iter(template.atoms())).index
            for a, b in rep_bonds[g]:
                top.addBond(made[a - first], made[b - first])
    for a, b, _ in bonds:
        top.addBond(final_atom[a], final_atom[b])
    return top


__all__ = ["MIN_COPIES", "SplitStructure", "full_topology", "split_repeated"]
