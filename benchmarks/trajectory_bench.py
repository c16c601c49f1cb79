#!/usr/bin/env python
"""Trajectory throughput: frames per second, serial vs two worker processes.

Cases:
* ``scenario``: the bundled ``samples/scenario/complex_clash.pdb`` + ``relax.dcd`` (every frame;
  default settings: no cutoff, plain Coulomb), as ``tessera scan ... --frames ::1`` runs it.
* ``water_25k``: the cached ~25k-atom benchmark system of ``benchmarks/systems.py`` (protein in
  TIP3P water) with an invented trajectory: its PDB positions plus seeded Gaussian noise
  (0.05 A per coordinate, ``numpy.random.default_rng(SEED)``) for each frame, written once to
  ``benchmarks/results/trajectories/water_25k.dcd``; 12 A cutoff, reaction field, minimum image
  (the ``cutoff12-rf`` setting of ``benchmarks/run.py``).

For each case and mode (``serial``, ``workers=2``): ``setup`` = loading and parameterising the
system in the client and opening the trajectory; ``frames wall`` = from the first step to the
result (for workers this includes starting the worker processes, each of which loads the
system itself); ``frames/s`` = frames / frames wall; ``first result`` = seconds until the first
chunk of frames is merged (for workers: start-up plus one chunk).  The serial mode is warmed up
first (numba caches loaded) on two frames.

Writes ``benchmarks/results/trajectory.json`` and ``trajectory.md``; prints the table.
``.venv/bin/python benchmarks/trajectory_bench.py [--quick] [--frames-25k N]``
"""
from __future__ import annotations

import argparse
import json
import os
import platform
import sys
import time
import warnings

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(HERE)
sys.path.insert(0, REPO)
sys.path.insert(0, HERE)

RESULTS = os.path.join(HERE, "results")
SEED = 20261207
NOISE_ANGSTROM = 0.05


def scenario_case():
    from energy.model.settings import EnergySettings
    pdb = os.path.join(REPO, "samples", "scenario", "complex_clash.pdb")
    dcd = os.path.join(REPO, "samples", "scenario", "relax.dcd")
    return {"name": "scenario", "structure": pdb, "coords": dcd, "frames": "::1",
            "settings": EnergySettings(), "setting": "no-cutoff"}


def water_case(n_frames: int):
    import MDAnalysis as mda
    import numpy as np
    import systems

    from energy.model.settings import EnergySettings
    pdb, info = systems.ensure("water_25k")
    folder = os.path.join(RESULTS, "trajectories")
    os.makedirs(folder, exist_ok=True)
    dcd = os.path.join(folder, f"water_25k-{n_frames}.dcd")
    if not os.path.exists(dcd):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            u = mda.Universe(pdb)
            x0 = u.atoms.positions.astype(np.float64).copy()
            rng = np.random.default_rng(SEED)
            tmp = dcd + ".tmp.dcd"
            with mda.Writer(tmp, n_atoms=len(u.atoms)) as w:
                for _ in range(n_frames):
                    u.atoms.positions = x0 + rng.normal(0.0, NOISE_ANGSTROM, x0.shape)
                    w.write(u.atoms)
            os.replace(tmp, dcd)
    return {"name": "water_25k", "structure": pdb, "coords": dcd, "frames": "::1",
            "settings": EnergySettings(cutoff_angstrom=12.0, electrostatics="reaction-field"),
            "setting": "cutoff12-rf", "n_atoms": info["n_atoms"]}


def measure(case, mode: str) -> dict:
    from energy.analysis.trajectory import TrajectoryRequest, TrajectoryScan
    from energy.analysis.trajectory_parallel import ParallelTrajectoryScan
    request = TrajectoryRequest(case["structure"], case["coords"], settings=case["settings"])
    t0 = time.perf_counter()
    if mode == "serial":
        scan = TrajectoryScan(request, case["frames"])
    else:
        scan = ParallelTrajectoryScan(request, case["frames"], workers=2)
    t_setup = time.perf_counter()
    first = None
    steps = scan.steps()
    while True:
        try:
            done, total = next(steps)
        except StopIteration as stop:
            result = stop.value
            break
        if done and first is None:
            first = (time.perf_counter(), done)
    t_end = time.perf_counter()
    n = len(result.frames)
    wall = t_end - t_setup
    return {"case": case["name"], "setting": case["setting"], "mode": mode,
            "n_atoms": result.system.n_atoms, "n_frames": n, "setup_s": t_setup - t0,
            "frames_wall_s": wall, "frames_per_s": n / wall,
            "first_result_s": None if first is None else first[0] - t_setup,
            "compute_s_per_frame": sum(r.seconds for r in result.records) / max(n, 1),
            "total_first_frame": result.records[0].totals["total"]}


def warm_up(case):
    from energy.analysis.trajectory import TrajectoryRequest, TrajectoryScan
    TrajectoryScan(TrajectoryRequest(case["structure"], case["coords"], settings=case["settings"]),
                   "0:2").run()


def markdown(rows, meta) -> str:
    lines = [f"# Tessera trajectory throughput ({meta['date']})", "",
             f"Machine: {meta['cpus']} CPUs, {meta['platform']}; Python {meta['python']}; "
             f"numba threads {meta['numba_threads']}.", "",
             "| case | atoms | setting | mode | frames | setup (s) | frames wall (s) | frames/s | "
             "first result (s) | compute s/frame |", "|---|---:|---|---|---:|---:|---:|---:|---:|---:|"]
    for r in rows:
        first = "" if r["first_result_s"] is None else f"{r['first_result_s']:.2f}"
        lines.append(f"| {r['case']} | {r['n_atoms']} | {r['setting']} | {r['mode']} | {r['n_frames']} | "
                     f"{r['setup_s']:.2f} | {r['frames_wall_s']:.2f} | {r['frames_per_s']:.2f} | "
                     f"{first} | {r['compute_s_per_frame']:.3f} |")
    lines += ["", "frames wall includes, for workers=2, starting two worker processes that each "
              "load and parameterise the system; compute s/frame is the mean evaluation time of "
              "one frame inside its process (workers get cpu_count/2 numba threads each)."]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true", help="scenario only")
    p.add_argument("--frames-25k", type=int, default=16, help="frames of the 25k trajectory (16)")
    args = p.parse_args(argv)
    import numba
    cases = [scenario_case()]
    if not args.quick:
        cases.append(water_case(args.frames_25k))
    rows = []
    for case in cases:
        warm_up(case)
        for mode in ("serial", "workers=2"):
            row = measure(case, mode)
            rows.append(row)
            print(f"{row['case']:>10} {row['mode']:>10}: {row['n_frames']} frames, "
                  f"{row['frames_per_s']:.2f} frames/s (first result {row['first_result_s'] or 0:.1f} s), "
                  f"setup {row['setup_s']:.1f} s", flush=True)
    meta = {"date": time.strftime("%Y-%m-%d %H:%M:%S"), "cpus": os.cpu_count(),
            "platform": platform.platform(), "python": platform.python_version(),
            "numba_threads": numba.get_num_threads(), "noise_angstrom": NOISE_ANGSTROM, "seed": SEED}
    os.makedirs(RESULTS, exist_ok=True)
    with open(os.path.join(RESULTS, "trajectory.json"), "w") as fh:
        json.dump({"meta": meta, "rows": rows}, fh, indent=1)
    text = markdown(rows, meta)
    with open(os.path.join(RESULTS, "trajectory.md"), "w") as fh:
        fh.write(text)
    print(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
