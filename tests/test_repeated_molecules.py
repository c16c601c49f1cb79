"""Waters and ions parameterised once per kind (energy.io.repeated_molecules, energy.model.copies).

Reference: the same file read whole by OpenMM 8.6 (``PDBFile`` + ``ForceField.createSystem`` on
every atom, the route the loader takes when the split is switched off).  The two systems must
be the same array for array (up to the order of bonded rows and LJ type numbers); positions to
1e-12 A, because the whole-file route's go through OpenMM's nanometres and back.
System: OpenMM's bundled ``test.pdb`` (shipped with the ``openmm`` package: a 35-residue
protein, 2,758 TIP3P waters and two Cl- ions, 8,867 atoms).
"""
from __future__ import annotations

import numpy as np
import pytest
from data import OPENMM_TEST_PDB

import energy.io.preparation as preparation
from energy.io.builtin import load_builtin_prepared
from energy.io.preparation import PreparationOptions
from energy.io.repeated_molecules import MIN_COPIES, split_repeated
from energy.model.copies import CopyGroup, NotSeparateMolecule, with_copies
from energy.model.system import TABLE_SHAPES


def _load(path, split: bool):
    options = PreparationOptions()
    if split:
        return load_builtin_prepared(str(path), options, options.force_field)
    original = preparation.prepare_structure
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(preparation, "prepare_structure",
                   lambda *a, **k: original(*a, **{**k, "split_solvent": False}))
        return load_builtin_prepared(str(path), options, options.force_field)


def _rows(table):
    order = np.lexsort(table.atoms.T[::-1])
    return table.atoms[order], {k: v[order] for k, v in table.params.items()}


def assert_same_system(a, b):
    for key in ("names", "types", "elements", "charges", "resindex"):
        np.testing.assert_array_equal(getattr(a, key), getattr(b, key), err_msg=key)
    for key in ("chain", "resid", "resname", "icode"):
        np.testing.assert_array_equal(getattr(a.residues, key), getattr(b.residues, key), err_msg=key)
    mapping = {}
    for ta, tb in zip(a.lj_type, b.lj_type):
        assert mapping.setdefault(int(ta), int(tb)) == tb, "one LJ type of one route is two of the other"
    ka = np.array(sorted(mapping))
    kb = np.array([mapping[k] for k in ka])
    np.testing.assert_array_equal(a.lj_rmin[np.ix_(ka, ka)], b.lj_rmin[np.ix_(kb, kb)])
    np.testing.assert_array_equal(a.lj_eps[np.ix_(ka, ka)], b.lj_eps[np.ix_(kb, kb)])
    order_a = np.lexsort(a.exception_pairs.T[::-1])
    order_b = np.lexsort(b.exception_pairs.T[::-1])
    np.testing.assert_array_equal(a.exception_pairs[order_a], b.exception_pairs[order_b])
    for key in ("exception_qq", "exception_rmin", "exception_eps"):
        np.testing.assert_array_equal(getattr(a, key)[order_a], getattr(b, key)[order_b], err_msg=key)
    for attr in TABLE_SHAPES:
        atoms_a, params_a = _rows(a.table(attr))
        atoms_b, params_b = _rows(b.table(attr))
        np.testing.assert_array_equal(atoms_a, atoms_b, err_msg=attr)
        for key in params_a:
            np.testing.assert_array_equal(params_a[key], params_b[key], err_msg=f"{attr}.{key}")


@pytest.fixture(scope="module")
def both_routes():
    return _load(OPENMM_TEST_PDB, True), _load(OPENMM_TEST_PDB, False)


def _solvent_counts(path):
    """Waters and ions of the file counted from its text (one residue per water oxygen / per Cl line)."""
    lines = [ln for ln in open(path) if ln.startswith(("ATOM  ", "HETATM"))]
    waters = sum(ln[17:20] == "HOH" and ln[12:16].strip() in ("O", "OW") for ln in lines)
    ions = sum(ln[17:20].strip().upper() == "CL" for ln in lines)
    return waters, ions


def test_the_split_takes_every_water_and_ion_but_one_of_each(both_routes):
    (_, _, _, fast), (_, _, _, whole) = both_routes
    waters, ions = _solvent_counts(OPENMM_TEST_PDB)
    assert fast.split is not None and whole.split is None
    assert fast.split.n_copies == (waters - 1) + (ions - 1)
    assert fast.split.n_atoms == 8867


def test_split_system_equals_the_whole_file_system(both_routes):
    (sys_fast, frame_fast, _, _), (sys_whole, frame_whole, _, _) = both_routes
    assert_same_system(sys_fast, sys_whole)
    np.testing.assert_allclose(frame_fast.positions, frame_whole.positions, rtol=0, atol=1e-12)
    np.testing.assert_array_equal(frame_fast.box, frame_whole.box)


def test_the_whole_topology_is_rebuilt_residue_for_residue(both_routes):
    (_, _, top_fast, _), (_, _, top_whole, _) = both_routes
    residues = lambda t: [(r.name, r.id, r.insertionCode, r.chain.id, [a.name for a in r.atoms()])  # noqa: E731
                          for r in t.residues()]
    assert residues(top_fast) == residues(top_whole)
    chains = lambda t: [(c.id, [r.index for r in c.residues()]) for c in t.chains()]  # noqa: E731
    assert chains(top_fast) == chains(top_whole)
    bonds = lambda t: sorted(tuple(sorted((a.index, b.index))) for a, b in t.bonds())  # noqa: E731
    assert bonds(top_fast) == bonds(top_whole)


def test_hybrid36_residue_numbers_read_as_openmm_reads_them(tmp_path):
    """Residue numbers above 9,999 written in hybrid-36 (``A000`` = 10,000, the convention of
    OpenMM's PDB writer, which also reads them) come out of the split as OpenMM reads them."""
    lines = open(OPENMM_TEST_PDB).read().splitlines(keepends=True)
    out, number = [], {}
    for ln in lines:
        if ln.startswith(("ATOM  ", "HETATM")) and ln[17:20] == "HOH":
            key = ln[22:26]
            number.setdefault(key, len(number))
            k = number[key]
            if k % 3 == 0:  # every third water gets a hybrid-36 number 10,000 + k
                ln = ln[:22] + format(0xA000 + k, "X") + ln[26:]
        out.append(ln)
    path = tmp_path / "hybrid36.pdb"
    path.write_text("".join(out))
    fast, whole = _load(path, True), _load(path, False)
    assert fast[3].split is not None
    assert_same_system(fast[0], whole[0])
    assert 10_000 in set(fast[0].residues.resid.tolist())


def test_few_copies_or_several_models_read_the_whole_file():
    lines = open(OPENMM_TEST_PDB).read().splitlines(keepends=True)
    atoms = [ln for ln in lines if ln.startswith(("ATOM  ", "HETATM"))]
    protein = [ln for ln in atoms if ln[17:20] not in ("HOH", "Cl ", " Cl")]
    few_waters = [ln for ln in atoms if ln[17:20] == "HOH"][:3 * (MIN_COPIES - 1)]
    assert split_repeated("".join(protein + few_waters)) is None  # MIN_COPIES - 2 copies
    two_models = "MODEL        1\n" + "".join(atoms) + "ENDMDL\nMODEL        2\n" + "".join(atoms) + "ENDMDL\n"
    assert split_repeated(two_models) is None
    starred = [ln[:22] + "****" + ln[26:] if ln[17:20] == "HOH" else ln for ln in atoms]
    assert split_repeated("".join(starred)) is None  # OpenMM would number these by context


def _water_group(prepared):
    return next(g for g in prepared.split.groups if len(g.representative) == 3)


def test_a_representative_bonded_outside_itself_is_refused(both_routes):
    (system, _, _, fast), _ = both_routes
    rep = fast.split.kept[_water_group(fast).representative]  # a water's atoms in the full system
    bonded_out = system.bonds.atoms.copy()
    bonded_out[0] = [int(rep[0]), 0]
    from dataclasses import replace

    from energy.model.system import TermTable
    broken = replace(system, bonds=TermTable(bonded_out, dict(system.bonds.params)))
    n = system.n_atoms
    group = CopyGroup(rep, np.arange(n, n + 3).reshape(1, 3), np.array(["W"], object),
                      np.array([1]))
    with pytest.raises(NotSeparateMolecule):
        with_copies(broken, np.arange(n), [group])


def test_copies_must_cover_every_atom_once(both_routes):
    (system, _, _, fast), _ = both_routes
    rep = fast.split.kept[_water_group(fast).representative]
    n = system.n_atoms
    overlapping = CopyGroup(rep, np.arange(n - 1, n + 2).reshape(1, 3),
                            np.array(["W"], object), np.array([1]))
    with pytest.raises(ValueError, match="exactly once"):
        with_copies(system, np.arange(n), [overlapping])


def test_every_field_of_a_system_has_a_rule_for_copies():
    """A field added to MolecularSystem must be given a rule in energy.model.copies (per atom,
    rebuilt or shared), or copies would silently keep the representative-only value."""
    from dataclasses import fields

    from energy.model import copies
    from energy.model.system import MolecularSystem
    ruled = {*copies.PER_ATOM_FIELDS, *copies.OPTIONAL_PER_ATOM_FIELDS, *copies.REBUILT_FIELDS,
             *copies.SHARED_FIELDS}
    assert {f.name for f in fields(MolecularSystem)} == ruled
