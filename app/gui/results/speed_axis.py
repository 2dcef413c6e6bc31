"""What every speed axis shows: the speed bands, the barred speed ranges and the
speed ranges where gear teeth hammer (issue 12 items 1, 5, 7 and 9).

:func:`speed_marks` lists them from the study (Qt-free: core's speed bands
(:func:`core.bands.speed_bands`) and the acceptance's ranges, nothing computed
here); :func:`draw_marks` puts them on a plot whose x axis is the reference speed
in rpm, and :func:`legend_sample` makes a key entry's sample.  The interference
diagram and the forced-response plot draw the same marks in the same way:

* the operating range: a green band over the whole height;
* start-up / run-down (below the range) and overspeed up to trip (above it): a
  strip along the foot of the plot, grey and amber; the overspeed span also lightly
  shaded, with the trip speed dashed where it ends;
* a barred speed range: hatched red over the whole height (amber where the rule
  permits passing through it quickly);
* gear teeth hammering (vibratory above mean torque at a mesh): a hatched violet
  strip above the band strip, one per speed range (load cases joined).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from app import formatting as fmt
from app import wording

RPM = 2.0 * math.pi / 60.0  # rad/s per rpm

# band and range looks (RGBA); theme.py holds the shared palette, these are the speed axis's own
STARTUP_STRIP = (86, 96, 110, 70)  # start-up / run-down: neutral grey
OPERATING_STRIP = (27, 115, 64, 120)  # the operating range's own green, stronger in the strip
OVERSPEED_STRIP = (200, 130, 0, 120)  # overspeed up to trip: amber
OVERSPEED_BAND = (200, 130, 0, 22)  # and faintly over the whole height
BARRED = (179, 38, 30, 150)  # hatch of a barred range (not permitted)
BARRED_PERMITTED = (138, 90, 0, 150)  # hatch of a barred range the rule lets the train pass quickly
HAMMER = (120, 60, 170, 170)  # violet hatch: gear teeth hammer
#: fractions of the plot's height taken by the strips along its foot
BAND_STRIP = (0.0, 0.022)
HAMMER_STRIP = (0.026, 0.056)


@dataclass(frozen=True)
class Mark:
    """One thing drawn on the speed axis.  ``kind``: 'operating' | 'startup' |
    'overspeed' | 'barred' | 'hammer'; speeds in rpm of the reference shaft."""

    kind: str
    low_rpm: float
    high_rpm: float
    tip: str
    key: str  # the key entry's text ('' for a mark that shares its kind's entry)
    permitted: bool | None = None


def _join(ranges):
    """Overlapping or touching (low, high, text) intervals joined, texts kept."""
    out = []
    for lo, hi, text in sorted(ranges):
        if out and lo <= out[-1][1] * (1 + 1e-9):
            plo, phi, texts = out[-1]
            out[-1] = (plo, max(phi, hi), texts + [text])
        else:
            out.append((lo, hi, [text]))
    return out


def speed_marks(train, acceptance=None) -> list[Mark]:
    """The marks of ``train``'s operating data and, when given, the acceptance's barred
    speed ranges and gear-hammer ranges, in drawing order.  Empty without operating data."""
    op = getattr(train, "operating", None)
    if op is None:
        return []
    from core.bands import OPERATING, OVERSPEED, TRANSIENT, speed_bands
    out = []
    lo, hi = fmt.rpm(op.speed_min), fmt.rpm(op.speed_max)
    for b in speed_bands(op):
        a, z = b.low / RPM, b.high / RPM
        if b.name == OPERATING:
            span = f"{lo}–{hi} rpm" if b.high > b.low else f"{hi} rpm"
            out.append(Mark("operating", a, z, f"{op.range_name}: {span} (continuous running)",
                            f"{op.range_name} ({span})"))
        elif b.name == TRANSIENT:
            out.append(Mark("startup", a, z, f"{wording.speed_band(TRANSIENT)}: below {lo} rpm, passed "
                            "through while starting and stopping (judged against the transient limits)",
                            f"{wording.speed_band(TRANSIENT)} (below {lo} rpm)"))
        elif b.name == OVERSPEED:
            trip = fmt.rpm(op.trip_speed)
            out.append(Mark("overspeed", a, z, f"{wording.speed_band(OVERSPEED)}: {hi}–{trip} rpm, reached only "
                            "until the overspeed trip acts; trip speed not screened",
                            f"{wording.speed_band(OVERSPEED)} {trip} rpm (not screened)"))
    if acceptance is None:
        return out
    name = train.name_of
    first = True
    for r in getattr(acceptance, "barred_ranges", ()) or ():
        where = name(r.link) + (f", {r.load_case}" if r.load_case else "")
        allowed = ("permitted to pass through quickly" if r.permitted else
                   "not permitted" if r.permitted is False else "")
        tip = (f"Barred speed range {fmt.rpm(r.low)}–{fmt.rpm(r.high)} rpm ({where})"
               + (f": {allowed}" if allowed else "") + (f". {r.note}" if r.note else ""))
        out.append(Mark("barred", r.low_rpm, r.high_rpm, tip,
                        "barred speed range (hatched)" if first else "", r.permitted))
        first = False
    hammer = [(r.low_rpm, r.high_rpm,
               f"{name(r.link)}" + (f" ({r.load_case})" if r.load_case else "")
               + f": {fmt.rpm(r.low)}–{fmt.rpm(r.high)} rpm")
              for r in getattr(acceptance, "hammer_ranges", ()) or ()]
    for k, (a, z, texts) in enumerate(_join(hammer)):
        tip = ("Gear teeth hammer — the vibratory torque exceeds the mean torque, the teeth separate:\n"
               + "\n".join(texts))
        out.append(Mark("hammer", a, z, tip, "gear teeth hammer (vibratory > mean torque)" if k == 0 else ""))
    return out


def draw_marks(plot, marks, add=None) -> list:
    """Draw ``marks`` on ``plot`` (x: rpm); ``add(item)`` adds an item (default
    ``plot.addItem(item, ignoreBounds=True)``).  Returns the items drawn."""
    import pyqtgraph as pg
    from PySide6 import QtCore

    from app.gui import theme
    items = []

    def put(item, z, tip):
        item.setZValue(z)
        item.setToolTip(tip)
        if add is None:
            plot.addItem(item, ignoreBounds=True)
        else:
            add(item)
        items.append(item)

    for m in marks:
        if m.kind == "operating":
            if m.high_rpm > m.low_rpm:
                band = pg.LinearRegionItem((m.low_rpm, m.high_rpm), movable=False,
                                           brush=theme.brush(theme.OPERATING_BAND),
                                           pen=theme.pen(theme.PASS, theme.THIN_WIDTH))
            else:  # a fixed-speed machine: a broad line at its speed
                band = pg.InfiniteLine(m.low_rpm, angle=90, pen=theme.pen(theme.OPERATING_BAND[:3] + (110,), 7.0))
            put(band, -20, m.tip)
            if m.high_rpm > m.low_rpm:
                put(_strip(m, OPERATING_STRIP, BAND_STRIP), -12, m.tip)
        elif m.kind == "startup":
            put(_strip(m, STARTUP_STRIP, BAND_STRIP), -12, m.tip)
        elif m.kind == "overspeed":
            put(pg.LinearRegionItem((m.low_rpm, m.high_rpm), movable=False, brush=theme.brush(OVERSPEED_BAND),
                                    pen=pg.mkPen(None)), -21, m.tip)
            put(_strip(m, OVERSPEED_STRIP, BAND_STRIP), -12, m.tip)
            put(pg.InfiniteLine(m.high_rpm, angle=90, pen=theme.trip_pen()), -15, m.tip)
        elif m.kind == "barred":
            color = BARRED if m.permitted is not True else BARRED_PERMITTED
            region = pg.LinearRegionItem((m.low_rpm, m.high_rpm), movable=False,
                                         brush=hatch(color), pen=theme.pen(color[:3], theme.THIN_WIDTH))
            put(region, -18, m.tip)
        elif m.kind == "hammer":
            region = pg.LinearRegionItem((m.low_rpm, max(m.high_rpm, m.low_rpm * (1 + 1e-6))), movable=False,
                                         brush=hatch(HAMMER), pen=theme.pen(HAMMER[:3], theme.THIN_WIDTH),
                                         span=HAMMER_STRIP)
            put(region, -11, m.tip)
    for it in items:  # only the tooltip reacts to the pointer
        it.setAcceptedMouseButtons(QtCore.Qt.NoButton)
    return items


def _strip(m: Mark, color, span):
    import pyqtgraph as pg

    from app.gui import theme
    return pg.LinearRegionItem((m.low_rpm, m.high_rpm), movable=False, brush=theme.brush(color),
                               pen=pg.mkPen(None), span=span)


def hatch(color):
    """A diagonally hatched brush of ``color`` (RGBA)."""
    from PySide6 import QtCore, QtGui

    from app.gui import theme
    return QtGui.QBrush(theme.qcolor(color), QtCore.Qt.BDiagPattern)


def legend_sample(kind: str):
    """A key sample for a mark of ``kind`` (a filled or hatched square)."""
    import pyqtgraph as pg

    from app.gui import theme
    if kind == "operating":
        return pg.BarGraphItem(x=[0], height=[0], width=1, brush=theme.brush(theme.OPERATING_BAND),
                               pen=theme.pen(theme.PASS))
    brush = {"startup": theme.brush(STARTUP_STRIP), "overspeed": theme.brush(OVERSPEED_STRIP),
             "barred": hatch(BARRED), "hammer": hatch(HAMMER)}[kind]
    pen = {"barred": theme.pen(BARRED[:3], theme.THIN_WIDTH),
           "hammer": theme.pen(HAMMER[:3], theme.THIN_WIDTH)}.get(kind, pg.mkPen(None))
    return pg.BarGraphItem(x=[0], height=[0], width=1, brush=brush, pen=pen)


KEY_ORDER = ("operating", "startup", "overspeed", "barred", "hammer")


def key_entries(marks) -> list[tuple[Mark, str]]:
    """(mark, text) of each key entry (one per kind that has one), the operating range first."""
    return sorted(((m, m.key) for m in marks if m.key), key=lambda e: KEY_ORDER.index(e[0].kind))


class SpeedMarksLayer:
    """The marks drawn on one plot, redrawn only when they change (a live edit usually keeps
    the operating data; new region items cost milliseconds each).  After the plot was cleared
    the same items are put back."""

    def __init__(self, plot):
        self.plot = plot
        self.marks = None
        self.items = []

    def show(self, marks) -> list:
        marks = list(marks)
        if marks == self.marks:
            for item in self.items:
                if item.scene() is None:  # taken off by a cleared plot
                    self.plot.addItem(item, ignoreBounds=True)
            return self.items
        self.clear()
        self.items = draw_marks(self.plot, marks)
        self.marks = marks
        return self.items

    def clear(self) -> None:
        for item in self.items:
            if item.scene() is not None:
                self.plot.removeItem(item)
        self.items = []
        self.marks = None
