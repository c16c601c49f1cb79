#!/usr/bin/env python
"""Regenerate the bundled demo scenario in ``samples/scenario/``.

Invented scenario: the (fictional) design team's de novo helical binder **K7** (chain B, one
44-residue helix) docked into the groove of their target **TB-2**, a helix-loop-helix hairpin
(chain A, 64 residues).  The newest variant, K7.3, carries a Trp at the interface; in the
delivered model that Trp sits in a rotamer that rams into a chain-A residue.  An interface
Lys/Glu salt bridge and a buried Ile/Leu pair hold the complex together.  Sequence, names and
coordinates are all invented here, from ideal helix geometry.

Steps (all deterministic):
  1. ideal alpha-helix backbones (N, CA, C, O) from internal coordinates (phi -57, psi -47),
     chain A's loop dihedrals found by a seeded search for an antiparallel hairpin ~10 A apart,
     binder helix placed at ~10 A from both target helices;
  2. sequence assigned from the geometry (core / rim / surface positions);
  3. backbone-only PDB -> PDBFixer adds side-chain heavy atoms and OXT -> OpenMM Modeller adds
     hydrogens (pH 7); salt-bridge and Trp rotamers set by a small chi grid search;
  4. Amber 14 (amber14-all.xml), vacuum, NoCutoff, LocalEnergyMinimizer -> complex_fixed.pdb;
  5. Trp chi1/chi2 rotated onto a chain-A residue -> complex_clash.pdb (same atoms/numbering);
  6. relax.dcd: the clash relaxing (low-temperature Langevin dynamics from the clash model,
     vacuum, screened charges), topology = complex_clash.pdb;
  7. the scenario facts are checked with OpenMM's own NonbondedForce parameters (a numpy
     per-residue-pair sum, independent of Tessera's engine) and written to scenario.json.

Run:  .venv/bin/python samples/make_scenario.py
Needs: numpy, openmm, pdbfixer (and MDAnalysis for the final read-back check).
"""

from __future__ import annotations

import io
import json
import os
import random
import sys
import tempfile
import time
from pathlib import Path

# one CPU thread for every OpenMM context (also PDBFixer's): same summation order, same files
os.environ.setdefault("OPENMM_CPU_THREADS", "1")

import numpy as np  # noqa: E402
import openmm  # noqa: E402
import openmm.app as app  # noqa: E402
import openmm.unit as u  # noqa: E402
from scipy.optimize import minimize  # noqa: E402

SEED = 20261207
OUT = Path(__file__).resolve().parent / "scenario"
KJ2KCAL = 1.0 / 4.184
COULOMB_KJ_NM = 138.935456  # kJ mol^-1 nm e^-2 (OpenMM's ONE_4PI_EPS0)

N_H1, N_LOOP, N_H2, N_B = 30, 4, 30, 44
HELIX_PHI, HELIX_PSI = -57.0, -47.0
AXIS_DIST = 10.0  # A, between helix axes
REMARK = "INVENTED DEMO (SAMPLES/MAKE_SCENARIO.PY): BINDER K7.3 (B) ON TARGET TB-2 (A)"

THREE = {"A": "ALA", "L": "LEU", "I": "ILE", "E": "GLU", "K": "LYS", "Q": "GLN",
         "S": "SER", "W": "TRP", "G": "GLY", "R": "ARG", "N": "ASN", "D": "ASP"}


_T0 = time.time()


def log(msg: str) -> None:
    print(f"{time.time() - _T0:6.1f}s {msg}", flush=True)


# --------------------------------------------------------------------------------------------
# 1. backbone geometry
# --------------------------------------------------------------------------------------------

def _cross(a, b):
    return np.array([a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2],
                     a[0] * b[1] - a[1] * b[0]])


def place(a, b, c, bond, angle, torsion):
    """Position of atom d with |cd| = bond, angle bcd, dihedral abcd (degrees)."""
    angle, torsion = np.radians(angle), np.radians(torsion)
    bc = c - b
    bc /= np.sqrt(bc @ bc)
    n = _cross(b - a, bc)
    n /= np.sqrt(n @ n)
    m = _cross(n, bc)
    d2 = np.array([-bond * np.cos(angle),
                   bond * np.sin(angle) * np.cos(torsion),
                   bond * np.sin(angle) * np.sin(torsion)])
    return c + d2[0] * bc + d2[1] * m + d2[2] * n


def build_backbone(phi, psi, omega=None):
    """N, CA, C, O coordinates (n, 4, 3) from per-residue phi/psi (degrees)."""
    n = len(phi)
    omega = np.full(n, 180.0) if omega is None else omega
    xyz = np.zeros((n, 4, 3))
    N = np.zeros(3)
    CA = np.array([1.458, 0.0, 0.0])
    ang = np.radians(111.2)
    C = CA + 1.525 * np.array([-np.cos(ang), np.sin(ang), 0.0])
    xyz[0, :3] = N, CA, C
    for i in range(1, n):
        pN, pCA, pC = xyz[i - 1, :3]
        N = place(pN, pCA, pC, 1.329, 116.2, psi[i - 1])
        CA = place(pCA, pC, N, 1.458, 121.7, omega[i - 1])
        C = place(pC, N, CA, 1.525, 111.2, phi[i])
        xyz[i, :3] = N, CA, C
        xyz[i - 1, 3] = place(N, pCA, pC, 1.231, 120.5, 180.0)
    nN, nCA, nC = xyz[-1, :3]
    xyz[-1, 3] = place(nN, nCA, nC, 1.231, 120.5, psi[-1] + 180.0)
    return xyz


def virtual_cb(xyz):
    N, CA, C = xyz[:, 0], xyz[:, 1], xyz[:, 2]
    b, c = CA - N, C - CA
    a = np.cross(b, c)
    return -0.58273431 * a + 0.56802827 * b - 0.54067466 * c + CA


def helix_axis(ca):
    """(centre, unit direction N->C) of a straight helix from its CA trace."""
    centre = ca.mean(axis=0)
    _, _, vt = np.linalg.svd(ca - centre)
    d = vt[0]
    if np.dot(ca[-1] - ca[0], d) < 0:
        d = -d
    return centre, d


def hairpin_dihedrals(x):
    phi = np.full(N_H1 + N_LOOP + N_H2, HELIX_PHI)
    psi = np.full(N_H1 + N_LOOP + N_H2, HELIX_PSI)
    psi[N_H1 - 1] = x[0]
    phi[N_H1:N_H1 + N_LOOP] = x[1:1 + N_LOOP]
    psi[N_H1:N_H1 + N_LOOP] = x[1 + N_LOOP:1 + 2 * N_LOOP]
    phi[N_H1 + N_LOOP] = x[-1]
    return phi, psi


def kabsch(p, q):
    """Rotation R and translation t with q ~ p @ R.T + t."""
    pc, qc = p.mean(axis=0), q.mean(axis=0)
    h = (p - pc).T @ (q - qc)
    uu, _, vt = np.linalg.svd(h)
    dd = np.sign(np.linalg.det(vt.T @ uu.T))
    r = vt.T @ np.diag([1.0, 1.0, dd]) @ uu.T
    return r, qc - pc @ r.T


_IDEAL = {}


def ideal_helix(n):
    if n not in _IDEAL:
        _IDEAL[n] = build_backbone(np.full(n, HELIX_PHI), np.full(n, HELIX_PSI))
    return _IDEAL[n]


def hairpin_ca(x):
    """CA trace of chain A for loop dihedrals x (fast: both helices are rigid bodies)."""
    h1, h2 = ideal_helix(N_H1), ideal_helix(N_H2)
    phi, psi = hairpin_dihedrals(x)
    pN, pCA, pC = h1[-1, :3]
    loop_ca = []
    for i in range(N_H1, N_H1 + N_LOOP + 1):
        N = place(pN, pCA, pC, 1.329, 116.2, psi[i - 1])
        CA = place(pCA, pC, N, 1.458, 121.7, 180.0)
        C = place(pC, N, CA, 1.525, 111.2, phi[i])
        pN, pCA, pC = N, CA, C
        loop_ca.append(CA)
    r, t = kabsch(h2[0, :3], np.array([pN, pCA, pC]))
    return np.concatenate([h1[:, 1], np.array(loop_ca[:-1]), h2[:, 1] @ r.T + t])


def hairpin_score(x):
    ca = hairpin_ca(x)
    c1, d1 = helix_axis(ca[2:N_H1 - 2])
    c2, d2 = helix_axis(ca[N_H1 + N_LOOP + 2:-2])
    delta = c2 - c1
    along = np.dot(delta, d1)
    perp = np.linalg.norm(delta - along * d1)
    s = 200.0 * (1.0 + np.dot(d1, d2)) ** 2 + (perp - AXIS_DIST) ** 2 + 0.05 * along ** 2
    # CA-CA contacts closer than 4.5 A between residues >= 3 apart
    dm = np.linalg.norm(ca[:, None] - ca[None], axis=-1)
    iu = np.triu_indices(len(ca), 3)
    s += 10.0 * np.sum(np.clip(4.5 - dm[iu], 0, None) ** 2)
    # mild preference for broad beta/alpha-R regions in the loop (Gly used where phi > 0)
    loop_phi = x[1:1 + N_LOOP]
    s += 0.002 * np.sum(np.clip(loop_phi + 40.0, 0, None) ** 2) * 0.2
    return s


class _Done(Exception):
    pass


def build_chain_a(rng):
    best = None
    for trial in range(24):
        x0 = np.concatenate([[rng.uniform(-60, 160)], rng.uniform(-160, -50, N_LOOP),
                             rng.uniform(-60, 170, N_LOOP), [rng.uniform(-160, -50)]])
        hit = {}

        def f(x):
            s = hairpin_score(x)
            if s < 0.2:
                hit["x"], hit["fun"] = x.copy(), s
                raise _Done
            return s

        try:
            res = minimize(f, x0, method="Powell", options={"maxfev": 4000, "xtol": 1e-2})
            res = (res.x, res.fun)
        except _Done:
            res = (hit["x"], hit["fun"])
        if best is None or res[1] < best[1]:
            best = res
        if best[1] < 0.2:
            break
    x = (best[0] + 180.0) % 360.0 - 180.0
    phi, psi = hairpin_dihedrals(x)
    log(f"  chain A hairpin loop search: score {best[1]:.3f} after {trial + 1} start(s)")
    log("  loop phi/psi: " + ", ".join(f"({p:.0f},{q:.0f})" for p, q in
                                       zip(phi[N_H1:N_H1 + N_LOOP], psi[N_H1:N_H1 + N_LOOP])))
    return build_backbone(phi, psi), phi


def rotation_to(a, b):
    """Rotation matrix taking unit vector a onto unit vector b."""
    v = np.cross(a, b)
    c = np.dot(a, b)
    if np.linalg.norm(v) < 1e-8:
        if c > 0:
            return np.eye(3)
        p = np.eye(3)[np.argmin(np.abs(a))]
        v = np.cross(a, p)
        v /= np.linalg.norm(v)
        return 2.0 * np.outer(v, v) - np.eye(3)
    vx = np.array([[0, -v[2], v[1]], [v[2], 0, -v[0]], [-v[1], v[0], 0]])
    return np.eye(3) + vx + vx @ vx * (1.0 / (1.0 + c))


def build_chain_b(xyz_a):
    ca = xyz_a[:, 1]
    c1, d1 = helix_axis(ca[2:N_H1 - 2])
    c2, d2 = helix_axis(ca[N_H1 + N_LOOP + 2:-2])
    mid = 0.5 * (c1 + c2)
    sep = c2 - c1
    sep -= np.dot(sep, d1) * d1
    normal = np.cross(d1, sep / np.linalg.norm(sep))
    apex = mid + normal * AXIS_DIST * np.sqrt(3) / 2.0
    xyz = build_backbone(np.full(N_B, HELIX_PHI), np.full(N_B, HELIX_PSI))
    cb, db = helix_axis(xyz[2:-2, 1])
    R = rotation_to(db, d1)  # binder runs parallel to helix 1
    flat = (xyz.reshape(-1, 3) - cb) @ R.T + apex
    return flat.reshape(xyz.shape)


# --------------------------------------------------------------------------------------------
# 2. sequence from geometry
# --------------------------------------------------------------------------------------------

def classify(xyz_a, xyz_b):
    """Per-residue (class, facing segment) from the virtual CB's distance to the other axes.

    Segments: 'h1', 'h2' (chain A helices) and 'B'.  Class: core < 7.4 A, rim < 9.3 A, else
    surface (distance from the CB to the nearest other helix axis, within its length).
    """
    segs = {"h1": (xyz_a, np.arange(0, N_H1)),
            "h2": (xyz_a, np.arange(N_H1 + N_LOOP, len(xyz_a))),
            "B": (xyz_b, np.arange(len(xyz_b)))}
    axes = {k: helix_axis(x[idx, 1][2:-2]) for k, (x, idx) in segs.items()}
    cb = {"A": virtual_cb(xyz_a), "B": virtual_cb(xyz_b)}

    def dist_to_axis(p, key):
        c, d = axes[key]
        v = p - c
        along = np.dot(v, d)
        if abs(along) > 0.75 * len(segs[key][1]) + 2.0:
            return 99.0
        return float(np.linalg.norm(v - along * d))

    out = {"A": [("loop", "-", 99.0)] * len(xyz_a), "B": [None] * len(xyz_b)}
    for key, (x, idx) in segs.items():
        chain = "B" if key == "B" else "A"
        for i in idx:
            d = {k: dist_to_axis(cb[chain][i], k) for k in segs if k != key}
            k = min(d, key=d.get)
            cls = "core" if d[k] < 7.4 else "rim" if d[k] < 9.3 else "surface"
            out[chain][i] = (cls, k, d[k])
    return out, cb


def assign_sequence(xyz_a, xyz_b, phi_a):
    """One-letter sequences for A and B plus the planted residues (0-based indices)."""
    cls, cb = classify(xyz_a, xyz_b)
    seq = {"A": [], "B": []}
    cyc = {"A": "LIALLI", "B": "LIALI"}
    # no E/K on consecutive exposed positions; the binder is neutral apart from its
    # salt-bridge Lys (and the termini), so that the salt bridge is the dominant charge pair
    surf = {"A": "EQKSQA", "B": "SQASQ"}
    n_core = {"A": 0, "B": 0}
    n_surf = {"A": 0, "B": 0}
    for chain in "AB":
        for i, (c, k, _) in enumerate(cls[chain]):
            if c == "loop":
                seq[chain].append("G" if phi_a[i] > 0 else "S")
            elif c == "core":
                seq[chain].append(cyc[chain][n_core[chain] % len(cyc[chain])])
                n_core[chain] += 1
            elif c == "rim":
                seq[chain].append("AQSA"[i % 4] if k == "B" or chain == "B" else "AEKQ"[i % 4])
            else:
                seq[chain].append(surf[chain][n_surf[chain] % len(surf[chain])])
                n_surf[chain] += 1
        # helix termini: polar caps
        seq[chain][0] = "S"
        seq[chain][-1] = "Q" if chain == "A" else "S"

    dmat = np.linalg.norm(cb["B"][:, None] - cb["A"][None], axis=-1)
    b_core = [i for i, c in enumerate(cls["B"]) if c[0] == "core" and 6 <= i < N_B - 6]
    b_rim = [i for i, c in enumerate(cls["B"]) if c[0] == "rim" and 6 <= i < N_B - 6]
    a_face = [j for j, c in enumerate(cls["A"]) if c[1] == "B" and c[0] in ("core", "rim")]
    mid_b = N_B / 2.0

    # buried hydrophobic pair: closest B-core / A-core CB pair near the interface middle
    cands = sorted((dmat[i, j] + 0.15 * abs(i - mid_b), i, j) for i in b_core for j in a_face
                    if cls["A"][j][0] == "core" and 4.5 < dmat[i, j] < 6.5)
    _, hb, ha = cands[0]
    seq["B"][hb], seq["A"][ha] = "I", "L"

    # salt bridge: B rim/core Lys to an A rim Glu, >= 9 residues along B from the pair
    cands = sorted((abs(dmat[i, j] - 6.5), i, j) for i in b_rim + b_core for j in a_face
                    if abs(i - hb) >= 9 and 5.0 < dmat[i, j] < 8.0 and j != ha
                    and np.linalg.norm(cb["A"][j] - cb["A"][ha]) > 9.0)
    _, sb, sa = cands[0]
    seq["B"][sb], seq["A"][sa] = "K", "E"

    # Trp: B interface position on the other side of the hydrophobic pair from the salt bridge
    side = -np.sign(sb - hb)
    cands = sorted((abs(i - (hb + side * 7)), i) for i in b_rim + b_core
                    if side * (i - hb) >= 4 and i not in (sb,))
    _, wb = cands[0]
    seq["B"][wb] = "W"
    return seq, cls, {"hydrophobic": (hb, ha), "salt_bridge": (sb, sa), "trp": wb}


# --------------------------------------------------------------------------------------------
# 3. structure completion
# --------------------------------------------------------------------------------------------

def backbone_topology(xyz, seq):
    top = app.Topology()
    pos = []
    el = {"N": app.element.nitrogen, "C": app.element.carbon, "O": app.element.oxygen}
    for chain_id in "AB":
        ch = top.addChain(chain_id)
        for i, aa in enumerate(seq[chain_id]):
            res = top.addResidue(THREE[aa], ch, id=str(i + 1))
            for name, p in zip(("N", "CA", "C", "O"), xyz[chain_id][i]):
                top.addAtom(name, el[name[0]], res)
                pos.append(p)
    return top, np.array(pos)


CHIS = {
    "SER": [("N", "CA", "CB", "OG")],
    "LEU": [("N", "CA", "CB", "CG"), ("CA", "CB", "CG", "CD1")],
    "ILE": [("N", "CA", "CB", "CG1"), ("CA", "CB", "CG1", "CD1")],
    "GLU": [("N", "CA", "CB", "CG"), ("CA", "CB", "CG", "CD"), ("CB", "CG", "CD", "OE1")],
    "GLN": [("N", "CA", "CB", "CG"), ("CA", "CB", "CG", "CD"), ("CB", "CG", "CD", "OE1")],
    "LYS": [("N", "CA", "CB", "CG"), ("CA", "CB", "CG", "CD"), ("CB", "CG", "CD", "CE"),
            ("CG", "CD", "CE", "NZ")],
    "TRP": [("N", "CA", "CB", "CG"), ("CA", "CB", "CG", "CD1")],
}


def dihedral(p0, p1, p2, p3):
    b0, b1, b2 = p0 - p1, p2 - p1, p3 - p2
    b1 = b1 / np.linalg.norm(b1)
    v = b0 - np.dot(b0, b1) * b1
    w = b2 - np.dot(b2, b1) * b1
    return np.degrees(np.arctan2(np.dot(np.cross(b1, v), w), np.dot(v, w)))


class Residue:
    """Atom indices, names and the chi machinery of one residue of an OpenMM topology."""

    def __init__(self, topology, res):
        self.res = res
        self.atoms = {a.name: a.index for a in res.atoms()}
        self.index = np.array(sorted(self.atoms.values()))
        adj = {i: set() for i in self.index}
        for a, b in topology.bonds():
            if a.residue is res and b.residue is res:
                adj[a.index].add(b.index)
                adj[b.index].add(a.index)
        self.chis = []
        for quad in CHIS.get(res.name, []):
            idx = [self.atoms[n] for n in quad]
            # atoms moved by this chi: reachable from atom 3 without passing atom 2
            seen, stack = {idx[2]}, [idx[2]]
            while stack:
                for nb in adj[stack.pop()]:
                    if nb not in seen and nb != idx[1]:
                        seen.add(nb)
                        stack.append(nb)
            seen.discard(idx[2])
            self.chis.append((idx, np.array(sorted(seen))))

    @property
    def sidechain(self):
        return np.array([i for n, i in self.atoms.items()
                         if n not in ("N", "CA", "C", "O", "H", "HA", "OXT", "H1", "H2", "H3")])

    def get_chi(self, pos, k):
        idx, _ = self.chis[k]
        return dihedral(*pos[idx])

    def set_chi(self, pos, k, value):
        idx, moving = self.chis[k]
        delta = np.radians(value - dihedral(*pos[idx]))
        axis = pos[idx[2]] - pos[idx[1]]
        axis /= np.linalg.norm(axis)
        v = pos[moving] - pos[idx[2]]
        c, s = np.cos(delta), np.sin(delta)
        v = v * c + np.cross(axis, v) * s + np.outer(v @ axis, axis) * (1 - c)
        pos[moving] = v + pos[idx[2]]


def find_residue(topology, chain_id, index):
    ch = [c for c in topology.chains() if c.id == chain_id][0]
    return Residue(topology, list(ch.residues())[index])


def clash_penalty(pos, moving, env, cutoff=3.2):
    d = np.linalg.norm(pos[moving][:, None] - pos[env][None], axis=-1)
    return float(np.sum(np.clip(cutoff - d, 0, None) ** 2))


def grid(n_chi, step):
    vals = np.arange(-180.0, 180.0, step)
    mesh = np.meshgrid(*[vals] * n_chi, indexing="ij")
    return np.stack([m.ravel() for m in mesh], axis=1)


def heavy_indices(topology):
    return np.array([a.index for a in topology.atoms() if a.element.symbol != "H"])


def set_salt_bridge(topology, pos, rk, re_):
    """Grid-search Lys chi1-3 and Glu chi1-3 for an NZ...OE contact without clashes."""
    heavy = heavy_indices(topology)
    env = np.setdiff1d(heavy, np.concatenate([rk.index, re_.index]))
    nz = rk.atoms["NZ"]
    oe = [re_.atoms["OE1"], re_.atoms["OE2"]]

    def enumerate_rots(r, n_chi, step, probe):
        out = []
        p = pos.copy()
        for chis in grid(n_chi, step):
            for k, v in enumerate(chis):
                r.set_chi(p, k, v)
            pen = clash_penalty(p, r.sidechain, env)
            out.append((pen, chis.copy(), p[probe].copy(), p[r.sidechain].copy()))
        # clash-free rotamers, or (if the neighbours' side chains are in the way) the 50 best
        pens = np.sort([o[0] for o in out])
        limit = max(0.05, pens[min(50, len(pens) - 1)])
        return [o[1:] for o in out if o[0] <= limit]

    k_rots = enumerate_rots(rk, 3, 30.0, [nz])
    e_rots = enumerate_rots(re_, 3, 30.0, oe)
    k_nz = np.array([r[1][0] for r in k_rots])
    e_oe = np.array([r[1] for r in e_rots])
    d = np.linalg.norm(k_nz[:, None, None] - e_oe[None], axis=-1).min(axis=2)
    order = np.argsort(np.abs(d - 2.9), axis=None)
    for flat in order[:2000]:
        ik, ie = np.unravel_index(flat, d.shape)
        dd = np.linalg.norm(k_rots[ik][2][:, None] - e_rots[ie][2][None], axis=-1)
        if dd.min() > 2.6:
            for k, v in enumerate(k_rots[ik][0]):
                rk.set_chi(pos, k, v)
            for k, v in enumerate(e_rots[ie][0]):
                re_.set_chi(pos, k, v)
            return float(d[ik, ie]), len(k_rots), len(e_rots)
    raise RuntimeError("no salt-bridge rotamer pair found")


def set_trp_packed(topology, pos, rw, chain_a_heavy):
    """Trp chi1/chi2 with no heavy-atom clash and the most contacts with chain A."""
    heavy = heavy_indices(topology)
    env = np.setdiff1d(heavy, rw.index)
    best = None
    p = pos.copy()
    for chis in grid(2, 10.0):
        for k, v in enumerate(chis):
            rw.set_chi(p, k, v)
        pen = clash_penalty(p, rw.sidechain, env, 3.4)
        d = np.linalg.norm(p[rw.sidechain][:, None] - p[chain_a_heavy][None], axis=-1)
        contacts = int(np.sum(d < 5.0))
        score = 20.0 * pen - 0.02 * contacts
        if best is None or score < best[0]:
            best = (score, chis.copy(), pen, contacts)
    for k, v in enumerate(best[1]):
        rw.set_chi(pos, k, v)
    return best


# --------------------------------------------------------------------------------------------
# 4. energies straight from OpenMM's NonbondedForce parameters (independent check)
# --------------------------------------------------------------------------------------------

class PairEnergies:
    """Per-residue-pair LJ and Coulomb (kcal/mol) from a NonbondedForce, NoCutoff, vacuum.

    Ordinary pairs only: every exception pair (1-2, 1-3, 1-4) is left out, as in the
    NonbondedForce's ordinary sum; ``lj14`` separately holds the exceptions' own LJ.
    """

    def __init__(self, system, topology):
        nb = [f for f in system.getForces() if isinstance(f, openmm.NonbondedForce)][0]
        n = system.getNumParticles()
        self.q = np.zeros(n)
        self.sig = np.zeros(n)
        self.eps = np.zeros(n)
        for i in range(n):
            q, s, e = nb.getParticleParameters(i)
            self.q[i] = q.value_in_unit(u.elementary_charge)
            self.sig[i] = s.value_in_unit(u.angstrom)
            self.eps[i] = e.value_in_unit(u.kilocalorie_per_mole)
        self.mask = ~np.eye(n, dtype=bool)
        self.ex = []
        for k in range(nb.getNumExceptions()):
            i, j, qq, s, e = nb.getExceptionParameters(k)
            self.mask[i, j] = self.mask[j, i] = False
            e = e.value_in_unit(u.kilocalorie_per_mole)
            if e != 0.0:
                self.ex.append((i, j, s.value_in_unit(u.angstrom), e))
        self.ex = np.array(self.ex) if self.ex else np.zeros((0, 4))
        residues = list(topology.residues())
        self.labels = [f"{r.chain.id}:{r.name}{r.id}" for r in residues]
        self.chain = np.array([r.chain.id for r in residues])
        self.resindex = np.array([a.residue.index for a in topology.atoms()])
        self.onehot = np.zeros((n, len(residues)))
        self.onehot[np.arange(n), self.resindex] = 1.0
        self.sij = 0.5 * (self.sig[:, None] + self.sig[None])
        self.eij = np.sqrt(self.eps[:, None] * self.eps[None])
        self.qij = self.q[:, None] * self.q[None]

    def __call__(self, pos):
        """(lj, coul, lj14) residue x residue matrices for positions in A."""
        r = np.linalg.norm(pos[:, None] - pos[None], axis=-1)
        np.fill_diagonal(r, 1.0)
        sr6 = (self.sij / r) ** 6
        lj = np.where(self.mask, 4.0 * self.eij * (sr6 * sr6 - sr6), 0.0)
        coul = np.where(self.mask, COULOMB_KJ_NM * KJ2KCAL * 10.0 * self.qij / r, 0.0)
        m = self.onehot
        res_lj, res_coul = m.T @ lj @ m, m.T @ coul @ m
        lj14 = np.zeros_like(res_lj)
        if len(self.ex):
            i, j = self.ex[:, 0].astype(int), self.ex[:, 1].astype(int)
            d = np.linalg.norm(pos[i] - pos[j], axis=1)
            e = 4.0 * self.ex[:, 3] * ((self.ex[:, 2] / d) ** 12 - (self.ex[:, 2] / d) ** 6)
            np.add.at(lj14, (self.resindex[i], self.resindex[j]), e)
            lj14 = lj14 + lj14.T
        np.fill_diagonal(res_lj, 0.0)
        np.fill_diagonal(res_coul, 0.0)
        np.fill_diagonal(lj14, 0.0)
        return res_lj, res_coul, lj14

    def top_pairs(self, mat, n=5, sign=+1, inter_chain=False):
        iu = np.triu_indices(len(mat), 1)
        vals = mat[iu]
        keep = np.ones(len(vals), bool)
        if inter_chain:
            keep = self.chain[iu[0]] != self.chain[iu[1]]
        order = [k for k in np.argsort(-sign * vals) if keep[k]][:n]
        return [(self.labels[iu[0][k]], self.labels[iu[1][k]], float(vals[k])) for k in order]


def to_angstrom(positions):
    return np.array(positions.value_in_unit(u.angstrom))


CHARGE_SCALE = 0.5  # Coulomb / 4 while relaxing: crude screening of vacuum electrostatics


def screened(system, f=CHARGE_SCALE):
    """Copy of ``system`` with all charges scaled by f (exception charge products by f^2).

    Used only to relax the models: in plain vacuum every salt bridge and H-bond collapses
    onto its LJ wall (+4-5 kcal/mol of LJ per charged pair at the minimum).  All reported
    energies use the unscaled Amber 14 parameters.
    """
    system = openmm.XmlSerializer.clone(system)
    nb = [x for x in system.getForces() if isinstance(x, openmm.NonbondedForce)][0]
    for i in range(nb.getNumParticles()):
        q, sig, eps = nb.getParticleParameters(i)
        nb.setParticleParameters(i, q * f, sig, eps)
    for k in range(nb.getNumExceptions()):
        i, j, qq, sig, eps = nb.getExceptionParameters(k)
        nb.setExceptionParameters(k, i, j, qq * f * f, sig, eps)
    return system


def cpu_platform():
    return openmm.Platform.getPlatformByName("CPU")


def make_context(system, pos):
    integ = openmm.VerletIntegrator(0.001)
    ctx = openmm.Context(system, integ, cpu_platform(), {"Threads": "1"})
    ctx.setPositions(pos * u.angstrom)
    return ctx, integ


def potential(ctx):
    return ctx.getState(getEnergy=True).getPotentialEnergy().value_in_unit(
        u.kilocalorie_per_mole)


def write_pdb(path, topology, pos, remark=None):
    """PDBFile.writeFile without its dated REMARK (so reruns give identical bytes)."""
    buf = io.StringIO()
    app.PDBFile.writeFile(topology, pos * u.angstrom, buf, keepIds=True)
    lines = [ln for ln in buf.getvalue().splitlines(True) if not ln.startswith("REMARK")]
    if remark:
        lines.insert(0, f"REMARK   1 {remark}\n")
    Path(path).write_text("".join(lines))


# --------------------------------------------------------------------------------------------
# 5. planting the clash
# --------------------------------------------------------------------------------------------

def plant_clash(pe, topology, pos, rw):
    """Rotate Trp chi1/chi2 until its ring overlaps a chain-A residue (see module doc)."""
    heavy = np.zeros(len(pos), bool)
    heavy[heavy_indices(topology)] = True
    w = rw.res.index
    sc = rw.sidechain
    others = np.setdiff1d(np.arange(len(pos)), rw.index)
    chain_a = pe.chain == "A"
    base_lj, _, _ = pe(pos)
    p = pos.copy()
    found = []
    for chis in grid(2, 5.0):
        for k, v in enumerate(chis):
            rw.set_chi(p, k, v)
        d = np.linalg.norm(p[sc][:, None] - p[others][None], axis=-1)
        dh = d[heavy[sc]][:, heavy[others]]
        if d.min() < 1.2 or dh.min() < 2.0:
            continue
        # LJ of the Trp residue with every residue (only Trp atoms moved)
        idx = rw.index
        r = np.linalg.norm(p[idx][:, None] - p[None], axis=-1)
        r[:, idx] = 1.0
        sr6 = (pe.sij[idx] / r) ** 6
        lj = np.where(pe.mask[idx], 4.0 * pe.eij[idx] * (sr6 * sr6 - sr6), 0.0)
        lj[:, idx] = 0.0
        per_res = lj.sum(axis=0) @ pe.onehot
        j = int(np.argmax(np.where(chain_a, per_res, -np.inf)))
        others_max = np.max(np.delete(per_res, [j, w]))
        # minimum heavy-heavy distance between the Trp side chain and residue j
        dj = np.linalg.norm(p[sc][heavy[sc]][:, None]
                            - p[pe.resindex == j][heavy[pe.resindex == j]][None], axis=-1)
        if (150.0 <= per_res[j] <= 800.0 and others_max < 20.0
                and 2.0 <= dj.min() <= 2.5 and np.sum(dj < 3.0) >= 2):
            found.append((float(dj.min()), float(per_res[j]), chis.copy(), j, float(others_max)))
    if not found:
        raise RuntimeError("no clash rotamer found")
    # prefer an overlap worth about +300 kcal/mol
    # and a hydrophobic partner residue if there is one
    hydrophobic = ("LEU", "ILE", "ALA")
    found.sort(key=lambda f: (pe.labels[f[3]].split(":")[1][:3] not in hydrophobic,
                              abs(np.log(f[1] / 300.0))))
    dmin, e, chis, j, om = found[0]
    for k, v in enumerate(chis):
        rw.set_chi(pos, k, v)
    return j, chis, dmin, e, len(found)


def check_facts(pe, pos_fixed, pos_clash, w, j, salt, hyd):
    lab = pe.labels
    out = {}
    failures = []
    for name, pos in (("clash", pos_clash), ("fixed", pos_fixed)):
        lj, coul, lj14 = pe(pos)
        log(f"  --- complex_{name}.pdb")
        top_lj = pe.top_pairs(lj, 4)
        log("  largest positive LJ pairs: " + "; ".join(f"{a}-{b} {e:+.1f}" for a, b, e in top_lj))
        top_c = pe.top_pairs(coul, 5, sign=-1, inter_chain=True)
        log("  most attractive inter-chain Coulomb pairs: "
            + "; ".join(f"{a}-{b} {e:+.1f}" for a, b, e in top_c))
        rank = [sorted((a, b)) for a, b, _ in top_c].index(sorted((lab[salt[0]], lab[salt[1]]))) \
            if sorted((lab[salt[0]], lab[salt[1]])) in [sorted((a, b)) for a, b, _ in top_c] else None
        e_hyd = float(lj[hyd[0], hyd[1]])
        e_clash = float(lj[w, j])
        with14 = lj + lj14
        iu = np.triu_indices(len(lj), 1)
        log(f"  clash pair {lab[w]}-{lab[j]}: LJ {e_clash:+.1f}, Coulomb {coul[w, j]:+.1f}")
        log(f"  salt bridge {lab[salt[0]]}-{lab[salt[1]]}: Coulomb {coul[salt]:+.1f}, "
            f"LJ {lj[salt]:+.1f}, inter-chain Coulomb rank {None if rank is None else rank + 1}")
        log(f"  hydrophobic {lab[hyd[0]]}-{lab[hyd[1]]}: LJ {e_hyd:+.2f}, "
            f"Coulomb {coul[hyd]:+.2f}")
        inter = pe.chain[iu[0]] != pe.chain[iu[1]]
        hyd_names = ("LEU", "ILE", "ALA", "TRP")
        hp = [(float(lj[a, b]), lab[a], lab[b]) for a, b in zip(iu[0][inter], iu[1][inter])
              if lab[a].split(":")[1][:3] in hyd_names and lab[b].split(":")[1][:3] in hyd_names]
        log("  most favourable inter-chain hydrophobic LJ pairs: "
            + "; ".join(f"{a}-{b} {e:+.2f}" for e, a, b in sorted(hp)[:4]))
        log(f"  max inter-residue LJ {lj[iu].max():+.2f} (with 1-4 exception LJ added: "
            f"{with14[iu].max():+.2f})")
        out[name] = {"clash_lj": round(e_clash, 2), "salt_bridge_coulomb": round(float(coul[salt]), 2),
                     "salt_bridge_rank_inter_chain_coulomb": None if rank is None else rank + 1,
                     "hydrophobic_lj": round(e_hyd, 2),
                     "max_pair_lj": round(float(lj[iu].max()), 2),
                     "max_pair_lj_with_14": round(float(with14[iu].max()), 2)}
        if rank is None or rank > 2:
            failures.append(f"{name}: salt bridge not among the 3 most attractive Coulomb pairs")
        if e_hyd >= -1.0:
            failures.append(f"{name}: hydrophobic pair LJ {e_hyd:.2f} >= -1")
        if name == "clash":
            if sorted(top_lj[0][:2]) != sorted((lab[w], lab[j])):
                failures.append("clash pair is not the largest positive LJ pair")
            if e_clash < 100.0:
                failures.append(f"clash LJ {e_clash:.1f} < 100")
        else:
            if lj[iu].max() > 5.0:
                failures.append(f"fixed: an inter-residue LJ pair exceeds +5 ({lj[iu].max():.2f})")
    if failures:
        for f in failures:
            log("  FAILED: " + f)
        raise SystemExit(1)
    log("  all scenario facts hold")
    return out


# Langevin steps (0.5 fs) between recorded frames: fine at first, while the clash relaxes.
# (No minimisation needed first: the integrator survives the clash at 0.5 fs.)
MD_CHUNKS = (2,) * 10 + (5,) * 4 + (40,) * 26


def relax_trajectory(top, pos_clash, pe, pair):
    """relax.dcd: frame 0 = clash, then Langevin dynamics frames (MD_CHUNKS)."""
    # vacuum, like the checks (OBC2 on OpenMM's CPU platform was ~60x slower here)
    ff = app.ForceField("amber14-all.xml")
    system = screened(ff.createSystem(top, nonbondedMethod=app.NoCutoff, constraints=None))
    integ = openmm.LangevinMiddleIntegrator(100 * u.kelvin, 10.0 / u.picosecond,
                                            0.5 * u.femtosecond)
    integ.setRandomNumberSeed(SEED % 2**31)
    ctx = openmm.Context(system, integ, openmm.Platform.getPlatformByName("CPU"),
                         {"Threads": "1"})  # one thread: same summation order every run
    ctx.setPositions(pos_clash * u.angstrom)
    ctx.setVelocitiesToTemperature(100 * u.kelvin, SEED % 2**31)
    energies = []
    path = OUT / "relax.dcd"
    with open(path, "wb") as fh:
        dcd = app.DCDFile(fh, top, 0.5 * u.femtosecond, 0, 1)

        def frame():
            p = ctx.getState(getPositions=True).getPositions(asNumpy=True)
            dcd.writeModel(p)
            lj, _, _ = pe(to_angstrom(p))
            energies.append(round(float(lj[pair]), 2))

        frame()
        for n_steps in MD_CHUNKS:
            integ.step(n_steps)
            frame()
    n = len(energies)
    if not (energies[0] >= 100.0 and energies[-1] < 5.0):
        log(f"  FAILED: the clash does not relax along the trajectory ({energies})")
        raise SystemExit(1)
    log(f"  wrote {path}: {n} frames (start + {sum(MD_CHUNKS)} Langevin steps of 0.5 fs "
        f"at 100 K, friction 10/ps, vacuum, charges x{CHARGE_SCALE}; steps between frames "
        f"{','.join(map(str, MD_CHUNKS))})")
    log("  clash-pair LJ by frame: " + " ".join(f"{e:+.0f}" for e in energies))
    import MDAnalysis as mda
    uni = mda.Universe(str(OUT / "complex_clash.pdb"), str(path))
    assert uni.trajectory.n_frames == n and len(uni.atoms) == top.getNumAtoms()
    log(f"  MDAnalysis reads it back: {uni.trajectory.n_frames} frames x {len(uni.atoms)} atoms")
    return n, energies


# --------------------------------------------------------------------------------------------
# main
# --------------------------------------------------------------------------------------------

def main() -> int:
    t0 = time.time()
    rng = np.random.default_rng(SEED)
    OUT.mkdir(parents=True, exist_ok=True)
    log("[1] ideal helix backbones")
    xyz_a, phi_a = build_chain_a(rng)
    xyz_b = build_chain_b(xyz_a)
    log("[2] sequence from geometry")
    seq, cls, picks = assign_sequence(xyz_a, xyz_b, phi_a)
    for c in "AB":
        log(f"  chain {c} ({len(seq[c])} aa): {''.join(seq[c])}")
        log(f"           class: {''.join(x[0][0] for x in cls[c])}")
    hb, ha = picks["hydrophobic"]
    sb, sa = picks["salt_bridge"]
    wb = picks["trp"]

    log("[3] backbone-only PDB -> PDBFixer heavy atoms -> rotamers -> Modeller hydrogens")
    from pdbfixer import PDBFixer

    top, pos = backbone_topology({"A": xyz_a, "B": xyz_b}, seq)
    with tempfile.TemporaryDirectory() as tmp:
        bb_path = Path(tmp) / "backbone.pdb"
        write_pdb(bb_path, top, pos)
        fixer = PDBFixer(filename=str(bb_path), platform=cpu_platform())
    fixer.findMissingResidues()
    fixer.missingResidues = {}
    fixer.findMissingAtoms()
    n_missing = sum(len(v) for v in fixer.missingAtoms.values())
    fixer.addMissingAtoms(seed=SEED)
    top, pos = fixer.topology, to_angstrom(fixer.positions)
    log(f"  PDBFixer added {n_missing} side-chain heavy atoms (+ terminal OXT); "
        f"{top.getNumAtoms()} heavy atoms")
    rk, re_ = find_residue(top, "B", sb), find_residue(top, "A", sa)
    d, nk, ne = set_salt_bridge(top, pos, rk, re_)
    log(f"  salt bridge B:LYS{sb + 1} NZ - A:GLU{sa + 1} OE: {d:.2f} A "
        f"({nk} x {ne} clash-free rotamers searched)")
    rw = find_residue(top, "B", wb)
    chain_a_heavy = np.array([a.index for a in top.atoms()
                              if a.residue.chain.id == "A" and a.element.symbol != "H"])
    score, chis, pen, contacts = set_trp_packed(top, pos, rw, chain_a_heavy)
    log(f"  Trp B:TRP{wb + 1} packed rotamer chi1/chi2 = {chis[0]:.0f}/{chis[1]:.0f} "
        f"(clash penalty {pen:.2f}, {contacts} heavy contacts < 5 A with chain A)")

    ff = app.ForceField("amber14-all.xml")
    modeller = app.Modeller(top, pos * u.angstrom)
    random.seed(SEED)  # Modeller drops new hydrogens at random.random() offsets first
    modeller.addHydrogens(ff, pH=7.0, platform=cpu_platform())
    top = modeller.topology
    pos = to_angstrom(modeller.positions)
    log(f"  with hydrogens: {top.getNumAtoms()} atoms, {top.getNumResidues()} residues")

    log("[4] Amber 14 vacuum minimisation (NoCutoff)")
    system = ff.createSystem(top, nonbondedMethod=app.NoCutoff, constraints=None)
    ctx, integ = make_context(screened(system), pos)
    e0 = potential(ctx)
    for _ in range(3):
        openmm.LocalEnergyMinimizer.minimize(ctx, 1.0, 300)
    pos_fixed = to_angstrom(ctx.getState(getPositions=True).getPositions(asNumpy=True))
    e1 = potential(ctx)
    log(f"  potential energy {e0:.1f} -> {e1:.1f} kcal/mol "
        f"(charges x{CHARGE_SCALE})")
    write_pdb(OUT / "complex_fixed.pdb", top, pos_fixed, REMARK + " RELAXED (FIXED) MODEL")
    log(f"  wrote {OUT / 'complex_fixed.pdb'}")

    pe = PairEnergies(system, top)
    res = list(top.residues())
    rw = Residue(top, res[[r.index for r in res if r.chain.id == "B"][wb]])
    lab = pe.labels
    ia = {c: [r.index for r in res if r.chain.id == c] for c in "AB"}
    log("[5] planting the clash")
    pos_clash = pos_fixed.copy()
    j, chis, dmin, e, nfound = plant_clash(pe, top, pos_clash, rw)
    log(f"  {lab[rw.res.index]} chi1/chi2 -> {chis[0]:.0f}/{chis[1]:.0f}: overlaps {lab[j]} "
        f"(min heavy-heavy {dmin:.2f} A, LJ {e:+.1f} kcal/mol; {nfound} candidate rotamers)")
    write_pdb(OUT / "complex_clash.pdb", top, pos_clash, REMARK + " AS DELIVERED (TRP CLASH)")
    log(f"  wrote {OUT / 'complex_clash.pdb'}")

    # the buried hydrophobic pair: the most favourable inter-chain Leu/Ile LJ pair after
    # minimisation (the designed pair B:ILE/A:LEU from step 2 is usually it or close to it)
    lj_fixed, _, _ = pe(pos_fixed)
    hyd = [(lj_fixed[i, k], i, k) for i in ia["B"] for k in ia["A"]
           if res[i].name in ("LEU", "ILE") and res[k].name in ("LEU", "ILE")
           and k != j]
    _, i_hb, i_ha = min(hyd)
    log(f"  designed hydrophobic pair {lab[ia['B'][hb]]}-{lab[ia['A'][ha]]}: LJ "
        f"{lj_fixed[ia['B'][hb], ia['A'][ha]]:+.2f}; most favourable Leu/Ile pair "
        f"{lab[i_hb]}-{lab[i_ha]}: {lj_fixed[i_hb, i_ha]:+.2f} kcal/mol")
    i_sb, i_sa = ia["B"][sb], ia["A"][sa]

    log("[6] checks (OpenMM NonbondedForce parameters, numpy pair sums, kcal/mol)")
    facts = check_facts(pe, pos_fixed, pos_clash, rw.res.index, j, (i_sb, i_sa), (i_hb, i_ha))

    log("[7] relaxation trajectory")
    n_frames, traj_lj = relax_trajectory(top, pos_clash, pe, (rw.res.index, j))

    scenario = {
        "description": (
            "Invented demo scenario: design variant K7.3 of the de novo helical binder K7 "
            "(chain B) docked into the groove of the target hairpin TB-2 (chain A). The Trp of "
            "K7.3 sits in a rotamer that clashes with the target; an interface Lys/Glu salt "
            "bridge and a buried Ile/Leu pair hold the complex together. complex_clash.pdb is "
            "the model as delivered, complex_fixed.pdb the relaxed model with the Trp "
            "repacked; relax.dcd shows the clash relaxing. Sequences, names and coordinates "
            "are invented (ideal helices built by samples/make_scenario.py)."),
        "files": {"clash": "complex_clash.pdb", "fixed": "complex_fixed.pdb",
                  "trajectory": "relax.dcd", "trajectory_topology": "complex_clash.pdb"},
        "forcefield": "amber14-all.xml (OpenMM), vacuum, no cutoff",
        "clash": [lab[rw.res.index], lab[j]],
        "salt_bridge": [lab[i_sb], lab[i_sa]],
        "hydrophobic": [lab[i_hb], lab[i_ha]],
        "sequences": {c: "".join(seq[c]) for c in "AB"},
        "n_atoms": top.getNumAtoms(),
        "n_residues": top.getNumResidues(),
        "n_frames": n_frames,
        "energies_kcal_mol": facts,
        "trajectory_frames": {
            "0": "complex_clash.pdb coordinates",
            f"1-{n_frames - 1}": "Langevin dynamics (100 K, 0.5 fs steps, friction 10/ps, "
                                 "vacuum, charges x0.5); steps between frames: "
                                 + ",".join(map(str, MD_CHUNKS))},
        "trajectory_clash_lj_kcal_mol": traj_lj,
        "definition": ("Pair energies: ordinary nonbonded pairs only (all 1-2/1-3/1-4 "
                       "exception pairs excluded), Lennard-Jones with Lorentz-Berthelot "
                       "combination, plain Coulomb eps=1, no cutoff."),
    }
    (OUT / "scenario.json").write_text(json.dumps(scenario, indent=2) + "\n")
    log(f"  wrote {OUT / 'scenario.json'}")
    total = sum(f.stat().st_size for f in OUT.iterdir())
    log(f"done in {time.time() - t0:.0f} s; scenario/ holds {total / 1e6:.2f} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
