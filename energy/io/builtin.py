"""The built-in force-field route: a PDB or mmCIF alone, parameterised with OpenMM's library.

OpenMM's ``ForceField`` matches residue templates (default: the Amber 14 protein force field,
``amber14-all.xml``, with TIP3P water, ``amber14/tip3p.xml``, plus any ``--forcefield-file``),
after the preparation asked for (:mod:`energy.io.preparation`: chain breaks, repair, hydrogens).
Residues that match no template stop the run with one message naming them all
(:mod:`energy.io.residue_messages`).  The resulting ``openmm.System`` is converted
into the engine's own arrays: harmonic forces to ``K (x - x0)^2`` form (K = k/2), kJ -> kcal,
nm -> A, sigma -> Rmin = 2^(1/6) sigma; NonbondedForce exceptions keep OpenMM's own 1-4 scaling
(for Amber: Coulomb 1/1.2, LJ 1/2).  Periodic torsions whose four atoms are not a bonded chain
are periodic impropers.
"""
from __future__ import annotations

import os
import re

import numpy as np

from energy.errors import MESSAGE_CAP, StructureFileError, UnknownResidueError
from energy.io.coordinate_text import check_coordinate_text
from energy.io.coordinates import plain_file
from energy.model.system import Frame, MolecularSystem, ResidueTable, TermTable
from energy.units import ANGSTROM_PER_NM, KJ_PER_KCAL

DEFAULT_FORCE_FIELD = ("amber14-all.xml", "amber14/tip3p.xml")
RMIN_PER_SIGMA = 2.0 ** (1.0 / 6.0)
_KNOWN_FORCES = {"HarmonicBondForce", "HarmonicAngleForce", "PeriodicTorsionForce",
                 "NonbondedForce", "CMAPTorsionForce", "CMMotionRemover"}


def _clean_openmm_message(exc: Exception) -> str:
    text = str(exc).split("For more information")[0].strip()
    return " ".join(text.split())


def build_force_field(force_field=DEFAULT_FORCE_FIELD, extra_files=()):
    """OpenMM ``ForceField`` of ``force_field`` plus the template files ``extra_files``.

    Parameters
    ----------
    force_field : tuple of str
        OpenMM force-field files (default Amber 14 + TIP3P).
    extra_files : iterable of str
        Paths of further force-field XML files.

    Returns
    -------
    openmm.app.ForceField

    Raises
    ------
    StructureFileError
        An extra file that is missing or not a force-field XML OpenMM can read (with its path).
    """
    from openmm import app
    ff = app.ForceField(*force_field)
    for path in extra_files:
        if not os.path.isfile(path):
            raise StructureFileError(path, "force-field file not found")
        try:
            ff.loadFile(path)
        except Exception as exc:  # OpenMM raises ValueError/ParseError/KeyError on bad XML
            raise StructureFileError(path, f"not a force-field XML file OpenMM can read "
                                     f"({_clean_openmm_message(exc)})") from None
    return ff


def _unmatched_error(path, ff, topology, options, label, unmatched=None, gaps=()):
    from openmm import app

    from energy.io.repair import modified_parents
    from energy.io.residue_messages import unmatched_message
    from energy.io.structure_text import read_structure_text
    unmatched = ff.getUnmatchedResidues(topology) if unmatched is None else unmatched
    has_h = any(a.element is not None and a.element.symbol == "H" for a in topology.atoms())
    app.Modeller._loadStandardHydrogenDefinitions()
    standard = set(app.Modeller._residueHydrogens) | {"HOH"}
    message = unmatched_message(unmatched, has_hydrogens=has_h, add_hydrogens=options.adds_hydrogens,
                                repair=options.repair, standard_names=standard,
                                modified_parents={} if options.repair else
                                modified_parents(read_structure_text(path)),
                                force_field_label=label, gaps=gaps,
                                budget=MESSAGE_CAP - len(f"{path}: "))
    return UnknownResidueError(f"{path}: {message}")


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

    Parameters
    ----------
    omm_system : openmm.System
        Harmonic bond/angle, periodic torsion, nonbonded and CMAP forces only (kJ/mol, nm).
    topology : openmm.app.Topology
    types : sequence of str or None
        Atom types (None: ``"?"`` for every atom).
    force_field : str
        Label of the force field (also the path named in errors).
    source_files : tuple of str
        Files the system was built from.

    Returns
    -------
    MolecularSystem
        Parameters in kcal/mol and A; equilibrium angles and torsion phases keep OpenMM's radians.

    Raises
    ------
    StructureFileError
        An unsupported OpenMM force, or a CMAP grid of odd size.
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


def load_builtin(path: str, add_hydrogens: bool = False, force_field=DEFAULT_FORCE_FIELD, ph: float = 7.0,
                 options=None):
    """Read ``path`` (PDB/mmCIF, ``.gz`` too), prepare it and parameterise it.

    See :func:`load_builtin_prepared` for the preparation record and the models.

    Parameters
    ----------
    path : str
        PDB or mmCIF file, optionally gzip-compressed.
    add_hydrogens : bool
        Add missing hydrogens (used only without ``options``).
    force_field : tuple of str
        OpenMM force-field files (default Amber 14 + TIP3P).
    ph : float
        pH for the hydrogens (used only without ``options``).
    options : energy.io.preparation.PreparationOptions or None

    Returns
    -------
    tuple
        ``(MolecularSystem, Frame, openmm Topology, seconds spent reading the file)``.

    Raises
    ------
    StructureFileError, UnknownResidueError
    """
    from energy.io.preparation import PreparationOptions
    options = options or PreparationOptions(add_hydrogens=add_hydrogens, ph=ph)
    system, frame, topology, prepared = load_builtin_prepared(path, options, force_field)
    return system, frame, topology, prepared.read_seconds


def load_builtin_prepared(path: str, options, force_field=DEFAULT_FORCE_FIELD):
    """Read, prepare (:mod:`energy.io.preparation`) and parameterise ``path``.

    Parameters
    ----------
    path : str
        PDB or mmCIF file, optionally gzip-compressed.
    options : energy.io.preparation.PreparationOptions
    force_field : tuple of str
        OpenMM force-field files (default Amber 14 + TIP3P); ``options.forcefield_files`` add to it.

    Returns
    -------
    (MolecularSystem, Frame, openmm.app.Topology, energy.io.preparation.PreparedStructure)

    Raises
    ------
    StructureFileError, UnknownResidueError
    """
    from openmm import app

    from energy.io.preparation import UnmatchedResidues, prepare_structure
    label = " + ".join([*force_field, *(os.path.basename(f) for f in options.forcefield_files)])
    ff = build_force_field(force_field, options.forcefield_files)
    check_coordinate_text(plain_file(path))  # strict numbers and records before OpenMM reads it
    try:
        prepared = prepare_structure(path, options, ff, label)
    except UnmatchedResidues as exc:
        raise _unmatched_error(path, ff, exc.topology, options, label, exc.residues, exc.gaps) from None
    except UnknownResidueError as exc:
        raise UnknownResidueError(f"{path}: {exc}") from None
    topology = prepared.topology
    if ff.getUnmatchedResidues(topology):
        raise _unmatched_error(path, ff, topology, options, label, gaps=prepared.record.gaps)
    try:
        omm_system = ff.createSystem(topology, nonbondedMethod=app.NoCutoff, constraints=None,
                                     rigidWater=False, removeCMMotion=False)
    except ValueError as exc:
        raise UnknownResidueError(f"{path}: the force field could not parameterise the structure: "
                                  f"{_clean_openmm_message(exc)}") from None
    system = system_from_openmm(omm_system, topology, _atom_types(ff, topology),
                                force_field=label, source_files=(path, *options.forcefield_files))
    return system, Frame(prepared.positions, _box_from_topology(topology), 0, path), topology, prepared
