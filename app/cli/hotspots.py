"""``tessera hotspots STRUCTURE [COORDS] --select-a SEL --select-b SEL``: an in-silico alanine scan
of the interface between two selections (:mod:`energy.analysis.hotspot_setup`)."""
from __future__ import annotations

import argparse
import os
import sys
import time

from app.cli.arguments import (
    add_input_arguments,
    add_settings_arguments,
    check_output_folders,
    preparation_from_args,
    settings_from_args,
)
from energy.errors import EnergyError


def configure_parser(p: argparse.ArgumentParser) -> None:
    """The options of ``tessera hotspots``."""
    add_input_arguments(p)
    add_settings_arguments(p)
    p.add_argument("--select-a", metavar="SEL", required=True, help="MDAnalysis selection A (e.g. 'segid A')")
    p.add_argument("--select-b", metavar="SEL", required=True, help="MDAnalysis selection B")
    p.add_argument("--interface", type=float, default=5.0, metavar="R",
                   help="a residue is at the interface when one of its atoms is within R A of the "
                        "other selection (default 5)")
    p.add_argument("--json", metavar="OUT.json", help="write the ranked scan as JSON")
    p.add_argument("--csv", metavar="OUT.csv", help="write the ranked table as CSV")
    p.add_argument("--out", metavar="RESULT.h5",
                   help="write the scan to a result file (HDF5, kind 'hotspots'; layout in docs/result-file.md)")
    p.add_argument("--top", type=int, default=15, help="residues shown in the summary (default 15)")
    p.add_argument("--quiet", action="store_true", help="no summary or progress")


def run(args) -> int:
    """Run ``tessera hotspots``."""
    from app.cli.progress import ProgressBar
    from energy import prepare_kernels
    from energy.analysis.hotspot_setup import scan_loaded
    from energy.io.builtin import DEFAULT_FORCE_FIELD, build_force_field
    from energy.io.loaders import load_system
    from energy.output import report
    from energy.output.files import atomic_write_text
    from energy.output.hotspots import hotspot_csv, hotspot_document, summary_text

    if args.interface <= 0:
        raise EnergyError(f"--interface must be a positive distance in A, got {args.interface}")
    settings = settings_from_args(args)
    check_output_folders(args.json, args.csv, args.out)
    t0 = time.perf_counter()
    prepare_kernels(settings)
    options = preparation_from_args(args)
    loaded = load_system(args.structure, args.coords, args.params, frame=args.frame, preparation=options)
    t1 = time.perf_counter()
    # the mutants are parameterised by the force field the wild type was (--forcefield, --water)
    force_field = (build_force_field(options.force_field or DEFAULT_FORCE_FIELD, options.forcefield_files)
                   if loaded.prepared_topology is not None else None)
    bar = None if args.quiet else ProgressBar(sys.stderr, unit="residues")
    progress = None if bar is None else (lambda done, total: bar.update(done, total))
    scan = scan_loaded(loaded, settings, args.select_a, args.select_b, args.interface, force_field, progress)
    if bar is not None:
        bar.finish()
    t2 = time.perf_counter()
    timings = {"load": t1 - t0, "scan": t2 - t1}
    inputs = {"structure": args.structure, "coordinates": args.coords, "parameters": list(args.params),
              "frame": loaded.frame.index}
    if args.json:
        report.write_json(args.json, hotspot_document(scan, loaded.system, inputs, timings))
    if args.csv:
        atomic_write_text(args.csv, hotspot_csv(scan, loaded.system))
    if args.out:
        from energy.output.hotspot_result import write_hotspot_result
        write_hotspot_result(args.out, loaded, scan)
    if not args.quiet:
        print(summary_text(scan, loaded.system, args.top))
        print(f"timings: load {timings['load']:.2f} s, scan {timings['scan']:.2f} s "
              f"({os.path.basename(args.structure)})")
    return 0
