"""Tessera's computation core: load a parameterised system, compute every energy term atom by
atom and decompose it per residue pair.  No Qt here.

Public API (see DEVELOPERS.md):
    load_system(...)            -> (MolecularSystem, Frame)      energy.io.loaders
    compute(system, frame, settings) -> EnergyResult              energy.decomposition.pipeline
    EnergySettings, MolecularSystem, Frame, TERMS (the term registry: energy.terms.registry)
    prepare_kernels(settings)   load the compiled kernels once per process
"""
from energy.errors import (
    EnergyError,
    InputMismatchError,
    MissingParametersError,
    SelectionError,
    SettingsError,
    StructureFileError,
    UnknownResidueError,
    UnsupportedForceError,
)
from energy.model.settings import EnergySettings
from energy.model.system import Frame, MolecularSystem, ResidueTable, TermTable
from energy.terms.registry import TERMS

__all__ = ["EnergyError", "InputMismatchError", "MissingParametersError", "SelectionError",
           "SettingsError", "StructureFileError", "UnknownResidueError", "UnsupportedForceError",
           "EnergySettings",
           "TERMS", "Frame", "prepare_kernels", "MolecularSystem", "ResidueTable", "TermTable"]


def prepare_kernels(settings: EnergySettings | None = None) -> None:
    """Load (or, the first time, compile) the engine's compiled kernels for ``settings``.

    A wrapper so that ``import energy`` itself stays light: the kernels pull in numba.
    See :func:`energy.warmup.prepare_kernels`.

    Parameters
    ----------
    settings : EnergySettings or None, optional
        Prepare only the kernels these settings use (with or without a cutoff); ``None``
        (the default) prepares all of them.
    """
    from energy.warmup import prepare_kernels as _prepare
    _prepare(settings)
