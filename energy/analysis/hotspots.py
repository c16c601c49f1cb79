"""Interface hot spots: an in-silico alanine scan of the A-vs-B interaction (``tessera hotspots``).

Every residue of A within ``interface_angstrom`` of B (and the reverse) is truncated to alanine
(:mod:`energy.analysis.alanine_models`) and the change of the A-vs-B nonbonded interaction,
``dE = E_int(mutant) - E_int(wild type)``, is given per term.  The wild type's atom-pair table
(the A-B total, and each scanned residue's rows against the partner) is computed once; a mutant
changes only the rows of its own residue, so

    dE = - E(deleted atoms, partner) + [E'(kept + rebuilt atoms, partner) - E(kept atoms, partner)]

(``removed`` and ``rebuilt`` in the result), with the pair forms, cutoff and minimum image of
:func:`energy.decomposition.atom_pairs.atom_pair_energies`.  Rows are evaluated residue by residue
(k atoms x the partner's atoms), never as one table of every A-B pair.  With implicit solvent the
change of the generalized-Born solvation of binding is added per mutant
(:mod:`energy.analysis.hotspot_solvation`: many-body, recomputed exactly).
Conventions (classes, the 2 kcal/mol flag, what the number is not) are in docs/physics.md, "Alanine scan".
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from scipy.spatial import cKDTree

from energy._kernels.pbc import minimum_image_vectors, periodic_cell
from energy.analysis.alanine_models import ALA_TEMPLATE, SWITCHED_OFF, ResidueModel
from energy.errors import EnergyError, SelectionError
from energy.io.validation import check_frame
from energy.model.cell import nonbonded_cell
from energy.model.settings import EnergySettings
from energy.model.system import Frame, MolecularSystem
from energy.terms import registry
from energy.terms.nonbonded import KernelConstants, pair_energies

#: Experimental hot-spot convention: an alanine mutation costing >= 2 kcal/mol of binding free
#: energy (Bogan & Thorn, J. Mol. Biol. 280, 1998).  A convention for measured ddG, applied here
#: to the MM interaction change only as a marker.
HOT_SPOT_KCAL_MOL = 2.0
#: Default interface distance (A, any atom pair): common practice for contact definitions.
DEFAULT_INTERFACE_ANGSTROM = 5.0
#: Partner residues listed per scanned residue (those that lose the most).
LOST_CONTACTS = 3

#: Side-chain classes by residue name (common practice; protonation variants included).
SIDE_CHAIN_CLASS = {
    **dict.fromkeys(("ASP", "ASH", "GLU", "GLH", "LYS", "LYN", "ARG", "HIP"), "charged"),
    **dict.fromkeys(("SER", "THR", "ASN", "GLN", "HIS", "HID", "HIE", "HSD", "HSE", "HSP",
                     "CYS", "CYX", "CYM"), "polar"),
    **dict.fromkeys(("ALA", "VAL", "LEU", "ILE", "MET", "PRO", "GLY"), "hydrophobic"),
    **dict.fromkeys(("PHE", "TYR", "TRP"), "aromatic"),
}
#: Registry terms without an atom-pair form (generalized Born: they need every atom's Born radius).
MANY_BODY_TERMS = ("solvation_polar", "solvation_nonpolar")
#: Residue names with nothing to truncate.
NOT_SCANNED = {"GLY": "glycine has no side chain", "ALA": "already alanine"}
PROLINE = ("PRO",)
CYSTEINE = ("CYS", "CYX", "CYM")


def pair_term_values(pairs_coulomb: np.ndarray, pairs_lj: np.ndarray) -> dict:
    """Per-pair values of every nonbonded term of the registry.

    Parameters
    ----------
    pairs_coulomb, pairs_lj : (n,) float64
        Coulomb and vdW energy of each atom pair, kcal/mol.

    Returns
    -------
    dict
        Term name -> (n,) float64 kcal/mol, in registry order (the pairwise terms: Coulomb and LJ;
        the many-body generalized-Born terms have no per-pair form and are added apart).

    Raises
    ------
    EnergyError
        If the registry holds a nonbonded term that has no atom-pair form here.
    """
    known = {"coulomb": pairs_coulomb, "lj": pairs_lj}
    # the generalized-Born terms are many-body (Born radii): not pair values; with implicit
    # solvent the scan adds them from energy.analysis.hotspot_solvation
    missing = [t for t in registry.NONBONDED_TERMS if t not in known and t not in MANY_BODY_TERMS]
    if missing:
        raise EnergyError(f"the alanine scan has no atom-pair form for the term(s) {', '.join(missing)}")
    return {t: known[t] for t in registry.NONBONDED_TERMS if t in known}


@dataclass(frozen=True)
class HotspotScan:
    """Result of an alanine scan, struct of arrays over the n scanned residues (ranked by dE).

    ``residue`` (n,) intp; ``side`` (n,) str ``"A"``/``"B"``; ``label``, ``resname``,
    ``side_chain_class``, ``method`` (:data:`ALA_TEMPLATE` or :data:`SWITCHED_OFF`) and ``flag``
    (``""``, ``"proline"``, ``"disulfide"``) (n,) str; ``delta`` term -> (n,) float64 kcal/mol
    (with implicit solvent also ``solvation_polar`` and ``solvation_nonpolar``: the change of the
    binding solvation, energy.analysis.hotspot_solvation); ``removed`` and ``rebuilt`` (n,) kcal/mol,
    the pairwise terms' split (dE = removed + rebuilt + the solvation terms); ``lost_partner`` (n, 3)
    intp (-1 padding) and ``lost_energy`` (n, 3) kcal/mol: partner residues with the largest
    increase; ``wild_type`` term -> kcal/mol; ``skipped``: (residue, reason) pairs.
    """

    residue: np.ndarray
    side: np.ndarray
    label: np.ndarray
    resname: np.ndarray
    side_chain_class: np.ndarray
    method: np.ndarray
    flag: np.ndarray
    delta: dict
    removed: np.ndarray
    rebuilt: np.ndarray
    lost_partner: np.ndarray
    lost_energy: np.ndarray
    wild_type: dict
    skipped: tuple = ()
    select_a: str = ""
    select_b: str = ""
    interface_angstrom: float = DEFAULT_INTERFACE_ANGSTROM
    settings: EnergySettings = field(default_factory=EnergySettings)

    @property
    def total(self) -> np.ndarray:
        """(n,) float64 kcal/mol: dE summed over the terms."""
        out = np.zeros(len(self.residue))
        for v in self.delta.values():
            out = out + v
        return out

    @property
    def is_hot(self) -> np.ndarray:
        """(n,) bool: dE >= :data:`HOT_SPOT_KCAL_MOL` (the ddG convention, used as a marker)."""
        return self.total >= HOT_SPOT_KCAL_MOL

    @property
    def methods(self) -> tuple:
        """The truncation methods used, sorted."""
        return tuple(sorted(set(self.method.tolist())))

    def __len__(self) -> int:
        return len(self.residue)


def interface_residues(system: MolecularSystem, frame: Frame, atoms_a, atoms_b,
                       distance_angstrom: float = DEFAULT_INTERFACE_ANGSTROM) -> tuple:
    """Residues of A with an atom within ``distance_angstrom`` of an atom of B, and the reverse.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Coordinates (A) and cell (the minimum image applies in a periodic cell).
    atoms_a, atoms_b : (n_a,), (n_b,) intp
        The two sides' atoms (disjoint).
    distance_angstrom : float
        Any-atom contact distance, A.

    Returns
    -------
    side_a, side_b : (k,) intp
        Residue indices of each side at the interface, ascending.
    """
    x = frame.positions
    box = nonbonded_cell(frame.box, system.n_atoms, True).box
    if box is not None:
        h = periodic_cell(box, distance_angstrom)
        lengths = np.diag(h)
        if np.allclose(h, np.diag(lengths)):
            wrap = lambda p: np.minimum(p - lengths * np.floor(p / lengths), np.nextafter(lengths, 0))  # noqa: E731
            ta = cKDTree(wrap(x[atoms_a]), boxsize=lengths)
            tb = cKDTree(wrap(x[atoms_b]), boxsize=lengths)
        else:  # triclinic: every pair with the exact minimum image
            d = minimum_image_vectors(x[atoms_b][None, :, :] - x[atoms_a][:, None, :], box)
            near = np.einsum("ijk,ijk->ij", d, d) <= distance_angstrom ** 2
            return (np.unique(system.resindex[atoms_a[near.any(axis=1)]]),
                    np.unique(system.resindex[atoms_b[near.any(axis=0)]]))
    else:
        ta, tb = cKDTree(x[atoms_a]), cKDTree(x[atoms_b])
    coo = ta.sparse_distance_matrix(tb, distance_angstrom, output_type="ndarray")
    return (np.unique(system.resindex[atoms_a[coo["i"]]]),
            np.unique(system.resindex[atoms_b[coo["j"]]]))


def check_sides(system: MolecularSystem, atoms_a, atoms_b) -> None:
    """The two selections must be disjoint and hold whole residues.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    atoms_a, atoms_b : (n_a,), (n_b,) intp
        The two sides' atoms.

    Raises
    ------
    SelectionError
        If an atom is in both, or a selection holds part of a residue.
    """
    if np.intersect1d(atoms_a, atoms_b).size:
        raise SelectionError("the alanine scan needs two disjoint selections; A and B share atoms")
    counts = np.bincount(system.resindex, minlength=system.n_residues)
    for name, atoms in (("A", atoms_a), ("B", atoms_b)):
        res, k = np.unique(system.resindex[atoms], return_counts=True)
        cut = res[k != counts[res]]
        if len(cut):
            raise SelectionError(f"selection {name} holds part of residue {system.residues.label(int(cut[0]))}: "
                                 "the alanine scan mutates whole residues")


def residue_flag(system: MolecularSystem, residue: int, bonds) -> str:
    """``"proline"``, ``"disulfide"`` or ``""`` for a residue to be scanned.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    residue : int
        Residue index (0-based).
    bonds : (n_bonds, 2) intp
        Bonded atom pairs.

    Returns
    -------
    str
        ``"proline"`` (truncation changes the backbone), ``"disulfide"`` (a Cys whose SG bonds
        to another residue's SG; truncation breaks the bond) or ``""``.
    """
    name = str(system.residues.resname[residue])
    if name in PROLINE:
        return "proline"
    if name in CYSTEINE:
        atoms = np.flatnonzero(system.resindex == residue)
        sg = atoms[system.names[atoms] == "SG"]
        if len(sg):
            partner = np.concatenate([bonds[bonds[:, 0] == sg[0], 1], bonds[bonds[:, 1] == sg[0], 0]])
            if any(system.names[p] == "SG" and system.resindex[p] != residue for p in partner):
                return "disulfide"
    return ""


def _model_rows(model: ResidueModel, partner_atoms, system, frame, settings, kc, box):
    """Per-term energies of the model's atoms with every partner atom in range, and the partner
    index of each pair (ordinary pairs: the caller excludes bonded partners)."""
    xp = frame.positions[partner_atoms]
    d = minimum_image_vectors((xp[None, :, :] - model.positions[:, None, :]).reshape(-1, 3), box)
    r2 = np.einsum("ij,ij->i", d, d)
    mi = np.repeat(np.arange(len(model.origin)), len(partner_atoms))
    pj = np.tile(np.arange(len(partner_atoms)), len(model.origin))
    if settings.cutoff_angstrom is not None:
        near = r2 <= settings.cutoff_angstrom ** 2
        r2, mi, pj = r2[near], mi[near], pj[near]
    if model.method != ALA_TEMPLATE:  # wild-type atoms: the system's own type-pair table
        ti, tj = system.lj_type[model.origin[mi]], system.lj_type[partner_atoms[pj]]
        rmin, eps = system.lj_rmin[ti, tj], system.lj_eps[ti, tj]
    else:
        p_rh, p_eps = _partner_lj(system)
        rmin = model.rmin_half[mi] + p_rh[partner_atoms[pj]]
        eps = np.sqrt(model.eps[mi] * p_eps[partner_atoms[pj]])
    coul, lj = pair_energies(r2, model.charges[mi] * system.charges[partner_atoms[pj]], rmin, eps, kc.values)
    return pair_term_values(coul, lj), mi, pj


def _partner_lj(system):
    from energy.analysis.alanine_models import per_atom_lj
    return system.derived("per_atom_lj", per_atom_lj)


def _wild_type_rows(system, frame, atoms) -> ResidueModel:
    """The wild-type atoms ``atoms`` as a model (their own positions and parameters)."""
    nan = np.full(len(atoms), np.nan)
    return ResidueModel(-1, atoms, system.names[atoms], frame.positions[atoms], system.charges[atoms],
                        nan, nan, "wild type")


#: Atom pairs evaluated at once when the wild-type interaction is summed.
PAIR_BLOCK = 2_000_000


def _wild_type_total(system, frame, settings, atoms_a, atoms_b, kc, box) -> dict:
    """The A-B interaction per term: every ordinary pair (blocks of A rows), the cross exception
    pairs with their own parameters instead (as :func:`atom_pair_energies` counts them)."""
    names = list(pair_term_values(np.zeros(0), np.zeros(0)))
    total = dict.fromkeys(names, 0.0)
    rows = max(1, PAIR_BLOCK // max(len(atoms_b), 1))
    for start in range(0, len(atoms_a), rows):
        block = _wild_type_rows(system, frame, atoms_a[start:start + rows])
        values, _, _ = _model_rows(block, atoms_b, system, frame, settings, kc, box)
        for t in names:
            total[t] += float(values[t].sum())
    ex = system.exception_pairs
    in_a = np.zeros(system.n_atoms, bool); in_a[atoms_a] = True
    in_b = np.zeros(system.n_atoms, bool); in_b[atoms_b] = True
    cross = np.flatnonzero((in_a[ex[:, 0]] & in_b[ex[:, 1]]) | (in_b[ex[:, 0]] & in_a[ex[:, 1]])) if len(ex) else []
    if len(cross):
        from energy.terms.nonbonded import exception_energies
        for i, j in ex[cross]:  # the ordinary form counted above is replaced by the exception's
            a, b = (i, j) if in_a[i] else (j, i)
            values, _, _ = _model_rows(_wild_type_rows(system, frame, np.array([a])), np.array([b]),
                                       system, frame, settings, kc, box)
            for t in names:
                total[t] -= float(values[t].sum())
        coul, lj, _ = exception_energies(system, frame.positions, settings, None)
        for t, v in pair_term_values(coul[cross], lj[cross]).items():
            total[t] += float(v.sum())
    return total


def alanine_scan(system: MolecularSystem, frame: Frame, settings: EnergySettings | None, atoms_a, atoms_b,
                 models: dict, skipped=(), flags: dict | None = None, select_a: str = "",
                 select_b: str = "", interface_angstrom: float = DEFAULT_INTERFACE_ANGSTROM,
                 progress: Callable[[int, int], bool] | None = None,
                 model_born: dict | None = None) -> HotspotScan:
    """The alanine scan of the residues in ``models`` against the other side.

    Parameters
    ----------
    system : MolecularSystem
        The wild type.
    frame : Frame
        Its coordinates (A) and cell.
    settings : EnergySettings or None
        Cutoff, electrostatics, vdW model, periodicity (None: the defaults).
    atoms_a, atoms_b : (n_a,), (n_b,) intp
        The two sides (disjoint, whole residues).
    models : dict
        Residue index -> :class:`~energy.analysis.alanine_models.ResidueModel` of its alanine.
    skipped : sequence of (int, str), optional
        Interface residues not scanned, with the reason (reported as given).
    flags : dict or None, optional
        Residue index -> flag (``"proline"``, ``"disulfide"``); missing means none.
    select_a, select_b : str, optional
        The selection strings (recorded).
    interface_angstrom : float, optional
        The interface distance used (recorded), A.
    progress : callable or None, optional
        ``progress(done, total)`` after each residue; returning False stops (cancel).
    model_born : dict or None, optional
        With implicit solvent: residue index -> BornParameters of its model's atoms (needed for
        models with rebuilt atoms, :func:`energy.analysis.hotspot_solvation.template_born_parameters`;
        a switched-off model takes its atoms' wild-type parameters).

    Returns
    -------
    HotspotScan
        Ranked by total dE, descending (kcal/mol).

    Raises
    ------
    EnergyError
        If a scanned residue has exception (bonded) pairs with the other side, a model with rebuilt
        atoms lacks its GB parameters (implicit solvent), or the scan was cancelled.
    """
    settings = settings or EnergySettings()
    check_frame(system, frame)
    atoms_a = np.unique(np.asarray(atoms_a, np.intp))
    atoms_b = np.unique(np.asarray(atoms_b, np.intp))
    check_sides(system, atoms_a, atoms_b)
    flags = flags or {}
    # implicit solvent is a non-periodic model (as in the pipeline): no minimum image then
    box = nonbonded_cell(frame.box, system.n_atoms, settings.use_periodic and settings.implicit_solvent is None).box
    box = box if box is not None and settings.cutoff_angstrom is not None else None
    kc = KernelConstants.from_settings(settings.coulomb_settings())
    # The wild type once: its A-B total, and below each scanned residue's own rows (computed once).
    wild_total = _wild_type_total(system, frame, settings, atoms_a, atoms_b, kc, box)
    names = list(wild_total)
    solvation = None
    if settings.implicit_solvent is not None:
        from energy.analysis.hotspot_solvation import SOLVATION_TERMS, BindingSolvation
        solvation = BindingSolvation(system, frame, settings, atoms_a, atoms_b)
        wild_total.update(solvation.wild_type)
        model_born = model_born or {}
    columns = names + ([] if solvation is None else list(SOLVATION_TERMS))
    in_a = np.zeros(system.n_atoms, bool)
    in_a[atoms_a] = True
    ex = system.exception_pairs
    n_res = system.n_residues

    out = {k: [] for k in ("residue", "side", "removed", "rebuilt", "lost_p", "lost_e", "delta")}
    residues = sorted(models)
    for k, r in enumerate(residues):
        model = models[r]
        own = np.flatnonzero(system.resindex == r)
        partner = atoms_b if in_a[own[0]] else atoms_a
        if len(ex) and (np.isin(ex[:, 0], own) & np.isin(ex[:, 1], partner)
                        | np.isin(ex[:, 1], own) & np.isin(ex[:, 0], partner)).any():
            raise EnergyError(f"{system.residues.label(r)} is bonded to the other selection; "
                              "the alanine scan needs two separate molecules")
        wild, wi, wj = _model_rows(_wild_type_rows(system, frame, own), partner, system, frame, settings, kc, box)
        mutant, _, pj = _model_rows(model, partner, system, frame, settings, kc, box)
        delta = {t: float(mutant[t].sum() - wild[t].sum()) for t in names}
        pairwise = sum(delta.values())
        if solvation is not None:
            delta.update(solvation.delta(model, "A" if in_a[own[0]] else "B", model_born.get(r)))
        wt_total = sum(wild[t] for t in names)
        mut_total = sum(mutant[t] for t in names)
        deleted = ~np.isin(own[wi], model.origin[model.origin >= 0])
        removed = -float(wt_total[deleted].sum())
        change = np.zeros(n_res)
        np.add.at(change, system.resindex[partner[wj]], -wt_total)
        np.add.at(change, system.resindex[partner[pj]], mut_total)
        top = np.argsort(-change, kind="stable")[:LOST_CONTACTS]
        top = top[change[top] > 0]
        out["residue"].append(r)
        out["side"].append("A" if in_a[own[0]] else "B")
        out["removed"].append(removed)
        out["rebuilt"].append(pairwise - removed)
        out["lost_p"].append(np.pad(top, (0, LOST_CONTACTS - len(top)), constant_values=-1))
        out["lost_e"].append(np.pad(change[top], (0, LOST_CONTACTS - len(top)), constant_values=0.0))
        out["delta"].append([delta[t] for t in columns])
        if progress is not None and progress(k + 1, len(residues)) is False:
            raise EnergyError("alanine scan cancelled")

    n = len(residues)
    delta = np.array(out["delta"], float).reshape(n, len(columns))
    total = delta.sum(axis=1)
    rank = np.argsort(-total, kind="stable")
    res = np.array(out["residue"], np.intp).reshape(n)[rank]
    resname = system.residues.resname[res].astype(str) if n else np.zeros(0, str)
    return HotspotScan(
        residue=res, side=np.array(out["side"], dtype="<U1").reshape(n)[rank],
        label=np.array([system.residues.label(int(i)) for i in res], dtype=str).reshape(n),
        resname=resname.reshape(n),
        side_chain_class=np.array([SIDE_CHAIN_CLASS.get(str(nm), "other") for nm in resname], dtype=str).reshape(n),
        method=np.array([models[int(i)].method for i in res], dtype=str).reshape(n),
        flag=np.array([flags.get(int(i), "") for i in res], dtype=str).reshape(n),
        delta={t: delta[rank, c] for c, t in enumerate(columns)},
        removed=np.array(out["removed"], float).reshape(n)[rank],
        rebuilt=np.array(out["rebuilt"], float).reshape(n)[rank],
        lost_partner=np.array(out["lost_p"], np.intp).reshape(n, LOST_CONTACTS)[rank],
        lost_energy=np.array(out["lost_e"], float).reshape(n, LOST_CONTACTS)[rank],
        wild_type=dict(wild_total),
        skipped=tuple((int(r), str(why)) for r, why in skipped),
        select_a=select_a, select_b=select_b, interface_angstrom=float(interface_angstrom),
        settings=settings)


__all__ = ["ALA_TEMPLATE", "DEFAULT_INTERFACE_ANGSTROM", "HOT_SPOT_KCAL_MOL", "HotspotScan", "SWITCHED_OFF",
           "alanine_scan", "check_sides", "interface_residues", "residue_flag"]
