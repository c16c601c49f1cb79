#!/usr/bin/env python
"""Record the scenario's alanine-scan facts in ``samples/scenario/scenario.json`` ("hotspots").

Independent of Tessera's engine: every interface residue (any atom within 5 A of the other
chain; Gly and Ala left out) of each model is truncated to alanine with OpenMM's Modeller
(side-chain atoms beyond CB deleted, residue renamed ALA, ``addHydrogens`` without a force
field for the atoms, CB's hydrogens then set to an ideal staggered methyl, N-CA-CB-HB
60/180/300), the single mutant is parameterised by OpenMM's
``ForceField('amber14-all.xml')``, and the chain A - chain B interaction is a numpy sum over
every A-B atom pair of OpenMM's own NonbondedForce parameters (plain Coulomb, eps = 1,
Lorentz-Berthelot LJ, no cutoff, vacuum).

With ``--gb`` it records the same scan with generalized Born solvation ("hotspots_gb"): each
mutant's change of the solvation of binding, G_solv(AB) - G_solv(A) - G_solv(B), from OpenMM's
own ``ForceField('amber14-all.xml', 'implicit/obc2.xml')`` systems of the complex and of each chain
alone (CustomGBForce on the Reference platform; ``sasaMethod=None`` the polar part, ``'ACE'``
minus that the nonpolar part; solute dielectric 1, solvent 78.5, no salt, no cutoff), added to the
vacuum interaction change above.  On the clashing model only the residues named in the facts.

Run:  .venv/bin/python samples/scenario_hotspots.py [--gb]
"""
from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
import openmm.app as app
import openmm.unit as u
from scipy.spatial import cKDTree

OUT = Path(__file__).resolve().parent / "scenario"
COULOMB_KJ_NM = 138.935456  # kJ mol^-1 nm e^-2 (OpenMM's ONE_4PI_EPS0)
KJ2KCAL = 1.0 / 4.184
KEEP = {"N", "H", "H1", "H2", "H3", "CA", "HA", "C", "O", "OXT", "CB"}
FF = app.ForceField("amber14-all.xml")


def ideal(a, b, c, bond, angle, torsion):
    """Atom d with |cd| = bond, angle bcd, dihedral abcd (degrees), A."""
    b1, b2 = b - a, c - b
    e2 = b2 / np.linalg.norm(b2)
    nrm = np.cross(b1, e2)
    nrm /= np.linalg.norm(nrm)
    th, ph = np.radians(angle), np.radians(torsion)
    return c + bond * (-np.cos(th) * e2 + np.sin(th) * np.cos(ph) * np.cross(nrm, e2)
                       + np.sin(th) * np.sin(ph) * nrm)


def interaction(topology, positions_nm):
    system = FF.createSystem(topology, nonbondedMethod=app.NoCutoff)
    nb = next(f for f in system.getForces() if f.__class__.__name__ == "NonbondedForce")
    p = np.array([[v._value for v in nb.getParticleParameters(i)] for i in range(nb.getNumParticles())])
    chain = np.array([a.residue.chain.id for a in topology.atoms()])
    a, b = np.flatnonzero(chain == "A"), np.flatnonzero(chain == "B")
    x = np.asarray(positions_nm)
    r = np.linalg.norm(x[a][:, None] - x[b][None], axis=2)
    sig = 0.5 * (p[a, 1][:, None] + p[b, 1][None])
    eps = np.sqrt(p[a, 2][:, None] * p[b, 2][None])
    coul = COULOMB_KJ_NM * (p[a, 0][:, None] * p[b, 0][None]) / r
    lj = 4 * eps * ((sig / r) ** 12 - (sig / r) ** 6)
    return coul.sum() * KJ2KCAL, lj.sum() * KJ2KCAL


FF_GB = app.ForceField("amber14-all.xml", "implicit/obc2.xml")


def _gb_energy(topology, positions_nm, sasa):
    import openmm
    system = FF_GB.createSystem(topology, nonbondedMethod=app.NoCutoff, constraints=None, sasaMethod=sasa)
    for g, force in enumerate(system.getForces()):
        force.setForceGroup(g)
    gb = next(g for g, f in enumerate(system.getForces()) if isinstance(f, openmm.CustomGBForce))
    ctx = openmm.Context(system, openmm.VerletIntegrator(1.0), openmm.Platform.getPlatformByName("Reference"))
    ctx.setPositions(positions_nm)
    return ctx.getState(getEnergy=True, groups={gb}).getPotentialEnergy().value_in_unit(u.kilocalorie_per_mole)


def solvation(topology, positions_nm, chains):
    """Polar and nonpolar solvation (kcal/mol) of the chains ``chains`` alone."""
    m = app.Modeller(topology, positions_nm * u.nanometer)
    m.delete([c for c in m.topology.chains() if c.id not in chains])
    x = np.asarray(m.getPositions().value_in_unit(u.nanometer))
    polar = _gb_energy(m.topology, x, None)
    return np.array([polar, _gb_energy(m.topology, x, "ACE") - polar])


def binding_solvation(topology, positions_nm, mutated_chain=None, wild=None):
    """G_solv(AB) - G_solv(A) - G_solv(B), polar and nonpolar; with ``mutated_chain`` the
    unchanged chain's solvation is taken from ``wild`` (it cancels)."""
    parts = {"AB": solvation(topology, positions_nm, {"A", "B"})}
    for c in ("A", "B"):
        parts[c] = solvation(topology, positions_nm, {c}) if c == mutated_chain or wild is None else wild[c]
    return parts["AB"] - parts["A"] - parts["B"], parts


def mutants(pdb, x, res, only=None):
    """(label, topology, positions nm, chain) of each single alanine mutant."""
    residues = list(pdb.topology.residues())
    for r in res:
        label = f"{residues[r].chain.id}:{residues[r].name}{residues[r].id}"
        if only is not None and label not in only:
            continue
        m = app.Modeller(pdb.topology, pdb.positions)
        m.delete([at for at in m.topology.atoms() if at.residue.index == r and at.name not in KEEP])
        list(m.topology.residues())[r].name = "ALA"
        m.addHydrogens(forcefield=None)
        pos = np.asarray(m.getPositions().value_in_unit(u.nanometer))
        res_m = list(m.topology.residues())[r]
        byname = {at.name: at.index for at in res_m.atoms()}
        n, ca, cb = (pos[byname[k]] * 10 for k in ("N", "CA", "CB"))
        for k in range(3):  # ideal staggered methyl (Modeller's own placement is random), PDB precision
            pos[byname[f"HB{k + 1}"]] = np.round(ideal(n, ca, cb, 1.09, 109.47, 60.0 + 120.0 * k), 3) / 10
        yield label, m.topology, pos, residues[r].chain.id


def interface(pdb, x):
    atoms = list(pdb.topology.atoms())
    chain = np.array([a.residue.chain.id for a in atoms])
    a, b = np.flatnonzero(chain == "A"), np.flatnonzero(chain == "B")
    coo = cKDTree(x[a] * 10).sparse_distance_matrix(cKDTree(x[b] * 10), 5.0, output_type="ndarray")
    res = sorted({atoms[i].residue.index for i in a[coo["i"]]} | {atoms[j].residue.index for j in b[coo["j"]]})
    residues = list(pdb.topology.residues())
    return [r for r in res if residues[r].name not in ("GLY", "ALA")]


def scan_gb(path, only=None):
    """Per-term change (coulomb, lj, solvation_polar, solvation_nonpolar) of each mutant, kcal/mol."""
    pdb = app.PDBFile(str(path))
    x = pdb.getPositions(asNumpy=True).value_in_unit(u.nanometer)
    wild_pair = np.array(interaction(pdb.topology, x))
    wild_solv, wild_parts = binding_solvation(pdb.topology, x)
    out = {}
    for label, top, pos, chain in mutants(pdb, x, interface(pdb, x), only):
        solv, _ = binding_solvation(top, pos, chain, wild_parts)
        d = np.r_[np.array(interaction(top, pos)) - wild_pair, solv - wild_solv]
        out[label] = dict(zip(("coulomb", "lj", "solvation_polar", "solvation_nonpolar"), d.tolist()))
        print(f"{label:10s} " + " ".join(f"{v:9.3f}" for v in d) + f"  total {d.sum():9.3f}", flush=True)
    wild = dict(zip(("coulomb", "lj", "solvation_polar", "solvation_nonpolar"), np.r_[wild_pair, wild_solv].tolist()))
    return out, wild


def scan(path):
    pdb = app.PDBFile(str(path))
    x = pdb.getPositions(asNumpy=True).value_in_unit(u.nanometer)
    atoms = list(pdb.topology.atoms())
    chain = np.array([a.residue.chain.id for a in atoms])
    a, b = np.flatnonzero(chain == "A"), np.flatnonzero(chain == "B")
    coo = cKDTree(x[a] * 10).sparse_distance_matrix(cKDTree(x[b] * 10), 5.0, output_type="ndarray")
    res = sorted({atoms[i].residue.index for i in a[coo["i"]]} | {atoms[j].residue.index for j in b[coo["j"]]})
    residues = list(pdb.topology.residues())
    res = [r for r in res if residues[r].name not in ("GLY", "ALA")]
    wild = sum(interaction(pdb.topology, x))
    out = {}
    for r in res:
        m = app.Modeller(pdb.topology, pdb.positions)
        m.delete([at for at in m.topology.atoms() if at.residue.index == r and at.name not in KEEP])
        list(m.topology.residues())[r].name = "ALA"
        m.addHydrogens(forcefield=None)
        pos = np.asarray(m.getPositions().value_in_unit(u.nanometer))
        res_m = list(m.topology.residues())[r]
        byname = {at.name: at.index for at in res_m.atoms()}
        n, ca, cb = (pos[byname[k]] * 10 for k in ("N", "CA", "CB"))
        for k in range(3):  # ideal staggered methyl (Modeller's own placement is random), PDB precision
            pos[byname[f"HB{k + 1}"]] = np.round(ideal(n, ca, cb, 1.09, 109.47, 60.0 + 120.0 * k), 3) / 10
        label = f"{residues[r].chain.id}:{residues[r].name}{residues[r].id}"
        out[label] = sum(interaction(m.topology, pos)) - wild
        print(f"{label:10s} {out[label]:9.3f}", flush=True)
    ranked = sorted(out, key=lambda k: -out[k])
    return out, ranked


def main_gb():
    facts = json.loads((OUT / "scenario.json").read_text())
    keep = facts["salt_bridge"] + facts["hydrophobic"] + facts["clash"][:1]
    block = {"method": "as 'hotspots', plus the change of the generalized-Born solvation of binding "
             "G_solv(AB) - G_solv(A) - G_solv(B): OpenMM ForceField('amber14-all.xml', 'implicit/obc2.xml') "
             "of the complex and of each chain alone, CustomGBForce on the Reference platform (polar: "
             "sasaMethod=None; nonpolar: 'ACE' minus polar), solute dielectric 1, solvent 78.5, no salt, "
             "no cutoff; computed by samples/scenario_hotspots.py --gb (independent of Tessera's engine); "
             "on the clashing model only the residues listed"}
    for variant, only in (("fixed", None), ("clash", set(keep))):
        delta, wild = scan_gb(OUT / facts["files"][variant], only)
        total = {k: sum(v.values()) for k, v in delta.items()}
        ranked = sorted(total, key=lambda k: -total[k])
        entry = {"wild_type_kcal_mol": {t: round(v, 3) for t, v in wild.items()},
                 "delta_kcal_mol": {k: round(total[k], 3) for k in keep if k in total},
                 "terms_kcal_mol": {k: {t: round(v, 3) for t, v in delta[k].items()} for k in keep if k in delta}}
        if only is None:
            entry.update({"n_scanned": len(delta), "top5": ranked[:5],
                          "rank": {k: ranked.index(k) + 1 for k in keep if k in total},
                          "n_hot": sum(v >= 2.0 for v in total.values())})
        block[variant] = entry
    facts = json.loads((OUT / "scenario.json").read_text())
    facts["hotspots_gb"] = block
    (OUT / "scenario.json").write_text(json.dumps(facts, indent=2) + "\n")


def main():
    if "--gb" in sys.argv[1:]:
        return main_gb()
    facts = json.loads((OUT / "scenario.json").read_text())
    block = {"method": "alanine truncation (OpenMM Modeller, CB hydrogens as an ideal staggered methyl, "
             "amber14-all.xml), A-B nonbonded interaction change dE = E_int(mutant) - E_int(wild type), "
             "vacuum, no cutoff; interface: any atom within "
             "5 A of the other chain, Gly/Ala left out; computed by samples/scenario_hotspots.py with "
             "OpenMM's parameters and a numpy pair sum (independent of Tessera's engine)"}
    keep = facts["salt_bridge"] + facts["hydrophobic"] + facts["clash"][:1]
    for variant in ("fixed", "clash"):
        delta, ranked = scan(OUT / facts["files"][variant])
        block[variant] = {"n_scanned": len(delta), "top5": ranked[:5],
                          "rank": {k: ranked.index(k) + 1 for k in keep if k in delta},
                          "delta_kcal_mol": {k: round(delta[k], 3) for k in keep if k in delta}}
    facts["hotspots"] = block
    (OUT / "scenario.json").write_text(json.dumps(facts, indent=2) + "\n")


if __name__ == "__main__":
    main()
