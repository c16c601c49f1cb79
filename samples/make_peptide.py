"""Write the "probe peptide" sample: ACE-ALA-GLY-SER-NME with an invented CHARMM-style force field.

Outputs in ``samples/peptide/``: ``probe_peptide.psf`` (EXT layout), ``probe_peptide.pdb``
(coordinates) and ``probe_ff.prm`` (invented types and values: wildcards, multi-term dihedrals,
Urey-Bradley, impropers, NBFIX, 1-4 columns and two CMAP grids).

Coordinates: heavy atoms from ideal internal coordinates, hydrogens and a short minimisation
from OpenMM (Modeller + its amber14 force field, used only to get a sensible geometry).
Run: ``python samples/make_peptide.py``.  Units: angstrom, kcal/mol, degrees, e, amu.
"""
from __future__ import annotations

import io
import itertools
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from energy.io.charmm_params import CharmmParameters, canonical_angle, canonical_cmap, canonical_pair, canonical_quad  # noqa: E402
from energy.io.charmm_write import write_parameters, write_psf  # noqa: E402

OUT = ROOT / "samples" / "peptide"
SEGID = "PROB"
RESIDUES = ("ACE", "ALA", "GLY", "SER", "NME")
PHI_PSI = {"ALA": (-75.0, 145.0), "GLY": (-80.0, 160.0), "SER": (-70.0, 140.0)}


def place(a, b, c, bond, angle, torsion):
    """Position of d with |cd| = bond (A), angle bcd and dihedral abcd (degrees)."""
    angle, torsion = np.radians(angle), np.radians(torsion)
    bc = (c - b) / np.linalg.norm(c - b)
    n = np.cross(b - a, bc)
    n /= np.linalg.norm(n)
    m = np.cross(n, bc)
    d2 = np.array([-bond * np.cos(angle), bond * np.sin(angle) * np.cos(torsion),
                   bond * np.sin(angle) * np.sin(torsion)])
    return c + d2[0] * bc + d2[1] * m + d2[2] * n


def heavy_atoms():
    """[(resname, resid, atom name, element, xyz)] from ideal peptide geometry."""
    atoms = []
    ch3, c0 = np.zeros(3), np.array([1.52, 0.0, 0.0])
    dummy = np.array([-0.5, 1.4, 0.0])
    atoms += [("ACE", 1, "CH3", "C", ch3), ("ACE", 1, "C", "C", c0)]
    prev_n, prev_ca, prev_c, psi = dummy, ch3, c0, 180.0
    for resid, resname in enumerate(RESIDUES[1:], start=2):
        n = place(prev_n, prev_ca, prev_c, 1.33, 116.2, psi)
        atoms.insert(len(atoms), (RESIDUES[resid - 2], resid - 1, "O", "O",
                                  place(n, prev_ca, prev_c, 1.23, 120.5, 180.0)))
        if resname == "NME":
            atoms += [("NME", resid, "N", "N", n),
                      ("NME", resid, "C", "C", place(prev_ca, prev_c, n, 1.45, 121.7, 180.0))]
            break
        phi, psi = PHI_PSI[resname]
        ca = place(prev_ca, prev_c, n, 1.458, 121.7, 180.0)
        c = place(prev_c, n, ca, 1.525, 111.2, phi)
        atoms += [(resname, resid, "N", "N", n), (resname, resid, "CA", "C", ca),
                  (resname, resid, "C", "C", c)]
        if resname in ("ALA", "SER"):
            cb = place(c, n, ca, 1.53, 110.4, -122.5)
            atoms.append((resname, resid, "CB", "C", cb))
            if resname == "SER":
                atoms.append((resname, resid, "OG", "O", place(n, ca, cb, 1.42, 111.0, -60.0)))
        prev_n, prev_ca, prev_c = n, ca, c
    order = {r: i for i, r in enumerate(RESIDUES)}
    return sorted(atoms, key=lambda a: (a[1], order[a[0]]))


def build_coordinates():
    """OpenMM topology and minimised positions (A) of the capped peptide with hydrogens."""
    import random

    import openmm
    from openmm import app, unit

    random.seed(20261201)  # Modeller places some hydrogens with random offsets: reproducible
    lines = [f"ATOM  {i + 1:5d} {name:<4s} {res:3s} A{resid:4d}    "
             f"{x[0]:8.3f}{x[1]:8.3f}{x[2]:8.3f}  1.00  0.00          {el:>2s}"
             for i, (res, resid, name, el, x) in enumerate(heavy_atoms())]
    pdb = app.PDBFile(io.StringIO("\n".join(lines + ["END", ""])))
    forcefield = app.ForceField("amber14-all.xml")
    modeller = app.Modeller(pdb.topology, pdb.positions)
    modeller.addHydrogens(forcefield)
    system = forcefield.createSystem(modeller.topology, nonbondedMethod=app.NoCutoff)
    context = openmm.Context(system, openmm.VerletIntegrator(0.001),
                             openmm.Platform.getPlatformByName("Reference"))
    context.setPositions(modeller.positions)
    openmm.LocalEnergyMinimizer.minimize(context, 1.0, 300)
    positions = context.getState(getPositions=True).getPositions(asNumpy=True)
    return modeller.topology, positions.value_in_unit(unit.angstrom)


# --- invented force field ("probe force field"); every value below is made up --------------
MASSES = {"C": 12.011, "N": 14.007, "O": 15.999, "H": 1.008}
CHARGES = {"QC": 0.51, "QO": -0.51, "QN": -0.47, "QHN": 0.31, "QCA": 0.07, "QCG": -0.02,
           "QCM": -0.27, "QCS": 0.05, "QOH": -0.66, "QHO": 0.43, "QHA": 0.09}
#: type -> (epsilon (negative, file convention), Rmin/2, eps14, Rmin14/2)
NONBONDED = {"QC": (-0.110, 2.000, None, None), "QO": (-0.120, 1.700, None, None),
             "QN": (-0.200, 1.850, None, None), "QHN": (-0.046, 0.2245, None, None),
             "QCA": (-0.020, 2.275, -0.010, 1.900), "QCG": (-0.055, 2.175, -0.010, 1.900),
             "QCM": (-0.078, 2.050, -0.010, 1.900), "QCS": (-0.056, 2.010, -0.010, 1.900),
             "QOH": (-0.152, 1.770, None, None), "QHO": (-0.046, 0.2245, None, None),
             "QHA": (-0.024, 1.340, None, None)}
NBFIX = {("QCA", "QHN"): (0.030, 3.00, 0.020, 2.90),   # with its own 1-4 values
         ("QHA", "QO"): (0.040, 2.90, None, None),     # 1-4 pairs fall back to these values
         ("QHN", "QOH"): (0.150, 2.20, None, None)}
BOND_BY_ELEMENTS = {"CC": (230.0, 1.52), "CN": (330.0, 1.45), "CO": (450.0, 1.41),
                    "CH": (309.0, 1.10), "HN": (440.0, 1.00), "HO": (545.0, 0.96)}
BOND_SPECIFIC = {("QC", "QO"): (620.0, 1.23), ("QC", "QN"): (370.0, 1.345)}
DIHEDRAL_SPECIFIC = {("QN", "QCA", "QC", "QN"): [(0.60, 1, 0.0), (0.40, 2, 180.0), (0.10, 3, 0.0)],
                     ("QC", "QN", "QCA", "QC"): [(0.20, 1, 180.0), (0.30, 2, 0.0)],
                     ("QN", "QCA", "QCS", "QOH"): [(0.30, 1, 0.0), (0.50, 3, 0.0)]}
IMPROPERS = {("QC", "X", "X", "QO"): (96.0, 0, 0.0), ("QN", "X", "X", "QHN"): (15.0, 0, 0.0),
             ("QN", "QC", "QCA", "QHN"): (20.0, 0, 0.0)}  # specific beats the N wildcard
UREY_BRADLEY = {("QHA", "QCM", "QHA"): (35.5, 1.80), ("QC", "QN", "QCA"): (50.0, 2.44),
                ("QHA", "QCA", "QN"): (22.0, 2.15)}


def atom_type(atom, neighbours) -> str:
    res, name, el = atom.residue.name, atom.name, atom.element.symbol
    if el == "H":
        bonded = neighbours[atom.index][0].element.symbol
        return {"N": "QHN", "O": "QHO"}.get(bonded, "QHA")
    if el == "O":
        return "QOH" if name == "OG" else "QO"
    if el == "N":
        return "QN"
    if name == "C" and res != "NME":
        return "QC"
    if name == "CA":
        return "QCG" if res == "GLY" else "QCA"
    return "QCS" if (res, name) == ("SER", "CB") else "QCM"


def cmap_grid(shift: float) -> np.ndarray:
    """Invented smooth 24 x 24 CMAP correction, kcal/mol, [phi, psi] from -180 deg."""
    phi = np.radians(-180.0 + 15.0 * np.arange(24))
    return np.round(0.8 * np.cos(phi + shift)[:, None] - 0.5 * np.sin(phi)[None, :]
                    + 0.3 * np.cos(phi[:, None] - phi[None, :] + shift), 6)


def terms_from_bonds(n_atoms, bonds):
    """All angles and proper dihedrals of a bond graph (0-based index rows)."""
    nbr = [[] for _ in range(n_atoms)]
    for a, b in bonds:
        nbr[a].append(b)
        nbr[b].append(a)
    angles = [(a, b, c) for b in range(n_atoms) for a, c in itertools.combinations(nbr[b], 2)]
    dihedrals = [(a, b, c, d) for b, c in bonds for a in nbr[b] for d in nbr[c]
                 if a != c and d != b and a != d]
    return nbr, angles, dihedrals


def make_parameters(types, bonds, angles, dihedrals, impropers, cmaps, elements):
    p = CharmmParameters(e14fac=1.0, nbxmod=5)
    for t, el in zip(types, elements):
        p.masses[t] = MASSES[el]
    for a, b in bonds:
        key = canonical_pair(types[a], types[b])
        p.bonds[key] = BOND_SPECIFIC.get(key) or BOND_BY_ELEMENTS["".join(sorted(elements[a] + elements[b]))]
    for a, b, c in angles:
        key = canonical_angle(types[a], types[b], types[c])
        sp2 = types[b] in ("QC", "QN")
        ub = UREY_BRADLEY.get(key, (None, None))
        p.angles[key] = ((80.0 if sp2 else 45.0), (120.0 if sp2 else 109.5)) + ub
    for row in dihedrals:
        ts = [types[i] for i in row]
        amide = {ts[1], ts[2]} == {"QC", "QN"}
        p.dihedrals[canonical_quad(("X", ts[1], ts[2], "X"))] = \
            [(2.5, 2, 180.0)] if amide else [(0.2, 3, 0.0)]
    for key, terms in DIHEDRAL_SPECIFIC.items():
        p.dihedrals[canonical_quad(key)] = terms
    p.impropers.update({canonical_quad(k): v for k, v in IMPROPERS.items()})
    for row in cmaps:
        key = canonical_cmap([types[i] for i in row])
        p.cmaps.setdefault(key, cmap_grid(0.0 if "QCG" not in key else 1.0))
    p.nonbonded.update(NONBONDED)
    p.nbfix.update({canonical_pair(*k): v for k, v in NBFIX.items()})
    return p


def main():
    from openmm import app, unit

    topology, positions = build_coordinates()
    atoms = list(topology.atoms())
    bonds = sorted(tuple(sorted((b[0].index, b[1].index))) for b in topology.bonds())
    nbr, angles, dihedrals = terms_from_bonds(len(atoms), bonds)
    neighbours = [[atoms[j] for j in nbr[i]] for i in range(len(atoms))]
    types = [atom_type(a, neighbours) for a in atoms]
    elements = [a.element.symbol for a in atoms]
    charges = np.array([CHARGES[t] for t in types])
    resindex = np.array([a.residue.index for a in atoms])
    for r in set(resindex):  # invented charges, made neutral per residue
        sel = resindex == r
        charges[sel] -= charges[sel].sum() / sel.sum()
    charges = np.round(charges, 5)
    impropers, cmaps = [], []
    for i, t in enumerate(types):
        others = [j for j in nbr[i] if types[j] not in ("QO", "QHN")]
        if t == "QC":   # C  CA  +N  O
            o = next(j for j in nbr[i] if types[j] == "QO")
            impropers.append((i, others[0], others[1], o))
        if t == "QN":   # N  -C  CA  HN
            h = next(j for j in nbr[i] if types[j] == "QHN")
            c_prev = next(j for j in others if types[j] == "QC")
            impropers.append((i, c_prev, next(j for j in others if j != c_prev), h))
    by_name = {(a.residue.index, a.name): a.index for a in atoms}
    for res in topology.residues():
        if res.name in PHI_PSI:
            k = res.index
            cmaps.append((by_name[k - 1, "C"], by_name[k, "N"], by_name[k, "CA"], by_name[k, "C"],
                          by_name[k, "N"], by_name[k, "CA"], by_name[k, "C"], by_name[k + 1, "N"]))
    OUT.mkdir(parents=True, exist_ok=True)
    write_psf(OUT / "probe_peptide.psf", names=[a.name for a in atoms], types=types,
              charges=charges, masses=[MASSES[e] for e in elements], segids=[SEGID] * len(atoms),
              resids=[a.residue.index + 1 for a in atoms], resnames=[a.residue.name for a in atoms],
              bonds=bonds, angles=angles, dihedrals=dihedrals, impropers=impropers, cmaps=cmaps,
              title=("probe peptide ACE-ALA-GLY-SER-NME, invented probe force field",
                     "written by samples/make_peptide.py"))
    params = make_parameters(types, bonds, angles, dihedrals, impropers, cmaps, elements)
    write_parameters(OUT / "probe_ff.prm", params,
                     title=("probe force field: invented types and values for the Tessera sample",))
    with open(OUT / "probe_peptide.pdb", "w") as handle:
        app.PDBFile.writeFile(topology, positions * unit.angstrom, handle)
    print(f"wrote {len(atoms)} atoms, {len(bonds)} bonds, {len(angles)} angles, "
          f"{len(dihedrals)} dihedrals, {len(impropers)} impropers, {len(cmaps)} cmaps to {OUT}")


if __name__ == "__main__":
    main()
