"""Implicit-solvent benchmark: the full decomposition with GB OBC2 + ACE against OpenMM's
single-point energy of the same system with the same model, side by side.

System: chain A of PDB 1A28 (progesterone receptor ligand-binding domain, MDAnalysisTests'
``1a28.pdb.gz``), prepared by ``tessera scan --repair --add-hydrogens --drop-unmatched
--write-prepared`` (built-in force field amber14-all), protein atoms of chain A kept (no water,
no ligand).  Written once to ``benchmarks/results/systems/gb_1a28_A.pdb``.

Ours: ``energy.decomposition.pipeline.compute`` with ``EnergySettings(implicit_solvent="obc2")``
(no cutoff, ACE on), in this process after one warm-up call, ``timings["compute"]`` (every term,
the Born radii and the residue-pair decomposition) and ``timings["solvation"]``.
OpenMM: ``ForceField('amber14-all.xml', 'amber14/tip3p.xml', 'implicit/obc2.xml')``,
``createSystem(NoCutoff)``, platform **CPU** with ``Threads=2``, one warm-up
``setPositions + getState(getEnergy=True)``, then the same two calls timed.
Medians over ``--repeats`` (default 5).  Results: ``benchmarks/results/gb_latest.md`` / ``.json``.

    .venv/bin/python benchmarks/gb_bench.py [--repeats N]
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


def run_ours(path: str, repeats: int) -> dict:
    from energy.decomposition.pipeline import compute, prepare_system
    from energy.io.loaders import load_system
    from energy.model.settings import EnergySettings
    from energy.warmup import prepare_kernels

    prepare_kernels()
    loaded = load_system(path)
    prepare_system(loaded.system)
    settings = EnergySettings(implicit_solvent="obc2")
    result = compute(loaded.system, loaded.frame, settings)      # warm-up
    runs = [compute(loaded.system, loaded.frame, settings) for _ in range(repeats)]
    return {"n_atoms": loaded.system.n_atoms, "n_residues": loaded.system.n_residues,
            "compute_s": [r.timings["compute"] for r in runs],
            "solvation_s": [r.timings["solvation"] for r in runs],
            "n_pairs": len(result.residue_pairs), "totals": result.totals}


def run_openmm(path: str, repeats: int) -> dict:
    import openmm as mm
    from openmm import app, unit

    structure = app.PDBFile(path)
    ff = app.ForceField("amber14-all.xml", "amber14/tip3p.xml", "implicit/obc2.xml")
    system = ff.createSystem(structure.topology, nonbondedMethod=app.NoCutoff, constraints=None)
    context = mm.Context(system, mm.VerletIntegrator(0.001), mm.Platform.getPlatformByName("CPU"),
                         {"Threads": str(OPENMM_THREADS)})
    pos = structure.getPositions(asNumpy=True)

    def once():
        t = time.perf_counter()
        context.setPositions(pos)
        state = context.getState(getEnergy=True)
        return time.perf_counter() - t, state

    _, state = once()
    times = [once()[0] for _ in range(repeats)]
    total = state.getPotentialEnergy().value_in_unit(unit.kilocalorie_per_mole)

    # The same model through OpenMM's compiled GBSAOBCForce (OBC II + ACE, the same radii and
    # screening factors taken from the CustomGBForce): OpenMM's fastest CPU path for it.
    custom = next(k for k, f in enumerate(system.getForces()) if isinstance(f, mm.CustomGBForce))
    gb = system.getForce(custom)
    native = mm.GBSAOBCForce()
    native.setNonbondedMethod(mm.GBSAOBCForce.NoCutoff)
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


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args(argv)
    path = ensure_system()
    ours = run_ours(path, args.repeats)
    omm = run_openmm(path, args.repeats)
    ours_med = statistics.median(ours["compute_s"])
    omm_med = statistics.median(omm["times_s"])
    rel = abs(ours["totals"]["total"] - omm["total_kcal"]) / abs(omm["total_kcal"])
    native_med = statistics.median(omm["native_times_s"])
    rel_native = abs(ours["totals"]["total"] - omm["native_total_kcal"]) / abs(omm["native_total_kcal"])
    report = {"system": os.path.relpath(path, ROOT), "n_atoms": ours["n_atoms"], "n_residues": ours["n_residues"],
              "model": "GB OBC2 + ACE, no cutoff", "ours": ours, "openmm": omm,
              "median_ours_compute_s": ours_med, "median_ours_solvation_s": statistics.median(ours["solvation_s"]),
              "median_openmm_s": omm_med, "ratio": ours_med / omm_med, "total_rel_diff": rel,
              "median_openmm_native_s": native_med, "ratio_native": ours_med / native_med,
              "total_rel_diff_native": rel_native,
              "load_average": os.getloadavg()}
    lines = ["# Implicit-solvent benchmark (benchmarks/gb_bench.py)", "",
             f"System: {report['system']} ({ours['n_atoms']} atoms, {ours['n_residues']} residues), "
             f"GB OBC2 + ACE, no cutoff; {args.repeats} repeats, medians; load average at the end "
             f"{report['load_average'][0]:.1f} (2 cores shared).", "",
             "| | median s | note |", "|---|---|---|",
             f"| Tessera compute (all terms + decomposition) | {ours_med:.3f} | of which solvation "
             f"{report['median_ours_solvation_s']:.3f} s; {ours['n_pairs']} residue pairs |",
             f"| OpenMM {omm['openmm_version']} CPU, {OPENMM_THREADS} threads, energy only | {omm_med:.3f} | "
             "setPositions + getState(getEnergy) |",
             f"| OpenMM {omm['openmm_version']} CPU, {OPENMM_THREADS} threads, compiled GBSAOBCForce (same "
             f"radii, OBC II + ACE) | {native_med:.3f} | setPositions + getState(getEnergy) |",
             f"| ratio to implicit/obc2.xml (CustomGBForce) | {report['ratio']:.2f} | target of issue 18: <= 2 |",
             f"| ratio to GBSAOBCForce | {report['ratio_native']:.2f} | |", "",
             f"Total energy: ours {ours['totals']['total']:.4f}, OpenMM {omm['total_kcal']:.4f} kcal/mol "
             f"(relative difference {rel:.1e}); with GBSAOBCForce {omm['native_total_kcal']:.4f} "
             f"({rel_native:.1e}). OpenMM's CPU platform computes in single precision with double "
             "accumulation."]
    os.makedirs(RESULTS, exist_ok=True)
    with open(os.path.join(RESULTS, "gb_latest.json"), "w") as fh:
        json.dump(report, fh, indent=1, default=float)
    text = "\n".join(lines) + "\n"
    with open(os.path.join(RESULTS, "gb_latest.md"), "w") as fh:
        fh.write(text)
    print(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
