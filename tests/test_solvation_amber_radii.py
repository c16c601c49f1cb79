"""Implicit solvent on the Amber route: the radii (and, for OBC2, the screening factors) stored
in the topology, checked against OpenMM 8.6's ``AmberPrmtopFile.createSystem(implicitSolvent=...)``.

Files (MDAnalysisTests, open data): ``ache.prmtop`` + ``ache.mdcrd`` frame 0 (a 14-residue
protein fragment, 252 atoms; the file stores mbondi radii, which differ from the mbondi2/mbondi3
sets of our per-element default, so a route that ignored them would fail) and
``ace_mbondi3.parm7`` + ``ace_mbondi3.nc`` frame 0 (mbondi3 radii, 6 atoms) and
``parmed_ala2_solv.parm7`` + ``.rst7`` (alanine dipeptide in TIP3P water, 3026 atoms, mbondi3;
the cell is ignored, implicit solvent being non-periodic in both programs).  ache's mbondi radii
include 0.8 A hydroxyl hydrogens, outside the GBn2 neck tables: OpenMM refuses GBn2 there, and so
do we.  Per term (Coulomb, LJ,
bonded, polar and ACE nonpolar solvation) 1e-4 relative, without and with a cutoff, without and
with salt (OpenMM is given our Debye-Hueckel kappa).  Without salt OpenMM builds OBC2 as its
compiled GBSAOBCForce, with salt as a CustomGBForce: both are covered.
"""
from __future__ import annotations

import math

import numpy as np
import openmm
import pytest
from MDAnalysisTests.datafiles import PRM, PRMNCRST, TRJ, PRM7_ala2, RST7_ala2
from openmm import app, unit

from energy.decomposition.pipeline import compute
from energy.errors import SettingsError
from energy.io.openmm_routes import load_amber
from energy.model.settings import EnergySettings
from energy.terms.born_parameters import born_parameters

KCAL = unit.kilocalorie_per_mole
TERMS = ("bond", "angle", "torsions", "coulomb", "lj", "solvation_polar", "solvation_nonpolar")
FILES = {"ache": (PRM, TRJ), "ace_mbondi3": (PRMNCRST, PRMNCRST.replace(".parm7", ".nc")),
         "ala2_solv": (PRM7_ala2, RST7_ala2)}


def _close(ours, ref, label):
    assert math.isclose(ours, ref, rel_tol=1e-4, abs_tol=1e-3), f"{label}: ours {ours!r}, OpenMM {ref!r}"


def _energies(omm_system, positions_angstrom):
    """kcal/mol per force group of ``omm_system`` (Reference platform)."""
    for g, f in enumerate(omm_system.getForces()):
        f.setForceGroup(g)
    ctx = openmm.Context(omm_system, openmm.VerletIntegrator(1.0), openmm.Platform.getPlatformByName("Reference"))
    ctx.setPositions(np.asarray(positions_angstrom) / 10.0)
    return {type(f).__name__ if not isinstance(f, (openmm.CustomGBForce, openmm.GBSAOBCForce)) else "gb":
            ctx.getState(getEnergy=True, groups={g}).getPotentialEnergy().value_in_unit(KCAL)
            for g, f in enumerate(omm_system.getForces())}


def _reference(prmtop_path, positions, model, cutoff, kappa_per_nm):
    """OpenMM's per-term energies of AmberPrmtopFile.createSystem(implicitSolvent=model)."""
    prmtop = app.AmberPrmtopFile(prmtop_path)
    kw = dict(implicitSolvent={"obc2": app.OBC2, "gbn2": app.GBn2}[model], constraints=None,
              implicitSolventKappa=kappa_per_nm / unit.nanometer, removeCMMotion=False, rigidWater=False,
              nonbondedMethod=app.NoCutoff if cutoff is None else app.CutoffNonPeriodic)
    if cutoff is not None:
        kw["nonbondedCutoff"] = cutoff / 10.0 * unit.nanometer
    with pytest.warns(UserWarning, match="Non-optimal GB parameters") if prmtop_path == PRM else _no_warning():
        ace = prmtop.createSystem(sasaMethod="ACE", **kw)
    polar = prmtop.createSystem(sasaMethod=None, **kw)
    e_ace, e_polar = _energies(ace, positions), _energies(polar, positions)
    nb = next(f for f in polar.getForces() if isinstance(f, openmm.NonbondedForce))
    for i in range(nb.getNumParticles()):
        q, s, e = nb.getParticleParameters(i)
        nb.setParticleParameters(i, 0.0, s, e)
    for k in range(nb.getNumExceptions()):
        i, j, qq, s, e = nb.getExceptionParameters(k)
        nb.setExceptionParameters(k, i, j, 0.0, s, e)
    lj = _energies(polar, positions)["NonbondedForce"]
    return {"bond": e_polar["HarmonicBondForce"], "angle": e_polar["HarmonicAngleForce"],
            "torsions": e_polar["PeriodicTorsionForce"], "lj": lj, "coulomb": e_polar["NonbondedForce"] - lj,
            "solvation_polar": e_polar["gb"], "solvation_nonpolar": e_ace["gb"] - e_polar["gb"],
            "gb_force": type(next(f for f in ace.getForces()
                                  if isinstance(f, (openmm.CustomGBForce, openmm.GBSAOBCForce)))).__name__}


class _no_warning:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False


def _file_column(path, flag):
    lines = open(path).read().splitlines()
    start = lines.index(next(line for line in lines if line.startswith(f"%FLAG {flag}"))) + 2
    stop = next((k for k in range(start, len(lines)) if lines[k].startswith("%FLAG")), len(lines))
    return np.array(" ".join(lines[start:stop]).split(), float)


@pytest.mark.parametrize("name", sorted(FILES))
def test_amber_route_reads_the_stored_radii(name):
    """The loader keeps the file's %FLAG RADII and %FLAG SCREEN columns (read here as text), and
    the GB parameters use them: OBC2 both, GBn2 the radii only (its own screening factors)."""
    prmtop, coords = FILES[name]
    system, _ = load_amber(prmtop, coords)
    radii, screen = _file_column(prmtop, "RADII"), _file_column(prmtop, "SCREEN")
    np.testing.assert_array_equal(system.topology_gb_radius, radii)
    np.testing.assert_array_equal(system.topology_gb_screen, screen)
    obc2 = born_parameters(system, "obc2")
    np.testing.assert_array_equal(obc2.radius, radii)
    np.testing.assert_array_equal(obc2.screen, screen)
    if name == "ache":  # 0.8 A hydroxyl hydrogens: outside the GBn2 neck tables
        assert radii.min() == pytest.approx(0.8)
        with pytest.raises(SettingsError, match="atom 121 .*SER7 HG.* stored radius 0.8 A"):
            born_parameters(system, "gbn2")
    else:
        gbn2 = born_parameters(system, "gbn2")
        np.testing.assert_array_equal(gbn2.radius, radii)
        assert not np.array_equal(gbn2.screen, screen)  # GBn2's own factors, not the file's HCT set


@pytest.mark.parametrize("name", sorted(FILES))
@pytest.mark.parametrize("model", ["obc2", "gbn2"])
@pytest.mark.parametrize("cutoff,salt", [(None, 0.0), (None, 0.15), (10.0, 0.0), (10.0, 0.1)])
def test_amber_route_matches_amberprmtopfile(name, model, cutoff, salt):
    prmtop, coords = FILES[name]
    system, frame = load_amber(prmtop, coords)
    settings = EnergySettings(implicit_solvent=model, cutoff_angstrom=cutoff, salt_molar=salt, use_periodic=False)
    if name == "ache" and model == "gbn2":  # 0.8 A radii: both programs refuse
        with pytest.raises(SettingsError, match="GBn2 needs intrinsic radii of 1-2 A"):
            compute(system, frame, settings)
        with pytest.raises(ValueError, match="Radii must be between 1 and 2 Angstroms"):
            _reference(prmtop, frame.positions, model, cutoff, settings.kappa_per_angstrom * 10.0)
        return
    ours = compute(system, frame, settings).totals
    # OpenMM's PeriodicTorsionForce holds the proper and the improper torsions of the file
    ours["torsions"] = ours["dihedral"] + ours["improper"]
    ref = _reference(prmtop, frame.positions, model, cutoff, settings.kappa_per_angstrom * 10.0)
    if model == "obc2":  # the OpenMM route taken: compiled without salt, custom with it
        assert ref["gb_force"] == ("GBSAOBCForce" if salt == 0.0 else "CustomGBForce")
    for term in TERMS:
        _close(ours[term], ref[term], f"{name} {model} cutoff {cutoff} salt {salt}: {term}")
    assert abs(ours["solvation_polar"]) > 1.0 and ours["solvation_nonpolar"] > 0.1  # not vacuous
