"""From a loaded system and two selections to an alanine scan: which residues, which method.

:func:`scan_loaded` picks the interface (:func:`energy.analysis.hotspots.interface_residues`),
leaves out what has nothing to truncate (Gly, Ala) or is not protein, flags Pro and
disulfide-bonded Cys, builds the alanine models (:mod:`energy.analysis.alanine_models`) and runs
:func:`energy.analysis.hotspots.alanine_scan`.  On the built-in route (an OpenMM topology and force
field) residues get the force field's ALA template; on the PSF route, for a Cys in a
disulfide and for an N-terminal Pro, the side chain is switched off.
"""
from __future__ import annotations

import numpy as np

from energy.analysis.alanine_models import parameterised_truncation, switched_off_model, template_models
from energy.analysis.hotspots import (
    DEFAULT_INTERFACE_ANGSTROM,
    NOT_SCANNED,
    HotspotScan,
    alanine_scan,
    check_sides,
    interface_residues,
    residue_flag,
)
from energy.errors import SelectionError
from energy.io.selection import select_atoms, universe_for


def scan_residues(system, frame, atoms_a, atoms_b, interface_angstrom=DEFAULT_INTERFACE_ANGSTROM):
    """The interface residues to scan, those left out (with why), and the flags.

    Parameters
    ----------
    system : MolecularSystem
        The wild type.
    frame : Frame
        Its coordinates, A.
    atoms_a, atoms_b : (n_a,), (n_b,) intp
        The two sides (disjoint, whole residues).
    interface_angstrom : float
        Any-atom contact distance defining the interface, A.

    Returns
    -------
    scanned : list of int
        Residue indices to truncate, ascending.
    skipped : list of (int, str)
        Interface residues left out and the reason.
    flags : dict
        Residue index -> ``"proline"`` or ``"disulfide"``.
    """
    side_a, side_b = interface_residues(system, frame, atoms_a, atoms_b, interface_angstrom)
    classes = system.residue_classes
    bonds = system.bonds.atoms
    scanned, skipped, flags = [], [], {}
    for r in np.concatenate([side_a, side_b]):
        r = int(r)
        name = str(system.residues.resname[r])
        if classes[r] != "protein":
            skipped.append((r, f"not an amino acid ({classes[r]})"))
        elif name in NOT_SCANNED:
            skipped.append((r, NOT_SCANNED[name]))
        else:
            scanned.append(r)
            flag = residue_flag(system, r, bonds)
            if flag:
                flags[r] = flag
    return sorted(scanned), skipped, flags


def _is_chain_start(system, residue: int) -> bool:
    """Whether the residue's N bonds to no other residue (an N-terminal Pro keeps its switched-off
    side chain: its alanine would need a rebuilt NH3+ group)."""
    atoms = np.flatnonzero(system.resindex == residue)
    n = atoms[system.names[atoms] == "N"]
    bonds = system.bonds.atoms
    if not len(n):
        return True
    partners = np.concatenate([bonds[bonds[:, 0] == n[0], 1], bonds[bonds[:, 1] == n[0], 0]])
    return not (system.resindex[partners] != residue).any()


def scan_loaded(loaded, settings, select_a: str, select_b: str,
                interface_angstrom: float = DEFAULT_INTERFACE_ANGSTROM, force_field=None,
                progress=None) -> HotspotScan:
    """The alanine scan of a loaded system's A-B interface.

    Parameters
    ----------
    loaded : energy.io.loaders.LoadedSystem
        The wild type as loaded (its ``prepared_topology`` marks the built-in route).
    settings : EnergySettings or None
        Settings of the evaluation (None: the defaults).
    select_a, select_b : str
        MDAnalysis selection strings of the two partners.
    interface_angstrom : float, optional
        Any-atom contact distance defining the interface, A (default 5).
    force_field : openmm.app.ForceField or None, optional
        Built-in route: the force field of the wild type (None: the default Amber 14 set).
    progress : callable or None, optional
        ``progress(done, total)`` per residue; returning False cancels.

    Returns
    -------
    HotspotScan
        Ranked by total dE (kcal/mol).

    Raises
    ------
    SelectionError
        Invalid, overlapping or residue-splitting selections, or no interface.
    """
    system, frame = loaded.system, loaded.frame
    u = universe_for(system, frame)
    atoms_a = select_atoms(system, frame, select_a, u)
    atoms_b = select_atoms(system, frame, select_b, u)
    check_sides(system, atoms_a, atoms_b)
    scanned, skipped, flags = scan_residues(system, frame, atoms_a, atoms_b, interface_angstrom)
    if not scanned:
        raise SelectionError(f"no residue of A lies within {interface_angstrom:g} A of B (or none "
                             "can be truncated): no interface to scan")
    switched = [r for r in scanned if flags.get(r) == "disulfide" or loaded.prepared_topology is None
                or (flags.get(r) == "proline" and _is_chain_start(system, r))]
    templated = [r for r in scanned if r not in set(switched)]
    models, model_born = {}, None
    if templated:
        if force_field is None:
            from energy.io.builtin import build_force_field
            force_field = build_force_field()
        truncation = parameterised_truncation(loaded.prepared_topology, frame.positions, templated, force_field)
        models.update(template_models(loaded.prepared_topology, frame.positions, templated, force_field,
                                      truncation))
        if settings is not None and settings.implicit_solvent is not None:
            from energy.analysis.hotspot_solvation import template_born_parameters
            model_born = template_born_parameters(truncation, templated, settings.implicit_solvent)
    for r in switched:
        models[r] = switched_off_model(system, frame.positions, r, system.bonds.atoms)
    return alanine_scan(system, frame, settings, atoms_a, atoms_b, models, skipped, flags,
                        select_a, select_b, interface_angstrom, progress, model_born)
