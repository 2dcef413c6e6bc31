"""Vector plots of the review sheet (reportlab.graphics): interference
(Campbell) diagram, mode shapes, vibratory torque against speed.

Every plot is a :class:`~reportlab.graphics.shapes.Drawing`, so the PDF keeps
lines and text as vectors (sharp at any zoom, text searchable).  Axes and their
tick values come from reportlab's own value axes.
"""
from __future__ import annotations

import math

import numpy as np
from reportlab.graphics.charts.axes import XValueAxis, YValueAxis
from reportlab.graphics.shapes import Circle, Drawing, Line, PolyLine, Rect, String
from reportlab.lib import colors

from .. import formatting as fmt
from .styles import BOLD, FAIL_INK, FONT, GREY, INK, PALETTE, RULE

BAND_FILL = colors.Color(0.55, 0.55, 0.55, alpha=0.18)
TOLERANCE_FILL = colors.Color(0.12, 0.37, 0.6, alpha=0.35)  # a mode's tolerance band, denser
RANGE_FILL = colors.Color(0.25, 0.5, 0.85, alpha=0.14)
RANGE_EDGE = colors.Color(0.25, 0.5, 0.85, alpha=0.9)


def text_width(text: str, size: float, font: str = FONT) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth
    return stringWidth(text, font, size)


def fit_text(text: str, width: float, size: float, font: str = FONT) -> str:
    """``text`` shortened with an ellipsis so that it fits ``width`` points."""
    # no glyph is narrower than a quarter of the size: longer text cannot fit (and a hostile
    # 100 000-character name must not cost a measure per character dropped)
    text = text[:int(max(width, 0.0) / (0.25 * size)) + 2]
    if text_width(text, size, font) <= width:
        return text
    lo, hi = 0, len(text)  # the longest prefix that fits with the ellipsis, by bisection
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if text_width(text[:mid] + "…", size, font) <= width:
            lo = mid
        else:
            hi = mid - 1
    return text[:lo] + "…"


def drawing(width: float, height: float) -> Drawing:
    """A drawing whose initial font is the embedded one (the default would name Helvetica)."""
    return Drawing(width, height, initialFontName=FONT, initialFontSize=7)


class Plot:
    """A plot box inside a drawing, with value axes that map data to points."""

    def __init__(self, drawing: Drawing, x0, y0, w, h, x_range, y_range, x_title="", y_title="",
                 x_labels=True, grid=True, font_size=7.0):
        self.d, self.x0, self.y0, self.w, self.h = drawing, x0, y0, w, h
        self.xa = XValueAxis()
        self.ya = YValueAxis()
        for ax, (lo, hi) in ((self.xa, x_range), (self.ya, y_range)):
            ax.valueMin, ax.valueMax = lo, hi
            ax.labels.fontName, ax.labels.fontSize = FONT, font_size
            ax.strokeColor, ax.strokeWidth = INK, 0.6
            ax.labels.fillColor = INK
            ax.rangeRound = "none"
            if grid:
                ax.visibleGrid = True
                ax.gridStrokeColor, ax.gridStrokeWidth = colors.HexColor("#dddddd"), 0.35
        self.xa.setPosition(x0, y0, w)
        self.ya.setPosition(x0, y0, h)
        self.xa.configure([(x_range[0], y_range[0]), (x_range[1], y_range[1])])
        self.ya.configure([(x_range[0], y_range[0]), (x_range[1], y_range[1])])
        self.xa.gridStart, self.xa.gridEnd = y0, y0 + h
        self.ya.gridStart, self.ya.gridEnd = x0, x0 + w
        self.xa.tickDown = 2.5
        self.ya.tickLeft = 2.5
        self.xa.visibleLabels = x_labels
        self.x_range, self.y_range = x_range, y_range
        self.font_size = font_size
        self._titles = (x_title, y_title)

    def sx(self, v):
        return self.xa.scale(v)

    def sy(self, v):
        return self.ya.scale(v)

    def draw_axes(self):
        """Grid and axes; call after the filled areas so the grid stays readable."""
        self.d.add(self.xa)
        self.d.add(self.ya)
        self.d.add(Rect(self.x0, self.y0, self.w, self.h, strokeColor=INK, strokeWidth=0.6,
                        fillColor=None))
        x_title, y_title = self._titles
        fs = self.font_size
        if x_title:
            self.d.add(String(self.x0 + self.w / 2, self.y0 - 2.6 * fs - 2, x_title, fontName=FONT,
                              fontSize=fs, textAnchor="middle", fillColor=INK))
        if y_title:
            s = String(0, 0, y_title, fontName=FONT, fontSize=fs, textAnchor="middle", fillColor=INK)
            from reportlab.graphics.shapes import Group
            g = Group(s)
            g.translate(self.x0 - 4.2 * fs - 2, self.y0 + self.h / 2)
            g.rotate(90)
            self.d.add(g)

    def hband(self, lo, hi, fill):
        lo, hi = max(lo, self.y_range[0]), min(hi, self.y_range[1])
        if hi > lo:
            self.d.add(Rect(self.x0, self.sy(lo), self.w, self.sy(hi) - self.sy(lo), fillColor=fill,
                            strokeColor=None, strokeWidth=0))

    def vband(self, lo, hi, fill, edge=None):
        lo, hi = max(lo, self.x_range[0]), min(hi, self.x_range[1])
        if hi < lo:
            return
        x_lo, x_hi = self.sx(lo), self.sx(hi)
        if x_hi - x_lo < 1.6:  # a single speed: one clear line
            mid = 0.5 * (x_lo + x_hi)
            self.d.add(Line(mid, self.y0, mid, self.y0 + self.h, strokeColor=edge or RANGE_EDGE, strokeWidth=1.4))
            return
        self.d.add(Rect(x_lo, self.y0, x_hi - x_lo, self.h, fillColor=fill, strokeColor=None,
                        strokeWidth=0))
        if edge is not None:
            for x in (x_lo, x_hi):
                self.d.add(Line(x, self.y0, x, self.y0 + self.h, strokeColor=edge, strokeWidth=0.5))

    def hline(self, y, color, width=0.8, dash=None):
        if self.y_range[0] <= y <= self.y_range[1]:
            self.d.add(Line(self.x0, self.sy(y), self.x0 + self.w, self.sy(y), strokeColor=color,
                            strokeWidth=width, strokeDashArray=dash))

    def polyline(self, xs, ys, color, width=0.9, dash=None):
        pts = []
        for x, y in zip(xs, ys):
            if math.isfinite(x) and math.isfinite(y):
                pts += [self.sx(x), self.sy(min(max(y, self.y_range[0]), self.y_range[1]))]
        if len(pts) >= 4:
            self.d.add(PolyLine(pts, strokeColor=color, strokeWidth=width, strokeDashArray=dash,
                                strokeLineJoin=1))

    def text(self, x, y, s, size=None, color=INK, anchor="start", font=FONT):
        self.d.add(String(x, y, s, fontName=font, fontSize=size or self.font_size, fillColor=color,
                          textAnchor=anchor))


# ----------------------------------------------------------------- Campbell
def merged_intervals(intervals):
    """Union of (lo, hi) intervals as a sorted list of disjoint intervals."""
    out = []
    for lo, hi in sorted(intervals):
        if out and lo <= out[-1][1]:
            out[-1] = (out[-1][0], max(out[-1][1], hi))
        else:
            out.append((lo, hi))
    return out


def excitation_groups(lines, operating) -> dict:
    """Line source -> the excitation it comes from: an electric drive's lines
    ('Inverter: |6 f_supply − 6 f_out|') belong to their drive ('Inverter'), so that one
    excitation keeps one colour however many lines it gives."""
    group = {}
    for e in (operating.excitations if operating is not None else ()):
        group[e.name] = e.name
        for fl in getattr(e, "lines", ()):
            group[f"{e.name}: {fl.name}"] = e.name
    return {l.source: group.get(l.source, l.source) for l in lines}


def source_colours(lines, operating=None) -> dict:
    """A colour per line source, shared by the sources of one excitation."""
    group = excitation_groups(lines, operating)
    names = []
    for l in lines:
        g = group[l.source]
        if g not in names:
            names.append(g)
    colour = {n: PALETTE[i % len(PALETTE)] for i, n in enumerate(names)}
    return {src: colour[g] for src, g in group.items()}


#: dash pattern of an excitation line that does not pass through the origin (f = |a + b N|)
OFFSET_DASH = (5, 1.5, 1, 1.5)


def line_segments(line, x_max_rpm: float, y_max_hz: float) -> list[tuple[float, float, float, float]]:
    """The parts of an excitation line f(N) inside [0, x_max] x [0, y_max] as straight
    segments (x0, y0, x1, y1) in rpm and Hz.  f = |a + s N| is linear on each side of its
    vertex, so each side is cut exactly where it meets the top of the chart."""
    rad = fmt.TWO_PI / 60.0  # rad/s per rpm
    knots = [0.0, x_max_rpm]
    if line.kind == "line" and line.slope != 0:
        v = -line.offset_hz / (line.slope * rad)  # |a + s N| = 0
        if 0.0 < v < x_max_rpm:
            knots.insert(1, v)
    out = []
    for xa, xb in zip(knots, knots[1:]):
        ya, yb = (float(line.frequency(x * rad)) for x in (xa, xb))
        if ya > y_max_hz and yb > y_max_hz:
            continue
        if ya > y_max_hz:
            xa, ya = xa + (xb - xa) * (ya - y_max_hz) / (ya - yb), y_max_hz
        elif yb > y_max_hz:
            xb, yb = xa + (xb - xa) * (y_max_hz - ya) / (yb - ya), y_max_hz
        out.append((xa, ya, xb, yb))
    return out


# ----------------------------------------------------------------- speed bands and barred ranges
BAND_COLOURS = {"transient": colors.HexColor("#b9b9b9"), "operating": colors.HexColor("#4f7fc9"),
                "overspeed": colors.HexColor("#e0922f")}
BARRED_FILL = colors.Color(0.75, 0.1, 0.1, alpha=0.16)
BARRED_EDGE = colors.Color(0.63, 0.11, 0.11, alpha=0.9)
HAMMER_FILL = colors.Color(0.35, 0.35, 0.35, alpha=0.16)
OFF_SCALE = 4.0  # a permissible value more than this many times the peak is named, not drawn
STRIP_H = 4.0  # points: the speed-band strip along the foot of a chart


def band_strip(p: "Plot", bands) -> None:
    """The speed bands (core.bands) as a coloured strip along the foot of the plot."""
    for b in bands:
        lo, hi = fmt.rad_s_to_rpm(b.low), fmt.rad_s_to_rpm(b.high)
        lo, hi = max(lo, p.x_range[0]), min(hi, p.x_range[1])
        if hi < lo:
            continue
        x0, x1 = p.sx(lo), p.sx(hi)
        if x1 - x0 < 1.2:  # a fixed speed: a short bar of its own
            x0, x1 = 0.5 * (x0 + x1) - 0.8, 0.5 * (x0 + x1) + 0.8
        p.d.add(Rect(x0, p.y0 + 0.4, x1 - x0, STRIP_H, fillColor=BAND_COLOURS.get(b.name, GREY),
                     strokeColor=None, strokeWidth=0))


def barred_bands(p: "Plot", ranges) -> None:
    """Barred speed ranges (rpm of the reference shaft) as red bands across the plot."""
    for r in ranges:
        p.vband(r.low_rpm, r.high_rpm, BARRED_FILL, BARRED_EDGE)


def bands_text(bands) -> str:
    """'start-up / run-down 0–900 rpm (grey), ...' for a legend."""
    from .. import wording
    names = {"transient": "grey", "operating": "blue", "overspeed": "orange"}
    parts = []
    for b in bands:
        rng = (f"{fmt.rpm(b.low)} rpm" if b.low == b.high else f"{fmt.rpm(b.low)}–{fmt.rpm(b.high)} rpm")
        parts.append(f"{wording.speed_band(b.name)} {rng} ({names.get(b.name, 'grey')})")
    return "speed bands along the foot: " + ", ".join(parts)


# ----------------------------------------------------------------- mode shapes
def envelope(x: np.ndarray, y: np.ndarray, per_point: float = 2.0):
    """A polyline thinned to what print can show: where more than ``per_point``
    vertices share one point of width, the lowest and highest of them stand for
    all (a vertical stroke, the same ink), so a 20 000-disc shape costs what a
    few hundred do."""
    if len(x) <= 2 * per_point * max(float(x[-1] - x[0]), 1.0):
        return x, y
    bins = np.floor((x - x[0]) * per_point).astype(np.int64)
    starts = np.flatnonzero(np.r_[True, bins[1:] != bins[:-1]])
    lo = np.minimum.reduceat(y, starts)
    hi = np.maximum.reduceat(y, starts)
    xb = x[starts]
    return np.repeat(xb, 2), np.column_stack([lo, hi]).ravel()


def mode_shape_drawing(modes, i: int, placement, width: float, height: float, links,
                       label_discs: bool = True, name_of=None, max_label: float = 58.0) -> Drawing:
    """Normalised twist angle of every disc against its schematic column.

    Each link is drawn between its two discs, so a branch (own row in the
    schematic, own colour here) shows as its own line; an unbranched train is
    one polyline.  With few columns, the main line's disc names stand under
    the axis, turned upright so that neighbours never collide, in the room
    their longest name needs (cut at ``max_label`` points) so none is clipped.
    """
    name_of = name_of or (lambda x: x)
    d = drawing(width, height)
    ids = list(modes.disc_ids)
    shape = modes.shape[i]
    col = np.array([placement.column.get(x, 0) for x in ids], float)
    row = np.array([placement.row.get(x, 0) for x in ids])
    n_cols = max(placement.n_columns, 1)
    show_names = label_discs and n_cols <= 14
    names = {}
    if show_names:
        names = {x: fit_text(name_of(x), max_label, 4.8) for k, x in enumerate(ids) if row[k] == 0}
        bottom = 6 + max((text_width(t, 4.8) for t in names.values()), default=0.0)
    else:
        bottom = 8
    p = Plot(d, 22, bottom, width - 28, height - bottom - 24, (-0.5, n_cols - 0.5), (-1.15, 1.15),
             x_labels=False, grid=False, font_size=5.5)
    p.ya.valueStep = 1.0
    p.ya.labelTextFormat = lambda v: {1: "+1", 0: "0", -1: "-1"}.get(round(v), f"{v:g}")
    p.ya.configure([(-0.5, -1.15), (n_cols - 0.5, 1.15)])
    p.draw_axes()
    p.hline(0.0, RULE, 0.5)
    f = float(modes.frequency_hz[i])
    title = f"Mode {int(modes.number[i])}: {fmt.hz(f)} Hz ({fmt.cpm(f)} cpm)"
    d.add(String(p.x0, height - 9, fit_text(title, width - p.x0, 7, BOLD), fontName=BOLD, fontSize=7,
                 fillColor=INK))
    dom = modes.dominant_link(i)
    if dom:
        text = "largest strain energy: " + fmt.share(name_of(dom), float(modes.strain_share[i].max()), "\u00a0")
        d.add(String(p.x0, height - 17, fit_text(text, width - p.x0, 6),
                     fontName=FONT, fontSize=6, fillColor=GREY))
    index = {x: k for k, x in enumerate(ids)}
    xs = np.array([p.sx(c) for c in col])
    ys = np.array([p.sy(v) for v in shape])
    branched = bool(np.any(row != 0))
    chain = (not branched and len(ids) > 1 and
             all(index.get(l.from_id, -9) + 1 == index.get(l.to_id, -9) or l.grounded for l in links))
    if chain:  # one polyline along the discs in file order
        order = np.argsort(col, kind="stable")
        px, py = envelope(xs[order], ys[order])
        pts = np.column_stack([px, py]).ravel().tolist()
        d.add(PolyLine(pts, strokeColor=PALETTE[0], strokeWidth=0.9, strokeLineJoin=1))
    else:
        for l in links:
            if l.from_id in index and l.to_id in index:
                a, b = index[l.from_id], index[l.to_id]
                c = PALETTE[row[b] % len(PALETTE)]
                d.add(Line(xs[a], ys[a], xs[b], ys[b], strokeColor=c, strokeWidth=0.9))
    r = 1.6 if len(ids) <= 40 else 0.0
    if r:
        for k in range(len(ids)):
            c = PALETTE[row[k] % len(PALETTE)]
            d.add(Circle(xs[k], ys[k], r, fillColor=c, strokeColor=c, strokeWidth=0))
    if show_names:
        from reportlab.graphics.shapes import Group
        for k, x in enumerate(ids):
            if x not in names:
                continue
            g = Group(String(0, 0, names[x], fontName=FONT, fontSize=4.8, fillColor=GREY, textAnchor="end"))
            g.translate(xs[k] + 1.7, p.y0 - 2.5)
            g.rotate(90)
            d.add(g)
    return d


# ----------------------------------------------------------------- forced response
def response_drawing(speed_rpm, values, permissible, width: float, height: float, op_rpm, title: str,
                     y_title: str, x_title: str, colour=None, bands=(), barred=(), trip_rpm=None,
                     hammer=()) -> Drawing:
    """One link's vibratory amplitude against speed, its permissible value dashed, the
    operating range shaded, the speed bands along the foot (core.bands), barred speed
    ranges in red, gear-hammer ranges hatched grey and the trip speed dotted (one small
    plot per link, each on its own scale)."""
    colour = colour or PALETTE[0]
    left, right, bottom, top = 40, 8, 26, 14
    d = drawing(width, height)
    speed_rpm = np.asarray(speed_rpm, float)
    v = np.asarray(values, float)
    y_top = float(np.nanmax(v)) if np.isfinite(v).any() else 0.0
    # a permissible value far above the response would flatten the curve against the axis:
    # then it is named at the top instead of drawn
    off_scale = permissible is not None and y_top > 0 and permissible > OFF_SCALE * y_top
    if permissible is not None and not off_scale:
        y_top = max(y_top, permissible)
    y_top = y_top * 1.1 if y_top > 0 else 1.0
    p = Plot(d, left, bottom, width - left - right, height - bottom - top,
             (float(speed_rpm.min()), float(speed_rpm.max())), (0.0, y_top), x_title=x_title, y_title=y_title,
             font_size=6)
    p.vband(op_rpm[0], op_rpm[1], RANGE_FILL, None)
    barred_bands(p, barred)
    for r in hammer:
        p.vband(r.low_rpm, r.high_rpm, HAMMER_FILL, None)
    p.draw_axes()
    band_strip(p, bands)
    if trip_rpm is not None and p.x_range[0] <= trip_rpm <= p.x_range[1]:
        d.add(Line(p.sx(trip_rpm), p.y0, p.sx(trip_rpm), p.y0 + p.h, strokeColor=RANGE_EDGE, strokeWidth=0.7,
                   strokeDashArray=(1.5, 1.5)))
    p.polyline(speed_rpm, v, colour, 0.9)
    if off_scale:
        p.text(p.x0 + p.w - 2, p.y0 + p.h - 7, f"permissible {permissible:.4g}, above the scale", size=5.5,
               color=FAIL_INK, anchor="end")
    elif permissible is not None:
        p.hline(permissible, FAIL_INK, 0.8, dash=(3, 2))
        p.text(p.x0 + p.w - 2, p.sy(permissible) + 2, "permissible", size=5.5, color=FAIL_INK, anchor="end")
    d.add(String(left, height - 9, fit_text(title, width - left, 7), fontName=BOLD, fontSize=7, fillColor=INK))
    return d
