"""``tessera scan``: every term of one structure and its residue-pair decomposition (or, with
``--frames``, of every frame of a trajectory: :mod:`app.cli.trajectory`)."""
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
    warn_if_large_json,
)
from energy import prepare_kernels
from energy.decomposition.atom_pairs import selection_interaction
from energy.decomposition.blocks import block_residue_pairs, has_solvent
from energy.decomposition.pipeline import compute, prepare_system
from energy.errors import EnergyError
from energy.io.loaders import load_system
from energy.output import report
from energy.output.blocked import block_records, solute_rows
from energy.output.result_file import write_scan_result


def configure_parser(p: argparse.ArgumentParser) -> None:
    """The options of ``tessera scan``."""
    add_input_arguments(p)
    add_settings_arguments(p)
    p.add_argument("--select-a", metavar="SEL",
                   help="group A of the group interaction, an MDAnalysis selection (e.g. 'segid A')")
    p.add_argument("--select-b", metavar="SEL", help="group B of the group interaction")
    p.add_argument("--json", metavar="OUT.json", help="write the full result as JSON")
    p.add_argument("--csv-dir", metavar="DIR", help="write residues.csv and residue_pairs.csv")
    p.add_argument("--out", metavar="RESULT.h5",
                   help="write the result file (HDF5: every residue pair; reopen with tessera view; "
                        "layout in docs/result-file.md)")
    p.add_argument("--write-prepared", metavar="FILE.pdb",
                   help="write the structure as prepared (repaired, hydrogens added...) as a PDB")
    p.add_argument("--top", type=int, default=8, help="pairs shown in the summary (default 8)")
    p.add_argument("--every-residue", action="store_true",
                   help="list every water and ion as its own residue (default: solvent as blocks, "
                        "'Water (N)' and 'Ions (N)', in the summary, CSV and JSON)")
    p.add_argument("--quiet", action="store_true", help="no summary or progress on stdout/stderr")
    traj = p.add_argument_group("trajectories")
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


def write_prepared(loaded, path) -> None:
    """``--write-prepared``: the prepared structure of the built-in route as a PDB."""
    from energy.io.preparation import prepared_pdb_text
    from energy.output.files import atomic_write_text
    if loaded.preparation is None:
        raise EnergyError("--write-prepared writes a PDB/mmCIF as prepared for the built-in force "
                          "field; a PSF system is used as it is")
    if not os.path.isdir(os.path.dirname(os.path.abspath(path))):
        raise EnergyError(f"{path}: the output folder does not exist")
    atomic_write_text(path, prepared_pdb_text(loaded.prepared_topology, loaded.frame.positions))
    loaded.preparation.prepared_pdb = os.fspath(path)


def run(args) -> int:
    """Run ``tessera scan`` (one structure, or a trajectory with ``--frames``)."""
    if args.frames is not None:
        try:
            from app.cli import trajectory as trajectory_cli
        except ImportError as exc:
            raise EnergyError(f"trajectory scans are not available: {exc}") from None
        return trajectory_cli.run(args)
    if (args.select_a is None) != (args.select_b is None):
        raise EnergyError("give both --select-a and --select-b, or neither")
    settings = settings_from_args(args)
    check_output_folders(args.json, args.out)
    t0 = time.perf_counter()
    prepare_kernels(settings)
    prepare_seconds = time.perf_counter() - t0
    loaded = load_system(args.structure, args.coords, args.params, frame=args.frame,
                         preparation=preparation_from_args(args))
    for note in loaded.system.notes:
        print(f"note: {note}", file=sys.stderr)
    if args.write_prepared:
        write_prepared(loaded, args.write_prepared)
    t0 = time.perf_counter()
    prepare_system(loaded.system)
    prepare_system_seconds = time.perf_counter() - t0
    result = compute(loaded.system, loaded.frame, settings)
    selection = None
    extra = {"prepare": prepare_seconds, "prepare_system": prepare_system_seconds}
    if args.select_a is not None:
        t0 = time.perf_counter()
        selection = selection_interaction(loaded.system, loaded.frame, settings, args.select_a,
                                          args.select_b)
        extra["group_interaction"] = time.perf_counter() - t0
    classes = loaded.system.residue_classes
    blocked = None
    if has_solvent(classes) and not args.every_residue:
        labels = [loaded.system.residues.label(k) for k in range(loaded.system.n_residues)]
        blocked = block_residue_pairs(result.residue_pairs, classes, labels)
    if args.json:
        # timings.write is measured up to the start of writing (the file cannot hold its own
        # write time); the streamed write itself follows.
        t0 = time.perf_counter()
        doc = report.scan_document(loaded, result, selection, extra)
        rows = None
        if blocked is not None:
            doc["blocks"], doc["block_pairs"] = block_records(blocked, classes)
            rows = solute_rows(result.residue_pairs, classes)
        doc["timings"]["write"] = time.perf_counter() - t0
        report.write_scan_json(args.json, doc, result, rows)
        warn_if_large_json(len(result.residue_pairs) if rows is None else len(rows), args.out)
    if args.out:
        write_scan_result(args.out, loaded, result)
    if args.csv_dir:
        report.write_csv_dir(args.csv_dir, loaded.system, result, blocked)
    if not args.quiet:
        print(report.summary_text(loaded, result, args.top, selection, blocked))
    return 0
