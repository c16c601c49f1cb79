"""Parsers, writers and the system builder of the PSF + CHARMM-parameter route.

External references: MDAnalysis' PSF parser and OpenMM's ``CharmmPsfFile`` /
``CharmmParameterSet`` read the same files independently of :mod:`energy.io`.
"""
from __future__ import annotations

import math
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from energy.errors import InputMismatchError, MissingParametersError, StructureFileError
from energy.io.charmm_params import canonical_cmap, canonical_quad, read_charmm_parameters
from energy.io.charmm_system import build_charmm_system, load_psf_system, match_with_wildcards
from energy.io.charmm_write import write_parameters, write_psf
from energy.io.psf import read_psf

ROOT = Path(__file__).resolve().parents[1]
PEPTIDE = ROOT / "samples" / "peptide"
PEP_PSF, PEP_PRM, PEP_PDB = (PEPTIDE / "probe_peptide.psf", PEPTIDE / "probe_ff.prm",
                             PEPTIDE / "probe_peptide.pdb")


def mda_universe(path):
    import MDAnalysis as mda
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return mda.Universe(str(path))


# --- PSF reader -------------------------------------------------------------------------------
@pytest.mark.parametrize("name", ["PSF", "PSF_inscode", "PSF_NAMD", "PSF_cmap", "PSF_nosegid"])
def test_psf_matches_mdanalysis_parser(name):
    """Standard (CHEQ), EXT/XPLOR, NAMD and blank-segid PSFs from MDAnalysisTests."""
    import MDAnalysisTests.datafiles as data

    path = getattr(data, name)
    ours = read_psf(path)
    u = mda_universe(path)  # reference: MDAnalysis' own PSF parser
    atoms = u.atoms
    assert ours.n_atoms == len(atoms)
    assert list(ours.names) == list(atoms.names)
    if name == "PSF_NAMD":  # MDAnalysis cuts its 6-letter types to 4 columns: use OpenMM's reader
        from openmm.app import CharmmPsfFile
        assert list(ours.types) == [str(a.attype) for a in CharmmPsfFile(str(path)).atom_list]
    else:
        assert list(ours.types) == [str(t) for t in atoms.types]
    np.testing.assert_allclose(ours.charges, atoms.charges)
    np.testing.assert_allclose(ours.masses, atoms.masses)
    assert list(ours.resids) == list(atoms.resids)
    assert list(ours.resnames) == list(atoms.resnames)
    if name != "PSF_nosegid":
        assert list(ours.segids) == list(atoms.segids)
    for ours_rows, theirs in ((ours.bonds, u.bonds), (ours.angles, u.angles),
                              (ours.dihedrals, u.dihedrals), (ours.impropers, u.impropers)):
        # MDAnalysis may store a term reversed: compare the direction-free form
        canon = lambda r: min(tuple(int(i) for i in r), tuple(int(i) for i in r)[::-1])  # noqa: E731
        assert sorted(map(canon, ours_rows)) == sorted(canon(g.indices) for g in theirs)


def test_psf_insertion_codes_and_cmap_match_openmm():
    from MDAnalysisTests.datafiles import PSF_inscode
    from openmm.app import CharmmPsfFile

    ours = read_psf(PSF_inscode)
    ref = CharmmPsfFile(PSF_inscode)  # reference: OpenMM's PSF reader
    assert ours.flags == ("EXT", "CMAP", "XPLOR")
    assert [a.residue.inscode for a in ref.atom_list] == list(ours.icodes)
    assert "H" in set(ours.icodes)  # the file numbers residues like 1H (insertion letters)
    cmaps = [[getattr(c, f"atom{k}").idx for k in (1, 2, 3, 4, 2, 3, 4, 5)] if c.consecutive
             else [getattr(c, f"atom{k}").idx for k in range(1, 9)] for c in ref.cmap_list]
    assert ours.cmaps.tolist() == cmaps and len(cmaps) == 35


PSF_TEXT = """PSF EXT

         1 !NTITLE
* tiny invented test molecule

         3 !NATOM
         1 TST      1        MOL      A1       TA       -0.100000       12.0110           0
         2 TST      1        MOL      A2       TB        0.050000       1.00800           0
         3 TST      1        MOL      A3       TB        0.050000       1.00800           0

         2 !NBOND: bonds
         1         2         1         3

         1 !NTHETA: angles
         2         1         3

"""


@pytest.mark.parametrize("old, new, expect_line, expect", [
    ("PSF EXT", "PDB EXT", 1, "first line must start with 'PSF'"),
    ("-0.100000", "minus0.1", 7, "!NATOM atom 1 charge (e): expected a number"),
    ("1         2         1         3", "1         2         1", 11,
     "!NBOND: the header says 2 bonds but the section holds 1 and 1 stray indices"),
    ("1         2         1         3", "1         2         x         3", 12,
     "!NBOND atom index: expected an integer, got 'x'"),
    ("2         1         3", "2         1         9", 12, "!NBOND: atom index 9 outside 1..3"),
    ("         3 !NATOM", "         4 !NATOM", 6, "!NATOM: the header says 4 atoms but the section holds 3"),
])
def test_psf_malformed_lines_raise_with_file_and_line(tmp_path, old, new, expect_line, expect):
    path = tmp_path / "bad.psf"
    path.write_text(PSF_TEXT.replace(old, new, 1))
    with pytest.raises(StructureFileError) as info:
        read_psf(path)
    assert expect in str(info.value)
    assert str(path) in str(info.value)
    if expect_line is not None:
        assert info.value.line == expect_line, str(info.value)


def test_psf_missing_file(tmp_path):
    with pytest.raises(StructureFileError, match="cannot read PSF"):
        read_psf(tmp_path / "nope.psf")


names_st = st.text(alphabet="ABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789", min_size=1, max_size=6)


@st.composite
def topologies(draw):
    n = draw(st.integers(1, 12))

    def rows(k):  # entries name distinct atoms (each half of a CMAP entry: a dihedral)
        half = min(k, 4)
        if n < half:
            return []
        atoms = st.permutations(list(range(n))).map(lambda p: tuple(p[:half]))
        entry = st.tuples(atoms, atoms).map(lambda t: t[0] + t[1]) if k == 8 else atoms
        return draw(st.lists(entry, max_size=10))
    return dict(names=draw(st.lists(names_st, min_size=n, max_size=n)),
                types=draw(st.lists(names_st.map(lambda s: "T" + s), min_size=n, max_size=n)),
                charges=draw(st.lists(st.floats(-2, 2).map(lambda x: round(x, 6)), min_size=n,
                                      max_size=n)),
                masses=draw(st.lists(st.floats(0.5, 200).map(lambda x: round(x, 4)), min_size=n,
                                     max_size=n)),
                segids=draw(st.lists(names_st, min_size=n, max_size=n)),
                resids=draw(st.lists(st.integers(-99, 99999), min_size=n, max_size=n)),
                icodes=draw(st.lists(st.sampled_from(["", "A", "B"]), min_size=n, max_size=n)),
                resnames=draw(st.lists(names_st, min_size=n, max_size=n)),
                bonds=rows(2), angles=rows(3), dihedrals=rows(4), impropers=rows(4), cmaps=rows(8))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(topo=topologies())
def test_psf_write_read_round_trip(tmp_path, topo):
    path = tmp_path / "rt.psf"
    write_psf(path, **topo)
    back = read_psf(path)
    for key in ("names", "types", "segids", "resids", "icodes", "resnames"):
        assert list(getattr(back, key)) == list(topo[key]), key
    np.testing.assert_allclose(back.charges, topo["charges"], atol=1e-6)
    np.testing.assert_allclose(back.masses, topo["masses"], atol=1e-4)
    for key, width in (("bonds", 2), ("angles", 3), ("dihedrals", 4), ("impropers", 4), ("cmaps", 8)):
        assert back.__getattribute__(key).tolist() == [list(r) for r in topo[key]], key


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(line=st.integers(0, 20), junk=st.text(max_size=40))
def test_psf_garbage_raises_only_structure_file_error(tmp_path, line, junk):
    lines = PSF_TEXT.splitlines()
    lines[line % len(lines)] = junk
    path = tmp_path / "junk.psf"
    path.write_text("\n".join(lines), encoding="utf-8", errors="replace")
    try:
        read_psf(path)
    except StructureFileError:
        pass


# --- parameter reader -------------------------------------------------------------------------
PRM_TEXT = """* invented parameters exercising the format
*
atoms
MASS  1 TA   12.011 ! carbon-like
mass  2 TB    1.008
MASS  3 TC   15.999

BONDS
TA  TB   300.0  1.09   ! comment
tb  tc   450.0  0.96

ANGLES
TB  TA  TB   35.0  109.0   5.4  1.80
TB  TA  TC   50.0  111.0

DIHEDRALS
TB  TA  TC  TB   0.30  1   0.0
TB  TA  TC  TB   0.20  3 180.0
X   TA  TC  X    0.15  3   0.0
TB  TA  TC  TB   0.25  1  10.0   ! replaces the n=1 term above

IMPROPER
TA  X   X   TC   40.0  0   0.0
TA  TB  TB  TC   55.0  0  12.0

CMAP
TA TB TC TA TB TC TA TB 4 ! header

! phi = -180
 0.1 0.2 0.3 0.4
! phi = -90
 0.5 0.6
 0.7 0.8
 0.9 1.0 1.1 1.2
 1.3 1.4 1.5 1.6

NONBONDED nbxmod  5 atom cdiel fshift vatom vdistance vfswitch -
cutnb 14.0 ctofnb 12.0 ctonnb 10.0 eps 1.0 e14fac 0.8 wmin 1.5

TA  0.0  -0.080  2.00   0.0  -0.01  1.90
TB  0.0  -0.022  1.32
TC  0.0  -0.150  1.77

NBFIX
TA  TC  -0.20  3.30
TB  TC  -0.05  2.50  -0.04  2.40

HBOND CUTHB 0.5

END
"""


@pytest.fixture
def prm_file(tmp_path):
    path = tmp_path / "invented.prm"
    path.write_text(PRM_TEXT)
    return path


@pytest.mark.filterwarnings("ignore:Replacing dihedral")  # deliberate in PRM_TEXT
def test_parameters_match_openmm_reader(prm_file):
    from openmm.app import CharmmParameterSet

    ours = read_charmm_parameters(prm_file)
    ref = CharmmParameterSet(str(prm_file))  # reference: OpenMM's CHARMM parameter reader
    assert ours.e14fac == ref.e14fac == 0.8 and ours.nbxmod == ref.nbxmod == 5
    assert set(ours.masses) == set(ref.atom_types_str)
    for key, (k, r0) in ours.bonds.items():
        assert (k, r0) == (ref.bond_types[key].k, ref.bond_types[key].req)
    assert len(ours.bonds) == len(ref.bond_types)
    for key, (k, theta, kub, s0) in ours.angles.items():
        assert (k, theta) == (ref.angle_types[key].k, ref.angle_types[key].theteq)
        ub = ref.urey_bradley_types[key]
        assert (kub, s0) == ((None, None) if not hasattr(ub, "k") else (ub.k, ub.req))
    assert set(ours.dihedrals) == set(ref.dihedral_types)
    for key, terms in ours.dihedrals.items():
        assert sorted(terms) == sorted((d.phi_k, int(d.per), d.phase) for d in ref.dihedral_types[key])
    for key, (k, n, psi0) in ours.impropers.items():
        assert (k, psi0) == (ref.improper_types[key].k, ref.improper_types[key].phieq)
    for key, grid in ours.cmaps.items():
        assert grid.ravel().tolist() == list(ref.cmap_types[key].grid)
    for t, (eps, half, eps14, half14) in ours.nonbonded.items():
        a = ref.atom_types_str[t]
        assert (eps, half) == (a.epsilon, a.rmin)
        assert (eps14 if eps14 is not None else eps, half14 if half14 is not None else half) == \
            (a.epsilon_14, a.rmin_14)
    for (a, b), (emin, rmin, e14, r14) in ours.nbfix.items():
        ref_fix = ref.atom_types_str[a].nbfix[b]  # (rmin, emin, rmin14, emin14)
        assert (rmin, emin) == ref_fix[:2]
        assert (r14 if r14 is not None else rmin, e14 if e14 is not None else emin) == ref_fix[2:]


def test_parameters_specific_values(prm_file):
    """Values read back as written in PRM_TEXT above (format rules: common practice)."""
    p = read_charmm_parameters(prm_file)
    assert p.dihedrals[canonical_quad(("TB", "TA", "TC", "TB"))] == [(0.2, 3, 180.0), (0.25, 1, 10.0)]
    assert p.angles[("TB", "TA", "TB")] == (35.0, 109.0, 5.4, 1.80)
    assert p.angles[("TB", "TA", "TC")][2:] == (None, None)
    grid = p.cmaps[canonical_cmap(("TA", "TB", "TC", "TA", "TB", "TC", "TA", "TB"))]
    assert grid.shape == (4, 4) and grid[1].tolist() == [0.5, 0.6, 0.7, 0.8]  # [phi, psi] rows
    assert p.nbfix[("TA", "TC")] == (0.2, 3.3, None, None)
    assert p.type_numbers == {1: "TA", 2: "TB", 3: "TC"}


@pytest.mark.filterwarnings("ignore:Replacing dihedral")  # deliberate in PRM_TEXT
def test_later_file_overrides_earlier(prm_file, tmp_path):
    from openmm.app import CharmmParameterSet

    second = tmp_path / "override.prm"
    second.write_text("* override\n*\nBONDS\nTA TB 333.0 1.11\nEND\n")
    ours = read_charmm_parameters([prm_file, second])
    ref = CharmmParameterSet(str(prm_file), str(second))  # reference: OpenMM merges likewise
    assert ours.bonds[("TA", "TB")] == (ref.bond_types[("TA", "TB")].k,
                                        ref.bond_types[("TA", "TB")].req) == (333.0, 1.11)
    assert ours.e14fac == 0.8  # the second file has no NONBONDED header: setting kept


@pytest.mark.parametrize("old, new, expect", [
    ("tb  tc   450.0  0.96", "tb  tc   450.0", "BONDS: expected"),
    ("TB  TA  TC   50.0  111.0", "TB  TA  TC   50.0  oops", "ANGLES theta0: expected a number"),
    (" 1.3 1.4 1.5 1.6", " 1.3 1.4", "needs 16 values"),
    ("TB  TA  TC  TB   0.20  3 180.0", "TB  TA  TC  TB   0.20  2.5 180.0", "periodicity"),
    ("TB  0.0  -0.022  1.32", "TB  0.0  -0.022", "NONBONDED: expected"),
])
def test_parameter_file_errors_carry_line(tmp_path, old, new, expect):
    path = tmp_path / "bad.prm"
    path.write_text(PRM_TEXT.replace(old, new, 1))
    with pytest.raises(StructureFileError) as info:
        read_charmm_parameters(path)
    assert expect in str(info.value) and info.value.line is not None
    assert f"{path}:{info.value.line}:" in str(info.value)


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(line=st.integers(0, 70), junk=st.text(max_size=60))
def test_parameter_garbage_raises_only_structure_file_error(tmp_path, line, junk):
    lines = PRM_TEXT.splitlines()
    lines[line % len(lines)] = junk
    path = tmp_path / "junk.prm"
    path.write_text("\n".join(lines), encoding="utf-8", errors="replace")
    try:
        read_charmm_parameters(path)
    except StructureFileError:
        pass


def test_parameter_write_read_round_trip(prm_file, tmp_path):
    original = read_charmm_parameters(prm_file)
    out = tmp_path / "copy.prm"
    write_parameters(out, original)
    back = read_charmm_parameters(out)
    for key in ("masses", "type_numbers", "bonds", "angles", "dihedrals", "impropers",
                "nonbonded", "nbfix"):
        assert getattr(back, key) == getattr(original, key), key
    assert back.cmaps.keys() == original.cmaps.keys()
    for key in back.cmaps:
        np.testing.assert_allclose(back.cmaps[key], original.cmaps[key])
    assert (back.e14fac, back.nbxmod) == (original.e14fac, original.nbxmod)


def test_writer_refuses_keyword_like_type_names(tmp_path):
    p = read_charmm_parameters([])
    p.masses["ENDX"] = 12.0
    with pytest.raises(ValueError, match="section keyword"):
        write_parameters(tmp_path / "x.prm", p)


# --- lookup rules and the system builder ------------------------------------------------------
def test_wildcard_precedence_matches_openmm():
    from openmm.app.charmmpsffile import _match_with_wildcards  # reference: OpenMM's lookup

    table = {canonical_quad(k): k for k in [("A", "X", "X", "D"), ("X", "B", "C", "D"),
                                            ("X", "B", "C", "X"), ("A", "B", "C", "D")]}
    for query in [("A", "B", "C", "D"), ("D", "C", "B", "A"), ("E", "B", "C", "D"),
                  ("A", "Q", "Q", "D"), ("E", "B", "C", "E"), ("D", "C", "B", "E")]:
        assert match_with_wildcards(query, table) == _match_with_wildcards(list(query), table, 3)
    assert match_with_wildcards(("A", "Q", "Q", "Z"), table) is None


def test_sample_peptide_system_and_openmm_topology_agree():
    from openmm.app import CharmmParameterSet, CharmmPsfFile

    system, frame = load_psf_system(PEP_PSF, [PEP_PRM], PEP_PDB)
    ref = CharmmPsfFile(str(PEP_PSF))  # reference: the sample loads with OpenMM too
    ref.loadParameters(CharmmParameterSet(str(PEP_PRM)))
    assert system.n_atoms == len(ref.atom_list) == len(frame.positions)
    assert len(system.dihedrals) == len(ref.dihedral_parameter_list)
    assert len(system.urey_bradley) == len(ref.urey_bradley_list)
    assert len(system.cmap) == len(ref.cmap_list) == 3
    assert len(system.impropers) == len(ref.improper_list)
    ref_ub = {tuple(sorted((u.atom1.idx, u.atom2.idx))) for u in ref.urey_bradley_list}
    assert {tuple(sorted((r[0], r[2]))) for r in system.urey_bradley.atoms} == ref_ub
    # residues: chain = PSF segid
    assert [system.residues.label(i) for i in range(system.n_residues)] == \
        ["PROB:ACE1", "PROB:ALA2", "PROB:GLY3", "PROB:SER4", "PROB:NME5"]
    # elements guessed from masses agree with the element column of the PDB (MDAnalysis)
    u = mda_universe(PEP_PDB)
    assert [e.upper() for e in system.elements] == [e.upper() for e in u.atoms.elements]
    assert system.is_heavy.sum() == sum(e != "H" for e in u.atoms.elements)


def test_exception_list_matches_openmm_nonbonded_exceptions():
    """1-2/1-3 zeros and 1-4 values (with NBFIX 1-4 rule) against OpenMM's NonbondedForce."""
    import openmm
    from openmm.app import CharmmParameterSet, CharmmPsfFile

    system, _ = load_psf_system(PEP_PSF, [PEP_PRM], PEP_PDB)
    ref_psf = CharmmPsfFile(str(PEP_PSF))
    omm = ref_psf.createSystem(CharmmParameterSet(str(PEP_PRM)))
    force = next(f for f in omm.getForces() if isinstance(f, openmm.NonbondedForce))
    ref = {}
    for k in range(force.getNumExceptions()):
        i, j, qq, sigma, eps = force.getExceptionParameters(k)
        ref[(min(i, j), max(i, j))] = (qq.value_in_unit(openmm.unit.elementary_charge ** 2),
                                       sigma.value_in_unit(openmm.unit.angstrom) * 2 ** (1 / 6),
                                       eps.value_in_unit(openmm.unit.kilocalorie_per_mole))
    ours = {tuple(p): (q, r, e) for p, q, r, e in zip(system.exception_pairs.tolist(),
                                                       system.exception_qq, system.exception_rmin,
                                                       system.exception_eps)}
    assert ours.keys() == ref.keys()
    for pair, (q, r, e) in ours.items():
        rq, rr, re = ref[pair]
        assert math.isclose(q, rq, abs_tol=1e-9) and math.isclose(e, re, abs_tol=1e-9)
        if e > 0:
            assert math.isclose(r, rr, rel_tol=1e-9)


def test_missing_parameters_listed_all_at_once(tmp_path):
    p = read_charmm_parameters(PEP_PRM)
    del p.bonds[("QC", "QO")]
    del p.angles[next(k for k in p.angles if k[1] == "QCS")]
    del p.dihedrals[canonical_quad(("X", "QCA", "QCS", "X"))]
    p.dihedrals.pop(canonical_quad(("QN", "QCA", "QCS", "QOH")))
    del p.impropers[canonical_quad(("QC", "X", "X", "QO"))]
    p.cmaps.clear()
    del p.nonbonded["QHO"]
    with pytest.raises(MissingParametersError) as info:
        build_charmm_system(read_psf(PEP_PSF), p)
    missing = info.value.missing
    assert set(missing) == {"bond", "angle", "dihedral", "improper", "cmap", "nonbonded"}
    assert missing["nonbonded"] == [(("QHO",), "PROB:SER4 HG")]
    assert missing["bond"][0][0] in {("QC", "QO"), ("QO", "QC")}
    assert missing["bond"][0][1] == "PROB:ACE1 C-O"
    assert len(missing["cmap"]) == 2  # two distinct type combinations (ALA/SER and GLY)
    text = str(info.value)
    assert "PROB:SER4" in text and "improper" in text and "--params" in text


# --- coordinates ------------------------------------------------------------------------------
def test_load_rejects_atom_count_mismatch():
    with pytest.raises(InputMismatchError, match="has 39 atoms but the PSF has 40"):
        load_psf_system(PEP_PSF, [PEP_PRM], _write_pdb_with_atoms(PEP_PDB, drop=1))


def _write_pdb_with_atoms(source, drop=0, rename=None, nan=False):
    import tempfile
    lines = Path(source).read_text().splitlines()
    atoms = [i for i, ln in enumerate(lines) if ln.startswith(("ATOM", "HETATM"))]
    if rename:
        i = atoms[rename[0]]
        lines[i] = lines[i][:12] + f"{rename[1]:<4s}" + lines[i][16:]
    if nan:
        i = atoms[3]
        lines[i] = lines[i][:30] + f"{'nan':>8s}" + lines[i][38:]
    for i in reversed(atoms[len(atoms) - drop:]):
        del lines[i]
    out = Path(tempfile.mkdtemp()) / "edited.pdb"
    out.write_text("\n".join(l for l in lines if not l.startswith("CONECT")) + "\n")
    return out


def test_load_rejects_atom_name_mismatch_naming_both():
    with pytest.raises(InputMismatchError) as info:
        load_psf_system(PEP_PSF, [PEP_PRM], _write_pdb_with_atoms(PEP_PDB, rename=(5, "OXX")))
    assert "'O'" in str(info.value) and "'OXX'" in str(info.value)


def test_load_rejects_nan_coordinates():
    # refused by the strict reading of the PDB's coordinate columns (energy.io.coordinate_text)
    with pytest.raises(StructureFileError, match=r"x coordinate \(columns 31-38\): expected a number .* got 'nan'"):
        load_psf_system(PEP_PSF, [PEP_PRM], _write_pdb_with_atoms(PEP_PDB, nan=True))


def test_load_unreadable_coordinates_and_bad_frame(tmp_path):
    junk = tmp_path / "junk.pdb"
    junk.write_bytes(b"\x00\x01 not coordinates")
    for path in (tmp_path / "missing.pdb", junk):
        with pytest.raises(StructureFileError, match="cannot read coordinates"):
            load_psf_system(PEP_PSF, [PEP_PRM], path)
    with pytest.raises(StructureFileError, match="frame 3"):
        load_psf_system(PEP_PSF, [PEP_PRM], PEP_PDB, frame=3)


def test_dcd_frames_read_with_psf_topology():
    from MDAnalysisTests.datafiles import DCD, PSF

    from energy.io.charmm_system import read_frame
    psf = read_psf(PSF)
    frame = read_frame(DCD, psf.n_atoms, psf.names, frame=5)
    u = mda_universe(PSF)
    u.load_new(DCD)  # reference: MDAnalysis reading the same trajectory
    np.testing.assert_allclose(frame.positions, u.trajectory[5].positions, rtol=0, atol=1e-5)
    assert frame.index == 5 and frame.box is None
