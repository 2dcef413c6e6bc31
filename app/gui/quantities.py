"""Cached reading and display of stored quantities (GUI side).

pint parsing costs about 0.1 ms a value; the schematic and the tables of a
200-disc train are redrawn after every edit, so readings of the same text are
cached (stored texts are immutable strings or numbers).
"""
from __future__ import annotations

from functools import lru_cache

from core import units as u

from .. import formatting as fmt


def _in_unit(value_si: float, kind, unit: str, digits: int) -> str:
    """'7360 lb*ft^2', not '7.36e+03 lb*ft^2': significant digits without an exponent
    below a million (app.formatting, the digits every view prints)."""
    v = u.convert(value_si, kind, unit)
    if abs(v) >= 1e6:
        return f"{v:.{digits}g} {unit}"
    return f"{fmt._sig(v, digits)} {unit}"


@lru_cache(maxsize=50_000)
def _read(value, kind):
    """(SI float or None, problem text or None) for a stored value of ``kind``."""
    try:
        return u.parse(value, kind), None
    except Exception as exc:
        return None, getattr(exc, "message", str(exc))


def read_si(value, kind):
    """SI float of a stored value, None when it does not read (cached)."""
    if value is None or isinstance(value, (dict, list, bool)):
        return None
    return _read(value, kind)[0]


@lru_cache(maxsize=50_000)
def _display(value, kind, system: str) -> str:
    v, _problem = _read(value, kind)
    if v is None:
        return str(value)
    return _in_unit(v, kind, u.display_unit(kind, system), 5)


def display_text(value, kind, system: str) -> str:
    """Text shown for a stored value in the chosen unit system (the stored text
    itself when it does not read)."""
    if value is None:
        return ""
    if isinstance(kind, u.Kind) and not isinstance(value, (dict, list, bool)):
        return _display(value, kind, system)
    if isinstance(value, float) and value.is_integer():
        return f"{value:g}"
    return str(value)




def pretty_unit(text: str) -> str:
    """'kg*m^2' -> 'kg·m²' for labels that are read, not edited."""
    return text.replace("*", "·").replace("^2", "²").replace("^3", "³").replace("^4", "⁴")


@lru_cache(maxsize=50_000)
def _short(value, kind, system: str) -> str:
    v, _problem = _read(value, kind)
    if v is None:
        return str(value)
    return pretty_unit(_in_unit(v, kind, u.display_unit(kind, system), 3))


def short_quantity(value, kind, system: str) -> str:
    """Three-digit label text in the display unit system (the stored text itself if it does not read)."""
    if value is None or isinstance(value, (dict, list, bool)):
        return str(value)
    return _short(value, kind, system)
