"""The waters and ions of a PDB, read by columns and parameterised once per kind.

A simulation snapshot is mostly solvent: 98,729 atoms of the benchmark box are 582 atoms of
protein and 32,715 waters.  Handing all of it to OpenMM's PDB reader and ``createSystem`` costs
seconds per ten thousand waters, and every water gets the same parameters.  So the built-in
route (:mod:`energy.io.builtin`) splits the text first (:func:`split_repeated`):

* ATOM/HETATM records are read by columns with numpy (:class:`AtomColumns`): names, residue
  fields, coordinates;
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

from energy.model.copies import CopyGroup
from energy.model.residue_classes import SOLVENT_CLASSES, residue_class

#: Below this many copies in all, splitting the text saves nothing worth its bookkeeping.
MIN_COPIES = 50
_WIDTH = 80


@dataclass(frozen=True)
class AtomColumns:
    """ATOM/HETATM records of PDB text as columns (all arrays have one row per record).

    ``line``: (n,) intp line index in the text.  ``names``, ``resnames`` (4 characters, as
    OpenMM reads them), ``chains``, ``resseq``, ``icodes``, ``elements``, ``serials``: (n,) str,
    stripped.  ``altloc``: (n,) bool, an alternate-location label is set.  ``positions``: (n, 3)
    float64 A, or None when a coordinate field is not a plain decimal number (the strict checks
    of :mod:`energy.io.structure_text` name it).
    """

    line: np.ndarray
    names: np.ndarray
    resnames: np.ndarray
    chains: np.ndarray
    resseq: np.ndarray
    icodes: np.ndarray
    elements: np.ndarray
    serials: np.ndarray
    altloc: np.ndarray
    positions: np.ndarray | None


def _text_column(matrix, lo: int, hi: int) -> np.ndarray:
    block = np.ascontiguousarray(matrix[:, lo:hi])
    return np.char.strip(block.view(f"S{hi - lo}").ravel().astype(f"U{hi - lo}"))


_DIGIT = np.zeros(256, bool)
_DIGIT[ord("0"):ord("9") + 1] = True


def _plain_decimals(field: np.ndarray) -> np.ndarray:
    """(n,) bool: each row of ``field`` (n, w) uint8 is spaces, then an optional sign, then digits
    with at most one decimal point and at least one digit, and nothing after."""
    space = field == ord(" ")
    body = ~space
    has_body = body.any(axis=1)
    start = np.argmax(body, axis=1)
    columns = np.arange(field.shape[1])[None, :]
    after_start = columns >= start[:, None]
    leading_ok = ~(body & ~after_start).any(axis=1)               # only spaces before the number
    no_gap = ~(space & after_start).any(axis=1)                    # no space inside or after it
    sign = (field == ord("-")) | (field == ord("+"))
    sign_ok = ~(sign & (columns != start[:, None])).any(axis=1)    # a sign only in front
    digit = _DIGIT[field]
    dot = field == ord(".")
    allowed = ~(body & ~(digit | dot | sign)).any(axis=1)
    return has_body & leading_ok & no_gap & sign_ok & allowed & (dot.sum(axis=1) <= 1) & digit.any(axis=1)


def atom_columns(lines: list[str]) -> AtomColumns:
    """Read the ATOM/HETATM records among ``lines`` by their fixed columns.

    Parameters
    ----------
    lines : list of str
        PDB text split into lines.

    Returns
    -------
    AtomColumns
    """
    index = np.array([k for k, ln in enumerate(lines) if ln.startswith(("ATOM  ", "HETATM"))], np.intp)
    body = "".join(lines[k].rstrip("\r\n")[:_WIDTH].ljust(_WIDTH) for k in index)
    matrix = np.frombuffer(body.encode("latin-1", "replace"), np.uint8).reshape(len(index), _WIDTH)
    fields = matrix[:, 30:54].reshape(len(index), 3, 8)
    positions = None
    if all(_plain_decimals(fields[:, axis]).all() for axis in range(3)):
        positions = np.ascontiguousarray(fields).view("S8").reshape(-1, 3).astype(np.float64)
    resnames = _text_column(matrix, 17, 21)
    return AtomColumns(line=index, names=_text_column(matrix, 12, 16), resnames=resnames,
                       chains=_text_column(matrix, 21, 22), resseq=_text_column(matrix, 22, 26),
                       icodes=_text_column(matrix, 26, 27), elements=_text_column(matrix, 76, 78),
                       serials=_text_column(matrix, 6, 11), altloc=matrix[:, 16] != ord(" "),
                       positions=positions)


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
    if sum(ln.startswith("MODEL ") for ln in lines) > 1:
        return None
    cols = atom_columns(lines)
    n = len(cols.line)
    if n == 0 or cols.positions is None:
        return None
    # residues as OpenMM forms them: a new one where name, chain, number or insertion code change,
    # or after a TER record
    ter = np.zeros(len(lines) + 1, np.intp)
    ter[1:] = np.cumsum([ln.startswith("TER") for ln in lines])
    key = np.char.add(np.char.add(cols.resnames, "|" + cols.chains), np.char.add("|" + cols.resseq, "|" + cols.icodes))
    new = np.ones(n, bool)
    new[1:] = (key[1:] != key[:-1]) | (ter[cols.line[1:]] != ter[cols.line[:-1]])
    starts = np.flatnonzero(new)
    ends = np.append(starts[1:], n)
    chain_starts = np.ones(len(starts), bool)
    previous, current = starts[1:] - 1, starts[1:]
    chain_starts[1:] = (cols.chains[current] != cols.chains[previous]) | \
        (ter[cols.line[current]] != ter[cols.line[previous]])
    class_of: dict = {}
    linked = _conect_serials(lines)
    kinds: dict = {}
    for r, (a, b) in enumerate(zip(starts, ends)):
        name = cols.resnames[a]
        cls = class_of.get(name)
        if cls is None:
            cls = class_of[name] = residue_class(name)
        if cls not in SOLVENT_CLASSES or cols.altloc[a:b].any():
            continue
        names = tuple(cols.names[a:b])
        if len(set(names)) != len(names) or (linked and linked.intersection(cols.serials[a:b])):
            continue
        kinds.setdefault((name, names, tuple(cols.elements[a:b])), []).append(r)
    kinds = {k: v for k, v in kinds.items() if len(v) > 1}
    if sum(len(v) - 1 for v in kinds.values()) < MIN_COPIES:
        return None
    copy_residues = np.concatenate([np.array(v[1:], np.intp) for v in kinds.values()])
    numbers = {}
    for r in copy_residues:
        text_number = cols.resseq[starts[r]]
        if text_number not in numbers:
            numbers[text_number] = _residue_number(text_number)
        if numbers[text_number] is None:
            return None
    is_copy = np.zeros(n, bool)
    for r in copy_residues:
        is_copy[starts[r]:ends[r]] = True
    kept = np.flatnonzero(~is_copy)
    raw_chain = np.array([lines[k][21:22] or " " for k in cols.line], dtype=object)
    kept_position = np.full(n, -1, np.intp)
    kept_position[kept] = np.arange(len(kept))
    groups = []
    for residues in kinds.values():
        rep = residues[0]
        k = ends[rep] - starts[rep]
        copies = np.array(residues[1:], np.intp)
        atoms = starts[copies][:, None] + np.arange(k)[None, :]
        groups.append(CopyGroup(representative=kept_position[starts[rep]:ends[rep]], atoms=atoms,
                                chain=raw_chain[starts[copies]],
                                resid=np.array([numbers[cols.resseq[starts[c]]] for c in copies], np.int64)))
    # the text OpenMM reads: every line but the copies' records (and a TER right after a copy)
    drop = np.zeros(len(lines), bool)
    drop[cols.line[is_copy]] = True
    last_atom_is_copy = False
    atom_at = np.full(len(lines), -1, np.intp)
    atom_at[cols.line] = np.arange(n)
    out = []
    for k, ln in enumerate(lines):
        a = atom_at[k]
        if a >= 0:
            last_atom_is_copy = bool(is_copy[a])
            if not drop[k]:
                out.append(ln)
        elif ln.startswith("TER") and last_atom_is_copy:
            continue
        elif not (ln.startswith("ANISOU") and last_atom_is_copy):
            out.append(ln)
    return SplitStructure("".join(out), kept, tuple(groups), cols.positions, chain_starts)


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


__all__ = ["AtomColumns", "MIN_COPIES", "SplitStructure", "atom_columns", "full_topology", "split_repeated"]
