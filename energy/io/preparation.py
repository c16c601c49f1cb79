"""Preparing a deposited PDB/mmCIF for the built-in force field, and the record of what was done.

The steps, in order (each optional one only on request; docs/physics.md, "Deposited structures"):

1. read the text (``.gz`` too), check its records, choose alternate locations
   (:mod:`energy.io.structure_text`);
2. parse it with OpenMM (first model as the topology; every model kept as a frame);
3. find chain breaks: consecutive amino acids whose C(i)-N(i+1) distance exceeds
   :data:`GAP_C_N_ANGSTROM` (or that lack one of the two atoms).  The chain is split there, so
   nothing is ever bonded across a gap and both ends become chain termini;
4. ``repair``: remove the extra sites of 4-site waters, replace common modified residues by their
   parents and rebuild missing heavy atoms and terminal groups (PDBFixer, with a fixed seed on a
   deterministic OpenMM platform);
5. ``drop_unmatched``: remove residues that no template of the force field can match;
6. ``add_hydrogens`` (or ``repair``): hydrogens at ``ph`` (OpenMM's Modeller, seeded, on a
   deterministic platform: the same input gives the same positions, bit for bit).

Everything done is kept in a :class:`PreparationRecord` (the JSON ``preparation`` block and the
summary lines).
"""
from __future__ import annotations

import io
from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np

from energy.errors import SettingsError, StructureFileError, UnknownResidueError
from energy.io.residue_messages import (
    VIRTUAL_SITE_NAMES,
    grouped_listing,
    is_four_site_water,
    residue_label,
)
from energy.io.structure_text import (
    PDBX_SUFFIXES,
    check_pdb_records,
    choose_altlocs_pdb,
    choose_altlocs_pdbx,
    read_structure_text,
    structure_suffix,
)

#: A peptide C(i)-N(i+1) longer than this (A) is a chain break (a peptide bond is 1.33 A;
#: about 2 A is the common-practice threshold).
GAP_C_N_ANGSTROM = 2.0
#: Seed of PDBFixer's relaxation of rebuilt atoms (any fixed value makes it reproducible).
REPAIR_SEED = 2026


@dataclass(frozen=True)
class PreparationOptions:
    """What to do to a deposited structure before parameterising it (built-in route only).

    ``add_hydrogens``: add missing hydrogens at ``ph``.  ``repair``: rebuild missing heavy atoms
    and terminal groups, replace modified residues by their parents, remove 4-site water extra
    sites, and add hydrogens.  ``forcefield_files``: OpenMM force-field XML files with extra
    residue templates.  ``drop_unmatched``: remove residues no template matches.
    """

    add_hydrogens: bool = False
    repair: bool = False
    ph: float = 7.0
    forcefield_files: tuple = ()
    drop_unmatched: bool = False

    def __post_init__(self):
        object.__setattr__(self, "forcefield_files", tuple(str(f) for f in self.forcefield_files))
        if not (np.isfinite(self.ph) and 0.0 <= self.ph <= 14.0):
            raise SettingsError(f"--ph must lie between 0 and 14, got {self.ph}")

    @property
    def adds_hydrogens(self) -> bool:
        return self.add_hydrogens or self.repair

    @property
    def changes_atoms(self) -> bool:
        return self.adds_hydrogens or self.drop_unmatched


@dataclass
class PreparationRecord:
    """What preparation found and changed, for the JSON ``preparation`` block and the summary."""

    options: PreparationOptions
    gaps: list = field(default_factory=list)            # dicts: chain, after, before, c_n_distance
    altlocs: list = field(default_factory=list)         # AltlocChoice.as_dict()
    residues_replaced: list = field(default_factory=list)  # dicts: residue, by
    atoms_added: list = field(default_factory=list)     # dicts: residue, atoms
    virtual_sites_removed: list = field(default_factory=list)  # residue labels
    dropped: list = field(default_factory=list)         # residue labels
    hydrogens_added: int = 0
    renamed_atoms: list = field(default_factory=list)   # (chain, number, icode, old, new)
    atoms_relaxed: int = 0
    n_models: int = 1
    prepared_pdb: str | None = None

    def as_dict(self) -> dict:
        o = self.options
        return {"repair": o.repair, "add_hydrogens": o.adds_hydrogens,
                "ph": o.ph if o.adds_hydrogens else None, "forcefield_files": list(o.forcefield_files),
                "drop_unmatched": o.drop_unmatched, "gap_c_n_threshold_angstrom": GAP_C_N_ANGSTROM,
                "gaps": list(self.gaps), "altlocs": list(self.altlocs),
                "residues_replaced": list(self.residues_replaced),
                "atoms_renamed": [f"{c + ':' if c else ''}{n}{i} {old}->{new}"
                                  for c, n, i, old, new in self.renamed_atoms],
                "atoms_added": list(self.atoms_added),
                "hydrogens_added": self.hydrogens_added, "atoms_relaxed": self.atoms_relaxed,
                "virtual_sites_removed": list(self.virtual_sites_removed),
                "dropped_residues": list(self.dropped), "n_models": self.n_models,
                "prepared_pdb": self.prepared_pdb}

    def short_text(self) -> str:
        """One short line of counts (the window's status bar)."""
        parts = [f"{len(self.gaps)} gap(s)" if self.gaps else "",
                 f"{len(self.altlocs)} altloc choice(s)" if self.altlocs else "",
                 f"{len(self.residues_replaced)} residue(s) replaced" if self.residues_replaced else "",
                 f"{sum(len(a['atoms']) for a in self.atoms_added)} atom(s) rebuilt" if self.atoms_added else "",
                 f"{self.hydrogens_added} H added" if self.hydrogens_added else "",
                 f"{len(self.dropped)} residue(s) left out" if self.dropped else ""]
        return ", ".join(p for p in parts if p) or "nothing changed"

    def summary_lines(self) -> list[str]:
        """Lines for the human summary (nothing for a structure that needed nothing)."""
        out = []
        for g in self.gaps:
            d = "atom missing" if g["c_n_distance"] is None else f"C-N {g['c_n_distance']:.2f} A"
            out.append(f"gap: chain break between {g['after']} and {g['before']} ({d}); not bonded, "
                       "both ends are chain termini")
        if self.altlocs:
            shown = ", ".join(f"{a['residue']}:{a['chosen']}" for a in self.altlocs[:8])
            more = f" ({len(self.altlocs) - 8} more)" if len(self.altlocs) > 8 else ""
            out.append(f"alternate locations: {len(self.altlocs)} residue(s), kept the highest "
                       f"occupancy (then the first label): {shown}{more}")
        if self.residues_replaced:
            out.append("replaced by their parents: " + ", ".join(
                f"{r['residue']} -> {r['by']}" for r in self.residues_replaced))
        if self.atoms_added:
            n = sum(len(a["atoms"]) for a in self.atoms_added)
            shown = ", ".join(f"{a['residue']} ({' '.join(a['atoms'])})" for a in self.atoms_added[:6])
            more = f" ({len(self.atoms_added) - 6} more residues)" if len(self.atoms_added) > 6 else ""
            out.append(f"rebuilt {n} heavy atom(s) in {len(self.atoms_added)} residue(s): {shown}{more}")
        if self.virtual_sites_removed:
            out.append(f"removed the extra site of {len(self.virtual_sites_removed)} 4-site water(s)")
        if self.renamed_atoms:
            out.append("renamed to the parent's atom names: " + ", ".join(
                f"{c + ':' if c else ''}{n}{i} {old}->{new}" for c, n, i, old, new in self.renamed_atoms))
        if self.hydrogens_added:
            out.append(f"added {self.hydrogens_added} hydrogen(s) at pH {self.options.ph:g}")
        if self.dropped:
            out.append(f"left out {len(self.dropped)} residue(s) matching no template: "
                       + ", ".join(self.dropped[:12])
                       + (f" ({len(self.dropped) - 12} more)" if len(self.dropped) > 12 else ""))
        if self.atoms_relaxed:
            out.append(f"relaxed the {self.atoms_relaxed} atom(s) not in the file with the force field "
                       "(deposited atoms fixed)")
        if self.prepared_pdb:
            out.append(f"prepared structure written to {self.prepared_pdb}")
        return out


@dataclass
class PreparedStructure:
    """An OpenMM topology ready for ``createSystem``, its positions and everything else kept.

    ``positions``: (n_atoms, 3) float64 A.  ``models``: (n_models, n_atoms, 3) float64 A of the
    file's models mapped onto the prepared atoms, or None when preparation added atoms (the
    other models then have no coordinates for them).
    """

    topology: object
    positions: np.ndarray
    record: PreparationRecord
    force_field: object
    force_field_label: str
    models: np.ndarray | None = None
    read_seconds: float = 0.0


# ------------------------------------------------------------------------------------------
# parsing
# ------------------------------------------------------------------------------------------

def _parse(path: str, record: PreparationRecord):
    """OpenMM topology and every model's positions (n_models, n_atoms, 3) A of ``path``."""
    from openmm import app, unit
    text = read_structure_text(path)
    pdbx = structure_suffix(path) in PDBX_SUFFIXES
    if pdbx:
        text, choices = choose_altlocs_pdbx(text)
    else:
        text = check_pdb_records(text, path)
        text, choices = choose_altlocs_pdb(text)
    record.altlocs = [c.as_dict() for c in choices]
    try:
        structure = app.PDBxFile(io.StringIO(text)) if pdbx else app.PDBFile(io.StringIO(text))
    except Exception as exc:  # OpenMM raises bare Exceptions/ValueErrors on malformed files
        raise StructureFileError(path, f"could not read the structure ({_one_line(exc)})") from None
    n = structure.topology.getNumAtoms()
    if n == 0:
        raise StructureFileError(path, "the file holds no atoms")
    models = np.array([structure.getPositions(asNumpy=True, frame=k).value_in_unit(unit.angstrom)
                       for k in range(structure.getNumFrames())], dtype=np.float64)
    record.n_models = len(models)
    return structure.topology, models, text, pdbx


def _one_line(exc: Exception) -> str:
    text = str(exc).split("For more information")[0].strip()
    return " ".join(text.split())


def _atom_key(atom):
    """Chain, number, insertion code and atom name: what identifies a deposited atom across the
    preparation (a replaced residue keeps its number, not its name)."""
    r = atom.residue
    return (str(r.chain.id), str(r.id), str(getattr(r, "insertionCode", "") or ""), atom.name)


def _renamed(atom, record) -> bool:
    r = atom.residue
    key = (str(r.chain.id), str(r.id), str(getattr(r, "insertionCode", "") or ""))
    return any(key == (c, n, i) and atom.name == new for c, n, i, _, new in record.renamed_atoms)


def _models_on(topology, models, original_keys):
    """The file's models on the prepared atoms, (n_models, n_atoms, 3) A; None when an atom of the
    prepared structure is not in the file (hydrogens or heavy atoms added)."""
    if not original_keys and len(models) > 1:
        return None
    index = [original_keys.get(_atom_key(a)) for a in topology.atoms()] if original_keys else \
        list(range(topology.getNumAtoms()))
    if None in index:
        return None
    return models[:, np.array(index, dtype=np.intp)]


# ------------------------------------------------------------------------------------------
# gaps
# ------------------------------------------------------------------------------------------

def _atom(residue, name):
    return next((a for a in residue.atoms() if a.name == name), None)


def find_gaps(topology, positions) -> list[tuple]:
    """Chain breaks: ``(residue_before, residue_after, distance or None)`` for consecutive amino
    acids (residues with a CA) of one chain whose C-N distance exceeds :data:`GAP_C_N_ANGSTROM`
    or that lack the C or the N atom.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64, A.
    """
    gaps = []
    for chain in topology.chains():
        residues = list(chain.residues())
        for a, b in zip(residues[:-1], residues[1:]):
            if _atom(a, "CA") is None or _atom(b, "CA") is None:
                continue
            c, n = _atom(a, "C"), _atom(b, "N")
            if c is None or n is None:
                gaps.append((a, b, None))
                continue
            d = float(np.linalg.norm(positions[n.index] - positions[c.index]))
            if d > GAP_C_N_ANGSTROM:
                gaps.append((a, b, d))
    return gaps


def split_chains(topology, starts) -> object:
    """A copy of ``topology`` with a new chain (same id) starting at each residue of ``starts``;
    bonds between the two residues at a split are left out.  Atom order is unchanged."""
    from openmm import app
    starts = {r.index for r in starts}
    new = app.Topology()
    new.setPeriodicBoxVectors(topology.getPeriodicBoxVectors())
    atom_map, before_split = {}, {}
    for chain in topology.chains():
        c = new.addChain(chain.id)
        previous = None
        for res in chain.residues():
            if res.index in starts and previous is not None:
                c = new.addChain(chain.id)
                before_split[res.index] = previous.index
            r = new.addResidue(res.name, c, res.id, getattr(res, "insertionCode", ""))
            for atom in res.atoms():
                atom_map[atom] = new.addAtom(atom.name, atom.element, r, atom.id,
                                             getattr(atom, "formalCharge", None))
            previous = res
    for bond in topology.bonds():
        a1, a2 = bond[0], bond[1]
        r1, r2 = a1.residue.index, a2.residue.index
        if before_split.get(r2) == r1 or before_split.get(r1) == r2:
            continue
        new.addBond(atom_map[a1], atom_map[a2], bond.type, bond.order)
    return new


# ------------------------------------------------------------------------------------------
# the steps that change atoms
# ------------------------------------------------------------------------------------------

def _modeller(topology, positions_angstrom):
    from openmm import app, unit
    return app.Modeller(topology, positions_angstrom * 0.1 * unit.nanometer)


def _positions(modeller) -> np.ndarray:
    from openmm import unit
    return np.array(modeller.positions.value_in_unit(unit.angstrom), dtype=np.float64)


@contextmanager
def deterministic_platform():
    """An OpenMM platform whose results repeat bit for bit: the CPU platform on one thread with
    ``DeterministicForces`` (its defaults restored afterwards), or Reference where there is no
    CPU platform.  Both of OpenMM's own preparation steps (PDBFixer's relaxation of rebuilt
    atoms, Modeller's hydrogen placement) run on it."""
    import openmm
    try:
        platform = openmm.Platform.getPlatformByName("CPU")
    except Exception:  # an OpenMM build without the CPU platform
        yield openmm.Platform.getPlatformByName("Reference")
        return
    wanted = {"Threads": "1", "DeterministicForces": "true"}
    before = {k: platform.getPropertyDefaultValue(k) for k in wanted}
    for k, v in wanted.items():
        platform.setPropertyDefaultValue(k, v)
    try:
        yield platform
    finally:
        for k, v in before.items():
            platform.setPropertyDefaultValue(k, v)


def remove_virtual_sites(topology, positions, record):
    """Drop the massless extra site of every 4-site water."""
    waters = [r for r in topology.residues() if is_four_site_water(r)]
    if not waters:
        return topology, positions
    sites = [a for r in waters for a in r.atoms()
             if a.element is None or a.name.upper() in VIRTUAL_SITE_NAMES]
    record.virtual_sites_removed = [residue_label(r) for r in waters]
    m = _modeller(topology, positions)
    m.delete(sites)
    return m.topology, _positions(m)


def repair(topology, positions, text: str, pdbx: bool, record, force_field):
    """PDBFixer: modified residues -> parents, missing heavy atoms and terminal groups rebuilt."""
    from pdbfixer import PDBFixer
    with deterministic_platform() as platform:
        fixer = (PDBFixer(pdbxfile=io.StringIO(text), platform=platform) if pdbx else
                 PDBFixer(pdbfile=io.StringIO(text), platform=platform))
        return _repair_with(fixer, topology, positions, record, force_field)


def _replace_by_parents(fixer, force_field) -> list:
    """Rename each residue of ``fixer.nonstandardResidues`` to its parent and delete the atoms the
    parent lacks: heavy atoms not in PDBFixer's parent template, hydrogens not in the force
    field's template of the parent.  Where exactly one extra heavy atom and one missing parent
    atom share an element (SME's S for MET's SD), the atom is renamed rather than rebuilt.
    PDBFixer's own replacement deletes every hydrogen; keeping the deposited atoms keeps their
    measured positions (and the models of an ensemble usable).

    Returns the renames, ``(chain, number, insertion code, old name, new name)``.
    """
    from openmm import app
    from openmm.app.element import hydrogen
    delete, renames = [], []
    for residue, parent in fixer.nonstandardResidues:
        template_atoms = list(fixer._getTemplate(parent).topology.atoms())
        heavy = {a.name for a in template_atoms}
        template = force_field._templates.get(parent)
        hydrogens = {a.name for a in template.atoms} if template is not None else set()
        residue.name = parent
        atoms = list(residue.atoms())
        present = {a.name for a in atoms}
        for element in {a.element for a in atoms if a.element not in (None, hydrogen)}:
            extra = [a for a in atoms if a.element == element and a.name not in heavy]
            missing = [t for t in template_atoms if t.element == element and t.name not in present]
            if len(extra) == 1 and len(missing) == 1:
                r = residue
                renames.append((str(r.chain.id), str(r.id), str(getattr(r, "insertionCode", "") or ""),
                                extra[0].name, missing[0].name))
                extra[0].name = missing[0].name
        for atom in atoms:
            keep = atom.name in hydrogens if atom.element in (None, hydrogen) else atom.name in heavy
            if not keep:
                delete.append(atom)
    if delete:
        modeller = app.Modeller(fixer.topology, fixer.positions)
        modeller.delete(delete)
        fixer.topology, fixer.positions = modeller.topology, modeller.positions
    return renames


def _repair_with(fixer, topology, positions, record, force_field):
    from openmm import unit
    # Never reach for the network: no definitions beyond the templates PDBFixer ships.
    for r in topology.residues():
        fixer._ccdCache[r.name.upper()] = None
    fixer.topology = topology
    fixer.positions = positions * 0.1 * unit.nanometer
    fixer.missingResidues = {}  # gaps stay gaps: no loops are modelled
    fixer.findNonstandardResidues()
    record.residues_replaced = [{"residue": residue_label(r), "by": by} for r, by in fixer.nonstandardResidues]
    record.renamed_atoms = _replace_by_parents(fixer, force_field)
    fixer.findMissingAtoms()
    added = {}
    for r, atoms in fixer.missingAtoms.items():
        added.setdefault(r.index, [residue_label(r), []])[1].extend(a.name for a in atoms)
    for r, names in fixer.missingTerminals.items():
        added.setdefault(r.index, [residue_label(r), []])[1].extend(names)
    record.atoms_added = [{"residue": label, "atoms": names} for _, (label, names) in sorted(added.items())]
    fixer.addMissingAtoms(seed=REPAIR_SEED)
    positions = np.array(fixer.positions.value_in_unit(unit.angstrom), dtype=np.float64)
    terminal = {(str(r.chain.id), str(r.id), str(getattr(r, "insertionCode", "") or ""))
                for r in fixer.missingTerminals}
    place_carboxylate_oxygens(fixer.topology, positions, terminal)
    return fixer.topology, positions


#: C-terminal C-O bond length, A (carboxylate, common practice).
CARBOXYLATE_C_O_ANGSTROM = 1.25


def place_carboxylate_oxygens(topology, positions, residues) -> None:
    """Put each rebuilt OXT of ``residues`` ((chain, number, icode) keys) where a carboxylate's
    second oxygen is: in the CA-C-O plane, 1.25 A from C, bisecting the outside of the CA-C-O
    angle (sp2 carbon, about 120 degrees to both).  PDBFixer's own placement left OXT within
    0.8 A of CA on deposited entries (e.g. 1A28's A:LYS932).  ``positions`` (A) change in place."""
    for residue in topology.residues():
        key = (str(residue.chain.id), str(residue.id), str(getattr(residue, "insertionCode", "") or ""))
        if key not in residues:
            continue
        atoms = {a.name: a.index for a in residue.atoms()}
        if not {"CA", "C", "O", "OXT"} <= set(atoms):
            continue
        c = positions[atoms["C"]]
        to_o = positions[atoms["O"]] - c
        to_ca = positions[atoms["CA"]] - c
        direction = -(to_o / np.linalg.norm(to_o) + to_ca / np.linalg.norm(to_ca))
        positions[atoms["OXT"]] = c + CARBOXYLATE_C_O_ANGSTROM * direction / np.linalg.norm(direction)


def modified_parents(text: str = "") -> dict:
    """Modified residue -> parent residue that ``--repair`` substitutes: PDBFixer's table, and
    the ``MODRES`` records of PDB ``text`` (residue name in columns 13-15, parent in 25-27)."""
    from pdbfixer.pdbfixer import substitutions
    parents = dict(substitutions)
    for line in text.splitlines():
        if line.startswith("MODRES") and len(line) >= 27 and line[24:27].strip():
            parents.setdefault(line[12:15].strip(), line[24:27].strip())
    return parents


def add_hydrogens(topology, positions, force_field, ph: float, record):
    """Missing hydrogens at ``ph``, reproducible bit for bit.

    OpenMM's Modeller starts every new hydrogen from a position jittered with Python's global
    ``random`` and then minimises them on the default (multi-threaded) platform: two runs differed
    by several kcal/mol.  Here the generator is seeded (and restored afterwards) and the
    minimisation runs on :func:`deterministic_platform`.
    """
    import random
    m = _modeller(topology, positions)
    before = topology.getNumAtoms()
    state = random.getstate()
    random.seed(REPAIR_SEED)
    try:
        with deterministic_platform() as platform:
            m.addHydrogens(force_field, pH=ph, platform=platform)
    except Exception as exc:
        raise UnknownResidueError(f"could not add hydrogens: {_hydrogen_failure(exc, topology)}") from None
    finally:
        random.setstate(state)
    record.hydrogens_added = m.topology.getNumAtoms() - before
    return m.topology, _positions(m)


def _hydrogen_failure(exc, topology) -> str:
    import re
    text = _one_line(exc)
    found = re.search(r"residue (\d+) \((\w+)\)", text)
    if found:
        residues = list(topology.residues())
        k = int(found.group(1))
        if 0 <= k < len(residues):
            label = residue_label(residues[k])
            return (f"{label} does not match its template (missing heavy atoms or an unknown "
                    "residue); --repair rebuilds missing heavy atoms, --forcefield-file adds "
                    "templates, --drop-unmatched leaves such residues out")
    return text


#: Relaxation of atoms that are not the file's (rebuilt heavy atoms, added hydrogens): energy
#: tolerance (kJ/mol/nm, OpenMM's unit) and iteration cap of OpenMM's LocalEnergyMinimizer.
RELAX_TOLERANCE, RELAX_ITERATIONS = 10.0, 500


def relax_added_atoms(topology, positions, force_field, from_file, record):
    """Minimise the energy of the atoms not in the file with the force field itself, every
    deposited atom held fixed (mass 0): PDBFixer relaxes rebuilt atoms with a soft potential
    only, which left rebuilt side chains 1.6 A from a neighbour (1A28's A:ASN705 ND2).  Nonbonded
    cutoff 1 nm (as OpenMM's Modeller relaxes hydrogens), on :func:`deterministic_platform`."""
    import openmm
    from openmm import app, unit
    moving = [k for k, atom in enumerate(topology.atoms()) if not from_file[k]]
    if not moving:
        return positions
    system = force_field.createSystem(topology, nonbondedMethod=app.CutoffNonPeriodic,
                                      nonbondedCutoff=1.0 * unit.nanometer, constraints=None,
                                      rigidWater=False)
    for k in range(system.getNumParticles()):
        if from_file[k]:
            system.setParticleMass(k, 0.0)
    with deterministic_platform() as platform:
        context = openmm.Context(system, openmm.VerletIntegrator(0.001), platform)
        context.setPositions(positions * 0.1 * unit.nanometer)
        openmm.LocalEnergyMinimizer.minimize(context, RELAX_TOLERANCE, RELAX_ITERATIONS)
        relaxed = context.getState(getPositions=True).getPositions(asNumpy=True).value_in_unit(unit.angstrom)
    record.atoms_relaxed = len(moving)
    out = np.array(relaxed, dtype=np.float64)
    out[np.asarray(from_file)] = positions[np.asarray(from_file)]  # the file's atoms, exactly
    return out


def drop_residues(topology, positions, residues, record):
    """Remove ``residues`` (OpenMM residues of ``topology``), listing them in ``record``."""
    if not residues:
        return topology, positions
    record.dropped.extend(residue_label(r) for r in residues)
    m = _modeller(topology, positions)
    m.delete(list(residues))
    return m.topology, _positions(m)


class UnmatchedResidues(UnknownResidueError):
    """Residues that no template matches and that adding hydrogens cannot complete; ``residues``
    (OpenMM residues of ``topology``) for the one message that names them all."""

    def __init__(self, topology, residues, gaps=()):
        super().__init__(f"{len(residues)} residue(s) match no template")
        self.topology, self.residues, self.gaps = topology, list(residues), list(gaps)


def unmatched_as_they_are(topology, force_field):
    """Residues that match no template of ``force_field`` and that OpenMM adds no hydrogens to
    (ligands, cofactors, modified residues, 4-site waters): adding hydrogens cannot fix them."""
    from openmm import app
    app.Modeller._loadStandardHydrogenDefinitions()
    with_hydrogens = set(app.Modeller._residueHydrogens)
    return [r for r in force_field.getUnmatchedResidues(topology)
            if r.name not in with_hydrogens or is_four_site_water(r)]


def prepare_structure(path: str, options: PreparationOptions, force_field, force_field_label: str):
    """Run the steps of the module docstring on ``path``; returns a :class:`PreparedStructure`.

    Raises
    ------
    StructureFileError
        Unreadable file or malformed record (with the line).
    UnmatchedResidues
        Residues that stop the hydrogens from being added (the caller names them all).
    UnknownResidueError
        Hydrogens could not be added (naming the residue and the options that help).
    """
    import time
    t0 = time.perf_counter()
    record = PreparationRecord(options)
    topology, models, text, pdbx = _parse(path, record)
    read_seconds = time.perf_counter() - t0
    original_keys = {_atom_key(a): a.index for a in topology.atoms()}
    file_keys = set(original_keys)
    if len(original_keys) < topology.getNumAtoms():
        original_keys = {}  # names repeat in the file: only an unchanged structure keeps its models
    positions = models[0]
    gaps = find_gaps(topology, positions)
    record.gaps = [{"chain": str(a.chain.id), "after": residue_label(a), "before": residue_label(b),
                    "c_n_distance": None if d is None else round(d, 3)} for a, b, d in gaps]
    if gaps:
        topology = split_chains(topology, [b for _, b, _ in gaps])
    if options.repair:
        topology, positions = remove_virtual_sites(topology, positions, record)
        topology, positions = repair(topology, positions, text, pdbx, record, force_field)
    if options.drop_unmatched:
        topology, positions = drop_residues(topology, positions,
                                            unmatched_as_they_are(topology, force_field), record)
    if options.adds_hydrogens:
        unknown = unmatched_as_they_are(topology, force_field)
        if unknown:
            raise UnmatchedResidues(topology, unknown, record.gaps)
        topology, positions = add_hydrogens(topology, positions, force_field, options.ph, record)
    if options.drop_unmatched:
        unmatched = force_field.getUnmatchedResidues(topology)
        topology, positions = drop_residues(topology, positions, unmatched, record)
    if options.repair and record.atoms_added and not force_field.getUnmatchedResidues(topology):
        from_file = [_atom_key(a) in file_keys or _renamed(a, record) for a in topology.atoms()]
        positions = relax_added_atoms(topology, positions, force_field, from_file, record)
    for chain, number, icode, old, new in record.renamed_atoms:
        if (chain, number, icode, old) in original_keys:
            original_keys[(chain, number, icode, new)] = original_keys[(chain, number, icode, old)]
    mapped = _models_on(topology, models, original_keys)
    if mapped is not None:
        positions = mapped[0]  # every atom is the file's: its own numbers, without unit round trips
    return PreparedStructure(topology, positions, record, force_field, force_field_label, mapped,
                             read_seconds)


def prepared_pdb_text(topology, positions) -> str:
    """``topology`` with ``positions`` ((n_atoms, 3) A) as PDB text (author numbers kept)."""
    from openmm import app, unit
    out = io.StringIO()
    app.PDBFile.writeFile(topology, np.asarray(positions) * 0.1 * unit.nanometer, out, keepIds=True)
    return out.getvalue()


__all__ = ["GAP_C_N_ANGSTROM", "PreparationOptions", "PreparationRecord", "PreparedStructure",
           "UnmatchedResidues", "find_gaps", "grouped_listing", "prepare_structure", "split_chains",
           "prepared_pdb_text", "unmatched_as_they_are"]
