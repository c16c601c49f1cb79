"""Plain-Python state of the window (no Qt): what was loaded, what was computed, what is shown.

:class:`LoadSpec` says which files make a system; :class:`Snapshot` is one loaded system with
its computed result; :class:`Dataset` is what the map and the pair ledger display: residue
labels, chains and a residue-pair table, either of one snapshot or of a comparison.
"""
from __future__ import annotations

import json
import os
from dataclasses import asdict, dataclass, field

import numpy as np

from energy.terms.registry import TERMS

#: The chain shown for solvent blocks (not a chain identifier of the structure).
SOLVENT_CHAIN = "solvent"


@dataclass(frozen=True)
class LoadSpec:
    """Files making one system: a PDB/mmCIF alone, or a PSF + parameters + coordinates.

    For a PDB/mmCIF, how it is prepared (energy.io.preparation): ``add_hydrogens``, ``repair``
    (rebuild missing atoms, parent residues, hydrogens), ``ph``, ``forcefield_files`` (extra
    OpenMM XML templates), ``drop_unmatched``.
    """

    structure: str
    coords: str | None = None
    params: tuple = ()
    frame: int = 0
    add_hydrogens: bool = False
    repair: bool = False
    ph: float = 7.0
    forcefield_files: tuple = ()
    drop_unmatched: bool = False
    #: PDB/mmCIF: a force field bundled with OpenMM by name and its water model ("" = defaults).
    force_field_name: str = ""
    water: str = ""
    #: GROMACS .top: further folders for #include.
    include_dirs: tuple = ()

    def as_dict(self) -> dict:
        d = asdict(self)
        d["params"] = list(self.params)
        d["forcefield_files"] = list(self.forcefield_files)
        d["include_dirs"] = list(self.include_dirs)
        return d

    @classmethod
    def from_dict(cls, d: dict) -> LoadSpec:
        return cls(structure=str(d["structure"]), coords=d.get("coords") or None,
                   params=tuple(d.get("params") or ()), frame=int(d.get("frame") or 0),
                   add_hydrogens=bool(d.get("add_hydrogens")), repair=bool(d.get("repair")),
                   ph=float(d.get("ph", 7.0) or 7.0),
                   forcefield_files=tuple(d.get("forcefield_files") or ()),
                   drop_unmatched=bool(d.get("drop_unmatched")),
                   force_field_name=str(d.get("force_field_name") or ""), water=str(d.get("water") or ""),
                   include_dirs=tuple(d.get("include_dirs") or ()))

    def preparation(self):
        """The :class:`energy.io.preparation.PreparationOptions` of this spec."""
        from energy.io.preparation import PreparationOptions
        return PreparationOptions(add_hydrogens=self.add_hydrogens, repair=self.repair, ph=self.ph,
                                  forcefield_files=self.forcefield_files,
                                  drop_unmatched=self.drop_unmatched, force_field_name=self.force_field_name,
                                  water=self.water, include_dirs=self.include_dirs)

    @classmethod
    def from_files(cls, files) -> LoadSpec:
        """Sort a list of dropped/command-line files into a spec by their suffixes
        (:func:`energy.io.input_files.arrange_inputs`; raises its one-line StructureFileError)."""
        from energy.io.input_files import arrange_inputs
        arranged = arrange_inputs(files)
        return cls(arranged.structure, arranged.coords, arranged.params,
                   forcefield_files=arranged.forcefield_files)

    def short_name(self) -> str:
        name = os.path.basename(self.structure)
        if self.coords:
            name += f" + {os.path.basename(self.coords)}"
        return name


@dataclass(frozen=True)
class Snapshot:
    """One loaded system and its computed :class:`energy.decomposition.pipeline.EnergyResult`."""

    spec: LoadSpec
    loaded: object          # energy.io.loaders.LoadedSystem
    result: object          # energy.decomposition.pipeline.EnergyResult

    @property
    def system(self):
        return self.loaded.system

    @property
    def frame(self):
        return self.loaded.frame


@dataclass(frozen=True)
class Dataset:
    """What the pair map and the ledger show.

    ``labels`` (n,) str, ``chains`` (n,) str, ``pairs`` a ResiduePairEnergies-like table over
    those n residues (``pair_i``, ``pair_j``, ``values``, ``column``, ``dense``, ``per_residue``,
    ``lookup``, ``min_heavy_distance``).  ``snapshot`` is set for one structure; ``comparison``
    (an :class:`energy.analysis.compare.Comparison`) in compare mode.
    """

    labels: np.ndarray
    chains: np.ndarray
    pairs: object
    title: str
    snapshot: Snapshot | None = None
    comparison: object = None
    totals: dict = field(default_factory=dict)
    #: Set when the dataset comes from a result file (energy.output.result_file.StoredResult):
    #: map, ledger and term bars need nothing else; atom drill-down needs the structure.
    stored: object = None
    #: Set when solvent is shown as blocks (energy.decomposition.blocks.BlockedPairs): the rows
    #: are the solute residues, then one row per block ("Water (4,611)", "Ions (19)").  None
    #: when every row is one residue of the system.
    blocks: object = None
    #: With blocks: the full residue-pair table the blocks were made from (for expanding one).
    full_pairs: object = None

    @property
    def n(self) -> int:
        return len(self.labels)

    @property
    def is_difference(self) -> bool:
        return self.comparison is not None

    def is_block(self, row: int) -> bool:
        """True if display row ``row`` is a solvent block."""
        return self.blocks is not None and row >= self.blocks.n_solute

    def residue_of_row(self, row: int) -> int | None:
        """The system residue a display row stands for (None for a block)."""
        if self.blocks is None:
            return int(row)
        return None if self.is_block(row) else int(self.blocks.members[row][0])

    def row_of_residue(self, residue: int) -> int:
        """The display row showing system residue ``residue`` (its block's row for solvent)."""
        return int(residue) if self.blocks is None else int(self.blocks.residue_to_row[residue])

    def solvent_contacts(self, pair):
        """For a pair of a solute row and a block row: the block's members that interact with
        that residue (energy.decomposition.blocks.SolventContacts); None for any other pair."""
        if self.blocks is None:
            return None
        a, b = sorted(pair, key=self.is_block)
        if self.is_block(a) or not self.is_block(b):
            return None
        from energy.decomposition.blocks import solvent_contacts
        return solvent_contacts(self.full_pairs, self.residue_of_row(a), self.blocks.members[b])

    @classmethod
    def from_snapshot(cls, snap: Snapshot, blocks: bool = True) -> Dataset:
        """The dataset of one computed structure; with solvent and ``blocks``, waters and ions
        are one row each (energy.decomposition.blocks)."""
        title = f"{snap.spec.short_name()}, frame {snap.frame.index}"
        return cls.over_residue_pairs(snap, snap.result.residue_pairs, title, dict(snap.result.totals), blocks)

    @classmethod
    def over_residue_pairs(cls, snap: Snapshot, pairs, title: str, totals: dict, blocks: bool = True) -> Dataset:
        """The dataset of a residue-pair table over the residues of ``snap``'s system (its own
        result, or the mean over a trajectory's frames), solvent blocked when ``blocks``."""
        return cls.over_residues(snap.system.residues, snap.system.residue_classes, pairs, title, totals,
                                 blocks, snapshot=snap)

    @classmethod
    def over_residues(cls, residues, classes, pairs, title: str, totals: dict, blocks: bool = True,
                      **fields) -> Dataset:
        """The dataset of ``pairs`` over ``residues`` (a ResidueTable) of ``classes``; with
        solvent and ``blocks``, water and ions one row each.  ``fields``: ``snapshot`` or
        ``stored``."""
        from energy.decomposition.blocks import block_residue_pairs, has_solvent
        labels = np.array([residues.label(i) for i in range(len(residues))], dtype=object)
        chains = np.array([str(c).strip() for c in residues.chain], dtype=object)
        if blocks and has_solvent(classes):
            blocked = block_residue_pairs(pairs, classes, labels)
            solute = np.array([m[0] for m in blocked.members[:blocked.n_solute]], np.intp)
            block_chains = np.array([SOLVENT_CHAIN] * blocked.n_blocks, dtype=object)
            return cls(np.asarray(blocked.labels, dtype=object),
                       np.concatenate([chains[solute], block_chains]), blocked.pairs, title,
                       totals=totals, blocks=blocked, full_pairs=pairs, **fields)
        return cls(labels, chains, pairs, title, totals=totals, **fields)

    @classmethod
    def from_comparison(cls, comparison, first: Snapshot, second: Snapshot) -> Dataset:
        title = f"{second.spec.short_name()} minus {first.spec.short_name()}"
        return cls(np.asarray(comparison.labels, dtype=object),
                   np.asarray(comparison.chains, dtype=object), comparison.difference, title,
                   snapshot=first, comparison=comparison,
                   totals={t: comparison.totals_second[t] - comparison.totals_first[t]
                           for t in (*TERMS, "total")})

    @classmethod
    def from_stored(cls, stored, blocks: bool = True) -> Dataset:
        """The dataset of a result file: a scan (its table), a trajectory (the mean over its
        frames) or a comparison (second minus first)."""
        name = os.path.basename(stored.path)
        no_map = {"overlaps": "an overlap list (tessera overlaps); open its structure and the Clash check "
                              "panel finds the overlaps again",
                  "hotspots": "an alanine scan (tessera hotspots); open its structure and run the scan in "
                              "the Hot spots panel"}
        if stored.kind in no_map:
            from energy.errors import EnergyError
            what, advice = no_map[stored.kind].split("; ", 1)
            raise EnergyError(f"{name} holds {what}, not a residue-pair map: {advice}")
        if stored.kind == "comparison":
            c = stored.comparison
            return cls(np.asarray(c.labels, dtype=object), np.asarray(c.chains, dtype=object), c.difference,
                       f"{name} (comparison: second minus first)", comparison=c, stored=stored,
                       totals={t: c.totals_second[t] - c.totals_first[t] for t in (*TERMS, "total")})
        from energy.model.residue_classes import residue_classes
        r = stored.residues
        classes = residue_classes(r)
        if stored.kind == "trajectory":
            pairs, totals = stored_trajectory_mean(stored)
            return cls.over_residues(r, classes, pairs, f"{name} (mean over {len(stored.frames['index'])} frames)",
                                     totals, blocks, stored=stored)
        return cls.over_residues(r, classes, stored.residue_pairs, f"{name} (result file)", dict(stored.totals),
                                 blocks, stored=stored)


def stored_trajectory_mean(stored):
    """(ResiduePairEnergies of the mean over the frames, mean per-frame totals) of a stored
    trajectory result."""
    from energy.decomposition.residue_pairs import ResiduePairEnergies
    st = stored.statistics
    columns = list(json.loads(st["columns"]))
    values = {t: np.ascontiguousarray(st["mean"][:, columns.index(t)]) for t in TERMS}
    pairs = ResiduePairEnergies(int(st["n_residues"]), st["i"].astype(np.intp), st["j"].astype(np.intp),
                                values, np.asarray(st["min_distance"], float))
    totals = {t: float(np.mean(stored.frames[t])) if len(stored.frames[t]) else 0.0 for t in (*TERMS, "total")}
    return pairs, totals
