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
from .plotting import PlotCanvas, new_plot, plot_over_table
from .table import RowsModel, fit_columns, make_table_view

RPM = 2.0 * math.pi / 60.0
TORQUE, STRESS, SHARE = "Vibratory torque", "Vibratory shear stress", "Share of permissible"
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
        self._draw_pending = False  # new results arrived while the plot was hidden

        self.quantity = QtWidgets.QComboBox(self)
        self.quantity.addItems([TORQUE, STRESS, SHARE])
        self.quantity.setToolTip("Vibratory torque amplitude in each chosen link; the shear stress amplitude "
                                 "(shafts with geometry, times their stress concentration factor); or the "
                                 "amplitude as a share of the link's permissible torque or stress, so links "
                                 "of very different size read on one scale.")
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
        self._rpm, self._plotted = None, []
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

        self.splitter = plot_over_table(self, top, lower)
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
        self._draw_pending = False
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
            p.setLabel("left", f"{quantity}, %", siPrefixEnableRanges=())
        else:
            kind = units.STRESS if stress else units.TORQUE
            unit = units.display_unit(kind, self.unit_system)
            if self.unit_system == "SI":  # N*m or Pa with an automatic k / M prefix
                scale = 1.0
                p.setLabel("left", quantity, units="Pa" if stress else "N·m")
            else:
                scale = units.convert(1.0, kind, unit)
                p.setLabel("left", f"{quantity}, {unit}", siPrefixEnableRanges=())
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
        for n, lid in enumerate(self.checked_links()):
            j = list(r.link_ids).index(lid)
            peak = peaks.get(lid)
            y = self._share(j, peak) if share else self._torque_or_stress(j, stress) * scale
            if y is None or not np.isfinite(y).any():
                continue
            top = max(top, float(np.nanmax(y)))
            p.plot(rpm, y, pen=theme.series_pen(n, theme.BOLD_WIDTH), name=lid)
            self._plotted.append((lid, y))
            if share or peak is None:
                continue
            allowed = peak.permissible_stress if stress else peak.permissible_torque
            if allowed is not None and math.isfinite(allowed):
                a = allowed * scale
                top = max(top, a)
                p.addItem(pg.InfiniteLine(a, angle=0, pen=theme.pen(theme.series_color(n), theme.LINE_WIDTH,
                                                                    QtCore.Qt.DashLine),
                                          label=f"permissible, {lid}",
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
        unit = self.plot.getAxis("left").labelUnits
        values = ", ".join(f"{lid} {y[k]:.4g}" for lid, y in getattr(self, "_plotted", []))
        self.hover.setText(f"At {rpm[k]:.0f} rpm: {values}" + (f" ({unit})" if unit else ""))
