"""Tessera benchmark: ``tessera scan`` against OpenMM's single-point energy, side by side.

Run with ``make bench`` (or ``.venv/bin/python benchmarks/run.py [--quick]``).  See
``benchmarks/README.md`` for what is measured and how to read the table.

For each benchmark system (:mod:`systems`) and setting, in this order:

1. OpenMM, in a fresh child process: read the PDB, ``ForceField(amber14-all.xml,
   amber14/tip3p.xml).createSystem(...)`` with the same settings, CPU platform with
   ``Threads=2``, one Context; one warm-up ``setPositions + getState(getEnergy=True)``, then N
   timed repeats of the same two calls.  The child reports its times and energies as JSON.
2. ``tessera scan SYSTEM.pdb ... --json OUT --quiet``, N times, each a fresh child process:
   ``timings`` and ``totals`` are read from OUT; wall time and peak RSS (``ru_maxrss`` from
   ``os.wait4`` on that child alone) are measured here.

The table goes to stdout, ``benchmarks/results/latest.md`` and ``benchmarks/results/latest.json``
(``scaling.md``/``scaling.json`` for ``--scaling``).
If ``benchmarks/gui_bench.py`` exists it is run last and its output included.
"""
from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import threading
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
RESULTS = os.path.join(HERE, "results")
sys.path.insert(0, HERE)

import systems  # noqa: E402

#: setting name -> (tessera scan arguments, OpenMM nonbonded method name, cutoff nm or None)
SETTINGS = {
    "cutoff12-rf": (["--cutoff", "12", "--electrostatics", "reaction-field"], "CutoffPeriodic", 1.2),
    "no-cutoff": ([], "NoCutoff", None),
}
#: system -> settings run on it
PLAN = {"water_5k": ["cutoff12-rf", "no-cutoff"], "water_25k": ["cutoff12-rf"],
        "water_100k": ["cutoff12-rf"]}
REPEATS = {"water_5k": 5, "water_25k": 5, "water_100k": 3}
#: `--scaling`: one cutoff setting on every size, one run each (time and memory against size).
SCALING_SYSTEMS = ["water_5k", "water_10k", "water_25k", "water_50k", "water_100k", "water_250k"]
QUICK_SYSTEMS = ["water_5k", "water_25k"]
QUICK_REPEATS = 2
OPENMM_THREADS = 2
#: Target of the speed issue: compute within 2x of OpenMM's energy call, peak memory under 2 GB.
TARGET = {"system": "water_100k", "setting": "cutoff12-rf", "max_ratio": 2.0, "max_rss_mib": 2048.0}
#: Relative disagreement of total energies that counts as a finding.
ENERGY_RTOL = 1e-4
CHILD_TIMEOUT_S = 3600
GUI_BENCH = os.path.join(HERE, "gui_bench.py")
KCAL_PER_KJ = 1.0 / 4.184


# ---------------------------------------------------------------------------------------------
# Child processes


def run_child(argv, stdout_path=None, timeout=CHILD_TIMEOUT_S, env=None) -> dict:
    """Run ``argv``; return exit code, wall seconds, peak RSS (MiB) of that child, stderr tail."""
    with tempfile.TemporaryFile("w+") as err, \
            open(stdout_path or os.devnull, "w") as out:
        parent_rss = own_rss_mib()[1]
        t0 = time.perf_counter()
        proc = subprocess.Popen(argv, stdout=out, stderr=err, cwd=ROOT, env=env)
        timer = threading.Timer(timeout, proc.kill)
        timer.start()
        try:
            _, status, usage = os.wait4(proc.pid, 0)
        finally:
            timer.cancel()
        wall = time.perf_counter() - t0
        proc.returncode = os.waitstatus_to_exitcode(status)
        err.seek(0)
        stderr = err.read()
    return {"returncode": proc.returncode, "wall_s": wall, "peak_rss_mib": usage.ru_maxrss / 1024.0,
            "parent_rss_mib_at_spawn": parent_rss,
            "user_s": usage.ru_utime, "sys_s": usage.ru_stime, "stderr": stderr[-4000:]}


def engine_fingerprint() -> dict:
    """git HEAD plus a hash of every engine source file as it is on disk now (the tree is shared:
    files may change while the benchmark runs)."""
    import hashlib
    h = hashlib.sha256()
    for folder in ("energy",):
        for dirpath, dirnames, filenames in sorted(os.walk(os.path.join(ROOT, folder))):
            dirnames.sort()
            for fn in sorted(filenames):
                if fn.endswith(".py"):
                    path = os.path.join(dirpath, fn)
                    h.update(os.path.relpath(path, ROOT).encode())
                    with open(path, "rb") as fh:
                        h.update(fh.read())
    try:
        head = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=ROOT, capture_output=True,
                              text=True, timeout=30).stdout.strip()
        dirty = subprocess.run(["git", "status", "--porcelain", "--", "energy"], cwd=ROOT,
                               capture_output=True, text=True, timeout=30).stdout.strip()
    except (OSError, subprocess.SubprocessError):
        head, dirty = "unknown", ""
    return {"git_head": head, "engine_dirty": bool(dirty), "engine_sha256": h.hexdigest()[:16]}


def tessera_command() -> list[str]:
    exe = os.path.join(os.path.dirname(sys.executable), "tessera")
    if os.path.exists(exe):
        return [exe]
    return [sys.executable, "-m", "app.cli.main"]


def run_tessera(pdb: str, setting: str, out_json: str) -> dict:
    argv = [*tessera_command(), "scan", pdb, *SETTINGS[setting][0], "--json", out_json, "--quiet"]
    if os.path.exists(out_json):
        os.unlink(out_json)
    child = run_child(argv)
    if child["returncode"] != 0:
        raise RuntimeError(f"{' '.join(argv)} failed (exit {child['returncode']}, after "
                           f"{child['wall_s']:.1f} s, peak RSS {child['peak_rss_mib']:.0f} MiB):\n"
                           f"{child['stderr']}")
    return {**child, **scan_summary(out_json), "json_bytes": os.path.getsize(out_json),
            "command": argv}


#: Run in a separate child: loading a 1 GB scan JSON would bloat this process, and a child
#: spawned later inherits the parent's peak RSS as the floor of its own ru_maxrss (Linux counts
#: the pre-exec address space), which would corrupt every later measurement.
_SUMMARY_SCRIPT = """
import json, sys
doc = json.load(open(sys.argv[1]))
print(json.dumps({"timings": doc["timings"], "totals": doc["totals"], "n_atoms": doc["n_atoms"],
                  "n_residues": doc["n_residues"], "n_pairs_reported": len(doc.get("pairs", [])),
                  "n_atom_pairs_within_cutoff": doc.get("n_atom_pairs_within_cutoff")}))
"""


def scan_summary(out_json: str) -> dict:
    proc = subprocess.run([sys.executable, "-c", _SUMMARY_SCRIPT, out_json], capture_output=True,
                          text=True, timeout=CHILD_TIMEOUT_S)
    if proc.returncode != 0:
        raise RuntimeError(f"could not read {out_json}: {proc.stderr[-2000:]}")
    return json.loads(proc.stdout)


def own_rss_mib() -> tuple[float, float]:
    """(current, peak) resident set of this process, MiB."""
    import resource
    current = float("nan")
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmRSS:"):
                    current = int(line.split()[1]) / 1024.0
    except OSError:
        pass
    return current, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def openmm_worker(pdb: str, setting: str, repeats: int, out_json: str) -> int:
    """Child-process side of the OpenMM reference (``run.py --openmm-worker ...``)."""
    import openmm as mm
    from openmm import app, unit

    _, method, cutoff_nm = SETTINGS[setting]
    t0 = time.perf_counter()
    structure = app.PDBFile(pdb)
    ff = app.ForceField(*systems.FORCE_FIELD)
    kwargs = dict(nonbondedMethod=getattr(app, method), constraints=None, rigidWater=False)
    if cutoff_nm is not None:
        kwargs["nonbondedCutoff"] = cutoff_nm * unit.nanometer
    system = ff.createSystem(structure.topology, **kwargs)
    groups = {}
    for k, force in enumerate(system.getForces()):
        force.setForceGroup(k)
        groups[k] = force.__class__.__name__
        if isinstance(force, mm.NonbondedForce):
            force.setReactionFieldDielectric(78.5)
            force.setUseDispersionCorrection(False)
    t_system = time.perf_counter()
    platform_ = mm.Platform.getPlatformByName("CPU")
    context = mm.Context(system, mm.VerletIntegrator(0.001 * unit.picosecond), platform_,
                         {"Threads": str(OPENMM_THREADS)})
    t_context = time.perf_counter()
    pos = structure.getPositions(asNumpy=True)

    def once():
        t = time.perf_counter()
        context.setPositions(pos)
        state = context.getState(getEnergy=True)
        return time.perf_counter() - t, state

    warm, state = once()
    times = [once()[0] for _ in range(repeats)]
    total = state.getPotentialEnergy().value_in_unit(unit.kilocalorie_per_mole)
    per_force = {}
    for k, name in groups.items():
        e = context.getState(getEnergy=True, groups={k}).getPotentialEnergy()
        per_force[name] = per_force.get(name, 0.0) + e.value_in_unit(unit.kilocalorie_per_mole)
    doc = {"setup_system_s": t_system - t0, "context_s": t_context - t_system, "warmup_s": warm,
           "times_s": times, "total_kcal": total, "per_force_kcal": per_force,
           "n_atoms": system.getNumParticles(),
           "threads": context.getPlatform().getPropertyValue(context, "Threads"),
           "openmm_version": mm.__version__, "nonbonded_method": method, "cutoff_nm": cutoff_nm}
    with open(out_json, "w") as fh:
        json.dump(doc, fh, indent=1)
    return 0


def run_openmm(pdb: str, setting: str, repeats: int, out_json: str) -> dict:
    argv = [sys.executable, os.path.abspath(__file__), "--openmm-worker", pdb, setting, str(repeats),
            out_json]
    child = run_child(argv)
    if child["returncode"] != 0:
        raise RuntimeError(f"OpenMM reference failed ({child['returncode']}):\n{child['stderr']}")
    with open(out_json) as fh:
        return {**child, **json.load(fh)}


# ---------------------------------------------------------------------------------------------
# Comparison and reporting


def tessera_by_force(totals: dict) -> dict:
    """Tessera totals grouped like OpenMM's forces (amber14: no Urey-Bradley, CMAP or impropers)."""
    return {"HarmonicBondForce": totals["bond"] + totals["urey_bradley"],
            "HarmonicAngleForce": totals["angle"],
            "PeriodicTorsionForce": totals["dihedral"] + totals["improper"],
            "CMAPTorsionForce": totals["cmap"],
            "NonbondedForce": totals["coulomb"] + totals["lj"]}


def rel_diff(a: float, b: float) -> float:
    return abs(a - b) / max(abs(b), 1e-12)


def median(xs):
    return statistics.median(xs) if xs else float("nan")


def summarise(name: str, info: dict, setting: str, tess_runs: list, omm: dict) -> dict:
    keys = sorted({k for r in tess_runs for k in r["timings"]})
    phases = {k: median([r["timings"][k] for r in tess_runs if k in r["timings"]]) for k in keys}
    t_compute = phases["compute"]
    t_omm = median(omm["times_s"])
    tot_t = tess_runs[-1]["totals"]["total"]
    tot_o = omm["total_kcal"]
    by_force_t = tessera_by_force(tess_runs[-1]["totals"])
    force_cmp = {}
    for force, e_o in omm["per_force_kcal"].items():
        if force in by_force_t:
            force_cmp[force] = {"tessera": by_force_t[force], "openmm": e_o,
                                "abs_diff": by_force_t[force] - e_o}
    spread = max(r["totals"]["total"] for r in tess_runs) - min(r["totals"]["total"] for r in tess_runs)
    return {
        "system": name, "atoms": info["n_atoms"], "setting": setting, "repeats": len(tess_runs),
        "tessera_compute_median_s": t_compute,
        "tessera_compute_s": [r["timings"]["compute"] for r in tess_runs],
        "tessera_phase_medians_s": phases,
        "tessera_wall_median_s": median([r["wall_s"] for r in tess_runs]),
        "tessera_peak_rss_mib": max(r["peak_rss_mib"] for r in tess_runs),
        "tessera_peak_rss_mib_runs": [r["peak_rss_mib"] for r in tess_runs],
        "benchmark_process_peak_rss_mib": max(r["parent_rss_mib_at_spawn"] for r in tess_runs),
        "tessera_json_mib": tess_runs[-1]["json_bytes"] / 2 ** 20,
        "tessera_n_pairs_reported": tess_runs[-1]["n_pairs_reported"],
        "tessera_n_atom_pairs_within_cutoff": tess_runs[-1]["n_atom_pairs_within_cutoff"],
        "openmm_median_s": t_omm, "openmm_s": omm["times_s"], "openmm_warmup_s": omm["warmup_s"],
        "openmm_setup_system_s": omm["setup_system_s"], "openmm_context_s": omm["context_s"],
        "openmm_child_wall_s": omm["wall_s"], "openmm_peak_rss_mib": omm["peak_rss_mib"],
        "ratio": t_compute / t_omm if t_omm > 0 else float("inf"),
        "tessera_total_kcal": tot_t, "openmm_total_kcal": tot_o,
        "total_rel_diff": rel_diff(tot_t, tot_o),
        "tessera_total_spread_over_runs": spread,
        "per_force": force_cmp, "tessera_totals": tess_runs[-1]["totals"],
        "tessera_runs": [{k: r[k] for k in ("timings", "wall_s", "peak_rss_mib", "user_s", "sys_s")}
                         for r in tess_runs],
    }


def fmt(x, spec):
    return "n/a" if x is None else format(x, spec)


def markdown(report: dict) -> str:
    rows = report["rows"]
    out = [f"# Tessera benchmark ({report['started']})", "",
           f"Machine: {report['machine']['cpus']} CPUs, {report['machine']['platform']}; "
           f"Python {report['machine']['python']}; OpenMM {report['machine']['openmm']} "
           f"(CPU platform, Threads={OPENMM_THREADS}); numba threads {report['machine']['numba_threads']}.",
           f"Command: `{report['command']}`.  Medians over N runs measured in this same run; "
           "ratio = tessera compute median / OpenMM median.",
           f"Engine: git {report['engine_start']['git_head']}"
           f"{' + uncommitted changes in energy/' if report['engine_start']['engine_dirty'] else ''}, "
           f"sources sha256 {report['engine_start']['engine_sha256']}.", ""]
    if report.get("engine_changed"):
        out += [f"**Warning: {report['engine_changed']}.**", ""]
    out += [
           "| system | atoms | setting | N | tessera compute median (s) | OpenMM median (s) | ratio "
           "| tessera peak RSS (MB) | tessera total (kcal/mol) | OpenMM total (kcal/mol) | rel. diff |",
           "|---|---:|---|---:|---:|---:|---:|---:|---:|---:|---:|"]
    for r in rows:
        out.append(f"| {r['system']} | {r['atoms']} | {r['setting']} | {r['repeats']} "
                   f"| {r['tessera_compute_median_s']:.3f} | {r['openmm_median_s']:.4f} "
                   f"| {r['ratio']:.1f} | {r['tessera_peak_rss_mib']:.0f} "
                   f"| {r['tessera_total_kcal']:.4f} | {r['openmm_total_kcal']:.4f} "
                   f"| {r['total_rel_diff']:.1e} |")
    floor = max((r["benchmark_process_peak_rss_mib"] for r in rows), default=0.0)
    out += ["", "MB = MiB (2^20 bytes), the peak resident set of the `tessera scan` process "
            f"(largest over its N runs; the benchmark process itself peaked at {floor:.0f} MiB, "
            "a floor below which a child's figure cannot be read).  1-minute load average before/after each case: "
            + ", ".join(f"{r['system']} {r['setting']} {r['loadavg_1min_before']:.1f}/"
                        f"{r['loadavg_1min_after']:.1f}" for r in rows)
            + f" ({report['machine']['cpus']} CPUs; above that, other work competed for the CPUs).", "",
            "## Tessera phases (medians, s) and whole-process figures", "",
            "| system | setting | read | parameterise | prepare | prepare_system | bonded | neighbour_search "
            "| nonbonded | aggregate | compute | write | process wall | JSON (MB) | pairs in JSON |",
            "|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|"]
    for r in rows:
        p = r["tessera_phase_medians_s"]
        g = lambda k: fmt(p.get(k), ".3f")  # noqa: E731
        out.append(f"| {r['system']} | {r['setting']} | {g('read')} | {g('parameterise')} | {g('prepare')} "
                   f"| {g('prepare_system')} | {g('compute_bonded')} | {g('compute_neighbour_search')} "
                   f"| {g('compute_nonbonded')} | {g('compute_aggregate')} | {g('compute')} "
                   f"| {g('write')} | {r['tessera_wall_median_s']:.2f} | {r['tessera_json_mib']:.1f} "
                   f"| {r['tessera_n_pairs_reported']} |")
    out += ["", "`write` is what the JSON timings call write (building the document); the process "
            "wall time also covers interpreter start-up, imports, numba cache loading and the file "
            "write itself.", "",
            "## OpenMM reference (fresh child process per system and setting)", "",
            "| system | setting | energy median (s) | warm-up (s) | createSystem incl. PDB read (s) "
            "| Context (s) | process wall (s) | peak RSS (MB) |",
            "|---|---|---:|---:|---:|---:|---:|---:|"]
    for r in rows:
        out.append(f"| {r['system']} | {r['setting']} | {r['openmm_median_s']:.4f} "
                   f"| {r['openmm_warmup_s']:.3f} | {r['openmm_setup_system_s']:.2f} "
                   f"| {r['openmm_context_s']:.2f} | {r['openmm_child_wall_s']:.2f} "
                   f"| {r['openmm_peak_rss_mib']:.0f} |")
    out += ["", "## Energies per OpenMM force (kcal/mol)", "",
            "| system | setting | force | tessera | OpenMM | tessera - OpenMM |", "|---|---|---|---:|---:|---:|"]
    for r in rows:
        for force, c in r["per_force"].items():
            out.append(f"| {r['system']} | {r['setting']} | {force} | {c['tessera']:.4f} "
                       f"| {c['openmm']:.4f} | {c['abs_diff']:+.4f} |")
    out += ["", "## Target", "", report["target"]["text"], ""]
    if report["failures"]:
        out += ["## Failed runs", ""]
        out += [f"- {f['system']} {f['setting']}: {f['error'][-1500:]}" for f in report["failures"]] + [""]
    if report["energy_findings"]:
        out += ["## Energy disagreements beyond 1e-4 relative", ""]
        out += [f"- {t}" for t in report["energy_findings"]] + [""]
    if report.get("warmup"):
        w = report["warmup"]
        out += [f"Warm-up `tessera scan` (not counted, fills the numba cache): {w['system']} "
                f"{w['setting']}, compute {w['compute_s']:.3f} s, process wall {w['wall_s']:.2f} s.", ""]
    gui = report.get("gui_bench")
    if gui is not None:
        out += ["## GUI benchmark (`benchmarks/gui_bench.py`)", "",
                f"Exit status {gui['returncode']}, {gui['wall_s']:.1f} s.", "", "```",
                gui["stdout"].rstrip(), "```", ""]
        if gui["returncode"] != 0 and gui["stderr"].strip():
            out += ["stderr (tail):", "", "```", gui["stderr"].rstrip()[-3000:], "```", ""]
    return "\n".join(out)


def target_verdict(rows, failures=()) -> dict:
    row = next((r for r in rows if r["system"] == TARGET["system"] and r["setting"] == TARGET["setting"]),
               None)
    failed = [f for f in failures if f["system"] == TARGET["system"] and f["setting"] == TARGET["setting"]]
    if row is None and failed:
        return {"measured": True, "met": False, "text": f"{TARGET['system']} {TARGET['setting']}: the "
                "run FAILED (see Failed runs), so the target is NOT MET."}
    if row is None:
        return {"measured": False, "text": f"Not measured in this run ({TARGET['system']} "
                                           f"{TARGET['setting']} was not part of it)."}
    ok_time = row["ratio"] <= TARGET["max_ratio"]
    ok_mem = row["tessera_peak_rss_mib"] < TARGET["max_rss_mib"]
    text = (f"{TARGET['system']} ({row['atoms']} atoms), {TARGET['setting']}: ratio "
            f"{row['ratio']:.1f}x OpenMM (target <= {TARGET['max_ratio']:g}x): "
            f"{'met' if ok_time else 'NOT met'}; peak RSS {row['tessera_peak_rss_mib']:.0f} MiB "
            f"(target < {TARGET['max_rss_mib']:.0f} MiB = {TARGET['max_rss_mib'] / 1024:g} GiB): "
            f"{'met' if ok_mem else 'NOT met'}. "
            f"Overall: {'MET' if ok_time and ok_mem else 'NOT MET'}.")
    return {"measured": True, "time_met": ok_time, "memory_met": ok_mem, "met": ok_time and ok_mem,
            "text": text}


def run_gui_bench() -> dict | None:
    if not os.path.exists(GUI_BENCH):
        return None
    print("running benchmarks/gui_bench.py ...", flush=True)
    env = dict(os.environ)
    env.setdefault("QT_QPA_PLATFORM", "offscreen")
    with tempfile.NamedTemporaryFile("r", suffix=".txt", delete=False) as tmp:
        path = tmp.name
    try:
        child = run_child([sys.executable, GUI_BENCH], stdout_path=path, env=env)
        with open(path) as fh:
            child["stdout"] = fh.read()
    finally:
        os.unlink(path)
    print(child["stdout"], flush=True)
    return child


def machine_info() -> dict:
    import openmm
    try:
        import numba
        numba_threads = numba.config.NUMBA_NUM_THREADS
    except Exception:  # pragma: no cover
        numba_threads = None
    return {"cpus": os.cpu_count(), "platform": platform.platform(), "python": platform.python_version(),
            "openmm": openmm.__version__, "numba_threads": numba_threads}


def main(argv=None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv and argv[0] == "--openmm-worker":
        return openmm_worker(argv[1], argv[2], int(argv[3]), argv[4])
    p = argparse.ArgumentParser(description="Benchmark tessera scan against OpenMM.")
    p.add_argument("--quick", action="store_true",
                   help=f"only {', '.join(QUICK_SYSTEMS)}, {QUICK_REPEATS} repeats, no GUI benchmark")
    p.add_argument("--systems", nargs="+", choices=list(PLAN), help="systems to run (default: all)")
    p.add_argument("--scaling", action="store_true",
                   help="scaling table: 5k to 250k atoms, 12 A cutoff with reaction field, 1 run each")
    p.add_argument("--repeats", type=int, help="override N for every system")
    p.add_argument("--no-gui", action="store_true", help="skip benchmarks/gui_bench.py")
    args = p.parse_args(argv)

    names = args.systems or (QUICK_SYSTEMS if args.quick else list(PLAN))
    if args.scaling:
        names = SCALING_SYSTEMS
        for name in names:
            PLAN[name] = ["cutoff12-rf"]
            REPEATS[name] = 1
    os.makedirs(os.path.join(RESULTS, "scan"), exist_ok=True)
    started = time.strftime("%Y-%m-%d %H:%M:%S")
    report = {"started": started, "machine": machine_info(),
              "command": " ".join(["benchmarks/run.py", *argv]) or "benchmarks/run.py",
              "systems": {}, "rows": [], "energy_findings": [], "failures": []}

    report["engine_start"] = engine_fingerprint()
    paths = {}
    for name in names:
        paths[name], report["systems"][name] = systems.ensure(name)

    # Warm-up: one uncounted scan so that numba's on-disk cache is filled before timing.
    first = names[0]
    warm_json = os.path.join(RESULTS, "scan", "warmup.json")
    w = run_tessera(paths[first], PLAN[first][0], warm_json)
    report["warmup"] = {"system": first, "setting": PLAN[first][0], "compute_s": w["timings"]["compute"],
                        "wall_s": w["wall_s"]}
    print(f"warm-up scan of {first}: compute {w['timings']['compute']:.3f} s, wall {w['wall_s']:.1f} s",
          flush=True)

    for name in names:
        for setting in PLAN[name]:
            n = args.repeats or (QUICK_REPEATS if args.quick else REPEATS[name])
            tag = f"{name}-{setting}"
            print(f"{tag}: OpenMM reference ...", flush=True)
            engine_before = engine_fingerprint()
            load_before = os.getloadavg()[0]
            try:
                omm = run_openmm(paths[name], setting, n,
                                 os.path.join(RESULTS, "scan", f"{tag}-openmm.json"))
                print(f"  OpenMM energy median {median(omm['times_s']):.4f} s "
                      f"(setup {omm['setup_system_s']:.1f} s + context {omm['context_s']:.1f} s)",
                      flush=True)
                runs = []
                for k in range(n):
                    r = run_tessera(paths[name], setting, os.path.join(RESULTS, "scan", f"{tag}.json"))
                    runs.append(r)
                    print(f"  tessera run {k + 1}/{n}: compute {r['timings']['compute']:.3f} s, "
                          f"wall {r['wall_s']:.1f} s, peak RSS {r['peak_rss_mib']:.0f} MiB", flush=True)
            except RuntimeError as exc:
                print(f"  FAILED: {exc}", flush=True)
                report["failures"].append({"system": name, "setting": setting, "error": str(exc)})
                continue
            row = summarise(name, report["systems"][name], setting, runs, omm)
            row["engine_before"], row["engine_after"] = engine_before, engine_fingerprint()
            row["loadavg_1min_before"], row["loadavg_1min_after"] = load_before, os.getloadavg()[0]
            report["rows"].append(row)
            if row["total_rel_diff"] > ENERGY_RTOL:
                report["energy_findings"].append(
                    f"{name} ({row['atoms']} atoms), {setting}: tessera {row['tessera_total_kcal']:.4f} vs "
                    f"OpenMM {row['openmm_total_kcal']:.4f} kcal/mol, relative {row['total_rel_diff']:.2e}")
            print(f"  ratio {row['ratio']:.1f}, energies {row['tessera_total_kcal']:.4f} vs "
                  f"{row['openmm_total_kcal']:.4f} (rel {row['total_rel_diff']:.1e})", flush=True)

    report["target"] = target_verdict(report["rows"], report["failures"])
    report["engine_end"] = engine_fingerprint()
    # Compare the engine sources only: a commit elsewhere (docs, benchmarks) changes the git
    # revision but not what was measured.
    sha = lambda fp: fp.get("engine_sha256") if isinstance(fp, dict) else fp  # noqa: E731
    if sha(report["engine_end"]) != sha(report["engine_start"]) or any(
            sha(r["engine_before"]) != sha(r["engine_after"]) for r in report["rows"]):
        report["engine_changed"] = ("the engine sources (energy/) changed while the benchmark ran "
                                    f"({report['engine_start']['engine_sha256']} at the start, "
                                    f"{report['engine_end']['engine_sha256']} at the end): rows may "
                                    "mix engine versions; rerun for a consistent table")
    if not (args.quick or args.no_gui):
        report["gui_bench"] = run_gui_bench()
    report["finished"] = time.strftime("%Y-%m-%d %H:%M:%S")
    text = markdown(report)
    stem = "scaling" if args.scaling else "latest"   # a scaling run keeps the main table
    with open(os.path.join(RESULTS, f"{stem}.md"), "w") as fh:
        fh.write(text + "\n")
    with open(os.path.join(RESULTS, f"{stem}.json"), "w") as fh:
        json.dump(report, fh, indent=1)
    print()
    print(text)
    for finding in report["energy_findings"]:
        print(f"WARNING: energy disagreement: {finding}", file=sys.stderr)
    if report.get("engine_changed"):
        print(f"WARNING: {report['engine_changed']}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
