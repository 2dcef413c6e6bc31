"""Shared look of the desktop program: palette, fonts and pens.

One place for colours so the canvas, the forms and the result plots agree.
Ink and status colours are chosen for contrast on white (WCAG AA, 4.5:1 or
better for text colours); the series colours are the Okabe-Ito set (Okabe &
Ito, "Color Universal Design", 2008), which stays distinguishable for the
common forms of colour-vision deficiency.  Where two series could still be
confused, callers also vary the dash pattern (``series_pen(i)`` does so).

Sizes are in points or device-independent pixels so that Qt's high-DPI
scaling keeps everything readable from 1366x768 up to 4K.
"""
from __future__ import annotations

from PySide6 import QtCore, QtGui, QtWidgets

# --- palette -------------------------------------------------------------
# neutral ink on white paper
BACKGROUND = "#ffffff"
PANEL = "#f4f6f8"          # window / side panels
INK = "#1c2430"            # text, axes (contrast ~15:1 on white)
INK_MUTED = "#56606e"      # secondary text, labels (~6.4:1)
GRID = "#e2e6eb"           # plot grid, table rules
FRAME = "#c3cad3"          # widget borders

# the program's accent: a deep steel blue for selection and emphasis
ACCENT = "#1f5f99"         # (~6.7:1)
ACCENT_LIGHT = "#d6e4f2"   # selection fill
ACCENT_HOVER = "#eaf1f8"

# status colours (text-safe on white) and their pale fills for bands/cells
PASS = "#1b7340"           # (~5.9:1)
PASS_FILL = "#dcefe3"
FAIL = "#b3261e"           # (~6.5:1)
FAIL_FILL = "#f7dcda"
WARN = "#8a5a00"           # (~5.9:1) amber text
WARN_FILL = "#fbeccc"

# plot roles
NATURAL_FREQUENCY = "#1c2430"      # horizontal lines of the natural frequencies
MARGIN_BAND = (31, 95, 153, 34)    # RGBA fill of a mode's margin band (accent, faint)
TOLERANCE_BAND = (31, 95, 153, 110)  # RGBA fill of a mode's tolerance band (same hue, denser)
OPERATING_BAND = (27, 115, 64, 30)  # RGBA fill of the operating speed range
TRIP_LINE = "#56606e"              # trip / overspeed: dashed, not screened
CURSOR = "#b3261e"                 # speed cursor
COINCIDENCE_FAIL = FAIL
COINCIDENCE_PASS = "#8a5a00"       # inside the plot window but clear of the margin
COINCIDENCE_WEAK = "#6f4e9c"       # inside the margin but weakly excited (listed, not a failure)
PERMISSIBLE = "#b3261e"            # permissible torque / stress lines
RIGID_BODY = "#8c96a3"

# Okabe-Ito series colours, black left out (used for ink); ordered so the
# first few are the most distinct from each other and from the ink.
SERIES = (
    "#0072b2",  # blue
    "#d55e00",  # vermillion
    "#009e73",  # bluish green
    "#cc79a7",  # reddish purple
    "#e69f00",  # orange
    "#56b4e9",  # sky blue
    "#a08a00",  # yellow darkened for use on white (pure #f0e442 is too pale)
)
# dash patterns cycled after the colours run out, so series 8+ stay distinct
_DASHES = (QtCore.Qt.SolidLine, QtCore.Qt.DashLine, QtCore.Qt.DotLine, QtCore.Qt.DashDotLine)


def series_color(i: int) -> str:
    """Colour of data series number ``i`` (0-based), cycling."""
    return SERIES[i % len(SERIES)]


def qcolor(spec, alpha: int | None = None) -> QtGui.QColor:
    """QColor from a hex string or an (r, g, b[, a]) tuple."""
    c = QtGui.QColor(*spec) if isinstance(spec, tuple) else QtGui.QColor(spec)
    if alpha is not None:
        c.setAlpha(alpha)
    return c


# --- pens and brushes (pyqtgraph) ----------------------------------------
# Widths are cosmetic (device-independent pixels); pyqtgraph's mkPen makes
# cosmetic pens, so a line keeps its weight whatever the zoom.
LINE_WIDTH = 1.6
THIN_WIDTH = 1.0
BOLD_WIDTH = 2.6


def pen(color=INK, width: float = LINE_WIDTH, style=QtCore.Qt.SolidLine):
    import pyqtgraph as pg
    return pg.mkPen(qcolor(color), width=width, style=style)


def brush(color):
    import pyqtgraph as pg
    return pg.mkBrush(qcolor(color))


def series_pen(i: int, width: float = LINE_WIDTH):
    """Pen for series ``i``: Okabe-Ito colour, dash pattern changes every full cycle."""
    style = _DASHES[(i // len(SERIES)) % len(_DASHES)]
    return pen(series_color(i), width, style)


def natural_frequency_pen(selected: bool = False):
    """Ink lines; the selected mode is marked by weight, not hue, so it is never
    mistaken for an excitation series."""
    return pen(NATURAL_FREQUENCY, BOLD_WIDTH + 0.8 if selected else LINE_WIDTH)


def trip_pen():
    return pen(TRIP_LINE, LINE_WIDTH, QtCore.Qt.DashLine)


def cursor_pen():
    return pen(CURSOR, LINE_WIDTH)


def permissible_pen():
    return pen(PERMISSIBLE, LINE_WIDTH, QtCore.Qt.DashLine)


# --- fonts ---------------------------------------------------------------
BASE_POINT_SIZE = 10   # body text; Qt scales points with the screen's DPI
SMALL_POINT_SIZE = 9   # plot tick labels, secondary notes
TITLE_POINT_SIZE = 12  # section headings, verdict line


def font(point_size: float = BASE_POINT_SIZE, bold: bool = False) -> QtGui.QFont:
    f = QtGui.QFont()
    f.setPointSizeF(point_size)
    f.setBold(bold)
    return f


def mono_font(point_size: float = BASE_POINT_SIZE) -> QtGui.QFont:
    """Fixed-width font for numeric read-outs, so digits line up."""
    f = QtGui.QFontDatabase.systemFont(QtGui.QFontDatabase.FixedFont)
    f.setPointSizeF(point_size)
    return f


# --- whole-widget styling ------------------------------------------------
def style_plot(plot_item, x_label: str = "", y_label: str = "") -> None:
    """Common look of a pyqtgraph PlotItem: white paper, ink axes, light grid."""
    tick_font = font(SMALL_POINT_SIZE)
    for name in ("left", "bottom", "right", "top"):
        ax = plot_item.getAxis(name)
        ax.setPen(pen(INK_MUTED, THIN_WIDTH))
        ax.setTextPen(pen(INK))
        ax.setTickFont(tick_font)
        # major and minor ticks only: the third, faintest level's grid lines cost more to
        # paint than the rest of a mode plot and are barely visible
        ax.setStyle(maxTickLevel=1)
        # drawn from a pixmap while the axis is unchanged: painting its recorded ticks, labels and
        # grid lines anew costs about 1 ms per axis and frame, and a live edit repaints the plot
        # under the grid (an axis is redrawn, and its pixmap made again, when its range changes)
        ax.setCacheMode(QtWidgets.QGraphicsItem.DeviceCoordinateCache)
    plot_item.showGrid(x=True, y=True, alpha=0.25)
    label_style = {"color": INK, "font-size": f"{BASE_POINT_SIZE}pt"}
    if x_label:
        plot_item.setLabel("bottom", x_label, **label_style)
    if y_label:
        plot_item.setLabel("left", y_label, **label_style)


def configure_pyqtgraph() -> None:
    """Global pyqtgraph options: white background, dark foreground, antialiasing."""
    import pyqtgraph as pg
    pg.setConfigOptions(background=BACKGROUND, foreground=INK, antialias=True)


CAUTION_STYLE = (f"background: {WARN_FILL}; color: {WARN}; border: 1px solid #e3c27a;"
                 " padding: 4px 8px; border-radius: 3px;")


def verdict_style(passed: bool | None) -> str:
    """Style sheet for a verdict label: green pass, red fail, grey when there is no verdict."""
    if passed is None:
        fg, bg = INK_MUTED, PANEL
    elif passed:
        fg, bg = PASS, PASS_FILL
    else:
        fg, bg = FAIL, FAIL_FILL
    # the border keeps the same box as STALE_STYLE's, so a verdict going stale moves nothing
    return (f"color: {fg}; background: {bg}; padding: 3px 8px; border-radius: 3px; font-weight: bold; "
            f"border: 1px solid {bg};")


#: a verdict that belongs to an older model (the model on screen has an error): greyed
STALE_STYLE = (f"color: {INK_MUTED}; background: {PANEL}; padding: 3px 8px; border-radius: 3px; "
               f"font-weight: bold; border: 1px dashed {INK_MUTED}; font-style: italic;")


def application_palette() -> QtGui.QPalette:
    """Light palette for the whole application (so a dark desktop theme does not
    turn the tables black while the plots stay white)."""
    p = QtGui.QPalette()
    role = QtGui.QPalette.ColorRole
    p.setColor(role.Window, qcolor(PANEL))
    p.setColor(role.WindowText, qcolor(INK))
    p.setColor(role.Base, qcolor(BACKGROUND))
    p.setColor(role.AlternateBase, qcolor("#f7f9fb"))
    p.setColor(role.Text, qcolor(INK))
    p.setColor(role.Button, qcolor("#eef1f4"))
    p.setColor(role.ButtonText, qcolor(INK))
    p.setColor(role.Highlight, qcolor(ACCENT))
    p.setColor(role.HighlightedText, qcolor(BACKGROUND))
    p.setColor(role.ToolTipBase, qcolor("#fffef5"))
    p.setColor(role.ToolTipText, qcolor(INK))
    p.setColor(role.PlaceholderText, qcolor(INK_MUTED))
    p.setColor(role.Link, qcolor(ACCENT))
    # a field that does not apply (the crank radius where the stroke is given) looks it
    disabled = QtGui.QPalette.ColorGroup.Disabled
    for r, colour in ((role.Base, PANEL), (role.Text, INK_MUTED), (role.WindowText, INK_MUTED),
                      (role.ButtonText, INK_MUTED)):
        p.setColor(disabled, r, qcolor(colour))
    return p
