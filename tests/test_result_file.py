"""The HDF5 result file (docs/result-file.md): round trips are exact, the documented layout is
what plain h5py sees, and damaged, foreign or unsafe files give one clear error.

References: the engine's own results, compared bit for bit after a write/read round trip (a
file format must return what it was given; common practice); the layout is read with h5py
alone, in a process that never imports Tessera."""
from __future__ import annotations

import json
import os
import pickle
import subprocess
import sys

import h5py
import numpy as np
import pytest
from tiny import random_system

from energy import results
from energy.analysis.compare import compare_results
from energy.decomposition.pipeline import compute
from energy.io.loaders import LoadedSystem
from energy.model.settings import EnergySettings
from energy.terms.registry import TERMS

SCENARIO = os.path.join(os.path.dirname(__file__), "..", "samples", "scenario")


@pytest.fixture(scope="module")
def tiny_scan(tmp_path_factory):
    system, frame = random_system(np.random.default_rng(11), n_residues=9)
    src = tmp_path_factory.mktemp("inputs") / "tiny.pdb"
    src.write_text("REMARK invented input for the record\n")
    loaded = LoadedSystem(system, frame, structure_path=str(src))
    return loaded, compute(system, frame, EnergySettings(cutoff_angstrom=9.0))


def _same_pairs(a, b):
    np.testing.assert_array_equal(a.pair_i, b.pair_i)
    np.testing.assert_array_equal(a.pair_j, b.pair_j)
    for t in TERMS:
        np.testing.assert_array_equal(a.values[t], b.values[t])
    np.testing.assert_array_equal(a.min_heavy_distance, b.min_heavy_distance)
    assert a.n_residues == b.n_residues


def test_scan_round_trip_is_exact(tiny_scan, tmp_path):
    loaded, result = tiny_scan
    path = tmp_path / "scan.h5"
    results.save_scan(path, loaded, result)
    stored = results.load(path)
    assert stored.kind == "scan" and stored.settings == result.settings
    _same_pairs(stored.residue_pairs, result.residue_pairs)
    assert stored.totals == {k: result.totals[k] for k in (*TERMS, "total")}
    r = loaded.system.residues
    assert list(stored.residues.chain) == list(r.chain) and list(stored.residues.resid) == list(r.resid)
    assert stored.inputs[0].role == "structure" and stored.changed_inputs() == []
    df = stored.pairs_frame()
    assert len(df) == len(result.residue_pairs) and np.array_equal(df["total"], result.residue_pairs.total)


def test_changed_and_missing_inputs_are_reported(tiny_scan, tmp_path):
    loaded, result = tiny_scan
    src = tmp_path / "input.pdb"
    src.write_text("REMARK one\n")
    path = tmp_path / "scan.h5"
    results.save_scan(path, LoadedSystem(loaded.system, loaded.frame, structure_path=str(src)), result)
    src.write_text("REMARK two\n")
    assert results.load(path).changed_inputs() == [
        f"structure file {src} has changed since the result was computed (SHA-256 differs)"]
    src.unlink()
    assert results.load(path).changed_inputs() == [f"structure file {src} is missing"]


def test_comparison_round_trip_is_exact(tmp_path):
    rng = np.random.default_rng(3)
    system, frame = random_system(rng, n_residues=7)
    moved = type(frame)(frame.positions + rng.normal(0, 0.05, frame.positions.shape))
    r1, r2 = compute(system, frame), compute(system, moved)
    comparison = compare_results(system, r1, system, r2)
    path = tmp_path / "cmp.h5"
    results.save_comparison(path, (LoadedSystem(system, frame), r1), (LoadedSystem(system, moved), r2),
                            comparison, r1.settings)
    stored = results.load(path)
    c = stored.comparison
    _same_pairs(c.difference, comparison.difference)
    assert c.labels == comparison.labels and c.totals_difference() == comparison.totals_difference()
    for k in comparison.first_values:
        np.testing.assert_array_equal(c.first_values[k], comparison.first_values[k])
        np.testing.assert_array_equal(c.second_values[k], comparison.second_values[k])
    np.testing.assert_array_equal(c.match.first, comparison.match.first)
    _same_pairs(stored.sides["second"]["residue_pairs"], r2.residue_pairs)


def test_cli_trajectory_result_matches_its_statistics(tmp_path):
    """`tessera scan --frames --out` on the bundled scenario and its relax.dcd: the stored
    per-frame totals and mean/std tables are the ones the JSON output holds."""
    from app.cli.main import main
    pdb, dcd = os.path.join(SCENARIO, "complex_clash.pdb"), os.path.join(SCENARIO, "relax.dcd")
    out, js = tmp_path / "t.h5", tmp_path / "t.json"
    assert main(["scan", pdb, dcd, "--frames", "0:6:2", "--pairs", "24-90", "--out", str(out),
                 "--json", str(js), "--quiet"]) == 0
    stored, doc = results.load(out), json.loads(js.read_text())
    assert stored.kind == "trajectory" and list(stored.frames["index"]) == doc["frames"]
    for t in (*TERMS, "total"):
        np.testing.assert_array_equal(stored.frames[t], doc["per_frame_totals"][t])
    assert "24-90" in stored.statistics["pair_series"]
    # the window's dataset of a stored trajectory: the mean over the frames, as the JSON has it
    from app.state.document import Dataset
    ds = Dataset.from_stored(stored)
    mean = {(p["i"], p["j"]): p["mean"]["total"] for p in doc["pairs"]}
    (i, j), expected = next(iter(mean.items()))
    assert ds.pairs.column("total")[ds.pairs.lookup(i, j)] == pytest.approx(expected, rel=1e-12, abs=1e-12)


def test_layout_reads_with_plain_h5py_without_tessera(tiny_scan, tmp_path):
    loaded, result = tiny_scan
    path = tmp_path / "scan.h5"
    results.save_scan(path, loaded, result)
    code = (
        "import sys, h5py, numpy as np\n"
        f"f = h5py.File({str(path)!r}, 'r')\n"
        "assert f.attrs['format'] == 'tessera-result' and f.attrs['schema_version'] == 1\n"
        "assert f.attrs['kind'] == 'scan'\n"
        "p = f['pairs']\n"
        "i, j, total = p['i'][:], p['j'][:], p['total'][:]\n"
        "s = sum(p[t][:] for t in ('bond', 'urey_bradley', 'angle', 'dihedral', 'improper', 'cmap', "
        "'coulomb', 'lj'))\n"
        "assert np.allclose(s, total, rtol=0, atol=1e-9) and np.all(i <= j)\n"
        "print(len(i), float(total.sum()), f['residues']['resname'].asstr()[0])\n"
        "assert not any(m.split('.')[0] in ('energy', 'app') for m in sys.modules)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    n, total, resname = proc.stdout.split()
    assert int(n) == len(result.residue_pairs)
    assert float(total) == pytest.approx(result.residue_pairs.total.sum(), rel=1e-12)
    assert resname == loaded.system.residues.resname[0]


class _Planted:
    """Unpickling this would create a marker file; the reader must never unpickle."""

    def __reduce__(self):
        return (open, (os.environ["TESSERA_MARKER"], "w"))


def test_bad_files_give_one_line_and_execute_nothing(tiny_scan, tmp_path, monkeypatch):
    loaded, result = tiny_scan
    good = tmp_path / "good.h5"
    results.save_scan(good, loaded, result)
    cases = {}
    truncated = tmp_path / "truncated.h5"
    truncated.write_bytes(good.read_bytes()[: good.stat().st_size // 3])
    cases[truncated] = "not a readable HDF5 file"
    text = tmp_path / "notes.h5"
    text.write_text("not HDF5 at all\n")
    cases[text] = "not a readable HDF5 file"
    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as fh:
        fh["x"] = np.arange(3)
    cases[foreign] = "not a Tessera result"
    newer = tmp_path / "newer.h5"
    newer.write_bytes(good.read_bytes())
    with h5py.File(newer, "r+") as fh:
        fh.attrs["schema_version"] = 99
    cases[newer] = "written with result schema 99"
    marker = tmp_path / "marker"
    monkeypatch.setenv("TESSERA_MARKER", str(marker))
    planted = tmp_path / "planted.h5"
    planted.write_bytes(good.read_bytes())
    with h5py.File(planted, "r+") as fh:
        del fh["pairs"]["total"]
        fh["pairs"]["total"] = np.void(pickle.dumps(_Planted()))
    cases[planted] = "unexpected compound type"
    for path, expected in cases.items():
        with pytest.raises(results.ResultFileError) as err:
            results.load(path)
        msg = str(err.value)
        assert expected in msg and "\n" not in msg and len(msg) < 400, msg
    assert not marker.exists()


def test_cli_overlaps_result_holds_the_ranked_list(tmp_path):
    """`tessera overlaps --out` on the scenario's clashing model: the file (read with plain h5py)
    holds the ranked atom pairs the JSON lists, and each stored distance is the distance of
    those two atoms in the PDB file (coordinates read with MDAnalysis, an outside reader)."""
    import MDAnalysis as mda

    from app.cli.main import main
    pdb = os.path.join(SCENARIO, "complex_clash.pdb")
    out, js = tmp_path / "o.h5", tmp_path / "o.json"
    assert main(["overlaps", pdb, "--out", str(out), "--json", str(js), "--quiet"]) == 0
    doc = json.loads(js.read_text())
    with h5py.File(out, "r") as fh:
        assert fh.attrs["kind"] == "overlaps"
        g = fh["overlaps"]
        assert list(g["atom_i"][()]) == [c["atom_i"] for c in doc["clashes"]]
        assert list(g["atom_j"][()]) == [c["atom_j"] for c in doc["clashes"]]
        np.testing.assert_array_equal(g["overlap"][()], [c["overlap"] for c in doc["clashes"]])
        ai, aj, dist = g["atom_i"][()], g["atom_j"][()], g["distance"][()]
    assert len(ai) > 0
    x = mda.Universe(pdb).atoms.positions.astype(np.float64)
    np.testing.assert_allclose(dist, np.linalg.norm(x[ai] - x[aj], axis=1), atol=2e-3)  # PDB: 3 decimals
    stored = results.load(out)
    assert stored.kind == "overlaps" and len(stored.overlaps["atom_i"]) == len(ai)
    assert json.loads(stored.overlaps["options"])["overlap"] == doc["settings"]["overlap"]


def test_a_mostly_zero_column_stores_only_its_non_zero_chunks(tmp_path):
    """A column of zeros except in one chunk: that chunk alone is stored, and plain h5py reads
    the whole column back exactly (the other chunks come back as the fill value, 0: HDF5's own
    rule for chunks never written)."""
    from energy.output.result_file import CHUNK_ROWS, _column
    values = np.zeros(5 * CHUNK_ROWS + 17)
    values[2 * CHUNK_ROWS + 5] = -3.25
    values[2 * CHUNK_ROWS + 100] = 1e-300
    path = tmp_path / "column.h5"
    with h5py.File(path, "w") as fh:
        _column(fh, "bond", values)
        _column(fh, "empty", np.zeros(3 * CHUNK_ROWS))
    with h5py.File(path, "r") as fh:
        np.testing.assert_array_equal(fh["bond"][()], values)
        np.testing.assert_array_equal(fh["empty"][()], np.zeros(3 * CHUNK_ROWS))
        assert fh["bond"].id.get_num_chunks() == 1
        assert fh["empty"].id.get_num_chunks() == 0


def test_a_table_of_term_columns_stores_only_the_columns_with_values(tmp_path):
    """A (rows, terms) table (the trajectory statistics) is chunked by column: an all-zero term
    column costs nothing on disk, and plain h5py reads the table back exactly."""
    from energy.output.result_file import CHUNK_ROWS, _column
    rng = np.random.default_rng(3)
    table = np.zeros((2 * CHUNK_ROWS + 9, 4))
    table[:, 1] = rng.normal(size=len(table))      # a dense term (Coulomb)
    table[::7, 2] = 1.5                             # a sparse one spread over every chunk
    path = tmp_path / "table.h5"
    with h5py.File(path, "w") as fh:
        _column(fh, "mean", table)
    with h5py.File(path, "r") as fh:
        np.testing.assert_array_equal(fh["mean"][()], table)
        assert fh["mean"].chunks == (CHUNK_ROWS, 1)
        assert fh["mean"].id.get_num_chunks() == 2 * 3  # columns 1 and 2, three row stretches each
