"""Acceptance: the checks that sign off a coincidence the separation rule cannot avoid.

:func:`analyse_acceptance` judges the damped forced response together with the mean
torque of every load case (:mod:`core.loads`), per speed band (:mod:`core.bands`),
against the limits the project gives:

* ``permissible_torque`` / ``permissible_stress`` (vibratory amplitudes): the
  operating range against them, the start-up/run-down and overspeed bands against
  the ``*_transient`` values, or the continuous ones where none is given;
* shafts with a material that has strengths (:mod:`core.shafting`): fatigue safety
  factor by Goodman or Soderberg in the operating range (continuous running
  accumulates the cycles) and first-cycle yield in every band, per segment, mean
  plus vibratory shear stress with the stress concentration factor applied once;
* propulsion shafts (IACS UR M68, :mod:`core.shafting`): the nominal vibratory
  stress against tau_C in the operating range (outside permitted barred ranges)
  and overspeed band, against tau_T (lambda <= 0.8) in the start-up band and inside
  barred ranges; the barred speed ranges themselves, with edges polished to where
  tau = tau_C;
* flexible couplings (data-sheet ratings): mean torque against T_KN (operating
  range), mean plus vibratory against T_Kmax (every band), vibratory against T_KW
  with the frequency correction T_KW(f) = T_KW sqrt(f_ref / f) above f_ref
  (common practice of coupling data sheets, no source) — several orders as the sum
  of T_i / T_KW(f_i) — and the dissipated power the forced response computes
  against P_KV (operating range); the torque ratings divided by the temperature
  factor S_t;
* gear meshes: vibratory against mean torque at every speed; where the vibratory
  torque exceeds the mean the teeth separate and hammer.  The speed ranges where it
  happens are reported over every band with polished edges; the check judges the
  operating range (continuous running; passing through, the teeth may separate
  briefly — common practice, no source).

Every check: criterion, link, load case, speed band, value, limit, utilisation
(value / limit, or required / achieved for safety factors), the reference speed of
the worst utilisation, passed.  The worst point in each band is refined between the
computed speeds by re-solving the response (as :func:`core.response.band_peaks`).

Vibratory amplitudes combine the orders as the forced response's headline does (the
sum of order amplitudes, conservative) unless ``combination="phased"`` (peak of the
summed time signal).  Units: SI; speeds rad/s of the reference shaft.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import shafting as sh
from .bands import OPERATING, OVERSPEED, TRANSIENT, band_of, speed_bands
from .loads import LoadCase, link_shaft_speed, load_case_train, power_flow, reference_torque
from .response import Response, forced_response

TWO_PI = 2.0 * math.pi
RPM = 60.0 / TWO_PI  # rpm per rad/s
COMBINATIONS = ("sum", "phased")
STEADY_CRITERIA = ("coupling_nominal_torque",)  # checks of the mean torque alone


# ------------------------------------------------------------------ results
@dataclass(frozen=True)
class Check:
    criterion: str
    link: str
    load_case: str | None  # None: no load case given (vibratory checks only)
    speed_band: str  # "operating" | "transient" | "overspeed"
    value: float  # what was found (unit below)
    limit: float  # what is permitted (for a safety factor: the factor asked for)
    utilisation: float  # value / limit, or for a safety factor required / achieved
    at: float  # rad/s of the reference shaft, the worst speed in the band
    passed: bool
    unit: str  # "N*m" | "Pa" | "W" | "1"
    segment: int | None = None  # 0-based segment of a shaft, where it applies
    note: str = ""

    @property
    def at_rpm(self) -> float:
        return self.at * RPM


@dataclass(frozen=True)
class SpeedRange:
    """A reference-speed interval: a barred speed range or where gear teeth hammer."""

    kind: str  # "barred" | "gear_hammer"
    link: str
    load_case: str | None
    low: float  # rad/s of the reference shaft
    high: float
    low_exact: bool  # True: polished to where the criterion is met exactly; False: a band end
    high_exact: bool
    worst: float  # the largest ratio (stress / tau_C, vibratory / mean torque) inside
    worst_at: float  # rad/s
    permitted: bool | None = None  # barred ranges: below lambda 0.8 and within tau_T
    note: str = ""
    bands: tuple = ()  # the speed bands it reaches into, in speed order

    @property
    def low_rpm(self) -> float:
        return self.low * RPM

    @property
    def high_rpm(self) -> float:
        return self.high * RPM


@dataclass(frozen=True)
class ShaftInputs:
    """What a shaft segment's checks rest on (for the review sheet)."""

    link: str
    segment: int
    outer_diameter: float  # m
    inner_diameter: float  # m
    material: str
    strength_source: str
    tensile_strength: float | None  # Pa
    yield_strength: float | None
    torsional_endurance: float | None  # Pa, polished specimen
    stress_concentration: float
    criterion: str | None = None
    surface: str | None = None
    surface_factor: float | None = None
    size_factor: float | None = None
    temperature_factor: float | None = None
    reliability_factor: float | None = None
    endurance_limit: float | None = None  # S_se of the part, Pa
    ultimate_shear: float | None = None
    yield_shear: float | None = None
    required_safety_factor: float | None = None
    rule_position: str | None = None
    rule_tensile_strength: float | None = None  # sigma_B used (capped), Pa
    design_factor: float | None = None  # C_K
    design_feature: str | None = None
    rule_size_factor: float | None = None  # C_D


@dataclass
class Acceptance:
    train: object
    speed: np.ndarray  # rad/s, the response's speeds
    bands: tuple
    load_cases: tuple
    combination: str
    checks: list = field(default_factory=list)
    barred_ranges: list = field(default_factory=list)
    hammer_ranges: list = field(default_factory=list)
    mean_torque: dict = field(default_factory=dict)  # load case name -> (n_links, n_s) N*m
    shaft_inputs: list = field(default_factory=list)
    rated_speed: float | None = None  # n_0 of the shafting rule, rad/s
    notes: list = field(default_factory=list)

    @property
    def passed(self) -> bool | None:
        """True when every check passes, False when one fails, None without checks."""
        if not self.checks:
            return None
        return all(c.passed for c in self.checks)

    @property
    def failures(self) -> list:
        return sorted([c for c in self.checks if not c.passed], key=lambda c: -c.utilisation)

    def worst_first(self) -> list:
        return sorted(self.checks, key=lambda c: -c.utilisation)


# ------------------------------------------------------------------ helpers
class _Context:
    """One load case: its response, mean torque and the functions checks evaluate."""

    def __init__(self, train, resp: Response, lc: LoadCase | None, combination: str):
        self.train = train  # the load case's train (excitations scaled)
        self.resp = resp
        self.lc = lc
        self.phased = combination == "phased"
        op = train.operating
        if lc is not None:
            ratio = np.array([link_shaft_speed(train, l) for l in train.links])
            self.flow = power_flow(train, lc) / ratio
        self.op = op

    @property
    def name(self):
        return None if self.lc is None else self.lc.name

    def mean(self, li: int, speeds) -> np.ndarray:
        if self.lc is None:
            return np.zeros(np.shape(speeds))
        return self.flow[li] * reference_torque(self.lc, speeds, self.op)

    def vib(self, r: Response, li: int) -> np.ndarray:
        return r.link_torque_phased[li] if self.phased else r.link_torque[li]

    def seg_vib(self, r: Response, li: int) -> np.ndarray:
        return r.segment_torque(li, phased=self.phased)


def _worst(util: np.ndarray) -> int:
    u = np.where(np.isfinite(util), util, np.inf if np.any(np.isposinf(util)) else -np.inf)
    return int(np.argmax(u))


def _band_indices(speed, band) -> np.ndarray:
    return np.flatnonzero(band.contains(speed))


def _refine_max(ctx: _Context, specs: list, max_steps: int = 30) -> list:
    """Refine each spec's worst grid point between its neighbours (vectorised Brent-type
    steps, one response solve per step for all specs).  ``specs``: dicts with fn,
    a, x, b, fa, fx, fb; fn(r, speeds) -> utilisation array over speeds."""
    if not specs:
        return specs
    a = np.array([s["a"] for s in specs], float)
    x = np.array([s["x"] for s in specs], float)
    b = np.array([s["b"] for s in specs], float)
    fa = np.array([s["fa"] for s in specs], float)
    fx = np.array([s["fx"] for s in specs], float)
    fb = np.array([s["fb"] for s in specs], float)
    golden = 0.3819660112501051
    active = np.isfinite(fx) & np.isfinite(fa) & np.isfinite(fb)
    for step in range(max_steps):
        idx = np.flatnonzero(active)
        if not idx.size:
            break
        A, X, B, FA, FX, FB = a[idx], x[idx], b[idx], fa[idx], fx[idx], fb[idx]
        tol = 1e-9 * X
        p = (X - A) ** 2 * (FX - FB) - (X - B) ** 2 * (FX - FA)
        q = (X - A) * (FX - FB) - (X - B) * (FX - FA)
        with np.errstate(divide="ignore", invalid="ignore"):
            u = X - 0.5 * p / q
        right = (B - X) > (X - A)
        g = X + golden * np.where(right, B - X, A - X)
        bad = ~np.isfinite(u) | (u <= A + tol) | (u >= B - tol) | (step % 4 == 3)
        small = ~bad & (np.abs(u - X) <= 1e-7 * X)
        u = np.where(bad, g, u)
        u = np.where(np.abs(u - X) < tol, X + np.where(right, tol, -tol), u)
        r = forced_response(ctx.train, u, check_crossings=False)
        fu = np.array([specs[i]["fn"](r, u)[k] for k, i in enumerate(idx)])
        fu = np.where(np.isfinite(fu), fu, -np.inf)
        up = fu > FX
        left = u < X
        a[idx] = np.where(up, np.where(left, A, X), np.where(left, u, A))
        b[idx] = np.where(up, np.where(left, X, B), np.where(left, B, u))
        fa[idx] = np.where(up, np.where(left, FA, FX), np.where(left, fu, FA))
        fb[idx] = np.where(up, np.where(left, FX, FB), np.where(left, FB, fu))
        x[idx] = np.where(up, u, X)
        fx[idx] = np.where(up, fu, FX)
        active[idx] = ((b[idx] - a[idx]) > 2e-8 * x[idx]) & ~small
    for k, s in enumerate(specs):
        s["x_best"], s["f_best"] = x[k], fx[k]
    return specs


def _polish_roots(ctx: _Context, specs: list, max_steps: int = 60) -> None:
    """Where fn(r, speeds) - 1 changes sign in [lo, hi]: Illinois regula falsi, all
    specs together, one solve per step, to 1e-10 of the speed.  Sets s["root"]."""
    if not specs:
        return
    lo = np.array([s["lo"] for s in specs], float)
    hi = np.array([s["hi"] for s in specs], float)
    flo = np.array([s["flo"] for s in specs], float) - 1.0
    fhi = np.array([s["fhi"] for s in specs], float) - 1.0
    side = np.zeros(len(specs), int)
    active = (hi - lo) > 1e-10 * hi
    for _ in range(max_steps):
        idx = np.flatnonzero(active)
        if not idx.size:
            break
        a, b, fa, fb = lo[idx], hi[idx], flo[idx], fhi[idx]
        with np.errstate(divide="ignore", invalid="ignore"):
            xs = (a * fb - b * fa) / (fb - fa)
        ok = np.isfinite(xs) & (xs > a) & (xs < b) & np.isfinite(fa) & np.isfinite(fb)
        xs = np.where(ok, xs, 0.5 * (a + b))
        eps = 1e-12 * (b - a)
        xs = np.clip(xs, a + eps, b - eps)
        r = forced_response(ctx.train, xs, check_crossings=False)
        fx = np.array([specs[i]["fn"](r, xs)[k] for k, i in enumerate(idx)]) - 1.0
        same_lo = np.sign(fx) == np.sign(fa)
        s_prev = side[idx]
        new_fa = np.where(same_lo, fx, np.where(s_prev == -1, fa * 0.5, fa))
        new_fb = np.where(~same_lo, fx, np.where(s_prev == 1, fb * 0.5, fb))
        lo[idx] = np.where(same_lo, xs, a)
        hi[idx] = np.where(same_lo, b, xs)
        flo[idx], fhi[idx] = new_fa, new_fb
        side[idx] = np.where(same_lo, 1, -1)
        hit = fx == 0.0
        lo[idx[hit]] = hi[idx[hit]] = xs[hit]
        active[idx] = (hi[idx] - lo[idx]) > 1e-10 * hi[idx]
    for k, s in enumerate(specs):
        s["root"] = 0.5 * (lo[k] + hi[k])


def _bands_reached(bands, low: float, high: float) -> tuple:
    return tuple(b.name for b in bands if b.low <= high and b.high >= low
                 and not (b.name != OPERATING and b.low == b.high))


def _ranges(ctx: _Context, fn, speed, idx, grid_values) -> list[dict]:
    """Maximal intervals inside the band (indices ``idx``) where fn > 1, with the
    edges bracketed for polishing: dicts with lo/hi index and edge specs."""
    above = grid_values[idx] > 1.0
    out = []
    if not above.any():
        return out
    edges = np.flatnonzero(np.diff(np.r_[False, above, False].astype(int)))
    for s, e in zip(edges[::2], edges[1::2] - 1):  # runs of `above`, inclusive
        item = {"i0": idx[s], "i1": idx[e], "low": speed[idx[s]], "high": speed[idx[e]],
                "low_spec": None, "high_spec": None}
        if s > 0:  # the crossing lies between idx[s-1] (below) and idx[s] (above)
            item["low_spec"] = {"fn": fn, "lo": speed[idx[s - 1]], "hi": speed[idx[s]],
                                "flo": grid_values[idx[s - 1]], "fhi": grid_values[idx[s]]}
        if e < len(idx) - 1:
            item["high_spec"] = {"fn": fn, "lo": speed[idx[e]], "hi": speed[idx[e + 1]],
                                 "flo": grid_values[idx[e]], "fhi": grid_values[idx[e + 1]]}
        out.append(item)
    return out


# ------------------------------------------------------------------ analysis
def analyse_acceptance(train, response: Response, load_cases=None, combination: str = "sum",
                       refine: bool = True) -> Acceptance:
    """Every acceptance check of ``train`` for each load case (default the train's own,
    :attr:`core.model.Train.load_cases`), on the speeds of ``response`` (the forced
    response of ``train``; load cases that scale the excitations are re-solved at the
    same speeds).  ``refine``: polish each worst point between computed speeds."""
    if combination not in COMBINATIONS:
        raise ValueError(f"combination must be one of {COMBINATIONS}")
    op = train.operating
    speed = np.asarray(response.speed, float)
    bands = speed_bands(op, lowest=min(float(speed.min()), op.speed_min))
    cases = tuple(train.load_cases if load_cases is None else load_cases)
    acc = Acceptance(train, speed, bands, cases, combination, rated_speed=op.speed_max)
    if not cases:
        acc.notes.append("no load case given: the checks that need the mean torque (shaft fatigue and "
                         "yield, coupling nominal and maximum torque, gear hammer) are not made")
    contexts = []
    for lc in cases or (None,):
        if lc is not None and lc.changes_excitation:
            t_lc = load_case_train(train, lc)
            r = forced_response(t_lc, speed, check_crossings=False)
            if lc.misfire:
                acc.notes.append(f"load case '{lc.name}': the misfiring cylinder's order amplitudes are "
                                 "scaled as gas torque; an inertia torque that keeps acting needs the "
                                 "engine model")
        else:
            t_lc, r = train, response
        ctx = _Context(t_lc, r, lc, combination)
        contexts.append(ctx)
        if lc is not None:
            acc.mean_torque[lc.name] = np.stack([ctx.mean(li, speed) for li in range(len(train.links))]) \
                if train.links else np.zeros((0, speed.size))
    _shaft_inputs(train, acc)
    for ctx in contexts:
        specs = []
        for li, link in enumerate(train.links):
            specs += _permissible_specs(ctx, li, link)
            if link.kind == "coupling":
                specs += _coupling_specs(ctx, li, link)
            if link.kind == "shaft" and link.segments:
                specs += _shaft_specs(ctx, li, link, acc)
            if link.kind == "gear_mesh" and ctx.lc is not None:
                specs += _hammer_specs(ctx, li, link, acc, refine)
        _evaluate(ctx, specs, acc, refine)
    acc.checks.sort(key=lambda c: (-c.utilisation, c.link, c.load_case or ""))
    return acc


def _evaluate(ctx: _Context, specs: list, acc: Acceptance, refine: bool) -> None:
    """Turn check specs into checks: worst grid point per band, refined in speed."""
    r, speed = ctx.resp, acc.speed
    pending = []
    for s in specs:
        band = s["band"]
        idx = _band_indices(speed, band)
        if s.get("only") is not None:
            idx = idx[s["only"](idx)]
        if not idx.size:
            continue
        util = s["fn"](r, speed)[idx]
        if not np.any(np.isfinite(util)) and not np.any(np.isposinf(util)):
            continue
        j = _worst(util)
        s["j"], s["idx"] = j, idx
        if refine and 0 < j < idx.size - 1 and np.isfinite(util[j]) and s.get("refine", True):
            s.update(a=speed[idx[j - 1]], x=speed[idx[j]], b=speed[idx[j + 1]], fa=util[j - 1],
                     fx=util[j], fb=util[j + 1])
            pending.append(s)
        else:
            s["x_best"], s["f_best"] = speed[idx[j]], util[j]
    _refine_max(ctx, pending)
    refined = {}
    if pending:  # value and limit at the refined speeds: one solve for all
        ats = np.array([p["x_best"] for p in pending])
        rr = forced_response(ctx.train, ats, check_crossings=False)
        for k, p in enumerate(pending):
            v, l = p["parts"](rr, ats)
            refined[id(p)] = (v[k], l[k])
    for s in specs:
        if "x_best" not in s:
            continue
        if id(s) in refined:
            value, limit = refined[id(s)]
        else:
            value, limit = s["parts"](r, speed)
            value, limit = value[s["idx"][s["j"]]], limit[s["idx"][s["j"]]]
        util = float(s["f_best"])
        passed = bool(util <= 1.0 + 1e-12) if np.isfinite(util) else False
        acc.checks.append(Check(s["criterion"], s["link"], ctx.name, s["band"].name, float(value),
                                float(limit), util, float(s["x_best"]), passed, s["unit"], s.get("segment"),
                                s.get("note", "")))


# ---- permissible values
def _permissible_specs(ctx, li, link) -> list:
    out = []
    rating = getattr(link, "ratings", None)
    coupled = rating is not None and rating.coupling is not None
    for qty, limit, transient, unit in (
            ("torque", link.permissible_torque,
             rating.permissible_torque_transient if rating else None, "N*m"),
            ("stress", link.permissible_stress,
             rating.permissible_stress_transient if rating else None, "Pa")):
        if qty == "stress" and not link.segments:
            continue
        for band in speed_bands(ctx.op, lowest=min(float(ctx.resp.speed.min()), ctx.op.speed_min)):
            if band.name == OPERATING:
                lim, note = limit, ""
                if coupled and qty == "torque" and rating.coupling.vibratory_torque is not None:
                    continue  # the coupling's own check, with the frequency correction
            elif transient is not None:
                lim, note = transient, "transient permissible value"
            else:
                if coupled and qty == "torque" and rating.coupling.maximum_torque is not None \
                        and ctx.lc is not None:
                    continue  # judged by the maximum torque with the mean torque
                lim, note = limit, "no transient value given: judged against the continuous one"
            if lim is None:
                continue

            def vib(r, speeds, li=li, qty=qty):
                if qty == "torque":
                    return ctx.vib(r, li)
                return r.link_stress_phased[li] if ctx.phased else r.link_stress[li]

            out.append({"criterion": f"permissible_{qty}", "link": link.id, "band": band, "unit": unit,
                        "note": note,
                        "fn": lambda r, s, vib=vib, lim=lim: vib(r, s) / lim,
                        "parts": lambda r, s, vib=vib, lim=lim: (vib(r, s), np.full(np.shape(s), lim))})
    return out


# ---- couplings
def _coupling_specs(ctx, li, link) -> list:
    rating = getattr(link, "ratings", None)
    c = rating.coupling if rating is not None else None
    if c is None:
        return []
    out = []
    st = c.temperature_factor
    bands = speed_bands(ctx.op, lowest=min(float(ctx.resp.speed.min()), ctx.op.speed_min))
    sfx = f" (temperature factor {st:g})" if st != 1.0 else ""
    for band in bands:
        if c.nominal_torque is not None and ctx.lc is not None and band.name == OPERATING:
            lim = c.nominal_torque / st

            def parts_n(r, s, lim=lim):
                return np.abs(ctx.mean(li, s)), np.full(np.shape(s), lim)
            out.append({"criterion": "coupling_nominal_torque", "link": link.id, "band": band, "unit": "N*m",
                        "note": "mean torque against T_KN" + sfx, "refine": False,
                        "fn": lambda r, s, p=parts_n: p(r, s)[0] / p(r, s)[1], "parts": parts_n})
        if c.maximum_torque is not None and ctx.lc is not None:
            lim = c.maximum_torque / st

            def parts_m(r, s, lim=lim):
                return np.abs(ctx.mean(li, s)) + ctx.vib(r, li), np.full(np.shape(s), lim)
            out.append({"criterion": "coupling_maximum_torque", "link": link.id, "band": band, "unit": "N*m",
                        "note": "mean plus vibratory torque against T_Kmax" + sfx,
                        "fn": lambda r, s, p=parts_m: p(r, s)[0] / p(r, s)[1], "parts": parts_m})
        if c.vibratory_torque is not None and band.name == OPERATING:
            def util_w(r, s, c=c):
                f = r.order_frequency_hz  # (n_orders, n_s)
                T = r.order_link_torque[:, li, :]
                if c.reference_hz is None:
                    perm = np.full(f.shape, c.vibratory_torque)
                else:
                    with np.errstate(divide="ignore"):
                        perm = c.vibratory_torque * np.sqrt(np.where(f > c.reference_hz,
                                                                     c.reference_hz / np.maximum(f, 1e-300),
                                                                     1.0))
                u = (T / perm).sum(0) * st
                total = T.sum(0)
                if ctx.phased:  # the phase-aware peak in proportion
                    with np.errstate(divide="ignore", invalid="ignore"):
                        u = u * np.where(total > 0, ctx.vib(r, li) / total, 0.0)
                return u

            def parts_w(r, s, util_w=util_w):
                v = ctx.vib(r, li)
                u = util_w(r, s)
                with np.errstate(divide="ignore", invalid="ignore"):
                    return v, np.where(u > 0, v / u, c.vibratory_torque / st)
            note = ("vibratory torque against T_KW" + (f" corrected above {c.reference_hz:g} Hz as "
                    f"sqrt({c.reference_hz:g} Hz / f)" if c.reference_hz is not None else "") + sfx)
            out.append({"criterion": "coupling_vibratory_torque", "link": link.id, "band": band,
                        "unit": "N*m", "note": note, "fn": util_w, "parts": parts_w})
        if c.permissible_power is not None and band.name == OPERATING:
            def parts_p(r, s, c=c):
                return r.link_power[li], np.full(np.shape(s), c.permissible_power)
            out.append({"criterion": "coupling_dissipated_power", "link": link.id, "band": band,
                        "unit": "W", "note": "power dissipated in the coupling (forced response) against P_KV",
                        "fn": lambda r, s, p=parts_p: p(r, s)[0] / p(r, s)[1], "parts": parts_p})
    return out


# ---- shafts
def _shaft_inputs(train, acc: Acceptance) -> None:
    for link in train.links:
        if link.kind != "shaft" or not link.segments or link.material is None:
            continue
        m = link.material
        rating = getattr(link, "ratings", None)
        fat = rating.fatigue if rating is not None and rating.fatigue is not None else None
        prop = rating.propulsion if rating is not None else None
        if not m.has_strengths and prop is None:
            continue
        from .ratings import FatigueSpec
        f = fat or FatigueSpec()
        for j, seg in enumerate(link.segments):
            kw = {}
            if m.has_strengths:
                ka = sh.surface_factor(f.surface, m.tensile_strength)
                kb = sh.size_factor(seg.outer_diameter)
                ke = sh.reliability_factor(f.reliability_percent)
                kw.update(criterion=f.criterion, surface=f.surface, surface_factor=ka, size_factor=kb,
                          temperature_factor=f.temperature_factor, reliability_factor=ke,
                          endurance_limit=ka * kb * f.temperature_factor * ke * m.torsional_endurance,
                          ultimate_shear=sh.ULTIMATE_SHEAR_RATIO * m.tensile_strength,
                          yield_shear=sh.YIELD_SHEAR_RATIO * m.yield_strength,
                          required_safety_factor=f.required_safety_factor)
            if prop is not None:
                sb = prop.tensile_strength if prop.tensile_strength is not None else m.tensile_strength
                kw.update(rule_position=prop.position,
                          rule_tensile_strength=sh.rule_tensile_strength(sb, prop.position, m.steel),
                          design_factor=prop.design_factors[j], design_feature=prop.features[j] or None,
                          rule_size_factor=sh.size_factor_rule(seg.outer_diameter))
            acc.shaft_inputs.append(ShaftInputs(link.id, j, seg.outer_diameter, seg.inner_diameter, m.name,
                                                m.strength_source, m.tensile_strength, m.yield_strength,
                                                m.torsional_endurance, link.stress_concentration, **kw))


def _shaft_specs(ctx, li, link, acc: Acceptance) -> list:
    inputs = [s for s in acc.shaft_inputs if s.link == link.id]
    if not inputs:
        return []
    out = []
    scf = link.stress_concentration
    bands = speed_bands(ctx.op, lowest=min(float(ctx.resp.speed.min()), ctx.op.speed_min))
    factors = np.array([sh.shear_stress_factor(s.outer_diameter, s.inner_diameter) for s in inputs])

    def stresses(r, s):
        """(tau_a, tau_m) per segment (n_seg, n_s), stress concentration applied once."""
        ta = ctx.seg_vib(r, li) * (factors * scf)[:, None]
        tm = np.abs(ctx.mean(li, s))[None, :] * (factors * scf)[:, None]
        return ta, tm

    if inputs[0].endurance_limit is not None and ctx.lc is not None:
        for band in bands:
            for j, si in enumerate(inputs):
                if band.name == OPERATING:
                    def n_f(r, s, j=j, si=si):
                        ta, tm = stresses(r, s)
                        return sh.fatigue_safety(ta[j], tm[j], si.endurance_limit, si.ultimate_shear,
                                                 si.yield_shear, si.criterion)

                    need = si.required_safety_factor
                    out.append({"criterion": "shaft_fatigue", "link": link.id, "band": band, "unit": "1",
                                "segment": j,
                                "note": f"{si.criterion.capitalize()} safety factor, mean plus vibratory shear",
                                "fn": lambda r, s, n=n_f, need=need: need / n(r, s),
                                "parts": lambda r, s, n=n_f, need=need: (n(r, s), np.full(np.shape(s), need))})

                def n_y(r, s, j=j, si=si):
                    ta, tm = stresses(r, s)
                    return sh.yield_safety(ta[j], tm[j], si.yield_shear)
                out.append({"criterion": "shaft_yield", "link": link.id, "band": band, "unit": "1",
                            "segment": j, "note": "first-cycle yield, S_sy / (tau_a + |tau_m|)",
                            "fn": lambda r, s, n=n_y: 1.0 / n(r, s),
                            "parts": lambda r, s, n=n_y: (n(r, s), np.ones(np.shape(s)))})
    if inputs[0].design_factor is not None:
        out += _rule_specs(ctx, li, link, inputs, factors, bands, acc)
    return out


def _rule_specs(ctx, li, link, inputs, factors, bands, acc) -> list:
    """IACS UR M68 checks of one propulsion shaft, and its barred speed ranges."""
    n0 = ctx.op.speed_max
    out = []

    def nominal(r):
        return ctx.seg_vib(r, li) * factors[:, None]  # no stress concentration: C_K holds the notch

    def tau_c(s):
        lam = np.asarray(s, float) / n0
        return np.stack([sh.continuous_limit(si.rule_tensile_strength, si.design_factor, si.outer_diameter, lam)
                         for si in inputs])

    def tau_t(s):
        lam = np.asarray(s, float) / n0
        return np.stack([sh.transient_limit(si.rule_tensile_strength, si.design_factor, si.outer_diameter, lam)
                         for si in inputs])

    def util_c(r, s):
        return (nominal(r) / tau_c(s)).max(0)

    def util_t(r, s):  # tau_T where defined (lambda <= 0.8), tau_C above
        tt = tau_t(s)
        lim = np.where(np.isfinite(tt), tt, tau_c(s))
        return (nominal(r) / lim).max(0)

    def parts(util, limit_fn):
        def f(r, s):
            v = nominal(r)
            lim = limit_fn(s)
            j = np.argmax(v / lim, axis=0)
            k = np.arange(v.shape[1])
            return v[j, k], lim[j, k]
        return f

    def limit_t(s):
        tt = tau_t(s)
        return np.where(np.isfinite(tt), tt, tau_c(s))

    speed = acc.speed
    grid_c = util_c(ctx.resp, speed)
    grid_t = util_t(ctx.resp, speed)
    lam_max = sh.TRANSIENT_LAMBDA_MAX
    for band in bands:
        idx = _band_indices(speed, band)
        if not idx.size:
            continue
        if band.name == TRANSIENT:
            out.append({"criterion": "shafting_transient", "link": link.id, "band": band, "unit": "Pa",
                        "note": f"{sh.RULE_NAME}: tau_T = 1.7 tau_C / sqrt(C_K) up to lambda 0.8, tau_C above",
                        "fn": util_t, "parts": parts(util_t, limit_t)})
            continue
        if band.name == OVERSPEED:
            out.append({"criterion": "shafting_continuous", "link": link.id, "band": band, "unit": "Pa",
                        "note": f"{sh.RULE_NAME}: tau_C (lambda above 1.05 at the 1.38 constant)",
                        "fn": util_c, "parts": parts(util_c, tau_c)})
            continue
        # operating range: barred ranges where tau > tau_C
        found = _ranges(ctx, util_c, speed, idx, grid_c)
        edge_specs = [x[k] for x in found for k in ("low_spec", "high_spec") if x[k] is not None]
        _polish_roots(ctx, edge_specs)
        barred = []
        for x in found:
            low = x["low_spec"]["root"] if x["low_spec"] else x["low"]
            high = x["high_spec"]["root"] if x["high_spec"] else x["high"]
            inside = idx[(speed[idx] >= x["low"]) & (speed[idx] <= x["high"])]
            ratio_t = grid_t[inside]
            k = int(np.argmax(grid_c[inside]))
            permitted = bool(high <= lam_max * n0 * (1 + 1e-12) and np.all(ratio_t <= 1.0))
            note = "pass quickly" if permitted else (
                "reaches above lambda 0.8, where no barred range is permitted" if high > lam_max * n0
                else "the transient limit tau_T is exceeded inside")
            rng = SpeedRange("barred", link.id, ctx.name, float(low), float(high), x["low_spec"] is not None,
                             x["high_spec"] is not None, float(grid_c[inside][k]), float(speed[inside][k]),
                             permitted, note, (OPERATING,))
            barred.append(rng)
            acc.barred_ranges.append(rng)
            out.append({"criterion": "shafting_barred_range", "link": link.id, "band": band, "unit": "Pa",
                        "note": f"barred range {low * RPM:.1f}-{high * RPM:.1f} rpm: tau_T inside "
                                "(lambda <= 0.8)",
                        "only": lambda ix, lo=x["low"], hi=x["high"]: (speed[ix] >= lo) & (speed[ix] <= hi),
                        "fn": util_t, "parts": parts(util_t, limit_t)})
        permitted_ranges = [(b.low, b.high) for b in barred if b.permitted]

        def outside(ix, pr=tuple(permitted_ranges)):
            keep = np.ones(ix.size, bool)
            for lo, hi in pr:
                keep &= ~((speed[ix] >= lo) & (speed[ix] <= hi))
            return keep
        out.append({"criterion": "shafting_continuous", "link": link.id, "band": band, "unit": "Pa",
                    "note": f"{sh.RULE_NAME}: tau_C" + (" outside the barred ranges" if permitted_ranges else ""),
                    "only": outside, "refine": not permitted_ranges,
                    "fn": util_c, "parts": parts(util_c, tau_c)})
    return out


# ---- gear meshes
def _hammer_specs(ctx, li, link, acc: Acceptance, refine: bool) -> list:
    speed = acc.speed

    def ratio(r, s):
        mean = np.abs(ctx.mean(li, s))
        v = ctx.vib(r, li)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(mean > 0, v / np.where(mean > 0, mean, 1.0), np.where(v > 0, np.inf, 0.0))

    def parts(r, s):
        return ctx.vib(r, li), np.abs(ctx.mean(li, s))

    grid = ratio(ctx.resp, speed)
    everywhere = np.flatnonzero(band_of(speed, acc.bands) != "")  # every speed the train runs at
    found = _ranges(ctx, ratio, speed, everywhere, grid)
    edges = [x[k] for x in found for k in ("low_spec", "high_spec") if x[k] is not None]
    if refine:
        _polish_roots(ctx, [e for e in edges if np.isfinite(e["flo"]) and np.isfinite(e["fhi"])])
    for x in found:
        lo_s, hi_s = x["low_spec"], x["high_spec"]
        low = lo_s["root"] if lo_s and "root" in lo_s else x["low"]
        high = hi_s["root"] if hi_s and "root" in hi_s else x["high"]
        inside = np.arange(x["i0"], x["i1"] + 1)
        k = _worst(grid[inside])
        acc.hammer_ranges.append(SpeedRange("gear_hammer", link.id, ctx.name, float(low), float(high),
                                            bool(lo_s and "root" in lo_s), bool(hi_s and "root" in hi_s),
                                            float(grid[inside][k]), float(speed[inside][k]), None,
                                            "vibratory torque above the mean: the teeth separate",
                                            _bands_reached(acc.bands, low, high)))
    # judged in continuous running; while passing through (start-up, run-down, overspeed)
    # the teeth may separate briefly: reported as ranges only (common practice, no source)
    band = next(b for b in speed_bands(ctx.op, lowest=min(float(speed.min()), ctx.op.speed_min))
                if b.name == OPERATING)
    return [{"criterion": "gear_hammer", "link": link.id, "band": band, "unit": "N*m",
             "note": "vibratory torque against the mean torque through the mesh",
             "fn": ratio, "parts": parts}]


# ------------------------------------------------------------------ the headline
@dataclass(frozen=True)
class ModeArgument:
    """How one natural frequency is accepted."""

    mode: int
    frequency_hz: float
    basis: str  # "separation" | "forced_response" | "open" | "fail"
    failing_lines: tuple  # labels of the excitation lines within the margin
    reason: str  # why separation is not met (empty for "separation")
    checks: tuple = ()  # the failing checks (basis "fail"), or the checks that carry it
    nearest_clear_hz: tuple | None = None  # nearest frequency interval clear of every line


@dataclass
class Argument:
    """The acceptance argument of the whole train, for the headline."""

    verdict: str  # "pass" | "fail" | "open"
    margin: float
    modes: list  # ModeArgument, in mode order
    clear_zones_hz: list  # (lo, hi) frequency intervals clear of every line over the operating range
    crowded_zones_hz: list  # (lo, hi, n_lines): zones where lines lie closer than the margin allows
    counts: dict

    @property
    def separation(self) -> list:
        return [m for m in self.modes if m.basis == "separation"]

    @property
    def forced_response(self) -> list:
        return [m for m in self.modes if m.basis == "forced_response"]


def _zones(lines, speed_min, speed_max, margin, cap_hz):
    """Frequency intervals within the margin of some excitation line over the
    operating range, merged, with how many lines make each: a line f = a n covers
    (a n_min (1 - m), a n_max (1 + m)), a fixed frequency f (f (1 - m), f (1 + m)).
    Returns (forbidden [(lo, hi, n)], clear [(lo, hi)] up to cap_hz)."""
    iv = []
    for l in lines:
        lo, hi = l.frequency_range(speed_min, speed_max)
        if hi > 0:
            iv.append((lo * (1 - margin), hi * (1 + margin)))
    iv.sort()
    merged = []
    for lo, hi in iv:
        if merged and lo < merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], hi), merged[-1][2] + 1)
        elif merged and lo == merged[-1][0] and hi == merged[-1][1]:
            merged[-1] = (lo, hi, merged[-1][2] + 1)
        else:
            merged.append((lo, hi, 1))
    clear, x = [], 0.0
    for lo, hi, _ in merged:
        if lo > x:
            clear.append((x, min(lo, cap_hz)))
        x = max(x, hi)
    if x < cap_hz:
        clear.append((x, cap_hz))
    return merged, [c for c in clear if c[1] > c[0]]


def acceptance_argument(screening, acceptance: Acceptance | None) -> Argument:
    """The trade's acceptance argument: each mode kept clear by separation, or accepted
    by the forced response against the limits, or failing (named with its failing
    checks), or open (no forced response can judge it: a line within the margin
    carries no amplitude, or no limit is given).

    A mode within the margin of lines whose amplitudes the forced response includes is
    accepted when every check of the operating range passes (separation is judged over
    the operating range; resonances passed through while starting are judged by the
    checks of the other bands, which the acceptance verdict includes).  Why separation is not
    met is said per mode: a line crosses it inside a variable-speed range; it lies in a
    crowded zone where several lines overlap within the margin (the half orders of a
    four-stroke engine lie half the rotational frequency apart — 12.5 Hz at 1 500 rpm
    — so above about 62 Hz no frequency clears 10 % from all of them); or it could be
    moved to the nearest clear zone, which is named.
    """
    sc = screening
    op = sc.train.operating
    m = sc.margin
    forbidden, clear = _zones(sc.lines, sc.speed_min, sc.speed_max, m, sc.cap_hz)
    crowded = [z for z in forbidden if z[2] >= 2 and z[1] - z[0] > 0]
    amplitude = set()  # (source, order) of every line the forced response carries
    for e in op.excitations:
        if e.frequency is not None and e.amplitude is not None:
            amplitude.add((e.name, None))
        for o in e.orders:
            if o.amplitude is not None or getattr(e, "engine", None) is not None:  # an engine gives them all
                amplitude.add((e.name, o.order))
        for fl in getattr(e, "lines", ()):
            if fl.amplitude is not None:
                amplitude.add((f"{e.name}: {fl.name}", fl.order if fl.offset_hz == 0.0 else None))
    by_mode: dict[int, list] = {}
    freq = {}
    for c in sc.all_pairs:
        freq[c.mode] = c.frequency_hz
        if not c.passed:
            by_mode.setdefault(c.mode, []).append(c)
    out = []
    for mode in sorted(freq):
        fails = by_mode.get(mode, [])
        f = freq[mode]
        if not fails:
            out.append(ModeArgument(mode, f, "separation", (), ""))
            continue
        labels = tuple(c.line.label for c in fails)
        near = min(clear, key=lambda iv: min(abs(f - iv[0]), abs(f - iv[1]))) if clear else None
        reasons = []
        if op.speed_max > op.speed_min and any(
                c.crossing_speed is not None and op.speed_min <= c.crossing_speed <= op.speed_max for c in fails):
            reasons.append("an excitation line crosses it inside the operating range")
        zone = next((z for z in crowded if z[0] <= f <= z[1]), None)
        if zone is not None:
            reasons.append(f"it lies in {zone[0]:.4g}-{zone[1]:.4g} Hz, where {zone[2]} excitation lines "
                           f"overlap within {m * 100:g} %: no frequency there clears them all")
        if not reasons:
            reasons.append("within the margin of one line" +
                           (f"; the nearest clear zone is {near[0]:.4g}-{near[1]:.4g} Hz" if near else ""))
        reason = "; ".join(reasons)
        covered = all((c.line.source, c.line.order) in amplitude for c in fails)
        if not covered or acceptance is None:
            out.append(ModeArgument(mode, f, "open", labels, reason + "; no forced response covers every "
                                    "line within the margin (give their amplitudes)", (), near))
            continue
        # separation is a matter of the operating range: the checks there carry the argument
        relevant = [ch for ch in acceptance.checks if ch.speed_band == OPERATING
                    and ch.criterion not in STEADY_CRITERIA]
        if not relevant:
            out.append(ModeArgument(mode, f, "open", labels, reason + "; no limit is given to judge the "
                                    "forced response against", (), near))
            continue
        failed = tuple(ch for ch in relevant if not ch.passed)
        out.append(ModeArgument(mode, f, "fail" if failed else "forced_response", labels, reason,
                                failed or tuple(relevant), near))
    counts = {b: sum(1 for x in out if x.basis == b) for b in ("separation", "forced_response", "open", "fail")}
    failed_checks = acceptance is not None and acceptance.passed is False
    verdict = "fail" if counts["fail"] or failed_checks else ("open" if counts["open"] else "pass")
    return Argument(verdict, m, out, clear, crowded, counts)


# ------------------------------------------------------------------ JSON numbers
def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None


def acceptance_json(acc: Acceptance) -> dict:
    """The numbers of the ``twistwise response --json`` contract (issue 12, item 8):
    per link ``mean_torque_nm`` {load case: [one value per speed]}, the checks,
    the barred speed ranges and the gear hammer ranges (rpm of the reference shaft)."""
    mean = {l.id: {name: [_num(v) for v in T[li]] for name, T in acc.mean_torque.items()}
            for li, l in enumerate(acc.train.links)}

    def rng(r):
        return {"link": r.link, "load_case": r.load_case, "from_rpm": r.low_rpm, "to_rpm": r.high_rpm,
                "from_exact": r.low_exact, "to_exact": r.high_exact, "worst_ratio": _num(r.worst),
                "worst_at_rpm": r.worst_at * RPM, "permitted": r.permitted, "note": r.note,
                "speed_bands": list(r.bands)}

    return {
        "combination": acc.combination,
        "mean_torque_nm": mean,
        "checks": [{"criterion": c.criterion, "link": c.link, "load_case": c.load_case,
                    "speed_band": c.speed_band, "value": _num(c.value), "limit": _num(c.limit),
                    "utilisation": _num(c.utilisation), "at_rpm": c.at_rpm, "passed": c.passed,
                    "unit": c.unit, "segment": c.segment, "note": c.note} for c in acc.checks],
        "barred_speed_ranges": [rng(r) for r in acc.barred_ranges],
        "gear_hammer_ranges": [rng(r) for r in acc.hammer_ranges],
        "speed_bands": [{"name": b.name, "from_rpm": b.low * RPM, "to_rpm": b.high * RPM,
                         "running": b.running, "title": b.title} for b in acc.bands],
        "passed": acc.passed,
        "notes": list(acc.notes),
    }
