"""Forms: the discs table, the links table, the property form of the selected
element (with the shaft's segments table and material) and the operating
data editor.

Values are shown in the chosen unit system (display only): a value the user
has not edited keeps its stored text, a value typed in is stored exactly as
typed (a bare number is read in the unit on display).  A field whose text does
not read as a quantity of its kind, or that the model rejects, is framed red
with the problem in words beside it and in its tooltip.

Widgets here never change the document themselves: they emit
``editRequested(path, value, label)`` (one field) or
``replaceRequested(new_doc, label)`` (a structural change) and the main window
turns that into an undo command.
"""
from __future__ import annotations

import copy
import math

from PySide6 import QtCore, QtWidgets

from core import units as u
from core.materials import LIBRARY
from core.model import GROUND, LINK_KINDS, MASS_MODELS
from core.shafting import DESIGN_FACTORS, POSITIONS, SURFACE_FINISH

from . import edits, theme
from .canvas import link_stiffness_si
from .editors import (CHOICE, FRACTION, NUMBER, PERCENT, TEXT, TIPS, TOLERANCE, Field, RowsEditor, Spec,
                      add_spec_rows, disc_choices, labelled, problem_label, show_spec_value, stored_value, tip,
                      with_default)
from .editors import ERROR_STYLE, text_problem  # noqa: F401 (re-exported: forms used to define them)
from .quantities import _read, display_text, read_si  # noqa: F401 (re-exported)



# ----------------------------------------------------------------- tables
class _ChoiceDelegate(QtWidgets.QStyledItemDelegate):
    """A combo box editor for columns with a fixed list of choices: ``choices()`` gives
    plain strings or (stored value, label) pairs (names shown, ids stored)."""

    def __init__(self, choices, parent=None):
        super().__init__(parent)
        self.choices = choices  # callable -> list[str | (value, label)]

    def _pairs(self):
        return [c if isinstance(c, tuple) else (c, c) for c in self.choices()]

    def createEditor(self, parent, option, index):
        box = QtWidgets.QComboBox(parent)
        for value, label in self._pairs():
            box.addItem(label, value)
        return box

    def setEditorData(self, editor, index):
        stored = index.data(STORED_ROLE)
        i = editor.findData(stored) if stored is not None else -1
        if i < 0:
            i = editor.findText(index.data())
        editor.setCurrentIndex(max(i, 0))

    def setModelData(self, editor, model, index):
        model.setData(index, editor.currentData(), CHOSEN_ROLE)
        model.setData(index, editor.currentText())


STORED_ROLE = QtCore.Qt.UserRole + 1  # the stored value behind a cell that shows a name
CHOSEN_ROLE = QtCore.Qt.UserRole + 2  # the value picked in a dropdown, read once by _item_changed


class DocTable(QtWidgets.QTableWidget):
    """A table whose cells map to document paths.

    Columns are (header, field key, kind, tip key).  Subclasses give the rows.
    """

    editRequested = QtCore.Signal(tuple, object, str)
    renameRequested = QtCore.Signal(str, str)  # old disc id, new id
    rowSelected = QtCore.Signal(object)  # (element kind, id)

    element_kind = "disc"
    list_key = "discs"
    columns: list = []

    def __init__(self, parent=None):
        super().__init__(parent)
        self.system = "SI"
        self._updating = False
        self._meta = {}  # (row, col) -> (path, kind, shown text, id)
        self._meta_keep = {}
        self._row_keys: list = []
        self.setColumnCount(len(self.columns))
        self.setHorizontalHeaderLabels([c[0] for c in self.columns])
        self.verticalHeader().setVisible(False)
        self.verticalHeader().setDefaultSectionSize(24)
        self.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectRows)
        self.setSelectionMode(QtWidgets.QAbstractItemView.SingleSelection)
        self.setEditTriggers(QtWidgets.QAbstractItemView.DoubleClicked |
                             QtWidgets.QAbstractItemView.EditKeyPressed |
                             QtWidgets.QAbstractItemView.AnyKeyPressed)
        self.setAlternatingRowColors(True)
        self.horizontalHeader().setStretchLastSection(True)
        self.setMinimumHeight(120)
        self.itemChanged.connect(self._item_changed)
        self.itemSelectionChanged.connect(self._selection_changed)
        self.ids: list = []

    def header_tips(self):
        for c, col in enumerate(self.columns):
            item = self.horizontalHeaderItem(c)
            item.setToolTip(tip(col[3], col[2], self.system))

    def prepare(self, doc: dict) -> None:
        """Once per refresh, before the rows (e.g. the disc names the link rows show)."""

    def refresh(self, doc: dict, project, system: str) -> None:
        self.system = system
        self.prepare(doc)
        self._updating = True
        rows = [x for x in doc.get(self.list_key, []) if isinstance(x, dict)]
        self.setRowCount(len(rows))
        del self._row_keys[len(rows):]
        self._meta_keep = dict(self._meta)
        self._meta = {}
        self.ids = []
        indices = [i for i, x in enumerate(doc.get(self.list_key, [])) if isinstance(x, dict)]
        error_text = str(project.error) if project.error is not None else None
        for r, (obj, index) in enumerate(zip(rows, indices)):
            ident = obj.get("id")
            self.ids.append(ident)
            element = f"{self.element_kind} '{ident}'"
            # a row whose content, place and error are as last drawn is left alone
            # (one edit changes one row; a 200-disc train stays quick to redraw)
            row_key = (repr(obj), index, system, error_text if project.error is not None
                       and project.error.element == element else None, self.row_extra(doc, obj))
            if r < len(self._row_keys) and self._row_keys[r] == row_key and (r, 0) in self._meta_keep:
                for c in range(len(self.columns)):
                    self._meta[(r, c)] = self._meta_keep[(r, c)]
                continue
            if r < len(self._row_keys):
                self._row_keys[r] = row_key
            else:
                self._row_keys.append(row_key)
            for c, (header, key, kind, tip_key) in enumerate(self.columns):
                stored, editable, note = self.cell_value(obj, key)
                shown = self.display(doc, key, stored, kind, system) if note is None else note
                item = self.item(r, c)
                if item is None:
                    item = QtWidgets.QTableWidgetItem()
                    self.setItem(r, c, item)
                item.setText(shown)
                item.setData(STORED_ROLE, stored if shown != display_text(stored, kind, system) else None)
                item.setData(CHOSEN_ROLE, None)
                flags = QtCore.Qt.ItemIsSelectable | QtCore.Qt.ItemIsEnabled
                if editable:
                    flags |= QtCore.Qt.ItemIsEditable
                item.setFlags(flags)
                problem = None
                if stored is not None and note is None:
                    problem = text_problem(str(stored), kind) if isinstance(stored, str) else None
                problem = problem or project.error_at(element, key) or (
                    project.error_at(element) if c == 0 and project.error is not None
                    and project.error.element == element and not self._has_column(project.error.field)
                    else None)
                t = tip(tip_key, kind, system)
                if stored is not None and (isinstance(kind, u.Kind) or str(stored) != shown):
                    t += f"\nStored as: {stored}"
                elif shown and kind is TEXT:
                    t = f"{shown}\n\n{t}"  # the full text of a cell too narrow for it
                if problem:
                    item.setBackground(theme.qcolor(theme.FAIL_FILL))
                    item.setForeground(theme.qcolor(theme.FAIL))
                    t = f"Problem: {problem}\n\n" + t
                else:
                    item.setData(QtCore.Qt.BackgroundRole, None)
                    item.setData(QtCore.Qt.ForegroundRole, None)
                item.setToolTip(t)
                self._meta[(r, c)] = ((self.list_key, index, key), kind, shown, ident)
        if system != getattr(self, "_tips_system", None):
            self._tips_system = system
            self.header_tips()
        self._updating = False

    def _has_column(self, field) -> bool:
        if field is None:
            return False
        return any(field == k or field.startswith(k + ".") for _h, k, _kd, _t in self.columns)

    def cell_value(self, obj, key):
        """(stored value, editable, note text replacing the value or None)."""
        return obj.get(key), True, None

    def display(self, doc, key, stored, kind, system) -> str:
        """The text a cell shows for a stored value (names over ids where a column holds ids)."""
        return display_text(stored, kind, system)

    def row_extra(self, doc, obj):
        """What a row's drawing depends on besides its own object (e.g. the names of the discs
        it names)."""
        return None

    def _item_changed(self, item):
        if self._updating:
            return
        meta = self._meta.get((item.row(), item.column()))
        if meta is None:
            return
        path, kind, shown, ident = meta
        text = item.text()
        chosen = item.data(CHOSEN_ROLE)
        if text == shown:
            return
        if chosen is not None:  # picked in a dropdown that shows names: store the id
            self._updating = True
            item.setData(CHOSEN_ROLE, None)
            self._updating = False
            if item.row() < len(self._row_keys):
                self._row_keys[item.row()] = None
            self.editRequested.emit(path, chosen, f"Edit {self.element_kind} '{ident}' {path[-1]}")
            return
        if item.row() < len(self._row_keys):
            self._row_keys[item.row()] = None  # redraw this row whatever the edit leads to
        if path[-1] == "id" and self.element_kind == "disc":
            self.renameRequested.emit(ident, text.strip())
            return
        self.editRequested.emit(path, stored_value(text, kind, self.system),
                                f"Edit {self.element_kind} '{ident}' {path[-1]}")

    def _selection_changed(self):
        if self._updating:
            return
        rows = self.selectionModel().selectedRows()
        if rows and rows[0].row() < len(self.ids):
            self.rowSelected.emit((self.element_kind, self.ids[rows[0].row()]))

    def select_id(self, ident) -> None:
        self._updating = True
        try:
            if ident in self.ids:
                r = self.ids.index(ident)
                self.selectRow(r)
                self.scrollToItem(self.item(r, 0))
            else:
                self.clearSelection()
        finally:
            self._updating = False


class DiscTable(DocTable):
    element_kind = "disc"
    list_key = "discs"
    columns = [("Id", "id", TEXT, "id"), ("Name", "name", TEXT, "name"),
               ("Inertia", "inertia", u.INERTIA, "inertia"),
               ("Damping", "damping", u.DAMPING, "disc.damping")]

    def __init__(self, parent=None):
        super().__init__(parent)
        # the name takes the width the others leave (elided, in full in its tooltip), so
        # inertia and damping stay in view in a narrow pane (1366 x 768 screens)
        h = self.horizontalHeader()
        h.setStretchLastSection(False)
        h.setMinimumSectionSize(60)
        h.setDefaultAlignment(QtCore.Qt.AlignLeft | QtCore.Qt.AlignVCenter)  # a cut header keeps its start
        self.setColumnWidth(0, 80)
        self.setColumnWidth(2, 108)
        self.setColumnWidth(3, 96)
        h.setSectionResizeMode(1, QtWidgets.QHeaderView.Stretch)


class LinkTable(DocTable):
    element_kind = "link"
    list_key = "links"
    columns = [("Id", "id", TEXT, "id"), ("Name", "name", TEXT, "link.name"), ("Kind", "kind", TEXT, "kind"),
               ("From", "from", TEXT, "from"), ("To", "to", TEXT, "to"),
               ("Stiffness", "stiffness", u.STIFFNESS, "stiffness"),
               ("Speed ratio (out / in)", "speed_ratio", NUMBER, "speed_ratio"),
               ("Shaft inertia", "mass", TEXT, "mass")]

    def __init__(self, parent=None):
        super().__init__(parent)
        self.disc_choices = lambda: []  # [(id, name)] from the main window
        self.setItemDelegateForColumn(2, _ChoiceDelegate(lambda: list(LINK_KINDS), self))
        ends = _ChoiceDelegate(lambda: list(self.disc_choices()) + [(GROUND, GROUND)], self)
        self.setItemDelegateForColumn(3, ends)
        self.setItemDelegateForColumn(4, ends)
        self.setItemDelegateForColumn(7, _ChoiceDelegate(lambda: list(MASS_MODELS), self))
        for c, w in enumerate((100, 110, 80, 100, 100, 120, 80)):
            self.setColumnWidth(c, w)

    def prepare(self, doc):
        self._names = {d.get("id"): str(d.get("name") or d.get("id"))
                       for d in doc.get("discs", []) or [] if isinstance(d, dict)}

    def _label(self, disc_id):
        return self._names.get(disc_id, "" if disc_id is None else str(disc_id))

    def display(self, doc, key, stored, kind, system) -> str:
        if key in ("from", "to") and stored != GROUND:
            return self._label(stored)
        return super().display(doc, key, stored, kind, system)

    def row_extra(self, doc, obj):
        return (self._label(obj.get("from")), self._label(obj.get("to")))

    def cell_value(self, obj, key):
        kind = obj.get("kind")
        if key == "stiffness" and obj.get("stiffness") is None:
            if kind == "shaft" and obj.get("segments"):
                k = link_stiffness_si(obj)
                note = ("from geometry: " + display_text(k, u.STIFFNESS, self.system)) if k else "from geometry"
                return None, False, note
            if kind == "gear_mesh":
                if isinstance(obj.get("mesh_stiffness"), dict):
                    return None, False, "from tooth data"
                return None, True, "rigid"
            if kind == "coupling" and obj.get("damping") is not None:
                return None, True, "none (damping only)"
        if key == "speed_ratio" and kind != "gear_mesh":
            return None, False, "—"
        if key == "mass" and kind != "shaft":
            return None, False, "—"
        if key == "mass" and obj.get("mass") is None:
            return "none", True, None
        return obj.get(key), True, None

    def _item_changed(self, item):
        if self._updating:
            return
        meta = self._meta.get((item.row(), item.column()))
        if meta and meta[0][-1] == "stiffness" and item.text() in ("rigid", "none (damping only)"):
            return
        super()._item_changed(item)


# ----------------------------------------------------------------- property form
def _shaft_or_given(key):
    """Stress keys apply to shafts (they need the geometry); on another link they show only
    when the file gives them, so that they can still be read and cleared."""
    return lambda obj: obj.get("kind") == "shaft" or obj.get(key) is not None


TOLERANCE_HINT = "e.g. 20 %"  # the pair form is in the tooltip (a long hint is cut)
DISC_SPECS = [
    Spec("id", "Id", TEXT, "id", optional=False),
    Spec("name", "Name", TEXT, "name"),
    Spec("inertia", "Inertia", u.INERTIA, "inertia", optional=False),
    Spec("damping", "Damping to ground", u.DAMPING, "disc.damping"),
    Spec("inertia_tolerance", "Inertia tolerance", TOLERANCE, "inertia_tolerance", placeholder=TOLERANCE_HINT),
]
LINK_HEAD_SPECS = [
    Spec("id", "Id", TEXT, "id", optional=False),
    Spec("name", "Name", TEXT, "link.name"),
]
LINK_END_SPECS = [
    Spec("from", "From (input)", CHOICE, "from", choices=lambda doc: disc_choices(doc, [(GROUND, GROUND)])),
    Spec("to", "To (output)", CHOICE, "to", choices=lambda doc: disc_choices(doc, [(GROUND, GROUND)])),
]
def _has_teeth(obj) -> bool:
    return obj.get("teeth") is not None


GEAR_SPECS = [
    Spec("speed_ratio", "Speed ratio\n(output / input)", NUMBER, "speed_ratio", optional=False,
         applies=lambda o: not _has_teeth(o) or o.get("speed_ratio") is not None),
]
MESH_STIFFNESS_SPECS = [
    Spec("c_gamma", "Mesh stiffness\nper face width c_γ", u.MESH_STIFFNESS, "mesh.c_gamma", optional=False),
    Spec("face_width", "Face width", u.LENGTH, "mesh.face_width", optional=False),
    Spec("base_radius_from", "Base radius,\n'from' gear", u.LENGTH, "mesh.base_radius_from",
         enabled=lambda o: o.get("base_radius_to") is None, placeholder="or the 'to' gear's"),
    Spec("base_radius_to", "Base radius,\n'to' gear", u.LENGTH, "mesh.base_radius_to",
         enabled=lambda o: o.get("base_radius_from") is None, placeholder="or the 'from' gear's"),
]
#: how a gear mesh's stiffness is given (edits.MESH_DEFINITIONS)
MESH_DEFINITION_LABELS = {"rigid": "rigid", "stiffness": "given stiffness", "tooth_data": "tooth data"}
LINK_DAMPING_SPECS = [Spec("damping", "Viscous damping", u.DAMPING, "link.damping")]
LINK_LIMIT_SPECS = [
    Spec("permissible_torque", "Permissible torque", u.TORQUE, "permissible_torque"),
    Spec("permissible_torque_transient", "Permissible torque,\npassing through", u.TORQUE,
         "permissible_torque_transient", placeholder="as continuous"),
    Spec("permissible_stress", "Permissible stress", u.STRESS, "permissible_stress",
         applies=_shaft_or_given("permissible_stress")),
    Spec("permissible_stress_transient", "Permissible stress,\npassing through", u.STRESS,
         "permissible_stress_transient", applies=_shaft_or_given("permissible_stress_transient"),
         placeholder="as continuous"),
    Spec("stress_concentration", "Stress concen-\ntration factor", NUMBER, "stress_concentration",
         applies=_shaft_or_given("stress_concentration"), placeholder="1"),
]
TOLERANCE_SPECS = [Spec("stiffness_tolerance", "Stiffness tolerance", TOLERANCE, "stiffness_tolerance",
                        placeholder=TOLERANCE_HINT)]
COUPLING_KEYS = ("nominal_torque", "maximum_torque", "permissible_power", "permissible_torque_frequency",
                 "temperature_factor")
COUPLING_SPECS = [
    Spec("nominal_torque", "Nominal torque T_KN", u.TORQUE, "nominal_torque"),
    Spec("maximum_torque", "Maximum torque T_Kmax", u.TORQUE, "maximum_torque"),
    Spec("permissible_power", "Permissible power\nloss P_KV", u.POWER, "permissible_power"),
    Spec("permissible_torque_frequency", "Permissible torque\nholds at", u.FREQUENCY,
         "permissible_torque_frequency", placeholder="10 Hz", words=("none",)),
    Spec("temperature_factor", "Temperature factor S_t", NUMBER, "temperature_factor", placeholder="1"),
]


def _label(key: str) -> str:
    return key.replace("_", " ")


FATIGUE_SPECS = [
    Spec("criterion", "Criterion", CHOICE, "fatigue.criterion",
         choices=lambda doc: [("goodman", "Goodman"), ("soderberg", "Soderberg")], default="goodman"),
    Spec("surface", "Surface finish", CHOICE, "fatigue.surface",
         choices=lambda doc: [(k, _label(k)) for k in SURFACE_FINISH], default="machined"),
    Spec("reliability_percent", "Reliability, %", PERCENT, "fatigue.reliability_percent", placeholder="50"),
    Spec("temperature_factor", "Temperature factor k_d", NUMBER, "fatigue.temperature_factor", placeholder="1"),
    Spec("required_safety_factor", "Required safety\nfactor", NUMBER, "fatigue.required_safety_factor",
         placeholder="1.5"),
]
DESIGN_FEATURE_CHOICES = [(k, _label(k)) for k in DESIGN_FACTORS]  # C_K in each item's tooltip
PROPULSION_SPECS = [
    Spec("position", "Propulsion shaft\nrule", CHOICE, "propulsion.position",
         choices=lambda doc: with_default([(p, p) for p in POSITIONS], "not applied")),
    Spec("design_feature", "Design feature", CHOICE, "propulsion.design_feature",
         choices=lambda doc: with_default(DESIGN_FEATURE_CHOICES, "(or give C_K)"),
         enabled=lambda o: o.get("shaft_design_factor") is None),
    Spec("shaft_design_factor", "Shaft-design\nfactor C_K", NUMBER, "propulsion.shaft_design_factor",
         enabled=lambda o: o.get("design_feature") is None, placeholder="from the feature"),
    Spec("tensile_strength", "Tensile strength", u.STRESS, "propulsion.tensile_strength",
         placeholder="the material's"),
]
SEGMENT_FEATURE_SPECS = [
    Spec("design_feature", "Design feature", CHOICE, "segment.design_feature", width=110,
         choices=lambda doc: with_default(DESIGN_FEATURE_CHOICES, "the shaft's"),
         enabled=lambda o: isinstance(o, dict) and o.get("shaft_design_factor") is None),
    Spec("shaft_design_factor", "C_K", NUMBER, "segment.shaft_design_factor", width=50,
         enabled=lambda o: isinstance(o, dict) and o.get("design_feature") is None),
]
STRENGTH_SPECS = [
    Spec("tensile_strength", "Tensile strength", u.STRESS, "tensile_strength"),
    Spec("yield_strength", "Yield strength", u.STRESS, "yield_strength"),
    Spec("torsional_endurance_limit", "Torsional endur-\nance limit", u.STRESS, "torsional_endurance_limit"),
    Spec("steel", "Steel", CHOICE, "steel",
         choices=lambda doc: with_default([("carbon", "carbon steel"), ("alloy", "alloy steel"),
                                           ("stainless", "stainless steel")], "(not a steel / not given)")),
]
SN_SPECS = [
    Spec("endurance_limit", "Endurance limit", u.STRESS, "sn.endurance_limit", optional=False),
    Spec("slope", "Slope k", NUMBER, "sn.slope", optional=False),
    Spec("knee_cycles", "Knee at cycles", NUMBER, "sn.knee_cycles", optional=False),
    Spec("slope_after_knee", "Slope beyond\nthe knee", NUMBER, "sn.slope_after_knee", placeholder="none"),
    Spec("source", "Source", TEXT, "sn.source"),
]


def gear_note(obj: dict, system: str) -> str:
    """What the teeth and the mesh stiffness give, and which shaft the stiffness and torque are
    referred to (core.gears), in words; '' where the values do not read yet."""
    from core.gears import gear_mesh_fields, hunting_tooth_order
    try:
        k = u.parse(obj["stiffness"], u.STIFFNESS) if obj.get("stiffness") is not None else None
        ratio, teeth, k = gear_mesh_fields(obj, "link", k)
    except Exception:
        return ""
    out = []
    if teeth is not None:
        zf, zt = teeth
        out.append(f"Teeth {zf}/{zt}: speed ratio {ratio:.6g}; mesh order {zf} of the 'from' shaft; "
                   f"hunting-tooth order {hunting_tooth_order(zf, zt):.4g} of the 'from' shaft.")
    if k is None:
        out.append("Rigid mesh: the two gears turn together at the speed ratio.")
    else:
        out.append(f"Stiffness {display_text(k, u.STIFFNESS, system)} referred to the 'from' shaft "
                   f"({display_text(k / ratio ** 2, u.STIFFNESS, system)} on the 'to' shaft); the mesh "
                   "torque is reported on the 'from' shaft.")
    return " ".join(out)
#: how each material-damping key is offered (edits.DAMPING_KEYS)
DAMPING_CHOICES = [(None, "none"), ("loss_factor", "loss factor η"),
                   ("relative_damping", "ψ (relative)"), ("dynamic_magnifier", "magnifier M")]


def damping_equivalents(key, stored) -> str:
    """'η = 0.127 · ψ = 0.8 · M = 7.85' for a stored damping value ('' when it does not read)."""
    if key is None or stored is None:
        return ""
    try:
        eta = edits.loss_factor_of(key, float(u.parse_number(stored)))
    except Exception:
        return ""
    if eta is None or not math.isfinite(eta) or eta < 0:
        return ""
    psi = edits.from_loss_factor("relative_damping", eta)
    m = edits.from_loss_factor("dynamic_magnifier", eta)
    return (f"η = {eta:.3g} · ψ = {psi:.3g} · M = " + (f"{m:.3g}" if m is not None else "∞ (no damping)"))


class PropertyForm(QtWidgets.QScrollArea):
    """The selected disc or link with every key of the file: built from Specs
    (:mod:`app.gui.editors`), the shaft's segments and material, the link's
    material damping given one way (η, ψ or M) with the others shown, and its limits."""

    editRequested = QtCore.Signal(tuple, object, str)
    replaceRequested = QtCore.Signal(dict, str)
    renameRequested = QtCore.Signal(str, str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setWidgetResizable(True)
        self.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarAlwaysOff)  # fit the width, scroll down only
        self.setMinimumWidth(260)
        self._signature = None
        self._fields: list[Field] = []
        self._specs: list = []  # (spec, widget, path of the element)
        self._doc = {}
        self.selection = None
        self.system = "SI"
        self._damping_choice: dict = {}  # link id -> damping key chosen while no value is given
        self._project = _NoProject
        self.damping_box = self.damping_note = None
        self.segment_features = self.gear_note = None
        self._body = QtWidgets.QWidget()
        self.setWidget(self._body)
        QtWidgets.QVBoxLayout(self._body)
        self._placeholder()

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
        self._fields = []
        self._specs = []
        self.damping_box = self.damping_note = None
        self.segment_features = self.gear_note = None

    def _placeholder(self):
        self._clear()
        lab = QtWidgets.QLabel("Select a disc or link on the schematic or in a table to edit all "
                               "of its properties here.")
        lab.setWordWrap(True)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        self._body.layout().addWidget(lab)
        self._body.layout().addStretch(1)

    def reset(self) -> None:
        """Another project: forget per-project choices."""
        self._damping_choice.clear()
        self._signature = None

    def show_element(self, doc: dict, selection, project, system: str, force: bool = False) -> None:
        """Show the selected element of ``doc``; ``force``: an undo or redo (the document
        replaces text being typed)."""
        self._doc, self.selection, self.system, self._project = doc, selection, system, project
        obj, index = self._find(doc, selection)
        if obj is None:
            if self._signature is not None or force:
                self._signature = None
                self._placeholder()
            return
        sig = self._structure(doc, obj, selection, index, system)
        if sig != self._signature:
            self._signature = sig
            self._build(obj, index, selection, project)
        for spec, w, _base in self._specs:
            holder = _get(doc, w.path[:-1])  # the object the key sits in (a nested one too)
            show_spec_value(w, spec, doc, holder if isinstance(holder, dict) else {}, _get(doc, w.path), system,
                            self._model_problem(project, w.path), force)
        for f in self._fields:
            f.show_value(_get(doc, f.path), system, self._model_problem(project, f.path), force)
        if self.damping_note is not None:
            key = self._damping_key(obj)
            text = damping_equivalents(key, obj.get(key) if key else None)
            self.damping_note.setText(text or "equivalents: —")
        if self.segment_features is not None:
            element = f"link '{obj.get('id')}'"
            self.segment_features.show_rows(
                doc, ("links", index, "segments"), obj.get("segments") or [], system,
                lambda r, key: project.error_at(f"{element} segment {r + 1}", key), force)
        if self.gear_note is not None:
            text = gear_note(obj, system)
            self.gear_note.setText(text)
            self.gear_note.setVisible(bool(text))

    @staticmethod
    def _find(doc, selection):
        if not selection or selection[0] not in ("disc", "link"):
            return None, None
        key = "discs" if selection[0] == "disc" else "links"
        for i, x in enumerate(doc.get(key, [])):
            if isinstance(x, dict) and x.get("id") == selection[1]:
                return x, i
        return None, None

    def _damping_key(self, obj):
        return edits.damping_key(obj) or self._damping_choice.get(obj.get("id"))

    def _structure(self, doc, obj, selection, index, system):
        """What the form's layout depends on (it is rebuilt when this changes)."""
        segs = obj.get("segments")
        mat = obj.get("material")
        shown = tuple(spec.key for spec in LINK_LIMIT_SPECS + GEAR_SPECS if spec.shown_for(obj))
        return (selection, index, system, obj.get("kind"), obj.get("stiffness") is None,
                len(segs) if isinstance(segs, list) else None, isinstance(mat, dict),
                mat if isinstance(mat, str) else None, obj.get("mass"), shown,
                self._damping_key(obj) if selection[0] == "link" else None,
                edits.mesh_definition(obj), _has_teeth(obj), self._shows_coupling(obj),
                self._shows_fatigue(obj), isinstance(obj.get("propulsion_shaft"), dict),
                self._segment_features(obj), self._sn_curve(doc, obj) is not None)

    @staticmethod
    def _shows_coupling(obj) -> bool:
        return obj.get("kind") == "coupling" or any(obj.get(k) is not None for k in COUPLING_KEYS)

    @staticmethod
    def _geometric(obj) -> bool:
        return obj.get("kind") == "shaft" and obj.get("stiffness") is None and obj.get("segments") is not None

    def _shows_fatigue(self, obj) -> bool:
        return self._geometric(obj) or obj.get("fatigue") is not None

    @staticmethod
    def _segment_features(obj) -> bool:
        segs = obj.get("segments") if isinstance(obj.get("segments"), list) else []
        return isinstance(obj.get("propulsion_shaft"), dict) or any(
            isinstance(x, dict) and (x.get("design_feature") is not None or x.get("shaft_design_factor") is not None)
            for x in segs)

    @staticmethod
    def _sn_curve(doc, obj):
        curves = doc.get("sn_curves")
        return curves.get(obj.get("id")) if isinstance(curves, dict) else None

    def _model_problem(self, project, path):
        """The model's problem for the widget bound to ``path`` (core names nested keys
        'fatigue.criterion', 'material.density', 'mesh_stiffness.c_gamma' ...)."""
        obj, _ = self._find(self._doc, self.selection)
        if obj is None:
            return None
        if path[0] == "sn_curves":
            return project.error_at(f"S-N curve of link '{path[1]}'", path[-1])
        element = f"{self.selection[0]} '{obj.get('id')}'"
        if len(path) >= 4 and path[2] == "segments":
            return project.error_at(f"{element} segment {path[3] + 1}", path[-1])
        if len(path) >= 3 and path[2] == "teeth":
            return project.error_at(element, "teeth")
        return project.error_at(element, ".".join(str(k) for k in path[2:]))

    def _add_specs(self, form, specs, base, obj):
        for spec, w in add_spec_rows(form, specs, base, obj, self.system, self._commit):
            self._specs.append((spec, w, base))

    def _add_field(self, form, label, path, kind, tip_key, optional=True):
        f = Field(path, kind, tip_key, self.system, optional)
        f.committed.connect(self._commit)
        lab, box = labelled(f, label)
        form.addRow(lab, box)
        self._fields.append(f)
        return f

    def _combo(self, form, label, choices, current, tip_key, on_change):
        box = QtWidgets.QComboBox()
        box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        box.setMinimumContentsLength(6)  # long ids must not widen the form beyond its pane
        box.addItems(choices)
        if current not in choices:
            box.addItem(str(current))
        box.setCurrentText(str(current))
        box.setToolTip(TIPS.get(tip_key, ""))
        box.currentTextChanged.connect(on_change)
        lab = QtWidgets.QLabel(label)
        lab.setToolTip(box.toolTip())
        form.addRow(lab, box)
        return box

    def _commit(self, path, value):
        obj, _ = self._find(self._doc, self.selection)
        if obj is None:
            return
        if path[-1] == "id" and self.selection[0] == "disc":
            if value:
                self.renameRequested.emit(self.selection[1], str(value))
            return
        if path[-2:] == ("propulsion_shaft", "position") and value is None:
            self.replaceRequested.emit(edits.set_at(self._doc, path[:-1], None),
                                       f"No propulsion shafting rule for '{obj.get('id')}'")
            return
        self.editRequested.emit(path, value, f"Edit {self.selection[0]} '{obj.get('id')}' {path[-1]}")

    @staticmethod
    def _section(lay, text):
        lab = QtWidgets.QLabel(text)
        lab.setWordWrap(True)  # a narrow pane wraps the heading rather than widening the form
        lab.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        lay.addWidget(lab)
        form = _narrow_form()
        lay.addLayout(form)
        return form

    def _build(self, obj, index, selection, project):
        self._clear()
        lay = self._body.layout()
        kind = selection[0]
        what = "Disc" if kind == "disc" else str(obj.get("kind", "link")).replace("_", " ").capitalize()
        name = obj.get("name")
        heading = QtWidgets.QLabel(f"{what} '{name}'" if name else f"{what} '{obj.get('id')}'")
        heading.setFont(theme.font(theme.TITLE_POINT_SIZE, bold=True))
        heading.setWordWrap(True)
        lay.addWidget(heading)
        form = _narrow_form()
        lay.addLayout(form)
        base = ("discs" if kind == "disc" else "links", index)
        if kind == "disc":
            self._add_specs(form, DISC_SPECS, base, obj)
            lay.addStretch(1)
            return
        self._add_specs(form, LINK_HEAD_SPECS, base, obj)
        self._combo(form, "Kind", list(LINK_KINDS), obj.get("kind"), "kind", self._change_kind)
        self._add_specs(form, LINK_END_SPECS, base, obj)
        lk = obj.get("kind")
        tail = form  # where the stiffness tolerance goes: after the stiffness or the material
        if lk == "shaft":
            geometry = obj.get("stiffness") is None and obj.get("segments") is not None
            self._combo(form, "Defined by", ["given stiffness", "geometry"],
                        "geometry" if geometry else "given stiffness", "stiffness", self._change_definition)
            if geometry:
                self._segments(lay, obj, base)
                form2 = _narrow_form()
                lay.addLayout(form2)
                mat = obj.get("material")
                names = list(LIBRARY) + ["custom"]
                current = "custom" if isinstance(mat, dict) else (mat or "carbon_steel")
                self._combo(form2, "Material", names, current, "material", self._change_material)
                tail = form2
                if isinstance(mat, dict):
                    self._add_field(form2, "Shear modulus", base + ("material", "shear_modulus"), u.MODULUS,
                                    "shear_modulus", optional=False)
                    self._add_field(form2, "Density", base + ("material", "density"), u.DENSITY, "density",
                                    optional=False)
                    self._add_specs(form2, STRENGTH_SPECS, base + ("material",), mat)
                elif mat in LIBRARY:
                    m = LIBRARY[mat]
                    strengths = ""
                    if getattr(m, "tensile_strength", None):
                        strengths = f", R_m = {display_text(m.tensile_strength, u.STRESS, self.system)}"
                    note = QtWidgets.QLabel(f"G = {display_text(m.shear_modulus, u.MODULUS, self.system)}, "
                                            f"ρ = {display_text(m.density, u.DENSITY, self.system)}{strengths}")
                    note.setToolTip(m.source)
                    note.setWordWrap(True)
                    note.setStyleSheet(f"color: {theme.INK_MUTED};")
                    form2.addRow("", note)
                self._combo(form2, "Shaft inertia", list(MASS_MODELS), obj.get("mass") or "none", "mass",
                            lambda t: self.editRequested.emit(base + ("mass",), None if t == "none" else t,
                                                              f"Edit link '{obj.get('id')}' mass"))
            else:
                self._add_field(form, "Stiffness", base + ("stiffness",), u.STIFFNESS, "stiffness", optional=False)
        elif lk == "coupling":
            f = self._add_field(form, "Stiffness", base + ("stiffness",), u.STIFFNESS, "coupling.stiffness")
            f.set_fixed_placeholder("none")
        else:
            self._gear(form, lay, obj, base)
        self._add_specs(tail, TOLERANCE_SPECS, base, obj)
        damping = self._section(lay, "Damping")
        self._add_specs(damping, LINK_DAMPING_SPECS, base, obj)
        self._material_damping(damping, obj, base)
        limits = self._section(lay, "Limits")
        self._add_specs(limits, LINK_LIMIT_SPECS, base, obj)
        if self._shows_coupling(obj):
            ratings = self._section(lay, "Coupling ratings (data sheet)")
            self._add_specs(ratings, COUPLING_SPECS, base, obj)
        if self._shows_fatigue(obj):
            fatigue = self._section(lay, "Fatigue check")
            self._add_specs(fatigue, FATIGUE_SPECS, base + ("fatigue",), obj.get("fatigue") or {})
        if self._geometric(obj) or obj.get("propulsion_shaft") is not None:
            rule = self._section(lay, "Propulsion shafting")
            prop = obj.get("propulsion_shaft") if isinstance(obj.get("propulsion_shaft"), dict) else {}
            specs = PROPULSION_SPECS if isinstance(obj.get("propulsion_shaft"), dict) else PROPULSION_SPECS[:1]
            self._add_specs(rule, specs, base + ("propulsion_shaft",), prop)
            if self._segment_features(obj):
                head = QtWidgets.QLabel("Per segment (empty: the shaft's)")
                head.setWordWrap(True)
                head.setStyleSheet(f"color: {theme.INK_MUTED};")
                lay.addWidget(head)
                self.segment_features = RowsEditor(SEGMENT_FEATURE_SPECS, "", "segment", fixed=True)
                self.segment_features.committed.connect(self._commit)
                lay.addWidget(self.segment_features)
        if lk == "shaft" or self._sn_curve(self._doc, obj) is not None:
            self._sn_section(lay, obj)
        lay.addStretch(1)

    def _gear(self, form, lay, obj, base):
        """Teeth, speed ratio, how the mesh stiffness is given, and what they give."""
        li = base[1]
        teeth = obj.get("teeth") if isinstance(obj.get("teeth"), list) else []
        row = QtWidgets.QHBoxLayout()
        row.setSpacing(4)
        boxes = QtWidgets.QVBoxLayout()
        boxes.setSpacing(1)
        lab = QtWidgets.QLabel("Teeth\n('from' / 'to')")
        for side, key in enumerate(("teeth.from", "teeth.to")):
            f = Field(base + ("teeth", side), NUMBER, key, self.system)
            f.set_fixed_placeholder("z_from" if side == 0 else "z_to")
            f.setMinimumWidth(50)
            f.committed.connect(lambda _p, v, side=side: self._teeth_changed(li, side, v))
            row.addWidget(f)
            self._fields.append(f)
            if side == 0:
                f.add_label(lab)
        boxes.addLayout(row)
        for f in self._fields[-2:]:
            boxes.addWidget(f.problem_label)
        form.addRow(lab, boxes)
        self._add_specs(form, GEAR_SPECS, base, obj)
        how = edits.mesh_definition(obj)
        labels = list(MESH_DEFINITION_LABELS.values())
        box = self._combo(form, "Mesh stiffness", labels, MESH_DEFINITION_LABELS[how], "stiffness",
                          lambda t: self._mesh_definition(li, t))
        box.setToolTip("How the mesh stiffness is given: none (a rigid mesh), a torsional stiffness "
                       "referred to the 'from' shaft, or from the gears' tooth data.")
        if how == "stiffness":
            self._add_field(form, "Stiffness", base + ("stiffness",), u.STIFFNESS, "stiffness", optional=False)
        elif how == "tooth_data":
            self._add_specs(form, MESH_STIFFNESS_SPECS, base + ("mesh_stiffness",), obj.get("mesh_stiffness"))
        self.gear_note = QtWidgets.QLabel()
        self.gear_note.setWordWrap(True)
        self.gear_note.setStyleSheet(f"color: {theme.INK_MUTED};")
        form.addRow(self.gear_note)

    def _sn_section(self, lay, obj):
        form = self._section(lay, "S-N curve (transients)")
        base = ("sn_curves", obj.get("id"))
        curve = self._sn_curve(self._doc, obj)
        if curve is None:
            add = QtWidgets.QPushButton("Add an S-N curve")
            add.setToolTip("Without one the shaft's material curve is used for the transients' fatigue count")
            add.clicked.connect(lambda: self.replaceRequested.emit(
                edits.set_at(self._doc, base, {"endurance_limit": "100 MPa", "slope": 8, "knee_cycles": 1e6}),
                f"S-N curve of '{obj.get('id')}'"))
            form.addRow(add)
            return
        self._add_specs(form, SN_SPECS, base, curve if isinstance(curve, dict) else {})
        rm = QtWidgets.QPushButton("Remove the S-N curve")
        rm.clicked.connect(lambda: self.replaceRequested.emit(edits.set_at(self._doc, base, None),
                                                              f"Remove the S-N curve of '{obj.get('id')}'"))
        form.addRow(rm)

    def _teeth_changed(self, li, side, value):
        link = self._doc["links"][li]
        teeth = link.get("teeth") if isinstance(link.get("teeth"), list) else [None, None]
        if len(teeth) == 2 and teeth[side] == value:
            return
        self.replaceRequested.emit(edits.set_gear_teeth(self._doc, li, side, value),
                                   f"Teeth of '{link.get('id')}'")

    def _mesh_definition(self, li, label):
        how = next(k for k, v in MESH_DEFINITION_LABELS.items() if v == label)
        link = self._doc["links"][li]
        self.replaceRequested.emit(edits.set_mesh_definition(self._doc, li, how),
                                   f"Mesh stiffness of '{link.get('id')}' as {label}")

    def _material_damping(self, form, obj, base):
        """One of loss factor, relative damping or dynamic magnifier; the equivalents shown."""
        key = self._damping_key(obj)
        box = QtWidgets.QComboBox()
        box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        box.setMinimumContentsLength(6)
        for k, label in DAMPING_CHOICES:
            box.addItem(label, k)
        box.setCurrentIndex(max(0, box.findData(key)) if key is not None else 0)
        box.setToolTip(TIPS["material_damping"])
        box.currentIndexChanged.connect(lambda _i, box=box: self._change_damping_key(box.currentData()))
        lab = QtWidgets.QLabel("Material damping")
        lab.setToolTip(box.toolTip())
        form.addRow(lab, box)
        self.damping_box = box
        if key is not None:
            symbol = {"loss_factor": "Loss factor η", "relative_damping": "Relative damping ψ",
                      "dynamic_magnifier": "Dynamic magnifier M"}[key]
            self._add_field(form, symbol, base + (key,), NUMBER, key)
        note = QtWidgets.QLabel()
        note.setWordWrap(True)
        note.setStyleSheet(f"color: {theme.INK_MUTED};")
        note.setToolTip("The same damping written the three ways catalogues give it (read-only): "
                        "η = ψ / 2π = 1 / M.")
        form.addRow(note)  # the whole width: three values on one line
        self.damping_note = note

    def _change_damping_key(self, key):
        obj, index = self._find(self._doc, self.selection)
        if obj is None:
            return
        self._damping_choice[obj.get("id")] = key
        if edits.damping_key(obj) is None:  # nothing given yet: the field for it shows
            self._signature = None
            self.show_element(self._doc, self.selection, self._project, self.system)
            return
        new = edits.set_damping_key(self._doc, index, key)
        label = {"loss_factor": "loss factor", "relative_damping": "relative damping",
                 "dynamic_magnifier": "dynamic magnifier"}.get(key, "no material damping")
        self.replaceRequested.emit(new, f"Damping of '{obj.get('id')}' as {label}")

    def _segments(self, lay, obj, base):
        head = QtWidgets.QLabel("Segments, in series from the 'from' end")
        head.setWordWrap(True)
        lay.addWidget(head)
        grid = QtWidgets.QGridLayout()
        grid.setHorizontalSpacing(4)
        for c, (h, key) in enumerate((("Length", "length"), ("Outer Ø", "outer_diameter"),
                                      ("Bore Ø", "inner_diameter"))):
            lab = QtWidgets.QLabel(h)
            lab.setToolTip(tip(key, u.LENGTH, self.system))
            lab.setStyleSheet(f"color: {theme.INK_MUTED};")
            grid.addWidget(lab, 0, c)
        segs = obj.get("segments") or []
        for r, s in enumerate(segs):
            for c, key in enumerate(("length", "outer_diameter", "inner_diameter")):
                f = Field(base + ("segments", r, key), u.LENGTH, key, self.system, optional=key == "inner_diameter")
                f.committed.connect(self._commit)
                if key == "inner_diameter":
                    f.setPlaceholderText("solid")
                f.setMinimumWidth(52)
                f.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Fixed)
                grid.addWidget(f, 2 * r + 1, c)
                grid.addWidget(f.problem_label, 2 * r + 2, c)
                self._fields.append(f)
            rm = QtWidgets.QToolButton()
            rm.setText("−")
            rm.setToolTip(f"Remove segment {r + 1}")
            rm.setEnabled(len(segs) > 1)
            rm.clicked.connect(lambda _=False, r=r: self._remove_segment(r))
            grid.addWidget(rm, 2 * r + 1, 3)
        for c in range(3):
            grid.setColumnStretch(c, 1)
        lay.addLayout(grid)
        add = QtWidgets.QPushButton("Add segment")
        add.setToolTip("Append a segment at the driven end (a copy of the last one)")
        add.clicked.connect(self._add_segment)
        lay.addWidget(add, 0, QtCore.Qt.AlignLeft)

    def _link_copy(self):
        new = copy.deepcopy(self._doc)
        obj, index = self._find(new, self.selection)
        return new, obj

    def _add_segment(self):
        new, obj = self._link_copy()
        segs = obj.setdefault("segments", [])
        segs.append(copy.deepcopy(segs[-1]) if segs else {"length": "500 mm", "outer_diameter": "100 mm"})
        self.replaceRequested.emit(new, f"Add segment to '{obj.get('id')}'")

    def _remove_segment(self, r):
        new, obj = self._link_copy()
        del obj["segments"][r]
        self.replaceRequested.emit(new, f"Remove segment {r + 1} of '{obj.get('id')}'")

    def _change_kind(self, kind):
        new, obj = self._link_copy()
        if obj.get("kind") == kind:
            return
        old_k = link_stiffness_si(obj)
        obj["kind"] = kind
        for key in ("segments", "material", "mass"):
            obj.pop(key, None)
        if kind == "gear_mesh":
            obj.setdefault("speed_ratio", 1.0)
            obj.pop("stiffness", None)
        else:
            obj.pop("speed_ratio", None)
            if obj.get("stiffness") is None:
                obj["stiffness"] = (display_text(old_k, u.STIFFNESS, self.system) if old_k
                                    else "1 MN*m/rad")
        self.replaceRequested.emit(new, f"Make '{obj.get('id')}' a {kind.replace('_', ' ')}")

    def _change_definition(self, how):
        new, obj = self._link_copy()
        if how == "geometry":
            if obj.get("segments"):
                return
            obj.pop("stiffness", None)
            obj["segments"] = [{"length": "500 mm", "outer_diameter": "100 mm"}]
            obj.setdefault("material", "carbon_steel")
        else:
            k = link_stiffness_si(obj)
            for key in ("segments", "material", "mass"):
                obj.pop(key, None)
            obj["stiffness"] = display_text(k, u.STIFFNESS, self.system) if k else "1 MN*m/rad"
        self.replaceRequested.emit(new, f"Define '{obj.get('id')}' by {how}")

    def _change_material(self, name):
        new, obj = self._link_copy()
        if name == "custom":
            if isinstance(obj.get("material"), dict):
                return
            base = LIBRARY.get(obj.get("material"), LIBRARY["carbon_steel"])
            obj["material"] = {"name": "custom",
                               "shear_modulus": display_text(base.shear_modulus, u.MODULUS, self.system),
                               "density": display_text(base.density, u.DENSITY, self.system)}
        else:
            if obj.get("material") == name:
                return
            obj["material"] = name
        self.replaceRequested.emit(new, f"Material of '{obj.get('id')}'")


class _NoProject:
    """Stands in for the project where a form is redrawn without a model error to show."""

    @staticmethod
    def error_at(*_args):
        return None


def _narrow_form() -> QtWidgets.QFormLayout:
    """A form that puts labels above their fields when the pane is narrow."""
    form = QtWidgets.QFormLayout()
    form.setFieldGrowthPolicy(QtWidgets.QFormLayout.AllNonFixedFieldsGrow)
    form.setRowWrapPolicy(QtWidgets.QFormLayout.WrapLongRows)
    return form


def _get(doc, path):
    from .document import get_path
    return get_path(doc, path)


def _delete_layout(layout):
    while layout.count():
        item = layout.takeAt(0)
        if item.widget() is not None:
            item.widget().hide()
            item.widget().deleteLater()
        elif item.layout() is not None:
            _delete_layout(item.layout())


# ----------------------------------------------------------------- operating data
OPERATING_LEFT = [
    Spec("title", "Title", TEXT, "title"),
    Spec("description", "Description", TEXT, "description"),
    Spec("reference", "Reference disc", CHOICE, "reference", choices=lambda doc: disc_choices(doc)),
    Spec("margin_percent", "Required margin, %", NUMBER, "margin_percent", placeholder="10"),
    Spec("weak_excitation_below", "Weak excitation\nbelow", FRACTION, "weak_excitation_below",
         placeholder="e.g. 20 % (empty: none)"),
]


def element_choices(doc: dict) -> list[tuple[str, str]]:
    """(id, label) of every disc and every link that has a stiffness to choose (not a rigid
    gear mesh), named as the design options show them."""
    out = [(i, f"disc: {label}") for i, label in disc_choices(doc)]
    for l in doc.get("links", []) or []:
        if not isinstance(l, dict) or l.get("id") is None:
            continue
        if l.get("kind") == "gear_mesh" and edits.mesh_definition(l) == "rigid":
            continue
        out.append((l["id"], f"{str(l.get('kind', 'link')).replace('_', ' ')}: {l.get('name') or l['id']}"))
    return out


DESIGN_OPTION_SPECS = [Spec("", "Element", CHOICE, "design_options", choices=element_choices)]
SPEED_SPECS = [
    Spec("name", "Range name", TEXT, "speed.name"),
    Spec("min", "Minimum speed", u.SPEED, "speed.min", optional=False),
    Spec("max", "Maximum speed", u.SPEED, "speed.max"),
    Spec("trip", "Trip speed", u.SPEED, "speed.trip"),
]


class OperatingForm(QtWidgets.QWidget):
    """Project title, reference disc, margin and the operating speed range (the
    excitations have a tab of their own, :class:`app.gui.excitations_form.ExcitationsForm`)."""

    editRequested = QtCore.Signal(tuple, object, str)
    replaceRequested = QtCore.Signal(dict, str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.system = "SI"
        self._doc = {}
        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(6, 6, 6, 6)
        top = QtWidgets.QHBoxLayout()
        outer.addLayout(top)
        left, right = _narrow_form(), _narrow_form()
        top.addLayout(left, 1)
        top.addSpacing(12)
        top.addLayout(right, 1)
        self._specs = []
        for spec, w in add_spec_rows(left, OPERATING_LEFT, (), {}, self.system, self._commit):
            self._specs.append((spec, w))
        for spec, w in add_spec_rows(right, SPEED_SPECS, ("operating_speed",), {}, self.system, self._commit):
            self._specs.append((spec, w))
        self.fields = [w for _s, w in self._specs if isinstance(w, Field)]
        self.reference = next(w for s, w in self._specs if s.key == "reference")
        head = QtWidgets.QLabel("Design options: elements whose admissible values are shown "
                                "(every coupling's are)")
        head.setWordWrap(True)
        head.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        head.setToolTip(TIPS["design_options"])
        outer.addWidget(head)
        self.design_options = RowsEditor(DESIGN_OPTION_SPECS, "Add element", "element")
        self.design_options.committed.connect(self._commit)
        self.design_options.addRequested.connect(self._add_design_option)
        self.design_options.removeRequested.connect(lambda r: self.replaceRequested.emit(
            edits.list_remove(self._doc, ("design_options",), r), "Remove a design option"))
        outer.addWidget(self.design_options)
        self.problem = QtWidgets.QLabel()
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet(f"color: {theme.FAIL};")
        self.problem.hide()
        outer.addWidget(self.problem)
        outer.addStretch(1)

    def _commit(self, path, value):
        label = next((s.label for s, w in self._specs if w.path == tuple(path)), None)
        label = label or ("design option" if path[0] == "design_options" else str(path[-1]))
        self.editRequested.emit(path, value, f"Edit {label.lower()}")

    def _add_design_option(self):
        taken = self._doc.get("design_options") if isinstance(self._doc.get("design_options"), list) else []
        free = [i for i, _l in element_choices(self._doc) if i not in taken]
        links = {l.get("id") for l in self._doc.get("links", []) or [] if isinstance(l, dict)}
        free.sort(key=lambda i: i not in links)  # a link (a stiffness) first
        if free:
            self.replaceRequested.emit(edits.list_append(self._doc, ("design_options",), free[0]),
                                       "Add a design option")

    def refresh(self, doc, project, system, force: bool = False):
        import re
        self._doc, self.system = doc, system
        for spec, w in self._specs:
            key = ".".join(str(p) for p in w.path)
            problem = project.error_at("operating data", key) if w.path[0] != "title" else None
            show_spec_value(w, spec, doc, doc, _get(doc, w.path), system, problem, force)
        options = doc.get("design_options") if isinstance(doc.get("design_options"), list) else []
        option_problem = project.error_at("train", "design_options")
        entry = re.search(r"entry (\d+)", option_problem or "")
        self.design_options.show_rows(
            doc, ("design_options",), options, system,
            lambda r, key: option_problem if option_problem and (entry is None or int(entry.group(1)) == r + 1)
            else None, force)
        self.design_options.add_button.setEnabled(
            any(i not in options for i, _l in element_choices(doc)))
        err = project.error
        msg = None
        if err is not None and err.element == "operating data" and not any(
                err.field == ".".join(str(p) for p in w.path) for _s, w in self._specs):
            msg = str(err)
        self.problem.setText(msg or "")
        self.problem.setVisible(bool(msg))


def _tip_label(text, tooltip):
    lab = QtWidgets.QLabel(text)
    lab.setToolTip(tooltip)
    return lab


def is_finite_number(x) -> bool:
    return isinstance(x, (int, float)) and math.isfinite(x)
