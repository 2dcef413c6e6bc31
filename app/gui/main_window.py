"""The desktop program's main window: schematic, forms, live results, files.

``run_gui(path_or_None)`` opens the window (on the bundled compressor-train
sample without a path); ``cmd_screenshot(args)`` renders it offscreen to a
PNG for the README and visual checks (``twistwise screenshot FILE -o PNG``).
"""
from __future__ import annotations

import datetime
import json
import os
import re
import sys
import uuid
from pathlib import Path

from PySide6 import QtCore, QtGui, QtWidgets

from core.about import CAUTION
from core.errors import ModelError
from core.project import ProjectFileError, backup_paths, load_document

from .. import formatting as fmt
from ..wording import headline
from . import edits, theme
from .canvas import TrainCanvas
from .compute import ResultsRunner
from .document import Project
from .editors import Field, disc_choices
from .excitations_form import ExcitationsForm
from .forms import DiscTable, LinkTable, OperatingForm, PropertyForm
from .loads_form import LoadCasesForm
from .transients_form import TransientsForm

SAMPLES_DIR = Path(__file__).resolve().parent.parent.parent / "sample_projects"
DEFAULT_SAMPLE = SAMPLES_DIR / "compressor_train.json"
APP_NAME = "Twistwise"
MAX_RECENT = 8
AUTOSAVE_MS = 20_000


def modes_status(res) -> str:
    """'N elastic modes (M above the screening limit)' for the status bar."""
    modes = res.modes
    n_el = int(modes.elastic.sum())
    text = f"{n_el} elastic mode{'s' if n_el != 1 else ''}"
    study = getattr(res, "study", None)
    above = getattr(study, "above_screening_limit", None) if study is not None else None
    if above is not None and len(above) == len(modes.frequency_hz):
        m = int(above.sum())
        if m:
            text += f" ({m} above the screening limit)"
    return text


def headline_summary(study) -> tuple[str, bool | None]:
    """A status-bar verdict from the headline (:func:`app.wording.headline`): its first word
    (PASS, FAIL, OPEN) with what it rests on, and its colour value."""
    if study is None:
        return "no results", None
    try:
        text, ok = headline(study)
    except Exception as exc:  # never a traceback in the status bar
        return f"no verdict ({type(exc).__name__})", None
    word = text.split(" — ", 1)[0]
    s = study.screening
    if s is None or getattr(study, "screening_error", None) is not None:
        return ("no screening (no operating data)" if s is None else "no verdict (cannot screen)"), None
    parts = []
    arg = getattr(study, "argument", None) if not s.passed else None
    if arg is not None:
        for basis, what in (("forced_response", "accepted on the forced response"), ("fail", "failing"),
                            ("open", "not yet accepted")):
            n = len(arg.forced_response) if basis == "forced_response" else sum(
                1 for m in arg.modes if m.basis == basis)
            if n:
                parts.append(f"{n} mode{'s' if n != 1 else ''} {what}")
    elif not s.passed:
        parts.append(f"{len(s.failures)} inside the margin")
    if ok is not True and getattr(study, "acceptance_failed", False):
        n = len(study.acceptance.failures)
        parts.append(f"{n} check{'s' if n != 1 else ''} fail{'' if n != 1 else 's'}")
    if word == "PASS" and not parts:
        return "PASS", True
    return (f"{word} ({'; '.join(parts)})" if parts else word), ok


def samples() -> list[Path]:
    return sorted(SAMPLES_DIR.glob("*.json"))


def recovery_dir() -> Path:
    base = QtCore.QStandardPaths.writableLocation(QtCore.QStandardPaths.AppDataLocation)
    return Path(base or Path.home() / ".twistwise") / "recovery"


# ----------------------------------------------------------------- results placeholder
class _PlainResults(QtWidgets.QWidget):
    """Stand-in with the ResultsPanel API, used only if app.gui.results cannot be imported."""

    modeSelected = QtCore.Signal(int)

    def __init__(self, parent=None, reason: str = ""):
        super().__init__(parent)
        lay = QtWidgets.QVBoxLayout(self)
        self.note = QtWidgets.QLabel(f"Result views not available ({reason}); natural frequencies only.")
        self.note.setWordWrap(True)
        self.table = QtWidgets.QTableWidget(0, 4)
        self.table.setHorizontalHeaderLabels(["Mode", "Hz", "cpm", "Largest strain energy"])
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.NoEditTriggers)
        self.table.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectRows)
        self.table.currentCellChanged.connect(lambda r, *_: self.modeSelected.emit(r) if r >= 0 else None)
        lay.addWidget(self.note)
        lay.addWidget(self.table)
        self.setMinimumSize(420, 300)

    def set_results(self, train, modes, screening, response=None, solve_time_s=0.0):
        self.table.blockSignals(True)
        self.table.setRowCount(len(modes))
        for i in range(len(modes)):
            dom = "rigid-body mode" if modes.rigid_body[i] else (modes.dominant_link(i) or "—")
            for c, v in enumerate((str(int(modes.number[i])), fmt.hz(modes.frequency_hz[i]),
                                   fmt.cpm(modes.frequency_hz[i]), dom)):
                self.table.setItem(i, c, QtWidgets.QTableWidgetItem(v))
        self.table.blockSignals(False)

    def clear_results(self, message):
        self.table.setRowCount(0)
        self.note.setText(message)

    def select_mode(self, index):
        self.table.blockSignals(True)
        self.table.selectRow(index)
        self.table.blockSignals(False)

    def export_menu_actions(self, parent):
        return []


def _results_panel(parent):
    try:
        from .results import ResultsPanel
    except Exception as exc:  # the window still opens while the views are missing
        return _PlainResults(parent, f"{type(exc).__name__}: {exc}")
    try:
        return ResultsPanel(parent, show_caution=False)
    except TypeError:
        return ResultsPanel(parent)


# ----------------------------------------------------------------- forms tabs
class FormsTabs(QtWidgets.QWidget):
    """The forms' tabs with the tab bar across the whole forms area: the pages on the left
    of ``split`` (a splitter the window adds the property form to), so the six tabs fit
    over the tables and the property form together.  The part of the QTabWidget API the
    window and its tests use."""

    currentChanged = QtCore.Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(0)
        self.bar = QtWidgets.QTabBar()
        self.bar.setDocumentMode(True)
        self.bar.setExpanding(False)
        self.bar.setUsesScrollButtons(True)  # only where even the whole width is too narrow
        self.bar.setDrawBase(True)
        lay.addWidget(self.bar)
        self.stack = QtWidgets.QStackedWidget()
        self.split = QtWidgets.QSplitter(QtCore.Qt.Horizontal)
        self.split.addWidget(self.stack)
        lay.addWidget(self.split, 1)
        self.bar.currentChanged.connect(self._changed)

    def _changed(self, index):
        self.stack.setCurrentIndex(index)
        self.currentChanged.emit(index)

    def addTab(self, widget, text: str) -> int:
        self.stack.addWidget(widget)
        return self.bar.addTab(text)

    def setTabToolTip(self, index: int, text: str) -> None:
        self.bar.setTabToolTip(index, text)

    def tabBar(self) -> QtWidgets.QTabBar:
        return self.bar

    def count(self) -> int:
        return self.bar.count()

    def widget(self, index: int):
        return self.stack.widget(index)

    def indexOf(self, widget) -> int:
        return self.stack.indexOf(widget)

    def currentIndex(self) -> int:
        return self.bar.currentIndex()

    def setCurrentIndex(self, index: int) -> None:
        self.bar.setCurrentIndex(index)

    def currentWidget(self):
        return self.stack.currentWidget()

    def setCurrentWidget(self, widget) -> None:
        self.bar.setCurrentIndex(self.stack.indexOf(widget))

    def tabText(self, index: int) -> str:
        return self.bar.tabText(index)


# ----------------------------------------------------------------- main window
class MainWindow(QtWidgets.QMainWindow):
    def __init__(self, settings: QtCore.QSettings | None = None, autosave: bool = True):
        super().__init__()
        self.settings = settings or QtCore.QSettings(APP_NAME, APP_NAME)
        self.system = str(self.settings.value("unit_system", "SI"))
        if self.system not in ("SI", "US"):
            self.system = "SI"
        self.selection = None
        self.results = None  # last compute.Results shown
        self._closing = False
        self._solve_error = None  # why the last solve of a model that built failed
        self._stale_forms: set = set()
        self._forced_forms: set = set()
        self.last_delete_changes: list[str] = []
        self.project = Project(self)
        self.runner = ResultsRunner(self)
        self._recovery_path = recovery_dir() / f"unsaved-{uuid.uuid4().hex[:12]}.json"
        self._build_widgets()
        self._build_actions()
        self._connect()
        if hasattr(self.results_panel, "set_unit_system"):
            self.results_panel.set_unit_system(self.system)  # the saved choice, from the start
        self.setMinimumSize(1024, 640)
        self.resize(1600, 1000)
        self._autosave = QtCore.QTimer(self)
        self._autosave.setInterval(AUTOSAVE_MS)
        self._autosave.timeout.connect(self.write_recovery)
        if autosave:
            self._autosave.start()

    # ------------------------------------------------------------ widgets
    def _build_widgets(self):
        self.caution = QtWidgets.QLabel("⚠  " + CAUTION)
        self.caution.setObjectName("caution")
        self.caution.setWordWrap(True)
        self.caution.setStyleSheet(theme.CAUTION_STYLE + " font-weight: bold;")
        self.caution.setToolTip("Shown at all times; the review sheet carries the same note.")

        self.canvas = TrainCanvas()
        self.canvas.setToolTip("The train as drawn from the project: click to select, right-click to "
                               "insert or delete, wheel to zoom, drag to pan.")
        self.mode_note = QtWidgets.QLabel()
        self.mode_note.setStyleSheet(f"color: {theme.INK_MUTED};")
        canvas_box = QtWidgets.QWidget()
        cl = QtWidgets.QVBoxLayout(canvas_box)
        cl.setContentsMargins(0, 0, 0, 0)
        cl.setSpacing(2)
        cl.addWidget(self.canvas, 1)
        cl.addWidget(self.mode_note)

        # the model's error floats over the foot of the schematic: it never changes the
        # height of anything, so the form being edited below does not move when it comes or goes
        self.error_banner = QtWidgets.QLabel(canvas_box)
        self.error_banner.setWordWrap(True)
        self.error_banner.setStyleSheet(f"color: {theme.FAIL}; background: {theme.FAIL_FILL}; "
                                        f"border: 1px solid {theme.FAIL}; padding: 4px 8px;")
        self.error_banner.hide()
        self._canvas_box = canvas_box
        canvas_box.installEventFilter(self)

        self.disc_table = DiscTable()
        self.link_table = LinkTable()
        self.link_table.disc_choices = lambda: disc_choices(self.project.doc)
        self.operating_form = OperatingForm()
        self.excitations_form = ExcitationsForm()
        self.load_cases_form = LoadCasesForm()
        self.transients_form = TransientsForm()
        self.tabs = FormsTabs()
        self.tabs.addTab(self.disc_table, "Discs")
        self.tabs.addTab(self.link_table, "Links")
        self.tabs.addTab(self.operating_form, "Operation")
        self.tabs.addTab(self.excitations_form, "Excitations")
        self.tabs.addTab(self.load_cases_form, "Loads")
        self.tabs.addTab(self.transients_form, "Transients")
        self.tabs.setTabToolTip(0, "Inertia discs: double-click a cell to edit")
        self.tabs.setTabToolTip(1, "Shafts, couplings and gear meshes: double-click a cell to edit")
        self.tabs.setTabToolTip(2, "Title, reference disc, speed range, margin and design options")
        self.tabs.setTabToolTip(3, "Excitation sources: orders, amplitudes, phases, engine cylinders, "
                                   "fixed frequencies, engines from their data, electric-drive lines")
        self.tabs.setTabToolTip(4, "Load cases: the mean torque transmitted against speed, where it goes, "
                                   "excitation factors and misfires")
        self.tabs.setTabToolTip(5, "Transient events: torques at discs over time (start-ups, short "
                                   "circuits, load steps)")
        #: the forms tabs without a selected disc or link (they take the full width)
        self.list_forms = (self.operating_form, self.excitations_form, self.load_cases_form,
                           self.transients_form)
        self.property_form = PropertyForm()
        # the operating data have no selected element: give that tab the full width
        self.tabs.currentChanged.connect(self._forms_tab_changed)

        # the tab bar spans the tables and the property form, so all six tabs fit at 1366 x 768
        forms = self.tabs.split
        forms.addWidget(self.property_form)
        forms.setStretchFactor(0, 3)
        forms.setStretchFactor(1, 2)
        forms.setChildrenCollapsible(False)
        lower = QtWidgets.QWidget()
        ll = QtWidgets.QVBoxLayout(lower)
        ll.setContentsMargins(0, 0, 0, 0)
        ll.setSpacing(3)
        ll.addWidget(self.tabs, 1)

        left = QtWidgets.QSplitter(QtCore.Qt.Vertical)
        left.addWidget(canvas_box)
        left.addWidget(lower)
        left.setStretchFactor(0, 2)
        left.setStretchFactor(1, 3)
        left.setChildrenCollapsible(False)

        self.results_panel = _results_panel(self)
        self.main_split = QtWidgets.QSplitter(QtCore.Qt.Horizontal)
        self.main_split.addWidget(left)
        self.main_split.addWidget(self.results_panel)
        self.main_split.setStretchFactor(0, 5)
        self.main_split.setStretchFactor(1, 6)
        self.main_split.setChildrenCollapsible(False)
        self.left_split, self.forms_split = left, forms
        # starting proportions (the splitters keep them as the window is resized)
        self.main_split.setSizes([760, 840])
        left.setSizes([380, 520])
        forms.setSizes([400, 320])

        central = QtWidgets.QWidget()
        v = QtWidgets.QVBoxLayout(central)
        v.setContentsMargins(6, 4, 6, 4)
        v.setSpacing(4)
        v.addWidget(self.caution)
        v.addWidget(self.main_split, 1)
        self.setCentralWidget(central)

        sb = self.statusBar()
        self.status_verdict = QtWidgets.QLabel("—")
        self.status_modes = QtWidgets.QLabel("")
        self.status_time = QtWidgets.QLabel("")
        self.status_units = QtWidgets.QLabel("")
        for w in (self.status_verdict, self.status_modes, self.status_time, self.status_units):
            sb.addPermanentWidget(w)
        self.status_verdict.setToolTip("Screening verdict of the model now showing")
        self.status_modes.setToolTip("Elastic modes shown; those above the screening limit are shown "
                                     "and marked but not screened")
        self.status_time.setToolTip("Time of the last solve (modes, screening and forced response)")

    # ------------------------------------------------------------ actions
    def _act(self, text, slot, shortcut=None, tip="", icon=None):
        a = QtGui.QAction(text, self)
        if shortcut is not None:
            a.setShortcut(QtGui.QKeySequence(shortcut))
        if icon is not None:
            a.setIcon(self.style().standardIcon(icon))
        full = tip or text.rstrip("…")
        if shortcut is not None:
            full += f" ({a.shortcut().toString(QtGui.QKeySequence.NativeText)})"
        a.setToolTip(full)
        a.setStatusTip(full)
        a.triggered.connect(lambda _=False: slot())
        return a

    def _build_actions(self):
        S = QtWidgets.QStyle.StandardPixmap
        K = QtGui.QKeySequence.StandardKey
        self.act_new = self._act("&New blank train", self.new_blank, K.New, "Start a new train", S.SP_FileIcon)
        self.act_open = self._act("&Open…", self.open_dialog, K.Open, "Open a project file", S.SP_DialogOpenButton)
        self.act_save = self._act("&Save", self.save, K.Save, "Save the project (the file it replaces is "
                                  "kept as NAME.json.bak1, older ones as bak2 and bak3)", S.SP_DialogSaveButton)
        self.act_save_as = self._act("Save &as…", self.save_as, K.SaveAs, "Save under a new name")
        self.act_sheet = self._act("Export review sheet (PDF)…", self.export_review_sheet, "Ctrl+P",
                                   "Write the PDF review sheet of this project")
        self.act_quit = self._act("&Quit", self.close, K.Quit)
        undo = self.project.undo_stack
        self.act_undo = undo.createUndoAction(self, "&Undo")
        self.act_undo.setShortcut(QtGui.QKeySequence(K.Undo))
        self.act_undo.setIcon(self.style().standardIcon(S.SP_ArrowBack))
        self.act_redo = undo.createRedoAction(self, "&Redo")
        # every platform binding of Redo plus both common ones (QKeySequence(K.Redo) alone is
        # only the first binding: Ctrl+Y here, so Ctrl+Shift+Z did nothing)
        redo_keys = []
        for k in QtGui.QKeySequence.keyBindings(K.Redo) + [QtGui.QKeySequence("Ctrl+Shift+Z"),
                                                            QtGui.QKeySequence("Ctrl+Y")]:
            if k not in redo_keys:
                redo_keys.append(k)
        self.act_redo.setShortcuts(redo_keys)
        self.act_redo.setIcon(self.style().standardIcon(S.SP_ArrowForward))
        self.act_ins_shaft = self._act("Insert disc + &shaft", lambda: self.insert("shaft"), "Ins",
                                       "Insert a disc joined by a shaft after the selection")
        self.act_ins_coupling = self._act("Insert disc + &coupling", lambda: self.insert("coupling"),
                                          "Ctrl+Alt+C", "Insert a disc joined by a coupling after the selection")
        self.act_ins_mesh = self._act("Insert disc + &gear mesh", lambda: self.insert("gear_mesh"),
                                      "Ctrl+Alt+G", "Insert a disc joined by a gear mesh after the selection")
        self.act_ins_parallel = self._act("Add link in &parallel", self.insert_parallel, None,
                                          "Add a link between the same two discs as the selected link "
                                          "(a second shaft, a damper beside a coupling); their "
                                          "stiffnesses add")
        self.act_delete = self._act("&Delete selected", self.delete_selected, K.Delete,
                                    "Delete the selected disc or link", S.SP_TrashIcon)
        self.act_fit = self._act("&Fit train to view", self._fit, "Ctrl+0", "Show the whole train")
        self.act_zoom_in = self._act("Zoom &in", lambda: self.canvas.zoom(1.25), K.ZoomIn)
        self.act_zoom_out = self._act("Zoom &out", lambda: self.canvas.zoom(0.8), K.ZoomOut)
        self.act_colour = QtGui.QAction("Colour discs by mode amplitude", self)
        self.act_colour.setCheckable(True)
        self.act_colour.setChecked(True)
        self.act_colour.setShortcut(QtGui.QKeySequence("Ctrl+M"))
        self.act_colour.setToolTip("Colour each disc by its twist in the selected mode (blue +, vermilion −)")
        self.act_colour.toggled.connect(lambda _on: self._show_mode_colour())
        self.act_recompute = self._act("Recompute", self.recompute, "F5", "Solve the current model again")
        self.unit_group = QtGui.QActionGroup(self)
        self.act_si = QtGui.QAction("SI units", self, checkable=True)
        self.act_us = QtGui.QAction("US customary units", self, checkable=True)
        for a in (self.act_si, self.act_us):
            self.unit_group.addAction(a)
        (self.act_si if self.system == "SI" else self.act_us).setChecked(True)
        self.act_si.triggered.connect(lambda: self.set_unit_system("SI"))
        self.act_us.triggered.connect(lambda: self.set_unit_system("US"))
        self.act_toggle_units = self._act("Switch unit system", lambda: self.set_unit_system(
            "US" if self.system == "SI" else "SI"), "Ctrl+U", "Switch the displayed units between SI and US customary")

        mb = self.menuBar()
        m = mb.addMenu("&File")
        m.addAction(self.act_new)
        self.sample_menu = m.addMenu("New from &sample")
        for p in samples():
            title = _sample_title(p)
            a = self.sample_menu.addAction(title)
            a.setToolTip(f"A copy of {p.name}; Save asks for a new name")
            a.triggered.connect(lambda _=False, p=p: self.new_from_sample(p))
        m.addAction(self.act_open)
        self.recent_menu = m.addMenu("Open &recent")
        m.addSeparator()
        m.addAction(self.act_save)
        m.addAction(self.act_save_as)
        m.addSeparator()
        m.addAction(self.act_sheet)
        self.export_menu = m.addMenu("&Export results")
        for a in self.results_panel.export_menu_actions(self):
            if a is None or a.isSeparator():
                self.export_menu.addSeparator()
            else:
                self.export_menu.addAction(a)
        m.addSeparator()
        m.addAction(self.act_quit)
        e = mb.addMenu("&Edit")
        for a in (self.act_undo, self.act_redo, None, self.act_ins_shaft, self.act_ins_coupling,
                  self.act_ins_mesh, self.act_ins_parallel, self.act_delete):
            e.addSeparator() if a is None else e.addAction(a)
        v = mb.addMenu("&View")
        for a in (self.act_fit, self.act_zoom_in, self.act_zoom_out, None, self.act_colour, None,
                  self.act_si, self.act_us, self.act_toggle_units, None, self.act_recompute):
            v.addSeparator() if a is None else v.addAction(a)
        h = mb.addMenu("&Help")
        h.addAction(self._act("About Twistwise", self.about))

        tb = self.addToolBar("Main")
        tb.setObjectName("main_toolbar")
        tb.setMovable(False)
        tb.setToolButtonStyle(QtCore.Qt.ToolButtonTextBesideIcon)
        for a in (self.act_new, self.act_open, self.act_save, None):
            tb.addSeparator() if a is None else tb.addAction(a)
        # toolbar copies of undo/redo with a fixed label (the menu entries name the edit)
        stack = self.project.undo_stack
        for text, icon, do, can, what, key in (
                ("Undo", S.SP_ArrowBack, stack.undo, stack.canUndoChanged, stack.undoTextChanged, "Ctrl+Z"),
                ("Redo", S.SP_ArrowForward, stack.redo, stack.canRedoChanged, stack.redoTextChanged, "Ctrl+Shift+Z")):
            a = QtGui.QAction(self.style().standardIcon(icon), text, self)
            a.setEnabled(False)
            a.setToolTip(f"{text} ({key})")
            a.triggered.connect(lambda _=False, do=do: do())
            can.connect(a.setEnabled)
            what.connect(lambda t, a=a, text=text, key=key: a.setToolTip(f"{text} {t} ({key})" if t else f"{text} ({key})"))
            tb.addAction(a)
        tb.addSeparator()
        for a, label in ((self.act_ins_shaft, "+ Shaft"), (self.act_ins_coupling, "+ Coupling"),
                         (self.act_ins_mesh, "+ Gear mesh")):
            b = QtWidgets.QToolButton()
            b.setDefaultAction(a)
            b.setText(label)
            b.setToolButtonStyle(QtCore.Qt.ToolButtonTextOnly)
            tb.addWidget(b)
        tb.addAction(self.act_delete)
        tb.addSeparator()
        tb.addAction(self.act_fit)
        tb.addSeparator()
        self.unit_box = QtWidgets.QComboBox()
        self.unit_box.addItems(["SI", "US"])
        self.unit_box.setCurrentText(self.system)
        self.unit_box.setToolTip("Unit system of the displayed values (display only: stored text is kept)")
        self.unit_box.currentTextChanged.connect(self.set_unit_system)
        tb.addWidget(QtWidgets.QLabel(" Units "))
        tb.addWidget(self.unit_box)
        self.canvas.context_actions = [self.act_ins_shaft, self.act_ins_coupling, self.act_ins_mesh,
                                       self.act_ins_parallel, None, self.act_delete, None, self.act_fit]
        self._update_recent_menu()

    def _connect(self):
        p = self.project
        p.documentChanged.connect(self.refresh_views)
        p.trainChanged.connect(lambda train: self.runner.request(train))
        p.errorChanged.connect(self._show_error)
        p.fileChanged.connect(self._update_title)
        self.runner.resultsReady.connect(self._show_results)
        self.runner.failed.connect(self._solve_failed)
        self.runner.busyChanged.connect(lambda busy: self.status_time.setText("solving…") if busy else None)
        self.canvas.selectionMade.connect(self.set_selection)
        for t in (self.disc_table, self.link_table):
            t.rowSelected.connect(self.set_selection)
            t.editRequested.connect(self._edit)
            t.renameRequested.connect(self._rename)
        for f in (self.property_form,) + self.list_forms:
            f.editRequested.connect(self._edit)
            f.replaceRequested.connect(self._replace)
        self.property_form.renameRequested.connect(self._rename)
        self.results_panel.modeSelected.connect(lambda _i: self._show_mode_colour())
        if hasattr(self.results_panel, "designValueChosen"):
            self.results_panel.designValueChosen.connect(self._design_value_chosen)
            self.results_panel.design_view.value_writable = self._design_value_writable

    # ------------------------------------------------------------ edits
    def _replace(self, new_doc, label):
        if not self._closing:
            self.project.replace(new_doc, label)

    def _edit(self, path, value, label):
        if self._closing:  # a field losing focus as the window goes: not an edit
            return
        path = tuple(path)
        old, selected = self.project.get(path), self.selection
        if len(path) == 3 and path[0] == "links" and path[2] == "id":
            # a link's new id reaches its S-N curve, the design options and the events' counts
            new = (value or "").strip() if isinstance(value, str) else value
            if not new or new == old:
                self.refresh_views()
                return
            if new in edits.link_ids(self.project.doc):
                self.statusBar().showMessage(f"link id '{new}' is already taken; not renamed", 6000)
                self.refresh_views()
                return
            self.project.replace(edits.rename_link(self.project.doc, old, new), label)
            if selected == ("link", old):
                self.set_selection(("link", new))
            return
        self.project.set_value(path, value, label)
        if path[0] == "links" and path[-1] == "id" and selected == ("link", old) and value:
            self.set_selection(("link", value))  # a renamed link stays selected

    def _design_path(self, element_id: str, quantity: str):
        """The document path of an element's stiffness or inertia, or (None, why not): a value
        the project stores as a number can be overwritten; one it derives (a shaft's geometry,
        a gear mesh's tooth stiffness) cannot."""
        doc = self.project.doc
        key, field = ("links", "stiffness") if quantity == "stiffness" else ("discs", "inertia")
        items = doc.get(key) if isinstance(doc, dict) else None
        index = next((i for i, e in enumerate(items or []) if isinstance(e, dict) and e.get("id") == element_id),
                     None)
        if index is None:
            return None, f"'{element_id}' is not in the project"
        entry = items[index]
        if quantity == "stiffness" and field not in entry:
            if entry.get("segments"):
                return None, ("This shaft's stiffness comes from its segments and material: change its "
                              "diameters or lengths to reach the value")
            if entry.get("mesh_stiffness"):
                return None, ("This gear mesh's stiffness comes from its tooth data: change the mesh "
                              "stiffness or face width to reach the value")
        return (key, index, field), None

    def _design_value_writable(self, element_id: str, quantity: str) -> str | None:
        return self._design_path(element_id, quantity)[1]

    def _design_value_chosen(self, element_id: str, quantity: str, value_si: float) -> None:
        """The design options' tried value, written as one undoable edit in the display unit system."""
        from .results.design_view import quantity_text
        path, why = self._design_path(element_id, quantity)
        if path is None:
            self.statusBar().showMessage(f"Not changed: {why}", 8000)
            return
        text = quantity_text(value_si, quantity, self.system)
        name = self.project.train.name_of(element_id) if self.project.train is not None else element_id
        self._edit(path, text, f"Set {quantity} of {name} to {text} (design options)")
        self.statusBar().showMessage(f"{name}: {quantity} set to {text} (Ctrl+Z undoes it)", 8000)

    def _rename(self, old, new):
        if self._closing:
            return
        new = new.strip()
        if not new or new == old:
            self.refresh_views()
            return
        if new in edits.disc_ids(self.project.doc) or new == "ground":
            self.statusBar().showMessage(f"disc id '{new}' is already taken; not renamed", 6000)
            self.refresh_views()
            return
        self.project.replace(edits.rename_disc(self.project.doc, old, new), f"Rename disc '{old}' to '{new}'")
        if self.selection == ("disc", old):
            self.set_selection(("disc", new))

    def insert(self, kind):
        new, sel = edits.insert_after(self.project.doc, self.selection, kind)
        self.project.replace(new, f"Insert disc + {kind.replace('_', ' ')}")
        self.set_selection(sel)

    def insert_parallel(self):
        if not self.selection or self.selection[0] != "link":
            self.statusBar().showMessage("Select a link to add another beside it", 4000)
            return
        new, sel = edits.insert_parallel(self.project.doc, self.selection)
        self.project.replace(new, f"Add link in parallel with '{self.selection[1]}'")
        self.set_selection(sel)

    def delete_selected(self):
        if not self.selection:
            self.statusBar().showMessage("Select a disc or link to delete", 4000)
            return
        new, changes = edits.delete_report(self.project.doc, self.selection)
        what = f"Delete {self.selection[0]} '{self.selection[1]}'"
        self.project.replace(new, what)
        self.set_selection(None)
        self.last_delete_changes = changes
        if changes:
            text = f"{what}: " + "; ".join(changes) + " (Ctrl+Z undoes all of it)"
            self.statusBar().showMessage(text, 15000)
            self.statusBar().setToolTip(text)

    def set_selection(self, selection):
        self.selection = tuple(selection) if selection else None
        self.canvas.select(self.selection)
        kind = self.selection[0] if self.selection else None
        self.disc_table.select_id(self.selection[1] if kind == "disc" else None)
        self.link_table.select_id(self.selection[1] if kind == "link" else None)
        # a selected disc or link brings its table and the property form (from any tab)
        if kind == "disc" and self.tabs.currentWidget() is not self.disc_table:
            self.tabs.setCurrentWidget(self.disc_table)
        elif kind == "link" and self.tabs.currentWidget() is not self.link_table:
            self.tabs.setCurrentWidget(self.link_table)
        self.property_form.show_element(self.project.doc, self.selection, self.project, self.system)

    def _forms_tab_changed(self, _index):
        shown = self.tabs.currentWidget()
        # the operating data and the excitations have no selected disc or link: full width
        self.property_form.setVisible(shown not in self.list_forms)
        if shown in self._stale_forms:
            self._refresh_form(shown)

    def _refresh_form(self, form, force: bool = False) -> None:
        """Bring one forms tab (disc table, link table, operating data, excitations) up to the
        document; ``force``: after an undo or redo (the document replaces text being typed)."""
        force = force or form in self._forced_forms
        self._stale_forms.discard(form)
        self._forced_forms.discard(form)
        doc, p = self.project.doc, self.project
        if form in self.list_forms:
            form.refresh(doc, p, self.system, force)
        else:
            form.refresh(doc, p, self.system)
        kind = self.selection[0] if self.selection else None
        if form is self.disc_table:
            form.select_id(self.selection[1] if kind == "disc" else None)
        elif form is self.link_table:
            form.select_id(self.selection[1] if kind == "link" else None)

    # ------------------------------------------------------------ refresh
    def refresh_views(self):
        if self._closing:
            return
        doc, p = self.project.doc, self.project
        force = p.from_history
        if self.selection and self.selection[1] not in (
                edits.disc_ids(doc) if self.selection[0] == "disc" else edits.link_ids(doc)):
            self.selection = None
        bad = [p.error.element.split(" segment")[0].split(" order")[0]] if p.error and p.error.element else []
        self.canvas.set_document(doc, self.system, bad)
        self.canvas.select(self.selection)
        # the forms tab showing is refreshed now, the two hidden ones when they show
        # (a 200-link table or the excitations editor costs 1-3 ms a live edit)
        self._stale_forms = {self.disc_table, self.link_table, *self.list_forms}
        if force:
            self._forced_forms = set(self._stale_forms)
        self._refresh_form(self.tabs.currentWidget(), force)
        self.property_form.show_element(doc, self.selection, p, self.system, force)
        self._show_mode_colour()
        self._update_title()

    def _show_error(self, error):
        if error is None:
            self.error_banner.hide()
            self._canvas_margin(0)
            self._show_stale()
            return
        keep = "the results of the last valid model" if self.project.train is not None else "no results yet"
        self.error_banner.setText(f"Model error — {error}.  Showing {keep}; fix the value or undo (Ctrl+Z).")
        self.error_banner.show()
        self._place_banner()
        if self.project.train is None and hasattr(self.results_panel, "clear_results"):
            self.results_panel.clear_results(f"The model cannot be solved: {error}")
            self._set_status(self.status_verdict, "no valid model", theme.verdict_style(None))
        self._show_stale()

    def _place_banner(self) -> None:
        """The banner over the foot of the schematic, as wide as it, at most half its height."""
        box, banner = self._canvas_box, self.error_banner
        width = max(100, box.width() - 16)
        banner.setFixedWidth(width)
        h = min(banner.heightForWidth(width) if banner.hasHeightForWidth() else banner.sizeHint().height(),
                max(40, box.height() // 2))
        banner.setFixedHeight(max(h, 24))
        y = box.height() - banner.height() - self.mode_note.height() - 8
        banner.move(8, max(0, y))
        banner.raise_()
        # the schematic draws above the banner (its own viewport shrinks, nothing else moves)
        self._canvas_margin(banner.height() + 8)

    def _canvas_margin(self, bottom: int) -> None:
        if self.canvas.viewportMargins().bottom() != bottom:
            self.canvas.setViewportMargins(0, 0, 0, bottom)
            if not self.canvas._user_zoomed:
                self.canvas.fit()

    def eventFilter(self, obj, event):
        if obj is getattr(self, "_canvas_box", None) and event.type() == QtCore.QEvent.Resize \
                and self.error_banner.isVisible():
            self._place_banner()
        return super().eventFilter(obj, event)

    def stale_message(self) -> str | None:
        """While the model has an error, or its solve failed: what the results on screen are
        (None: they are of the model on screen)."""
        if self.results is None:
            return None
        if self.project.error is not None:
            return ("Showing the last valid model — the model now has an error "
                    f"({self.project.error.element or 'model'}): fix it or undo to update the results.")
        if self._solve_error:
            return (f"Showing the last valid model — the model now cannot be solved ({self._solve_error}): "
                    "fix it or undo to update the results.")
        return None

    def _show_stale(self) -> None:
        """Grey the verdict and tell the result views while the results are of an older model."""
        message = self.stale_message()
        if hasattr(self.results_panel, "set_stale"):
            self.results_panel.set_stale(message)
        ok = self.project.error is None and not self._solve_error
        self.act_sheet.setEnabled(ok)
        self.act_sheet.setToolTip("Write the PDF review sheet of this project" if ok
                                  else "Not while the model has an error: fix it or undo first")
        if message is not None:
            # no verdict for a model with an error: never a PASS (or any verdict) of an older one
            self._set_status(self.status_verdict, "no verdict — last valid model", theme.STALE_STYLE)
            self.status_verdict.setToolTip(message)
        elif self.results is not None:
            self._show_verdict()

    def _show_verdict(self) -> None:
        text, ok = self.verdict_summary()
        self._set_status(self.status_verdict, text, theme.verdict_style(ok))
        study = getattr(self.results, "study", None)
        try:
            full = headline(study)[0] if study is not None else ""
        except Exception:  # a study a test or an older panel made without every part
            full = ""
        self.status_verdict.setToolTip(full or "Verdict of the model now showing")

    def verdict_summary(self) -> tuple[str, bool | None]:
        """The status bar's verdict and its colour (True pass, False fail, None open or none):
        the results panel's own summary where it has one (the two never disagree), else the
        first word of the headline (:func:`app.wording.headline`: PASS, FAIL or OPEN) and
        what it rests on."""
        res = self.results
        if res is None:
            return "—", None
        panel = self.results_panel
        if hasattr(panel, "verdict_summary") and getattr(panel, "study", None) is not None:
            return panel.verdict_summary()
        return headline_summary(getattr(res, "study", None))

    def _verdict_text(self) -> str:
        return self.verdict_summary()[0]

    def _verdict_style(self) -> str:
        return theme.verdict_style(self.verdict_summary()[1])

    def _show_results(self, res):
        if self._closing:
            return
        self.results = res
        self._solve_error = None
        panel = self.results_panel
        if hasattr(panel, "set_study") and getattr(res, "study", None) is not None:
            panel.set_study(res.study, res.solve_time_s)
        else:
            panel.set_results(res.train, res.modes, res.screening, res.response, res.solve_time_s)
        self._show_verdict()
        self.status_modes.setText(modes_status(res))
        self.status_time.setText(f"solved in {res.solve_time_s * 1e3:.1f} ms")
        if res.note:
            self.statusBar().showMessage(res.note, 8000)
        self._show_stale()  # results that arrive while the model has an error are of an older model
        self._show_mode_colour()

    @staticmethod
    def _set_status(label, text, style):
        """Text and style of a status label, set only when they change (a style sheet
        set again re-polishes the label and re-lays out the status bar)."""
        if label.text() != text:
            label.setText(text)
        if label.property("style_text") != style:
            label.setProperty("style_text", style)
            label.setStyleSheet(style)

    def _solve_failed(self, text):
        """The model built but its solve failed: the results on screen are of an older model
        (or there are none); say so as for a model error."""
        self._solve_error = text
        self.statusBar().showMessage(f"Solve failed: {text}", 10000)
        if self.results is None and hasattr(self.results_panel, "clear_results"):
            self.results_panel.clear_results(f"The model cannot be solved: {text}")
            self._set_status(self.status_verdict, "no valid model", theme.verdict_style(None))
        self._show_stale()

    def _current_mode_index(self) -> int:
        f = getattr(self.results_panel, "current_mode_index", None)
        if f is not None:
            return f()
        return self.results_panel.table.currentRow() if hasattr(self.results_panel, "table") else -1

    def _show_mode_colour(self):
        res = self.results
        i = self._current_mode_index()
        if not self.act_colour.isChecked() or res is None or not 0 <= i < len(res.modes) \
                or res.modes.rigid_body[i]:
            self.canvas.set_mode_shape(None)
            self.mode_note.setText("Disc colour: plain (select an elastic mode in the results to "
                                   "colour discs by its twist)" if self.act_colour.isChecked() else "")
            return
        self.canvas.set_mode_shape(res.modes.shape_dict(i))
        self.mode_note.setText(f"Disc colour: twist in mode {int(res.modes.number[i])} at "
                               f"{fmt.hz(res.modes.frequency_hz[i])} Hz (blue +, vermilion −, white: node)")

    def _update_title(self):
        p = self.project
        self.setWindowTitle(f"{p.title} — {p.file_name}[*] — {APP_NAME}")
        self.setWindowModified(p.dirty)
        self.status_units.setText(f"units: {self.system}")

    def _fit(self):
        self.canvas._user_zoomed = False
        self.canvas.fit()

    def recompute(self):
        if self.project.train is not None:
            self.runner.request(self.project.train, immediate=True)

    def set_unit_system(self, system):
        if system not in ("SI", "US"):
            return
        self.system = system
        self.settings.setValue("unit_system", system)
        for w, on in ((self.act_si, system == "SI"), (self.act_us, system == "US")):
            w.setChecked(on)
        self.unit_box.blockSignals(True)
        self.unit_box.setCurrentText(system)
        self.unit_box.blockSignals(False)
        if hasattr(self.results_panel, "set_unit_system"):
            self.results_panel.set_unit_system(system)
        self.refresh_views()

    # ------------------------------------------------------------ files
    def load_document(self, doc, path=None, dirty=False):
        """Start on another document: per-project view state (selection, zoom, the selected
        excitation and damping choices, the results' speed cursor) starts afresh."""
        self.selection = None
        self.results = None
        self._solve_error = None
        self.last_delete_changes = []
        self.canvas._signature = None
        self.canvas._user_zoomed = False
        self.property_form.reset()
        for form in (self.excitations_form, self.load_cases_form, self.transients_form):
            form.reset()
        if hasattr(self.results_panel, "reset_view_state"):
            self.results_panel.reset_view_state()
        self.project.set_document(doc, path)
        if dirty:
            self.project.undo_stack.resetClean()
        self._update_title()

    def open_path(self, path) -> bool:
        try:
            doc = load_document(path)
        except ModelError as exc:
            self._message("Cannot open project", f"{path}: {exc}")
            return False
        self.load_document(doc, path)
        self._add_recent(path)
        self.statusBar().showMessage(f"Opened {path}", 5000)
        return True

    def open_dialog(self):
        if not self.confirm_discard():
            return
        start = str(self.project.path.parent if self.project.path else SAMPLES_DIR)
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Open project", start,
                                                        "Twistwise projects (*.json);;All files (*)")
        if path:
            self.open_path(path)

    def new_blank(self):
        if self.confirm_discard():
            self.load_document(edits.blank_document())

    def new_from_sample(self, path):
        if self.confirm_discard():
            try:
                self.load_document(load_document(path))
            except ModelError as exc:
                self._message("Cannot open sample", str(exc))

    def save(self) -> bool:
        if self.project.path is None:
            return self.save_as()
        return self._save_to(self.project.path)

    def save_as(self) -> bool:
        start = str(self.project.path or Path.home() / (re.sub(r"[^\w-]+", "_", self.project.title).strip("_")
                                                        + ".json"))
        path, _ = QtWidgets.QFileDialog.getSaveFileName(self, "Save project as", start,
                                                        "Twistwise projects (*.json)")
        if not path:
            return False
        if not path.lower().endswith(".json"):
            path += ".json"
        return self._save_to(Path(path))

    def commit_pending_edit(self) -> None:
        """Text typed into a field but not yet committed (no Enter, focus still there)
        becomes an edit now: before a save, a close or a new document."""
        w = QtWidgets.QApplication.focusWidget()
        if isinstance(w, Field) and self.isAncestorOf(w):
            w.commit_pending()

    def _save_to(self, path) -> bool:
        self.commit_pending_edit()
        error = self.project.error
        if error is not None and not self.ask(
                "Save a model with an error?",
                f"The model has an error: {error}.\n\nThe file will hold the model as it is now, "
                "error included (it opens again with the error shown). The file it replaces is kept "
                f"as {Path(path).name}.bak1.", "Save anyway"):
            self.statusBar().showMessage("Not saved: the model has an error", 6000)
            return False
        try:
            self.project.save(path)
        except OSError as exc:
            self._message("Not saved", f"Could not save to {path}: {exc.strerror or exc}. "
                                       "Your work is still open; try another folder.")
            return False
        self._add_recent(path)
        self.remove_recovery()
        bak = backup_paths(path)[0]
        kept = f" (previous version kept as {bak.name})" if bak.exists() else ""
        self.statusBar().showMessage(f"Saved {path}{kept}", 6000)
        return True

    def ask(self, title: str, text: str, yes: str) -> bool:
        """A yes/no question with ``yes`` as the affirmative button (Cancel is the default)."""
        box = QtWidgets.QMessageBox(self)
        box.setIcon(QtWidgets.QMessageBox.Warning)
        box.setWindowTitle(title)
        box.setText(title)
        box.setInformativeText(text)
        ok = box.addButton(yes, QtWidgets.QMessageBox.AcceptRole)
        cancel = box.addButton(QtWidgets.QMessageBox.Cancel)
        box.setDefaultButton(cancel)
        box.exec()
        return box.clickedButton() is ok

    def confirm_discard(self) -> bool:
        """True when it is fine to replace the open document (saved, or the user says so)."""
        self.commit_pending_edit()
        if not self.project.dirty:
            return True
        box = QtWidgets.QMessageBox(self)
        box.setIcon(QtWidgets.QMessageBox.Warning)
        box.setWindowTitle("Unsaved changes")
        box.setText(f"'{self.project.title}' has unsaved changes.")
        box.setInformativeText("Save them before continuing?")
        box.setStandardButtons(QtWidgets.QMessageBox.Save | QtWidgets.QMessageBox.Discard |
                               QtWidgets.QMessageBox.Cancel)
        box.setDefaultButton(QtWidgets.QMessageBox.Save)
        answer = box.exec()
        if answer == QtWidgets.QMessageBox.Save:
            return self.save()
        return answer == QtWidgets.QMessageBox.Discard

    def closeEvent(self, event):
        if self.confirm_discard():
            # from here on a field losing focus or a late result is not an edit: the
            # widgets are going (an edit pushed while they went raised at quit)
            self._closing = True
            self._autosave.stop()
            self.runner.stop()
            self.remove_recovery()
            self.runner.wait(3000)
            shutdown = getattr(self.results_panel, "shutdown", None)
            if shutdown is not None:  # a transient run or a response worker still going
                shutdown()
            event.accept()
        else:
            event.ignore()

    def _message(self, title, text):
        if QtWidgets.QApplication.platformName() == "offscreen":
            self.statusBar().showMessage(text, 10000)
            return
        QtWidgets.QMessageBox.warning(self, title, text)

    # recent files
    def recent_files(self) -> list[str]:
        value = self.settings.value("recent_files", [])
        if isinstance(value, str):
            value = [value]
        return [str(v) for v in (value or [])]

    def _add_recent(self, path):
        path = str(Path(path).resolve())
        files = [f for f in self.recent_files() if f != path]
        self.settings.setValue("recent_files", [path] + files[:MAX_RECENT - 1])
        self._update_recent_menu()

    def _update_recent_menu(self):
        self.recent_menu.clear()
        files = self.recent_files()
        for i, f in enumerate(files):
            a = self.recent_menu.addAction(f"&{i + 1}  {Path(f).name}")
            a.setToolTip(f)
            a.setStatusTip(f)
            a.triggered.connect(lambda _=False, f=f: self.confirm_discard() and self.open_path(f))
        self.recent_menu.setEnabled(bool(files))

    # autosave and crash recovery
    def write_recovery(self) -> None:
        """Copy unsaved work to the recovery folder (offered back after a crash)."""
        if not self.project.dirty:
            return
        data = {"format": "twistwise-recovery", "pid": os.getpid(),
                "saved_at": datetime.datetime.now().isoformat(timespec="seconds"),
                "original": str(self.project.path) if self.project.path else None,
                "document": self.project.doc}
        try:
            self._recovery_path.parent.mkdir(parents=True, exist_ok=True)
            tmp = self._recovery_path.with_suffix(".tmp")
            tmp.write_text(json.dumps(data, ensure_ascii=False), encoding="utf-8")
            os.replace(tmp, self._recovery_path)
        except OSError as exc:
            self.statusBar().showMessage(f"Autosave failed: {exc}", 6000)

    def remove_recovery(self) -> None:
        try:
            self._recovery_path.unlink()
        except OSError:
            pass

    def offer_recovery(self, ask=None) -> bool:
        """Offer back unsaved work left by a program that did not close normally.
        ``ask(text) -> bool`` replaces the dialog (tests)."""
        for f in sorted(recovery_dir().glob("unsaved-*.json")):
            try:
                data = json.loads(f.read_text(encoding="utf-8"))
            except (OSError, ValueError):
                continue
            if _process_alive(data.get("pid")) and data.get("pid") != os.getpid():
                continue  # another window is still running and owns it
            doc = data.get("document")
            if not isinstance(doc, dict):
                f.unlink(missing_ok=True)
                continue
            title = doc.get("title") or "Untitled train"
            text = (f"Twistwise did not close normally. Unsaved work on '{title}' "
                    f"({data.get('original') or 'never saved'}) from {data.get('saved_at')} was kept.\n\n"
                    "Restore it?")
            if ask is None:
                answer = QtWidgets.QMessageBox.question(self, "Recover unsaved work", text) == \
                    QtWidgets.QMessageBox.Yes
            else:
                answer = ask(text)
            f.unlink(missing_ok=True)
            if answer:
                self.load_document(doc, data.get("original"), dirty=True)
                self.write_recovery()
                return True
        return False

    # review sheet
    def export_review_sheet(self):
        try:
            from app.report import write_review_sheet
        except Exception as exc:
            self._message("Review sheet not available", f"The review sheet module cannot be loaded ({exc}).")
            return
        if self.project.error is not None:
            self._message("Model has an error", f"Fix the model first: {self.project.error}")
            return
        if self._solve_error:
            self._message("Model cannot be solved", f"Fix the model first: {self._solve_error}")
            return
        if self.project.path is None or self.project.dirty:
            answer = QtWidgets.QMessageBox.question(
                self, "Save first", "The review sheet names the project file and its contents; save the "
                "project now?", QtWidgets.QMessageBox.Save | QtWidgets.QMessageBox.Cancel)
            if answer != QtWidgets.QMessageBox.Save or not self.save():
                return
        dlg = _SheetDialog(self, self.settings, self.system)
        if dlg.exec() != QtWidgets.QDialog.Accepted:
            return
        default = self.project.path.with_suffix(".pdf")
        out, _ = QtWidgets.QFileDialog.getSaveFileName(self, "Export review sheet", str(default), "PDF (*.pdf)")
        if not out:
            return
        try:
            QtWidgets.QApplication.setOverrideCursor(QtCore.Qt.WaitCursor)
            write_review_sheet(self.project.doc, str(self.project.path), out, **dlg.values())
        except ModelError as exc:
            self._message("Review sheet not written", str(exc))
            return
        except Exception as exc:
            self._message("Review sheet not written", f"{type(exc).__name__}: {exc}")
            return
        finally:
            QtWidgets.QApplication.restoreOverrideCursor()
        self.statusBar().showMessage(f"Review sheet written to {out}", 8000)

    def about(self):
        QtWidgets.QMessageBox.about(self, "About Twistwise",
                                    "<b>Twistwise</b> — torsional vibration screening of drive trains.<br><br>"
                                    + CAUTION)


class _SheetDialog(QtWidgets.QDialog):
    def __init__(self, parent, settings, system):
        super().__init__(parent)
        self.setWindowTitle("Review sheet")
        self.settings = settings
        form = QtWidgets.QFormLayout(self)
        self.author = QtWidgets.QLineEdit(str(settings.value("sheet_author", "")))
        self.author.setToolTip("Name printed as the author of the calculation")
        self.revision = QtWidgets.QLineEdit("")
        self.revision.setToolTip("Revision mark of this issue of the sheet, e.g. 'A' or '0'")
        self.paper = QtWidgets.QComboBox()
        self.paper.addItems(["a4", "letter"])
        self.paper.setCurrentText(str(settings.value("sheet_paper", "a4")))
        self.units = QtWidgets.QComboBox()
        self.units.addItems(["SI", "US"])
        self.units.setCurrentText(system)
        form.addRow("Author", self.author)
        form.addRow("Revision", self.revision)
        form.addRow("Paper", self.paper)
        form.addRow("Units of the model table", self.units)
        buttons = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.Ok | QtWidgets.QDialogButtonBox.Cancel)
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form.addRow(buttons)

    def values(self):
        self.settings.setValue("sheet_author", self.author.text())
        self.settings.setValue("sheet_paper", self.paper.currentText())
        return {"paper": self.paper.currentText(), "author": self.author.text(),
                "revision": self.revision.text(), "unit_system": self.units.currentText()}


def _sample_title(path: Path) -> str:
    try:
        return str(json.loads(path.read_text(encoding="utf-8")).get("title") or path.stem)
    except (OSError, ValueError):
        return path.stem


def _process_alive(pid) -> bool:
    if not isinstance(pid, int) or pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


#: young objects the garbage collector lets build up before it looks (Python's default: 700).
#: One live edit of a 200-disc train makes a few thousand; at the default it ran six young and
#: one middle collection per edit (1-3 ms) and, about every seventeenth edit, a full one
#: over every object of the program (60-70 ms: a hitch while typing).  Memory freed by
#: reference counting (nearly all of it) is not concerned.
GC_YOUNG = 5000


def tune_garbage_collector() -> None:
    """Once per process: the objects of the program as loaded (modules, classes, Qt) are set
    aside from the collections (``gc.freeze``, after a collection so that no garbage is kept)
    and the young generation collected less often (GC_YOUNG).  See the Python documentation
    of the gc module, gc.freeze: "if you want to avoid paying the garbage collection cost of
    long-lived objects" (from memory)."""
    import gc
    if getattr(tune_garbage_collector, "done", False):
        return
    tune_garbage_collector.done = True
    gc.collect()
    gc.freeze()
    _young, middle, old = gc.get_threshold()
    gc.set_threshold(GC_YOUNG, middle, old)


def application(argv=None) -> QtWidgets.QApplication:
    tune_garbage_collector()
    app = QtWidgets.QApplication.instance()
    if app is None:
        QtWidgets.QApplication.setHighDpiScaleFactorRoundingPolicy(
            QtCore.Qt.HighDpiScaleFactorRoundingPolicy.PassThrough)
        app = QtWidgets.QApplication(argv or [sys.argv[0]])
        app.setApplicationName(APP_NAME)
        app.setOrganizationName(APP_NAME)
        app.setStyle("Fusion")
        app.setPalette(theme.application_palette())
        app.setFont(theme.font(theme.BASE_POINT_SIZE))
    theme.configure_pyqtgraph()
    return app


# ----------------------------------------------------------------- a bare Linux
#: the shared libraries the Qt X11 (xcb) platform plugin of the PySide6 wheel loads, each with
#: the Debian/Ubuntu package that brings it (from ldd of libqxcb.so and libQt6XcbQpa.so.6)
XCB_LIBRARIES = (
    ("libxcb.so.1", "libxcb1"), ("libX11-xcb.so.1", "libx11-xcb1"), ("libX11.so.6", "libx11-6"),
    ("libxcb-cursor.so.0", "libxcb-cursor0"), ("libxcb-icccm.so.4", "libxcb-icccm4"),
    ("libxcb-image.so.0", "libxcb-image0"), ("libxcb-keysyms.so.1", "libxcb-keysyms1"),
    ("libxcb-randr.so.0", "libxcb-randr0"), ("libxcb-render.so.0", "libxcb-render0"),
    ("libxcb-render-util.so.0", "libxcb-render-util0"), ("libxcb-shape.so.0", "libxcb-shape0"),
    ("libxcb-shm.so.0", "libxcb-shm0"), ("libxcb-sync.so.1", "libxcb-sync1"),
    ("libxcb-util.so.1", "libxcb-util1"), ("libxcb-xfixes.so.0", "libxcb-xfixes0"),
    ("libxcb-xkb.so.1", "libxcb-xkb1"), ("libxkbcommon.so.0", "libxkbcommon0"),
    ("libxkbcommon-x11.so.0", "libxkbcommon-x11-0"), ("libEGL.so.1", "libegl1"), ("libGL.so.1", "libgl1"),
    ("libfontconfig.so.1", "libfontconfig1"), ("libfreetype.so.6", "libfreetype6"),
    ("libglib-2.0.so.0", "libglib2.0-0"), ("libdbus-1.so.3", "libdbus-1-3"),
)


def _load_library(name: str) -> str | None:
    """None when the shared library loads, else the name of the library that is missing."""
    import ctypes
    try:
        ctypes.CDLL(name)
    except OSError as exc:
        missing = str(exc).split(":", 1)[0].strip()  # "libX.so.1: cannot open shared object file"
        return missing if missing.startswith("lib") else name
    return None


def platform_problem(environ=None, load=_load_library) -> str | None:
    """One line saying why Qt's window system plugin cannot start here, or None.

    Checked before the QApplication exists, because Qt aborts the process when
    its platform plugin does not load and names only one missing library.  Only
    Linux with the X11 (xcb) plugin is checked: loading two dozen shared
    libraries the window loads anyway takes a few milliseconds."""
    environ = os.environ if environ is None else environ
    if not sys.platform.startswith("linux"):
        return None
    platform = environ.get("QT_QPA_PLATFORM", "").split(";")[0].split(":")[0].strip()
    if platform not in ("", "xcb"):
        return None  # offscreen, wayland, vnc ... chosen on purpose
    if platform == "" and environ.get("WAYLAND_DISPLAY"):
        return None  # Qt tries Wayland first
    if not environ.get("DISPLAY"):
        return ("twistwise: no display to open the window on (DISPLAY is not set); the command line works "
                "without one (twistwise --help), and QT_QPA_PLATFORM=offscreen renders without a screen")
    by_soname = dict(XCB_LIBRARIES)
    missing = []
    for soname, package in XCB_LIBRARIES:
        lost = load(soname)
        if lost is not None:
            pkg = by_soname.get(lost, package)
            if pkg not in missing:
                missing.append(pkg)
    if not missing:
        return None
    return ("twistwise: the window cannot open: Qt's X11 platform plugin needs system packages that are "
            f"missing; install them with: sudo apt-get install {' '.join(missing)} (other distributions: "
            "the packages holding " + ", ".join(s for s, p in XCB_LIBRARIES if p in missing)
            + "); the command line works without them (twistwise --help)")


# ----------------------------------------------------------------- no traceback on stderr
def log_path() -> Path:
    return recovery_dir().parent / "twistwise.log"


def log_line(text: str) -> None:
    """Append one line to the program's log (kept under about 1 MB)."""
    path = log_path()
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        if path.exists() and path.stat().st_size > 1_000_000:
            os.replace(path, path.with_suffix(".log.old"))
        stamp = datetime.datetime.now().isoformat(timespec="seconds")
        with open(path, "a", encoding="utf-8") as fh:
            fh.write(f"{stamp} {' '.join(str(text).split())}\n")
    except OSError:
        pass


def _where(tb) -> str:
    """file:line of the innermost frame of a traceback."""
    while tb is not None and tb.tb_next is not None:
        tb = tb.tb_next
    if tb is None:
        return ""
    return f" at {Path(tb.tb_frame.f_code.co_filename).name}:{tb.tb_lineno}"


def install_error_reporting(window_ref) -> None:
    """From here on an exception nobody caught, in any thread or destructor, and Qt's own
    warnings go to the log as one line each; the window says so in its status bar and
    writes its autosave.  Nothing reaches stderr.  ``window_ref()`` gives the window or None."""
    import threading

    def report(exc_type, exc, tb):
        if exc_type is not None and issubclass(exc_type, KeyboardInterrupt):
            QtCore.QCoreApplication.quit()
            return
        name = getattr(exc_type, "__name__", "error")
        log_line(f"internal error: {name}: {exc}{_where(tb)}")
        win = window_ref()
        if win is None or getattr(win, "_closing", True):
            return
        try:
            win.write_recovery()
            win.statusBar().showMessage(f"Internal error ({name}: {exc}); logged to {log_path()}. Your work "
                                        "is kept in the autosave; please report it.", 20000)
        except Exception:  # a report must never raise in its turn
            pass

    sys.excepthook = report
    import warnings
    warnings.showwarning = lambda message, category, filename, lineno, file=None, line=None: log_line(
        f"warning: {category.__name__}: {message} at {Path(filename).name}:{lineno}")
    threading.excepthook = lambda args: report(args.exc_type, args.exc_value, args.exc_traceback)
    sys.unraisablehook = lambda u: report(type(u.exc_value) if u.exc_value is not None else None,
                                          u.exc_value if u.exc_value is not None else u.err_msg,
                                          u.exc_traceback)

    def qt_message(mode, _context, message):
        if mode in (QtCore.QtMsgType.QtWarningMsg, QtCore.QtMsgType.QtCriticalMsg,
                    QtCore.QtMsgType.QtFatalMsg):
            log_line(f"Qt: {message}")

    QtCore.qInstallMessageHandler(qt_message)


# ----------------------------------------------------------------- entry points
TEST_HOOK_ENV = "TWISTWISE_TEST_HOOK"


def _run_test_hook(win, path: str) -> None:
    """For the crash-recovery test only (``TWISTWISE_TEST_HOOK`` names a JSON file):
    ``{"answer_recovery": bool, "edits": [[path, value], ...], "autosave": bool,
    "dump": file, "ready": file, "quit": bool}``, done in that order after start."""
    spec = json.loads(Path(path).read_text(encoding="utf-8"))
    if "answer_recovery" in spec:
        win.offer_recovery(ask=lambda _text: bool(spec["answer_recovery"]))
    for edit_path, value in spec.get("edits", []):
        win._edit(tuple(edit_path), value, "test edit")
    if spec.get("autosave"):
        win.write_recovery()
    if spec.get("dump"):
        Path(spec["dump"]).write_text(json.dumps({"document": win.project.doc, "dirty": win.project.dirty}),
                                      encoding="utf-8")
    if spec.get("ready"):
        Path(spec["ready"]).write_text("ready", encoding="utf-8")
    if spec.get("quit"):
        win.project.undo_stack.setClean()
        win.close()


def run_gui(path_or_none=None) -> int:
    """Open the main window on ``path_or_none`` (or the bundled compressor-train sample)."""
    if path_or_none is not None:
        try:
            doc = load_document(path_or_none)
        except ModelError as exc:
            print(f"twistwise: {path_or_none}: {exc}", file=sys.stderr)
            return 2
    problem = platform_problem()
    if problem is not None:
        print(problem, file=sys.stderr)
        return 1
    app = application()
    win = MainWindow()
    import weakref
    ref = weakref.ref(win)
    install_error_reporting(ref)
    if path_or_none is None:
        win.load_document(load_document(DEFAULT_SAMPLE))
        win.statusBar().showMessage(f"Sample project {DEFAULT_SAMPLE.name}: Save asks for a file name "
                                    "of your own", 8000)
    else:
        win.load_document(doc, path_or_none)
        win._add_recent(path_or_none)
    win.show()
    hook = os.environ.get(TEST_HOOK_ENV)
    if hook:
        QtCore.QTimer.singleShot(0, lambda w=win: _run_test_hook(w, hook))
    else:
        QtCore.QTimer.singleShot(0, win.offer_recovery)
    code = app.exec()
    # the event loop is over (the window closed, or the application was told to quit):
    # nothing the widgets do while they are taken down is an edit any more
    win._closing = True
    win.runner.stop()
    win.runner.wait(3000)
    win.hide()
    return code


def render_window(doc, path, size, system: str = "SI", mode_number: int | None = 1,
                  results_tab: int | None = None, selection=None) -> QtGui.QImage:
    """The main window with the project's results, rendered offscreen to an image
    (``results_tab``: index or key of the results tab to show — 'modes', 'campbell',
    'response', 'transients', ... as the results panel names its views; ``selection``:
    element to select)."""
    application()
    settings = QtCore.QSettings(str(Path(QtCore.QDir.tempPath()) / "twistwise-screenshot.ini"),
                                QtCore.QSettings.IniFormat)
    settings.setValue("unit_system", system)
    win = MainWindow(settings=settings, autosave=False)
    win.setMinimumSize(320, 240)
    win.resize(*size)
    win.load_document(doc, path)
    win.show()
    QtWidgets.QApplication.processEvents()
    if win.project.train is not None:
        res = win.runner.compute_now(win.project.train)
        if mode_number is not None:
            idx = [i for i in range(len(res.modes)) if int(res.modes.number[i]) == mode_number]
            if idx and hasattr(win.results_panel, "select_mode"):
                win.results_panel.select_mode(idx[0])
                win._show_mode_colour()
    tabs = getattr(win.results_panel, "tabs", None)
    if isinstance(results_tab, str) and hasattr(win.results_panel, "tab_index"):
        results_tab = win.results_panel.tab_index(results_tab)
    if results_tab is not None and results_tab >= 0 and tabs is not None:
        tabs.setCurrentIndex(results_tab)
    if selection is not None:
        win.set_selection(selection)
    for _ in range(3):
        QtWidgets.QApplication.processEvents()
    win._fit()
    QtWidgets.QApplication.processEvents()
    image = win.grab().toImage()
    win.project.undo_stack.setClean()
    win.close()
    win.deleteLater()
    return image


__all__ = ["MainWindow", "run_gui", "render_window", "ProjectFileError"]
