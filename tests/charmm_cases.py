"""Shared helpers of the CHARMM-route tests: invented parameter sets and the OpenMM reference.

The reference energies come from OpenMM's own CHARMM reader (``openmm.app.CharmmPsfFile`` and
``CharmmParameterSet``), which shares no code with :mod:`energy.io`.
"""
from __future__ import annotations

import numpy as np

from energy.io.charmm_params import CharmmParameters, canonical_angle, canonical_cmap, canonical_pair, canonical_quad

KCAL_PER_KJ = 1.0 / 4.184  # thermochemical calorie (exact by definition)


def _angle_deg(a, b, c):
    u, v = a - b, c - b
    return float(np.degrees(np.arccos(np.clip(u @ v / np.linalg.norm(u) / np.linalg.norm(v), -1, 1))))


def invent_parameters(psf, positions, seed: int = 7, type_names=None) -> CharmmParameters:
    """Invented (random, deterministic) parameters covering every type combination of ``psf``.

    Equilibrium values are drawn near the geometry of ``positions`` (A) so energies stay
    moderate.  Exercises multi-term dihedrals, ``X`` wildcards (with and without a competing
    specific entry), Urey-Bradley terms, 1-4 nonbonded columns and NBFIX pairs.
    ``type_names`` maps PSF type strings (e.g. numbers) to the names used in the file.
    """
    rng = np.random.default_rng(seed)
    name_of = (lambda t: type_names.get(t, t)) if type_names else (lambda t: t)
    types = [name_of(str(t).upper()) for t in psf.types]
    p = CharmmParameters()
    for t, m, raw in zip(types, psf.masses, psf.types):
        p.masses.setdefault(t, float(m))
        if str(raw).isdigit():
            p.type_numbers[int(raw)] = t
    x = np.asarray(positions, float)
    for i, j in psf.bonds:
        key = canonical_pair(types[i], types[j])
        if key not in p.bonds:
            r = float(np.linalg.norm(x[i] - x[j]))
            p.bonds[key] = (float(rng.uniform(150, 450)), round(r * rng.uniform(0.95, 1.05), 4))
    for i, j, k in psf.angles:
        key = canonical_angle(types[i], types[j], types[k])
        if key not in p.angles:
            theta = _angle_deg(x[i], x[j], x[k]) + rng.uniform(-8, 8)
            ub = (None, None)
            if rng.random() < 0.3:
                ub = (float(rng.uniform(5, 40)), round(float(np.linalg.norm(x[i] - x[k])) + 0.05, 4))
            p.angles[key] = (float(rng.uniform(20, 90)), round(theta, 3)) + ub
    centres = {}
    for row in psf.dihedrals:
        key = canonical_quad([types[a] for a in row])
        centres.setdefault(canonical_quad(("X", key[1], key[2], "X")), []).append(key)
    for wild, keys in centres.items():
        mode = rng.integers(3)  # 0: specific only, 1: wildcard only, 2: both (specific wins)
        if mode >= 1:
            p.dihedrals[wild] = [(float(rng.uniform(0.1, 2.0)), int(rng.integers(1, 4)),
                                  float(rng.choice([0.0, 180.0])))]
        if mode != 1:
            for key in keys:
                periods = rng.choice([1, 2, 3, 4, 6], size=int(rng.integers(1, 4)), replace=False)
                p.dihedrals[key] = [(float(rng.uniform(0.05, 3.0)), int(n),
                                     float(rng.choice([0.0, 180.0, 35.0]))) for n in periods]
    for row in psf.impropers:
        ts = [types[a] for a in row]
        if rng.random() < 0.5:
            key = canonical_quad((ts[0], "X", "X", ts[3]))
        else:
            key = canonical_quad(ts)
        if key not in p.impropers:
            p.impropers[key] = (float(rng.uniform(20, 120)), 0, float(rng.choice([0.0, 5.0])))
    for row in psf.cmaps:
        key = canonical_cmap([types[a] for a in row])
        if key not in p.cmaps:
            size = 24
            phi = np.radians(-180 + 15 * np.arange(size))
            c = rng.uniform(-1.5, 1.5, size=4)
            p.cmaps[key] = np.round(c[0] * np.cos(phi)[:, None] + c[1] * np.sin(phi)[None, :]
                                    + c[2] * np.cos(phi[:, None] - phi[None, :])
                                    + c[3] * np.sin(2 * phi)[:, None], 6)
    for t in dict.fromkeys(types):
        eps, half = -float(rng.uniform(0.02, 0.3)), float(rng.uniform(0.4, 2.1))
        one_four = (None, None)
        if t.startswith(("C", "T2")) or rng.random() < 0.25:
            one_four = (-float(rng.uniform(0.01, 0.1)), round(half * rng.uniform(0.85, 1.0), 4))
        p.nonbonded[t] = (round(eps, 5), round(half, 4)) + one_four
    unique = list(dict.fromkeys(types))
    for a, b in [(unique[i], unique[j]) for i, j in rng.choice(len(unique), (4, 2))]:
        with_14 = rng.random() < 0.5
        p.nbfix[canonical_pair(a, b)] = (float(rng.uniform(0.05, 0.4)), float(rng.uniform(2.5, 4.0)),
                                         *((0.07, 3.1) if with_14 else (None, None)))
    return p


def openmm_energies(psf_path, param_paths, positions_angstrom, *, cutoff=None, periodic=False,
                    rf_dielectric=78.5, box=None, implicit_solvent=None, kappa_per_nm=0.0):
    """Per-term energies (kcal/mol) computed by OpenMM's own CHARMM reader.

    Each force gets its own group; Coulomb and LJ are separated by evaluating copies of the
    nonbonded forces with all LJ switched off (Coulomb) and with all charges zeroed (LJ).
    ``implicit_solvent``: None or OpenMM's ``app.OBC2`` / ``app.GBn2`` (``createSystem``'s
    ``implicitSolvent``, with ``implicitSolventKappa=kappa_per_nm``, ACE on); the CustomGBForce
    is split into ``solvation_polar`` and ``solvation_nonpolar`` by a second system built with
    ``sasaMethod=None``.  Without it both are 0.
    """
    import openmm
    from openmm import app, unit

    psf = app.CharmmPsfFile(str(psf_path))
    if box is not None:
        psf.setBox(box[0] * unit.angstrom, box[1] * unit.angstrom, box[2] * unit.angstrom)
    params = app.CharmmParameterSet(*[str(p) for p in param_paths])
    method = app.NoCutoff if cutoff is None else (app.CutoffPeriodic if periodic
                                                   else app.CutoffNonPeriodic)
    kwargs = {} if cutoff is None else {"nonbondedCutoff": cutoff / 10.0 * unit.nanometer}
    if implicit_solvent is not None:
        kwargs.update(implicitSolvent=implicit_solvent, implicitSolventKappa=kappa_per_nm / unit.nanometer)
    ace = {"sasaMethod": "ACE"} if implicit_solvent is not None else {}
    system = psf.createSystem(params, nonbondedMethod=method, constraints=None, **ace, **kwargs)
    bond_pairs = {tuple(sorted((b.atom1.idx, b.atom2.idx))) for b in psf.bond_list}
    groups = {}
    for index, force in enumerate(system.getForces()):
        force.setForceGroup(index)
        if isinstance(force, openmm.NonbondedForce) and implicit_solvent is None:
            force.setReactionFieldDielectric(rf_dielectric)
        if isinstance(force, openmm.HarmonicBondForce):
            pairs = {tuple(sorted(force.getBondParameters(k)[:2])) for k in range(force.getNumBonds())}
            kind = "bond" if pairs <= bond_pairs and pairs else "urey_bradley"
        else:
            kind = {openmm.HarmonicAngleForce: "angle", openmm.PeriodicTorsionForce: "dihedral",
                    openmm.CustomTorsionForce: "improper", openmm.CMAPTorsionForce: "cmap",
                    openmm.NonbondedForce: "nonbonded", openmm.CustomNonbondedForce: "nonbonded",
                    openmm.CustomGBForce: "gb", openmm.CMMotionRemover: None}[type(force)]
        if kind is not None:
            groups.setdefault(kind, set()).add(index)
    pos = np.asarray(positions_angstrom, float) / 10.0

    def energy(sys_, group_set):
        if not group_set:
            return 0.0
        integrator = openmm.VerletIntegrator(0.001)
        context = openmm.Context(sys_, integrator, openmm.Platform.getPlatformByName("Reference"))
        context.setPositions(pos)
        if box is not None:
            context.setPeriodicBoxVectors(*[v for v in system.getDefaultPeriodicBoxVectors()])
        state = context.getState(getEnergy=True, groups=set(group_set))
        return state.getPotentialEnergy().value_in_unit(unit.kilojoule_per_mole) * KCAL_PER_KJ

    out = {kind: energy(system, g) for kind, g in groups.items() if kind not in ("nonbonded", "gb")}
    out["solvation_polar"] = out["solvation_nonpolar"] = 0.0
    if implicit_solvent is not None:
        with_ace = energy(system, groups["gb"])
        polar_only = psf.createSystem(params, nonbondedMethod=method, constraints=None, sasaMethod=None, **kwargs)
        gb_index = next(k for k, f in enumerate(polar_only.getForces()) if isinstance(f, openmm.CustomGBForce))
        polar_only.getForce(gb_index).setForceGroup(gb_index)
        for k, f in enumerate(polar_only.getForces()):
            f.setForceGroup(k)
        out["solvation_polar"] = energy(polar_only, {gb_index})
        out["solvation_nonpolar"] = with_ace - out["solvation_polar"]
    for kind in ("bond", "urey_bradley", "angle", "dihedral", "improper", "cmap"):
        out.setdefault(kind, 0.0)
    out["coulomb"] = energy(_nonbonded_copy(system, keep="charge"), groups["nonbonded"])
    out["lj"] = energy(_nonbonded_copy(system, keep="lj"), groups["nonbonded"])
    out["total"] = sum(out[k] for k in ("bond", "urey_bradley", "angle", "dihedral", "improper",
                                        "cmap", "coulomb", "lj", "solvation_polar", "solvation_nonpolar"))
    return out


def _nonbonded_copy(system, keep: str):
    """A copy of ``system`` whose nonbonded forces keep only charges or only LJ."""
    import openmm

    copy = openmm.XmlSerializer.clone(system)
    for force in copy.getForces():
        if isinstance(force, openmm.NonbondedForce):
            for i in range(force.getNumParticles()):
                q, sig, eps = force.getParticleParameters(i)
                force.setParticleParameters(i, q if keep == "charge" else 0.0, sig,
                                            eps if keep == "lj" else 0.0)
            for k in range(force.getNumExceptions()):
                i, j, qq, sig, eps = force.getExceptionParameters(k)
                force.setExceptionParameters(k, i, j, qq if keep == "charge" else 0.0, sig,
                                             eps if keep == "lj" else 0.0)
        elif isinstance(force, openmm.CustomNonbondedForce) and keep == "charge":
            force.setForceGroup(31)  # outside the evaluated groups: LJ only lives there
    return copy
