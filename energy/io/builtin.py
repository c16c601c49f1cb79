"""The built-in force-field route: a PDB or mmCIF alone, parameterised with OpenMM's library.

OpenMM's ``ForceField`` matches residue templates (default: the Amber 14 protein force field,
``amber14-all.xml``, with TIP3P water, ``amber14/tip3p.xml``; ``--forcefield``/``--water`` pick
another bundled one, :mod:`energy.io.forcefields`; plus any ``--forcefield-file``), after the
preparation asked for (:mod:`energy.io.preparation`: chain breaks, repair, hydrogens).  A 4-site
water model gets its virtual sites (OpenMM's ``Modeller.addExtraParticles``).  Residues that
match no template stop the run with one message naming them all
(:mod:`energy.io.residue_messages`).  The resulting ``openmm.System`` is converted into the
engine's own arrays by :func:`energy.io.openmm_system.system_from_openmm`.
"""
from __future__ import annotations

import os

import numpy as np

from energy.errors import MESSAGE_CAP, StructureFileError, UnknownResidueError
from energy.io.coordinate_text import check_coordinate_text
from energy.io.coordinates import plain_file
from energy.io.openmm_system import system_from_openmm
from energy.model.system import Frame

DEFAULT_FORCE_FIELD = ("amber14-all.xml", "amber14/tip3p.xml")


def _clean_openmm_message(exc: Exception) -> str:
    text = str(exc).split("For more information")[0].strip()
    return " ".join(text.split())


def build_force_field(force_field=DEFAULT_FORCE_FIELD, extra_files=()):
    """OpenMM ``ForceField`` of ``force_field`` plus the template files ``extra_files``.

    Parameters
    ----------
    force_field : tuple of str
        OpenMM force-field files (default Amber 14 + TIP3P).
    extra_files : iterable of str
        Paths of further force-field XML files.

    Returns
    -------
    openmm.app.ForceField

    Raises
    ------
    StructureFileError
        An extra file that is missing or not a force-field XML OpenMM can read (with its path).
    """
    from openmm import app
    ff = app.ForceField(*force_field)
    for path in extra_files:
        if not os.path.isfile(path):
            raise StructureFileError(path, "force-field file not found")
        try:
            ff.loadFile(path)
        except Exception as exc:  # OpenMM raises ValueError/ParseError/KeyError on bad XML
            raise StructureFileError(path, f"not a force-field XML file OpenMM can read "
                                     f"({_clean_openmm_message(exc)})") from None
    return ff


def _unmatched_error(path, ff, topology, options, label, unmatched=None, gaps=()):
    from openmm import app

    from energy.io.repair import modified_parents
    from energy.io.residue_messages import unmatched_message
    from energy.io.structure_text import read_structure_text
    unmatched = ff.getUnmatchedResidues(topology) if unmatched is None else unmatched
    has_h = any(a.element is not None and a.element.symbol == "H" for a in topology.atoms())
    app.Modeller._loadStandardHydrogenDefinitions()
    standard = set(app.Modeller._residueHydrogens) | {"HOH"}
    message = unmatched_message(unmatched, has_hydrogens=has_h, add_hydrogens=options.adds_hydrogens,
                                repair=options.repair, standard_names=standard,
                                modified_parents={} if options.repair else
                                modified_parents(read_structure_text(path)),
                                force_field_label=label, gaps=gaps,
                                budget=MESSAGE_CAP - len(f"{path}: "))
    return UnknownResidueError(f"{path}: {message}")


#: Water files of OpenMM's bundled force fields with a virtual site (4-site models).
FOUR_SITE_WATER_FILES = ("opc.xml", "tip4pew.xml", "tip4pfb.xml")


def _with_extra_particles(prepared, ff):
    """The prepared structure with the virtual sites the force field's templates have (the M site
    of 4-site water) added by OpenMM's ``Modeller.addExtraParticles``; positions are recomputed
    from the parents on every frame (energy.model.virtual_sites)."""
    from dataclasses import replace

    from openmm import app, unit
    modeller = app.Modeller(prepared.topology, prepared.positions * unit.angstrom)
    n_before = prepared.topology.getNumAtoms()
    try:
        modeller.addExtraParticles(ff)
    except Exception as exc:  # OpenMM raises ValueError when a residue matches no template
        raise UnknownResidueError(f"the virtual sites of the water model could not be added: "
                                  f"{_clean_openmm_message(exc)}") from None
    if modeller.topology.getNumAtoms() == n_before:
        return prepared
    positions = np.asarray(modeller.positions.value_in_unit(unit.angstrom), np.float64)
    return replace(prepared, topology=modeller.topology, positions=positions, models=None)


def _atom_types(ff, topology):
    try:
        templates = ff.getMatchingTemplates(topology)
    except Exception:
        return None
    types = []
    for res, tmpl in zip(topology.residues(), templates):
        by_name = {a.name: a.type for a in tmpl.atoms}
        types.extend(by_name.get(atom.name, "?") for atom in res.atoms())
    return types


def _box_from_topology(topology):
    vectors = topology.getPeriodicBoxVectors()
    if vectors is None:
        return None
    from openmm import unit
    v = np.array([[c.value_in_unit(unit.angstrom) for c in vec] for vec in vectors])
    lengths = np.linalg.norm(v, axis=1)
    angle = lambda a, b: np.degrees(np.arccos(np.dot(v[a], v[b]) / (lengths[a] * lengths[b])))  # noqa: E731
    return np.array([*lengths, angle(1, 2), angle(0, 2), angle(0, 1)])


def load_builtin(path: str, add_hydrogens: bool = False, force_field=DEFAULT_FORCE_FIELD, ph: float = 7.0,
                 options=None):
    """Read ``path`` (PDB/mmCIF, ``.gz`` too), prepare it and parameterise it.

    See :func:`load_builtin_prepared` for the preparation record and the models.

    Parameters
    ----------
    path : str
        PDB or mmCIF file, optionally gzip-compressed.
    add_hydrogens : bool
        Add missing hydrogens (used only without ``options``).
    force_field : tuple of str
        OpenMM force-field files (default Amber 14 + TIP3P).
    ph : float
        pH for the hydrogens (used only without ``options``).
    options : energy.io.preparation.PreparationOptions or None

    Returns
    -------
    tuple
        ``(MolecularSystem, Frame, openmm Topology, seconds spent reading the file)``.

    Raises
    ------
    StructureFileError, UnknownResidueError
    """
    from energy.io.preparation import PreparationOptions
    options = options or PreparationOptions(add_hydrogens=add_hydrogens, ph=ph)
    system, frame, topology, prepared = load_builtin_prepared(path, options, force_field)
    return system, frame, topology, prepared.read_seconds


def load_builtin_prepared(path: str, options, force_field=DEFAULT_FORCE_FIELD):
    """Read, prepare (:mod:`energy.io.preparation`) and parameterise ``path``.

    Parameters
    ----------
    path : str
        PDB or mmCIF file, optionally gzip-compressed.
    options : energy.io.preparation.PreparationOptions
    force_field : tuple of str
        OpenMM force-field files (default Amber 14 + TIP3P); ``options.forcefield_files`` add to it.

    Returns
    -------
    (MolecularSystem, Frame, openmm.app.Topology, energy.io.preparation.PreparedStructure)

    Raises
    ------
    StructureFileError, UnknownResidueError
    """
    from energy.io.preparation import UnmatchedResidues, prepare_structure, unmatched_residues
    label = " + ".join([*force_field, *(os.path.basename(f) for f in options.forcefield_files)])
    ff = build_force_field(force_field, options.forcefield_files)
    check_coordinate_text(plain_file(path))  # strict numbers and records before OpenMM reads it
    four_site = any(os.path.basename(f) in FOUR_SITE_WATER_FILES for f in force_field)
    for split_solvent in ((False,) if four_site else (True, False)):
        try:
            prepared = prepare_structure(path, options, ff, label, split_solvent=split_solvent)
        except UnmatchedResidues as exc:
            raise _unmatched_error(path, ff, exc.topology, options, label, exc.residues, exc.gaps) from None
        except UnknownResidueError as exc:
            raise UnknownResidueError(f"{path}: {exc}") from None
        if four_site:
            prepared = _with_extra_particles(prepared, ff)
        unmatched = unmatched_residues(prepared.topology, ff)
        if prepared.split is not None and unmatched:
            continue  # read the whole file, so that the message counts every residue
        built = _parameterised(path, prepared, ff, label, options, unmatched)
        if built is not None:
            return built
    raise AssertionError("unreachable: the whole file is always parameterised")


def _parameterised(path, prepared, ff, label, options, unmatched):
    """(system, frame, topology, prepared) of a prepared structure whose ``unmatched`` residues
    (:func:`energy.io.preparation.unmatched_residues`) the caller found, the repeated molecules
    placed back (:func:`energy.model.copies.with_copies`); None when they turn out not to be
    separate molecules (the caller then reads the whole file)."""
    from dataclasses import replace

    from openmm import app

    from energy.io.repeated_molecules import full_topology
    from energy.model.copies import NotSeparateMolecule, with_copies
    topology = prepared.topology
    if unmatched:
        raise _unmatched_error(path, ff, topology, options, label, unmatched, prepared.record.gaps)
    try:
        omm_system = ff.createSystem(topology, nonbondedMethod=app.NoCutoff, constraints=None,
                                     rigidWater=False, removeCMMotion=False)
    except ValueError as exc:
        raise UnknownResidueError(f"{path}: the force field could not parameterise the structure: "
                                  f"{_clean_openmm_message(exc)}") from None
    system = system_from_openmm(omm_system, topology, _atom_types(ff, topology),
                                force_field=label, source_files=(path, *options.forcefield_files))
    box = _box_from_topology(topology)
    split = prepared.split
    if split is None:
        return system, Frame(prepared.positions, box, 0, path), topology, prepared
    if topology.getNumAtoms() != len(split.kept):
        return None
    try:
        system, sources = with_copies(system, split.kept, split.groups)
    except NotSeparateMolecule:
        return None
    whole = replace(prepared, positions=split.positions, models=split.positions[None],
                    topology=_LazyTopology(lambda: full_topology(topology, sources, split.groups, split.chain_starts)))
    return system, Frame(split.positions, box, 0, path), whole.topology, whole


class _LazyTopology:
    """The whole file's OpenMM topology, built the first time it is used (writing the prepared
    structure, the alanine scan): a scan of a solvated box never needs it."""

    def __init__(self, build):
        self._build, self._topology = build, None

    def __getattr__(self, name):  # called only for names the proxy itself does not have
        if name in ("_build", "_topology"):
            raise AttributeError(name)
        if self._topology is None:
            self._topology = self._build()
        return getattr(self._topology, name)
