"""A read-only table of :class:`rows.Row` objects, and its CSV export."""
from __future__ import annotations

import csv

from PySide6 import QtCore, QtGui, QtWidgets

from core.about import CAUTION
from app.gui import theme

from .rows import Row

_DISPLAY = int(QtCore.Qt.DisplayRole.value)
_TOOLTIP = int(QtCore.Qt.ToolTipRole.value)
_ALIGN = int(QtCore.Qt.TextAlignmentRole.value)
_FOREGROUND = int(QtCore.Qt.ForegroundRole.value)
_BACKGROUND = int(QtCore.Qt.BackgroundRole.value)
_FONT = int(QtCore.Qt.FontRole.value)
_CHECK = int(QtCore.Qt.CheckStateRole.value)
_ROLES = frozenset((_DISPLAY, _TOOLTIP, _ALIGN, _FOREGROUND, _BACKGROUND, _FONT, _CHECK))
_CHECKED, _UNCHECKED = QtCore.Qt.Checked, QtCore.Qt.Unchecked
_RIGHT = int((QtCore.Qt.AlignRight | QtCore.Qt.AlignVCenter).value)
_LEFT = int((QtCore.Qt.AlignLeft | QtCore.Qt.AlignVCenter).value)

_STATUS_TEXT = {"pass": theme.PASS, "fail": theme.FAIL, "muted": theme.INK_MUTED}
_STATUS_FILL = {"pass": None, "fail": theme.FAIL_FILL, "muted": None}


class RowsModel(QtCore.QAbstractTableModel):
    """Rows of text; a row's status colours it (fail rows get a pale red fill).

    ``check_column``: that column carries a tick box per row (the row's ``key``
    is what is ticked; ``checkedChanged`` after the user ticks or unticks one).
    """

    checkedChanged = QtCore.Signal()

    def __init__(self, headers, parent=None, numeric_columns=(), status_column=None,
                 check_column: int | None = None):
        super().__init__(parent)
        self.headers = list(headers)
        self.rows: list[Row] = []
        self.check_column = check_column
        self.checked: set = set()
        self._numeric = set(numeric_columns)
        self._status_column = status_column
        self._brushes = {k: QtGui.QBrush(theme.qcolor(v)) for k, v in _STATUS_TEXT.items()}
        self._fills = {k: QtGui.QBrush(theme.qcolor(v)) for k, v in _STATUS_FILL.items() if v}
        self._bold = theme.font(bold=True)

    def set_rows(self, rows: list[Row]) -> None:
        """New rows.  With the same number of rows (a live re-solve) only the rows
        whose text, tip or status changed are signalled, so the view repaints those
        and keeps its selection and scroll position; otherwise the model resets."""
        rows = list(rows)
        if len(rows) != len(self.rows) or not rows:
            self.beginResetModel()
            self.rows = rows
            self.endResetModel()
            return
        old, self.rows = self.rows, rows
        changed = [i for i, (a, b) in enumerate(zip(old, rows))
                   if a.cells != b.cells or a.tip != b.tip or a.status != b.status]
        last = len(self.headers) - 1
        start = None
        for k, i in enumerate(changed):  # one signal per run of adjacent rows
            if start is None:
                start = i
            if k + 1 == len(changed) or changed[k + 1] != i + 1:
                self.dataChanged.emit(self.index(start, 0), self.index(i, last))
                start = None

    def rowCount(self, parent=QtCore.QModelIndex()):
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent=QtCore.QModelIndex()):
        return 0 if parent.isValid() else len(self.headers)

    def data(self, index, role=_DISPLAY):
        # roles compared as plain ints: PySide enum comparisons cost microseconds each,
        # and a column fit asks for every cell
        role = int(role)
        if role not in _ROLES or not index.isValid():
            return None
        row = self.rows[index.row()]
        col = index.column()
        if role == _CHECK:
            if col != self.check_column:
                return None
            return _CHECKED if row.key in self.checked else _UNCHECKED
        if role == _DISPLAY:
            return row.cells[col]
        if role == _TOOLTIP:
            return row.tooltip or None
        if role == _ALIGN:
            return _RIGHT if col in self._numeric else _LEFT
        status = row.status
        if role == _FOREGROUND:
            # only the status cell and muted rows change colour: a whole red table is hard to read
            if status == "muted" or (col == self._status_column and status in self._brushes):
                return self._brushes[status]
            return None
        if role == _BACKGROUND:
            return self._fills.get(status)
        if role == _FONT and col == self._status_column and status in ("pass", "fail"):
            return self._bold
        return None

    def flags(self, index):
        f = super().flags(index)
        if index.isValid() and index.column() == self.check_column:
            f |= QtCore.Qt.ItemIsUserCheckable
        return f

    def setData(self, index, value, role=QtCore.Qt.EditRole):
        if not index.isValid() or index.column() != self.check_column or int(role) != _CHECK:
            return False
        key = self.rows[index.row()].key
        on = value in (_CHECKED, int(_CHECKED.value), True)
        if on == (key in self.checked):
            return True
        (self.checked.add if on else self.checked.discard)(key)
        self.dataChanged.emit(index, index, [QtCore.Qt.CheckStateRole])
        self.checkedChanged.emit()
        return True

    def set_checked(self, keys) -> None:
        """Tick exactly ``keys`` (no checkedChanged: the caller redraws)."""
        self.checked = set(keys)
        if self.rows and self.check_column is not None:
            c = self.check_column
            self.dataChanged.emit(self.index(0, c), self.index(len(self.rows) - 1, c),
                                  [QtCore.Qt.CheckStateRole])

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
    h.setResizeContentsPrecision(40)  # fit columns to the first rows only: long tables stay fast
    h.setHighlightSections(False)
    h.setDefaultAlignment(QtCore.Qt.AlignLeft | QtCore.Qt.AlignVCenter)
    v.setMinimumHeight(4 * (v.fontMetrics().height() + 8))
    return v


def fit_columns(view: QtWidgets.QTableView, max_width: int = 360, elastic=None) -> None:
    """Size columns to their contents once (the first time the table has rows),
    then leave them: live re-solves must not undo widths the user dragged.

    ``elastic``: the column (or columns, sharing it) of long descriptive text
    (e.g. the excitation's name) that takes the width left over by the others, so that on a small screen
    (1366 x 768) every number column stays in view and that text is elided
    (its row's tooltip carries it in full) instead of pushing columns off the edge.
    """
    if view.property("columns_fitted") or not view.model().rowCount():
        return
    view.setProperty("columns_fitted", True)
    view.resizeColumnsToContents()
    h = view.horizontalHeader()
    for c in range(h.count() - (0 if elastic is not None else 1)):
        h.resizeSection(c, min(h.sectionSize(c) + 12, max_width))
    if elastic is not None:
        h.setStretchLastSection(False)
        h.setMinimumSectionSize(max(h.minimumSectionSize(), 40))
        for c in ((elastic,) if isinstance(elastic, int) else elastic):
            h.setSectionResizeMode(c, QtWidgets.QHeaderView.Stretch)


def write_csv(path: str, title: str, headers, rows: list[Row]) -> None:
    """CSV of the table as shown, preceded by two '#' comment lines: what it is and the caution."""
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow([f"# {title}"])
        w.writerow([f"# {CAUTION}"])
        w.writerow([h.replace("\n", " ") for h in headers])
        for r in rows:
            w.writerow(list(r.cells))


class ElidingComboBox(QtWidgets.QComboBox):
    """A combo box whose current text, when longer than the box, ends in an ellipsis instead
    of being cut off (the list shows every entry whole; the tooltip carries the current one)."""

    def paintEvent(self, event):
        painter = QtWidgets.QStylePainter(self)
        opt = QtWidgets.QStyleOptionComboBox()
        self.initStyleOption(opt)
        painter.drawComplexControl(QtWidgets.QStyle.CC_ComboBox, opt)
        room = self.style().subControlRect(QtWidgets.QStyle.CC_ComboBox, opt,
                                           QtWidgets.QStyle.SC_ComboBoxEditField, self).width()
        opt.currentText = self.fontMetrics().elidedText(opt.currentText, QtCore.Qt.ElideRight, max(room - 2, 10))
        painter.drawControl(QtWidgets.QStyle.CE_ComboBoxLabel, opt)
