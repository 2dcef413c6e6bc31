"""Quantities with units, at the edges only.

Project files, the command line and the GUI fields carry text such as
``"18.5 kg*m^2"`` or ``"1480 rpm"``.  This module turns such text into SI floats
(and back, for display).  Everything else in :mod:`core` works with plain floats
in SI units: kg*m^2, N*m/rad, m, Pa, kg/m^3, rad/s, Hz, N*m*s/rad.

The number grammar (nothing else is read)
-----------------------------------------
::

    quantity := number [spaces] [unit]          a bare number is SI
    number   := [+|-] digits [. [digits]] [(e|E) [+|-] digits]      (also .5)
    unit     := [1 /] factor {(* | /) factor}   no '*' after a '/' at the same level
    factor   := name [power] | ( unit ) [power]
    power    := (^ | **) [+|-] digit            |power| <= 9

There is no arithmetic of any kind ("9**9**9 kg*m^2" is refused at once), no
decimal comma, no digit-group separator (space, comma, apostrophe, thin or
no-break space) and no second number.  Such text is refused with a message
that shows the reading the user probably meant ("write 1.5 MN*m/rad"), or both
readings where two are possible ("1,500 rpm" may be 1500 or 1.5).  A text is
at most ``MAX_TEXT`` characters and a number at most ``MAX_DIGITS`` digits.

Bounds: every value read (any kind, and plain numbers) is finite and at most
``MAX_MAGNITUDE`` (1e30) in size in SI units, and a non-zero number never reads
as zero (``1e-400`` is refused, not rounded to 0).  No quantity of a drive train
comes within many decades of 1e30, and the bound keeps products of values
(J*omega^2, k*theta^2, ratio^2) far from float overflow.  Ranges that are
physically meaningful for one field (a speed ratio, a margin) are the business
of the caller, which knows the field.

Speeds and frequencies: pint treats a revolution as 2*pi radians, but its
``hertz`` is plain 1/s.  A driveline engineer reads 60 rpm and 1 Hz as the same
thing, so ``Hz`` here is one revolution (cycle) per second, and ``cpm`` is a
cycle per minute.  Angular speeds are stored in rad/s and frequencies in Hz,
and 1500 rpm, 25 Hz and 157.08 rad/s all agree.  The trade's spellings ``rpm``,
``RPM``, ``Rpm``, ``r/min``, ``rev/min``, ``cpm``, ``CPM``, ``Hz``, ``rad/s``
are read; SI prefixes stay case-sensitive (``MN`` is mega, ``mN`` milli).  A
radian is dimensionless (as in pint): ``2 MN*m`` reads as a stiffness.  A speed
or frequency whose unit names no angle (``1/min``, ``s^-1``) is refused with
both readings (revolutions or radians per minute).

Speed: the number is read with ``float()`` and multiplied by a conversion
factor cached per unit text (a few microseconds a value).  The factors of the
common units come from a built-in table (each entry is checked against pint in
the tests); pint is imported only when a unit name outside that table is first
met, and then asked about that one name (never about an expression).  Readers of
long trains call :func:`quick_reader` once per kind and then one function per value.
"""
from __future__ import annotations

import math
import re
import threading
from dataclasses import dataclass
from .errors import ModelError

MAX_TEXT = 200          # characters in one quantity text
MAX_DIGITS = 40         # digits in one number
MAX_POWER = 9           # largest |exponent| of a unit (m^3, s^-2)
MAX_NESTING = 4         # parentheses inside a unit
MAX_MAGNITUDE = 1e30    # in SI units, any kind
_MAX_INT = 10 ** 30


# ---------------------------------------------------------------- the pint registry
_registry = None
_registry_lock = threading.Lock()

# Definitions added to pint's defaults (the tests build pint's reference from the same lines).
PINT_DEFINITIONS = (
    "hertz = revolution / second = Hz",
    "cycles_per_minute = revolution / minute = cpm",
    "rev = revolution",
    "RPM = revolution / minute",
    "Rpm = revolution / minute",
    "CPM = revolution / minute",
)


def registry():
    """The pint ``UnitRegistry`` (built once, on first use; importing this module does not
    import pint).  The defaults are loaded into an empty registry and our definitions added
    before pint computes any root unit, so pint's caches agree with the redefined hertz."""
    global _registry
    if _registry is None:
        with _registry_lock:
            if _registry is None:
                import os

                import pint

                ureg = pint.UnitRegistry(None, on_redefinition="ignore")
                ureg.load_definitions(os.path.join(os.path.dirname(pint.__file__), "default_en.txt"))
                for line in PINT_DEFINITIONS:
                    ureg.define(line)
                _registry = ureg
    return _registry


# ---------------------------------------------------------------- kinds
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
TIME = Kind("time", "s", "0.5 s")
ANGLE = Kind("angle", "rad", "30 deg")
PRESSURE = Kind("pressure", "Pa", "10 bar")
# gear-mesh stiffness per unit face width (ISO 6336 writes c' and c_gamma in N/(mm*um))
MESH_STIFFNESS = Kind("mesh stiffness", "N/m^2", "14 N/(mm*um)")

KINDS = {k.name: k for k in (INERTIA, LENGTH, STIFFNESS, TORQUE, DAMPING, MODULUS,
                             STRESS, DENSITY, SPEED, FREQUENCY, POWER, TIME, ANGLE,
                             PRESSURE, MESH_STIFFNESS)}


# ---------------------------------------------------------------- built-in unit table
# name -> (factor to SI as an exact fraction, power of pi in the factor, dimensions).
# Dimensions are sorted (base, exponent) pairs over kg, m, s, A, K, mol, cd and rad.
# Every entry is checked against pint in tests/test_units_grammar.py.
def _dims(**exponents) -> tuple:
    return tuple(sorted((k, v) for k, v in exponents.items() if v))


def _build_table() -> dict:
    from fractions import Fraction

    lb = Fraction("0.45359237")             # kg, exact by definition (NIST SP 811)
    lbf = lb * Fraction("9.80665")          # N, with standard gravity (exact)
    inch, foot = Fraction("0.0254"), Fraction("0.3048")   # m, exact
    psi = lbf / inch ** 2
    table = {}
    length, mass, time = _dims(m=1), _dims(kg=1), _dims(s=1)
    force = _dims(kg=1, m=1, s=-2)
    pressure = _dims(kg=1, m=-1, s=-2)
    energy = _dims(kg=1, m=2, s=-2)
    power = _dims(kg=1, m=2, s=-3)
    angle, turning = _dims(rad=1), _dims(rad=1, s=-1)
    scale = {"": 1, "k": 10 ** 3, "M": 10 ** 6, "G": 10 ** 9, "c": Fraction(1, 100),
             "m": Fraction(1, 10 ** 3), "u": Fraction(1, 10 ** 6), "\u00b5": Fraction(1, 10 ** 6),
             "\u03bc": Fraction(1, 10 ** 6), "n": Fraction(1, 10 ** 9)}
    prefixed = (  # base unit, its factor, power of pi, dimensions, prefixes in use
        ("m", 1, 0, length, ("", "k", "c", "m", "u", "\u00b5", "\u03bc", "n")),
        ("g", Fraction(1, 1000), 0, mass, ("", "k", "m")),
        ("N", 1, 0, force, ("", "k", "M", "G", "m")),
        ("Pa", 1, 0, pressure, ("", "k", "M", "G")),
        ("bar", 10 ** 5, 0, pressure, ("", "m")),
        ("J", 1, 0, energy, ("", "k", "M")),
        ("W", 1, 0, power, ("", "k", "M")),
        ("s", 1, 0, time, ("", "m")),
        ("Hz", 2, 1, turning, ("", "k")),       # one revolution (2 pi rad) per second
        ("rad", 1, 0, angle, ("", "m")),
    )
    for base, factor, pi, dims, prefixes in prefixed:
        for p in prefixes:
            table[p + base] = (Fraction(factor) * scale[p], pi, dims)
    plain = (
        ("t", 1000, 0, mass),
        ("min", 60, 0, time), ("h", 3600, 0, time),
        ("deg", Fraction(1, 180), 1, angle), ("\u00b0", Fraction(1, 180), 1, angle),
        ("rev", 2, 1, angle), ("revolution", 2, 1, angle), ("cycle", 2, 1, angle),
        ("turn", 2, 1, angle),
        ("rpm", Fraction(1, 30), 1, turning), ("RPM", Fraction(1, 30), 1, turning),
        ("Rpm", Fraction(1, 30), 1, turning), ("cpm", Fraction(1, 30), 1, turning),
        ("CPM", Fraction(1, 30), 1, turning), ("rps", 2, 1, turning),
        ("in", inch, 0, length), ("ft", foot, 0, length), ("uin", inch / 10 ** 6, 0, length),
        ("lb", lb, 0, mass), ("lbf", lbf, 0, force),
        ("psi", psi, 0, pressure), ("ksi", 1000 * psi, 0, pressure),
        ("hp", 550 * foot * lbf, 0, power),     # mechanical horsepower, 550 ft*lbf/s
        ("%", Fraction(1, 100), 0, ()),
    )
    for name, factor, pi, dims in plain:
        table[name] = (Fraction(factor), pi, dims)
    return table


_table: dict | None = None


def builtin_units() -> dict:
    """The built-in unit table (built on first use): name -> (Fraction, pi power, dims)."""
    global _table
    if _table is None:
        _table = _build_table()
    return _table

# whole unit texts read as another (the trade's spelling -> the table's)
_UNIT_ALIASES = {"r/min": "rev/min"}

# unit names refused with the spelling meant (pint would read 'Nm' as a wavenumber unit)
_MISSPELLED = {f"{p}Nm": f"{p}N*m" for p in ("", "k", "M", "G", "m")}
_MISSPELLED.update({f"{p}Nms": f"{p}N*m*s" for p in ("", "k")})
_MISSPELLED["rads"] = "rad"        # pint: the radiation dose unit

# unit names that mean different things to different readers
_AMBIGUOUS_NAMES = {
    name: "a metric tonne (1000 kg) or a short ton (907.18474 kg)? write t for the metric tonne"
    for name in ("ton", "tons")
}

_PINT_BASES = {"meter": "m", "gram": "kg", "second": "s", "ampere": "A", "kelvin": "K",
               "mole": "mol", "candela": "cd", "radian": "rad"}


class _Refused(Exception):
    """Text that is not read; ``message`` says why, ``hint`` what to write instead."""

    def __init__(self, message: str, hint: str = ""):
        super().__init__(message)
        self.message = message
        self.hint = hint


class _AngleMissing(_Refused):
    """A speed or frequency whose unit names no angle (revolutions or radians?)."""


_pint_atoms: dict = {}


def _pint_atom(name: str):
    """(factor, pi power, dims) of one unit name by pint, or None when pint does not know it."""
    hit = _pint_atoms.get(name)
    if hit is None:
        from fractions import Fraction

        hit = False
        try:
            factor, root = registry().get_root_units(name)
            frac, dims = Fraction(factor), {}
            for base, exp in root._units.items():
                if float(exp) != int(exp):
                    raise ValueError("fractional power")
                exp = int(exp)
                sym = _PINT_BASES.get(base, base)
                if base == "gram":
                    frac *= Fraction(1, 1000) ** exp
                dims[sym] = exp
            hit = (frac, 0, tuple(sorted(dims.items())))
        except Exception:  # pint: undefined, not a unit, offset unit; anything -> not read
            hit = False
        if len(_pint_atoms) < 4096:
            _pint_atoms[name] = hit
    return hit or None


def _atom(name: str):
    hit = builtin_units().get(name)
    if hit is not None:
        return hit
    if name in _MISSPELLED:
        raise _Refused(f"'{name}' is not read as a unit")
    if name in _AMBIGUOUS_NAMES:
        raise _Refused(f"the unit '{name}' is ambiguous", _AMBIGUOUS_NAMES[name])
    hit = _pint_atom(name)
    if hit is None:
        near = [k for k in builtin_units() if k.casefold() == name.casefold()]
        hint = f"unit names are case-sensitive: did you mean '{near[0]}'?" if near else ""
        raise _Refused(f"unknown unit '{name}'", hint)
    return hit


# ---------------------------------------------------------------- unit expressions
_UNIT_TOKEN = re.compile(r"(?P<sp>\s+)|(?P<name>[A-Za-z\u00b5\u03bc\u00b0][A-Za-z_\u00b5\u03bc\u00b0]*|%)"
                         r"|(?P<op>\*\*|[*/^()])"
                         r"|(?P<int>[+-]?[0-9]+)")
_SUPERSCRIPT = str.maketrans("\u2070\u00b9\u00b2\u00b3\u2074\u2075\u2076\u2077\u2078\u2079\u207b",
                             "0123456789-")


def _tokens(unit: str) -> list[tuple[str, str, int]]:
    """(type, text, position) tokens of a unit text; spaces only beside operators."""
    out, pos = [], 0
    while pos < len(unit):
        m = _UNIT_TOKEN.match(unit, pos)
        if m is None:
            raise _Refused(f"'{unit[pos]}' is not read in a unit")
        out.append((m.lastgroup, m.group(), pos))
        pos = m.end()
    tokens = []
    for i, tok in enumerate(out):
        if tok[0] != "sp":
            tokens.append(tok)
            continue
        before = out[i - 1] if i else None
        after = out[i + 1] if i + 1 < len(out) else None
        if (before and after and before[0] in ("name", "int") or before and before[1] == ")") \
                and after and (after[0] in ("name", "int") or after[1] == "("):
            raise _Refused("units are joined by '*' or '/'")
    return tokens


def _suggest_unit(unit: str) -> str | None:
    """The unit the user probably meant (N·m -> N*m, kg m² -> kg*m^2), if that reads."""
    s = unit.replace("\u00b7", "*").replace("\u22c5", "*").replace("\u00d7", "*").replace("\u2212", "-")
    s = re.sub(r"([\u2070\u00b9\u00b2\u00b3\u2074-\u2079\u207b]+)",
               lambda m: "^" + m.group(1).translate(_SUPERSCRIPT), s)
    s = re.sub(r"(?<=[A-Za-z])(?=[0-9])", "^", s)
    s = re.sub(r"[A-Za-z]+", lambda m: _MISSPELLED.get(m.group(), m.group()), s)
    s = re.sub(r"(?<=[A-Za-z0-9)])\s+(?=[A-Za-z(\u00b5\u03bc])", "*", s.strip())
    s = re.sub(r"\s*([*/^])\s*", r"\1", s)
    if s == unit:
        return None
    try:
        _resolve_unit(s)
    except _Refused:
        return None
    return s


class _UnitParser:
    """Recursive descent over the unit grammar; values are (Fraction, pi power, dims dict)."""

    def __init__(self, unit: str):
        self.unit = unit
        self.tokens = _tokens(unit)
        self.i = 0
        self.depth = 0

    def peek(self, k: int = 0):
        j = self.i + k
        return self.tokens[j] if j < len(self.tokens) else (None, "", len(self.unit))

    def take(self):
        tok = self.peek()
        self.i += 1
        return tok

    def run(self):
        value = self.expr()
        if self.i < len(self.tokens):
            tok = self.peek()
            raise _Refused(f"'{tok[1]}' is not read here")
        return value

    def expr(self):
        from fractions import Fraction

        start = self.peek()[2]
        if self.peek()[1] == "1" and self.peek(1)[1] == "/":
            self.take()
            value = (Fraction(1), 0, {})
        else:
            value = self.factor()
        slash = None
        while self.peek()[1] in ("*", "/"):
            op = self.take()
            if op[1] == "*" and slash is not None:
                end = self._level_end()
                a = f"({self.unit[start:op[2]].strip()}){self.unit[op[2]:end].strip()}"
                b = f"{self.unit[start:slash + 1].strip()}({self.unit[slash + 1:end].strip()})"
                raise _Refused(f"'{self.unit[start:end].strip()}' may be read as {a} or {b}",
                               "write the one meant, with parentheses")
            if op[1] == "/":
                slash = op[2]
            value = _combine(value, self.factor(), -1 if op[1] == "/" else 1)
        return value

    def _level_end(self) -> int:
        depth = 0
        for kind, text, pos in self.tokens[self.i:]:
            if text == "(":
                depth += 1
            elif text == ")":
                if depth == 0:
                    return pos
                depth -= 1
        return len(self.unit)

    def factor(self):
        kind, text, pos = self.take()
        if kind == "name":
            value = _atom(text)
            value = (value[0], value[1], dict(value[2]))
        elif text == "(":
            self.depth += 1
            if self.depth > MAX_NESTING:
                raise _Refused("too many parentheses")
            value = self.expr()
            if self.take()[1] != ")":
                raise _Refused("a '(' is not closed")
            self.depth -= 1
        elif kind is None:
            raise _Refused("a unit is missing after an operator")
        else:
            raise _Refused(f"'{text}' is not read here; a unit name is expected")
        if self.peek()[1] in ("^", "**"):
            self.take()
            kind, text, _pos = self.take()
            if kind != "int" or len(text.lstrip("+-")) > 1 or abs(int(text)) > MAX_POWER:
                raise _Refused(f"a unit's power is a whole number from -{MAX_POWER} to {MAX_POWER}")
            value = _power(value, int(text))
        return value


def _combine(a, b, sign: int):
    dims = dict(a[2])
    for k, v in b[2].items():
        dims[k] = dims.get(k, 0) + sign * v
    return (a[0] * b[0] ** sign, a[1] + sign * b[1], {k: v for k, v in dims.items() if v})


def _power(a, n: int):
    from fractions import Fraction

    if n == 0:
        return (Fraction(1), 0, {})
    return (a[0] ** n, a[1] * n, {k: v * n for k, v in a[2].items()})


_resolved: dict = {}


def _resolve_unit(unit: str):
    """(Fraction, pi power, dims tuple) of a unit text (cached, errors too)."""
    hit = _resolved.get(unit)
    if hit is None:
        from fractions import Fraction

        try:
            if unit == "":
                hit = (Fraction(1), 0, ())
            else:
                text = _UNIT_ALIASES.get(re.sub(r"\s+", "", unit), unit)
                frac, pi, dims = _UnitParser(text).run()
                hit = (frac, pi, tuple(sorted(dims.items())))
        except _Refused as exc:
            hit = exc
        except RecursionError:  # cannot happen within MAX_TEXT and MAX_NESTING; belt and braces
            hit = _Refused("too many parentheses")
        if len(_resolved) > 8192:
            _resolved.clear()
        _resolved[unit] = hit
    if isinstance(hit, _Refused):
        raise type(hit)(hit.message, hit.hint)  # a fresh exception: no traceback piles up
    return hit


def _without_angle(dims: tuple) -> tuple:
    return tuple(d for d in dims if d[0] != "rad")


def _angle(dims: tuple) -> int:
    return dict(dims).get("rad", 0)


# per SI unit of a kind: unit text -> (mul, div, turn) so that SI = number * mul / div * turn;
# mul/div is the rational part of the factor (exact integers where they fit, so that
# 45 mm is 45/1000 m, correctly rounded) and turn the power of pi (60 rpm is exactly 2*pi rad/s)
_ready: dict[str, dict[str, tuple[float, float, float]]] = {}


def _factor(unit: str, kind: Kind) -> tuple[float, float, float]:
    """(mul, div, turn) that take a number in ``unit`` to ``kind``'s SI unit; raises _Refused."""
    cache = _ready.get(kind.si_unit)
    if cache is None:
        cache = _ready.setdefault(kind.si_unit, {})
    hit = cache.get(unit)
    if hit is not None:
        return hit
    if unit == "":  # a bare number is in the kind's SI unit
        cache[unit] = (1.0, 1.0, 1.0)
        return cache[unit]
    frac, pi, dims = _resolve_unit(unit)
    kfrac, kpi, kdims = _resolve_unit(kind.si_unit)
    if _without_angle(dims) != _without_angle(kdims):
        raise _Refused(f"wrong kind of unit for {kind.name} (example: '{kind.example}')")
    if _angle(dims) == 0 and _angle(kdims) != 0 and _without_angle(kdims) in ((("s", -1),), ()):
        raise _AngleMissing("names no angle")
    ratio, pi = frac / kfrac, pi - kpi
    num, den = ratio.numerator, ratio.denominator
    if num < 2 ** 53 and den < 2 ** 53:
        mul, div = float(num), float(den)
    else:
        mul, div = float(ratio), 1.0
    hit = (mul, div, math.pi ** pi)
    if len(cache) > 4096:
        cache.clear()
    cache[unit] = hit
    return hit


# ---------------------------------------------------------------- numbers
_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_FAST = re.compile(rf"({_NUMBER})\s*(.*)", re.DOTALL)
_NUMBER_AT = re.compile(_NUMBER)
_NON_FINITE = re.compile(r"[+-]?(?:[nN][aA][nN]|[iI][nN][fF](?:[iI][nN][iI][tT][yY])?)(?![A-Za-z])")
_BLOB = re.compile(r"[+-]?[0-9]*(?:[_.,'\u2019\u00a0\u2009\u202f\u2007\u2008\u200a ][0-9]+)*")
_SEPARATOR_NAMES = {",": "comma", ".": "point", "'": "apostrophe", "\u2019": "apostrophe", "_": "underscore",
                    " ": "space", "\u00a0": "no-break space", "\u2009": "thin space",
                    "\u202f": "narrow no-break space", "\u2007": "figure space",
                    "\u2008": "punctuation space", "\u200a": "hair space"}
_UNIT_ONE = re.compile(r"\s1\s*/")
_MINUS_LOOKALIKES = "\u2212\u2013\u2010\u2011\u2012\u2014\ufe63\uff0d"


def _a(noun: str) -> str:
    return ("an " if noun[:1] in "aeiou" else "a ") + noun


def _show(text: str) -> str:
    return text if len(text) <= 40 else text[:37] + "..."


def _grouped(groups: list[str]) -> bool:
    """Digit groups as a thousands separator makes them: 1-3 digits, then threes."""
    return 1 <= len(groups[0]) <= 3 and groups[0][0] != "0" and all(len(g) == 3 for g in groups[1:])


def _separator_problem(blob: str, tail: str, text: str) -> str | None:
    """Why a number written with separators is not read, and what to write; None when the
    number part is an ordinary number (at most one point, no other separator)."""
    parts = re.split(r"([^0-9+-])", blob)
    sign = parts[0][:1] if parts[0][:1] in "+-" else ""
    groups = [parts[0].lstrip("+-")] + parts[2::2]
    seps = parts[1::2]
    if not seps or seps == ["."]:
        return None
    shown = _show(text)
    # a final point or comma that occurs once is the decimal mark
    decimal = seps[-1] if seps[-1] in ".," and seps.count(seps[-1]) == 1 else None
    int_groups, frac = (groups[:-1], groups[-1]) if decimal else (groups, None)
    group_seps = seps[:-1] if decimal else seps
    kinds = {"space" if c.isspace() else _SEPARATOR_NAMES[c] for c in group_seps}

    def written(g, f):
        return f"{sign}{''.join(g)}{'.' + f if f is not None else ''}{tail}"

    if not group_seps:  # one comma alone: a decimal comma, or a thousands comma
        a, b = groups
        if decimal == "," and len(b) == 3 and _grouped([a, b]):
            return (f"'{shown}' is ambiguous: the comma may separate digit groups "
                    f"({written([a, b], None)}) or be a decimal comma ({written([a], b)}); "
                    f"write {written([a, b], None)} or {written([a], b)}")
        return f"a decimal comma is not read ('{shown}'); write {written([a], b)}"
    if len(kinds) == 1 and _grouped(int_groups):
        names = "/".join(sorted({_SEPARATOR_NAMES[c] for c in group_seps}))
        what = "digit-group separators" + (" and a decimal comma" if decimal == "," else "")
        return f"{what} are not read ('{shown}', {names}); write {written(int_groups, frac)}"
    if any(c.isspace() for c in seps):
        first, second = blob.split()[:2]
        return (f"two numbers in a row ('{shown}': {first} and {second}); "
                f"give one number, then its unit")
    if set(seps) == {"."}:
        return f"more than one decimal point ('{shown}'); write one number with one decimal point"
    return (f"'{shown}' is not one number: write the number with a decimal point "
            f"and no separators (such as 1234.5)")


def _split(text: str) -> tuple[str, str]:
    """(number text, unit text) of a stripped quantity text, or _Refused naming the problem."""
    if len(text) > MAX_TEXT:
        raise _Refused(f"too long ({len(text)} characters; a quantity has at most {MAX_TEXT}): "
                       f"'{_show(text)}'")
    if _NON_FINITE.match(text):
        raise _Refused(f"not a finite number ('{_show(text)}')")
    if text[0] in _MINUS_LOOKALIKES:
        raise _Refused(f"'{text[0]}' is not read as a minus sign; write -{_show(text[1:])}")
    blob = _BLOB.match(text).group()
    unit_one = _UNIT_ONE.search(blob + text[len(blob):len(blob) + 4])
    if unit_one:  # '1500 1/min': the '1' begins the unit
        blob = blob[:unit_one.start()]
    if any(c.isdigit() for c in blob):
        problem = _separator_problem(blob, text[len(blob):], text)
        if problem:
            raise _Refused(problem)
    m = _NUMBER_AT.match(text)
    if m is None:
        raise _Refused(f"'{_show(text)}' does not start with a number")
    number = m.group()
    mantissa = re.split("[eE]", number)[0]
    if sum(c.isdigit() for c in mantissa) > MAX_DIGITS:
        raise _Refused(f"a number has at most {MAX_DIGITS} digits ('{_show(text)}')")
    rest = text[m.end():]
    lead = rest.lstrip()
    if rest[:1] in (",", "'", "\u2019", "_"):
        after = rest[1:].strip()
        raise _Refused(f"{_a(_SEPARATOR_NAMES[rest[0]])} after the number is not read ('{_show(text)}'); "
                       f"write {number}{' ' + after if after else ''}")
    if lead:
        op = re.match(r"(\*\*|\^|\*|/|x|\u00d7|\u00b7|\u22c5)\s*[-+(.0-9]", lead)
        unit_one = re.match(r"1\s*/\s*[A-Za-z_(\u00b5\u03bc\u00b0]", lead)
        if op and not (op.group(1) == "/" and unit_one):
            raise _Refused(f"arithmetic is not evaluated ('{op.group(1)}' in '{_show(text)}'); "
                           f"give one number, then its unit (powers of ten as 1e5)")
        if (lead[0].isdigit() or lead[0] in "+-." and lead[1:2].isdigit()) and not unit_one:
            nxt = _NUMBER_AT.match(lead)
            second = nxt.group() if nxt else lead.split()[0]
            raise _Refused(f"two numbers in a row ('{_show(text)}': {number} and {second}); "
                           f"give one number, then its unit")
    return number, lead


def _number(number: str, text: str) -> float:
    x = float(number)
    if not math.isfinite(x):
        raise _Refused(f"not a finite number ('{_show(text)}' is beyond the floating-point range)")
    return x


def _zero(number: str) -> bool:
    """Whether the number as written is zero (its mantissa has no digit other than 0)."""
    return not any(c in "123456789" for c in re.split("[eE]", number)[0])


def _bounded(x: float, text, unit: str, typed_zero: bool = True) -> float:
    """``x`` if finite and within MAX_MAGNITUDE; a non-zero number must not read as zero."""
    if x == 0.0:
        if not typed_zero:
            raise _Refused(f"'{_show(str(text))}' is too small to be represented (it would read "
                           f"as 0); write 0 if zero is meant")
        return 0.0
    if not math.isfinite(x) or abs(x) > MAX_MAGNITUDE:
        raise _Refused(f"'{_show(str(text))}' is beyond the range read (magnitudes up to "
                       f"{MAX_MAGNITUDE:g}{' ' + unit if unit else ''})")
    return x


def _json_number(value, unit: str) -> float:
    """A number from JSON (int or float), bounded."""
    if isinstance(value, int):
        if not -_MAX_INT <= value <= _MAX_INT:
            digits = int(abs(value).bit_length() * math.log10(2)) + 1
            raise _Refused(f"a whole number of about {digits} digits is beyond the range read "
                           f"(magnitudes up to {MAX_MAGNITUDE:g}{' ' + unit if unit else ''})")
        value = float(value)
    if not math.isfinite(value):
        raise _Refused(f"value is not a finite number ({value!r})")
    return _bounded(value, repr(value), unit)


def _speed_readings(number: str, unit: str, kind: Kind) -> str:
    """Message for a speed or frequency whose unit names no angle (1/min, s^-1)."""
    u = re.sub(r"\s+", "", unit)
    m = re.fullmatch(r"1/(.+)|(.+?)(?:\^|\*\*)-1", u)
    per = (m.group(1) or m.group(2)) if m else None
    if per in ("min", "s"):
        rev = {"min": "rpm", "s": "Hz"}[per]
        return (f"'{number} {unit}' does not say whether it counts revolutions or radians: "
                f"write {number} {rev} (revolutions) or {number} rad/{per} (radians)")
    if per:
        return (f"'{number} {unit}' does not say whether it counts revolutions or radians: "
                f"write {number} rev/{per} or {number} rad/{per}")
    return (f"'{number} {unit}' names no angle: write the unit with rev or rad "
            f"(such as rpm, Hz or rad/s) for {_a(kind.name)}")


def _read_quantity(text: str, kind: Kind) -> float:
    """SI float of a quantity text (the full, slow reading with every check)."""
    text = text.strip()
    if not text:
        raise _Refused(f"empty; expected {_a(kind.name)} such as '{kind.example}'")
    number, unit = _split(text)
    try:
        mul, div, turn = _factor(unit, kind)
    except _Refused as exc:
        if isinstance(exc, _AngleMissing):
            raise _Refused(_speed_readings(number, unit, kind)) from None
        suggestion = _suggest_unit(unit)
        if suggestion is not None:
            raise _Refused(f"{exc.message} in '{_show(text)}'; write {number} {suggestion}") from None
        if exc.message.startswith("wrong kind"):
            raise _Refused(f"'{_show(text)}' has the {exc.message}") from None
        hint = exc.hint or f"example: '{kind.example}'"
        raise _Refused(f"{exc.message} in '{_show(text)}' ({hint})") from None
    x = _number(number, text) * mul / div * turn
    return _bounded(x, text, kind.si_unit, _zero(number))


def _fail(exc: _Refused, element, field):
    raise ModelError(exc.message, element, field) from None


# ---------------------------------------------------------------- public reading
def quick(value, kind: Kind) -> float | None:
    """The SI float :func:`parse` gives for ``value`` in its common forms, or None.

    The forms: a JSON number (int or float) within the magnitudes read, and text of a
    number, one space and a unit text already read for this kind ("18.5 kg*m^2"),
    giving a non-zero magnitude in range.  None means "not read here", never "wrong":
    :func:`parse` then reads the value in full (and explains a refusal).  The per-value
    cost is two dict lookups and ``float()``, for readers of long trains."""
    return quick_reader(kind)(value)


# per SI unit of a kind: quick() as a function of the value alone
_readers: dict = {}


def quick_reader(kind: Kind):
    """``lambda value: quick(value, kind)``, made once per SI unit (a loop over the values
    of a long train calls it without looking the kind up each time)."""
    read = _readers.get(kind.si_unit)
    if read is None:
        read = _readers.setdefault(kind.si_unit, _make_reader(_ready.setdefault(kind.si_unit, {})))
    return read


def _make_reader(cache: dict):
    def read(value) -> float | None:
        if type(value) is str:
            # split at the first space; float() reads exactly the number grammar on ASCII
            # text without '_' (nan and inf fail the range test)
            number, _sep, unit = value.partition(" ")
            hit = cache.get(unit)
            if hit is None or len(number) > 25 or not number.isascii() or "_" in number:
                return None
            try:
                x = float(number) * hit[0] / hit[1] * hit[2]
            except ValueError:
                return None
            return x if 0.0 < abs(x) <= MAX_MAGNITUDE else None  # zero: was it written as zero?
        if type(value) is float:
            return value if abs(value) <= MAX_MAGNITUDE else None  # NaN and inf fail the test
        if type(value) is int and -_MAX_INT <= value <= _MAX_INT:
            return float(value)
        return None
    return read


def parse(value, kind: Kind, element: str | None = None, field: str | None = None) -> float:
    """Return ``value`` (text with a unit, or a bare number meaning SI) as an SI float.

    Text follows the number grammar in the module docstring.  Raises
    :class:`ModelError` naming ``element`` and ``field`` for text outside the grammar
    (with the reading probably meant), an unknown unit, a unit of the wrong kind, or a
    value that is not finite or outside the magnitudes read.
    """
    x = quick_reader(kind)(value)
    if x is not None:
        return x
    if type(value) is str:
        # "45mm", " 45 mm": the grammar's number by a regular expression, a unit text
        #    already read for this kind and a magnitude in range; anything else takes the
        #    full reading below (which explains refusals)
        cache = _ready.get(kind.si_unit)
        if cache is not None and len(value) <= MAX_TEXT:
            m = _FAST.fullmatch(value)
            if m is not None and len(m[1]) <= 25:
                hit = cache.get(m[2])
                if hit is not None:
                    x = float(m[1]) * hit[0] / hit[1] * hit[2]
                    if 0.0 < abs(x) <= MAX_MAGNITUDE:  # zero: was it written as zero?
                        return x
        try:
            return _read_quantity(value, kind)
        except _Refused as exc:
            _fail(exc, element, field)
    if isinstance(value, bool) or value is None:
        raise ModelError(f"expected {_a(kind.name)} such as '{kind.example}', got {value!r}",
                         element, field)
    if isinstance(value, (int, float)):
        try:
            return _json_number(value, kind.si_unit)
        except _Refused as exc:
            _fail(exc, element, field)
    if isinstance(value, str):  # a str subclass
        return parse(str(value), kind, element, field)
    raise ModelError(f"expected {_a(kind.name)} such as '{kind.example}', got {type(value).__name__}",
                     element, field)


def _plain(value, element, field, what: str, allow_percent: bool) -> tuple[float, bool]:
    """(number, written with '%') of a plain number or, if allowed, a percentage."""
    if isinstance(value, bool) or value is None:
        raise ModelError(f"expected {what}, got {value!r}", element, field)
    try:
        if isinstance(value, (int, float)):
            return _json_number(value, ""), False
        if not isinstance(value, str):
            raise ModelError(f"expected {what}, got {type(value).__name__}", element, field)
        text = value.strip()
        if not text:
            raise _Refused(f"empty; expected {what}")
        number, unit = _split(text)
        percent = unit == "%"
        if unit and not (percent and allow_percent):
            if percent:
                raise _Refused(f"'{_show(text)}': this field takes a plain number, not a percentage")
            raise _Refused(f"expected {what} without a unit, got '{_show(text)}'")
        return _bounded(_number(number, text), text, "", _zero(number)), percent
    except _Refused as exc:
        _fail(exc, element, field)


def parse_number(value, element: str | None = None, field: str | None = None) -> float:
    """A plain dimensionless number (ratio, factor, order): a JSON number or a text holding
    one number of the grammar and nothing else (no unit, no '%')."""
    return _plain(value, element, field, "a plain number", False)[0]


def parse_percent(value, element: str | None = None, field: str | None = None) -> float:
    """A percentage field: ``10``, ``"10"`` and ``"10 %"`` all give 10.0."""
    return _plain(value, element, field, "a percentage such as '10 %'", True)[0]


def parse_fraction(value, element: str | None = None, field: str | None = None) -> float:
    """A tolerance or share as a fraction: ``0.2``, ``"0.2"`` and ``"20 %"`` all give 0.2."""
    x, percent = _plain(value, element, field, "a fraction such as 0.2 or '20 %'", True)
    return x / 100.0 if percent else x


def check_text(text: str, kind: Kind) -> str | None:
    """None when ``text`` parses as ``kind``; otherwise the problem in words (for GUI fields)."""
    try:
        parse(text, kind)
    except ModelError as exc:
        return exc.message
    return None


def convert(value_si: float, kind: Kind, unit: str) -> float:
    """SI float to a number in ``unit`` (display).  Raises ModelError for a unit that does
    not read or is of another kind."""
    try:
        mul, div, turn = _factor(unit, kind)
    except _Refused as exc:
        raise ModelError(f"cannot show {_a(kind.name)} in '{unit}': {exc.message}") from None
    return float(value_si) / turn * div / mul


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
        "power": "kW", "time": "s", "angle": "deg", "pressure": "bar",
        "mesh stiffness": "N/(mm*um)",
    },
    "US": {
        "inertia": "lb*ft^2", "length": "in", "torsional stiffness": "lbf*in/rad",
        "torque": "lbf*ft", "torsional damping": "lbf*in*s/rad", "shear modulus": "ksi",
        "stress": "ksi", "density": "lb/in^3", "rotational speed": "rpm", "frequency": "Hz",
        "power": "hp", "time": "s", "angle": "deg", "pressure": "psi",
        "mesh stiffness": "lbf/(in*uin)",
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
