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


def _format_name(path) -> str:
    """The file name without a trailing ``.gz`` (whose suffix names the format)."""
    name = os.path.basename(os.fspath(path))
    return name[:-3] if name.lower().endswith(".gz") else name


def is_trajectory_path(path) -> bool:
    """True if ``path``'s suffix (before a ``.gz``) is one of :data:`TRAJECTORY_SUFFIXES`."""
    if not path:
        return False
    name = _format_name(path)
    return "." in name and name.rsplit(".", 1)[-1].lower() in TRAJECTORY_SUFFIXES


_DECOMPRESSED: dict = {}


def plain_file(path) -> str:
    """``path`` itself, or for a ``.gz`` file a decompressed copy (same name without ``.gz``, in
    a private temporary folder removed when the process ends; made once per file and
    modification time).  MDAnalysis' readers of binary trajectories need a plain file."""
    import atexit
    import gzip
    import shutil
    import tempfile
    path = os.fspath(path)
    if not path.lower().endswith(".gz"):
        return path
    key = (os.path.abspath(path), os.path.getmtime(path))
    if key not in _DECOMPRESSED:
        folder = tempfile.mkdtemp(prefix="tessera-gz-")
        atexit.register(shutil.rmtree, folder, True)
        target = os.path.join(folder, _format_name(path))
        try:
            with gzip.open(path, "rb") as src, open(target, "wb") as dst:
                shutil.copyfileobj(src, dst)
        except (OSError, EOFError) as exc:
            raise StructureFileError(path, f"cannot decompress the file ({exc})") from None
        _DECOMPRESSED[key] = target
    return _DECOMPRESSED[key]


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

    Raises
    ------
    StructureFileError
        Unreadable file.
    InputMismatchError
        Atom count or atom names differ between topology and file.
    """
    import MDAnalysis as mda

    path = os.fspath(path)
    name = _format_name(path)
    suffix = name.rsplit(".", 1)[-1].lower() if "." in name else ""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            readable = plain_file(path)
            if suffix in TRAJECTORY_SUFFIXES:
                universe = mda.Universe.empty(n_atoms, trajectory=False)
                universe.load_new(readable)
                file_names = None
            else:
                universe = mda.Universe(readable)
                file_names = [str(x) for x in universe.atoms.names]
    except StructureFileError:
        raise
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
    """A :class:`Frame` from an MDAnalysis timestep; refuses non-finite coordinates."""
    positions = np.array(ts.positions, dtype=np.float64)
    if not np.all(np.isfinite(positions)):
        raise StructureFileError(path, f"frame {index} holds non-finite (NaN/inf) coordinates")
    box = None if ts.dimensions is None else np.array(ts.dimensions, dtype=np.float64)
    return Frame(positions=positions, box=box, index=index, source=os.fspath(path))


def read_frame(coords_path, n_atoms: int, names, frame: int = 0, topology_kind: str = "PSF") -> Frame:
    """Read one frame (0-based) of coordinates and check it against the topology.

    Raises StructureFileError (unreadable file, missing frame, non-finite coordinates) or
    InputMismatchError (atom count or names differ).
    """
    path = os.fspath(coords_path)
    universe = open_coordinates(path, n_atoms, names, topology_kind)
    n_frames = len(universe.trajectory)
    if not 0 <= frame < n_frames:
        raise StructureFileError(path, f"frame {frame} requested but the file has {n_frames} "
                                       f"frame(s) (0..{n_frames - 1})")
    return frame_from_timestep(universe.trajectory[frame], path, frame)
