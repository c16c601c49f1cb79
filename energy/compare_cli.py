"""``tessera compare FIRST SECOND [COORDS...]``: the difference (second minus first) headless.

FIRST and SECOND are two structures of the same system (PDB/mmCIF, or PSF with ``--params``).
COORDS: none, one coordinate file used with both, or two (one each); with ``--frame`` and
``--second-frame`` two frames of one trajectory can be compared.
"""
from __future__ import annotations

import argparse
import os

from .errors import EnergyError


def configure_parser(p: argparse.ArgumentParser) -> None:
    from .cli import add_settings_arguments
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


def summary(comparison, first_name: str, second_name: str, top: int) -> str:
    from .compare import difference_rows
    from .system import TERMS
    c = comparison
    lines = [f"second minus first: {second_name} - {first_name}",
             f"{len(c.match)} residues matched by chain and number"
             + (f"; mutated: {', '.join(c.mutated_labels)}" if c.mutated_labels else ""),
             f"unmatched in first: {', '.join(c.unmatched_first_labels) or 'none'}",
             f"unmatched in second: {', '.join(c.unmatched_second_labels) or 'none'}",
             "", f"{'term':<13}{'first':>14}{'second':>14}{'change':>14}   (kcal/mol)"]
    change = c.totals_difference()
    for t in (*TERMS, "total"):
        lines.append(f"{t:<13}{c.totals_first[t]:>14.3f}{c.totals_second[t]:>14.3f}{change[t]:>14.3f}")
    lines += ["", "largest changes of residue-pair totals (kcal/mol):"]
    for row in difference_rows(c)[:top]:
        lines.append(f"  {row['label_i']:>14} - {row['label_j']:<14}{row['first_total']:>12.3f} ->"
                     f"{row['second_total']:>12.3f}  ({row['change_total']:+.3f})")
    return "\n".join(lines)


def run(args) -> int:
    from . import report
    from .cli import settings_from_args
    from .compare import (compare_results, comparison_document, difference_csv,
                          residue_difference_csv)
    from .io.loaders import load_system
    from .pipeline import compute

    coords = list(args.coords)
    if len(coords) > 2:
        raise EnergyError(f"give at most two coordinate files (one per structure), got {len(coords)}")
    c1 = coords[0] if coords else None
    c2 = coords[1] if len(coords) == 2 else c1
    settings = settings_from_args(args)
    if args.json and not os.path.isdir(os.path.dirname(os.path.abspath(args.json))):
        raise EnergyError(f"{args.json}: the output folder does not exist")
    frame2 = args.frame if args.second_frame is None else args.second_frame
    is_psf = lambda f: f.lower().endswith(".psf")  # noqa: E731
    first = load_system(args.first, c1, args.params if is_psf(args.first) else (), frame=args.frame,
                        add_hydrogens=args.add_hydrogens)
    second = load_system(args.second, c2, args.params if is_psf(args.second) else (), frame=frame2,
                         add_hydrogens=args.add_hydrogens)
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
    if args.csv_dir:
        os.makedirs(args.csv_dir, exist_ok=True)
        report.atomic_write_text(os.path.join(args.csv_dir, "pair_changes.csv"),
                                 difference_csv(comparison))
        report.atomic_write_text(os.path.join(args.csv_dir, "residue_changes.csv"),
                                 residue_difference_csv(comparison))
    if not args.quiet:
        name = lambda f, c, fr: os.path.basename(f) + (f" + {os.path.basename(c)}" if c else "") + (  # noqa: E731
            f" (frame {fr})" if c else "")
        print(summary(comparison, name(args.first, c1, first.frame.index),
                      name(args.second, c2, second.frame.index), args.top))
    return 0
