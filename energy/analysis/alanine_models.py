"""Alanine models of interface residues: which atoms a truncation keeps, and the rebuilt ones.

Two ways to turn a residue into alanine (conventions in docs/physics.md, "Alanine scan"):

* **ALA template** (built-in route): the side-chain atoms beyond CB are deleted, the residue is
  renamed ALA, CB's hydrogens (and the backbone H of a former Pro) are rebuilt by ideal geometry
  (OpenMM's ``Modeller.addHydrogens`` places them at random and relaxes all added hydrogens
  together, so a residue's hydrogens would depend on the others truncated with it), and the
  force field that parameterised the wild type parameterises the mutant.  Every scanned
  residue is truncated in one model and parameterised by one ``createSystem``: Amber-style
  charges and LJ types belong to the residue's own template, so each mutant's atoms are those
  of its single mutant (the scan's tests check this against a full recomputation of each
  single mutant written out as a PDB).
* **side chain switched off** (PSF route, disulfide-bonded Cys and an N-terminal Pro): the atoms beyond CB
  are dropped from the interaction; CB and its hydrogens keep their wild-type parameters.

Rebuilt hydrogens are placed at PDB precision (0.001 A), so a mutant written out as a PDB and read
back has exactly the scanned coordinates.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from energy.errors import EnergyError
from energy.model.system import MolecularSystem

#: Backbone atom names (PDB/Amber and CHARMM spellings), terminal groups included.
BACKBONE_NAMES = frozenset({"N", "H", "H1", "H2", "H3", "HN", "HT1", "HT2", "HT3", "CA", "HA",
                            "C", "O", "OXT", "OT1", "OT2"})
#: Atoms an alanine keeps of the wild type (besides CB's hydrogens, which are rebuilt).
ALANINE_KEEPS = BACKBONE_NAMES | {"CB"}

#: Methods, as labelled in every output.
ALA_TEMPLATE = "ALA template"
SWITCHED_OFF = "side chain switched off"

#: Decimal places of rebuilt positions (A): the PDB format's precision.
PDB_DECIMALS = 3


@dataclass(frozen=True)
class ResidueModel:
    """The atoms of one residue after truncation, struct of arrays (k atoms).

    ``origin`` (k,) intp: the wild-type atom each comes from, -1 for a rebuilt atom;
    ``names`` (k,) str; ``positions`` (k, 3) A; ``charges`` (k,) e; ``rmin_half`` (k,) A and
    ``eps`` (k,) kcal/mol (Lorentz-Berthelot per-atom LJ); ``method``: :data:`ALA_TEMPLATE` or
    :data:`SWITCHED_OFF`.
    """

    residue: int
    origin: np.ndarray
    names: np.ndarray
    positions: np.ndarray
    charges: np.ndarray
    rmin_half: np.ndarray
    eps: np.ndarray
    method: str

    def __post_init__(self):
        k = len(self.origin)
        for name in ("names", "charges", "rmin_half", "eps"):
            if len(getattr(self, name)) != k:
                raise ValueError(f"ResidueModel.{name} has {len(getattr(self, name))} rows, expected {k}")
        if np.shape(self.positions) != (k, 3):
            raise ValueError(f"ResidueModel.positions must be ({k}, 3)")


def per_atom_lj(system: MolecularSystem) -> tuple[np.ndarray, np.ndarray]:
    """Per-atom half Rmin and well depth of a system whose LJ pairs follow Lorentz-Berthelot.

    Parameters
    ----------
    system : MolecularSystem
        The system (``lj_type``, ``lj_rmin``, ``lj_eps``).

    Returns
    -------
    rmin_half : (n_atoms,) float64
        Half of each atom's own Rmin, A.
    eps : (n_atoms,) float64
        Each atom's own well depth, kcal/mol.

    Raises
    ------
    EnergyError
        If some type pair departs from the combination rule (pair-specific LJ, e.g. CHARMM NBFIX):
        then a rebuilt atom's pair parameters cannot be derived from its own.
    """
    rh = np.diag(system.lj_rmin) / 2.0
    ee = np.diag(system.lj_eps)
    if not (np.allclose(system.lj_rmin, rh[:, None] + rh[None, :], rtol=0, atol=1e-9)
            and np.allclose(system.lj_eps, np.sqrt(ee[:, None] * ee[None, :]), rtol=1e-12, atol=1e-12)):
        raise EnergyError("the LJ parameters have pair-specific values (NBFIX-style): the ALA "
                          "template route needs the Lorentz-Berthelot rule; use the switched-off method")
    return rh[system.lj_type], ee[system.lj_type]


def is_beyond_cb(names, elements, bonded_to_cb) -> np.ndarray:
    """Which atoms of a residue lie beyond CB (deleted by a truncation to alanine).

    Parameters
    ----------
    names : (k,) str
        Atom names of the residue.
    elements : (k,) str
        Element symbols.
    bonded_to_cb : (k,) bool
        Whether each atom is bonded to the residue's CB.

    Returns
    -------
    (k,) bool
        True for side-chain atoms other than CB and the hydrogens on CB.
    """
    names = np.asarray(names)
    keep = np.isin(names, list(ALANINE_KEEPS)) | ((np.asarray(elements) == "H") & np.asarray(bonded_to_cb))
    return ~keep


def switched_off_model(system: MolecularSystem, frame_positions, residue: int, bonds) -> ResidueModel:
    """The residue with its atoms beyond CB removed, wild-type parameters kept.

    Parameters
    ----------
    system : MolecularSystem
        The wild type.
    frame_positions : (n_atoms, 3) float64
        Wild-type positions, A.
    residue : int
        Residue index (0-based).
    bonds : (n_bonds, 2) intp
        The system's bonded atom pairs (to find CB's hydrogens).

    Returns
    -------
    ResidueModel
        Method :data:`SWITCHED_OFF`; every atom has its wild-type origin.
    """
    atoms = np.flatnonzero(system.resindex == residue)
    names = system.names[atoms]
    cb = atoms[names == "CB"]
    on_cb = np.zeros(len(atoms), bool)
    if len(cb):
        partners = np.concatenate([bonds[bonds[:, 0] == cb[0], 1], bonds[bonds[:, 1] == cb[0], 0]])
        on_cb = np.isin(atoms, partners)
    kept = atoms[~is_beyond_cb(names, system.elements[atoms], on_cb)]
    rh, ee = per_atom_lj_or_types(system)
    return ResidueModel(residue, kept, system.names[kept], np.asarray(frame_positions)[kept],
                        system.charges[kept], rh[kept], ee[kept], SWITCHED_OFF)


def per_atom_lj_or_types(system: MolecularSystem):
    """Per-atom LJ when the rule holds, else NaN placeholders (switched-off rows use the types).

    Parameters
    ----------
    system : MolecularSystem
        The system.

    Returns
    -------
    rmin_half, eps : (n_atoms,) float64
        As :func:`per_atom_lj`, or NaN arrays when the LJ table is pair-specific.
    """
    try:
        return per_atom_lj(system)
    except EnergyError:
        nan = np.full(system.n_atoms, np.nan)
        return nan, nan


def _place(a, b, c, bond, angle_deg, torsion_deg):
    """Position of d with |cd| = bond, angle bcd and dihedral abcd (degrees): the natural
    extension reference frame construction (common practice)."""
    bc = (c - b) / np.linalg.norm(c - b)
    n = np.cross(b - a, bc)
    n /= np.linalg.norm(n)
    m = np.cross(n, bc)
    th, ph = np.radians(angle_deg), np.radians(torsion_deg)
    d2 = np.array([-bond * np.cos(th), bond * np.sin(th) * np.cos(ph), bond * np.sin(th) * np.sin(ph)])
    return c + d2[0] * bc + d2[1] * m + d2[2] * n


#: Rebuilt hydrogens: C-H and N-H lengths (A) and the tetrahedral angle (degrees), common practice
#: (ideal sp3 geometry; Amber's HC-CT equilibrium length is 1.09 A, H-N 1.01 A).
CH_ANGSTROM, NH_ANGSTROM, TETRAHEDRAL_DEG = 1.09, 1.01, 109.47


def _rebuilt_hydrogens(residue, previous_c, pos_of):
    """(name, parent name, position) of the hydrogens an alanine needs and the truncation lacks."""
    n, ca, cb = pos_of("N"), pos_of("CA"), pos_of("CB")
    out = [(f"HB{k + 1}", "CB", _place(n, ca, cb, CH_ANGSTROM, TETRAHEDRAL_DEG, 60.0 + 120.0 * k))
           for k in range(3)]
    names = {a.name for a in residue.atoms()}
    if not names & {"H", "H1", "H2", "H3"} and previous_c is not None:  # a former Pro
        u = (n - previous_c) / np.linalg.norm(n - previous_c) + (n - ca) / np.linalg.norm(n - ca)
        out.append(("H", "N", n + NH_ANGSTROM * u / np.linalg.norm(u)))
    return out


def truncated_topology(topology, positions_angstrom, residues):
    """Every residue in ``residues`` truncated to alanine, with CB's hydrogens rebuilt.

    The hydrogens are placed by ideal geometry (staggered on CB, N-CA-CB-HB = 60, 180, 300
    degrees; a former Pro's backbone H on the bisector of C-N-CA), so a residue's alanine does not
    depend on which other residues are truncated with it.

    Parameters
    ----------
    topology : openmm.app.Topology
        The wild type's (prepared) topology.
    positions_angstrom : (n_atoms, 3) float64
        Wild-type positions, A.
    residues : iterable of int
        Residue indices (0-based) to truncate (Gly, Ala, disulfide Cys and an N-terminal Pro are
        the caller's to leave out).

    Returns
    -------
    topology : openmm.app.Topology
        The mutant topology (residue and atom order kept; rebuilt atoms end their residue).
    positions : (n_mutant_atoms, 3) float64
        A; kept atoms exactly at their wild-type positions, rebuilt hydrogens at PDB precision.
    origin : (n_mutant_atoms,) intp
        Wild-type atom of each mutant atom, -1 for a rebuilt one.
    """
    from openmm import app
    from openmm.app import element
    targets = set(int(r) for r in residues)
    x = np.asarray(positions_angstrom, dtype=np.float64)
    new = app.Topology()
    new.setPeriodicBoxVectors(topology.getPeriodicBoxVectors())
    mapped, origin, pos = {}, [], []
    previous_c = None
    for chain in topology.chains():
        new_chain = new.addChain(chain.id)
        previous_c = None
        for res in chain.residues():
            mutate = res.index in targets
            new_res = new.addResidue("ALA" if mutate else res.name, new_chain, res.id, res.insertionCode)
            by_name = {}
            for atom in res.atoms():
                by_name[atom.name] = atom
                if mutate and atom.name not in ALANINE_KEEPS:
                    continue
                mapped[atom] = new.addAtom(atom.name, atom.element, new_res, atom.id)
                origin.append(atom.index)
                pos.append(x[atom.index])
            if mutate:
                if not {"N", "CA", "CB"} <= set(by_name):
                    raise EnergyError(f"{chain.id}:{res.name}{res.id} lacks N, CA or CB: cannot truncate it")
                for name, parent, where in _rebuilt_hydrogens(res, previous_c, lambda nm: x[by_name[nm].index]):
                    h = new.addAtom(name, element.hydrogen, new_res)
                    new.addBond(mapped[by_name[parent]], h)
                    origin.append(-1)
                    pos.append(np.round(where, PDB_DECIMALS))
            previous_c = x[by_name["C"].index] if "C" in by_name else None
    for bond in topology.bonds():
        if bond[0] in mapped and bond[1] in mapped:
            new.addBond(mapped[bond[0]], mapped[bond[1]], bond.type, bond.order)
    return new, np.array(pos, np.float64).reshape(-1, 3), np.array(origin, np.intp)


@dataclass(frozen=True)
class Truncation:
    """The truncated model of :func:`truncated_topology` parameterised by one ``createSystem``.

    ``topology`` (openmm.app.Topology), ``positions`` (n, 3) A, ``origin`` (n,) intp (-1: rebuilt),
    ``openmm_system`` (openmm.System, NoCutoff, no constraints).
    """

    topology: object
    positions: np.ndarray
    origin: np.ndarray
    openmm_system: object

    @cached_property
    def system(self) -> MolecularSystem:
        """The truncated model as a :class:`MolecularSystem` (converted once, when asked for).

        Returns
        -------
        MolecularSystem
            :func:`energy.io.openmm_system.system_from_openmm` of ``openmm_system`` and ``topology``
            (kcal/mol, A).
        """
        from energy.io.openmm_system import system_from_openmm
        return system_from_openmm(self.openmm_system, self.topology)


def parameterised_truncation(topology, positions_angstrom, residues, force_field) -> Truncation:
    """Every residue in ``residues`` truncated to alanine and the model parameterised once.

    Parameters
    ----------
    topology : openmm.app.Topology
        The wild type's (prepared) topology.
    positions_angstrom : (n_atoms, 3) float64
        Wild-type positions, A.
    residues : sequence of int
        Residue indices (0-based) to truncate.
    force_field : openmm.app.ForceField
        The force field of the wild type.

    Returns
    -------
    Truncation
        The truncated topology, positions (A), origins and its ``openmm.System``.

    Raises
    ------
    EnergyError
        If the force field cannot parameterise the truncated model.
    """
    from openmm import app
    top, pos, origin = truncated_topology(topology, positions_angstrom, residues)
    try:
        omm = force_field.createSystem(top, nonbondedMethod=app.NoCutoff, constraints=None,
                                       rigidWater=False, removeCMMotion=False)
    except ValueError as exc:
        raise EnergyError(f"the force field cannot parameterise the alanine mutants: "
                          f"{' '.join(str(exc).split())[:200]}") from None
    return Truncation(top, pos, origin, omm)


def template_models(topology, positions_angstrom, residues, force_field, truncation: Truncation | None = None) -> dict:
    """Alanine models of ``residues`` parameterised by ``force_field`` (one ``createSystem``).

    The NonbondedForce parameters of the truncated residues are read (converted as
    :func:`energy.io.builtin.system_from_openmm` converts them: kJ -> kcal, nm -> A,
    Rmin = 2^(1/6) sigma).  A force field whose LJ lives in a CustomNonbondedForce (CHARMM36:
    the NonbondedForce carries only the charges) gets the LJ of the converted truncated model
    (:attr:`Truncation.system`, :func:`per_atom_lj`).

    Parameters
    ----------
    topology : openmm.app.Topology
        The wild type's (prepared) topology.
    positions_angstrom : (n_atoms, 3) float64
        Wild-type positions, A.
    residues : sequence of int
        Residue indices (0-based) to truncate.
    force_field : openmm.app.ForceField
        The force field of the wild type.
    truncation : Truncation or None, optional
        The :func:`parameterised_truncation` of the same residues, when the caller has it.

    Returns
    -------
    dict
        Residue index -> :class:`ResidueModel` (method :data:`ALA_TEMPLATE`).

    Raises
    ------
    EnergyError
        If the force field cannot parameterise the truncated model.
    """
    from openmm import NonbondedForce

    from energy.io.openmm_nonbonded import RMIN_PER_SIGMA
    from energy.units import ANGSTROM_PER_NM, KJ_PER_KCAL
    truncation = truncation or parameterised_truncation(topology, positions_angstrom, residues, force_field)
    top, pos, origin, omm = truncation.topology, truncation.positions, truncation.origin, truncation.openmm_system
    nb = next(f for f in omm.getForces() if isinstance(f, NonbondedForce))
    atoms = list(top.atoms())
    by_residue = {}
    for a in atoms:
        by_residue.setdefault(a.residue.index, []).append(a.index)
    from openmm import CustomNonbondedForce
    lj_elsewhere = any(isinstance(f, CustomNonbondedForce) for f in omm.getForces())
    if lj_elsewhere:
        rmin_half, eps = per_atom_lj(truncation.system)
    models = {}
    for r in residues:
        rows = np.array(by_residue[int(r)], np.intp)
        p = np.array([[v._value for v in nb.getParticleParameters(int(i))] for i in rows]).reshape(-1, 3)
        rh, ee = ((rmin_half[rows], eps[rows]) if lj_elsewhere else
                  (RMIN_PER_SIGMA * p[:, 1] * ANGSTROM_PER_NM / 2.0, p[:, 2] / KJ_PER_KCAL))
        models[int(r)] = ResidueModel(
            int(r), origin[rows], np.array([atoms[i].name for i in rows]), pos[rows], p[:, 0], rh, ee,
            ALA_TEMPLATE)
    return models
