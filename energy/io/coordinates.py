"""Coordinates from any file MDAnalysis reads, checked against the topology they belong to."""
from __future__ import annotations

import os
import warnings

import numpy as np

from energy.errors import InputMismatchError, StructureFileError
from energy.model.system import Frame

#: Coordinate formats without atom names: read positions only (the topology gives the atoms).
#: The one list of trajectory formats: the window's file dialogs and frame bar read it too.
TRAJECTORY_SUFFIXES = frozenset({"dcd", "xtc", "trr", "nc", "ncdf", "netcdf", "trj", "mdcrd",
                                 "crdbox", "xyz", "lammpsdump", "h5md"})


def is_trajectory_path(path) -> bool:
    """True if ``path``'s suffix is one of :data:`TRAJECTORY_SUFFIXES` (several frames).

    Parameters
    ----------
    path : str, os.PathLike or None
        A file name (an empty one or None gives False).

    Returns
    -------
    bool
        The suffix (any case) is a trajectory format.
    """
    if not path:
        return False
    name = os.path.basename(os.fspath(path))
    return "." in name and name.rsplit(".", 1)[-1].lower() in TRAJECTORY_SUFFIXES


def open_coordinates(path, n_atoms: int, names, topology_kind: str = "topology", what: str = "coordinates"):
    """An MDAnalysis Universe over a coordinate file or trajectory, checked against the topology.

    Parameters
    ----------
    path : str or os.PathLike
        Any coordinate file MDAnalysis reads (PDB, CRD, DCD, XTC, ...).
    n_atoms : int
        Atom count of the topology.
    names : sequence of str
        Atom names of the topology, compared with the file's names where it has them.
    topology_kind : str
        How the topology is named in messages ("PSF", "topology").
    what : str
        How the file is named in the "cannot read" message.

    Returns
    -------
    MDAnalysis.Universe
        Over the file; a trajectory format is loaded into an empty universe of ``n_atoms`` atoms.

    Raises
    ------
    StructureFileError
        Unreadable file.
    InputMismatchError
        Atom count or atom names differ between topology and file.
    """
    import MDAnalysis as mda

    path = os.fspath(path)
    suffix = path.rsplit(".", 1)[-1].lower() if "." in os.path.basename(path) else ""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            if suffix in TRAJECTORY_SUFFIXES:
                universe = mda.Universe.empty(n_atoms, trajectory=False)
                universe.load_new(path)
                file_names = None
            else:
                universe = mda.Universe(path)
                file_names = [str(x) for x in universe.atoms.names]
    except Exception as exc:  # MDAnalysis raises many kinds; all mean "cannot read"
        raise StructureFileError(path, f"cannot read {what}: {exc}") from None
    if len(universe.atoms) != n_atoms:
        raise InputMismatchError(f"{path} has {len(universe.atoms)} atoms but the {topology_kind} "
                                 f"has {n_atoms}")
    if file_names is not None:
        bad = [(i, a, b) for i, (a, b) in enumerate(zip(names, file_names))
               if str(a).strip().upper() != b.strip().upper()]
        if bad:
            shown = ", ".join(f"atom {i + 1}: {topology_kind} {a!r} vs coordinates {b!r}"
                              for i, a, b in bad[:5])
            raise InputMismatchError(f"atom names differ between the {topology_kind} and {path} "
                                     f"({len(bad)} atoms), e.g. {shown}")
    return universe


def frame_from_timestep(ts, path, index: int) -> Frame:
    """A :class:`Frame` from an MDAnalysis timestep; refuses non-finite coordinates.

    Parameters
    ----------
    ts : MDAnalysis timestep
        The timestep (positions in A, dimensions ``[a, b, c, alpha, beta, gamma]`` or None).
    path : str or os.PathLike
        The file it came from (kept as ``Frame.source``, named in errors).
    index : int
        Frame number in the file (0-based).

    Returns
    -------
    Frame
        Positions (n_atoms, 3) float64 A and the unit cell (A, degrees) or None.

    Raises
    ------
    StructureFileError
        If a coordinate is NaN or infinite.
    """
    positions = np.array(ts.positions, dtype=np.float64)
    if not np.all(np.isfinite(positions)):
        raise StructureFileError(path, f"frame {index} holds non-finite (NaN/inf) coordinates")
    box = None if ts.dimensions is None else np.array(ts.dimensions, dtype=np.float64)
    return Frame(positions=positions, box=box, index=index, source=os.fspath(path))


def read_frame(coords_path, n_atoms: int, names, frame: int = 0, topology_kind: str = "PSF") -> Frame:
    """Read one frame (0-based) of coordinates and check it against the topology.

    Raises StructureFileError (unreadable file, missing frame, non-finite coordinates) or
    InputMismatchError (atom count or names differ).

    Parameters
    ----------
    coords_path : str or os.PathLike
        Coordinate file or trajectory.
    n_atoms : int
        Atom count of the topology.
    names : sequence of str
        Atom names of the topology.
    frame : int, optional
        Frame to read (0-based; default 0).
    topology_kind : str, optional
        How the topology is named in messages (default ``"PSF"``).

    Returns
    -------
    Frame
        Positions (n_atoms, 3) float64 A, unit cell (A, degrees) or None, ``index`` ``frame``.
    """
    path = os.fspath(coords_path)
    universe = open_coordinates(path, n_atoms, names, topology_kind)
    n_frames = len(universe.trajectory)
    if not 0 <= frame < n_frames:
        raise StructureFileError(path, f"frame {frame} requested but the file has {n_frames} "
                                       f"frame(s) (0..{n_frames - 1})")
    return frame_from_timestep(universe.trajectory[frame], path, frame)
