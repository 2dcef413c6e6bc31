"""Number formatting shared by the command line, the desktop program and the sheet,
so that every view prints the same digits for the same result."""
from __future__ import annotations

import math

TWO_PI = 2.0 * math.pi


def rad_s_to_rpm(w: float) -> float:
    return w * 60.0 / TWO_PI


def hz(value: float) -> str:
    """Natural or excitation frequency in Hz, as shown everywhere."""
    return f"{value:.2f}"


def cpm(value_hz: float) -> str:
    return f"{value_hz * 60.0:.0f}"


def rpm(value_rad_s: float | None) -> str:
    if value_rad_s is None or not math.isfinite(value_rad_s):
        return "—"
    return f"{rad_s_to_rpm(value_rad_s):.0f}"


def percent(fraction: float) -> str:
    if not math.isfinite(fraction):
        return "—"
    return f"{100.0 * fraction:.1f}"


def order(value: float | None) -> str:
    return "fixed" if value is None else f"{value:g}"
