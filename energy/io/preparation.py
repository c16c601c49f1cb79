"""Preparing a deposited PDB/mmCIF for the built-in force field, and the record of what was done.

The steps, in order (each optional one only on request; docs/physics.md, "Deposited structures"):

1. read the text (``.gz`` too), check its records, choose alternate locations
   (:mod:`energy.io.structure_text`);
2. parse it with OpenMM (first model as the topology; every model kept as a frame);
3. find chain breaks (:mod:`energy.io.chain_breaks`): consecutive amino acids whose C(i)-N(i+1)
   distance exceeds :data:`GAP_C_N_ANGSTROM` (or that lack one of the two atoms).  The chain is split there, so
   nothing is ever bonded across a gap and both ends become chain termini;
4. ``repair`` (:mod:`energy.io.repair`): remove the extra sites of 4-site waters, replace common
   modified residues by their parents and rebuild missing heavy atoms and terminal groups
   (PDBFixer, with a fixed seed on a deterministic OpenMM platform);
5. ``drop_unmatched``: remove residues that no template of the force field can match;
6. ``add_hydrogens`` (or ``repair``): hydrogens at ``ph`` (OpenMM's Modeller, seeded, on a
   deterministic platform: the same input gives the same positions, bit for bit);
7. ``repair``: the atoms that are not the file's relaxed with the force field, the file's fixed.

Everything done is kept in a :class:`PreparationRecord` (the JSON ``preparation`` block and the
summary lines).
"""
from __future__ import annotations

import io
from dataclasses import dataclass, field

import numpy as np

from energy.errors import SettingsError, StructureFileError, UnknownResidueError
from energy.io.chain_breaks import GAP_C_N_ANGSTROM, find_gaps, split_chains
from energy.io.repair import (
    add_hydrogens,
    modeller_of,
    positions_of,
    relax_added_atoms,
    remove_virtual_sites,
    repair,
)
from energy.io.repeated_molecules import split_repeated
from energy.io.residue_messages import grouped_listing, is_four_site_water, residue_label
from energy.io.structure_text import (
    PDBX_SUFFIXES,
    check_pdb_records,
    choose_altlocs_pdb,
    choose_altlocs_pdbx,
    read_structure_text,
    structure_suffix,
)


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
    #: A force field bundled with OpenMM by name (energy.io.forcefields; "" = Amber 14) and its
    #: water model ("" = the force field's default).
    force_field_name: str = ""
    water: str = ""
    #: GROMACS route: further folders for ``#include``.
    include_dirs: tuple = ()

    def __post_init__(self):
        object.__setattr__(self, "forcefield_files", tuple(str(f) for f in self.forcefield_files))
        object.__setattr__(self, "include_dirs", tuple(str(f) for f in self.include_dirs))
        from energy.io.forcefields import force_field_files
        force_field_files(self.force_field_name or None, self.water or None)  # SettingsError if unknown
        if not (np.isfinite(self.ph) and 0.0 <= self.ph <= 14.0):
            raise SettingsError(f"--ph must lie between 0 and 14, got {self.ph}")

    @property
    def force_field(self) -> tuple:
        """OpenMM XML files of the chosen force field and water model (Amber 14 + TIP3P by default)."""
        from energy.io.forcefields import force_field_files
        return force_field_files(self.force_field_name or None, self.water or None)

    @property
    def chooses_force_field(self) -> bool:
        return bool(self.force_field_name or self.water or self.forcefield_files)

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
        """The record and the options it was made with, as a JSON-ready dictionary.

        Returns
        -------
        dict
            Options (``repair``, ``add_hydrogens``, ``ph`` or None, ``forcefield_files``,
            ``drop_unmatched``, ``gap_c_n_threshold_angstrom`` in A) and every change made (gaps,
            altlocs, residues replaced, atoms renamed, added, relaxed, virtual sites removed, dropped
            residues, ``n_models``, ``prepared_pdb``).
        """
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
        """One short line of counts (the window's status bar).

        Returns
        -------
        str
            Counts joined by commas, or ``"nothing changed"``.
        """
        parts = [f"{len(self.gaps)} gap(s)" if self.gaps else "",
                 f"{len(self.altlocs)} altloc choice(s)" if self.altlocs else "",
                 f"{len(self.residues_replaced)} residue(s) replaced" if self.residues_replaced else "",
                 f"{sum(len(a['atoms']) for a in self.atoms_added)} atom(s) rebuilt" if self.atoms_added else "",
                 f"{self.hydrogens_added} H added" if self.hydrogens_added else "",
                 f"{len(self.dropped)} residue(s) left out" if self.dropped else ""]
        return ", ".join(p for p in parts if p) or "nothing changed"

    def summary_lines(self) -> list[str]:
        """Lines for the human summary (nothing for a structure that needed nothing).

        Returns
        -------
        list of str
            One line per kind of change.
        """
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
    #: The repeated waters and ions taken out before OpenMM read the file
    #: (:class:`energy.io.repeated_molecules.SplitStructure`), or None.
    split: object = None


# ------------------------------------------------------------------------------------------
# parsing
# ------------------------------------------------------------------------------------------

def _parse(path: str, record: PreparationRecord, split_solvent: bool = False):
    """OpenMM topology and every model's positions (n_models, n_atoms, 3) A of ``path``, the text,
    whether it is mmCIF, and the repeated waters and ions taken out of it (``split_solvent``, PDB
    only; :mod:`energy.io.repeated_molecules`) or None."""
    from openmm import app, unit
    text = read_structure_text(path)
    pdbx = structure_suffix(path) in PDBX_SUFFIXES
    split = None
    if pdbx:
        text, choices = choose_altlocs_pdbx(text)
    else:
        text = check_pdb_records(text, path)
        text, choices = choose_altlocs_pdb(text)
        split = split_repeated(text) if split_solvent else None
    record.altlocs = [c.as_dict() for c in choices]
    read_text = text if split is None else split.text
    try:
        structure = app.PDBxFile(io.StringIO(read_text)) if pdbx else app.PDBFile(io.StringIO(read_text))
    except Exception as exc:  # OpenMM raises bare Exceptions/ValueErrors on malformed files
        raise StructureFileError(path, f"could not read the structure ({_one_line(exc)})") from None
    n = structure.topology.getNumAtoms()
    if n == 0:
        raise StructureFileError(path, "the file holds no atoms")
    frames = [structure.getPositions(asNumpy=True, frame=k).value_in_unit(unit.angstrom)
              for k in range(structure.getNumFrames())]
    sizes = [len(f) for f in frames]
    if any(s != n for s in sizes):  # a damaged or truncated ensemble: its models differ
        k = next(i for i, s in enumerate(sizes) if s != n)
        raise StructureFileError(path, f"model {k + 1} holds {sizes[k]} atoms but the first holds {n}: "
                                       "every model must list the same atoms")
    models = np.array(frames, dtype=np.float64)
    record.n_models = len(models)
    return structure.topology, models, text, pdbx, split


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
# the steps
# ------------------------------------------------------------------------------------------

def drop_residues(topology, positions, residues, record):
    """Remove ``residues`` (OpenMM residues of ``topology``), listing them in ``record``.

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A.
    residues : sequence of openmm.app.Residue
        Residues of ``topology`` to remove.
    record : PreparationRecord
        Gets the labels of the removed residues (``dropped``).

    Returns
    -------
    (openmm.app.Topology, (n_atoms', 3) float64)
        The topology and positions (A) without ``residues``; the inputs if there are none.
    """
    if not residues:
        return topology, positions
    record.dropped.extend(residue_label(r) for r in residues)
    m = modeller_of(topology, positions)
    m.delete(list(residues))
    return m.topology, positions_of(m)


class UnmatchedResidues(UnknownResidueError):
    """Residues that no template matches and that adding hydrogens cannot complete; ``residues``
    (OpenMM residues of ``topology``) for the one message that names them all."""

    def __init__(self, topology, residues, gaps=()):
        super().__init__(f"{len(residues)} residue(s) match no template")
        self.topology, self.residues, self.gaps = topology, list(residues), list(gaps)


def unmatched_residues(topology, force_field) -> list:
    """Residues that no template of ``force_field`` matches, patched templates included.

    OpenMM's ``getUnmatchedResidues`` compares each residue with the templates as written, so a
    force field whose terminal forms are patches (CHARMM36's NTER and CTER) reports every chain
    terminus although ``createSystem`` applies the patches and matches them.  For a force field
    with patches, a report is therefore checked by ``createSystem``: when it parameterises the
    topology, nothing is unmatched; when it fails, the report stands (it may then also name
    residues a patch would have matched).

    Parameters
    ----------
    topology : openmm.app.Topology
    force_field : openmm.app.ForceField

    Returns
    -------
    list of openmm.app.Residue
    """
    from openmm import app
    unmatched = force_field.getUnmatchedResidues(topology)
    if unmatched and getattr(force_field, "_patches", None):  # OpenMM keeps the patch definitions here
        try:
            force_field.createSystem(topology, nonbondedMethod=app.NoCutoff, constraints=None,
                                     rigidWater=False, removeCMMotion=False)
        except ValueError:
            return unmatched
        return []
    return unmatched


def unmatched_as_they_are(topology, force_field):
    """Residues that match no template of ``force_field`` and that OpenMM adds no hydrogens to.

    Ligands, cofactors, modified residues, 4-site waters: adding hydrogens cannot fix them.

    Parameters
    ----------
    topology : openmm.app.Topology
    force_field : openmm.app.ForceField

    Returns
    -------
    list of openmm.app.Residue
    """
    from openmm import app
    app.Modeller._loadStandardHydrogenDefinitions()
    with_hydrogens = set(app.Modeller._residueHydrogens)
    return [r for r in force_field.getUnmatchedResidues(topology)
            if r.name not in with_hydrogens or is_four_site_water(r)]


def prepare_structure(path: str, options: PreparationOptions, force_field, force_field_label: str,
                      split_solvent: bool = False):
    """Run the steps of the module docstring on ``path``.

    Parameters
    ----------
    path : str
        PDB or mmCIF file, optionally gzip-compressed.
    options : PreparationOptions
        The steps asked for.
    force_field : openmm.app.ForceField
        Force field whose templates the residues must match.
    force_field_label : str
        How the force field is named (kept in the result).
    split_solvent : bool
        Take the repeated waters and ions of a PDB out before OpenMM reads it
        (:mod:`energy.io.repeated_molecules`; only when no step changes atoms).

    Returns
    -------
    PreparedStructure
        With ``split`` set when the solvent was taken out: the topology and positions are then
        those of the solute and one representative per kind.

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
    topology, models, text, pdbx, split = _parse(path, record, split_solvent and not options.changes_atoms)
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
        unmatched = unmatched_residues(topology, force_field)
        topology, positions = drop_residues(topology, positions, unmatched, record)
    if options.repair and record.atoms_added and not unmatched_residues(topology, force_field):
        from_file = [_atom_key(a) in file_keys or _renamed(a, record) for a in topology.atoms()]
        positions = relax_added_atoms(topology, positions, force_field, from_file, record)
    for chain, number, icode, old, new in record.renamed_atoms:
        if (chain, number, icode, old) in original_keys:
            original_keys[(chain, number, icode, new)] = original_keys[(chain, number, icode, old)]
    mapped = _models_on(topology, models, original_keys)
    if mapped is not None:
        positions = mapped[0]  # every atom is the file's: its own numbers, without unit round trips
    return PreparedStructure(topology, positions, record, force_field, force_field_label, mapped,
                             read_seconds, split)


def prepared_pdb_text(topology, positions) -> str:
    """``topology`` with ``positions`` as PDB text (author numbers kept).

    Parameters
    ----------
    topology : openmm.app.Topology
    positions : (n_atoms, 3) float64
        Coordinates, A.

    Returns
    -------
    str
        PDB text written by OpenMM's ``PDBFile``.
    """
    from openmm import app, unit
    out = io.StringIO()
    app.PDBFile.writeFile(topology, np.asarray(positions) * 0.1 * unit.nanometer, out, keepIds=True)
    return out.getvalue()


__all__ = ["GAP_C_N_ANGSTROM", "PreparationOptions", "PreparationRecord", "PreparedStructure",
           "UnmatchedResidues", "find_gaps", "grouped_listing", "prepare_structure", "split_chains",
           "prepared_pdb_text", "unmatched_as_they_are", "unmatched_residues"]
