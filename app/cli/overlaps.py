"""``tessera overlaps``: the command-line face of :mod:`energy.analysis.clashes`.

``energy/cli.py`` adds the subcommand and calls :func:`configure_parser` and :func:`run`; errors
are raised as :class:`energy.errors.EnergyError` and printed there as one line.
"""
from __future__ import annotations

import argparse
import dataclasses
import json
import math
import os
import sys

from app.cli.arguments import add_input_arguments, preparation_from_args
from energy.analysis.clashes import DEFAULT_OVERLAP, RADII_SOURCES, ClashOptions
from energy.errors import EnergyError, SettingsError


def _overlap_value(text: str):
    if text.strip().lower() in ("off", "none"):
        return None
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a distance in A or 'off', got {text!r}") from None
    if not math.isfinite(v):
        raise argparse.ArgumentTypeError(f"expected a finite distance, got {text!r}")
    return v


def _energy_value(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an energy in kcal/mol, got {text!r}") from None
    if not (math.isfinite(v) and v >= 0):
        raise argparse.ArgumentTypeError(f"the LJ threshold must be a number >= 0, got {text!r}")
    return v


def configure_parser(p: argparse.ArgumentParser) -> None:
    add_input_arguments(p)
    p.add_argument("--overlap", type=_overlap_value, default=DEFAULT_OVERLAP, metavar="ANGSTROM",
                   help=f"flag pairs whose spheres overlap by at least A angstrom (default "
                        f"{DEFAULT_OVERLAP}; 'off' to use only --lj-above)")
    p.add_argument("--radii", choices=RADII_SOURCES, default="bondi",
                   help="sphere radii: Bondi (1964) by element (default), or the force field's "
                        "Rmin_ij of each pair")
    p.add_argument("--include-hydrogens", action="store_true",
                   help="search hydrogens too (default: heavy atoms only)")
    p.add_argument("--include-14", action="store_true",
                   help="let 1-4 pairs count (1-2 and 1-3 pairs never do)")
    p.add_argument("--lj-above", type=_energy_value, default=None, metavar="E",
                   help="also flag pairs whose LJ energy exceeds E kcal/mol")
    p.add_argument("--require-all", action="store_true",
                   help="with --lj-above: flag only pairs meeting both criteria (default: either)")
    p.add_argument("--no-hbond-contact", action="store_true",
                   help="measure hydrogen-bonding pairs with the ordinary radii too")
    p.add_argument("--no-periodic", action="store_true",
                   help="no periodic images (default: minimum image when the frame has a real periodic "
                        "box, as in scan and compare)")
    # the earlier spelling: insist on periodic images (an error when the frame has no usable cell)
    p.add_argument("--periodic", action="store_true", help=argparse.SUPPRESS)
    p.add_argument("--exp6-alpha", type=float, default=None, metavar="ALPHA",
                   help="steepness of the exp-6 energy reported beside the LJ energy of each clash "
                        "(default 13.772, matching the LJ curvature at the minimum)")
    p.add_argument("--top", type=int, default=20, metavar="N",
                   help="rows shown on stdout (default 20; 0 for all)")
    p.add_argument("--json", metavar="OUT", help="write every clash and the summaries as JSON")
    p.add_argument("--csv", metavar="OUT", help="write the ranked clash list as CSV")
    p.add_argument("--out", metavar="RESULT.h5", help="write the ranked clash list to a result file "
                   "(HDF5, docs/result-file.md)")
    p.add_argument("--quiet", action="store_true", help="print nothing on success")


def options_from_args(args) -> ClashOptions:
    from energy.model.settings import EXP6_ALPHA_MATCHING_LJ
    alpha = EXP6_ALPHA_MATCHING_LJ if getattr(args, "exp6_alpha", None) is None else args.exp6_alpha
    return ClashOptions(exp6_alpha=alpha, overlap=args.overlap, lj_above=args.lj_above,
                        combine="all" if args.require_all else "any", radii=args.radii,
                        include_hydrogens=args.include_hydrogens, include_14=args.include_14,
                        periodic=args.periodic, hbond=not args.no_hbond_contact)


def run(args) -> int:
    from energy.analysis.clashes import find_clashes, periodic_search
    from energy.io.loaders import load_system
    from energy.output.clash_report import clash_csv, clash_document, clash_table
    from energy.output.files import atomic_write_text

    options = options_from_args(args)
    outs = [o for o in (args.json, args.csv, getattr(args, "out", None)) if o]
    for out in outs:
        if not os.path.isdir(os.path.dirname(os.path.abspath(out))):
            raise EnergyError(f"{out}: the output folder does not exist")
        if os.path.isdir(out):
            raise EnergyError(f"{out}: is a folder, expected a file name")
    named = [os.path.abspath(o) for o in outs]
    if len(set(named)) < len(named):
        raise SettingsError("--json, --csv and --out must name different files")
    if args.top < 0:
        raise SettingsError(f"--top must be >= 0, got {args.top}")
    loaded = load_system(args.structure, args.coords, args.params, frame=args.frame,
                         preparation=preparation_from_args(args))
    for note in loaded.system.notes:
        print(f"note: {note}", file=sys.stderr)
    cell_note = ""
    if not args.periodic:      # the default: by the cell rules of every computation
        periodic, cell_note = periodic_search(loaded.frame, loaded.system.n_atoms, not args.no_periodic)
        options = dataclasses.replace(options, periodic=periodic)
    report = find_clashes(loaded.system, loaded.frame, options)
    if args.json:
        source = {"structure": loaded.structure_path, "coordinates": loaded.coords_path,
                  "parameters": list(loaded.param_paths), "frame": int(loaded.frame.index),
                  "force_field": loaded.system.force_field}
        doc = clash_document(loaded.system, report, source)
        if cell_note:
            doc["notes"].append(cell_note)
        atomic_write_text(args.json, json.dumps(doc, indent=1, allow_nan=False) + "\n")
    if args.csv:
        atomic_write_text(args.csv, clash_csv(loaded.system, report))
    if getattr(args, "out", None):
        from energy.output.overlap_result import write_overlap_result
        write_overlap_result(args.out, loaded, report)
    if not args.quiet:
        print(clash_table(loaded.system, report, top=args.top))
        if cell_note:
            print(f"note: {cell_note}")
    return 0
