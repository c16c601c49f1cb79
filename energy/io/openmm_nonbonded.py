"""Charges, Lennard-Jones tables and exception pairs of an ``openmm.System``.

The ``NonbondedForce`` gives the charges, the exception pairs (Coulomb with its own scaling, LJ
with its own sigma and epsilon) and, with Lorentz-Berthelot rules, the LJ of every pair.  When a
``CustomNonbondedForce`` of a Lennard-Jones form carries the LJ instead (NBFIX tables from
``ForceField``, the Amber or GROMACS readers), its A/B coefficients per type pair become the
engine's table (``Rmin = (2A/B)^(1/6)``, ``eps = B^2/(4A)``) and the 1-4 LJ of its
``CustomBondForce`` companion joins the exception of the same pair.  docs/physics.md.
"""
from __future__ import annotations

import numpy as np

from energy.errors import UnsupportedForceError
from energy.io import openmm_forms as forms
from energy.units import ANGSTROM_PER_NM, KJ_PER_KCAL

RMIN_PER_SIGMA = 2.0 ** (1.0 / 6.0)


def _value(x) -> float:
    return float(x._value if hasattr(x, "_value") else x)


def _of_class(omm_system, name):
    return [f for f in omm_system.getForces() if f.__class__.__name__ == name]


def _rmin_eps_from_ab(a, b, where, what):
    """Rmin (A) and eps (kcal/mol) of E = A/r^12 - B/r^6 (A, B in kJ/mol nm^12, nm^6)."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    bad = ((a > 0) & (b <= 0)) | (a < 0) | ((a == 0) & (b != 0))
    if bad.any():
        raise UnsupportedForceError(where, what, f"{what}: a pair with A={a[bad].flat[0]:g}, "
                                    f"B={b[bad].flat[0]:g} is not a 12-6 Lennard-Jones well")
    live = a > 0
    rmin = np.where(live, (2 * np.where(live, a, 1) / np.where(live, b, 1)) ** (1 / 6), 0.0) * ANGSTROM_PER_NM
    eps = np.where(live, b * b / (4 * np.where(live, a, 1)), 0.0) / KJ_PER_KCAL
    return rmin, eps


def _lorentz_berthelot(sigma_nm, eps_kj):
    rmin_half = RMIN_PER_SIGMA * sigma_nm * ANGSTROM_PER_NM / 2.0
    eps_kcal = eps_kj / KJ_PER_KCAL
    keys = np.round(np.stack([rmin_half, eps_kcal], axis=1), 12)
    uniq, lj_type = np.unique(keys, axis=0, return_inverse=True)
    return (lj_type.reshape(-1), uniq[:, 0][:, None] + uniq[:, 0][None, :],
            np.sqrt(uniq[:, 1][:, None] * uniq[:, 1][None, :]))


def _custom_tables(force, n, where):
    name = "CustomNonbondedForce"
    form = forms.lennard_jones_table_form(force)
    if form is None:
        raise UnsupportedForceError(where, name, f"the OpenMM system holds a {name} with energy "
                                    f"{forms.normalised(force.getEnergyFunction())!r}: only the tabulated "
                                    "or per-particle Lennard-Jones forms are supported")
    params = np.array([force.getParticleParameters(i) for i in range(n)], float).reshape(n, -1)
    if form[0] == "table":
        _, squared, it = form
        tables = {}
        for k in range(force.getNumTabulatedFunctions()):
            nx, ny, values = force.getTabulatedFunction(k).getFunctionParameters()
            grid = np.array(values, float).reshape(ny, nx).T  # values[x + nx*y], x = type1
            tables[force.getTabulatedFunctionName(k)] = grid
        a = tables["acoef"] ** 2 if squared else tables["acoef"]
        b = tables["bcoef"]
        if a.shape[0] != a.shape[1] or not (np.allclose(a, a.T) and np.allclose(b, b.T)):
            raise UnsupportedForceError(where, name, f"{name}: the A/B tables are not square and symmetric")
        lj_type = params[:, it].round().astype(np.intp)
        if lj_type.min() < 0 or lj_type.max() >= len(a):
            raise UnsupportedForceError(where, name, f"{name}: a particle type outside the A/B tables")
    else:
        _, ia, ic = form
        keys = np.round(params[:, [ia, ic]], 15)
        uniq, lj_type = np.unique(keys, axis=0, return_inverse=True)
        lj_type = lj_type.reshape(-1)
        a = uniq[:, 0][:, None] * uniq[:, 0][None, :]
        b = uniq[:, 1][:, None] * uniq[:, 1][None, :]
    rmin, eps = _rmin_eps_from_ab(a, b, where, name)
    return lj_type, rmin, eps


def nonbonded_arrays(omm_system, n: int, where: str) -> dict:
    """The engine's per-atom and exception arrays from an OpenMM system's nonbonded forces.

    Parameters
    ----------
    omm_system : openmm.System
        At most one ``NonbondedForce`` and at most one Lennard-Jones ``CustomNonbondedForce``.
    n : int
        Number of particles.
    where : str
        Path or label named in errors.

    Returns
    -------
    dict
        ``charges`` (n,) e, ``lj_type`` (n,) intp, ``lj_rmin`` and ``lj_eps`` (t, t) A and
        kcal/mol, ``exception_pairs`` (m, 2) intp (i < j), ``exception_qq`` (m,) e^2,
        ``exception_rmin`` (m,) A and ``exception_eps`` (m,) kcal/mol.

    Raises
    ------
    UnsupportedForceError
        Several nonbonded forces, parameter offsets, a custom form not recognised, exclusions that
        differ from the exceptions, or a 1-4 companion pair that is no exception.
    """
    nbs = _of_class(omm_system, "NonbondedForce")
    customs = _of_class(omm_system, "CustomNonbondedForce")
    companions = _of_class(omm_system, "CustomBondForce")
    if len(nbs) > 1 or len(customs) > 1:
        raise UnsupportedForceError(where, "NonbondedForce", "the OpenMM system holds several "
                                    "NonbondedForce or CustomNonbondedForce objects; one of each is supported")
    q, sigma, eps = np.zeros(n), np.ones(n), np.zeros(n)
    pairs, qq, ex_rmin, ex_eps = [], [], [], []
    if nbs:
        nb = nbs[0]
        if nb.getNumParticleParameterOffsets() or nb.getNumExceptionParameterOffsets():
            raise UnsupportedForceError(where, "NonbondedForce", "NonbondedForce parameter offsets "
                                        "(alchemical perturbations) are not supported")
        for i in range(n):
            qi, si, ei = nb.getParticleParameters(i)
            q[i], sigma[i], eps[i] = _value(qi), _value(si), _value(ei)
        for k in range(nb.getNumExceptions()):
            i, j, c, s, e = nb.getExceptionParameters(k)
            pairs.append((min(i, j), max(i, j)))
            qq.append(_value(c))
            ex_rmin.append(RMIN_PER_SIGMA * _value(s) * ANGSTROM_PER_NM)
            ex_eps.append(_value(e) / KJ_PER_KCAL)
    index = {p: k for k, p in enumerate(pairs)}
    if len(index) != len(pairs):
        raise UnsupportedForceError(where, "NonbondedForce", "an exception pair is listed twice")
    if customs:
        custom = customs[0]
        if np.any(eps != 0):
            raise UnsupportedForceError(where, "CustomNonbondedForce", "both the NonbondedForce and a "
                                        "CustomNonbondedForce carry Lennard-Jones terms")
        lj_type, lj_rmin, lj_eps = _custom_tables(custom, n, where)
        excluded = {tuple(sorted(custom.getExclusionParticles(k))) for k in range(custom.getNumExclusions())}
        if excluded != set(index):
            raise UnsupportedForceError(where, "CustomNonbondedForce", f"the CustomNonbondedForce excludes "
                                        f"{len(excluded)} pairs but the NonbondedForce has {len(index)} "
                                        "exceptions; the engine needs them to be the same pairs")
    else:
        lj_type, lj_rmin, lj_eps = _lorentz_berthelot(sigma, eps)
    ex_rmin, ex_eps = np.array(ex_rmin, float), np.array(ex_eps, float)
    for force in companions:
        coefficients = forms.pair_lennard_jones_form(force)
        if coefficients is None:
            raise UnsupportedForceError(where, "CustomBondForce", "the OpenMM system holds a CustomBondForce "
                                        f"with energy {forms.normalised(force.getEnergyFunction())!r}: only "
                                        "the Lennard-Jones 1-4 companion of a CustomNonbondedForce is supported")
        for b in range(force.getNumBonds()):
            i, j, params = force.getBondParameters(b)
            k = index.get((min(i, j), max(i, j)))
            if k is None:
                raise UnsupportedForceError(where, "CustomBondForce", f"1-4 pair {i}-{j} of the "
                                            "CustomBondForce is not an exception of the NonbondedForce")
            if ex_eps[k] != 0:
                raise UnsupportedForceError(where, "CustomBondForce", f"pair {i}-{j} has Lennard-Jones "
                                            "terms in both the NonbondedForce exceptions and a CustomBondForce")
            a, bb = coefficients(list(params))
            r, e = _rmin_eps_from_ab([a], [bb], where, "CustomBondForce")
            ex_rmin[k], ex_eps[k] = r[0], e[0]
    return {"charges": q, "lj_type": lj_type, "lj_rmin": lj_rmin, "lj_eps": lj_eps,
            "exception_pairs": np.array(pairs, np.intp).reshape(-1, 2), "exception_qq": np.array(qq, float),
            "exception_rmin": ex_rmin, "exception_eps": ex_eps}
