"""Load the compiled (numba) kernels once per process, before the first timed computation.

numba caches machine code on disk (``cache=True``), but each process still spends a few hundred
milliseconds loading it at the first call of every kernel.  :func:`prepare_kernels` pays that cost
up front on a three-atom system, so that ``timings.compute`` measures the computation itself
(the ``prepare`` timing reports what the loading took).
"""
from __future__ import annotations

import dataclasses

import numpy as np

from energy._kernels.csr import mapped_pair_keys
from energy.analysis.pair_statistics import PairStatistics
from energy.decomposition.pipeline import compute
from energy.model.settings import EnergySettings
from energy.model.system import Frame, MolecularSystem, ResidueTable, TermTable
from energy.terms.nonbonded import KernelConstants, pair_energies

_prepared: set = set()


def _toy_system() -> tuple[MolecularSystem, Frame]:
    system = MolecularSystem(
        names=["A", "B", "C"], types=["t", "t", "t"], elements=["C", "O", "H"],
        charges=np.array([0.3, -0.4, 0.1]), resindex=np.array([0, 0, 1]),
        residues=ResidueTable(np.array(["A", "A"]), np.array([1, 2]), np.array(["UNK", "UNK"]),
                              np.array(["", ""])),
        lj_type=np.array([0, 0, 0]), lj_rmin=np.array([[3.4]]), lj_eps=np.array([[0.1]]),
        exception_pairs=np.array([[0, 1]]), exception_qq=np.array([0.0]),
        exception_rmin=np.array([0.0]), exception_eps=np.array([0.0]),
        bonds=TermTable(np.array([[0, 1]]), {"k": [300.0], "r0": [1.2]}),
        urey_bradley=TermTable.empty(3, "k", "s0"), angles=TermTable.empty(3, "k", "theta0"),
        dihedrals=TermTable.empty(4, "k", "periodicity", "phase"),
        impropers=TermTable.empty(4, "k", "psi0"),
        periodic_impropers=TermTable.empty(4, "k", "periodicity", "phase"),
        cmap=TermTable.empty(8, "map"))
    frame = Frame(np.array([[1.0, 1.0, 1.0], [2.2, 1.0, 1.0], [4.0, 3.0, 1.0]]),
                  np.array([30.0, 30.0, 30.0, 90.0, 90.0, 90.0]))
    return system, frame


def prepare_kernels(settings: EnergySettings | None = None) -> None:
    """Run the compiled kernels once on a toy system, loading (or compiling) their machine code.

    With ``settings``, only the kernels those settings use (with or without a cutoff); without,
    all of them (used once after installation to fill the cache), including the trajectory
    statistics kernels on read-only and writable columns. Kernels already prepared in this
    process are not run again.

    Parameters
    ----------
    settings : EnergySettings or None, optional
        Settings whose kernels to prepare (a cutoff or not, from ``settings.cutoff_angstrom``);
        ``None`` (the default) prepares every kernel.
    """
    global _prepared
    system, frame = _toy_system()
    wanted = {"all"} if settings is None else {"cutoff" if settings.cutoff_angstrom else "none"}
    todo = ({"none", "cutoff"} if "all" in wanted else wanted) - _prepared
    plain = None
    if "none" in todo:
        plain = compute(system, frame, EnergySettings())
        # implicit solvent: the Born-radius and GB pair kernels (one signature for every model)
        compute(system, frame, EnergySettings(implicit_solvent="obc2"))
    if "cutoff" in todo:
        compute(system, frame, EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field",
                                              switch_angstrom=8.0))
        compute(system, Frame(frame.positions), EnergySettings(cutoff_angstrom=10.0))
        # implicit solvent with a cutoff: the listed Born-radius and GB pair kernels
        compute(system, frame, EnergySettings(implicit_solvent="obc2", cutoff_angstrom=10.0))
    if "all" in wanted and "statistics" not in _prepared:  # trajectory statistics kernels

        pairs = (plain or compute(system, frame, EnergySettings())).residue_pairs
        # numba compiles a separate variant for read-only arrays: the results hold read-only
        # columns, tables built elsewhere (and the atom-pair listings of the window) writable.
        writable = dataclasses.replace(pairs, values={t: v.copy() for t, v in pairs.values.items()})
        stats, more = PairStatistics(system.n_residues, 0.0), PairStatistics(system.n_residues, 0.0)
        stats.add(0, pairs)
        more.add(1, writable)
        stats.merge(more)
        ones = np.ones(1)
        pair_energies(ones, ones, ones, ones, KernelConstants.from_settings(EnergySettings()).values)
        for dtype in (np.int32, np.int64):  # solvent blocks: tables computed here and read from files,
            for writable in (True, False):  # frozen (read-only: a numba type of its own) or not
                index = np.zeros(1, dtype)
                index.flags.writeable = writable
                mapped_pair_keys(index, index, np.zeros(1, np.intp), 1)
        todo = todo | {"statistics"}
    _prepared |= todo
