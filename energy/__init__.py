"""Tessera's computation core: load a parameterised system, compute every energy term atom by
atom and decompose it per residue pair.  No Qt here.

Public API (see DEVELOPERS.md):
    load_system(...)            -> (MolecularSystem, Frame)      energy.io.loaders
    compute(system, frame, settings) -> EnergyResult              energy.pipeline
    EnergySettings, MolecularSystem, Frame, TERMS
"""
from .errors import (EnergyError, InputMismatchError, MissingParametersError, SelectionError,
                     SettingsError, StructureFileError, UnknownResidueError)
from .settings import EnergySettings
from .system import TERMS, Frame, MolecularSystem, ResidueTable, TermTable

__all__ = ["EnergyError", "InputMismatchError", "MissingParametersError", "SelectionError",
           "SettingsError", "StructureFileError", "UnknownResidueError", "EnergySettings",
           "TERMS", "Frame", "MolecularSystem", "ResidueTable", "TermTable"]
