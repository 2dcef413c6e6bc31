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


def _sig(value: float | None, digits: int = 3) -> str:
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return "0"
    if abs(value) >= 10 ** digits:
        return f"{value:.0f}"
    return f"{value:.{digits}g}"


def torque_knm(value_nm: float | None) -> str:
    """Vibratory torque amplitude in kN*m, three significant digits (forced response)."""
    return _sig(None if value_nm is None else value_nm / 1e3)


def stress_mpa(value_pa: float | None) -> str:
    """Vibratory shear stress amplitude in MPa, three significant digits."""
    return _sig(None if value_pa is None else value_pa / 1e6)


def power_kw(value_w: float | None) -> str:
    """Dissipated power in kW, three significant digits."""
    return _sig(None if value_w is None else value_w / 1e3)


def share(name: str, fraction: float, space: str = " ") -> str:
    """An element and its share of a mode's energy, e.g. 'coupling (79.3 %)';
    ``space`` lets the sheet keep the number and its % sign on one line."""
    return f"{name} ({percent(fraction)}{space}%)"


def seconds(value_s: float | None) -> str:
    """A duration or time in seconds, three significant digits."""
    return _sig(value_s)
