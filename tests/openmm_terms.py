"""Outside references for any OpenMM System: OpenMM's own energies per engine term, and an
independent brute-force numpy sum of the residue-pair nonbonded energies from OpenMM's parameters.

* :func:`reference_terms`: every force in its own force group on OpenMM's Reference platform
  (double precision); the NonbondedForce evaluated once with its Lennard-Jones zeroed (Coulomb)
  and once with its charges zeroed (LJ, to which the CustomNonbondedForce and its CustomBondForce
  1-4 companion are added).  Urey-Bradley rows (1-3 pairs of the HarmonicBondForce outside
  3-atom molecules) are evaluated alone by zeroing the other rows.  Virtual sites are placed by
  OpenMM's ``Context.computeVirtualSites`` before every evaluation.
* :func:`brute_force_residue_pairs`: Coulomb and LJ of every atom pair (no cutoff, plain
  Coulomb), summed into a dense residue x residue matrix, from the NonbondedForce particles and
  exceptions and, where present, the tabulated A/B of the CustomNonbondedForce and the 1-4
  companion's parameters.  Positions are OpenMM's own (``Context.computeVirtualSites``).
"""
from __future__ import annotations

import copy

import numpy as np
import openmm
from openmm import unit

KCAL = unit.kilocalorie_per_mole
ONE_4PI_EPS0 = 138.935456  # kJ/mol nm / e^2: OpenMM's constant, value from memory (CODATA 2018 agrees to 1e-7)
KJ_PER_KCAL = 4.184        # thermochemical calorie (exact)


def _context(system, positions_nm, box_vectors=None):
    ctx = openmm.Context(system, openmm.VerletIntegrator(1.0), openmm.Platform.getPlatformByName("Reference"))
    if box_vectors is not None:
        ctx.setPeriodicBoxVectors(*box_vectors)
    ctx.setPositions(positions_nm)
    ctx.computeVirtualSites()  # OpenMM's own placement of the sites from their parents
    return ctx


def _by_group(system, positions_nm, box_vectors=None):
    for g, force in enumerate(system.getForces()):
        force.setForceGroup(g)
    ctx = _context(system, positions_nm, box_vectors)
    return {g: ctx.getState(getEnergy=True, groups={g}).getPotentialEnergy().value_in_unit(KCAL)
            for g in range(system.getNumForces())}


def configure_nonbonded(system, cutoff_nm=None, rf_dielectric=78.5):
    """No cutoff, or a periodic cutoff with reaction field; no dispersion/long-range correction,
    no switching (the engine has neither)."""
    for f in system.getForces():
        name = f.__class__.__name__
        if name == "NonbondedForce":
            f.setNonbondedMethod(openmm.NonbondedForce.NoCutoff if cutoff_nm is None
                                 else openmm.NonbondedForce.CutoffPeriodic)
            if cutoff_nm is not None:
                f.setCutoffDistance(cutoff_nm)
            f.setReactionFieldDielectric(rf_dielectric)
            f.setUseDispersionCorrection(False)
            f.setUseSwitchingFunction(False)
        elif name == "CustomNonbondedForce":
            f.setNonbondedMethod(openmm.CustomNonbondedForce.NoCutoff if cutoff_nm is None
                                 else openmm.CustomNonbondedForce.CutoffPeriodic)
            if cutoff_nm is not None:
                f.setCutoffDistance(cutoff_nm)
            f.setUseLongRangeCorrection(False)
            f.setUseSwitchingFunction(False)


def _molecule_size(topology):
    n = topology.getNumAtoms()
    parent = list(range(n))

    def find(a):
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a
    for a, b in topology.bonds():
        parent[find(a.index)] = find(b.index)
    roots = [find(i) for i in range(n)]
    counts = {}
    for r in roots:
        counts[r] = counts.get(r, 0) + 1
    return [counts[r] for r in roots]


def urey_bradley_rows(force, topology):
    """Rows of a HarmonicBondForce joining two atoms that are not bonded but share a neighbour,
    outside 3-atom molecules (there it is water's H-H bond)."""
    neighbours = [set() for _ in range(topology.getNumAtoms())]
    for a, b in topology.bonds():
        neighbours[a.index].add(b.index)
        neighbours[b.index].add(a.index)
    size = _molecule_size(topology)
    rows = []
    for k in range(force.getNumBonds()):
        i, j, _, _ = force.getBondParameters(k)
        if j not in neighbours[i] and neighbours[i] & neighbours[j] and size[i] != 3:
            rows.append(k)
    return rows


def reference_terms(omm_system, topology, positions_angstrom, cutoff_nm=None, box_vectors=None) -> dict:
    """OpenMM's energy of each engine term (kcal/mol); keys ``bond``, ``urey_bradley``, ``angle``,
    ``torsion`` (PeriodicTorsionForce: dihedrals + periodic impropers), ``harmonic_improper``,
    ``cmap``, ``coulomb``, ``lj``."""
    pos = np.asarray(positions_angstrom) / 10.0
    base = copy.deepcopy(omm_system)
    configure_nonbonded(base, cutoff_nm)
    names = [f.__class__.__name__ for f in base.getForces()]
    out = dict.fromkeys(("bond", "urey_bradley", "angle", "torsion", "harmonic_improper", "cmap",
                         "coulomb", "lj"), 0.0)
    # Urey-Bradley alone: a copy whose other bond rows have k = 0
    ub_only = copy.deepcopy(base)
    for f in ub_only.getForces():
        if f.__class__.__name__ == "HarmonicBondForce":
            keep = set(urey_bradley_rows(f, topology))
            for k in range(f.getNumBonds()):
                if k not in keep:
                    i, j, r0, _ = f.getBondParameters(k)
                    f.setBondParameters(k, i, j, r0, 0.0)
    e_ub = _by_group(ub_only, pos, box_vectors)
    e = _by_group(base, pos, box_vectors)
    for g, name in enumerate(names):
        if name == "HarmonicBondForce":
            out["urey_bradley"] += e_ub[g]
            out["bond"] += e[g] - e_ub[g]
        elif name == "HarmonicAngleForce":
            out["angle"] += e[g]
        elif name == "PeriodicTorsionForce":
            out["torsion"] += e[g]
        elif name == "CustomTorsionForce":
            out["harmonic_improper"] += e[g]
        elif name == "CMAPTorsionForce":
            out["cmap"] += e[g]
        elif name in ("CustomNonbondedForce", "CustomBondForce"):
            out["lj"] += e[g]
    if "NonbondedForce" in names:
        g = names.index("NonbondedForce")
        charges_only = copy.deepcopy(base)
        nb = charges_only.getForce(g)
        for i in range(nb.getNumParticles()):
            q, s, _ = nb.getParticleParameters(i)
            nb.setParticleParameters(i, q, s, 0.0)
        for k in range(nb.getNumExceptions()):
            i, j, qq, s, _ = nb.getExceptionParameters(k)
            nb.setExceptionParameters(k, i, j, qq, s, 0.0)
        out["coulomb"] = _by_group(charges_only, pos, box_vectors)[g]
        out["lj"] += e[g] - out["coulomb"]
    return out


def openmm_site_positions(omm_system, positions_angstrom) -> np.ndarray:
    """Positions (A) with OpenMM's ``Context.computeVirtualSites`` applied."""
    ctx = _context(copy.deepcopy(omm_system), np.asarray(positions_angstrom) / 10.0)
    return np.asarray(ctx.getState(getPositions=True).getPositions(asNumpy=True).value_in_unit(unit.angstrom))


def brute_force_residue_pairs(omm_system, topology, positions_angstrom, table_form=None, pair_form=None):
    """Dense (n_res, n_res) Coulomb and LJ matrices (kcal/mol, upper triangle i <= j), no cutoff.

    ``table_form(acoef, bcoef) -> (A, B)`` turns the CustomNonbondedForce's tabulated values into
    E = A/r^12 - B/r^6 (kJ/mol, nm); ``pair_form(params) -> (A, B)`` does the same for the
    CustomBondForce 1-4 companion's per-bond parameters."""
    x = openmm_site_positions(omm_system, positions_angstrom) / 10.0  # nm
    n = len(x)
    res = np.array([a.residue.index for a in topology.atoms()])
    n_res = topology.getNumResidues()
    forces = {f.__class__.__name__: f for f in omm_system.getForces()}
    nb = forces["NonbondedForce"]
    q = np.zeros(n); sig = np.zeros(n); eps = np.zeros(n)
    for i in range(n):
        qi, si, ei = nb.getParticleParameters(i)
        q[i], sig[i], eps[i] = qi._value, si._value, ei._value
    custom = forces.get("CustomNonbondedForce")
    if custom is not None:
        types = np.array([custom.getParticleParameters(i)[0] for i in range(n)], int)
        tabs = {}
        for k in range(custom.getNumTabulatedFunctions()):
            nx, ny, values = custom.getTabulatedFunction(k).getFunctionParameters()
            tabs[custom.getTabulatedFunctionName(k)] = np.array(values).reshape(ny, nx).T
        a_tab, b_tab = table_form(tabs["acoef"], tabs["bcoef"])
    coul = np.zeros((n_res, n_res)); lj = np.zeros((n_res, n_res))
    excluded = set()
    ex_rows = []
    for k in range(nb.getNumExceptions()):
        i, j, qq, s, e = nb.getExceptionParameters(k)
        excluded.add((min(i, j), max(i, j)))
        ex_rows.append([min(i, j), max(i, j), qq._value, 4 * e._value * s._value ** 12, 4 * e._value * s._value ** 6])
    ex_index = {(int(r[0]), int(r[1])): k for k, r in enumerate(ex_rows)}
    companion = forces.get("CustomBondForce")
    if companion is not None:
        for b in range(companion.getNumBonds()):
            i, j, params = companion.getBondParameters(b)
            a_, b_ = pair_form(list(params))
            row = ex_rows[ex_index[(min(i, j), max(i, j))]]
            row[3] += a_; row[4] += b_
    excluded_keys = np.array(sorted(i * n + j for i, j in excluded), np.int64)
    for i in range(n - 1):
        j = np.arange(i + 1, n)
        j = j[~np.isin(i * n + j, excluded_keys)]
        r = np.linalg.norm(x[j] - x[i], axis=1)
        ec = ONE_4PI_EPS0 * q[i] * q[j] / r
        if custom is not None:
            el = a_tab[types[i], types[j]] / r ** 12 - b_tab[types[i], types[j]] / r ** 6
        else:
            s = 0.5 * (sig[i] + sig[j]); e = np.sqrt(eps[i] * eps[j])
            el = 4 * e * ((s / r) ** 12 - (s / r) ** 6)
        lo, hi = np.minimum(res[i], res[j]), np.maximum(res[i], res[j])
        np.add.at(coul, (lo, hi), ec / KJ_PER_KCAL)
        np.add.at(lj, (lo, hi), el / KJ_PER_KCAL)
    for i, j, qq, a_, b_ in ex_rows:
        i, j = int(i), int(j)
        r = np.linalg.norm(x[j] - x[i])
        lo, hi = min(res[i], res[j]), max(res[i], res[j])
        coul[lo, hi] += ONE_4PI_EPS0 * qq / r / KJ_PER_KCAL
        lj[lo, hi] += (a_ / r ** 12 - b_ / r ** 6) / KJ_PER_KCAL
    return coul, lj


def dense_pairs(result, column: str) -> np.ndarray:
    """The engine's residue-pair column as a dense upper-triangular matrix."""
    rp = result.residue_pairs
    m = np.zeros((rp.n_residues, rp.n_residues))
    np.add.at(m, (rp.pair_i, rp.pair_j), rp.values[column])
    return m


def assert_matrices_close(ours, reference, what, rel=1e-4, abs_=1e-3):
    """The project's agreement rule per residue pair: 1e-4 relative or 1e-3 kcal/mol absolute."""
    diff = np.abs(ours - reference)
    bad = (diff > abs_) & (diff > rel * np.abs(reference))
    assert not bad.any(), (f"{what}: {int(bad.sum())} residue pairs differ, worst "
                           f"{float(diff.max()):.3g} kcal/mol at {np.unravel_index(diff.argmax(), diff.shape)}")
