"""Publication figures of a residue-pair map and a PDF report (matplotlib, Agg; no Qt).

:func:`map_figure` draws the matrix with a diverging colour scale centred on zero, residue labels
thinned to stay readable, chain boundaries, a colour bar with units and a title naming the file,
frame and settings.  :func:`save_map` writes it as PNG or SVG; :func:`save_report` writes a PDF
(map, strongest attractive and repulsive pairs, per-term totals, settings, file names, date).
Every file goes through a temporary file and an atomic rename.
"""
from __future__ import annotations

import datetime as _dt
import io
import math
import os

import numpy as np

from energy.output.files import atomic_write_bytes
from energy.terms.registry import TERMS, long_label
from energy.units import ENERGY_UNITS


def quantity_name(quantity: str) -> str:
    """``Coulomb energy``, ``Total energy``...: a map quantity's name in titles and legends."""
    return f"{long_label(quantity).split(' (')[0]} energy"


def _pyplot():
    import matplotlib
    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt
    return plt


def symmetric_limit(values: np.ndarray, percentile: float = 99.0) -> float:
    a = np.abs(np.asarray(values, dtype=float))
    a = a[np.isfinite(a) & (a > 0)]
    if not len(a):
        return 1.0
    v = float(a.max() if percentile >= 100 else np.percentile(a, percentile))
    return v if v > 0 else 1.0


def map_figure(matrix, labels, chains=None, title: str = "", unit: str = "kcal/mol",
               quantity: str = "total", percentile: float = 99.0, limit: float | None = None,
               difference: bool = False, order_note: str = ""):
    """A matplotlib Figure of a square matrix (already ordered and in ``unit``)."""
    from matplotlib.colors import TwoSlopeNorm
    plt = _pyplot()
    m = np.asarray(matrix, dtype=float)
    n = m.shape[0]
    labels = [str(s) for s in labels]
    v = limit if limit is not None else symmetric_limit(m[np.triu_indices(n)], percentile)
    size = min(11.0, max(6.0, 4.0 + n * 0.06))
    fig, ax = plt.subplots(figsize=(size + 1.6, size), dpi=100, layout="constrained")
    im = ax.imshow(m, cmap="RdBu_r", norm=TwoSlopeNorm(vcenter=0.0, vmin=-v, vmax=v),
                   interpolation="nearest", origin="upper")
    # labels: at most ~ one per 11 points of axis length
    max_labels = max(2, int(size * 72 / 11))
    step = max(1, math.ceil(n / max_labels))
    ticks = np.arange(0, n, step)
    fs = 7 if step == 1 and n > 40 else 8
    ax.set_xticks(ticks, [labels[k] for k in ticks], rotation=90, fontsize=fs)
    ax.set_yticks(ticks, [labels[k] for k in ticks], fontsize=fs)
    if chains is not None:
        ch = np.asarray(chains, dtype=str)
        cuts = np.flatnonzero(ch[1:] != ch[:-1]) + 1
        if len(cuts) <= 40:
            for c in cuts:
                ax.axhline(c - 0.5, color="#333", lw=0.8, ls="--")
                ax.axvline(c - 0.5, color="#333", lw=0.8, ls="--")
    name = quantity_name(quantity)
    what = f"Change of {name.lower()}" if difference else name
    ax.set_xlabel("residue" + (f"  ({order_note})" if order_note else ""))
    ax.set_ylabel("residue")
    cb = fig.colorbar(im, ax=ax, shrink=0.8, extend="both")
    cb.set_label(f"{what} ({unit})" + (f", clipped at ±{v:.3g}" if percentile < 100 and limit is None else ""))
    ax.set_title(title, fontsize=10, loc="left")
    return fig


def save_figure(fig, path) -> None:
    """PNG or SVG (by the file suffix) via a temporary file and a rename."""
    fmt = os.path.splitext(os.fspath(path))[1].lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise ValueError(f"unknown image format {fmt!r}: use .png or .svg")
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=300 if fmt == "png" else None)
    _pyplot().close(fig)
    atomic_write_bytes(path, buf.getvalue())


def result_title(structure: str, frame: int, settings, extra: str = "") -> str:
    return (f"{os.path.basename(structure)}, frame {frame}{' — ' + extra if extra else ''}\n"
            f"{settings.describe()}")


def save_map(path, system, result, quantity="total", unit="kcal/mol", percentile=99.0,
             structure="", frame=0, order=None, order_note="") -> None:
    """Map of one result as PNG/SVG.  ``order``: optional axis permutation."""
    rp = result.residue_pairs
    m = rp.dense(quantity) * ENERGY_UNITS[unit]
    labels = np.array([system.residues.label(i) for i in range(system.n_residues)], dtype=object)
    chains = np.array([str(c).strip() for c in system.residues.chain], dtype=object)
    if order is not None:
        m, labels, chains = m[np.ix_(order, order)], labels[order], chains[order]
    fig = map_figure(m, labels, chains, result_title(structure, frame, result.settings), unit,
                     quantity, percentile, order_note=order_note)
    save_figure(fig, path)


def _pair_lines(labels, pairs, quantity, factor, top):
    """Strongest attractive and repulsive inter-residue pairs as text rows."""
    v = pairs.column(quantity)
    inter = np.flatnonzero(pairs.pair_i != pairs.pair_j)
    order = inter[np.argsort(v[inter])]
    rep = [k for k in order[::-1][:top] if v[k] > 0]
    att = [k for k in order[:top] if v[k] < 0]
    fmt = lambda k: (f"{labels[pairs.pair_i[k]]:>14} – {labels[pairs.pair_j[k]]:<14} "  # noqa: E731
                     f"{v[k] * factor:>14.3f}")
    return [fmt(k) for k in att], [fmt(k) for k in rep]


def save_report(path, *, labels, chains, pairs, totals, settings, files, title, unit="kcal/mol",
                quantity="total", percentile=99.0, order=None, order_note="", difference=False,
                top=15, notes=()) -> None:
    """A PDF report: the map, strongest pairs, per-term totals, settings, files and date."""
    from matplotlib.backends.backend_pdf import PdfPages
    plt = _pyplot()
    factor = ENERGY_UNITS[unit]
    labels = np.asarray(labels, dtype=object)
    chains = np.asarray(chains, dtype=object)
    m = pairs.dense(quantity) * factor
    o = np.arange(len(labels)) if order is None else np.asarray(order)
    fig_map = map_figure(m[np.ix_(o, o)], labels[o], chains[o], title, unit, quantity, percentile,
                         difference=difference, order_note=order_note)
    att, rep = _pair_lines(labels, pairs, quantity, factor, top)
    now = _dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z")
    kind = "change (second minus first)" if difference else "energy"
    lines = ["Tessera report", "", f"Date: {now}", "Files:"] + [f"  {f}" for f in files if f] + [
        f"Settings: {settings.describe()}", f"Map quantity: {quantity_name(quantity)}"
        + f" ({kind}), unit {unit}", *notes, "", f"Per-term totals ({unit}):"]
    lines += [f"  {t:<14}{totals[t] * factor:>16.3f}" for t in (*TERMS, "total") if t in totals]
    lines += ["", f"Strongest attractive residue pairs ({unit}):"] + (att or ["  none"])
    lines += ["", f"Strongest repulsive residue pairs ({unit}):"] + (rep or ["  none"])
    buf = io.BytesIO()
    with PdfPages(buf) as pdf:
        pdf.savefig(fig_map)
        per_page = 62
        for start in range(0, len(lines), per_page):
            fig = plt.figure(figsize=(8.27, 11.69))
            fig.text(0.07, 0.96, "\n".join(lines[start:start + per_page]), va="top", ha="left",
                     family="monospace", fontsize=8.5)
            pdf.savefig(fig)
            plt.close(fig)
        info = pdf.infodict()
        info["Title"] = f"Tessera report: {title.splitlines()[0] if title else ''}"
        info["Creator"] = "Tessera"
    plt.close(fig_map)
    atomic_write_bytes(path, buf.getvalue())


__all__ = ["map_figure", "save_figure", "save_map", "save_report", "symmetric_limit", "result_title"]
