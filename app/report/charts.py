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
from .styles import BOLD, FAIL_INK, FONT, GREY, INK, PALETTE, PASS_INK, RULE

BAND_FILL = colors.Color(0.55, 0.55, 0.55, alpha=0.18)
RANGE_FILL = colors.Color(0.25, 0.5, 0.85, alpha=0.14)
RANGE_EDGE = colors.Color(0.25, 0.5, 0.85, alpha=0.9)


def text_width(text: str, size: float, font: str = FONT) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth
    return stringWidth(text, font, size)


def fit_text(text: str, width: float, size: float, font: str = FONT) -> str:
    """``text`` shortened with an ellipsis so that it fits ``width`` points."""
    if text_width(text, size, font) <= width:
        return text
    while text and text_width(text + "…", size, font) > width:
        text = text[:-1]
    return text + "…"


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


def _legend(d: Drawing, x0: float, y_top: float, width: float, items, size=6.5) -> float:
    """Items (kind, colour, text) laid out in columns below a plot; returns the y used down to."""
    col_w = width / 2 if width > 300 else width
    n_cols = max(1, int(width // col_w))
    row_h = size + 3.5
    for k, (kind, color, dash, text) in enumerate(items):
        c, r = k % n_cols, k // n_cols
        x, y = x0 + c * col_w, y_top - (r + 1) * row_h
        if kind == "line":
            d.add(Line(x, y + size * 0.35, x + 16, y + size * 0.35, strokeColor=color, strokeWidth=1.1,
                       strokeDashArray=dash))
        elif kind == "fill":
            d.add(Rect(x, y - 0.5, 16, size, fillColor=color, strokeColor=None, strokeWidth=0))
        elif kind == "dot_fill":
            d.add(Circle(x + 8, y + size * 0.35, 2.6, fillColor=color, strokeColor=color, strokeWidth=0.8))
        elif kind == "dot_open":
            d.add(Circle(x + 8, y + size * 0.35, 2.6, fillColor=colors.white, strokeColor=color,
                         strokeWidth=0.9))
        d.add(String(x + 21, y, fit_text(text, col_w - 26, size), fontName=FONT, fontSize=size,
                     fillColor=INK))
    rows = math.ceil(len(items) / n_cols)
    return y_top - rows * row_h


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


def source_colours(lines) -> dict:
    names = []
    for l in lines:
        if l.source not in names:
            names.append(l.source)
    return {n: PALETTE[i % len(PALETTE)] for i, n in enumerate(names)}


def campbell_drawing(screening, width: float, plot_height: float = 300.0,
                     y_max_hz: float | None = None, title: str | None = None,
                     with_legend: bool = True) -> Drawing:
    """Interference diagram: reference rpm on x, Hz on y.

    Natural frequencies as horizontal lines with their margin band (the
    excitation frequencies f_e that fall within the required separation m of
    f_n: f_n / (1 + m) < f_e < f_n / (1 - m)); excitation orders as rays from
    the origin, fixed frequencies dashed; operating range shaded; coincidences
    inside twice the margin marked at their crossing speed.
    """
    s = screening
    op = s.train.operating
    lines = s.lines
    m = s.margin
    rpm_top = fmt.rad_s_to_rpm(max(s.speed_max, op.trip_speed or 0.0))
    x_max = rpm_top * 1.12
    modes = s.modes
    nat = [(int(modes.number[i]), float(modes.frequency_hz[i])) for i in range(len(modes))
           if modes.elastic[i] and modes.frequency_hz[i] <= s.cap_hz]
    if y_max_hz is None:
        y_max_hz = s.cap_hz if s.cap_hz > 0 else (max((f for _, f in nat), default=1.0) * 1.2)
    colour = source_colours(lines)
    # legend first, to know the drawing's height
    legend = []
    for name, c in colour.items():
        kinds = [l for l in lines if l.source == name]
        dash = (3, 2) if kinds and kinds[0].order is None else None
        legend.append(("line", c, dash, name))
    legend += [("line", GREY, None, "natural frequency (mode number at left)"),
               ("fill", BAND_FILL, None, f"separation margin band (±{fmt.percent(m)}\u00a0%)"),
               ("line", RANGE_EDGE, None, op.range_name) if s.speed_min == s.speed_max
               else ("fill", RANGE_FILL, None, op.range_name),
               ("dot_fill", FAIL_INK, None, "coincidence inside the margin (fail)"),
               ("dot_open", PASS_INK, None, "crossing outside the range, margin met (pass)")]
    if op.trip_speed:
        legend.append(("line", RANGE_EDGE, (1.5, 1.5), "trip speed"))
    n_cols = 2 if width > 300 else 1
    if not with_legend:
        legend = []
    legend_h = math.ceil(len(legend) / n_cols) * 10.0 + 4
    top_pad, left, right, bottom = (14 if title else 4) + 12, 44, 30, 30
    height = top_pad + plot_height + bottom + legend_h
    d = drawing(width, height)
    p = Plot(d, left, bottom + legend_h, width - left - right, plot_height, (0.0, x_max), (0.0, y_max_hz),
             x_title=f"speed of the reference shaft '{op.reference}' (rpm)", y_title="frequency (Hz)")
    if title:
        d.add(String(left, height - 11, title, fontName=BOLD, fontSize=8, fillColor=INK))
    # filled areas under the grid
    p.vband(fmt.rad_s_to_rpm(s.speed_min), fmt.rad_s_to_rpm(s.speed_max), RANGE_FILL, RANGE_EDGE)
    for lo, hi in merged_intervals([(f / (1 + m), f / (1 - m) if m < 1 else y_max_hz) for _, f in nat]):
        p.hband(lo, hi, BAND_FILL)  # merged, so that overlapping bands do not darken each other
    p.draw_axes()
    if op.trip_speed:
        xt = fmt.rad_s_to_rpm(op.trip_speed)
        d.add(Line(p.sx(xt), p.y0, p.sx(xt), p.y0 + p.h, strokeColor=RANGE_EDGE, strokeWidth=0.7,
                   strokeDashArray=(1.5, 1.5)))
        p.text(p.sx(xt), p.y0 + p.h + 2, "trip", size=6, color=RANGE_EDGE, anchor="middle")
    # natural frequencies, labelled at the left inside edge when there is room
    last_label_y = -1e9
    for num, f in nat:
        p.hline(f, GREY, 0.7)
        y = p.sy(f)
        if y - last_label_y >= 7.5 and y + 6 < p.y0 + p.h:
            p.text(p.x0 + 2, y + 1.2, f"{num}", size=6, color=INK)
            last_label_y = y
    # excitation lines and their labels outside the box (top or right edge)
    taken: list[tuple[str, float]] = []
    for line in lines:
        c = colour[line.source]
        if line.order is None:
            p.hline(line.fixed_hz, c, 0.9, dash=(3, 2))
            if line.fixed_hz <= y_max_hz:
                p.text(p.x0 + p.w - 2, p.sy(line.fixed_hz) + 1.5, f"{line.fixed_hz:g} Hz", size=5.5,
                       color=c, anchor="end")
            continue
        slope_rpm = line.slope * fmt.TWO_PI / 60.0  # Hz per rpm
        x_end = min(x_max, y_max_hz / slope_rpm)
        y_end = slope_rpm * x_end
        d.add(Line(p.sx(0), p.sy(0), p.sx(x_end), p.sy(y_end), strokeColor=c, strokeWidth=0.8))
        label = f"{fmt.order(line.order)}×"
        if x_end < x_max * 0.999:  # leaves through the top
            edge, pos = "top", p.sx(x_end)
        else:
            edge, pos = "right", p.sy(y_end)
        # shift along the edge until clear of earlier labels
        gap = 9.0 if edge == "right" else text_width(label, 6) + 3
        for e, q in sorted(taken, key=lambda t: t[1]):
            if e == edge and abs(q - pos) < gap:
                pos = q + gap
        taken.append((edge, pos))
        if edge == "top":
            p.text(pos, p.y0 + p.h + 3, label, size=6, color=c, anchor="middle")
        else:
            p.text(p.x0 + p.w + 3, pos - 2, label, size=6, color=c)
    # coincidences at their crossing speed
    for cn in s.coincidences:
        if cn.crossing_speed is None:
            continue
        x = fmt.rad_s_to_rpm(cn.crossing_speed)
        if not (0 <= x <= x_max and cn.frequency_hz <= y_max_hz):
            continue
        col = PASS_INK if cn.passed else FAIL_INK
        d.add(Circle(p.sx(x), p.sy(cn.frequency_hz), 2.6, strokeColor=col, strokeWidth=0.9,
                     fillColor=colors.white if cn.passed else col))
    _legend(d, left, legend_h, width - left - right + 20, legend)
    return d


# ----------------------------------------------------------------- mode shapes
def mode_shape_drawing(modes, i: int, placement, width: float, height: float, links,
                       label_discs: bool = True) -> Drawing:
    """Normalised twist angle of every disc against its schematic column.

    Each link is drawn as a segment between its two discs, so a branch
    (own row in the schematic, own colour here) shows as its own line.
    """
    d = drawing(width, height)
    ids = list(modes.disc_ids)
    shape = modes.shape[i]
    col = np.array([placement.column.get(x, 0) for x in ids], float)
    row = np.array([placement.row.get(x, 0) for x in ids])
    n_cols = max(placement.n_columns, 1)
    bottom = 30 if label_discs and n_cols <= 14 else 12
    p = Plot(d, 22, bottom, width - 28, height - bottom - 24, (-0.5, n_cols - 0.5), (-1.15, 1.15),
             x_labels=False, grid=False, font_size=5.5)
    p.ya.valueStep = 1.0
    p.ya.labelTextFormat = lambda v: {1: "+1", 0: "0", -1: "-1"}.get(round(v), f"{v:g}")
    p.ya.configure([(-0.5, -1.15), (n_cols - 0.5, 1.15)])
    p.draw_axes()
    p.hline(0.0, RULE, 0.5)
    f = float(modes.frequency_hz[i])
    title = f"Mode {int(modes.number[i])}: {fmt.hz(f)} Hz ({fmt.cpm(f)} cpm)"
    d.add(String(p.x0, height - 9, title, fontName=BOLD, fontSize=7, fillColor=INK))
    dom = modes.dominant_link(i)
    if dom:
        text = "largest strain energy: " + fmt.share(dom, float(modes.strain_share[i].max()), "\u00a0")
        d.add(String(p.x0, height - 17, fit_text(text, p.w, 6),
                     fontName=FONT, fontSize=6, fillColor=GREY))
    index = {x: k for k, x in enumerate(ids)}
    for l in links:
        if l.from_id in index and l.to_id in index:
            a, b = index[l.from_id], index[l.to_id]
            c = PALETTE[row[b] % len(PALETTE)]
            p.d.add(Line(p.sx(col[a]), p.sy(shape[a]), p.sx(col[b]), p.sy(shape[b]), strokeColor=c,
                         strokeWidth=0.9))
    r = 1.6 if len(ids) <= 40 else 0.0
    if r:
        for k in range(len(ids)):
            c = PALETTE[row[k] % len(PALETTE)]
            d.add(Circle(p.sx(col[k]), p.sy(shape[k]), r, fillColor=c, strokeColor=c, strokeWidth=0))
    if label_discs and n_cols <= 14:
        # main-line disc ids under the axis, rotated so that they never collide
        from reportlab.graphics.shapes import Group
        for k, x in enumerate(ids):
            if row[k] != 0:
                continue
            g = Group(String(0, 0, fit_text(x, bottom * 1.1, 4.8), fontName=FONT, fontSize=4.8,
                             fillColor=GREY, textAnchor="end"))
            g.translate(p.sx(col[k]) + 1.7, p.y0 - 2)
            g.rotate(60)
            d.add(g)
    return d


# ----------------------------------------------------------------- forced response
def response_drawing(speed_rpm, values, permissible, width: float, height: float, op_rpm, title: str,
                     y_title: str, x_title: str, colour=None) -> Drawing:
    """One link's vibratory amplitude against speed, its permissible value dashed
    and the operating range shaded (one small plot per link, each on its own scale)."""
    colour = colour or PALETTE[0]
    left, right, bottom, top = 40, 8, 26, 14
    d = drawing(width, height)
    speed_rpm = np.asarray(speed_rpm, float)
    v = np.asarray(values, float)
    y_top = float(np.nanmax(v)) if np.isfinite(v).any() else 0.0
    if permissible is not None:
        y_top = max(y_top, permissible)
    y_top = y_top * 1.1 if y_top > 0 else 1.0
    p = Plot(d, left, bottom, width - left - right, height - bottom - top,
             (float(speed_rpm.min()), float(speed_rpm.max())), (0.0, y_top), x_title=x_title, y_title=y_title,
             font_size=6)
    p.vband(op_rpm[0], op_rpm[1], RANGE_FILL, None)
    p.draw_axes()
    p.polyline(speed_rpm, v, colour, 0.9)
    if permissible is not None:
        p.hline(permissible, FAIL_INK, 0.8, dash=(3, 2))
        p.text(p.x0 + p.w - 2, p.sy(permissible) + 2, "permissible", size=5.5, color=FAIL_INK, anchor="end")
    d.add(String(left, height - 9, fit_text(title, width - left, 7), fontName=BOLD, fontSize=7, fillColor=INK))
    return d
