"""The interference (Campbell) diagram of the review sheet.

Reference-shaft speed (rpm) across, frequency (Hz) up.  Natural frequencies
are horizontal lines with their separation margin band; excitation orders are
rays from the origin, fixed frequencies dashed lines; the operating range is
shaded; coincidences inside twice the margin are marked at their crossing.

Legibility rules (issue 9, item 6):

* the frequency range comes from what matters: the first panel runs up to
  just above the screening limit (the limit drawn and named); where that
  squeezes natural frequencies into the bottom of the plot, a detail panel
  follows whose range ends just above the highest squeezed mode, and so on
  (at most :data:`MAX_PANELS` panels), so every screened mode is shown clear
  of the axis in at least one panel;
* labels never overlap: mode numbers at the left inside edge, order labels
  where a line leaves the plot (top or right edge), each set spread along its
  edge by :func:`spread` with a leader line to its line, and merged ("3–5",
  "2×, 2.5×") only where there is no room for each on its own;
* legend entries wrap onto as many lines as they need: none is cut.

Electric-drive lines f = |a + b N| that do not pass through the origin are drawn
dash-dotted as the lines they are (a V where a = b N), labelled with their
formula where they leave the chart, and both crossings of a V with a natural
frequency are marked.  The speed bands the acceptance judges apart run as a
coloured strip along the foot, and barred speed ranges (merged across shafts and
load cases) stand as red bands.
"""
from __future__ import annotations

from dataclasses import dataclass

from reportlab.graphics.shapes import Circle, Drawing, Line, Rect, String
from reportlab.lib import colors

from core.bands import speed_bands

from .. import formatting as fmt

from .charts import (BAND_COLOURS, BAND_FILL, BARRED_EDGE, BARRED_FILL, OFFSET_DASH, RANGE_EDGE, RANGE_FILL,
                     TOLERANCE_FILL, Plot,
                     band_strip, bands_text, barred_bands, drawing, excitation_groups, fit_text, line_segments,
                     source_colours)
from .styles import BOLD, FAIL_INK, FONT, GREY, INK, PASS_INK, WEAK_INK
from .tables import text_width, wrap_text

MAX_PANELS = 3
SQUEEZED = 0.12  # a mode in the lowest 12 % of a panel is squeezed
LIMIT_INK = colors.HexColor("#444444")
ABOVE_INK = colors.HexColor("#999999")
LABEL_SIZE = 6.0


# ----------------------------------------------------------------- label placement
def spread(wanted: list[float], sizes: list[float], lo: float, hi: float) -> list[float] | None:
    """Centres as near ``wanted`` as possible, in the same order, that keep
    items of ``sizes`` from overlapping inside [lo, hi]; None when they cannot fit.

    ``wanted`` must be sorted.  Two sweeps: push up past each predecessor,
    then down below each successor and the upper bound (the classic 1-D
    label spreading; exact when the items fit).
    """
    n = len(wanted)
    if n == 0:
        return []
    if sum(sizes) > hi - lo + 1e-9:
        return None
    pos = [min(max(w, lo + s / 2), hi - s / 2) for w, s in zip(wanted, sizes)]
    for i in range(1, n):
        pos[i] = max(pos[i], pos[i - 1] + (sizes[i - 1] + sizes[i]) / 2)
    pos[-1] = min(pos[-1], hi - sizes[-1] / 2)
    for i in range(n - 2, -1, -1):
        pos[i] = min(pos[i], pos[i + 1] - (sizes[i] + sizes[i + 1]) / 2)
    pos[0] = max(pos[0], lo + sizes[0] / 2)
    for i in range(1, n):
        pos[i] = max(pos[i], pos[i - 1] + (sizes[i - 1] + sizes[i]) / 2)
    return pos


def place_labels(items: list[dict], lo: float, hi: float, size_of, merge_text) -> list[dict]:
    """Spread labelled items (dicts with 'at', 'text', 'colour', sorted by 'at')
    along an edge; merges neighbours (closest first) until all fit.

    Returns the items, each with 'pos' (label centre) added; merged items
    carry 'members' (the original 'at' values) for their leader lines.
    """
    items = [dict(it, members=[it["at"]]) for it in sorted(items, key=lambda it: it["at"])]
    while items:
        pos = spread([it["at"] for it in items], [size_of(it) for it in items], lo, hi)
        if pos is not None:
            for it, p in zip(items, pos):
                it["pos"] = p
            return items
        if len(items) == 1:  # one label wider than the edge: shorten it
            it = items[0]
            it["text"] = it["text"][: max(1, len(it["text"]) // 2)] + "…"
            continue
        gaps = [items[i + 1]["at"] - items[i]["at"] for i in range(len(items) - 1)]
        k = min(range(len(gaps)), key=gaps.__getitem__)
        a, b = items[k], items[k + 1]
        colour = a["colour"] if a["colour"] == b["colour"] else INK
        merged = dict(at=0.5 * (a["at"] + b["at"]), text=merge_text(a, b), colour=colour,
                      members=a["members"] + b["members"], first=a.get("first", a["text"]),
                      last=b.get("last", b["text"]))
        items[k:k + 2] = [merged]
    return items


def _merge_modes(a, b) -> str:
    first = a.get("first", a["text"])
    last = b.get("last", b["text"])
    return f"{first}–{last}"


def _merge_orders(a, b) -> str:
    return f"{a['text']}, {b['text']}"


# ----------------------------------------------------------------- ranges
def panel_tops(screening) -> list[float]:
    """Upper frequency (Hz) of each panel: the screening limit first, then a detail
    wherever modes sit in the lowest :data:`SQUEEZED` part of the panel before."""
    s = screening
    modes = s.modes
    f_el = sorted(float(modes.frequency_hz[i]) for i in range(len(modes))
                  if modes.elastic[i] and modes.frequency_hz[i] <= s.cap_hz)
    fixed = [l.fixed_hz for l in s.lines if l.fixed_hz is not None]
    top = s.cap_hz * 1.06 if s.cap_hz > 0 else max(f_el + fixed + [1.0]) * 1.2
    tops = [top]
    while len(tops) < MAX_PANELS:
        squeezed = [f for f in f_el if f < SQUEEZED * tops[-1]]
        if not squeezed:
            break
        tops.append(max(squeezed) * 1.3)
    return tops


# ----------------------------------------------------------------- the drawing
def _source_text(train, source: str, lines) -> str:
    mine = [l for l in lines if l.source == source]
    if mine and mine[0].kind == "fixed":
        return f"{source[:200]}: {mine[0].fixed_hz:g} Hz, fixed frequency"
    orders = [l.order for l in mine]
    if len(orders) > 10:
        text = f"orders {fmt.order(min(orders))}–{fmt.order(max(orders))} ({len(orders)} orders)"
    else:
        text = ("order " if len(orders) == 1 else "orders ") + ", ".join(fmt.order(o) for o in orders)
    at = mine[0].at if mine else None
    return f"{source[:200]}: {text}" + (f" at '{train.name_of(at)[:200]}'" if at else "")


def line_label(line) -> str:
    """What stands on the chart where a line leaves it: '4×' for an order, the formula
    '|300 Hz − 12.1·N|' for a line that does not pass through the origin."""
    if line.kind == "line":
        return (line.formula or line.source).removeprefix("f = ")
    if line.kind == "fixed":
        return f"{line.fixed_hz:g} Hz"
    return f"{fmt.order(line.order)}×"


def _line_text(train, line) -> str:
    """A legend entry for one electric-drive line: its name, formula and the shaft N turns with."""
    at = f"'{train.name_of(line.at)[:200]}'" if line.at else "its shaft"
    what = f"order {fmt.order(line.order)}, " if line.kind == "order" else ""
    formula = line.formula or ""
    if formula and line.source.endswith(formula):  # a line given without a name is named by its formula
        head, formula = line.source[:-len(formula)].rstrip(": "), formula
        return f"{head[:200]}: {what}{formula} (N = speed of {at} in rev/s)"
    return f"{line.source[:200]}: {what}{formula} (N = speed of {at} in rev/s)"


def legend_items(s, above_drawn: bool, acceptance=None) -> list[tuple]:
    op = s.train.operating
    m = s.margin
    colour = source_colours(s.lines, op)
    group = excitation_groups(s.lines, op)
    items = []
    seen = []
    for l in s.lines:
        if l.source in seen:
            continue
        seen.append(l.source)
        if group[l.source] != l.source:  # one line of an electric drive
            items.append(("line", colour[l.source], OFFSET_DASH if l.kind == "line" else None, _line_text(s.train, l)))
        else:
            fixed = l.kind == "fixed"
            items.append(("line", colour[l.source], (3, 2) if fixed else None, _source_text(s.train, l.source, s.lines)))
    items.append(("line", GREY, None, "natural frequency, mode number at the left edge"))
    lo_div, hi_div = f"{1 + m:g}", f"{1 - m:g}"
    if getattr(s, "bands", None) is not None:
        items.append(("fill", BAND_FILL, None,
                      f"margin band f_low/{lo_div} to f_high/{hi_div}: an excitation frequency f_e inside it is "
                      f"closer to the nearest edge of the tolerance band than {fmt.percent(m)}\u00a0% of f_e"))
    else:
        items.append(("fill", BAND_FILL, None,
                      f"margin band f_n/{lo_div} to f_n/{hi_div}: an excitation frequency f_e inside it is closer "
                      f"to the natural frequency f_n than {fmt.percent(m)}\u00a0% of f_e"))
    if getattr(s, "bands", None) is not None:
        items.append(("fill", TOLERANCE_FILL, None,
                      "tolerance band: the natural frequency with the stiffness and inertia tolerances "
                      "(from the train with every tolerance at its softening end to the one at its stiffening end)"))
    items.append(("line", LIMIT_INK, (4, 1.5, 1, 1.5),
                  f"screening limit, {fmt.hz(s.cap_hz)} Hz: modes above it are listed, not screened"))
    if above_drawn:
        items.append(("line", ABOVE_INK, (1, 1.5), "natural frequency above the screening limit (not screened)"))
    if s.speed_min == s.speed_max:
        items.append(("line", RANGE_EDGE, None, f"{op.range_name[:200]} ({fmt.rpm(s.speed_min)} rpm)"))
    else:
        items.append(("fill", RANGE_FILL, None,
                      f"{op.range_name[:200]} ({fmt.rpm(s.speed_min)}–{fmt.rpm(s.speed_max)} rpm)"))
    if op.trip_speed:
        items.append(("line", RANGE_EDGE, (1.5, 1.5), f"trip speed ({fmt.rpm(op.trip_speed)} rpm)"))
    bands = speed_bands(op)
    items.append(("bands", [BAND_COLOURS[b.name] for b in bands if b.name in BAND_COLOURS], None,
                  bands_text(bands)))
    for r in barred_ranges(acceptance):
        items.append(("fill", BARRED_FILL, None, barred_text(s.train, r)))
    items.append(("dot_fill", FAIL_INK, None, "coincidence inside the margin (fails)"))
    if any(c.weak and not c.passed for c in s.coincidences):
        items.append(("dot_fill", WEAK_INK, None, "inside the margin but weakly excited (listed, not a failure)"))
    items.append(("dot_open", PASS_INK, None, "crossing outside the range, margin met (passes)"))
    return items


@dataclass(frozen=True)
class BarredSpan:
    """Overlapping barred speed ranges of every shaft and load case, merged for drawing."""

    low_rpm: float
    high_rpm: float
    links: tuple  # link ids, in the order found
    load_cases: tuple


def barred_ranges(acceptance) -> list:
    """The barred speed ranges to draw: overlapping ranges (several shafts, several load cases)
    merged into one span each."""
    if acceptance is None or not acceptance.barred_ranges:
        return []
    spans = []
    for r in sorted(acceptance.barred_ranges, key=lambda r: r.low):
        if spans and r.low_rpm <= spans[-1][1] + 1e-9:
            lo, hi, links, cases = spans[-1]
            spans[-1] = (lo, max(hi, r.high_rpm), links + [r.link], cases + [r.load_case])
        else:
            spans.append((r.low_rpm, r.high_rpm, [r.link], [r.load_case]))
    return [BarredSpan(lo, hi, tuple(dict.fromkeys(links)), tuple(c for c in dict.fromkeys(cases) if c))
            for lo, hi, links, cases in spans]


def rpm_span(lo: float, hi: float) -> str:
    """'547.5–547.8 rpm' for a narrow range, '520–580 rpm' for a wide one."""
    digits = 1 if hi - lo < 5 else 0
    return f"{lo:.{digits}f}–{hi:.{digits}f} rpm"


def barred_text(train, r) -> str:
    names = ", ".join(f"'{train.name_of(l)[:120]}'" for l in r.links)
    return f"barred speed range {rpm_span(r.low_rpm, r.high_rpm)} ({names})"


def legend_layout(items, width: float, size: float = 6.5):
    """(height, placed) for legend ``items`` in one or two columns, each entry
    wrapped onto the lines it needs; placed = [(x, y_top, item, lines)]."""
    row_h = size + 3.0
    swatch = 21.0
    widest = max((text_width(t, FONT, size) for *_, t in items), default=0.0)
    n_cols = 2 if width > 300 and widest + swatch <= width / 2 - 8 else (2 if width > 300 else 1)
    col_w = width / n_cols
    wrapped = [wrap_text(t, col_w - swatch - 6, 6, FONT, size).split("\n") for *_, t in items]
    placed = []
    y = 0.0
    for r in range(0, len(items), n_cols):
        row = list(range(r, min(r + n_cols, len(items))))
        h = max(len(wrapped[k]) for k in row) * row_h
        for c, k in enumerate(row):
            placed.append((c * col_w, y, items[k], wrapped[k]))
        y += h
    return y, placed


def draw_legend(d: Drawing, x0: float, y_top: float, placed, size: float = 6.5):
    row_h = size + 3.0
    for x, dy, (kind, colour, dash, _), lines in placed:
        x, y = x0 + x, y_top - dy - row_h + 2
        if kind == "line":
            d.add(Line(x, y + size * 0.35, x + 16, y + size * 0.35, strokeColor=colour, strokeWidth=1.1,
                       strokeDashArray=dash))
        elif kind == "fill":
            d.add(Rect(x, y - 0.5, 16, size, fillColor=colour, strokeColor=None, strokeWidth=0))
        elif kind == "bands":
            for k, c in enumerate(colour or BAND_COLOURS.values()):
                d.add(Rect(x + k * 5.4, y + 0.5, 5.2, size * 0.55, fillColor=c, strokeColor=None, strokeWidth=0))
        elif kind == "dot_fill":
            d.add(Circle(x + 8, y + size * 0.35, 2.6, fillColor=colour, strokeColor=colour, strokeWidth=0.8))
        elif kind == "dot_open":
            d.add(Circle(x + 8, y + size * 0.35, 2.6, fillColor=colors.white, strokeColor=colour,
                         strokeWidth=0.9))
        for k, line in enumerate(lines):
            d.add(String(x + 21, y - k * row_h, line, fontName=FONT, fontSize=size, fillColor=INK))


def campbell_drawing(screening, width: float, plot_height: float, y_max_hz: float, title: str | None = None,
                     with_legend: bool = True, acceptance=None) -> Drawing:
    """One panel of the diagram from 0 to ``y_max_hz``; the legend below it when asked.
    ``acceptance`` (core.acceptance.Acceptance): its barred speed ranges are drawn."""
    s = screening
    train = s.train
    op = train.operating
    m = s.margin
    lines = s.lines
    modes = s.modes
    rpm_top = fmt.rad_s_to_rpm(max(s.speed_max, op.trip_speed or 0.0))
    x_max = rpm_top * 1.12
    colour = source_colours(lines, op)
    shown = [(int(modes.number[i]), float(modes.frequency_hz[i])) for i in range(len(modes))
             if modes.elastic[i] and modes.frequency_hz[i] <= y_max_hz]
    screened = [(n, f) for n, f in shown if f <= s.cap_hz]
    above = [(n, f) for n, f in shown if f > s.cap_hz]
    barred = barred_ranges(acceptance)
    # each screened mode's tolerance band [f_low, f_high] (core.tolerance), else f_n itself
    row_of = {int(modes.number[i]): i for i in range(len(modes))}
    tol = s.bands if getattr(s, "bands", None) is not None else None
    edges = {n: ((float(tol[row_of[n], 0]), float(tol[row_of[n], 1])) if tol is not None else (f, f))
             for n, f in screened}

    # labels in data terms first: they decide the right margin
    right, top_edge = [], []
    segments = {}
    for k, line in enumerate(lines):
        c = colour[line.source]
        if line.kind == "fixed":
            if line.fixed_hz <= y_max_hz:
                right.append(dict(at=line.fixed_hz, text=line_label(line), colour=c))
            continue
        segs = segments[k] = line_segments(line, x_max, y_max_hz)
        if not segs:
            continue
        x_end, y_end = segs[-1][2], segs[-1][3]  # where the line leaves the chart
        if x_end < x_max * (1 - 1e-9):
            top_edge.append(dict(at=x_end, text=line_label(line), colour=c, line=line))
        else:
            right.append(dict(at=y_end, text=line_label(line), colour=c, line=line))
    if s.cap_hz <= y_max_hz:
        right.append(dict(at=s.cap_hz, text="limit", colour=LIMIT_INK))
    right_w = max((text_width(it["text"], FONT, LABEL_SIZE) for it in right), default=0.0)
    left, right_pad, bottom = 44.0, max(14.0, right_w + 12.0), 30.0
    # order labels on the right edge may be merged: leave room for the widest merge of two
    if len(right) > 1:
        right_pad = max(right_pad, min(90.0, 2 * right_w + 18.0))
    title_h = 12.0 if title else 0.0
    top_pad = title_h + 14.0
    plot_w = width - left - right_pad
    legend_h, placed = (legend_layout(legend_items(s, bool(above), acceptance), width - left) if with_legend
                        else (0.0, []))
    legend_gap = 8.0 if with_legend else 0.0
    height = top_pad + plot_height + bottom + legend_h + legend_gap
    d = drawing(width, height)
    y0 = bottom + legend_h + legend_gap
    ref = fit_text(train.name_of(op.reference), plot_w - 150, 7)
    p = Plot(d, left, y0, plot_w, plot_height, (0.0, x_max), (0.0, y_max_hz),
             x_title=f"speed of the reference shaft, '{ref}' (rpm)", y_title="frequency (Hz)")
    if title:
        d.add(String(left, height - 10, title, fontName=BOLD, fontSize=8, fillColor=INK))
    # filled areas under the grid
    p.vband(fmt.rad_s_to_rpm(s.speed_min), fmt.rad_s_to_rpm(s.speed_max), RANGE_FILL, RANGE_EDGE)
    barred_bands(p, barred)
    from .charts import merged_intervals
    # the margin band runs from the tolerance band's low edge / (1 + m) to its high edge / (1 - m):
    # the separation is measured from the band edge nearest the excitation
    for lo, hi in merged_intervals([(edges[n][0] / (1 + m), edges[n][1] / (1 - m) if m < 1 else y_max_hz)
                                    for n, _ in screened]):
        p.hband(lo, hi, BAND_FILL)  # merged, so that overlapping bands do not darken each other
    for lo, hi in merged_intervals([edges[n] for n, _ in screened if edges[n][1] > edges[n][0]]):
        p.hband(lo, min(hi, y_max_hz), TOLERANCE_FILL)
    p.draw_axes()
    band_strip(p, speed_bands(op))
    if op.trip_speed:
        xt = fmt.rad_s_to_rpm(op.trip_speed)
        d.add(Line(p.sx(xt), p.y0, p.sx(xt), p.y0 + p.h, strokeColor=RANGE_EDGE, strokeWidth=0.7,
                   strokeDashArray=(1.5, 1.5)))
        top_edge.append(dict(at=xt, text="trip", colour=RANGE_EDGE))
    for r in barred:
        top_edge.append(dict(at=0.5 * (r.low_rpm + r.high_rpm), text="barred", colour=BARRED_EDGE))
    for _, f in screened:
        p.hline(f, GREY, 0.7)
    for _, f in above:
        p.hline(f, ABOVE_INK, 0.7, dash=(1, 1.5))
    p.hline(s.cap_hz, LIMIT_INK, 0.8, dash=(4, 1.5, 1, 1.5))
    # excitation lines: rays through the origin, fixed frequencies, and lines f = |a + b N|
    for k, line in enumerate(lines):
        c = colour[line.source]
        if line.kind == "fixed":
            p.hline(line.fixed_hz, c, 0.9, dash=(3, 2))
            continue
        dash = OFFSET_DASH if line.kind == "line" else None
        for xa, ya, xb, yb in segments.get(k, ()):
            d.add(Line(p.sx(xa), p.sy(ya), p.sx(xb), p.sy(yb), strokeColor=c, strokeWidth=0.8,
                       strokeDashArray=dash))
    # coincidences at their crossing speed
    for cn in s.coincidences:
        if cn.crossing_speed is None:
            continue
        speeds = [cn.crossing_speed]
        if cn.line.kind == "line":  # a V-shaped line |a - b N| may cross a mode on both of its sides
            from core.electric import line_crossings
            speeds = list(line_crossings(cn.line.offset_hz, cn.line.slope, cn.frequency_hz)) or speeds
        for w in speeds:
            x = fmt.rad_s_to_rpm(w)
            if not (0 <= x <= x_max and cn.frequency_hz <= y_max_hz):
                continue
            inside = s.speed_min <= w <= s.speed_max
            ok = cn.passed and not inside
            col = PASS_INK if ok else (WEAK_INK if cn.weak and not cn.passed else FAIL_INK)
            d.add(Circle(p.sx(x), p.sy(cn.frequency_hz), 2.6, strokeColor=col, strokeWidth=0.9,
                         fillColor=colors.white if ok else col))
    _mode_labels(d, p, shown, s.cap_hz)
    _edge_labels(d, p, right, top_edge)
    if with_legend:
        draw_legend(d, left, legend_h, placed)
    return d


def _mode_labels(d: Drawing, p: Plot, shown, cap_hz: float):
    """Mode numbers at the left inside edge, on white, spread apart, with a leader where moved."""
    h = LABEL_SIZE + 1.5
    items = [dict(at=p.sy(f), text=str(n), colour=INK if f <= cap_hz else ABOVE_INK) for n, f in shown]
    placed = place_labels(items, p.y0 + 1, p.y0 + p.h - 1, lambda it: h, _merge_modes)
    for it in placed:
        w = text_width(it["text"], FONT, LABEL_SIZE) + 3
        x = p.x0 + 6
        y = it["pos"]
        for at in it["members"]:
            if abs(at - y) > 0.5:
                d.add(Line(p.x0, at, x, y, strokeColor=GREY, strokeWidth=0.35))
        d.add(Rect(x, y - h / 2, w, h, fillColor=colors.white, strokeColor=None, strokeWidth=0))
        d.add(String(x + 1.5, y - LABEL_SIZE * 0.35, it["text"], fontName=FONT, fontSize=LABEL_SIZE,
                     fillColor=it["colour"]))


def _edge_labels(d: Drawing, p: Plot, right, top_edge):
    """Order labels where lines leave the plot: spread along the right and top edges."""
    h = LABEL_SIZE + 1.5
    items = [dict(it, at=p.sy(it["at"])) for it in right]
    for it in place_labels(items, p.y0 - 2, p.y0 + p.h - 2, lambda it: h, _merge_orders):
        x = p.x0 + p.w + 6
        y = it["pos"]
        for at in it["members"]:
            d.add(Line(p.x0 + p.w, at, x - 1, y, strokeColor=it["colour"], strokeWidth=0.35))
        d.add(String(x, y - LABEL_SIZE * 0.35, it["text"], fontName=FONT, fontSize=LABEL_SIZE,
                     fillColor=it["colour"]))
    items = [dict(it, at=p.sx(it["at"])) for it in top_edge]
    for it in place_labels(items, p.x0, p.x0 + p.w,
                           lambda it: text_width(it["text"], FONT, LABEL_SIZE) + 4, _merge_orders):
        x = it["pos"]
        y = p.y0 + p.h + 6
        for at in it["members"]:
            d.add(Line(at, p.y0 + p.h, x, y - 1, strokeColor=it["colour"], strokeWidth=0.35))
        d.add(String(x, y + 0.5, it["text"], fontName=FONT, fontSize=LABEL_SIZE, fillColor=it["colour"],
                     textAnchor="middle"))


def label_boxes(d: Drawing) -> list[tuple[float, float, float, float]]:
    """Bounding boxes (x0, y0, x1, y1) of every text of a drawing (for overlap tests)."""
    from reportlab.graphics.shapes import Group
    out = []

    def walk(node, dx=0.0, dy=0.0):
        for c in getattr(node, "contents", []):
            if isinstance(c, Group):
                t = c.transform
                if t[0] == 1 and t[3] == 1 and t[1] == 0 and t[2] == 0:
                    walk(c, dx + t[4], dy + t[5])
                continue  # rotated texts (axis titles) are left out
            if isinstance(c, String):
                w = text_width(c.text, c.fontName, c.fontSize)
                x = c.x + dx - (w / 2 if c.textAnchor == "middle" else w if c.textAnchor == "end" else 0)
                out.append((x, c.y + dy - 0.2 * c.fontSize, x + w, c.y + dy + 0.75 * c.fontSize, c.text))
    walk(d)
    return out


