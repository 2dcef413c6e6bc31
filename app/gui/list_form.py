"""A tab that edits a top-level list of objects of the project file (load cases,
transient events): the list on the left with Add and Remove, every key of the
selected object on the right.

Subclasses give the list's key, how core names an entry in its messages, a new
entry, and the detail's layout from the Specs and widgets of
:mod:`app.gui.editors` (``_build``), and say what the layout depends on
(``_structure``).  Every change is emitted for the main window's undo stack as
``editRequested(path, value, label)`` or ``replaceRequested(doc, label)``.
"""
from __future__ import annotations

import re

from PySide6 import QtCore, QtWidgets

from . import theme
from .document import get_path
from .editors import (ChoiceField, Field, MapEditor, RowsEditor, TableEditor, add_spec_rows, grid_specs,
                      show_spec_value)


class ListDetailForm(QtWidgets.QWidget):
    editRequested = QtCore.Signal(tuple, object, str)
    replaceRequested = QtCore.Signal(dict, str)

    list_key = ""  # the top-level key of the list
    what = "entry"  # how the list's entries are called ('load case')
    empty_text = ""  # what the detail says while the list is empty
    add_tip = ""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.system = "SI"
        self._doc: dict = {}
        self._project = None
        self.current = -1
        self._signature = None
        self._specs: list = []  # (spec, widget, problem_of(element, path))
        self._updaters: list = []  # (doc, entry, element, force) -> None
        self._editors: list = []  # RowsEditors and MapEditors (their fields)
        self.tables: list = []
        outer = QtWidgets.QHBoxLayout(self)
        outer.setContentsMargins(4, 4, 4, 4)
        split = QtWidgets.QSplitter(QtCore.Qt.Horizontal)
        split.setChildrenCollapsible(False)
        outer.addWidget(split)
        left = QtWidgets.QWidget()
        ll = QtWidgets.QVBoxLayout(left)
        ll.setContentsMargins(0, 0, 0, 0)
        self.list = QtWidgets.QListWidget()
        self.list.setToolTip(f"{self.what.capitalize()}s; select one to edit it")
        self.list.setMinimumWidth(120)
        self.list.setWordWrap(True)
        self.list.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarAlwaysOff)
        self.list.currentRowChanged.connect(self._row_changed)
        ll.addWidget(self.list, 1)
        buttons = QtWidgets.QHBoxLayout()
        self.add_button = QtWidgets.QPushButton("Add")
        self.add_button.setToolTip(self.add_tip or f"Add a {self.what}")
        self.add_button.clicked.connect(self._add)
        self.remove_button = QtWidgets.QPushButton("Remove")
        self.remove_button.setToolTip(f"Remove the selected {self.what}")
        self.remove_button.clicked.connect(self._remove)
        buttons.addWidget(self.add_button)
        buttons.addWidget(self.remove_button)
        ll.addLayout(buttons)
        split.addWidget(left)
        self.scroll = QtWidgets.QScrollArea()
        self.scroll.setWidgetResizable(True)
        self.scroll.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarAlwaysOff)
        self._body = QtWidgets.QWidget()
        self.scroll.setWidget(self._body)
        QtWidgets.QVBoxLayout(self._body)
        split.addWidget(self.scroll)
        split.setStretchFactor(0, 1)
        split.setStretchFactor(1, 3)
        split.setSizes([150, 450])
        self._placeholder(self.empty_text)

    # ------------------------------------------------------------ to override
    def element(self, doc: dict, i: int) -> str:
        """How core names entry ``i`` in its messages."""
        raise NotImplementedError

    def label(self, obj: dict, i: int) -> str:
        return str(obj.get("name") or f"{self.what.capitalize()} {i + 1}")

    def summary(self, doc: dict, obj: dict) -> str:
        return ""

    def new_entry(self, doc: dict) -> dict:
        raise NotImplementedError

    def _structure(self, i: int, obj: dict):
        return (i, self.system)

    def _build(self, i: int, obj: dict) -> None:
        raise NotImplementedError

    def remove_entry(self, doc: dict, i: int) -> dict:
        from . import edits
        return edits.list_remove(doc, (self.list_key,), i)

    # ------------------------------------------------------------ list
    def entries(self) -> list:
        value = self._doc.get(self.list_key)
        return value if isinstance(value, list) else []

    def refresh(self, doc: dict, project, system: str, force: bool = False) -> None:
        self._doc, self._project, self.system = doc, project, system
        items = self.entries()
        rows = [i for i, x in enumerate(items) if isinstance(x, dict)]
        self.list.blockSignals(True)
        try:
            if self.list.count() != len(rows):
                self.list.clear()
                for _ in rows:
                    self.list.addItem(QtWidgets.QListWidgetItem())
            err = project.error if project is not None else None
            for row, i in enumerate(rows):
                obj = items[i]
                item = self.list.item(row)
                item.setText(self.label(obj, i))
                item.setData(QtCore.Qt.UserRole, i)
                element = self.element(doc, i)
                bad = err is not None and (err.element or "").startswith(element)
                tip = self.summary(doc, obj)
                if bad:
                    item.setForeground(theme.qcolor(theme.FAIL))
                    item.setBackground(theme.qcolor(theme.FAIL_FILL))
                    tip = f"Problem: {err}\n\n{tip}"
                else:
                    item.setData(QtCore.Qt.ForegroundRole, None)
                    item.setData(QtCore.Qt.BackgroundRole, None)
                item.setToolTip(tip)
            if self.current not in rows:
                self.current = rows[-1] if rows and self.current >= 0 else (rows[0] if rows else -1)
            self.list.setCurrentRow(rows.index(self.current) if self.current in rows else -1)
        finally:
            self.list.blockSignals(False)
        self.remove_button.setEnabled(self.current >= 0)
        self._show_detail(force)

    def select(self, index: int) -> None:
        self.current = index
        self.refresh(self._doc, self._project, self.system)

    def reset(self) -> None:
        self.current = -1
        self._signature = None

    def _row_changed(self, row):
        item = self.list.item(row) if row >= 0 else None
        self.current = item.data(QtCore.Qt.UserRole) if item is not None else -1
        self.remove_button.setEnabled(self.current >= 0)
        self._show_detail()

    def _add(self):
        from . import edits
        new = edits.list_append(self._doc, (self.list_key,), self.new_entry(self._doc))
        self.current = len(new[self.list_key]) - 1
        self.replaceRequested.emit(new, f"Add {self.what}")

    def _remove(self):
        if self.current < 0:
            return
        name = self.label(self.entries()[self.current], self.current)
        new = self.remove_entry(self._doc, self.current)
        left = new.get(self.list_key) if isinstance(new.get(self.list_key), list) else []
        if self.current >= len(left):
            self.current = len(left) - 1
        self.replaceRequested.emit(new, f"Remove {self.what} '{name}'")

    # ------------------------------------------------------------ detail
    def _clear(self):
        lay = self._body.layout()
        while lay.count():
            item = lay.takeAt(0)
            if item.widget() is not None:
                item.widget().hide()
                item.widget().deleteLater()
            elif item.layout() is not None:
                _delete_layout(item.layout())
        self._specs, self._updaters, self._editors, self.tables = [], [], [], []
        self.heading = None

    def _placeholder(self, text):
        self._clear()
        lab = QtWidgets.QLabel(text)
        lab.setWordWrap(True)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        self._body.layout().addWidget(lab)
        self._body.layout().addStretch(1)

    def _show_detail(self, force: bool = False):
        items = self.entries()
        i = self.current
        if not 0 <= i < len(items) or not isinstance(items[i], dict):
            if self._signature != "empty":
                self._signature = "empty"
                self._placeholder(f"No {self.what} selected. Add one, or select one in the list." if items
                                  else self.empty_text)
            return
        obj = items[i]
        sig = self._structure(i, obj)
        if sig != self._signature:
            self._signature = sig
            self._clear()
            lay = self._body.layout()
            self.heading = QtWidgets.QLabel()
            self.heading.setFont(theme.font(theme.TITLE_POINT_SIZE, bold=True))
            self.heading.setWordWrap(True)
            lay.addWidget(self.heading)
            self.detail_problem = _problem_label()
            self._build(i, obj)
            lay.addStretch(1)
        doc = self._doc
        element = self.element(doc, i)
        self.heading.setText(f"{self.what.capitalize()} '{self.label(obj, i)}'")
        for spec, w, problem_of in self._specs:
            holder = get_path(doc, w.path[:-1])
            show_spec_value(w, spec, doc, holder if isinstance(holder, dict) else {}, get_path(doc, w.path),
                            self.system, problem_of(element, w.path), force)
        err = self._project.error if self._project is not None else None
        shown = {".".join(str(k) for k in w.path[2:]) for _s, w, _p in self._specs}
        general = None
        if err is not None and err.element == element and (err.field is None or err.field not in shown):
            general = err.message if err.field is None else f"{err.field}: {err.message}"
        self.detail_problem.setText(general or "")
        self.detail_problem.setVisible(bool(general))
        for update in self._updaters:
            update(doc, obj, element, force)

    # ------------------------------------------------------------ problems
    def problem(self, element, field):
        project = self._project
        return project.error_at(element, field) if project is not None else None

    def nested_problem(self, element, path):
        """Core names keys below the entry 'excitation_scale.Motor', 'misfire.cylinder' ..."""
        return self.problem(element, ".".join(str(k) for k in path[2:]))

    def leaf_problem(self, element, path):
        return self.problem(element, path[-1]) or self.problem(element, ".".join(str(k) for k in path[-2:]))

    def table_problem(self, element, key) -> tuple[str | None, int | None]:
        """(message, 0-based row) of the model's problem with the table ``key`` of ``element``
        (core names its rows 'table row 3' or says 'row 3: ...')."""
        err = self._project.error if self._project is not None else None
        if err is None or err.element != element or not err.field:
            return None, None
        head, _, tail = err.field.partition(" row ")
        if head != key:
            return None, None
        m = re.match(r"\d+", tail) or re.match(r"row (\d+)", err.message)
        row = int(m.group(1) if m.groups() else m.group(0)) - 1 if m else None
        return err.message, row

    # ------------------------------------------------------------ building blocks
    def heading_label(self, lay, text, tip=""):
        head = QtWidgets.QLabel(text)
        head.setWordWrap(True)
        head.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        head.setToolTip(tip)
        lay.addWidget(head)
        return head

    def note_label(self, lay, text=""):
        lab = QtWidgets.QLabel(text)
        lab.setWordWrap(True)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        lay.addWidget(lab)
        return lab

    @staticmethod
    def form_in(lay):
        form = QtWidgets.QFormLayout()
        form.setFieldGrowthPolicy(QtWidgets.QFormLayout.AllNonFixedFieldsGrow)
        form.setRowWrapPolicy(QtWidgets.QFormLayout.WrapLongRows)
        lay.addLayout(form)
        return form

    def specs_in(self, form, specs, base, obj, problem_of=None, on_commit=None):
        out = add_spec_rows(form, specs, base, obj, self.system, on_commit or self._commit)
        for spec, w in out:
            self._specs.append((spec, w, problem_of or self.nested_problem))
        return out

    def grid_in(self, lay, specs, base, obj, columns=3, problem_of=None, on_commit=None):
        grid = QtWidgets.QGridLayout()
        grid.setHorizontalSpacing(6)
        grid.setVerticalSpacing(0)
        lay.addLayout(grid)
        out = grid_specs(grid, specs, base, obj, self.system, on_commit or self._commit, columns)
        for spec, w in out:
            self._specs.append((spec, w, problem_of or self.nested_problem))
        return out

    def rows_in(self, lay, specs, add_text, what, path, element_of, add, remove, min_rows=0,
                row_value=None, on_commit=None):
        """A RowsEditor for the list (or single object) at ``path(doc)``; ``element_of(element,
        r, single)`` names a row as core does, ``add(doc)`` / ``remove(doc, r)`` give new documents."""
        rows = RowsEditor(specs, add_text, what, min_rows=min_rows, row_value=row_value)
        rows.committed.connect(on_commit or self._commit)
        rows.addRequested.connect(lambda: self._replace(add(self._doc), add_text))
        rows.removeRequested.connect(lambda r: self._replace(remove(self._doc, r), f"Remove {what} {r + 1}"))
        lay.addWidget(rows)
        self._editors.append(rows)

        def update(doc, obj, element, force):
            base = path(self.current)
            value = get_path(doc, base)
            single = isinstance(value, dict)
            rows.show_rows(doc, base, value if isinstance(value, (list, dict)) else [], self.system,
                           lambda r, key: element_of(element, r, single, key), force)
        self._updaters.append(update)
        return rows

    def map_in(self, lay, value_spec, key_label, add_text, what, path, choices, problem_of, add, rename,
               remove, on_commit=None, exclude=()):
        """A MapEditor for the object at ``path(i)`` (keys from ``choices(doc)``; keys in
        ``exclude`` are edited elsewhere)."""
        editor = MapEditor(value_spec, key_label, add_text, what)
        editor.committed.connect(on_commit or self._commit)
        editor.addRequested.connect(lambda: self._replace(add(self._doc), add_text))
        editor.keyChanged.connect(lambda old, new: self._replace(rename(self._doc, old, new), f"{what}"))
        editor.removeRequested.connect(lambda key: self._replace(remove(self._doc, key), f"Remove {what}"))
        lay.addWidget(editor)
        self._editors.append(editor)

        def update(doc, obj, element, force):
            value = get_path(doc, path(self.current))
            value = {k: v for k, v in value.items() if k not in exclude} if isinstance(value, dict) else {}
            editor.show_map(doc, path(self.current), value, choices(doc),
                            self.system, lambda key: problem_of(element, key), force)
        self._updaters.append(update)
        return editor

    def table_in(self, lay, columns, what, path, key_of, element_of=None, columns_of=None, label=""):
        """A TableEditor for the list at ``path(i)``; ``key_of`` is the table's key in core's
        messages; ``columns_of(doc, obj)`` gives the columns when they depend on the data."""
        table = TableEditor(columns, what)
        table.committed.connect(lambda p, rows: self.editRequested.emit(tuple(p), rows, f"Edit {label or what}s"))
        lay.addWidget(table)
        self.tables.append(table)

        def update(doc, obj, element, force):
            el = element_of(element) if element_of else element
            message, row = self.table_problem(el, key_of)
            base = path(self.current)
            table.show_table(base, get_path(doc, base), self.system, message, row,
                             columns_of(doc, obj) if columns_of else None, force)
        self._updaters.append(update)
        return table

    def choice_box(self, form, label, choices, current, tooltip, on_change):
        """A dropdown that is not one key (a way of giving something): ``on_change(value)``."""
        box = QtWidgets.QComboBox()
        box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        box.setMinimumContentsLength(8)
        for value, text in choices:
            box.addItem(text, value)
        if box.findData(current) < 0:
            box.addItem("(not given)" if current is None else str(current), current)
        box.setCurrentIndex(box.findData(current))
        box.setToolTip(tooltip)
        box.currentIndexChanged.connect(lambda _i: box.currentData() is not None and on_change(box.currentData()))
        lab = QtWidgets.QLabel(label)
        lab.setToolTip(tooltip)
        form.addRow(lab, box)
        return box

    # ------------------------------------------------------------ edits
    def _name(self) -> str:
        return self.label(self.entries()[self.current], self.current)

    def _replace(self, new, what):
        if new != self._doc:
            self.replaceRequested.emit(new, f"{what} of {self.what} '{self._name()}'")

    def _commit(self, path, value):
        self.editRequested.emit(tuple(path), value, f"Edit {self.what} '{self._name()}' {path[-1]}")

    def fields(self) -> list:
        out = [w for _s, w, _p in self._specs if isinstance(w, Field)]
        for ed in self._editors:
            out += [w for w in ed.fields() if isinstance(w, Field)]
        return out

    def choice_fields(self) -> list:
        return [w for _s, w, _p in self._specs if isinstance(w, ChoiceField)]


def _problem_label():
    from .editors import problem_label
    return problem_label()


def _delete_layout(layout):
    while layout.count():
        item = layout.takeAt(0)
        if item.widget() is not None:
            item.widget().hide()
            item.widget().deleteLater()
        elif item.layout() is not None:
            _delete_layout(item.layout())
