"""The steps of preparation that change atoms: PDBFixer's repair, hydrogens, relaxation.

Everything here runs on :func:`deterministic_platform` with fixed seeds, so the same input and
options give the same atoms bit for bit (docs/physics.md, "Deposited structures").  Positions go
in and out as (n_atoms, 3) float64 arrays in A; OpenMM's units stay inside.
"""
from __future__ import annotations

import io
from contextlib import contextmanager

import numpy as np

from energy.errors import UnknownResidueError
from energy.io.residue_messages import VIRTUAL_SITE_NAMES, is_four_site_water, residue_label

#: Seed of PDBFixer's relaxation of rebuilt atoms and of Modeller's hydrogen start positions (any
#: fixed value makes them reproducible).
REPAIR_SEED = 2026


def _one_line(exc: Exception) -> str:
    text = str(exc).split("For more information")[0].strip()
    return " ".join(text.split())


def modeller_of(topology, positions_angstrom):
    """An OpenMM ``Modeller`` of ``topology`` at ``positions_angstrom``.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions_angstrom : (n_atoms, 3) float64
        Coordinates, A (converted to nm for OpenMM).

    Returns
    -------
    openmm.app.Modeller
    """
    from openmm import app, unit
    return app.Modeller(topology, positions_angstrom * 0.1 * unit.nanometer)


def positions_of(modeller) -> np.ndarray:
    """The positions of ``modeller`` in A.

    Parameters
    ----------
    modeller : openmm.app.Modeller

    Returns
    -------
    (n_atoms, 3) float64
        Coordinates, A.
    """
    from openmm import unit
    return np.array(modeller.positions.value_in_unit(unit.angstrom), dtype=np.float64)


@contextmanager
def deterministic_platform():
    """An OpenMM platform whose results repeat bit for bit.

    The CPU platform on one thread with ``DeterministicForces`` (its defaults restored afterwards),
    or Reference where there is no CPU platform.  Both of OpenMM's own preparation steps (PDBFixer's
    relaxation of rebuilt atoms, Modeller's hydrogen placement) run on it.

    Yields
    ------
    openmm.Platform
        The platform, for the body of the ``with`` block.
    """
    import openmm
    try:
        platform = openmm.Platform.getPlatformByName("CPU")
    except Exception:  # an OpenMM build without the CPU platform
        yield openmm.Platform.getPlatformByName("Reference")
        return
    wanted = {"Threads": "1", "DeterministicForces": "true"}
    before = {k: platform.getPropertyDefaultValue(k) for k in wanted}
    for k, v in wanted.items():
        platform.setPropertyDefaultValue(k, v)
    try:
        yield platform
    finally:
        for k, v in before.items():
            platform.setPropertyDefaultValue(k, v)


def remove_virtual_sites(topology, positions, record):
    """Drop the massless extra site of every 4-site water.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A.
    record : PreparationRecord
        Gets the labels of the waters (``virtual_sites_removed``).

    Returns
    -------
    (openmm.app.Topology, (n_atoms', 3) float64)
        Topology and positions (A) without the sites; the inputs if there are no 4-site waters.
    """
    waters = [r for r in topology.residues() if is_four_site_water(r)]
    if not waters:
        return topology, positions
    sites = [a for r in waters for a in r.atoms()
             if a.element is None or a.name.upper() in VIRTUAL_SITE_NAMES]
    record.virtual_sites_removed = [residue_label(r) for r in waters]
    m = modeller_of(topology, positions)
    m.delete(sites)
    return m.topology, positions_of(m)


def repair(topology, positions, text: str, pdbx: bool, record, force_field):
    """PDBFixer: modified residues -> parents, missing heavy atoms and terminal groups rebuilt.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A.
    text : str
        The structure file's text.
    pdbx : bool
        ``text`` is PDBx/mmCIF (else PDB).
    record : PreparationRecord
        Gets the residues replaced, atoms renamed and atoms added.
    force_field : openmm.app.ForceField
        Its templates decide which hydrogens of a replaced residue are kept.

    Returns
    -------
    (openmm.app.Topology, (n_atoms', 3) float64)
        The repaired topology and positions, A.
    """
    from pdbfixer import PDBFixer
    with deterministic_platform() as platform:
        fixer = (PDBFixer(pdbxfile=io.StringIO(text), platform=platform) if pdbx else
                 PDBFixer(pdbfile=io.StringIO(text), platform=platform))
        return _repair_with(fixer, topology, positions, record, force_field)


def _replace_by_parents(fixer, force_field) -> list:
    """Rename each residue of ``fixer.nonstandardResidues`` to its parent and delete the atoms the
    parent lacks: heavy atoms not in PDBFixer's parent template, hydrogens not in the force
    field's template of the parent.  Where exactly one extra heavy atom and one missing parent
    atom share an element (SME's S for MET's SD), the atom is renamed rather than rebuilt.
    PDBFixer's own replacement deletes every hydrogen; keeping the deposited atoms keeps their
    measured positions (and the models of an ensemble usable).

    Returns the renames, ``(chain, number, insertion code, old name, new name)``.
    """
    from openmm import app
    from openmm.app.element import hydrogen
    delete, renames = [], []
    for residue, parent in fixer.nonstandardResidues:
        template_atoms = list(fixer._getTemplate(parent).topology.atoms())
        heavy = {a.name for a in template_atoms}
        template = force_field._templates.get(parent)
        hydrogens = {a.name for a in template.atoms} if template is not None else set()
        residue.name = parent
        atoms = list(residue.atoms())
        present = {a.name for a in atoms}
        for element in {a.element for a in atoms if a.element not in (None, hydrogen)}:
            extra = [a for a in atoms if a.element == element and a.name not in heavy]
            missing = [t for t in template_atoms if t.element == element and t.name not in present]
            if len(extra) == 1 and len(missing) == 1:
                r = residue
                renames.append((str(r.chain.id), str(r.id), str(getattr(r, "insertionCode", "") or ""),
                                extra[0].name, missing[0].name))
                extra[0].name = missing[0].name
        for atom in atoms:
            keep = atom.name in hydrogens if atom.element in (None, hydrogen) else atom.name in heavy
            if not keep:
                delete.append(atom)
    if delete:
        modeller = app.Modeller(fixer.topology, fixer.positions)
        modeller.delete(delete)
        fixer.topology, fixer.positions = modeller.topology, modeller.positions
    return renames


def _repair_with(fixer, topology, positions, record, force_field):
    from openmm import unit
    # Never reach for the network: no definitions beyond the templates PDBFixer ships.
    for r in topology.residues():
        fixer._ccdCache[r.name.upper()] = None
    fixer.topology = topology
    fixer.positions = positions * 0.1 * unit.nanometer
    fixer.missingResidues = {}  # gaps stay gaps: no loops are modelled
    fixer.findNonstandardResidues()
    record.residues_replaced = [{"residue": residue_label(r), "by": by} for r, by in fixer.nonstandardResidues]
    record.renamed_atoms = _replace_by_parents(fixer, force_field)
    fixer.findMissingAtoms()
    added = {}
    for r, atoms in fixer.missingAtoms.items():
        added.setdefault(r.index, [residue_label(r), []])[1].extend(a.name for a in atoms)
    for r, names in fixer.missingTerminals.items():
        added.setdefault(r.index, [residue_label(r), []])[1].extend(names)
    record.atoms_added = [{"residue": label, "atoms": names} for _, (label, names) in sorted(added.items())]
    fixer.addMissingAtoms(seed=REPAIR_SEED)
    positions = np.array(fixer.positions.value_in_unit(unit.angstrom), dtype=np.float64)
    terminal = {(str(r.chain.id), str(r.id), str(getattr(r, "insertionCode", "") or ""))
                for r in fixer.missingTerminals}
    place_carboxylate_oxygens(fixer.topology, positions, terminal)
    return fixer.topology, positions


#: C-terminal C-O bond length, A (carboxylate, common practice).
CARBOXYLATE_C_O_ANGSTROM = 1.25


def place_carboxylate_oxygens(topology, positions, residues) -> None:
    """Put each rebuilt OXT of ``residues`` where a carboxylate's second oxygen is.

    In the CA-C-O plane, 1.25 A from C, bisecting the outside of the CA-C-O angle (sp2 carbon,
    about 120 degrees to both).  PDBFixer's own placement left OXT within 0.8 A of CA on deposited
    entries (e.g. 1A28's A:LYS932).

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A; change in place.
    residues : set of (str, str, str)
        ``(chain, number, icode)`` keys of the residues whose OXT was rebuilt.
    """
    for residue in topology.residues():
        key = (str(residue.chain.id), str(residue.id), str(getattr(residue, "insertionCode", "") or ""))
        if key not in residues:
            continue
        atoms = {a.name: a.index for a in residue.atoms()}
        if not {"CA", "C", "O", "OXT"} <= set(atoms):
            continue
        c = positions[atoms["C"]]
        to_o = positions[atoms["O"]] - c
        to_ca = positions[atoms["CA"]] - c
        direction = -(to_o / np.linalg.norm(to_o) + to_ca / np.linalg.norm(to_ca))
        positions[atoms["OXT"]] = c + CARBOXYLATE_C_O_ANGSTROM * direction / np.linalg.norm(direction)


def modified_parents(text: str = "") -> dict:
    """Modified residue -> parent residue that ``--repair`` substitutes.

    PDBFixer's table, and the ``MODRES`` records of PDB ``text`` (residue name in columns 13-15,
    parent in 25-27).

    Parameters
    ----------
    text : str
        PDB text (may be empty).

    Returns
    -------
    dict of str to str
        Residue name -> parent residue name.
    """
    from pdbfixer.pdbfixer import substitutions
    parents = dict(substitutions)
    for line in text.splitlines():
        if line.startswith("MODRES") and len(line) >= 27 and line[24:27].strip():
            parents.setdefault(line[12:15].strip(), line[24:27].strip())
    return parents


def add_hydrogens(topology, positions, force_field, ph: float, record):
    """Missing hydrogens at ``ph``, reproducible bit for bit.

    OpenMM's Modeller starts every new hydrogen from a position jittered with Python's global
    ``random`` and then minimises them on the default (multi-threaded) platform: two runs differed
    by several kcal/mol.  Here the generator is seeded (and restored afterwards) and the
    minimisation runs on :func:`deterministic_platform`.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A.
    force_field : openmm.app.ForceField
    ph : float
        pH that decides protonation states.
    record : PreparationRecord
        Gets the count of hydrogens added.

    Returns
    -------
    (openmm.app.Topology, (n_atoms', 3) float64)
        Topology and positions (A) with the hydrogens.

    Raises
    ------
    UnknownResidueError
        Hydrogens could not be added (naming the residue and the options that help).
    """
    import random
    m = modeller_of(topology, positions)
    before = topology.getNumAtoms()
    state = random.getstate()
    random.seed(REPAIR_SEED)
    try:
        with deterministic_platform() as platform:
            m.addHydrogens(force_field, pH=ph, platform=platform)
    except Exception as exc:
        raise UnknownResidueError(f"could not add hydrogens: {_hydrogen_failure(exc, topology)}") from None
    finally:
        random.setstate(state)
    record.hydrogens_added = m.topology.getNumAtoms() - before
    return m.topology, positions_of(m)


def _hydrogen_failure(exc, topology) -> str:
    import re
    text = _one_line(exc)
    found = re.search(r"residue (\d+) \((\w+)\)", text)
    if found:
        residues = list(topology.residues())
        k = int(found.group(1))
        if 0 <= k < len(residues):
            label = residue_label(residues[k])
            return (f"{label} does not match its template (missing heavy atoms or an unknown "
                    "residue); --repair rebuilds missing heavy atoms, --forcefield-file adds "
                    "templates, --drop-unmatched leaves such residues out")
    return text


#: Relaxation of atoms that are not the file's (rebuilt heavy atoms, added hydrogens): energy
#: tolerance (kJ/mol/nm, OpenMM's unit) and iteration cap of OpenMM's LocalEnergyMinimizer.
RELAX_TOLERANCE, RELAX_ITERATIONS = 10.0, 500


def relax_added_atoms(topology, positions, force_field, from_file, record):
    """Minimise the energy of the atoms not in the file with the force field itself.

    Every deposited atom is held fixed (mass 0): PDBFixer relaxes rebuilt atoms with a soft
    potential only, which left rebuilt side chains 1.6 A from a neighbour (1A28's A:ASN705 ND2).
    Nonbonded cutoff 1 nm (as OpenMM's Modeller relaxes hydrogens), on :func:`deterministic_platform`.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A.
    force_field : openmm.app.ForceField
    from_file : sequence of bool
        Per atom: True for an atom of the file (held fixed).
    record : PreparationRecord
        Gets the count of atoms relaxed.

    Returns
    -------
    (n_atoms, 3) float64
        Positions, A: the file's atoms exactly as given, the others minimised.
    """
    import openmm
    from openmm import app, unit
    moving = [k for k, atom in enumerate(topology.atoms()) if not from_file[k]]
    if not moving:
        return positions
    system = force_field.createSystem(topology, nonbondedMethod=app.CutoffNonPeriodic,
                                      nonbondedCutoff=1.0 * unit.nanometer, constraints=None,
                                      rigidWater=False)
    for k in range(system.getNumParticles()):
        if from_file[k]:
            system.setParticleMass(k, 0.0)
    with deterministic_platform() as platform:
        context = openmm.Context(system, openmm.VerletIntegrator(0.001), platform)
        context.setPositions(positions * 0.1 * unit.nanometer)
        openmm.LocalEnergyMinimizer.minimize(context, RELAX_TOLERANCE, RELAX_ITERATIONS)
        relaxed = context.getState(getPositions=True).getPositions(asNumpy=True).value_in_unit(unit.angstrom)
    record.atoms_relaxed = len(moving)
    out = np.array(relaxed, dtype=np.float64)
    out[np.asarray(from_file)] = positions[np.asarray(from_file)]  # the file's atoms, exactly
    return out
