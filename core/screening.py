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

from .model import Operating, Train
from .solver import Modes, natural_modes

TWO_PI = 2.0 * np.pi
DEFAULT_MARGIN = 0.10  # API 617 / API 684 separation margin (from memory)


@dataclass(frozen=True)
class ExcitationLine:
    """One order of one source (or a fixed frequency) on the interference diagram."""

    source: str
    order: float | None  # None for a fixed-frequency source
    slope: float  # Hz per rad/s of reference speed (0 for fixed)
    fixed_hz: float | None
    at: str | None

    def frequency(self, speed):
        """Excitation frequency in Hz at reference speed(s) in rad/s."""
        speed = np.asarray(speed, float)
        if self.fixed_hz is not None:
            return np.full(speed.shape, self.fixed_hz)
        return self.slope * speed

    @property
    def label(self) -> str:
        if self.order is None:
            return f"{self.source} ({self.fixed_hz:g} Hz)"
        return f"{self.source}, order {self.order:g}"


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
        for o in e.orders:
            lines.append(ExcitationLine(e.name, o.order, o.order * ratio / TWO_PI, None, e.at))
    return lines


def highest_excitation_hz(lines, speed_max: float) -> float:
    if not lines:
        return 0.0
    return max(float(l.frequency(speed_max)) for l in lines)


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
