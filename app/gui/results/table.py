"""A read-only table of :class:`rows.Row` objects, and its CSV export."""
from __future__ import annotations

import csv

from PySide6 import QtCore, QtGui, QtWidgets

from app.cli import CAUTION
from app.gui import theme

from .rows import Row

_STATUS_TEXT = {"pass": theme.PASS, "fail": theme.FAIL, "muted": theme.INK_MUTED}
_STATUS_FILL = {"pass": None, "fail": theme.FAIL_FILL, "muted": None}


class RowsModel(QtCore.QAbstractTableModel):
    """Rows of text; a row's status colours it (fail rows get a pale red fill)."""

    def __init__(self, headers, parent=None, numeric_columns=(), status_column=None):
        super().__init__(parent)
        self.headers = list(headers)
        self.rows: list[Row] = []
        self._numeric = set(numeric_columns)
        self._status_column = status_column
        self._brushes = {k: QtGui.QBrush(theme.qcolor(v)) for k, v in _STATUS_TEXT.items()}
        self._fills = {k: QtGui.QBrush(theme.qcolor(v)) for k, v in _STATUS_FILL.items() if v}
        self._bold = theme.font(bold=True)

    def set_rows(self, rows: list[Row]) -> None:
        self.beginResetModel()
        self.rows = list(rows)
        self.endResetModel()

    def rowCount(self, parent=QtCore.QModelIndex()):
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent=QtCore.QModelIndex()):
        return 0 if parent.isValid() else len(self.headers)

    def data(self, index, role=QtCore.Qt.DisplayRole):
        if not index.isValid():
            return None
        row = self.rows[index.row()]
        col = index.column()
        if role == QtCore.Qt.DisplayRole:
            return row.cells[col]
        if role == QtCore.Qt.ToolTipRole:
            return row.tooltip or None
        if role == QtCore.Qt.TextAlignmentRole:
            if col in self._numeric:
                return int(QtCore.Qt.AlignRight | QtCore.Qt.AlignVCenter)
            return int(QtCore.Qt.AlignLeft | QtCore.Qt.AlignVCenter)
        if role == QtCore.Qt.ForegroundRole and row.status in self._brushes:
            # only the status cell and muted rows change colour: a whole red table is hard to read
            if row.status == "muted" or col == self._status_column:
                return self._brushes[row.status]
        if role == QtCore.Qt.BackgroundRole and row.status in self._fills:
            return self._fills[row.status]
        if role == QtCore.Qt.FontRole and col == self._status_column and row.status in ("pass", "fail"):
            return self._bold
        return None

    def headerData(self, section, orientation, role=QtCore.Qt.DisplayRole):
        if role == QtCore.Qt.DisplayRole and orientation == QtCore.Qt.Horizontal:
            return self.headers[section]
        return None


def make_table_view(model: RowsModel, parent=None) -> QtWidgets.QTableView:
    """Compact, row-selecting, sortable-free view (core's order is the order)."""
    v = QtWidgets.QTableView(parent)
    v.setModel(model)
    v.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectRows)
    v.setSelectionMode(QtWidgets.QAbstractItemView.SingleSelection)
    v.setEditTriggers(QtWidgets.QAbstractItemView.NoEditTriggers)
    v.setAlternatingRowColors(True)
    v.setWordWrap(False)
    v.verticalHeader().setVisible(False)
    v.verticalHeader().setDefaultSectionSize(v.fontMetrics().height() + 8)
    h = v.horizontalHeader()
    h.setStretchLastSection(True)
    h.setHighlightSections(False)
    h.setDefaultAlignment(QtCore.Qt.AlignLeft | QtCore.Qt.AlignVCenter)
    v.setMinimumHeight(4 * (v.fontMetrics().height() + 8))
    return v


def fit_columns(view: QtWidgets.QTableView, max_width: int = 360) -> None:
    """Size columns to their contents once, then let the user drag them."""
    view.resizeColumnsToContents()
    h = view.horizontalHeader()
    for c in range(h.count() - 1):
        h.resizeSection(c, min(h.sectionSize(c) + 12, max_width))


def write_csv(path: str, title: str, headers, rows: list[Row]) -> None:
    """CSV of the table as shown, preceded by two '#' comment lines: what it is and the caution."""
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow([f"# {title}"])
        w.writerow([f"# {CAUTION}"])
        w.writerow(list(headers))
        for r in rows:
            w.writerow(list(r.cells))
