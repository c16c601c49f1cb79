"""Energies of the PSF + CHARMM-parameter route checked against OpenMM term by term.

Reference: OpenMM's own CHARMM reader (``openmm.app.CharmmPsfFile`` + ``CharmmParameterSet``,
``createSystem``), evaluated on the Reference platform with one force group per force; see
``tests/charmm_cases.py``.  Agreement required: 1e-4 relative or 1e-3 kcal/mol absolute.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from charmm_cases import invent_parameters, openmm_energies

from energy.decomposition import pipeline
from energy.io.charmm_params import read_charmm_parameters
from energy.io.charmm_system import build_charmm_system, load_psf_system, read_frame
from energy.io.charmm_write import write_parameters
from energy.io.psf import read_psf
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.terms.registry import TERMS

ROOT = Path(__file__).resolve().parents[1]
PEPTIDE = ROOT / "samples" / "peptide"
PEP_PSF, PEP_PRM, PEP_PDB = (PEPTIDE / "probe_peptide.psf", PEPTIDE / "probe_ff.prm",
                             PEPTIDE / "probe_peptide.pdb")


def assert_terms_agree(ours: dict, ref: dict, label: str):
    """Every term within 1e-4 relative or 1e-3 kcal/mol absolute of the OpenMM value."""
    bad = {t: (ours[t], ref[t]) for t in TERMS + ("total",)
           if not math.isclose(ours[t], ref[t], rel_tol=1e-4, abs_tol=1e-3)}
    assert not bad, f"{label}: terms disagree with OpenMM (ours, OpenMM): {bad}"


@pytest.fixture(scope="module")
def peptide():
    return load_psf_system(PEP_PSF, [PEP_PRM], PEP_PDB)


@pytest.mark.parametrize("cutoff", [None, 10.0])
def test_peptide_matches_openmm(peptide, cutoff):
    system, frame = peptide
    settings = (EnergySettings() if cutoff is None else
                EnergySettings(cutoff_angstrom=cutoff, electrostatics="reaction-field",
                               solvent_dielectric=78.5))
    ours = pipeline.compute(system, frame, settings).totals
    # Reference: OpenMM CharmmPsfFile/CharmmParameterSet, NoCutoff or CutoffNonPeriodic with
    # reactionFieldDielectric = our solvent dielectric.
    ref = openmm_energies(PEP_PSF, [PEP_PRM], frame.positions, cutoff=cutoff,
                          rf_dielectric=settings.solvent_dielectric)
    assert_terms_agree(ours, ref, f"probe peptide, cutoff {cutoff}")
    # every term of the sample is exercised (a zero here would make the check vacuous)
    assert all(abs(ref[t]) > 1e-2 for t in TERMS if not t.startswith("solvation")), ref


def test_peptide_periodic_box_matches_openmm(peptide):
    system, frame = peptide
    box = np.array([21.0, 22.0, 23.0, 90.0, 90.0, 90.0])
    boxed = Frame(positions=frame.positions, box=box)
    settings = EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field",
                              solvent_dielectric=40.0)
    ours = pipeline.compute(system, boxed, settings).totals
    # Reference: OpenMM CutoffPeriodic in the same orthorhombic box (minimum image).
    ref = openmm_energies(PEP_PSF, [PEP_PRM], frame.positions, cutoff=10.0, periodic=True,
                          rf_dielectric=40.0, box=box[:3])
    assert_terms_agree(ours, ref, "probe peptide, periodic box")


def test_peptide_via_stream_file_matches_openmm(peptide, tmp_path):
    """The same parameters wrapped in a stream file (RTF block skipped, param block read)."""
    text = PEP_PRM.read_text()
    masses = [ln for ln in text.splitlines() if ln.startswith("MASS")]
    stream = tmp_path / "probe.str"
    stream.write_text("* probe stream\n*\nread rtf card append\n* rtf\n*\n36 1\n"
                      + "\n".join(masses) + "\nRESI FOO 0.0\nATOM C1 QC 0.0\nEND\n\n"
                      "read param card flex append\n* params\n*\n"
                      + "\n".join(ln for ln in text.splitlines() if ln.strip() != "END")
                      + "\nEND\n\nreturn\n")
    system = build_charmm_system(read_psf(PEP_PSF), read_charmm_parameters([stream]))
    ours = pipeline.compute(system, peptide[1], EnergySettings()).totals
    ref = openmm_energies(PEP_PSF, [stream], peptide[1].positions)  # OpenMM reads the .str
    assert_terms_agree(ours, ref, "probe peptide from a stream file")


# --- an open dataset: MDAnalysisTests' adenylate kinase PSF (numeric types) + DCD frame ----
@pytest.fixture(scope="module")
def adk(tmp_path_factory):
    from MDAnalysisTests.datafiles import DCD, PSF  # adk.psf, adk_dims.dcd

    psf = read_psf(PSF)
    frame = read_frame(DCD, psf.n_atoms, psf.names, frame=0)
    names = {str(t): f"T{t}" for t in set(psf.types)}  # numeric PSF types -> invented names
    params = invent_parameters(psf, frame.positions, seed=20261201, type_names=names)
    out = tmp_path_factory.mktemp("adk")
    # split into two files: the second overrides some bonds and angles of the first
    first, second = out / "adk_invented_a.prm", out / "adk_invented_b.prm"
    write_parameters(first, params)
    override = type(params)(masses=params.masses, type_numbers=params.type_numbers,
                            nonbonded=params.nonbonded)
    for key in list(params.bonds)[::3]:
        override.bonds[key] = (params.bonds[key][0] * 1.7, params.bonds[key][1] + 0.02)
    for key in list(params.angles)[::4]:
        k, theta, kub, s0 = params.angles[key]
        override.angles[key] = (k * 0.6, theta - 3.0, kub, s0)
    write_parameters(second, override)
    return PSF, DCD, [first, second]


@pytest.mark.parametrize("cutoff", [None, 10.0])
def test_adk_invented_parameters_match_openmm(adk, cutoff):
    psf_path, dcd_path, param_files = adk
    system, frame = load_psf_system(psf_path, param_files, dcd_path, frame=0)
    assert frame.box is None and system.n_atoms == 3341
    settings = (EnergySettings() if cutoff is None else
                EnergySettings(cutoff_angstrom=cutoff, electrostatics="reaction-field"))
    ours = pipeline.compute(system, frame, settings).totals
    # Reference: OpenMM reading adk.psf and both parameter files in the same order.
    ref = openmm_energies(psf_path, param_files, frame.positions, cutoff=cutoff,
                          rf_dielectric=settings.solvent_dielectric)
    assert_terms_agree(ours, ref, f"adk with invented parameters, cutoff {cutoff}")
    assert all(abs(ref[t]) > 1e-2 for t in TERMS
               if t != "cmap" and not t.startswith("solvation")), ref  # adk.psf has no CMAP
