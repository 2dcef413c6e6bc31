"""Greedy placement of plot labels so they do not overlap (Qt-free).

Each label offers candidate spots in priority order; the first spot whose
box stays inside the plot and clear of every label already placed wins, and
a label with no free spot is hidden (its line keeps its tooltip and legend
entry).  Coordinates are pixels, y downwards, as on screen.
"""
from __future__ import annotations

import math
from typing import NamedTuple

#: above this many labels the second pass that gives way to soft boxes is skipped
#: (soft boxes are then ignored from the start): a long train's hundreds of mode
#: labels must be placed within a frame's time on every live edit
SOFT_PASS_LIMIT = 60


class Spot(NamedTuple):  # a tuple: hundreds are made per redraw
    x: float  # anchor point, px
    y: float
    ax: float  # anchor of the text box at (x, y): 0 left/top, 1 right/bottom
    ay: float


def _box(spot, w: float, h: float, pad: float):
    """Box of a label of size (w, h) at ``spot`` (a Spot or a plain (x, y, ax, ay) tuple)."""
    x, y, ax, ay = spot
    left = x - ax * w
    top = y - ay * h
    return (left - pad, top - pad, left + w + pad, top + h + pad)


def box(spot, w: float, h: float, pad: float = 1.5):
    """The padded box a label of size (w, h) takes at ``spot`` (as the placement counts it)."""
    return _box(spot, w, h, pad)


def _overlap(a, b) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


class _Grid:
    """Placed boxes in buckets of ``cell`` pixels, so each test looks at near neighbours
    only (long trains have hundreds of mode labels)."""

    def __init__(self, cell: float):
        self.inv = 1.0 / cell
        self.cells: dict = {}

    def add(self, b) -> None:
        cells, inv, floor = self.cells, self.inv, math.floor
        j0, j1 = floor(b[1] * inv), floor(b[3] * inv) + 1
        for i in range(floor(b[0] * inv), floor(b[2] * inv) + 1):
            for j in range(j0, j1):
                cells.setdefault((i, j), []).append(b)

    def free(self, b) -> bool:
        cells, inv, floor = self.cells, self.inv, math.floor
        l, t, r, btm = b
        j0, j1 = floor(t * inv), floor(btm * inv) + 1
        for i in range(floor(l * inv), floor(r * inv) + 1):
            for j in range(j0, j1):
                others = cells.get((i, j))
                if others:
                    for o in others:
                        if l < o[2] and o[0] < r and t < o[3] and o[1] < btm:
                            return False
        return True


def _place(labels, width, height, pad, grid: _Grid, chosen, index):
    """Place labels[i] for i in ``index`` (each (w, h, spots)) into ``grid``; fills ``chosen``."""
    free, add = grid.free, grid.add
    for i in index:
        w, h, spots = labels[i]
        for s in spots:
            x, y, ax, ay = s
            left = x - ax * w - pad
            top = y - ay * h - pad
            right = left + w + 2 * pad
            bottom = top + h + 2 * pad
            if left < 0 or top < 0 or right > width or bottom > height:
                continue
            b = (left, top, right, bottom)
            if not free(b):
                continue
            chosen[i] = s
            add(b)
            break


def place_labels(labels, width: float, height: float, pad: float = 1.5, blocked=(), cell: float = 48.0):
    """``labels``: list of (w, h, [Spot, ...]) in priority order.  ``blocked``:
    boxes (x0, y0, x1, y1) to keep clear (e.g. the legend).  Returns, per label,
    the chosen Spot or None."""
    grid = _Grid(cell)
    for b in blocked:
        grid.add(b)
    chosen = [None] * len(labels)
    _place(labels, width, height, pad, grid, chosen, range(len(labels)))
    return chosen


def place_labels_staged(labels, width: float, height: float, pad: float = 1.5, blocked=(), soft=(),
                        cell: float = 48.0):
    """Like :func:`place_labels`, but each label gives its spots in stages
    (a list of spot lists): every label tries its first-stage spots before any
    label falls back to a later stage.  So a line's label at the line's end is
    not pushed out by another label that could have gone elsewhere.

    ``soft``: boxes to keep clear where possible (e.g. markers drawn above the
    labels anyway); a label that finds no spot in any stage tries them all
    again ignoring these (not with more than SOFT_PASS_LIMIT labels: then soft
    boxes are ignored from the start).  Returns, per label, the chosen Spot or None."""
    chosen = [None] * len(labels)
    n_stages = max((len(stages) for _w, _h, stages in labels), default=0)
    if len(labels) > SOFT_PASS_LIMIT:
        soft = ()
    placed = []
    for keep_soft in ((True, False) if soft else (True,)):
        grid = _Grid(cell)
        for b in list(blocked) + (list(soft) if keep_soft else []) + placed:
            grid.add(b)
        for k in range(n_stages):
            todo = [i for i, (_w, _h, stages) in enumerate(labels) if chosen[i] is None and k < len(stages)]
            if not todo:
                continue
            stage = {i: (labels[i][0], labels[i][1], labels[i][2][k]) for i in todo}
            before = [chosen[i] for i in todo]
            _place(stage, width, height, pad, grid, chosen, todo)
            for i, was in zip(todo, before):
                if was is None and chosen[i] is not None:
                    placed.append(_box(chosen[i], labels[i][0], labels[i][1], pad))
        if all(c is not None for c in chosen):
            break
    return chosen


#: px between the labels of a stack
STACK_GAP = 1.0
#: at most this many labels in one stack (a longer run of close lines is split)
MAX_STACK = 5


def _isotonic(values: list[float]) -> list[float]:
    """Least-squares fit of a non-decreasing sequence to ``values`` (pool adjacent
    violators; e.g. Barlow et al., Statistical Inference under Order Restrictions, 1972 —
    from memory)."""
    blocks = []  # [mean, weight]
    for v in values:
        blocks.append([v, 1.0])
        while len(blocks) > 1 and blocks[-2][0] > blocks[-1][0]:
            m2, w2 = blocks.pop()
            m1, w1 = blocks.pop()
            blocks.append([(m1 * w1 + m2 * w2) / (w1 + w2), w1 + w2])
    out = []
    for m, wgt in blocks:
        out += [m] * int(wgt)
    return out


def stack_close_labels(line_y: dict, sizes, gap: float = STACK_GAP, max_stack: int = MAX_STACK):
    """Stacks of labels whose horizontal lines lie too close for each to sit just above its
    own line at one place.  ``line_y``: label index -> its line's y (px, downwards);
    ``sizes``: (w, h) per label index.  Returns [(top, [(label index, dy), ...]), ...]: the
    stack's top y and each member's offset below it, highest line first.

    In a stack the top label sits just above its line, the bottom one just below its
    own, those between on theirs, then moved apart as little as possible (least
    squares) so that none overlaps the next: the labels keep their lines' order."""
    order = sorted(line_y, key=lambda i: line_y[i])
    runs, run = [], []
    for i in order:
        if run:
            prev = run[-1]
            # close: both labels just above their lines at one x would overlap
            if line_y[i] - line_y[prev] < sizes[i][1] + gap and len(run) < max_stack:
                run.append(i)
                continue
            runs.append(run)
        run = [i]
    if run:
        runs.append(run)
    out = []
    for run in runs:
        if len(run) < 2:
            continue
        hs = [sizes[i][1] for i in run]
        # wanted top of each label: above its line (first), below (last), centred (others)
        want = []
        for k, i in enumerate(run):
            y = line_y[i]
            want.append(y - hs[k] if k == 0 else y if k == len(run) - 1 else y - 0.5 * hs[k])
        # tops t_k with t_k+1 >= t_k + h_k + gap: shift out the cumulative heights, fit, shift back
        cum = [0.0]
        for k in range(len(run) - 1):
            cum.append(cum[-1] + hs[k] + gap)
        fitted = _isotonic([want[k] - cum[k] for k in range(len(run))])
        tops = [fitted[k] + cum[k] for k in range(len(run))]
        top = tops[0]
        out.append((top, [(i, t - top) for i, t in zip(run, tops)]))
    return out
