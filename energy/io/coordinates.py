"""Coordinates from any file MDAnalysis reads, checked against the topology they belong to."""
from __future__ import annotations

import os
import warnings

import numpy as np

from energy.errors import InputMismatchError, StructureFileError, one_line
from energy.io.coordinate_text import check_coordinate_text, compare_with_reader
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
    """True if ``path``'s suffix (before a ``.gz``) is one of :data:`TRAJECTORY_SUFFIXES`.

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
    name = _format_name(path)
    return "." in name and name.rsplit(".", 1)[-1].lower() in TRAJECTORY_SUFFIXES


_DECOMPRESSED: dict = {}


def plain_file(path) -> str:
    """A file MDAnalysis can read: ``path`` itself, or for a ``.gz`` file a decompressed copy.

    The copy has the same name without ``.gz``, in a private temporary folder removed when the
    process ends; it is made once per file and modification time.  MDAnalysis' readers of binary
    trajectories need a plain file.

    Parameters
    ----------
    path : str or os.PathLike
        The file, optionally gzip-compressed.

    Returns
    -------
    str
        Path of the plain file.

    Raises
    ------
    StructureFileError
        The ``.gz`` file cannot be decompressed.
    """
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


def open_coordinates(path, n_atoms: int, names, topology_kind: str = "topology", what: str = "coordinates",
                     residues=None):
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
    residues : (resnames, resindex), optional
        Per-atom residue names (n_atoms,) str and residue index (n_atoms,) int of the topology:
        where the file has residues, their names and where each residue starts must agree
        (a residue number may differ: files are renumbered).

    Returns
    -------
    MDAnalysis.Universe
        Over the file; a trajectory format is loaded into an empty universe of ``n_atoms`` atoms.

    Raises
    ------
    StructureFileError
        Unreadable file.
    InputMismatchError
        Atom count, atom names or residues differ between topology and file.
    """
    import MDAnalysis as mda

    path = os.fspath(path)
    name = _format_name(path)
    suffix = name.rsplit(".", 1)[-1].lower() if "." in name else ""
    parsed = check_coordinate_text(plain_file(path)) if suffix not in TRAJECTORY_SUFFIXES else None
    if suffix == "dcd":
        _check_dcd_header(plain_file(path))
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
        raise StructureFileError(path, f"cannot read {what}: {third_party_message(exc)}") from None
    compare_with_reader(path, parsed, universe.atoms.positions)
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
        if residues is not None:
            _check_residues(universe, residues, path, topology_kind)
    return universe


def _check_dcd_header(path) -> None:
    """A DCD starts with its 84-byte header record, ``CORD`` (or ``VELD``) first: refuse anything
    else before MDAnalysis's reader fails on it (and leaves a half-built reader behind)."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(8)
    except OSError as exc:
        raise StructureFileError(path, f"cannot read the trajectory: {exc.strerror or exc}") from None
    if len(head) < 8 or head[4:8] not in (b"CORD", b"VELD") or head[:4] not in (
            (84).to_bytes(4, "little"), (84).to_bytes(4, "big")):
        raise StructureFileError(path, "not a DCD file: it does not start with the 84-byte CORD header record")


def _check_residues(universe, residues, path, topology_kind) -> None:
    """Residue names (first 4 letters: the PDB field) and residue starts must agree."""
    resnames, resindex = np.asarray(residues[0]).astype(str), np.asarray(residues[1])
    atoms = universe.atoms
    file_names = np.array([str(r).strip().upper()[:4] for r in atoms.resnames])
    ours = np.char.upper(np.char.strip(resnames)).astype("U4")
    bad = np.flatnonzero(file_names != ours)
    if len(bad):
        i = int(bad[0])
        raise InputMismatchError(f"residue names differ between the {topology_kind} and {path} "
                                 f"({len(bad)} atoms), e.g. atom {i + 1}: {topology_kind} {resnames[i]!r} vs "
                                 f"coordinates {str(atoms.resnames[i])!r}")
    file_res = np.asarray(atoms.resindices)
    starts_ours = np.r_[True, resindex[1:] != resindex[:-1]]
    starts_file = np.r_[True, file_res[1:] != file_res[:-1]]
    bad = np.flatnonzero(starts_ours != starts_file)
    if len(bad):
        i = int(bad[0])
        raise InputMismatchError(f"the residues of {path} do not follow the {topology_kind}'s: atom {i + 1} "
                                 f"{'starts' if starts_file[i] else 'does not start'} a residue in the file but "
                                 f"{'does' if starts_ours[i] else 'does not'} in the {topology_kind} "
                                 "(atoms out of order?)")


def third_party_message(exc: BaseException) -> str:
    """A library's exception as one short line (the caller puts the file name first).

    Parameters
    ----------
    exc : BaseException
        The exception raised by the library.

    Returns
    -------
    str
        At most 160 characters (:func:`energy.errors.one_line`), or the exception's type name if
        it has no message.
    """
    return one_line(str(exc), 160) or type(exc).__name__


def read_timestep(universe, index: int, path):
    """Timestep ``index`` of ``universe``.

    Any failure of the reader (a truncated or damaged frame, models of different sizes) becomes a
    :class:`StructureFileError` naming the file.

    Parameters
    ----------
    universe : MDAnalysis.Universe
    index : int
        Frame number (0-based).
    path : str or os.PathLike
        The file, named in errors.

    Returns
    -------
    MDAnalysis timestep

    Raises
    ------
    StructureFileError
        The reader failed on the frame.
    """
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return universe.trajectory[int(index)]
    except Exception as exc:  # MDAnalysis raises OSError, ValueError, IndexError, EOFError ...
        raise StructureFileError(path, f"cannot read frame {index}: {third_party_message(exc)}") from None


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
    with np.errstate(invalid="ignore", over="ignore"):  # a damaged frame: judged right below
        positions = np.array(ts.positions, dtype=np.float64)
        box = None if ts.dimensions is None else np.array(ts.dimensions, dtype=np.float64)
    if not np.all(np.isfinite(positions)):
        raise StructureFileError(path, f"frame {index} holds non-finite (NaN/inf) coordinates")
    return Frame(positions=positions, box=box, index=index, source=os.fspath(path))


def read_frame(coords_path, n_atoms: int, names, frame: int = 0, topology_kind: str = "PSF",
               residues=None) -> Frame:
    """Read one frame (0-based) of coordinates and check it against the topology.

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
    residues : (resnames, resindex), optional
        Residues of the topology to check the file's against: see :func:`open_coordinates`.

    Returns
    -------
    Frame
        Positions (n_atoms, 3) float64 A, unit cell (A, degrees) or None, ``index`` ``frame``.

    Raises
    ------
    StructureFileError
        Unreadable file, missing frame, non-finite coordinates.
    InputMismatchError
        Atom count or names differ.
    """
    path = os.fspath(coords_path)
    universe = open_coordinates(path, n_atoms, names, topology_kind, residues=residues)
    try:
        n_frames = len(universe.trajectory)
    except Exception as exc:
        raise StructureFileError(path, f"cannot count the frames: {third_party_message(exc)}") from None
    if not 0 <= frame < n_frames:
        raise StructureFileError(path, f"frame {frame} requested but the file has {n_frames} "
                                       f"frame(s) (0..{n_frames - 1})")
    return frame_from_timestep(read_timestep(universe, frame, path), path, frame)
