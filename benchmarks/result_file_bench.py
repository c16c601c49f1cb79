"""Result-file benchmark (docs/result-file.md): write and read back every residue pair of the
100k-atom solvated bench system (benchmarks/systems.py), 12 A cutoff with reaction field.

Reports medians of ``--repeats`` runs, measured in this one process: the seconds to write the
file (``energy.results.save_scan``), its size, and the seconds to read it back
(``energy.results.load``) with the peak RSS of a fresh child process that only reads it.
A second case (``--trajectory-system``, default ``water_25k``; ``--no-trajectory`` skips it):
a 100-frame trajectory of that system (the built PDB's positions moved by seeded Gaussian
noise of 0.05 A per frame, written once as a DCD with MDAnalysis and cached) run by ``tessera
scan PDB DCD --frames : --out traj.h5`` in a child process (the file written frame by frame),
then read back with ``energy.results.load`` in a fresh child: seconds and peak RSS.
Writes ``benchmarks/results/result_file.json`` and ``.md``.
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.dirname(HERE))

import systems  # noqa: E402

from energy import prepare_kernels, results  # noqa: E402
from energy.decomposition.pipeline import compute, prepare_system  # noqa: E402
from energy.io.loaders import load_system  # noqa: E402
from energy.model.settings import EnergySettings  # noqa: E402

OUT = os.path.join(HERE, "results")
TARGETS = {"write_s": 2.0, "size_mb": 250.0, "trajectory_read_s": 2.0}
N_FRAMES = 100
READ_CHILD = ("import resource, sys, time; t = time.perf_counter(); from energy import results; "
              "r = results.load(sys.argv[1]); n = len(r.residue_pairs); "
              "print(time.perf_counter() - t, n, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--system", default="water_100k", choices=sorted(systems.TARGETS))
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--trajectory-system", default="water_25k", choices=sorted(systems.TARGETS))
    ap.add_argument("--no-trajectory", action="store_true")
    args = ap.parse_args(argv)
    os.makedirs(OUT, exist_ok=True)
    pdb, info = systems.ensure(args.system)
    settings = EnergySettings(cutoff_angstrom=12.0, electrostatics="reaction-field")
    prepare_kernels(settings)
    loaded = load_system(pdb)
    prepare_system(loaded.system)
    result = compute(loaded.system, loaded.frame, settings)
    path = os.path.join(OUT, f"{args.system}_result.h5")
    writes, reads, rss = [], [], []
    for _ in range(args.repeats):
        t0 = time.perf_counter()
        results.save_scan(path, loaded, result)
        writes.append(time.perf_counter() - t0)
        proc = subprocess.run([sys.executable, "-c", READ_CHILD, path], capture_output=True, text=True,
                              check=True, cwd=os.path.dirname(HERE))
        seconds, n, peak = proc.stdout.split()
        reads.append(float(seconds))
        rss.append(float(peak))
    size_mb = os.path.getsize(path) / 1e6
    report = {"system": args.system, "n_atoms": loaded.system.n_atoms, "n_pairs": len(result.residue_pairs),
              "write_s_median": statistics.median(writes), "read_s_median": statistics.median(reads),
              "read_peak_rss_mib_median": statistics.median(rss), "size_mb": size_mb,
              "compression": ("gzip level 1 + shuffle on integer and mostly-zero columns, dense floats "
                              "uncompressed, 131,072-row chunks"),
              "repeats": args.repeats,
              "targets": TARGETS, "bench_peak_rss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}
    trajectory = None if args.no_trajectory else trajectory_case(args.trajectory_system)
    report["trajectory"] = trajectory
    with open(os.path.join(OUT, "result_file.json"), "w") as fh:
        json.dump(report, fh, indent=1)
    md = (f"| system | atoms | residue pairs | write (s) | file (MB) | read (s) | reader peak RSS (MiB) |\n"
          f"|---|---:|---:|---:|---:|---:|---:|\n"
          f"| {args.system} | {report['n_atoms']:,} | {report['n_pairs']:,} | {report['write_s_median']:.2f} | "
          f"{size_mb:.0f} | {report['read_s_median']:.2f} | {report['read_peak_rss_mib_median']:.0f} |\n\n"
          f"Medians of {args.repeats}; targets: write < {TARGETS['write_s']} s, file < {TARGETS['size_mb']:.0f} MB; "
          f"compression {report['compression']}.\n")
    if trajectory is not None:
        md += (f"\nTrajectory: {trajectory['system']} ({trajectory['n_atoms']:,} atoms), "
               f"{trajectory['frames']} frames, "
               f"`tessera scan --out` {trajectory['scan_s']:.1f} s ({trajectory['frames_per_s']:.2f} frames/s), "
               f"file {trajectory['size_mb']:.1f} MB; read back in {trajectory['read_s_median']:.2f} s "
               f"(median of {len(trajectory['read_s'])}, target < {TARGETS['trajectory_read_s']} s), reader peak RSS "
               f"{trajectory['read_peak_rss_mib']:.0f} MiB.\n")
    with open(os.path.join(OUT, "result_file.md"), "w") as fh:
        fh.write(md)
    print(md)
    return 0


def _trajectory(pdb: str) -> str:
    """A cached 100-frame DCD of ``pdb``'s atoms: its positions plus seeded Gaussian noise."""
    import MDAnalysis as mda
    import numpy as np
    path = os.path.join(OUT, "systems", os.path.basename(pdb).replace(".pdb", f"_{N_FRAMES}frames.dcd"))
    if os.path.exists(path):
        return path
    u = mda.Universe(pdb)
    base = u.atoms.positions.copy()
    rng = np.random.default_rng(17)
    with mda.Writer(path + ".part.dcd", u.atoms.n_atoms) as w:
        for _ in range(N_FRAMES):
            u.atoms.positions = base + rng.normal(0.0, 0.05, base.shape)
            w.write(u.atoms)
    os.replace(path + ".part.dcd", path)
    return path


def trajectory_case(name: str, repeats: int = 3) -> dict:
    pdb, _ = systems.ensure(name)
    dcd = _trajectory(pdb)
    out = os.path.join(OUT, f"{name}_trajectory.h5")
    cli = [sys.executable, "-m", "app", "scan", pdb, dcd, "--frames", ":", "--cutoff", "12",
           "--electrostatics", "reaction-field", "--out", out, "--quiet"]
    t0 = time.perf_counter()
    subprocess.run(cli, check=True, cwd=os.path.dirname(HERE))
    scan_s = time.perf_counter() - t0
    reads, rss = [], []
    child = ("import resource, sys, time; t = time.perf_counter(); from energy import results; "
             "results.load(sys.argv[1]); dt = time.perf_counter() - t; "
             "print(dt, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)")
    for _ in range(repeats):
        proc = subprocess.run([sys.executable, "-c", child, out], capture_output=True, text=True, check=True,
                              cwd=os.path.dirname(HERE))
        seconds, peak = proc.stdout.split()
        reads.append(float(seconds))
        rss.append(float(peak))
    import MDAnalysis as mda
    n_atoms = mda.Universe(pdb).atoms.n_atoms
    return {"system": name, "n_atoms": n_atoms, "frames": N_FRAMES, "scan_s": scan_s,
            "frames_per_s": N_FRAMES / scan_s, "size_mb": os.path.getsize(out) / 1e6, "read_s": reads,
            "read_s_median": statistics.median(reads), "read_peak_rss_mib": max(rss), "command": cli}


if __name__ == "__main__":
    sys.exit(main())
