"""Compute settings fitted to the input when the user has chosen none (app/state/defaults.py).

Inputs are real files: a solvated adenylate kinase in a triclinic box (MDAnalysisTests
``adk_oplsaa.pdb``), a crystal entry's asymmetric unit with its P 21 21 2 cell (MDAnalysisTests
``4E43.pdb``), OpenMM's solvated ``test.pdb``.  Cells and atom counts are read with MDAnalysis.
The density rule's reference, liquid water at 0.100 atoms/A^3, is from the CRC Handbook's
density of water (0.997 g/cm^3 at 25 C).
"""
from __future__ import annotations

from pathlib import Path

import MDAnalysis as mda
import numpy as np
import openmm
import pytest
from MDAnalysisTests.datafiles import PDB, PDB_full

from app.state.defaults import LARGE_WITHOUT_CELL, WATER_ATOM_DENSITY, is_filled_box, settings_for_input
from energy.model.settings import EnergySettings


def _cell(path):
    u = mda.Universe(str(path))
    return u.atoms.n_atoms, u.dimensions


def test_water_density_constant():
    # 0.997 g/cm^3 / 18.015 g/mol * 6.02214e23 /mol * 3 atoms, per A^3 (1 cm^3 = 1e24 A^3)
    assert WATER_ATOM_DENSITY == pytest.approx(0.997 / 18.015 * 6.02214e23 * 3 / 1e24, rel=3e-3)


@pytest.mark.parametrize("path", [PDB, Path(openmm.__file__).parent / "app" / "data" / "test.pdb"],
                         ids=["adk_oplsaa triclinic box", "openmm test.pdb"])
def test_solvated_boxes_get_a_cutoff_with_reaction_field(path):
    n, box = _cell(path)
    assert is_filled_box(box, n)
    settings, note = settings_for_input(n, box)
    assert settings.cutoff_angstrom == 12.0 and settings.electrostatics == "reaction-field"
    assert settings.use_periodic
    assert f"{n:,} atoms" in note and "12 Å" in note


def test_crystal_asymmetric_unit_keeps_all_pairs():
    n, box = _cell(PDB_full)          # 4E43: one asymmetric unit in a P 21 21 2 cell
    assert not is_filled_box(box, n)
    assert settings_for_input(n, box) == (EnergySettings(), "")


def test_placeholder_cell_and_no_cell():
    box = np.array([1.0, 1.0, 1.0, 90.0, 90.0, 90.0])   # the PDB's placeholder for NMR/cryo-EM
    assert settings_for_input(2000, box) == (EnergySettings(), "")
    assert settings_for_input(2000, None) == (EnergySettings(), "")


def test_large_system_without_cell_gets_a_cutoff_and_says_how_to_undo_it():
    settings, note = settings_for_input(LARGE_WITHOUT_CELL + 1, None)
    assert settings.cutoff_angstrom == 12.0 and "untick Cutoff" in note


def test_settings_with_a_cutoff_are_left_alone():
    n, box = _cell(PDB)
    chosen = EnergySettings(cutoff_angstrom=9.0)
    assert settings_for_input(n, box, chosen) == (chosen, "")
