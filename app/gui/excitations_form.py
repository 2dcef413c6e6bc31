"""The excitations tab: the list of excitation sources and, for the one selected,
every key the project file holds for it.

* name; the source: orders of its shaft's speed, or one fixed frequency;
* the disc it acts at (written ``at``; the older ``applied_at`` is read and
  replaced by ``at`` on the first edit);
* orders: order, amplitude, phase, amplitude law (constant or speed squared,
  with the speed at which the amplitude is given);
* engine cylinders: the disc of each throw and its firing angle;
* a fixed-frequency source: frequency, amplitude, phase.

Built from the Specs and widgets of :mod:`app.gui.editors`; every change is a
document edit of :mod:`app.gui.edits`, emitted as ``replaceRequested(doc, label)``
or ``editRequested(path, value, label)`` for the main window's undo stack.
"""
from __future__ import annotations

from PySide6 import QtCore, QtWidgets

from core import units as u

from . import edits, theme
from .editors import (CHOICE, NUMBER, TEXT, TIPS, Field, RowsEditor, Spec, add_spec_rows, disc_choices,
                      disc_label, labelled, problem_label, show_spec_value)
from .quantities import display_text

ORDERS, FIXED = "orders", "fixed"
SOURCE_CHOICES = [(ORDERS, "orders of shaft speed"), (FIXED, "fixed frequency")]
NO_DISC = "(none)"

NAME_SPECS = [Spec("name", "Name", TEXT, "exc.name")]
FIXED_SPECS = [
    Spec("frequency", "Frequency", u.FREQUENCY, "exc.frequency", optional=False),
    Spec("amplitude", "Amplitude", u.TORQUE, "exc.amplitude"),
    Spec("phase_deg", "Phase, °", NUMBER, "exc.phase_deg", placeholder="0"),
]
SCALING_CHOICES = [("constant", "constant"), ("speed_squared", "∝ speed²")]
ORDER_SPECS = [
    Spec("order", "Order", NUMBER, "order.order", optional=False, width=40),
    Spec("amplitude", "Amplitude", u.TORQUE, "exc.amplitude", width=70),
    Spec("phase_deg", "Phase, °", NUMBER, "exc.phase_deg", placeholder="0", width=40),
    Spec("scaling", "Amplitude law", CHOICE, "order.scaling", choices=lambda doc: SCALING_CHOICES, width=70),
    Spec("at_speed", "At speed", u.SPEED, "order.at_speed", width=60,
         enabled=lambda o: edits.order_value(o, "scaling") == "speed_squared" or
         edits.order_value(o, "at_speed") is not None),
]
CYLINDER_SPECS = [
    Spec("at", "Disc", CHOICE, "cyl.at", choices=lambda doc: disc_choices(doc), width=90),
    Spec("firing_deg", "Firing angle, °", NUMBER, "cyl.firing_deg", placeholder="0", width=50),
]


def _order_value(order, key):
    value = edits.order_value(order, key)
    if key == "scaling" and value is None:
        return "constant"
    return value


def excitation_element(doc: dict, i: int) -> str:
    """How core names excitation ``i`` in its messages (core.project._operating)."""
    e = doc["excitations"][i]
    return f"excitation '{str(e.get('name') or f'Excitation {i + 1}')}'"


def summary(doc: dict, e: dict, system: str) -> str:
    """One line for the list's tooltip: where it acts and what it excites."""
    if e.get("frequency") is not None:
        f = display_text(e.get("frequency"), u.FREQUENCY, system)
        at = edits.excitation_disc(e)
        return f"fixed frequency {f}" + (f", acts at {disc_label(doc, at)}" if at is not None else "")
    orders = e.get("orders") if isinstance(e.get("orders"), list) else []
    text = ", ".join(str(edits.order_value(o, "order")) for o in orders)
    amps = sum(1 for o in orders if edits.order_value(o, "amplitude") is not None)
    out = f"acts at {disc_label(doc, edits.excitation_disc(e))}; orders {text or '—'}"
    if amps:
        out += f"; {amps} with an amplitude"
    if isinstance(e.get("cylinders"), list):
        out += f"; {len(e['cylinders'])} cylinders"
    return out


class ExcitationsForm(QtWidgets.QWidget):
    """List of excitations (left) and every key of the selected one (right)."""

    editRequested = QtCore.Signal(tuple, object, str)
    replaceRequested = QtCore.Signal(dict, str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.system = "SI"
        self._doc: dict = {}
        self._project = None
        self.current = -1  # index in doc["excitations"]
        self._signature = None
        self._specs: list = []  # (spec, widget)
        outer = QtWidgets.QHBoxLayout(self)
        outer.setContentsMargins(4, 4, 4, 4)
        split = QtWidgets.QSplitter(QtCore.Qt.Horizontal)
        split.setChildrenCollapsible(False)
        outer.addWidget(split)
        left = QtWidgets.QWidget()
        ll = QtWidgets.QVBoxLayout(left)
        ll.setContentsMargins(0, 0, 0, 0)
        self.list = QtWidgets.QListWidget()
        self.list.setToolTip("Excitation sources; select one to edit it")
        self.list.setMinimumWidth(120)
        self.list.setWordWrap(True)  # a long name wraps rather than hides behind a scroll bar
        self.list.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarAlwaysOff)
        self.list.currentRowChanged.connect(self._row_changed)
        ll.addWidget(self.list, 1)
        buttons = QtWidgets.QHBoxLayout()
        self.add_button = QtWidgets.QPushButton("Add")
        self.add_button.setToolTip("Add an excitation source acting at the reference disc")
        self.add_button.clicked.connect(self._add)
        self.remove_button = QtWidgets.QPushButton("Remove")
        self.remove_button.setToolTip("Remove the selected excitation source")
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
        self.orders = self.cylinders = None
        self._placeholder("No excitation selected. Add one, or select one in the list.")

    # ------------------------------------------------------------ list
    def _excitations(self) -> list:
        excs = self._doc.get("excitations")
        return excs if isinstance(excs, list) else []

    def refresh(self, doc: dict, project, system: str, force: bool = False) -> None:
        self._doc, self._project, self.system = doc, project, system
        excs = self._excitations()
        dict_rows = [i for i, e in enumerate(excs) if isinstance(e, dict)]
        self.list.blockSignals(True)
        try:
            if self.list.count() != len(dict_rows):
                self.list.clear()
                for _ in dict_rows:
                    self.list.addItem(QtWidgets.QListWidgetItem())
            err = project.error if project is not None else None
            for row, i in enumerate(dict_rows):
                e = excs[i]
                item = self.list.item(row)
                item.setText(str(e.get("name") or f"Excitation {i + 1}"))
                item.setData(QtCore.Qt.UserRole, i)
                bad = err is not None and (err.element or "").startswith(excitation_element(doc, i))
                tip = summary(doc, e, system)
                if bad:
                    item.setForeground(theme.qcolor(theme.FAIL))
                    item.setBackground(theme.qcolor(theme.FAIL_FILL))
                    tip = f"Problem: {err}\n\n{tip}"
                else:
                    item.setData(QtCore.Qt.ForegroundRole, None)
                    item.setData(QtCore.Qt.BackgroundRole, None)
                item.setToolTip(tip)
            if self.current not in dict_rows:
                self.current = dict_rows[-1] if dict_rows and self.current >= 0 else (
                    dict_rows[0] if dict_rows else -1)
            self.list.setCurrentRow(dict_rows.index(self.current) if self.current in dict_rows else -1)
        finally:
            self.list.blockSignals(False)
        self.remove_button.setEnabled(self.current >= 0)
        self._show_detail(force)

    def select(self, index: int) -> None:
        """Show excitation ``index`` (its index in doc["excitations"])."""
        self.current = index
        self.refresh(self._doc, self._project, self.system)

    def reset(self) -> None:
        """Another project: nothing selected, nothing remembered."""
        self.current = -1
        self._signature = None

    def _row_changed(self, row):
        item = self.list.item(row) if row >= 0 else None
        self.current = item.data(QtCore.Qt.UserRole) if item is not None else -1
        self.remove_button.setEnabled(self.current >= 0)
        self._show_detail()

    def _add(self):
        new, i = edits.add_excitation(self._doc)
        self.current = i
        self.replaceRequested.emit(new, "Add excitation")

    def _remove(self):
        if self.current < 0:
            return
        name = self._excitations()[self.current].get("name")
        new = edits.remove_excitation(self._doc, self.current)
        self.current = max(-1, self.current - 1) if self.current >= len(new.get("excitations", [])) \
            else self.current
        self.replaceRequested.emit(new, f"Remove excitation '{name}'")

    # ------------------------------------------------------------ detail
    def _clear(self):
        lay = self._body.layout()
        while lay.count():
            item = lay.takeAt(0)
            w = item.widget()
            if w is not None:
                w.hide()
                w.deleteLater()
            elif item.layout() is not None:
                _delete_layout(item.layout())
        self._specs = []
        self.orders = self.cylinders = None
        self.source_box = self.at_field = self.heading = None

    def _placeholder(self, text):
        self._clear()
        lab = QtWidgets.QLabel(text)
        lab.setWordWrap(True)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        self._body.layout().addWidget(lab)
        self._body.layout().addStretch(1)

    def _structure(self, i, e):
        fixed = e.get("frequency") is not None
        orders = e.get("orders") if isinstance(e.get("orders"), list) else None
        cyl = e.get("cylinders") if isinstance(e.get("cylinders"), list) else None
        return (i, fixed, None if orders is None else len(orders), None if cyl is None else len(cyl),
                self.system)

    def _show_detail(self, force: bool = False):
        excs = self._excitations()
        i = self.current
        if not 0 <= i < len(excs) or not isinstance(excs[i], dict):
            if self._signature != "empty":
                self._signature = "empty"
                self._placeholder("No excitation selected. Add one, or select one in the list." if excs
                                  else "No excitations yet: add one to screen its orders against the "
                                       "natural frequencies.")
            return
        e = excs[i]
        sig = self._structure(i, e)
        if sig != self._signature:
            self._signature = sig
            self._build(i, e)
        doc, project = self._doc, self._project
        element = excitation_element(doc, i)
        self.heading.setText(f"Excitation '{e.get('name') or f'Excitation {i + 1}'}'")
        base = ("excitations", i)
        for spec, w in self._specs:
            show_spec_value(w, spec, doc, e, e.get(spec.key), self.system, self._problem(element, spec.key), force)
        fixed = e.get("frequency") is not None
        at = edits.excitation_disc(e)
        at_problem = self._problem(element, "at") or self._problem(element, "applied_at")
        extra = [(None, NO_DISC)] if fixed else []
        self.at_field.set_choices(disc_choices(doc, extra), at, at_problem)
        self.source_box.blockSignals(True)
        self.source_box.setCurrentIndex(1 if fixed else 0)
        self.source_box.blockSignals(False)
        problem = self._problem(element, "orders") or self._problem(element, "cylinders")
        general = None
        err = project.error if project is not None else None
        if err is not None and err.element == element and err.field is None:
            general = err.message
        self.detail_problem.setText(problem or general or "")
        self.detail_problem.setVisible(bool(problem or general))
        if self.orders is not None:
            orders = e.get("orders") if isinstance(e.get("orders"), list) else []
            self.orders.show_rows(doc, base + ("orders",), orders, self.system,
                                  lambda r, key: self._problem(f"{element} order {r + 1}", key), force)
            cyl = e.get("cylinders") if isinstance(e.get("cylinders"), list) else []
            self.cylinders.show_rows(doc, base + ("cylinders",), cyl, self.system,
                                     lambda r, key: self._problem(f"{element} cylinder {r + 1}", key), force)
            self.cylinder_note.setVisible(bool(cyl))

    def _problem(self, element, field):
        project = self._project
        return project.error_at(element, field) if project is not None else None

    def _build(self, i, e):
        self._clear()
        lay = self._body.layout()
        self.heading = QtWidgets.QLabel()
        self.heading.setFont(theme.font(theme.TITLE_POINT_SIZE, bold=True))
        self.heading.setWordWrap(True)
        lay.addWidget(self.heading)
        form = QtWidgets.QFormLayout()
        form.setFieldGrowthPolicy(QtWidgets.QFormLayout.AllNonFixedFieldsGrow)
        form.setRowWrapPolicy(QtWidgets.QFormLayout.WrapLongRows)
        lay.addLayout(form)
        base = ("excitations", i)
        self._specs += add_spec_rows(form, NAME_SPECS, base, e, self.system, self._commit)
        self.source_box = QtWidgets.QComboBox()
        for value, label in SOURCE_CHOICES:
            self.source_box.addItem(label, value)
        self.source_box.setToolTip(TIPS["exc.source"])
        self.source_box.currentIndexChanged.connect(self._source_changed)
        lab = QtWidgets.QLabel("Source")
        lab.setToolTip(self.source_box.toolTip())
        form.addRow(lab, self.source_box)
        fixed = e.get("frequency") is not None
        from .editors import ChoiceField
        self.at_field = ChoiceField(base + ("at",), "exc.at_fixed" if fixed else "exc.at")
        self.at_field.committed.connect(self._at_changed)
        lab, box = labelled(self.at_field, "Acts at")
        form.addRow(lab, box)
        self.detail_problem = problem_label()
        if fixed:
            self._specs += add_spec_rows(form, FIXED_SPECS, base, e, self.system, self._commit)
            lay.addWidget(self.detail_problem)
            lay.addStretch(1)
            return
        head = QtWidgets.QLabel("Orders")
        head.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        head.setToolTip(TIPS["exc.orders"])
        lay.addWidget(head)
        lay.addWidget(self.detail_problem)
        self.orders = RowsEditor(ORDER_SPECS, "Add order", "order", min_rows=1, row_value=_order_value)
        self.orders.committed.connect(self._order_committed)
        self.orders.addRequested.connect(lambda: self._replace(edits.add_order(self._doc, self.current),
                                                               "Add order"))
        self.orders.removeRequested.connect(lambda j: self._replace(
            edits.remove_order(self._doc, self.current, j), f"Remove order {j + 1}"))
        lay.addWidget(self.orders)
        head = QtWidgets.QLabel("Engine cylinders")
        head.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        head.setToolTip("For an engine: each order's amplitude acts on every throw, with phase "
                        "φ − order × firing angle (optional).")
        lay.addWidget(head)
        self.cylinders = RowsEditor(CYLINDER_SPECS, "Add cylinder", "cylinder")
        self.cylinders.committed.connect(self._cylinder_committed)
        self.cylinders.addRequested.connect(lambda: self._replace(edits.add_cylinder(self._doc, self.current),
                                                                  "Add cylinder"))
        self.cylinders.removeRequested.connect(lambda k: self._replace(
            edits.remove_cylinder(self._doc, self.current, k), f"Remove cylinder {k + 1}"))
        lay.addWidget(self.cylinders)
        self.cylinder_note = QtWidgets.QLabel("Each order acts on every throw with phase φ − order × firing "
                                              "angle; the excitation's shaft is that of the throws.")
        self.cylinder_note.setWordWrap(True)
        self.cylinder_note.setStyleSheet(f"color: {theme.INK_MUTED};")
        lay.addWidget(self.cylinder_note)
        lay.addStretch(1)

    # ------------------------------------------------------------ edits
    def _name(self):
        e = self._excitations()[self.current]
        return e.get("name") or f"Excitation {self.current + 1}"

    def _replace(self, new, what):
        if new != self._doc:
            self.replaceRequested.emit(new, f"{what} of excitation '{self._name()}'")

    def _commit(self, path, value):
        self.editRequested.emit(path, value, f"Edit excitation '{self._name()}' {path[-1]}")

    def _at_changed(self, _path, value):
        e = self._excitations()[self.current]
        if value == edits.excitation_disc(e) and e.get("applied_at") is None:
            return
        self._replace(edits.set_excitation_disc(self._doc, self.current, value), "Disc")

    def _source_changed(self, index):
        source = self.source_box.itemData(index)
        freq = "100 Hz"
        self._replace(edits.set_excitation_source(self._doc, self.current, source, freq), "Source")

    def _order_committed(self, path, value):
        j, key = path[-2], path[-1]
        self._replace(edits.set_order_value(self._doc, self.current, j, key, value), f"Order {j + 1} {key}")

    def _cylinder_committed(self, path, value):
        k, key = path[-2], path[-1]
        e = self._excitations()[self.current]
        cyl = e.get("cylinders") or []
        if 0 <= k < len(cyl) and isinstance(cyl[k], dict) and cyl[k].get(key) == value:
            return
        self._replace(edits.set_cylinder_value(self._doc, self.current, k, key, value), f"Cylinder {k + 1} {key}")

    def fields(self) -> list:
        out = [w for _s, w in self._specs if isinstance(w, Field)]
        for rows in (self.orders, self.cylinders):
            if rows is not None:
                out += [w for w in rows.fields() if isinstance(w, Field)]
        return out


def _delete_layout(layout):
    while layout.count():
        item = layout.takeAt(0)
        if item.widget() is not None:
            item.widget().hide()
            item.widget().deleteLater()
        elif item.layout() is not None:
            _delete_layout(item.layout())
