"""A plot key whose entries flow left to right and wrap to the width they get.

pyqtgraph's own legend is a grid: every column is as wide as its widest entry,
so a key of entries of very different lengths takes twice the rows it needs
(on a 1366 x 768 screen the interference diagram lost a third of its height to
it).  Here each entry takes its own width, rows fill greedily, and the key
asks the layout for exactly the height that the current width needs.  An
entry wider than the whole key is wrapped at word boundaries, never cut.
"""
from __future__ import annotations

import pyqtgraph as pg
from pyqtgraph.graphicsItems.LegendItem import ItemSample
from PySide6 import QtCore, QtGui, QtWidgets

from app.gui import theme

SAMPLE_W = 22.0  # px of the line / symbol sample
SAMPLE_GAP = 6.0  # sample to text
ENTRY_GAP = 18.0  # between entries on one row
ROW_GAP = 1.0


def wrap_words(text: str, metrics: QtGui.QFontMetricsF, width: float) -> str:
    """``text`` with line breaks so that no line is wider than ``width`` (a single
    word wider than that stays whole on its own line)."""
    lines, line = [], ""
    for word in text.split(" "):
        trial = f"{line} {word}" if line else word
        if line and metrics.horizontalAdvance(trial) > width:
            lines.append(line)
            line = word
        else:
            line = trial
    lines.append(line)
    return "\n".join(lines)


class _Sample(ItemSample):
    """The sample of an entry; clicking it does nothing (the entries stand for
    kinds of lines, not for one plot item that could be hidden)."""

    def mouseClickEvent(self, event):
        event.ignore()


class FlowLegend(pg.GraphicsWidget):
    """``addItem(item, text)`` like pyqtgraph's LegendItem; ``clear()``;
    ``entry_rects()`` gives every entry's box in scene coordinates (tests)."""

    def __init__(self, point_size: float = theme.SMALL_POINT_SIZE, color: str = theme.INK):
        super().__init__()
        self.setFlag(QtWidgets.QGraphicsItem.ItemHasNoContents, True)
        self._font = theme.font(point_size)
        self._metrics = QtGui.QFontMetricsF(self._font)
        self._brush = QtGui.QBrush(theme.qcolor(color))
        self._entries = []  # (sample, text item, text)
        self._shown = True
        self._height = -1.0
        self._laid_out_for = None
        self.setSizePolicy(QtWidgets.QSizePolicy.Preferred, QtWidgets.QSizePolicy.Fixed)
        self._fix_height(0.0)

    # ------------------------------------------------------------ entries
    def clear(self) -> None:
        for sample, text, _t in self._entries:
            for it in (sample, text):
                it.setParentItem(None)
                if it.scene() is not None:
                    it.scene().removeItem(it)
        self._entries = []
        self._laid_out_for = None
        self._relayout()

    def addItem(self, item, name: str) -> None:
        sample = _Sample(item)
        sample.setParentItem(self)
        text = QtWidgets.QGraphicsSimpleTextItem(name, self)
        text.setFont(self._font)
        text.setBrush(self._brush)
        self._entries.append((sample, text, name))
        self._laid_out_for = None
        self._relayout()

    @property
    def texts(self) -> list[str]:
        return [t for _s, _i, t in self._entries]

    def set_shown(self, shown: bool) -> None:
        """Show or hide the key; hidden, it gives its height back to the plot."""
        self._shown = shown
        self.setVisible(shown)
        self._laid_out_for = None
        self._relayout()

    def set_fixed_width(self, width: float | None) -> None:
        """A key beside the plot has a fixed width (its entries wrap to it); None: as laid out."""
        if width is None:
            self.setMinimumWidth(0)
            self.setMaximumWidth(16777215)
        else:
            self.setMinimumWidth(width)
            self.setMaximumWidth(width)
        self._laid_out_for = None
        self._relayout()

    # ------------------------------------------------------------ layout
    def _fix_height(self, h: float) -> None:
        if abs(h - self._height) < 0.5:
            return
        self._height = h
        self.setMinimumHeight(h)
        self.setMaximumHeight(h)
        self.updateGeometry()

    def height_for(self, width: float) -> float:
        return self._place(width, move=False)

    def _place(self, width: float, move: bool = True) -> float:
        """Lay the entries out in rows ``width`` wide; returns the height used."""
        if not self._entries or not self._shown:
            return 0.0
        width = max(width, 120.0)
        line_h = self._metrics.height()
        x = y = row_h = 0.0
        for sample, text, name in self._entries:
            room = width - SAMPLE_W - SAMPLE_GAP
            shown = name if self._metrics.horizontalAdvance(name) <= room else \
                wrap_words(name, self._metrics, room)
            if move and text.text() != shown:
                text.setText(shown)
            tw = max(self._metrics.horizontalAdvance(s) for s in shown.split("\n"))
            th = line_h * (shown.count("\n") + 1)
            w = SAMPLE_W + SAMPLE_GAP + tw
            if x > 0 and x + w > width:
                x, y = 0.0, y + row_h + ROW_GAP
                row_h = 0.0
            if move:  # the sample (20 px) centred on the first line of text
                sample.setPos(x, y + max(0.0, (line_h - 20.0) / 2.0))
                text.setPos(x + SAMPLE_W + SAMPLE_GAP, y + max(0.0, (20.0 - line_h) / 2.0))
            row_h = max(row_h, 20.0, th + max(0.0, 20.0 - line_h))
            x += w + ENTRY_GAP
        return y + row_h + 2.0

    def _relayout(self) -> None:
        w = float(self.size().width())
        if self.maximumWidth() < 16777215:
            w = float(self.maximumWidth())
        if w <= 1.0:
            w = float(self.preferredWidth()) or 600.0
        if self._laid_out_for == w:
            return
        self._laid_out_for = w
        self._fix_height(self._place(w))

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._relayout()

    def entry_rects(self) -> list[QtCore.QRectF]:
        """Scene rectangle of each entry (sample and text together)."""
        out = []
        for sample, text, _t in self._entries:
            r = sample.mapRectToScene(sample.boundingRect()).united(
                text.mapRectToScene(text.boundingRect()))
            out.append(r)
        return out


def arrange_key(canvas, legend: FlowLegend, w: float, h: float, side_now: bool,
                axes_px=(90.0, 70.0), shape: float = 1.6) -> bool:
    """Put ``legend`` below the plot (row 1) or beside it (column 1) of ``canvas``,
    whichever leaves the plot the larger area of a ``shape``:1 rectangle (a short wide
    canvas, e.g. on a 1366 x 768 screen, loses a third of its height to a key below).
    ``w``, ``h``: the canvas size; ``axes_px``: what the axes and their labels take
    around the plot.  Returns whether the key is now beside the plot."""
    ax, ay = axes_px
    side, side_w = False, None
    if legend.texts and legend._shown and w > 300 and h > 150:
        def score(pw, ph):
            return min(pw, shape * ph) if pw > 0 and ph > 0 else 0.0
        best = score(w - ax, h - ay - legend.height_for(w - 16))
        for cand in (190.0, 220.0, 250.0, 280.0, 310.0):
            if cand > 0.42 * w or legend.height_for(cand) > h - 12:
                continue
            sc = score(w - ax - cand, h - ay)
            if sc > 1.05 * best:
                best, side, side_w = sc, True, cand
    ci = canvas.ci
    if side != side_now:
        ci.removeItem(legend)
        if side:
            ci.addItem(legend, row=0, col=1)
            ci.layout.setAlignment(legend, QtCore.Qt.AlignTop)
            ci.layout.setColumnStretchFactor(0, 10)
            ci.layout.setColumnStretchFactor(1, 0)
            ci.layout.setHorizontalSpacing(14)
        else:
            ci.addItem(legend, row=1, col=0)
    legend.set_fixed_width(side_w if side else None)
    return side
