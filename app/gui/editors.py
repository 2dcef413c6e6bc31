"""The building blocks every editor of the desktop program is made of.

One pattern reaches every key of the project file (see ``Spec``):

* a **Spec** names one key of an element (its key in the element's JSON object,
  label, kind of value — a :class:`core.units.Kind`, ``NUMBER``, ``TEXT`` or
  ``CHOICE`` — tooltip, whether it may be empty, and when it applies);
* :func:`spec_widget` turns a Spec into a :class:`Field` (a line edit with units)
  or a :class:`ChoiceField` (a dropdown that shows names and stores ids), both
  bound to a path in the document (a tuple of keys and list indices);
* :func:`add_spec_rows` lays a list of Specs out as a form; :class:`RowsEditor`
  lays a list of objects (orders, cylinders, segments ...) out as a grid of the
  same widgets with add and remove buttons;
* widgets never change the document: they emit ``committed(path, value)`` and
  the owner turns that into an undo command (a field edit, or a structural
  document edit from :mod:`app.gui.edits`);
* after every document change the owner calls ``show_value(stored, system,
  model_problem, force)``: the widget shows the stored value in the unit system
  on screen, frames itself red and says the problem beside itself when the text
  does not read or the model (``core.project.build_train``) names this element
  and key.

Adding a key family later (tolerances, load cases, engine data, transient
events) means: parse and validate it in ``core.project``; add its Specs here or
beside the form that shows them (a list of Specs for an object, a RowsEditor for
a list of objects); map the element and field names of its ``ModelError`` to
the widgets' paths in the form's ``problem_of``; and, where it names a disc,
carry it through :func:`app.gui.edits.rename_disc` and ``_fix_references``.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Callable

from PySide6 import QtCore, QtGui, QtWidgets

from core import units as u

from . import theme
from .quantities import _read, display_text

NUMBER = "number"
TEXT = "text"
CHOICE = "choice"

# Meaning and units of every field (tooltips).
TIPS = {
    "id": "Identifier used by links and excitations. Renaming a disc updates every reference to it.",
    "name": "Descriptive name shown on the schematic and in the results.",
    "link.name": "Descriptive name shown in the results instead of the id; optional.",
    "inertia": "Polar mass moment of inertia about the shaft axis (kg*m^2, lb*ft^2, lb*in^2 ...).",
    "disc.damping": "Absolute viscous damping of the disc to ground (N*m*s/rad, lbf*in*s/rad); optional, "
                    "used by the forced response.",
    "kind": "shaft: elastic shaft; coupling: flexible coupling; gear_mesh: gear pair with a speed ratio.",
    "from": "Disc at the input (driving) end of the link ('ground' for a rigid support).",
    "to": "Disc at the output (driven) end of the link ('ground' for a rigid support).",
    "stiffness": "Torsional stiffness (N*m/rad, kN*m/rad, MN*m/rad, lbf*in/rad ...). "
                 "For a gear mesh: optional mesh stiffness; empty means a rigid mesh.",
    "speed_ratio": "Speed ratio (output / input) = speed of the 'to' disc / speed of the 'from' disc "
                   "(plain number; 3 means the 'to' shaft turns three times as fast).",
    "mass": "Shaft's own inertia: none (massless spring), lumped (half to each end disc) or "
            "distributed (exact wave solution). Needs the geometry.",
    "link.damping": "Viscous damping across the link (N*m*s/rad, lbf*in*s/rad); optional, used by the "
                    "forced response.",
    "material_damping": "Hysteretic damping of the link, given one way only: loss factor η, relative "
                        "damping ψ (coupling catalogues) or dynamic magnifier M; η = ψ / 2π = 1 / M. "
                        "Optional, used by the forced response.",
    "loss_factor": "Loss factor η (plain number, e.g. 0.1); η = ψ / 2π = 1 / M.",
    "relative_damping": "Relative damping ψ of a coupling (plain number, e.g. 0.8); ψ = 2π η.",
    "dynamic_magnifier": "Dynamic magnifier M (plain number, e.g. 8); M = 1 / η.",
    "permissible_torque": "Permissible vibratory torque amplitude of the link (N*m, kN*m, lbf*ft); optional.",
    "permissible_stress": "Permissible vibratory shear stress amplitude (MPa, ksi); optional; needs the "
                          "shaft's geometry.",
    "stress_concentration": "Stress concentration factor applied to the nominal shear stress (>= 1; "
                            "empty means 1).",
    "length": "Length of this uniform piece of shaft (mm, m, in).",
    "outer_diameter": "Outer diameter of this piece (mm, in).",
    "inner_diameter": "Bore diameter; 0 or empty for a solid shaft (mm, in).",
    "material": "Shaft material from the library, or 'custom' to give shear modulus and density.",
    "shear_modulus": "Shear modulus G of the custom material (GPa, ksi, psi).",
    "density": "Density of the custom material (kg/m^3, lb/in^3).",
    "title": "Project title, shown in the window title and on the review sheet.",
    "description": "One or two lines describing the train.",
    "reference": "Disc whose shaft speed is the x axis of the interference diagram; excitation "
                 "orders of other shafts are converted through the gear ratios.",
    "speed.min": "Lowest continuous operating speed of the reference shaft (rpm, rad/s, Hz).",
    "speed.max": "Highest continuous operating speed of the reference shaft (rpm, rad/s, Hz).",
    "speed.trip": "Trip (overspeed) speed of the reference shaft; optional, drawn but not screened.",
    "speed.name": "Name of the operating range (e.g. 'Inverter speed range').",
    "margin_percent": "Required separation margin between natural and excitation frequencies, % "
                      "(0 to 50; 10 % is common).",
    "exc.name": "Name of the excitation source.",
    "exc.source": "Orders of a shaft's speed (the excitation frequency follows the speed) or one "
                  "fixed frequency (e.g. twice the line frequency).",
    "exc.at": "Disc where the excitation acts; its shaft speed sets the order frequencies and the "
              "forced response applies the torque there.",
    "exc.at_fixed": "Disc where the fixed-frequency torque acts (needed for the forced response only; "
                    "'(none)' screens the frequency without applying a torque).",
    "exc.orders": "Orders per revolution of the source shaft, separated by commas (e.g. 1, 2, 17).",
    "exc.frequency": "Fixed excitation frequency (Hz, cpm) for a source that does not follow the speed.",
    "exc.amplitude": "Amplitude of the excitation torque (N*m, kN*m, lbf*ft); optional. With an "
                     "amplitude the forced response is computed.",
    "exc.phase_deg": "Phase angle of the excitation torque, degrees (plain number); optional, 0 if empty.",
    "order.order": "Order: excitation cycles per revolution of the source shaft (plain number, e.g. 2 "
                   "or 0.5).",
    "order.scaling": "How the amplitude changes with speed: constant, or proportional to the speed "
                     "squared (propeller, fan) from its value at the given speed.",
    "order.at_speed": "Speed of the source shaft at which the amplitude is given (speed-squared law "
                      "only; rpm, rad/s).",
    "cyl.at": "Disc (crank throw) of this cylinder.",
    "cyl.firing_deg": "Firing angle of this cylinder, degrees of crank rotation after the first "
                      "cylinder (plain number). Each order acts on every throw with phase "
                      "φ − order × firing angle.",
}


def tip(key: str, kind=None, system: str = "SI") -> str:
    text = TIPS.get(key, "")
    if isinstance(kind, u.Kind):
        text += f" Shown in {u.display_unit(kind, system)}; a bare number is read in that unit."
    return text


@lru_cache(maxsize=256)
def example_text(kind: u.Kind, system: str) -> str:
    """The kind's example value written in the unit system on screen (placeholders)."""
    from .quantities import _in_unit
    try:
        return _in_unit(u.parse(kind.example, kind), kind, u.display_unit(kind, system), 3)
    except Exception:
        return kind.example


# ----------------------------------------------------------------- value helpers
def stored_value(text: str, kind, system: str):
    """What goes into the document for text the user typed (None: remove the key)."""
    text = text.strip()
    if not text:
        return None
    x = _bare_number(text)
    if isinstance(kind, u.Kind):
        # a bare number is in the unit on display; anything else is kept as typed (and marked)
        return text if x is None else f"{text} {u.display_unit(kind, system)}"
    if kind == NUMBER:
        if x is None:
            return text
        return int(x) if x.is_integer() and abs(x) < 1e15 else x
    return text


def _bare_number(text: str) -> float | None:
    """The number, when ``text`` is one plain number by the strict grammar (core.units):
    'nan', 'inf' and '1_000' are not."""
    try:
        return u.parse_number(text)
    except Exception:
        return None


def text_problem(text: str, kind) -> str | None:
    """Problem with text typed into a field (None when it reads)."""
    text = text.strip()
    if not text:
        return None
    if isinstance(kind, u.Kind):
        if _bare_number(text) is not None:
            return None
        return _read(text, kind)[1]
    if kind == NUMBER:
        try:
            u.parse_number(text)
        except Exception as exc:
            return getattr(exc, "message", str(exc))
    return None


ERROR_STYLE = f"border: 2px solid {theme.FAIL}; background: {theme.FAIL_FILL};"


def problem_label() -> QtWidgets.QLabel:
    lab = QtWidgets.QLabel()
    lab.setWordWrap(True)
    lab.setStyleSheet(f"color: {theme.FAIL};")
    lab.hide()
    return lab


# ----------------------------------------------------------------- one field
class Field(QtWidgets.QLineEdit):
    """A line edit bound to a document path; marks problems while typing."""

    committed = QtCore.Signal(tuple, object)  # path, stored value (None removes)

    def __init__(self, path: tuple, kind, tip_key: str, system: str, optional: bool = True,
                 parent=None):
        super().__init__(parent)
        self.path, self.kind, self.tip_key, self.optional = tuple(path), kind, tip_key, optional
        self.system = system
        self._shown = ""
        self._model_problem = None
        self.labels: list[QtWidgets.QWidget] = []  # labels that carry the field's tooltip
        self.fixed_placeholder = ""
        self.unit_placeholder = False  # a narrow grid cell: the unit alone, not an example
        self._set_unit_texts(system, None)
        self.textEdited.connect(self._check)
        self.editingFinished.connect(self._finish)
        self.problem_label = problem_label()

    def _set_unit_texts(self, system: str, stored) -> None:
        """Tooltip and placeholder in the unit system on screen."""
        self.system = system
        text = tip(self.tip_key, self.kind, system) + (f"\nStored as: {stored}" if stored is not None else "")
        if self.toolTip() != text:
            self.setToolTip(text)
            for lab in self.labels:
                lab.setToolTip(text)
        self._fit_placeholder()

    def _fit_placeholder(self) -> None:
        """'e.g. 18.5 kg*m^2' in the unit system on screen; the unit alone where that does
        not fit the field (a cut placeholder reads as a value)."""
        if not isinstance(self.kind, u.Kind) or self.fixed_placeholder:
            return
        unit = u.display_unit(self.kind, self.system)
        placeholder = f"e.g. {example_text(self.kind, self.system)}"
        room = self.width() - 12
        if self.unit_placeholder or self.fontMetrics().horizontalAdvance(placeholder) > room:
            placeholder = unit
        if self.placeholderText() != placeholder:
            self.setPlaceholderText(placeholder)

    def resizeEvent(self, event):
        super().resizeEvent(event)
        self._fit_placeholder()

    def set_fixed_placeholder(self, text: str) -> None:
        """A placeholder of the form's own ('solid', '1') instead of the unit example."""
        self.fixed_placeholder = text
        self.setPlaceholderText(text)

    def add_label(self, label: QtWidgets.QWidget) -> None:
        self.labels.append(label)
        label.setToolTip(self.toolTip())

    def show_value(self, stored, system: str, model_problem: str | None = None, force: bool = False) -> None:
        """Show ``stored`` in ``system``.  Text the user is typing (focus, not yet
        committed) is kept unless ``force`` (an undo or redo: the document wins)."""
        self.system = system
        self._set_unit_texts(system, stored)
        if force or not self.hasFocus() or not self.isModified():
            shown = display_text(stored, self.kind, system)
            if self.text() != shown or self.isModified():
                self.setText(shown)
                self.setCursorPosition(0)  # show the start of a long value
            self._shown = shown
            self.setModified(False)
        self._model_problem = model_problem
        self._check()

    def _check(self, *_):
        problem = text_problem(self.text(), self.kind)
        if problem is None and not self.text().strip() and not self.optional:
            problem = "a value is required"
        if problem is None and self.text() == self._shown:
            problem = self._model_problem
        style = ERROR_STYLE if problem else ""
        if self.styleSheet() != style:
            self.setStyleSheet(style)
        if self.problem_label.text() != (problem or ""):
            self.problem_label.setText(problem or "")
        if self.problem_label.isHidden() == bool(problem):
            self.problem_label.setVisible(bool(problem))

    def _finish(self):
        # also when the field is being hidden (its tab closed with text typed): the text is
        # the user's edit; the main window ignores edits once it is closing
        if self.text() == self._shown:
            return
        self._shown = self.text()
        self.setModified(False)
        try:
            self.committed.emit(self.path, stored_value(self.text(), self.kind, self.system))
        except RuntimeError:  # the form is being taken down (quit): nobody to take the edit
            pass

    def commit_pending(self) -> None:
        """Commit typed text now (before a save, a close or an undo from a menu)."""
        if self.isModified():
            self._finish()

    def event(self, event):
        # Ctrl+Z / Ctrl+Shift+Z in a field with nothing typed belong to the document's
        # undo stack, not to the line edit's own (which would change only the text here)
        if event.type() == QtCore.QEvent.ShortcutOverride and not self.isModified() and (
                event.matches(QtGui.QKeySequence.Undo) or event.matches(QtGui.QKeySequence.Redo)):
            event.ignore()
            return False
        return super().event(event)


# ----------------------------------------------------------------- a dropdown bound to a path
class ChoiceField(QtWidgets.QComboBox):
    """A dropdown bound to a document path: shows labels (names), stores values (ids).

    A stored value that is not among the choices is shown as it is, framed red."""

    committed = QtCore.Signal(tuple, object)

    def __init__(self, path: tuple, tip_key: str, parent=None):
        super().__init__(parent)
        self.path, self.tip_key = tuple(path), tip_key
        self.labels: list[QtWidgets.QWidget] = []
        self.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.setMinimumContentsLength(6)  # long names must not widen the form beyond its pane
        self.setToolTip(TIPS.get(tip_key, ""))
        self.problem_label = problem_label()
        self._values: list = []
        self._updating = False
        self.currentIndexChanged.connect(self._changed)

    def add_label(self, label: QtWidgets.QWidget) -> None:
        self.labels.append(label)
        label.setToolTip(self.toolTip())

    def set_choices(self, choices, current, problem: str | None = None) -> None:
        """``choices``: [(value, label)]; ``current``: the stored value."""
        choices = list(choices)
        self._updating = True
        try:
            values = [v for v, _l in choices]
            if current not in values:
                choices.append((current, "" if current is None else f"{current} (unknown)"))
                values.append(current)
                problem = problem or (None if current is None else f"'{current}' is not one of the choices")
            wanted = [(v, l) for v, l in choices]
            if wanted != [(self.itemData(i), self.itemText(i)) for i in range(self.count())]:
                self.clear()
                for v, l in choices:
                    self.addItem(l, v)
                    self.setItemData(self.count() - 1, f"stored as: {v}" if v is not None else "",
                                     QtCore.Qt.ToolTipRole)
            self._values = values
            self.setCurrentIndex(values.index(current))
        finally:
            self._updating = False
        self.setStyleSheet(ERROR_STYLE if problem else "")
        self.problem_label.setText(problem or "")
        self.problem_label.setVisible(bool(problem))
        text = TIPS.get(self.tip_key, "") + (f"\nStored as: {current}" if current is not None else "")
        if self.toolTip() != text:
            self.setToolTip(text)
            for lab in self.labels:
                lab.setToolTip(text)

    def value(self):
        i = self.currentIndex()
        return self._values[i] if 0 <= i < len(self._values) else None

    def _changed(self, _index):
        if not self._updating:
            self.committed.emit(self.path, self.value())


# ----------------------------------------------------------------- names over ids
def disc_choices(doc: dict, extra=()) -> list[tuple[str, str]]:
    """(id, label) of every disc: its name (its id where it has none; 'name (id)' where two
    discs share a name), then ``extra`` pairs."""
    discs = [d for d in doc.get("discs", []) or [] if isinstance(d, dict) and d.get("id") is not None]
    names = [str(d.get("name") or d.get("id")) for d in discs]
    out = []
    for d, name in zip(discs, names):
        label = name if names.count(name) == 1 else f"{name} ({d['id']})"
        out.append((d["id"], label))
    return out + list(extra)


def disc_label(doc: dict, disc_id) -> str:
    """How a table or list shows a disc id: its name, else the id."""
    for d in doc.get("discs", []) or []:
        if isinstance(d, dict) and d.get("id") == disc_id:
            return str(d.get("name") or disc_id)
    return "" if disc_id is None else str(disc_id)


# ----------------------------------------------------------------- specs
@dataclass(frozen=True)
class Spec:
    """One key of an element, as an editor shows it.

    ``key``: the key in the element's JSON object; ``kind``: a units Kind (value
    with a unit), NUMBER, TEXT or CHOICE; ``choices(doc) -> [(value, label)]`` for
    a CHOICE; ``applies(obj) -> bool``: shown only where it applies (None:
    always); ``enabled(obj) -> bool``: shown but locked where it does not (None:
    always); ``placeholder``: the empty field's text where the kind's example does
    not fit ('solid', '1')."""

    key: str
    label: str
    kind: object = TEXT
    tip: str = ""
    optional: bool = True
    choices: Callable | None = None
    applies: Callable | None = None
    enabled: Callable | None = None
    placeholder: str = ""
    width: int = 0

    def shown_for(self, obj) -> bool:
        return self.applies is None or bool(self.applies(obj))


def spec_widget(spec: Spec, path: tuple, system: str):
    """The Field or ChoiceField for ``spec`` at ``path``."""
    if spec.kind == CHOICE:
        w = ChoiceField(path, spec.tip or spec.key)
    else:
        w = Field(path, spec.kind, spec.tip or spec.key, system, spec.optional)
        if spec.placeholder:
            w.set_fixed_placeholder(spec.placeholder)
    if spec.width:
        w.setMinimumWidth(spec.width)
    return w


def show_spec_value(widget, spec: Spec, doc: dict, obj, stored, system: str, problem, force=False):
    """Bring one spec widget up to the document."""
    if isinstance(widget, ChoiceField):
        widget.set_choices(spec.choices(doc) if spec.choices else [], stored, problem)
    else:
        widget.show_value(stored, system, problem, force)
    if spec.enabled is not None:
        on = bool(spec.enabled(obj))
        if widget.isEnabled() != on:
            widget.setEnabled(on)


def labelled(widget, text: str) -> tuple[QtWidgets.QLabel, QtWidgets.QVBoxLayout]:
    """A label carrying the widget's tooltip, and a box with the widget above its problem line."""
    lab = QtWidgets.QLabel(text)
    widget.add_label(lab)
    box = QtWidgets.QVBoxLayout()
    box.setSpacing(1)
    box.addWidget(widget)
    box.addWidget(widget.problem_label)
    return lab, box


def add_spec_rows(form: QtWidgets.QFormLayout, specs, base: tuple, obj, system: str, on_commit) -> list:
    """One form row per spec that applies to ``obj``; returns [(spec, widget)]."""
    out = []
    for spec in specs:
        if not spec.shown_for(obj):
            continue
        w = spec_widget(spec, base + (spec.key,), system)
        w.committed.connect(on_commit)
        lab, box = labelled(w, spec.label)
        form.addRow(lab, box)
        out.append((spec, w))
    return out


# ----------------------------------------------------------------- a list of objects as a grid
class RowsEditor(QtWidgets.QWidget):
    """A list of objects (orders, cylinders ...) as a grid of spec widgets, one row per
    object, a remove button per row and an add button below.

    Signals: ``committed(path, value)`` for a cell; ``addRequested()``;
    ``removeRequested(row)``.  ``row_value(obj, key)`` reads a key of one row's
    object (an order may be a plain number)."""

    committed = QtCore.Signal(tuple, object)
    addRequested = QtCore.Signal()
    removeRequested = QtCore.Signal(int)

    def __init__(self, specs, add_text: str, what: str, min_rows: int = 0, parent=None,
                 row_value=None):
        super().__init__(parent)
        self.specs, self.what, self.min_rows = list(specs), what, min_rows
        self.row_value = row_value or (lambda obj, key: obj.get(key) if isinstance(obj, dict) else None)
        self._base: tuple = ()
        self._n = -1
        self._system = None
        self.cells: list[list] = []  # per row: [(spec, widget)]
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        self.grid = QtWidgets.QGridLayout()
        self.grid.setHorizontalSpacing(4)
        self.grid.setVerticalSpacing(1)
        lay.addLayout(self.grid)
        self.add_button = QtWidgets.QPushButton(add_text)
        self.add_button.clicked.connect(self.addRequested.emit)
        lay.addWidget(self.add_button, 0, QtCore.Qt.AlignLeft)
        for c, spec in enumerate(self.specs):
            lab = QtWidgets.QLabel(spec.label)
            lab.setToolTip(TIPS.get(spec.tip or spec.key, ""))
            lab.setStyleSheet(f"color: {theme.INK_MUTED};")
            self.grid.addWidget(lab, 0, c)
            self.grid.setColumnStretch(c, 2 if isinstance(spec.kind, u.Kind) else 1)
        self._header_labels = [self.grid.itemAtPosition(0, c).widget() for c in range(len(self.specs))]

    def show_rows(self, doc: dict, base: tuple, rows: list, system: str, problem_of, force=False) -> None:
        """Rows of ``rows`` (the list at ``base`` in the document); ``problem_of(row, key)``
        gives the model's problem for a cell."""
        if len(rows) != self._n or base != self._base or system != self._system:
            self._rebuild(base, len(rows), system)
        for r, obj in enumerate(rows):
            for spec, w in self.cells[r]:
                show_spec_value(w, spec, doc, obj, self.row_value(obj, spec.key), system,
                                problem_of(r, spec.key), force)
        for c, spec in enumerate(self.specs):
            self._header_labels[c].setToolTip(tip(spec.tip or spec.key, spec.kind, system))

    def _rebuild(self, base, n, system):
        self._base, self._n, self._system = base, n, system
        for row in self.cells:
            for _spec, w in row:
                for x in (w, w.problem_label):
                    self.grid.removeWidget(x)
                    x.hide()
                    x.deleteLater()
        for b in getattr(self, "_remove_buttons", []):
            self.grid.removeWidget(b)
            b.hide()
            b.deleteLater()
        self.cells, self._remove_buttons = [], []
        for r in range(n):
            row = []
            for c, spec in enumerate(self.specs):
                w = spec_widget(spec, base + (r, spec.key), system)
                if isinstance(w, Field):
                    w.unit_placeholder = True
                    w._set_unit_texts(system, None)
                w.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Fixed)
                w.setMinimumWidth(spec.width or 44)
                w.committed.connect(self.committed.emit)
                self.grid.addWidget(w, 2 * r + 1, c)
                self.grid.addWidget(w.problem_label, 2 * r + 2, c)
                row.append((spec, w))
            rm = QtWidgets.QToolButton()
            rm.setText("−")
            rm.setToolTip(f"Remove {self.what} {r + 1}")
            rm.setEnabled(n > self.min_rows)
            rm.clicked.connect(lambda _=False, r=r: self.removeRequested.emit(r))
            self.grid.addWidget(rm, 2 * r + 1, len(self.specs))
            self._remove_buttons.append(rm)
            self.cells.append(row)

    def fields(self) -> list:
        return [w for row in self.cells for _s, w in row]
