"""The ``tessera`` command: one dispatcher over the subcommands.

``tessera`` with no arguments (or ``tessera view FILES...``, or plain ``tessera FILES...``) opens
the desktop window; ``tessera scan ...`` runs the headless decomposition.  Each subcommand lives
in its own module (:mod:`app.cli.scan`, :mod:`app.cli.compare`, :mod:`app.cli.overlaps`,
:mod:`app.cli.view`), imported only when it runs, which keeps start-up short.  Expected failures
print one line on stderr and exit with status 2; nothing is left half-written.  An unexpected
exception (a bug) never shows a traceback: one line asks to report it and names the log file that
holds the traceback (:func:`write_crash_log`), and the exit status is 1.
"""
from __future__ import annotations

import argparse
import atexit
import datetime
import importlib
import os
import platform
import sys
import tempfile
import traceback

from energy.errors import EnergyError, one_line

#: Subcommand -> (module under app.cli, one-line help).
SUBCOMMANDS = {
    "scan": ("scan", "compute every term and the residue-pair decomposition"),
    "view": ("view", "open the desktop window"),
    "compare": ("compare", "difference map of two structures of the same system"),
    "overlaps": ("overlaps", "rank overlapping atom pairs (steric clashes)"),
    "hotspots": ("hotspots", "alanine scan of an interface: which residues hold it together"),
    "forcefields": ("forcefields", "list the force fields and water models --forcefield/--water choose"),
}


def _command_module(command: str):
    return importlib.import_module(f"app.cli.{SUBCOMMANDS[command][0]}")


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The argument parser; with ``command`` given, only that subcommand's options are set up
    (the other subcommands' modules are not imported)."""
    parser = argparse.ArgumentParser(prog="tessera", description=(
        "Where is the energy? Per-term, per-residue-pair force-field energies of a protein model."))
    sub = parser.add_subparsers(dest="command")
    for name, (_, help_text) in SUBCOMMANDS.items():
        p = sub.add_parser(name, help=help_text)
        if command in (None, name):
            _command_module(name).configure_parser(p)
    return parser


def crash_log_folder() -> str:
    """Where crash logs go: ``$TESSERA_LOG_DIR``, else ``$XDG_STATE_HOME/tessera/logs`` (default
    ``~/.local/state/tessera/logs``), else the temporary folder."""
    if os.environ.get("TESSERA_LOG_DIR"):
        return os.environ["TESSERA_LOG_DIR"]
    state = os.environ.get("XDG_STATE_HOME") or os.path.join(os.path.expanduser("~"), ".local", "state")
    return os.path.join(state, "tessera", "logs")


def write_crash_log(argv, exc: BaseException) -> str | None:
    """Write the traceback of ``exc`` with the command line and versions to a new log file;
    returns its path, or None if no folder could take it."""
    stamp = datetime.datetime.now().strftime("%Y%m%d-%H%M%S")
    text = (f"tessera {' '.join(argv)}\npython {platform.python_version()} on {platform.platform()}\n\n"
            + "".join(traceback.format_exception(type(exc), exc, exc.__traceback__)))
    for folder in (crash_log_folder(), tempfile.gettempdir()):
        try:
            os.makedirs(folder, exist_ok=True)
            path = os.path.join(folder, f"crash-{stamp}-{os.getpid()}.log")
            with open(path, "w", encoding="utf-8") as handle:
                handle.write(text)
            return path
        except OSError:
            continue
    return None


#: Exceptions raised where Python cannot raise them (a library's ``__del__`` on a reader that
#: failed to open a damaged file): kept here instead of printed as a traceback on stderr.
UNRAISABLE: list[str] = []


def _quiet_unraisable(info) -> None:
    UNRAISABLE.append(f"{info.exc_type.__name__}: {one_line(info.exc_value, 200)} in {info.object!r:.80}")


def main(argv=None) -> int:
    """Parse ``argv`` (default: the process's arguments), run the subcommand, return its exit
    status: 0 on success, 2 on an expected failure (one line on stderr), 130 on Ctrl-C."""
    from energy._kernels.runtime import tune_memory
    tune_memory()
    sys.unraisablehook = _quiet_unraisable
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or (argv[0] not in SUBCOMMANDS and not argv[0].startswith("-")):
        argv = ["view", *argv]
    parser = build_parser(argv[0] if argv[0] in SUBCOMMANDS else None)
    args = parser.parse_args(argv)
    try:
        if args.command == "view":
            return _command_module("view").run(args.files)
        return _command_module(args.command).run(args)
    except EnergyError as exc:
        print(f"tessera: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:
        name = getattr(exc, "filename", None)
        print(f"tessera: error: {one_line(f'{name}: ' if name else '')}{one_line(exc.strerror or exc)}",
              file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("tessera: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # a bug: one line here, the traceback in a log file
        log = write_crash_log(argv, exc)
        where = f"the traceback is in {log}" if log else "the traceback could not be saved"
        print(f"tessera: internal error ({type(exc).__name__}: {one_line(exc, 120)}); this is a bug, "
              f"please report it with the input files; {where}", file=sys.stderr)
        return 1


def console_main() -> None:
    """The ``tessera`` command: :func:`main`, then exit.

    Every output is written and closed when :func:`main` returns, so the process then runs the
    exit handlers (temporary folders removed, worker pools joined, logs flushed) and ends with
    ``os._exit``, skipping the interpreter's teardown of its modules: with numpy, scipy, OpenMM
    and numba loaded that teardown took 0.5-0.65 s of every run (measured on a 25k-atom scan,
    2026-12-02).  It also ends a process whose parallel trajectory workers were stopped
    mid-chunk (Ctrl-C): there the exit handlers are skipped too, since joining those workers
    can hang in concurrent.futures (energy.analysis.trajectory_parallel)."""
    code = main()
    sys.stdout.flush()
    sys.stderr.flush()
    parallel = sys.modules.get("energy.analysis.trajectory_parallel")
    if parallel is None or not parallel.abandoned_workers:
        atexit._run_exitfuncs()
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(code)


if __name__ == "__main__":
    console_main()
