"""Plot helpers shared by the result views: a styled plot canvas, export with
the caution line, and the train's along-the-line positions."""
from __future__ import annotations

import html
from dataclasses import dataclass

import numpy as np
import pyqtgraph as pg
import pyqtgraph.exporters  # noqa: F401  (registers pg.exporters)
from PySide6 import QtCore, QtWidgets

from core.about import CAUTION
from app.gui import theme
from app.schematic_layout import place
from core.model import GROUND


class DrawWhenShown:
    """Mixin of a result view (before the Qt widget class): ``_draw()`` draws at once when the
    view is on screen, else marks it pending, and a pending drawing is made when the view shows
    or when an export or a test asks (``ensure_drawn``).  The view supplies ``_draw_now()``."""

    _draw_pending = False

    def showEvent(self, event) -> None:
        super().showEvent(event)
        self.ensure_drawn()

    def ensure_drawn(self) -> None:
        """Draw now if results came while the view was hidden (exports, tests)."""
        if self._draw_pending:
            self._draw_now()

    def _draw(self) -> None:
        if self.isVisible():
            self._draw_now()
        else:
            self._draw_pending = True


class PlotCanvas(pg.GraphicsLayoutWidget):
    """A GraphicsLayoutWidget whose export adds a title and the caution line.

    On screen the plots use all the room; an exported PNG or SVG must carry
    what it shows and the screening-only caution, so both are added as rows
    of the layout for the moment of the export.
    """

    def __init__(self, parent=None):
        theme.configure_pyqtgraph()
        super().__init__(parent)
        self.setBackground(theme.BACKGROUND)
        self.ci.setContentsMargins(6, 6, 10, 6)
        self.export_title = ""
        self.export_show = []  # items hidden on screen by the user but always exported
        # called with (width, height) of the plot area before it is laid out at that size
        # (on a resize and for an export): e.g. to move the key beside or below the plot
        self.layout_hooks = []

    def resizeEvent(self, event) -> None:
        if event is not None:  # pyqtgraph calls it with None while it is built
            for hook in getattr(self, "layout_hooks", ()):
                hook(float(event.size().width()), float(event.size().height()))
        super().resizeEvent(event)

    EXPORT_SIZE = (1600, 980)  # px the plot is laid out at (and written at) for an export

    def export(self, path: str) -> None:
        """Write the plot to ``path`` (.png or .svg by extension) with title and caution.

        The canvas is laid out at a fixed export size for the moment of the
        export, so the file looks the same whether or not its tab is showing.
        """
        note = pg.LabelItem(f"<b>{html.escape(self.export_title)}</b><br>"
                            f"<span style='color:{theme.WARN}'>{html.escape(CAUTION)}</span>",
                            color=theme.INK, size=f"{theme.SMALL_POINT_SIZE}pt", justify="left")
        lay = self.ci.layout
        old_rect = self.ci.geometry()
        hidden = [item for item in self.export_show if not item.isVisible()]
        for item in hidden:
            _show(item, True)
        # items may move (e.g. the key beside or below the plot) before the note takes its row
        for hook in self.layout_hooks:
            hook(*self.EXPORT_SIZE)
        row = lay.rowCount()
        self.ci.addItem(note, row=row, col=0, colspan=max(1, lay.columnCount()))
        lay.setRowStretchFactor(row, 0)
        note.setMaximumHeight(3.2 * self.fontMetrics().height())
        try:
            # lay the central item out at the export size (the widget itself keeps its size);
            # twice, as a key that wraps to the new width asks for a new height
            for _ in range(2):
                self.ci.setGeometry(QtCore.QRectF(0, 0, *self.EXPORT_SIZE))
                lay.activate()
                QtWidgets.QApplication.processEvents()
            if str(path).lower().endswith(".svg"):
                _accept_closed_svg_paths()
                pg.exporters.SVGExporter(self.ci).export(str(path))
            else:
                # written at the layout size: a rescaled export misplaces the label fills
                ex = pg.exporters.ImageExporter(self.ci)
                rect = self.ci.boundingRect()
                ex.parameters()["width"] = int(round(rect.width()))
                ex.parameters()["height"] = int(round(rect.height()))
                ex.export(str(path))
        finally:
            self.ci.removeItem(note)
            for item in hidden:
                _show(item, False)
            for hook in self.layout_hooks:
                hook(float(self.width()), float(self.height()))
            self.ci.setGeometry(old_rect)
            lay.activate()


def _show(item, on: bool) -> None:
    """Show or hide an item that the user may hide on screen (e.g. the key)."""
    if hasattr(item, "set_shown"):
        item.set_shown(on)
    else:
        item.setVisible(on)
        item.setMaximumHeight(16777215 if on else 0)


def _accept_closed_svg_paths() -> None:
    """Let pyqtgraph's SVG exporter read the paths Qt 6.12 writes.

    Qt now ends closed paths with a 'Z' command, which pyqtgraph 0.14's
    coordinate correction cannot parse (it expects only 'x,y' pairs) and the
    export fails on the first plot frame.  The wrapper takes the 'Z' off for
    the correction and puts it back afterwards.  Applied once.
    """
    import importlib
    mod = importlib.import_module("pyqtgraph.exporters.SVGExporter")
    original = mod.correctCoordinates
    if getattr(original, "_accepts_closed_paths", False):
        return

    def correct(node, defs, item, options):
        closed = []
        for el in node.getElementsByTagName("path"):
            d = el.getAttribute("d")
            tokens = d.split()
            if "Z" in tokens or "z" in tokens:
                el.setAttribute("d", " ".join(t for t in tokens if t not in ("Z", "z")))
                closed.append(el)
        result = original(node, defs, item, options)
        for el in closed:
            el.setAttribute("d", el.getAttribute("d").strip() + " Z")
        return result

    correct._accepts_closed_paths = True
    mod.correctCoordinates = correct


def plot_over_table(parent: QtWidgets.QWidget, upper: QtWidgets.QWidget,
                    lower: QtWidgets.QWidget) -> QtWidgets.QSplitter:
    """Fill ``parent`` with a plot above its table, 3:1, neither collapsible."""
    split = QtWidgets.QSplitter(QtCore.Qt.Vertical, parent)
    split.addWidget(upper)
    split.addWidget(lower)
    split.setStretchFactor(0, 3)
    split.setStretchFactor(1, 1)
    split.setChildrenCollapsible(False)
    lay = QtWidgets.QVBoxLayout(parent)
    lay.setContentsMargins(0, 0, 0, 0)
    lay.addWidget(split)
    return split


def new_plot(canvas: PlotCanvas, row: int, x_label: str, y_label: str) -> pg.PlotItem:
    p = canvas.addPlot(row=row, col=0)
    theme.style_plot(p, x_label, y_label)
    p.setMenuEnabled(False)
    p.hideButtons()
    return p


@dataclass
class TrainLine:
    """Disc and link positions along the drawn train (x = schematic column).

    ``series``: one list of disc indices per schematic row (the main line and
    each branch), each preceded by the disc it branches from so the drawn
    line is continuous.  ``link_x``: x of each link's midpoint, ``link_row``:
    the row whose colour it takes.  ``ground_x``: per grounded link, the x of
    its ground end (twist zero there).
    """

    disc_x: np.ndarray
    disc_row: np.ndarray
    series: list
    link_x: np.ndarray
    link_row: np.ndarray
    ground: list  # (link index, disc index, x of ground end)
    n_columns: int


def train_line(train) -> TrainLine:
    ids = train.disc_ids
    p = place(ids, [(l.id, l.from_id, l.to_id) for l in train.links])
    index = {d: i for i, d in enumerate(ids)}
    x = np.array([p.column.get(d, i) for i, d in enumerate(ids)], float)
    r = np.array([p.row.get(d, 0) for d in ids], int)
    link_x = np.zeros(len(train.links))
    link_row = np.zeros(len(train.links), int)
    ground, parent_of_row = [], {}
    side = {lid: s for lid, _d, s in p.grounds}
    for j, l in enumerate(train.links):
        if l.grounded:
            d = l.to_id if l.from_id == GROUND else l.from_id
            i = index[d]
            gx = x[i] + 0.5 * side.get(l.id, 1)
            link_x[j], link_row[j] = 0.5 * (x[i] + gx), r[i]
            ground.append((j, i, gx))
            continue
        a, b = index[l.from_id], index[l.to_id]
        link_x[j] = 0.5 * (x[a] + x[b])
        link_row[j] = max(r[a], r[b])
        if r[a] != r[b]:  # a branch starts here: remember the disc it hangs from
            child, par = (a, b) if r[a] > r[b] else (b, a)
            if x[child] > x[par]:
                parent_of_row.setdefault(int(r[child]), par)
    series = []
    for row in range(max(1, p.n_rows)):
        members = sorted(np.flatnonzero(r == row), key=lambda i: x[i])
        if not members:
            continue
        if row in parent_of_row:
            members = [parent_of_row[row]] + members
        series.append(members)
    return TrainLine(x, r, series, link_x, link_row, ground, max(1, p.n_columns))


def side_by_side(x, width: float = 0.6):
    """Offsets and bar width so bars that share an x (a disc or link of each
    branch in the same column) stand side by side instead of hiding each other.
    Returns (x positions, width per bar)."""
    x = np.asarray(x, float)
    out = x.copy()
    key = np.round(x * 2) / 2
    widths = np.full(x.shape, width)
    for k in np.unique(key):
        idx = np.flatnonzero(key == k)
        n = idx.size
        if n > 1:
            w = width / n
            out[idx] = x[idx] + (np.arange(n) - (n - 1) / 2) * w
            widths[idx] = w * 0.9
    return out, widths


def elide(text: str, metrics, width: float) -> str:
    """``text`` cut to ``width`` pixels with an ellipsis (axis ticks; tooltips carry it whole)."""
    from PySide6 import QtCore as _QtCore
    return metrics.elidedText(text, _QtCore.Qt.ElideRight, int(width))


def column_ticks(train, line: TrainLine, width_px: float, font) -> list:
    """Bottom-axis ticks: the name of the main-line disc at each column (its id
    where it has none), thinned so that the labels fit side by side in
    ``width_px``; a long name is shortened with an ellipsis."""
    from PySide6 import QtGui
    main = {int(line.disc_x[i]): train.name_of(train.discs[i].id) for i in range(len(train.discs))
            if line.disc_row[i] == 0}
    fm = QtGui.QFontMetrics(font)
    per_column = max(width_px, 50.0) / max(line.n_columns, 1)
    longest = max((fm.horizontalAdvance(t) for t in main.values()), default=20)
    # as wide as a column allows, but never narrower than about ten characters
    room = max(per_column - 24, fm.horizontalAdvance("Crank thro…"))
    room = min(room, longest)
    main = {c: elide(t, fm, room) for c, t in main.items()}
    widest = max((fm.horizontalAdvance(t) for t in main.values()), default=20) + 24
    step = max(1, int(np.ceil(widest / per_column)))
    return [[(c, main.get(c, "")) for c in range(0, line.n_columns, step)]]
