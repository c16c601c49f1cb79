"""The one shared selection of the window: a residue pair, an atom pair, and the A/B groups.

Every view reads and writes this model only.  Setters that receive the value already held
return without emitting, so the two-way syncing between views never ping-pongs.
"""
from __future__ import annotations

from PySide6.QtCore import QObject, Signal


def _norm_pair(pair):
    if pair is None or len(pair) == 0:
        return None
    i, j = int(pair[0]), int(pair[1])
    return (i, j) if i <= j else (j, i)


class SelectionModel(QObject):
    """Residue pair ``(i, j)`` with i <= j (row indices of the current dataset: residues, or
    solvent blocks after the solute), atom pair
    ``(a, b)`` (atom indices) and the two group selection strings."""

    # Signals carry () for "nothing selected", never None: PySide6 6.12 on Python 3.11 drops a
    # reference to None for every None sent through a Signal(object), which ends in a crash
    # ("none_dealloc") after a few thousand emits.  Properties still return None.
    pairChanged = Signal(object)        # (i, j) or ()
    atomPairChanged = Signal(object)    # (a, b) or ()
    groupsChanged = Signal(str, str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self._pair = None
        self._atom_pair = None
        self._groups = ("", "")
        self._row_of_residue = None
        self._residue_of_row = None

    @property
    def pair(self):
        return self._pair

    @property
    def atom_pair(self):
        return self._atom_pair

    @property
    def groups(self):
        return self._groups

    def set_pair(self, pair) -> None:
        pair = _norm_pair(pair)
        if pair == self._pair:
            return
        self._pair = pair
        if self._atom_pair is not None:
            self._atom_pair = None
            self.atomPairChanged.emit(())
        self.pairChanged.emit(pair or ())

    def set_row_of_residue(self, row_of_residue, residue_of_row=None) -> None:
        """How system residues map to rows of the shown dataset (``Dataset.row_of_residue``,
        ``Dataset.residue_of_row``; None when rows are residues).  Solvent blocks make them
        differ."""
        self._row_of_residue = row_of_residue
        self._residue_of_row = residue_of_row

    def residue_pair(self):
        """The selected pair as system residues (None for nothing; a block row gives None in
        its place)."""
        if self._pair is None or self._residue_of_row is None:
            return self._pair
        return tuple(self._residue_of_row(r) for r in self._pair)

    def set_residue_pair(self, pair) -> None:
        """Select the rows showing system residues ``pair`` (clash reports and other panels
        that speak in residues of the structure)."""
        if pair is not None and len(pair) and self._row_of_residue is not None:
            pair = (self._row_of_residue(int(pair[0])), self._row_of_residue(int(pair[1])))
        self.set_pair(pair)

    def set_atom_pair(self, pair) -> None:
        pair = None if pair is None or len(pair) == 0 else (int(pair[0]), int(pair[1]))
        if pair == self._atom_pair:
            return
        self._atom_pair = pair
        self.atomPairChanged.emit(pair or ())

    def set_groups(self, a: str, b: str) -> None:
        groups = (a.strip(), b.strip())
        if groups == self._groups:
            return
        self._groups = groups
        self.groupsChanged.emit(*groups)

    def clear(self) -> None:
        self.set_pair(None)
