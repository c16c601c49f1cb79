"""The energy expressions of OpenMM custom forces that the engine recognises.

An expression is compared after :func:`normalised` (spaces and a trailing ``;`` removed); the
numbers ``pi`` is written as in the expression are accepted in any precision.  Every form here
is one OpenMM's own readers write (``ForceField``'s Lennard-Jones and CHARMM generators, the Amber
and GROMACS readers, ``CharmmPsfFile``); a form not listed is refused by the caller.
"""
from __future__ import annotations

import re

_NUMBER = r"[0-9]*\.?[0-9]+(?:[eE][-+]?[0-9]+)?"
_PI = rf"(?:pi|{_NUMBER})"

#: Harmonic improper forms of a CustomTorsionForce: regex -> (factor on k, wrapped).
_IMPROPER_FORMS = (
    (re.compile(r"k\*\(theta-theta0\)\^2"), 1.0, False),  # ForceField CHARMM36 XML
    (re.compile(rf"k\*min\(dtheta,2\*{_PI}-dtheta\)\^2;dtheta=abs\(theta-theta0\)(?:;pi={_NUMBER})?"),
     1.0, True),  # Amber reader (CHARMM impropers of chamber files), CharmmPsfFile
    (re.compile(r"k\*dtheta_torus\^2;dtheta_torus=dtheta-floor\(dtheta/\(2\*pi\)\+0\.5\)\*\(2\*pi\);"
                rf"dtheta=theta-theta0(?:;pi={_NUMBER})?"), 1.0, True),
    (re.compile(rf"0\.5\*k\*\(thetap-theta0\)\^2;thetap=step\(-\(theta-theta0\+pi\)\)\*2\*pi\+theta\+"
                rf"step\(theta-theta0-pi\)\*\(-2\*pi\);pi={_NUMBER}"), 0.5, True),  # GROMACS type 2
)

#: Tabulated Lennard-Jones forms of a CustomNonbondedForce: regex -> whether A is squared.
_TABLE_LJ_FORMS = (
    (re.compile(r"acoef\(type1,type2\)/r\^12-bcoef\(type1,type2\)/r\^6"), False),  # ForceField
    (re.compile(r"\(a/r6\)\^2-b/r6;r6=r\^6;a=acoef\(type1,type2\);b=bcoef\(type1,type2\)"), True),
)
#: Per-particle geometric Lennard-Jones of the GROMACS reader: E = A1 A2 / r^12 - C1 C2 / r^6.
_PRODUCT_LJ = re.compile(r"A1\*A2/r\^12-C1\*C2/r\^6")
#: 1-4 companions (CustomBondForce): ForceField's "c*epsilon*((sigma/r)^12-(sigma/r)^6)" and
#: the GROMACS reader's "-C/r^6+A/r^12".
_PAIR_SIGMA = re.compile(rf"({_NUMBER})\*epsilon\*\(\(sigma/r\)\^12-\(sigma/r\)\^6\)")
_PAIR_AC = re.compile(r"-C/r\^6\+A/r\^12")


def normalised(expression: str) -> str:
    """An OpenMM energy expression without spaces and without a trailing ``;``.

    Parameters
    ----------
    expression : str

    Returns
    -------
    str
    """
    return "".join(expression.split()).rstrip(";")


def _parameter_index(force, count_method, name_method, name):
    names = [getattr(force, name_method)(k) for k in range(getattr(force, count_method)())]
    return names.index(name) if name in names else None


def harmonic_improper_form(force):
    """The harmonic improper form of a ``CustomTorsionForce``, if it has one.

    Parameters
    ----------
    force : openmm.CustomTorsionForce

    Returns
    -------
    tuple or None
        ``(factor on k, wrapped, index of k, index of theta0)`` among the per-torsion parameters,
        or None when the expression is not a known harmonic improper form.
    """
    text = normalised(force.getEnergyFunction())
    ik = _parameter_index(force, "getNumPerTorsionParameters", "getPerTorsionParameterName", "k")
    it = _parameter_index(force, "getNumPerTorsionParameters", "getPerTorsionParameterName", "theta0")
    if ik is None or it is None or force.getNumGlobalParameters():
        return None
    for pattern, factor, wrapped in _IMPROPER_FORMS:
        if pattern.fullmatch(text):
            return factor, wrapped, ik, it
    return None


def lennard_jones_table_form(force):
    """How a ``CustomNonbondedForce`` gives the 12-6 coefficients, if it is Lennard-Jones.

    Parameters
    ----------
    force : openmm.CustomNonbondedForce

    Returns
    -------
    tuple or None
        ``("table", squared_a, index of type)`` for tabulated ``acoef``/``bcoef`` per type pair,
        ``("product", index of A, index of C)`` for the per-particle form, or None.
    """
    text = normalised(force.getEnergyFunction())
    if force.getNumGlobalParameters() or force.getNumInteractionGroups():
        return None
    for pattern, squared in _TABLE_LJ_FORMS:
        if pattern.fullmatch(text):
            it = _parameter_index(force, "getNumPerParticleParameters", "getPerParticleParameterName", "type")
            names = {force.getTabulatedFunctionName(k) for k in range(force.getNumTabulatedFunctions())}
            if it is None or names != {"acoef", "bcoef"}:
                return None
            return "table", squared, it
    if _PRODUCT_LJ.fullmatch(text):
        ia = _parameter_index(force, "getNumPerParticleParameters", "getPerParticleParameterName", "A")
        ic = _parameter_index(force, "getNumPerParticleParameters", "getPerParticleParameterName", "C")
        if ia is not None and ic is not None:
            return "product", ia, ic
    return None


def pair_lennard_jones_form(force):
    """How a ``CustomBondForce`` 1-4 companion gives its pair's 12-6 coefficients, if it does.

    Parameters
    ----------
    force : openmm.CustomBondForce

    Returns
    -------
    callable or None
        ``coefficients(params) -> (A, B)`` with ``E = A/r^12 - B/r^6`` (kJ/mol, nm), or None.
    """
    text = normalised(force.getEnergyFunction())
    if force.getNumGlobalParameters():
        return None
    index = lambda name: _parameter_index(force, "getNumPerBondParameters",  # noqa: E731
                                          "getPerBondParameterName", name)
    m = _PAIR_SIGMA.fullmatch(text)
    if m and index("sigma") is not None and index("epsilon") is not None:
        c, i_s, i_e = float(m.group(1)), index("sigma"), index("epsilon")
        return lambda p: (c * p[i_e] * p[i_s] ** 12, c * p[i_e] * p[i_s] ** 6)
    if _PAIR_AC.fullmatch(text) and index("A") is not None and index("C") is not None:
        i_a, i_c = index("A"), index("C")
        return lambda p: (p[i_a], p[i_c])
    return None
