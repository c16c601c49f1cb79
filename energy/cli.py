"""The ``tessera`` command.

``tessera`` with no arguments (or ``tessera view FILES...``, or plain ``tessera FILES...``) opens
the desktop window; ``tessera scan ...`` runs the headless decomposition.  Expected failures
print one line on stderr and exit with status 2; nothing is left half-written.
"""
from __future__ import annotations

import argparse
import os
import sys
import time

from .errors import EnergyError

SUBCOMMANDS = ("scan", "view", "compare", "clashes")
#: Exit status when the window cannot open for want of a display (``make run`` accepts it).
EXIT_NO_DISPLAY = 3


def add_input_arguments(p: argparse.ArgumentParser) -> None:
    """Arguments shared by every command that loads a system."""
    p.add_argument("structure", help="PSF topology, or a PDB/mmCIF for the built-in force field")
    p.add_argument("coords", nargs="?", default=None,
                   help="coordinates (PDB, CRD, DCD, ...); required with a PSF")
    p.add_argument("--params", action="append", default=[], metavar="FILE",
                   help="CHARMM-style parameter or stream file (repeat for several)")
    p.add_argument("--frame", type=int, default=0, metavar="N", help="frame of a trajectory (0-based)")
    p.add_argument("--add-hydrogens", action="store_true",
                   help="add missing hydrogens at pH 7 (built-in force field only)")


def add_settings_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--cutoff", type=float, default=None, metavar="R",
                   help="nonbonded cutoff in A (default: none, all pairs)")
    p.add_argument("--switch", type=float, default=None, metavar="R_ON",
                   help="start of the LJ switching function in A (needs --cutoff)")
    p.add_argument("--electrostatics", choices=("plain", "reaction-field", "distance-dependent", "shifted"),
                   default="plain", help="Coulomb model (reaction-field and shifted need --cutoff)")
    p.add_argument("--vdw", choices=("lj", "exp6"), default="lj",
                   help="repulsion-dispersion form: the force field's LJ 12-6, or exp-6 with the same "
                        "minimum per pair")
    p.add_argument("--exp6-alpha", type=float, default=None, metavar="A",
                   help="exp-6 steepness (default 13.772, matching the LJ curvature at the minimum)")
    p.add_argument("--dielectric", type=float, default=1.0,
                   help="relative dielectric (plain), or D in eps = D*r (distance-dependent)")
    p.add_argument("--solvent-dielectric", type=float, default=78.5,
                   help="dielectric beyond the cutoff for the reaction field (default 78.5)")
    p.add_argument("--no-periodic", action="store_true",
                   help="ignore the unit cell (no minimum image)")


def settings_from_args(args):
    from .settings import EXP6_ALPHA_MATCHING_LJ, EnergySettings
    alpha = EXP6_ALPHA_MATCHING_LJ if args.exp6_alpha is None else args.exp6_alpha
    return EnergySettings(cutoff_angstrom=args.cutoff, switch_angstrom=args.switch,
                          electrostatics=args.electrostatics, dielectric=args.dielectric,
                          solvent_dielectric=args.solvent_dielectric,
                          use_periodic=not args.no_periodic, vdw=args.vdw, exp6_alpha=alpha)


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The argument parser; with ``command`` given, only that subcommand's options are set up
    (the other subcommands' modules are not imported, which keeps start-up short)."""
    parser = argparse.ArgumentParser(prog="tessera", description=(
        "Where is the energy? Per-term, per-residue-pair force-field energies of a protein model."))
    sub = parser.add_subparsers(dest="command")
    scan = sub.add_parser("scan", help="compute every term and the residue-pair decomposition")
    add_input_arguments(scan)
    add_settings_arguments(scan)
    scan.add_argument("--select-a", metavar="SEL", help="MDAnalysis selection A (e.g. 'segid A')")
    scan.add_argument("--select-b", metavar="SEL", help="MDAnalysis selection B")
    scan.add_argument("--json", metavar="OUT.json", help="write the full result as JSON")
    scan.add_argument("--csv-dir", metavar="DIR", help="write residues.csv and residue_pairs.csv")
    scan.add_argument("--top", type=int, default=8, help="pairs shown in the summary (default 8)")
    scan.add_argument("--quiet", action="store_true", help="no summary or progress on stdout/stderr")
    traj = scan.add_argument_group("trajectories")
    traj.add_argument("--frames", metavar="START:STOP:STEP", default=None,
                      help="decompose a range of frames of the coordinate trajectory")
    traj.add_argument("--workers", type=int, default=1, metavar="N",
                      help="frames in parallel on this machine (with --frames)")
    traj.add_argument("--scheduler", metavar="ADDRESS", default=None,
                      help="send frames to a running Dask distributed scheduler (with --frames)")
    traj.add_argument("--pairs", metavar="I-J", action="append", default=[],
                      help="residue pair (0-based indices, e.g. 12-87) whose per-frame energies to record")
    traj.add_argument("--persistence-threshold", type=float, default=-1.0, metavar="E",
                      help="a residue pair 'persists' in frames where its total is below E kcal/mol "
                           "(default -1.0)")
    compare = sub.add_parser("compare", help="difference map of two structures of the same system")
    if command in (None, "compare"):
        from . import compare_cli
        compare_cli.configure_parser(compare)
    clashes = sub.add_parser("clashes", help="rank overlapping atom pairs (steric clashes)")
    if command in (None, "clashes"):
        from . import clashes_cli
        clashes_cli.configure_parser(clashes)
    view = sub.add_parser("view", help="open the desktop window")
    view.add_argument("files", nargs="*")
    return parser


def run_scan(args) -> int:
    if args.frames is not None:
        try:
            from . import trajectory_cli
        except ImportError as exc:
            raise EnergyError(f"trajectory scans are not available: {exc}") from None
        return trajectory_cli.run(args)
    from .io.loaders import load_system
    from .pipeline import compute, prepare_system
    from . import report

    if (args.select_a is None) != (args.select_b is None):
        raise EnergyError("give both --select-a and --select-b, or neither")
    settings = settings_from_args(args)
    if args.json and not os.path.isdir(os.path.dirname(os.path.abspath(args.json))):
        raise EnergyError(f"{args.json}: the output folder does not exist")
    from .warmup import prepare_kernels
    t0 = time.perf_counter()
    prepare_kernels(settings)
    prepare_seconds = time.perf_counter() - t0
    loaded = load_system(args.structure, args.coords, args.params, frame=args.frame,
                         add_hydrogens=args.add_hydrogens)
    t0 = time.perf_counter()
    prepare_system(loaded.system)
    prepare_system_seconds = time.perf_counter() - t0
    result = compute(loaded.system, loaded.frame, settings)
    selection = None
    extra = {"prepare": prepare_seconds, "prepare_system": prepare_system_seconds}
    if args.select_a is not None:
        from .io.selection import select_atoms, universe_for
        from .pairs import interaction_energy
        t0 = time.perf_counter()
        u = universe_for(loaded.system, loaded.frame)
        a = select_atoms(loaded.system, loaded.frame, args.select_a, u)
        b = select_atoms(loaded.system, loaded.frame, args.select_b, u)
        selection = {"a": args.select_a, "b": args.select_b, "n_atoms_a": int(len(a)),
                     "n_atoms_b": int(len(b)),
                     **interaction_energy(loaded.system, loaded.frame, settings, a, b)}
        extra["selection"] = time.perf_counter() - t0
    if args.json:
        # timings.write is measured up to the start of writing (the file cannot hold its own
        # write time); the streamed write itself follows.
        t0 = time.perf_counter()
        doc = report.scan_document(loaded, result, selection, extra)
        doc["timings"]["write"] = time.perf_counter() - t0
        report.write_scan_json(args.json, doc, result)
    if args.csv_dir:
        report.write_csv_dir(args.csv_dir, loaded.system, result)
    if not args.quiet:
        print(report.summary_text(loaded, result, args.top, selection))
    return 0


def _has_display() -> bool:
    """A Qt window can open: a platform is forced, or an X11/Wayland display is there (or not Linux)."""
    if os.environ.get("QT_QPA_PLATFORM"):
        return True
    if not sys.platform.startswith("linux"):
        return True
    return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def run_view(files) -> int:
    if not _has_display():
        print("tessera: no display to open the window on (DISPLAY is not set); for results without "
              "a window run: tessera scan samples/scenario/complex_clash.pdb (README: 'Headless "
              "commands')", file=sys.stderr)
        return EXIT_NO_DISPLAY
    try:
        from app.main import run_app
    except ImportError as exc:
        raise EnergyError(f"the desktop window is not available: {exc}") from None
    return run_app(files)


def main(argv=None) -> int:
    from .runtime import tune_memory
    tune_memory()
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or (argv[0] not in SUBCOMMANDS and not argv[0].startswith("-")):
        argv = ["view", *argv]
    parser = build_parser(argv[0] if argv[0] in SUBCOMMANDS else None)
    args = parser.parse_args(argv)
    try:
        if args.command == "scan":
            return run_scan(args)
        if args.command == "clashes":
            from . import clashes_cli
            return clashes_cli.run(args)
        if args.command == "compare":
            from . import compare_cli
            return compare_cli.run(args)
        return run_view(args.files)
    except EnergyError as exc:
        print(f"tessera: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:
        name = getattr(exc, "filename", None)
        print(f"tessera: error: {name + ': ' if name else ''}{exc.strerror or exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("tessera: interrupted", file=sys.stderr)
        return 130


def console_main() -> None:
    """The ``tessera`` command: :func:`main`, then exit.  After a parallel trajectory run whose
    worker processes were stopped mid-chunk (Ctrl-C), the interpreter's normal exit can hang in
    concurrent.futures (energy.trajectory_parallel); the outputs are written and closed by then,
    so such a process ends with ``os._exit``."""
    code = main()
    parallel = sys.modules.get("energy.trajectory_parallel")
    if parallel is not None and parallel.abandoned_workers:
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code)
    sys.exit(code)


if __name__ == "__main__":
    console_main()
