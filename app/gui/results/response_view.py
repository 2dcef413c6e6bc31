"""Forced response: vibratory torque or shear stress against speed for chosen
links, with their permissible values and the operating range.

Coded against ``core.response`` (Response, response_summary, exceedances);
nothing is recomputed here.  Speeds are rpm of the reference shaft.
"""
from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from app import formatting as fmt
from app.gui import theme
from core import units

from . import rows as R
from .legend import FlowLegend
from .plotting import PlotCanvas, new_plot, plot_over_table
from .table import RowsModel, make_table_view

RPM = 2.0 * math.pi / 60.0
TORQUE, STRESS, SHARE = "Vibratory torque", "Vibratory shear stress", "Share of permissible"
SUM, PHASED = "Sum of order amplitudes (conservative)", "Phase-aware synthesis"
#: curves closer than this share of the plot's height are drawn as lying on each other
OVERLAP = 0.01
MAX_DEFAULT_LINKS = 4


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
    h.setStretchLastSection(False)
    h.setMinimumSectionSize(36)
    h.setSectionResizeMode(0, QtWidgets.QHeaderView.Stretch)


class ResponseView(QtWidgets.QWidget):
    """The plot of the ticked links above; the order choice and the peak table
    (one row per link, tick a row to plot it) below, so that the controls and
    the table fit a 1366 x 768 screen without scrolling."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.train = None
        self.response = None
        self.summary = []
        self.exceeded = []
        self.unit_system = "SI"
        self._draw_pending = False  # new results arrived while the plot was hidden
        self._user_ticked = False  # the user chose links: keep them across live edits

        self.quantity = QtWidgets.QComboBox(self)
        self.quantity.addItems([TORQUE, STRESS, SHARE])
        self.quantity.setToolTip("Vibratory torque amplitude in each chosen link; the shear stress amplitude "
                                 "(shafts with geometry, times their stress concentration factor); or the "
                                 "amplitude as a share of the link's permissible torque or stress, so links "
                                 "of very different size read on one scale.")
        self.quantity.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToContents)
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
        # the key below the plot, never over the curves
        self.legend = FlowLegend()
        self.canvas.addItem(self.legend, row=1, col=0)
        self.canvas.ci.layout.setRowStretchFactor(0, 10)
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
        self.peak_table.setToolTip("Peak vibratory torque and stress per link over the computed speeds "
                                   "(sum of order amplitudes) against the permissible values given. "
                                   "Tick a link to plot it.")
        self.peak_model.checkedChanged.connect(self._ticked)
        self.links_note = QtWidgets.QLabel("Tick links in the table to plot them.", self)
        self.links_note.setStyleSheet(f"color: {theme.INK_MUTED};")

        plot_box = QtWidgets.QWidget(self)
        pl = QtWidgets.QVBoxLayout(plot_box)
        pl.setContentsMargins(0, 0, 0, 0)
        pl.setSpacing(2)
        pl.addWidget(self.canvas, 1)
        pl.addWidget(self.hover)

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
        ll.addWidget(self.verdict)
        ll.addWidget(self.peak_table, 1)

        self.splitter = plot_over_table(self, plot_box, lower)
        self._proxy = pg.SignalProxy(self.plot.scene().sigMouseMoved, rateLimit=30, slot=self._mouse_moved)

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self.links_note.setVisible(self.width() >= 900)
        self._fit_table_height()

    def _fit_table_height(self) -> None:
        """Give the table the height of all its rows (up to half the view), the plot the rest."""
        n = self.peak_model.rowCount()
        if not n or self.height() < 200:
            return
        t = self.peak_table
        header = max(t.horizontalHeader().height(), t.horizontalHeader().sizeHint().height())
        want = header + n * t.verticalHeader().defaultSectionSize() + 2 * t.frameWidth() + 2
        if t.horizontalScrollBar().isVisible():
            want += t.horizontalScrollBar().height()
        lower = want + self.verdict.sizeHint().height() + self.quantity.sizeHint().height() + 16
        total = sum(self.splitter.sizes())
        lower = min(lower, int(0.56 * total))
        # once per number of rows and height: a split the user dragged stays through live edits
        key = (n, total, lower)
        if key != getattr(self, "_fitted_for", None) and abs(self.splitter.sizes()[1] - lower) > 2:
            self.splitter.setSizes([total - lower, lower])
        self._fitted_for = key

    # ------------------------------------------------------------ the result-view protocol (see panel)
    NO_AMPLITUDE = "give an excitation an amplitude to see the forced response"

    def show_study(self, study) -> str | None:
        """Show the study's forced response; the text of what is missing or went wrong otherwise."""
        if study.response is None:
            if self.response is not None:
                self.clear()
            if study.response_error is not None:
                return f"Forced response not computed: {study.response_error}"
            if study.train.operating is None:
                return ("No operating data: give the reference disc, the operating speed range and an "
                        "excitation with an amplitude to see the forced response.")
            return self.NO_AMPLITUDE[0].upper() + self.NO_AMPLITUDE[1:] + "."
        self.set_response(study.train, study.response, study.response_peaks, study.exceedances)
        return None

    def set_unit_system(self, system: str) -> None:
        if system != self.unit_system:
            self.unit_system = system
            if self.response is not None:
                self.set_response(self.train, self.response, self.summary, self.exceeded)

    def reset_view_state(self) -> None:
        """A newly opened project: default links, quantity and combination again."""
        self._user_ticked = False
        self.response = None
        self.quantity.setCurrentIndex(0)
        self.combination.setCurrentIndex(0)

    # ------------------------------------------------------------ data
    def set_response(self, train, resp, summary=None, exceeded=None) -> None:
        """Show ``resp`` (a core.response.Response).  ``summary`` and
        ``exceeded`` default to core.response.response_summary / exceedances."""
        if summary is None or exceeded is None:
            from core import response as core_response
            summary = core_response.response_summary(resp) if summary is None else summary
            exceeded = core_response.exceedances(resp) if exceeded is None else exceeded
        before = self.checked_links() if (self.response is not None and self._user_ticked) else None
        self.train, self.response, self.summary, self.exceeded = train, resp, list(summary), list(exceeded)
        self.canvas.export_title = f"{train.title}: forced response"

        has_stress = bool(np.isfinite(np.asarray(resp.link_stress, float)).any())
        has_limits = any(p.passed is not None for p in self.summary)
        self.quantity.model().item(1).setEnabled(has_stress)
        self.quantity.model().item(2).setEnabled(has_limits)
        if (not has_stress and self.quantity.currentIndex() == 1) or \
                (not has_limits and self.quantity.currentIndex() == 2):
            self.quantity.setCurrentIndex(0)

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
        self.peak_model.headers = list(R.response_headers(self.unit_system))
        self.peak_model.set_rows(R.response_rows(self.summary, self.unit_system, train))
        self.peak_model.headerDataChanged.emit(QtCore.Qt.Horizontal, 0, len(self.peak_model.headers) - 1)
        self.peak_model.set_checked(wanted)
        fit_peak_columns(self.peak_table)
        self._set_verdict()
        self._fit_table_height()
        self._quantity_changed()

    def clear(self, message: str = "") -> None:
        self.response = None
        self._draw_pending = False
        self.plot.clear()
        self.legend.clear()
        self.peak_model.set_rows([])
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
        judged = [p for p in self.summary if p.passed is not None]
        if self.exceeded:
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
        self._draw()

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
        super().showEvent(event)
        self.ensure_drawn()
        self._fit_table_height()

    def ensure_drawn(self) -> None:
        """Draw the plot now if results came while it was hidden (exports, tests)."""
        if self._draw_pending:
            self._draw_now()

    def _draw(self) -> None:
        """Redraw when on screen; a hidden plot is drawn when it shows."""
        if self.isVisible():
            self._draw_now()
        else:
            self._draw_pending = True

    def _draw_now(self) -> None:
        self._draw_pending = False
        p = self.plot
        p.clear()
        self.legend.clear()
        r = self.response
        if r is None:
            return
        quantity = self.quantity.currentText()
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
                p.setLabel("left", quantity, units="Pa" if stress else "N·m")
            else:
                scale = units.convert(1.0, kind, unit)
                self._unit_text = R.pretty(unit)
                p.setLabel("left", f"{quantity}, {R.pretty(unit)}", siPrefixEnableRanges=())
        rpm = np.asarray(r.speed, float) / RPM
        self._rpm = rpm
        op = self.train.operating if self.train is not None else None
        if op is not None:
            lo, hi = op.speed_min / RPM, op.speed_max / RPM
            if hi > lo:
                band = pg.LinearRegionItem((lo, hi), movable=False, brush=theme.brush(theme.OPERATING_BAND),
                                           pen=theme.pen(theme.PASS, theme.THIN_WIDTH))
            else:
                band = pg.InfiniteLine(lo, angle=90, pen=theme.pen(theme.OPERATING_BAND[:3] + (110,), 7.0))
            band.setZValue(-20)
            band.setToolTip(f"{op.range_name}: {fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} rpm")
            p.addItem(band)
            if op.trip_speed:
                trip = pg.InfiniteLine(op.trip_speed / RPM, angle=90, pen=theme.trip_pen())
                trip.setToolTip(f"Trip speed {fmt.rpm(op.trip_speed)} rpm")
                p.addItem(trip)
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
            self._plotted.append((lid, y))
            if allowed is not None:
                p.addItem(pg.InfiniteLine(allowed, angle=0, pen=theme.pen(theme.series_color(n), theme.LINE_WIDTH,
                                                                          QtCore.Qt.DashLine),
                                          label=f"permissible, {name}",
                                          labelOpts={"position": 0.98, "color": theme.series_color(n),
                                                     "anchors": [(1, 1), (1, 1)]}))
        if len(rpm):
            p.setXRange(float(rpm.min()), float(rpm.max()), padding=0)
        p.setYRange(0.0, top * 1.12 if top > 0 else 1.0, padding=0)

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
