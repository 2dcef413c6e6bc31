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
from .plotting import PlotCanvas, new_plot
from .table import RowsModel, fit_columns, make_table_view

RPM = 2.0 * math.pi / 60.0
TORQUE, STRESS = "Vibratory torque", "Vibratory shear stress"
SUM, PHASED = "Sum of order amplitudes (conservative)", "Phase-aware synthesis"
MAX_DEFAULT_LINKS = 4


def default_links(resp, summary) -> list[str]:
    """Links worth plotting first: those with a permissible value, then the
    largest peaks, at most MAX_DEFAULT_LINKS."""
    ranked = sorted(summary, key=lambda p: -(p.peak_torque if p.peak_torque is not None else 0.0))
    judged = [p.link_id for p in ranked if p.passed is not None]
    rest = [p.link_id for p in ranked if p.passed is None]
    chosen = (judged + rest)[:MAX_DEFAULT_LINKS]
    return chosen or list(resp.link_ids[:MAX_DEFAULT_LINKS])


class ResponseView(QtWidgets.QWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.train = None
        self.response = None
        self.summary = []
        self.unit_system = "SI"

        self.quantity = QtWidgets.QComboBox(self)
        self.quantity.addItems([TORQUE, STRESS])
        self.quantity.setToolTip("Vibratory torque amplitude in each chosen link, or the shear stress "
                                 "amplitude (shafts with geometry, times their stress concentration factor).")
        self.combination = QtWidgets.QComboBox(self)
        self.combination.setToolTip("How the orders are combined: the plain sum of amplitudes is "
                                    "conservative; the phase-aware synthesis uses the given phases. "
                                    "Or one order alone.")
        self.links = QtWidgets.QListWidget(self)
        self.links.setToolTip("Tick the links to plot.")
        self.links.setMinimumWidth(140)
        self.links.setMaximumWidth(260)
        self.quantity.currentIndexChanged.connect(lambda _i: self._quantity_changed())
        self.combination.currentIndexChanged.connect(lambda _i: self._draw())
        self.links.itemChanged.connect(lambda _item: self._draw())

        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Forced response"
        self.plot = new_plot(self.canvas, 0, "Reference speed, rpm", "")
        self.plot.getAxis("left").setWidth(72)
        self.legend = self.plot.addLegend(offset=(8, 8), labelTextColor=theme.INK,
                                          brush=theme.brush((255, 255, 255, 220)))
        self.hover = QtWidgets.QLabel(self)
        self.hover.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.verdict = QtWidgets.QLabel(self)
        self.verdict.setWordWrap(True)

        self.peak_model = RowsModel(R.response_headers(), self, numeric_columns=(2, 3, 4, 5, 6, 7),
                                    status_column=8)
        self.peak_table = make_table_view(self.peak_model, self)
        self.peak_table.setToolTip("Peak vibratory torque and stress per link over the computed speeds "
                                   "(sum of order amplitudes) against the permissible values given.")

        controls = QtWidgets.QWidget(self)
        cl = QtWidgets.QVBoxLayout(controls)
        cl.setContentsMargins(0, 0, 0, 0)
        cl.addWidget(QtWidgets.QLabel("Quantity"))
        cl.addWidget(self.quantity)
        cl.addWidget(QtWidgets.QLabel("Orders"))
        cl.addWidget(self.combination)
        cl.addWidget(QtWidgets.QLabel("Links"))
        cl.addWidget(self.links, 1)
        self.combination.setMaximumWidth(260)
        self.quantity.setMaximumWidth(260)

        plot_box = QtWidgets.QWidget(self)
        pl = QtWidgets.QVBoxLayout(plot_box)
        pl.setContentsMargins(0, 0, 0, 0)
        pl.setSpacing(2)
        pl.addWidget(self.canvas, 1)
        pl.addWidget(self.hover)
        top = QtWidgets.QSplitter(QtCore.Qt.Horizontal, self)
        top.addWidget(controls)
        top.addWidget(plot_box)
        top.setStretchFactor(0, 0)
        top.setStretchFactor(1, 1)
        top.setChildrenCollapsible(False)

        lower = QtWidgets.QWidget(self)
        ll = QtWidgets.QVBoxLayout(lower)
        ll.setContentsMargins(0, 4, 0, 0)
        ll.setSpacing(2)
        ll.addWidget(self.verdict)
        ll.addWidget(self.peak_table, 1)

        split = QtWidgets.QSplitter(QtCore.Qt.Vertical, self)
        split.addWidget(top)
        split.addWidget(lower)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 1)
        split.setChildrenCollapsible(False)
        self.splitter = split
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(split)
        self._proxy = pg.SignalProxy(self.plot.scene().sigMouseMoved, rateLimit=30, slot=self._mouse_moved)

    # ------------------------------------------------------------ data
    def set_response(self, train, resp, summary=None, exceeded=None) -> None:
        """Show ``resp`` (a core.response.Response).  ``summary`` and
        ``exceeded`` default to core.response.response_summary / exceedances."""
        if summary is None or exceeded is None:
            from core import response as core_response
            summary = core_response.response_summary(resp) if summary is None else summary
            exceeded = core_response.exceedances(resp) if exceeded is None else exceeded
        before = self.checked_links() if self.response is not None else None
        self.train, self.response, self.summary, self.exceeded = train, resp, list(summary), list(exceeded)
        self.canvas.export_title = f"{train.title}: forced response"

        has_stress = bool(np.isfinite(np.asarray(resp.link_stress, float)).any())
        self.quantity.model().item(1).setEnabled(has_stress)
        if not has_stress and self.quantity.currentIndex() == 1:
            self.quantity.setCurrentIndex(0)

        self.combination.blockSignals(True)
        keep = self.combination.currentText()
        self.combination.clear()
        self.combination.addItems([SUM, PHASED] + [f"Order {o} alone" for o in resp.orders])
        i = self.combination.findText(keep)
        self.combination.setCurrentIndex(max(i, 0))
        self.combination.blockSignals(False)

        wanted = set(before) if before else set(default_links(resp, self.summary))
        self.links.blockSignals(True)
        self.links.clear()
        for lid in resp.link_ids:
            item = QtWidgets.QListWidgetItem(lid, self.links)
            item.setFlags(item.flags() | QtCore.Qt.ItemIsUserCheckable)
            item.setCheckState(QtCore.Qt.Checked if lid in wanted else QtCore.Qt.Unchecked)
        self.links.blockSignals(False)

        self.peak_model.headers = list(R.response_headers(self.unit_system))
        self.peak_model.set_rows(R.response_rows(self.summary, self.unit_system))
        fit_columns(self.peak_table)
        self._set_verdict()
        self._quantity_changed()

    def clear(self) -> None:
        self.response = None
        self.plot.clear()
        self.legend.clear()
        self.links.clear()
        self.peak_model.set_rows([])
        self.verdict.setText("")

    def checked_links(self) -> list[str]:
        out = []
        for k in range(self.links.count()):
            it = self.links.item(k)
            if it.checkState() == QtCore.Qt.Checked:
                out.append(it.text())
        return out

    def set_checked_links(self, link_ids) -> None:
        want = set(link_ids)
        self.links.blockSignals(True)
        for k in range(self.links.count()):
            it = self.links.item(k)
            it.setCheckState(QtCore.Qt.Checked if it.text() in want else QtCore.Qt.Unchecked)
        self.links.blockSignals(False)
        self._draw()

    def _set_verdict(self) -> None:
        judged = [p for p in self.summary if p.passed is not None]
        if self.exceeded:
            e = self.exceeded[0]
            what = "torque" if e.quantity == "torque" else "stress"
            self.verdict.setText(f"{len(self.exceeded)} permissible value(s) exceeded — first: {e.link_id} "
                                 f"vibratory {what} at {fmt.rpm(e.speed)} rpm.")
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
        stress = self.quantity.currentText() == STRESS
        self.combination.setEnabled(not stress)  # stress is given for the summed amplitudes only
        self._draw()

    def _series(self, j: int, stress: bool):
        r = self.response
        if stress:
            return np.asarray(r.link_stress[j], float)
        text = self.combination.currentText()
        if text == PHASED:
            return np.asarray(r.link_torque_phased[j], float)
        if text.startswith("Order ") and text.endswith(" alone"):
            k = [f"Order {o} alone" for o in r.orders].index(text)
            return np.asarray(r.order_link_torque[k, j], float)
        return np.asarray(r.link_torque[j], float)

    def _draw(self) -> None:
        p = self.plot
        p.clear()
        self.legend.clear()
        r = self.response
        if r is None:
            return
        stress = self.quantity.currentText() == STRESS
        kind = units.STRESS if stress else units.TORQUE
        unit = units.display_unit(kind, self.unit_system)
        if self.unit_system == "SI":
            scale, axis_unit = 1.0, ("Pa" if stress else "N·m")
            p.getAxis("left").enableAutoSIPrefix(True)
        else:
            scale, axis_unit = units.convert(1.0, kind, unit), unit
            p.getAxis("left").enableAutoSIPrefix(False)
        p.setLabel("left", STRESS if stress else TORQUE, units=axis_unit)
        rpm = np.asarray(r.speed, float) / RPM
        op = self.train.operating if self.train is not None else None
        if op is not None:
            lo, hi = op.speed_min / RPM, op.speed_max / RPM
            if hi > lo:
                band = pg.LinearRegionItem((lo, hi), movable=False, brush=theme.brush(theme.OPERATING_BAND),
                                           pen=theme.pen(theme.PASS, theme.THIN_WIDTH))
            else:
                band = pg.InfiniteLine(lo, angle=90, pen=theme.pen(theme.PASS, theme.BOLD_WIDTH))
            band.setZValue(-20)
            band.setToolTip(f"{op.range_name}: {fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} rpm")
            p.addItem(band)
            if op.trip_speed:
                p.addItem(pg.InfiniteLine(op.trip_speed / RPM, angle=90, pen=theme.trip_pen(),
                                          label="trip", labelOpts={"position": 0.95, "color": theme.INK_MUTED}))
        links = {p_.link_id: p_ for p_ in self.summary}
        top = 0.0
        for n, lid in enumerate(self.checked_links()):
            j = list(r.link_ids).index(lid)
            y = self._series(j, stress) * scale
            if not np.isfinite(y).any():
                continue
            top = max(top, float(np.nanmax(y)))
            p.plot(rpm, y, pen=theme.series_pen(n, theme.BOLD_WIDTH), name=lid)
            peak = links.get(lid)
            allowed = None if peak is None else (peak.permissible_stress if stress else peak.permissible_torque)
            if allowed is not None and math.isfinite(allowed):
                a = allowed * scale
                top = max(top, a)
                p.addItem(pg.InfiniteLine(a, angle=0, pen=theme.pen(theme.series_color(n), theme.LINE_WIDTH,
                                                                    QtCore.Qt.DashLine),
                                          label=f"permissible, {lid}",
                                          labelOpts={"position": 0.02, "color": theme.series_color(n),
                                                     "anchors": [(0, 1), (0, 1)]}))
        if len(rpm):
            p.setXRange(float(rpm.min()), float(rpm.max()), padding=0)
        p.setYRange(0.0, top * 1.1 if top > 0 else 1.0, padding=0)

    def _mouse_moved(self, ev) -> None:
        pos = ev[0]
        if self.response is None or not self.plot.sceneBoundingRect().contains(pos):
            return
        pt = self.plot.vb.mapSceneToView(pos)
        self.hover.setText(f"Pointer: {pt.x():.0f} rpm, {pt.y():.4g}")
