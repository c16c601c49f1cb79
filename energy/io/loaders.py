"""One entry point for every input route: :func:`load_system`.

* ``*.psf`` + parameter/stream files + coordinates: the CHARMM-style route
  (:mod:`energy.io.psf`, :mod:`energy.io.charmm_params`, :mod:`energy.io.charmm_system`).
* ``*.pdb`` / ``*.cif`` / ``*.mmcif`` alone (``.gz`` too): the built-in force field
  (:mod:`energy.io.builtin`), after the preparation asked for (:mod:`energy.io.preparation`);
  ``frame`` N without coordinates is the file's model N; optional coordinates (a trajectory or
  another frame of the same atoms) replace the positions.
* ``*.prmtop``/``*.parm7`` (Amber), ``*.top`` (GROMACS) or ``*.xml`` (a serialised OpenMM System),
  each with its coordinates: :mod:`energy.io.openmm_routes`.  ``*.tpr`` is refused with advice.
"""
from __future__ import annotations

import os
import time
from dataclasses import dataclass, field

from energy.errors import StructureFileError
from energy.io.whole import whole_frame
from energy.model.system import Frame, MolecularSystem
from energy.model.virtual_sites import placed_frame

STRUCTURE_SUFFIXES = (".pdb", ".ent", ".cif", ".mmcif", ".pdbx")


@dataclass(frozen=True)
class LoadedSystem:
    """A parameterised system with one frame, and how long reading and parameterising took (s)."""

    system: MolecularSystem
    frame: Frame
    timings: dict = field(default_factory=dict)
    structure_path: str = ""
    coords_path: str = ""
    param_paths: tuple = ()
    #: Built-in route: what preparation found and did (energy.io.preparation.PreparationRecord).
    preparation: object = None
    #: Built-in route: (n_models, n_atoms, 3) A of the file's models on the prepared atoms, or
    #: None (one model, or preparation added atoms).
    models: object = None
    #: Built-in route: the OpenMM topology as prepared (for writing the prepared PDB).
    prepared_topology: object = None


def _check_readable(path) -> str:
    path = os.fspath(path)
    if not os.path.exists(path):
        raise StructureFileError(path, "file not found")
    if not os.path.isfile(path) or not os.access(path, os.R_OK):
        raise StructureFileError(path, "not a readable file")
    return path


def _openmm_route(suffix, structure, coords, params, frame, options, include_dirs):
    """The Amber, GROMACS and serialised-System routes: (system, frame), or None for another suffix."""
    from energy.io import openmm_routes as routes
    kinds = {**dict.fromkeys(routes.AMBER_TOPOLOGY_SUFFIXES, ("Amber topology", "an .inpcrd/.rst7/.ncrst "
                                                              "restart or a trajectory (.nc, .mdcrd, .dcd)")),
             ".top": ("GROMACS topology", "the .gro file"),
             ".xml": ("serialised OpenMM System", "the PDB/mmCIF of its atoms")}
    if suffix == ".tpr":
        raise StructureFileError(structure, "a GROMACS .tpr (binary run input) is not read: pass the .top "
                                 "and the .gro instead (tessera scan system.top system.gro)")
    if suffix not in kinds:
        return None
    what, needs = kinds[suffix]
    if coords is None:
        raise StructureFileError(structure, f"a {what} holds no coordinates: give {needs} after it")
    if params:
        raise StructureFileError(params[0], f"--params goes with a PSF; a {what} carries its own parameters")
    if options.adds_hydrogens or options.chooses_force_field or options.drop_unmatched:
        raise StructureFileError(structure, "--add-hydrogens, --repair, --forcefield, --water, "
                                 "--forcefield-file and --drop-unmatched prepare a PDB/mmCIF; a "
                                 f"{what} is used with its own parameters")
    if suffix in routes.AMBER_TOPOLOGY_SUFFIXES:
        return routes.load_amber(structure, coords, frame)
    if suffix == ".top":
        return routes.load_gromacs(structure, coords, frame, include_dirs)
    return routes.load_serialized_system(structure, coords, frame)


def load_system(structure, coords=None, params=(), frame: int = 0, add_hydrogens: bool = False,
                force_field=None, preparation=None, include_dirs=()) -> LoadedSystem:
    """Load and parameterise a system; see the module docstring for the routes.

    Parameters
    ----------
    structure : str or os.PathLike
        A PSF (with ``params`` and ``coords``) or a PDB/mmCIF file (built-in force field).
    coords : str, os.PathLike or None, optional
        Coordinates or trajectory (required with a PSF; with a PDB/mmCIF they replace its positions).
    params : sequence of str or os.PathLike, optional
        CHARMM-style parameter/stream files (PSF route only).
    frame : int, optional
        Frame of the coordinates to read (0-based; default 0).
    add_hydrogens : bool, optional
        Built-in route: add missing hydrogens first (default False).
    force_field : sequence of str or None, optional
        Built-in route: OpenMM force-field XML files (None: :data:`energy.io.builtin.DEFAULT_FORCE_FIELD`).
    preparation : energy.io.preparation.PreparationOptions or None, optional
        Built-in route: how to prepare a deposited structure (default: only ``add_hydrogens``).
    include_dirs : sequence of str, optional
        GROMACS route: further folders for ``#include`` (after the top's own folder).

    Returns
    -------
    LoadedSystem
        The system, its frame (A), ``timings`` (``read``, ``parameterise``, s) and the input paths.

    Raises
    ------
    StructureFileError
        If a file is missing or unreadable, the format is unknown, or the inputs do not fit the route
        (a PSF without parameters or coordinates, parameters with a PDB/mmCIF).
    """
    from energy.io.preparation import PreparationOptions
    from energy.io.structure_text import structure_suffix
    structure = _check_readable(structure)
    params = tuple(_check_readable(p) for p in params)
    coords = _check_readable(coords) if coords is not None else None
    options = preparation or PreparationOptions(add_hydrogens=add_hydrogens)
    suffix = structure_suffix(structure)
    t0 = time.perf_counter()
    prepared = None
    if suffix == ".psf":
        from energy.io.charmm_params import read_charmm_parameters
        from energy.io.charmm_system import build_charmm_system, read_frame
        from energy.io.psf import read_psf
        if not params:
            raise StructureFileError(structure, "a PSF needs its parameter files: add --params FILE "
                                     "(several allowed, CHARMM-style .prm/.par/.str)")
        if coords is None:
            raise StructureFileError(structure, "a PSF holds no coordinates: give a coordinate file "
                                     "(PDB, CRD, DCD, ...) after it")
        if options.adds_hydrogens or options.chooses_force_field or options.drop_unmatched:
            raise StructureFileError(structure, "--add-hydrogens, --repair, --forcefield(-file), --water and "
                                     "--drop-unmatched prepare a PDB/mmCIF for the built-in force field; "
                                     "a PSF topology is used as it is")
        psf = read_psf(structure)
        parameter_set = read_charmm_parameters(params)
        t_read = time.perf_counter()
        system = build_charmm_system(psf, parameter_set)
        t_param = time.perf_counter()
        fr = read_frame(coords, psf.n_atoms, psf.names, frame,
                        residues=(psf.resnames, system.resindex))
        t_coords = time.perf_counter()
        timings = {"read": (t_read - t0) + (t_coords - t_param), "parameterise": t_param - t_read}
    elif suffix in STRUCTURE_SUFFIXES:
        from energy.io.builtin import load_builtin_prepared
        if params:
            raise StructureFileError(params[0], "parameter files go with a PSF topology; a PDB/mmCIF "
                                     "alone is parameterised by the built-in force field")
        system, fr, _top, prepared = load_builtin_prepared(structure, options,
                                                           force_field or options.force_field)
        read_s = prepared.read_seconds
        t_param = time.perf_counter()
        timings = {"read": read_s, "parameterise": (t_param - t0) - read_s}
        if coords is not None:
            from energy.io.charmm_system import read_frame
            if options.changes_atoms:
                raise StructureFileError(coords, "other coordinates need the atoms of the file as it "
                                         "is; --add-hydrogens, --repair and --drop-unmatched change them")
            t1 = time.perf_counter()
            fr = read_frame(coords, system.n_atoms, system.names, frame, topology_kind="structure",
                            residues=(system.residues.resname[system.resindex], system.resindex))
            timings["read"] += time.perf_counter() - t1
        elif frame:
            fr = model_frame(structure, prepared.models, fr.box, frame)
    else:
        loaded = _openmm_route(suffix, structure, coords, params, frame, options,
                               tuple(include_dirs) or options.include_dirs)
        if loaded is None:
            raise StructureFileError(structure, f"unknown structure format {suffix!r}: expected a PSF "
                                     "(with --params and coordinates), a PDB/mmCIF (.gz too), an Amber "
                                     ".prmtop/.parm7, a GROMACS .top or a serialised OpenMM System .xml, "
                                     "each with its coordinates")
        system, fr = loaded
        t_param = time.perf_counter()
        timings = {"read": 0.0, "parameterise": t_param - t0}
    fr = placed_frame(system, whole_frame(system, fr))  # whole molecules, then the virtual sites
    return LoadedSystem(system, fr, timings, structure, coords or "", params,
                        preparation=None if prepared is None else prepared.record,
                        models=None if prepared is None else prepared.models,
                        prepared_topology=None if prepared is None else prepared.topology)


def model_frame(path, models, box, index: int) -> Frame:
    """Model ``index`` (0-based) of a multi-model structure as a :class:`Frame`.

    Parameters
    ----------
    path : str or os.PathLike
        The structure file (kept as ``Frame.source``, named in errors).
    models : (n_models, n_atoms, 3) float64 or None
        The file's models on the prepared atoms, A (None: preparation added atoms).
    box : (6,) float64 or None
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (A, degrees).
    index : int
        Model number (0-based).

    Returns
    -------
    Frame

    Raises
    ------
    StructureFileError
        No such model, or preparation added atoms that the other models do not have.
    """
    if models is None:
        raise StructureFileError(path, f"model {index} requested, but preparation added atoms "
                                 "(hydrogens or rebuilt atoms) that the other models do not have; "
                                 "scan the models without --add-hydrogens/--repair")
    if not 0 <= index < len(models):
        raise StructureFileError(path, f"model {index} requested but the file has {len(models)} "
                                 f"model(s) (0..{len(models) - 1})")
    return Frame(models[index], box, index, os.fspath(path))
