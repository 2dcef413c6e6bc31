"""Tables of the review sheet that stay linear and cheap however long the train.

A train of 20 000 discs gives tables of 20 000 rows.  reportlab's own
``Table`` measures every cell (a ``Paragraph`` per cell costs about a
millisecond) and, when it splits over pages, rebuilds the rest of the table
at every page, so a long table costs time quadratic in its rows.  Here:

* every cell is a plain string (multi-line with ``\\n``), wrapped once with
  the font's metrics; number columns are never wrapped;
* one style per column (alignment, font), the zebra as one ``ROWBACKGROUNDS``
  command, and per-cell styles only where a cell says something (PASS/FAIL);
* row heights are known before layout, so :class:`LongTable` splits by a
  bisection on their running sum and draws just the rows of each page itself
  (fills, two rules and one PDF text object; the header row repeated), with
  text widths from a per-character cache instead of a measure per call.

The cost is then linear in the rows, and a row never grows taller than a page
(a wrapped cell is cut at ``max_lines`` with an ellipsis).
"""
from __future__ import annotations

import bisect
from dataclasses import dataclass

from reportlab.platypus.flowables import Flowable

from .styles import BOLD, FAIL_FILL, FAIL_INK, FONT, GREY, HEAD_FILL, INK, NEUTRAL_FILL, PASS_FILL, \
    PASS_INK, ZEBRA

SIZE = 7.0  # points, table text
LEADING = 8.4
PAD_V, PAD_H = 1.6, 3.0
BAR_FULL = 2.0 / 3.0  # a utilisation bar reaches this fraction of its cell at 100 % (the tick), all of it at 150 %


@dataclass(frozen=True)
class Column:
    """One column: its title, width (points), alignment and whether it wraps."""

    title: str
    width: float
    align: str = "LEFT"  # LEFT | RIGHT | CENTER
    wrap: bool = True
    max_lines: int = 4


_WIDTHS: dict = {}


def text_width(text: str, font: str = FONT, size: float = SIZE) -> float:
    """Width in points of ``text`` in an embedded sheet font (per-character widths cached:
    reportlab's own measure runs in Python for TrueType fonts and costs tens of µs a call)."""
    table = _WIDTHS.get(font)
    if table is None:
        from reportlab.pdfbase.pdfmetrics import getFont
        face = getFont(font).face
        table = _WIDTHS[font] = (face.charWidths, face.defaultWidth, {})
    widths, default, seen = table
    total = 0.0
    for ch in text:
        w = seen.get(ch)
        if w is None:
            w = seen[ch] = widths.get(ord(ch), default)
        total += w
    return total * size / 1000.0


def _break_word(word: str, width: float, font: str, size: float) -> list[str]:
    """A word wider than ``width`` cut into pieces that fit, after an underscore,
    hyphen or slash where one allows ('intermediate_' / 'shaft'), else anywhere."""
    out, cur = [], ""
    for ch in word:
        if cur and text_width(cur + ch, font, size) > width:
            cut = max(cur.rfind("_"), cur.rfind("-"), cur.rfind("/"))
            if cut > 0:
                out.append(cur[:cut + 1])
                cur = cur[cut + 1:] + ch
            else:
                out.append(cur)
                cur = ch
        else:
            cur += ch
    out.append(cur)
    return out


def wrap_text(text: str, width: float, max_lines: int = 4, font: str = FONT, size: float = SIZE) -> str:
    """``text`` broken at spaces into lines that fit ``width`` points (at most
    ``max_lines``; the last ends in an ellipsis when text was cut)."""
    if not text:
        return ""
    width = max(width, 4.0)
    text = text[:60 * max_lines]  # nobody reads more than a few lines of a cell; keep the split cheap
    space = text_width(" ", font, size)
    lines: list[str] = []
    for part in text.split("\n"):
        cur, cur_w = "", 0.0
        for word in part.split(" "):
            w = text_width(word, font, size)
            if cur and cur_w + space + w <= width:
                cur, cur_w = cur + " " + word, cur_w + space + w
                continue
            if cur:
                lines.append(cur)
            if w > width:
                pieces = _break_word(word, width, font, size)
                lines += pieces[:-1]
                cur = pieces[-1]
                cur_w = text_width(cur, font, size)
            else:
                cur, cur_w = word, w
        lines.append(cur)
        if len(lines) > max_lines:
            break
    if len(lines) > max_lines or len(text) == 60 * max_lines:
        lines = lines[:max_lines]
        last = lines[-1]
        while last and text_width(last + "…", font, size) > width:
            last = last[:-1]
        lines[-1] = last + "…"
    return "\n".join(lines)


def status_styles(col: int, text: str) -> list:
    """Cell styles of a status cell (PASS / FAIL) at column ``col`` (the row is filled in later)."""
    if text == "FAIL":
        return [("BACKGROUND", col, FAIL_FILL), ("TEXTCOLOR", col, FAIL_INK), ("FONTNAME", col, BOLD)]
    if text == "PASS":
        return [("BACKGROUND", col, PASS_FILL), ("TEXTCOLOR", col, PASS_INK), ("FONTNAME", col, BOLD)]
    return [("TEXTCOLOR", col, GREY)]


def marked_styles(col: int) -> list:
    """A cell that marks something the reader must notice without a verdict (grey fill, bold)."""
    return [("BACKGROUND", col, NEUTRAL_FILL), ("FONTNAME", col, BOLD)]


class LongTable(Flowable):
    """A table of plain-string rows that splits over pages in time linear in its rows.

    ``rows``: lists of strings, one per column.  ``cell_styles``: {row index:
    [(command, column, value), ...]} for the few cells that need their own
    style (commands BACKGROUND, TEXTCOLOR, FONTNAME, and BAR with value (fraction, colour):
    a bar of that length, 100 % marked by a tick).  The header row repeats
    on every page the table spans.
    """

    def __init__(self, columns: list[Column], rows: list[list[str]], cell_styles: dict | None = None,
                 _shared=None, _start: int = 0, _stop: int | None = None):
        super().__init__()
        if _shared is None:
            _shared = _prepare(columns, rows, cell_styles)
        self._s = _shared
        self._start = _start
        self._stop = len(_shared["body"]) if _stop is None else _stop
        self.hAlign = "LEFT"

    @property
    def n_rows(self) -> int:
        return self._stop - self._start

    def _height(self, start: int, stop: int) -> float:
        cum = self._s["cum"]
        return self._s["head_h"] + cum[stop] - cum[start]

    def wrap(self, availWidth, availHeight):
        self.width = sum(self._s["widths"])
        self.height = self._height(self._start, self._stop)
        return self.width, self.height

    def split(self, availWidth, availHeight):
        cum = self._s["cum"]
        target = cum[self._start] + availHeight - self._s["head_h"] + 1e-6
        stop = min(bisect.bisect_right(cum, target, lo=self._start) - 1, self._stop)
        if stop <= self._start:
            return []  # not even one row here: the frame moves on to the next page
        if stop >= self._stop:
            return [self]
        return [LongTable(None, None, _shared=self._s, _start=self._start, _stop=stop),
                LongTable(None, None, _shared=self._s, _start=stop, _stop=self._stop)]

    def draw(self):
        """Fills, rules and one text object for the rows of this piece, in reading order."""
        s = self._s
        c = self.canv
        start, stop = self._start, self._stop
        widths = s["widths"]
        total_w = sum(widths)
        xs = [0.0]
        for w in widths:
            xs.append(xs[-1] + w)
        aligns = s["aligns"]
        head_h = s["head_h"]
        heights = s["heights"]
        cells = s["cells"]
        top = self._height(start, stop)
        c.saveState()
        # fills: header, zebra, marked cells
        c.setFillColor(HEAD_FILL)
        c.rect(0, top - head_h, total_w, head_h, stroke=0, fill=1)
        c.setFillColor(ZEBRA)
        y = top - head_h
        row_tops = []
        zebra = []
        for i in range(start, stop):
            row_tops.append(y)
            if (i - start) % 2 == 1:
                zebra.append(f"0 {y - heights[i]:.2f} {total_w:.2f} {heights[i]:.2f} re")
            y -= heights[i]
        if zebra:  # one filled path of all stripes (a rect call per row formats its numbers in Python)
            c._code.append("\n".join(zebra) + " f")
        bars = []
        for i in range(start, stop):
            for cmd, col, value in cells.get(i, ()):
                if cmd == "BACKGROUND":
                    c.setFillColor(value)
                    c.rect(xs[col], row_tops[i - start] - heights[i], widths[col], heights[i], stroke=0, fill=1)
                elif cmd == "BAR":
                    bars.append((i, col, value))
        for i, col, (fraction, colour) in bars:  # utilisation bars: 100 % at BAR_FULL of the cell
            inner = widths[col] - 2 * PAD_H
            y = row_tops[i - start] - PAD_V - SIZE * 0.86
            length = inner * BAR_FULL * min(max(fraction, 0.0), 1.0 / BAR_FULL)
            c.setFillColor(colour)
            c.rect(xs[col] + PAD_H, y, length, SIZE * 0.7, stroke=0, fill=1)
            c.setStrokeColor(INK)
            c.setLineWidth(0.5)
            x100 = xs[col] + PAD_H + inner * BAR_FULL
            c.line(x100, y - 0.8, x100, y + SIZE * 0.7 + 0.8)
        c.setStrokeColor(INK)
        c.setLineWidth(0.6)
        c.line(0, top - head_h, total_w, top - head_h)
        c.line(0, 0, total_w, 0)
        # text: one text object, absolute text matrix per line (no per-call width measuring)
        t = c.beginText()
        t.setFillColor(INK)
        code = t._code
        fmt_text = t._formatText
        ascent = SIZE * 0.86

        def put(x_left, x_right, align, cell_top, text, font):
            y = cell_top - PAD_V - ascent
            for line in text.split("\n"):
                if line:
                    if align == "RIGHT":
                        x = x_right - PAD_H - text_width(line, font)
                    elif align == "CENTER":
                        x = 0.5 * (x_left + x_right - text_width(line, font))
                    else:
                        x = x_left + PAD_H
                    code.append(f"1 0 0 1 {x:.2f} {y:.2f} Tm")
                    code.append(fmt_text(line))
                y -= LEADING

        t.setFont(BOLD, SIZE, LEADING)
        for k, text in enumerate(s["head"]):
            put(xs[k], xs[k + 1], aligns[k], top, text, BOLD)
        t.setFont(FONT, SIZE, LEADING)
        special = []
        for i in range(start, stop):
            row = s["body"][i]
            row_top = row_tops[i - start]
            own = cells.get(i)
            own_cols = {col for cmd, col, _ in own if cmd != "BACKGROUND"} if own else ()
            for k, text in enumerate(row):
                if not text:
                    continue
                if k in own_cols:
                    special.append((i, k, row_top))
                    continue
                put(xs[k], xs[k + 1], aligns[k], row_top, text, FONT)
        for i, k, row_top in special:
            font, colour = FONT, INK
            for cmd, col, value in cells[i]:
                if col == k and cmd == "FONTNAME":
                    font = value
                elif col == k and cmd == "TEXTCOLOR":
                    colour = value
            t.setFont(font, SIZE, LEADING)
            t.setFillColor(colour)
            put(xs[k], xs[k + 1], aligns[k], row_top, s["body"][i][k], font)
        c.drawText(t)
        c.restoreState()

    def text_rows(self) -> list[list[str]]:
        """The rows as laid out (wrapped), for tests."""
        return self._s["body"][self._start:self._stop]


def _prepare(columns, rows, cell_styles) -> dict:
    widths = [c.width for c in columns]
    head = [wrap_text(c.title, c.width - 2 * PAD_H, 4, BOLD) for c in columns]
    body, heights = [], []
    wrap_cols = [(k, c) for k, c in enumerate(columns) if c.wrap]
    fixed_cols = [k for k, c in enumerate(columns) if not c.wrap]
    for r in rows:
        r = ["" if v is None else str(v) for v in r]
        n_lines = 1
        for k, c in wrap_cols:
            v = r[k]
            # a cheap upper bound first: most cells are short and need no measuring
            if v and (len(v) * SIZE * 0.62 > c.width - 2 * PAD_H or "\n" in v):
                v = r[k] = wrap_text(v, c.width - 2 * PAD_H, c.max_lines)
                n_lines = max(n_lines, v.count("\n") + 1)
        for k in fixed_cols:
            if "\n" in r[k]:
                n_lines = max(n_lines, r[k].count("\n") + 1)
        body.append(r)
        heights.append(n_lines * LEADING + 2 * PAD_V)
    head_h = max(h.count("\n") + 1 for h in head) * LEADING + 2 * PAD_V
    cum = [0.0]
    for h in heights:
        cum.append(cum[-1] + h)
    return dict(widths=widths, head=head, head_h=head_h, body=body, heights=heights, cum=cum,
                aligns=[c.align for c in columns], cells=cell_styles or {})
