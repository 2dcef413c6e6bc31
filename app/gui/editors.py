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

Besides: :func:`grid_specs` lays Specs out compactly (label above field, a data-sheet
block such as an engine's); :class:`TableEditor` edits a table of values
(``[[a, b], ...]``: a pressure curve, a torque against time or speed) whole, with the
unit of each column in its header and rows pasted from a spreadsheet;
:class:`MapEditor` edits an object keyed by names (a factor per excitation, a count
per link).  Kinds beyond the units: ``PERCENT`` (10 or '10 %'), ``FRACTION`` (0.2 or
'20 %'), ``TOLERANCE`` ('20 %' or '-10 %, +25 %', a pair in the file) and ``NAMES``
('1, 5, 3', a list in the file).  A Spec's ``default`` is the dropdown's value while
the key is absent; ``words`` are words a field takes besides its kind ('none').

Adding a key family (see the load cases, transients and engine data) means: parse and
validate it in ``core``; add its Specs beside the form that shows them (a list of Specs
for an object, a RowsEditor for a list of objects, a TableEditor for a table, a tab of
its own from :class:`app.gui.list_form.ListDetailForm` for a top-level list); map the
element and field names of its ``ModelError`` to the widgets' paths in the form's
``problem_of`` (core names nested keys 'engine.bore', list entries 'load case 'x'
driven 2'); and, where it names a disc or a link, carry it through
:func:`app.gui.edits.rename_disc` / ``_fix_references`` or
:func:`app.gui.edits.rename_link` / ``_fix_link_references``.
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
PERCENT = "percent"  # a percentage: 10 or '10 %' (core.units.parse_percent)
FRACTION = "fraction"  # a share or scale: 0.2 or '20 %' (core.units.parse_fraction)
TOLERANCE = "tolerance"  # '20 %' / 0.2 (symmetric) or '-10 %, +25 %' (minus first): a pair in the file
NAMES = "names"  # a list of names written '1, 5, 3' (an engine's firing order)
PLAIN_KINDS = (NUMBER, PERCENT, FRACTION)

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
TIPS.update({
    # design options (tolerance bands, weak excitation, elements offered for their window)
    "stiffness_tolerance": "Tolerance of the stiffness: one value for ± ('20 %' or 0.2), or the minus and "
                           "plus sides '-10 %, +25 %' (minus first). Each natural frequency then has a band.",
    "inertia_tolerance": "Tolerance of the inertia: one value for ± ('5 %' or 0.05), or the minus and plus "
                         "sides '-5 %, +10 %' (minus first).",
    "weak_excitation_below": "Coincidences whose excitation acts where the mode barely moves (participation "
                             "below this, e.g. '20 %') are listed as weakly excited and not counted as "
                             "failures. Empty: every coincidence counts.",
    "design_options": "Discs and links whose admissible values (the stiffness or inertia window) the design "
                      "options show besides every coupling's.",
    # acceptance: any link
    "permissible_torque_transient": "Permissible vibratory torque while passing through (start-up, run-down, "
                                    "overspeed); empty: the continuous value is used (conservative).",
    "permissible_stress_transient": "Permissible vibratory shear stress while passing through; empty: the "
                                    "continuous value is used.",
    # couplings (the data sheet's ratings)
    "nominal_torque": "Coupling's nominal torque T_KN (data sheet): the mean torque it may carry continuously.",
    "maximum_torque": "Coupling's maximum torque T_Kmax (data sheet): the peak it may see, e.g. at start-up "
                      "or a short circuit.",
    "permissible_power": "Permissible dissipated power P_KV of the coupling's element at its temperature "
                         "(W, kW, hp).",
    "permissible_torque_frequency": "Frequency at which the permissible vibratory torque holds (data sheets: "
                                    "commonly 10 Hz; empty means 10 Hz); 'none': a flat value at every frequency.",
    "temperature_factor": "Temperature factor S_t (≥ 1) dividing the coupling's torque ratings; empty means 1.",
    "coupling.stiffness": "Torsional stiffness (N*m/rad, kN*m/rad ...). Empty for a viscous damper's ring "
                          "(joined by damping alone: give the viscous damping below).",
    # shafts: fatigue, propulsion rule, material strengths
    "fatigue.criterion": "Mean-stress relation of the fatigue check: Goodman (ultimate strength) or "
                         "Soderberg (yield strength, more conservative).",
    "fatigue.surface": "Surface finish of the shaft (surface factor of the endurance limit).",
    "fatigue.reliability_percent": "Reliability of the endurance limit, % (reliability factor).",
    "fatigue.temperature_factor": "Temperature factor k_d of the endurance limit (plain number, 1 at room "
                                  "temperature).",
    "fatigue.required_safety_factor": "Safety factor the fatigue check requires (≥ 1).",
    "propulsion.position": "Apply the classification societies' rule for propulsion shafts, with the "
                           "shaft's position in the line (its permissible vibratory stresses depend on it).",
    "propulsion.design_feature": "Design feature that sets the shaft-design factor C_K (e.g. integral "
                                 "flange, keyway); or give C_K itself.",
    "propulsion.shaft_design_factor": "Shaft-design factor C_K (plain number, 0 to 1) instead of a design "
                                      "feature.",
    "propulsion.tensile_strength": "Specified minimum tensile strength of the shaft material; empty: the "
                                   "material's.",
    "segment.design_feature": "This segment's own design feature (the rule's C_K); empty: the shaft's.",
    "segment.shaft_design_factor": "This segment's own C_K (plain number); empty: the shaft's.",
    "tensile_strength": "Ultimate tensile strength of the material (MPa, ksi).",
    "yield_strength": "Yield strength of the material (MPa, ksi).",
    "torsional_endurance_limit": "Torsional endurance limit of the material (MPa, ksi).",
    "steel": "Kind of steel (the propulsion rule and the fatigue factors need to know it).",
    # S-N curve of a link (transients)
    "sn.endurance_limit": "Shear stress amplitude of the S-N curve's knee (endurance limit) for the "
                          "transient fatigue count (MPa, ksi).",
    "sn.slope": "Slope exponent k of the S-N curve above the knee (N · τ^k constant).",
    "sn.knee_cycles": "Cycles at the knee of the S-N curve (e.g. 1e6).",
    "sn.slope_after_knee": "Slope exponent beyond the knee; empty: no damage below the endurance limit.",
    "sn.source": "Where the S-N curve comes from (printed on the sheet).",
    # gear teeth and mesh stiffness
    "teeth.from": "Teeth of the gear on the 'from' shaft; with both counts the speed ratio is z_from / z_to.",
    "teeth.to": "Teeth of the gear on the 'to' shaft.",
    "mesh.c_gamma": "Mesh stiffness per unit face width c_γ (gear rating practice; about 20 N/(mm*um) for "
                    "steel spur gears).",
    "mesh.face_width": "Face width b of the mesh (mm, in).",
    "mesh.base_radius_from": "Base-circle radius of the 'from' gear (mm, in); k = c_γ b r_b² is then "
                             "referred to the 'from' shaft.",
    "mesh.base_radius_to": "Base-circle radius of the 'to' gear (instead of the 'from' gear's).",
})


def with_default(pairs, default_label: str):
    """Dropdown choices whose first entry (None) means 'the key is absent: the default'."""
    return [(None, default_label)] + list(pairs)



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
    if kind in PLAIN_KINDS:
        if x is None:
            return text
        return int(x) if x.is_integer() and abs(x) < 1e15 else x
    if kind == TOLERANCE:
        parts = _parts(text)
        values = [stored_value(p, FRACTION, system) for p in parts]
        return values[0] if len(values) == 1 else values
    if kind == NAMES:
        return _parts(text, spaces=True)
    return text


def _parts(text: str, spaces: bool = False) -> list[str]:
    """'-10 %, +25 %' -> ['-10 %', '+25 %'] (commas or semicolons; ``spaces``: blanks too)."""
    import re
    sep = r"[,;\s]+" if spaces else r"\s*[,;]\s*"
    return [p for p in re.split(sep, text.strip()) if p]


def tolerance_problem(value) -> str | None:
    """What is wrong with a stored tolerance ('20 %', 0.2 or ['-10 %', '+25 %']), None when it
    reads (the rule of the design options: fractions, the minus side first and below 100 %)."""
    if isinstance(value, list):
        if len(value) != 2:
            return f"give one value ('20 %') or two, minus first ('-10 %, +25 %'); got {len(value)}"
        try:
            minus, plus = u.parse_fraction(value[0]), u.parse_fraction(value[1])
        except Exception as exc:
            return getattr(exc, "message", str(exc))
        if minus > 0:
            return f"the first value is the minus side: write it with a minus ('-{value[0]}')"
        if plus < 0:
            return "the second value is the plus side: it must not be negative"
        minus = -minus
    else:
        try:
            minus = u.parse_fraction(value)
        except Exception as exc:
            return getattr(exc, "message", str(exc))
        if minus < 0:
            return "a symmetric tolerance must not be negative (for one side give two values)"
    if minus >= 1.0:
        return f"the minus side must be below 100 %, got {minus * 100:g} %"
    return None


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
    reader = {NUMBER: u.parse_number, PERCENT: u.parse_percent, FRACTION: u.parse_fraction}.get(kind)
    if reader is not None:
        try:
            reader(text)
        except Exception as exc:
            return getattr(exc, "message", str(exc))
    if kind == TOLERANCE:
        return tolerance_problem(stored_value(text, TOLERANCE, "SI"))
    return None


def shown_text(stored, kind, system: str) -> str:
    """What a field shows for a stored value: a quantity in the unit system on screen, a
    tolerance pair as '-10 %, +25 %', a list of names as '1, 5, 3'."""
    if isinstance(stored, list) and kind in (TOLERANCE, NAMES):
        return ", ".join(str(x) for x in stored)
    if stored is False:
        return "none"
    return display_text(stored, kind, system)


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
        self.words: tuple = ()  # words the field takes besides its kind ('none')
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
            shown = shown_text(stored, self.kind, system)
            if self.text() != shown or self.isModified():
                self.setText(shown)
                self.setCursorPosition(0)  # show the start of a long value
            self._shown = shown
            self.setModified(False)
        self._model_problem = model_problem
        self._check()

    def _check(self, *_):
        word = self.text().strip().lower() in self.words
        problem = None if word else text_problem(self.text(), self.kind)
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
        text = self.text().strip()
        value = text.lower() if text.lower() in self.words else stored_value(text, self.kind, self.system)
        try:
            self.committed.emit(self.path, value)
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
    words: tuple = ()
    default: object = None  # a CHOICE's value while the key is absent (shown, not written)

    def shown_for(self, obj) -> bool:
        return self.applies is None or bool(self.applies(obj))


def spec_widget(spec: Spec, path: tuple, system: str):
    """The Field or ChoiceField for ``spec`` at ``path``."""
    if spec.kind == CHOICE:
        w = ChoiceField(path, spec.tip or spec.key)
    else:
        w = Field(path, spec.kind, spec.tip or spec.key, system, spec.optional)
        w.words = tuple(spec.words)
        if spec.placeholder:
            w.set_fixed_placeholder(spec.placeholder)
    if spec.width:
        w.setMinimumWidth(spec.width)
    return w


def show_spec_value(widget, spec: Spec, doc: dict, obj, stored, system: str, problem, force=False):
    """Bring one spec widget up to the document."""
    if isinstance(widget, ChoiceField):
        current = spec.default if stored is None and spec.default is not None else stored
        widget.set_choices(spec.choices(doc) if spec.choices else [], current, problem)
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
def _row_value(obj, key):
    """A key of one row's object; the key '' is the row itself (a list of plain values)."""
    if key == "":
        return obj
    return obj.get(key) if isinstance(obj, dict) else None


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
                 row_value=None, fixed: bool = False):
        super().__init__(parent)
        self.specs, self.what, self.min_rows, self.fixed = list(specs), what, min_rows, fixed
        self.row_value = row_value or _row_value
        self._base: tuple = ()
        self._n = -1
        self._single = False
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
        self.add_button.setVisible(not fixed and bool(add_text))
        for c, spec in enumerate(self.specs):
            lab = QtWidgets.QLabel(spec.label)
            lab.setToolTip(TIPS.get(spec.tip or spec.key, ""))
            lab.setStyleSheet(f"color: {theme.INK_MUTED};")
            self.grid.addWidget(lab, 0, c)
            # a column's share of the width follows its minimum width (a name stays narrow)
            self.grid.setColumnStretch(c, max(1, spec.width // 20) if spec.width else
                                       (2 if isinstance(spec.kind, u.Kind) else 1))
        self._header_labels = [self.grid.itemAtPosition(0, c).widget() for c in range(len(self.specs))]

    def show_rows(self, doc: dict, base: tuple, rows, system: str, problem_of, force=False) -> None:
        """Rows of ``rows`` (the list at ``base`` in the document); ``problem_of(row, key)``
        gives the model's problem for a cell.  ``rows`` may be one object (a dict where the
        file allows one entry or a list): its cells are then bound to ``base + (key,)``."""
        single = isinstance(rows, dict)
        if single:
            rows = [rows]
        if len(rows) != self._n or base != self._base or system != self._system or single != self._single:
            self._single = single
            self._rebuild(base, len(rows), system)
        for r, obj in enumerate(rows):
            for spec, w in self.cells[r]:
                show_spec_value(w, spec, doc, obj, self.row_value(obj, spec.key), system,
                                problem_of(r, spec.key), force)
        for c, spec in enumerate(self.specs):
            self._header_labels[c].setToolTip(tip(spec.tip or spec.key, spec.kind, system))
            self._header_labels[c].setVisible(bool(rows))  # no column heads over no rows

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
                w = spec_widget(spec, base + (() if self._single else (r,)) + ((spec.key,) if spec.key else ()),
                                system)
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
            if self.fixed:  # hidden once it has a parent (a parentless widget shown is a window)
                rm.hide()
            self._remove_buttons.append(rm)
            self.cells.append(row)

    def fields(self) -> list:
        return [w for row in self.cells for _s, w in row]


# ----------------------------------------------------------------- a table of values
def parse_pasted(text: str) -> list[list[str]]:
    """Rows of cells from text copied out of a spreadsheet: tab-separated (what spreadsheets
    put on the clipboard), else semicolon- or comma-separated; blank lines and a header row
    (no digit in any cell) are skipped."""
    lines = [line for line in text.replace("\r\n", "\n").replace("\r", "\n").split("\n") if line.strip()]
    if not lines:
        return []
    sep = "\t" if any("\t" in l for l in lines) else (";" if any(";" in l for l in lines) else ",")
    rows = [[c.strip() for c in l.split(sep)] for l in lines]
    if rows and not any(ch.isdigit() for c in rows[0] for ch in c):
        rows = rows[1:]
    return rows


class _PasteTable(QtWidgets.QTableWidget):
    pasteRequested = QtCore.Signal()

    def keyPressEvent(self, event):
        if event.matches(QtGui.QKeySequence.Paste) and self.state() != QtWidgets.QAbstractItemView.EditingState:
            self.pasteRequested.emit()
            return
        super().keyPressEvent(event)


class TableEditor(QtWidgets.QWidget):
    """A table of values in the file (``[[a, b], ...]``: a pressure curve, a torque against
    time or speed): each column's unit in its header, cells edited in place (a bare number
    is read in that unit), rows added and removed, rows pasted from a spreadsheet
    (tab-, semicolon- or comma-separated).  Every change is one edit of the whole list:
    ``committed(path, rows)``; a cell that does not read is framed red and named below."""

    committed = QtCore.Signal(tuple, object)

    def __init__(self, columns, what: str = "row", parent=None, visible_rows: int = 7):
        super().__init__(parent)
        self.columns, self.what = list(columns), what
        self.path: tuple = ()
        self.system = "SI"
        self._rows: list = []
        self._updating = False
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        self.table = _PasteTable(0, len(self.columns))
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.verticalHeader().setMinimumWidth(28)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.horizontalHeader().setSectionResizeMode(QtWidgets.QHeaderView.Stretch)
        self.table.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectItems)
        self.table.itemChanged.connect(self._item_changed)
        self.table.pasteRequested.connect(lambda: self.paste_text(self._clipboard(), at_cell=True))
        self.visible_rows = visible_rows
        self._fit_height(0)
        lay.addWidget(self.table)
        buttons = QtWidgets.QHBoxLayout()
        buttons.setSpacing(4)
        self.add_button = QtWidgets.QPushButton("Add row")
        self.add_button.setToolTip(f"Append a {what} (a copy of the last one)")
        self.add_button.clicked.connect(self._add)
        self.remove_button = QtWidgets.QPushButton("Remove")
        self.remove_button.setToolTip(f"Remove the selected {what}s")
        self.remove_button.clicked.connect(self._remove)
        self.paste_button = QtWidgets.QPushButton("Paste rows")
        self.paste_button.setToolTip("Replace the table with rows copied from a spreadsheet (tab-, semicolon- "
                                     "or comma-separated; a header row is skipped). Ctrl+V in a cell pastes "
                                     "from that cell on.")
        self.paste_button.clicked.connect(lambda: self.paste_text(self._clipboard(), at_cell=False))
        self.count = QtWidgets.QLabel()
        self.count.setStyleSheet(f"color: {theme.INK_MUTED};")
        for b in (self.add_button, self.remove_button, self.paste_button):
            buttons.addWidget(b)
        buttons.addWidget(self.count, 1)
        lay.addLayout(buttons)
        self.problem_label = problem_label()
        lay.addWidget(self.problem_label)

    def _fit_height(self, n: int) -> None:
        """As tall as its rows (two to ``visible_rows``; more scroll inside the table)."""
        head = self.table.horizontalHeader().sizeHint().height()
        rows = min(max(n, 2), self.visible_rows)
        self.table.setFixedHeight(head + rows * self.table.verticalHeader().defaultSectionSize() + 4)

    @staticmethod
    def _clipboard() -> str:
        return QtWidgets.QApplication.clipboard().text()

    def header_text(self, spec) -> str:
        if isinstance(spec.kind, u.Kind):
            return f"{spec.label}, {u.display_unit(spec.kind, self.system)}"
        return spec.label

    def show_table(self, base: tuple, rows, system: str, problem: str | None = None,
                   problem_row: int | None = None, columns=None, force: bool = False) -> None:
        """Show the list at ``base``; ``problem``: the model's problem with it (``problem_row``:
        the 0-based row it names)."""
        if columns is not None:
            self.columns = list(columns)
        self.path, self.system = tuple(base), system
        self._rows = list(rows) if isinstance(rows, list) else []
        t = self.table
        self._updating = True
        try:
            if t.columnCount() != len(self.columns):
                t.setColumnCount(len(self.columns))
            t.setHorizontalHeaderLabels([self.header_text(c) for c in self.columns])
            for c, spec in enumerate(self.columns):
                t.horizontalHeaderItem(c).setToolTip(tip(spec.tip or spec.key, spec.kind, system))
            if t.rowCount() != len(self._rows):
                t.setRowCount(len(self._rows))
            first = None
            for r, row in enumerate(self._rows):
                cells = row if isinstance(row, list) else [row]
                for c, spec in enumerate(self.columns):
                    stored = cells[c] if c < len(cells) else None
                    shown = display_text(stored, spec.kind, system)
                    item = t.item(r, c)
                    if item is None:
                        item = QtWidgets.QTableWidgetItem()
                        t.setItem(r, c, item)
                    if item.text() != shown:
                        item.setText(shown)
                    bad = (text_problem(str(stored), spec.kind) if stored is not None else "empty") \
                        if not isinstance(stored, (list, dict)) else "not a single value"
                    if not isinstance(row, list) or len(cells) != len(self.columns):
                        bad = bad or f"a {self.what} has {len(self.columns)} values"
                    if bad is None and problem is not None and problem_row == r:
                        bad = problem
                    if bad:
                        item.setBackground(theme.qcolor(theme.FAIL_FILL))
                        item.setForeground(theme.qcolor(theme.FAIL))
                        item.setToolTip(f"Problem: {bad}")
                        if first is None:
                            first = f"{self.what} {r + 1}, {spec.label.lower()}: {bad}"
                    else:
                        item.setData(QtCore.Qt.BackgroundRole, None)
                        item.setData(QtCore.Qt.ForegroundRole, None)
                        item.setToolTip(f"Stored as: {stored}" if isinstance(spec.kind, u.Kind) else "")
        finally:
            self._updating = False
        text = first or problem
        self.problem_label.setText(text or "")
        self.problem_label.setVisible(bool(text))
        self._fit_height(len(self._rows))
        self.count.setText(f"{len(self._rows)} {self.what}{'s' if len(self._rows) != 1 else ''}")
        self.remove_button.setEnabled(bool(self._rows))

    def _cell_value(self, text: str, c: int):
        spec = self.columns[c]
        return stored_value(text, spec.kind, self.system)

    def _copy_rows(self) -> list:
        import copy as _copy
        return [list(r) if isinstance(r, list) else [r] for r in _copy.deepcopy(self._rows)]

    def _item_changed(self, item):
        if self._updating:
            return
        r, c = item.row(), item.column()
        rows = self._copy_rows()
        if r >= len(rows):
            return
        while len(rows[r]) <= c:
            rows[r].append(None)
        value = self._cell_value(item.text(), c)
        if value == rows[r][c]:
            return
        rows[r][c] = value
        self.committed.emit(self.path, rows)

    def _add(self):
        rows = self._copy_rows()
        if rows:
            rows.append(list(rows[-1]))
        else:
            rows.append([spec.kind.example if isinstance(spec.kind, u.Kind) else 0 for spec in self.columns])
        self.committed.emit(self.path, rows)

    def _remove(self):
        chosen = sorted({i.row() for i in self.table.selectedIndexes()})
        if not chosen and self.table.currentRow() >= 0:
            chosen = [self.table.currentRow()]
        if not chosen:
            return
        rows = [r for i, r in enumerate(self._copy_rows()) if i not in chosen]
        self.committed.emit(self.path, rows)

    def paste_text(self, text: str, at_cell: bool = True) -> bool:
        """Rows from a spreadsheet: from the current cell on (``at_cell``), or replacing the
        whole table.  False when the text holds no rows."""
        pasted = parse_pasted(text)
        if not pasted:
            return False
        n = len(self.columns)
        if at_cell and self.table.currentRow() >= 0:
            rows, r0, c0 = self._copy_rows(), self.table.currentRow(), max(0, self.table.currentColumn())
        else:
            rows, r0, c0 = [], 0, 0
        for i, cells in enumerate(pasted):
            r = r0 + i
            while len(rows) <= r:
                rows.append([None] * n)
            while len(rows[r]) < n:
                rows[r].append(None)
            for j, cell in enumerate(cells):
                if c0 + j < n:
                    rows[r][c0 + j] = self._cell_value(cell, c0 + j)
        self.committed.emit(self.path, rows)
        return True


# ----------------------------------------------------------------- a JSON object keyed by names
class MapEditor(QtWidgets.QWidget):
    """A JSON object ``{key: value}`` (scales per excitation, required events per link): one
    row per key, a dropdown for the key (names shown, the key stored) and a field for the
    value bound to ``base + (key,)``; add and remove buttons.

    Signals: ``committed(path, value)`` for a value; ``keyChanged(old, new)``;
    ``addRequested()``; ``removeRequested(key)``."""

    committed = QtCore.Signal(tuple, object)
    keyChanged = QtCore.Signal(object, object)
    addRequested = QtCore.Signal()
    removeRequested = QtCore.Signal(object)

    def __init__(self, value_spec: Spec, key_label: str, add_text: str, what: str, parent=None):
        super().__init__(parent)
        self.value_spec, self.what = value_spec, what
        self._sig = None
        self.rows: list = []  # (key, ChoiceField, Field, remove button)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        self.grid = QtWidgets.QGridLayout()
        self.grid.setHorizontalSpacing(4)
        self.grid.setVerticalSpacing(1)
        lay.addLayout(self.grid)
        for c, text in enumerate((key_label, value_spec.label)):
            lab = QtWidgets.QLabel(text)
            lab.setStyleSheet(f"color: {theme.INK_MUTED};")
            self.grid.addWidget(lab, 0, c)
        self.grid.setColumnStretch(0, 3)
        self.grid.setColumnStretch(1, 2)
        self.add_button = QtWidgets.QPushButton(add_text)
        self.add_button.clicked.connect(self.addRequested.emit)
        lay.addWidget(self.add_button, 0, QtCore.Qt.AlignLeft)

    def show_map(self, doc: dict, base: tuple, mapping: dict, choices, system: str, problem_of,
                 force: bool = False) -> None:
        keys = list(mapping)
        sig = (tuple(base), tuple(keys), system)
        if sig != self._sig:
            self._sig = sig
            self._rebuild(base, keys, system)
        for key, box, field, _rm in self.rows:
            taken = {k for k in keys if k != key}
            box.set_choices([(v, l) for v, l in choices if v not in taken], key)
            field.show_value(mapping.get(key), system, problem_of(key), force)
        self.add_button.setEnabled(any(v not in keys for v, _l in choices))

    def _rebuild(self, base, keys, system):
        for _k, box, field, rm in self.rows:
            for w in (box, box.problem_label, field, field.problem_label, rm):
                self.grid.removeWidget(w)
                w.hide()
                w.deleteLater()
        self.rows = []
        for r, key in enumerate(keys):
            box = ChoiceField(tuple(base) + (key, "<key>"), self.value_spec.tip or self.value_spec.key)
            box.committed.connect(lambda _p, new, old=key: self.keyChanged.emit(old, new))
            field = spec_widget(self.value_spec, tuple(base) + (key,), system)
            field.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Fixed)
            field.setMinimumWidth(60)
            field.committed.connect(self.committed.emit)
            rm = QtWidgets.QToolButton()
            rm.setText("−")
            rm.setToolTip(f"Remove this {self.what}")
            rm.clicked.connect(lambda _=False, key=key: self.removeRequested.emit(key))
            self.grid.addWidget(box, 2 * r + 1, 0)
            self.grid.addWidget(field, 2 * r + 1, 1)
            self.grid.addWidget(field.problem_label, 2 * r + 2, 0, 1, 2)
            self.grid.addWidget(rm, 2 * r + 1, 2)
            self.rows.append((key, box, field, rm))

    def fields(self) -> list:
        return [f for _k, _b, f, _r in self.rows]


def grid_specs(grid: QtWidgets.QGridLayout, specs, base: tuple, obj, system: str, on_commit,
               columns: int = 3, row0: int = 0) -> list:
    """Specs laid out compactly, ``columns`` to a row, each label above its field and the
    field's problem below it (a data-sheet block such as an engine's); returns [(spec, widget)]."""
    out = []
    shown = [spec for spec in specs if spec.shown_for(obj)]
    for n, spec in enumerate(shown):
        r, c = row0 + 3 * (n // columns), n % columns
        w = spec_widget(spec, base + (spec.key,), system)
        w.committed.connect(on_commit)
        w.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Fixed)
        w.setMinimumWidth(spec.width or 60)
        lab = QtWidgets.QLabel(spec.label)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        w.add_label(lab)
        grid.addWidget(lab, r, c)
        grid.addWidget(w, r + 1, c)
        grid.addWidget(w.problem_label, r + 2, c)
        out.append((spec, w))
    for c in range(columns):
        grid.setColumnStretch(c, 1)
    return out
