"""Simulation setups read through OpenMM: Amber and GROMACS topologies, serialised Systems.

* Amber: ``.prmtop``/``.parm7`` with ``.inpcrd``/``.rst7``/``.ncrst`` (OpenMM's
  ``AmberInpcrdFile``) or a frame of a trajectory (``.nc``, ``.mdcrd``, ``.dcd``; MDAnalysis),
  parameterised by OpenMM's ``AmberPrmtopFile``.  The box is the coordinates' (else the
  topology's).
* GROMACS: ``.top`` with ``.gro`` (OpenMM's ``GromacsTopFile``; ``#include`` resolved from the
  top's folder, then every ``include_dirs`` entry).  ``.tpr`` is refused with advice.
* OpenMM: a serialised ``System`` (``XmlSerializer``, ``.xml``) with a PDB/mmCIF giving the
  topology and coordinates.

Every route ends in :func:`energy.io.openmm_system.system_from_openmm`, with no cutoff, no
constraints and flexible water (the engine applies its own cutoff settings).
"""
from __future__ import annotations

import dataclasses
import os

import numpy as np

from energy.errors import InputMismatchError, StructureFileError
from energy.io.openmm_system import system_from_openmm
from energy.model.system import Frame

AMBER_TOPOLOGY_SUFFIXES = (".prmtop", ".parm7")
AMBER_RESTART_SUFFIXES = (".inpcrd", ".rst7", ".ncrst", ".restrt", ".rst", ".crd")
GROMACS_TOPOLOGY_SUFFIXES = (".top",)
GROMACS_COORDINATE_SUFFIXES = (".gro",)
OPENMM_SYSTEM_SUFFIXES = (".xml",)


def _message(exc: Exception) -> str:
    return " ".join(str(exc).split("For more information")[0].split())


def box_from_vectors(vectors) -> np.ndarray | None:
    """``[a, b, c, alpha, beta, gamma]`` (A, degrees) of three OpenMM box vectors.

    Parameters
    ----------
    vectors : sequence of 3 openmm Vec3 Quantities, or None

    Returns
    -------
    (6,) float64 or None
    """
    if vectors is None:
        return None
    from openmm import unit
    v = np.array([[c.value_in_unit(unit.angstrom) for c in vec] for vec in vectors])
    lengths = np.linalg.norm(v, axis=1)

    def angle(a, b):
        return np.degrees(np.arccos(np.clip(np.dot(v[a], v[b]) / (lengths[a] * lengths[b]), -1, 1)))
    return np.array([*lengths, angle(1, 2), angle(0, 2), angle(0, 1)])


def _positions_angstrom(positions) -> np.ndarray:
    from openmm import unit
    return np.asarray(positions.value_in_unit(unit.angstrom), dtype=np.float64).reshape(-1, 3)


def _create_system(source, path):
    from openmm import app
    try:
        return source.createSystem(nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False,
                                   removeCMMotion=False)
    except Exception as exc:  # OpenMM raises ValueError/Exception on parameters it cannot build
        raise StructureFileError(path, f"OpenMM could not build the system: {_message(exc)}") from None


def _frame_from_trajectory(coords, system, frame):
    from energy.io.coordinates import read_frame
    return read_frame(coords, system.n_atoms, system.names, frame, topology_kind="topology")


def load_amber(prmtop: str, coords: str, frame: int = 0):
    """An Amber topology with its coordinates, parameterised by OpenMM's ``AmberPrmtopFile``.

    Parameters
    ----------
    prmtop : str
        ``.prmtop``/``.parm7`` file.
    coords : str
        ``.inpcrd``/``.rst7``/``.ncrst`` restart (``frame`` must be 0) or a trajectory.
    frame : int
        Frame of a trajectory (0-based).

    Returns
    -------
    (MolecularSystem, Frame)

    Raises
    ------
    StructureFileError, UnsupportedForceError, InputMismatchError
    """
    from openmm import app

    from energy.io.coordinates import is_trajectory_path
    try:
        top = app.AmberPrmtopFile(prmtop)
    except Exception as exc:  # the Amber parser raises many kinds on a damaged file
        raise StructureFileError(prmtop, f"cannot read the Amber topology: {_message(exc)}") from None
    omm = _create_system(top, prmtop)
    try:
        types = list(top._prmtop.getAtomTypes())  # AMBER_ATOM_TYPE, for the atom table
    except Exception:  # an older or newer OpenMM without the private parser
        types = None
    system = system_from_openmm(omm, top.topology, types, force_field=f"Amber topology {os.path.basename(prmtop)}",
                                source_files=(prmtop, coords))
    radius, screen = stored_gb_radii(top, system.n_atoms)
    if radius is not None:
        system = dataclasses.replace(system, topology_gb_radius=radius, topology_gb_screen=screen)
    if is_trajectory_path(coords):
        fr = _frame_from_trajectory(coords, system, frame)
    else:
        if frame:
            raise StructureFileError(coords, f"frame {frame} requested but an Amber restart holds one frame")
        try:
            crd = app.AmberInpcrdFile(coords)
        except Exception as exc:
            raise StructureFileError(coords, f"cannot read the Amber coordinates: {_message(exc)}") from None
        x = _positions_angstrom(crd.getPositions())
        if len(x) != system.n_atoms:
            raise InputMismatchError(f"{coords} has {len(x)} atoms but the topology {prmtop} has "
                                     f"{system.n_atoms}")
        fr = Frame(x, box_from_vectors(crd.boxVectors), 0, coords)
    if fr.box is None:
        fr = Frame(fr.positions, box_from_vectors(top.topology.getPeriodicBoxVectors()), fr.index, fr.source)
    return system, fr


def stored_gb_radii(top, n_atoms: int):
    """The generalized Born radii and screening factors an Amber topology stores (RADII, SCREEN).

    Parameters
    ----------
    top : openmm.app.AmberPrmtopFile
        The topology as OpenMM read it (its parsed ``%FLAG`` sections).
    n_atoms : int
        Number of atoms.

    Returns
    -------
    radius : (n_atoms,) float64 or None
        Intrinsic radii, A (None: the file has no complete RADII section).
    screen : (n_atoms,) float64 or None
        Screening factors (None with ``radius``).
    """
    try:
        raw = top._prmtop._raw_data  # the parsed %FLAG sections (the source OpenMM itself reads them from)
        radius = np.array([float(v) for v in raw["RADII"]], np.float64)
        screen = np.array([float(v) for v in raw["SCREEN"]], np.float64)
    except (AttributeError, KeyError, ValueError):
        return None, None
    if radius.shape != (n_atoms,) or screen.shape != (n_atoms,) or not np.all(radius > 0):
        return None, None
    return radius, screen


class _TopWithIncludes:
    """OpenMM's ``GromacsTopFile`` searching several include folders (the top's own first)."""

    @staticmethod
    def read(top: str, box_vectors, include_dirs):
        from openmm import app

        class TopFile(app.GromacsTopFile):
            # GromacsTopFile keeps (top folder, one include folder) in _includeDirs; the extra
            # folders are put between them.
            @property
            def _includeDirs(self):
                base = self.__dict__.get("_base_dirs", ())
                return (*base[:1], *include_dirs, *base[1:])

            @_includeDirs.setter
            def _includeDirs(self, value):
                self.__dict__["_base_dirs"] = tuple(d for d in value if d)

        return TopFile(top, periodicBoxVectors=box_vectors)


def load_gromacs(top: str, coords: str, frame: int = 0, include_dirs=()):
    """A GROMACS topology with a ``.gro`` (or a trajectory frame), parameterised by OpenMM.

    Parameters
    ----------
    top : str
        ``.top`` file; ``#include`` files are looked for in its folder, then ``include_dirs``.
    coords : str
        ``.gro`` file, or a trajectory (``.xtc``, ``.trr``, ...).
    frame : int
        Frame of a trajectory (0-based).
    include_dirs : sequence of str
        Further folders for ``#include``.

    Returns
    -------
    (MolecularSystem, Frame)

    Raises
    ------
    StructureFileError, UnsupportedForceError, InputMismatchError
    """
    from openmm import app

    from energy.io.coordinates import is_trajectory_path
    for d in include_dirs:
        if not os.path.isdir(d):
            raise StructureFileError(d, "--include-dir: not a folder")
    box_vectors = None
    gro = None
    if not is_trajectory_path(coords):
        try:
            gro = app.GromacsGroFile(coords)
        except Exception as exc:
            raise StructureFileError(coords, f"cannot read the .gro file: {_message(exc)}") from None
        box_vectors = gro.getPeriodicBoxVectors()
    try:
        topfile = _TopWithIncludes.read(top, box_vectors, tuple(os.fspath(d) for d in include_dirs))
    except Exception as exc:  # missing include, unknown directive, missing parameters
        raise StructureFileError(top, f"cannot read the GROMACS topology: {_message(exc)}; "
                                 "pass --include-dir DIR for the force-field folder") from None
    omm = _create_system(topfile, top)
    system = system_from_openmm(omm, topfile.topology, None,
                                force_field=f"GROMACS topology {os.path.basename(top)}",
                                source_files=(top, coords))
    if gro is None:
        return system, _frame_from_trajectory(coords, system, frame)
    if frame:
        raise StructureFileError(coords, f"frame {frame} requested but the .gro is read as one frame")
    x = _positions_angstrom(gro.getPositions())
    if len(x) != system.n_atoms:
        raise InputMismatchError(f"{coords} has {len(x)} atoms but the topology {top} has {system.n_atoms}")
    return system, Frame(x, box_from_vectors(box_vectors), 0, coords)


def load_serialized_system(xml: str, structure: str, frame: int = 0):
    """A serialised OpenMM ``System`` with the PDB/mmCIF that gives its topology and coordinates.

    Parameters
    ----------
    xml : str
        ``XmlSerializer`` output of an ``openmm.System``.
    structure : str
        PDB or mmCIF of the same particles in the same order.
    frame : int
        Model of the structure (0-based).

    Returns
    -------
    (MolecularSystem, Frame)

    Raises
    ------
    StructureFileError, UnsupportedForceError
    """
    import openmm
    from openmm import app

    from energy.io.coordinates import plain_file
    from energy.io.structure_text import structure_suffix
    try:
        with open(xml, encoding="utf-8") as handle:
            omm = openmm.XmlSerializer.deserialize(handle.read())
    except Exception as exc:
        raise StructureFileError(xml, f"not a serialised OpenMM System: {_message(exc)}") from None
    if not isinstance(omm, openmm.System):
        raise StructureFileError(xml, f"holds a serialised {type(omm).__name__}, not an OpenMM System")
    readable = plain_file(structure)
    try:
        is_cif = structure_suffix(structure) in (".cif", ".mmcif", ".pdbx")
        struct = app.PDBxFile(readable) if is_cif else app.PDBFile(readable)
    except Exception as exc:
        raise StructureFileError(structure, f"cannot read the structure: {_message(exc)}") from None
    n_models = struct.getNumFrames()
    if not 0 <= frame < n_models:
        raise StructureFileError(structure, f"model {frame} requested but the file has {n_models} model(s)")
    if omm.getNumParticles() != struct.topology.getNumAtoms():
        raise InputMismatchError(f"{xml} has {omm.getNumParticles()} particles but {structure} has "
                                 f"{struct.topology.getNumAtoms()} atoms")
    system = system_from_openmm(omm, struct.topology, None,
                                force_field=f"OpenMM system {os.path.basename(xml)}",
                                source_files=(xml, structure))
    box = box_from_vectors(struct.topology.getPeriodicBoxVectors())
    if box is None and omm.usesPeriodicBoundaryConditions():
        box = box_from_vectors(omm.getDefaultPeriodicBoxVectors())
    return system, Frame(_positions_angstrom(struct.getPositions(frame=frame)), box, frame, structure)
