"""A table model over parallel numpy columns, sorted and filtered with numpy.

Sorting and filtering run inside the model (``numpy.argsort`` on the raw column, a boolean row
mask) instead of a QSortFilterProxyModel: a proxy calls back into Python for every row and every
comparison, which takes seconds at 10^5 rows, while numpy does it in milliseconds.
``DisplayRole`` gives formatted text, :data:`SORT_ROLE` the raw value and :data:`RECORD_ROLE`
the record (row of the underlying arrays) a view row shows.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from PySide6.QtCore import QAbstractTableModel, QModelIndex, Qt
from PySide6.QtGui import QBrush, QColor

import resources

SORT_ROLE = Qt.ItemDataRole.UserRole + 1
RECORD_ROLE = Qt.ItemDataRole.UserRole + 2

#: The roles :meth:`ArrayTableModel.data` answers; every other one returns None at once.
_ROLES_ANSWERED = frozenset({Qt.ItemDataRole.DisplayRole, SORT_ROLE, RECORD_ROLE, Qt.ItemDataRole.TextAlignmentRole,
                             Qt.ItemDataRole.ForegroundRole})
REPULSIVE = QColor(resources.json_table("colormaps.json")["repulsive"])
ATTRACTIVE = QColor(resources.json_table("colormaps.json")["attractive"])


def format_energy(v: float) -> str:
    if not math.isfinite(v):
        return "—"
    if abs(v) >= 1e5:
        return f"{v:.3e}"
    if abs(v) >= 100:
        return f"{v:,.1f}"
    return f"{v:.3f}"


@dataclass
class Column:
    """One column: ``values`` (n,) raw data; ``kind`` is ``text``, ``energy`` (kcal/mol, shown
    in the display unit and coloured by sign), ``distance`` (A) or ``number``."""

    title: str
    values: np.ndarray
    kind: str = "text"
    tooltip: str = ""
    sort_key: np.ndarray | None = None   # sort by this instead of ``values`` (e.g. residue index)
    hidden: bool = False                 # hidden by default (the header's column menu shows it)
    signed: bool = True                  # an energy coloured by its sign (False: a magnitude, neutral)


class ArrayTableModel(QAbstractTableModel):
    def __init__(self, parent=None):
        super().__init__(parent)
        self._columns: list[Column] = []
        self._n = 0
        self._mask = None
        self._rows = np.zeros(0, np.intp)          # view row -> record
        self._where = np.zeros(0, np.intp)         # record -> view row (-1 hidden)
        self._sort = (-1, Qt.SortOrder.AscendingOrder)
        self._factor, self._unit = 1.0, "kcal/mol"
        #: False: energy and distance headers without their unit line (the panel's caption
        #: names the units), so that narrow panels keep every energy column in view
        self.units_in_header = True

    # -- content -------------------------------------------------------------------------
    def set_columns(self, columns: list[Column], n: int) -> None:
        self.beginResetModel()
        self._columns = list(columns)
        self._n = int(n)
        self._mask = None
        self._rebuild()
        self.endResetModel()

    @property
    def unit(self) -> str:
        """The display unit of the energy columns."""
        return self._unit

    def set_unit(self, factor: float, unit: str) -> None:
        self._factor, self._unit = float(factor), unit
        if self._n:
            self.dataChanged.emit(self.index(0, 0), self.index(self.rowCount() - 1, self.columnCount() - 1))
        self.headerDataChanged.emit(Qt.Orientation.Horizontal, 0, max(0, self.columnCount() - 1))

    def set_mask(self, mask) -> None:
        """Show only records where ``mask`` is True (None: all)."""
        self.beginResetModel()
        self._mask = None if mask is None else np.asarray(mask, bool)
        self._rebuild()
        self.endResetModel()

    def hidden_by_default(self, column: int) -> bool:
        """Whether column ``column`` starts hidden (shown again from the header's column menu)."""
        return 0 <= column < len(self._columns) and self._columns[column].hidden

    def column_title(self, column: int) -> str:
        """The column's title without its unit line."""
        return self._columns[column].title

    def leading_columns(self) -> int:
        """How many columns, from the first, must fit the table's width: up to the last energy
        column (the columns after it are the less used ones and may scroll)."""
        energy = [k for k, c in enumerate(self._columns) if c.kind == "energy"]
        return energy[-1] + 1 if energy else len(self._columns)

    def widest_rows(self, column: int) -> list[int]:
        """View rows whose text in ``column`` is among the widest, found from the arrays (no
        formatting of every row): per magnitude band of :func:`format_energy` the largest and
        the most negative value, the largest distance, the longest strings.  Sizing a column on
        these rows gives the width sizing it on every row would."""
        if not len(self._rows) or not 0 <= column < len(self._columns):
            return []
        c = self._columns[column]
        values = c.values[self._rows]
        picks: list[int] = []
        if c.kind == "text" or values.dtype == object:
            lengths = np.char.str_len(values.astype(str))
            picks = np.argsort(lengths, kind="stable")[-3:].tolist()
        else:
            v = values.astype(np.float64) * (self._factor if c.kind == "energy" else 1.0)
            finite = np.isfinite(v)
            if not finite.all():
                picks.append(int(np.flatnonzero(~finite)[0]))
            bands = ((np.abs(v) < 100), (np.abs(v) >= 100) & (np.abs(v) < 1e5), np.abs(v) >= 1e5) \
                if c.kind == "energy" else (finite,)
            for band in bands:
                members = np.flatnonzero(band & finite)
                if len(members):
                    picks += [int(members[np.argmax(v[members])]), int(members[np.argmin(v[members])])]
        return sorted(set(int(p) for p in picks))

    def column_kind(self, column: int) -> str:
        """The kind of ``column`` (``text``, ``energy``, ``distance``, ``number``)."""
        return self._columns[column].kind

    def column_of(self, title: str) -> int:
        """Index of the column titled ``title`` (-1 when there is none)."""
        return next((k for k, c in enumerate(self._columns) if c.title == title), -1)

    def column_values(self, title: str) -> np.ndarray:
        for c in self._columns:
            if c.title == title:
                return c.values
        raise KeyError(title)

    def _rebuild(self) -> None:
        rows = np.arange(self._n) if self._mask is None else np.flatnonzero(self._mask)
        col, order = self._sort
        if 0 <= col < len(self._columns) and len(rows):
            c = self._columns[col]
            key = (c.values if c.sort_key is None else c.sort_key)[rows]
            if key.dtype == object:
                key = np.array([str(k) for k in key])
            else:
                key = np.where(np.isnan(key), np.inf, key) if key.dtype.kind == "f" else key
            idx = np.argsort(key, kind="stable")
            if order == Qt.SortOrder.DescendingOrder:
                idx = idx[::-1]
            rows = rows[idx]
        self._rows = rows.astype(np.intp)
        self._where = np.full(self._n, -1, np.intp)
        self._where[self._rows] = np.arange(len(self._rows))

    # -- lookups ---------------------------------------------------------------------------
    def record(self, row: int) -> int:
        return int(self._rows[row])

    def row_of(self, record: int) -> int:
        """View row of a record, or -1 when it is filtered out."""
        if record is None or not 0 <= record < self._n:
            return -1
        return int(self._where[record])

    # -- Qt API ------------------------------------------------------------------------------
    def rowCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self._columns)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation != Qt.Orientation.Horizontal or not 0 <= section < len(self._columns):
            return None
        c = self._columns[section]
        if role == Qt.ItemDataRole.DisplayRole:
            if c.kind == "energy" and self.units_in_header:
                return f"{c.title}\n({self._unit})"
            if c.kind == "distance" and self.units_in_header:
                return f"{c.title}\n(Å)"
            return c.title
        if role == Qt.ItemDataRole.ToolTipRole:
            return c.tooltip or None
        return None

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if role not in _ROLES_ANSWERED or not index.isValid():  # a view asks ~10 roles per cell painted
            return None
        c = self._columns[index.column()]
        rec = self._rows[index.row()]
        v = c.values[rec]
        if role == Qt.ItemDataRole.DisplayRole:
            if c.kind == "energy":
                return format_energy(float(v) * self._factor)
            if c.kind == "distance":
                if math.isnan(v):       # not defined here (a residue with itself, a bonded row)
                    return ""
                return "—" if not math.isfinite(v) else f"{v:.2f}"
            if c.kind == "number":
                return f"{v:.3f}" if isinstance(v, float | np.floating) else str(v)
            return str(v)
        if role == SORT_ROLE:
            if c.sort_key is not None:
                return c.sort_key[rec].item()
            return float(v) * (self._factor if c.kind == "energy" else 1.0) if c.kind != "text" else str(v)
        if role == RECORD_ROLE:
            return int(rec)
        if role == Qt.ItemDataRole.TextAlignmentRole and c.kind != "text":
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.ForegroundRole and c.kind == "energy" and c.signed:
            if v > 1.0:
                return QBrush(REPULSIVE)
            if v < -1.0:
                return QBrush(ATTRACTIVE)
        return None

    def sort(self, column: int, order=Qt.SortOrder.AscendingOrder) -> None:
        self.layoutAboutToBeChanged.emit()
        self._sort = (column, order)
        old = self._rows
        self._rebuild()
        # keep persistent indexes (the view's current/selected rows) on their records
        for idx in self.persistentIndexList():
            if idx.isValid() and idx.row() < len(old):
                new_row = self._where[old[idx.row()]]
                self.changePersistentIndex(idx, self.index(int(new_row), idx.column())
                                           if new_row >= 0 else QModelIndex())
        self.layoutChanged.emit()
