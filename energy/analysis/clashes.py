"""Steric clash finder: atom pairs whose spheres overlap, ranked, with residue-level summaries.

Definitions, defaults and their sources are in ``docs/clashes.md``; in short:

* candidates are atom pairs that are not excluded: 1-2 and 1-3 pairs never count, 1-4 pairs only
  with ``include_14``; heavy atoms only unless ``include_hydrogens``;
* overlap = contact - r, where the contact distance is R_i + R_j with Bondi's radii by element
  (``radii="bondi"``, the default), or the force field's own Rmin_ij of the pair
  (``radii="forcefield"``: the Lennard-Jones table entry, NBFIX included; for a 1-4 pair its 1-4
  Rmin); with Lorentz (arithmetic) combination Rmin_ij = Rmin/2_i + Rmin/2_j, so this *is*
  R_i + R_j with R = Rmin/2 of each atom;
* a pair is a clash when overlap >= ``overlap`` (0.4 A by default) and/or its Lennard-Jones
  energy is above ``lj_above`` (``combine`` = "any" or "all");
* rank: overlap (largest first), then LJ energy (largest first).

The LJ energy of a pair is the force field's plain form eps_ij [(Rmin_ij/r)^12 - 2 (Rmin_ij/r)^6]
with no cutoff and no switching (1-4 pairs: their own 1-4 Rmin and eps), the form of
``docs/physics.md``.

No Qt here; the viewer and the command line (:mod:`app.cli.overlaps`) both use this module;
labels, JSON, CSV and the text table are in :mod:`energy.output.clash_report`.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np
from scipy.spatial import cKDTree

from energy._kernels.geometry import minimum_image
from energy._kernels.pair_key import ordered_pair_keys, pair_keys
from energy.analysis.vdw_radii import bondi_radius
from energy.errors import SettingsError
from energy.io.validation import check_frame
from energy.model.cell import check_cell
from energy.model.settings import EXP6_ALPHA_MATCHING_LJ
from energy.model.system import Frame, MolecularSystem
from energy.model.virtual_sites import placed_frame
from energy.terms.exclusions import excluded_and_14
from energy.terms.nonbonded import plain_pair_energies

#: Default overlap threshold (A).  Common practice in structure validation: sphere overlaps of
#: 0.4 A or more are treated as serious clashes.
DEFAULT_OVERLAP = 0.4
RADII_SOURCES = ("bondi", "forcefield")
COMBINE_MODES = ("any", "all")

#: Contact distances (A) of a hydrogen-bonding pair: the short end of the "moderate" hydrogen
#: bond range, donor...acceptor 2.5 A and H...acceptor 1.5 A (G. A. Jeffrey, *An Introduction to
#: Hydrogen Bonding*, Oxford University Press, 1997, Table 2.2; values from memory).  A donor-
#: acceptor pair is measured against min(ordinary contact, this), so a hydrogen bond of normal
#: length is not a clash but one squeezed well below the shortest moderate H-bond still is.
HBOND_CONTACT_HEAVY = 2.5
HBOND_CONTACT_H = 1.5


@dataclass(frozen=True)
class ClashOptions:
    """Knobs of one clash search (validated here).

    overlap: flag pairs with overlap >= this (A); ``None`` disables the overlap criterion.
    lj_above: flag pairs whose LJ energy is > this (kcal/mol, must be >= 0); ``None``: off.
    combine: "any" (either criterion flags a pair) or "all" (every active criterion must).
    radii: "bondi" (Bondi 1964 radii by element) or "forcefield" (Rmin_ij of the pair).
    include_hydrogens: search hydrogens too (default: heavy atoms only).
    include_14: let 1-4 pairs count (default: they never do, like 1-2 and 1-3 pairs).
    periodic: minimum image in the frame's orthorhombic unit cell (default off here; the
        ``tessera overlaps`` command and the window decide it by :func:`periodic_search`).
    hbond: hydrogen-bonding pairs (donor-acceptor, polar H-acceptor) get the shorter H-bond
        contact distance (default on; see :func:`hbond_roles`).
    exp6_alpha: steepness of the exp-6 form whose energy is reported beside the LJ energy of
        every clash (default: the value matching the LJ curvature at the minimum).  Reported
        only; the flagging criteria use the overlap and the LJ energy.
    """

    overlap: float | None = DEFAULT_OVERLAP
    lj_above: float | None = None
    combine: str = "any"
    radii: str = "bondi"
    include_hydrogens: bool = False
    include_14: bool = False
    periodic: bool = False
    hbond: bool = True
    exp6_alpha: float = EXP6_ALPHA_MATCHING_LJ

    def __post_init__(self):
        if self.radii not in RADII_SOURCES:
            raise SettingsError(f"radii must be one of {', '.join(RADII_SOURCES)}; got {self.radii!r}")
        if self.combine not in COMBINE_MODES:
            raise SettingsError(f"combine must be one of {', '.join(COMBINE_MODES)}; got {self.combine!r}")
        if self.overlap is None and self.lj_above is None:
            raise SettingsError("no clash criterion: give an overlap threshold or an LJ threshold")
        if self.overlap is not None and not np.isfinite(self.overlap):
            raise SettingsError(f"overlap threshold must be a finite number, got {self.overlap}")
        if not (np.isfinite(self.exp6_alpha) and self.exp6_alpha > 7.0):
            raise SettingsError(f"the exp-6 steepness must exceed 7 for the curve to have a minimum; "
                                f"got {self.exp6_alpha}")
        if self.lj_above is not None and not (np.isfinite(self.lj_above) and self.lj_above >= 0):
            raise SettingsError(f"the LJ threshold must be >= 0 kcal/mol (a negative one would flag "
                                f"every distant attractive pair), got {self.lj_above}")

    def as_dict(self) -> dict:
        """The options as a plain dict (``dataclasses.asdict``), e.g. for the JSON report.

        Returns
        -------
        dict
            Field name -> value (A, kcal/mol as the fields).
        """
        return asdict(self)


@dataclass(frozen=True)
class ResiduePairClashes:
    """Clashes of one residue pair (res_i <= res_j): count, worst overlap, summed LJ, worst clash
    (row index into the ranked list), summed exp-6 energy."""

    res_i: int
    res_j: int
    count: int
    worst_overlap: float
    lj_sum: float
    worst: int
    exp6_sum: float = 0.0


@dataclass(frozen=True)
class ClashReport:
    """Ranked clashes (rows aligned, most severe first) and what was searched.

    ``pairs`` (n, 2) atom indices (i < j), ``distance`` r (A), ``contact`` the contact distance
    (A), ``overlap`` = contact - r (A), ``lj`` pair LJ energy (kcal/mol), ``is_14`` bool,
    ``is_hbond`` bool (a hydrogen-bonding pair measured against the H-bond contact distance),
    ``exp6`` the pair's exp-6 energy with the same Rmin and eps (kcal/mol, steepness
    ``options.exp6_alpha``, held at its maximum inside the turnover; :func:`exp6_energy`).
    ``radii`` (n_atoms,) the per-atom radius used (A; 0 for atoms not searched), ``fallback``
    elements that had no Bondi radius (force-field radius used instead), ``n_candidates`` pairs
    examined within the search distance ``search_distance`` (A).
    """

    options: ClashOptions
    pairs: np.ndarray
    distance: np.ndarray
    contact: np.ndarray
    overlap: np.ndarray
    lj: np.ndarray
    is_14: np.ndarray
    is_hbond: np.ndarray
    radii: np.ndarray
    n_atoms_searched: int
    n_candidates: int
    search_distance: float
    fallback: tuple = ()
    notes: tuple = field(default=())
    exp6: np.ndarray = field(default_factory=lambda: np.zeros(0))

    def __len__(self) -> int:
        return len(self.pairs)

    def residue_pairs(self, system: MolecularSystem) -> list[ResiduePairClashes]:
        """Per residue-pair aggregation (for the pair-map overlay), most severe pair first.

        Parameters
        ----------
        system : MolecularSystem
            The system searched (``resindex`` maps atoms to residues).

        Returns
        -------
        list of ResiduePairClashes
            One per residue pair with a clash (res_i <= res_j): count, worst overlap (A), summed LJ
            and exp-6 energies (kcal/mol; exp-6 NaN if the report has none), row of its worst clash;
            sorted by that row.
        """
        if not len(self):
            return []
        ri = system.resindex[self.pairs[:, 0]]
        rj = system.resindex[self.pairs[:, 1]]
        lo, hi = np.minimum(ri, rj), np.maximum(ri, rj)
        out = {}
        has6 = len(self.exp6) == len(self)
        for k in range(len(self)):  # rows are ranked, so the first row of a key is its worst
            key = (int(lo[k]), int(hi[k]))
            if key not in out:
                out[key] = [0, float(self.overlap[k]), 0.0, k, 0.0]
            out[key][0] += 1
            out[key][2] += float(self.lj[k])
            out[key][4] += float(self.exp6[k]) if has6 else float("nan")
        rows = [ResiduePairClashes(a, b, c, w, s, k, e6) for (a, b), (c, w, s, k, e6) in out.items()]
        return sorted(rows, key=lambda r: r.worst)

    def residue_counts(self, system: MolecularSystem) -> np.ndarray:
        """(n_residues,) number of clashes each residue takes part in (an intra-residue clash counts once).

        Parameters
        ----------
        system : MolecularSystem
            The system searched.

        Returns
        -------
        (n_residues,) int64
            Clash count per residue.
        """
        counts = np.zeros(system.n_residues, np.int64)
        if len(self):
            ri = system.resindex[self.pairs[:, 0]]
            rj = system.resindex[self.pairs[:, 1]]
            np.add.at(counts, ri, 1)
            np.add.at(counts, rj[rj != ri], 1)
        return counts


# ------------------------------------------------------------------------------------------------
# exclusions and radii
# ------------------------------------------------------------------------------------------------

def atom_radii(system: MolecularSystem, source: str) -> tuple[np.ndarray, tuple]:
    """Per-atom radius (A) and the elements that fell back to the force field (Bondi only).

    forcefield: Rmin/2 of the atom's own type, ``lj_rmin[t, t] / 2``; an atom type with zero well
    depth has no size in the force field (OpenMM writes an arbitrary sigma for it) and gets 0.
    bondi: Bondi's radius by element; elements not tabulated take their force-field radius.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    source : str
        ``"bondi"`` or ``"forcefield"``.

    Returns
    -------
    radii : (n_atoms,) float64
        Radius of each atom, A.
    fallback : tuple of str
        Sorted elements without a Bondi radius (``"?"`` for an empty element); empty for
        ``"forcefield"``.
    """
    t = system.lj_type
    ff = np.where(system.lj_eps[t, t] > 0.0, system.lj_rmin[t, t] / 2.0, 0.0)
    if source == "forcefield":
        return ff, ()
    radii = np.empty(system.n_atoms)
    missing = set()
    for k, el in enumerate(system.elements):
        r = bondi_radius(el)
        if r is None:
            missing.add(str(el) or "?")
            radii[k] = ff[k]
        else:
            radii[k] = r
    return radii, tuple(sorted(missing))


def hbond_roles(system: MolecularSystem) -> tuple[np.ndarray, np.ndarray, np.ndarray, bool]:
    """(donor, acceptor, polar_h, guessed): per-atom bool arrays, from elements and bonds.

    donor: N or O bonded to a hydrogen.  acceptor: any O, and N with no hydrogen and at most two
    bonds (e.g. His ND1/NE2 when unprotonated; not Pro N).  polar_h: H bonded to a donor.
    A model without any hydrogen cannot tell donors apart: then every N and O is taken as both
    donor and acceptor (``guessed`` True).

    Parameters
    ----------
    system : MolecularSystem
        The system (``elements``, ``bonds``).

    Returns
    -------
    donor, acceptor, polar_h : (n_atoms,) bool
        Role of each atom.
    guessed : bool
        True when the model has no hydrogens and the roles are guessed as above.
    """
    el = np.array([str(e).strip().upper() for e in system.elements])
    is_h = ~system.is_heavy
    n = system.n_atoms
    b = system.bonds.atoms
    n_bonds = np.bincount(b.ravel(), minlength=n) if len(b) else np.zeros(n, np.int64)
    has_h = np.zeros(n, bool)
    h_partner = np.full(n, -1, np.intp)
    for i, j in b:
        if is_h[i] and not is_h[j]:
            has_h[j] = True; h_partner[i] = j
        elif is_h[j] and not is_h[i]:
            has_h[i] = True; h_partner[j] = i
    no = np.isin(el, ("N", "O"))
    if not is_h.any():
        return no.copy(), no.copy(), np.zeros(n, bool), True
    donor = no & has_h
    acceptor = (el == "O") | ((el == "N") & ~has_h & (n_bonds <= 2))
    polar_h = is_h & (h_partner >= 0) & donor[np.maximum(h_partner, 0)]
    return donor, acceptor, polar_h, False


def _ff_contact(system, pairs, is14, ex_index_of):
    """Force-field Rmin and eps of each pair: the LJ table (NBFIX included), or the 1-4 values."""
    ti, tj = system.lj_type[pairs[:, 0]], system.lj_type[pairs[:, 1]]
    rmin = system.lj_rmin[ti, tj].astype(float).copy()
    eps = system.lj_eps[ti, tj].astype(float).copy()
    if np.any(is14):
        k = ex_index_of[is14]
        rmin[is14] = system.exception_rmin[k]
        eps[is14] = system.exception_eps[k]
    return rmin, eps


def lj_energy(r, rmin, eps) -> np.ndarray:
    """Plain LJ eps [(Rmin/r)^12 - 2 (Rmin/r)^6] (kcal/mol); 0 where eps == 0 (docs/physics.md).

    The engine's own pair form (:func:`energy.terms.nonbonded.plain_pair_energies`), no cutoff,
    no switching.

    Parameters
    ----------
    r : float or array_like of float
        Distances, A.
    rmin : float or array_like of float
        Pair Rmin_ij, A.
    eps : float or array_like of float
        Pair well depth eps_ij, kcal/mol (>= 0).

    Returns
    -------
    numpy.ndarray of float64, or numpy.float64
        LJ energy, kcal/mol, of the broadcast shape of the three inputs (a scalar for scalars).
    """
    shape = np.broadcast_shapes(np.shape(r), np.shape(rmin), np.shape(eps))
    flat = [np.broadcast_to(np.asarray(a, float), shape).ravel() for a in (r, rmin, eps)]
    _, e = plain_pair_energies(flat[0], 0.0, flat[1], flat[2])
    return e.reshape(shape) if shape else e[0]


def exp6_energy(r, rmin, eps, alpha: float = EXP6_ALPHA_MATCHING_LJ) -> np.ndarray:
    """Exp-6 energy (kcal/mol) with the same minimum (Rmin, -eps) as the LJ pair.

    Steepness ``alpha``, held at its maximum inside the turnover point: the engine's own pair form
    (:func:`energy.terms.nonbonded.plain_pair_energies` with ``vdw="exp6"``).

    Parameters
    ----------
    r : (n,) float
        Distances, A.
    rmin : (n,) float or float
        Pair Rmin_ij, A.
    eps : (n,) float or float
        Pair well depth eps_ij, kcal/mol (>= 0; 0 gives 0).
    alpha : float, optional
        Exp-6 steepness (> 7; default the value matching the LJ curvature at the minimum,
        (19 + sqrt(73)) / 2).

    Returns
    -------
    (n,) float64
        Exp-6 energy of each pair, kcal/mol.
    """
    r = np.ascontiguousarray(r, float)
    _, e = plain_pair_energies(r, 0.0, rmin, eps, vdw="exp6", exp6_alpha=alpha)
    return e


def _lj_reach(rmin, eps, threshold: float) -> float:
    """Largest distance at which LJ(rmin, eps) can exceed ``threshold`` >= 0 (A)."""
    ok = eps > 0
    if not np.any(ok):
        return 0.0
    x = 1.0 + np.sqrt(1.0 + threshold / eps[ok])  # (Rmin/r)^6 at LJ == threshold, inner root
    return float(np.max(rmin[ok] / x ** (1.0 / 6.0)))


# ------------------------------------------------------------------------------------------------
# the search
# ------------------------------------------------------------------------------------------------

def periodic_search(frame: Frame, n_atoms: int, use_periodic: bool = True) -> tuple[bool, str]:
    """Whether a clash search of ``frame`` uses periodic images, by the cell rules every
    computation follows (:func:`energy.model.cell.check_cell`), and the note to show.

    The same default as the energies: images when the frame has a real periodic box and the
    settings allow it (``use_periodic``, ``--no-periodic`` turns it off).  The clash search handles
    orthorhombic cells only; a triclinic one is searched without images, with a note.

    Parameters
    ----------
    frame : Frame
        The frame searched (its ``box``).
    n_atoms : int
        Atoms of the system (the cell rules compare the volume per atom).
    use_periodic : bool, optional
        Whether the settings allow a periodic cell.

    Returns
    -------
    tuple of (bool, str)
        ``(periodic, note)``; ``note`` says why the file's cell is not used ("" when it is, or
        when there is none or the settings turn cells off).
    """
    if not use_periodic:
        return False, ""
    cell = check_cell(frame.box, n_atoms)
    if cell.box is None:
        return False, cell.note
    if not frame.is_orthorhombic:
        return False, ("the unit cell is triclinic: the clash search used no periodic images "
                       "(it handles orthorhombic cells only)")
    return True, ""


def _box_lengths(frame: Frame, reach: float) -> np.ndarray:
    if frame.box is None:
        raise SettingsError("periodic clash search needs a unit cell, and this frame has none")
    if not frame.is_orthorhombic:
        raise SettingsError("periodic clash search supports orthorhombic unit cells only; "
                            "this cell is triclinic (drop --periodic)")
    lengths = np.asarray(frame.box[:3], float)
    if np.any(lengths < 2.0 * reach):
        raise SettingsError(f"the unit cell ({' x '.join(f'{v:.1f}' for v in lengths)} A) is smaller "
                            f"than twice the search distance ({reach:.2f} A)")
    return lengths


def find_clashes(system: MolecularSystem, frame: Frame, options: ClashOptions | None = None) -> ClashReport:
    """Every clash of ``frame``, ranked by overlap then LJ energy (see the module docstring).

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Coordinates (A) and unit cell (used with ``options.periodic``; orthorhombic only).
    options : ClashOptions or None, optional
        Criteria and radii (None: the defaults, overlap >= 0.4 A with Bondi radii).

    Returns
    -------
    ClashReport
        The ranked clashes (distances, contacts and overlaps in A, LJ and exp-6 energies in
        kcal/mol) and what was searched.

    Raises
    ------
    SettingsError
        If the frame's atom count differs from the system's, or a periodic search has no cell, a
        triclinic cell, or one smaller than twice the search distance.
    """
    opt = options or ClashOptions()
    n = system.n_atoms
    if np.shape(frame.positions) != (n, 3):
        raise SettingsError(f"the frame has {len(frame.positions)} atoms, the system {n}")
    frame = placed_frame(system, frame)  # virtual sites from their parents
    x = np.asarray(frame.positions, float)
    check_frame(system, frame)  # coincident atoms, a degenerate cell, ...: before any energy
    searched = np.ones(n, bool) if opt.include_hydrogens else system.is_heavy.copy()
    if system.virtual_sites is not None:
        searched[system.virtual_sites.site] = False  # massless sites are no atoms to clash
    atoms = np.flatnonzero(searched)
    radii, fallback = atom_radii(system, opt.radii)
    excluded, keys14 = excluded_and_14(system)

    # the largest distance at which a pair can be flagged
    types = np.unique(system.lj_type[atoms])
    tab_rmin = system.lj_rmin[np.ix_(types, types)]
    tab_eps = system.lj_eps[np.ix_(types, types)]
    ex = system.exception_pairs
    if opt.include_14 and len(keys14):
        ex_keys = ordered_pair_keys(ex[:, 0], ex[:, 1], n)
        sel = np.isin(ex_keys, keys14) & searched[ex[:, 0]] & searched[ex[:, 1]]
        ex_rmin, ex_eps = system.exception_rmin[sel], system.exception_eps[sel]
    else:
        ex_rmin = ex_eps = np.zeros(0)
    reach = 0.0
    if opt.overlap is not None:
        if opt.radii == "bondi":
            max_contact = 2.0 * float(radii[atoms].max()) if len(atoms) else 0.0
        else:
            max_contact = float(max(np.max(np.where(tab_eps > 0, tab_rmin, 0.0), initial=0.0),
                                    np.max(np.where(ex_eps > 0, ex_rmin, 0.0), initial=0.0)))
        reach = max(reach, max_contact - opt.overlap)
    if opt.lj_above is not None:
        reach = max(reach, _lj_reach(tab_rmin.ravel(), tab_eps.ravel(), opt.lj_above),
                    _lj_reach(ex_rmin, ex_eps, opt.lj_above))
    box = None
    if reach <= 0 or len(atoms) < 2:
        cand = np.zeros((0, 2), np.intp)
    else:
        if opt.periodic:
            lengths = _box_lengths(frame, reach)
            wrapped = np.minimum(x[atoms] - lengths * np.floor(x[atoms] / lengths),
                                 np.nextafter(lengths, 0))
            tree = cKDTree(wrapped, boxsize=lengths)
            box = frame.box
        else:
            tree = cKDTree(x[atoms])
        local = tree.query_pairs(reach, output_type="ndarray")
        cand = atoms[local]
        cand = np.sort(cand, axis=1)
    keys = pair_keys(cand[:, 0], cand[:, 1], n)
    keep = ~np.isin(keys, excluded)
    is14 = np.isin(keys, keys14)
    if not opt.include_14:
        keep &= ~is14
    cand, keys, is14 = cand[keep], keys[keep], is14[keep]

    d = minimum_image(x[cand[:, 1]] - x[cand[:, 0]], box)
    r = np.sqrt(np.einsum("ij,ij->i", d, d))
    ex_index_of = np.zeros(len(cand), np.intp)
    if np.any(is14):
        ex_keys = ordered_pair_keys(ex[:, 0], ex[:, 1], n)
        order = np.argsort(ex_keys)
        ex_index_of[is14] = order[np.searchsorted(ex_keys[order], keys[is14])]
    rmin, eps = _ff_contact(system, cand, is14, ex_index_of)
    if opt.radii == "forcefield":
        contact = np.where(eps > 0, rmin, 0.0)
    else:
        contact = radii[cand[:, 0]] + radii[cand[:, 1]]
    is_hb = np.zeros(len(cand), bool)
    guessed = False
    if opt.hbond and len(cand):
        donor, acceptor, polar_h, guessed = hbond_roles(system)
        a, b = cand[:, 0], cand[:, 1]
        heavy_hb = (donor[a] & acceptor[b]) | (acceptor[a] & donor[b])
        h_hb = (polar_h[a] & acceptor[b]) | (acceptor[a] & polar_h[b])
        hb_contact = np.where(h_hb, HBOND_CONTACT_H, HBOND_CONTACT_HEAVY)
        is_hb = (heavy_hb | h_hb) & (hb_contact < contact)
        contact = np.where(is_hb, hb_contact, contact)
    overlap = contact - r
    lj = lj_energy(r, rmin, eps)

    tests = []
    if opt.overlap is not None:
        tests.append(overlap >= opt.overlap - 1e-12)
    if opt.lj_above is not None:
        tests.append(lj > opt.lj_above)
    flag = np.logical_or.reduce(tests) if opt.combine == "any" else np.logical_and.reduce(tests)

    idx = np.flatnonzero(flag)
    order = np.lexsort((cand[idx, 1], cand[idx, 0], -lj[idx], -np.round(overlap[idx], 9)))
    idx = idx[order]
    radii_out = np.where(searched, radii, 0.0)
    notes = []
    if fallback:
        notes.append(f"no Bondi radius for element(s) {', '.join(fallback)}: force-field Rmin/2 used")
    if guessed:
        notes.append("the model has no hydrogens: every N/O pair is treated as possibly hydrogen-bonded")
    exp6 = exp6_energy(r[idx], rmin[idx], eps[idx], opt.exp6_alpha)
    return ClashReport(opt, cand[idx], r[idx], contact[idx], overlap[idx], lj[idx], is14[idx],
                       is_hb[idx], radii_out, int(len(atoms)), int(len(cand)), float(reach), fallback,
                       tuple(notes), exp6)
