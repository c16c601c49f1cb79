"""Any parameterised ``openmm.System`` turned into the engine's arrays (:class:`MolecularSystem`).

Every route that ends in an OpenMM ``System`` (the built-in force fields on a PDB/mmCIF, Amber
and GROMACS topologies, a serialised System) comes through :func:`system_from_openmm`.  Each
force is mapped by its class and, for the custom forces, its energy expression
(:mod:`energy.io.openmm_forms`); units go from kJ/mol and nm to kcal/mol and A, harmonic
constants from ``k/2 (x - x0)^2`` to ``K (x - x0)^2``; docs/physics.md ("OpenMM systems").

* ``HarmonicBondForce``: bonds; a row joining the outer atoms of an angle (the Urey-Bradley terms
  CHARMM systems carry) is Urey-Bradley, except in a three-atom molecule (water's H-H bond).
* ``HarmonicAngleForce``; ``PeriodicTorsionForce`` (proper when the four atoms are a bonded
  chain, else a periodic improper); ``CustomTorsionForce`` of a harmonic improper form; CMAP.
* ``NonbondedForce`` with its exceptions and their own 1-4 scaling; a ``CustomNonbondedForce``
  with tabulated A/B coefficients per type pair (NBFIX) and its ``CustomBondForce`` 1-4 companion,
  whose LJ joins the exception of the same pair.
* Virtual sites (two- and three-particle averages, out-of-plane, local coordinates).
* ``CMMotionRemover`` is ignored; ``CustomExternalForce`` (position restraints) is left out with a
  note; anything else is refused with :class:`UnsupportedForceError` naming the class.
"""
from __future__ import annotations

import re

import numpy as np

from energy.errors import UnsupportedForceError
from energy.io import openmm_forms as forms
from energy.io.openmm_nonbonded import nonbonded_arrays
from energy.model.system import MolecularSystem, ResidueTable, TermTable
from energy.model.virtual_sites import VirtualSites
from energy.units import ANGSTROM_PER_NM, KJ_PER_KCAL

_IGNORED = {"CMMotionRemover"}
_LEFT_OUT = {"CustomExternalForce"}
_IMPLICIT_SOLVENT = {"GBSAOBCForce", "CustomGBForce", "GBVIForce"}
_HANDLED = {"HarmonicBondForce", "HarmonicAngleForce", "PeriodicTorsionForce", "NonbondedForce",
            "CMAPTorsionForce", "CustomTorsionForce", "CustomNonbondedForce", "CustomBondForce"}


def _value(x) -> float:
    return float(x._value if hasattr(x, "_value") else x)


def residue_table(topology) -> ResidueTable:
    """Chain, number, name and insertion code of every residue of an OpenMM topology.

    Parameters
    ----------
    topology : openmm.app.Topology

    Returns
    -------
    ResidueTable
    """
    chains, resids, icodes, names = [], [], [], []
    for res in topology.residues():
        m = re.match(r"\s*(-?\d+)\s*(\S*)", str(res.id))
        chains.append(str(res.chain.id).strip())
        resids.append(int(m.group(1)) if m else res.index + 1)
        icodes.append((m.group(2) if m else "") or getattr(res, "insertionCode", "").strip())
        names.append(res.name)
    return ResidueTable(np.array(chains), np.array(resids), np.array(names), np.array(icodes))


def _refuse(where, name: str, what: str):
    return UnsupportedForceError(where, name, f"the OpenMM system holds a {name}: {what}")


def _check_forces(omm_system, where) -> list:
    notes = []
    for force in omm_system.getForces():
        name = force.__class__.__name__
        if name in _IMPLICIT_SOLVENT:
            raise _refuse(where, name, "implicit solvent is not part of this route yet (it needs a "
                          "generalized-Born term); build the system without implicitSolvent")
        if name in _LEFT_OUT:
            notes.append(f"{name} ({force.getNumParticles()} particles, energy "
                         f"{forms.normalised(force.getEnergyFunction())!r}) left out: restraints "
                         "are not part of the force field's interaction energy")
        elif name not in _HANDLED and name not in _IGNORED:
            raise _refuse(where, name, "the engine has no term for it (it would need its own "
                          "term in energy/terms/registry.py); build the system without it")
    return notes


def _bond_graph(topology, n):
    neighbours = [set() for _ in range(n)]
    for a, b in topology.bonds():
        neighbours[a.index].add(b.index)
        neighbours[b.index].add(a.index)
    return neighbours


def _molecule_sizes(neighbours) -> np.ndarray:
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components
    n = len(neighbours)
    rows = [i for i, nb in enumerate(neighbours) for _ in nb]
    cols = [j for nb in neighbours for j in nb]
    _, label = connected_components(coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(n, n)),
                                    directed=False)
    return np.bincount(label)[label]


def _harmonic_bonds(omm_system, neighbours):
    """Bonds, and Urey-Bradley terms: a row joining the outer atoms of an angle (not bonded, one
    common neighbour) is Urey-Bradley, unless its molecule has three atoms (the H-H bond of a
    flexible 3-site water, which stays a bond)."""
    bonds, ub = [], []
    sizes = None
    for force in omm_system.getForces():
        if force.__class__.__name__ != "HarmonicBondForce":
            continue
        for k in range(force.getNumBonds()):
            i, j, r0, kb = force.getBondParameters(k)
            row = (_value(kb) / 2 / KJ_PER_KCAL / ANGSTROM_PER_NM ** 2, _value(r0) * ANGSTROM_PER_NM)
            middle = neighbours[i] & neighbours[j] if j not in neighbours[i] else set()
            if middle:
                sizes = _molecule_sizes(neighbours) if sizes is None else sizes
            if middle and sizes[i] != 3:
                ub.append(((i, min(middle), j), row))
            else:
                bonds.append(((i, j), row))
    return (TermTable(np.array([a for a, _ in bonds], np.intp).reshape(-1, 2),
                      {"k": [r[0] for _, r in bonds], "r0": [r[1] for _, r in bonds]}),
            TermTable(np.array([a for a, _ in ub], np.intp).reshape(-1, 3),
                      {"k": [r[0] for _, r in ub], "s0": [r[1] for _, r in ub]}))


def _angles(omm_system):
    rows = [f.getAngleParameters(k) for f in omm_system.getForces()
            if f.__class__.__name__ == "HarmonicAngleForce" for k in range(f.getNumAngles())]
    return TermTable(np.array([r[:3] for r in rows], np.intp).reshape(-1, 3),
                     {"k": [_value(r[4]) / 2 / KJ_PER_KCAL for r in rows],
                      "theta0": [_value(r[3]) for r in rows]})


def _torsions(omm_system, neighbours):
    rows = [f.getTorsionParameters(k) for f in omm_system.getForces()
            if f.__class__.__name__ == "PeriodicTorsionForce" for k in range(f.getNumTorsions())]
    proper = np.array([all(r[a + 1] in neighbours[r[a]] for a in range(3)) for r in rows], bool)

    def table(mask):
        sel = [r for r, m in zip(rows, mask) if m]
        return TermTable(np.array([r[:4] for r in sel], np.intp).reshape(-1, 4),
                         {"k": [_value(r[6]) / KJ_PER_KCAL for r in sel],
                          "periodicity": [r[4] for r in sel], "phase": [_value(r[5]) for r in sel]})
    return table(proper), table(~proper)


def _harmonic_impropers(omm_system, where, notes):
    atoms, k, psi0 = [], [], []
    for force in omm_system.getForces():
        if force.__class__.__name__ != "CustomTorsionForce":
            continue
        form = forms.harmonic_improper_form(force)
        if form is None:
            raise _refuse(where, "CustomTorsionForce", f"energy {forms.normalised(force.getEnergyFunction())!r} "
                          "is not a harmonic improper form the engine knows (k*(theta-theta0)^2, "
                          "wrapped or not)")
        factor, wrapped, ik, it = form
        unwrapped_nonzero = 0
        for t in range(force.getNumTorsions()):
            *four, params = force.getTorsionParameters(t)
            atoms.append(four)
            k.append(factor * params[ik] / KJ_PER_KCAL)
            psi0.append(params[it])
            unwrapped_nonzero += (not wrapped) and abs(params[it]) > 1e-9
        if unwrapped_nonzero:
            notes.append(f"{unwrapped_nonzero} harmonic improper(s) with psi0 != 0 in an unwrapped "
                         "form: evaluated with psi - psi0 wrapped to [-pi, pi) (docs/physics.md)")
    return TermTable(np.array(atoms, np.intp).reshape(-1, 4), {"k": k, "psi0": psi0})


def _cmap(omm_system, where):
    maps, rows = [], []
    for force in omm_system.getForces():
        if force.__class__.__name__ != "CMAPTorsionForce":
            continue
        offset = len(maps)
        for m in range(force.getNumMaps()):
            size, energy = force.getMapParameters(m)
            if size % 2:
                raise _refuse(where, "CMAPTorsionForce", f"a CMAP grid of odd size {size} is not supported")
            grid = np.array([_value(e) for e in energy]) / KJ_PER_KCAL
            omm = grid.reshape(size, size).T  # omm[i, j]: phi = i*2pi/size, psi = j*2pi/size
            maps.append(np.roll(np.roll(omm, size // 2, axis=0), size // 2, axis=1))
        for k in range(force.getNumTorsions()):
            r = force.getTorsionParameters(k)
            rows.append((r[0] + offset, *r[1:9]))
    return (TermTable(np.array([r[1:9] for r in rows], np.intp).reshape(-1, 8),
                      {"map": [r[0] for r in rows]}), tuple(maps))


def _virtual_sites(omm_system, n, where):
    rows = []
    for i in range(n):
        if not omm_system.isVirtualSite(i):
            continue
        vs = omm_system.getVirtualSite(i)
        name = vs.__class__.__name__
        count = vs.getNumParticles()
        if count > 3:
            raise _refuse(where, name, f"virtual site {i} has {count} parents; at most 3 are supported")
        parents = [vs.getParticle(k) for k in range(count)]
        parents += [parents[0]] * (3 - count)
        zero = [0.0, 0.0, 0.0]
        if name in ("TwoParticleAverageSite", "ThreeParticleAverageSite"):
            w = [vs.getWeight(k) for k in range(count)] + [0.0] * (3 - count)
            rows.append((i, parents, False, w, 0.0, zero, zero, zero))
        elif name == "OutOfPlaneSite":
            w12, w13, wc = vs.getWeight12(), vs.getWeight13(), vs.getWeightCross()
            rows.append((i, parents, False, [1.0 - w12 - w13, w12, w13], wc / ANGSTROM_PER_NM,
                         zero, zero, zero))
        elif name == "LocalCoordinatesSite":
            pad = [0.0] * (3 - count)
            lp = [_value(c) * ANGSTROM_PER_NM for c in vs.getLocalPosition()]
            rows.append((i, parents, True, list(vs.getOriginWeights()) + pad, 0.0,
                         list(vs.getXWeights()) + pad, list(vs.getYWeights()) + pad, lp))
        else:
            raise _refuse(where, name, f"virtual site {i} is of a kind the engine cannot place")
    if not rows:
        return None
    cols = list(zip(*rows))
    return VirtualSites(np.array(cols[0]), np.array(cols[1]), np.array(cols[2]), np.array(cols[3]),
                        np.array(cols[4]), np.array(cols[5]), np.array(cols[6]), np.array(cols[7]))


def system_from_openmm(omm_system, topology, types=None, force_field="", source_files=(),
                       notes=()) -> MolecularSystem:
    """Convert an ``openmm.System`` + ``Topology`` into a :class:`MolecularSystem`.

    Parameters
    ----------
    omm_system : openmm.System
        Forces in kJ/mol and nm (see the module docstring for the classes that are mapped).
    topology : openmm.app.Topology
        The same particles in the same order (bonds tell bonds from Urey-Bradley pairs and
        proper from improper torsions).
    types : sequence of str or None
        Atom types (None: ``"?"`` for every atom).
    force_field : str
        Label of the force field (also the path named in errors).
    source_files : tuple of str
        Files the system was built from.
    notes : tuple of str
        Notes of the caller, kept with the loader's own.

    Returns
    -------
    MolecularSystem
        Parameters in kcal/mol and A; equilibrium angles and torsion phases keep OpenMM's radians.

    Raises
    ------
    UnsupportedForceError
        A force (or custom energy form) the engine has no term for, implicit solvent included.
    """
    where = force_field or "OpenMM system"
    atoms = list(topology.atoms())
    n = len(atoms)
    if omm_system.getNumParticles() != n:
        raise UnsupportedForceError(where, "System", f"the OpenMM system has {omm_system.getNumParticles()} "
                                    f"particles but the topology {n} atoms")
    notes = [*notes, *_check_forces(omm_system, where)]
    neighbours = _bond_graph(topology, n)
    nb = nonbonded_arrays(omm_system, n, where)
    bonds, urey_bradley = _harmonic_bonds(omm_system, neighbours)
    dihedrals, periodic_impropers = _torsions(omm_system, neighbours)
    cmap, maps = _cmap(omm_system, where)
    sites = _virtual_sites(omm_system, n, where)
    impropers = _harmonic_impropers(omm_system, where, notes)
    resindex = np.array([a.residue.index for a in atoms])
    if sites is not None:  # a site's interactions count toward its parent's residue
        resindex[sites.site] = resindex[sites.parents[:, 0]]
    return MolecularSystem(
        names=np.array([a.name for a in atoms]),
        types=np.array(types if types is not None else ["?"] * n),
        elements=np.array([a.element.symbol if a.element is not None else "X" for a in atoms]),
        charges=nb["charges"], resindex=resindex, residues=residue_table(topology),
        lj_type=nb["lj_type"], lj_rmin=nb["lj_rmin"], lj_eps=nb["lj_eps"],
        exception_pairs=nb["exception_pairs"], exception_qq=nb["exception_qq"],
        exception_rmin=nb["exception_rmin"], exception_eps=nb["exception_eps"],
        bonds=bonds, urey_bradley=urey_bradley, angles=_angles(omm_system),
        dihedrals=dihedrals, impropers=impropers,
        periodic_impropers=periodic_impropers, cmap=cmap, cmap_maps=maps,
        force_field=force_field, source_files=tuple(source_files), virtual_sites=sites,
        notes=tuple(notes))
