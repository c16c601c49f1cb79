"""A comparison of two structures as files and text: the difference rows, the CSV tables,
the JSON document of ``tessera compare`` and its summary."""
from __future__ import annotations

import csv
import io
import math
from typing import TYPE_CHECKING

import numpy as np

from energy.output.header import document_header
from energy.terms.registry import TERMS

if TYPE_CHECKING:
    from energy.analysis.compare import Comparison


def difference_rows(comparison: Comparison, include_zero: bool = False) -> list[dict]:
    """Pair rows sorted by the size of the change in total (largest first).

    Parameters
    ----------
    comparison : Comparison
        Result of :func:`energy.analysis.compare.compare_results` (second minus first).
    include_zero : bool, optional
        Also list pairs whose total is 0 in both structures and unchanged (default False).

    Returns
    -------
    list of dict
        ``i``, ``j`` (matched residue indices), ``label_i``, ``label_j``, ``first_total``,
        ``second_total``, ``change_total``, ``change_<term>`` (float, kcal/mol) and
        ``second_min_heavy_distance`` (float, A, or None when none was examined).
    """
    d = comparison.difference
    change = d.total
    present = np.ones(len(d), bool) if include_zero else (
        (comparison.first_values["total"] != 0) | (comparison.second_values["total"] != 0) | (change != 0))
    order = np.flatnonzero(present)
    order = order[np.argsort(-np.abs(change[order]), kind="stable")]
    rows = []
    for k in order:
        row = {"i": int(d.pair_i[k]), "j": int(d.pair_j[k]),
               "label_i": comparison.labels[d.pair_i[k]], "label_j": comparison.labels[d.pair_j[k]],
               "first_total": float(comparison.first_values["total"][k]),
               "second_total": float(comparison.second_values["total"][k]),
               "change_total": float(change[k])}
        for t in TERMS:
            row[f"change_{t}"] = float(d.values[t][k])
        dist = float(d.min_heavy_distance[k])
        row["second_min_heavy_distance"] = dist if math.isfinite(dist) else None
        rows.append(row)
    return rows


def difference_csv(comparison: Comparison) -> str:
    """The changed residue pairs (:func:`difference_rows`) as CSV text.

    Energies in kcal/mol and distances in A with six decimals; an unknown distance is empty.

    Parameters
    ----------
    comparison : Comparison
        Result of :func:`energy.analysis.compare.compare_results` (second minus first).

    Returns
    -------
    str
        Header line, then one line per pair.
    """
    out = io.StringIO()
    w = csv.writer(out)
    cols = ["i", "j", "label_i", "label_j", "first_total", "second_total", "change_total",
            *(f"change_{t}" for t in TERMS), "second_min_heavy_distance"]
    w.writerow(cols)
    for row in difference_rows(comparison):
        w.writerow([row[c] if c in ("i", "j", "label_i", "label_j") else
                    ("" if row[c] is None else f"{row[c]:.6f}") for c in cols])
    return out.getvalue()


def residue_difference_csv(comparison: Comparison) -> str:
    """Per matched residue: per-term change of the per-residue totals (second minus first).

    Parameters
    ----------
    comparison : Comparison
        Result of :func:`energy.analysis.compare.compare_results` (second minus first).

    Returns
    -------
    str
        CSV text: ``index``, ``label``, ``chain``, ``mutated`` (0/1), ``change_<term>`` and
        ``change_total`` (kcal/mol, six decimals).
    """
    d = comparison.difference
    per = {t: d.per_residue(t) for t in (*TERMS, "total")}
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["index", "label", "chain", "mutated", *(f"change_{t}" for t in (*TERMS, "total"))])
    for k, lab in enumerate(comparison.labels):
        w.writerow([k, lab, comparison.chains[k], int(comparison.match.mutated[k]),
                    *(f"{per[t][k]:.6f}" for t in (*TERMS, "total"))])
    return out.getvalue()


def comparison_document(comparison: Comparison, inputs: dict, settings) -> dict:
    """JSON document of ``tessera compare``.

    Parameters
    ----------
    comparison : Comparison
        Result of :func:`energy.analysis.compare.compare_results` (second minus first).
    inputs : dict
        Description of the two inputs (paths, frames, parameter files).
    settings : EnergySettings
        The settings both structures were evaluated with.

    Returns
    -------
    dict
        JSON-ready: ``units`` (kcal/mol, angstrom), ``inputs``, ``settings``, matching summary,
        ``totals`` (first, second, change) and ``pairs`` (:func:`difference_rows`).
    """
    return {
        **document_header("comparison", inputs, settings.as_dict()),
        "difference": "second minus first",
        "units": {"energy": "kcal/mol", "distance": "angstrom"},
        "n_matched_residues": len(comparison.match),
        "mutated_residues": comparison.mutated_labels,
        "unmatched_first": comparison.unmatched_first_labels,
        "unmatched_second": comparison.unmatched_second_labels,
        "totals": {"first": {k: float(v) for k, v in comparison.totals_first.items()},
                   "second": {k: float(v) for k, v in comparison.totals_second.items()},
                   "change": {k: float(v) for k, v in comparison.totals_difference().items()}},
        "pairs": difference_rows(comparison),
    }


def summary_text(comparison, first_name: str, second_name: str, top: int) -> str:
    """The text summary of ``tessera compare``.

    Matching, per-term totals and the ``top`` largest changes of residue-pair totals.

    Parameters
    ----------
    comparison : Comparison
        Result of :func:`energy.analysis.compare.compare_results` (second minus first).
    first_name, second_name : str
        Names of the two structures as shown.
    top : int
        Number of residue pairs listed.

    Returns
    -------
    str
        The summary (kcal/mol), lines joined by newlines.
    """
    c = comparison
    lines = [f"second minus first: {second_name} - {first_name}",
             f"{len(c.match)} residues matched by chain and number"
             + (f"; mutated: {', '.join(c.mutated_labels)}" if c.mutated_labels else ""),
             f"unmatched in first: {', '.join(c.unmatched_first_labels) or 'none'}",
             f"unmatched in second: {', '.join(c.unmatched_second_labels) or 'none'}",
             "", f"{'term':<13}{'first':>14}{'second':>14}{'change':>14}   (kcal/mol)"]
    change = c.totals_difference()
    for t in (*TERMS, "total"):
        lines.append(f"{t:<13}{c.totals_first[t]:>14.3f}{c.totals_second[t]:>14.3f}{change[t]:>14.3f}")
    lines += ["", "largest changes of residue-pair totals (kcal/mol):"]
    for row in difference_rows(c)[:top]:
        lines.append(f"  {row['label_i']:>14} - {row['label_j']:<14}{row['first_total']:>12.3f} ->"
                     f"{row['second_total']:>12.3f}  ({row['change_total']:+.3f})")
    return "\n".join(lines)
