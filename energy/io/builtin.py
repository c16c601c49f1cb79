"""The built-in force-field route: a PDB or mmCIF alone, parameterised with OpenMM's library.

OpenMM's ``ForceField`` matches residue templates (default: the Amber 14 protein force field,
``amber14-all.xml``, with TIP3P water, ``amber14/tip3p.xml``), optionally after adding missing
hydrogens at pH 7 with ``Modeller.addHydrogens``.  The resulting ``openmm.System`` is converted
into the engine's own arrays: harmonic forces to ``K (x - x0)^2`` form (K = k/2), kJ -> kcal,
nm -> A, sigma -> Rmin = 2^(1/6) sigma; NonbondedForce exceptions keep OpenMM's own 1-4 scaling
(for Amber: Coulomb 1/1.2, LJ 1/2).  Periodic torsions whose four atoms are not a bonded chain
are periodic impropers.
"""
from __future__ import annotations

import functools
import os
import re

import numpy as np

from energy.errors import StructureFileError, UnknownResidueError, one_line
from energy.io.coordinate_text import check_coordinate_text
from energy.model.system import Frame, MolecularSystem, ResidueTable, TermTable
from energy.units import ANGSTROM_PER_NM, KJ_PER_KCAL

DEFAULT_FORCE_FIELD = ("amber14-all.xml", "amber14/tip3p.xml")
RMIN_PER_SIGMA = 2.0 ** (1.0 / 6.0)
_KNOWN_FORCES = {"HarmonicBondForce", "HarmonicAngleForce", "PeriodicTorsionForce",
                 "NonbondedForce", "CMAPTorsionForce", "CMMotionRemover"}


def _read_openmm_structure(path: str):
    from openmm import app
    ext = os.path.splitext(path)[1].lower()
    check_coordinate_text(path)
    try:
        if ext in (".cif", ".mmcif", ".pdbx"):
            return app.PDBxFile(path)
        return app.PDBFile(path)
    except FileNotFoundError:
        raise StructureFileError(path, "file not found") from None
    except Exception as exc:  # OpenMM raises bare Exceptions/ValueErrors on malformed files
        raise StructureFileError(path, f"could not read the structure ({one_line(exc, 160)})") from None


def _unmatched_message(ff, topology, add_hydrogens: bool, ff_names) -> str:
    unmatched = ff.getUnmatchedResidues(topology)
    known = {name for name in ff._templates}
    has_h = any(a.element is not None and a.element.symbol == "H" for a in topology.atoms())
    names_known = [r for r in unmatched if r.name in known]
    labels = [f"{r.chain.id.strip() + ':' if r.chain.id.strip() else ''}{r.name}{r.id}" for r in unmatched[:12]]
    more = f" and {len(unmatched) - 12} more" if len(unmatched) > 12 else ""
    head = f"{len(unmatched)} residue(s) match no template of {', '.join(ff_names)}: {', '.join(labels)}{more}. "
    if not has_h and not add_hydrogens:
        return "the structure has no hydrogen atoms: add them with --add-hydrogens. " + head
    if names_known and not add_hydrogens:
        head += "Residues with standard names but missing or extra atoms may need --add-hydrogens. "
    return head + ("Remove unsupported residues (ligands, modified residues) from the file, or use "
                   "the PSF route with parameter files that cover them.")


def _clean_openmm_message(exc: Exception) -> str:
    text = str(exc).split("For more information")[0].strip()
    return " ".join(text.split())


def _atom_types(ff, topology):
    try:
        templates = ff.getMatchingTemplates(topology)
    except Exception:
        return None
    types = []
    for res, tmpl in zip(topology.residues(), templates):
        by_name = {a.name: a.type for a in tmpl.atoms}
        types.extend(by_name.get(atom.name, "?") for atom in res.atoms())
    return types


def _box_from_topology(topology):
    vectors = topology.getPeriodicBoxVectors()
    if vectors is None:
        return None
    from openmm import unit
    v = np.array([[c.value_in_unit(unit.angstrom) for c in vec] for vec in vectors])
    lengths = np.linalg.norm(v, axis=1)
    angle = lambda a, b: np.degrees(np.arccos(np.dot(v[a], v[b]) / (lengths[a] * lengths[b])))  # noqa: E731
    return np.array([*lengths, angle(1, 2), angle(0, 2), angle(0, 1)])


def _residue_table(topology):
    chains, resids, icodes, names = [], [], [], []
    for res in topology.residues():
        m = re.match(r"\s*(-?\d+)\s*(\S*)", str(res.id))
        chains.append(str(res.chain.id).strip())
        resids.append(int(m.group(1)) if m else res.index + 1)
        icodes.append((m.group(2) if m else "") or getattr(res, "insertionCode", "").strip())
        names.append(res.name)
    return ResidueTable(np.array(chains), np.array(resids), np.array(names), np.array(icodes))


def system_from_openmm(omm_system, topology, types=None, force_field="", source_files=()):
    """Convert an ``openmm.System`` + ``Topology`` into a :class:`MolecularSystem`.

    Units and forms as the module docstring says: harmonic k -> k/2, kJ -> kcal, nm -> A,
    sigma -> Rmin = 2^(1/6) sigma; exceptions keep OpenMM's 1-4 scaling; periodic torsions whose
    atoms are not a bonded chain become periodic impropers.

    Parameters
    ----------
    omm_system : openmm.System
        The parameterised system (HarmonicBondForce, HarmonicAngleForce, PeriodicTorsionForce,
        NonbondedForce, CMAPTorsionForce, CMMotionRemover only).
    topology : openmm.app.Topology
        Its topology (atoms, residues, chains, bonds).
    types : sequence of str or None, optional
        Force-field atom type of each atom; None (default) gives ``"?"``.
    force_field : str, optional
        Description of the force field (kept on the system and named in errors).
    source_files : sequence of str, optional
        Input files, kept on the system.

    Returns
    -------
    MolecularSystem
        Charges in e, LJ tables in A and kcal/mol, bonded tables in kcal/mol, A and radians.

    Raises
    ------
    StructureFileError
        If the system holds another force, or a CMAP grid of odd size.
    """
    forces = {f.__class__.__name__: f for f in omm_system.getForces()}
    unknown = set(forces) - _KNOWN_FORCES
    if unknown:
        raise StructureFileError(force_field, f"unsupported OpenMM forces: {', '.join(sorted(unknown))}")
    atoms = list(topology.atoms())
    n = len(atoms)
    bonds_graph = {tuple(sorted((b[0].index, b[1].index))) for b in topology.bonds()}

    nb = forces["NonbondedForce"]
    q = np.zeros(n); sigma = np.zeros(n); eps = np.zeros(n)
    for i in range(n):
        qi, si, ei = nb.getParticleParameters(i)
        q[i], sigma[i], eps[i] = qi._value, si._value, ei._value
    rmin_half = RMIN_PER_SIGMA * sigma * ANGSTROM_PER_NM / 2.0
    eps_kcal = eps / KJ_PER_KCAL
    keys = np.round(np.stack([rmin_half, eps_kcal], axis=1), 12)
    uniq, lj_type = np.unique(keys, axis=0, return_inverse=True)
    lj_rmin = uniq[:, 0][:, None] + uniq[:, 0][None, :]
    lj_eps = np.sqrt(uniq[:, 1][:, None] * uniq[:, 1][None, :])
    ex_pairs, ex_qq, ex_rmin, ex_eps = [], [], [], []
    for k in range(nb.getNumExceptions()):
        i, j, qq, s, e = nb.getExceptionParameters(k)
        ex_pairs.append((min(i, j), max(i, j)))
        ex_qq.append(qq._value)
        ex_rmin.append(RMIN_PER_SIGMA * s._value * ANGSTROM_PER_NM)
        ex_eps.append(e._value / KJ_PER_KCAL)

    tables = {}
    f = forces.get("HarmonicBondForce")
    rows = [f.getBondParameters(k) for k in range(f.getNumBonds())] if f else []
    tables["bonds"] = TermTable(np.array([[r[0], r[1]] for r in rows], np.intp).reshape(-1, 2),
                                {"k": [r[3]._value / 2 / KJ_PER_KCAL / ANGSTROM_PER_NM ** 2 for r in rows],
                                 "r0": [r[2]._value * ANGSTROM_PER_NM for r in rows]})
    f = forces.get("HarmonicAngleForce")
    rows = [f.getAngleParameters(k) for k in range(f.getNumAngles())] if f else []
    tables["angles"] = TermTable(np.array([r[:3] for r in rows], np.intp).reshape(-1, 3),
                                 {"k": [r[4]._value / 2 / KJ_PER_KCAL for r in rows],
                                  "theta0": [r[3]._value for r in rows]})
    f = forces.get("PeriodicTorsionForce")
    rows = [f.getTorsionParameters(k) for k in range(f.getNumTorsions())] if f else []
    proper = np.array([all(tuple(sorted((r[a], r[a + 1]))) in bonds_graph for a in range(3))
                       for r in rows], dtype=bool)

    def torsions(mask):
        sel = [r for r, m in zip(rows, mask) if m]
        return TermTable(np.array([r[:4] for r in sel], np.intp).reshape(-1, 4),
                         {"k": [r[6]._value / KJ_PER_KCAL for r in sel],
                          "periodicity": [r[4] for r in sel], "phase": [r[5]._value for r in sel]})
    tables["dihedrals"] = torsions(proper)
    tables["periodic_impropers"] = torsions(~proper)

    f = forces.get("CMAPTorsionForce")
    maps, cm_rows = [], []
    if f:
        for m in range(f.getNumMaps()):
            size, energy = f.getMapParameters(m)
            if size % 2:
                raise StructureFileError(force_field, f"CMAP grid of odd size {size} is not supported")
            grid = np.array([e._value if hasattr(e, "_value") else e for e in energy]) / KJ_PER_KCAL
            omm = grid.reshape(size, size).T  # omm[i, j]: phi = i*2pi/size, psi = j*2pi/size
            maps.append(np.roll(np.roll(omm, size // 2, axis=0), size // 2, axis=1))
        cm_rows = [f.getTorsionParameters(k) for k in range(f.getNumTorsions())]
    tables["cmap"] = TermTable(np.array([r[1:9] for r in cm_rows], np.intp).reshape(-1, 8),
                               {"map": [r[0] for r in cm_rows]})

    return MolecularSystem(
        names=np.array([a.name for a in atoms]),
        types=np.array(types if types is not None else ["?"] * n),
        elements=np.array([a.element.symbol if a.element is not None else "X" for a in atoms]),
        charges=q, resindex=np.array([a.residue.index for a in atoms]),
        residues=_residue_table(topology), lj_type=lj_type.reshape(-1),
        lj_rmin=lj_rmin, lj_eps=lj_eps,
        exception_pairs=np.array(ex_pairs, np.intp).reshape(-1, 2),
        exception_qq=np.array(ex_qq), exception_rmin=np.array(ex_rmin), exception_eps=np.array(ex_eps),
        bonds=tables["bonds"], urey_bradley=TermTable.empty(3, "k", "s0"), angles=tables["angles"],
        dihedrals=tables["dihedrals"], impropers=TermTable.empty(4, "k", "psi0"),
        periodic_impropers=tables["periodic_impropers"], cmap=tables["cmap"], cmap_maps=tuple(maps),
        force_field=force_field, source_files=tuple(source_files))


@functools.lru_cache(maxsize=4)
def _force_field(files: tuple):
    """OpenMM's ForceField for ``files``, parsed once per process (parsing amber14 takes ~0.2 s;
    matching templates and creating systems leave the object unchanged)."""
    from openmm import app
    return app.ForceField(*files)


def load_builtin(path: str, add_hydrogens: bool = False, force_field=DEFAULT_FORCE_FIELD, ph: float = 7.0):
    """Read ``path`` (PDB/mmCIF) and parameterise it.

    Returns ``(MolecularSystem, Frame, openmm Topology, seconds spent reading the file)``.

    Parameters
    ----------
    path : str
        PDB (``.pdb``, ``.ent``) or mmCIF (``.cif``, ``.mmcif``, ``.pdbx``) file.
    add_hydrogens : bool, optional
        Add missing hydrogens first (``Modeller.addHydrogens``; default False).
    force_field : sequence of str, optional
        OpenMM force-field XML files (default :data:`DEFAULT_FORCE_FIELD`).
    ph : float, optional
        pH for the added hydrogens (default 7.0).

    Returns
    -------
    system : MolecularSystem
        The parameterised system.
    frame : Frame
        Its coordinates (A) and the file's unit cell, if any.
    topology : openmm.app.Topology
        The (possibly hydrogenated) topology.
    read_seconds : float
        Wall time spent reading the file, s.

    Raises
    ------
    StructureFileError
        If the file cannot be read.
    UnknownResidueError
        If residues match no template, or hydrogens cannot be added.
    """
    import time

    from openmm import app, unit
    t0 = time.perf_counter()
    structure = _read_openmm_structure(path)
    read_seconds = time.perf_counter() - t0
    ff = _force_field(tuple(force_field))
    modeller = app.Modeller(structure.topology, structure.positions)
    if add_hydrogens:
        try:
            modeller.addHydrogens(ff, pH=ph)
        except Exception as exc:
            raise UnknownResidueError(
                f"{path}: could not add hydrogens: {_clean_openmm_message(exc)} Remove or rename "
                "unsupported residues (ligands, modified residues), or use the PSF route with "
                "parameter files that cover them.") from None
    topology = modeller.topology
    if ff.getUnmatchedResidues(topology):
        raise UnknownResidueError(f"{path}: " + _unmatched_message(ff, topology, add_hydrogens, force_field))
    try:
        omm_system = ff.createSystem(topology, nonbondedMethod=app.NoCutoff, constraints=None,
                                     rigidWater=False, removeCMMotion=False)
    except ValueError as exc:
        raise UnknownResidueError(f"{path}: the force field could not parameterise the structure: "
                                  f"{_clean_openmm_message(exc)}") from None
    positions = np.array(modeller.positions.value_in_unit(unit.angstrom))
    system = system_from_openmm(omm_system, topology, _atom_types(ff, topology),
                                force_field=" + ".join(force_field), source_files=(path,))
    return system, Frame(positions, _box_from_topology(topology), 0, path), topology, read_seconds
