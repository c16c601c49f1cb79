"""Atom selections in MDAnalysis syntax over a :class:`MolecularSystem`.

The system's own arrays are turned into an in-memory MDAnalysis ``Universe`` (names, types,
charges, residue names and numbers, segments = chains) so that every selection keyword that does
not need bonds works: ``segid A``, ``chainID B``, ``resname LYS and name NZ``, ``resid 10-20``,
``around 5 segid B`` (positions from the frame).
"""
from __future__ import annotations

import numpy as np

from energy.errors import SelectionError


def universe_for(system, frame):
    """An in-memory MDAnalysis Universe of the system's atoms at the frame's positions.

    Names, types, elements, charges, residue names, numbers and insertion codes; one segment per
    chain (``segid`` and ``chainID`` both the chain); the frame's cell as its dimensions.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Positions (A) and unit cell.

    Returns
    -------
    MDAnalysis.Universe
        Atoms in the system's order.
    """
    import MDAnalysis as mda
    chains = np.asarray(system.residues.chain, dtype=object)
    seg_names, res_seg = np.unique(chains, return_inverse=True)
    u = mda.Universe.empty(system.n_atoms, n_residues=system.n_residues, n_segments=len(seg_names),
                           atom_resindex=system.resindex, residue_segindex=res_seg.reshape(-1),
                           trajectory=True)
    u.add_TopologyAttr("names", list(system.names))
    u.add_TopologyAttr("types", list(system.types))
    u.add_TopologyAttr("elements", list(system.elements))
    u.add_TopologyAttr("charges", np.asarray(system.charges))
    u.add_TopologyAttr("resnames", list(system.residues.resname))
    u.add_TopologyAttr("resids", np.asarray(system.residues.resid))
    u.add_TopologyAttr("icodes", list(system.residues.icode))
    u.add_TopologyAttr("segids", list(seg_names))
    u.add_TopologyAttr("chainIDs", list(chains[system.resindex]))
    u.atoms.positions = frame.positions
    if frame.box is not None:
        u.dimensions = frame.box
    return u


def select_atoms(system, frame, selection: str, universe=None) -> np.ndarray:
    """0-based atom indices selected by ``selection``; raises SelectionError if invalid or empty.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Positions (A) for distance-based keywords.
    selection : str
        MDAnalysis selection string (e.g. ``"segid A"``).
    universe : MDAnalysis.Universe or None, optional
        A universe of this system and frame (:func:`universe_for`); built if None.

    Returns
    -------
    (k,) intp
        Selected atom indices, ascending.

    Raises
    ------
    SelectionError
        If the selection is invalid or matches no atom.
    """
    u = universe if universe is not None else universe_for(system, frame)
    try:
        atoms = u.select_atoms(selection)
    except Exception as exc:  # MDAnalysis raises SelectionError / ValueError / others
        raise SelectionError(f"invalid selection {selection!r}: {exc}") from None
    if len(atoms) == 0:
        raise SelectionError(f"selection {selection!r} matches no atom")
    return atoms.indices.astype(np.intp)
