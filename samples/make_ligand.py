"""Build samples/ligand/complex_with_ligand.pdb: the scenario's relaxed complex
(scenario/complex_fixed.pdb, invented) with one invented probe ligand PLG (chain L), whose
template is ligand/probe_ligand.xml.  Run from the repository root:

    python samples/make_ligand.py

Methanol-like geometry (C-O 1.43 A, C-H 1.09 A, O-H 0.97 A, tetrahedral angles), placed 4.5 A
beyond the complex's outermost atom along +z.  CONECT records carry the ligand's bonds (a PDB
reader bonds a non-standard residue only from them).
"""
from __future__ import annotations

import os

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = os.path.join(HERE, "scenario", "complex_fixed.pdb")
TARGET = os.path.join(HERE, "ligand", "complex_with_ligand.pdb")


def ligand_coordinates(origin):
    tet = np.degrees(np.arccos(-1.0 / 3.0))
    c = np.zeros(3)
    o = np.array([1.43, 0.0, 0.0])
    ho = o + 0.97 * np.array([np.cos(np.radians(180 - 108.5)), np.sin(np.radians(180 - 108.5)), 0.0])
    hs = []
    for k in range(3):
        phi = np.radians(60.0 + 120.0 * k)
        theta = np.radians(180.0 - tet)
        hs.append(1.09 * np.array([-np.cos(theta), np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi)]))
    return {name: origin + xyz for name, xyz in
            [("C1", c), ("O1", o), ("H11", hs[0]), ("H12", hs[1]), ("H13", hs[2]), ("HO1", ho)]}


def main():
    lines = [line for line in open(SOURCE) if line.startswith(("ATOM", "HETATM", "TER"))]
    xyz = np.array([[float(line[30:38]), float(line[38:46]), float(line[46:54])]
                    for line in lines if line.startswith("ATOM")])
    top = xyz[np.argmax(xyz[:, 2])]
    atoms = ligand_coordinates(top + np.array([0.0, 0.0, 4.5]))
    serial = len(xyz) + 3  # after the two TER records
    out = ["REMARK   1 INVENTED DEMO (SAMPLES/MAKE_LIGAND.PY): COMPLEX_FIXED.PDB WITH PROBE LIGAND PLG (L)\n"]
    out += lines
    serials = {}
    for k, (name, p) in enumerate(atoms.items()):
        serials[name] = serial + k
        element = name[0]
        field = f" {name:<3s}" if len(name) < 4 else name  # PDB: 1-letter elements from column 14
        out.append(f"HETATM{serial + k:5d} {field} PLG L   1    {p[0]:8.3f}{p[1]:8.3f}{p[2]:8.3f}"
                   f"  1.00  0.00          {element:>2s}\n")
    bonds = {"C1": ["O1", "H11", "H12", "H13"], "O1": ["C1", "HO1"], "H11": ["C1"], "H12": ["C1"],
             "H13": ["C1"], "HO1": ["O1"]}
    for name, partners in bonds.items():
        out.append("CONECT" + f"{serials[name]:5d}" + "".join(f"{serials[p]:5d}" for p in partners) + "\n")
    out.append("END\n")
    with open(TARGET, "w") as fh:
        fh.write("".join(out))


if __name__ == "__main__":
    main()
