"""Argument groups shared by the subcommands: the input files and the energy settings."""
from __future__ import annotations

import argparse
import os
import sys

from energy.errors import EnergyError
from energy.model.settings import EXP6_ALPHA_MATCHING_LJ, IMPLICIT_SOLVENT_MODELS, NONPOLAR_MODELS, EnergySettings

#: Residue pairs above which ``--json`` warns that the file gets large (about 200 bytes a pair in
#: JSON) and points to ``--out``.
LARGE_JSON_PAIRS = 1_000_000


def add_input_arguments(p: argparse.ArgumentParser) -> None:
    """Arguments shared by every command that loads a system."""
    p.add_argument("structure", help="PSF, Amber .prmtop/.parm7, GROMACS .top, serialised OpenMM "
                   "System .xml, or a PDB/mmCIF for the built-in force fields")
    p.add_argument("coords", nargs="?", default=None,
                   help="coordinates (PDB, CRD, DCD, .inpcrd/.rst7/.nc, .gro, ...); required with a "
                        "PSF, .prmtop, .top or .xml")
    p.add_argument("--params", action="append", default=[], metavar="FILE",
                   help="CHARMM-style parameter or stream file (repeat for several)")
    p.add_argument("--frame", type=int, default=0, metavar="N", help="frame of a trajectory (0-based)")
    add_preparation_arguments(p)


def add_preparation_arguments(p: argparse.ArgumentParser) -> None:
    """How a deposited PDB/mmCIF is prepared for the built-in force field."""
    g = p.add_argument_group("preparing a PDB/mmCIF (built-in force field)")
    g.add_argument("--add-hydrogens", action="store_true",
                   help="add missing hydrogens at --ph (reproducible: the same input gives the same atoms)")
    g.add_argument("--repair", action="store_true",
                   help="rebuild missing heavy atoms and terminal groups, replace common modified residues "
                        "by their parents, drop 4-site water extra sites, add hydrogens (PDBFixer)")
    g.add_argument("--ph", type=float, default=7.0, metavar="PH",
                   help="pH for --add-hydrogens / --repair (default 7)")
    g.add_argument("--forcefield-file", action="append", default=[], metavar="FILE.xml",
                   help="OpenMM force-field XML with extra residue templates (ligands, cofactors); repeat")
    g.add_argument("--drop-unmatched", action="store_true",
                   help="leave out residues that match no template (listed in the summary)")
    g.add_argument("--forcefield", default="", metavar="NAME",
                   help="force field bundled with OpenMM: amber14 (default), amber19, charmm36 "
                        "(tessera forcefields lists them)")
    g.add_argument("--water", default="", metavar="MODEL",
                   help="water model of that force field: tip3p, opc, tip4pew, spce (default: its own)")
    p.add_argument("--include-dir", action="append", default=[], metavar="DIR",
                   help="folder searched for #include files of a GROMACS .top (repeat for several)")


def preparation_from_args(args):
    """:class:`energy.io.preparation.PreparationOptions` of the parsed arguments."""
    from energy.io.preparation import PreparationOptions
    return PreparationOptions(add_hydrogens=bool(getattr(args, "add_hydrogens", False)),
                              repair=bool(getattr(args, "repair", False)),
                              ph=float(getattr(args, "ph", 7.0)),
                              forcefield_files=tuple(getattr(args, "forcefield_file", None) or ()),
                              drop_unmatched=bool(getattr(args, "drop_unmatched", False)),
                              force_field_name=str(getattr(args, "forcefield", "") or ""),
                              water=str(getattr(args, "water", "") or ""),
                              include_dirs=tuple(getattr(args, "include_dir", None) or ()))


def add_settings_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--cutoff", type=float, default=None, metavar="R",
                   help="nonbonded cutoff in A (default: none, all pairs)")
    p.add_argument("--switch", type=float, default=None, metavar="R_ON",
                   help="start of the LJ switching function in A (needs --cutoff)")
    p.add_argument("--electrostatics", choices=("plain", "reaction-field", "distance-dependent", "shifted"),
                   default="plain", help="Coulomb model (reaction-field and shifted need --cutoff)")
    p.add_argument("--vdw", choices=("lj", "exp6"), default="lj",
                   help="LJ term form: the force field's LJ 12-6, or exp-6 with the same "
                        "minimum per pair")
    p.add_argument("--exp6-alpha", type=float, default=None, metavar="ALPHA",
                   help="exp-6 steepness (default 13.772, matching the LJ curvature at the minimum)")
    p.add_argument("--dielectric", "--solute-dielectric", dest="dielectric", type=float, default=1.0,
                   help="relative dielectric (plain; the solute's with --implicit-solvent), or D in "
                        "eps = D*r (distance-dependent)")
    p.add_argument("--solvent-dielectric", type=float, default=78.5,
                   help="solvent dielectric: of the reaction field beyond the cutoff, or of the "
                        "implicit solvent (default 78.5)")
    g = p.add_argument_group("implicit solvent (generalized Born, docs/physics.md)")
    g.add_argument("--implicit-solvent", choices=IMPLICIT_SOLVENT_MODELS, default=None,
                   help="add polar solvation by generalized Born: obc2 (Onufriev-Bashford-Case II) or "
                        "gbn2 (Nguyen-Roe-Simmerling); Coulomb then uses the solute dielectric")
    g.add_argument("--salt", type=float, default=0.0, metavar="MOLAR",
                   help="ionic strength of the implicit solvent in mol/L (Debye-Hueckel screening; default 0)")
    g.add_argument("--salt-temperature", type=float, default=298.15, metavar="K",
                   help="temperature of the Debye length, K (default 298.15)")
    g.add_argument("--nonpolar", choices=NONPOLAR_MODELS, default="ace",
                   help="nonpolar solvation with --implicit-solvent: ace (surface-area-like term from "
                        "the Born radii, default) or none")
    p.add_argument("--no-periodic", action="store_true",
                   help="ignore the unit cell (no minimum image)")


def settings_from_args(args):
    alpha = EXP6_ALPHA_MATCHING_LJ if args.exp6_alpha is None else args.exp6_alpha
    return EnergySettings(cutoff_angstrom=args.cutoff, switch_angstrom=args.switch,
                          electrostatics=args.electrostatics, dielectric=args.dielectric,
                          solvent_dielectric=args.solvent_dielectric,
                          use_periodic=not args.no_periodic, vdw=args.vdw, exp6_alpha=alpha,
                          implicit_solvent=getattr(args, "implicit_solvent", None),
                          salt_molar=getattr(args, "salt", 0.0),
                          temperature_kelvin=getattr(args, "salt_temperature", 298.15),
                          nonpolar=getattr(args, "nonpolar", "ace"))


def add_result_file_argument(p: argparse.ArgumentParser) -> None:
    """``--out RESULT.h5``: the result file of a command."""
    p.add_argument("--out", metavar="RESULT.h5",
                   help="write the result file (HDF5; reopen with tessera view; layout in docs/result-file.md)")


def check_output_folders(*paths) -> None:
    """Fail before any work when an output file's folder does not exist."""
    for path in paths:
        if path and not os.path.isdir(os.path.dirname(os.path.abspath(path))):
            raise EnergyError(f"{path}: the output folder does not exist")


def warn_if_large_json(n_pairs: int, out) -> None:
    """One line on stderr when a JSON file got large and no result file was asked for."""
    if n_pairs > LARGE_JSON_PAIRS and not out:
        print(f"tessera: note: the JSON holds {n_pairs:,} residue pairs (~{n_pairs * 200 / 1e6:.0f} MB); "
              "--out RESULT.h5 writes them compressed and the window reopens it", file=sys.stderr)
