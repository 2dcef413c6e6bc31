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

from PySide6 import QtCore, QtGui, QtWidgets

from core import units as u
from core.materials import LIBRARY
from core.model import GROUND, LINK_KINDS, MASS_MODELS

from . import theme
from .canvas import link_stiffness_si
from .quantities import _read, display_text, read_si  # noqa: F401 (re-exported)

NUMBER = "number"
TEXT = "text"

# Meaning and units of every field (tooltips).
TIPS = {
    "id": "Identifier used by links and excitations. Renaming a disc updates every reference to it.",
    "name": "Descriptive name shown on the schematic and in the results.",
    "inertia": "Polar mass moment of inertia about the shaft axis (kg*m^2, lb*ft^2, lb*in^2 ...).",
    "disc.damping": "Absolute viscous damping of the disc to ground (N*m*s/rad, lbf*in*s/rad); optional.",
    "kind": "shaft: elastic shaft; coupling: flexible coupling; gear_mesh: gear pair with a speed ratio.",
    "from": "Disc at the driving end of the link ('ground' for a rigid support).",
    "to": "Disc at the driven end of the link ('ground' for a rigid support).",
    "stiffness": "Torsional stiffness (N*m/rad, kN*m/rad, MN*m/rad, lbf*in/rad ...). "
                 "For a gear mesh: optional mesh stiffness; empty means a rigid mesh.",
    "speed_ratio": "Gear mesh speed ratio: speed of the 'to' disc / speed of the 'from' disc (plain number).",
    "mass": "Shaft's own inertia: none (massless spring), lumped (half to each end disc) or "
            "distributed (exact wave solution). Needs the geometry.",
    "link.damping": "Relative viscous damping across the link (N*m*s/rad); optional, used by the forced response.",
    "relative_damping": "Relative damping psi of a coupling (plain number, psi = 2 pi x loss factor); optional.",
    "permissible_torque": "Permissible vibratory torque amplitude of the link (N*m, kN*m, lbf*ft); optional.",
    "permissible_stress": "Permissible vibratory shear stress amplitude (MPa, ksi); optional.",
    "stress_concentration": "Stress concentration factor applied to the nominal shear stress (>= 1).",
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
    "exc.at": "Disc where the excitation acts; its shaft speed sets the order frequencies. "
              "'(fixed frequency)' for a source that does not follow the speed.",
    "exc.orders": "Orders per revolution of the source shaft, separated by commas (e.g. 1, 2, 17).",
    "exc.frequency": "Fixed excitation frequency (Hz, cpm) for a source that does not follow the speed.",
}


def tip(key: str, kind=None, system: str = "SI") -> str:
    text = TIPS.get(key, "")
    if isinstance(kind, u.Kind):
        text += f" Shown in {u.display_unit(kind, system)}; a bare number is read in that unit."
    return text


# ----------------------------------------------------------------- value helpers
def stored_value(text: str, kind, system: str):
    """What goes into the document for text the user typed (None: remove the key)."""
    text = text.strip()
    if not text:
        return None
    if isinstance(kind, u.Kind):
        try:
            float(text)
        except ValueError:
            return text
        return f"{text} {u.display_unit(kind, system)}"
    if kind == NUMBER:
        try:
            x = float(text)
        except ValueError:
            return text
        return int(x) if x.is_integer() and abs(x) < 1e15 else x
    return text


def text_problem(text: str, kind) -> str | None:
    """Problem with text typed into a field (None when it reads)."""
    text = text.strip()
    if not text:
        return None
    if isinstance(kind, u.Kind):
        try:
            float(text)
            return None
        except ValueError:
            return _read(text, kind)[1]
    if kind == NUMBER:
        try:
            u.parse_number(text)
        except Exception as exc:
            return getattr(exc, "message", str(exc))
    return None


ERROR_STYLE = f"border: 2px solid {theme.FAIL}; background: {theme.FAIL_FILL};"


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
        self.setToolTip(tip(tip_key, kind, system))
        if isinstance(kind, u.Kind):
            self.setPlaceholderText(f"e.g. {kind.example}")
        self.textEdited.connect(self._check)
        self.editingFinished.connect(self._finish)
        self.problem_label = QtWidgets.QLabel()
        self.problem_label.setWordWrap(True)
        self.problem_label.setStyleSheet(f"color: {theme.FAIL};")
        self.problem_label.hide()

    def show_value(self, stored, system: str, model_problem: str | None = None) -> None:
        self.system = system
        self.setToolTip(tip(self.tip_key, self.kind, system) +
                        (f"\nStored as: {stored}" if stored is not None else ""))
        if not self.hasFocus() or not self.isModified():
            self._shown = display_text(stored, self.kind, system)
            self.setText(self._shown)
            self.setCursorPosition(0)  # show the start of a long value
            self.setModified(False)
        self._model_problem = model_problem
        self._check()

    def _check(self, *_):
        problem = text_problem(self.text(), self.kind)
        if problem is None and not self.text().strip() and not self.optional:
            problem = "a value is required"
        if problem is None and self.text() == self._shown:
            problem = self._model_problem
        self.setStyleSheet(ERROR_STYLE if problem else "")
        self.problem_label.setText(problem or "")
        self.problem_label.setVisible(bool(problem))

    def _finish(self):
        if self.text() == self._shown:
            return
        self._shown = self.text()
        self.setModified(False)
        self.committed.emit(self.path, stored_value(self.text(), self.kind, self.system))


# ----------------------------------------------------------------- tables
class _ChoiceDelegate(QtWidgets.QStyledItemDelegate):
    """A combo box editor for columns with a fixed list of choices."""

    def __init__(self, choices, parent=None):
        super().__init__(parent)
        self.choices = choices  # callable -> list[str]

    def createEditor(self, parent, option, index):
        box = QtWidgets.QComboBox(parent)
        box.addItems(self.choices())
        return box

    def setEditorData(self, editor, index):
        i = editor.findText(index.data())
        editor.setCurrentIndex(max(i, 0))

    def setModelData(self, editor, model, index):
        model.setData(index, editor.currentText())


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

    def refresh(self, doc: dict, project, system: str) -> None:
        self.system = system
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
                       and project.error.element == element else None)
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
                shown = display_text(stored, kind, system) if note is None else note
                item = self.item(r, c)
                if item is None:
                    item = QtWidgets.QTableWidgetItem()
                    self.setItem(r, c, item)
                item.setText(shown)
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
                if stored is not None and isinstance(kind, u.Kind):
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

    def _item_changed(self, item):
        if self._updating:
            return
        meta = self._meta.get((item.row(), item.column()))
        if meta is None:
            return
        path, kind, shown, ident = meta
        text = item.text()
        if text == shown:
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
               ("Damping to ground", "damping", u.DAMPING, "disc.damping")]

    def __init__(self, parent=None):
        super().__init__(parent)
        # the name takes the width the others leave (elided, in full in its tooltip), so
        # inertia and damping stay in view in a narrow pane (1366 x 768 screens)
        h = self.horizontalHeader()
        h.setStretchLastSection(False)
        h.setMinimumSectionSize(60)
        h.setDefaultAlignment(QtCore.Qt.AlignLeft | QtCore.Qt.AlignVCenter)  # a cut header keeps its start
        self.setColumnWidth(0, 88)
        self.setColumnWidth(2, 118)
        self.setColumnWidth(3, 100)
        h.setSectionResizeMode(1, QtWidgets.QHeaderView.Stretch)


class LinkTable(DocTable):
    element_kind = "link"
    list_key = "links"
    columns = [("Id", "id", TEXT, "id"), ("Kind", "kind", TEXT, "kind"),
               ("From", "from", TEXT, "from"), ("To", "to", TEXT, "to"),
               ("Stiffness", "stiffness", u.STIFFNESS, "stiffness"),
               ("Speed ratio", "speed_ratio", NUMBER, "speed_ratio"),
               ("Shaft inertia", "mass", TEXT, "mass")]

    def __init__(self, parent=None):
        super().__init__(parent)
        self.disc_choices = lambda: []
        self.setItemDelegateForColumn(1, _ChoiceDelegate(lambda: list(LINK_KINDS), self))
        ends = _ChoiceDelegate(lambda: self.disc_choices() + [GROUND], self)
        self.setItemDelegateForColumn(2, ends)
        self.setItemDelegateForColumn(3, ends)
        self.setItemDelegateForColumn(6, _ChoiceDelegate(lambda: list(MASS_MODELS), self))
        for c, w in enumerate((110, 80, 95, 95, 130, 80)):
            self.setColumnWidth(c, w)

    def cell_value(self, obj, key):
        kind = obj.get("kind")
        if key == "stiffness" and obj.get("stiffness") is None:
            if kind == "shaft" and obj.get("segments"):
                k = link_stiffness_si(obj)
                note = ("from geometry: " + display_text(k, u.STIFFNESS, self.system)) if k else "from geometry"
                return None, False, note
            if kind == "gear_mesh":
                return None, True, "rigid"
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
        if meta and meta[0][-1] == "stiffness" and item.text() == "rigid":
            return
        super()._item_changed(item)


# ----------------------------------------------------------------- property form
class PropertyForm(QtWidgets.QScrollArea):
    """The selected disc or link with every field, the shaft's segments and material."""

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
        self._doc = {}
        self.selection = None
        self.system = "SI"
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

    def _placeholder(self):
        self._clear()
        lab = QtWidgets.QLabel("Select a disc or link on the schematic or in a table to edit all "
                               "of its properties here.")
        lab.setWordWrap(True)
        lab.setStyleSheet(f"color: {theme.INK_MUTED};")
        self._body.layout().addWidget(lab)
        self._body.layout().addStretch(1)

    def show_element(self, doc: dict, selection, project, system: str) -> None:
        self._doc, self.selection, self.system = doc, selection, system
        obj, index = self._find(doc, selection)
        if obj is None:
            self._signature = None
            self._placeholder()
            return
        sig = self._structure(obj, selection, index, system)
        if sig != self._signature:
            self._signature = sig
            self._build(obj, index, selection, project)
        for f in self._fields:
            f.show_value(_get(doc, f.path), system, self._model_problem(project, f.path))

    @staticmethod
    def _find(doc, selection):
        if not selection:
            return None, None
        key = "discs" if selection[0] == "disc" else "links"
        for i, x in enumerate(doc.get(key, [])):
            if isinstance(x, dict) and x.get("id") == selection[1]:
                return x, i
        return None, None

    def _structure(self, obj, selection, index, system):
        segs = obj.get("segments")
        mat = obj.get("material")
        return (selection, index, system, obj.get("kind"), obj.get("stiffness") is None,
                len(segs) if isinstance(segs, list) else None, isinstance(mat, dict),
                mat if isinstance(mat, str) else None, obj.get("mass"))

    def _model_problem(self, project, path):
        obj, _ = self._find(self._doc, self.selection)
        if obj is None:
            return None
        element = f"{self.selection[0]} '{obj.get('id')}'"
        if len(path) >= 4 and path[2] == "segments":
            return project.error_at(f"{element} segment {path[3] + 1}", path[-1])
        if len(path) >= 4 and path[2] == "material":
            return project.error_at(element, f"material.{path[-1]}")
        return project.error_at(element, path[-1])

    def _add_field(self, form, label, path, kind, tip_key, optional=True):
        f = Field(path, kind, tip_key, self.system, optional)
        f.committed.connect(self._commit)
        lab = QtWidgets.QLabel(label)
        lab.setToolTip(f.toolTip())
        box = QtWidgets.QVBoxLayout()
        box.setSpacing(1)
        box.addWidget(f)
        box.addWidget(f.problem_label)
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
        if path[-1] == "id" and self.selection[0] == "disc":
            if value:
                self.renameRequested.emit(self.selection[1], str(value))
            return
        self.editRequested.emit(path, value, f"Edit {self.selection[0]} '{obj.get('id')}' {path[-1]}")

    def _build(self, obj, index, selection, project):
        self._clear()
        lay = self._body.layout()
        kind = selection[0]
        heading = QtWidgets.QLabel(f"{'Disc' if kind == 'disc' else str(obj.get('kind', 'link')).replace('_', ' ').capitalize()}"
                                   f" '{obj.get('id')}'")
        heading.setFont(theme.font(theme.TITLE_POINT_SIZE, bold=True))
        heading.setWordWrap(True)
        lay.addWidget(heading)
        form = _narrow_form()
        lay.addLayout(form)
        base = ("discs" if kind == "disc" else "links", index)
        self._add_field(form, "Id", base + ("id",), TEXT, "id", optional=False)
        if kind == "disc":
            self._add_field(form, "Name", base + ("name",), TEXT, "name")
            self._add_field(form, "Inertia", base + ("inertia",), u.INERTIA, "inertia", optional=False)
            self._add_field(form, "Damping to ground", base + ("damping",), u.DAMPING, "disc.damping")
            lay.addStretch(1)
            return
        ends = [d.get("id") for d in self._doc.get("discs", []) if isinstance(d, dict)] + [GROUND]
        self._combo(form, "Kind", list(LINK_KINDS), obj.get("kind"), "kind", self._change_kind)
        self._combo(form, "From", ends, obj.get("from"), "from",
                    lambda t: self.editRequested.emit(base + ("from",), t, f"Edit link '{obj.get('id')}' from"))
        self._combo(form, "To", ends, obj.get("to"), "to",
                    lambda t: self.editRequested.emit(base + ("to",), t, f"Edit link '{obj.get('id')}' to"))
        lk = obj.get("kind")
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
                if isinstance(mat, dict):
                    self._add_field(form2, "Shear modulus", base + ("material", "shear_modulus"), u.MODULUS,
                                    "shear_modulus", optional=False)
                    self._add_field(form2, "Density", base + ("material", "density"), u.DENSITY, "density",
                                    optional=False)
                elif mat in LIBRARY:
                    m = LIBRARY[mat]
                    note = QtWidgets.QLabel(f"G = {display_text(m.shear_modulus, u.MODULUS, self.system)}, "
                                            f"ρ = {display_text(m.density, u.DENSITY, self.system)}")
                    note.setToolTip(m.source)
                    note.setWordWrap(True)
                    note.setStyleSheet(f"color: {theme.INK_MUTED};")
                    form2.addRow("", note)
                self._combo(form2, "Shaft inertia", list(MASS_MODELS), obj.get("mass") or "none", "mass",
                            lambda t: self.editRequested.emit(base + ("mass",), None if t == "none" else t,
                                                              f"Edit link '{obj.get('id')}' mass"))
                form = form2
            else:
                self._add_field(form, "Stiffness", base + ("stiffness",), u.STIFFNESS, "stiffness", optional=False)
        elif lk == "coupling":
            self._add_field(form, "Stiffness", base + ("stiffness",), u.STIFFNESS, "stiffness", optional=False)
            self._add_field(form, "Relative damping ψ", base + ("relative_damping",), NUMBER, "relative_damping")
        else:
            self._add_field(form, "Speed ratio", base + ("speed_ratio",), NUMBER, "speed_ratio", optional=False)
            self._add_field(form, "Mesh stiffness", base + ("stiffness",), u.STIFFNESS, "stiffness")
        self._add_field(form, "Damping", base + ("damping",), u.DAMPING, "link.damping")
        self._add_field(form, "Permissible torque", base + ("permissible_torque",), u.TORQUE, "permissible_torque")
        if lk == "shaft":
            self._add_field(form, "Permissible stress", base + ("permissible_stress",), u.STRESS,
                            "permissible_stress")
            self._add_field(form, "Stress concentration", base + ("stress_concentration",), NUMBER,
                            "stress_concentration")
        lay.addStretch(1)

    def _segments(self, lay, obj, base):
        head = QtWidgets.QLabel("Segments, in series from the 'from' end")
        head.setWordWrap(True)
        lay.addWidget(head)
        grid = QtWidgets.QGridLayout()
        grid.setHorizontalSpacing(4)
        for c, (h, key) in enumerate((("Length", "length"), ("Outer Ø", "outer_diameter"),
                                      ("Bore Ø", "inner_diameter"))):
            lab = QtWidgets.QLabel(h)
            lab.setToolTip(TIPS[key])
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
FIXED = "(fixed frequency)"


def orders_text(orders) -> str:
    out = []
    for o in orders or []:
        v = o.get("order") if isinstance(o, dict) else o
        out.append(f"{v:g}" if isinstance(v, (int, float)) else str(v))
    return ", ".join(out)


def parse_orders(text: str, old) -> list:
    """Comma-separated orders; a dict order (with an amplitude) keeps its other keys."""
    out = []
    old = list(old or [])
    for i, part in enumerate(p.strip() for p in text.replace(";", ",").split(",")):
        if not part:
            continue
        try:
            x = float(part)
            v = int(x) if x.is_integer() else x
        except ValueError:
            v = part
        if i < len(old) and isinstance(old[i], dict):
            d = dict(old[i])
            d["order"] = v
            out.append(d)
        else:
            out.append(v)
    return out


class OperatingForm(QtWidgets.QWidget):
    """Project title, reference disc, speeds, margin and the excitations list."""

    editRequested = QtCore.Signal(tuple, object, str)
    replaceRequested = QtCore.Signal(dict, str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.system = "SI"
        self._doc = {}
        self._updating = False
        outer = QtWidgets.QVBoxLayout(self)
        outer.setContentsMargins(6, 6, 6, 6)
        top = QtWidgets.QHBoxLayout()
        outer.addLayout(top)
        left, right = QtWidgets.QFormLayout(), QtWidgets.QFormLayout()
        top.addLayout(left, 1)
        top.addSpacing(12)
        top.addLayout(right, 1)
        self.fields: list[Field] = []

        def add(form, label, path, kind, key, optional=True):
            f = Field(path, kind, key, self.system, optional)
            f.committed.connect(lambda p, v, lab=label: self.editRequested.emit(p, v, f"Edit {lab.lower()}"))
            box = QtWidgets.QVBoxLayout()
            box.setSpacing(1)
            box.addWidget(f)
            box.addWidget(f.problem_label)
            lab = QtWidgets.QLabel(label)
            lab.setToolTip(f.toolTip())
            form.addRow(lab, box)
            self.fields.append(f)
            return f

        add(left, "Title", ("title",), TEXT, "title")
        self.reference = QtWidgets.QComboBox()
        self.reference.setToolTip(TIPS["reference"])
        self.reference.currentTextChanged.connect(self._reference_changed)
        left.addRow(_tip_label("Reference disc", TIPS["reference"]), self.reference)
        add(left, "Required margin, %", ("margin_percent",), NUMBER, "margin_percent")
        add(left, "Range name", ("operating_speed", "name"), TEXT, "speed.name")
        add(right, "Minimum speed", ("operating_speed", "min"), u.SPEED, "speed.min", optional=False)
        add(right, "Maximum speed", ("operating_speed", "max"), u.SPEED, "speed.max")
        add(right, "Trip speed", ("operating_speed", "trip"), u.SPEED, "speed.trip")
        self.problem = QtWidgets.QLabel()
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet(f"color: {theme.FAIL};")
        self.problem.hide()
        outer.addWidget(self.problem)
        row = QtWidgets.QHBoxLayout()
        row.addWidget(QtWidgets.QLabel("Excitations"))
        row.addStretch(1)
        add_btn = QtWidgets.QPushButton("Add excitation")
        add_btn.setToolTip("Append an excitation source acting at the reference disc")
        add_btn.clicked.connect(self._add_excitation)
        self.remove_btn = QtWidgets.QPushButton("Remove")
        self.remove_btn.setToolTip("Remove the selected excitation")
        self.remove_btn.clicked.connect(self._remove_excitation)
        row.addWidget(add_btn)
        row.addWidget(self.remove_btn)
        outer.addLayout(row)
        self.table = QtWidgets.QTableWidget(0, 4)
        self.table.setHorizontalHeaderLabels(["Name", "Acts at disc", "Orders", "Fixed frequency"])
        for c, key in enumerate(("exc.name", "exc.at", "exc.orders", "exc.frequency")):
            self.table.horizontalHeaderItem(c).setToolTip(TIPS[key])
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(24)
        self.table.setAlternatingRowColors(True)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.setColumnWidth(0, 240)
        self.table.setColumnWidth(1, 120)
        self.table.setColumnWidth(2, 110)
        self.table.setItemDelegateForColumn(1, _ChoiceDelegate(
            lambda: [d.get("id") for d in self._doc.get("discs", []) if isinstance(d, dict)] + [FIXED], self))
        self.table.itemChanged.connect(self._exc_changed)
        self.table.setMinimumHeight(100)
        outer.addWidget(self.table, 1)

    def refresh(self, doc, project, system):
        self._doc, self.system = doc, system
        self._updating = True
        ids = [d.get("id") for d in doc.get("discs", []) if isinstance(d, dict)]
        self.reference.blockSignals(True)
        self.reference.clear()
        self.reference.addItems([str(i) for i in ids])
        ref = doc.get("reference")
        if ref is not None and ref not in ids:
            self.reference.addItem(str(ref))
        self.reference.setCurrentText(str(ref) if ref is not None else "")
        self.reference.blockSignals(False)
        for f in self.fields:
            key = ".".join(str(p) for p in f.path)
            f.show_value(_get(doc, f.path), system, project.error_at("operating data", key)
                         if f.path[0] != "title" else None)
        err = project.error
        msg = None
        if err is not None and (err.element == "operating data" or (err.element or "").startswith("excitation")):
            msg = str(err)
        self.problem.setText(msg or "")
        self.problem.setVisible(bool(msg))
        exc = [e for e in doc.get("excitations", []) or [] if isinstance(e, dict)]
        self.table.setRowCount(len(exc))
        for r, e in enumerate(exc):
            fixed = e.get("frequency") is not None
            values = [str(e.get("name", "")), FIXED if fixed else str(e.get("at", "")),
                      "" if fixed else orders_text(e.get("orders")),
                      display_text(e.get("frequency"), u.FREQUENCY, system) if fixed else ""]
            name = str(e.get("name") or f"Excitation {r + 1}")
            problem = None
            if err is not None and (err.element or "").startswith(f"excitation '{name}'"):
                problem = err.message
            for c, v in enumerate(values):
                item = self.table.item(r, c) or QtWidgets.QTableWidgetItem()
                if self.table.item(r, c) is None:
                    self.table.setItem(r, c, item)
                item.setText(v)
                item.setToolTip(TIPS[("exc.name", "exc.at", "exc.orders", "exc.frequency")[c]])
                flags = QtCore.Qt.ItemIsSelectable | QtCore.Qt.ItemIsEnabled | QtCore.Qt.ItemIsEditable
                if (c == 2 and fixed):
                    flags &= ~QtCore.Qt.ItemIsEditable
                item.setFlags(flags)
                if problem:
                    item.setBackground(theme.qcolor(theme.FAIL_FILL))
                    item.setToolTip(f"Problem: {problem}\n\n" + item.toolTip())
                else:
                    item.setData(QtCore.Qt.BackgroundRole, None)
        self._updating = False

    def _reference_changed(self, text):
        if text:
            self.editRequested.emit(("reference",), text, "Change reference disc")

    def _exc_changed(self, item):
        if self._updating:
            return
        r, c = item.row(), item.column()
        new = copy.deepcopy(self._doc)
        excs = [e for e in new.get("excitations", []) if isinstance(e, dict)]
        if r >= len(excs):
            return
        e = excs[r]
        text = item.text().strip()
        if c == 0:
            e["name"] = text
        elif c == 1:
            if text == FIXED:
                if e.get("frequency") is None:
                    e.pop("at", None)
                    e.pop("orders", None)
                    e["frequency"] = "100 Hz"
            else:
                e["at"] = text
                if e.get("frequency") is not None:
                    e.pop("frequency", None)
                    e["orders"] = [1]
        elif c == 2:
            e["orders"] = parse_orders(text, e.get("orders"))
        elif c == 3:
            if text:
                e.pop("at", None)
                e.pop("orders", None)
                e["frequency"] = stored_value(text, u.FREQUENCY, self.system)
            elif e.get("frequency") is not None:
                e.pop("frequency", None)
                e["at"] = new.get("reference")
                e["orders"] = [1]
        if new != self._doc:
            self.replaceRequested.emit(new, f"Edit excitation '{e.get('name', r + 1)}'")

    def _add_excitation(self):
        new = copy.deepcopy(self._doc)
        excs = new.setdefault("excitations", [])
        at = new.get("reference") or (new.get("discs") or [{}])[0].get("id")
        excs.append({"name": f"Excitation {len(excs) + 1}", "at": at, "orders": [1]})
        self.replaceRequested.emit(new, "Add excitation")

    def _remove_excitation(self):
        r = self.table.currentRow()
        excs = self._doc.get("excitations") or []
        if not 0 <= r < len(excs):
            return
        new = copy.deepcopy(self._doc)
        del new["excitations"][r]
        self.replaceRequested.emit(new, "Remove excitation")


def _tip_label(text, tooltip):
    lab = QtWidgets.QLabel(text)
    lab.setToolTip(tooltip)
    return lab


def is_finite_number(x) -> bool:
    return isinstance(x, (int, float)) and math.isfinite(x)
