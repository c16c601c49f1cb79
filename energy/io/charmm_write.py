"""Writers of PSF (EXT layout) and CHARMM-style parameter files from plain arrays.

Used by the tests to create invented systems and by the sample scripts.  The output is readable
by :mod:`energy.io.psf` / :mod:`energy.io.charmm_params` and by OpenMM's ``CharmmPsfFile`` /
``CharmmParameterSet``.  Units as in the files: kcal/mol, angstrom, degrees, e, amu.
"""
from __future__ import annotations

import numpy as np

from energy.io.charmm_params import SECTION_KEYWORDS, CharmmParameters

#: Index sections: (PSF key, title, atoms per entry, entries per line).
_INDEX_LAYOUT = (("bonds", "NBOND: bonds", 2, 4), ("angles", "NTHETA: angles", 3, 3),
                 ("dihedrals", "NPHI: dihedrals", 4, 2), ("impropers", "NIMPHI: impropers", 4, 2))


def _index_block(title: str, rows, per_line: int) -> list[str]:
    rows = np.asarray(rows, dtype=np.int64).reshape(len(rows), -1) + 1 if len(rows) else []
    out = [f"{len(rows):10d} !{title}"]
    for start in range(0, len(rows), per_line):
        out.append("".join(f"{v:10d}" for row in rows[start:start + per_line] for v in row))
    return out + [""]


def write_psf(path, *, names, types, charges, masses, segids, resids, resnames, bonds,
              angles=(), dihedrals=(), impropers=(), cmaps=(), icodes=None,
              title=("Written by Tessera",)) -> None:
    """Write a PSF file in the EXT layout with named (XPLOR-style) types.

    Parameters
    ----------
    path : str or os.PathLike
        Output file.
    names, types, segids, resnames : sequences of str, (n_atoms,)
        Atom names, force-field types, segment ids (chains) and residue names.
    charges, masses : sequences of float, (n_atoms,)
        Partial charges (e) and masses (amu).
    resids : sequence of int, (n_atoms,)
        Residue numbers; ``icodes`` (optional) adds insertion letters.
    bonds, angles, dihedrals, impropers, cmaps : (n, 2/3/4/4/8) arrays of 0-based atom indices
        The bonded sections (``cmaps``: the cross-terms of NCRTERM); empty by default except bonds.
    icodes : sequence of str, (n_atoms,), optional
        Insertion letters written after each residue number ('' for none); None (default) writes none.
    title : sequence of str
        Title lines (a leading ``*`` is added).
    """
    n = len(names)
    icodes = [""] * n if icodes is None else list(icodes)
    lines = ["PSF EXT CMAP XPLOR", "", f"{len(title):10d} !NTITLE"]
    lines += ["* " + t for t in title] + ["", f"{n:10d} !NATOM"]
    for i in range(n):
        resid = f"{int(resids[i])}{icodes[i]}"
        lines.append(f"{i + 1:10d} {segids[i]:<8s} {resid:<8s} {resnames[i]:<8s} "
                     f"{names[i]:<8s} {types[i]:<6s} {float(charges[i]):14.6f}"
                     f"{float(masses[i]):14.4f}{0:12d}")
    lines.append("")
    arrays = {"bonds": bonds, "angles": angles, "dihedrals": dihedrals, "impropers": impropers}
    for key, sec_title, _width, per_line in _INDEX_LAYOUT:
        lines += _index_block(sec_title, arrays[key], per_line)
    lines += [f"{0:10d} !NDON: donors", "", f"{0:10d} !NACC: acceptors", "",
              f"{0:10d} !NNB", ""]
    lines += ["".join(f"{0:10d}" for _ in range(s, min(s + 8, n))) for s in range(0, n, 8)]
    lines += ["", f"{0:10d}{0:10d} !NGRP NST2", "", f"{0:10d}{0:10d} !NUMLP NUMLPH", ""]
    lines += _index_block("NCRTERM: cross-terms", cmaps, 1)
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("\n".join(lines) + "\n")


def _check_type_name(name: str) -> None:
    """Refuse type names a reader would take for a section keyword or a number."""
    upper = name.upper()
    if not upper or " " in upper or "!" in upper:
        raise ValueError(f"invalid atom type name {name!r}")
    for keyword in list(SECTION_KEYWORDS) + ["NBFIX", "THOLE", "HBOND", "MASS"]:
        if upper.startswith(keyword):
            raise ValueError(f"atom type {name!r} starts with the section keyword {keyword!r}")
    try:
        float(upper)
    except ValueError:
        return
    raise ValueError(f"atom type {name!r} looks like a number")


def _fmt(x: float) -> str:
    return f"{x:.6f}"


def write_parameters(path, params: CharmmParameters, title=("Written by Tessera",),
                     cutoffs="cutnb 14.0 ctofnb 12.0 ctonnb 10.0 eps 1.0 wmin 1.5") -> None:
    """Write a CHARMM-style parameter file holding every entry of ``params``.

    Parameters
    ----------
    path : str or os.PathLike
        Output file (use a ``.prm`` suffix for OpenMM's reader).
    params : CharmmParameters
        Entries keyed as :mod:`energy.io.charmm_params` keys them; values in file units.
    title : sequence of str
        Title lines.
    cutoffs : str
        Extra words of the NONBONDED header (not used by the readers).

    Raises
    ------
    ValueError
        If an atom type name could be mistaken for a keyword or a number.
    """
    for name in params.masses:
        _check_type_name(name)
    numbers = {t: n for n, t in params.type_numbers.items()}
    out = ["* " + t for t in title] + ["*", "", "ATOMS"]
    next_number = max(list(params.type_numbers) + [0]) + 1
    for name, mass in params.masses.items():
        if name not in numbers:
            numbers[name], next_number = next_number, next_number + 1
        out.append(f"MASS {numbers[name]:6d} {name:<8s} {mass:10.5f}")
    out += ["", "BONDS"] + [f"{a:<8s} {b:<8s} {_fmt(k)} {_fmt(r0)}"
                            for (a, b), (k, r0) in params.bonds.items()]
    out += ["", "ANGLES"]
    for (a, b, c), (k, theta0, kub, s0) in params.angles.items():
        ub = "" if kub is None else f" {_fmt(kub)} {_fmt(s0)}"
        out.append(f"{a:<8s} {b:<8s} {c:<8s} {_fmt(k)} {_fmt(theta0)}{ub}")
    out += ["", "DIHEDRALS"] + [f"{' '.join(f'{t:<8s}' for t in key)} {_fmt(k)} {n:d} {_fmt(ph)}"
                                for key, terms in params.dihedrals.items() for k, n, ph in terms]
    out += ["", "IMPROPER"] + [f"{' '.join(f'{t:<8s}' for t in key)} {_fmt(k)} {n:d} {_fmt(psi)}"
                               for key, (k, n, psi) in params.impropers.items()]
    out += ["", "CMAP"]
    for key, grid in params.cmaps.items():
        grid = np.asarray(grid, dtype=float)
        size = grid.shape[0]
        out += [" ".join(key) + f" {size}", ""]
        for i in range(size):
            out.append(f"! phi = {-180.0 + i * 360.0 / size:.1f}")
            row = grid[i]
            out += [" ".join(f"{v:.6f}" for v in row[s:s + 5]) for s in range(0, size, 5)]
            out.append("")
    out += ["", f"NONBONDED nbxmod {params.nbxmod} atom cdiel fshift vatom vdistance vfswitch -",
            f"{cutoffs} e14fac {params.e14fac:g}", ""]
    for name, (eps, half, eps14, half14) in params.nonbonded.items():
        extra = "" if eps14 is None else f" 0.0 {_fmt(eps14)} {_fmt(half14)}"
        out.append(f"{name:<8s} 0.0 {_fmt(eps)} {_fmt(half)}{extra}")
    out += ["", "NBFIX"]
    for (a, b), (emin, rmin, emin14, rmin14) in params.nbfix.items():
        extra = "" if emin14 is None else f" {_fmt(-abs(emin14))} {_fmt(rmin14)}"
        out.append(f"{a:<8s} {b:<8s} {_fmt(-abs(emin))} {_fmt(rmin)}{extra}")
    out += ["", "END", ""]
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("\n".join(out))
