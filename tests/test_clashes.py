"""Clash finder (energy/clashes.py, app/cli/overlaps.py, energy/vdw_radii.py).

External references:
* Bondi radii: A. Bondi, J. Phys. Chem. 68, 441-451 (1964), Table I (values written here from
  memory of the published table, independently of energy/vdw_radii.py).
* Two-atom and small-system cases: hand computations written out in each test.
* The bundled scenario: the planted clash pair is taken from samples/scenario/scenario.json when
  present and, independently, recomputed from OpenMM's own Amber 14 NonbondedForce parameters.
"""
from __future__ import annotations

import dataclasses
import functools
import itertools
import json
import math
from pathlib import Path

import numpy as np
import pytest
from tiny import make_system, random_system

from energy.analysis.clashes import ClashOptions, atom_radii, excluded_and_14, find_clashes, lj_energy
from energy.analysis.vdw_radii import BONDI_RADII, bondi_radius
from energy.errors import SettingsError
from energy.model.system import Frame
from energy.output.clash_report import clash_csv, clash_document, clash_table

ROOT = Path(__file__).resolve().parents[1]
SCENARIO = ROOT / "samples" / "scenario"


def two_atoms(r, elements=("C", "N"), rmin_half=(1.9, 1.8), eps=(0.1, 0.2), same_residue=False,
              **kw):
    system = make_system([0.0, 0.0], list(rmin_half), list(eps), [0, 0] if same_residue else [0, 1],
                         elements=list(elements), **kw)
    return system, Frame(np.array([[0.0, 0.0, 0.0], [r, 0.0, 0.0]]))


# ---------------------------------------------------------------------------------------------
# radii
# ---------------------------------------------------------------------------------------------

# Bondi (1964), Table I, angstrom (from memory of the published table).
PUBLISHED_BONDI = {"H": 1.20, "C": 1.70, "N": 1.55, "O": 1.52, "F": 1.47, "P": 1.80, "S": 1.80,
                   "Cl": 1.75, "Br": 1.85, "I": 1.98}


def test_bondi_radii_match_the_published_table():
    assert BONDI_RADII == PUBLISHED_BONDI
    for el, r in PUBLISHED_BONDI.items():
        assert bondi_radius(el.upper()) == r and bondi_radius(el.lower()) == r
    assert bondi_radius("D") == 1.20  # deuterium sized as hydrogen
    assert bondi_radius("Zn") is None


def test_forcefield_radius_is_half_rmin_and_zero_without_well_depth():
    system = make_system([0, 0, 0], [1.9, 1.8, 5.6], [0.1, 0.2, 0.0], [0, 1, 2],
                         elements=["C", "N", "H"])
    radii, fallback = atom_radii(system, "forcefield")
    assert radii.tolist() == pytest.approx([1.9, 1.8, 0.0])
    radii, _ = atom_radii(system, "bondi")
    assert radii.tolist() == [1.70, 1.55, 1.20]


def test_element_without_bondi_radius_falls_back_to_the_force_field():
    system, frame = two_atoms(2.0, elements=("Zn", "O"), rmin_half=(1.1, 1.7))
    rep = find_clashes(system, frame, ClashOptions(hbond=False))
    assert rep.fallback == ("Zn",)
    # contact = 1.1 (Zn, Rmin/2) + 1.52 (O, Bondi) = 2.62; overlap 0.62
    assert rep.overlap[0] == pytest.approx(0.62)
    assert "Zn" in clash_table(system, rep)


# ---------------------------------------------------------------------------------------------
# two-atom hand computations
# ---------------------------------------------------------------------------------------------

def test_two_atom_overlap_bondi_by_hand():
    # C + N: 1.70 + 1.55 = 3.25 A.  r = 2.80 -> overlap 0.45
    system, frame = two_atoms(2.80)
    rep = find_clashes(system, frame)
    assert len(rep) == 1
    assert rep.pairs[0].tolist() == [0, 1]
    assert rep.distance[0] == pytest.approx(2.80)
    assert rep.contact[0] == pytest.approx(3.25)
    assert rep.overlap[0] == pytest.approx(0.45)
    # LJ by hand: eps = sqrt(0.1 * 0.2), Rmin = 1.9 + 1.8 = 3.7
    eps, rmin, r = math.sqrt(0.02), 3.7, 2.80
    assert rep.lj[0] == pytest.approx(eps * ((rmin / r) ** 12 - 2 * (rmin / r) ** 6), rel=1e-12)


def test_threshold_is_inclusive_and_just_below_is_not_a_clash():
    # overlap exactly 0.40 (3.25 - 2.85) is flagged, 0.39 (r = 2.86) is not
    assert len(find_clashes(*two_atoms(2.85))) == 1
    assert len(find_clashes(*two_atoms(2.86))) == 0
    # a custom threshold
    assert len(find_clashes(*two_atoms(2.86), ClashOptions(overlap=0.3))) == 1


def test_two_atom_overlap_forcefield_by_hand():
    # contact = Rmin_ij = 1.9 + 1.8 = 3.7; r = 3.2 -> overlap 0.5
    system, frame = two_atoms(3.2)
    rep = find_clashes(system, frame, ClashOptions(radii="forcefield"))
    assert rep.contact[0] == pytest.approx(3.7)
    assert rep.overlap[0] == pytest.approx(0.5)
    # the same geometry is no clash with Bondi radii (3.25 - 3.2 = 0.05)
    assert len(find_clashes(system, frame)) == 0


def test_forcefield_contact_uses_the_nbfix_pair_rmin():
    system, frame = two_atoms(3.2)
    table = np.array(system.lj_rmin)
    table[0, 1] = table[1, 0] = 3.3  # an NBFIX-like override of the pair: Rmin_ij 3.3, not 3.7
    nbfix = dataclasses.replace(system, lj_rmin=table)
    rep = find_clashes(nbfix, frame, ClashOptions(radii="forcefield", overlap=0.05))
    assert rep.contact[0] == pytest.approx(3.3)
    assert rep.overlap[0] == pytest.approx(0.1)
    eps = math.sqrt(0.02)
    assert rep.lj[0] == pytest.approx(eps * ((3.3 / 3.2) ** 12 - 2 * (3.3 / 3.2) ** 6))


def test_lj_energy_formula_and_minimum():
    # at r = Rmin the LJ is -eps (minimum); at r = Rmin / 2^(1/6) (sigma) it is 0
    assert lj_energy(3.7, 3.7, 0.2) == pytest.approx(-0.2)
    assert lj_energy(3.7 / 2 ** (1 / 6), 3.7, 0.2) == pytest.approx(0.0, abs=1e-12)
    assert lj_energy(1.0, 3.7, 0.0) == 0.0


def test_lj_threshold_criterion_by_hand():
    # LJ > 0 exactly inside sigma = Rmin / 2^(1/6) = 3.7 / 1.12246 = 3.2963 A
    sigma = 3.7 / 2 ** (1 / 6)
    opt = ClashOptions(overlap=None, lj_above=0.0)
    assert len(find_clashes(*two_atoms(sigma - 0.01), opt)) == 1
    assert len(find_clashes(*two_atoms(sigma + 0.01), opt)) == 0
    # LJ = 5 kcal/mol: solve eps (x^2 - 2x) = 5 for x = (Rmin/r)^6, x = 1 + sqrt(1 + 5/eps)
    eps = math.sqrt(0.02)
    r5 = 3.7 / (1 + math.sqrt(1 + 5 / eps)) ** (1 / 6)
    opt5 = ClashOptions(overlap=None, lj_above=5.0)
    assert len(find_clashes(*two_atoms(r5 - 0.001), opt5)) == 1
    assert len(find_clashes(*two_atoms(r5 + 0.001), opt5)) == 0
    # both criteria: r = 2.9 has overlap 0.35 (< 0.4) but LJ = 0.1414 * (1.276^12 - 2 * 1.276^6)
    # = 0.1414 * (18.61 - 8.63) = 1.41 kcal/mol > 1
    system, frame = two_atoms(2.9)
    assert float(lj_energy(2.9, 3.7, eps)) == pytest.approx(1.411, abs=2e-3)
    assert len(find_clashes(system, frame, ClashOptions(lj_above=1.0))) == 1
    assert len(find_clashes(system, frame, ClashOptions(lj_above=1.0, combine="all"))) == 0
    assert len(find_clashes(system, frame, ClashOptions(lj_above=2.0))) == 0


def test_negative_lj_threshold_and_no_criterion_are_rejected():
    with pytest.raises(SettingsError):
        ClashOptions(lj_above=-1.0)
    with pytest.raises(SettingsError):
        ClashOptions(overlap=None)
    with pytest.raises(SettingsError):
        ClashOptions(radii="table")


def test_hydrogens_only_in_include_hydrogens_mode():
    # C...H at 1.8 A: Bondi 1.70 + 1.20 = 2.90, overlap 1.10
    system, frame = two_atoms(1.8, elements=("C", "H"))
    assert len(find_clashes(system, frame)) == 0
    rep = find_clashes(system, frame, ClashOptions(include_hydrogens=True))
    assert len(rep) == 1 and rep.overlap[0] == pytest.approx(1.10)


# ---------------------------------------------------------------------------------------------
# exclusions
# ---------------------------------------------------------------------------------------------

def chain_of_four(d=1.0, with_exceptions=True, with_bonds=True):
    """Atoms 0-1-2-3 bonded in a row, all crowded (every pair overlaps with Bondi radii), plus a
    fifth unbonded atom 4 near atom 0 in another residue."""
    pos = np.array([[0, 0, 0], [d, 0, 0], [d, d, 0], [2 * d, d, 0], [0, -1.5, 0]], float)
    bonds = [(0, 1, 300.0, d), (1, 2, 300.0, d), (2, 3, 300.0, d)] if with_bonds else None
    exc = [(0, 1, 0, 0, 0), (1, 2, 0, 0, 0), (2, 3, 0, 0, 0), (0, 2, 0, 0, 0), (1, 3, 0, 0, 0),
           (0, 3, 0.1, 3.0, 0.05)] if with_exceptions else None
    system = make_system([0.0] * 5, [1.9] * 5, [0.1] * 5, [0, 0, 0, 0, 1], exceptions=exc,
                         bonds=bonds)
    return system, Frame(pos)


@pytest.mark.parametrize("with_exceptions,with_bonds", [(True, True), (True, False), (False, True)])
def test_12_and_13_pairs_never_count(with_exceptions, with_bonds):
    system, frame = chain_of_four(with_exceptions=with_exceptions, with_bonds=with_bonds)
    never = {(0, 1), (1, 2), (2, 3), (0, 2), (1, 3)}
    for opt in (ClashOptions(), ClashOptions(include_14=True), ClashOptions(radii="forcefield"),
                ClashOptions(overlap=None, lj_above=0.0, include_14=True)):
        found = {tuple(p) for p in find_clashes(system, frame, opt).pairs.tolist()}
        assert not found & never
        assert (0, 4) in found  # the non-bonded neighbour (1.5 A) is always a clash


def test_14_pairs_only_on_request_and_with_their_own_lj():
    system, frame = chain_of_four()
    # 0...3 at sqrt(4 + 1) = 2.236 A; C + C Bondi contact 3.40 -> overlap 1.164
    assert (0, 3) not in {tuple(p) for p in find_clashes(system, frame).pairs.tolist()}
    rep = find_clashes(system, frame, ClashOptions(include_14=True))
    k = [tuple(p) for p in rep.pairs.tolist()].index((0, 3))
    assert rep.is_14[k]
    assert rep.overlap[k] == pytest.approx(3.40 - math.sqrt(5))
    # LJ with the 1-4 values (Rmin 3.0, eps 0.05), not the ordinary ones (3.8, 0.1)
    r = math.sqrt(5)
    assert rep.lj[k] == pytest.approx(0.05 * ((3.0 / r) ** 12 - 2 * (3.0 / r) ** 6))
    ff = find_clashes(system, frame, ClashOptions(include_14=True, radii="forcefield"))
    k = [tuple(p) for p in ff.pairs.tolist()].index((0, 3))
    assert ff.contact[k] == pytest.approx(3.0)


def test_exclusion_sets_of_the_chain():
    system, _ = chain_of_four()
    excluded, ex14 = excluded_and_14(system)
    n = system.n_atoms
    assert sorted((int(k) // n, int(k) % n) for k in excluded) == [(0, 1), (0, 2), (1, 2), (1, 3), (2, 3)]
    assert [(int(k) // n, int(k) % n) for k in ex14] == [(0, 3)]


# ---------------------------------------------------------------------------------------------
# hydrogen-bonding pairs
# ---------------------------------------------------------------------------------------------

def donor_acceptor(r_no, with_h=True):
    """N-H donor (residue 0) and O acceptor (residue 1) on the x axis; H 1.01 A from N."""
    pos = [[0, 0, 0], [r_no, 0, 0]] + ([[1.01, 0, 0]] if with_h else [])
    elements = ["N", "O"] + (["H"] if with_h else [])
    n = len(pos)
    bonds = [(0, 2, 400.0, 1.01)] if with_h else None
    exc = [(0, 2, 0, 0, 0)] if with_h else None
    system = make_system([0.0] * n, [1.8, 1.7, 0.6][:n], [0.17, 0.21, 0.0157][:n],
                         [0, 1, 0][:n], elements=elements, bonds=bonds, exceptions=exc)
    return system, Frame(np.array(pos, float))


def test_hydrogen_bond_pair_measured_against_the_hbond_contact():
    # N...O at 2.6 A: Bondi 1.55 + 1.52 = 3.07 -> overlap 0.47 (a clash without the H-bond rule)
    system, frame = donor_acceptor(2.6)
    assert len(find_clashes(system, frame)) == 0
    rep = find_clashes(system, frame, ClashOptions(hbond=False))
    assert len(rep) == 1 and rep.overlap[0] == pytest.approx(0.47)
    # H-bond contact N...O 2.5 A: at 2.0 A the overlap is 0.5 and it is a clash again
    system, frame = donor_acceptor(2.0)
    rep = find_clashes(system, frame)
    assert len(rep) == 1 and rep.is_hbond[0] and rep.overlap[0] == pytest.approx(0.5)
    # H...O: 2.6 - 1.01 = 1.59 A, H-bond contact 1.5 (not 1.20 + 1.52): overlap -0.09, no clash
    rep = find_clashes(*donor_acceptor(2.6), ClashOptions(include_hydrogens=True))
    assert len(rep) == 0
    rep = find_clashes(*donor_acceptor(2.6), ClashOptions(include_hydrogens=True, hbond=False))
    assert {tuple(p) for p in rep.pairs.tolist()} == {(0, 1), (1, 2)}
    k = [tuple(p) for p in rep.pairs.tolist()].index((1, 2))
    assert rep.overlap[k] == pytest.approx(2.72 - 1.59)


def test_two_carbonyl_oxygens_get_no_hbond_allowance():
    # O...O at 2.6 with hydrogens present elsewhere: neither O is a donor -> a clash (3.04-2.6)
    pos = np.array([[0, 0, 0], [2.6, 0, 0], [10, 0, 0], [11, 0, 0]], float)
    system = make_system([0.0] * 4, [1.7, 1.7, 1.9, 0.6], [0.2, 0.2, 0.1, 0.01], [0, 1, 2, 2],
                         elements=["O", "O", "C", "H"], bonds=[(2, 3, 300.0, 1.0)],
                         exceptions=[(2, 3, 0, 0, 0)])
    rep = find_clashes(system, Frame(pos))
    assert len(rep) == 1 and not rep.is_hbond[0] and rep.overlap[0] == pytest.approx(0.44)


# ---------------------------------------------------------------------------------------------
# periodic search, ranking, aggregation, brute force
# ---------------------------------------------------------------------------------------------

def test_periodic_minimum_image_only_on_request():
    # atoms at x = 0.5 and x = 18.5 in a 20 A cubic box: 2.0 A apart through the wall
    system = make_system([0.0, 0.0], [1.9, 1.9], [0.1, 0.1], [0, 1])
    box = np.array([20.0, 20.0, 20.0, 90.0, 90.0, 90.0])
    frame = Frame(np.array([[0.5, 5, 5], [18.5, 5, 5]]), box=box)
    assert len(find_clashes(system, frame)) == 0
    rep = find_clashes(system, frame, ClashOptions(periodic=True))
    assert len(rep) == 1 and rep.distance[0] == pytest.approx(2.0) and rep.overlap[0] == pytest.approx(1.4)
    tric = Frame(frame.positions, box=np.array([20.0, 20.0, 20.0, 90.0, 90.0, 60.0]))
    with pytest.raises(SettingsError):
        find_clashes(system, tric, ClashOptions(periodic=True))
    with pytest.raises(SettingsError):
        find_clashes(system, Frame(frame.positions), ClashOptions(periodic=True))


def test_periodic_images_follow_the_cell_rules_of_every_computation():
    """`tessera overlaps` and the window's clash check decide periodic images as scan and compare
    do: on when the frame has a real periodic box (energy.model.cell.check_cell: the PDB's
    1 A placeholder cell of entries without a lattice is ignored, wwPDB format CRYST1 convention),
    off with --no-periodic; a triclinic cell is searched without images, with a note."""
    from energy.analysis.clashes import periodic_search
    pos = np.array([[0.5, 5, 5], [18.5, 5, 5]])
    cubic = Frame(pos, box=np.array([20.0, 20.0, 20.0, 90.0, 90.0, 90.0]))
    assert periodic_search(cubic, 2) == (True, "")
    assert periodic_search(cubic, 2, use_periodic=False) == (False, "")
    placeholder = Frame(pos, box=np.array([1.0, 1.0, 1.0, 90.0, 90.0, 90.0]))
    on, note = periodic_search(placeholder, 2)
    assert not on and note
    tric = Frame(pos, box=np.array([20.0, 20.0, 20.0, 90.0, 90.0, 60.0]))
    on, note = periodic_search(tric, 2)
    assert not on and "triclinic" in note
    assert periodic_search(Frame(pos), 2) == (False, "")


def test_overlaps_command_has_the_periodicity_flag_of_scan_and_compare(tmp_path):
    from app.cli.main import main
    common = [str(SCENARIO / "complex_clash.pdb"), "--quiet", "--json"]
    assert main(["overlaps", *common, str(tmp_path / "a.json"), "--no-periodic"]) == 0
    assert main(["overlaps", *common, str(tmp_path / "b.json")]) == 0
    a, b = (json.loads((tmp_path / n).read_text()) for n in ("a.json", "b.json"))
    # the scenario has no CRYST1: no images either way, so the two runs flag the same pairs
    assert a["settings"]["periodic"] is False and b["settings"]["periodic"] is False
    assert a["clashes"] == b["clashes"]


def test_ranking_overlap_then_lj_and_residue_aggregation():
    # residues 0, 1, 2.  Pairs (0,1) and (2,3) both at overlap 0.6 (C-C at 2.8), but (2,3) has
    # the larger eps and so the larger (repulsive) LJ; pair (0,4) overlap 1.0 (C-C at 2.4).
    pos = np.array([[0, 0, 0], [2.8, 0, 0], [0, 20, 0], [2.8, 20, 0], [0, -2.4, 0]], float)
    system = make_system([0.0] * 5, [1.9] * 5, [0.05, 0.05, 0.2, 0.2, 0.05], [0, 1, 2, 2, 1])
    rep = find_clashes(system, Frame(pos))
    assert [tuple(p) for p in rep.pairs.tolist()] == [(0, 4), (2, 3), (0, 1)]
    assert rep.overlap.tolist() == pytest.approx([1.0, 0.6, 0.6])
    assert rep.lj[1] > rep.lj[2] > 0
    # residue pairs: (0,1) holds clashes (0,4) and (0,1); (2,2) holds (2,3)
    agg = {(p.res_i, p.res_j): p for p in rep.residue_pairs(system)}
    assert set(agg) == {(0, 1), (2, 2)}
    assert agg[(0, 1)].count == 2 and agg[(0, 1)].worst_overlap == pytest.approx(1.0)
    assert agg[(0, 1)].lj_sum == pytest.approx(rep.lj[0] + rep.lj[2])
    assert agg[(2, 2)].count == 1 and agg[(2, 2)].lj_sum == pytest.approx(rep.lj[1])
    assert rep.residue_counts(system).tolist() == [2, 2, 1]


def brute_force(system, frame, threshold, heavy_only=True):
    """Every pair, no tree: Bondi contact, exclusions from the bond/exception lists."""
    x = frame.positions
    excl = {tuple(p) for p in system.exception_pairs.tolist()}
    out = set()
    for i, j in itertools.combinations(range(system.n_atoms), 2):
        if (i, j) in excl or (heavy_only and not (system.is_heavy[i] and system.is_heavy[j])):
            continue
        c = bondi_radius(system.elements[i]) + bondi_radius(system.elements[j])
        if c - np.linalg.norm(x[i] - x[j]) >= threshold:
            out.add((i, j))
    return out


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_tree_search_matches_brute_force(seed):
    rng = np.random.default_rng(seed)
    system, frame = random_system(rng, n_residues=10, box=12.0, n_exceptions=15)
    for thr in (0.0, 0.4, 0.8):
        rep = find_clashes(system, frame, ClashOptions(overlap=thr, hbond=False))
        assert {tuple(p) for p in rep.pairs.tolist()} == brute_force(system, frame, thr)
    assert len(find_clashes(system, frame, ClashOptions(overlap=0.0, hbond=False))) > 0


def test_outputs_json_csv_and_table():
    system, frame = chain_of_four()
    rep = find_clashes(system, frame)
    doc = clash_document(system, rep)
    json.dumps(doc, allow_nan=False)
    assert doc["n_clashes"] == len(rep) == len(doc["clashes"])
    assert doc["clashes"][0]["label_i"] == "A:UNK1 X0"
    lines = clash_csv(system, rep).splitlines()
    assert lines[0].startswith("rank,label_i,label_j") and len(lines) == len(rep) + 1
    assert "A:UNK1 X0" in clash_table(system, rep)


# ---------------------------------------------------------------------------------------------
# the bundled scenario
# ---------------------------------------------------------------------------------------------

@functools.cache
def openmm_clash_pair(pdb):
    """Independent of Tessera: the chain-A residue with the largest LJ to chain B's Trp, from
    OpenMM's Amber 14 NonbondedForce sigma/epsilon (Lorentz-Berthelot, inter-chain so no
    exceptions apply)."""
    import openmm.app as app
    p = app.PDBFile(str(pdb))
    ff = app.ForceField("amber14-all.xml")
    omm = ff.createSystem(p.topology, nonbondedMethod=app.NoCutoff, constraints=None)
    nb = [f for f in omm.getForces() if f.__class__.__name__ == "NonbondedForce"][0]
    sig = np.array([nb.getParticleParameters(i)[1]._value for i in range(omm.getNumParticles())]) * 10
    eps = np.array([nb.getParticleParameters(i)[2]._value for i in range(omm.getNumParticles())]) / 4.184
    x = np.array(p.positions.value_in_unit(p.positions.unit)) * 10  # nm -> A
    atoms = list(p.topology.atoms())
    trp = [r for r in p.topology.residues() if r.chain.id == "B" and r.name == "TRP"]
    assert len(trp) == 1
    w = [a.index for a in trp[0].atoms()]
    best = None
    for res in p.topology.residues():
        if res.chain.id != "A":
            continue
        a = [at.index for at in res.atoms()]
        r = np.linalg.norm(x[w][:, None] - x[a][None], axis=-1)
        s = (sig[w][:, None] + sig[a][None]) / 2
        e = np.sqrt(eps[w][:, None] * eps[a][None])
        lj = float(np.sum(4 * e * ((s / r) ** 12 - (s / r) ** 6)))
        if best is None or lj > best[0]:
            best = (lj, f"A:{res.name}{res.id}")
    assert atoms  # parsed
    return best[1], f"B:TRP{trp[0].id}"


@pytest.fixture(scope="module")
def scenario_systems():
    from energy.io.loaders import load_system
    return {name: load_system(SCENARIO / f"complex_{name}.pdb") for name in ("clash", "fixed")}


def test_scenario_planted_clash_is_ranked_first(scenario_systems):
    expected = set(openmm_clash_pair(str(SCENARIO / "complex_clash.pdb")))
    meta = SCENARIO / "scenario.json"
    if meta.exists():
        assert set(json.loads(meta.read_text())["clash"]) == expected
    loaded = scenario_systems["clash"]
    s = loaded.system
    for opt in (ClashOptions(), ClashOptions(include_hydrogens=True),
                ClashOptions(radii="forcefield"), ClashOptions(radii="forcefield", include_hydrogens=True)):
        rep = find_clashes(s, loaded.frame, opt)
        assert len(rep) > 0
        top = {s.residues.label(int(s.resindex[a])) for a in rep.pairs[0]}
        assert top == expected, (opt, top)
        worst_pair = rep.residue_pairs(s)[0]
        assert {s.residues.label(worst_pair.res_i), s.residues.label(worst_pair.res_j)} == expected


def test_scenario_fixed_variant_has_no_heavy_atom_clash(scenario_systems):
    loaded = scenario_systems["fixed"]
    assert len(find_clashes(loaded.system, loaded.frame)) == 0
    # and the planted pair itself is gone in every mode
    clash_pair = set(openmm_clash_pair(str(SCENARIO / "complex_clash.pdb")))
    s = loaded.system
    rep = find_clashes(s, loaded.frame, ClashOptions(include_hydrogens=True))
    for a, b in rep.pairs:
        assert {s.residues.label(int(s.resindex[a])), s.residues.label(int(s.resindex[b]))} != clash_pair


def test_cli_clashes_writes_json_and_csv(tmp_path, capsys):
    from app.cli.main import main
    out_json, out_csv = tmp_path / "c.json", tmp_path / "c.csv"
    rc = main(["overlaps", str(SCENARIO / "complex_clash.pdb"), "--json", str(out_json),
               "--csv", str(out_csv), "--top", "3"])
    assert rc == 0
    text = capsys.readouterr().out
    expected = set(openmm_clash_pair(str(SCENARIO / "complex_clash.pdb")))
    first_row = text.split("\n")[3]
    assert all(label in first_row for label in expected), first_row
    assert "exp-6" in text.split("\n")[2]
    doc = json.loads(out_json.read_text())
    assert doc["kind"] == "overlaps" and doc["n_clashes"] >= 1
    assert doc["residue_pairs"][0]["count"] >= 1
    assert out_csv.read_text().count("\n") == doc["n_clashes"] + 1
    assert "exp6" in out_csv.read_text().splitlines()[0].split(",")
    assert all(isinstance(c["exp6"], float) for c in doc["clashes"])
    assert not list(tmp_path.glob(".tessera-*"))  # no temporary files left behind


@pytest.mark.parametrize("argv,needle", [
    (["--overlap", "off"], "no clash criterion"),
    (["--periodic"], "unit cell"),
    (["--json", "/nonexistent-folder/x.json"], "output folder does not exist"),
])
def test_cli_errors_are_one_line(argv, needle, capsys):
    from app.cli.main import main
    rc = main(["overlaps", str(SCENARIO / "complex_clash.pdb"), *argv])
    err = capsys.readouterr().err
    assert rc == 2 and needle in err and err.count("\n") == 1


def test_cli_rejects_negative_lj_threshold(capsys):
    from app.cli.main import main
    with pytest.raises(SystemExit):
        main(["overlaps", str(SCENARIO / "complex_clash.pdb"), "--lj-above", "-3"])
    assert ">= 0" in capsys.readouterr().err


def test_scenario_pair_lj_agrees_with_the_engine_pair_curve(scenario_systems):
    """The clash list's LJ column is the engine's own pair LJ (energy.decomposition.atom_pairs.pair_curve, default
    settings: LJ 12-6, no cutoff) at the pair's distance, for ordinary and 1-4 pairs."""
    from energy.decomposition.atom_pairs import pair_curve
    loaded = scenario_systems["clash"]
    rep = find_clashes(loaded.system, loaded.frame, ClashOptions(include_hydrogens=True, include_14=True))
    assert rep.is_14.any() and (~rep.is_14).any()
    rows = list(range(10)) + list(np.flatnonzero(rep.is_14)[:10])
    for k in rows:
        a, b = (int(v) for v in rep.pairs[k])
        _, lj, _ = pair_curve(loaded.system, None, a, b, [rep.distance[k]])
        assert rep.lj[k] == pytest.approx(float(lj[0]), rel=1e-9, abs=1e-9)


# ---------------------------------------------------------------------------------------------
# the exp-6 column
# ---------------------------------------------------------------------------------------------

def test_exp6_column_by_hand_at_the_minimum_and_in_the_overlap():
    """Exp-6 with the LJ minimum: E(Rmin) = eps/(a-6) (6 - a) = -eps (analytic, docs/physics.md).
    Deep inside the wall exp-6 is far softer than LJ 12-6."""
    from energy.analysis.clashes import exp6_energy
    from energy.model.settings import EXP6_ALPHA_MATCHING_LJ as a
    rmin, eps = 3.7, 0.15
    assert exp6_energy([rmin], [rmin], [eps])[0] == pytest.approx(-eps, rel=1e-12)
    r = 2.4
    # by hand: eps/(a-6) [6 exp(a(1 - r/Rmin)) - a (Rmin/r)^6]
    x = r / rmin
    by_hand = eps / (a - 6) * (6 * math.exp(a * (1 - x)) - a / x ** 6)
    assert exp6_energy([r], [rmin], [eps])[0] == pytest.approx(by_hand, rel=1e-12)
    assert by_hand < float(lj_energy(r, rmin, eps))
    system, frame = two_atoms(2.4)
    rep = find_clashes(system, frame, ClashOptions(hbond=False))
    # C/N pair: Rmin = 1.9 + 1.8 = 3.7 A, eps = sqrt(0.1 * 0.2) (Lorentz-Berthelot in tiny.py)
    e_by_hand = math.sqrt(0.1 * 0.2) / (a - 6) * (6 * math.exp(a * (1 - x)) - a / x ** 6)
    assert rep.exp6[0] == pytest.approx(e_by_hand, rel=1e-9)
    assert rep.exp6[0] < rep.lj[0]
    softer = find_clashes(system, frame, ClashOptions(hbond=False, exp6_alpha=10.0))
    assert softer.exp6[0] < rep.exp6[0]      # smaller alpha: a softer wall
    assert softer.lj[0] == rep.lj[0]          # the LJ column does not depend on alpha
    with pytest.raises(SettingsError, match="exceed 7"):
        ClashOptions(exp6_alpha=6.5)


def test_scenario_exp6_column_agrees_with_the_engine_exp6_curve(scenario_systems):
    """The exp-6 column is the engine's exp-6 pair form (pair_curve with vdw='exp6')."""
    from energy.decomposition.atom_pairs import pair_curve
    from energy.model.settings import EnergySettings
    loaded = scenario_systems["clash"]
    rep = find_clashes(loaded.system, loaded.frame, ClashOptions(include_hydrogens=True))
    exp6 = EnergySettings(vdw="exp6")
    for k in range(min(10, len(rep))):
        a, b = (int(v) for v in rep.pairs[k])
        _, e, _ = pair_curve(loaded.system, exp6, a, b, [rep.distance[k]])
        assert rep.exp6[k] == pytest.approx(float(e[0]), rel=1e-9, abs=1e-9)
    worst = rep.residue_pairs(loaded.system)[0]
    rows = [k for k in range(len(rep))
            if {int(loaded.system.resindex[x]) for x in rep.pairs[k]} == {worst.res_i, worst.res_j}]
    assert worst.exp6_sum == pytest.approx(float(rep.exp6[rows].sum()))
    assert worst.exp6_sum < worst.lj_sum


def test_cli_exp6_alpha_option(tmp_path):
    from app.cli.main import main
    out = {}
    for alpha in ("13.772", "10"):
        path = tmp_path / f"c{alpha}.json"
        assert main(["overlaps", str(SCENARIO / "complex_clash.pdb"), "--exp6-alpha", alpha,
                     "--json", str(path), "--quiet"]) == 0
        doc = json.loads(path.read_text())
        assert doc["settings"]["exp6_alpha"] == pytest.approx(float(alpha))
        out[alpha] = doc["clashes"][0]["exp6"]
    assert out["10"] < out["13.772"]
