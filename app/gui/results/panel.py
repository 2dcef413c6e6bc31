"""ResultsPanel: every result view of the desktop program in one widget.

A verdict line on top (the headline every view states, :func:`app.wording.headline`),
then one tab per result view (natural frequencies and mode shapes with the damped
ones where the study has them, the interference diagram, the forced response with
the acceptance checks, the transients run on request, and the views later analyses
add) and the screening-only caution at the bottom.  The main
window feeds it one :class:`core.study.Study` after every solve
(``set_study``); the panel only shows what the study holds.

Adding a view (design options, acceptance, transients, ...)
-----------------------------------------------------------
A result view is a QWidget with four methods (the result-view protocol):

* ``show_study(study) -> str | None``: show the study; return None when the
  view shows something, else the sentence saying what is missing (the tab is
  then disabled, greyed, and that sentence is its tooltip);
* ``clear(message="")``: no results;
* ``set_unit_system(system)``: 'SI' or 'US' for every axis, column and tip;
* ``reset_view_state()``: a newly opened project (no cursor, selection, zoom).

A view that shows part of what it can (the design options without operating
data show what moves each mode, not the windows) returns None and sets
``view.limited`` to the sentence saying what is missing: its tab stays
enabled, its title is greyed and that sentence is its tooltip.

Register it with ``panel.add_view(key, view, title, tip)``; the panel calls
the four methods at the right moments, greys the view while the model on
screen has errors (``set_stale``) and keeps the tab's look and tooltip.  A
view that exports a plot sets ``view.canvas`` (a :class:`PlotCanvas`); one
that exports a table adds an entry to ``export_menu_actions``.

Hidden tabs: a live edit must redraw only what is on screen (edit to redrawn
results under 50 ms at 200 discs).  A view whose ``show_study`` costs next to
nothing while its tab is hidden (it draws when shown and keeps only its cheap
tables current) says so with the class attribute ``light_when_hidden = True``
and gets every study at once.  Any other view, while its tab is hidden and
enabled, gets the study when its tab is shown, when an export needs it, or
after the results have rested for ``CATCH_UP_MS`` (so its tab's enabled state
and tooltip follow), whichever comes first; ``panel.catch_up()`` brings every
such view up to date at once.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from app import formatting as fmt
from app import wording
from app.gui import theme
from core.about import CAUTION

from . import rows as R
from .campbell_view import CampbellView
from .design_view import DesignView
from .modes_view import ModesView
from .response_view import ResponseView
from .transient_view import TransientView
from .table import write_csv

TAB_MODES, TAB_CAMPBELL, TAB_RESPONSE, TAB_TRANSIENTS, TAB_DESIGN = 0, 1, 2, 3, 4
#: a hidden view that is not light_when_hidden gets the study after the results rest this long
#: (a burst of edits redraws only what is on screen; see the module docstring)
CATCH_UP_MS = 300

# the look of a tab that cannot show anything (greyed text, not just unresponsive),
# and of views that show the last valid model; theme.py is the natural home of these
DISABLED_TAB_TEXT = "#a3abb5"
DISABLED_TAB_STYLE = f"QTabBar::tab:disabled {{ color: {DISABLED_TAB_TEXT}; }}"
STALE_GREY = "#8c96a3"


@dataclass
class ResultTab:
    """A registered result view and what its tab says when it is available."""

    key: str
    view: QtWidgets.QWidget
    title: str
    tip: str


class ResultsPanel(QtWidgets.QWidget):
    """Result views.  ``modeSelected(int)``: index into the modes last given,
    emitted when the user picks a mode (frequency table, coincidence, cursor row).
    ``designValueChosen(element id, quantity, value SI)``: the user asked, in the design
    options, to use a tried value (the main window makes it one undoable edit)."""

    modeSelected = QtCore.Signal(int)
    designValueChosen = QtCore.Signal(str, str, float)

    def __init__(self, parent=None, show_caution: bool = True):
        super().__init__(parent)
        self.study = None
        self.train = self.modes = self.screening = self.response = None
        self.solve_time_s = 0.0
        self.unit_system = "SI"
        self.stale_message: str | None = None
        self.result_tabs: list[ResultTab] = []
        self._pending: set[str] = set()  # keys of hidden views that have not had the study yet
        self._catch_up_timer = QtCore.QTimer(self)
        self._catch_up_timer.setSingleShot(True)
        self._catch_up_timer.setInterval(CATCH_UP_MS)
        self._catch_up_timer.timeout.connect(self.catch_up)

        self.verdict = QtWidgets.QLabel(self)
        self.verdict.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        self.verdict.setTextFormat(QtCore.Qt.PlainText)
        self.verdict.setWordWrap(True)
        self._set_label(self.verdict, "", theme.verdict_style(None))
        self.details = QtWidgets.QLabel(self)
        self.details.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.details.setAlignment(QtCore.Qt.AlignRight | QtCore.Qt.AlignVCenter)

        self.tabs = QtWidgets.QTabWidget(self)
        self.tabs.setDocumentMode(True)
        self.tabs.tabBar().setStyleSheet(DISABLED_TAB_STYLE)
        self.modes_view = ModesView(self)
        self.campbell_view = CampbellView(self)
        self.response_view = ResponseView(self)
        self.add_view("modes", self.modes_view, "Modes",
                      "Natural-frequency table, mode shapes, modal torque and energy shares")
        self.add_view("campbell", self.campbell_view, "Interference diagram",
                      "Excitation orders against natural frequencies over speed, coincidences and the "
                      "speed cursor")
        self.add_view("response", self.response_view, "Forced response",
                      "Damped vibratory torque and stress against speed")
        self.response_tip = self.result_tabs[TAB_RESPONSE].tip
        self.transient_view = TransientView(self)
        self.add_view("transients", self.transient_view, "Transients",
                      "Start-ups, short circuits and load steps in the time domain: torque and speed against "
                      "time, peak torques and the fatigue each event spends (run on request)")
        self.design_view = DesignView(self)
        self.add_view("design_options", self.design_view, "Design options",
                      "What to change: the natural frequencies against one element's value with the "
                      "forbidden bands and the admissible values, a value to try, and what moves the "
                      "selected mode")
        self.design_view.designValueChosen.connect(self.designValueChosen)

        self.caution = QtWidgets.QLabel(CAUTION, self)
        self.caution.setWordWrap(True)
        self.caution.setStyleSheet(theme.CAUTION_STYLE)
        self.caution.setVisible(show_caution)

        self.tabs.setCornerWidget(self.details, QtCore.Qt.TopRightCorner)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(4, 4, 4, 4)
        lay.setSpacing(4)
        lay.addWidget(self.verdict)
        lay.addWidget(self.tabs, 1)
        lay.addWidget(self.caution)
        self.setMinimumSize(520, 380)

        self.tabs.currentChanged.connect(self._tab_shown)
        self.modes_view.modeSelected.connect(self._user_selected)
        self.campbell_view.modeSelected.connect(self._user_selected)
        self.clear_results("No results yet.")

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        # the mode count and solve time sit beside the tabs only where they do not crowd them
        self.details.setVisible(self.width() >= 900)

    # ------------------------------------------------------------ views
    def add_view(self, key: str, view, title: str, tip: str, index: int | None = None) -> ResultTab:
        """Register a result view (see the module docstring) as a tab."""
        tab = ResultTab(key, view, title, tip)
        if index is None or index >= len(self.result_tabs):
            self.result_tabs.append(tab)
            i = self.tabs.addTab(view, title)
        else:
            self.result_tabs.insert(index, tab)
            i = self.tabs.insertTab(index, view, title)
        self.tabs.setTabToolTip(i, tip)
        view.installEventFilter(self)  # a view waiting for the study gets it before it shows
        if hasattr(view, "set_unit_system"):
            view.set_unit_system(self.unit_system)
        if self.study is not None:
            self._show_in(tab)  # registering a view is no live edit: it shows the study at once
        return tab

    def view(self, key: str):
        return next(t.view for t in self.result_tabs if t.key == key)

    def tab_index(self, key: str) -> int:
        """Index of the view registered under ``key``; -1 when there is none."""
        if not any(t.key == key for t in self.result_tabs):
            return -1
        return self.tabs.indexOf(self.view(key))

    def _offer(self, tab: ResultTab) -> None:
        """The study to ``tab``'s view now, or when shown if it is hidden and not light (a
        disabled tab cannot be opened to be shown: it learns at once whether it has something)."""
        if getattr(tab.view, "light_when_hidden", False) or self.tabs.currentWidget() is tab.view \
                or not self.tabs.isTabEnabled(self.tabs.indexOf(tab.view)):
            self._pending.discard(tab.key)
            self._show_in(tab)
        else:
            self._pending.add(tab.key)
            self._catch_up_timer.start()

    def catch_up(self) -> None:
        """Every view that was given no study while hidden gets the one shown (exports, tests)."""
        self._catch_up_timer.stop()
        for tab in [t for t in self.result_tabs if t.key in self._pending]:
            self._bring_up_to_date(tab)

    def _tab_shown(self, index: int) -> None:
        tab = next((t for t in self.result_tabs if self.tabs.indexOf(t.view) == index), None)
        if tab is not None:
            self._bring_up_to_date(tab)

    def _bring_up_to_date(self, tab: ResultTab) -> None:
        if tab.key in self._pending:
            self._pending.discard(tab.key)
            if self.study is not None:
                self._show_in(tab)
                self._select_in(tab.view, self.modes_view.current_index())

    def eventFilter(self, obj, event):
        if event.type() == QtCore.QEvent.Show and self._pending:
            tab = next((t for t in self.result_tabs if t.view is obj), None)
            if tab is not None:
                self._bring_up_to_date(tab)  # before the view's own showEvent draws
        return super().eventFilter(obj, event)

    def _select_in(self, view, index: int) -> None:
        """The selected mode to a view that follows it (not while it waits for the study)."""
        if view is self.modes_view or not hasattr(view, "select_mode"):
            return
        if any(t.view is view and t.key in self._pending for t in self.result_tabs):
            return
        view.select_mode(index)

    def _show_in(self, tab: ResultTab) -> None:
        try:
            why = tab.view.show_study(self.study)
        except Exception as exc:  # the rest still shows; say why this part does not
            tab.view.clear()
            why = f"{tab.title} not shown: {exc}"
        limited = getattr(tab.view, "limited", None) if why is None else None
        index = self.tabs.indexOf(tab.view)
        self._set_tab(index, why is None, why or limited or tab.tip)
        self._grey_tab(index, bool(limited))

    # ------------------------------------------------------------ public API
    def set_study(self, study, solve_time_s: float | None = None) -> None:
        """Show a :class:`core.study.Study` in every view.  ``solve_time_s``: what
        the solve took (the study's own time when not given)."""
        bad = _not_finite(study)
        if bad:
            self.clear_results(bad)
            return
        self.study = study
        self.train, self.modes, self.screening, self.response = \
            study.train, study.modes, study.screening, study.response
        self.solve_time_s = float(study.solve_time_s if solve_time_s is None else solve_time_s)
        for tab in self.result_tabs:
            self._offer(tab)
        if not self.tabs.isTabEnabled(self.tabs.currentIndex()):
            self.tabs.setCurrentIndex(TAB_MODES)
        self._select_in(self.campbell_view, self.modes_view.current_index())
        self._select_in(self.design_view, self.modes_view.current_index())
        self._show_verdict()

    def set_results(self, train, modes, screening, response=None, solve_time_s: float = 0.0) -> None:
        """Compatibility: the parts of a study given one by one (wrapped in a Study)."""
        from core.study import Study, StudyOptions
        if modes is None and screening is not None:
            modes = screening.modes
        self.set_study(Study(train, StudyOptions(), modes, screening, response), solve_time_s)

    def clear_results(self, message: str) -> None:
        """No valid results (e.g. the model cannot be built): say why, keep the layout."""
        self.study = None
        self.train = self.modes = self.screening = self.response = None
        self._pending.clear()
        self._catch_up_timer.stop()
        for tab in self.result_tabs:
            tab.view.clear(message if tab.view is self.campbell_view else "")
            if getattr(tab.view, "limited", None):
                tab.view.limited = None
                self._grey_tab(self.tabs.indexOf(tab.view), False)
        self._set_label(self.verdict, message, theme.verdict_style(None))
        self.details.setText("")

    def set_stale(self, message: str | None) -> None:
        """While the model on screen has errors (``message`` says which), every view
        is greyed and the verdict says the views show the last valid model; there is
        no verdict for a model that has errors.  None: the model is valid again."""
        message = message or None
        if message == self.stale_message:
            return
        self.stale_message = message
        for tab in self.result_tabs:
            if hasattr(tab.view, "set_stale"):
                tab.view.set_stale(message)
        if message is None:
            self.tabs.setGraphicsEffect(None)
        else:
            effect = QtWidgets.QGraphicsColorizeEffect(self.tabs)
            effect.setColor(theme.qcolor(STALE_GREY))
            effect.setStrength(0.85)
            self.tabs.setGraphicsEffect(effect)
        if self.study is not None:
            self._show_verdict()

    @property
    def is_stale(self) -> bool:
        return self.stale_message is not None

    def reset_view_state(self) -> None:
        """A newly opened project: no speed cursor position, no mode selection
        carried over, zoom and chosen axes reset."""
        for tab in self.result_tabs:
            if hasattr(tab.view, "reset_view_state"):
                tab.view.reset_view_state()
        self.tabs.setCurrentIndex(TAB_MODES)

    def select_mode(self, index: int) -> None:
        """Select mode ``index`` (into modes) in every view, without emitting modeSelected."""
        if self.modes is None or not 0 <= index < len(self.modes):
            return
        self.modes_view.blockSignals(True)
        try:
            self.modes_view.select_mode(index)
        finally:
            self.modes_view.blockSignals(False)
        self._select_in(self.campbell_view, index)
        self._select_in(self.design_view, index)

    def current_mode_index(self) -> int:
        return self.modes_view.current_index() if self.modes is not None else -1

    def shutdown(self, msecs: int = 3000) -> None:
        """The window is closing: cancel a transient run and wait for the workers (the main
        window calls this before it goes)."""
        self.transient_view.cancel()
        self.transient_view.wait(msecs)
        self.response_view._pool.waitForDone(msecs)
        self.design_view.stop()
        self.design_view.wait(msecs)

    def set_caution_visible(self, visible: bool) -> None:
        """The main window may hide this copy when it shows the caution itself."""
        self.caution.setVisible(visible)

    def set_unit_system(self, system: str) -> None:
        """'SI' or 'US' for every axis, table column, tooltip and export of every view."""
        self.unit_system = system
        for tab in self.result_tabs:
            if hasattr(tab.view, "set_unit_system"):
                tab.view.set_unit_system(system)

    # ------------------------------------------------------------ exports
    def export_menu_actions(self, parent) -> list[QtGui.QAction]:
        """File > Export entries: CSV of the tables, PNG and SVG of each plot."""
        items = [
            ("Natural frequencies as CSV…", "csv", self.export_frequency_csv, "natural_frequencies.csv"),
            ("Coincidences as CSV…", "csv", self.export_coincidence_csv, "coincidences.csv"),
            ("Forced response peaks as CSV…", "csv", self.export_response_csv, "forced_response.csv"),
            ("Transient peaks and damage as CSV…", "csv", self.export_transient_csv, "transient.csv"),
            ("Design options (admissible values) as CSV…", "csv", self.export_design_csv, "design_options.csv"),
            ("Sensitivities of the selected mode as CSV…", "csv", self.export_sensitivity_csv,
             "sensitivities.csv"),
            (None, None, None, None),
        ]
        for name, key in (("Mode shape plot", "modes"), ("Interference diagram", "campbell"),
                          ("Forced response plot", "response"), ("Transient plot", "transients"),
                          ("Design options chart", "design"), ("Sensitivity chart", "sensitivity")):
            for ext in ("png", "svg"):
                items.append((f"{name} as {ext.upper()}…", ext,
                              (lambda path, k=key: self.export_plot(k, path)), f"{key}.{ext}"))
        actions = []
        for text, ext, func, default in items:
            a = QtGui.QAction(text or "", parent)
            if text is None:
                a.setSeparator(True)
            else:
                a.triggered.connect(lambda _=False, e=ext, f=func, d=default, t=text:
                                    self._ask_and_export(t, e, f, d))
            actions.append(a)
        return actions

    def _ask_and_export(self, text, ext, func, default) -> None:
        if self.modes is None:
            QtWidgets.QMessageBox.information(self, "Export", "There are no results to export yet.")
            return
        if self.is_stale:
            QtWidgets.QMessageBox.information(
                self, "Export", "The model on screen has an error, so the results shown belong to the "
                f"last valid model; fix the model first.\n\n{self.stale_message}")
            return
        filt = {"csv": "CSV table (*.csv)", "png": "PNG image (*.png)", "svg": "SVG drawing (*.svg)"}[ext]
        path, _ = QtWidgets.QFileDialog.getSaveFileName(self, "Export " + text.rstrip("…").lower(),
                                                        default, filt)
        if not path:
            return
        if not path.lower().endswith("." + ext):
            path += "." + ext
        try:
            func(path)
        except (OSError, ValueError) as exc:
            QtWidgets.QMessageBox.warning(self, "Export", f"Could not write {path}:\n{exc}")

    def _check_exportable(self) -> None:
        self.catch_up()  # an export reads the views: every one shows the current study
        if self.modes is None:
            raise ValueError("there are no results to export")
        if self.is_stale:
            raise ValueError("the model on screen has an error; the results shown belong to the last "
                             "valid model")

    def export_frequency_csv(self, path: str) -> None:
        self._check_exportable()
        title = f"Natural frequencies: {self.train.title}"
        write_csv(path, title, R.FREQUENCY_HEADERS, self.modes_view.table_model.rows)

    def export_coincidence_csv(self, path: str) -> None:
        self._check_exportable()
        if self.screening is None:
            raise ValueError("there is no interference screening (no operating data)")
        title = (f"Coincidences: {self.train.title}, required margin {fmt.percent(self.screening.margin)} %, "
                 f"verdict {self.screening.verdict.upper()}")
        write_csv(path, title, R.COINCIDENCE_HEADERS, self.campbell_view.coincidence_model.rows)

    def export_response_csv(self, path: str) -> None:
        """The forced response's peak table as shown (units of the display system)."""
        self._check_exportable()
        if self.response is None:
            raise ValueError("there is no forced response (no excitation amplitudes)")
        rv = self.response_view
        n = len(rv.exceeded)
        judged = "; ".join(filter(None, [f"{n} permissible value(s) exceeded" if n else "",
                                         f"units {self.unit_system}"]))
        title = f"Forced response peaks: {self.train.title}; {judged}"
        write_csv(path, title, R.response_headers(self.unit_system, one_line=True), rv.peak_model.rows)

    def export_transient_csv(self, path: str) -> None:
        """The transient peak and damage table of the event shown (units of the display system)."""
        self._check_exportable()
        if self.transient_view.results is None:
            raise ValueError("no transient has been run on this model (Transients tab, Run)")
        self.transient_view.export_csv(path)

    def export_design_csv(self, path: str) -> None:
        """The admissible values of the element shown in the design options (display units)."""
        self._check_exportable()
        self.design_view.export_csv(path)

    def export_sensitivity_csv(self, path: str) -> None:
        """Every stiffness and inertia sensitivity of the mode the design options explain."""
        self._check_exportable()
        self.design_view.export_sensitivity_csv(path)

    def export_plot(self, which: str, path: str) -> None:
        """``which``: 'modes', 'campbell', 'response', 'transients', 'design' or 'sensitivity';
        format from the extension (.png / .svg)."""
        self._check_exportable()
        if which == "transients" and self.transient_view.results is None:
            raise ValueError("no transient has been run on this model (Transients tab, Run)")
        canvas = {"modes": self.modes_view.canvas, "campbell": self.campbell_view.canvas,
                  "response": self.response_view.canvas, "transients": self.transient_view.canvas,
                  "design": self.design_view.canvas, "sensitivity": self.design_view.sens_canvas}[which]
        if which == "campbell" and self.screening is None:
            raise ValueError("there is no interference diagram (no operating data)")
        if which == "response" and self.response is None:
            raise ValueError("there is no forced response (no excitation amplitudes)")
        if which == "design" and self.design_view.window() is None:
            raise ValueError("there is no design options chart (no operating data, or it is being computed)")
        if which == "sensitivity" and not self.design_view.sensitivity_bars():
            raise ValueError("there are no sensitivities to show")
        view = {"campbell": self.campbell_view, "response": self.response_view,
                "design": self.design_view}.get(which)
        if view is not None:
            view.ensure_drawn()  # drawn lazily while its tab is hidden
        canvas.export(path)

    # ------------------------------------------------------------ internals
    def _set_tab(self, index: int, enabled: bool, tip: str | None = None) -> None:
        """Enable a tab (and set its tip) only when that changes: each call re-lays out the tab bar."""
        if self.tabs.isTabEnabled(index) != enabled:
            self.tabs.setTabEnabled(index, enabled)
        if tip is not None and self.tabs.tabToolTip(index) != tip:
            self.tabs.setTabToolTip(index, tip)

    def _grey_tab(self, index: int, grey: bool) -> None:
        """A tab that shows only part of its view (``view.limited``) looks disabled but stays open."""
        bar = self.tabs.tabBar()
        want = theme.qcolor(DISABLED_TAB_TEXT) if grey else QtGui.QColor()
        if bar.tabTextColor(index) != want:
            bar.setTabTextColor(index, want)

    def _set_label(self, label, text: str, style: str | None = None) -> None:
        """setText / setStyleSheet only on a change: a style sheet set again re-polishes the label."""
        if label.text() != text:
            label.setText(text)
        if style is not None and label.property("style_text") != style:
            label.setProperty("style_text", style)
            label.setStyleSheet(style)

    def _user_selected(self, index: int) -> None:
        self.select_mode(index)
        self.modeSelected.emit(index)

    def acceptance_pending(self) -> bool:
        """The study shown has a forced response whose acceptance checks are still being computed
        (the second stage, app.gui.compute): no verdict yet, since they may change it (a PASS that
        the checks then fail, or an OPEN that asks for amplitudes already given)."""
        st = self.study
        return (st is not None and st.response is not None and st.acceptance is None
                and "acceptance" not in st.options.parts)

    def verdict_text(self) -> tuple[str, bool | None]:
        """The verdict line of the study shown and its colour (True green, False red,
        None grey): the headline every view states (:func:`app.wording.headline`) —
        the separation verdict where every mode clears, else the acceptance argument."""
        st = self.study
        if st is None:
            return "No results yet.", None
        if st.screening_error is None and self.acceptance_pending():
            sep = "" if st.screening is None else f" (separation screening: {st.screening.verdict.upper()})"
            return f"Checking the forced response against its limits…{sep}", None
        text, ok = wording.headline(st)
        if st.response_error is not None and st.has_amplitudes:
            text = text.rstrip(".") + f" (forced response not computed: {st.response_error})."
        return text, ok

    def verdict_summary(self) -> tuple[str, bool | None]:
        """A short verdict for a status bar and its colour (True green, False red,
        None grey) that follows the headline: its first word (PASS, FAIL, OPEN) and
        what it rests on; no PASS while the model on screen has errors."""
        st = self.study
        if st is None:
            return "no results", None
        if self.is_stale:
            return "no verdict (the model has an error)", None
        if st.screening_error is not None:
            return "no verdict (cannot screen)", None
        if self.acceptance_pending():
            return "checking the forced response…", None
        text, ok = self.verdict_text()
        s = st.screening
        if s is None:
            if st.acceptance_failed or st.response_failed:
                return "FAIL (forced response)", False
            return "no screening (no operating data)", None
        word = text.split(" — ", 1)[0]
        arg = st.argument if not s.passed else None
        n_checks = len(st.acceptance.failures) if st.acceptance is not None else len(st.exceedances)
        parts = []
        if arg is not None:
            accepted = len(arg.forced_response)
            failed = sum(1 for m in arg.modes if m.basis == "fail")
            open_ = sum(1 for m in arg.modes if m.basis == "open")
            if accepted:
                parts.append(f"{accepted} mode{'s' if accepted != 1 else ''} accepted on the forced response")
            if failed:
                parts.append(f"{failed} mode{'s' if failed != 1 else ''} failing")
            if open_:
                parts.append(f"{open_} mode{'s' if open_ != 1 else ''} not yet accepted")
        elif not s.passed:
            parts.append(f"{len(s.failures)} inside the margin")
        if n_checks and ok is not True:
            parts.append(f"{n_checks} check{'s' if n_checks != 1 else ''} fail{'' if n_checks != 1 else 's'}")
        if word == "PASS" and not parts:
            return "PASS", True
        return (f"{word} ({'; '.join(parts)})" if parts else word), ok

    def _show_verdict(self) -> None:
        m = self.modes
        n_el = int(m.elastic.sum())
        details = f"{len(m)} modes ({n_el} elastic) · solved in {self.solve_time_s * 1e3:.1f} ms"
        text, ok = self.verdict_text()
        if self.is_stale:
            # a verdict exists only for the model on screen: grey, and no PASS while it has errors
            details = "last valid model · " + details
            self._set_label(self.verdict, f"No verdict: the model on screen has an error — "
                            f"{self.stale_message}. The greyed views show the last valid model.",
                            theme.verdict_style(None))
        else:
            self._set_label(self.verdict, text, theme.verdict_style(ok))
        if self.response is not None and self.response_view.exceeded:
            details += f" · {len(self.response_view.exceeded)} response exceedance(s)"
        self._set_label(self.details, details)
        self.verdict.setToolTip(details if not self.is_stale else f"Last valid model: {text}\n{details}")


def _not_finite(study) -> str | None:
    """The message for a study holding a non-number (None when every shown value is finite):
    such a study never shows a verdict (core refuses these; this is the last guard)."""
    m = study.modes
    f = np.asarray(m.frequency_hz, float)
    if f.size and not np.isfinite(f).all():
        k = int(np.flatnonzero(~np.isfinite(f))[0])
        return (f"No verdict: the natural frequency of mode {int(m.number[k])} is not a number; "
                "check the model's values (a speed ratio or stiffness far out of range).")
    s = study.screening
    if s is not None:
        seps = [c.separation for c in s.coincidences]
        if seps and not np.isfinite(np.asarray(seps, float)).all():
            return "No verdict: a separation margin is not a number; check the model's values."
    if study.response is not None:
        for p in study.response_peaks:
            for v in (p.peak_torque, p.peak_stress):
                if v is not None and not np.isfinite(v):
                    return (f"No verdict: the forced response of {study.train.name_of(p.link_id)} is not a "
                            "number; check the model's values.")
    return None
