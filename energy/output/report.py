"""Results as JSON, CSV tables and a human summary; atomic file writing.

Every file is written to a temporary file in the target folder and renamed into place, so a
failure never leaves a half-written file.
"""
from __future__ import annotations

import csv
import io
import json
import os

import numpy as np

from energy.errors import NonFiniteEnergyError
from energy.output.blocked import blocked_pair_csv, blocked_residue_csv
from energy.output.files import atomic_open, atomic_write_text
from energy.output.header import document_header
from energy.terms.registry import TERMS, TermNames

UNITS = {"energy": "kcal/mol", "distance": "angstrom"}


def require_finite(system, result) -> None:
    """Refuse to write a result holding a non-finite energy.

    A total, a residue pair's term or the unlisted sums; the pipeline refuses them first
    (:mod:`energy.decomposition.finiteness`), this keeps every writer honest on its own.

    Parameters
    ----------
    system : MolecularSystem or None
        Names the residues in messages.
    result : EnergyResult
        Energies, kcal/mol.

    Raises
    ------
    NonFiniteEnergyError
        Naming the term and the first residue pair.
    """
    for term in (*TERMS, "total"):
        if not np.isfinite(float(result.totals[term])):
            raise NonFiniteEnergyError(term, "the total; nothing was written")
    rp = result.residue_pairs
    for term in TERMS:
        bad = np.flatnonzero(~np.isfinite(rp.values[term]))
        if len(bad):
            k = int(bad[0])
            label = system.residues.label if system is not None else lambda i: f"#{int(i)}"
            raise NonFiniteEnergyError(term, f"residue pair {label(rp.pair_i[k])} - {label(rp.pair_j[k])}; "
                                             "nothing was written")
    for key in ("coulomb", "lj"):
        if result.unlisted and not np.isfinite(result.unlisted[key]):
            raise NonFiniteEnergyError(key, "the unlisted residue pairs; nothing was written")


def residue_records(system) -> list[dict]:
    """The residue table as JSON-ready records.

    Parameters
    ----------
    system : MolecularSystem
        The system.

    Returns
    -------
    list of dict
        One per residue: ``index`` (0-based), ``chain``, ``resid`` (int), ``icode``, ``resname``.
    """
    r = system.residues
    classes = system.residue_classes
    return [{"index": i, "chain": str(r.chain[i]), "resid": int(r.resid[i]), "icode": str(r.icode[i]),
             "class": str(classes[i]),
             "resname": str(r.resname[i])} for i in range(len(r))]


def pair_columns(result, include_zero: bool = False) -> dict:
    """Residue-pair columns (numpy arrays) for the rows with a nonzero entry.

    ``i``, ``j``, every term, ``total`` and ``min_heavy_distance`` (A; inf where no heavy-atom pair
    was examined).

    Parameters
    ----------
    result : EnergyResult
        An evaluation (its ``residue_pairs``).
    include_zero : bool, optional
        Keep the rows whose every term is 0 too (default False).

    Returns
    -------
    dict of str to (n_rows,) ndarray
        ``i``, ``j`` (integer residue indices, i <= j), each term and ``total`` (float64, kcal/mol),
        ``min_heavy_distance`` (float64, A).
    """
    return residue_pair_columns(result.residue_pairs, include_zero)


def residue_pair_columns(rp, include_zero: bool = False) -> dict:
    """:func:`pair_columns` of a residue-pair table ``rp`` (ResiduePairEnergies).

    Parameters
    ----------
    rp : ResiduePairEnergies
        The table.
    include_zero : bool, optional
        Keep the rows whose every term is 0 too (default False).

    Returns
    -------
    dict of str to (n_rows,) ndarray
        As :func:`pair_columns`: ``i``, ``j``, each term and ``total`` (kcal/mol),
        ``min_heavy_distance`` (A).
    """
    cols = {t: rp.values[t] for t in TERMS}
    if include_zero:
        rows = slice(None)
    else:
        nonzero = np.zeros(len(rp), bool)
        for t in TERMS:
            nonzero |= cols[t] != 0.0
        rows = np.flatnonzero(nonzero)
    out = {"i": rp.pair_i[rows], "j": rp.pair_j[rows], "row": np.arange(len(rp))[rows]}
    out.update({t: cols[t][rows] for t in TERMS})
    out["total"] = rp.total[rows]
    out["min_heavy_distance"] = rp.min_heavy_distance[rows]
    return out


_PAIR_KEYS = TermNames(prefix=("i", "j"), extra=("total", "min_heavy_distance"))
_STREAM_ROWS = 20_000


def _chunk_template(cols, sl) -> tuple[str, list]:
    """Row template for one chunk with the columns that are +0.0 on every row written in as
    literals (bonded terms of solvent pairs), and the keys still to substitute.  The text is the
    same as formatting every value (repr(0.0) == "0.0"); it is just less work."""
    parts, keys = [], []
    for k in _PAIR_KEYS:
        fmt = "%d" if k in ("i", "j") else ("%s" if k == "min_heavy_distance" else "%r")
        if fmt == "%r":
            col = cols[k][sl]
            if not np.any(col) and not np.any(np.signbit(col)):
                parts.append(f'"{k}": 0.0')
                continue
        parts.append(f'"{k}": {fmt}')
        keys.append(k)
    return "{" + ", ".join(parts) + "}", keys


def _pair_json_chunks(cols):
    n = len(cols["i"])
    for start in range(0, n, _STREAM_ROWS):
        sl = slice(start, start + _STREAM_ROWS)
        template, keys = _chunk_template(cols, sl)
        columns = []
        for k in keys:
            if k == "min_heavy_distance":
                d = cols[k][sl]
                dist = np.where(np.isfinite(d), d, np.nan).tolist()
                columns.append(["null" if x != x else repr(x) for x in dist])
            else:
                columns.append(cols[k][sl].tolist())
        yield ",\n  ".join(template % row for row in zip(*columns))


_PAIRS_PLACEHOLDER = "@@tessera-pairs@@"


def scan_document(loaded, result, selection=None, extra_timings=None) -> dict:
    """The JSON document of ``tessera scan``.

    ``pairs`` is filled in by :func:`write_scan_json` (streamed, so that millions of pairs never
    sit in memory as Python objects); here it holds a placeholder.

    Parameters
    ----------
    loaded : LoadedSystem
        The loaded system (:func:`energy.io.loaders.load_system`): system, frame, paths, timings.
    result : EnergyResult
        Its evaluation.
    selection : dict or None, optional
        The group interaction (group A vs group B) (:func:`energy.decomposition.atom_pairs.selection_interaction`).
    extra_timings : dict or None, optional
        More wall times to record, s.

    Returns
    -------
    dict
        ``units`` (kcal/mol, angstrom), inputs, settings, ``totals`` (kcal/mol), ``residues``,
        ``pairs`` (placeholder), ``timings`` (s), ``group_interaction`` when given
        (called ``selection`` in earlier documents; :func:`energy.output.header.group_interaction`
        reads either).
    """
    system = loaded.system
    timings = {"read": loaded.timings.get("read", 0.0),
               "parameterise": loaded.timings.get("parameterise", 0.0),
               "compute": result.timings["compute"]}
    timings.update({f"compute_{k}": v for k, v in result.timings.items() if k != "compute"})
    timings.update(extra_timings or {})
    doc = {
        **document_header(
            "scan",
            {"structure": loaded.structure_path, "coordinates": loaded.coords_path or None,
             "parameters": list(loaded.param_paths), "frame": loaded.frame.index},
            {**result.settings.as_dict(), "periodic": result.periodic, "cell_note": result.cell_note or None}),
        "units": UNITS,
        "force_field": system.force_field,
        "n_atoms": system.n_atoms,
        "n_residues": system.n_residues,
        "totals": {k: float(result.totals[k]) for k in (*TERMS, "total")},
        "n_atom_pairs_within_cutoff": result.n_atom_pairs,
        "unlisted_pairs": result.unlisted,
        "preparation": None if getattr(loaded, "preparation", None) is None else loaded.preparation.as_dict(),
        "residues": residue_records(system),
        "pairs": _PAIRS_PLACEHOLDER,
        "timings": timings,
    }
    if selection is not None:
        doc["group_interaction"] = selection
    return doc


def residue_table_csv(system, result) -> str:
    """Per-residue totals as CSV text.

    Parameters
    ----------
    system : MolecularSystem
        The system (residue labels).
    result : EnergyResult
        Its evaluation.

    Returns
    -------
    str
        Columns ``index``, ``chain``, ``resid``, ``icode``, ``resname``, each term and ``total``
        (kcal/mol, six decimals; half of each off-diagonal pair entry, all of the diagonal).
    """
    rp = result.residue_pairs
    per = {t: rp.per_residue(t) for t in TERMS}
    per_total = rp.per_residue("total")
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["index", "chain", "resid", "icode", "resname", "class", *TERMS, "total"])
    r = system.residues
    classes = system.residue_classes
    for i in range(system.n_residues):
        w.writerow([i, r.chain[i], int(r.resid[i]), r.icode[i], r.resname[i], classes[i],
                    *(f"{per[t][i]:.6f}" for t in TERMS), f"{per_total[i]:.6f}"])
    return out.getvalue()


def pair_table_csv(system, result) -> str:
    """CSV text of every residue pair with an entry (see :func:`pair_rows_csv`).

    Parameters
    ----------
    system : MolecularSystem
        The system (residue labels).
    result : EnergyResult
        Its evaluation.

    Returns
    -------
    str
        Columns ``i``, ``j``, ``label_i``, ``label_j``, each term and ``total`` (kcal/mol, six
        decimals) and ``min_heavy_distance`` (A, three decimals; empty where none was examined).
    """
    labels = [system.residues.label(i) for i in range(system.n_residues)]
    return _pair_csv(labels, pair_columns(result))


def pair_rows_csv(labels, residue_pairs) -> str:
    """CSV text of a residue-pair table with the given residue labels (e.g. a stored result's).

    Parameters
    ----------
    labels : sequence of str
        (n_residues,) residue labels.
    residue_pairs : ResiduePairEnergies
        The table.

    Returns
    -------
    str
        Header ``i, j, label_i, label_j, <terms>, total, min_heavy_distance``; energies
        kcal/mol with 6 decimals, distances A with 3 (empty where none was examined).
    """
    return _pair_csv(list(labels), residue_pair_columns(residue_pairs))


def _pair_csv(labels, cols) -> str:
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["i", "j", "label_i", "label_j", *TERMS, "total", "min_heavy_distance"])
    numbers = [np.char.mod("%.6f", cols[t]) for t in (*TERMS, "total")]
    d = cols["min_heavy_distance"]
    dist = np.where(np.isfinite(d), np.char.mod("%.3f", np.where(np.isfinite(d), d, 0.0)), "")
    for k, (i, j) in enumerate(zip(cols["i"].tolist(), cols["j"].tolist())):
        w.writerow([i, j, labels[i], labels[j], *(col[k] for col in numbers), dist[k]])
    return out.getvalue()


def _first_non_finite(value, where="document"):
    """The key path of the first non-finite float in a JSON-like ``value``, or None."""
    if isinstance(value, float):
        return None if np.isfinite(value) else where
    if isinstance(value, dict):
        items = value.items()
    elif isinstance(value, (list, tuple)):
        items = enumerate(value)
    else:
        return None
    for key, item in items:
        found = _first_non_finite(item, f"{where}.{key}")
        if found:
            return found
    return None


def write_json(path, doc: dict) -> None:
    """Write ``doc`` as JSON, atomically.

    Parameters
    ----------
    path : str or os.PathLike
        The file to write.
    doc : dict
        The document.

    Raises
    ------
    NonFiniteEnergyError
        A non-finite number, refused before anything is written (naming its key).
    """
    where = _first_non_finite(doc)
    if where is not None:
        raise NonFiniteEnergyError(where.split(".")[-1], f"{where} in the JSON document; nothing was written")
    atomic_write_text(path, json.dumps(doc, indent=1, allow_nan=False) + "\n")


def write_scan_json(path, doc: dict, result, rows=None) -> None:
    """Write a :func:`scan_document` with its residue-pair rows streamed in, atomically.

    Parameters
    ----------
    path : str or os.PathLike
        The file to write.
    doc : dict
        The document of :func:`scan_document` (with its ``pairs`` placeholder).
    result : EnergyResult
        The evaluation whose pairs (:func:`pair_columns`) are streamed in.
    rows : (n,) intp array or None, optional
        Only these rows of the residue-pair table (e.g. the solute rows of a run with solvent
        blocks, :func:`energy.output.blocked.solute_rows`); all rows when None.
    """
    require_finite(None, result)
    text = json.dumps(doc, indent=1, allow_nan=False)
    head, tail = text.split(json.dumps(_PAIRS_PLACEHOLDER), 1)
    with atomic_open(path, "w") as fh:
        fh.write(head + "[\n  ")
        first = True
        cols = pair_columns(result)
        if rows is not None:
            keep = np.isin(cols["row"], rows)
            cols = {k: v[keep] for k, v in cols.items()}
        for chunk in _pair_json_chunks(cols):
            if not first:
                fh.write(",\n  ")
            fh.write(chunk)
            first = False
        fh.write("\n ]" + tail + "\n")


def write_csv_dir(folder, system, result, blocked=None) -> list[str]:
    """Write ``residues.csv`` and ``residue_pairs.csv`` into ``folder`` (created if needed).

    Parameters
    ----------
    folder : str or os.PathLike
        Output folder.
    system : MolecularSystem
        The system (residue labels).
    result : EnergyResult
        Its evaluation.
    blocked : BlockedPairs or None, optional
        Solvent as blocks: the residue table then lists solute residues and blocks, the pair table
        solute pairs and block entries (:func:`energy.output.blocked.blocked_residue_csv`,
        :func:`energy.output.blocked.blocked_pair_csv`).

    Returns
    -------
    list of str
        The two paths written.
    """
    require_finite(system, result)
    folder = os.fspath(folder)
    os.makedirs(folder, exist_ok=True)
    paths = [os.path.join(folder, "residues.csv"), os.path.join(folder, "residue_pairs.csv")]
    if blocked is None:
        atomic_write_text(paths[0], residue_table_csv(system, result))
        atomic_write_text(paths[1], pair_table_csv(system, result))
    else:
        atomic_write_text(paths[0], blocked_residue_csv(system, blocked))
        atomic_write_text(paths[1], blocked_pair_csv(blocked))
    return paths


def summary_text(loaded, result, top: int = 8, selection=None, blocked=None) -> str:
    """Human summary: system, per-term totals, strongest repulsive and attractive residue pairs.

    Parameters
    ----------
    loaded : LoadedSystem
        The loaded system (:func:`energy.io.loaders.load_system`): system, frame, paths, timings.
    result : EnergyResult
        Its evaluation.
    top : int, optional
        Residue pairs listed in each direction (default 8).
    selection : dict or None, optional
        The group interaction (group A vs group B) to report
        (:func:`energy.decomposition.atom_pairs.selection_interaction`).
    blocked : BlockedPairs or None, optional
        Solvent as blocks (:func:`energy.decomposition.blocks.block_residue_pairs`): pairs are
        listed over solute residues and blocks.

    Returns
    -------
    str
        The summary (kcal/mol, s), lines joined by newlines.
    """
    system = loaded.system
    lines = [f"{loaded.structure_path}: {system.n_atoms} atoms, {system.n_residues} residues; "
             f"{system.force_field}",
             f"settings: {result.settings.describe()}"
             + ("; periodic (minimum image)" if result.periodic else "")]
    if result.cell_note:
        lines.append(f"note: {result.cell_note}")
    preparation = getattr(loaded, "preparation", None)
    if preparation is not None:
        lines += [f"preparation: {line}" for line in preparation.summary_lines()]
    lines += ["", "per-term totals (kcal/mol):"]
    width = max(len(t) for t in (*TERMS, "total")) + 1
    for t in (*TERMS, "total"):
        lines.append(f"  {t:<{width}}{result.totals[t]:>16.4f}")
    rp = result.residue_pairs if blocked is None else blocked.pairs
    inter = rp.pair_i != rp.pair_j
    total = rp.total
    idx = np.flatnonzero(inter)
    if blocked is not None:
        lines += ["", "solvent as blocks: " + ", ".join(blocked.labels[blocked.n_solute:])
                  + " (--every-residue lists every residue)"]
    if len(idx):
        order = idx[np.argsort(total[idx])]
        label = system.residues.label if blocked is None else (lambda k: blocked.labels[k])
        lines += ["", "most repulsive residue pairs (kcal/mol; bonded neighbours included):"]
        for k in order[::-1][:top]:
            if total[k] <= 0:
                break
            lines.append(f"  {label(rp.pair_i[k]):>14} - {label(rp.pair_j[k]):<14}{total[k]:>14.3f}")
        lines += ["", "most attractive residue pairs (kcal/mol):"]
        for k in order[:top]:
            if total[k] >= 0:
                break
            lines.append(f"  {label(rp.pair_i[k]):>14} - {label(rp.pair_j[k]):<14}{total[k]:>14.3f}")
    if selection is not None:
        lines += ["", f"group interaction {selection['a']!r} vs {selection['b']!r}: "
                  f"Coulomb {selection['coulomb']:.4f}, LJ {selection['lj']:.4f}, "
                  f"total {selection['total']:.4f} kcal/mol ({selection['n_pairs']} atom pairs)"]
    if result.unlisted:
        u = result.unlisted
        lines += ["", f"{u['n_pairs']:,} residue pairs below {u['below']:g} kcal/mol are not listed "
                  f"(no cutoff, large system); they add Coulomb {u['coulomb']:.4f} and LJ "
                  f"{u['lj']:.4f} kcal/mol, included in the totals"]
    lines += ["", "timings (s): " + ", ".join(f"{k} {v:.3f}" for k, v in
                                           {**loaded.timings, "compute": result.timings['compute']}.items())]
    return "\n".join(lines)
