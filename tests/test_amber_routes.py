"""The Amber route (.prmtop/.parm7 + restart or trajectory frame) against OpenMM 8.6.

Inputs: Amber files shipped by MDAnalysisTests (open data):
* ``parmed_ala2_solv.parm7`` + ``.rst7``: alanine dipeptide in a periodic water box (orthorhombic);
* ``tz2.truncoct.parm7.bz2`` + ``tz2.truncoct.nc``: a peptide in a truncated octahedron
  (triclinic cell), first frame of the trajectory;
* ``ace_mbondi3.parm7`` + ``ace_mbondi3.nc``: a small molecule whose topology carries GB radii
  (mbondi3), no box;
* ``ache.prmtop`` + ``ache.mdcrd``: a trajectory without a box (the overlaps command).
References: OpenMM's ``AmberPrmtopFile.createSystem`` on the same files, per force group (no
cutoff; or periodic cutoff 10 A with reaction field, dielectric 78.5, no dispersion correction),
and an independent brute-force numpy sum over OpenMM's parameters for the residue pairs
(tests/openmm_terms.py).  Agreement rule: 1e-4 relative or 1e-3 kcal/mol absolute.
"""
from __future__ import annotations

import bz2
import os

import MDAnalysisTests.datafiles as mdat
import numpy as np
import pytest
from openmm import app
from openmm_reference import assert_close
from openmm_terms import assert_matrices_close, brute_force_residue_pairs, dense_pairs, reference_terms

from energy.decomposition.pipeline import compute
from energy.io.loaders import load_system
from energy.model.settings import EnergySettings

AMBER = os.path.join(os.path.dirname(mdat.__file__), "data", "Amber")


def _amber_table(a, b):  # the Amber reader's "(a/r6)^2-b/r6": A = acoef^2, B = bcoef
    return a ** 2, b


@pytest.fixture(scope="module")
def truncoct(tmp_path_factory):
    folder = tmp_path_factory.mktemp("tz2")
    parm = folder / "tz2.truncoct.parm7"
    parm.write_bytes(bz2.decompress(open(os.path.join(AMBER, "tz2.truncoct.parm7.bz2"), "rb").read()))
    return str(parm), mdat.NCDFtruncoct


CASES = {
    "water box": (mdat.PRM7_ala2, mdat.RST7_ala2),
    "GB radii": (os.path.join(AMBER, "ace_mbondi3.parm7"), os.path.join(AMBER, "ace_mbondi3.nc")),
}


def _files(case, truncoct):
    return truncoct if case == "truncated octahedron" else CASES[case]


def _reference_system(prmtop):
    top = app.AmberPrmtopFile(prmtop)
    return top.createSystem(nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False,
                            removeCMMotion=False), top.topology


def _box_vectors(frame):
    """OpenMM's own reduced box vectors of the frame's cell (openmm.app.internal.unitcell)."""
    from openmm.app.internal.unitcell import computePeriodicBoxVectors
    a, b, c, alpha, beta, gamma = frame.box
    return computePeriodicBoxVectors(a / 10, b / 10, c / 10, np.radians(alpha), np.radians(beta),
                                     np.radians(gamma))


def _compare(ours, ref):
    it = ours.interactions
    assert_close(ours.totals["bond"], ref["bond"], "bond")
    assert_close(ours.totals["urey_bradley"], ref["urey_bradley"], "Urey-Bradley")
    assert_close(ours.totals["angle"], ref["angle"], "angle")
    assert_close(float(it["dihedrals"].sum() + it["periodic_impropers"].sum()), ref["torsion"], "torsions")
    assert_close(ours.totals["coulomb"], ref["coulomb"], "coulomb")
    assert_close(ours.totals["lj"], ref["lj"], "lj")


@pytest.mark.parametrize("case", ["water box", "truncated octahedron", "GB radii"])
def test_every_term_matches_openmm_without_cutoff(case, truncoct):
    prmtop, coords = _files(case, truncoct)
    loaded = load_system(prmtop, coords)
    omm, top = _reference_system(prmtop)
    ours = compute(loaded.system, loaded.frame, EnergySettings())
    _compare(ours, reference_terms(omm, top, loaded.frame.positions))
    assert (loaded.frame.box is None) == (case == "GB radii")


@pytest.mark.parametrize("case", ["water box", "truncated octahedron"])
def test_every_term_matches_openmm_periodic_reaction_field(case, truncoct):
    prmtop, coords = _files(case, truncoct)
    loaded = load_system(prmtop, coords)
    omm, top = _reference_system(prmtop)
    settings = EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field")
    ours = compute(loaded.system, loaded.frame, settings)
    assert ours.periodic
    ref = reference_terms(omm, top, loaded.frame.positions, cutoff_nm=1.0,
                          box_vectors=_box_vectors(loaded.frame))
    _compare(ours, ref)


def test_truncated_octahedron_cell_is_read(truncoct):
    """The cell of tz2.truncoct.nc: a = b = c, all angles 109.47 degrees (the truncated
    octahedron's, arccos(-1/3), a fact of the cell's geometry)."""
    box = load_system(*truncoct).frame.box
    assert np.allclose(box[3:], np.degrees(np.arccos(-1 / 3)), atol=1e-3)
    assert np.allclose(box[:3], box[0])


@pytest.mark.parametrize("case", ["water box", "GB radii"])
def test_residue_pairs_match_brute_force(case):
    prmtop, coords = CASES[case]
    loaded = load_system(prmtop, coords)
    omm, top = _reference_system(prmtop)
    ours = compute(loaded.system, loaded.frame, EnergySettings())
    coul, lj = brute_force_residue_pairs(omm, top, loaded.frame.positions, _amber_table)
    assert_matrices_close(dense_pairs(ours, "coulomb"), coul, f"{case}: coulomb residue pairs")
    assert_matrices_close(dense_pairs(ours, "lj"), lj, f"{case}: lj residue pairs")


def test_trajectory_frame_and_overlaps_command(tmp_path, capsys):
    """ache.prmtop with frame 3 of ache.mdcrd: the frame's coordinates are MDAnalysis's, and the
    scan and overlaps commands run on the route."""
    import MDAnalysis as mda

    from app.cli.main import main
    loaded = load_system(mdat.PRM, mdat.TRJ, frame=3)
    u = mda.Universe(mdat.PRM, mdat.TRJ)
    u.trajectory[3]
    np.testing.assert_allclose(loaded.frame.positions, u.atoms.positions, atol=1e-3)
    omm, top = _reference_system(mdat.PRM)
    _compare(compute(loaded.system, loaded.frame, EnergySettings()),
             reference_terms(omm, top, loaded.frame.positions))
    assert main(["overlaps", mdat.PRM, mdat.TRJ, "--frame", "3"]) == 0
    assert main(["scan", mdat.PRM, mdat.TRJ, "--json", str(tmp_path / "r.json")]) == 0
    assert (tmp_path / "r.json").stat().st_size > 0
    # the trajectory route: frames 0..2, frame 2's totals equal the single-frame computation
    import json
    assert main(["scan", mdat.PRM, mdat.TRJ, "--frames", "0:3", "--json", str(tmp_path / "t.json")]) == 0
    frames = json.loads((tmp_path / "t.json").read_text())
    frame2 = load_system(mdat.PRM, mdat.TRJ, frame=2)
    single = compute(frame2.system, frame2.frame, EnergySettings())
    assert_close(_frame_total(frames, 2, "coulomb"), single.totals["coulomb"], "frame 2 coulomb")


def test_missing_coordinates_and_tpr_give_one_line(tmp_path):
    from energy.errors import StructureFileError
    with pytest.raises(StructureFileError, match="holds no coordinates.*inpcrd"):
        load_system(mdat.PRM)
    tpr = tmp_path / "run.tpr"
    tpr.write_bytes(b"\x00\x01")
    with pytest.raises(StructureFileError, match=r"\.tpr.*pass the \.top and the \.gro"):
        load_system(str(tpr))


def test_ff19sb_opc_topology_sites_are_placed_as_openmm_places_them(tmp_path):
    """MDAnalysisTests' ala.ff19SB.OPC.parm7 (ff19SB with CMAP, OPC water with its extra point):
    AmberPrmtopFile's virtual sites become the engine's, and for any parent positions the sites
    sit where OpenMM's computeVirtualSites puts them."""
    from openmm_terms import openmm_site_positions

    from energy.io.openmm_system import system_from_openmm
    parm = tmp_path / "ala.ff19SB.OPC.parm7"
    parm.write_bytes(bz2.decompress(open(os.path.join(AMBER, "ala.ff19SB.OPC.parm7.bz2"), "rb").read()))
    omm, top = _reference_system(str(parm))
    system = system_from_openmm(omm, top)
    n_sites = sum(omm.isVirtualSite(i) for i in range(omm.getNumParticles()))
    assert n_sites > 0 and len(system.virtual_sites) == n_sites and len(system.cmap) > 0
    x = np.random.default_rng(3).uniform(0, 20, (system.n_atoms, 3))
    np.testing.assert_allclose(system.virtual_sites.place(x), openmm_site_positions(omm, x), atol=1e-6)


def _frame_total(document, index, term):
    """A term's total of frame ``index`` in the trajectory JSON (``frames`` and ``per_frame_totals``)."""
    return document["per_frame_totals"][term][document["frames"].index(index)]
