"""ResultsPanel: every result view of the desktop program in one widget.

A verdict line on top, then three tabs (natural frequencies and mode shapes,
the interference diagram, the forced response) and the screening-only
caution at the bottom.  The main window feeds it with ``set_results`` after
every solve; the panel only shows what core computed.
"""
from __future__ import annotations

from PySide6 import QtCore, QtGui, QtWidgets

from app import formatting as fmt
from core.about import CAUTION
from app.gui import theme

from . import rows as R
from .campbell_view import CampbellView
from .modes_view import ModesView
from .response_view import ResponseView
from .table import write_csv

TAB_MODES, TAB_CAMPBELL, TAB_RESPONSE = 0, 1, 2


class ResultsPanel(QtWidgets.QWidget):
    """Result views.  ``modeSelected(int)``: index into the modes last given,
    emitted when the user picks a mode (frequency table, coincidence, cursor row)."""

    modeSelected = QtCore.Signal(int)

    def __init__(self, parent=None, show_caution: bool = True):
        super().__init__(parent)
        self.train = self.modes = self.screening = self.response = None
        self.solve_time_s = 0.0

        self.verdict = QtWidgets.QLabel(self)
        self.verdict.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        self.verdict.setTextFormat(QtCore.Qt.PlainText)
        self.verdict.setWordWrap(True)
        self._set_label(self.verdict, "", theme.verdict_style(None))
        self.details = QtWidgets.QLabel(self)
        self.details.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.details.setAlignment(QtCore.Qt.AlignRight | QtCore.Qt.AlignVCenter)

        self.modes_view = ModesView(self)
        self.campbell_view = CampbellView(self)
        self.response_view = ResponseView(self)
        self.tabs = QtWidgets.QTabWidget(self)
        self.tabs.setDocumentMode(True)
        self.tabs.addTab(self.modes_view, "Modes")
        self.tabs.addTab(self.campbell_view, "Interference diagram")
        self.tabs.addTab(self.response_view, "Forced response")
        self.tabs.setTabToolTip(TAB_MODES, "Natural-frequency table, mode shapes, modal torque and energy shares")
        self.tabs.setTabToolTip(TAB_CAMPBELL, "Excitation orders against natural frequencies over speed, "
                                              "coincidences and the speed cursor")
        self.response_tip = "Damped vibratory torque and stress against speed"
        self.tabs.setTabToolTip(TAB_RESPONSE, self.response_tip)

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

        self.modes_view.modeSelected.connect(self._user_selected)
        self.campbell_view.modeSelected.connect(self._user_selected)
        self.clear_results("No results yet.")

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        # the mode count and solve time sit beside the tabs only where they do not crowd them
        self.details.setVisible(self.width() >= 900)

    # ------------------------------------------------------------ public API
    def set_results(self, train, modes, screening, response=None, solve_time_s: float = 0.0) -> None:
        """Show a solve: modes (core.solver.Modes), screening (core.screening.Screening
        or None without operating data), response (core.response.Response or None)."""
        if modes is None and screening is not None:
            modes = screening.modes
        previous = self.current_mode_index()
        previous_number = None
        if self.modes is not None and 0 <= previous < len(self.modes):
            previous_number = int(self.modes.number[previous])
        self.train, self.modes, self.screening, self.response = train, modes, screening, response
        self.solve_time_s = float(solve_time_s)
        if not self.tabs.isEnabled():
            self.tabs.setEnabled(True)
        # keep the same mode number selected across live edits
        keep = None if previous_number is None else R.mode_index(modes, previous_number)
        self.modes_view.set_modes(modes, screening.cap_hz if screening is not None else None, keep)
        if screening is not None:
            self.campbell_view.set_screening(screening, modes)
        else:
            self.campbell_view.clear("No operating data: give the reference disc, the operating speed "
                                     "range and the excitations to draw the interference diagram.")
        self._set_tab(TAB_CAMPBELL, True)
        if response is not None:
            try:
                self.response_view.set_response(train, response)
                self._set_tab(TAB_RESPONSE, True, self.response_tip)
            except Exception as exc:  # the rest still shows; say why this part does not
                self.response_view.clear()
                self._set_tab(TAB_RESPONSE, False, f"Forced response not shown: {exc}")
        else:
            if self.response_view.response is not None:
                self.response_view.clear()
            self._set_tab(TAB_RESPONSE, False, "No excitation has an amplitude: give amplitudes to the "
                                               "excitation orders to compute the forced response.")
        if not self.tabs.isTabEnabled(self.tabs.currentIndex()):
            self.tabs.setCurrentIndex(TAB_MODES)
        self.campbell_view.select_mode(self.modes_view.current_index())
        self._show_verdict()

    def clear_results(self, message: str) -> None:
        """No valid results (e.g. the model has an error): say why, keep the layout."""
        self.train = self.modes = self.screening = self.response = None
        self.modes_view.clear()
        self.campbell_view.clear(message)
        self.response_view.clear()
        self._set_label(self.verdict, message, theme.verdict_style(None))
        self.details.setText("")

    def select_mode(self, index: int) -> None:
        """Select mode ``index`` (into modes) in every view, without emitting modeSelected."""
        if self.modes is None or not 0 <= index < len(self.modes):
            return
        self.modes_view.blockSignals(True)
        try:
            self.modes_view.select_mode(index)
        finally:
            self.modes_view.blockSignals(False)
        self.campbell_view.select_mode(index)

    def current_mode_index(self) -> int:
        return self.modes_view.current_index() if self.modes is not None else -1

    def set_caution_visible(self, visible: bool) -> None:
        """The main window may hide this copy when it shows the caution itself."""
        self.caution.setVisible(visible)

    def set_unit_system(self, system: str) -> None:
        """'SI' or 'US' for the response view's torque and stress."""
        self.response_view.unit_system = system
        if self.response is not None:
            self.response_view.set_response(self.train, self.response)

    # ------------------------------------------------------------ exports
    def export_menu_actions(self, parent) -> list[QtGui.QAction]:
        """File > Export entries: CSV of the two tables, PNG and SVG of each plot."""
        items = [
            ("Natural frequencies as CSV…", "csv", self.export_frequency_csv, "natural_frequencies.csv"),
            ("Coincidences as CSV…", "csv", self.export_coincidence_csv, "coincidences.csv"),
            (None, None, None, None),
        ]
        for name, key in (("Mode shape plot", "modes"), ("Interference diagram", "campbell"),
                          ("Forced response plot", "response")):
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

    def export_frequency_csv(self, path: str) -> None:
        if self.modes is None:
            raise ValueError("there are no results to export")
        title = f"Natural frequencies: {self.train.title}"
        write_csv(path, title, R.FREQUENCY_HEADERS, self.modes_view.table_model.rows)

    def export_coincidence_csv(self, path: str) -> None:
        if self.screening is None:
            raise ValueError("there is no interference screening (no operating data)")
        title = (f"Coincidences: {self.train.title}, required margin {fmt.percent(self.screening.margin)} %, "
                 f"verdict {self.screening.verdict.upper()}")
        write_csv(path, title, R.COINCIDENCE_HEADERS, self.campbell_view.coincidence_model.rows)

    def export_plot(self, which: str, path: str) -> None:
        """``which``: 'modes', 'campbell' or 'response'; format from the extension (.png / .svg)."""
        canvas = {"modes": self.modes_view.canvas, "campbell": self.campbell_view.canvas,
                  "response": self.response_view.canvas}[which]
        if which == "campbell" and self.screening is None:
            raise ValueError("there is no interference diagram (no operating data)")
        if which == "response" and self.response is None:
            raise ValueError("there is no forced response (no excitation amplitudes)")
        view = {"campbell": self.campbell_view, "response": self.response_view}.get(which)
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

    def _show_verdict(self) -> None:
        m, s = self.modes, self.screening
        n_el = int(m.elastic.sum())
        details = f"{len(m)} modes ({n_el} elastic) · solved in {self.solve_time_s * 1e3:.1f} ms"
        if s is None:
            self._set_label(self.verdict, "Natural frequencies only: no operating data to screen against.",
                            theme.verdict_style(None))
        elif s.passed:
            self._set_label(self.verdict, f"PASS: every excitation keeps at least {fmt.percent(s.margin)} % "
                            "separation from the natural frequencies in the operating range.",
                            theme.verdict_style(True))
        else:
            w = s.failures[0]
            n = len(s.failures)
            self._set_label(self.verdict, f"FAIL: {n} coincidence{'s' if n > 1 else ''} inside the "
                            f"{fmt.percent(s.margin)} % margin; worst mode {w.mode} "
                            f"({fmt.hz(w.frequency_hz)} Hz) with {w.line.label}, "
                            f"{fmt.percent(w.separation)} %.", theme.verdict_style(False))
        if self.response is not None and self.response_view.exceeded:
            details += f" · {len(self.response_view.exceeded)} response exceedance(s)"
        self._set_label(self.details, details)
        self.verdict.setToolTip(details)
