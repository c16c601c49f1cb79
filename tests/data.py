"""Registry of the structure files the tests use, each with its provenance."""
from __future__ import annotations

import os

import MDAnalysisTests.datafiles as _mdat
import openmm.app as _omm_app

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

#: OpenMM 8.6 package data: a small protein with hydrogens in a periodic TIP3P water box
#: (8,867 atoms, CRYST1 49.2 x 46.0 x 38.9 A).  Ships with the `openmm` wheel.
OPENMM_TEST_PDB = os.path.join(os.path.dirname(_omm_app.__file__), "data", "test.pdb")

#: MDAnalysisTests 2.11 package data: adenylate kinase, open form, 214 residues, with hydrogens.
ADK_OPEN_PDB = os.path.join(os.path.dirname(_mdat.__file__), "data", "adk_open.pdb")

#: MDAnalysisTests 2.11 package data: the same protein as a CHARMM PSF (3341 atoms) and a DCD.
ADK_PSF = _mdat.PSF
ADK_DCD = _mdat.DCD

#: Our own demo scenario (samples/make_scenario.py): invented binder on an invented helix bundle.
SCENARIO_DIR = os.path.join(REPO, "samples", "scenario")
SCENARIO_CLASH_PDB = os.path.join(SCENARIO_DIR, "complex_clash.pdb")
SCENARIO_FIXED_PDB = os.path.join(SCENARIO_DIR, "complex_fixed.pdb")

_MDAT_DATA = os.path.join(os.path.dirname(_mdat.__file__), "data")

#: MDAnalysisTests 2.11: PDB 2JUY (neopetrosiamide), solution NMR, 24 models with hydrogens,
#: the placeholder CRYST1 1.000 1.000 1.000, one methionine sulfoxide (SME 24), 3 disulfides.
NMR_NEOPETROSIAMIDE_PDB = os.path.join(_MDAT_DATA, "nmr_neopetrosiamide.pdb")

#: MDAnalysisTests 2.11: PDB 1BD2 (T-cell receptor / MHC class I complex, X-ray) as gzipped
#: mmCIF; chain D has unobserved residues 133-136 and 170-172 (internal breaks).
MMCIF_1BD2_GZ = os.path.join(_MDAT_DATA, "mmcif", "1BD2.cif.gz")

#: MDAnalysisTests 2.11: PDB 19HC (nine-haem cytochrome c, X-ray, gzip): 18 HEM, 5 ACT, waters,
#: 14 residues with alternate locations (B:GLU191 has A 0.45 / B 0.55), no hydrogens.
CYTOCHROME_19HC_GZ = os.path.join(_MDAT_DATA, "19hc.pdb.gz")
#: MDAnalysisTests 2.11: PDB 1A28 (progesterone receptor ligand-binding domain with progesterone,
#: STR), X-ray, gzip; REMARK 470 lists the missing side-chain atoms; no hydrogens.
PROGESTERONE_1A28_GZ = os.path.join(_MDAT_DATA, "1a28.pdb.gz")
#: MDAnalysisTests 2.11: PDB 1OSM (osmoporin OmpK36), X-ray, gzip, insertion codes (e.g.
#: A:ILE181A, A:ALA163F), no hydrogens, no heterogens.
OSMOPORIN_1OSM_GZ = os.path.join(_MDAT_DATA, "1osm.pdb.gz")
#: MDAnalysisTests 2.11: adenylate kinase in OPLS-AA TIP4P water (GROMACS output as PDB): its
#: SOL residues are 4-site waters (OW, HW1, HW2, MW).
ADK_OPLSAA_PDB = os.path.join(_MDAT_DATA, "adk_oplsaa.pdb")
#: MDAnalysisTests 2.11: PDB 1YJP (GNNQQNY amyloid peptide, X-ray), mmCIF, plain and gzip.
MMCIF_1YJP = os.path.join(_MDAT_DATA, "mmcif", "1YJP.cif")
MMCIF_1YJP_GZ = os.path.join(_MDAT_DATA, "mmcif", "1YJP.cif.gz")
