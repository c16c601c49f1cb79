"""Scenario fact with implicit solvent: the salt bridge A:GLU7 - B:LYS15 of complex_fixed.pdb.

Physics fact checked (no project number involved): with a generalized Born solvent the pair's
effective electrostatics (Coulomb + polar solvation) is much smaller in magnitude than its
in-vacuo Coulomb (continuum electrostatics: screening by eps_out = 78.5 and desolvation, e.g.
Onufriev, Bashford & Case 2004).  The numbers recorded in samples/scenario/scenario.json are a
regression snapshot of this engine (printed by it), compared to 0.01 kcal/mol.
"""
from __future__ import annotations

import json
import os

import pytest
from data import SCENARIO_DIR, SCENARIO_FIXED_PDB
from test_scenario import _index

from energy.decomposition.pipeline import compute
from energy.io.loaders import load_system
from energy.model.settings import EnergySettings

FACTS = json.load(open(os.path.join(SCENARIO_DIR, "scenario.json")))["implicit_solvent_salt_bridge_kcal_mol"]


@pytest.fixture(scope="module")
def fixed():
    loaded = load_system(SCENARIO_FIXED_PDB)
    return loaded.system, loaded.frame


@pytest.mark.parametrize("key,settings", [
    ("obc2", EnergySettings(implicit_solvent="obc2")),
    ("obc2_salt_0.15M", EnergySettings(implicit_solvent="obc2", salt_molar=0.15)),
    ("gbn2", EnergySettings(implicit_solvent="gbn2")),
    ("gbn2_salt_0.15M", EnergySettings(implicit_solvent="gbn2", salt_molar=0.15)),
])
def test_salt_bridge_effective_electrostatics(fixed, key, settings):
    system, frame = fixed
    pair = tuple(sorted(_index(system, lab) for lab in FACTS["pair"]))
    vacuum = compute(system, frame).residue_pairs
    gb = compute(system, frame, settings).residue_pairs
    k_vac, k_gb = vacuum.lookup(*pair), gb.lookup(*pair)
    coulomb = vacuum.values["coulomb"][k_vac]
    effective = gb.column("effective_electrostatics")[k_gb]
    assert coulomb < -50.0
    assert effective < 0.0 and abs(effective) < 0.25 * abs(coulomb)   # the physics fact
    # regression snapshot (this engine's output, recorded in scenario.json)
    assert coulomb == pytest.approx(FACTS["in_vacuo_coulomb"], abs=0.01)
    assert effective == pytest.approx(FACTS[key]["effective_electrostatics"], abs=0.01)
    assert gb.values["solvation_polar"][k_gb] == pytest.approx(FACTS[key]["solvation_polar"], abs=0.01)
