#!/usr/bin/env python
"""The window on a solvated snapshot (issue 16's window targets), side by side with OpenMM.

One child process opens ``water_100k`` (built by ``systems.py``) in the window exactly as a new
user does (fresh settings: the filled periodic box gets 12 A + reaction field by itself) and
measures:

* ``first_map_s``: File > Open until the first map is drawn (read, parameterise, compute, show);
* ``peak_rss_mib``: the window process's peak resident memory;
* ``click_ms``: a map cell clicked until the side panels (atom contributions or the water list,
  term bars, distance profile, ledger) are updated and the widgets the click changed are painted
  (Qt's pending events processed, paint events included), median over solute-solute and
  solute-water cells; ``click_full_repaint_ms`` adds a forced repaint of the whole 1600 x 1000
  window (every dock, changed or not: the measure of earlier runs, an upper bound);
* ``zoom_ms``: a zoom of the map until it is painted again, median.

A third child opens the result file of the same system (``results/water_100k_result.h5``,
written by ``result_file_bench.py``; skipped when it is missing) with File > Open result file
and measures ``result_first_map_s`` (the click until the first map is drawn; issue 17's target:
under 3 s) and its peak RSS (target under 1.5 GB).

A second child runs OpenMM's read + ``createSystem`` + single-point script on the same file
(``run.py``'s reference, CPU platform, 12 A cutoff, reaction field); its wall time is the
yardstick of ``first_map_s``.

Run:  QT_QPA_PLATFORM=offscreen .venv/bin/python benchmarks/window_bench.py [--system water_100k]
Targets (issue 16): first map at most 1x the OpenMM script; peak RSS under 2 GB at 100k atoms;
click under 50 ms and zoom under 100 ms (medians).
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
sys.path.insert(0, HERE)
sys.path.insert(0, ROOT)

import run  # noqa: E402
import systems  # noqa: E402

TARGETS = {"first_map_ratio": 1.0, "peak_rss_mib": 2048.0, "click_ms": 50.0, "zoom_ms": 100.0,
           "result_first_map_s": 3.0, "result_peak_rss_mib": 1536.0}


def _fresh_window():
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import QSettings
    from PySide6.QtWidgets import QApplication
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, tempfile.mkdtemp())
    from app.gui.collector import freeze_long_lived
    from app.gui.main_window import MainWindow
    qapp = QApplication.instance() or QApplication([])
    window = MainWindow()
    window.resize(1600, 1000)
    window.show()
    freeze_long_lived()          # as run_app does
    qapp.processEvents()
    return qapp, window


def result_child(h5: str, out_json: str) -> int:
    """Child-process side: open a result file in a fresh window, time it to the first map."""
    qapp, window = _fresh_window()
    done = []
    window.computeFinished.connect(lambda: done.append(time.perf_counter()))
    window._on_stored_failed = lambda msg, details: done.append(msg)  # no modal dialog in a benchmark
    t0 = time.perf_counter()
    window.open_result(h5)
    while not done:
        qapp.processEvents()
    if isinstance(done[0], str):
        raise SystemExit(f"window could not open {h5}: {done[0]}")
    window.map.repaint()
    doc = {"result_first_map_s": time.perf_counter() - t0, "rows": int(window.dataset.n),
           "peak_rss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0}
    with open(out_json, "w") as fh:
        json.dump(doc, fh, indent=1)
    window.close()
    return 0


def window_child(pdb: str, out_json: str) -> int:
    """Child-process side: open ``pdb`` in a fresh window and measure it."""
    from app.state.document import LoadSpec
    qapp, window = _fresh_window()
    done = []
    window.computeFinished.connect(lambda: done.append(time.perf_counter()))
    window.computeFailed.connect(lambda msg: done.append(msg))
    t0 = time.perf_counter()
    window.open_spec(LoadSpec(pdb))
    while not done:
        qapp.processEvents()
    if isinstance(done[0], str):
        raise SystemExit(f"window could not open {pdb}: {done[0]}")
    window.map.repaint()
    first_map = time.perf_counter() - t0
    ds = window.dataset
    n_solute = ds.blocks.n_solute if ds.blocks is not None else ds.n
    cells = [(k, (k + 3) % n_solute) for k in range(0, n_solute, max(1, n_solute // 20))][:20]
    if ds.blocks is not None:
        cells += [(k, ds.n - ds.blocks.n_blocks) for k in range(0, n_solute, max(1, n_solute // 20))][:20]
    clicks, full = [], []
    for row, col in cells:
        t = time.perf_counter()
        window.map.select_cell(row, col)
        qapp.processEvents()
        clicks.append(1000 * (time.perf_counter() - t))
        window.repaint()
        full.append(1000 * (time.perf_counter() - t))
    zooms = []
    for k in range(10):
        half = 2 + k
        t = time.perf_counter()
        window.map.plot.setRange(xRange=(-0.5, half), yRange=(-0.5, half), padding=0)
        qapp.processEvents()
        window.map.repaint()
        zooms.append(1000 * (time.perf_counter() - t))
    doc = {"first_map_s": first_map, "rows": int(ds.n), "n_atoms": int(window.snapshot.system.n_atoms),
           "settings": window.snapshot.result.settings.describe(),
           "peak_rss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
           "click_ms": clicks, "click_full_repaint_ms": full, "zoom_ms": zooms}
    with open(out_json, "w") as fh:
        json.dump(doc, fh, indent=1)
    window.close()
    return 0


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("--system", default="water_100k")
    p.add_argument("--window-child", nargs=2, metavar=("PDB", "OUT"), help=argparse.SUPPRESS)
    p.add_argument("--result-child", nargs=2, metavar=("H5", "OUT"), help=argparse.SUPPRESS)
    p.add_argument("--json", default=os.path.join(run.RESULTS, "window.json"))
    args = p.parse_args(argv)
    if args.window_child:
        return window_child(*args.window_child)
    if args.result_child:
        return result_child(*args.result_child)
    pdb, info = systems.ensure(args.system)
    os.makedirs(run.RESULTS, exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        win_json = os.path.join(tmp, "window.json")
        env = dict(os.environ, QT_QPA_PLATFORM=os.environ.get("QT_QPA_PLATFORM", "offscreen"),
                   PYTHONPATH=ROOT)
        child = run.run_child([sys.executable, os.path.abspath(__file__), "--window-child", pdb, win_json],
                              env=env)
        if child["returncode"] != 0:
            print(child["stderr"], file=sys.stderr)
            return 1
        with open(win_json) as fh:
            win = json.load(fh)
        omm = run.run_openmm(pdb, "cutoff12-rf", 1, os.path.join(tmp, "openmm.json"))
        h5 = os.path.join(run.RESULTS, f"{args.system}_result.h5")
        stored = None
        if os.path.exists(h5):
            res_json = os.path.join(tmp, "result.json")
            res_child = run.run_child([sys.executable, os.path.abspath(__file__), "--result-child", h5, res_json],
                                      env=env)
            if res_child["returncode"] != 0:
                print(res_child["stderr"], file=sys.stderr)
                return 1
            with open(res_json) as fh:
                stored = {**json.load(fh), "child_peak_rss_mib": res_child["peak_rss_mib"]}
    click, zoom = statistics.median(win["click_ms"]), statistics.median(win["zoom_ms"])
    ratio = win["first_map_s"] / omm["wall_s"]
    rows = [("open to first map", f"{win['first_map_s']:.1f} s", f"OpenMM script {omm['wall_s']:.1f} s: "
             f"ratio {ratio:.2f}", f"<= {TARGETS['first_map_ratio']:g}x", ratio <= TARGETS["first_map_ratio"]),
            ("peak RSS of the window", f"{child['peak_rss_mib']:,.0f} MiB", "", "< 2 GiB",
             child["peak_rss_mib"] < TARGETS["peak_rss_mib"]),
            ("click on a map cell, side panels updated", f"{click:.0f} ms (median of {len(win['click_ms'])})",
             f"with a forced repaint of the whole window: {statistics.median(win['click_full_repaint_ms']):.0f} ms",
             "< 50 ms", click < TARGETS["click_ms"]),
            ("zoom, map repainted", f"{zoom:.0f} ms (median of {len(win['zoom_ms'])})", "", "< 100 ms",
             zoom < TARGETS["zoom_ms"])]
    if stored is not None:
        rows += [("result file opened to first map", f"{stored['result_first_map_s']:.1f} s", "", "< 3 s",
                  stored["result_first_map_s"] < TARGETS["result_first_map_s"]),
                 ("peak RSS, result file opened", f"{stored['child_peak_rss_mib']:,.0f} MiB", "", "< 1.5 GB",
                  stored["child_peak_rss_mib"] < TARGETS["result_peak_rss_mib"])]
    lines = [f"# Window on {args.system} ({win['n_atoms']:,} atoms, {win['rows']} map rows; {win['settings']})", "",
             "| measure | window | side by side | target | met |", "|---|---:|---|---|---|"]
    lines += [f"| {a} | {b} | {c} | {d} | {'yes' if ok else 'no'} |" for a, b, c, d, ok in rows]
    text = "\n".join(lines) + "\n"
    print(text)
    with open(os.path.splitext(args.json)[0] + ".md", "w") as fh:
        fh.write(text)
    with open(args.json, "w") as fh:
        json.dump({"window": win, "result_file": stored,
                   "window_child": {k: v for k, v in child.items() if k != "stderr"},
                   "openmm": {k: v for k, v in omm.items() if k != "stderr"}, "targets": TARGETS}, fh, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
