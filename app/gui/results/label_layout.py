"""Greedy placement of plot labels so they do not overlap (Qt-free).

Each label offers candidate spots in priority order; the first spot whose
box stays inside the plot and clear of every label already placed wins, and
a label with no free spot is hidden (its line keeps its tooltip and legend
entry).  Coordinates are pixels, y downwards, as on screen.
"""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Spot:
    x: float  # anchor point, px
    y: float
    ax: float  # anchor of the text box at (x, y): 0 left/top, 1 right/bottom
    ay: float


def _box(spot: Spot, w: float, h: float, pad: float):
    left = spot.x - spot.ax * w
    top = spot.y - spot.ay * h
    return (left - pad, top - pad, left + w + pad, top + h + pad)


def _overlap(a, b) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def place_labels(labels, width: float, height: float, pad: float = 1.5, blocked=(), cell: float = 48.0):
    """``labels``: list of (w, h, [Spot, ...]) in priority order.  ``blocked``:
    boxes (x0, y0, x1, y1) to keep clear (e.g. the legend).  Returns, per label,
    the chosen Spot or None.  Placed boxes are kept in a grid of ``cell``-pixel
    buckets, so each test looks at near neighbours only (long trains have
    hundreds of mode labels)."""
    grid: dict = {}

    def cells(b):
        for i in range(int(b[0] // cell), int(b[2] // cell) + 1):
            for j in range(int(b[1] // cell), int(b[3] // cell) + 1):
                yield i, j

    def add(b):
        for c in cells(b):
            grid.setdefault(c, []).append(b)

    def free(b):
        return not any(_overlap(b, o) for c in cells(b) for o in grid.get(c, ()))

    for b in blocked:
        add(b)
    chosen = []
    for w, h, spots in labels:
        pick = None
        for s in spots:
            b = _box(s, w, h, pad)
            if b[0] < 0 or b[1] < 0 or b[2] > width or b[3] > height or not free(b):
                continue
            pick = s
            add(b)
            break
        chosen.append(pick)
    return chosen


def place_labels_staged(labels, width: float, height: float, pad: float = 1.5, blocked=(), soft=(),
                        cell: float = 48.0):
    """Like :func:`place_labels`, but each label gives its spots in stages
    (a list of spot lists): every label tries its first-stage spots before any
    label falls back to a later stage.  So a line's label at the line's end is
    not pushed out by another label that could have gone elsewhere.

    ``soft``: boxes to keep clear where possible (e.g. markers drawn above the
    labels anyway); a label that finds no spot in any stage tries them all
    again ignoring these.  Returns, per label, the chosen Spot or None."""
    chosen = [None] * len(labels)
    placed = []
    n_stages = max((len(stages) for _w, _h, stages in labels), default=0)
    for keep_soft in ((True, False) if soft else (True,)):
        for k in range(n_stages):
            todo = [i for i, (_w, _h, stages) in enumerate(labels) if chosen[i] is None and k < len(stages)]
            if not todo:
                continue
            boxes = list(blocked) + (list(soft) if keep_soft else []) + placed
            picks = place_labels([(labels[i][0], labels[i][1], labels[i][2][k]) for i in todo],
                                 width, height, pad, boxes, cell)
            for i, spot in zip(todo, picks):
                if spot is not None:
                    chosen[i] = spot
                    placed.append(_box(spot, labels[i][0], labels[i][1], pad))
    return chosen
