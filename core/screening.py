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

With tolerance bands (:mod:`core.tolerance`) a mode occupies [f_low, f_high];
its separation from an excitation is then measured from the nearest band edge
(zero when the excitation frequency enters the band) and the verdict follows
that band separation; the nominal separation stays beside it.

Each pair also carries the mode's participation at the point where the
excitation acts: |twist there| / max |twist| in the mode (0..1).  An
operating ``weak_excitation_below`` threshold marks pairs below it as weakly
excited; they stay listed but are not counted as failures.

All speeds here are rad/s of the reference shaft; frequencies in Hz.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from .electric import line_band, line_crossings
from .model import Operating, Train
from .solver import DynamicSystem, Modes, natural_modes, zero_roots
from .tolerance import corner_trains, frequency_bands

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
    # discs the excitation torque acts on (an engine's cylinders, a fixed source's
    # applied_at, else `at`); empty when unknown
    acts_at: tuple[str, ...] = ()
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

    def frequency_range(self, speed_min: float, speed_max: float) -> tuple[float, float]:
        """Lowest and highest excitation frequency (Hz) over reference speeds in
        [speed_min, speed_max] rad/s: a line |a + s N| at its ends, down to 0 where a
        difference line's vertex falls inside."""
        if self.fixed_hz is not None:
            return self.fixed_hz, self.fixed_hz
        ends = self.frequency(np.array([speed_min, speed_max], float))
        lo, hi = float(ends.min()), float(ends.max())
        if self.slope != 0 and speed_min < -self.offset_hz / self.slope < speed_max:
            lo = 0.0
        return lo, hi

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
            acts = (e.applied_at,) if e.applied_at else ()
            lines.append(ExcitationLine(e.name, None, 0.0, e.frequency, None, acts))
            continue
        ratio = train.relative_speed(e.at, op.reference)
        engine = getattr(e, "engine", None)
        major = set(engine.major_orders) if engine is not None else set()
        if engine is not None:
            acts = tuple(dict.fromkeys(c.disc for c in engine.cylinders))
        elif e.cylinders:
            acts = tuple(dict.fromkeys(c for c, _ in e.cylinders))
        else:
            acts = (e.at,)
        for o in e.orders:
            lines.append(ExcitationLine(e.name, o.order, o.order * ratio / TWO_PI, None, e.at, acts,
                                        major=o.order in major))
        for fl in e.lines:  # electric drives: f = a + b N or |a - b N|, N of the `at` shaft
            plain = fl.offset_hz == 0.0  # b N alone is an order line (e.g. 6 x the output frequency)
            lines.append(ExcitationLine(f"{e.name}: {fl.name}", fl.order if plain else None,
                                        fl.signed_order * ratio / TWO_PI, None, e.at, (e.at,),
                                        offset_hz=fl.offset_hz, formula=f"f = {fl.formula}"))
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
    passed: bool  # the governing separation (band when tolerances are given) >= margin
    worst_speed: float  # reference speed of the smallest separation, rad/s
    # |twist at the excitation point| / max |twist| of the mode, 0..1; None when the
    # source names no disc (a fixed frequency without applied_at)
    participation: float | None = None
    # smallest separation measured from the nearest edge of the mode's tolerance band
    # (0 when the excitation enters the band); None when no tolerance is given
    separation_band: float | None = None
    weak: bool = False  # participation below the operating weak_excitation_below

    @property
    def source(self) -> str:
        return self.line.source

    @property
    def order(self) -> float | None:
        return self.line.order

    @property
    def governing_separation(self) -> float:
        """The separation the verdict is judged on: the band's when given, else the nominal."""
        return self.separation if self.separation_band is None else self.separation_band

    @property
    def counts_as_failure(self) -> bool:
        return not self.passed and not self.weak

    @property
    def status(self) -> str:
        """'pass', 'fail', or 'weak' (inside the margin but weakly excited, not a failure)."""
        if self.passed:
            return "pass"
        return "weak" if self.weak else "fail"


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


def band_separation(f_low: float, f_high: float, line: ExcitationLine, speed_min: float,
                    speed_max: float) -> float:
    """Smallest separation over the range between an excitation and a frequency band.

    Measured from the band edge nearest the excitation frequency, relative to the
    excitation frequency as :func:`pair_separation` does; 0 when any excitation
    frequency of the range falls inside [f_low, f_high].  For f_low = f_high it
    equals the nominal separation.
    """
    e_lo, e_hi = line.frequency_range(speed_min, speed_max)
    if f_high < e_lo:
        return (e_lo - f_high) / e_lo
    if f_low > e_hi:
        return (f_low - e_hi) / e_hi
    return 0.0


def line_participation(modes: Modes, line: ExcitationLine) -> np.ndarray | None:
    """|twist at the disc(s) the excitation acts on| / max |twist| of every mode row (the
    largest over an engine's cylinders; 0 for a row without twist); None when the line
    names no disc."""
    if not line.acts_at:
        return None
    shape = np.asarray(modes.shape, float)
    if not shape.size:
        return np.zeros(len(modes))
    big = np.maximum(shape.max(axis=1), -shape.min(axis=1))  # max |twist|, no copy of the shapes
    ids = modes.disc_ids
    at = np.abs(shape[:, [ids.index(d) for d in line.acts_at]]).max(axis=1)  # a few discs
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(big > 0, at / big, 0.0)


def participation(modes: Modes, i: int, line: ExcitationLine) -> float | None:
    """:func:`line_participation` of mode row i."""
    part = line_participation(modes, line)
    return None if part is None else float(part[i])


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
    # [f_low, f_high] Hz per row of `modes` when any tolerance is given, else None
    bands: np.ndarray | None = None
    weak_below: float | None = None  # participation threshold (fraction), None: not given

    @property
    def tolerances(self) -> bool:
        return self.bands is not None

    @property
    def failures(self) -> list:
        """Pairs inside the margin that count: weakly excited ones are listed but do not."""
        return [c for c in self.coincidences if c.counts_as_failure]

    @property
    def verdict(self) -> str:
        return "fail" if self.failures else "pass"

    @property
    def passed(self) -> bool:
        return not self.failures


def screen(train: Train, modes: Modes | None = None, margin: float | None = None) -> Screening:
    """Screen every elastic mode up to the cap against every excitation line.

    With tolerances, every mode whose band reaches below the cap is screened
    (the nominal modes are solved far enough for that), and the verdict of a
    pair follows its band separation.
    """
    op = train.operating
    if op is None:
        raise ValueError("the project has no operating data (reference, operating_speed, excitations)")
    m = op.margin if margin is None else margin
    lines = excitation_lines(train, op)
    cap = screening_cap_hz(lines, op.speed_max, m)
    if modes is None or modes.complete_to_hz < cap:
        modes = natural_modes(train, max_frequency_hz=max(cap, 1e-9))
    tol = train.has_tolerances
    bands = None
    if tol:
        # every mode whose low edge lies below the cap: the low corner's count there
        low_system = DynamicSystem(corner_trains(train)[0])
        rb = zero_roots(low_system.asm)  # rigid-body mode and free damper rings
        need = int(low_system.count(TWO_PI * max(cap, 1e-9))[0]) - rb
        if int(np.count_nonzero(modes.elastic)) < need:
            modes = natural_modes(train, n_modes=need)
            f_top = float(modes.frequency_hz[-1]) if len(modes) else 0.0
            modes = replace(modes, cap_hz=max(cap, f_top))
        bands = frequency_bands(train, modes)
    weak_below = op.weak_excitation_below
    pairs = []
    # participation of every mode in one array per line (a 200-disc train has ~1000 pairs)
    parts = [line_participation(modes, line) for line in lines]
    for i in np.flatnonzero(modes.elastic):
        f_n = float(modes.frequency_hz[i])
        f_lo, f_hi = (float(bands[i, 0]), float(bands[i, 1])) if tol else (f_n, f_n)
        if f_lo > cap:
            continue
        for line, line_part in zip(lines, parts):
            sep, worst, crossing, band = pair_separation(f_n, line, op.speed_min, op.speed_max, m)
            cross = crossing if crossing is not None and crossing > 0 else None
            sep_band = band_separation(f_lo, f_hi, line, op.speed_min, op.speed_max) if tol else None
            part = None if line_part is None else float(line_part[i])
            weak = part is not None and weak_below is not None and part < weak_below
            governing = sep if sep_band is None else sep_band
            pairs.append(Coincidence(int(modes.number[i]), f_n, line, float(sep), cross, band,
                                     bool(governing >= m), float(worst), part,
                                     None if sep_band is None else float(sep_band), bool(weak)))
    pairs.sort(key=lambda c: (c.governing_separation, c.mode))
    listed = [c for c in pairs if c.governing_separation < 2 * m]
    return Screening(train, modes, lines, m, op.speed_min, op.speed_max, cap, listed, pairs,
                     bands, weak_below)


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
