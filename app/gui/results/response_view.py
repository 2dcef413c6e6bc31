"""Forced response: vibratory torque or shear stress against speed for chosen
links, with their permissible values and the operating range.

Coded against ``core.response`` (Response, response_summary, exceedances);
nothing is recomputed here.  Speeds are rpm of the reference shaft.
"""
from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from app import formatting as fmt
from app import wording
from app.gui import theme
from core import units
from core.bands import OPERATING

from . import rows as R
from . import speed_axis as SA
from .legend import FlowLegend, arrange_key
from .plotting import DrawWhenShown, PlotCanvas, new_plot, plot_over_table
from .table import ElidingComboBox, RowsModel, make_table_view

RPM = 2.0 * math.pi / 60.0
TORQUE, STRESS, SHARE = "Vibratory torque", "Vibratory shear stress", "Share of permissible"
QUANTITY_TIP = ("Vibratory torque amplitude in each chosen link (with, where load cases are given, the mean "
                "torque of one beside it); the shear stress amplitude (shafts with geometry, times their stress "
                "concentration factor); or the amplitude as a share of the link's permissible torque or "
                "stress, so links of very different size read on one scale.")
#: the quantity "vibratory torque" with the mean torque of one load case beside it
MEAN_PREFIX = "Vibratory and mean torque, "
SUM, PHASED = "Sum of order amplitudes (conservative)", "Phase-aware synthesis"
#: curves closer than this share of the plot's height are drawn as lying on each other
OVERLAP = 0.01
MAX_DEFAULT_LINKS = 4
#: the most of the view's height the tables below the plot take when fitted to their rows
LOWER_SHARE = 0.6
#: the acceptance table is fitted to at most this many rows (the rest scroll)
ACCEPTANCE_ROWS_FITTED = 5
#: the utilisation bar's full width (150 % of the limit); the limit is marked at 100 %
BAR_FULL = 1.5


class _PeakSignals(QtCore.QObject):
    done = QtCore.Signal(object)  # the study whose band peaks are polished


class _PeakJob(QtCore.QRunnable):
    """Touches ``study.band_peaks`` (a cached property: the re-solves run here, once)."""

    def __init__(self, study, signals: _PeakSignals):
        super().__init__()
        self.study, self.signals = study, signals

    def run(self):
        try:
            self.study.band_peaks
        except Exception:  # the table keeps the peaks at the computed speeds
            pass
        try:
            self.signals.done.emit(self.study)
        except RuntimeError:
            pass  # the view went while the peaks were polished


class UtilisationDelegate(QtWidgets.QStyledItemDelegate):
    """Paints a check's utilisation as a bar (full width: 150 % of its limit) with a mark at
    the limit (100 %): green within it, red over it; the percentage written on it."""

    def paint(self, painter, option, index):
        model = index.model()
        row = model.rows[index.row()] if hasattr(model, "rows") and index.row() < len(model.rows) else None
        u = None if row is None else row.extra.get("utilisation")
        if u is None or not math.isfinite(u):
            super().paint(painter, option, index)
            return
        painter.save()
        if option.state & QtWidgets.QStyle.State_Selected:
            painter.fillRect(option.rect, option.palette.highlight())
        r = option.rect.adjusted(3, 4, -3, -4)
        text_w = option.fontMetrics.horizontalAdvance("9999.9 %") + 4  # the percentage, right of the bar
        bar = QtCore.QRectF(r.left(), r.top(), max(r.width() - text_w, 10), r.height())
        over = u > 1.0
        w = bar.width() * min(max(u, 0.0), BAR_FULL) / BAR_FULL
        painter.fillRect(QtCore.QRectF(bar.left(), bar.top(), w, bar.height()),
                         theme.qcolor(theme.FAIL if over else theme.PASS, 190 if over else 130))
        painter.setPen(QtGui.QPen(theme.qcolor(theme.FRAME), 1.0))
        painter.drawRect(bar)
        x100 = bar.left() + bar.width() / BAR_FULL  # the limit
        painter.setPen(QtGui.QPen(theme.qcolor(theme.INK), 1.5))
        painter.drawLine(QtCore.QPointF(x100, bar.top() - 2), QtCore.QPointF(x100, bar.bottom() + 2))
        painter.setPen(theme.qcolor(theme.FAIL if over else theme.INK))
        text_rect = QtCore.QRectF(bar.right(), option.rect.top(), option.rect.right() - bar.right() - 3,
                                  option.rect.height())
        painter.drawText(text_rect, int(QtCore.Qt.AlignRight | QtCore.Qt.AlignVCenter),
                         index.data(QtCore.Qt.DisplayRole))
        painter.restore()

    def sizeHint(self, option, index):
        hint = super().sizeHint(option, index)
        return QtCore.QSize(max(hint.width(), option.fontMetrics.horizontalAdvance("9999.9 %") + 50), hint.height())


def fit_acceptance_columns(view: QtWidgets.QTableView) -> None:
    """Numbers and the band as narrow as their contents; the link, the criterion and the
    load case share what is left (elided in the middle, the row's tooltip says it all)."""
    if view.property("columns_fitted") or not view.model().rowCount():
        return
    view.setProperty("columns_fitted", True)
    view.resizeColumnsToContents()
    h = view.horizontalHeader()
    for c in range(h.count()):
        h.resizeSection(c, min(h.sectionSize(c) + 4, 170))
    fm = view.fontMetrics()
    h.resizeSection(4, max(h.sectionSize(4), fm.horizontalAdvance("9999.9 %") + 54))
    h.setStretchLastSection(False)
    h.setMinimumSectionSize(40)
    h.resizeSection(0, min(h.sectionSize(0), 130))
    for c in (1, 2):
        h.setSectionResizeMode(c, QtWidgets.QHeaderView.Stretch)
    view.resizeRowsToContents()


def default_links(resp, summary) -> list[str]:
    """Links worth plotting first: those with a permissible value, then the
    largest peaks, at most MAX_DEFAULT_LINKS."""
    ranked = sorted(summary, key=lambda p: -(p.peak_torque if p.peak_torque is not None else 0.0))
    judged = [p.link_id for p in ranked if p.passed is not None]
    rest = [p.link_id for p in ranked if p.passed is None]
    chosen = (judged + rest)[:MAX_DEFAULT_LINKS]
    return chosen or list(resp.link_ids[:MAX_DEFAULT_LINKS])


def overlapping(curves, tolerance: float, share: float = 0.5):
    """For each curve (y arrays over the same speeds), the index of an earlier
    curve it lies on (within ``tolerance`` at ``share`` or more of the finite
    points: it would be hidden there), else None."""
    out = []
    for k, y in enumerate(curves):
        hit = None
        for j in range(k):
            d = np.abs(np.asarray(y, float) - np.asarray(curves[j], float))
            d = d[np.isfinite(d)]
            if d.size and float(np.mean(d <= tolerance)) >= share:
                hit = j
                break
        out.append(hit)
    return out


def fit_peak_columns(view: QtWidgets.QTableView) -> None:
    """Columns as narrow as their contents (a few pixels of air), the link's name
    taking what is left and elided (its tooltip carries it whole): the nine
    columns fit a 1366-pixel screen.  Done once, as fit_columns does."""
    if view.property("columns_fitted") or not view.model().rowCount():
        return
    view.setProperty("columns_fitted", True)
    view.resizeColumnsToContents()
    h = view.horizontalHeader()
    for c in range(1, h.count()):
        h.resizeSection(c, min(h.sectionSize(c) + 4, 140))
    status = view.model().columnCount() - 1  # "PASS" / "FAIL" in bold, no wider
    bold = QtGui.QFontMetrics(theme.font(bold=True))
    h.resizeSection(status, max(bold.horizontalAdvance("FAIL"), view.fontMetrics().horizontalAdvance("Status")) + 14)
    h.setStretchLastSection(False)
    h.setMinimumSectionSize(36)
    h.setSectionResizeMode(0, QtWidgets.QHeaderView.Stretch)


class ResponseView(DrawWhenShown, QtWidgets.QWidget):
    """The plot of the ticked links above; the order choice and the peak table
    (one row per link, tick a row to plot it) below, so that the controls and
    the table fit a 1366 x 768 screen without scrolling."""

    #: its plots draw when the tab shows; the tables it keeps current cost little (see panel)
    light_when_hidden = True

    def __init__(self, parent=None):
        super().__init__(parent)
        self.train = None
        self.response = None
        self.summary = []
        self.exceeded = []
        self.unit_system = "SI"
        self._draw_pending = False  # new results arrived while the plot was hidden
        self._user_ticked = False  # the user chose links: keep them across live edits

        self.quantity = ElidingComboBox(self)
        self.quantity.addItems([TORQUE, STRESS, SHARE])
        self.quantity.setToolTip(QUANTITY_TIP)
        # a long load-case entry is elided in the box (whole in the list and the tooltip)
        self.quantity.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.quantity.setMinimumContentsLength(len(STRESS))
        self.combination = QtWidgets.QComboBox(self)
        self.combination.setToolTip("How the orders are combined: the plain sum of amplitudes is "
                                    "conservative; the phase-aware synthesis uses the given phases. "
                                    "Or one order alone.")
        # wide enough for the two combinations; a long single-order entry is elided in the
        # box (its full text is in the list and the tooltip)
        self.combination.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.combination.setMinimumContentsLength(max(len(SUM), len(PHASED)))
        self.quantity.currentIndexChanged.connect(lambda _i: self._quantity_changed())
        self.combination.currentIndexChanged.connect(lambda _i: self._combination_changed())

        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Forced response"
        self.plot = new_plot(self.canvas, 0, "Reference speed, rpm", "")
        self.plot.getAxis("left").setWidth(72)
        self._rpm, self._plotted = None, []
        self._marks = SA.SpeedMarksLayer(self.plot)  # speed bands and ranges, kept between redraws
        # the key below the plot, never over the curves
        self.legend = FlowLegend()
        self.canvas.addItem(self.legend, row=1, col=0)
        self.canvas.ci.layout.setRowStretchFactor(0, 10)
        # below the plot, or beside it where a key below would squeeze a short plot
        self._key_side = False
        self.canvas.layout_hooks.append(self._arrange_key)
        self.hover = QtWidgets.QLabel(self)
        self.hover.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.verdict = QtWidgets.QLabel(self)
        self.verdict.setWordWrap(True)

        self.peak_model = RowsModel(R.response_headers(), self, numeric_columns=(2, 3, 4, 5, 6, 7),
                                    status_column=8, check_column=0)
        self.peak_table = make_table_view(self.peak_model, self)
        self.peak_table.horizontalHeader().setDefaultAlignment(QtCore.Qt.AlignLeft | QtCore.Qt.AlignBottom)
        # compact rows: a ten-link train's table and the plot share a 1366 x 768 screen
        self.peak_table.verticalHeader().setDefaultSectionSize(self.peak_table.fontMetrics().height() + 3)
        self.peak_table.setToolTip("Peak vibratory torque and stress per link in the chosen speed band "
                                   "(sum of order amplitudes) against the permissible values. "
                                   "Tick a link to plot it.")
        self.peak_model.checkedChanged.connect(self._ticked)
        self.links_note = QtWidgets.QLabel("Tick links in the table to plot them.", self)
        self.links_note.setStyleSheet(f"color: {theme.INK_MUTED};")
        # the peaks of one speed band (study.band_peaks, polished between the computed speeds)
        self.band_box = QtWidgets.QComboBox(self)
        self.band_box.setToolTip("The speed band whose peaks the table lists: the operating range "
                                 "(continuous running), start-up and run-down, or overspeed up to trip; "
                                 "each judged against its own permissible values.")
        self.band_box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToContents)
        self.band_box.currentIndexChanged.connect(lambda _i: self._band_changed())
        self.band_note = QtWidgets.QLabel(self)
        self.band_note.setStyleSheet(f"color: {theme.INK_MUTED};")

        # the acceptance checks, worst first, utilisation drawn as a bar; a click shows the curve
        self.acceptance = None
        self.acceptance_model = RowsModel(R.ACCEPTANCE_HEADERS_SHOWN, self, numeric_columns=(5, 6),
                                          status_column=7)
        self.acceptance_table = make_table_view(self.acceptance_model, self)
        self.acceptance_table.verticalHeader().setDefaultSectionSize(
            self.acceptance_table.fontMetrics().height() + 5)
        self.acceptance_table.setItemDelegateForColumn(4, UtilisationDelegate(self.acceptance_table))
        self.acceptance_table.setTextElideMode(QtCore.Qt.ElideMiddle)
        # a criterion's words wrap onto a second line rather than lose their middle
        self.acceptance_table.setWordWrap(True)
        self.acceptance_table.verticalHeader().setSectionResizeMode(QtWidgets.QHeaderView.ResizeToContents)
        self.acceptance_table.setToolTip("Every acceptance check per link, criterion, load case and speed "
                                         "band, the worst utilisation first. Click a row to show that "
                                         "link's curve at that speed.")
        self.acceptance_table.clicked.connect(self._check_clicked)
        self.acceptance_table.selectionModel().currentRowChanged.connect(
            lambda cur, _prev: self._check_clicked(cur))
        self.acceptance_title = QtWidgets.QLabel("Click a row to show its link at that speed.", self)
        self.acceptance_title.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.acceptance_title.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self.case_box = ElidingComboBox(self)
        self.case_box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToMinimumContentsLengthWithIcon)
        self.case_box.setMinimumContentsLength(16)
        self.case_box.setToolTip("The checks of every load case, or of one")
        self.case_box.currentIndexChanged.connect(lambda _i: self._case_changed())

        # mean torque of a load case beside the vibratory torque (acceptance.mean_torque)
        self._marker = None  # the check clicked (core.acceptance.Check)
        self.curve_key_texts = []

        plot_box = QtWidgets.QWidget(self)
        pl = QtWidgets.QVBoxLayout(plot_box)
        pl.setContentsMargins(0, 0, 0, 0)
        pl.setSpacing(2)
        pl.addWidget(self.canvas, 1)
        foot = QtWidgets.QHBoxLayout()
        foot.setContentsMargins(0, 0, 0, 0)
        foot.addWidget(self.hover, 1)
        pl.addLayout(foot)
        self.hover.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)

        lower = QtWidgets.QWidget(self)
        ll = QtWidgets.QVBoxLayout(lower)
        ll.setContentsMargins(0, 4, 0, 0)
        ll.setSpacing(3)
        bar = QtWidgets.QHBoxLayout()
        bar.setContentsMargins(0, 0, 0, 0)
        bar.addWidget(QtWidgets.QLabel("Quantity"))
        bar.addWidget(self.quantity)
        bar.addSpacing(12)
        bar.addWidget(QtWidgets.QLabel("Orders"))
        bar.addWidget(self.combination, 1)
        bar.addSpacing(12)
        bar.addWidget(self.links_note)
        ll.addLayout(bar)

        # each page's own choice sits in the tab bar's corner: the load case of the checks, the
        # speed band of the peaks (a 1366 x 768 screen has no row to spare)
        peaks_page = QtWidgets.QWidget(self)
        pp = QtWidgets.QVBoxLayout(peaks_page)
        pp.setContentsMargins(0, 2, 0, 0)
        pp.setSpacing(2)
        pp.addWidget(self.verdict)  # without an acceptance: the peaks against the permissible values
        pp.addWidget(self.peak_table, 1)
        band_corner = QtWidgets.QWidget(self)
        band_row = QtWidgets.QHBoxLayout(band_corner)
        band_row.setContentsMargins(0, 0, 0, 0)
        band_row.addWidget(QtWidgets.QLabel("Peaks in"))
        band_row.addWidget(self.band_box)
        accept_page = QtWidgets.QWidget(self)
        ap = QtWidgets.QVBoxLayout(accept_page)
        ap.setContentsMargins(0, 2, 0, 0)
        ap.setSpacing(2)
        self.acceptance_verdict = QtWidgets.QLabel(self)
        self.acceptance_verdict.setWordWrap(True)
        ap.addWidget(self.acceptance_verdict)
        ap.addWidget(self.acceptance_table, 1)
        case_corner = QtWidgets.QWidget(self)
        case_row = QtWidgets.QHBoxLayout(case_corner)
        case_row.setContentsMargins(0, 0, 0, 0)
        self.case_label = QtWidgets.QLabel("Load case")
        case_row.addWidget(self.case_label)
        case_row.addWidget(self.case_box)
        self.acceptance_title.hide()  # the hint is the table's tooltip
        self.corner = QtWidgets.QStackedWidget(self)
        self.corner.addWidget(case_corner)
        self.corner.addWidget(band_corner)
        self.lower_tabs = QtWidgets.QTabWidget(self)
        self.lower_tabs.setDocumentMode(True)
        self.lower_tabs.addTab(accept_page, "Acceptance checks")
        self.lower_tabs.addTab(peaks_page, "Peaks per link")
        self.lower_tabs.setCornerWidget(self.corner, QtCore.Qt.TopRightCorner)
        self.lower_tabs.currentChanged.connect(self._corner_follows)
        self._corner_follows(0)
        self.lower_tabs.setTabToolTip(0, "Every check of the acceptance: per link, criterion, load case and "
                                         "speed band, worst first")
        self.lower_tabs.setTabToolTip(1, "Peak torque and stress per link in a speed band; tick links to plot")
        self.lower_tabs.currentChanged.connect(lambda _i: self._fit_table_height())
        ll.addWidget(self.lower_tabs, 1)

        self.splitter = plot_over_table(self, plot_box, lower)
        self._proxy = pg.SignalProxy(self.plot.scene().sigMouseMoved, rateLimit=30, slot=self._mouse_moved)

        # the band peaks of a study are polished by re-solving (tenths of a second): off the GUI thread
        self.study = None
        self._band_rows_study = None  # the study whose polished band peaks the table shows
        self._refining = None  # the study being polished on the worker
        self._pool = QtCore.QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._signals = _PeakSignals(self)
        self._signals.done.connect(self._band_peaks_ready, QtCore.Qt.QueuedConnection)

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self.links_note.setVisible(self.width() >= 900)
        self._fit_table_height()

    def _arrange_key(self, w: float, h: float) -> None:
        self._key_side = arrange_key(self.canvas, self.legend, w, h, self._key_side, (90.0, 60.0), shape=2.2)

    def _corner_follows(self, index: int) -> None:
        """The corner shows the current page's choice and is only as wide as that choice."""
        for k in range(self.corner.count()):
            w = self.corner.widget(k)
            w.setSizePolicy(QtWidgets.QSizePolicy.Preferred if k == index else QtWidgets.QSizePolicy.Ignored,
                            QtWidgets.QSizePolicy.Preferred if k == index else QtWidgets.QSizePolicy.Ignored)
        self.corner.setCurrentIndex(index)
        self.corner.updateGeometry()
        self.lower_tabs.updateGeometry()
        if self.lower_tabs.isVisible():  # the tab bar and the corner share the row anew
            QtWidgets.QApplication.sendEvent(self.lower_tabs, QtCore.QEvent(QtCore.QEvent.LayoutRequest))

    def _shown_table(self):
        return self.acceptance_table if self.lower_tabs.currentIndex() == 0 else self.peak_table

    def _fit_table_height(self) -> None:
        """Give the table the height of all its rows (up to about half the view), the plot the rest."""
        t = self._shown_table()
        n = t.model().rowCount()
        row_h = t.verticalHeader().defaultSectionSize()
        if t is self.acceptance_table:
            n = min(n, ACCEPTANCE_ROWS_FITTED)  # a long list scrolls: the plot keeps its room
            row_h = 1.5 * t.fontMetrics().height() + 6  # some criteria take two lines
        if not n or self.height() < 200:
            return
        header = max(t.horizontalHeader().height(), t.horizontalHeader().sizeHint().height())
        want = int(header + n * row_h + 2 * t.frameWidth() + 2)
        if t.horizontalScrollBar().isVisible():
            want += t.horizontalScrollBar().height()
        head = self.acceptance_verdict if t is self.acceptance_table else self.verdict
        extra = max(self.lower_tabs.tabBar().sizeHint().height(), self.corner.sizeHint().height())
        if head.isVisibleTo(self):
            extra += head.heightForWidth(max(head.width(), 300)) if head.wordWrap() else head.sizeHint().height()
        lower = want + extra + self.quantity.sizeHint().height() + 16
        total = sum(self.splitter.sizes())
        lower = min(lower, int(LOWER_SHARE * total))
        # once per number of rows and height: a split the user dragged stays through live edits
        key = (n, total, lower, self.lower_tabs.currentIndex())
        if key != getattr(self, "_fitted_for", None) and abs(self.splitter.sizes()[1] - lower) > 2:
            self.splitter.setSizes([total - lower, lower])
        self._fitted_for = key

    # ------------------------------------------------------------ the result-view protocol (see panel)
    NO_AMPLITUDE = "give an excitation an amplitude to see the forced response"

    def show_study(self, study) -> str | None:
        """Show the study's forced response and acceptance; the text of what is missing or
        went wrong otherwise."""
        if study.response is None:
            if self.response is not None:
                self.clear()
            self.study = None
            if study.response_error is not None:
                return f"Forced response not computed: {study.response_error}"
            if study.train.operating is None:
                return ("No operating data: give the reference disc, the operating speed range and an "
                        "excitation with an amplitude to see the forced response.")
            return self.NO_AMPLITUDE[0].upper() + self.NO_AMPLITUDE[1:] + "."
        self.study = study
        self.set_response(study.train, study.response, study.response_peaks, study.exceedances,
                          acceptance=study.acceptance)
        return None

    def set_unit_system(self, system: str) -> None:
        if system != self.unit_system:
            self.unit_system = system
            if self.response is not None:
                self.set_response(self.train, self.response, self.summary, self.exceeded,
                                  acceptance=self.acceptance)

    def reset_view_state(self) -> None:
        """A newly opened project: default links, quantity, combination, band and tab again."""
        self._user_ticked = False
        self.response = None
        self._marker = None
        self.quantity.setCurrentIndex(0)
        self.combination.setCurrentIndex(0)
        self.band_box.setCurrentIndex(0)
        self.case_box.clear()  # the next study's worst load case first
        self._tab_chosen = False

    # ------------------------------------------------------------ data
    def set_response(self, train, resp, summary=None, exceeded=None, acceptance=None) -> None:
        """Show ``resp`` (a core.response.Response).  ``summary`` and
        ``exceeded`` default to core.response.response_summary / exceedances;
        ``acceptance`` (core.acceptance.Acceptance) fills the acceptance table, the mean
        torque choice and the barred and gear-hammer ranges on the speed axis."""
        if summary is None or exceeded is None:
            from core import response as core_response
            summary = core_response.response_summary(resp) if summary is None else summary
            exceeded = core_response.exceedances(resp) if exceeded is None else exceeded
        before = self.checked_links() if (self.response is not None and self._user_ticked) else None
        self.train, self.response, self.summary, self.exceeded = train, resp, list(summary), list(exceeded)
        self.acceptance = acceptance
        self.canvas.export_title = f"{train.title}: forced response"

        has_stress = bool(np.isfinite(np.asarray(resp.link_stress, float)).any())
        has_limits = any(p.passed is not None for p in self.summary)
        # the quantities: vibratory torque (and beside it the mean torque of each load case), stress, share
        cases = list(getattr(acceptance, "mean_torque", {}) or {})
        self.quantity.blockSignals(True)
        keep = self.quantity.currentText()
        self.quantity.clear()
        self.quantity.addItems([TORQUE] + [MEAN_PREFIX + c for c in cases] + [STRESS, SHARE])
        for k, name in enumerate(cases):
            self.quantity.setItemData(1 + k, f"Vibratory torque, and the mean torque each plotted link carries "
                                             f"in load case {name} (dotted, in the link's colour)",
                                      QtCore.Qt.ToolTipRole)
        n = self.quantity.count()
        self.quantity.model().item(n - 2).setEnabled(has_stress)
        self.quantity.model().item(n - 1).setEnabled(has_limits)
        i = self.quantity.findText(keep)
        if i < 0 or (keep == STRESS and not has_stress) or (keep == SHARE and not has_limits):
            i = 0
        self.quantity.setCurrentIndex(i)
        self.quantity.blockSignals(False)

        self.combination.blockSignals(True)
        keep = self.combination.currentText()
        self.combination.clear()
        self.combination.addItems([SUM, PHASED] + [f"Only {o}" for o in resp.orders])
        for k, o in enumerate(resp.orders):
            self.combination.setItemData(2 + k, o, QtCore.Qt.ToolTipRole)
        i = self.combination.findText(keep)
        self.combination.setCurrentIndex(max(i, 0))
        self.combination.blockSignals(False)
        self._combination_tip()

        ids = list(resp.link_ids)
        wanted = [l for l in before if l in ids] if before is not None else default_links(resp, self.summary)
        self._fill_band_box()
        self.peak_model.headers = list(R.response_headers(self.unit_system))
        self._fill_peak_rows()
        self.peak_model.headerDataChanged.emit(QtCore.Qt.Horizontal, 0, len(self.peak_model.headers) - 1)
        self.peak_model.set_checked(wanted)
        fit_peak_columns(self.peak_table)
        self._fill_case_box()
        self._fill_acceptance()
        if self._marker is not None and self._marker_check() is None:
            self._marker = None  # the check clicked is gone (a live edit changed the checks)
        self._set_verdict()
        self._fit_table_height()
        self._quantity_changed()
        if self.isVisible():
            self._refine_band_peaks()

    # ------------------------------------------------------------ speed bands in the peak table
    def _fill_band_box(self) -> None:
        from core.bands import BAND_NAMES
        from core.response import response_bands
        bands = [b.name for b in response_bands(self.response)] if self.acceptance is not None else []
        self.band_box.blockSignals(True)
        keep = self.band_box.currentData()
        self.band_box.clear()
        for name in sorted(bands, key=lambda b: (b != OPERATING, BAND_NAMES.index(b))):
            self.band_box.addItem(wording.speed_band(name), name)
        i = self.band_box.findData(keep) if keep is not None else -1
        self.band_box.setCurrentIndex(max(i, 0))
        self.band_box.blockSignals(False)
        self.band_box.setEnabled(len(bands) > 1)
        self.band_box.setVisible(bool(bands))
        self.band_box.parentWidget().layout().itemAt(1).widget().setVisible(bool(bands))  # "Peaks in"

    def current_band(self) -> str | None:
        """The speed band the peak table lists ('operating', 'transient', 'overspeed'), or None
        when it lists the peaks core.response.response_summary gives (no acceptance)."""
        return self.band_box.currentData() if self.acceptance is not None else None

    def _fill_peak_rows(self) -> None:
        """The peak table: per link, the chosen band's peaks (study.band_peaks: polished when
        ready, at the computed speeds until then); without an acceptance, the summary given."""
        band = self.current_band()
        if band is None:
            self.peak_model.set_rows(R.response_rows(self.summary, self.unit_system, self.train))
            self.band_note.setText("")
            return
        st = self.study
        polished = st is not None and st.response is self.response and "band_peaks" in st.__dict__
        if polished:
            peaks = st.band_peaks
        else:
            from core.response import band_peaks
            peaks = band_peaks(self.response, refine=False)
        self.peak_model.set_rows(R.band_peak_rows(peaks, band, self.train, self.unit_system, self.acceptance,
                                                  list(self.response.link_ids)))
        self.band_note.setText("" if polished else "polishing the peaks between the computed speeds…")
        self.lower_tabs.setTabText(1, "Peaks per link" if polished else "Peaks per link (polishing…)")
        self.lower_tabs.setTabToolTip(1, "Peak torque and stress per link in a speed band, polished between the "
                                         "computed speeds; tick links to plot" if polished else
                                      "Peak torque and stress per link in a speed band, at the computed speeds "
                                      "(polished values follow); tick links to plot")

    def _band_changed(self) -> None:
        if self.response is not None:
            self._fill_peak_rows()
            self._fit_table_height()

    def _refine_band_peaks(self) -> None:
        """Polish the study's band peaks on the worker (one at a time; the newest study wins)."""
        st = self.study
        if st is None or st.response is not self.response or "band_peaks" in st.__dict__:
            return
        if self._refining is not None:
            return  # _band_peaks_ready starts the newest study's when this one ends
        self._refining = st
        self._pool.start(_PeakJob(st, self._signals))

    def _band_peaks_ready(self, study) -> None:
        self._refining = None
        if study is self.study and self.response is study.response and self.current_band() is not None:
            self._fill_peak_rows()
        elif self.study is not None and self.isVisible():
            self._refine_band_peaks()

    def wait_band_peaks(self, msecs: int = 30000) -> bool:
        """Wait for the polished band peaks (tests, exports); True when the table shows them."""
        self._refine_band_peaks()
        self._pool.waitForDone(msecs)
        QtWidgets.QApplication.processEvents()
        return self.study is not None and "band_peaks" in self.study.__dict__

    # ------------------------------------------------------------ acceptance table
    def _fill_case_box(self) -> None:
        """One entry per load case (with its failures counted) and one for all; at first the
        load case of the worst check, so that the load case column can give its room to the
        criterion."""
        acc = self.acceptance
        checks = acc.checks if acc is not None else []
        cases = list(dict.fromkeys(c.load_case for c in checks if c.load_case))
        self.case_box.blockSignals(True)
        keep = self.case_box.currentData() if self.case_box.count() else "?"
        self.case_box.clear()
        self.case_box.addItem("all load cases", None)
        for name in cases:
            n = sum(1 for c in checks if c.load_case == name and not c.passed)
            self.case_box.addItem(f"{name} ({n} fail)" if n else name, name)
            self.case_box.setItemData(self.case_box.count() - 1, name, QtCore.Qt.ToolTipRole)
        i = self.case_box.findData(keep) if keep != "?" else -1
        if i < 0 and cases:
            worst = acc.worst_first()[0].load_case
            i = self.case_box.findData(worst) if worst in cases else 0
        self.case_box.setCurrentIndex(max(i, 0))
        self.case_box.blockSignals(False)
        many = len(cases) > 1
        self.case_box.setVisible(many)
        self.case_label.setVisible(many)
        self.corner.updateGeometry()

    def _case_changed(self) -> None:
        self.case_box.setToolTip(f"{self.case_box.currentText()}\n\nThe checks of every load case, or of one")
        self._fill_acceptance()

    def _fill_acceptance(self) -> None:
        acc = self.acceptance
        case = self.case_box.currentData()
        rows = R.acceptance_rows(acc, self.train, self.unit_system, case) if acc is not None else []
        self.acceptance_model.set_rows(rows)
        # the load case column only where it tells rows apart
        self.acceptance_table.setColumnHidden(2, case is not None or not self.case_box.isVisibleTo(self))
        fit_acceptance_columns(self.acceptance_table)
        has = acc is not None and bool(acc.checks)
        self.lower_tabs.setTabEnabled(0, has)
        if not has:
            self.lower_tabs.setTabToolTip(0, "No acceptance checks: give the links permissible values, "
                                             "ratings or materials with strengths")
            self.lower_tabs.setCurrentIndex(1)
        else:
            self.lower_tabs.setTabToolTip(0, "Every check of the acceptance: per link, criterion, load case "
                                             "and speed band, worst first")
            if not getattr(self, "_tab_chosen", False):
                self._tab_chosen = True
                self.lower_tabs.setCurrentIndex(0)
        n_fail = sum(1 for c in acc.checks if not c.passed) if has else 0
        self.lower_tabs.setTabText(0, f"Acceptance checks ({n_fail} fail)" if n_fail else "Acceptance checks")

    def _marker_check(self):
        """The check the marker shows, found again among the current checks (same link,
        criterion, load case, band and segment), else None."""
        if self._marker is None or self.acceptance is None:
            return None
        c0 = self._marker
        for c in self.acceptance.checks:
            if (c.link, c.criterion, c.load_case, c.speed_band, c.segment) == \
                    (c0.link, c0.criterion, c0.load_case, c0.speed_band, c0.segment):
                return c
        return None

    def _check_clicked(self, index) -> None:
        r = index.row()
        if 0 <= r < len(self.acceptance_model.rows):
            self.show_check(self.acceptance_model.rows[r].extra["check"])

    def show_check(self, check) -> None:
        """Plot the link of ``check`` (ticked beside the others) in the quantity the check
        judges, with its load case's mean torque where it has one, and mark the check's speed."""
        if self.response is None or check.link not in self.response.link_ids:
            return
        self._marker = check
        want = R.check_quantity(check)
        j = list(self.response.link_ids).index(check.link)
        has_stress = bool(np.isfinite(np.asarray(self.response.link_stress[j], float)).any())
        self.quantity.blockSignals(True)
        if want == "stress" and has_stress:
            self.quantity.setCurrentText(STRESS)
        elif check.load_case and self.quantity.findText(MEAN_PREFIX + check.load_case) >= 0:
            self.quantity.setCurrentText(MEAN_PREFIX + check.load_case)  # the load case's mean torque beside
        else:
            self.quantity.setCurrentText(TORQUE)
        self.quantity.blockSignals(False)
        if check.link not in self.peak_model.checked:
            self._user_ticked = True
            self.peak_model.set_checked(set(self.peak_model.checked) | {check.link})
        self._draw()

    def clear(self, message: str = "") -> None:
        self.response = None
        self.study = None
        self.acceptance = None
        self._marker = None
        self._draw_pending = False
        self.plot.clear()
        self.legend.clear()
        self.peak_model.set_rows([])
        self.acceptance_model.set_rows([])
        self.acceptance_verdict.setText("")
        self.verdict.setText("")

    def checked_links(self) -> list[str]:
        """Ids of the ticked links, in the train's order."""
        if self.response is None:
            return []
        return [lid for lid in self.response.link_ids if lid in self.peak_model.checked]

    def set_checked_links(self, link_ids) -> None:
        self._user_ticked = True
        self.peak_model.set_checked(link_ids)
        self._draw()

    def _ticked(self) -> None:
        self._user_ticked = True
        self._draw()

    def _combination_changed(self) -> None:
        self._combination_tip()
        self._draw()

    def _combination_tip(self) -> None:
        self.combination.setToolTip(f"{self.combination.currentText()}\n\nHow the orders are combined: the "
                                    "plain sum of amplitudes is conservative; the phase-aware synthesis uses "
                                    "the given phases. Or one order alone.")

    def _name(self, link_id: str) -> str:
        return R.name_of(self.train, link_id)

    def _set_verdict(self) -> None:
        """The acceptance's verdict above its checks; without an acceptance, the peaks against
        the permissible values above the peak table."""
        judged = [p for p in self.summary if p.passed is not None]
        acc = self.acceptance
        self.verdict.setVisible(acc is None)
        if acc is not None:
            label = self.acceptance_verdict
            fails = acc.failures
            if fails:
                c = fails[0]
                label.setText(
                    f"{len(fails)} of {len(acc.checks)} checks fail — worst: {self._name(c.link)}, "
                    f"{wording.criterion(c.criterion)} at {fmt.percent(c.utilisation)} % of its limit "
                    f"({wording.speed_band(c.speed_band)}, {fmt.rpm(c.at)} rpm).")
                label.setStyleSheet(theme.verdict_style(False))
            elif acc.checks:
                label.setText(f"Every acceptance check holds ({len(acc.checks)} checks in "
                              f"{len({c.link for c in acc.checks})} link(s)).")
                label.setStyleSheet(theme.verdict_style(True))
            else:
                label.setText("")
            self.verdict.setText(label.text())  # the same words for whoever reads self.verdict
        elif self.exceeded:
            e = self.exceeded[0]
            what = "torque" if e.quantity == "torque" else "stress"
            self.verdict.setText(f"{len(self.exceeded)} permissible value(s) exceeded — first: "
                                 f"{self._name(e.link_id)}, vibratory {what} at {fmt.rpm(e.speed)} rpm.")
            self.verdict.setStyleSheet(theme.verdict_style(False))
        elif judged:
            self.verdict.setText(f"Every link with a permissible value stays below it "
                                 f"({len(judged)} link(s) checked).")
            self.verdict.setStyleSheet(theme.verdict_style(True))
        else:
            self.verdict.setText("No permissible torque or stress is given, so nothing is judged; "
                                 "the peaks are listed for information.")
            self.verdict.setStyleSheet(theme.verdict_style(None))

    # ------------------------------------------------------------ drawing
    def _quantity_changed(self) -> None:
        self.quantity.setToolTip(self.quantity.currentText() + "\n\n" + QUANTITY_TIP)
        self._draw()

    def mean_case(self) -> str | None:
        """The load case whose mean torque is drawn beside the vibratory torque, or None."""
        text = self.quantity.currentText()
        return text[len(MEAN_PREFIX):] if text.startswith(MEAN_PREFIX) else None

    def _torque_or_stress(self, j: int, stress: bool):
        """Amplitude of link j over speed for the chosen combination of orders (N*m or Pa)."""
        r = self.response
        text = self.combination.currentText()
        if text == PHASED:
            name = "link_stress_phased" if stress else "link_torque_phased"
            if hasattr(r, name):
                return np.asarray(getattr(r, name)[j], float)
        elif text.startswith("Only "):
            k = self.combination.currentIndex() - 2
            name = "order_link_stress" if stress else "order_link_torque"
            if hasattr(r, name) and 0 <= k < len(r.orders):
                return np.asarray(getattr(r, name)[k, j], float)
        return np.asarray((r.link_stress if stress else r.link_torque)[j], float)

    def _share(self, j: int, peak):
        """Largest of torque / permissible torque and stress / permissible stress, in %."""
        parts = []
        if peak is not None and peak.permissible_torque:
            parts.append(self._torque_or_stress(j, False) / peak.permissible_torque)
        if peak is not None and peak.permissible_stress:
            parts.append(self._torque_or_stress(j, True) / peak.permissible_stress)
        if not parts:
            return None
        return 100.0 * np.nanmax(np.vstack(parts), axis=0)

    def showEvent(self, event) -> None:
        super().showEvent(event)  # draws what came while hidden (DrawWhenShown)
        self._fit_table_height()
        self._refine_band_peaks()

    def _draw_now(self) -> None:
        self._draw_pending = False
        p = self.plot
        p.clear()
        self.legend.clear()
        self._key_samples = []  # the key's samples of items not on the plot (kept alive here)
        self.curve_key_texts = []  # the key's entries of the links' curves (the rest: mean torque, bands)
        self._marker_item = None
        r = self.response
        if r is None:
            return
        quantity = self.quantity.currentText()
        case = self.mean_case()
        if case is not None:
            quantity = TORQUE
        stress = quantity == STRESS
        share = quantity == SHARE
        if share:
            scale = 1.0
            self._unit_text = "%"
            p.setLabel("left", f"{quantity}, %", siPrefixEnableRanges=())
        else:
            kind = units.STRESS if stress else units.TORQUE
            unit = units.display_unit(kind, self.unit_system)
            if self.unit_system == "SI":  # N*m or Pa with an automatic k / M prefix
                scale = 1.0
                self._unit_text = None  # the axis's own prefixed unit
                p.setLabel("left", "Torque" if case else quantity, units="Pa" if stress else "N·m")
            else:
                scale = units.convert(1.0, kind, unit)
                self._unit_text = R.pretty(unit)
                p.setLabel("left", f"{'Torque' if case else quantity}, {R.pretty(unit)}",
                           siPrefixEnableRanges=())
        rpm = np.asarray(r.speed, float) / RPM
        self._rpm = rpm
        # the speed bands, barred speed ranges and gear-hammer ranges, as on every speed axis
        marks = SA.speed_marks(self.train, self.acceptance) if self.train is not None else []
        self._marks.show(marks)
        peaks = {p_.link_id: p_ for p_ in self.summary}
        top = 0.0
        self._plotted = []
        if share:
            limit = pg.InfiniteLine(100.0, angle=0, pen=theme.permissible_pen(), label="permissible (100 %)",
                                    labelOpts={"position": 0.98, "color": theme.PERMISSIBLE,
                                               "anchors": [(1, 1), (1, 1)]})
            p.addItem(limit)
            top = 100.0
        curves = []  # (series number, link id, y, permissible in plot units or None)
        ids = list(r.link_ids)
        for n, lid in enumerate(self.checked_links()):
            j = ids.index(lid)
            peak = peaks.get(lid)
            y = self._share(j, peak) if share else self._torque_or_stress(j, stress) * scale
            if y is None or not np.isfinite(y).any():
                continue
            top = max(top, float(np.nanmax(y)))
            allowed = None
            if not share and peak is not None:
                allowed = peak.permissible_stress if stress else peak.permissible_torque
                allowed = allowed * scale if allowed is not None and math.isfinite(allowed) else None
                if allowed is not None:
                    top = max(top, allowed)
            curves.append((n, lid, y, allowed))
        # a curve lying on an earlier one is drawn dashed on top of it, so both colours show,
        # and its key entry says so: every curve named in the key can be seen
        on = overlapping([y for _n, _l, y, _a in curves], OVERLAP * max(top, 1e-30))
        for (n, lid, y, allowed), under in zip(curves, on):
            name = self._name(lid)
            pen = theme.series_pen(n, theme.BOLD_WIDTH)
            text = name
            if under is not None:
                pen = theme.pen(theme.series_color(n), theme.BOLD_WIDTH, QtCore.Qt.DashLine)
                text = f"{name} (dashed where it lies on {self._name(curves[under][1])})"
            item = p.plot(rpm, y, pen=pen)
            item.opts["name"] = name
            self.legend.addItem(item, text)
            self.curve_key_texts.append(text)
            self._plotted.append((lid, y))
            if allowed is not None:
                p.addItem(pg.InfiniteLine(allowed, angle=0, pen=theme.pen(theme.series_color(n), theme.LINE_WIDTH,
                                                                          QtCore.Qt.DashLine),
                                          label=f"permissible, {name}",
                                          labelOpts={"position": 0.98, "color": theme.series_color(n),
                                                     "anchors": [(1, 1), (1, 1)]}))
        bottom = 0.0
        mean = self._mean_curves(curves, scale, case) if case is not None else []
        for n, lid, y in mean:
            item = p.plot(rpm, y, pen=theme.pen(theme.series_color(n), theme.LINE_WIDTH, QtCore.Qt.DotLine))
            item.setToolTip(f"Mean torque of {self._name(lid)}, load case {case}")
            top = max(top, float(np.nanmax(y)))
            bottom = min(bottom, float(np.nanmin(y)))
        if mean:
            sample = pg.PlotDataItem(pen=theme.pen(theme.INK, theme.LINE_WIDTH, QtCore.Qt.DotLine))
            self._key_samples.append(sample)
            self.legend.addItem(sample, f"mean torque, {case} (dotted, each link's colour)")
        self._draw_marker(curves, rpm, scale, share, mean)
        for m, text in SA.key_entries(marks):
            sample = SA.legend_sample(m.kind)
            self._key_samples.append(sample)
            self.legend.addItem(sample, text)
        if len(rpm):
            p.setXRange(float(rpm.min()), float(rpm.max()), padding=0)
        span = top - bottom
        p.setYRange(bottom - 0.04 * span if bottom < 0 else 0.0, top * 1.12 if top > 0 else 1.0, padding=0)
        self._arrange_key(float(self.canvas.width()), float(self.canvas.height()))
        self._place_marker_label()

    def _mean_curves(self, curves, scale, name):
        """(series number, link id, mean torque over speed in plot units) of the plotted links in
        the load case chosen (acceptance.mean_torque: each link's own shaft, as the vibratory torque)."""
        acc = self.acceptance
        if acc is None or name not in acc.mean_torque:
            return []
        table = np.asarray(acc.mean_torque[name], float)
        speeds = np.asarray(acc.speed, float)
        ids = list(self.response.link_ids)
        out = []
        for n, lid, _y, _allowed in curves:
            j = ids.index(lid)
            y = np.interp(np.asarray(self.response.speed, float), speeds, table[j]) * scale
            out.append((n, lid, y))
        return out

    def _draw_marker(self, curves, rpm, scale, share, mean=()) -> None:
        """The check clicked in the acceptance table: a line at its speed and a ring on its link's
        curve there (the mean torque's for a check of the mean torque), with what the check found."""
        from core.acceptance import STEADY_CRITERIA
        c = self._marker_check()
        self._marker_item = None
        if c is None:
            return
        x = float(c.at_rpm)
        line = pg.InfiniteLine(x, angle=90, pen=theme.pen(theme.INK, theme.THIN_WIDTH, QtCore.Qt.DashLine))
        line.setZValue(30)
        self.plot.addItem(line, ignoreBounds=True)
        tip = (f"{self._name(c.link)}: {wording.criterion(c.criterion)}, {fmt.percent(c.utilisation)} % of "
               f"its limit at {fmt.rpm(c.at)} rpm ({wording.speed_band(c.speed_band)})")
        if c.load_case:
            tip += f", load case {c.load_case}"
        lc = next((l for l in getattr(self.acceptance, "load_cases", ()) if l.name == c.load_case), None)
        if lc is not None and getattr(lc, "changes_excitation", False):
            tip += ". The curve is of the project's excitations; this load case scales them"
        line.setToolTip(tip)
        on = mean if c.criterion in STEADY_CRITERIA else [(n, lid, y) for n, lid, y, _a in curves]
        hit = next((y for _n, lid, y in on if lid == c.link), None)
        label_y = None
        if hit is not None and len(rpm) and not share:
            yv = float(np.interp(x, rpm, hit))
            if math.isfinite(yv):
                ring = pg.ScatterPlotItem([x], [yv], symbol="o", size=16, brush=theme.brush((0, 0, 0, 0)),
                                          pen=theme.pen(theme.FAIL if not c.passed else theme.INK, theme.BOLD_WIDTH))
                ring.setZValue(31)
                ring.setToolTip(tip)
                self.plot.addItem(ring)
                label_y = yv
        text = f"{self._name(c.link)}: {fmt.percent(c.utilisation)} %\nat {fmt.rpm(c.at)} rpm"
        label = pg.TextItem(text, color=theme.qcolor(theme.FAIL if not c.passed else theme.INK),
                            fill=theme.brush((255, 255, 255, 225)))
        label.setToolTip(tip)
        label.setZValue(32)
        self.plot.addItem(label, ignoreBounds=True)
        self._marker_item = (line, label, label_y)

    def _place_marker_label(self, *_a) -> None:
        """The marker's label beside its ring, on the side of the line with more room."""
        item = getattr(self, "_marker_item", None)
        if not item:
            return
        line, label, label_y = item
        (x0, x1), (y0, y1) = self.plot.vb.viewRange()
        x = line.value()
        right = x < x0 + 0.5 * (x1 - x0)
        y = label_y if label_y is not None else y0 + 0.9 * (y1 - y0)
        upper = y < y0 + 0.7 * (y1 - y0)
        label.setAnchor((-0.08 if right else 1.08, 1.1 if upper else -0.1))
        label.setPos(x, min(max(y, y0), y1))

    def _mouse_moved(self, ev) -> None:
        pos = ev[0]
        if self.response is None or not self.plot.sceneBoundingRect().contains(pos):
            return
        pt = self.plot.vb.mapSceneToView(pos)
        rpm = getattr(self, "_rpm", None)
        if rpm is None or not len(rpm):
            return
        k = int(np.clip(np.searchsorted(rpm, pt.x()), 0, len(rpm) - 1))
        unit = getattr(self, "_unit_text", None)
        if unit is None:  # SI: the values are plotted in N*m or Pa
            unit = self.plot.getAxis("left").labelUnits
        values = ", ".join(f"{self._name(lid)} {y[k]:.4g}" for lid, y in getattr(self, "_plotted", []))
        self.hover.setText(f"At {rpm[k]:.0f} rpm: {values}" + (f" ({unit})" if unit else ""))
