"""The pair ledger's model: one row per residue pair with a non-negligible entry."""
from __future__ import annotations

import numpy as np

from app.gui.models.array_table import ArrayTableModel, Column
from energy.terms.registry import BONDED_TERMS, TERMS, short_label

#: A pair whose largest term is below this (kcal/mol) is left out of the ledger.
NEGLIGIBLE_KCAL = 1e-3


class PairTableModel(ArrayTableModel):
    """Records are rows of the dataset's residue-pair table that pass :data:`NEGLIGIBLE_KCAL`."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.dataset = None
        self._pair_rows = np.zeros(0, np.intp)   # record -> row of dataset.pairs
        self._lab_i = self._lab_j = None

    def set_dataset(self, ds) -> None:
        self.dataset = ds
        if ds is None:
            self.set_columns([], 0)
            return
        rp = ds.pairs
        big = np.zeros(len(rp))          # largest |term| per pair, without stacking every column
        for t in TERMS:
            np.maximum(big, np.abs(rp.values[t]), out=big)
        rows = np.flatnonzero(big >= NEGLIGIBLE_KCAL)
        self._pair_rows = rows
        pi, pj = rp.pair_i[rows], rp.pair_j[rows]
        self._lab_i, self._lab_j = ds.labels[pi], ds.labels[pj]
        self._ch_i, self._ch_j = ds.chains[pi], ds.chains[pj]
        lower = np.array([str(s).lower() for s in ds.labels], dtype=str)   # per residue, then indexed
        self._lower_i, self._lower_j = lower[pi], lower[pj]
        # "Closest" of a residue with itself would be a bond length: left empty
        dist = np.where(pi == pj, np.nan, rp.min_heavy_distance[rows])
        vals = {t: rp.values[t][rows] for t in TERMS}   # the listed rows only, then the sums
        sums = {"bonded": sum(vals[t] for t in BONDED_TERMS), "total": sum(vals.values())}
        sums["effective_electrostatics"] = vals["coulomb"] + vals["solvation_polar"]
        col = lambda q: sums[q] if q in sums else vals[q]  # noqa: E731
        solvated = bool(np.any(vals["solvation_polar"]) or np.any(vals["solvation_nonpolar"]))
        prefix = "Δ " if ds.is_difference else ""
        solvation = ([Column(prefix + "Polar solv.", col("solvation_polar"), "energy",
                             "generalized Born: pair terms off the diagonal, self terms on it"),
                      Column(prefix + "Nonpolar", col("solvation_nonpolar"), "energy", "ACE, on the diagonal"),
                      Column(prefix + "Eff. elec.", col("effective_electrostatics"), "energy",
                             "effective electrostatics: Coulomb + polar solvation")] if solvated else [])
        if ds.is_difference:
            c = ds.comparison
            # the changes first, then the two totals; |Change| is a magnitude (not coloured by sign)
            cols = [Column("Residue i", self._lab_i, sort_key=pi), Column("Residue j", self._lab_j, sort_key=pj),
                    Column("Change", col("total"), "energy", "total: second minus first"),
                    Column(f"Δ {short_label('coulomb')}", col("coulomb"), "energy"),
                    Column(f"Δ {short_label('lj')}", col("lj"), "energy"),
                    *solvation,
                    Column("Δ Bonded", col("bonded"), "energy", "bonded terms: " + ", ".join(BONDED_TERMS)),
                    Column("|Change|", np.abs(col("total")), "energy", "size of the change, either sign",
                           signed=False),
                    Column("First", c.first_values["total"][rows], "energy", "total in the first structure"),
                    Column("Second", c.second_values["total"][rows], "energy", "total in the second structure"),
                    Column("Closest", dist, "distance", "minimum heavy-atom distance, second structure")]
        else:
            cols = [Column("Residue i", self._lab_i, sort_key=pi), Column("Residue j", self._lab_j, sort_key=pj),
                    Column("Closest", dist, "distance", "minimum heavy-atom distance"),
                    Column(short_label("coulomb"), col("coulomb"), "energy"),
                    Column(short_label("lj"), col("lj"), "energy"),
                    *solvation,
                    Column("Bonded", col("bonded"), "energy", "bonded terms: " + ", ".join(BONDED_TERMS)),
                    Column("Total", col("total"), "energy")]
        self.set_columns(cols, len(rows))

    # -- filtering ------------------------------------------------------------------------
    def apply_filter(self, text: str = "", chain: str = "", between: tuple | None = None,
                     hide_self: bool = False) -> None:
        """Text in either label; one residue in ``chain``; ``between=(c1, c2)``: one residue in
        each chain; ``hide_self``: no intra-residue rows."""
        if self.dataset is None:
            return
        mask = np.ones(len(self._pair_rows), bool)
        text = text.strip().lower()
        if text:
            mask &= (np.char.find(self._lower_i, text) >= 0) | (np.char.find(self._lower_j, text) >= 0)
        if chain:
            mask &= (self._ch_i == chain) | (self._ch_j == chain)
        if between:
            a, b = between
            mask &= ((self._ch_i == a) & (self._ch_j == b)) | ((self._ch_i == b) & (self._ch_j == a))
        if hide_self:
            mask &= self.dataset.pairs.pair_i[self._pair_rows] != self.dataset.pairs.pair_j[self._pair_rows]
        self.set_mask(None if mask.all() else mask)

    # -- pair <-> row -------------------------------------------------------------------------
    def pair_of_row(self, row: int):
        k = self._pair_rows[self.record(row)]
        rp = self.dataset.pairs
        return int(rp.pair_i[k]), int(rp.pair_j[k])

    def row_of_pair(self, pair) -> int:
        if self.dataset is None or pair is None:
            return -1
        k = self.dataset.pairs.lookup(*pair)
        if k is None:
            return -1
        rec = np.searchsorted(self._pair_rows, k)
        if rec >= len(self._pair_rows) or self._pair_rows[rec] != k:
            return -1
        return self.row_of(int(rec))
