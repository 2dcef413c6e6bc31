"""Interference screening: excitation frequencies against natural frequencies.

For a natural frequency f_n and an excitation f_e(N) = a N over the operating
range N in [N_min, N_max] of the reference shaft (a = order x speed ratio of
the source shaft to the reference shaft, in Hz per rad/s), the separation is

    sep(N) = |f_n - f_e(N)| / f_e(N),

relative to the excitation frequency, as machinery standards word it (API 617
and API 684 ask for 10 % — from memory).  A pair fails when its smallest
separation over the range is below the required margin; a crossing inside the
range has separation 0.  The interference band is the reference-speed interval
where sep < margin: f_n / (a (1 + m)) < N < f_n / (a (1 - m)).

All speeds here are rad/s of the reference shaft; frequencies in Hz.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .electric import line_band, line_crossings
from .model import Operating, Train
from .solver import Modes, natural_modes

TWO_PI = 2.0 * np.pi
DEFAULT_MARGIN = 0.10  # API 617 / API 684 separation margin (from memory)


@dataclass(frozen=True)
class ExcitationLine:
    """One order of one source, a fixed frequency, or a speed-dependent line
    f = |offset_hz + slope N| (electric drives) on the interference diagram."""

    source: str
    order: float | None  # None for a fixed-frequency source or a line with an offset
    slope: float  # Hz per rad/s of reference speed (0 for fixed; negative: |a - b N|)
    fixed_hz: float | None
    at: str | None
    offset_hz: float = 0.0  # Hz at zero speed of a line f = |offset_hz + slope N|
    major: bool = False  # a major order of an engine (all cylinders in phase)
    formula: str | None = None  # "f = |300 Hz − 12·N|" for a line with an offset

    @property
    def kind(self) -> str:
        """"fixed", "order" or "line" (a + b N or |a - b N|)."""
        if self.fixed_hz is not None:
            return "fixed"
        return "order" if self.offset_hz == 0.0 and self.slope >= 0 else "line"

    def frequency(self, speed):
        """Excitation frequency in Hz at reference speed(s) in rad/s."""
        speed = np.asarray(speed, float)
        if self.fixed_hz is not None:
            return np.full(speed.shape, self.fixed_hz)
        if self.offset_hz == 0.0 and self.slope >= 0:
            return self.slope * speed
        return np.abs(self.offset_hz + self.slope * speed)

    @property
    def label(self) -> str:
        if self.fixed_hz is not None:
            return f"{self.source} ({self.fixed_hz:g} Hz)"
        if self.order is None:
            return f"{self.source} ({self.formula})" if self.formula else self.source
        return f"{self.source}, order {self.order:g}" + (" (major)" if self.major else "")


def excitation_lines(train: Train, operating: Operating | None = None) -> list[ExcitationLine]:
    op = operating or train.operating
    lines = []
    if op is None:
        return lines
    for e in op.excitations:
        if e.frequency is not None:
            lines.append(ExcitationLine(e.name, None, 0.0, e.frequency, None))
            continue
        ratio = train.relative_speed(e.at, op.reference)
        major = set(e.engine.major_orders) if e.engine is not None else set()
        for o in e.orders:
            lines.append(ExcitationLine(e.name, o.order, o.order * ratio / TWO_PI, None, e.at,
                                        major=o.order in major))
        for fl in e.lines:  # electric drives: f = a + b N or |a - b N|, N of the `at` shaft
            plain = fl.offset_hz == 0.0  # b N alone is an order line (e.g. 6 x the output frequency)
            lines.append(ExcitationLine(f"{e.name}: {fl.name}", fl.order if plain else None,
                                        fl.signed_order * ratio / TWO_PI, None, e.at, offset_hz=fl.offset_hz,
                                        formula=f"f = {fl.formula}"))
    return lines


def highest_excitation_hz(lines, speed_max: float) -> float:
    """Highest excitation frequency reachable from standstill to ``speed_max`` (a line
    |a + b N| is largest at one end of the span)."""
    if not lines:
        return 0.0
    return max(max(float(l.frequency(speed_max)), float(l.frequency(0.0))) for l in lines)


def screening_cap_hz(lines, speed_max: float, margin: float) -> float:
    """Highest natural frequency worth screening: above the highest reachable
    excitation frequency by twice the margin (the listing threshold) plus 25 %
    headroom (common practice, no source)."""
    top = highest_excitation_hz(lines, speed_max)
    return top * (1.0 + 2.0 * margin) * 1.25 if top > 0 else 0.0


@dataclass(frozen=True)
class Coincidence:
    mode: int  # solve numbering, first elastic mode = 1
    frequency_hz: float
    line: ExcitationLine
    separation: float  # smallest over the range, fraction (0 for a crossing in range)
    crossing_speed: float | None  # rad/s of the reference shaft, None if no crossing
    band: tuple[float, float] | None  # reference speed interval inside the margin, rad/s
    passed: bool
    worst_speed: float  # reference speed of the smallest separation, rad/s

    @property
    def source(self) -> str:
        return self.line.source

    @property
    def order(self) -> float | None:
        return self.line.order

    @property
    def status(self) -> str:
        return "pass" if self.passed else "fail"


def pair_separation(f_n: float, line: ExcitationLine, speed_min: float, speed_max: float,
                    margin: float):
    """(smallest separation, speed where it occurs, crossing speed, band) for one pair."""
    if line.kind == "line":
        return _line_separation(f_n, line, speed_min, speed_max, margin)
    if line.fixed_hz is not None:
        f_e = line.fixed_hz
        sep = abs(f_n - f_e) / f_e
        band = (0.0, np.inf) if sep < margin else None
        return sep, speed_max, None, band
    a = line.slope
    crossing = f_n / a
    if speed_min <= crossing <= speed_max:
        sep, worst = 0.0, crossing
    else:
        s_lo = abs(f_n - a * speed_min) / (a * speed_min) if speed_min > 0 else np.inf
        s_hi = abs(f_n - a * speed_max) / (a * speed_max)
        sep, worst = (s_lo, speed_min) if s_lo < s_hi else (s_hi, speed_max)
    hi = f_n / (a * (1.0 - margin)) if margin < 1 else np.inf
    band = (f_n / (a * (1.0 + margin)), hi) if margin > 0 else None
    return sep, worst, crossing, band


def _line_separation(f_n: float, line: ExcitationLine, speed_min: float, speed_max: float,
                     margin: float):
    """pair_separation for a line f_e = |a + s N| (closed form).

    Crossings solve |a + s N| = f_n exactly (two at most, one each side of the
    vertex).  Without a crossing in the range f_e - f_n keeps its sign there, so
    the separation |f_n - f_e| / f_e is smallest at one end of the range.  The
    band is the interval of speeds within the margin that holds the worst speed
    (or the nearest one: a difference line can have one each side of its vertex).
    """
    a, s = line.offset_hz, line.slope
    cross = line_crossings(a, s, f_n)
    inside = cross[(cross >= speed_min) & (cross <= speed_max)]
    if len(inside):
        sep, worst = 0.0, float(inside[0])
        crossing = worst
    else:
        seps = []
        for n in (speed_min, speed_max):
            fe = float(line.frequency(n))
            seps.append((abs(f_n - fe) / fe if fe > 0 else np.inf, n))
        sep, worst = min(seps)
        crossing = None
        if len(cross):
            crossing = float(cross[np.argmin(np.minimum(abs(cross - speed_min), abs(cross - speed_max)))])
    bands = line_band(a, s, f_n, margin)
    band = None
    if bands:
        band = min(bands, key=lambda b: 0.0 if b[0] <= worst <= b[1] else min(abs(b[0] - worst),
                                                                             abs(b[1] - worst)))
    return sep, worst, crossing, band


@dataclass
class Screening:
    train: Train
    modes: Modes
    lines: list
    margin: float
    speed_min: float
    speed_max: float
    cap_hz: float
    coincidences: list = field(default_factory=list)  # worst first, separation < 2 margin
    all_pairs: list = field(default_factory=list)

    @property
    def failures(self) -> list:
        return [c for c in self.coincidences if not c.passed]

    @property
    def verdict(self) -> str:
        return "fail" if self.failures else "pass"

    @property
    def passed(self) -> bool:
        return not self.failures


def screen(train: Train, modes: Modes | None = None, margin: float | None = None) -> Screening:
    """Screen every elastic mode up to the cap against every excitation line."""
    op = train.operating
    if op is None:
        raise ValueError("the project has no operating data (reference, operating_speed, excitations)")
    m = op.margin if margin is None else margin
    lines = excitation_lines(train, op)
    cap = screening_cap_hz(lines, op.speed_max, m)
    if modes is None or modes.complete_to_hz < cap:
        modes = natural_modes(train, max_frequency_hz=max(cap, 1e-9))
    pairs = []
    for i in np.flatnonzero(modes.elastic):
        f_n = float(modes.frequency_hz[i])
        if f_n > cap:
            continue
        for line in lines:
            sep, worst, crossing, band = pair_separation(f_n, line, op.speed_min, op.speed_max, m)
            cross = crossing if crossing is not None and crossing > 0 else None
            pairs.append(Coincidence(int(modes.number[i]), f_n, line, float(sep), cross, band,
                                     bool(sep >= m), float(worst)))
    pairs.sort(key=lambda c: (c.separation, c.mode))
    listed = [c for c in pairs if c.separation < 2 * m]
    return Screening(train, modes, lines, m, op.speed_min, op.speed_max, cap, listed, pairs)


def nearest_at_speed(screening: Screening, speed: float):
    """For the speed cursor: every excitation line's frequency at ``speed`` (rad/s),
    its nearest natural frequency and their separation. Returns a list of dicts."""
    f = screening.modes.frequency_hz[screening.modes.elastic]
    nums = screening.modes.number[screening.modes.elastic]
    rows = []
    for line in screening.lines:
        fe = float(line.frequency(speed))
        if len(f) == 0 or fe <= 0:
            rows.append({"line": line, "excitation_hz": fe, "mode": None, "natural_hz": None,
                         "separation": None})
            continue
        j = int(np.argmin(np.abs(f - fe)))
        rows.append({"line": line, "excitation_hz": fe, "mode": int(nums[j]),
                     "natural_hz": float(f[j]), "separation": abs(float(f[j]) - fe) / fe})
    return rows
