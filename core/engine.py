"""Reciprocating engines: the torque harmonics of every cylinder from its physics.

Per cylinder the torque on the crank is the tangential gas torque plus the
inertia torque of the reciprocating mass, both exact for the crank-slider
mechanism (massless rod, centred gudgeon pin):

* piston travel from top dead centre x(theta) = r (1 - cos theta) + l (1 - sqrt(1 - lambda^2 sin^2 theta)),
  lambda = r / l;  dx/dtheta = r g(theta),  g = sin theta + lambda sin theta cos theta / sqrt(1 - lambda^2 sin^2 theta);
* gas torque (virtual work of the gas force on the piston)  T_g = (p - p_crankcase) A r g(theta);
* inertia torque at constant speed omega  T_i = -m omega^2 r^2 g(theta) g'(theta).

(Crank-slider kinematics and the two torques as in the standard engine-dynamics
texts, e.g. C. F. Taylor, The Internal-Combustion Engine in Theory and Practice,
vol. 2, ch. "engine balance" — from memory.)  The inertia torque is not
truncated to the usual series in lambda: it is sampled exactly over a
revolution and Fourier-analysed by FFT, so every order carries all powers of
lambda.  The gas torque comes either from a cylinder pressure curve (pressure
against crank angle over a working cycle, interpolated linearly and
Fourier-analysed the same way) or from harmonic coefficients of the tangential
pressure per order given from the engine builder's data.

Phase convention (the one :mod:`core.response` uses): a cylinder's torque of
order n is Re(C_n exp(i n theta)), theta the crank angle after that cylinder's
firing top dead centre; a cylinder firing phi degrees after the first
contributes C_n exp(-i n phi) (the vector-sum method of engine torsional
analysis).  A four-stroke cycle spans two revolutions, so its gas torque has
half orders; the inertia torque repeats every revolution and has whole orders
only.  Inertia harmonics grow with speed squared and are stored per (rad/s)^2.

Units: SI — m, kg, Pa, N*m, rad/s; angles in the project file in degrees.
"""
from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass, replace
from functools import lru_cache
from pathlib import Path

import numpy as np

from . import units as u
from .errors import ModelError

TWO_PI = 2.0 * np.pi
DEFAULT_HIGHEST_ORDER = 12.0  # orders screened up to 12 (common practice, no source)
_INERTIA_SAMPLES = 4096  # per revolution: a smooth periodic function, spectral accuracy
_CURVE_SAMPLES_PER_DEGREE = 20  # resampling of a pressure curve (piecewise linear)
_MAX_ORDER = 100.0


# ----------------------------------------------------------------- kinematics
def slider_factor(theta, rod_ratio: float):
    """g(theta) = (dx/dtheta) / r of the crank-slider, exact; theta in rad, rod_ratio = r / l.

    The tangential (torque-producing) force on the crank pin per unit force on
    the piston: sin(theta + beta) / cos(beta), sin beta = lambda sin theta.
    """
    theta = np.asarray(theta, float)
    s, c = np.sin(theta), np.cos(theta)
    return s + rod_ratio * s * c / np.sqrt(1.0 - (rod_ratio * s) ** 2)


def slider_factor_slope(theta, rod_ratio: float):
    """dg/dtheta, exact: cos theta + lambda cos 2theta / q + lambda^3 sin^2 cos^2 / q^3, q = sqrt(1 - lambda^2 sin^2)."""
    theta = np.asarray(theta, float)
    s, c = np.sin(theta), np.cos(theta)
    q = np.sqrt(1.0 - (rod_ratio * s) ** 2)
    return c + rod_ratio * np.cos(2 * theta) / q + rod_ratio ** 3 * (s * c) ** 2 / q ** 3


def piston_travel(theta, crank_radius: float, rod_length: float):
    """Piston travel from top dead centre, m (exact crank-slider)."""
    theta = np.asarray(theta, float)
    lam = crank_radius / rod_length
    return crank_radius * (1 - np.cos(theta)) + rod_length * (1 - np.sqrt(1 - (lam * np.sin(theta)) ** 2))


def inertia_torque(theta, crank_radius: float, rod_length: float, mass: float, omega: float = 1.0):
    """Torque on the crank from one cylinder's reciprocating mass at constant speed, N*m.

    T = -m omega^2 r^2 g(theta) g'(theta) (exact; positive drives the crank).
    """
    lam = crank_radius / rod_length
    return -mass * omega ** 2 * crank_radius ** 2 * slider_factor(theta, lam) * slider_factor_slope(theta, lam)


def _harmonics(samples: np.ndarray, revolutions: int):
    """Mean and complex coefficients C_k (k >= 1) of f(theta) = mean + sum Re(C_k exp(i k theta / revolutions))
    from equally spaced samples over one period of ``revolutions`` crank revolutions."""
    n = len(samples)
    X = np.fft.rfft(samples) / n
    return float(X[0].real), 2.0 * X[1:]


def inertia_torque_orders(crank_radius: float, rod_length: float, mass: float,
                          highest_order: float = DEFAULT_HIGHEST_ORDER):
    """Whole orders 1..highest_order of one cylinder's inertia torque and their coefficients
    per (rad/s)^2: T(theta) = omega^2 sum Re(C_n exp(i n theta)).  Numeric Fourier series of
    the exact expression (FFT over one revolution, 4096 samples)."""
    theta = TWO_PI * np.arange(_INERTIA_SAMPLES) / _INERTIA_SAMPLES
    _, C = _harmonics(inertia_torque(theta, crank_radius, rod_length, mass), 1)
    n = int(math.floor(highest_order + 1e-9))
    return np.arange(1, n + 1, dtype=float), C[:n]


# ----------------------------------------------------------------- gas torque
@dataclass(frozen=True)
class GasTorque:
    """One cylinder's gas torque at the load it was given for."""

    orders: np.ndarray  # orders per crank revolution (half orders for four-stroke)
    coefficients: np.ndarray  # complex, N*m: T = mean + sum Re(C exp(i n theta))
    mean_torque: float  # N*m, one cylinder
    indicated_mean_pressure: float  # Pa


def order_step(strokes: int) -> float:
    """Spacing of the orders of one cylinder: 0.5 for a four-stroke, 1 for a two-stroke engine."""
    return 2.0 / strokes


def engine_orders(strokes: int, highest_order: float = DEFAULT_HIGHEST_ORDER) -> np.ndarray:
    """Every order up to ``highest_order``: half orders for four-stroke, whole for two-stroke."""
    step = order_step(strokes)
    return step * np.arange(1, int(math.floor(highest_order / step + 1e-9)) + 1)


def gas_torque_from_pressure(angle_deg, pressure, bore: float, crank_radius: float, rod_length: float,
                             strokes: int, highest_order: float = DEFAULT_HIGHEST_ORDER,
                             crankcase_pressure: float = 0.0) -> GasTorque:
    """Gas torque harmonics of one cylinder from its pressure curve.

    ``angle_deg``: crank angle after firing top dead centre (increasing, one working cycle:
    720 deg four-stroke, 360 deg two-stroke); ``pressure`` in Pa.  The curve is taken as
    periodic and linear between points, T = (p - p_crankcase) A r g(theta) is sampled
    every 1/20 deg and Fourier-analysed.  The indicated mean pressure is the cycle work
    over the swept volume, W / (A 2r) with W = integral of T dtheta.
    """
    cycle = 360.0 * strokes / 2.0
    revs = strokes // 2
    a = np.asarray(angle_deg, float)
    p = np.asarray(pressure, float) - crankcase_pressure
    n = int(round(cycle * _CURVE_SAMPLES_PER_DEGREE))
    grid = cycle * np.arange(n) / n
    pg = np.interp(grid, a, p, period=cycle)
    area = math.pi * bore ** 2 / 4.0
    T = pg * area * crank_radius * slider_factor(np.radians(grid), crank_radius / rod_length)
    mean, C = _harmonics(T, revs)
    orders = engine_orders(strokes, highest_order)
    k = np.rint(orders * revs).astype(int)  # harmonic of the cycle
    imep = mean * math.radians(cycle) / (area * 2 * crank_radius)
    return GasTorque(orders, C[k - 1], mean, imep)


def gas_torque_from_tangential(orders, sin_part, cos_part, bore: float, crank_radius: float,
                               mean_indicated_pressure: float, strokes: int,
                               highest_order: float = DEFAULT_HIGHEST_ORDER) -> GasTorque:
    """Gas torque harmonics of one cylinder from the tangential pressure's harmonic coefficients.

    p_t(theta) = p_t0 + sum (a_n cos n theta + b_n sin n theta) (``cos_part`` a_n, ``sin_part`` b_n,
    Pa, per piston area), so C_n = A r (a_n - i b_n).  The mean tangential pressure follows
    from the indicated mean pressure: the cycle work p_mi A 2r over 2 pi revolutions per cycle,
    p_t0 = p_mi / (pi revolutions per cycle).  Orders in the cap without a coefficient get none.
    """
    area = math.pi * bore ** 2 / 4.0
    revs = strokes // 2
    out = engine_orders(strokes, highest_order)
    C = np.zeros(len(out), complex)
    for n, b, a in zip(orders, sin_part, cos_part):
        j = np.flatnonzero(np.isclose(out, n, rtol=0, atol=1e-9))
        if len(j):
            C[j[0]] = area * crank_radius * (a - 1j * b)
    mean = mean_indicated_pressure / (math.pi * revs) * area * crank_radius
    return GasTorque(out, C, mean, mean_indicated_pressure)


# ----------------------------------------------------------------- the engine
@dataclass(frozen=True)
class Cylinder:
    name: str
    disc: str  # the crank-throw disc it acts on
    firing_deg: float  # crank angle of its firing top dead centre after the first cylinder's
    bank: str = "A"


@dataclass(frozen=True)
class EngineHarmonic:
    """One order of one cylinder, phased by its firing angle."""

    order: float
    cylinder: int  # index into EngineSpec.cylinders
    disc: str
    gas: complex  # N*m, at the engine's load fraction and the cylinder's gas fraction
    inertia: complex  # N*m per (rad/s)^2 of the crank shaft


@dataclass(frozen=True)
class EngineSpec:
    """A reciprocating engine as the project gives it, with its harmonic torques per cylinder."""

    name: str
    strokes: int  # 2 or 4 strokes per working cycle
    layout: str  # "in-line" | "V"
    bore: float  # m
    crank_radius: float  # m (half the stroke)
    rod_length: float  # m, between centres
    reciprocating_mass: float  # kg per cylinder
    cylinders: tuple[Cylinder, ...]
    orders: tuple[float, ...]  # every order up to the cap
    gas: tuple[complex, ...]  # per order, one cylinder at full load (as given), N*m
    inertia: tuple[complex, ...]  # per order, one cylinder, N*m per (rad/s)^2 (0 for half orders)
    mean_gas_torque: float  # N*m, one cylinder at full load
    indicated_mean_pressure: float  # Pa, at full load
    gas_source: str  # "pressure curve" | "tangential pressure coefficients"
    bank_angle_deg: float | None = None
    load_fraction: float = 1.0  # scales every cylinder's gas torque (load cases)
    gas_fraction: tuple[float, ...] = ()  # per cylinder: 1 firing, 0 misfiring, between: reduced
    notes: tuple[str, ...] = ()

    @property
    def piston_area(self) -> float:
        return math.pi * self.bore ** 2 / 4.0

    @property
    def rod_ratio(self) -> float:
        return self.crank_radius / self.rod_length

    @property
    def firing_deg(self) -> np.ndarray:
        return np.array([c.firing_deg for c in self.cylinders], float)

    def cylinder_gas_scale(self, i: int) -> float:
        g = self.gas_fraction[i] if self.gas_fraction else 1.0
        return self.load_fraction * g

    @property
    def major_orders(self) -> tuple[float, ...]:
        """Orders at which every cylinder's torque adds in phase, |sum exp(-i n phi)| = cylinders.

        For an evenly firing in-line four-stroke engine of z cylinders these are the
        multiples of z / 2 (two-stroke: of z); the definition also covers V engines
        and uneven firing."""
        return tuple(float(n) for n in self.orders if _in_phase(n, self.firing_deg))

    def phase_sum(self, order: float) -> complex:
        """sum over cylinders of exp(-i n phi_i): the firing-order vector sum for equal cylinders."""
        return complex(np.exp(-1j * np.radians(order * self.firing_deg)).sum())

    def harmonics(self) -> list[EngineHarmonic]:
        """Every order of every cylinder, phased by its firing angle (the forced response's input)."""
        out = []
        phi = np.radians(self.firing_deg)
        for n, g, m in zip(self.orders, self.gas, self.inertia):
            for i, c in enumerate(self.cylinders):
                shift = np.exp(-1j * n * phi[i])
                out.append(EngineHarmonic(n, i, c.disc, complex(g * self.cylinder_gas_scale(i) * shift),
                                          complex(m * shift)))
        return out

    def phased_sum(self, speed: float) -> np.ndarray:
        """Complex amplitude of every order summed over all cylinders as if on one throw, N*m,
        at crank speed ``speed`` (rad/s): sum_i (G_n s_i + I_n omega^2) exp(-i n phi_i)."""
        phi = np.radians(self.firing_deg)
        scale = np.array([self.cylinder_gas_scale(i) for i in range(len(self.cylinders))])
        n = np.asarray(self.orders)[:, None]
        E = np.exp(-1j * n * phi[None, :])
        return (np.asarray(self.gas)[:, None] * scale[None, :] * E).sum(1) + \
            np.asarray(self.inertia) * speed ** 2 * E.sum(1)

    @property
    def mean_torque(self) -> float:
        """Mean indicated torque of the whole engine at its load, N*m (misfiring cylinders count less)."""
        return self.mean_gas_torque * sum(self.cylinder_gas_scale(i) for i in range(len(self.cylinders)))


def _in_phase(order: float, firing_deg: np.ndarray) -> bool:
    return abs(np.exp(-1j * np.radians(order * firing_deg)).sum()) >= len(firing_deg) * (1 - 1e-9)


def with_load(spec: EngineSpec, load_fraction: float | None = None,
              misfire: dict | None = None) -> EngineSpec:
    """The engine at another load and/or with misfiring cylinders (for load cases).

    ``load_fraction`` scales every cylinder's gas torque (linear in load: common
    practice, no source — a pressure curve or coefficients at the part load are
    better where the builder gives them).  ``misfire`` maps cylinder names to the
    fraction of their gas torque that remains (0: no combustion).  The inertia
    torque is unchanged.
    """
    where = f"excitation '{spec.name}'"
    lf = spec.load_fraction if load_fraction is None else float(load_fraction)
    if not (math.isfinite(lf) and 0.0 <= lf <= 2.0):
        raise ModelError(f"a load fraction between 0 and 2 (0 to 200 %), got {lf:g}", where,
                         "engine.load_fraction")
    gas = list(spec.gas_fraction or [1.0] * len(spec.cylinders))
    names = [c.name for c in spec.cylinders]
    for name, frac in (misfire or {}).items():
        if str(name) not in names:
            raise ModelError(f"unknown cylinder '{name}' (cylinders: {', '.join(names)})", where,
                             "engine.misfire.cylinder")
        frac = float(frac)
        if not (math.isfinite(frac) and 0.0 <= frac <= 1.0):
            raise ModelError(f"the gas torque left in a misfiring cylinder is a fraction from 0 to 1, "
                             f"got {frac:g}", where, "engine.misfire.gas_fraction")
        gas[names.index(str(name))] = frac
    return replace(spec, load_fraction=lf, gas_fraction=tuple(gas))


# ----------------------------------------------------------------- firing angles
def firing_angles_even(n_cylinders: int, strokes: int, firing_order_positions) -> np.ndarray:
    """Evenly spaced firing: the cylinder at position j of the firing order fires at j * cycle / z."""
    cycle = 360.0 * strokes / 2.0
    out = np.empty(n_cylinders)
    for j, i in enumerate(firing_order_positions):
        out[i] = j * cycle / n_cylinders
    return out


def firing_angles_from_throws(tdc_deg, strokes: int, firing_order_positions) -> np.ndarray | None:
    """Firing angles from each cylinder's top-dead-centre crank angle and the firing order.

    ``tdc_deg[i]``: crank angle at which cylinder i's piston is at top dead centre (its
    throw angle, plus the bank angle for the second bank of a V engine).  A two-stroke
    cylinder fires at its top dead centre; a four-stroke cylinder at one of its two top
    dead centres per cycle.  Of the choices that keep the firing order inside one working
    cycle, the most even firing is taken (least sum of squared firing intervals, found
    exactly by dynamic programming over the firing order; two choices per cylinder).
    Returns None when no choice keeps the firing order in one cycle.
    """
    cycle = 180.0 * strokes
    order = list(firing_order_positions)
    tdc = np.asarray(tdc_deg, float)
    t = (tdc[order] - tdc[order[0]]) % 360.0
    t = np.where(np.isclose(t, 360.0, rtol=0, atol=1e-9), 0.0, t)
    opts = [np.array([0.0])] + [t[j] + 360.0 * np.arange(strokes // 2) for j in range(1, len(order))]
    # cost[j][c]: least sum of squared intervals up to cylinder j fired at opts[j][c]
    cost = [np.array([0.0])]
    back = [None]
    for j in range(1, len(order)):
        prev, cur = opts[j - 1], opts[j]
        step = cur[None, :] - prev[:, None]
        total = np.where(step > 1e-9, cost[-1][:, None] + step ** 2, np.inf)
        back.append(np.argmin(total, axis=0))
        cost.append(total.min(axis=0))
    last = opts[-1]
    close = cycle - last
    final = np.where(close > 1e-9, cost[-1] + close ** 2, np.inf)
    if not np.isfinite(final.min()):
        return None
    c = int(np.argmin(final))
    phi_seq = np.empty(len(order))
    for j in range(len(order) - 1, -1, -1):
        phi_seq[j] = opts[j][c]
        if j:
            c = int(back[j][c])
    phi = np.empty(len(order))
    phi[order] = phi_seq
    return phi


# ----------------------------------------------------------------- project file
def _num(value, where, key):
    return u.parse_number(value, where, key)


def _positive(obj, key, kind, where, label):
    if obj.get(key) is None:
        raise ModelError(f"missing {label}", where, f"engine.{key}")
    v = u.parse(obj[key], kind, where, f"engine.{key}")
    if v <= 0:
        raise ModelError(f"{label} must be greater than zero", where, f"engine.{key}")
    return v


@lru_cache(maxsize=32)
def _read_curve_file(path: str, mtime: float, size: int):
    """(crank angle, pressure) rows of a CSV or whitespace-separated text file; header lines
    before the numbers are skipped.  Cached per file version (the desktop program rebuilds
    the model on every edit)."""
    rows = []
    with open(path, encoding="utf-8-sig") as fh:
        for line_no, line in enumerate(fh, 1):
            cells = [c for c in re.split(r"[,;\s]+", line.strip()) if c]
            if not cells:
                continue
            try:
                if len(cells) < 2:
                    raise ValueError
                rows.append((float(cells[0]), float(cells[1])))
            except ValueError:
                if rows:  # text after the numbers started: a broken row
                    raise ModelError(f"line {line_no} is not two numbers: {line.strip()[:40]!r}",
                                     None, None) from None
    return tuple(rows)


def _pressure_curve(spec, where: str, base_dir, strokes: int):
    key = "engine.pressure_curve"
    if not isinstance(spec, dict):
        raise ModelError("give {\"points\": [[crank_deg, pressure], ...], \"unit\": \"bar\"} or "
                         "{\"file\": \"curve.csv\", \"unit\": \"bar\"}", where, key)
    unit = spec.get("unit", "Pa")
    if not isinstance(unit, str) or u.check_text(f"1 {unit}", u.PRESSURE) is not None:
        raise ModelError(f"unit must be a pressure unit such as 'bar', got {unit!r}", where, f"{key}.unit")
    scale = u.parse(f"1 {unit}", u.PRESSURE)
    if ("points" in spec) == ("file" in spec):
        raise ModelError("give either points or a file", where, f"{key}.points")
    if "points" in spec:
        raw = spec["points"]
        if not isinstance(raw, list):
            raise ModelError("points must be a list of [crank_deg, pressure] pairs", where, f"{key}.points")
        rows = []
        for i, r in enumerate(raw):
            if not (isinstance(r, (list, tuple)) and len(r) == 2):
                raise ModelError(f"point {i + 1} must be [crank_deg, pressure]", where, f"{key}.points")
            rows.append((_num(r[0], where, f"{key}.points"), _num(r[1], where, f"{key}.points")))
        field_name = f"{key}.points"
    else:
        name = spec["file"]
        field_name = f"{key}.file"
        if not isinstance(name, str) or not name.strip():
            raise ModelError("give the CSV file's path", where, field_name)
        path = Path(name)
        if not path.is_absolute():
            if base_dir is None:
                raise ModelError(f"'{name}' is relative to the project's folder, which is not known "
                                 "(save the project first)", where, field_name)
            path = Path(base_dir) / path
        try:
            st = os.stat(path)
            rows = list(_read_curve_file(str(path), st.st_mtime, st.st_size))
        except FileNotFoundError:
            raise ModelError(f"file not found: {path}", where, field_name) from None
        except ModelError as exc:
            raise ModelError(f"{path.name}: {exc.message}", where, field_name) from None
        except (OSError, UnicodeDecodeError) as exc:
            raise ModelError(f"cannot read {path}: {exc}", where, field_name) from None
    if len(rows) < 8:
        raise ModelError(f"a pressure curve needs at least 8 points over the cycle, got {len(rows)}",
                         where, field_name)
    a = np.array([r[0] for r in rows], float)
    p = np.array([r[1] for r in rows], float) * scale
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(p))):
        raise ModelError("every crank angle and pressure must be a finite number", where, field_name)
    if np.any(np.diff(a) <= 0):
        j = int(np.flatnonzero(np.diff(a) <= 0)[0])
        raise ModelError(f"crank angles must increase; point {j + 2} ({a[j + 1]:g} deg) does not",
                         where, field_name)
    cycle = 180.0 * strokes
    span = a[-1] - a[0]
    if span > cycle + 1e-9:
        raise ModelError(f"spans {span:g} deg of crank angle, more than one working cycle ({cycle:g} deg)",
                         where, field_name)
    if span < cycle - 10.0:
        raise ModelError(f"covers {span:g} deg of crank angle; a {strokes}-stroke working cycle is "
                         f"{cycle:g} deg: give the whole cycle (gas exchange included)", where, field_name)
    if span >= cycle - 1e-9:  # last point repeats the first one cycle later
        a, p = a[:-1], p[:-1]
    cc = spec.get("crankcase_pressure")
    p_cc = 0.0 if cc is None else u.parse(cc, u.PRESSURE, where, f"{key}.crankcase_pressure")
    return a, p, p_cc


def _tangential(spec, where: str):
    key = "engine.tangential_pressure"
    if not isinstance(spec, dict):
        raise ModelError("give {\"mean_indicated_pressure\": ..., \"orders\": [{\"order\": 0.5, "
                         "\"sin\": ..., \"cos\": ...}, ...]}", where, key)
    if spec.get("mean_indicated_pressure") is None:
        raise ModelError("missing the mean indicated pressure the coefficients hold at", where,
                         f"{key}.mean_indicated_pressure")
    pmi = u.parse(spec["mean_indicated_pressure"], u.PRESSURE, where, f"{key}.mean_indicated_pressure")
    if pmi <= 0:
        raise ModelError("must be greater than zero", where, f"{key}.mean_indicated_pressure")
    raw = spec.get("orders")
    if not isinstance(raw, list) or not raw:
        raise ModelError("give a non-empty list of {\"order\": n, \"sin\": ..., \"cos\": ...}", where,
                         f"{key}.orders")
    orders, s, c = [], [], []
    for i, o in enumerate(raw):
        ow = f"{where} tangential pressure order {i + 1}"
        if not isinstance(o, dict):
            raise ModelError("each order must be {\"order\": n, \"sin\": ..., \"cos\": ...}", ow)
        n = _num(o.get("order"), ow, "order")
        if n <= 0:
            raise ModelError(f"an order must be greater than zero, got {n:g}", ow, "order")
        orders.append(n)
        s.append(u.parse(o.get("sin", 0.0), u.PRESSURE, ow, "sin"))
        c.append(u.parse(o.get("cos", 0.0), u.PRESSURE, ow, "cos"))
    return pmi, orders, s, c


def _cylinders(eng: dict, where: str, disc_ids, strokes: int, layout: str, bank_angle):
    raw = eng.get("cylinders")
    if not isinstance(raw, list) or not raw:
        raise ModelError("give a non-empty list of cylinders, {\"at\": crank-throw disc, ...}", where,
                         "engine.cylinders")
    names, discs, firing, tdc, banks = [], [], [], [], []
    for i, c in enumerate(raw):
        cw = f"{where} engine cylinder {i + 1}"
        if not isinstance(c, dict):
            raise ModelError("each cylinder must be a JSON object with 'at'", cw)
        name = str(c.get("name", i + 1))
        if name in names:
            raise ModelError(f"duplicate cylinder name '{name}'", cw, "name")
        at = c.get("at")
        if at not in disc_ids:
            raise ModelError(f"unknown disc '{at}'", cw, "at")
        bank = str(c.get("bank", "A"))
        if bank not in ("A", "B"):
            raise ModelError(f"bank must be 'A' or 'B', got {bank!r}", cw, "bank")
        if bank == "B" and layout != "V":
            raise ModelError("a second bank needs \"layout\": \"V\"", cw, "bank")
        if c.get("firing_deg") is not None and c.get("throw_deg") is not None:
            raise ModelError("give either firing_deg or throw_deg", cw, "throw_deg")
        names.append(name)
        discs.append(at)
        banks.append(bank)
        firing.append(None if c.get("firing_deg") is None else _num(c["firing_deg"], cw, "firing_deg"))
        if c.get("throw_deg") is not None:
            t = _num(c["throw_deg"], cw, "throw_deg")
            if bank == "B":
                if bank_angle is None:
                    raise ModelError("a V engine given by throw angles needs bank_angle_deg", where,
                                     "engine.bank_angle_deg")
                t += bank_angle
            tdc.append(t)
        else:
            tdc.append(None)
    fo = eng.get("firing_order")
    given = [f is not None for f in firing]
    throws = [t is not None for t in tdc]
    if all(given):
        if fo is not None:
            raise ModelError("give either firing angles per cylinder or a firing order", where,
                             "engine.firing_order")
        phi = np.array(firing, float)
    else:
        if any(given):
            j = given.index(False)
            raise ModelError("firing_deg is given for some cylinders only", f"{where} engine cylinder {j + 1}",
                             "firing_deg")
        if fo is None:
            if len(names) == 1:
                fo = names
            else:
                raise ModelError("give a firing order (or firing_deg for every cylinder)", where,
                                 "engine.firing_order")
        if not isinstance(fo, list) or sorted(str(x) for x in fo) != sorted(names):
            raise ModelError(f"must name every cylinder once ({', '.join(names)})", where, "engine.firing_order")
        pos = [names.index(str(x)) for x in fo]
        if any(throws) and not all(throws):
            j = throws.index(False)
            raise ModelError("throw_deg is given for some cylinders only", f"{where} engine cylinder {j + 1}",
                             "throw_deg")
        if all(throws):
            phi = firing_angles_from_throws(tdc, strokes, pos)
            if phi is None:
                raise ModelError("the firing order does not fit the throw and bank angles (it cannot be "
                                 "kept inside one working cycle)", where, "engine.firing_order")
        else:
            phi = firing_angles_even(len(names), strokes, pos)
    phi = phi - phi[0]  # firing angles after the first cylinder's
    return tuple(Cylinder(n, d, float(f), b) for n, d, f, b in zip(names, discs, phi, banks))


def parse_engine(eng, name: str, where: str, disc_ids, base_dir=None) -> EngineSpec:
    """Read the ``"engine": {...}`` of an excitation entry; the keys follow an engine data sheet::

        "engine": {
          "strokes": 4,                       2 or 4 (default 4)
          "layout": "in-line" | "V",          default in-line
          "bank_angle_deg": 60,               V engines given by throw angles
          "bore": "160 mm", "stroke": "190 mm" (or "crank_radius"), "connecting_rod": "380 mm" (centres),
          "reciprocating_mass": "6 kg",       per cylinder: piston, pin, rings, the rod's reciprocating part
          "pressure_curve": {"points": [[crank_deg, p], ...] | "file": "curve.csv", "unit": "bar",
                             "crankcase_pressure": "1 bar"},       crank angle after firing TDC, one cycle
          or "tangential_pressure": {"mean_indicated_pressure": "20 bar",
                                     "orders": [{"order": 0.5, "sin": "1.9 bar", "cos": "0.4 bar"}, ...]},
          "cylinders": [{"name": "1", "at": "crank_1", "firing_deg": 0 | "throw_deg": 0, "bank": "A"}, ...],
          "firing_order": ["1", "5", "3", "6", "2", "4"],  with throw_deg (from the crank star) or alone
                                                           (evenly spaced firing)
          "highest_order": 12,                orders generated up to this cap
          "load_fraction": "100 %",           scales the gas torque (load cases)
          "misfire": {"cylinder": "3", "gas_fraction": 0}
        }

    ``base_dir``: the folder a relative ``file`` is read from (the project's).
    """
    if not isinstance(eng, dict):
        raise ModelError("engine must be a JSON object", where, "engine")
    strokes = eng.get("strokes", 4)
    if strokes not in (2, 4) or isinstance(strokes, bool):
        raise ModelError(f"strokes must be 2 or 4, got {strokes!r}", where, "engine.strokes")
    layout = eng.get("layout", "in-line")
    if layout not in ("in-line", "V"):
        raise ModelError(f"layout must be 'in-line' or 'V', got {layout!r}", where, "engine.layout")
    bank = eng.get("bank_angle_deg")
    bank_angle = None
    if bank is not None:
        bank_angle = _num(bank, where, "engine.bank_angle_deg")
        if layout != "V":
            raise ModelError("a bank angle needs \"layout\": \"V\"", where, "engine.bank_angle_deg")
        if not 0 < bank_angle < 180:
            raise ModelError(f"a bank angle between 0 and 180 deg, got {bank_angle:g}", where,
                             "engine.bank_angle_deg")
    bore = _positive(eng, "bore", u.LENGTH, where, "cylinder bore")
    has_r, has_s = eng.get("crank_radius") is not None, eng.get("stroke") is not None
    if has_r == has_s:
        raise ModelError("give either the stroke or the crank radius", where, "engine.stroke")
    r = _positive(eng, "crank_radius", u.LENGTH, where, "crank radius") if has_r else \
        0.5 * _positive(eng, "stroke", u.LENGTH, where, "stroke")
    rod = _positive(eng, "connecting_rod", u.LENGTH, where, "connecting rod length (between centres)")
    if rod <= r:
        raise ModelError(f"the connecting rod ({rod * 1e3:g} mm) must be longer than the crank radius "
                         f"({r * 1e3:g} mm)", where, "engine.connecting_rod")
    if eng.get("reciprocating_mass") is None:
        raise ModelError("missing the reciprocating mass per cylinder (piston, pin, rings and the "
                         "rod's reciprocating part)", where, "engine.reciprocating_mass")
    mass = u.parse(eng["reciprocating_mass"], u.MASS, where, "engine.reciprocating_mass")
    if mass < 0:
        raise ModelError("must not be negative", where, "engine.reciprocating_mass")
    top = _num(eng.get("highest_order", DEFAULT_HIGHEST_ORDER), where, "engine.highest_order")
    if not order_step(strokes) <= top <= _MAX_ORDER:
        raise ModelError(f"between {order_step(strokes):g} and {_MAX_ORDER:g}, got {top:g}", where,
                         "engine.highest_order")
    has_curve, has_tan = "pressure_curve" in eng, "tangential_pressure" in eng
    if has_curve == has_tan:
        raise ModelError("give either a pressure_curve or tangential_pressure coefficients", where,
                         "engine.pressure_curve")
    notes = []
    if has_curve:
        a, p, p_cc = _pressure_curve(eng["pressure_curve"], where, base_dir, strokes)
        gas = gas_torque_from_pressure(a, p, bore, r, rod, strokes, top, p_cc)
        source = "pressure curve"
        if gas.indicated_mean_pressure <= 0:
            raise ModelError("the curve does no work over the cycle (indicated mean pressure "
                             f"{gas.indicated_mean_pressure / 1e5:.3g} bar): check the crank angles "
                             "(0 = firing top dead centre)", where, "engine.pressure_curve")
    else:
        pmi, orders, s, c = _tangential(eng["tangential_pressure"], where)
        step = order_step(strokes)
        for n in orders:
            if abs(n / step - round(n / step)) > 1e-9:
                raise ModelError(f"order {n:g} is not a multiple of {step:g} for a {strokes}-stroke engine",
                                 where, "engine.tangential_pressure.orders")
        gas = gas_torque_from_tangential(orders, s, c, bore, r, pmi, strokes, top)
        source = "tangential pressure coefficients"
        missing = [n for n in gas.orders if not any(abs(n - m) < 1e-9 for m in orders)]
        if missing:
            notes.append("no gas-torque coefficient given for order(s) "
                         + ", ".join(f"{n:g}" for n in missing) + "; taken as zero")
    io, ic = inertia_torque_orders(r, rod, mass, top)
    inertia = np.zeros(len(gas.orders), complex)
    for n, cval in zip(io, ic):
        inertia[np.flatnonzero(np.isclose(gas.orders, n, rtol=0, atol=1e-9))] = cval
    cylinders = _cylinders(eng, where, set(disc_ids), strokes, layout, bank_angle)
    spec = EngineSpec(name, strokes, layout, bore, r, rod, mass, cylinders, tuple(float(n) for n in gas.orders),
                      tuple(complex(x) for x in gas.coefficients), tuple(complex(x) for x in inertia),
                      gas.mean_torque, gas.indicated_mean_pressure, source, bank_angle,
                      gas_fraction=(1.0,) * len(cylinders), notes=tuple(notes))
    load = eng.get("load_fraction")
    misfire = eng.get("misfire")
    mis = None
    if misfire is not None:
        if not isinstance(misfire, dict) or misfire.get("cylinder") is None:
            raise ModelError("give {\"cylinder\": name, \"gas_fraction\": 0}", where, "engine.misfire")
        mis = {str(misfire["cylinder"]): u.parse_fraction(misfire.get("gas_fraction", 0.0), where,
                                              "engine.misfire.gas_fraction")}
    return with_load(spec, None if load is None else u.parse_fraction(load, where, "engine.load_fraction"), mis)


def describe_engine(spec: EngineSpec) -> list[str]:
    """Lines a screen or sheet prints about an engine excitation (no source-memory notes)."""
    z = len(spec.cylinders)
    major = ", ".join(f"{n:g}" for n in spec.major_orders) or "none"
    lines = [f"{spec.name}: {z}-cylinder {spec.layout} {spec.strokes}-stroke engine, bore "
             f"{spec.bore * 1e3:g} mm, stroke {2 * spec.crank_radius * 1e3:g} mm, crank radius / rod "
             f"{spec.rod_ratio:.3f}",
             f"gas torque from the {spec.gas_source}; indicated mean pressure "
             f"{spec.indicated_mean_pressure / 1e5:.3g} bar at full load; load {100 * spec.load_fraction:g} %",
             f"orders {spec.orders[0]:g} to {spec.orders[-1]:g}; major orders {major}",
             "firing angles " + ", ".join(f"{c.name}: {c.firing_deg:g} deg" for c in spec.cylinders)]
    off = [f"{c.name} ({100 * spec.gas_fraction[i]:g} % gas torque)" for i, c in enumerate(spec.cylinders)
           if spec.gas_fraction and spec.gas_fraction[i] < 1.0]
    if off:
        lines.append("misfiring: " + ", ".join(off))
    return lines + list(spec.notes)
