"""A system with repeated molecules, built from one parameterised copy of each (struct of arrays).

A solvated snapshot holds tens of thousands of identical waters and ions.  The loaders
parameterise the solute with one *representative* of each repeated molecule, and
:func:`with_copies` places every other copy: its atoms take the representative's per-atom
parameters, and every bonded row, exception pair and virtual site of the representative is
repeated on the copy's atoms.  The result is the system the force field gives for the whole
file, atom for atom in the file's order (``tests/test_repeated_molecules.py`` compares the two
routes array by array).
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from energy.model.system import TABLE_SHAPES, MolecularSystem, ResidueTable, TermTable
from energy.model.virtual_sites import VirtualSites

#: The fields of MolecularSystem that :func:`with_copies` places, by how (a new field must be
#: added here; ``tests/test_repeated_molecules.py`` checks the inventory).
PER_ATOM_FIELDS = ("names", "types", "elements", "charges", "lj_type")
OPTIONAL_PER_ATOM_FIELDS = ("segids", "topology_gb_radius", "topology_gb_screen")
REBUILT_FIELDS = ("resindex", "residues", "exception_pairs", "exception_qq", "exception_rmin", "exception_eps",
                  *TABLE_SHAPES, "other_tables", "virtual_sites")
SHARED_FIELDS = ("lj_rmin", "lj_eps", "cmap_maps", "force_field", "source_files", "notes")


class NotSeparateMolecule(ValueError):
    """A representative shares a bonded term or an exception with an atom outside it, so its
    copies cannot be placed independently (the loader then parameterises every atom)."""


@dataclass(frozen=True)
class CopyGroup:
    """The copies of one repeated molecule.

    ``representative``: (k,) intp, the representative's atoms in the parameterised (reduced)
    system, in the molecule's atom order.  ``atoms``: (c, k) intp, each copy's atoms in the final
    system, in the same order.  ``chain`` (c,) str and ``resid`` (c,) int64: each copy's chain and
    residue number as the file gives them (name and insertion code are the representative's).
    """

    representative: np.ndarray
    atoms: np.ndarray
    chain: np.ndarray
    resid: np.ndarray


def _lookup(n_reduced: int, groups) -> tuple[np.ndarray, np.ndarray]:
    group_of = np.full(n_reduced, -1, np.intp)
    local_of = np.full(n_reduced, -1, np.intp)
    for g, group in enumerate(groups):
        group_of[group.representative] = g
        local_of[group.representative] = np.arange(len(group.representative))
    return group_of, local_of


def _repeated_rows(atoms, final_of, group_of, local_of, groups, what):
    """Row indices of ``atoms`` (m, w) mapped to the final system: the reduced rows, then each
    group's rows repeated on its copies; and for every output row the input row it came from."""
    atoms = np.asarray(atoms, np.intp)
    mapped = [final_of[atoms]]
    source = [np.arange(len(atoms))]
    if len(atoms):
        row_groups = group_of[atoms]
        first = row_groups[:, 0]
        if np.any(row_groups != first[:, None]):
            raise NotSeparateMolecule(f"a {what} row joins a repeated molecule to another atom")
        for g, group in enumerate(groups):
            rows = np.flatnonzero(first == g)
            if not len(rows) or not len(group.atoms):
                continue
            local = local_of[atoms[rows]]                      # (m_g, w)
            mapped.append(group.atoms[:, local].reshape(-1, atoms.shape[1]))
            source.append(np.tile(rows, len(group.atoms)))
    return np.concatenate(mapped), np.concatenate(source)


def _table(table: TermTable, final_of, group_of, local_of, groups, what) -> TermTable:
    atoms, source = _repeated_rows(table.atoms, final_of, group_of, local_of, groups, what)
    return TermTable(atoms, {key: col[source] for key, col in table.params.items()})


def _per_atom(values, n, final_of, groups):
    values = np.asarray(values)
    out = np.empty(n, dtype=values.dtype)
    out[final_of] = values
    for group in groups:
        out[group.atoms] = values[group.representative][None, :]
    return out


def _sites(sites, final_of, group_of, local_of, groups):
    if sites is None or not len(sites):
        return sites
    site_atoms, source = _repeated_rows(np.column_stack([sites.site, sites.parents]), final_of, group_of,
                                        local_of, groups, "virtual site")
    return VirtualSites(site_atoms[:, 0], site_atoms[:, 1:], sites.local[source], sites.weights[source],
                        sites.cross[source], sites.x_weights[source], sites.y_weights[source],
                        sites.local_position[source])


def with_copies(system: MolecularSystem, final_of: np.ndarray, groups) -> tuple[MolecularSystem, np.ndarray]:
    """The full system: ``system`` (the solute and one representative per group) plus every copy.

    Parameters
    ----------
    system : MolecularSystem
        The parameterised (reduced) system.
    final_of : (n_reduced,) intp
        Each reduced atom's index in the final system.
    groups : sequence of CopyGroup
        The copies to place; together with ``final_of`` their atoms cover ``0 .. n - 1`` once.

    Returns
    -------
    (MolecularSystem, (n_residues, 2) intp)
        The full system, residues ordered by their first atom, exception pairs sorted; and for each
        of its residues where it comes from: ``(-1, r)`` for residue ``r`` of ``system``, ``(g, j)``
        for copy ``j`` of group ``g``.

    Raises
    ------
    NotSeparateMolecule
        A representative is bonded to (or shares an exception with) an atom outside it.
    ValueError
        The atoms of ``final_of`` and ``groups`` do not cover the final system exactly once.
    """
    final_of = np.asarray(final_of, np.intp)
    groups = [replace(g, representative=np.asarray(g.representative, np.intp), atoms=np.asarray(g.atoms, np.intp))
              for g in groups]
    for g in groups:
        if g.atoms.ndim != 2 or g.atoms.shape[1] != len(g.representative):
            raise ValueError(f"copies of a {len(g.representative)}-atom molecule need (c, "
                             f"{len(g.representative)}) atoms, got shape {g.atoms.shape}")
    n = len(final_of) + sum(g.atoms.size for g in groups)
    seen = np.zeros(n, np.intp)
    np.add.at(seen, final_of, 1)
    for g in groups:
        np.add.at(seen, g.atoms.ravel(), 1)
    if np.any(seen != 1):
        raise ValueError("the reduced atoms and the copies must cover every final atom exactly once")
    group_of, local_of = _lookup(system.n_atoms, groups)

    # residues: the reduced ones and one per copy, ordered by their first atom
    first_reduced = np.full(system.n_residues, n, np.intp)
    np.minimum.at(first_reduced, system.resindex, final_of)
    firsts, sources = [first_reduced], [np.column_stack([np.full(system.n_residues, -1), np.arange(system.n_residues)])]
    chains, resids = [system.residues.chain], [system.residues.resid]
    resnames, icodes = [system.residues.resname], [system.residues.icode]
    for g, group in enumerate(groups):
        c = len(group.atoms)
        rep_residue = int(system.resindex[group.representative[0]])
        firsts.append(group.atoms.min(axis=1))
        sources.append(np.column_stack([np.full(c, g), np.arange(c)]))
        chains.append(np.char.strip(np.asarray(group.chain, str)).astype(object))
        resids.append(np.asarray(group.resid, np.int64))
        resnames.append(np.full(c, system.residues.resname[rep_residue], object))
        icodes.append(np.full(c, system.residues.icode[rep_residue], object))
    order = np.argsort(np.concatenate(firsts), kind="stable")
    rank = np.empty_like(order)
    rank[order] = np.arange(len(order))
    residues = ResidueTable(*(np.concatenate(col)[order] for col in (chains, resids, resnames, icodes)))
    resindex = np.empty(n, np.intp)
    resindex[final_of] = rank[system.resindex]
    offset = system.n_residues
    for group in groups:
        c = len(group.atoms)
        resindex[group.atoms] = rank[offset:offset + c][:, None]
        offset += c

    pairs, source = _repeated_rows(system.exception_pairs, final_of, group_of, local_of, groups, "exception")
    pairs = np.sort(pairs, axis=1)
    sort = np.lexsort((pairs[:, 1], pairs[:, 0]))
    pairs, source = pairs[sort], source[sort]
    tables = {attr: _table(system.table(attr), final_of, group_of, local_of, groups, attr)
              for attr in TABLE_SHAPES}
    others = {attr: _table(t, final_of, group_of, local_of, groups, attr) for attr, t in system.other_tables.items()}
    per_atom = {key: _per_atom(getattr(system, key), n, final_of, groups) for key in PER_ATOM_FIELDS}
    per_atom.update({key: _per_atom(getattr(system, key), n, final_of, groups)
                     for key in OPTIONAL_PER_ATOM_FIELDS if getattr(system, key) is not None})
    full = replace(system, **per_atom, resindex=resindex, residues=residues,
                   exception_pairs=pairs, exception_qq=system.exception_qq[source],
                   exception_rmin=system.exception_rmin[source], exception_eps=system.exception_eps[source],
                   **tables, other_tables=others,
                   virtual_sites=_sites(system.virtual_sites, final_of, group_of, local_of, groups))
    return full, np.concatenate(sources)[order]


__all__ = ["CopyGroup", "NotSeparateMolecule", "with_copies"]
