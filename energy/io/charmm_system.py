"""Build a :class:`~energy.model.system.MolecularSystem` from a PSF and CHARMM-style parameters.

Lookup rules (the same as OpenMM's ``CharmmPsfFile.loadParameters``, the test reference):
bonds, angles and CMAP need an exact type match (either direction); dihedrals and impropers try
the exact quadruplet first, then put the wildcard ``X`` in 1, 2, then 3 positions, in the order
of :func:`itertools.combinations` (e.g. ``X-B-C-D`` is tried before ``A-X-X-D``); all terms of a
multi-term dihedral apply.  Every missing parameter is collected and reported at once.
"""
from __future__ import annotations

import math
from itertools import combinations

import numpy as np

from energy.errors import MissingParametersError, StructureFileError
from energy.io.charmm_params import CharmmParameters, canonical_angle, canonical_cmap, canonical_pair, canonical_quad
from energy.io.coordinates import read_frame  # noqa: F401  (re-exported: the PSF route reads frames here)
from energy.model.system import MolecularSystem, ResidueTable, TermTable

#: (element, mass amu) used to guess elements from masses (common practice: nearest mass).
_ELEMENT_MASSES = (("H", 1.008), ("LI", 6.94), ("C", 12.011), ("N", 14.007), ("O", 15.999),
                   ("F", 18.998), ("NA", 22.990), ("MG", 24.305), ("AL", 26.982),
                   ("SI", 28.086), ("P", 30.974), ("S", 32.06), ("CL", 35.45), ("K", 39.098),
                   ("CA", 40.078), ("MN", 54.938), ("FE", 55.845), ("CO", 58.933),
                   ("NI", 58.693), ("CU", 63.546), ("ZN", 65.38), ("SE", 78.971),
                   ("BR", 79.904), ("RB", 85.468), ("CS", 132.91), ("I", 126.90))


def element_from_mass(mass: float) -> str:
    """Guess the element symbol from an atomic mass in amu (nearest tabulated element).

    Masses below 4.5 amu are hydrogen (covers deuterium and repartitioned hydrogens); masses
    below 0.5 amu (lone pairs, Drude particles) give ``""``.

    Parameters
    ----------
    mass : float
        Atomic mass, amu.

    Returns
    -------
    str
        Upper-case element symbol (e.g. ``"CL"``), or ``""`` when no tabulated element lies within
        1.5 amu.
    """
    if mass < 0.5:
        return ""
    if mass < 4.5:
        return "H"
    symbol, ref = min(_ELEMENT_MASSES, key=lambda item: abs(item[1] - mass))
    return symbol if abs(ref - mass) < 1.5 else ""


def match_with_wildcards(types, table: dict, max_wildcards: int = 3):
    """Look a torsion type quadruplet up, exact first, then with more and more ``X`` wildcards.

    Returns the table value, or ``None`` if nothing matches.

    Parameters
    ----------
    types : sequence of str
        The four atom types.
    table : dict
        Canonical quadruplet (:func:`~energy.io.charmm_params.canonical_quad`) -> parameters.
    max_wildcards : int, optional
        Most ``X`` positions tried (default 3), in the order of :func:`itertools.combinations`.

    Returns
    -------
    object or None
        The first matching table value.
    """
    for count in range(max_wildcards + 1):
        for positions in combinations(range(len(types)), count):
            key = tuple("X" if i in positions else t for i, t in enumerate(types))
            value = table.get(canonical_quad(key))
            if value is not None:
                return value
    return None


def _resolve_types(psf, params: CharmmParameters, missing) -> np.ndarray:
    """PSF types as upper-case names; numeric types go through the MASS numbers."""
    out = []
    for i, raw in enumerate(psf.types):
        name = str(raw).upper()
        if name.lstrip("-").isdigit() and name not in params.masses:
            resolved = params.type_numbers.get(int(name))
            if resolved is None:
                missing.setdefault("atom type", {}).setdefault((name,), (i,))
                resolved = name
            name = resolved
        out.append(name)
    return np.array(out, dtype=object)


def _residues(psf):
    """Residue table and atom -> residue index (a new residue wherever the label changes)."""
    labels = list(zip(psf.segids, psf.resids, psf.icodes, psf.resnames))
    resindex = np.zeros(len(labels), dtype=np.intp)
    starts = []
    for i, label in enumerate(labels):
        if i == 0 or label != labels[i - 1]:
            starts.append(i)
        resindex[i] = len(starts) - 1
    rows = [labels[s] for s in starts]
    table = ResidueTable(chain=[r[0] for r in rows], resid=[r[1] for r in rows],
                         resname=[r[3] for r in rows], icode=[r[2] for r in rows])
    return table, resindex


def _neighbour_pairs(n_atoms: int, bonds: np.ndarray):
    """1-2, 1-3 and 1-4 atom pairs (i < j) from the bond graph, as OpenMM's CharmmPsfFile."""
    partners = [set() for _ in range(n_atoms)]
    for a, b in bonds:
        partners[a].add(int(b))
        partners[b].add(int(a))
    p12 = {(min(a, b), max(a, b)) for a, b in map(tuple, bonds.tolist()) if a != b}
    p13, p14 = set(), set()
    for a, b in p12:
        for c in partners[a]:
            if c != b:
                p13.add((min(c, b), max(c, b)))
        for c in partners[b]:
            if c != a:
                p13.add((min(a, c), max(a, c)))
        for c in partners[a]:
            for d in partners[b]:
                if c != b and a != d and c != d:
                    p14.add((min(c, d), max(c, d)))
    p13 -= p12
    p14 -= p12 | p13
    return sorted(p12), sorted(p13), sorted(p14)


class _Builder:
    def __init__(self, psf, params: CharmmParameters):
        self.psf, self.params = psf, params
        self.missing: dict[str, dict[tuple, tuple]] = {}
        self.types = _resolve_types(psf, params, self.missing)
        self.residues, self.resindex = _residues(psf)

    def example(self, atoms) -> str:
        """``A:ALA2 N-CA-C-O`` (atoms of other residues get their own residue label)."""
        first = self.resindex[atoms[0]]
        parts = [str(self.psf.names[a]) if self.resindex[a] == first
                 else f"{self.residues.label(self.resindex[a])}:{self.psf.names[a]}" for a in atoms]
        return f"{self.residues.label(first)} " + "-".join(parts)

    def lookup(self, kind, table, rows, key_of):
        """For each row of atom indices, the table value (or None, recorded as missing)."""
        values = []
        for atoms in rows:
            types = tuple(self.types[a] for a in atoms)
            value = key_of(types, table)
            if value is None:
                self.missing.setdefault(kind, {}).setdefault(types, tuple(atoms))
            values.append(value)
        return values

    def bonded(self):
        psf, p = self.psf, self.params
        bond_v = self.lookup("bond", p.bonds, psf.bonds, lambda t, d: d.get(canonical_pair(*t)))
        angle_v = self.lookup("angle", p.angles, psf.angles,
                              lambda t, d: d.get(canonical_angle(*t)))
        dih_v = self.lookup("dihedral", p.dihedrals, psf.dihedrals, match_with_wildcards)
        imp_v = self.lookup("improper", p.impropers, psf.impropers, match_with_wildcards)
        cmap_v = self.lookup("cmap", p.cmaps, psf.cmaps,
                             lambda t, d: (canonical_cmap(t), d[canonical_cmap(t)])
                             if canonical_cmap(t) in d else None)
        if self.missing.get("bond") or self.missing.get("angle") or self.missing.get("dihedral") \
                or self.missing.get("improper") or self.missing.get("cmap"):
            return None
        deg = math.pi / 180.0
        tables = {"bonds": TermTable(psf.bonds, {"k": [v[0] for v in bond_v],
                                                 "r0": [v[1] for v in bond_v]}),
                  "angles": TermTable(psf.angles, {"k": [v[0] for v in angle_v],
                                                   "theta0": [v[1] * deg for v in angle_v]})}
        ub = [(row, v) for row, v in zip(psf.angles, angle_v) if v[2] is not None]
        tables["urey_bradley"] = TermTable(np.array([r for r, _ in ub]).reshape(-1, 3),
                                           {"k": [v[2] for _, v in ub], "s0": [v[3] for _, v in ub]})
        dih = [(row, term) for row, terms in zip(psf.dihedrals, dih_v) for term in terms]
        tables["dihedrals"] = TermTable(np.array([r for r, _ in dih]).reshape(-1, 4),
                                        {"k": [t[0] for _, t in dih],
                                         "periodicity": [t[1] for _, t in dih],
                                         "phase": [t[2] * deg for _, t in dih]})
        harmonic = [(r, v) for r, v in zip(psf.impropers, imp_v) if v[1] == 0]
        periodic = [(r, v) for r, v in zip(psf.impropers, imp_v) if v[1] != 0]
        tables["impropers"] = TermTable(np.array([r for r, _ in harmonic]).reshape(-1, 4),
                                        {"k": [v[0] for _, v in harmonic],
                                         "psi0": [v[2] * deg for _, v in harmonic]})
        tables["periodic_impropers"] = TermTable(
            np.array([r for r, _ in periodic]).reshape(-1, 4),
            {"k": [v[0] for _, v in periodic], "periodicity": [v[1] for _, v in periodic],
             "phase": [v[2] * deg for _, v in periodic]})
        map_keys = list(dict.fromkeys(key for key, _ in cmap_v))
        tables["cmap"] = TermTable(psf.cmaps, {"map": [map_keys.index(k) for k, _ in cmap_v]})
        tables["cmap_maps"] = tuple(p.cmaps[k] for k in map_keys)
        return tables

    def nonbonded(self):
        """LJ tables, per-atom LJ type and the exception list."""
        p = self.params
        lj_names = list(dict.fromkeys(self.types))
        for i, name in enumerate(self.types):
            if name not in p.nonbonded:
                self.missing.setdefault("nonbonded", {}).setdefault((name,), (i,))
        if self.missing.get("nonbonded"):
            return None
        index = {name: k for k, name in enumerate(lj_names)}
        eps = np.array([abs(p.nonbonded[n][0]) for n in lj_names])
        half = np.array([p.nonbonded[n][1] for n in lj_names])
        rmin = half[:, None] + half[None, :]
        depth = np.sqrt(eps[:, None] * eps[None, :])
        for (a, b), (emin, r, _, _) in p.nbfix.items():
            if a in index and b in index:
                for i, j in ((index[a], index[b]), (index[b], index[a])):
                    rmin[i, j], depth[i, j] = r, abs(emin)
        if abs(p.nbxmod) != 5:
            raise StructureFileError(p.source_files[-1] if p.source_files else "parameters",
                                     f"NBXMOD {p.nbxmod} is not supported (only 5: exclude 1-2 "
                                     "and 1-3 pairs, special 1-4 pairs)")
        p12, p13, p14 = _neighbour_pairs(len(self.types), self.psf.bonds)
        pairs, qq, r14, e14 = [], [], [], []
        for i, j in p12 + p13:
            pairs.append((i, j)), qq.append(0.0), r14.append(0.0), e14.append(0.0)
        q = self.psf.charges
        for i, j in p14:
            ti, tj = self.types[i], self.types[j]
            fix = p.nbfix.get(canonical_pair(ti, tj))
            if fix is not None:  # OpenMM: NBFIX 1-4 values, defaulting to the NBFIX pair values
                r, e = (fix[3] if fix[3] is not None else fix[1],
                        fix[2] if fix[2] is not None else fix[0])
            else:
                (ei, hi, ei14, hi14), (ej, hj, ej14, hj14) = p.nonbonded[ti], p.nonbonded[tj]
                r = (hi if hi14 is None else hi14) + (hj if hj14 is None else hj14)
                e = math.sqrt(abs((ei if ei14 is None else ei14) * (ej if ej14 is None else ej14)))
            pairs.append((i, j)), qq.append(q[i] * q[j] * p.e14fac), r14.append(r)
            e14.append(abs(e))
        order = np.lexsort((np.array([b for _, b in pairs]), np.array([a for a, _ in pairs]))) \
            if pairs else np.zeros(0, dtype=np.intp)
        return {"lj_type": [index[n] for n in self.types], "lj_rmin": rmin, "lj_eps": depth,
                "exception_pairs": np.array(pairs, dtype=np.intp).reshape(-1, 2)[order],
                "exception_qq": np.array(qq)[order], "exception_rmin": np.array(r14)[order],
                "exception_eps": np.array(e14)[order]}

    def raise_missing(self):
        if any(self.missing.values()):
            raise MissingParametersError({kind: [(types, self.example(atoms))
                                                 for types, atoms in entries.items()]
                                          for kind, entries in self.missing.items() if entries})


def build_charmm_system(psf, params: CharmmParameters, force_field: str = "",
                        source_files: tuple = ()) -> MolecularSystem:
    """Parameterise a PSF topology with a CHARMM-style parameter set.

    Parameters
    ----------
    psf : energy.io.psf.PsfTopology
        The topology (from :func:`energy.io.psf.read_psf`).
    params : energy.io.charmm_params.CharmmParameters
        The merged parameters (from :func:`energy.io.charmm_params.read_charmm_parameters`).
    force_field : str
        Label stored in the system (defaults to the parameter file names).
    source_files : tuple of str
        Files the system came from (defaults to the PSF and parameter files).

    Returns
    -------
    MolecularSystem
        Units kcal/mol, angstrom, radians; ``E = K (x - x0)^2`` force constants.

    Raises
    ------
    MissingParametersError
        Listing every missing bond/angle/dihedral/improper/cmap/nonbonded type combination.
    """
    builder = _Builder(psf, params)
    bonded = builder.bonded()
    nonbonded = builder.nonbonded()
    builder.raise_missing()
    if not force_field:
        force_field = ", ".join(str(f).replace("\\", "/").rsplit("/", 1)[-1]
                                for f in params.source_files)
    return MolecularSystem(
        names=psf.names, types=builder.types,
        elements=[element_from_mass(m) for m in psf.masses], charges=psf.charges,
        resindex=builder.resindex, residues=builder.residues, **nonbonded, **bonded,
        force_field=force_field,
        source_files=tuple(source_files) or (psf.path,) + tuple(params.source_files),
        segids=psf.segids)


def load_psf_system(psf_path, param_paths, coords_path, frame: int = 0):
    """Read a PSF, its parameter/stream files and one frame of coordinates.

    Parameters
    ----------
    psf_path : str or os.PathLike
        PSF topology.
    param_paths : str or sequence of str
        Parameter/stream files, merged in order (later ones override).
    coords_path : str or os.PathLike
        Coordinates (PDB, CRD, DCD, ... anything MDAnalysis reads; trajectories use the PSF as
        topology).
    frame : int
        Frame number, 0-based.

    Returns
    -------
    (MolecularSystem, Frame)
    """
    from energy.io.charmm_params import read_charmm_parameters
    from energy.io.psf import read_psf

    psf = read_psf(psf_path)
    params = read_charmm_parameters(param_paths)
    system = build_charmm_system(psf, params)
    return system, read_frame(coords_path, psf.n_atoms, psf.names, frame)
