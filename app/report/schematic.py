"""The train schematic of the review sheet, as vector drawings.

Positions come from :func:`app.schematic_layout.place_document` (the same
layout as the desktop canvas): discs in columns along the power flow, the
main line on row 0, each branch on a row of its own.  Discs are blocks whose
height grows with the logarithm of their inertia; shafts are heavy lines,
couplings a pair of flanges, gear meshes two touching pitch circles, ground a
hatched wall.  A long train is wrapped over several bands (one drawing each,
so the sheet can break between them), with arrows where a band continues.
"""
from __future__ import annotations

import math

from reportlab.graphics.shapes import Circle, Drawing, Line, Polygon, Rect, String
from reportlab.lib import colors

from ..schematic_layout import place_document
from .charts import drawing, fit_text, text_width
from .styles import FONT, GREY, INK, ITALIC
from .tables import text_width as fast_width

DISC_FILL = colors.HexColor("#c9d6e8")
DISC_EDGE = colors.HexColor("#2b4a73")
PITCH, MIN_PITCH = 60.0, 40.0
ROW_H = 50.0
LANE = 18.0  # points between links drawn in parallel
MAX_DETAIL_COLUMNS = 240  # about two pages of bands; beyond, one overview drawing
H_MIN, H_MAX = 7.0, 28.0


def _disc_heights(train) -> dict[str, float]:
    """Block height per disc: logarithmic in inertia between H_MIN and H_MAX points."""
    J = {d.id: d.inertia for d in train.discs}
    pos = [v for v in J.values() if v > 0]
    if not pos:
        return {k: H_MIN for k in J}
    lo, hi = math.log(min(pos)), math.log(max(pos))
    span = hi - lo
    out = {}
    for k, v in J.items():
        if v <= 0:
            out[k] = 4.0
        elif span < 1e-9:
            out[k] = 0.5 * (H_MIN + H_MAX)
        else:
            out[k] = H_MIN + (H_MAX - H_MIN) * (math.log(v) - lo) / span
    return out


def _symbol(d: Drawing, kind: str, x: float, y: float, rigid: bool = False):
    """Draw a link symbol centred at (x, y) on a horizontal line."""
    if kind == "coupling":
        d.add(Rect(x - 4.5, y - 6, 2.4, 12, fillColor=INK, strokeColor=INK, strokeWidth=0.3))
        d.add(Rect(x + 2.1, y - 6, 2.4, 12, fillColor=INK, strokeColor=INK, strokeWidth=0.3))
        # the flexible element between the flanges
        d.add(Line(x - 2.1, y, x + 2.1, y, strokeColor=colors.white, strokeWidth=2.2))
        pts = [x - 2.1, y, x - 1.2, y + 2.5, x, y - 2.5, x + 1.2, y + 2.5, x + 2.1, y]
        from reportlab.graphics.shapes import PolyLine
        d.add(PolyLine(pts, strokeColor=INK, strokeWidth=0.6))
    elif kind == "gear_mesh":
        fill = colors.HexColor("#888888") if rigid else colors.white
        d.add(Line(x - 5, y, x + 5, y, strokeColor=colors.white, strokeWidth=2.6))
        d.add(Circle(x - 3.2, y, 3.2, fillColor=fill, strokeColor=INK, strokeWidth=0.7))
        d.add(Circle(x + 3.2, y, 3.2, fillColor=fill, strokeColor=INK, strokeWidth=0.7))


def _ground(d: Drawing, x: float, y: float, side: int):
    """Hatched wall at x, facing the disc on the other side."""
    d.add(Line(x, y - 9, x, y + 9, strokeColor=INK, strokeWidth=1.0))
    for k in range(6):
        yy = y - 9 + k * 3.6
        d.add(Line(x, yy, x + 3.5 * side, yy + 3.2, strokeColor=INK, strokeWidth=0.5))


def _arrow(d: Drawing, x: float, y: float):
    d.add(Polygon([x - 5, y - 3.2, x, y, x - 5, y + 3.2], fillColor=GREY, strokeColor=GREY, strokeWidth=0.3))


def schematic_drawings(doc: dict, train, width: float, frame_h: float = 760.0,
                       placement=None) -> tuple[list[Drawing], str]:
    """(drawings, note): one drawing per band of columns, together the whole
    train; a train too long or too wide for that (more than
    :data:`MAX_DETAIL_COLUMNS` columns, or rows taller than a few pages) gets
    one overview drawing instead, and the note says so."""
    pl = placement or place_document(doc)
    n_cols = max(pl.n_columns, 1)
    if n_cols > MAX_DETAIL_COLUMNS or pl.n_rows * ROW_H > 2.5 * frame_h:
        return [overview_drawing(pl, train, width, frame_h)], (
            f"Overview: {len(train.discs)} discs in {n_cols} columns and {pl.n_rows} "
            f"row{'s' if pl.n_rows != 1 else ''}, too many to draw one by one. Lines are shafts and links, "
            "marks couplings and gear meshes; the ends of each line, the reference disc and the discs "
            "where excitations act are named where there is room. Every element is listed in the model "
            "tables.")
    return _detailed(pl, train, width), ""


def _detailed(pl, train, width: float) -> list[Drawing]:
    n_cols = max(pl.n_columns, 1)
    ground_left = any(side < 0 for _, _, side in pl.grounds)
    ground_right = any(side > 0 for _, _, side in pl.grounds)
    margin_l = 14 + (PITCH * 0.5 if ground_left else 0)
    margin_r = 14 + (PITCH * 0.5 if ground_right else 0)
    usable = width - margin_l - margin_r
    if n_cols * MIN_PITCH <= usable:
        pitch = min(PITCH, usable / n_cols)
        per_band = n_cols
    else:
        pitch = MIN_PITCH
        per_band = max(1, int(usable // pitch))
    heights = _disc_heights(train)
    links = {l.id: l for l in train.links}
    rows_of = pl.row
    bands = [(b0, min(b0 + per_band, n_cols)) for b0 in range(0, n_cols, per_band)]
    drawings = []
    for k, (c0, c1) in enumerate(bands):
        in_band = [x for x, c in pl.column.items() if c0 <= c < c1]
        used_rows = sorted({rows_of[x] for x in in_band})
        # rows that a link passes through vertically must stay too
        row_pos = {r: i for i, r in enumerate(used_rows)}
        n_rows = len(used_rows)
        height = n_rows * ROW_H + (12 if len(bands) > 1 else 4)
        d = drawing(width, height)
        top = height - (12 if len(bands) > 1 else 4)

        def X(col):
            return margin_l + (col - c0 + 0.5) * pitch

        def Y(row):
            return top - (row_pos[row] + 0.5) * ROW_H + 4

        if len(bands) > 1:
            d.add(String(4, height - 9, f"part {k + 1} of {len(bands)} (columns {c0 + 1}–{c1} of {n_cols})",
                         fontName=FONT, fontSize=6, fillColor=GREY))
        bw = min(14.0, pitch * 0.3)
        taken: list[tuple[float, float, float, float]] = []  # label boxes (disc labels keep clear)
        # links first, so that the blocks sit on top of the lines
        for l in train.links:
            if l.grounded:
                continue
            a, b = l.from_id, l.to_id
            if pl.column[a] > pl.column[b]:
                a, b = b, a
            ca, cb = pl.column[a], pl.column[b]
            a_in, b_in = c0 <= ca < c1, c0 <= cb < c1
            if not (a_in or b_in):
                continue
            yb = Y(rows_of[b]) if b_in else None
            ya = Y(rows_of[a]) if a_in else None
            if a_in and b_in:
                xa, xb = X(ca), X(cb)
                if rows_of[a] != rows_of[b]:
                    # drop from the parent disc to the branch row, then run across
                    d.add(Line(xa, ya - heights[a] / 2, xa, yb, strokeColor=INK, strokeWidth=1.0))
                    x_start = xa
                else:
                    x_start = xa + bw / 2
                x_end = xb - bw / 2
                y = yb
            elif a_in:  # continues in the next band
                xa = X(ca)
                y = ya
                x_start, x_end = xa + bw / 2, margin_l + (c1 - c0) * pitch + 6
                if rows_of[a] != rows_of[b]:
                    pass  # the branch row shows in the next band
            else:  # comes from the previous band
                x_start, x_end = margin_l - 6, X(cb) - bw / 2
                y = yb
            width_line = 1.8 if l.kind == "shaft" else 1.0
            # links in parallel between the same discs run side by side, first on top,
            # joined at each end by a short upright bar
            off = -pl.lane_offset(l.id, LANE)
            lane, lanes = pl.lanes.get(l.id, (0, 1))
            x_left = max(x_start, X(cb) - pitch + bw / 2) if (a_in and b_in and rows_of[a] != rows_of[b]) \
                else x_start
            if off:
                for xe, inside in ((x_left + 1.5, a_in or rows_of[a] != rows_of[b]), (x_end - 1.5, b_in)):
                    if inside:
                        d.add(Line(xe, y, xe, y + off, strokeColor=INK, strokeWidth=1.0))
                if x_left > x_start:  # a branch: its drop meets the lanes' bar
                    d.add(Line(x_start, y, x_left + 1.5, y, strokeColor=INK, strokeWidth=width_line))
                    x_start = x_left + 1.5
                y = y + off
            d.add(Line(x_start, y, x_end, y, strokeColor=INK, strokeWidth=width_line))
            if a_in and not b_in:
                _arrow(d, x_end + 4, y)
                continue
            if b_in and not a_in:
                _arrow(d, x_start + 1, y)
            xm = 0.5 * (x_start + x_end) if (a_in and b_in and rows_of[a] == rows_of[b]) else \
                0.5 * (max(x_start, X(cb) - pitch + bw / 2) + x_end)
            _symbol(d, l.kind, xm, y, rigid=l.is_rigid)
            gap = x_end - max(x_start, X(cb) - pitch + bw / 2)
            label = fit_text(l.label, gap - 2, 5.0, ITALIC)
            if gap > 18 and len(label) >= min(4, len(l.label)) and (lanes < 3 or lane in (0, lanes - 1)):
                below = lanes > 1 and lane == lanes - 1  # the lowest lane: name under its symbol
                ly = y - 12.5 if below else y + 7.5
                d.add(String(xm, ly, label, fontName=ITALIC, fontSize=5.0, fillColor=GREY,
                             textAnchor="middle"))
                if below:
                    w = text_width(label, 5.0, ITALIC)
                    taken.append((xm - w / 2 - 1.5, ly - 1.5, xm + w / 2 + 1.5, ly + 5.0))
        for lid, disc, side in pl.grounds:
            c = pl.column[disc]
            if not c0 <= c < c1:
                continue
            l = links[lid]
            x, y = X(c), Y(rows_of[disc])
            xg = x + side * pitch * 0.75
            d.add(Line(x + side * bw / 2, y, xg, y, strokeColor=INK, strokeWidth=1.8 if l.kind == "shaft" else 1.0))
            _symbol(d, l.kind, x + side * pitch * 0.42, y)
            _ground(d, xg, y, side)
        # disc blocks and their labels
        inertia = {disc.id: disc.inertia for disc in train.discs}
        for x_id in sorted(in_band, key=lambda v: (pl.column[v], rows_of[v])):
            c, r = pl.column[x_id], rows_of[x_id]
            h = heights[x_id]
            x, y = X(c), Y(r)
            d.add(Rect(x - bw / 2, y - h / 2, bw, h, fillColor=DISC_FILL, strokeColor=DISC_EDGE,
                       strokeWidth=0.7, strokeDashArray=(1.5, 1.5) if inertia[x_id] <= 0 else None))
            _disc_label(d, train.name_of(x_id), x, y, pitch, width, taken)
        drawings.append(d)
    return drawings


def _disc_label(d: Drawing, name: str, x: float, y: float, pitch: float, width: float, taken: list):
    """The disc's name below its block, else above, else shortened: the first
    place that touches no label already drawn (greedy, left to right)."""
    size = 5.6
    below, above = y - H_MAX / 2 - 7, y + H_MAX / 2 + 2.5
    full_w = min(2 * pitch - 6, 150.0)
    options = [(fit_text(name, full_w, size), below), (fit_text(name, full_w, size), above),
               (fit_text(name, pitch - 3, size), below), (fit_text(name, pitch - 3, size), above)]
    for text, ly in options:
        w = text_width(text, size)
        x0 = min(max(x - w / 2, 1.0), width - w - 1.0)
        box = (x0 - 1.5, ly - 1.5, x0 + w + 1.5, ly + size)
        if all(box[2] <= b[0] or box[0] >= b[2] or box[3] <= b[1] or box[1] >= b[3] for b in taken):
            taken.append(box)
            d.add(String(x0, ly, text, fontName=FONT, fontSize=size, fillColor=INK))
            return


def legend_drawing(width: float) -> Drawing:
    """Key to the schematic symbols (one line)."""
    d = drawing(width, 18)
    y = 8
    x = 4
    items = []
    d.add(Rect(x, y - 5, 6, 10, fillColor=DISC_FILL, strokeColor=DISC_EDGE, strokeWidth=0.7))
    d.add(String(x + 10, y - 2, "disc (height grows with log of inertia)", fontName=FONT, fontSize=6,
                 fillColor=INK))
    x += 150
    d.add(Line(x, y, x + 20, y, strokeColor=INK, strokeWidth=1.8))
    d.add(String(x + 24, y - 2, "shaft", fontName=FONT, fontSize=6, fillColor=INK))
    x += 50
    d.add(Line(x, y, x + 20, y, strokeColor=INK, strokeWidth=1.0))
    _symbol(d, "coupling", x + 10, y)
    d.add(String(x + 24, y - 2, "coupling", fontName=FONT, fontSize=6, fillColor=INK))
    x += 60
    d.add(Line(x, y, x + 20, y, strokeColor=INK, strokeWidth=1.0))
    _symbol(d, "gear_mesh", x + 10, y)
    d.add(String(x + 24, y - 2, "gear mesh (filled: rigid)", fontName=FONT, fontSize=6, fillColor=INK))
    x += 100
    _ground(d, x + 4, y, 1)
    d.add(String(x + 12, y - 2, "ground", fontName=FONT, fontSize=6, fillColor=INK))
    del items
    return d


def overview_drawing(pl, train, width: float, frame_h: float) -> Drawing:
    """The whole train in one drawing, columns and rows compressed to fit the frame.

    Each row of the placement is one line (a row is a run of consecutive
    columns); a branch drops from its parent disc.  Disc ticks appear when a
    column is at least 2 points wide, coupling and mesh marks when there are
    at most 400 of them.  Names go to the ends of each line, the reference
    disc and the excitation discs, greedily in that order, wherever they do not
    touch a name already placed.
    """
    n_cols = max(pl.n_columns, 1)
    n_rows = max(pl.n_rows, 1)
    margin = 16.0
    pitch = (width - 2 * margin) / n_cols
    row_h = min(30.0, max(3.0, frame_h * 0.7 / n_rows))
    height = n_rows * row_h + 26
    d = drawing(width, height)
    top = height - 12

    def X(col):
        return margin + (col + 0.5) * pitch

    def Y(row):
        return top - (row + 0.5) * row_h

    span: dict[int, list[int]] = {}
    for disc, r in pl.row.items():
        c = pl.column[disc]
        lo_hi = span.setdefault(r, [c, c])
        lo_hi[0], lo_hi[1] = min(lo_hi[0], c), max(lo_hi[1], c)
    stroke = 1.4 if row_h >= 8 else 0.8
    for r, (c0, c1) in span.items():
        d.add(Line(X(c0), Y(r), X(c1), Y(r), strokeColor=INK, strokeWidth=stroke))
    marks = [l for l in train.links if l.kind != "shaft" and not l.grounded]
    for l in train.links:
        if l.grounded:
            continue
        a, b = l.from_id, l.to_id
        ra, rb = pl.row.get(a), pl.row.get(b)
        if ra is None or rb is None or ra == rb:
            continue
        if pl.column[a] > pl.column[b]:
            a, b, ra, rb = b, a, rb, ra
        d.add(Line(X(pl.column[a]), Y(ra), X(pl.column[a]), Y(rb), strokeColor=INK, strokeWidth=0.6))
        d.add(Line(X(pl.column[a]), Y(rb), X(pl.column[b]), Y(rb), strokeColor=INK, strokeWidth=stroke))
    if pitch >= 2:
        hh = min(row_h * 0.35, 8)
        for disc, c in pl.column.items():
            x, y = X(c), Y(pl.row[disc])
            d.add(Line(x, y - hh, x, y + hh, strokeColor=DISC_EDGE, strokeWidth=min(1.2, pitch * 0.4)))
    if len(marks) <= 400:
        for l in marks:
            if l.from_id not in pl.column or l.to_id not in pl.column:
                continue
            rr = min(2.6, row_h * 0.3)
            # links in parallel: their marks side by side along the line
            x = 0.5 * (X(pl.column[l.from_id]) + X(pl.column[l.to_id])) + pl.lane_offset(l.id, 3 * rr)
            y = Y(pl.row[l.to_id])
            if l.kind == "gear_mesh":
                d.add(Circle(x, y, rr, fillColor=colors.white, strokeColor=INK, strokeWidth=0.6))
            else:
                d.add(Rect(x - 1, y - 2 * rr, 2, 4 * rr, fillColor=INK, strokeColor=None, strokeWidth=0))
    for lid, disc, side in pl.grounds:
        if disc in pl.column and row_h >= 8:
            _ground(d, X(pl.column[disc]) + side * 6, Y(pl.row[disc]), side)
    # names, most important first, where they do not touch an earlier one
    wanted: list[str] = []
    op = train.operating
    by_row_ends = []
    for r, (c0, c1) in sorted(span.items()):
        ends = [x for x, c in pl.column.items() if pl.row[x] == r and c in (c0, c1)]
        by_row_ends += sorted(ends, key=lambda x: pl.column[x])
    if op is not None:
        wanted.append(op.reference)
        for e in op.excitations:
            wanted += [x for x in [e.at or e.applied_at] + [c for c, _ in e.cylinders] if x]
    wanted += by_row_ends
    boxes: list[tuple[float, float, float, float]] = []
    size = 5.6
    for disc in dict.fromkeys(wanted):
        if disc not in pl.column or len(boxes) > 60:
            continue
        text = fit_text(train.name_of(disc), 90, size)
        w = fast_width(text, FONT, size)
        x = min(max(X(pl.column[disc]) - w / 2, 2), width - w - 2)
        for dy in (-(min(row_h * 0.35, 8) + size + 1), min(row_h * 0.35, 8) + 2):
            y = Y(pl.row[disc]) + dy
            box = (x - 1, y - 1.5, x + w + 1, y + size)
            if y < 0 or y + size > height:
                continue
            if all(box[2] < b[0] or box[0] > b[2] or box[3] < b[1] or box[1] > b[3] for b in boxes):
                boxes.append(box)
                d.add(Line(X(pl.column[disc]), Y(pl.row[disc]), X(pl.column[disc]),
                           y + (size if dy < 0 else -1), strokeColor=GREY, strokeWidth=0.3))
                d.add(String(x, y, text, fontName=FONT, fontSize=size, fillColor=INK))
                break
    d.add(String(2, height - 8, f"overview of {n_cols} columns (1 at the left)", fontName=FONT, fontSize=6,
                 fillColor=GREY))
    return d
