"""The GROMACS route (.top + .gro) against OpenMM 8.6's GromacsTopFile and the Amber original.

Input: MDAnalysisTests' ``parmed_ala2_solv.parm7`` + ``.rst7`` (alanine dipeptide in a water box)
written as a GROMACS .top/.gro by ParmEd (a general-purpose conversion library; the version is
recorded in the test's output below), with the atom types and molecules moved into an ``.itp``
that the .top ``#include``s.  References: OpenMM's ``GromacsTopFile.createSystem`` on the same
files, per force group (tests/openmm_terms.py), and the Amber topology itself (OpenMM's
``AmberPrmtopFile``, through our Amber route) at the .gro's coordinates.  Agreement rule: 1e-4
relative or 1e-3 kcal/mol absolute.
"""
from __future__ import annotations

import MDAnalysisTests.datafiles as mdat
import pytest
from openmm import app
from openmm_reference import assert_close
from openmm_terms import reference_terms

from energy.decomposition.pipeline import compute
from energy.errors import StructureFileError
from energy.io.loaders import load_system
from energy.model.settings import EnergySettings
from energy.model.system import Frame

parmed = pytest.importorskip("parmed")  # in the test extras (pyproject.toml)


@pytest.fixture(scope="module")
def gromacs_files(tmp_path_factory):
    """(.top, .gro, folder of the included .itp) written by ParmEd from the Amber water box."""
    folder = tmp_path_factory.mktemp("gmx")
    structure = parmed.load_file(mdat.PRM7_ala2, xyz=mdat.RST7_ala2)
    top, gro = folder / "ala2.top", folder / "ala2.gro"
    structure.save(str(top), format="gromacs", parameters="inline", overwrite=True)
    structure.save(str(gro), overwrite=True)
    text = top.read_text()
    start, end = text.index("[ atomtypes ]"), text.index("[ system ]")
    include_dir = folder / "forcefield"
    include_dir.mkdir()
    (include_dir / "ala2_molecules.itp").write_text(text[start:end])
    top.write_text(text[:start] + '#include "ala2_molecules.itp"\n\n' + text[end:])
    print(f"ParmEd {parmed.__version__} wrote {top}")
    return str(top), str(gro), str(include_dir)


def _compare(ours, ref, what):
    it = ours.interactions
    assert_close(ours.totals["bond"], ref["bond"], f"{what}: bond")
    assert_close(ours.totals["angle"], ref["angle"], f"{what}: angle")
    assert_close(float(it["dihedrals"].sum() + it["periodic_impropers"].sum()), ref["torsion"], f"{what}: torsions")
    assert_close(ours.totals["coulomb"], ref["coulomb"], f"{what}: coulomb")
    assert_close(ours.totals["lj"], ref["lj"], f"{what}: lj")


def test_include_is_found_only_with_include_dir(gromacs_files):
    top, gro, include_dir = gromacs_files
    with pytest.raises(StructureFileError, match="--include-dir"):
        load_system(top, gro)
    loaded = load_system(top, gro, include_dirs=[include_dir])
    assert loaded.system.n_atoms == 3026 and loaded.frame.box is not None


def test_matches_openmm_gromacs_reader_and_the_amber_original(gromacs_files):
    top, gro, include_dir = gromacs_files
    loaded = load_system(top, gro, include_dirs=[include_dir])
    ours = compute(loaded.system, loaded.frame, EnergySettings())
    gro_file = app.GromacsGroFile(gro)
    top_file = app.GromacsTopFile(top, periodicBoxVectors=gro_file.getPeriodicBoxVectors(), includeDir=include_dir)
    omm = top_file.createSystem(nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False,
                                removeCMMotion=False)
    _compare(ours, reference_terms(omm, top_file.topology, loaded.frame.positions), "vs GromacsTopFile")
    amber = load_system(mdat.PRM7_ala2, mdat.RST7_ala2)
    same_coordinates = compute(amber.system, Frame(loaded.frame.positions, loaded.frame.box), EnergySettings())
    for term in ("bond", "angle", "dihedral", "improper", "coulomb", "lj"):
        assert_close(ours.totals[term], same_coordinates.totals[term], f"GROMACS vs Amber original: {term}")


def test_cli_scan_with_include_dir(gromacs_files, tmp_path):
    from app.cli.main import main
    top, gro, include_dir = gromacs_files
    out = tmp_path / "r.json"
    assert main(["scan", top, gro, "--include-dir", include_dir, "--cutoff", "10",
                 "--electrostatics", "reaction-field", "--json", str(out)]) == 0
    assert out.stat().st_size > 0


def test_amber_netcdf_restart_gives_the_ascii_restart_frame(tmp_path):
    """A NetCDF restart (.ncrst) written by ParmEd from parmed_ala2_solv.rst7 (MDAnalysisTests)
    gives the same positions and box as the ASCII restart (both read by OpenMM's AmberInpcrdFile)."""
    import warnings

    import numpy as np
    structure = parmed.load_file(mdat.PRM7_ala2, xyz=mdat.RST7_ala2)
    ncrst = tmp_path / "ala2.ncrst"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ParmEd notes that it falls back on scipy's NetCDF
        structure.save(str(ncrst), overwrite=True)
    binary = load_system(mdat.PRM7_ala2, str(ncrst))
    ascii_ = load_system(mdat.PRM7_ala2, mdat.RST7_ala2)
    np.testing.assert_allclose(binary.frame.positions, ascii_.frame.positions, atol=1e-6)
    np.testing.assert_allclose(binary.frame.box, ascii_.frame.box, atol=1e-6)
