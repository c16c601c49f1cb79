"""The result file: one HDF5 file (h5py) per computed result, with a documented layout.

Layout and schema: ``docs/result-file.md`` (the one description; keep it in step with this
module).  In short, every file has root attributes ``format = "tessera-result"``,
``schema_version``, ``kind`` (``scan``, ``trajectory``, ``comparison``), ``program`` and
``version``; the groups ``inputs`` (one subgroup per input file: role, path, size, SHA-256),
``settings`` (attributes), ``residues`` (chain, resid, icode, resname) and ``pairs`` (one
column per term, ``total``, ``min_heavy_distance``; residue indices ``i <= j``); trajectories add
``frames`` and ``statistics``; comparisons hold ``first``, ``second`` and ``difference``.

Columns are chunked; integer columns and float columns that are mostly zero (most terms of most
residue pairs) are compressed with gzip level 1 after the byte shuffle filter (both built into
every HDF5 library, so any h5py reads them).  Dense float columns (Coulomb, LJ, total,
distances) are stored as they are: gzip gains little on them and cost two thirds of the write
time (100k-atom box, 5.6M pairs: 4.1 s and 55 MB with every column compressed, 1.9 s and 194 MB
this way; measured 2026-12-02).  Strings are stored as UTF-8 variable-length
strings.  Reading never unpickles: object dtypes are refused (:func:`read_result`).
"""
from __future__ import annotations

import hashlib
import json
import os
from dataclasses import dataclass, field

import numpy as np

from energy.analysis.compare import Comparison, ResidueMatch
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.errors import EnergyError
from energy.model.residue_classes import residue_classes
from energy.model.settings import EnergySettings
from energy.model.system import ResidueTable
from energy.output import header
from energy.output.files import temporary_path
from energy.terms.registry import COLUMNS, TERMS

FORMAT = "tessera-result"
#: Version of the layout this module writes; a file with a larger one is refused.
SCHEMA_VERSION = 1
PROGRAM_VERSION = header.PROGRAM_VERSION
#: Rows per HDF5 chunk of a pair column (1 MiB of float64).
CHUNK_ROWS = 131_072
_COMPRESSION = {"compression": "gzip", "compression_opts": 1, "shuffle": True}
#: A float column with more than this fraction of non-zero values is stored uncompressed.
MOSTLY_ZERO = 0.5


class ResultFileError(EnergyError):
    """A result file that cannot be read: not HDF5, truncated, foreign, newer schema, unsafe."""

    def __init__(self, path, message: str):
        self.path = os.fspath(path)
        super().__init__(f"{self.path}: {message}")


def _h5py():
    import h5py  # the optional heavy import stays out of `import energy`
    return h5py


def _strings(values) -> np.ndarray:
    return np.array([str(v) for v in values], dtype=object)


def sha256_of(path, block: int = 1 << 20) -> str:
    """Hex SHA-256 of the file at ``path`` (read in 1 MiB blocks).

    Parameters
    ----------
    path : str or os.PathLike
        File to hash.
    block : int
        Bytes read at a time.

    Returns
    -------
    str
        64 hexadecimal digits.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        while chunk := fh.read(block):
            digest.update(chunk)
    return digest.hexdigest()


@dataclass(frozen=True)
class InputRecord:
    """One input file of a result: its ``role`` (``structure``, ``coordinates``,
    ``parameters``, ``first``, ``second``...), ``path`` (absolute, as given), ``size`` (bytes) and
    ``sha256`` (hex); size -1 and an empty hash when the file could not be read at write time."""

    role: str
    path: str
    size: int
    sha256: str

    @classmethod
    def of(cls, role: str, path) -> InputRecord:
        """Record ``path`` as it is now (absolute path, size and SHA-256).

        Parameters
        ----------
        role : str
            Role of the file (``structure``, ``coordinates``, ``parameters``, ...).
        path : str or os.PathLike
            The file.

        Returns
        -------
        InputRecord
            With size -1 and an empty hash when the file cannot be read.
        """
        path = os.path.abspath(os.fspath(path))
        try:
            return cls(role, path, os.path.getsize(path), sha256_of(path))
        except OSError:
            return cls(role, path, -1, "")

    def changed(self, path=None) -> str | None:
        """None if the file is still there with the same SHA-256; otherwise why not.

        Parameters
        ----------
        path : str or os.PathLike, optional
            Where the file is now, when it has moved (default: the recorded path).

        Returns
        -------
        str or None
            A message saying the file is missing or has changed; None if it matches (or has no
            recorded hash).
        """
        path = self.path if path is None else os.fspath(path)
        if not os.path.isfile(path):
            return f"{self.role} file {path} is missing"
        if self.sha256 and sha256_of(path) != self.sha256:
            moved = "" if path == self.path else f" (recorded as {self.path})"
            return (f"{self.role} file {path}{moved} has changed since the result was computed "
                    "(SHA-256 differs)")
        return None


def input_records(loaded, role_prefix: str = "") -> list[InputRecord]:
    """The input files of an :class:`energy.io.loaders.LoadedSystem` as :class:`InputRecord`.

    Parameters
    ----------
    loaded : LoadedSystem
        A loaded system (its ``structure_path``, ``coords_path`` and ``param_paths``).
    role_prefix : str
        Prefix of each role (``"first "`` in a comparison).

    Returns
    -------
    list of InputRecord
    """
    out = [InputRecord.of(role_prefix + "structure", loaded.structure_path)] if loaded.structure_path else []
    if loaded.coords_path:
        out.append(InputRecord.of(role_prefix + "coordinates", loaded.coords_path))
    out += [InputRecord.of(role_prefix + "parameters", p) for p in loaded.param_paths]
    return out


# ------------------------------------------------------------------------------------------------
# writing
# ------------------------------------------------------------------------------------------------

def _column(group, name: str, values, dtype=None) -> None:
    arr = np.ascontiguousarray(values, dtype=dtype)
    if arr.dtype == object:
        group.create_dataset(name, data=arr.astype(str).astype(object), dtype=_h5py().string_dtype("utf-8"))
        return
    if len(arr) >= 1024 and arr.dtype.kind == "f" and arr.ndim <= 2:
        _float_column(group, name, arr)
    elif len(arr) >= 1024:
        group.create_dataset(name, data=arr, chunks=(min(CHUNK_ROWS, len(arr)),) + arr.shape[1:], **_COMPRESSION)
    else:
        group.create_dataset(name, data=arr)


def _float_column(group, name: str, arr: np.ndarray) -> None:
    """A float column (or a (rows, k) table of them, one chunk per column stretch).

    Only the chunks holding a non-zero value are written: the others are never stored, and HDF5
    reads them as the dataset's fill value, 0 (a bonded or solvation term over every residue pair
    is mostly such chunks).  A column's chunks are compressed when their values are mostly zero
    (:data:`MOSTLY_ZERO`), stored plainly otherwise (compressing dense energies costs more time
    than it saves space); a table's are stored plainly (decompressing its column chunks took 4x
    longer than reading them plainly, for a third of the size: 1.43M x 11 trajectory means, 0.75 s
    against 0.2 s)."""
    rows = min(CHUNK_ROWS, len(arr))
    table = arr.reshape(len(arr), -1)
    pieces = [(lo, c) for c in range(table.shape[1]) for lo in range(0, len(arr), rows)
              if np.any(table[lo:lo + rows, c])]
    written = sum(min(rows, len(arr) - lo) for lo, _ in pieces)
    nonzero = sum(np.count_nonzero(table[lo:lo + rows, c]) for lo, c in pieces)
    compress = _COMPRESSION if arr.ndim == 1 and written and nonzero <= MOSTLY_ZERO * written else {}
    chunks = (rows,) if arr.ndim == 1 else (rows, 1)
    ds = group.create_dataset(name, shape=arr.shape, dtype=arr.dtype, chunks=chunks, fillvalue=0.0, **compress)
    if len(pieces) == table.shape[1] * -(-len(arr) // rows):
        ds[...] = arr  # every chunk holds a value: one write
        return
    for lo, c in pieces:
        if arr.ndim == 1:
            ds[lo:lo + rows] = arr[lo:lo + rows]
        else:
            ds[lo:lo + rows, c] = arr[lo:lo + rows, c]


def _write_header(fh, kind: str, inputs, settings: EnergySettings | None) -> None:
    fh.attrs.update({"format": FORMAT, "schema_version": SCHEMA_VERSION, "kind": kind,
                     "program": header.PROGRAM, "version": PROGRAM_VERSION})
    g = fh.create_group("inputs")
    for k, rec in enumerate(inputs):
        r = g.create_group(f"{k:03d}")
        r.attrs.update({"role": rec.role, "path": rec.path, "size": int(rec.size), "sha256": rec.sha256})
    s = fh.create_group("settings")
    if settings is not None:
        # JSON text of the settings: one attribute a field would need None handled per type
        s.attrs["json"] = json.dumps(settings.as_dict())


def _write_residues(group, residues: ResidueTable) -> None:
    g = group.create_group("residues")
    _column(g, "class", residue_classes(residues))
    _column(g, "chain", _strings(residues.chain))
    _column(g, "resid", np.asarray(residues.resid, np.int64))
    _column(g, "icode", _strings(residues.icode))
    _column(g, "resname", _strings(residues.resname))


def _write_pairs(group, rp, name: str = "pairs") -> None:
    g = group.create_group(name)
    g.attrs["n_residues"] = int(rp.n_residues)
    _column(g, "i", np.asarray(rp.pair_i, np.int32))
    _column(g, "j", np.asarray(rp.pair_j, np.int32))
    for t in TERMS:
        _column(g, t, np.asarray(rp.values[t], np.float64))
    _column(g, "total", np.asarray(rp.total, np.float64))
    _column(g, "min_heavy_distance", np.asarray(rp.min_heavy_distance, np.float64))


def _write_totals(group, totals: dict) -> None:
    g = group.create_group("totals")
    for k in COLUMNS:
        g.attrs[k] = float(totals.get(k, 0.0))


def _check_finite_totals(totals: dict, what: str) -> None:
    bad = [k for k in COLUMNS if not np.isfinite(float(totals.get(k, 0.0)))]
    if bad:
        raise EnergyError(f"{what}: non-finite total(s) {', '.join(bad)}; nothing written")


def _atomic_h5(path, write) -> None:
    """Write through a temporary file in the target folder, renamed into place on success."""
    with temporary_path(path) as tmp:
        with _h5py().File(tmp, "w") as fh:
            write(fh)


def write_scan_result(path, loaded, result) -> None:
    """Write one structure's result (``tessera scan --out``).

    Parameters
    ----------
    path : str or os.PathLike
        Output ``.h5`` file (replaced atomically).
    loaded : LoadedSystem
        The system that was computed (residues, input files).
    result : EnergyResult
        Its result (totals, residue-pair table, settings).

    Returns
    -------
    None
    """
    _check_finite_totals(result.totals, os.fspath(path))

    def write(fh):
        _write_header(fh, "scan", input_records(loaded), result.settings)
        fh.attrs.update({"n_atoms": int(loaded.system.n_atoms), "frame": int(loaded.frame.index),
                         "periodic": bool(result.periodic), "force_field": str(loaded.system.force_field)})
        _write_residues(fh, loaded.system.residues)
        _write_totals(fh, result.totals)
        _write_pairs(fh, result.residue_pairs)
    _atomic_h5(path, write)


def write_comparison_result(path, first, second, comparison, settings) -> None:
    """Write a comparison of two structures (``tessera compare --out``).

    Parameters
    ----------
    path : str or os.PathLike
        Output ``.h5`` file.
    first, second : (LoadedSystem, EnergyResult) tuples
        The two structures and their results.
    comparison : energy.analysis.compare.Comparison
        Second minus first over the matched residues.
    settings : EnergySettings
        The settings both were computed with.

    Returns
    -------
    None
    """
    for (loaded, result), what in ((first, "first"), (second, "second")):
        _check_finite_totals(result.totals, f"{os.fspath(path)} ({what})")

    def write(fh):
        _write_header(fh, "comparison", input_records(first[0], "first ") + input_records(second[0], "second "),
                      settings)
        for (loaded, result), name in ((first, "first"), (second, "second")):
            g = fh.create_group(name)
            _write_residues(g, loaded.system.residues)
            _write_totals(g, result.totals)
            _write_pairs(g, result.residue_pairs)
        d = fh.create_group("difference")
        m = comparison.match
        _column(d, "labels", _strings(comparison.labels))
        _column(d, "chains", _strings(comparison.chains))
        for name in ("first", "second", "unmatched_first", "unmatched_second"):
            _column(d, f"match_{name}", np.asarray(getattr(m, name), np.int64))
        _column(d, "match_mutated", np.asarray(m.mutated, np.bool_))
        _column(d, "unmatched_first_labels", _strings(comparison.unmatched_first_labels))
        _column(d, "unmatched_second_labels", _strings(comparison.unmatched_second_labels))
        _write_pairs(d, comparison.difference)
        for side in ("first", "second"):
            g = d.create_group(f"{side}_values")
            for k, v in getattr(comparison, f"{side}_values").items():
                _column(g, k, np.asarray(v, np.float64))
        _column(d, "first_distance", np.asarray(comparison.first_distance, np.float64))
    _atomic_h5(path, write)


def write_trajectory_result(path, result, loaded=None) -> None:
    """Write a trajectory result (``tessera scan --frames ... --out``).

    Parameters
    ----------
    path : str or os.PathLike
        Output ``.h5`` file.
    result : energy.analysis.trajectory.TrajectoryResult
        Frames done, per-frame records and the statistics over them.
    loaded : LoadedSystem, optional
        The system (for the input records); the request's paths are recorded otherwise.

    Returns
    -------
    None
    """
    req = result.request
    totals = result.per_frame_totals()
    bad = [k for k, v in totals.items() if not np.all(np.isfinite(v))]
    if bad:
        raise EnergyError(f"{os.fspath(path)}: non-finite per-frame total(s) {', '.join(bad)}; nothing written")

    def write(fh):
        inputs = input_records(loaded) if loaded is not None else (
            [InputRecord.of("structure", req.structure)]
            + ([InputRecord.of("coordinates", req.coords)] if req.coords else [])
            + [InputRecord.of("parameters", p) for p in req.params])
        _write_header(fh, "trajectory", inputs, req.settings)
        fh.attrs["complete"] = bool(result.complete)
        _write_residues(fh, result.system.residues)
        f = fh.create_group("frames")
        _column(f, "index", np.asarray(result.frames, np.int64))
        _column(f, "requested", np.asarray(result.requested, np.int64))
        for k, v in totals.items():
            _column(f, k, np.asarray(v, np.float64))
        st = result.stats
        g = fh.create_group("statistics")
        g.attrs.update({"n_residues": int(st.n_residues), "threshold": float(st.threshold),
                        "n_frames": int(st.n), "columns": json.dumps(list(COLUMNS))})
        _column(g, "i", np.asarray(st.pair_i, np.int32))
        _column(g, "j", np.asarray(st.pair_j, np.int32))
        _column(g, "mean", np.asarray(st.mean, np.float64))
        _column(g, "std", np.asarray(st.std(), np.float64))
        _column(g, "persistence", np.asarray(st.persistence(), np.float64))
        _column(g, "present", np.asarray(st.present, np.int64))
        _column(g, "min_distance", np.asarray(st.min_distance, np.float64))
        s = fh.create_group("pair_series")
        for k, (i, j) in enumerate(req.pairs):
            p = s.create_group(f"{int(i)}-{int(j)}")
            for c, v in result.pair_series(k).items():
                _column(p, c, np.asarray(v, np.float64))
    _atomic_h5(path, write)


# ------------------------------------------------------------------------------------------------
# reading
# ------------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class PairTable:
    """A residue-pair table read from a file: the engine's
    :class:`~energy.decomposition.residue_pairs.ResiduePairEnergies` and the stored ``total``."""

    residue_pairs: object
    stored_total: np.ndarray


@dataclass(frozen=True)
class StoredResult:
    """What a result file holds, as the engine's own objects where there are some.

    ``kind``; ``inputs`` (list of :class:`InputRecord`); ``settings``
    (:class:`EnergySettings` or None); ``attrs`` (root attributes).  Scan: ``residues``,
    ``totals``, ``residue_pairs``.  Trajectory: also ``frames`` (dict of per-frame arrays) and
    ``statistics`` (dict of arrays).  Comparison: ``sides`` (``first``/``second`` -> dict with
    ``residues``, ``totals``, ``residue_pairs``) and ``comparison`` (the engine's
    :class:`~energy.analysis.compare.Comparison`).  Overlaps and alanine scans: ``residues``
    and ``overlaps`` or ``hotspots`` (dict of that group's arrays and attributes,
    :mod:`energy.output.overlap_result`, :mod:`energy.output.hotspot_result`).
    """

    path: str
    kind: str
    attrs: dict
    inputs: list
    settings: EnergySettings | None
    residues: ResidueTable | None = None
    totals: dict = field(default_factory=dict)
    residue_pairs: object = None
    frames: dict = field(default_factory=dict)
    statistics: dict = field(default_factory=dict)
    sides: dict = field(default_factory=dict)
    comparison: object = None
    overlaps: dict = field(default_factory=dict)
    hotspots: dict = field(default_factory=dict)

    def changed_inputs(self) -> list[str]:
        """Why each recorded input file no longer matches (missing or changed); [] if all do.

        Returns
        -------
        list of str
            One message per input that no longer matches (:meth:`InputRecord.changed`).
        """
        return [msg for rec in self.inputs if (msg := rec.changed()) is not None]

    def pairs_frame(self):
        """The residue-pair table as a pandas DataFrame.

        For a comparison, the difference table (second minus first) over the matched residues.

        Returns
        -------
        pandas.DataFrame
            Columns ``i``, ``j`` (0-based residue indices, i <= j), ``label_i``, ``label_j``, one
            column per term, ``total`` (kcal/mol) and ``min_heavy_distance`` (A); one row per pair.
        """
        import pandas as pd
        rp = self.residue_pairs if self.residue_pairs is not None else self.comparison.difference
        labels = (np.array([self.residues.label(k) for k in range(len(self.residues))], dtype=object)
                  if self.residues is not None else np.asarray(self.comparison.labels, dtype=object))
        cols = {"i": rp.pair_i, "j": rp.pair_j, "label_i": labels[rp.pair_i], "label_j": labels[rp.pair_j]}
        cols.update({t: rp.values[t] for t in TERMS})
        cols["total"] = rp.total
        cols["min_heavy_distance"] = rp.min_heavy_distance
        return pd.DataFrame(cols)


def _read_array(ds, path):
    if ds.dtype.kind == "O" and _h5py().check_string_dtype(ds.dtype) is None:
        raise ResultFileError(path, f"dataset {ds.name} holds Python objects; refused (nothing is unpickled)")
    if ds.dtype.kind == "V":
        raise ResultFileError(path, f"dataset {ds.name} has an unexpected compound type")
    if _h5py().check_string_dtype(ds.dtype) is not None:
        return np.array([v.decode("utf-8") if isinstance(v, bytes) else str(v) for v in ds[()]], dtype=object)
    return np.asarray(ds[()])


def _group_arrays(group, path) -> dict:
    return {k: _read_array(v, path) for k, v in group.items() if not hasattr(v, "keys")}


def _read_residues(group, path) -> ResidueTable:
    a = _group_arrays(group["residues"], path)
    return ResidueTable(a["chain"], a["resid"], a["resname"], a["icode"])


def _read_pairs(group, path):
    a = _group_arrays(group, path)
    n = int(group.attrs["n_residues"])
    values = {}
    for t in TERMS:
        v = a.get(t, np.zeros(len(a["i"])))
        v = np.ascontiguousarray(v, np.float64)
        v.flags.writeable = False
        values[t] = v
    if len(a["i"]) and (a["i"].min() < 0 or a["j"].max() >= n or np.any(a["i"] > a["j"])):
        raise ResultFileError(path, f"{group.name}: residue indices outside 0..{n - 1} or not i <= j")
    return ResiduePairEnergies(n, a["i"].astype(np.intp), a["j"].astype(np.intp), values,
                               np.asarray(a["min_heavy_distance"], np.float64))


def _read_totals(group) -> dict:
    return {k: float(v) for k, v in group["totals"].attrs.items()}


def read_result(path) -> StoredResult:
    """Read a result file written by this module.

    Parameters
    ----------
    path : str or os.PathLike
        The ``.h5`` file.

    Returns
    -------
    StoredResult

    Raises
    ------
    ResultFileError
        Not an HDF5 file, truncated, not a Tessera result, a newer schema, missing parts, or a
        dataset of Python objects (never unpickled).
    """
    path = os.fspath(path)
    h5py = _h5py()
    try:
        fh = h5py.File(path, "r")
    except FileNotFoundError:
        raise ResultFileError(path, "file not found") from None
    except OSError as exc:
        reason = " ".join(str(exc).split())[:160]
        raise ResultFileError(path, f"not a readable HDF5 file (truncated or another format: {reason})") from None
    try:
        with fh:
            return _read_open(fh, path)
    except ResultFileError:
        raise
    except (KeyError, ValueError, OSError, TypeError) as exc:
        reason = " ".join(str(exc).split())[:160]
        raise ResultFileError(path, f"damaged or incomplete result file ({reason})") from None


def _read_open(fh, path) -> StoredResult:
    attrs = {k: (v.item() if hasattr(v, "item") else v) for k, v in fh.attrs.items()}
    if attrs.get("format") != FORMAT:
        raise ResultFileError(path, "an HDF5 file, but not a Tessera result (no format = tessera-result)")
    version = int(attrs.get("schema_version", -1))
    if version > SCHEMA_VERSION:
        raise ResultFileError(path, f"written with result schema {version}; this Tessera reads schema "
                                    f"{SCHEMA_VERSION} and older: update Tessera")
    if version < 1:
        raise ResultFileError(path, f"unknown result schema {version}")
    inputs = [InputRecord(str(g.attrs["role"]), str(g.attrs["path"]), int(g.attrs["size"]), str(g.attrs["sha256"]))
              for _, g in sorted(fh["inputs"].items())]
    text = fh["settings"].attrs.get("json")
    settings = EnergySettings(**json.loads(text)) if text else None
    kind = str(attrs.get("kind"))
    common = dict(path=path, kind=kind, attrs=attrs, inputs=inputs, settings=settings)
    if kind == "scan":
        return StoredResult(**common, residues=_read_residues(fh, path), totals=_read_totals(fh),
                            residue_pairs=_read_pairs(fh["pairs"], path))
    if kind == "trajectory":
        stats = _group_arrays(fh["statistics"], path)
        stats.update({k: (v.item() if hasattr(v, "item") else v) for k, v in fh["statistics"].attrs.items()})
        series = {name: _group_arrays(g, path) for name, g in fh["pair_series"].items()}
        stats["pair_series"] = series
        return StoredResult(**common, residues=_read_residues(fh, path),
                            frames=_group_arrays(fh["frames"], path), statistics=stats)
    if kind == "comparison":
        sides = {name: {"residues": _read_residues(fh[name], path), "totals": _read_totals(fh[name]),
                        "residue_pairs": _read_pairs(fh[name]["pairs"], path)} for name in ("first", "second")}
        d = fh["difference"]
        a = _group_arrays(d, path)
        match = ResidueMatch(a["match_first"].astype(np.intp), a["match_second"].astype(np.intp),
                             a["match_mutated"].astype(bool), a["match_unmatched_first"].astype(np.intp),
                             a["match_unmatched_second"].astype(np.intp))
        comparison = Comparison(
            match=match, labels=list(a["labels"]), chains=list(a["chains"]),
            difference=_read_pairs(d["pairs"], path),
            first_values=_group_arrays(d["first_values"], path),
            second_values=_group_arrays(d["second_values"], path),
            first_distance=a["first_distance"], totals_first=sides["first"]["totals"],
            totals_second=sides["second"]["totals"],
            unmatched_first_labels=list(a["unmatched_first_labels"]),
            unmatched_second_labels=list(a["unmatched_second_labels"]))
        return StoredResult(**common, sides=sides, comparison=comparison)
    if kind in ("overlaps", "hotspots"):   # one table of rows with its attributes
        g = fh[kind]
        table = _group_arrays(g, path)
        table.update({k: (v.item() if hasattr(v, "item") else v) for k, v in g.attrs.items()})
        return StoredResult(**common, residues=_read_residues(fh, path), **{kind: table})
    raise ResultFileError(path, f"unknown result kind {kind!r}")
