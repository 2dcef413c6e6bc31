"""What every section of the review sheet shares: the unit system, number formatting of
model values, the context a section gets, and small layout helpers."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from reportlab.platypus import CondPageBreak, KeepInFrame, Paragraph

from core import units as u

from .styles import pretty_unit, styles
from .tables import Column, LongTable

MAX_TEXT = 1500  # characters of a free text (description) printed in full
TWO_PI = 2.0 * math.pi


# ----------------------------------------------------------------- units and context
class Units:
    """Display units of one unit system; each value converted by one cached factor
    (``core.units.convert(1.0, kind, unit)``: every display unit is a plain multiple)."""

    def __init__(self, system: str):
        self.system = system
        self._factor: dict = {}

    @property
    def title(self) -> str:
        return "SI" if self.system == "SI" else "US customary"

    def factor(self, kind) -> float:
        f = self._factor.get(kind.name)
        if f is None:
            f = self._factor[kind.name] = u.convert(1.0, kind, u.display_unit(kind, self.system))
        return f

    def unit(self, kind) -> str:
        return pretty_unit(u.display_unit(kind, self.system))

    def value(self, value_si: float | None, kind, digits: int = 4) -> str:
        return "—" if value_si is None else num(value_si * self.factor(kind), digits)

    def text(self, value_si: float | None, kind, digits: int = 4) -> str:
        """The value with its unit, '12.5 kN·m'."""
        return "—" if value_si is None else f"{self.value(value_si, kind, digits)}\u00a0{self.unit(kind)}"

    def column(self, values_si, kind, digits: int = 4) -> list[str]:
        """A whole column: one multiplication, then one format per value."""
        a = np.asarray(values_si, float) * self.factor(kind)
        return [num(v, digits) for v in a.tolist()]


def num(value: float, digits: int = 4) -> str:
    """A model value to ``digits`` significant digits, trailing zeros dropped, no exponent in the
    usual range (310000, 0.045, 2738)."""
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return "0"
    text = f"{value:.{digits}g}"
    if "e" not in text:
        return text
    rounded = float(text)
    if 1e-4 <= abs(rounded) < 1e9:
        return np.format_float_positional(rounded, trim="-")
    m, e = f"{value:.{digits - 1}e}".split("e")
    return f"{m.rstrip('0').rstrip('.') if '.' in m else m}e{int(e)}"


@dataclass
class Ctx:
    """What every section gets: the computed sheet data, the frame and the unit system."""

    data: object  # sheet.SheetData
    width: float
    frame_h: float
    units: Units
    author: str = ""
    revision: str = ""
    date_text: str = ""
    appendix: list = field(default_factory=list)

    @property
    def study(self):
        return self.data.study

    @property
    def train(self):
        return self.data.study.train

    @property
    def doc(self) -> dict:
        return self.data.doc

    @property
    def placement(self):
        """Where each disc sits on the schematic (computed once per sheet)."""
        if "_placement" not in self.__dict__:
            from ..schematic_layout import place_document
            self.__dict__["_placement"] = place_document(self.doc)
        return self.__dict__["_placement"]

    def name(self, element_id) -> str:
        return self.train.name_of(element_id)

    def cols(self, *spec) -> list[Column]:
        """Columns from (title, width fraction[, align[, wrap[, max_lines]]]) tuples; fractions scaled
        to the frame."""
        total = sum(s[1] for s in spec)
        out = []
        for s in spec:
            title, frac = s[0], s[1]
            align = s[2] if len(s) > 2 else "LEFT"
            wrap = s[3] if len(s) > 3 else align == "LEFT"
            max_lines = s[4] if len(s) > 4 else 4
            out.append(Column(title, frac / total * self.width, align, wrap, max_lines))
        return out


def table(columns, rows, cell_styles=None) -> LongTable:
    return LongTable(columns, rows, cell_styles)


def P(text, style="body") -> Paragraph:
    return Paragraph(text, styles()[style])


def clip(text: str, n: int = MAX_TEXT) -> str:
    text = str(text)
    return text if len(text) <= n else text[:n] + " … (cut here; the full text is in the project file)"


def fit_frame(drawing, width, frame_h):
    """The drawing itself, or shrunk to a page when it is taller than one."""
    if drawing.height <= frame_h * 0.95 and drawing.width <= width * 1.001:
        return drawing
    return KeepInFrame(width, frame_h * 0.95, [drawing], mode="shrink")


def entered_number(raw, fallback: float) -> float:
    """A dimensionless number as the user wrote it (already validated by the model build)."""
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return float(raw)
    try:
        return float(str(raw).strip())
    except ValueError:
        return fallback


def heading(text: str, level: int = 1, room: float = 90.0) -> list:
    """A heading over a long table: a page break unless ``room`` points are left (so the heading
    keeps a few rows under it), then the heading itself, free to be followed by a table that
    splits (a keep-with-next heading would drag a long table to the next page whole)."""
    return [CondPageBreak(room), Paragraph(text, styles()["h1_flow" if level == 1 else "h2_flow"])]
