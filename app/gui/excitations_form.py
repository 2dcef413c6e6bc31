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
from .document import get_path
from .editors import (CHOICE, FRACTION, NAMES, NUMBER, TEXT, TIPS, ChoiceField, Field, RowsEditor, Spec,
                      TableEditor, add_spec_rows, disc_choices, disc_label, grid_specs, labelled, problem_label,
                      show_spec_value, spec_widget, with_default)
from .quantities import display_text

ORDERS, FIXED, ENGINE, LINES = "orders", "fixed", "engine", "lines"
SOURCE_CHOICES = [(ORDERS, "orders of shaft speed"), (FIXED, "fixed frequency"),
                  (ENGINE, "engine (gas and inertia torque)"), (LINES, "electric drive / frequency lines")]
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

# ---- an engine from its data sheet (core.engine.parse_engine)
TIPS.update({
    "engine.strokes": "Strokes per working cycle: a four-stroke engine fires every second revolution "
                      "(half orders), a two-stroke every revolution.",
    "engine.layout": "In-line, or V (two banks; give the bank angle where cylinders are given by throw angles).",
    "engine.bank_angle_deg": "Angle between the banks of a V engine, degrees (plain number).",
    "engine.bore": "Cylinder bore (mm, in).",
    "engine.stroke": "Piston stroke (twice the crank radius); or give the crank radius.",
    "engine.crank_radius": "Crank radius (half the stroke); or give the stroke.",
    "engine.connecting_rod": "Connecting-rod length between centres (mm, in); the crank-slider is exact.",
    "engine.reciprocating_mass": "Reciprocating mass per cylinder: piston, pin, rings and the rod's "
                                 "reciprocating part (kg, lb).",
    "engine.highest_order": "Orders are generated up to this one (half orders for a four-stroke engine; "
                            "empty means 12).",
    "engine.load_fraction": "Engine load the gas torque is scaled to ('100 %' or 1; empty: as given).",
    "engine.gas": "Where the gas torque comes from: a cylinder pressure curve against crank angle, or the "
                  "engine builder's harmonic coefficients of the tangential pressure.",
    "curve.given": "The pressure curve's points in the project, or read from a CSV file beside it.",
    "curve.unit": "Unit of the pressures in the points or the file (bar, Pa, kPa, MPa, psi ...).",
    "curve.crankcase_pressure": "Pressure below the piston, subtracted from the curve (e.g. 1 bar); "
                                "empty: 0.",
    "curve.file": "CSV or text file with crank angle (degrees after firing top dead centre) and pressure "
                  "per line; a path relative to the project file's folder.",
    "curve.points": "Cylinder pressure against crank angle over one working cycle (degrees after firing "
                    "top dead centre: 720° four-stroke, 360° two-stroke).",
    "tangential.mean_indicated_pressure": "Mean indicated pressure at which the coefficients hold.",
    "tangential.order": "Order of the harmonic (a multiple of 0.5 for a four-stroke engine).",
    "tangential.sin": "Sine part of the tangential-pressure harmonic (per piston area; bar, MPa, psi).",
    "tangential.cos": "Cosine part of the tangential-pressure harmonic.",
    "ecyl.name": "Cylinder name, as the firing order names it.",
    "ecyl.at": "Crank-throw disc the cylinder acts on.",
    "ecyl.firing_deg": "Firing angle after the first cylinder, degrees; or give throw angles and a "
                       "firing order.",
    "ecyl.throw_deg": "Crank-throw angle, degrees (with a firing order, the firing angles follow).",
    "ecyl.bank": "Bank of a V engine (A or B).",
    "engine.firing_order": "Cylinder names in firing order, e.g. '1, 5, 3, 6, 2, 4': with throw angles, "
                           "or alone for evenly spaced firing. Empty where every cylinder has a firing angle.",
    "misfire.cylinder": "A cylinder that misfires (its gas torque reduced); 'none': all fire.",
    "misfire.gas_fraction": "Gas torque left in the misfiring cylinder (0 or '0 %': none).",
    # lines f = a + b N or |a - b N|
    "line.name": "Name of the line (shown on the interference diagram).",
    "line.frequency_offset": "Offset a of f = a + b·N or |a − b·N| (Hz).",
    "line.order": "b: cycles per revolution of the shaft the lines act on (plain number).",
    "line.combination": "f = a + b·N (sum) or f = |a − b·N| (difference, falls then rises with speed).",
    "drive.pole_pairs": "Pole pairs of the motor (whole number).",
    "drive.supply_frequency": "Supply (line) frequency feeding the inverter (Hz); needed for interharmonics.",
    "drive.slip": "Slip of an induction motor (fraction or %; 0 for a synchronous motor).",
    "drive.harmonic": "Harmonic of the inverter's output frequency (6, 12 ... for a six-pulse inverter).",
    "drive.twice_electrical": "The motor's torque pulsation at twice the electrical (output) frequency.",
    "inter.supply_harmonic": "m of the interharmonic |m f_supply ∓ n f_out|.",
    "inter.output_harmonic": "n of the interharmonic |m f_supply ∓ n f_out|.",
    "inter.combination": "sum: m f_supply + n f_out; difference: |m f_supply − n f_out| (falls, then rises "
                         "with speed).",
})
STROKE_CHOICES = [(4, "four-stroke"), (2, "two-stroke")]
LAYOUT_CHOICES = [("in-line", "in-line"), ("V", "V")]
ENGINE_SPECS = [
    Spec("strokes", "Cycle", CHOICE, "engine.strokes", choices=lambda doc: STROKE_CHOICES, default=4),
    Spec("layout", "Layout", CHOICE, "engine.layout", choices=lambda doc: LAYOUT_CHOICES, default="in-line"),
    Spec("bank_angle_deg", "Bank angle, °", NUMBER, "engine.bank_angle_deg",
         enabled=lambda o: o.get("layout") == "V" or o.get("bank_angle_deg") is not None),
    Spec("bore", "Bore", u.LENGTH, "engine.bore", optional=False),
    Spec("stroke", "Stroke", u.LENGTH, "engine.stroke", enabled=lambda o: o.get("crank_radius") is None),
    Spec("crank_radius", "or crank radius", u.LENGTH, "engine.crank_radius",
         enabled=lambda o: o.get("stroke") is None),
    Spec("connecting_rod", "Con-rod (centres)", u.LENGTH, "engine.connecting_rod", optional=False),
    Spec("reciprocating_mass", "Recip. mass / cyl.", u.MASS, "engine.reciprocating_mass", optional=False),
    Spec("highest_order", "Orders up to", NUMBER, "engine.highest_order", placeholder="12"),
    Spec("load_fraction", "Load", FRACTION, "engine.load_fraction", placeholder="100 %"),
]
GAS_CHOICES = [("pressure_curve", "pressure curve"), ("tangential_pressure", "tangential-pressure harmonics")]
CURVE_SPECS = [
    Spec("unit", "Pressure unit", TEXT, "curve.unit", placeholder="Pa"),
    Spec("crankcase_pressure", "Crankcase pressure", u.PRESSURE, "curve.crankcase_pressure", placeholder="0"),
]
CURVE_FILE_SPECS = [Spec("file", "File", TEXT, "curve.file", optional=False)]
TANGENTIAL_SPECS = [Spec("mean_indicated_pressure", "Mean indicated pressure", u.PRESSURE,
                         "tangential.mean_indicated_pressure", optional=False)]
TANGENTIAL_ORDER_SPECS = [
    Spec("order", "Order", NUMBER, "tangential.order", optional=False, width=40),
    Spec("sin", "Sine part", u.PRESSURE, "tangential.sin", width=60),
    Spec("cos", "Cosine part", u.PRESSURE, "tangential.cos", width=60),
]
BANK_CHOICES = [("A", "A"), ("B", "B")]


def engine_cylinder_specs(v_engine: bool) -> list:
    specs = [
        Spec("name", "Name", TEXT, "ecyl.name", width=36),
        Spec("at", "Crank throw", CHOICE, "ecyl.at", choices=lambda doc: disc_choices(doc), width=80),
        Spec("firing_deg", "Firing, °", NUMBER, "ecyl.firing_deg", width=44,
             enabled=lambda o: isinstance(o, dict) and o.get("throw_deg") is None),
        Spec("throw_deg", "Throw, °", NUMBER, "ecyl.throw_deg", width=44,
             enabled=lambda o: isinstance(o, dict) and o.get("firing_deg") is None),
    ]
    if v_engine:
        specs.append(Spec("bank", "Bank", CHOICE, "ecyl.bank", choices=lambda doc: BANK_CHOICES, width=40,
                          default="A"))
    return specs


FIRING_ORDER_SPEC = Spec("firing_order", "Firing order", NAMES, "engine.firing_order",
                         placeholder="e.g. 1, 5, 3, 6, 2, 4")
MISFIRE_GAS_SPEC = Spec("gas_fraction", "Gas torque left", FRACTION, "misfire.gas_fraction", placeholder="0")

# ---- lines f = a + b N, |a - b N|, and an inverter-fed drive (core.electric)
COMBINATION_CHOICES = [("sum", "a + b·N"), ("difference", "|a − b·N|")]
LINE_SPECS = [
    Spec("name", "Name", TEXT, "line.name", width=50),
    Spec("frequency_offset", "Offset a", u.FREQUENCY, "line.frequency_offset", width=50),
    Spec("order", "Order b", NUMBER, "line.order", width=36),
    Spec("combination", "Form", CHOICE, "line.combination", choices=lambda doc: COMBINATION_CHOICES, width=64,
         default="sum"),
    Spec("amplitude", "Amplitude", u.TORQUE, "exc.amplitude", width=56),
    Spec("phase_deg", "Phase, °", NUMBER, "exc.phase_deg", placeholder="0", width=36),
]
DRIVE_SPECS = [
    Spec("pole_pairs", "Pole pairs", NUMBER, "drive.pole_pairs", optional=False),
    Spec("supply_frequency", "Supply frequency", u.FREQUENCY, "drive.supply_frequency"),
    Spec("slip", "Slip", FRACTION, "drive.slip", placeholder="0"),
]
HARMONIC_SPECS = [
    Spec("harmonic", "Output harmonic", NUMBER, "drive.harmonic", optional=False, width=50),
    Spec("amplitude", "Amplitude", u.TORQUE, "exc.amplitude", width=60),
    Spec("phase_deg", "Phase, °", NUMBER, "exc.phase_deg", placeholder="0", width=40),
]
TWICE_SPECS = [
    Spec("amplitude", "Amplitude", u.TORQUE, "exc.amplitude"),
    Spec("phase_deg", "Phase, °", NUMBER, "exc.phase_deg", placeholder="0"),
]
INTERHARMONIC_SPECS = [
    Spec("supply_harmonic", "m (supply)", NUMBER, "inter.supply_harmonic", optional=False, width=40),
    Spec("output_harmonic", "n (output)", NUMBER, "inter.output_harmonic", optional=False, width=40),
    Spec("combination", "Form", CHOICE, "inter.combination", choices=lambda doc: [
        ("sum", "sum"), ("difference", "difference")], width=70, default="sum"),
    Spec("amplitude", "Amplitude", u.TORQUE, "exc.amplitude", width=56),
    Spec("phase_deg", "Phase, °", NUMBER, "exc.phase_deg", placeholder="0", width=36),
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
    source = edits.excitation_source(e)
    if source == ENGINE:
        engine = e.get("engine") if isinstance(e.get("engine"), dict) else {}
        cyl = engine.get("cylinders") if isinstance(engine.get("cylinders"), list) else []
        return (f"engine, {len(cyl)} cylinder{'s' if len(cyl) != 1 else ''}, "
                f"{engine.get('strokes', 4)}-stroke; orders from its data")
    if source == LINES:
        n = len(e["lines"]) if isinstance(e.get("lines"), list) else 0
        drive = " and an inverter-fed drive" if e.get("electric_drive") is not None else ""
        return f"acts at {disc_label(doc, edits.excitation_disc(e))}; {n} line{'s' if n != 1 else ''}{drive}"
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
        self._specs: list = []  # (spec, widget, problem_of(element, path))
        self._updaters: list = []  # (doc, excitation, element, force) -> None: lists, tables, notes
        self._row_editors: list = []
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
        self._updaters = []
        self._row_editors = []
        self.tables = []
        self.orders = self.cylinders = None
        self.source_box = self.at_field = self.heading = None
        self.engine_note = None

    def _placeholder(self, text):
        self._clear()
        lab = QtWidgets.QLabel(text)
        lab.setWordWrap(True)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        self._body.layout().addWidget(lab)
        self._body.layout().addStretch(1)

    def _structure(self, i, e):
        """What the detail's layout depends on (rebuilt when this changes)."""
        def n(value):
            return len(value) if isinstance(value, list) else (-1 if isinstance(value, dict) else None)
        source = edits.excitation_source(e)
        engine = e.get("engine") if isinstance(e.get("engine"), dict) else {}
        curve = engine.get("pressure_curve") if isinstance(engine.get("pressure_curve"), dict) else None
        tang = engine.get("tangential_pressure") if isinstance(engine.get("tangential_pressure"), dict) else None
        drive = e.get("electric_drive") if isinstance(e.get("electric_drive"), dict) else None
        return (i, source, n(e.get("orders")), n(e.get("cylinders")), self.system, e.get("at") is None,
                n(engine.get("cylinders")), engine.get("layout") == "V", curve is not None,
                None if curve is None else ("file" in curve, curve.get("unit")),
                None if tang is None else n(tang.get("orders")), "misfire" in engine,
                n(e.get("lines")), drive is not None,
                None if drive is None else (n(drive.get("output_harmonics")), bool(drive.get("twice_electrical")),
                                            n(drive.get("interharmonics"))))

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
        for spec, w, problem_of in self._specs:
            holder = get_path(doc, w.path[:-1])
            holder = holder if isinstance(holder, dict) else {}
            show_spec_value(w, spec, doc, holder, get_path(doc, w.path), self.system,
                            problem_of(element, w.path), force)
        source = edits.excitation_source(e)
        if self.at_field is not None:
            at = edits.excitation_disc(e)
            at_problem = self._problem(element, "at") or self._problem(element, "applied_at")
            extra = [(None, NO_DISC)] if source == FIXED else []
            self.at_field.set_choices(disc_choices(doc, extra), at, at_problem)
        self.source_box.blockSignals(True)
        self.source_box.setCurrentIndex(self.source_box.findData(source))
        self.source_box.blockSignals(False)
        keys = ("orders", "cylinders", "engine", "engine.cylinders", "lines", "electric_drive")
        problem = next((p for p in (self._problem(element, k) for k in keys) if p), None)
        general = None
        err = project.error if project is not None else None
        if err is not None and err.element == element and err.field is None:
            general = err.message
        self.detail_problem.setText(problem or general or "")
        self.detail_problem.setVisible(bool(problem or general))
        for update in self._updaters:
            update(doc, e, element, force)

    def _problem(self, element, field):
        project = self._project
        return project.error_at(element, field) if project is not None else None

    def _nested_problem(self, element, path):
        """The model's problem for a widget at ``path``: core names the keys below the
        excitation 'engine.bore', 'engine.pressure_curve.unit' ..."""
        return self._problem(element, ".".join(str(k) for k in path[2:]))

    def _leaf_problem(self, element, path):
        return self._problem(element, path[-1])

    # ------------------------------------------------------------ layout
    def _heading(self, lay, text, tip=""):
        head = QtWidgets.QLabel(text)
        head.setWordWrap(True)
        head.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        head.setToolTip(tip)
        lay.addWidget(head)
        return head

    def _form(self, lay):
        form = QtWidgets.QFormLayout()
        form.setFieldGrowthPolicy(QtWidgets.QFormLayout.AllNonFixedFieldsGrow)
        form.setRowWrapPolicy(QtWidgets.QFormLayout.WrapLongRows)
        lay.addLayout(form)
        return form

    def _specs_in(self, form, specs, base, obj, problem_of=None):
        for spec, w in add_spec_rows(form, specs, base, obj, self.system, self._commit):
            self._specs.append((spec, w, problem_of or self._nested_problem))

    def _grid_in(self, lay, specs, base, obj, columns=3, problem_of=None):
        grid = QtWidgets.QGridLayout()
        grid.setHorizontalSpacing(6)
        grid.setVerticalSpacing(0)
        lay.addLayout(grid)
        for spec, w in grid_specs(grid, specs, base, obj, self.system, self._commit, columns):
            self._specs.append((spec, w, problem_of or self._nested_problem))
        return grid

    def _rows(self, lay, specs, add_text, what, path_of, element_of, add, remove, min_rows=0,
              row_value=None, on_commit=None):
        """A RowsEditor for the list at ``path_of(e)``; ``element_of(element, r)`` names a row
        as core does; ``add(doc)`` / ``remove(doc, r)`` give the new document."""
        rows = RowsEditor(specs, add_text, what, min_rows=min_rows, row_value=row_value)
        rows.committed.connect(on_commit or self._commit)
        rows.addRequested.connect(lambda: self._replace(add(self._doc), add_text))
        rows.removeRequested.connect(lambda r: self._replace(remove(self._doc, r), f"Remove {what} {r + 1}"))
        lay.addWidget(rows)
        self._row_editors.append(rows)

        def update(doc, e, element, force):
            base = path_of(self.current)
            value = get_path(doc, base)
            rows.show_rows(doc, base, value if isinstance(value, (list, dict)) else [], self.system,
                           lambda r, key: self._problem(element_of(element, r), key), force)
        self._updaters.append(update)
        return rows

    def _build(self, i, e):
        self._clear()
        lay = self._body.layout()
        self.heading = QtWidgets.QLabel()
        self.heading.setFont(theme.font(theme.TITLE_POINT_SIZE, bold=True))
        self.heading.setWordWrap(True)
        lay.addWidget(self.heading)
        form = self._form(lay)
        base = ("excitations", i)
        self._specs_in(form, NAME_SPECS, base, e)
        self.source_box = QtWidgets.QComboBox()
        self.source_box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.source_box.setMinimumContentsLength(8)
        for value, label in SOURCE_CHOICES:
            self.source_box.addItem(label, value)
        self.source_box.setToolTip(TIPS["exc.source"] + " An engine gives its orders from its data; "
                                   "frequency lines follow a + b·N or |a − b·N| (electric drives).")
        self.source_box.currentIndexChanged.connect(self._source_changed)
        lab = QtWidgets.QLabel("Source")
        lab.setToolTip(self.source_box.toolTip())
        form.addRow(lab, self.source_box)
        source = edits.excitation_source(e)
        if source != ENGINE:
            # bound to the key the file uses (the older 'applied_at' is replaced by 'at' on an edit)
            key = "applied_at" if e.get("at") is None and e.get("applied_at") is not None else "at"
            self.at_field = ChoiceField(base + (key,), "exc.at_fixed" if source == FIXED else "exc.at")
            self.at_field.committed.connect(self._at_changed)
            lab, box = labelled(self.at_field, "Acts at")
            form.addRow(lab, box)
        self.detail_problem = problem_label()
        if source == FIXED:
            self._specs_in(form, FIXED_SPECS, base, e, self._leaf_problem)
            lay.addWidget(self.detail_problem)
        elif source == ENGINE:
            lay.addWidget(self.detail_problem)
            self._build_engine(lay, i, e)
        elif source == LINES:
            lay.addWidget(self.detail_problem)
            self._build_lines(lay, i, e)
        else:
            self._heading(lay, "Orders", TIPS["exc.orders"])
            lay.addWidget(self.detail_problem)
            self.orders = self._rows(lay, ORDER_SPECS, "Add order", "order", lambda i: ("excitations", i, "orders"),
                                     lambda el, r: f"{el} order {r + 1}",
                                     lambda doc: edits.add_order(doc, self.current),
                                     lambda doc, j: edits.remove_order(doc, self.current, j), min_rows=1,
                                     row_value=_order_value, on_commit=self._order_committed)
            self._heading(lay, "Engine cylinders", "For an engine given by its order amplitudes: each order acts "
                          "on every throw, with phase φ − order × firing angle (optional).")
            self.cylinders = self._rows(lay, CYLINDER_SPECS, "Add cylinder", "cylinder",
                                        lambda i: ("excitations", i, "cylinders"),
                                        lambda el, r: f"{el} cylinder {r + 1}",
                                        lambda doc: edits.add_cylinder(doc, self.current),
                                        lambda doc, k: edits.remove_cylinder(doc, self.current, k),
                                        on_commit=self._cylinder_committed)
            self.cylinder_note = QtWidgets.QLabel("Each order acts on every throw with phase φ − order × firing "
                                                  "angle; the excitation's shaft is that of the throws.")
            self.cylinder_note.setWordWrap(True)
            self.cylinder_note.setStyleSheet(f"color: {theme.INK_MUTED};")
            lay.addWidget(self.cylinder_note)
            self._updaters.append(lambda doc, e, el, f: self.cylinder_note.setVisible(
                bool(e.get("cylinders")) if isinstance(e.get("cylinders"), list) else False))
        lay.addStretch(1)

    def _build_engine(self, lay, i, e):
        """A compact engine data-sheet block: geometry, gas torque, cylinders, firing, misfire."""
        engine = e.get("engine") if isinstance(e.get("engine"), dict) else {}
        base = ("excitations", i, "engine")
        self._heading(lay, "Engine", "The engine's orders, gas and inertia torques follow from these data "
                      "(exact crank-slider; every order up to the cap).")
        self._grid_in(lay, ENGINE_SPECS, base, engine)
        gas = "pressure_curve" if "pressure_curve" in engine else (
            "tangential_pressure" if "tangential_pressure" in engine else None)
        form = self._form(lay)
        self.gas_box = self._choice_box(form, "Gas torque from", GAS_CHOICES, gas, TIPS["engine.gas"],
                                        lambda v: self._replace(edits.set_engine_gas_source(self._doc, self.current, v),
                                                                "Gas torque"))
        if gas == "pressure_curve":
            curve = engine["pressure_curve"] if isinstance(engine["pressure_curve"], dict) else {}
            given = "file" if "file" in curve else "points"
            self._choice_box(form, "Curve given as", [("points", "points in the project"), ("file", "CSV file")],
                             given, TIPS["curve.given"],
                             lambda v: self._replace(edits.set_curve_given_by(self._doc, self.current, v), "Curve"))
            cbase = base + ("pressure_curve",)
            self._specs_in(form, CURVE_SPECS, cbase, curve)
            if given == "file":
                self._specs_in(form, CURVE_FILE_SPECS, cbase, curve)
                browse = QtWidgets.QPushButton("Choose file…")
                browse.setToolTip("Pick the CSV file; a file in the project's folder is written by its "
                                  "name alone (the project and its curve move together)")
                browse.clicked.connect(lambda: self._browse(cbase + ("file",)))
                form.addRow("", browse)
            else:
                unit = curve.get("unit") or "Pa"
                table = TableEditor([Spec("", "Crank angle, °", NUMBER, "curve.points"),
                                     Spec("", f"Pressure, {unit}", NUMBER, "curve.points")], "point")
                table.committed.connect(lambda path, rows: self._edit_path(path, rows, "Pressure curve"))
                lay.addWidget(table)
                self.tables.append(table)
                self._updaters.append(lambda doc, e, el, force: table.show_table(
                    cbase + ("points",), get_path(doc, cbase + ("points",)), self.system,
                    self._problem(el, "engine.pressure_curve.points") or self._problem(el, "engine.pressure_curve"),
                    force=force))
        elif gas == "tangential_pressure":
            tang = engine["tangential_pressure"] if isinstance(engine["tangential_pressure"], dict) else {}
            tbase = base + ("tangential_pressure",)
            self._specs_in(form, TANGENTIAL_SPECS, tbase, tang)
            self._rows(lay, TANGENTIAL_ORDER_SPECS, "Add harmonic", "harmonic",
                       lambda i: ("excitations", i, "engine", "tangential_pressure", "orders"),
                       lambda el, r: f"{el} tangential pressure order {r + 1}",
                       lambda doc: edits.list_append(doc, tbase + ("orders",), _next_half_order(
                           get_path(doc, tbase + ("orders",)))),
                       lambda doc, r: edits.list_remove(doc, tbase + ("orders",), r, drop_empty=False), min_rows=1)
        self._heading(lay, "Cylinders", "One per crank throw: the disc it acts on and its firing angle, or "
                      "throw angles with a firing order.")
        self._rows(lay, engine_cylinder_specs(engine.get("layout") == "V"), "Add cylinder", "cylinder",
                   lambda i: ("excitations", i, "engine", "cylinders"),
                   lambda el, r: f"{el} engine cylinder {r + 1}",
                   lambda doc: edits.add_engine_cylinder(doc, self.current),
                   lambda doc, k: edits.remove_engine_cylinder(doc, self.current, k), min_rows=1)
        form = self._form(lay)
        self._specs_in(form, [FIRING_ORDER_SPEC], base, engine)
        names = [str(c.get("name", k + 1)) for k, c in enumerate(engine.get("cylinders") or [])
                 if isinstance(c, dict)]
        mis = engine.get("misfire") if isinstance(engine.get("misfire"), dict) else None
        spec = Spec("cylinder", "Misfiring cylinder", CHOICE, "misfire.cylinder",
                    choices=lambda doc: with_default([(n, n) for n in names], "none"))
        self._specs_in(form, [spec] + ([MISFIRE_GAS_SPEC] if mis is not None else []), base + ("misfire",),
                       mis or {})
        self.engine_note = QtWidgets.QLabel()
        self.engine_note.setWordWrap(True)
        self.engine_note.setStyleSheet(f"color: {theme.INK_MUTED};")
        lay.addWidget(self.engine_note)
        self._updaters.append(self._show_engine_note)

    def _show_engine_note(self, doc, e, element, force):
        """What the model made of the engine (orders, major orders, firing angles)."""
        train = self._project.train if self._project is not None else None
        spec = None
        if train is not None and train.operating is not None and self._project.error is None:
            name = str(e.get("name") or f"Excitation {self.current + 1}")
            spec = next((x.engine for x in train.operating.excitations if x.name == name and x.engine), None)
        self.engine_note.setText(engine_note(spec, self.system) if spec is not None else "")
        self.engine_note.setVisible(spec is not None)

    def _build_lines(self, lay, i, e):
        """Frequency lines a + b·N, |a − b·N| and an inverter-fed drive's lines."""
        base = ("excitations", i)
        drive = e.get("electric_drive") if isinstance(e.get("electric_drive"), dict) else None
        self._heading(lay, "Lines f = a + b·N or |a − b·N|", TIPS["line.combination"])
        self._rows(lay, LINE_SPECS, "Add line", "line", lambda i: ("excitations", i, "lines"),
                   lambda el, r: f"{el} line {r + 1}",
                   lambda doc: edits.list_append(doc, ("excitations", self.current, "lines"),
                                                 {"frequency_offset": "300 Hz", "order": 6,
                                                  "combination": "difference"}),
                   lambda doc, r: edits.list_remove(doc, ("excitations", self.current, "lines"), r),
                   min_rows=0 if drive is not None else 1)
        self.drive_check = QtWidgets.QCheckBox("Inverter-fed electric drive")
        self.drive_check.setToolTip("Lines from the motor's pole pairs, supply frequency and slip: output "
                                    "harmonics, twice the electrical frequency, interharmonics.")
        self.drive_check.setChecked(drive is not None)
        self.drive_check.toggled.connect(lambda on: self._replace(
            edits.set_electric_drive(self._doc, self.current, on), "Electric drive"))
        lay.addWidget(self.drive_check)
        if drive is None:
            return
        dbase = base + ("electric_drive",)
        self._grid_in(lay, DRIVE_SPECS, dbase, drive)
        self._rows(lay, HARMONIC_SPECS, "Add output harmonic", "output harmonic",
                   lambda i: ("excitations", i, "electric_drive", "output_harmonics"),
                   lambda el, r: f"{el} output harmonic {r + 1}",
                   lambda doc: edits.list_append(doc, ("excitations", self.current, "electric_drive",
                                                       "output_harmonics"), 12),
                   lambda doc, r: edits.list_remove(doc, ("excitations", self.current, "electric_drive",
                                                          "output_harmonics"), r),
                   row_value=edits.harmonic_value, on_commit=self._harmonic_committed)
        twice = drive.get("twice_electrical")
        self.twice_check = QtWidgets.QCheckBox("Twice the electrical frequency")
        self.twice_check.path = dbase + ("twice_electrical",)  # the key it edits (tests find it)
        self.twice_check.setToolTip(TIPS["drive.twice_electrical"])
        self.twice_check.setChecked(bool(twice))
        self.twice_check.toggled.connect(lambda on: self._replace(
            edits.set_twice_electrical(self._doc, self.current, on), "Twice electrical frequency"))
        lay.addWidget(self.twice_check)
        if twice:
            grid = QtWidgets.QGridLayout()
            lay.addLayout(grid)
            for spec, w in grid_specs(grid, TWICE_SPECS, dbase + ("twice_electrical",), {}, self.system,
                                      self._twice_committed, columns=2):
                self._specs.append((spec, w, lambda el, path: self._problem(f"{el} twice electrical frequency",
                                                                           path[-1])))
        self._heading(lay, "Interharmonics |m f_supply ∓ n f_out|")
        self._rows(lay, INTERHARMONIC_SPECS, "Add interharmonic", "interharmonic",
                   lambda i: ("excitations", i, "electric_drive", "interharmonics"),
                   lambda el, r: f"{el} interharmonic {r + 1}",
                   lambda doc: edits.list_append(doc, ("excitations", self.current, "electric_drive",
                                                       "interharmonics"),
                                                 {"supply_harmonic": 6, "output_harmonic": 6,
                                                  "combination": "difference"}),
                   lambda doc, r: edits.list_remove(doc, ("excitations", self.current, "electric_drive",
                                                          "interharmonics"), r))

    def _choice_box(self, form, label, choices, current, tooltip, on_change):
        box = QtWidgets.QComboBox()
        box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        box.setMinimumContentsLength(8)
        for value, text in choices:
            box.addItem(text, value)
        if current is None:
            box.addItem("(not given)", None)
        box.setCurrentIndex(box.findData(current))
        box.setToolTip(tooltip)
        box.currentIndexChanged.connect(lambda _i: box.currentData() is not None and on_change(box.currentData()))
        lab = QtWidgets.QLabel(label)
        lab.setToolTip(tooltip)
        form.addRow(lab, box)
        return box

    def _browse(self, path):
        from pathlib import Path
        folder = getattr(self._project, "base_dir", None)
        name, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Pressure curve", str(folder or Path.home()),
                                                        "Tables (*.csv *.txt *.dat);;All files (*)")
        if name:
            self._edit_path(path, relative_to(name, folder), "Pressure-curve file")

    # ------------------------------------------------------------ edits
    def _name(self):
        e = self._excitations()[self.current]
        return e.get("name") or f"Excitation {self.current + 1}"

    def _replace(self, new, what):
        if new != self._doc:
            self.replaceRequested.emit(new, f"{what} of excitation '{self._name()}'")

    def _edit_path(self, path, value, what):
        self.editRequested.emit(tuple(path), value, f"{what} of excitation '{self._name()}'")

    def _commit(self, path, value):
        path = tuple(path)
        if path[-1] == "name" and len(path) == 3:  # the excitation's own name: load cases follow it
            self._replace(edits.rename_excitation(self._doc, self.current, value), "Name")
            return
        if path[-2:] == ("misfire", "cylinder") and value is None:
            self._replace(edits.set_at(self._doc, path[:-1], None), "No misfire")
            return
        self.editRequested.emit(path, value, f"Edit excitation '{self._name()}' {path[-1]}")

    def _at_changed(self, _path, value):
        e = self._excitations()[self.current]
        if value == edits.excitation_disc(e) and e.get("applied_at") is None:
            return
        self._replace(edits.set_excitation_disc(self._doc, self.current, value), "Disc")

    def _source_changed(self, index):
        source = self.source_box.itemData(index)
        self._replace(edits.set_excitation_kind(self._doc, self.current, source, "100 Hz"), "Source")

    def _order_committed(self, path, value):
        j, key = path[-2], path[-1]
        self._replace(edits.set_order_value(self._doc, self.current, j, key, value), f"Order {j + 1} {key}")

    def _harmonic_committed(self, path, value):
        j, key = path[-2], path[-1]
        self._replace(edits.set_harmonic_value(self._doc, self.current, j, key, value),
                      f"Output harmonic {j + 1} {key}")

    def _twice_committed(self, path, value):
        self._replace(edits.set_twice_electrical_value(self._doc, self.current, path[-1], value),
                      f"Twice electrical frequency {path[-1]}")

    def _cylinder_committed(self, path, value):
        k, key = path[-2], path[-1]
        e = self._excitations()[self.current]
        cyl = e.get("cylinders") or []
        if 0 <= k < len(cyl) and isinstance(cyl[k], dict) and cyl[k].get(key) == value:
            return
        self._replace(edits.set_cylinder_value(self._doc, self.current, k, key, value), f"Cylinder {k + 1} {key}")

    def fields(self) -> list:
        out = [w for _s, w, _p in self._specs if isinstance(w, Field)]
        for rows in self._row_editors:
            out += [w for w in rows.fields() if isinstance(w, Field)]
        return out


def engine_note(spec, system: str) -> str:
    """What the model made of an engine, in the unit system on screen: the gas torque's source
    and indicated mean pressure, the orders and the major ones, every firing angle."""
    major = ", ".join(f"{n:g}" for n in spec.major_orders) or "none"
    lines = [f"Gas torque from the {spec.gas_source}; indicated mean pressure "
             f"{display_text(spec.indicated_mean_pressure, u.PRESSURE, system)} at full load, "
             f"load {100 * spec.load_fraction:g} %.",
             f"Orders {spec.orders[0]:g} to {spec.orders[-1]:g}; major orders {major}.",
             "Firing angles " + ", ".join(f"{c.name}: {c.firing_deg:g}°" for c in spec.cylinders) + "."]
    off = [f"{c.name} ({100 * spec.gas_fraction[i]:g} % gas torque)" for i, c in enumerate(spec.cylinders)
           if spec.gas_fraction and spec.gas_fraction[i] < 1.0]
    if off:
        lines.append("Misfiring: " + ", ".join(off) + ".")
    return "\n".join(lines + list(spec.notes))


def _next_half_order(orders) -> float:
    """The order after the largest given, in steps of 0.5."""
    values = [o.get("order") for o in orders or [] if isinstance(o, dict)]
    values = [v for v in values if isinstance(v, (int, float)) and not isinstance(v, bool)]
    return {"order": (max(values) + 0.5) if values else 0.5, "sin": "0 bar", "cos": "0 bar"}


def relative_to(name: str, folder) -> str:
    """``name`` relative to ``folder`` when the file lies in it or below (a project moved with its
    files keeps reading them), else the absolute path."""
    from pathlib import Path
    path = Path(name).resolve()
    if folder is not None:
        try:
            return path.relative_to(Path(folder).resolve()).as_posix()
        except ValueError:
            pass
    return str(path)


def _delete_layout(layout):
    while layout.count():
        item = layout.takeAt(0)
        if item.widget() is not None:
            item.widget().hide()
            item.widget().deleteLater()
        elif item.layout() is not None:
            _delete_layout(item.layout())
