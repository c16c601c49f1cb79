"""Plain-Python jobs behind the clash check and the model comparisons (no Qt).

They only call the engine (:mod:`energy.analysis.clashes`,
:mod:`energy.decomposition.atom_pairs`) and arrange its results
for the tables; the worker threads run them.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from energy.analysis.clashes import ClashOptions, find_clashes, periodic_search
from energy.decomposition.atom_pairs import residue_pair_atom_energies
from energy.model.settings import EnergySettings

#: The electrostatics models compared side by side: key, column title, settings changes.
ELECTROSTATICS_MODELS = (
    ("plain", "Plain ε=1", dict(electrostatics="plain", dielectric=1.0)),
    ("distance-dependent", "ε = 4r", dict(electrostatics="distance-dependent", dielectric=4.0)),
    ("reaction-field", "Reaction field", dict(electrostatics="reaction-field", dielectric=1.0)),
    ("shifted", "Shifted", dict(electrostatics="shifted", dielectric=1.0)),
)
#: Cutoff of the comparison when the current settings have none (A).
COMPARISON_CUTOFF = 12.0
TOP_PAIRS = 10


@dataclass(frozen=True)
class ClashCheck:
    """A clash report with the residue-level summaries the panel and the map overlay show."""

    report: object                 # energy.analysis.clashes.ClashReport
    residue_pairs: list            # [ResiduePairClashes], worst first
    residue_counts: np.ndarray     # (n_residues,) int
    frame_index: int


def clash_check(snapshot, options: ClashOptions | None = None) -> ClashCheck:
    """Find the clashes of the snapshot's frame and summarise them per residue pair and per residue.

    Parameters
    ----------
    snapshot : object
        One loaded system and its result: ``system`` (MolecularSystem), ``frame`` (Frame) and
        ``result`` (EnergyResult) attributes (the window's ``Snapshot``).
    options : ClashOptions or None, optional
        Clash criteria (None: the defaults); periodic images follow the snapshot's settings and
        cell (:func:`energy.analysis.clashes.periodic_search`).

    Returns
    -------
    ClashCheck
        The :class:`~energy.analysis.clashes.ClashReport`, its residue pairs (worst first), the
        (n_residues,) int64 clash count per residue, and the frame index.
    """
    options = options or ClashOptions()
    settings = getattr(snapshot.result, "settings", None)
    periodic, _note = periodic_search(snapshot.frame, snapshot.system.n_atoms,
                                      True if settings is None else settings.use_periodic)
    rep = find_clashes(snapshot.system, snapshot.frame, replace(options, periodic=periodic))
    return ClashCheck(rep, rep.residue_pairs(snapshot.system), rep.residue_counts(snapshot.system),
                      int(snapshot.frame.index))


@dataclass(frozen=True)
class ElectrostaticsComparison:
    """Coulomb energy (kcal/mol) of the top inter-chain residue pairs under each model.

    ``pairs`` (n, 2) residue indices; ``coulomb[key]`` (n,) per model of
    :data:`ELECTROSTATICS_MODELS`; ``current`` (n,) the Coulomb entry under the window's own
    settings; ``cutoff`` the cutoff every model used (A).
    """

    pairs: np.ndarray
    labels: list
    coulomb: dict
    current: np.ndarray
    cutoff: float
    settings: dict

    @property
    def models(self):
        return [(k, title) for k, title, _ in ELECTROSTATICS_MODELS]


def top_inter_chain_pairs(snapshot, n: int = TOP_PAIRS) -> np.ndarray:
    """The ``n`` inter-chain residue pairs with the largest |Coulomb| entry in the snapshot.

    Parameters
    ----------
    snapshot : object
        One loaded system and its result: ``system`` (MolecularSystem), ``frame`` (Frame) and
        ``result`` (EnergyResult) attributes (the window's ``Snapshot``).
    n : int, optional
        How many pairs (default :data:`TOP_PAIRS`, 10); fewer when there are fewer.

    Returns
    -------
    (k, 2) intp
        Residue indices (i <= j) of each pair, largest |Coulomb| (kcal/mol) first.
    """
    rp = snapshot.result.residue_pairs
    chains = np.asarray([str(c).strip() for c in snapshot.system.residues.chain])
    inter = np.flatnonzero(chains[rp.pair_i] != chains[rp.pair_j])
    coul = np.abs(rp.values["coulomb"][inter])
    pick = inter[np.argsort(-coul, kind="stable")[:n]]
    return np.stack([rp.pair_i[pick], rp.pair_j[pick]], axis=1).astype(np.intp)


def electrostatics_comparison(snapshot, settings: EnergySettings, n: int = TOP_PAIRS,
                              pairs=None) -> ElectrostaticsComparison:
    """Each model's Coulomb energy of the top inter-chain pairs.

    The same atom pairs, the same cutoff (the current one, or :data:`COMPARISON_CUTOFF` when there
    is none), no switching, the engine's own pair forms
    (:func:`energy.decomposition.atom_pairs.residue_pair_atom_energies`).

    Parameters
    ----------
    snapshot : object
        One loaded system and its result: ``system`` (MolecularSystem), ``frame`` (Frame) and
        ``result`` (EnergyResult) attributes (the window's ``Snapshot``).
    settings : EnergySettings
        The current settings (cutoff and the other options are kept; each model changes the
        electrostatics and the dielectric).
    n : int, optional
        Number of top pairs when ``pairs`` is not given (default 10).
    pairs : (k, 2) integer or None, optional
        Residue pairs to compare; None (default) takes :func:`top_inter_chain_pairs`.

    Returns
    -------
    ElectrostaticsComparison
        ``coulomb[key]`` (k,) float64 kcal/mol per model of :data:`ELECTROSTATICS_MODELS`,
        ``current`` (k,) float64 kcal/mol the Coulomb entry of the snapshot's own result,
        ``cutoff`` (A), ``settings`` the description of each model's settings.
    """
    pairs = top_inter_chain_pairs(snapshot, n) if pairs is None else np.asarray(pairs, np.intp)
    cutoff = settings.cutoff_angstrom or COMPARISON_CUTOFF
    base = replace(settings, cutoff_angstrom=cutoff, switch_angstrom=None)
    system, frame = snapshot.system, snapshot.frame
    out, used = {}, {}
    for key, _title, changes in ELECTROSTATICS_MODELS:
        s = replace(base, **changes)
        used[key] = s.describe()
        out[key] = np.array([float(residue_pair_atom_energies(system, frame, s, int(i), int(j)).coulomb.sum())
                             for i, j in pairs])
    rp = snapshot.result.residue_pairs
    current = np.array([rp.values["coulomb"][rp.lookup(int(i), int(j))] for i, j in pairs]) \
        if len(pairs) else np.zeros(0)
    lab = system.residues.label
    labels = [f"{lab(int(i))} – {lab(int(j))}" for i, j in pairs]
    return ElectrostaticsComparison(pairs, labels, out, current, float(cutoff), used)
