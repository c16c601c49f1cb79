"""Result-file benchmark (docs/result-file.md): write and read back every residue pair of the
100k-atom solvated bench system (benchmarks/systems.py), 12 A cutoff with reaction field.

Reports medians of ``--repeats`` runs, measured in this one process: the seconds to write the
file (``energy.results.save_scan``), its size, and the seconds to read it back
(``energy.results.load``) with the peak RSS of a fresh child process that only reads it.
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
TARGETS = {"write_s": 2.0, "size_mb": 250.0}
READ_CHILD = ("import resource, sys, time; t = time.perf_counter(); from energy import results; "
              "r = results.load(sys.argv[1]); n = len(r.residue_pairs); "
              "print(time.perf_counter() - t, n, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--system", default="water_100k", choices=sorted(systems.TARGETS))
    ap.add_argument("--repeats", type=int, default=3)
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
    with open(os.path.join(OUT, "result_file.json"), "w") as fh:
        json.dump(report, fh, indent=1)
    md = (f"| system | atoms | residue pairs | write (s) | file (MB) | read (s) | reader peak RSS (MiB) |\n"
          f"|---|---:|---:|---:|---:|---:|---:|\n"
          f"| {args.system} | {report['n_atoms']:,} | {report['n_pairs']:,} | {report['write_s_median']:.2f} | "
          f"{size_mb:.0f} | {report['read_s_median']:.2f} | {report['read_peak_rss_mib_median']:.0f} |\n\n"
          f"Medians of {args.repeats}; targets: write < {TARGETS['write_s']} s, file < {TARGETS['size_mb']:.0f} MB; "
          f"compression {report['compression']}.\n")
    with open(os.path.join(OUT, "result_file.md"), "w") as fh:
        fh.write(md)
    print(md)
    return 0


if __name__ == "__main__":
    sys.exit(main())
