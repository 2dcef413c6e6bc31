"""Electric drives: excitation lines that do not pass through the origin.

An inverter-fed motor excites the train at frequencies that follow the
inverter's output frequency f_out = p N / (1 - s) (p pole pairs, N the shaft
speed in rev/s, s the slip; s = 0 for a synchronous motor) and the supply
frequency f_supply:

* the inverter's output current harmonics 6k -+ 1 make the air-gap torque
  pulsate at 6k f_out (a six-pulse inverter: 6, 12, 18 ...);
* an unbalance or a negative-sequence component pulsates at 2 f_out, twice the
  electrical frequency;
* the rectifier's DC-link ripple at m f_supply (m = 6 for a six-pulse bridge,
  12 for twelve-pulse) beats with the output and gives interharmonics at
  |m f_supply - n f_out| and m f_supply + n f_out.

(Torque harmonics of inverter-fed machines: e.g. API 684, torsional analysis of
variable-speed drives, and the common literature on VFD torsional excitation —
from memory.)  Each is a line f = a + b N or f = |a - b N| with a in Hz and b
cycles per revolution of the shaft the motor sits on; orders are the special
case a = 0.

Units: Hz, rev/s, rad/s for speeds in the model.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import units as u
from .errors import ModelError

TWO_PI = 2.0 * np.pi
COMBINATIONS = ("sum", "difference")


@dataclass(frozen=True)
class FrequencyLine:
    """f = offset_hz + order N ("sum") or |offset_hz - order N| ("difference"),
    N in rev/s of the shaft the excitation acts on."""

    name: str  # e.g. "interharmonic |6 f_supply - 6 f_out|"
    offset_hz: float  # a, Hz
    order: float  # b, cycles per revolution of the source shaft (may be 0: a fixed line)
    combination: str = "sum"  # "sum" | "difference"
    amplitude: float | None = None  # N*m, forced response
    phase_deg: float = 0.0

    @property
    def signed_order(self) -> float:
        """b with its sign in f = |a + b N|."""
        return -self.order if self.combination == "difference" else self.order

    def frequency(self, source_speed):
        """Hz at source-shaft speed(s) in rad/s."""
        n = np.asarray(source_speed, float) / TWO_PI
        return np.abs(self.offset_hz + self.signed_order * n)

    @property
    def formula(self) -> str:
        a = f"{self.offset_hz:g} Hz"
        if self.order == 0:
            return a
        b = f"{self.order:g}·N"
        if self.offset_hz == 0:
            return b
        return f"{a} + {b}" if self.combination == "sum" else f"|{a} − {b}|"


def line_crossings(offset_hz: float, slope: float, f_n: float) -> np.ndarray:
    """Speeds (rad/s, >= 0, ascending) where |offset_hz + slope speed| = f_n, slope in Hz per rad/s.

    Closed form: speed = (f_n - a) / s or (-f_n - a) / s."""
    if slope == 0.0:
        return np.zeros(0)
    cand = np.array([(f_n - offset_hz) / slope, (-f_n - offset_hz) / slope])
    return np.unique(cand[cand >= 0.0])


def line_band(offset_hz: float, slope: float, f_n: float, margin: float) -> list[tuple[float, float]]:
    """Speed intervals (rad/s, >= 0) where the separation |f_n - f_e| / f_e is below ``margin``,
    f_e = |a + s N|; i.e. f_n / (1 + m) < f_e < f_n / (1 - m).  Up to two intervals
    (one on each side of the V's vertex for a difference line)."""
    if margin <= 0 or slope == 0.0:
        return []
    lo_f = f_n / (1.0 + margin)
    hi_f = f_n / (1.0 - margin) if margin < 1 else np.inf
    out = []
    for sign in (1.0, -1.0):  # a + s N = +f (sign 1) or -f (sign -1)
        # sign (a + s N) in (lo_f, hi_f)  ->  N in an interval
        e1 = (sign * lo_f - offset_hz) / slope
        e2 = (sign * hi_f - offset_hz) / slope if np.isfinite(hi_f) else (np.inf if sign * slope > 0 else -np.inf)
        lo, hi = min(e1, e2), max(e1, e2)
        if hi > 0:
            out.append((max(lo, 0.0), hi))
    out.sort()
    return out


# ----------------------------------------------------------------- project file
def _opt_amplitude(obj, where):
    if obj.get("amplitude") is None:
        return None
    a = u.parse(obj["amplitude"], u.TORQUE, where, "amplitude")
    if a < 0:
        raise ModelError("amplitude must not be negative", where, "amplitude")
    return a


def _phase(obj, where):
    return u.parse_number(obj.get("phase_deg", 0.0), where, "phase_deg")


def _combination(obj, where):
    c = obj.get("combination", "sum")
    if c not in COMBINATIONS:
        raise ModelError(f"combination must be 'sum' (a + b N) or 'difference' (|a - b N|), got {c!r}",
                         where, "combination")
    return c


def parse_lines(raw, where: str) -> tuple[FrequencyLine, ...]:
    """``"lines": [{"frequency_offset": "300 Hz", "order": 12, "combination": "difference",
    "amplitude": ..., "phase_deg": ..., "name": ...}, ...]``: f = a + b N or |a - b N|."""
    if not isinstance(raw, list) or not raw:
        raise ModelError("give a non-empty list of {\"frequency_offset\": ..., \"order\": ..., "
                         "\"combination\": \"sum\" | \"difference\"}", where, "lines")
    out = []
    for i, o in enumerate(raw):
        lw = f"{where} line {i + 1}"
        if not isinstance(o, dict):
            raise ModelError("each line must be a JSON object", lw)
        a = u.parse(o.get("frequency_offset", 0.0), u.FREQUENCY, lw, "frequency_offset")
        if a < 0:
            raise ModelError("must not be negative", lw, "frequency_offset")
        b = u.parse_number(o.get("order", 0.0), lw, "order")
        if b < 0:
            raise ModelError("must not be negative (use \"combination\": \"difference\")", lw, "order")
        if a == 0 and b == 0:
            raise ModelError("a line needs a frequency offset or an order", lw, "order")
        comb = _combination(o, lw) if a > 0 else "sum"  # |0 - b N| = b N: an order
        line = FrequencyLine("", a, b, comb, _opt_amplitude(o, lw), _phase(o, lw))
        name = str(o.get("name") or f"f = {line.formula}")
        out.append(FrequencyLine(name, a, b, comb, line.amplitude, line.phase_deg))
    return tuple(out)


def parse_electric_drive(obj, where: str) -> tuple[FrequencyLine, ...]:
    """``"electric_drive": {"pole_pairs": 2, "supply_frequency": "50 Hz", "slip": "1 %",
    "output_harmonics": [6, 12 | {"harmonic": 6, "amplitude": ...}],
    "twice_electrical": true | {"amplitude": ...},
    "interharmonics": [{"supply_harmonic": 6, "output_harmonic": 6, "combination": "difference",
                        "amplitude": ...}]}`` -> its lines."""
    key = "electric_drive"
    if not isinstance(obj, dict):
        raise ModelError("electric_drive must be a JSON object", where, key)
    p = u.parse_number(obj.get("pole_pairs"), where, f"{key}.pole_pairs")
    if p <= 0 or p != int(p):
        raise ModelError(f"pole pairs must be a whole number above zero, got {p:g}", where, f"{key}.pole_pairs")
    slip = u.parse_fraction(obj.get("slip", 0.0), where, f"{key}.slip")
    if not 0 <= slip < 0.5:
        raise ModelError(f"slip is a fraction from 0 to 0.5, got {slip:g}", where, f"{key}.slip")
    per_rev = p / (1.0 - slip)  # f_out per rev/s of the shaft
    fs = None
    if obj.get("supply_frequency") is not None:
        fs = u.parse(obj["supply_frequency"], u.FREQUENCY, where, f"{key}.supply_frequency")
        if fs <= 0:
            raise ModelError("must be greater than zero", where, f"{key}.supply_frequency")
    lines = []
    raw = obj.get("output_harmonics", [])
    if not isinstance(raw, list):
        raise ModelError("a list of harmonic numbers of the output frequency", where, f"{key}.output_harmonics")
    for i, h in enumerate(raw):
        hw = f"{where} output harmonic {i + 1}"
        spec = h if isinstance(h, dict) else {"harmonic": h}
        n = u.parse_number(spec.get("harmonic"), hw, "harmonic")
        if n <= 0:
            raise ModelError(f"must be greater than zero, got {n:g}", hw, "harmonic")
        lines.append(FrequencyLine(f"{n:g} × output frequency", 0.0, n * per_rev, "sum",
                                   _opt_amplitude(spec, hw), _phase(spec, hw)))
    te = obj.get("twice_electrical")
    if te:
        spec = te if isinstance(te, dict) else {}
        tw = f"{where} twice electrical frequency"
        lines.append(FrequencyLine("2 × electrical frequency", 0.0, 2 * per_rev, "sum",
                                   _opt_amplitude(spec, tw), _phase(spec, tw)))
    raw = obj.get("interharmonics", [])
    if not isinstance(raw, list):
        raise ModelError("a list of {\"supply_harmonic\": m, \"output_harmonic\": n}", where,
                         f"{key}.interharmonics")
    if raw and fs is None:
        raise ModelError("interharmonics need the supply frequency", where, f"{key}.supply_frequency")
    for i, h in enumerate(raw):
        hw = f"{where} interharmonic {i + 1}"
        if not isinstance(h, dict):
            raise ModelError("each interharmonic must be {\"supply_harmonic\": m, \"output_harmonic\": n}", hw)
        m = u.parse_number(h.get("supply_harmonic"), hw, "supply_harmonic")
        n = u.parse_number(h.get("output_harmonic"), hw, "output_harmonic")
        for val, fld in ((m, "supply_harmonic"), (n, "output_harmonic")):
            if val <= 0:
                raise ModelError(f"must be greater than zero, got {val:g}", hw, fld)
        comb = _combination(h, hw)
        name = (f"|{m:g} f_supply − {n:g} f_out|" if comb == "difference"
                else f"{m:g} f_supply + {n:g} f_out")
        lines.append(FrequencyLine(name, m * fs, n * per_rev, comb, _opt_amplitude(h, hw), _phase(h, hw)))
    if not lines:
        raise ModelError("name at least one of output_harmonics, twice_electrical, interharmonics",
                         where, key)
    return tuple(lines)


def fmt_line(line: FrequencyLine) -> str:
    """Readable text of a line for tables: its name and, if different, its formula."""
    f = f"f = {line.formula}"
    return line.name if line.name == f else f"{line.name} ({f})"

