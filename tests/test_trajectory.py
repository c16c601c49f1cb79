"""Trajectory scans (issue 7): per-frame energies vs OpenMM, statistics, parallel = serial, Ctrl-C.

References, named beside each check:
* OpenMM 8.6 (Reference platform) evaluating ForceField('amber14-all.xml', 'amber14/tip3p.xml')
  on the scenario PDB's own topology, with positions taken frame by frame from relax.dcd as read
  here by MDAnalysis (Coulomb and LJ split as in tests/openmm_reference.py).  Interaction
  energies of two atom sets come from OpenMM too: E(P+Q) - E(P) - E(Q), each the NonbondedForce
  of a System holding only those atoms (their parameters and the exceptions among them).
  Agreement rule of the project: 1e-4
  relative or 1e-3 kcal/mol absolute, per term.
* Minimum heavy-atom distances: MDAnalysis.lib.distances.distance_array.
* Mean / standard deviation / persistence over frames: numpy.mean / numpy.std / a count over the
  dense per-frame matrices of independent single-frame evaluations (energy.decomposition.pipeline.compute).
* Frame ranges: Python's own slice semantics.
"""
from __future__ import annotations

import copy
import csv
import json
import os
import signal
import subprocess
import sys
import time
import warnings

import MDAnalysis as mda
import numpy as np
import openmm
import pytest
from data import REPO, SCENARIO_CLASH_PDB, SCENARIO_DIR
from MDAnalysis.lib.distances import distance_array
from openmm import app
from openmm_reference import KCAL, assert_close, zero_charges

from app.cli import trajectory as trajectory_cli
from app.cli.main import build_parser, main
from energy.analysis.trajectory import (
    COLUMNS,
    TrajectoryError,
    TrajectoryRequest,
    TrajectoryScan,
    parse_frames,
    parse_pair,
)
from energy.decomposition.pipeline import compute
from energy.io.builtin import DEFAULT_FORCE_FIELD
from energy.terms.registry import TERMS

DCD = os.path.join(SCENARIO_DIR, "relax.dcd")


@pytest.fixture(scope="module")
def scan0():
    """A serial scan object over the scenario (its source: the loaded system and open DCD)."""
    return TrajectoryScan(TrajectoryRequest(SCENARIO_CLASH_PDB, DCD), None)


@pytest.fixture(scope="module")
def residues(scan0):
    """(i, j) residue indices of the scenario's planted clash and salt bridge, by the labels
    samples/scenario/scenario.json gives them."""
    with open(os.path.join(SCENARIO_DIR, "scenario.json")) as fh:
        facts = json.load(fh)
    labels = [scan0.system.residues.label(i) for i in range(scan0.system.n_residues)]
    index = lambda names: tuple(sorted(labels.index(n) for n in names))  # noqa: E731
    return {"clash": index(facts["clash"]), "salt_bridge": index(facts["salt_bridge"])}


def _dcd_positions(frames):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = mda.Universe(SCENARIO_CLASH_PDB, DCD)
        return u, {k: u.trajectory[k].positions.astype(np.float64).copy() for k in frames}


def _openmm_system():
    pdb = app.PDBFile(SCENARIO_CLASH_PDB)
    ff = app.ForceField(*DEFAULT_FORCE_FIELD)
    return ff.createSystem(pdb.topology, nonbondedMethod=app.NoCutoff, constraints=None,
                           rigidWater=False, removeCMMotion=False)


class OpenMMEnergies:
    """OpenMM energies per force class with Coulomb and LJ split, as in
    tests/openmm_reference.py (one force group per force; LJ from a copy with every charge and
    exception charge product zeroed; Coulomb = NonbondedForce - LJ), but with the Reference
    contexts kept, so that frame after frame only the positions change.
    """

    def __init__(self, system):
        system = copy.deepcopy(system)
        self.names = {}
        for g, force in enumerate(system.getForces()):
            force.setForceGroup(g)
            self.names[g] = force.__class__.__name__
        lj_system = copy.deepcopy(system)
        zero_charges(next(f for f in lj_system.getForces() if isinstance(f, openmm.NonbondedForce)))
        self.nb_group = next(g for g, n in self.names.items() if n == "NonbondedForce")
        platform = openmm.Platform.getPlatformByName("Reference")
        self.ctx = openmm.Context(system, openmm.VerletIntegrator(1.0), platform)
        self.ctx_lj = openmm.Context(lj_system, openmm.VerletIntegrator(1.0), platform)

    def __call__(self, positions_angstrom) -> dict:
        pos = np.asarray(positions_angstrom) / 10.0
        self.ctx.setPositions(pos)
        self.ctx_lj.setPositions(pos)
        energy = lambda ctx, g: ctx.getState(getEnergy=True, groups={g}).getPotentialEnergy().value_in_unit(KCAL)  # noqa: E731
        out = {}
        for g, name in self.names.items():
            if name != "CMMotionRemover":
                out[name] = out.get(name, 0.0) + energy(self.ctx, g)
        out["lj"] = energy(self.ctx_lj, self.nb_group)
        out["coulomb"] = out["NonbondedForce"] - out["lj"]
        return out


def _nonbonded_subsystem(system, atoms):
    """An OpenMM System of just ``atoms``: their NonbondedForce parameters and the exceptions
    among them (the other atoms removed, i.e. not interacting)."""
    nb = next(f for f in system.getForces() if isinstance(f, openmm.NonbondedForce))
    sub, sub_nb = openmm.System(), openmm.NonbondedForce()
    sub_nb.setNonbondedMethod(openmm.NonbondedForce.NoCutoff)
    index = {int(a): k for k, a in enumerate(atoms)}
    for a in atoms:
        sub.addParticle(system.getParticleMass(int(a)))
        sub_nb.addParticle(*nb.getParticleParameters(int(a)))
    for k in range(nb.getNumExceptions()):
        i, j, qq, sig, eps = nb.getExceptionParameters(k)
        if i in index and j in index:
            sub_nb.addException(index[i], index[j], qq, sig, eps)
    sub.addForce(sub_nb)
    return sub


class OpenMMInteraction:
    """Coulomb and LJ between disjoint atom sets P and Q from OpenMM: E(P+Q) - E(P) - E(Q),
    each E the NonbondedForce of a System holding only those atoms."""

    def __init__(self, system, p, q):
        self.atoms = [np.concatenate([p, q]), np.asarray(p), np.asarray(q)]
        self.parts = [OpenMMEnergies(_nonbonded_subsystem(system, a)) for a in self.atoms]

    def __call__(self, positions_angstrom) -> dict:
        x = np.asarray(positions_angstrom)
        e_pq, e_p, e_q = (part(x[a]) for part, a in zip(self.parts, self.atoms))
        return {t: e_pq[t] - e_p[t] - e_q[t] for t in ("coulomb", "lj")}


def test_per_frame_totals_agree_with_openmm_frame_by_frame(scan0, residues):
    """First, middle and last frames of relax.dcd: every term vs OpenMM; the clash pair, the salt bridge
    and chain A vs chain B vs OpenMM interaction energies; pair distances vs MDAnalysis."""
    clash, salt = residues["clash"], residues["salt_bridge"]
    request = TrajectoryRequest(SCENARIO_CLASH_PDB, DCD, pairs=(clash, salt),
                                select_a="segid A", select_b="segid B")
    n = scan0.n_frames_file
    middle = (n - 1) // 2
    result = TrajectoryScan(request, f"0::{middle}", source=None).run()
    assert result.frames == [0, middle, 2 * middle] and result.complete
    u, positions = _dcd_positions(result.frames)
    system = _openmm_system()
    resindex = scan0.system.resindex
    whole = OpenMMEnergies(system)
    chains = OpenMMInteraction(system, u.select_atoms("segid A").indices,
                               u.select_atoms("segid B").indices)
    pairs = [OpenMMInteraction(system, np.flatnonzero(resindex == i), np.flatnonzero(resindex == j))
             for i, j in request.pairs]
    worst = 0.0
    for record in result.records:
        x = positions[record.index]
        ref = whole(x)
        ours = record.totals
        assert_close(ours["bond"], ref["HarmonicBondForce"], f"frame {record.index} bond")
        assert_close(ours["angle"], ref["HarmonicAngleForce"], f"frame {record.index} angle")
        # Amber keeps proper and improper torsions in one PeriodicTorsionForce.
        assert_close(ours["dihedral"] + ours["improper"], ref["PeriodicTorsionForce"],
                     f"frame {record.index} dihedral + improper")
        assert_close(ours["coulomb"], ref["coulomb"], f"frame {record.index} coulomb")
        assert_close(ours["lj"], ref["lj"], f"frame {record.index} lj")
        total_ref = sum(v for k, v in ref.items() if k not in ("coulomb", "lj"))
        assert_close(ours["total"], total_ref, f"frame {record.index} total")
        worst = max(worst, abs(ours["total"] - total_ref))
        sel = chains(x)
        assert_close(record.selection["coulomb"], sel["coulomb"], f"frame {record.index} A-B coulomb")
        assert_close(record.selection["lj"], sel["lj"], f"frame {record.index} A-B lj")
        for k, (i, j) in enumerate(request.pairs):
            pi, pj = np.flatnonzero(resindex == i), np.flatnonzero(resindex == j)
            pair = pairs[k](x)
            values = dict(zip(COLUMNS, record.pair_values[k]))
            assert_close(values["coulomb"], pair["coulomb"], f"frame {record.index} pair {i}-{j} coulomb")
            assert_close(values["lj"], pair["lj"], f"frame {record.index} pair {i}-{j} lj")
            heavy_i = [a for a in pi if u.atoms[a].element != "H"]
            heavy_j = [a for a in pj if u.atoms[a].element != "H"]
            d_ref = distance_array(x[heavy_i], x[heavy_j]).min()
            assert record.pair_distance[k] == pytest.approx(d_ref, abs=1e-6)
    # The scenario: the planted clash (LJ > +100 kcal/mol in frame 0) relaxes along the trajectory.
    lj_clash = result.pair_series(0)["lj"]
    assert lj_clash[0] > 100.0 and lj_clash[-1] < 1.0
    assert worst < 1e-3


def test_mean_std_persistence_equal_numpy_over_single_frame_evaluations(scan0):
    """Frames 3..13 step 2 (6 frames, two chunks): statistics vs numpy over dense matrices of
    independent evaluations; a pair absent from a frame counts as 0 there."""
    source = scan0.source
    request = TrajectoryRequest(SCENARIO_CLASH_PDB, DCD, persistence_threshold=-2.0)
    result = TrajectoryScan(request, "3:14:2", source=source).run()
    assert result.frames == [3, 5, 7, 9, 11, 13]
    dense = {q: [] for q in COLUMNS}
    for frame in source.frames(result.frames):
        rp = compute(source.system, frame, request.settings).residue_pairs
        for q in COLUMNS:
            dense[q].append(rp.dense(q))
    st = result.stats
    i, j = st.pair_i, st.pair_j
    for q in COLUMNS:
        stack = np.array(dense[q])
        np.testing.assert_allclose(st.column(q, "mean"), stack.mean(axis=0)[i, j], rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(st.column(q, "std"), stack.std(axis=0)[i, j], rtol=1e-9, atol=1e-10)
        # nothing outside the union of keys
        outside = np.ones(stack.shape[1:], bool)
        outside[i, j] = outside[j, i] = False
        assert not np.any(stack[:, outside])
    stack = np.array(dense["total"])
    np.testing.assert_array_equal(st.persistence(), (stack < -2.0).mean(axis=0)[i, j])


def test_parse_frames_follows_python_slices():
    """Reference: Python's list slicing of range(n)."""
    n = 41
    for text, sl in [("0:41:20", slice(0, 41, 20)), ("::5", slice(None, None, 5)), ("10:", slice(10, None)),
                     ("-5:", slice(-5, None)), ("5:100:3", slice(5, 100, 3)), ("40:0:-10", slice(40, 0, -10))]:
        assert parse_frames(text, n) == list(range(n))[sl]
    assert parse_frames("7", n) == [7]
    for bad in ("a:b", "1:2:0", "50:60", "1:2:3:4"):
        with pytest.raises(TrajectoryError):
            parse_frames(bad, n)
    assert parse_pair("87-12") == (12, 87)
    with pytest.raises(TrajectoryError):
        parse_pair("12")


def _cli_args(tmp_path, name, residues, *extra):
    out = tmp_path / name
    pairs = [f"{i}-{j}" for i, j in residues.values()]
    return out, ["scan", SCENARIO_CLASH_PDB, DCD, "--frames", "1::4", "--pairs", pairs[0],
                 "--pairs", pairs[1], "--select-a", "segid A", "--select-b", "segid B",
                 "--json", str(out / "t.json"), "--csv-dir", str(out / "csv"), "--quiet", *extra]


def _outputs(folder):
    doc = json.loads((folder / "t.json").read_text())
    for key in ("execution", "timings"):
        doc.pop(key)
    tables = {p.name: p.read_bytes() for p in sorted((folder / "csv").iterdir())}
    return doc, tables


def test_serial_workers_and_dask_cluster_give_identical_outputs(tmp_path, residues):
    """`--workers 2` (process pool) and `--scheduler` (a Dask LocalCluster on 127.0.0.1, two
    workers) write byte-identical tables and JSON to the serial run (reference: the serial run)."""
    from distributed import LocalCluster

    def alarm(*_):
        raise TimeoutError("the parallel trajectory test took more than 150 s")

    previous = signal.signal(signal.SIGALRM, alarm)
    signal.alarm(150)
    try:
        out_s, args = _cli_args(tmp_path, "serial", residues)
        (out_s).mkdir()
        assert main(args) == 0
        out_w, args = _cli_args(tmp_path, "workers", residues, "--workers", "2")
        out_w.mkdir()
        assert main(args) == 0
        with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, host="127.0.0.1",
                          dashboard_address=None, protocol="tcp") as cluster:
            out_d, args = _cli_args(tmp_path, "dask", residues, "--scheduler", cluster.scheduler_address)
            out_d.mkdir()
            assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
            assert main(args) == 0
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)
    serial = _outputs(out_s)
    assert serial[0]["frames"] == list(range(1, serial[0]["inputs"]["n_frames_in_file"], 4))
    assert serial[0]["complete"]
    assert set(serial[1]) == {"frames.csv", "pair_frames.csv", "group_interaction_frames.csv",
                              "residue_pairs_stats.csv"}
    for other in (out_w, out_d):
        doc, tables = _outputs(other)
        assert tables == serial[1]
        assert doc == serial[0]
    assert json.loads((out_w / "t.json").read_text())["execution"]["mode"] == "processes"
    assert json.loads((out_d / "t.json").read_text())["execution"]["mode"] == "dask"


def _read_csv(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


def test_interrupt_keeps_the_frames_done_complete_and_readable(tmp_path, scan0, residues):
    """KeyboardInterrupt (as Ctrl-C raises it) after 5 frames: exit 130, and every output holds
    exactly those 5 frames, equal to a complete run of the same 5 frames."""
    folder = tmp_path / "cut"
    folder.mkdir()
    argv = ["scan", SCENARIO_CLASH_PDB, DCD, "--frames", "::3", "--pairs", "{}-{}".format(*residues["clash"]),
            "--json", str(folder / "t.json"), "--csv-dir", str(folder / "csv"), "--out", str(folder / "t.h5"),
            "--quiet"]

    def stop_after_five(done, total):
        if done == 5:
            raise KeyboardInterrupt

    code = trajectory_cli.run(build_parser().parse_args(argv), progress=stop_after_five)
    assert code == 130
    doc = json.loads((folder / "t.json").read_text())
    assert doc["frames"] == [0, 3, 6, 9, 12] and not doc["complete"] and doc["interrupted"]
    assert doc["n_frames_requested"] == len(range(0, scan0.n_frames_file, 3))
    frames = _read_csv(folder / "csv" / "frames.csv")
    assert [int(r["frame"]) for r in frames] == doc["frames"]
    pairs = _read_csv(folder / "csv" / "pair_frames.csv")
    assert [int(r["frame"]) for r in pairs] == doc["frames"]
    for term in COLUMNS:
        assert [float(r[term]) for r in frames] == doc["per_frame_totals"][term]
    stats = _read_csv(folder / "csv" / "residue_pairs_stats.csv")
    assert len(stats) == len(doc["pairs"]) > 0
    # Reference: a complete run of exactly those frames (same request, frames 0:13:3).
    request = trajectory_cli.request_from_args(build_parser().parse_args(argv))
    ref = TrajectoryScan(request, "0:13:3", source=scan0.source).run()
    assert ref.frames == doc["frames"]
    for term in COLUMNS:
        assert list(ref.per_frame_totals()[term]) == doc["per_frame_totals"][term]
    st = ref.stats
    rows = {(p["i"], p["j"]): p for p in doc["pairs"]}
    for k in range(0, len(st), 97):
        key = (int(st.pair_i[k]), int(st.pair_j[k]))
        if key in rows:
            assert rows[key]["mean"]["total"] == st.column("total")[k]
            assert rows[key]["std"]["total"] == st.column("total", "std")[k]
            assert rows[key]["persistence"] == st.persistence()[k]
    assert sum(p["mean"]["total"] for p in doc["pairs"]) == pytest.approx(
        np.mean(doc["per_frame_totals"]["total"]), rel=1e-9)
    # the result file holds the same five frames, marked incomplete (read with plain h5py)
    import h5py
    with h5py.File(folder / "t.h5", "r") as fh:
        assert not fh.attrs["complete"]
        assert list(fh["frames/index"][()]) == doc["frames"]
        for term in COLUMNS:
            assert list(fh[f"frames/{term}"][()]) == doc["per_frame_totals"][term]


def test_sigint_stops_a_parallel_run_cleanly(tmp_path, scan0):
    """SIGINT to a `tessera scan --workers 2` subprocess mid-run: exit 130, the tables and the
    JSON hold the same frames, whose totals equal single-frame evaluations of those frames."""
    # An invented long trajectory: relax.dcd's frames cycled 15 times.
    long_dcd = tmp_path / "long.dcd"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = mda.Universe(SCENARIO_CLASH_PDB, DCD)
        with mda.Writer(str(long_dcd), n_atoms=len(u.atoms)) as w:
            for _ in range(15):
                for ts in u.trajectory:
                    w.write(u.atoms)
    folder = tmp_path / "out"
    folder.mkdir()
    cmd = [sys.executable, "-m", "app.cli.main", "scan", SCENARIO_CLASH_PDB, str(long_dcd),
           "--frames", "::1", "--workers", "2", "--json", str(folder / "t.json"),
           "--csv-dir", str(folder / "csv")]
    proc = subprocess.Popen(cmd, cwd=REPO, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    try:
        table = folder / "csv" / "frames.csv"
        deadline = time.monotonic() + 90
        while time.monotonic() < deadline:
            if table.exists() and len(table.read_text().splitlines()) >= 1 + 8:
                break
            assert proc.poll() is None, proc.communicate()
            time.sleep(0.1)
        else:
            pytest.fail("no frames written within 90 s")
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode == 130, err.decode()
    assert b"interrupted after" in err
    doc = json.loads((folder / "t.json").read_text())
    n = scan0.n_frames_file
    assert doc["interrupted"] and not doc["complete"] and 8 <= len(doc["frames"]) < 15 * n
    rows = _read_csv(table)
    assert [int(r["frame"]) for r in rows] == doc["frames"]
    assert len(_read_csv(folder / "csv" / "residue_pairs_stats.csv")) == len(doc["pairs"])
    source = scan0.source
    for k in (0, len(rows) - 1):
        f = doc["frames"][k]
        frame = next(source.frames([f % n]))
        ref = compute(source.system, frame, TrajectoryRequest(SCENARIO_CLASH_PDB).settings)
        for term in (*TERMS, "total"):
            assert float(rows[k][term]) == ref.totals[term]


def test_bad_requests_fail_with_one_line(tmp_path, capsys):
    assert main(["scan", SCENARIO_CLASH_PDB, DCD, "--frames", "0:5", "--pairs", "3-500", "--quiet"]) == 2
    assert "108 residues" in capsys.readouterr().err
    assert main(["scan", SCENARIO_CLASH_PDB, DCD, "--frames", "100:200", "--quiet"]) == 2
    assert "selects no frame" in capsys.readouterr().err
    assert main(["scan", SCENARIO_CLASH_PDB, DCD, "--frames", "0:5", "--workers", "2",
                 "--scheduler", "tcp://127.0.0.1:1", "--quiet"]) == 2
    assert "not both" in capsys.readouterr().err


def test_psf_route_trajectory_agrees_with_openmm_charmm_reader(tmp_path):
    """MDAnalysisTests' adk.psf + adk_dims.dcd (an open dataset) with invented parameters
    (tests/charmm_cases.invent_parameters), 10 A cutoff and reaction field, the last frame (97;
    frame 0 is in tests/test_charmm_vs_openmm.py): every term vs OpenMM's own CHARMM reader
    (CharmmPsfFile + CharmmParameterSet) on that frame as MDAnalysis reads it."""
    from charmm_cases import invent_parameters, openmm_energies
    from MDAnalysisTests.datafiles import DCD as ADK_DCD
    from MDAnalysisTests.datafiles import PSF as ADK_PSF

    from energy.io.charmm_system import read_frame
    from energy.io.charmm_write import write_parameters
    from energy.io.psf import read_psf
    from energy.model.settings import EnergySettings

    psf = read_psf(ADK_PSF)
    first = read_frame(ADK_DCD, psf.n_atoms, psf.names, frame=0)
    names = {str(t): f"T{t}" for t in set(psf.types)}
    prm = tmp_path / "adk_invented.prm"
    write_parameters(prm, invent_parameters(psf, first.positions, seed=20261201, type_names=names))
    settings = EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field")
    request = TrajectoryRequest(ADK_PSF, ADK_DCD, (str(prm),), settings=settings)
    result = TrajectoryScan(request, "-1").run()
    assert result.frames == [97]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u = mda.Universe(ADK_PSF, ADK_DCD)
        positions = {k: u.trajectory[k].positions.astype(np.float64).copy() for k in (0, 97)}
    assert not np.allclose(positions[0], positions[97], atol=1.0)  # not frame 0 again
    for record in result.records:
        ref = openmm_energies(ADK_PSF, [prm], positions[record.index], cutoff=10.0,
                              rf_dielectric=settings.solvent_dielectric)
        for term in (*TERMS, "total"):
            assert_close(record.totals[term], ref[term], f"adk frame {record.index} {term}")
