"""Files given together (dropped on the window, picked in the open dialog) sorted into one input
route by their suffixes: which is the topology, which the coordinates, which parameter files.

The routes (:func:`energy.io.loaders.load_system`): a PSF + CHARMM-style parameters +
coordinates; an Amber ``.prmtop``/``.parm7`` + restart or trajectory; a GROMACS ``.top`` +
``.gro``; a serialised OpenMM System ``.xml`` + PDB/mmCIF; a PDB/mmCIF alone (optionally with
other frames and OpenMM force-field XML templates).  A combination that fits none gives one line
naming the files and what is missing.
"""
from __future__ import annotations

import os
from dataclasses import dataclass

from energy.errors import StructureFileError, shown_list
from energy.io.coordinates import TRAJECTORY_SUFFIXES

PARAMETER_SUFFIXES = (".prm", ".par", ".str", ".rtf", ".inp")
STRUCTURE_SUFFIXES = (".pdb", ".ent", ".cif", ".mmcif", ".pdbx")
AMBER_TOPOLOGY = (".prmtop", ".parm7")
AMBER_RESTART = (".inpcrd", ".rst7", ".ncrst", ".restrt", ".rst")
OTHER_COORDINATES = (".crd", ".cor", ".gro")


@dataclass(frozen=True)
class InputFiles:
    """One route's files: ``structure`` (topology or PDB/mmCIF), ``coords`` (or None), ``params``
    (CHARMM-style parameter files) and ``forcefield_files`` (OpenMM XML templates)."""

    structure: str
    coords: str | None = None
    params: tuple = ()
    forcefield_files: tuple = ()


def _suffix(path: str) -> str:
    name = os.path.basename(path).lower()
    if name.endswith(".gz"):
        name = name[:-3]
    return os.path.splitext(name)[1]


def _is_serialised_system(path: str) -> bool:
    try:
        with open(path, encoding="utf-8", errors="replace") as handle:
            head = handle.read(400)
    except OSError:
        return False
    return "<System" in head


def _names(files) -> str:
    return shown_list([os.path.basename(f) for f in files], limit=4)


def arrange_inputs(files) -> InputFiles:
    """Sort ``files`` into one input route by suffix.

    Parameters
    ----------
    files : sequence of str or os.PathLike
        The files given together, in any order.

    Returns
    -------
    InputFiles

    Raises
    ------
    StructureFileError
        One line naming the files and what is missing (or which file Tessera does not read).
    """
    files = [os.fspath(f) for f in files]
    if not files:
        raise StructureFileError("(no files)", "give a structure or topology file")
    kind = {}
    for f in files:
        s = _suffix(f)
        if s == ".psf":
            kind[f] = "psf"
        elif s in AMBER_TOPOLOGY:
            kind[f] = "amber"
        elif s == ".top":
            kind[f] = "gromacs"
        elif s == ".xml":
            kind[f] = "system" if _is_serialised_system(f) else "forcefield"
        elif s in STRUCTURE_SUFFIXES:
            kind[f] = "structure"
        elif s in PARAMETER_SUFFIXES:
            kind[f] = "params"
        elif s in AMBER_RESTART or s in OTHER_COORDINATES or s.lstrip(".") in TRAJECTORY_SUFFIXES:
            kind[f] = "coords"
        elif s == ".tpr":
            raise StructureFileError(f, "a GROMACS .tpr (binary run input) is not read: give the .top "
                                     "and the .gro instead")
        else:
            raise StructureFileError(f, f"not a format Tessera reads (suffix {s or 'none'!r}); files "
                                     f"given: {_names(files)}")
    of = lambda k: [f for f in files if kind[f] == k]  # noqa: E731
    topologies = of("psf") + of("amber") + of("gromacs") + of("system")
    coords, params, ff = of("coords"), tuple(of("params")), tuple(of("forcefield"))
    structures = of("structure")
    if len(topologies) > 1:
        raise StructureFileError(topologies[1], f"two topologies given ({_names(topologies)}): give one")
    if topologies:
        top = topologies[0]
        needs = {"psf": "a PSF needs CHARMM-style parameter files (.prm/.str) and coordinates",
                 "amber": "an Amber topology needs coordinates (.inpcrd/.rst7/.ncrst or a trajectory)",
                 "gromacs": "a GROMACS .top needs its .gro (or a trajectory)",
                 "system": "a serialised OpenMM System needs the PDB/mmCIF of its atoms"}[kind[top]]
        if kind[top] == "system":
            given = structures + coords
        else:
            given = coords + structures
        if not given or (kind[top] == "psf" and not params):
            raise StructureFileError(top, f"{needs}; files given: {_names(files)}")
        if params and kind[top] != "psf":
            raise StructureFileError(params[0], f"parameter files go with a PSF, not with {os.path.basename(top)}")
        if ff:
            raise StructureFileError(ff[0], f"force-field templates go with a PDB/mmCIF alone, not with "
                                     f"{os.path.basename(top)}")
        return InputFiles(top, given[0], params if kind[top] == "psf" else ())
    if params:
        raise StructureFileError(params[0], f"parameter files need a PSF topology; files given: {_names(files)}")
    if not structures:
        raise StructureFileError(files[0], f"coordinates alone: add the topology (PSF, .prmtop, .top) or a "
                                 f"PDB/mmCIF; files given: {_names(files)}")
    rest = structures[1:] + coords
    return InputFiles(structures[0], rest[0] if rest else None, (), ff)
