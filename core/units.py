"""Quantities with units, at the edges only.

Project files, the command line and the GUI fields carry text such as
``"18.5 kg*m^2"`` or ``"1480 rpm"``.  This module turns such text into SI floats
(and back, for display).  Everything else in :mod:`core` works with plain floats
in SI units: kg*m^2, N*m/rad, m, Pa, kg/m^3, rad/s, Hz, N*m*s/rad.

Speeds and frequencies: pint treats a revolution as 2*pi radians, but its
``hertz`` is plain 1/s.  A driveline engineer reads 60 rpm and 1 Hz as the same
thing, so the registry here redefines ``Hz`` as one revolution (cycle) per
second and adds ``cpm`` (cycles per minute).  Angular speeds are then stored in
rad/s and frequencies in Hz, and 1500 rpm, 25 Hz and 157.08 rad/s all agree.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import pint

from .errors import ModelError


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    ureg = pint.UnitRegistry(on_redefinition="ignore")
    ureg.define("hertz = revolution / second = Hz")
    ureg.define("cycles_per_minute = revolution / minute = cpm")
    return ureg


@dataclass(frozen=True)
class Kind:
    """A physical kind of field: its SI unit and a readable name."""

    name: str
    si_unit: str
    example: str


INERTIA = Kind("inertia", "kg*m^2", "18.5 kg*m^2")
LENGTH = Kind("length", "m", "45 mm")
STIFFNESS = Kind("torsional stiffness", "N*m/rad", "2.1 MN*m/rad")
TORQUE = Kind("torque", "N*m", "1.2 kN*m")
DAMPING = Kind("torsional damping", "N*m*s/rad", "50 N*m*s/rad")
MODULUS = Kind("shear modulus", "Pa", "80 GPa")
STRESS = Kind("stress", "Pa", "40 MPa")
DENSITY = Kind("density", "kg/m^3", "7850 kg/m^3")
SPEED = Kind("rotational speed", "rad/s", "1480 rpm")
FREQUENCY = Kind("frequency", "Hz", "100 Hz")
POWER = Kind("power", "W", "250 kW")

KINDS = {k.name: k for k in (INERTIA, LENGTH, STIFFNESS, TORQUE, DAMPING, MODULUS,
                             STRESS, DENSITY, SPEED, FREQUENCY, POWER)}


def _dimensionality(kind: Kind):
    return registry().Unit(kind.si_unit).dimensionality


@lru_cache(maxsize=65536)
def _parse_text(text: str, kind: Kind) -> float:
    """SI float of ``text`` (cached: the desktop program re-reads every value of
    a large train after each edit, and pint takes ~0.1-0.5 ms a parse)."""
    ureg = registry()
    if not text:
        raise ModelError(f"empty; expected a {kind.name} such as '{kind.example}'",
                         None, None)
    try:
        q = ureg.Quantity(text)
    except pint.UndefinedUnitError as exc:
        raise ModelError(f"unknown unit in '{text}' ({exc.unit_names[0] if getattr(exc, 'unit_names', None) else exc})",
                         None, None) from None
    except Exception:
        raise ModelError(f"cannot read '{text}' as a {kind.name} (example: '{kind.example}')",
                         None, None) from None
    if not isinstance(q, pint.Quantity):  # a bare number in a string
        number = float(q)
    elif q.dimensionless and q.units == ureg.dimensionless:
        number = float(q.magnitude)
    else:
        if q.dimensionality != _dimensionality(kind):
            raise ModelError(f"'{text}' has the wrong kind of unit for {kind.name} (example: '{kind.example}')",
                             None, None)
        number = float(q.to(kind.si_unit).magnitude)
    return number


def parse(value, kind: Kind, element: str | None = None, field: str | None = None) -> float:
    """Return ``value`` (text with a unit, or a bare number meaning SI) as an SI float.

    Raises :class:`ModelError` naming ``element`` and ``field`` for an unknown
    unit, a unit of the wrong kind, text that is not a quantity, or a value
    that is NaN or infinite.
    """
    if isinstance(value, bool) or value is None:
        raise ModelError(f"expected a {kind.name} such as '{kind.example}', got {value!r}",
                         element, field)
    if isinstance(value, (int, float)):
        number = float(value)
    elif isinstance(value, str):
        try:
            number = _parse_text(value.strip(), kind)
        except ModelError as exc:
            raise ModelError(exc.message, element, field) from None
    else:
        raise ModelError(f"expected a {kind.name} such as '{kind.example}', got {type(value).__name__}",
                         element, field)
    if not math.isfinite(number):
        raise ModelError(f"value is not a finite number ({value!r})", element, field)
    return number


def parse_number(value, element: str | None = None, field: str | None = None) -> float:
    """A plain dimensionless number (ratio, factor, percent)."""
    if isinstance(value, bool) or value is None:
        raise ModelError(f"expected a number, got {value!r}", element, field)
    if isinstance(value, str):
        try:
            q = registry().Quantity(value.strip())
            number = float(q.to("dimensionless").magnitude) if isinstance(q, pint.Quantity) else float(q)
        except Exception:
            raise ModelError(f"expected a plain number, got '{value}'", element, field) from None
    elif isinstance(value, (int, float)):
        number = float(value)
    else:
        raise ModelError(f"expected a number, got {type(value).__name__}", element, field)
    if not math.isfinite(number):
        raise ModelError(f"value is not a finite number ({value!r})", element, field)
    return number


def check_text(text: str, kind: Kind) -> str | None:
    """None when ``text`` parses as ``kind``; otherwise the problem in words (for GUI fields)."""
    try:
        parse(text, kind)
    except ModelError as exc:
        return exc.message
    return None


def convert(value_si: float, kind: Kind, unit: str) -> float:
    """SI float to a number in ``unit`` (display)."""
    return float(registry().Quantity(value_si, kind.si_unit).to(unit).magnitude)


def format_quantity(value_si: float, kind: Kind, unit: str, digits: int = 4) -> str:
    """Readable text such as '14.2 kg*m^2' in the given display unit."""
    v = convert(value_si, kind, unit)
    return f"{v:.{digits}g} {unit}"


# Display unit systems: the GUI and the review sheet show values in one of these.
UNIT_SYSTEMS = {
    "SI": {
        "inertia": "kg*m^2", "length": "mm", "torsional stiffness": "kN*m/rad",
        "torque": "kN*m", "torsional damping": "N*m*s/rad", "shear modulus": "GPa",
        "stress": "MPa", "density": "kg/m^3", "rotational speed": "rpm", "frequency": "Hz",
        "power": "kW",
    },
    "US": {
        "inertia": "lb*ft^2", "length": "in", "torsional stiffness": "lbf*in/rad",
        "torque": "lbf*ft", "torsional damping": "lbf*in*s/rad", "shear modulus": "ksi",
        "stress": "ksi", "density": "lb/in^3", "rotational speed": "rpm", "frequency": "Hz",
        "power": "hp",
    },
}


def display_unit(kind: Kind, system: str = "SI") -> str:
    return UNIT_SYSTEMS[system][kind.name]


# Kinds for engine, electric-drive and gear data (core.engine, core.electric, core.gears).
PRESSURE = Kind("pressure", "Pa", "18 bar")
MASS = Kind("mass", "kg", "4.2 kg")
MESH_STIFFNESS = Kind("mesh stiffness per face width", "N/m^2", "20 N/(mm*um)")
for _k in (PRESSURE, MASS, MESH_STIFFNESS):
    KINDS[_k.name] = _k
UNIT_SYSTEMS["SI"].update({"pressure": "bar", "mass": "kg", "mesh stiffness per face width": "N/(mm*um)"})
UNIT_SYSTEMS["US"].update({"pressure": "psi", "mass": "lb", "mesh stiffness per face width": "lbf/(in*thou)"})
