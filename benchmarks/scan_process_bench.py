#!/usr/bin/env python
"""`tessera scan` from process start to exit, side by side with OpenMM's script (issue 16).

For each solvated system (``systems.py``: the protein of OpenMM's ``test.pdb`` in TIP3P water
with ions, built by OpenMM's ``Modeller``), alternately, ``--repeats`` times:

* ``tessera scan SYSTEM.pdb --cutoff 12 --electrostatics reaction-field --csv-dir DIR``: the
  summary printed (to a file) and the blocked CSV tables written; wall time of the whole child
  process and its peak RSS (``ru_maxrss`` of that child alone);
* OpenMM's read + ``createSystem`` + single-point script on the same file (``run.py``'s
  reference child: ``PDBFile``, ``ForceField(amber14-all, tip3p).createSystem`` with a 1.2 nm
  periodic cutoff and reaction field, a CPU ``Context`` with 2 threads, one energy); wall time of
  that child.

Target (issue 16): the median scan at most 0.5x the median OpenMM script, in the same run.

Run:  .venv/bin/python benchmarks/scan_process_bench.py [--systems water_25k water_100k] [--repeats 3]
Writes ``results/scan_process.md`` and ``.json``.
"""
from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
sys.path.insert(0, HERE)
sys.path.insert(0, ROOT)

import run  # noqa: E402
import systems  # noqa: E402

TARGET_RATIO = 0.5
SCAN_OPTIONS = ("--cutoff", "12", "--electrostatics", "reaction-field")


def _scan(pdb: str, tmp: str) -> dict:
    csv_dir = os.path.join(tmp, "csv")
    shutil.rmtree(csv_dir, ignore_errors=True)
    argv = [*run.tessera_command(), "scan", pdb, *SCAN_OPTIONS, "--csv-dir", csv_dir]
    child = run.run_child(argv, stdout_path=os.path.join(tmp, "summary.txt"))
    if child["returncode"] != 0:
        raise RuntimeError(f"{' '.join(argv)} failed:\n{child['stderr']}")
    sizes = {name: os.path.getsize(os.path.join(csv_dir, name)) for name in sorted(os.listdir(csv_dir))}
    return {**{k: v for k, v in child.items() if k != "stderr"}, "csv_bytes": sizes, "command": argv}


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    p.add_argument("--systems", nargs="+", default=["water_25k", "water_100k"])
    p.add_argument("--repeats", type=int, default=3)
    p.add_argument("--json", default=os.path.join(run.RESULTS, "scan_process.json"))
    args = p.parse_args(argv)
    os.makedirs(run.RESULTS, exist_ok=True)
    report = {"machine": run.machine_info(), "engine": run.engine_fingerprint(), "systems": {}}
    rows = []
    for name in args.systems:
        pdb, info = systems.ensure(name)
        scans, scripts = [], []
        with tempfile.TemporaryDirectory() as tmp:
            for _ in range(args.repeats):
                scans.append(_scan(pdb, tmp))
                omm = run.run_openmm(pdb, "cutoff12-rf", 1, os.path.join(tmp, "openmm.json"))
                scripts.append({k: v for k, v in omm.items() if k != "stderr"})
        scan_s = statistics.median(s["wall_s"] for s in scans)
        omm_s = statistics.median(s["wall_s"] for s in scripts)
        rss = max(s["peak_rss_mib"] for s in scans)
        ratio = scan_s / omm_s
        report["systems"][name] = {"n_atoms": info.get("n_atoms"), "scan": scans, "openmm": scripts,
                                   "median_scan_s": scan_s, "median_openmm_s": omm_s, "ratio": ratio}
        rows.append(f"| {name} | {info.get('n_atoms', 0):,} | {scan_s:.2f} | {omm_s:.2f} | {ratio:.2f} | "
                    f"{'yes' if ratio <= TARGET_RATIO else 'no'} | {rss:,.0f} |")
    load = f"{os.getloadavg()[0]:.1f}"
    text = "\n".join([
        f"# `tessera scan` process vs OpenMM script (12 A, reaction field; medians of {args.repeats}, "
        f"load average at start {load})", "",
        "| system | atoms | tessera scan, start to exit (s) | OpenMM read + createSystem + energy (s) | ratio "
        f"| <= {TARGET_RATIO}x | scan peak RSS (MiB) |",
        "|---|---:|---:|---:|---:|---|---:|", *rows]) + "\n"
    print(text)
    with open(os.path.splitext(args.json)[0] + ".md", "w") as fh:
        fh.write(text)
    with open(args.json, "w") as fh:
        json.dump(report, fh, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
