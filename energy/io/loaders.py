"""One entry point for every input route: :func:`load_system`.

* ``*.psf`` + parameter/stream files + coordinates: the CHARMM-style route
  (:mod:`energy.io.psf`, :mod:`energy.io.charmm_params`, :mod:`energy.io.charmm_system`).
* ``*.pdb`` / ``*.cif`` / ``*.mmcif`` alone: the built-in force field (:mod:`energy.io.builtin`);
  optional coordinates (a trajectory or another frame of the same atoms) replace the positions.
"""
from __future__ import annotations

import os
import time
from dataclasses import dataclass, field

from energy.errors import StructureFileError
from energy.io.whole import whole_frame
from energy.model.system import Frame, MolecularSystem

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


def _check_readable(path) -> str:
    path = os.fspath(path)
    if not os.path.exists(path):
        raise StructureFileError(path, "file not found")
    if not os.path.isfile(path) or not os.access(path, os.R_OK):
        raise StructureFileError(path, "not a readable file")
    return path


def load_system(structure, coords=None, params=(), frame: int = 0, add_hydrogens: bool = False,
                force_field=None) -> LoadedSystem:
    """Load and parameterise a system; see the module docstring for the routes."""
    structure = _check_readable(structure)
    params = tuple(_check_readable(p) for p in params)
    coords = _check_readable(coords) if coords is not None else None
    suffix = os.path.splitext(structure)[1].lower()
    t0 = time.perf_counter()
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
        psf = read_psf(structure)
        parameter_set = read_charmm_parameters(params)
        t_read = time.perf_counter()
        system = build_charmm_system(psf, parameter_set)
        t_param = time.perf_counter()
        fr = read_frame(coords, psf.n_atoms, psf.names, frame)
        t_coords = time.perf_counter()
        timings = {"read": (t_read - t0) + (t_coords - t_param), "parameterise": t_param - t_read}
    elif suffix in STRUCTURE_SUFFIXES:
        from energy.io.builtin import DEFAULT_FORCE_FIELD, load_builtin
        if params:
            raise StructureFileError(params[0], "parameter files go with a PSF topology; a PDB/mmCIF "
                                     "alone is parameterised by the built-in force field")
        system, fr, _top, read_s = load_builtin(structure, add_hydrogens=add_hydrogens,
                                                force_field=force_field or DEFAULT_FORCE_FIELD)
        t_param = time.perf_counter()
        timings = {"read": read_s, "parameterise": (t_param - t0) - read_s}
        if coords is not None or frame:
            from energy.io.charmm_system import read_frame
            t1 = time.perf_counter()
            fr = read_frame(coords or structure, system.n_atoms, system.names, frame)
            timings["read"] += time.perf_counter() - t1
    else:
        raise StructureFileError(structure, f"unknown structure format {suffix!r}: expected a PSF "
                                 "(with --params and coordinates) or a PDB/mmCIF file")
    fr = whole_frame(system, fr)  # molecules split across a periodic box: whole again
    return LoadedSystem(system, fr, timings, structure, coords or "", params)
