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

DISC_FILL = colors.HexColor("#c9d6e8")
DISC_EDGE = colors.HexColor("#2b4a73")
PITCH, MIN_PITCH = 60.0, 40.0
ROW_H = 50.0
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


def schematic_drawings(doc: dict, train, width: float) -> list[Drawing]:
    """One drawing per band of columns; together they show the whole train."""
    pl = place_document(doc)
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
            label = fit_text(l.id, gap - 2, 5.0, ITALIC)
            if gap > 18 and len(label) >= min(4, len(l.id)):
                d.add(String(xm, y + 7.5, label, fontName=ITALIC, fontSize=5.0, fillColor=GREY,
                             textAnchor="middle"))
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
        for i, x_id in enumerate(sorted(in_band, key=lambda v: (pl.column[v], rows_of[v]))):
            c, r = pl.column[x_id], rows_of[x_id]
            h = heights[x_id]
            x, y = X(c), Y(r)
            d.add(Rect(x - bw / 2, y - h / 2, bw, h, fillColor=DISC_FILL, strokeColor=DISC_EDGE,
                       strokeWidth=0.7, strokeDashArray=(1.5, 1.5) if train.disc(x_id).inertia <= 0 else None))
            # a label wider than the pitch alternates below and above, so neighbours never touch
            wide = text_width(x_id, 5.6) > pitch - 4
            label = fit_text(x_id, 2 * pitch - 8 if wide else pitch - 3, 5.6)
            below = not wide or c % 2 == 0
            ly = y - H_MAX / 2 - 7 if below else y + H_MAX / 2 + 2.5
            d.add(String(x, ly, label, fontName=FONT, fontSize=5.6, fillColor=INK, textAnchor="middle"))
        drawings.append(d)
    return drawings


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
