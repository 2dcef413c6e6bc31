"""Natural-frequency table and the selected mode's shape, torque and energy shares."""
from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from app import formatting as fmt
from app.gui import theme
from core import units

from . import rows as R
from .plotting import PlotCanvas, column_ticks, new_plot, side_by_side, train_line
from .table import RowsModel, fit_columns, make_table_view

SHOW_TWIST = "Twist and modal torque"
SHOW_ENERGY = "Energy shares"


def _bar_style(brushes: list) -> dict:
    """Bar fills and outlines: one brush for all when the train has no branches
    (pyqtgraph then paints the bars in one call instead of one by one)."""
    outline = theme.pen(theme.BACKGROUND, 1.0)
    if len({b.color().rgba() for b in brushes}) <= 1:
        return {"brush": brushes[0] if brushes else theme.brush(theme.series_color(0)), "pen": outline,
                "brushes": None, "pens": None}
    return {"brushes": brushes, "pens": [outline] * len(brushes), "brush": None, "pen": None}


def _set_text(label, text: str) -> None:
    if label.text() != text:  # a label set again re-lays out its row
        label.setText(text)


def modal_torque_scale(largest_nm: float, system: str = "SI") -> tuple[float, str]:
    """(factor from N*m, unit text) for the modal torque axis: SI with a k/M/G prefix
    chosen from the largest value, US customary in lbf*ft or, from 10 000 lbf*ft,
    in kip*ft (1 kip = 1000 lbf)."""
    if system == "SI":
        scale, prefix = pg.siScale(largest_nm or 1.0)
        return scale, f"{prefix}N·m"
    unit = units.display_unit(units.TORQUE, system)
    scale = units.convert(1.0, units.TORQUE, unit)
    if largest_nm * scale >= 1e4 and unit == "lbf*ft":
        return scale / 1e3, "kip·ft"
    return scale, R.pretty(unit)


class ModesView(QtWidgets.QWidget):
    """Left: the frequency table.  Right: plots of the selected mode, the upper
    one per disc along the train, the lower one per link, x axes linked."""

    #: its plots draw when the tab shows; the tables it keeps current cost little (see panel)
    light_when_hidden = True

    modeSelected = QtCore.Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.modes = None
        self._forget = False
        self.above_limit = None
        self.unit_system = "SI"
        self._index = -1
        self._line = None
        self._line_key = None  # topology the train line was placed for
        self._pool = {}  # (plot, name) -> plot item kept from one redraw to the next
        self._used = set()

        self.table_model = RowsModel(R.FREQUENCY_HEADERS_SHOWN, self, numeric_columns=(0, 1, 2))
        self.table = make_table_view(self.table_model, self)
        self.table.setToolTip("Natural frequencies, lowest first. Select a row to draw its mode shape.")
        self.table.setTextElideMode(QtCore.Qt.ElideMiddle)  # 'Pump imp…r (73.7 %)': the share stays in view
        self.table.selectionModel().currentRowChanged.connect(self._row_changed)

        self.show_box = QtWidgets.QComboBox(self)
        self.show_box.addItems([SHOW_TWIST, SHOW_ENERGY])
        self.show_box.setToolTip("Twist angle per disc and modal torque per link, or the share of the "
                                 "mode's kinetic energy (discs) and strain energy (links).")
        self.show_box.currentIndexChanged.connect(lambda _i: self._draw())
        self.title = QtWidgets.QLabel(self)
        self.title.setFont(theme.font(theme.BASE_POINT_SIZE, bold=True))
        self.hover = QtWidgets.QLabel("Point at a disc or bar for its value.", self)
        self.hover.setStyleSheet(f"color: {theme.INK_MUTED};")

        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Mode shape"
        # short plots: horizontal titles instead of left labels, which would collide
        self.upper = new_plot(self.canvas, 0, "", "")
        self.lower = new_plot(self.canvas, 1, "Along the train (discs in schematic order)", "")
        self.lower.setXLink(self.upper)
        self.upper.getAxis("bottom").setStyle(showValues=False)  # the lower plot names the discs
        self._ticks = None
        self._titles = {}
        self._draw_pending = False
        self.upper.getAxis("left").setWidth(72)
        self.lower.getAxis("left").setWidth(72)
        self.canvas.ci.layout.setRowStretchFactor(0, 3)
        self.canvas.ci.layout.setRowStretchFactor(1, 2)
        self.lower.vb.sigResized.connect(self._update_ticks)
        self.key = QtWidgets.QLabel(self)  # colour key of the main line and branches
        self.key.setTextFormat(QtCore.Qt.RichText)

        top = QtWidgets.QHBoxLayout()
        top.addWidget(self.title, 1)
        top.addWidget(QtWidgets.QLabel("Show:"))
        top.addWidget(self.show_box)
        right = QtWidgets.QWidget(self)
        rl = QtWidgets.QVBoxLayout(right)
        rl.setContentsMargins(0, 0, 0, 0)
        rl.addLayout(top)
        rl.addWidget(self.canvas, 1)
        bottom = QtWidgets.QHBoxLayout()
        bottom.addWidget(self.key)
        bottom.addStretch(1)
        bottom.addWidget(self.hover)
        rl.addLayout(bottom)

        # damped natural frequencies beside the undamped ones, where the study has them (a tab that
        # shows only then: the tab bar hides itself with one tab)
        self.damped_model = RowsModel(R.DAMPED_HEADERS, self, numeric_columns=(0, 1, 2, 3))
        self.damped_table = make_table_view(self.damped_model, self)
        self.damped_table.setToolTip("Damped natural frequencies and modal damping ratios from the complex "
                                     "eigenvalues of the damped train")
        self.damped_note = QtWidgets.QLabel(self)
        self.damped_note.setWordWrap(True)
        self.damped_note.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.damper_model = RowsModel(R.DAMPER_HEADERS, self, numeric_columns=(0, 1, 2))
        self.damper_table = make_table_view(self.damper_model, self)
        self.damper_note = QtWidgets.QLabel(self)
        self.damper_note.setWordWrap(True)
        damped_page = QtWidgets.QWidget(self)
        dl = QtWidgets.QVBoxLayout(damped_page)
        dl.setContentsMargins(0, 2, 0, 0)
        dl.setSpacing(3)
        pair = QtWidgets.QSplitter(QtCore.Qt.Horizontal, damped_page)
        pair.setChildrenCollapsible(False)
        pair.addWidget(self.damped_table)
        pair.addWidget(self.damper_table)
        pair.setStretchFactor(0, 4)
        pair.setStretchFactor(1, 3)
        for t in (self.damped_table, self.damper_table):
            t.setMinimumHeight(2 * t.verticalHeader().defaultSectionSize() + 30)
        dl.addWidget(pair, 1)
        for label in (self.damped_note, self.damper_note):
            label.setSizePolicy(QtWidgets.QSizePolicy.Preferred, QtWidgets.QSizePolicy.Minimum)
            dl.addWidget(label)
        self.damped_page = damped_page
        self.left_tabs = QtWidgets.QTabWidget(self)
        self.left_tabs.setDocumentMode(True)
        self.left_tabs.setTabBarAutoHide(True)
        self.left_tabs.addTab(self.table, "Natural frequencies")
        self.damped = None

        split = QtWidgets.QSplitter(QtCore.Qt.Horizontal, self)
        split.addWidget(self.left_tabs)
        split.addWidget(right)
        split.setStretchFactor(0, 2)
        split.setStretchFactor(1, 3)
        split.setChildrenCollapsible(False)
        self.splitter = split
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(split)

    NARROW_PX = 1000  # below this width the table goes above the plots

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        want = QtCore.Qt.Vertical if self.width() < self.NARROW_PX else QtCore.Qt.Horizontal
        if self.splitter.orientation() != want:
            self.splitter.setOrientation(want)
            if want == QtCore.Qt.Vertical:
                self.splitter.setSizes([int(self.height() * 0.3), int(self.height() * 0.7)])
            else:
                self.splitter.setSizes([int(self.width() * 0.4), int(self.width() * 0.6)])

    # ------------------------------------------------------------ the result-view protocol (see panel)
    def show_study(self, study) -> str | None:
        """Show the study's modes, keeping the same mode number selected across live edits."""
        keep = None
        if self._forget:  # a newly opened project: no selection carried over
            self._forget = False
        elif self.modes is not None and 0 <= self._index < len(self.modes):
            keep = R.mode_index(study.modes, int(self.modes.number[self._index]))
        self.set_modes(study.modes, study.above_screening_limit, keep, screened=study.screening is not None)
        self.set_damped(getattr(study, "damped", None), getattr(study, "damper", None))
        return None

    def set_damped(self, damped, damper=None) -> None:
        """Damped natural frequencies and damping ratios (core.damped.DampedModes) and, where the
        train has a viscous damper, its free and locked frequencies (core.damped.DamperBounds), in
        a tab beside the undamped frequencies; None: no such tab."""
        self.damped = damped
        i = self.left_tabs.indexOf(self.damped_page)
        if damped is None:
            if i >= 0:
                self.left_tabs.removeTab(i)
            self.damped_model.set_rows([])
            self.damper_model.set_rows([])
            return
        if i < 0:
            self.left_tabs.addTab(self.damped_page, "Damped")
            i = self.left_tabs.indexOf(self.damped_page)
        self.left_tabs.setTabToolTip(i, "Damped natural frequencies and modal damping ratios"
                                        + ("; the viscous damper free and locked" if damper is not None else ""))
        self.damped_model.set_rows(R.damped_rows(damped))
        fit_columns(self.damped_table, max_width=200)
        self.damped_note.setText(R.damped_note(damped))
        self.damped_note.setVisible(bool(self.damped_note.text()))
        has_damper = damper is not None
        self.damper_note.setVisible(has_damper)
        self.damper_table.setVisible(has_damper)
        if has_damper:
            names = ", ".join(self.modes.train.name_of(l) if self.modes is not None else l for l in damper.links)
            self.damper_note.setText(f"Viscous damper ({names}): {damper.statement}")
            self.damper_model.set_rows(R.damper_rows(damper))
            fit_columns(self.damper_table, max_width=200)
        else:
            self.damper_model.set_rows([])

    def set_unit_system(self, system: str) -> None:
        """Modal torque axis and tips in the display unit system."""
        if system != self.unit_system:
            self.unit_system = system
            self._titles.pop(id(self.lower), None)
            self._draw()

    def reset_view_state(self) -> None:
        """A newly opened project: no mode selection carried over (the next study
        selects its first elastic mode)."""
        self._forget = True

    # ------------------------------------------------------------ data
    def set_modes(self, modes, above_limit=None, select: int | None = None, screened: bool | None = None) -> None:
        """``above_limit``: per mode, True where above the screening limit (listed and
        marked); ``screened``: whether a screening was run (default: when ``above_limit`` is given)."""
        if screened is None:
            screened = above_limit is not None
        self.modes, self.above_limit = modes, above_limit
        train = modes.train
        key = (tuple(train.disc_ids), tuple((l.id, l.from_id, l.to_id) for l in train.links))
        if key != self._line_key:  # a value edit keeps the positions along the train
            self._line_key, self._line = key, train_line(train)
        self.table_model.set_rows(R.frequency_rows(modes, above_limit, screened))
        fit_columns(self.table, max_width=220, elastic=(4, 5))
        # the screening column as wide as its longest word, whichever rows were measured
        h = self.table.horizontalHeader()
        need = self.table.fontMetrics().horizontalAdvance(R.ABOVE_LIMIT) + 16
        if h.count() > 6 and h.sectionSize(6) < need:
            h.resizeSection(6, need)
        n = len(modes)
        if select is None or not 0 <= select < n:
            elastic = np.flatnonzero(modes.elastic)
            select = int(elastic[0]) if elastic.size else (0 if n else -1)
        self._index = -1
        self.select_mode(select)

    def clear(self, message: str = "") -> None:
        self.set_damped(None)
        self.modes, self._line, self._index = None, None, -1
        self._line_key = None
        self.table_model.set_rows([])
        self.upper.clear()
        self.lower.clear()
        self._pool = {}
        self._titles, self._ticks = {}, None
        self.title.setText("")

    def select_mode(self, index: int) -> None:
        if self.modes is None or not 0 <= index < len(self.modes):
            return
        if index != self.table.currentIndex().row():
            self.table.selectRow(index)  # fires _row_changed
        if index != self._index:
            self._index = index
            self._draw()

    def current_index(self) -> int:
        return self._index

    def _row_changed(self, current, _previous) -> None:
        i = current.row()
        if self.modes is not None and 0 <= i < len(self.modes) and i != self._index:
            self._index = i
            self._draw()
            self.modeSelected.emit(i)

    # ------------------------------------------------------------ drawing
    def _item(self, plot, name: str, make):
        """Plot item ``name`` of this redraw: the one kept from the last redraw, or
        ``make()`` added to ``plot`` (adding items is the slow part of a redraw)."""
        key = (id(plot), name)
        item = self._pool.get(key)
        if item is None:
            item = make()
            plot.addItem(item)
            self._pool[key] = item
        self._used.add(key)
        return item

    def _drop_unused(self) -> None:
        for key in [k for k in self._pool if k not in self._used]:
            item = self._pool.pop(key)
            plot = self.upper if key[0] == id(self.upper) else self.lower
            plot.removeItem(item)

    def showEvent(self, event) -> None:
        super().showEvent(event)
        if self._draw_pending:
            self._draw()

    def _draw(self) -> None:
        """Redraw the plots of the selected mode; while the tab is hidden, when it shows."""
        if not self.isVisible() and self.modes is not None:
            self._draw_pending = True
            return
        self._draw_pending = False
        m, i, line = self.modes, self._index, self._line
        if m is None or i < 0 or line is None:
            self.upper.clear()
            self.lower.clear()
            self._pool = {}
            self._titles, self._ticks = {}, None
            return
        self._used = set()
        try:
            self._draw_mode(m, i, line)
        finally:
            self._drop_unused()

    def _draw_mode(self, m, i, line) -> None:
        train = m.train
        f = float(m.frequency_hz[i])
        kind = "rigid-body mode" if m.rigid_body[i] else f"{fmt.hz(f)} Hz, {fmt.cpm(f)} cpm"
        _set_text(self.title, f"Mode {int(m.number[i])}: {kind}")
        self.canvas.export_title = f"{train.title}: mode {int(m.number[i])}, {kind}"
        if len(line.series) > 1:
            parts = []
            for s, members in enumerate(line.series):
                label = "main line" if s == 0 else f"branch to {train.name_of(train.discs[members[-1]].id)}"
                parts.append(f"<span style='color:{theme.series_color(s)}'>&#9632;</span>&nbsp;{label}")
            _set_text(self.key, "&nbsp;&nbsp;&nbsp;".join(parts))
        else:
            _set_text(self.key, "")
        energy = self.show_box.currentText() == SHOW_ENERGY
        names = [train.name_of(d.id) for d in train.discs]
        self._update_ticks()
        if energy:
            self._draw_energy(m, i, line, names)
        else:
            self._draw_twist(m, i, line, names)
        self.upper.setXRange(-0.7, line.n_columns - 0.3, padding=0)

    def _update_ticks(self, *_args) -> None:
        if self.modes is None or self._line is None:
            return
        w = float(self.lower.vb.width())
        train = self.modes.train
        key = (self._line_key, w, tuple(d.name for d in train.discs))
        if self._ticks is not None and key == getattr(self, "_ticks_key", None):
            return  # a value edit: the same names at the same width (eliding 200 names costs ms)
        self._ticks_key = key
        ticks = column_ticks(train, self._line, w if w > 40 else 600.0,
                             theme.font(theme.SMALL_POINT_SIZE))
        if ticks == self._ticks:
            return  # the same ticks set again would re-lay out both axes' text
        self._ticks = ticks
        self.lower.getAxis("bottom").setTicks(ticks)
        self.upper.getAxis("bottom").setTicks(ticks)

    def _zero_line(self, plot):
        return self._item(plot, "zero", lambda: pg.InfiniteLine(
            0, angle=0, pen=theme.pen(theme.INK_MUTED, theme.THIN_WIDTH)))

    def _draw_twist(self, m, i, line, names) -> None:
        shape = m.shape[i]
        self._title(self.upper, "Twist angle per disc (largest = 1)")
        self._zero_line(self.upper)
        for s, members in enumerate(line.series):
            self._item(self.upper, f"series {s}", pg.PlotDataItem).setData(
                line.disc_x[members], shape[members], pen=theme.series_pen(s, theme.BOLD_WIDTH))
        dashed = theme.pen(theme.INK_MUTED, theme.LINE_WIDTH, QtCore.Qt.DashLine)
        for k, (j, di, gx) in enumerate(line.ground):  # a grounded link ends at zero twist
            self._item(self.upper, f"ground {k}", pg.PlotDataItem).setData(
                [line.disc_x[di], gx], [shape[di], 0.0], pen=dashed)
            self._item(self.upper, f"ground mark {k}", pg.PlotDataItem).setData(
                [gx], [0.0], pen=None, symbol="t1", symbolSize=11,
                symbolBrush=theme.brush(theme.INK_MUTED), symbolPen=None)
        # one scatter per row with a single brush: per-point brushes render a symbol per disc
        white = theme.pen(theme.BACKGROUND, 1.0)
        for row in range(int(line.disc_row.max(initial=0)) + 1):
            k = np.flatnonzero(line.disc_row == row)
            if not k.size:
                continue
            spots = self._item(self.upper, f"discs {row}", lambda: pg.ScatterPlotItem(
                hoverable=True, hoverSize=14,
                tip=lambda x, y, data: f"{data}\ntwist {y:+.3f} (largest = 1)"))
            spots.setData(line.disc_x[k], shape[k], size=10, brush=theme.brush(theme.series_color(row)),
                          pen=white, data=[names[j] for j in k])
        self.upper.setYRange(-1.1, 1.1, padding=0)

        torque = np.nan_to_num(m.link_torque[i], nan=0.0, posinf=0.0, neginf=0.0)
        scale, unit = modal_torque_scale(float(np.max(np.abs(torque), initial=0.0)), self.unit_system)
        self._title(self.lower, f"Modal torque per link, {unit} per rad of largest twist")
        link_names = [m.train.name_of(lid) for lid in m.link_ids]
        self._bars(self.lower, line, torque * scale, lambda j, v: (
            f"{link_names[j]}: modal torque {torque[j] * scale:+.4g} {unit} per rad of largest twist"))

    def _draw_energy(self, m, i, line, names) -> None:
        ke = 100.0 * m.kinetic_share[i]
        se = 100.0 * m.strain_share[i]
        self._title(self.upper, "Kinetic energy per disc, % of the mode's total")
        self._title(self.lower, "Strain energy per link, % of the mode's total")
        colors = [theme.series_color(s) for s in range(len(line.series))]
        row_brushes = [theme.brush(c) for c in colors]
        bx, bw = self._side_by_side("discs", line.disc_x, 0.55)
        bar = self._item(self.upper, "energy bars", lambda: pg.BarGraphItem(x=[], height=[], width=1))
        bar.setOpts(x=bx, height=ke, width=bw,
                    **_bar_style([row_brushes[min(r, len(row_brushes) - 1)] for r in line.disc_row]))
        spots = self._item(self.upper, "energy tips", lambda: pg.ScatterPlotItem(
            hoverable=True, tip=lambda x, y, data: f"{data}\n{y:.1f} % of the kinetic energy"))
        spots.setData(bx, ke, size=14, brush=theme.brush((0, 0, 0, 0)), pen=None, data=names)
        self.upper.setYRange(0, max(5.0, float(np.nanmax(ke)) * 1.1 if ke.size else 5.0), padding=0)
        link_names = [m.train.name_of(lid) for lid in m.link_ids]
        self._bars(self.lower, line, se, lambda j, v: f"{link_names[j]}: {v:.1f} % of the strain energy")

    def _side_by_side(self, which: str, x, width: float):
        """plotting.side_by_side, kept while the train line is the same object."""
        if getattr(self, "_sbs_line", None) is not self._line:
            self._sbs_line, self._sbs_cache = self._line, {}
        key = (which, width)
        if key not in self._sbs_cache:
            self._sbs_cache[key] = side_by_side(x, width)
        return self._sbs_cache[key]

    def _title(self, plot, text: str) -> None:
        if self._titles.get(id(plot)) == text:
            return  # a title set again re-lays out the whole plot
        self._titles[id(plot)] = text
        plot.setTitle(text, color=theme.INK, size=f"{theme.SMALL_POINT_SIZE + 0.5}pt")

    def _bars(self, plot, line, values, tip) -> None:
        if not len(values):
            return
        colors = [theme.series_color(s) for s in range(len(line.series))]
        row_brushes = [theme.brush(c) for c in colors]
        brushes = [row_brushes[min(r, len(row_brushes) - 1)] for r in line.link_row]
        self._zero_line(plot)
        bx, bw = self._side_by_side("links", line.link_x, 0.45)
        bars = self._item(plot, "bars", lambda: pg.BarGraphItem(x=[], height=[], width=1))
        bars.setOpts(x=bx, height=values, width=bw, **_bar_style(brushes))
        # invisible hover targets at the bar tops: a tooltip per link (the tip reads the current mode)
        self._bar_tip = tip
        targets = self._item(plot, "bar tips", lambda: pg.ScatterPlotItem(
            hoverable=True, tip=lambda x, y, data: self._bar_tip(data, y)))
        targets.setData(bx, values, size=16, brush=theme.brush((0, 0, 0, 0)), pen=None,
                        data=list(range(len(values))))
        lo, hi = float(np.min(values)), float(np.max(values))
        span = max(hi - lo, abs(hi), abs(lo), 1e-12)
        plot.setYRange(min(0.0, lo) - 0.08 * span, max(0.0, hi) + 0.08 * span, padding=0)
