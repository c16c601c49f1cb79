"""``tessera compare FIRST SECOND [COORDS...]``: the difference (second minus first) headless.

FIRST and SECOND are two structures of the same system (PDB/mmCIF, or PSF with ``--params``).
COORDS: none, one coordinate file used with both, or two (one each); with ``--frame`` and
``--second-frame`` two frames of one trajectory can be compared.
"""
from __future__ import annotations

import argparse
import os

from app.cli.arguments import (
    add_result_file_argument,
    add_settings_arguments,
    check_output_folders,
    preparation_from_args,
    settings_from_args,
)
from energy.errors import EnergyError


def configure_parser(p: argparse.ArgumentParser) -> None:
    p.add_argument("first", help="first structure (PDB/mmCIF, or a PSF)")
    p.add_argument("second", help="second structure of the same system")
    p.add_argument("coords", nargs="*", default=[],
                   help="coordinates: one file for both, or one for each (required with PSFs)")
    p.add_argument("--params", action="append", default=[], metavar="FILE",
                   help="CHARMM-style parameter or stream file for PSF inputs (repeat for several)")
    p.add_argument("--frame", type=int, default=0, metavar="N", help="frame of the first input")
    p.add_argument("--second-frame", type=int, default=None, metavar="N",
                   help="frame of the second input (default: same as --frame)")
    p.add_argument("--add-hydrogens", action="store_true",
                   help="add missing hydrogens at pH 7 (built-in force field only)")
    add_settings_arguments(p)
    p.add_argument("--json", metavar="OUT.json", help="write the comparison as JSON")
    p.add_argument("--csv-dir", metavar="DIR",
                   help="write pair_changes.csv and residue_changes.csv")
    p.add_argument("--top", type=int, default=10, help="changes shown in the summary (default 10)")
    p.add_argument("--quiet", action="store_true", help="no summary on stdout")
    add_result_file_argument(p)




def run(args) -> int:
    from energy.analysis.compare import compare_results
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    from energy.output import report
    from energy.output.comparison import comparison_document, difference_csv, residue_difference_csv, summary_text
    from energy.output.files import atomic_write_text
    from energy.output.result_file import write_comparison_result

    coords = list(args.coords)
    if len(coords) > 2:
        raise EnergyError(f"give at most two coordinate files (one per structure), got {len(coords)}")
    c1 = coords[0] if coords else None
    c2 = coords[1] if len(coords) == 2 else c1
    settings = settings_from_args(args)
    check_output_folders(args.json, args.out)
    frame2 = args.frame if args.second_frame is None else args.second_frame
    is_psf = lambda f: f.lower().endswith(".psf")  # noqa: E731
    first = load_system(args.first, c1, args.params if is_psf(args.first) else (), frame=args.frame,
                        preparation=preparation_from_args(args))
    second = load_system(args.second, c2, args.params if is_psf(args.second) else (), frame=frame2,
                         preparation=preparation_from_args(args))
    r1 = compute(first.system, first.frame, settings)
    r2 = compute(second.system, second.frame, settings)
    comparison = compare_results(first.system, r1, second.system, r2)
    if len(comparison.match) == 0:
        raise EnergyError("no residue of the two structures matches by chain and number: "
                          "are they the same system?")
    inputs = {"first": {"structure": args.first, "coordinates": c1, "frame": first.frame.index},
              "second": {"structure": args.second, "coordinates": c2, "frame": second.frame.index},
              "parameters": list(args.params)}
    if args.json:
        report.write_json(args.json, comparison_document(comparison, inputs, settings))
    if args.out:
        write_comparison_result(args.out, (first, r1), (second, r2), comparison, settings)
    if args.csv_dir:
        os.makedirs(args.csv_dir, exist_ok=True)
        atomic_write_text(os.path.join(args.csv_dir, "pair_changes.csv"),
                                 difference_csv(comparison))
        atomic_write_text(os.path.join(args.csv_dir, "residue_changes.csv"),
                                 residue_difference_csv(comparison))
    if not args.quiet:
        name = lambda f, c, fr: os.path.basename(f) + (f" + {os.path.basename(c)}" if c else "") + (  # noqa: E731
            f" (frame {fr})" if c else "")
        print(summary_text(comparison, name(args.first, c1, first.frame.index),
                      name(args.second, c2, second.frame.index), args.top))
    return 0
