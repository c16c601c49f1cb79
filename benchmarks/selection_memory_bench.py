#!/usr/bin/env python
"""The A-vs-B interaction's memory against its number of atom pairs (issue 16).

OpenMM's bundled ``test.pdb`` (8,867 atoms, Amber 14 + TIP3P, all pairs): group A against group B
for 1.0 million atom pairs (atoms 0-999 against 1000-1999) and for 19.7 million (0-4399 against
4400-8866), summed in the kernel (``energy.decomposition.atom_pairs.interaction_energy``, what
``tessera scan --select-a/--select-b`` and the window's group interaction use).  For each: the
peak of Python-traced allocations during the call (``tracemalloc``), the seconds, and what a list
of those atom pairs (two int64 indices and three float64 energies per pair) would take.

Run:  .venv/bin/python benchmarks/selection_memory_bench.py     (writes results/selection_memory.md)
"""
from __future__ import annotations

import json
import os
import sys
import time
import tracemalloc

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

import numpy as np  # noqa: E402
import openmm  # noqa: E402

from energy.decomposition.atom_pairs import interaction_energy  # noqa: E402
from energy.io.loaders import load_system  # noqa: E402

PDB = os.path.join(os.path.dirname(openmm.__file__), "app", "data", "test.pdb")
CASES = {"1.0M pairs": (np.arange(0, 1000), np.arange(1000, 2000)),
         "19.7M pairs": (np.arange(0, 4400), np.arange(4400, 8867))}


def main() -> int:
    loaded = load_system(PDB)
    s, f = loaded.system, loaded.frame
    interaction_energy(s, f, None, *CASES["1.0M pairs"])  # kernels loaded, caches warm
    rows, doc = [], {}
    for name, (a, b) in CASES.items():
        tracemalloc.start()
        t = time.perf_counter()
        interaction_energy(s, f, None, a, b)
        seconds = time.perf_counter() - t
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        pairs = len(a) * len(b)
        listed = pairs * (2 * 8 + 3 * 8)
        doc[name] = {"atom_pairs": pairs, "peak_traced_mb": peak / 1e6, "seconds": seconds, "listed_mb": listed / 1e6}
        rows.append(f"| {name} | {pairs:,} | {peak / 1e6:.0f} | {listed / 1e6:,.0f} | {seconds:.2f} |")
    text = "\n".join(["# Group interaction memory (test.pdb, all pairs)", "",
                      "| case | atom pairs | peak traced memory (MB) | a list of the pairs (MB) | seconds |",
                      "|---|---:|---:|---:|---:|", *rows]) + "\n"
    print(text)
    out = os.path.join(HERE, "results")
    os.makedirs(out, exist_ok=True)
    with open(os.path.join(out, "selection_memory.md"), "w") as fh:
        fh.write(text)
    with open(os.path.join(out, "selection_memory.json"), "w") as fh:
        json.dump(doc, fh, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
