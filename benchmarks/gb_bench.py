"""Implicit-solvent benchmark: the full decomposition with GB OBC2 + ACE against OpenMM's
single-point energy of the same system with the same model, side by side, in two cases.

Case ``4k``, no cutoff: chain A of PDB 1A28 (progesterone receptor ligand-binding domain,
MDAnalysisTests' ``1a28.pdb.gz``), prepared by ``tessera scan --repair --add-hydrogens
--drop-unmatched --write-prepared`` (built-in force field amber14-all), protein atoms of chain A
kept (no water, no ligand).  Written once to ``benchmarks/results/systems/gb_1a28_A.pdb``.

Case ``25k``, 16 A cutoff: six copies of that prepared chain (4138 atoms each, 24,828 atoms,
1506 residues), translated without rotation onto a 3 x 2 x 1 grid whose spacing is the chain's
bounding-box edge plus 4 A along each axis, so neighbouring copies face each other across a
4 A gap (inter-copy pairs within the cutoff exist); chains A-F.  Not a real protein of that
size: no shipped structure of ~25k atoms prepares with the built-in force field in reasonable
time.  Written once to ``benchmarks/results/systems/gb_1a28_x6.pdb``.

Ours: ``energy.decomposition.pipeline.compute`` with ``EnergySettings(implicit_solvent="obc2")``
(ACE on; the 25k case ``cutoff_angstrom=16``), in this process after one warm-up call,
``timings["compute"]`` (every term, the Born radii and the residue-pair decomposition) and
``timings["solvation"]``.
OpenMM: ``ForceField('amber14-all.xml', 'amber14/tip3p.xml', 'implicit/obc2.xml')``,
``createSystem(NoCutoff)`` (25k: ``CutoffNonPeriodic``, 1.6 nm), platform **CPU** with
``Threads=2``, one warm-up ``setPositions + getState(getEnergy=True)``, then the same two calls
timed; once with that system's CustomGBForce and once with the same model through OpenMM's
compiled GBSAOBCForce (same radii and screening factors, same cutoff method).
Medians over ``--repeats`` (default 5; the 25k CustomGBForce row over ``--repeats-custom-large``,
default 3).  Results: ``benchmarks/results/gb_latest.md`` / ``.json``.

    .venv/bin/python benchmarks/gb_bench.py [--repeats N] [--cases 4k,25k] [--skip-custom-large]
"""
from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
RESULTS = os.path.join(HERE, "results")
SYSTEM_PDB = os.path.join(RESULTS, "systems", "gb_1a28_A.pdb")
LARGE_PDB = os.path.join(RESULTS, "systems", "gb_1a28_x6.pdb")
LARGE_CUTOFF = 16.0     # A
COPIES_GRID = (3, 2, 1)
COPY_GAP = 4.0          # A between the bounding boxes of neighbouring copies
sys.path.insert(0, ROOT)
OPENMM_THREADS = 2


def ensure_system() -> str:
    if os.path.exists(SYSTEM_PDB):
        return SYSTEM_PDB
    import MDAnalysis as mda
    import MDAnalysisTests
    source = os.path.join(os.path.dirname(MDAnalysisTests.__file__), "data", "1a28.pdb.gz")
    os.makedirs(os.path.dirname(SYSTEM_PDB), exist_ok=True)
    prepared = SYSTEM_PDB + ".prepared.pdb"
    subprocess.run([sys.executable, "-m", "app", "scan", source, "--repair", "--add-hydrogens",
                    "--drop-unmatched", "--write-prepared", prepared, "--quiet"], check=True, cwd=ROOT,
                   env={**os.environ, "PYTHONPATH": ROOT})
    u = mda.Universe(prepared)
    u.select_atoms("protein and chainID A").write(SYSTEM_PDB)
    os.remove(prepared)
    return SYSTEM_PDB


def ensure_large_system() -> str:
    """Six copies of the prepared chain on a 3 x 2 x 1 grid (see the module docstring)."""
    if os.path.exists(LARGE_PDB):
        return LARGE_PDB
    import MDAnalysis as mda
    import numpy as np

    single = mda.Universe(ensure_system())
    x = single.atoms.positions.astype(np.float64)
    step = (x.max(axis=0) - x.min(axis=0)) + COPY_GAP
    copies = []
    for k, (i, j, m) in enumerate(np.ndindex(*COPIES_GRID)):
        u = single.copy()
        u.atoms.positions = x + step * np.array([i, j, m])
        chain = "ABCDEF"[k]
        u.add_TopologyAttr("chainIDs", [chain] * len(u.atoms))
        u.segments.segids = [chain]
        copies.append(u.atoms)
    merged = mda.Merge(*copies)
    merged.atoms.write(LARGE_PDB)
    return LARGE_PDB


def run_ours(path: str, repeats: int, cutoff: float | None = None) -> dict:
    from energy.decomposition.pipeline import compute, prepare_system
    from energy.io.loaders import load_system
    from energy.model.settings import EnergySettings
    from energy.warmup import prepare_kernels

    prepare_kernels()
    loaded = load_system(path)
    prepare_system(loaded.system)
    settings = EnergySettings(implicit_solvent="obc2", cutoff_angstrom=cutoff, use_periodic=False)
    t_warm = time.perf_counter()
    result = compute(loaded.system, loaded.frame, settings)      # warm-up
    t_warm = time.perf_counter() - t_warm
    runs = [compute(loaded.system, loaded.frame, settings) for _ in range(repeats)]
    return {"n_atoms": loaded.system.n_atoms, "n_residues": loaded.system.n_residues,
            "compute_s": [r.timings["compute"] for r in runs],
            "solvation_s": [r.timings["solvation"] for r in runs],
            "n_pairs": len(result.residue_pairs), "totals": result.totals, "warm_up_s": t_warm}


def run_openmm(path: str, repeats: int, cutoff: float | None = None, repeats_custom: int | None = None) -> dict:
    import openmm as mm
    from openmm import app, unit

    structure = app.PDBFile(path)
    ff = app.ForceField("amber14-all.xml", "amber14/tip3p.xml", "implicit/obc2.xml")
    kw = {"nonbondedMethod": app.NoCutoff} if cutoff is None else {
        "nonbondedMethod": app.CutoffNonPeriodic, "nonbondedCutoff": cutoff / 10.0 * unit.nanometer}
    system = ff.createSystem(structure.topology, constraints=None, **kw)
    pos = structure.getPositions(asNumpy=True)
    repeats_custom = repeats if repeats_custom is None else repeats_custom
    times, total = [], None
    if repeats_custom > 0:
        context = mm.Context(system, mm.VerletIntegrator(0.001), mm.Platform.getPlatformByName("CPU"),
                             {"Threads": str(OPENMM_THREADS)})

        def once():
            t = time.perf_counter()
            context.setPositions(pos)
            state = context.getState(getEnergy=True)
            return time.perf_counter() - t, state

        _, state = once()
        times = [once()[0] for _ in range(repeats_custom)]
        total = state.getPotentialEnergy().value_in_unit(unit.kilocalorie_per_mole)
        del context

    # The same model through OpenMM's compiled GBSAOBCForce (OBC II + ACE, the same radii and
    # screening factors taken from the CustomGBForce): OpenMM's fastest CPU path for it.
    custom = next(k for k, f in enumerate(system.getForces()) if isinstance(f, mm.CustomGBForce))
    gb = system.getForce(custom)
    native = mm.GBSAOBCForce()
    if cutoff is None:
        native.setNonbondedMethod(mm.GBSAOBCForce.NoCutoff)
    else:
        native.setNonbondedMethod(mm.GBSAOBCForce.CutoffNonPeriodic)
        native.setCutoffDistance(cutoff / 10.0)
    for i in range(gb.getNumParticles()):
        q, rho_nm, sr_nm = gb.getParticleParameters(i)
        native.addParticle(q, rho_nm + 0.009, sr_nm / rho_nm)
    system.removeForce(custom)
    system.addForce(native)
    context2 = mm.Context(system, mm.VerletIntegrator(0.001), mm.Platform.getPlatformByName("CPU"),
                          {"Threads": str(OPENMM_THREADS)})
    context2.setPositions(pos)
    context2.getState(getEnergy=True)
    times_native = []
    for _ in range(repeats):
        t = time.perf_counter()
        context2.setPositions(pos)
        state2 = context2.getState(getEnergy=True)
        times_native.append(time.perf_counter() - t)
    return {"times_s": times, "platform": "CPU", "threads": OPENMM_THREADS, "total_kcal": total,
            "native_times_s": times_native,
            "native_total_kcal": state2.getPotentialEnergy().value_in_unit(unit.kilocalorie_per_mole),
            "openmm_version": mm.__version__}


def run_case(name: str, path: str, cutoff, repeats: int, repeats_custom: int) -> dict:
    ours = run_ours(path, repeats, cutoff)
    omm = run_openmm(path, repeats, cutoff, repeats_custom)
    ours_med = statistics.median(ours["compute_s"])
    native_med = statistics.median(omm["native_times_s"])
    case = {"case": name, "system": os.path.relpath(path, ROOT), "n_atoms": ours["n_atoms"],
            "n_residues": ours["n_residues"], "cutoff_angstrom": cutoff,
            "model": "GB OBC2 + ACE, " + ("no cutoff" if cutoff is None
                                          else f"{cutoff:g} A cutoff (CutoffNonPeriodic)"),
            "ours": ours, "openmm": omm, "median_ours_compute_s": ours_med,
            "median_ours_solvation_s": statistics.median(ours["solvation_s"]),
            "median_openmm_native_s": native_med, "ratio_native": ours_med / native_med,
            "total_rel_diff_native": (abs(ours["totals"]["total"] - omm["native_total_kcal"])
                                      / abs(omm["native_total_kcal"])),
            "load_average": os.getloadavg()}
    if omm["times_s"]:
        case["median_openmm_s"] = statistics.median(omm["times_s"])
        case["ratio"] = ours_med / case["median_openmm_s"]
        case["total_rel_diff"] = abs(ours["totals"]["total"] - omm["total_kcal"]) / abs(omm["total_kcal"])
    return case


def case_lines(case: dict, repeats: int, repeats_custom: int) -> list:
    ours, omm = case["ours"], case["openmm"]
    version = omm["openmm_version"]
    lines = [f"## {case['case']}: {case['system']} ({case['n_atoms']} atoms, {case['n_residues']} residues), "
             f"{case['model']}", "",
             f"{repeats} repeats, medians; load average after the case {case['load_average'][0]:.1f} "
             "(2 cores shared with other jobs).", "",
             "| | median s | note |", "|---|---|---|",
             f"| Tessera compute (all terms + decomposition) | {case['median_ours_compute_s']:.3f} | of which "
             f"solvation {case['median_ours_solvation_s']:.3f} s; {ours['n_pairs']} residue pairs |"]
    if "median_openmm_s" in case:
        lines.append(f"| OpenMM {version} CPU, {OPENMM_THREADS} threads, implicit/obc2.xml (CustomGBForce) | "
                     f"{case['median_openmm_s']:.3f} | setPositions + getState(getEnergy); "
                     f"{len(omm['times_s'])} repeats |")
    lines.append(f"| OpenMM {version} CPU, {OPENMM_THREADS} threads, compiled GBSAOBCForce (same radii, "
                 f"OBC II + ACE) | {case['median_openmm_native_s']:.3f} | setPositions + getState(getEnergy) |")
    if "ratio" in case:
        lines.append(f"| ratio to implicit/obc2.xml (CustomGBForce) | {case['ratio']:.2f} | |")
    lines += [f"| ratio to GBSAOBCForce | {case['ratio_native']:.2f} | issue 18's target for 5k, no cutoff: <= 2 |", ""]
    text = f"Total energy: ours {ours['totals']['total']:.4f} kcal/mol"
    if "total_rel_diff" in case:
        text += f", OpenMM CustomGBForce {omm['total_kcal']:.4f} (relative difference {case['total_rel_diff']:.1e})"
    text += (f", GBSAOBCForce {omm['native_total_kcal']:.4f} ({case['total_rel_diff_native']:.1e}). "
             "OpenMM's CPU platform computes in single precision with double accumulation.")
    return lines + [text, ""]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--repeats-custom-large", type=int, default=3,
                    help="repeats of the CustomGBForce row of the 25k case (0: leave it out)")
    ap.add_argument("--cases", default="4k,25k", help="comma-separated: 4k (no cutoff), 25k (16 A cutoff)")
    args = ap.parse_args(argv)
    wanted = [c.strip() for c in args.cases.split(",") if c.strip()]
    cases = []
    for name in wanted:
        if name == "4k":
            cases.append(run_case("4k", ensure_system(), None, args.repeats, args.repeats))
        elif name == "25k":
            cases.append(run_case("25k", ensure_large_system(), LARGE_CUTOFF, args.repeats,
                                  args.repeats_custom_large))
        else:
            ap.error(f"unknown case {name!r}")
    lines = ["# Implicit-solvent benchmark (benchmarks/gb_bench.py)", ""]
    for case in cases:
        lines += case_lines(case, args.repeats, args.repeats_custom_large)
    os.makedirs(RESULTS, exist_ok=True)
    with open(os.path.join(RESULTS, "gb_latest.json"), "w") as fh:
        json.dump({"cases": cases}, fh, indent=1, default=float)
    text = "\n".join(lines)
    with open(os.path.join(RESULTS, "gb_latest.md"), "w") as fh:
        fh.write(text)
    print(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
