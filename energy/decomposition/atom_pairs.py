"""Atom-pair level nonbonded energies: the per-interaction view behind a residue-pair entry.

:func:`atom_pair_energies` lists every nonbonded atom pair between two atom sets (or within one),
with distance, Coulomb and LJ, exception pairs (1-4, and zero-valued 1-2/1-3) flagged.  It uses
the same pair formula as the residue-pair kernel (:func:`energy.terms.nonbonded.pair_energies`).
With implicit solvent it adds each pair's generalized Born term (the residue-pair entry of
``solvation_polar`` is their sum, plus the residue's self terms on the diagonal).
:func:`interaction_energy` sums it for two selections.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from energy._kernels.neighbors import ResidueAtoms
from energy._kernels.pair_key import pair_keys, split_keys
from energy._kernels.pbc import is_orthorhombic, minimum_image_vectors, periodic_cell
from energy.decomposition.residue_pairs import is_member, sorted_unique
from energy.io.selection import select_atoms, universe_for
from energy.io.validation import check_frame
from energy.model.cell import nonbonded_cell
from energy.model.settings import EnergySettings
from energy.model.system import Frame, MolecularSystem
from energy.model.virtual_sites import placed_frame
from energy.terms.nonbonded import KernelConstants, exception_energies, pair_energies
from energy.terms.solvation import atom_pair_polar, frame_born_radii

#: Atom pairs evaluated per block when a no-cutoff request spans many atoms.
PAIR_BLOCK = 2_000_000
#: Candidate atom pairs per slice of :func:`interaction_energy` (its memory: about 60 MB).
SUM_BLOCK = 500_000


@dataclass(frozen=True)
class AtomPairEnergies:
    """Nonbonded energies per atom pair (kcal/mol); rows aligned.

    ``pairs`` (n, 2) intp, ``distance`` (n,) A, ``coulomb`` and ``lj`` (n,), ``is_exception``
    (n,) bool (1-4 pairs with their own parameters; 1-2 and 1-3 pairs appear with zeros).
    ``solvation_polar`` (n,): with implicit solvent, each pair's generalized Born term (every
    pair counts, excluded ones included), else None.  ``total`` is Coulomb + LJ.
    """

    pairs: np.ndarray
    distance: np.ndarray
    coulomb: np.ndarray
    lj: np.ndarray
    is_exception: np.ndarray
    solvation_polar: np.ndarray | None = None

    @property
    def total(self) -> np.ndarray:
        return self.coulomb + self.lj

    def __len__(self) -> int:
        return len(self.pairs)


def _candidate_pairs(x, atoms_a, atoms_b, cutoff, box, h):
    """Unordered atom pairs (i, j), i != j, i in A and j in B, within ``cutoff`` (or all).

    ``box`` and its matrix ``h`` are given when the minimum image applies (then ``cutoff`` is
    set), else None.
    """
    same = atoms_b is None
    atoms_b = atoms_a if same else atoms_b
    n = x.shape[0]
    if cutoff is None or (h is not None and not is_orthorhombic(h)):
        # All pairs (no cutoff), or a triclinic cell: test every pair with the exact minimum image.
        chunks = []
        rows = max(1, PAIR_BLOCK // max(len(atoms_b), 1))
        for start in range(0, len(atoms_a), rows):
            block = atoms_a[start:start + rows]
            ia, ib = np.repeat(block, len(atoms_b)), np.tile(atoms_b, len(block))
            if cutoff is not None:
                d = minimum_image_vectors(x[ib] - x[ia], box)
                near = np.einsum("ij,ij->i", d, d) < cutoff * cutoff
                ia, ib = ia[near], ib[near]
            chunks.append((ia, ib))
        ia = np.concatenate([c[0] for c in chunks]) if chunks else np.zeros(0, np.intp)
        ib = np.concatenate([c[1] for c in chunks]) if chunks else np.zeros(0, np.intp)
    else:
        from scipy.spatial import cKDTree  # imported when used (0.4 s of every start-up otherwise)
        if h is not None:
            lengths = np.diag(h)
            wrap = lambda p: np.minimum(p - lengths * np.floor(p / lengths),  # noqa: E731
                                        np.nextafter(lengths, 0))
            ta, tb = cKDTree(wrap(x[atoms_a]), boxsize=lengths), cKDTree(wrap(x[atoms_b]), boxsize=lengths)
        else:
            ta, tb = cKDTree(x[atoms_a]), cKDTree(x[atoms_b])
        coo = ta.sparse_distance_matrix(tb, cutoff, output_type="ndarray")
        ia, ib = atoms_a[coo["i"]], atoms_b[coo["j"]]
    lo, hi = np.minimum(ia, ib), np.maximum(ia, ib)
    keep = lo != hi
    keys = sorted_unique(pair_keys(lo[keep], hi[keep], n))
    return np.stack(split_keys(keys, n), axis=1)


def _pair_geometry(system, frame, settings):
    """(positions with virtual sites placed, the cell nonbonded pairs may use, whether the
    minimum image applies, its cell matrix or None) for atom-pair evaluations."""
    x = placed_frame(system, frame).positions  # virtual sites from their parents
    # implicit solvent is non-periodic, as in the pipeline
    box = nonbonded_cell(frame.box, system.n_atoms,
                         settings.use_periodic and settings.implicit_solvent is None).box
    periodic = box is not None and settings.cutoff_angstrom is not None
    h = periodic_cell(box, settings.cutoff_angstrom) if periodic else None
    return x, box, periodic, h


def atom_pair_energies(system: MolecularSystem, frame: Frame, settings: EnergySettings | None,
                       atoms_a, atoms_b=None, born_radius=None) -> AtomPairEnergies:
    """Every nonbonded atom pair between ``atoms_a`` and ``atoms_b`` (within ``atoms_a`` if None).

    Ordinary pairs beyond the cutoff are left out; exception pairs are always listed.  Pairs are
    unordered and listed once, an atom never with itself.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Its coordinates (A) and unit cell.
    settings : EnergySettings or None
        Cutoff, electrostatics, vdW model, periodicity (None: the defaults).
    atoms_a : (n_a,) integer
        Atom indices of the first set (duplicates ignored).
    atoms_b : (n_b,) integer or None, optional
        Atom indices of the second set; None (default) lists the pairs within ``atoms_a``.
    born_radius : (n_atoms,) float64 or None, optional
        With implicit solvent: this frame's Born radii (A), e.g. the result's
        ``interactions["solvation"]["born_radius"]`` (None: computed here, over the whole system).

    Returns
    -------
    AtomPairEnergies
        ``pairs`` (n, 2) intp (i < j; ordinary pairs sorted, then the exception pairs),
        ``distance`` (n,) float64 A, ``coulomb`` and ``lj`` (n,) float64 kcal/mol (``lj`` is the
        chosen vdW form: LJ or exp-6), ``is_exception`` (n,) bool, ``solvation_polar`` (n,)
        float64 kcal/mol with implicit solvent (every atom pair within the cutoff is listed).
    """
    settings = settings or EnergySettings()
    x, box, periodic, h = _pair_geometry(system, frame, settings)
    atoms_a = np.unique(np.asarray(atoms_a, np.intp))
    atoms_b = None if atoms_b is None else np.unique(np.asarray(atoms_b, np.intp))
    pairs = _candidate_pairs(x, atoms_a, atoms_b, settings.cutoff_angstrom,
                             box if periodic else None, h)
    n = system.n_atoms
    ex = system.exception_pairs
    ex_keys = pair_keys(ex[:, 0], ex[:, 1], n)
    keys = pair_keys(pairs[:, 0], pairs[:, 1], n)
    ordinary = pairs[~is_member(keys, np.sort(ex_keys))]
    in_a = np.zeros(n, bool); in_a[atoms_a] = True
    in_b = in_a if atoms_b is None else np.zeros(n, bool)
    if atoms_b is not None:
        in_b[atoms_b] = True
    ex_sel = np.flatnonzero((in_a[ex[:, 0]] & in_b[ex[:, 1]]) | (in_b[ex[:, 0]] & in_a[ex[:, 1]]))

    kc = KernelConstants.from_settings(settings)
    c, l, d = _ordinary_pair_energies(system, x, ordinary, box if periodic else None, kc)
    coul_parts, lj_parts, d_parts = [c], [l], [d]
    coul_ex, lj_ex, r_ex = exception_energies(system, x, settings, None, ex_sel)  # as the pipeline
    coul_parts.append(coul_ex); lj_parts.append(lj_ex); d_parts.append(r_ex)
    all_pairs = np.concatenate([ordinary, ex[ex_sel]]).reshape(-1, 2)
    flags = np.concatenate([np.zeros(len(ordinary), bool), np.ones(len(ex_sel), bool)])
    polar = None
    if settings.implicit_solvent is not None:
        born = (frame_born_radii(system, x, settings, system.derived("residue_atoms", _residue_atoms))
                if born_radius is None else born_radius)
        polar = atom_pair_polar(system, x, settings, born, all_pairs)
    return AtomPairEnergies(all_pairs, np.concatenate(d_parts), np.concatenate(coul_parts),
                            np.concatenate(lj_parts), flags, polar)


def _residue_atoms(system: MolecularSystem) -> ResidueAtoms:
    return ResidueAtoms.from_resindex(system.resindex, system.n_residues)


def residue_atoms(system: MolecularSystem, residue: int) -> np.ndarray:
    """Atoms of residue ``residue``.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    residue : int
        Residue index (0-based).

    Returns
    -------
    (k,) intp
        Indices of the residue's atoms, ascending.
    """
    return np.flatnonzero(system.resindex == residue)


def residue_pair_atom_energies(system, frame, settings, res_i: int, res_j: int,
                               born_radius=None) -> AtomPairEnergies:
    """Atom pairs behind the residue-pair entry (i, j); i == j gives the intra-residue pairs.

    With implicit solvent each pair carries its GB term: they sum to the entry's
    ``solvation_polar``, which for i == j also holds the residue's Born self terms (the result's
    ``interactions["solvation"]["self_polar"]``).

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Its coordinates (A) and unit cell.
    settings : EnergySettings or None
        Cutoff, electrostatics, vdW model, periodicity (None: the defaults).
    res_i, res_j : int
        Residue indices (0-based).
    born_radius : (n_atoms,) float64 or None, optional
        With implicit solvent: this frame's Born radii, A (None: computed here).

    Returns
    -------
    AtomPairEnergies
        As :func:`atom_pair_energies` (kcal/mol, A).
    """
    a = residue_atoms(system, res_i)
    return atom_pair_energies(system, frame, settings, a, None if res_i == res_j else residue_atoms(system, res_j),
                              born_radius)


def interaction_energy(system, frame, settings, atoms_a, atoms_b) -> dict:
    """Nonbonded interaction between two atom sets (kcal/mol): coulomb, lj, total, n_pairs.

    Pairs are unordered and counted once; atoms in both sets pair with each other once.  The
    sums run over slices of ``atoms_a`` holding about :data:`SUM_BLOCK` candidate pairs each,
    so memory stays bounded however many atom pairs the two sets make (no list of them is
    kept).

    Parameters
    ----------
    system : MolecularSystem
        The system.
    frame : Frame
        Its coordinates (A) and unit cell.
    settings : EnergySettings or None
        Cutoff, electrostatics, vdW model, periodicity (None: the defaults).
    atoms_a, atoms_b : (n,) integer
        Atom indices of the two sets.

    Returns
    -------
    dict
        ``coulomb``, ``lj``, ``total`` (float, kcal/mol) and ``n_pairs`` (int, atom pairs
        counted, exception pairs included).
    """
    check_frame(system, frame)  # the geometry checks, before any energy
    settings = settings or EnergySettings()
    x, box, periodic, h = _pair_geometry(system, frame, settings)
    n = system.n_atoms
    atoms_a = np.unique(np.asarray(atoms_a, np.intp))
    atoms_b = np.unique(np.asarray(atoms_b, np.intp))
    ex = system.exception_pairs
    sorted_ex_keys = np.sort(pair_keys(ex[:, 0], ex[:, 1], n))
    in_a = np.zeros(n, bool); in_a[atoms_a] = True
    in_b = np.zeros(n, bool); in_b[atoms_b] = True
    in_both = in_a & in_b
    kc = KernelConstants.from_settings(settings)
    coulomb = lj = 0.0
    n_pairs = 0
    rows = max(1, SUM_BLOCK // max(len(atoms_b), 1))
    in_part = np.zeros(n, bool)
    for start in range(0, len(atoms_a), rows):
        part = atoms_a[start:start + rows]
        in_part[part] = True
        pairs = _candidate_pairs(x, part, atoms_b, settings.cutoff_angstrom, box if periodic else None, h)
        # a pair of two atoms in both sets turns up in the slices of both: keep it in the slice
        # of its lower atom only
        twice = in_both[pairs[:, 0]] & in_both[pairs[:, 1]] & ~in_part[pairs[:, 0]]
        pairs = pairs[~twice]
        pairs = pairs[~is_member(pair_keys(pairs[:, 0], pairs[:, 1], n), sorted_ex_keys)]
        c, l, _ = _ordinary_pair_energies(system, x, pairs, box if periodic else None, kc)
        coulomb += float(c.sum()); lj += float(l.sum()); n_pairs += len(pairs)
        in_part[part] = False
    ex_sel = np.flatnonzero((in_a[ex[:, 0]] & in_b[ex[:, 1]]) | (in_b[ex[:, 0]] & in_a[ex[:, 1]]))
    coul_ex, lj_ex, _ = exception_energies(system, x, settings, None, ex_sel)  # as the pipeline
    coulomb += float(coul_ex.sum()); lj += float(lj_ex.sum())
    n_pairs += len(ex_sel)
    return {"coulomb": coulomb, "lj": lj, "total": coulomb + lj, "n_pairs": int(n_pairs)}


def _ordinary_pair_energies(system, x, pairs, box, kc):
    """(coulomb, lj, distance) of ordinary atom pairs (no exceptions among them), each (n,)."""
    coul_parts, lj_parts, d_parts = [np.zeros(0)], [np.zeros(0)], [np.zeros(0)]
    for start in range(0, len(pairs), PAIR_BLOCK):
        p = pairs[start:start + PAIR_BLOCK]
        d = minimum_image_vectors(x[p[:, 1]] - x[p[:, 0]], box)
        r2 = np.einsum("ij,ij->i", d, d)
        ti, tj = system.lj_type[p[:, 0]], system.lj_type[p[:, 1]]
        c, l = pair_energies(r2, system.charges[p[:, 0]] * system.charges[p[:, 1]],
                             system.lj_rmin[ti, tj], system.lj_eps[ti, tj], kc.values)
        coul_parts.append(c); lj_parts.append(l); d_parts.append(np.sqrt(r2))
    return np.concatenate(coul_parts), np.concatenate(lj_parts), np.concatenate(d_parts)


def selection_interaction(system, frame, settings, select_a: str, select_b: str, universe=None) -> dict:
    """Nonbonded interaction of the atoms chosen by two MDAnalysis selection strings.

    Parameters
    ----------
    system : MolecularSystem
        The system to evaluate.
    frame : Frame
        The frame to evaluate (coordinates in A).
    settings : EnergySettings or None
        Settings of the evaluation (None: the defaults).
    select_a, select_b : str
        MDAnalysis selection strings (e.g. ``"segid A"``).
    universe : MDAnalysis.Universe or None, optional
        A Universe of this system and frame to select from (built if None).

    Returns
    -------
    dict
        ``a``, ``b`` (the selections), ``n_atoms_a``, ``n_atoms_b``, and ``coulomb``, ``lj``,
        ``total`` (kcal/mol), ``n_pairs`` as :func:`interaction_energy`.
    """
    u = universe if universe is not None else universe_for(system, frame)
    atoms_a = select_atoms(system, frame, select_a, u)
    atoms_b = select_atoms(system, frame, select_b, u)
    return {"a": select_a, "b": select_b, "n_atoms_a": int(len(atoms_a)), "n_atoms_b": int(len(atoms_b)),
            **interaction_energy(system, frame, settings, atoms_a, atoms_b)}


def pair_parameters(system: MolecularSystem, a: int, b: int) -> dict:
    """Nonbonded parameters of atom pair (a, b).

    ``qq`` (e^2), ``rmin`` (A), ``eps`` (kcal/mol), ``is_exception`` (its own 1-4 values, or zeros
    for 1-2/1-3).

    Parameters
    ----------
    system : MolecularSystem
        The system.
    a, b : int
        Atom indices (0-based, any order).

    Returns
    -------
    dict
        ``qq`` (float, e^2), ``rmin`` (float, A), ``eps`` (float, kcal/mol), ``is_exception`` (bool).
    """
    lo, hi = min(a, b), max(a, b)
    ex = system.exception_pairs
    hit = np.flatnonzero((ex[:, 0] == lo) & (ex[:, 1] == hi))
    if len(hit):
        k = int(hit[0])
        return {"qq": float(system.exception_qq[k]), "rmin": float(system.exception_rmin[k]),
                "eps": float(system.exception_eps[k]), "is_exception": True}
    ti, tj = system.lj_type[a], system.lj_type[b]
    return {"qq": float(system.charges[a] * system.charges[b]), "rmin": float(system.lj_rmin[ti, tj]),
            "eps": float(system.lj_eps[ti, tj]), "is_exception": False}


def pair_curve(system: MolecularSystem, settings: EnergySettings | None, a: int, b: int, distances):
    """Coulomb and LJ of atom pair (a, b) over ``distances`` (A): two arrays, kcal/mol.

    The same forms as the energy evaluation (cutoff: zero beyond it; exception pairs use plain
    Coulomb and LJ).  Returns also the parameters (see :func:`pair_parameters`).

    Parameters
    ----------
    system : MolecularSystem
        The system.
    settings : EnergySettings or None
        Settings of the evaluation (None: the defaults).
    a, b : int
        Atom indices (0-based).
    distances : (n,) float
        Distances to evaluate at, A.

    Returns
    -------
    coulomb, lj : (n,) float64
        Energies at each distance, kcal/mol (``lj`` the chosen vdW form).
    parameters : dict
        As :func:`pair_parameters`.
    """
    settings = settings or EnergySettings()
    p = pair_parameters(system, a, b)
    r = np.asarray(distances, dtype=np.float64)
    r2 = r * r
    n = len(r)
    kc = KernelConstants.from_settings(settings, for_exceptions=p["is_exception"])
    coul, lj = pair_energies(r2, np.full(n, p["qq"]), np.full(n, p["rmin"]), np.full(n, p["eps"]),
                             kc.values)
    if not p["is_exception"] and settings.cutoff_angstrom is not None:
        beyond = r2 >= kc.cutoff2
        coul[beyond] = 0.0
        lj[beyond] = 0.0
    return coul, lj, p
