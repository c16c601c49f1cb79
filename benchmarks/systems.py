"""Benchmark systems: one small protein in a periodic TIP3P water box, at three sizes.

Source of the protein: OpenMM's bundled ``openmm/app/data/test.pdb`` (a villin headpiece
variant in water, shipped with the ``openmm`` package).  Its waters and ions are removed and the
single protein chain (582 atoms) is kept.  With OpenMM's ``Modeller``
(``amber14-all.xml`` + ``amber14/tip3p.xml``) hydrogens are completed (``addHydrogens``, pH 7)
and the protein is solvated in a cubic TIP3P box whose edge is chosen to hit the target atom
count, neutralised with Na+/Cl- (``neutralize=True``, no extra salt).

Box edge: a first guess from the density of TIP3P (about 0.1 atoms per A^3), then up to three
corrections ``L' = L * (wanted solvent atoms / got solvent atoms)^(1/3)`` rounded to 0.1 A, until
the atom count is within 2% of the target.
Python's ``random`` is seeded before every Modeller call (ion placement picks waters at random),
so the files are deterministic.

Each system is written as PDB (with CRYST1) to ``benchmarks/results/systems/NAME.pdb`` plus a
``NAME.json`` with how it was built; both are reused when present (delete them to rebuild).

``python benchmarks/systems.py [--quick]`` builds (or reports) the systems.
"""
from __future__ import annotations

import argparse
import json
import os
import random
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
SYSTEMS_DIR = os.path.join(HERE, "results", "systems")
FORCE_FIELD = ("amber14-all.xml", "amber14/tip3p.xml")
SEED = 20261201
#: Build recipe version; bump to invalidate caches written by an older recipe.
RECIPE = 1

#: name -> target atom count.
TARGETS = {"water_5k": 5_000, "water_10k": 10_000, "water_25k": 25_000, "water_50k": 50_000,
           "water_100k": 100_000, "water_250k": 250_000}
ATOMS_PER_A3 = 0.100  # TIP3P at ~1 g/cm^3: 3 atoms per 29.9 A^3
TOLERANCE = 0.02  # accept a box within 2% of the target atom count


def protein_source() -> str:
    import openmm.app
    return os.path.join(os.path.dirname(openmm.app.__file__), "data", "test.pdb")


def _protein_modeller(ff):
    from openmm import app
    pdb = app.PDBFile(protein_source())
    modeller = app.Modeller(pdb.topology, pdb.positions)
    drop = [r for r in modeller.topology.residues() if r.name in ("HOH", "WAT", "Cl", "CL", "Na", "NA")]
    modeller.delete(drop)
    random.seed(SEED)
    modeller.addHydrogens(ff, pH=7.0)
    return modeller


def _solvate(ff, protein, edge_angstrom: float):
    from openmm import Vec3, app, unit
    m = app.Modeller(protein.topology, protein.positions)
    random.seed(SEED)
    edge_nm = edge_angstrom / 10.0
    m.addSolvent(ff, model="tip3p", boxSize=Vec3(edge_nm, edge_nm, edge_nm) * unit.nanometer,
                 positiveIon="Na+", negativeIon="Cl-", neutralize=True)
    return m


def _composition(topology) -> dict:
    counts: dict = {}
    for r in topology.residues():
        key = "water" if r.name == "HOH" else ("ion" if len(r) == 1 else "protein_residue")
        counts[key] = counts.get(key, 0) + 1
    ions: dict = {}
    for r in topology.residues():
        if len(r) == 1:
            ions[r.name] = ions.get(r.name, 0) + 1
    return {**counts, "ions_by_name": ions}


def build(name: str, target_atoms: int, log=print) -> dict:
    """Build one system (no cache check); write NAME.pdb and NAME.json; return the info dict."""
    from openmm import app
    t0 = time.perf_counter()
    ff = app.ForceField(*FORCE_FIELD)
    protein = _protein_modeller(ff)
    n_protein = protein.topology.getNumAtoms()
    protein_volume = 1.3 * n_protein * 10.0  # rough excluded volume, A^3, only for the first guess
    edge0 = round(((target_atoms - n_protein) / ATOMS_PER_A3 + protein_volume) ** (1.0 / 3.0), 1)
    edge, final = edge0, None
    for attempt in range(4):
        final = _solvate(ff, protein, edge)
        got = final.topology.getNumAtoms() - n_protein
        log(f"  {name}: edge {edge:.1f} A -> {got + n_protein} atoms")
        if abs(got + n_protein - target_atoms) <= TOLERANCE * target_atoms:
            break
        edge = round(edge * ((target_atoms - n_protein) / got) ** (1.0 / 3.0), 1)
    edge1 = edge
    os.makedirs(SYSTEMS_DIR, exist_ok=True)
    pdb_path = os.path.join(SYSTEMS_DIR, f"{name}.pdb")
    tmp = pdb_path + ".tmp"
    with open(tmp, "w") as fh:
        app.PDBFile.writeFile(final.topology, final.positions, fh, keepIds=False)
    os.replace(tmp, pdb_path)
    info = {"name": name, "recipe": RECIPE, "target_atoms": target_atoms,
            "n_atoms": final.topology.getNumAtoms(), "n_protein_atoms": n_protein,
            "box_edge_angstrom": edge1, "composition": _composition(final.topology),
            "protein_source": "openmm/app/data/test.pdb (bundled with the openmm package), "
                              "waters and ions removed, one protein chain",
            "force_field": list(FORCE_FIELD), "water_model": "tip3p", "neutralize": True,
            "seed": SEED, "build_seconds": round(time.perf_counter() - t0, 1)}
    with open(os.path.join(SYSTEMS_DIR, f"{name}.json"), "w") as fh:
        json.dump(info, fh, indent=1)
    return info


def ensure(name: str, log=print) -> tuple[str, dict]:
    """Path of NAME.pdb and its info, building it first if missing (or built by an older recipe)."""
    pdb_path = os.path.join(SYSTEMS_DIR, f"{name}.pdb")
    info_path = os.path.join(SYSTEMS_DIR, f"{name}.json")
    if os.path.exists(pdb_path) and os.path.exists(info_path):
        with open(info_path) as fh:
            info = json.load(fh)
        if info.get("recipe") == RECIPE:
            return pdb_path, info
    log(f"building {name} (target {TARGETS[name]} atoms) ...")
    info = build(name, TARGETS[name], log)
    log(f"  {name}: {info['n_atoms']} atoms, box {info['box_edge_angstrom']:.1f} A, "
        f"built in {info['build_seconds']:.0f} s")
    return pdb_path, info


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("names", nargs="*", default=list(TARGETS), help="systems (default: all)")
    args = p.parse_args(argv)
    for name in args.names:
        path, info = ensure(name)
        print(f"{name}: {info['n_atoms']} atoms, box {info['box_edge_angstrom']:.1f} A -> {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
