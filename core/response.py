"""Damped forced response: vibratory torque, shaft stress and dissipated power
across the speed range.

Method
------
Steady-state harmonic response of the damped train, solved directly (no modal
truncation).  For every excitation frequency omega the complex dynamic
stiffness

    Z(omega) = K(omega) - omega^2 M + i omega C + i H

is factored on the train's tree (:mod:`core.elimination`, O(n) per frequency,
vectorised over all speeds and orders together) and solved for the phasor of
every disc angle, theta = Z^-1 T.  (Harmonic response by complex dynamic
stiffness: e.g. W. T. Thomson, Theory of Vibration with Applications, ch.
"forced harmonic vibration" and "complex stiffness" — from memory.)

* Damping: a disc's ``damping`` is a viscous dashpot to ground; a link's
  ``damping`` is a relative viscous dashpot across it; a link's ``loss_factor``
  (or relative damping psi = 2 pi eta, or dynamic magnifier M = 1 / eta) makes
  its stiffness hysteretic, k (1 + i eta).  On a shaft with distributed mass
  both act as a complex shear modulus G (1 + i eta + i omega c / k) (a
  Kelvin-Voigt material carrying the link's dashpot in proportion to
  stiffness, which is exact for a massless shaft).
* Excitation: each order of an excitation source acts on its ``at`` disc (or,
  with ``cylinders``, on every throw with phase ``phase_deg - order * firing_deg``,
  the vector-sum method of engine torsional analysis); a fixed-frequency source
  acts on its ``applied_at`` disc.  Torques on geared shafts are referred with
  the speed factor like everything else (:mod:`core.assembly`).  Amplitudes with
  ``"scaling": "speed_squared"`` are A (n / n_at)^2 with n the source shaft speed.
* Harmonics of the same frequency (the same order seen on the reference shaft,
  from several sources or throws) are superposed with their phases and
  reported as one order.
* Per link: the vibratory torque amplitude (largest along a distributed shaft,
  sampled at 11 stations per segment); for a shaft given by geometry the shear
  stress amplitude tau = T r / Ip times the stress concentration factor (for a
  massless or lumped shaft in its smallest section, where T r / Ip is largest);
  the power dissipated, P = omega/2 Im(theta^H Z_link theta) per order, summed
  over orders (time averages of different frequencies add).
* Combining orders: the sum of the order amplitudes (conservative, common
  practice, no source) is the headline value.  Alongside, the phase-aware
  synthesis: harmonics whose frequencies stand in small whole-number ratios
  repeat with a common period and are summed as a time signal over it (peak
  of |sum| found on a grid of 8 points per shortest period, then polished by
  Newton steps); groups of harmonics with no such ratio drift in relative phase
  and eventually line up (Kronecker's approximation theorem, e.g. Hardy &
  Wright, An Introduction to the Theory of Numbers, ch. 23 — from memory), so
  their peaks add.

Units: SI throughout — speeds rad/s of the reference shaft, torque N*m,
stress Pa, angle rad, power W.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import scipy.sparse as sp

from .assembly import assemble, peel_rigid_meshes
from .bands import OPERATING, speed_bands
from .elimination import cached_schedule, factor, solve_factored
from .errors import ModelError
from .model import Train
from .solver import _map  # the solver's thread pool over independent column pieces

TWO_PI = 2.0 * np.pi
STATIONS_PER_SEGMENT = 11  # torque samples along a distributed shaft segment
DEFAULT_SPEED_COUNT = 400
_MAX_RATIO_DENOMINATOR = 24  # harmonics in ratio p/q, q <= 24, share a period
_MAX_HARMONIC = 240  # longer common periods are treated as incommensurate (conservative)


# ----------------------------------------------------------------- input
@dataclass(frozen=True)
class Harmonic:
    """One harmonic excitation torque on one disc."""

    group: int  # index into the order groups
    disc: int  # index into train.discs
    amplitude: float  # N*m (at at_speed for speed_squared scaling)
    phase: float  # rad
    at_speed: float | None  # rad/s of the source shaft, for speed_squared scaling
    source_ratio: float  # source shaft speed per unit reference speed


@dataclass(frozen=True)
class OrderGroup:
    """Harmonics of one frequency: omega = multiplier * reference speed, or fixed."""

    label: str
    multiplier: float  # rad/s of excitation per rad/s of reference speed (0 when fixed)
    fixed_omega: float | None  # rad/s, fixed-frequency sources
    sources: tuple[str, ...]
    order: float | None  # order on the source shaft (first source), None if fixed or a line
    offset_omega: float = 0.0  # rad/s: a line omega = |offset_omega + multiplier speed| (electric drives)

    def omega(self, speed: np.ndarray) -> np.ndarray:
        if self.fixed_omega is not None:
            return np.full(np.shape(speed), self.fixed_omega)
        if self.offset_omega:
            return np.abs(self.offset_omega + self.multiplier * np.asarray(speed, float))
        return self.multiplier * np.asarray(speed, float)


def has_amplitudes(train: Train) -> bool:
    """True when any excitation order or fixed-frequency source carries an amplitude."""
    op = train.operating
    if op is None:
        return False
    for e in op.excitations:
        if e.frequency is not None:
            if e.amplitude is not None:
                return True
        elif any(o.amplitude is not None for o in e.orders):
            return True
        elif e.engine is not None or any(fl.amplitude is not None for fl in e.lines):
            return True
    return False


def excitation_harmonics(train: Train) -> tuple[list[OrderGroup], list[Harmonic]]:
    """Order groups and the harmonic torques of every excitation with an amplitude."""
    op = train.operating
    if op is None:
        raise ModelError("the project has no operating data: give reference, operating_speed and "
                         "excitations", "operating data", "operating_speed")
    index = {d: i for i, d in enumerate(train.disc_ids)}
    keys: dict = {}
    labels: list[list] = []
    harmonics: list[Harmonic] = []

    def group_of(key, label, multiplier, fixed, source, order, offset=0.0):
        if key not in keys:
            keys[key] = len(labels)
            labels.append([label, multiplier, fixed, [source], order, offset])
        else:
            g = labels[keys[key]]
            if source not in g[3]:
                g[3].append(source)
        return keys[key]

    for e in op.excitations:
        ew = f"excitation '{e.name}'"
        if e.frequency is not None:
            if e.amplitude is None:
                continue
            if e.applied_at is None:
                raise ModelError("a fixed-frequency source with an amplitude needs 'at' (the disc "
                                 "its torque acts on) for the forced response", ew, "at")
            w = TWO_PI * e.frequency
            g = group_of(("fixed", round(w, 9)), f"{e.name} ({e.frequency:g} Hz)", 0.0, w, e.name, None)
            harmonics.append(Harmonic(g, index[e.applied_at], e.amplitude, math.radians(e.phase_deg),
                                      None, 1.0))
            continue
        ratio = train.relative_speed(e.at, op.reference)
        if e.engine is not None:  # per cylinder: gas torque (constant) + inertia torque (speed squared)
            for h in e.engine.harmonics():
                g = group_of(("order", float(f"{h.order * ratio:.12g}")), f"{e.name}, order {h.order:g}",
                             h.order * ratio, None, e.name, h.order)
                if h.gas != 0:
                    harmonics.append(Harmonic(g, index[h.disc], abs(h.gas), float(np.angle(h.gas)), None, ratio))
                if h.inertia != 0:  # amplitude at 1 rad/s of the crank shaft, times speed squared
                    harmonics.append(Harmonic(g, index[h.disc], abs(h.inertia), float(np.angle(h.inertia)),
                                              1.0, ratio))
            continue
        for fl in e.lines:  # omega = |2 pi a + b ratio speed|
            if fl.amplitude is None:
                continue
            mult, off = fl.signed_order * ratio, TWO_PI * fl.offset_hz
            if off == 0.0:  # b N alone: an order, superposed with the same order of other sources
                g = group_of(("order", float(f"{mult:.12g}")), f"{e.name}: {fl.name}", mult, None, e.name,
                             fl.order)
            else:
                g = group_of(("line", float(f"{mult:.12g}"), float(f"{off:.12g}")), f"{e.name}: {fl.name}",
                             mult, None, e.name, None, off)
            harmonics.append(Harmonic(g, index[e.at], fl.amplitude, math.radians(fl.phase_deg), None, ratio))
        throws = e.cylinders or ((e.at, 0.0),)
        for o in e.orders:
            if o.amplitude is None:
                continue
            mult = o.order * ratio
            g = group_of(("order", float(f"{mult:.12g}")), f"{e.name}, order {o.order:g}", mult, None,
                         e.name, o.order)
            at_speed = o.at_speed if o.scaling == "speed_squared" else None
            for disc, firing_deg in throws:
                phase = math.radians(o.phase_deg - o.order * firing_deg)
                harmonics.append(Harmonic(g, index[disc], o.amplitude, phase, at_speed, ratio))
    if not harmonics:
        raise ModelError("no excitation carries an amplitude; give orders as {\"order\": 3, "
                         "\"amplitude\": \"1.2 kN*m\"} for a forced response", "operating data",
                         "excitations")
    groups = []
    for label, mult, fixed, sources, order, offset in labels:
        if len(sources) > 1:
            label = " + ".join(sources) + (f" ({fixed / TWO_PI:g} Hz)" if fixed is not None
                                           else f", {mult:g} x reference speed")
        groups.append(OrderGroup(label, mult, fixed, tuple(sources), order, offset))
    return groups, harmonics


def speed_span(train: Train) -> tuple[float, float]:
    """(lowest, highest) reference speed (rad/s) the default speeds cover: from near
    standstill (1 % of the top speed: the start-up and run-down band) up to the trip
    speed, or without one to the top of the range widened by the separation margin."""
    op = train.operating
    if op is None:
        raise ModelError("the project has no operating data", "operating data", "operating_speed")
    hi = op.trip_speed if op.trip_speed is not None and op.trip_speed >= op.speed_max \
        else op.speed_max * (1.0 + op.margin)
    return 0.01 * hi, hi


def default_speeds(train: Train, groups: list[OrderGroup] | None = None,
                   count: int = DEFAULT_SPEED_COUNT) -> np.ndarray:
    """Reference speeds (rad/s) for the speed bands (:mod:`core.bands`): from near
    standstill through the operating range up to the trip speed (see
    :func:`speed_span`), a quarter as many again inside the operating range, its
    ends and the trip speed exactly, and every crossing of an order with an
    undamped natural frequency in the span, so no resonance peak is stepped over."""
    op = train.operating
    lo, hi = speed_span(train)
    parts = [np.linspace(lo, hi, count), [op.speed_min, op.speed_max]]
    if op.speed_max > op.speed_min:
        parts.append(np.linspace(op.speed_min, op.speed_max, max(2, count // 4)))
    if op.trip_speed is not None:
        parts.append([op.trip_speed])
    if groups is None:
        groups = excitation_harmonics(train)[0]
    parts.append(crossing_speeds(train, groups, lo, hi))
    speeds = np.unique(np.concatenate([np.asarray(p, float) for p in parts]))
    return speeds[(speeds >= lo) & (speeds <= hi) | np.isin(speeds, [op.speed_min, op.speed_max])]


def crossing_speeds(train: Train, groups: list[OrderGroup], lo: float, hi: float) -> np.ndarray:
    """Reference speeds (rad/s) in (lo, hi) where an order meets an undamped natural frequency."""
    plain = [g for g in groups if g.fixed_omega is None and not g.offset_omega]
    mults = np.array([g.multiplier for g in plain if g.multiplier > 0])
    lines = [g for g in groups if g.fixed_omega is None and g.offset_omega]
    if (not mults.size and not lines) or hi <= 0:
        return np.zeros(0)
    from .solver import natural_modes
    top = max([float(mults.max() * hi) if mults.size else 0.0] +
              [max(abs(g.offset_omega), abs(g.offset_omega + g.multiplier * hi)) for g in lines])
    modes = natural_modes(train, max_frequency_hz=top / TWO_PI * 1.05)
    wn = TWO_PI * modes.frequency_hz[modes.elastic]
    cross = (wn[:, None] / mults[None, :]).ravel() if mults.size else np.zeros(0)
    for g in lines:  # |c + m N| = wn: N = (wn - c) / m or (-wn - c) / m (closed form)
        if g.multiplier:
            cross = np.r_[cross, (wn - g.offset_omega) / g.multiplier, (-wn - g.offset_omega) / g.multiplier]
    return np.sort(cross[(cross > lo) & (cross < hi)])


# ----------------------------------------------------------------- result
@dataclass(eq=False)
class Response:
    """Forced response over reference speeds; arrays (first axis links/discs/orders, last speeds).

    ``link_torque_phased`` / ``link_stress_phased`` (phase-aware synthesis) are
    computed on first access, so callers that need only the amplitudes do not
    pay for the time-signal synthesis.
    """

    train: Train
    speed: np.ndarray  # (n_s,) rad/s of the reference shaft
    link_ids: list
    disc_ids: list
    link_kinds: list
    link_torque: np.ndarray  # (n_links, n_s) N*m, sum of order amplitudes
    link_stress: np.ndarray  # (n_links, n_s) Pa, NaN rows without geometry
    disc_angle: np.ndarray  # (n_discs, n_s) rad, sum of order amplitudes
    link_power: np.ndarray  # (n_links, n_s) W dissipated (time average, all orders)
    orders: list  # labels
    order_groups: list
    order_frequency_hz: np.ndarray  # (n_orders, n_s)
    order_link_torque: np.ndarray  # (n_orders, n_links, n_s) N*m
    order_link_stress: np.ndarray  # (n_orders, n_links, n_s) Pa
    order_disc_angle: np.ndarray  # (n_orders, n_discs, n_s) rad
    permissible_torque: np.ndarray  # (n_links,) N*m, NaN when not given
    permissible_stress: np.ndarray  # (n_links,) Pa, NaN when not given
    disc_power: np.ndarray  # (n_discs, n_s) W dissipated by disc dampers
    solve_time_s: float = 0.0
    notes: list = field(default_factory=list)
    _station: tuple | None = field(default=None, repr=False)
    _phased: tuple | None = field(default=None, repr=False)
    _segment: np.ndarray | None = field(default=None, repr=False)  # per station, -1: whole link

    @property
    def speed_rpm(self) -> np.ndarray:
        return self.speed * 60.0 / TWO_PI

    def _synthesise(self):
        if self._phased is None:
            t0 = time.perf_counter()
            Tst, st_link, factor = self._station
            n_st, ng, ns = Tst.shape
            nl = len(self.link_ids)
            peak = _phased_peak(np.moveaxis(Tst, 1, 0).reshape(ng, -1),
                                _families(self.order_groups)).reshape(n_st, ns)
            torque = _link_max(peak, st_link, nl)
            stress = _link_max(peak * np.where(np.isfinite(factor), factor, 0.0)[:, None], st_link, nl)
            stress[np.all(np.isnan(self.link_stress), axis=1)] = np.nan
            self._phased = (torque, stress, time.perf_counter() - t0, peak)
        return self._phased

    @property
    def link_torque_phased(self) -> np.ndarray:
        """(n_links, n_s) N*m: peak of the summed time signal (phase-aware synthesis)."""
        return self._synthesise()[0]

    @property
    def link_stress_phased(self) -> np.ndarray:
        """(n_links, n_s) Pa, phase-aware like :attr:`link_torque_phased`."""
        return self._synthesise()[1]

    @property
    def synthesis_time_s(self) -> float:
        return self._synthesise()[2]

    def segment_torque(self, link, phased: bool = False) -> np.ndarray:
        """(n_segments, n_s) N*m: vibratory torque amplitude in every segment of a
        shaft given by geometry (largest over the segment's stations along a
        distributed shaft; a massless or lumped shaft carries one torque
        throughout).  Sum of order amplitudes, or the phase-aware peak with
        ``phased``.  A link without segments gives one row, its link torque."""
        li = self.link_ids.index(link) if isinstance(link, str) else int(link)
        n_seg = max(1, len(self.train.links[li].segments))
        Tst, st_link, _ = self._station
        sel = np.flatnonzero(st_link == li)
        amp = self._synthesise()[3][sel] if phased else np.abs(Tst[sel]).sum(1)
        seg = self._segment[sel] if self._segment is not None else np.full(len(sel), -1)
        out = np.zeros((n_seg, self.speed.size))
        for j in range(n_seg):
            rows = (seg == j) | (seg == -1)
            if rows.any():
                out[j] = amp[rows].max(0)
        return out


@dataclass(frozen=True)
class LinkPeak:
    link_id: str
    kind: str
    peak_torque: float  # N*m, sum of order amplitudes
    speed_at_peak_torque: float  # rad/s of the reference shaft
    permissible_torque: float | None
    peak_stress: float | None  # Pa
    speed_at_peak_stress: float | None
    permissible_stress: float | None
    passed: bool | None  # None when nothing permissible is given
    peak_torque_phased: float = math.nan
    peak_stress_phased: float | None = None
    peak_power: float = 0.0  # W
    speed_at_peak_power: float | None = None
    band: str = ""  # speed band of these peaks ("operating" ...); "" for every computed speed


@dataclass(frozen=True)
class Exceedance:
    link_id: str
    quantity: str  # "torque" | "stress"
    peak: float
    permissible: float
    speed: float  # rad/s of the reference shaft, at the peak
    speed_band: tuple[float, float] = (math.nan, math.nan)  # first and last speed above the limit
    band: str = ""  # speed band judged: "operating" | "transient" | "overspeed"
    limit_basis: str = "continuous"  # "continuous" | "transient": which permissible value

    @property
    def ratio(self) -> float:
        return self.peak / self.permissible


# ----------------------------------------------------------------- solver
def _complex_members(members, link_factor, omega):
    """Member end stiffness (K_aa = K_bb, K_ab), complex, shapes (n_members, m).

    ``link_factor`` (n_members, m) is the complex modulus factor 1 + i eta + i omega c / k.
    Distributed members use the exact field of the torsional wave equation with the
    complex modulus: k* = k mu, x* = omega L / c / sqrt(mu) (see core.assembly.member_stiffness).
    """
    k = members.k[:, None] * link_factor
    kab = -k
    dist = members.L_over_c > 0
    if dist.any():
        x = members.L_over_c[dist, None] * omega[None, :] / np.sqrt(link_factor[dist])
        sinc = np.sinc(x / np.pi)
        sinc = np.where(sinc == 0.0, 1e-300, sinc)
        kab[dist] = -k[dist] / sinc
        kaa = -kab.copy()
        kaa[dist] = -kab[dist] * np.cos(x)
        return kaa, kab, x
    return k, kab, None  # springs: K_aa = k*, K_ab = -k*


def _section_factor(link) -> float:
    """Largest r / Ip over a shaft's segments, 1/m^3 (NaN without geometry)."""
    if not link.segments:
        return math.nan
    return max(0.5 * s.outer_diameter / s.polar_moment for s in link.segments)


def _families(groups: list[OrderGroup]):
    """Split order groups into families of commensurate frequencies.

    Returns a list of (group indices, integer harmonic numbers h) where each
    group's frequency is h times the family's fundamental; singletons get h = [1].
    """
    n = len(groups)
    parent = list(range(n))

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    def value(g):
        return g.fixed_omega if g.fixed_omega is not None else g.multiplier

    def ratio(a, b):
        r = value(groups[a]) / value(groups[b])
        f = Fraction(r).limit_denominator(_MAX_RATIO_DENOMINATOR)
        return f if f and abs(float(f) - r) <= 1e-9 * r else None

    for i in range(n):
        for j in range(i + 1, n):
            if (groups[i].fixed_omega is None) != (groups[j].fixed_omega is None):
                continue  # a fixed frequency drifts against speed-proportional orders
            if groups[i].offset_omega or groups[j].offset_omega:
                continue  # a line a + b N drifts against everything else
            if value(groups[i]) <= 0 or value(groups[j]) <= 0:
                continue
            if ratio(i, j) is not None:
                parent[find(i)] = find(j)
    fams: dict[int, list[int]] = {}
    for i in range(n):
        fams.setdefault(find(i), []).append(i)
    out = []
    for members in fams.values():
        if len(members) == 1:
            out.append((members, [1]))
            continue
        base = min(members, key=lambda i: value(groups[i]))
        fr = [Fraction(value(groups[i]) / value(groups[base])).limit_denominator(_MAX_RATIO_DENOMINATOR)
              for i in members]
        L = math.lcm(*(f.denominator for f in fr))
        h = [int(f * L) for f in fr]
        g = math.gcd(*h)
        h = [x // g for x in h]
        if max(h) > _MAX_HARMONIC:  # too long a common period: treat as drifting (conservative)
            out.extend(([i], [1]) for i in members)
        else:
            out.append((members, h))
    return out


def _family_peak(A: np.ndarray, h: np.ndarray, chunk_cells: int = 2_000_000,
                 fine: int = 9, newton_steps: int = 12, pair_chunk: int = 100_000) -> np.ndarray:
    """max over tau of |f(tau)|, f = sum_j Re(A_j exp(i h_j tau)); A: (n_h, cols) complex,
    h coprime integers.

    1. Coarse grid: 8 samples per period of the highest harmonic H.  By Bernstein's
       inequality for a trigonometric polynomial of degree H, |f''| <= H^2 max|f|
       (e.g. A. Zygmund, Trigonometric Series, ch. X — from memory), so the sample
       nearest the true maximum M (at most half a step, pi / (8 H), away) reads at
       least M (1 - (pi/8)^2 / 2) > 0.922 M.  Every sample above 0.92 of the largest
       sample is therefore a candidate: the true peak cannot hide among the others.
    2. Around each candidate, ``fine`` samples over +-1 coarse step (one small
       matrix product: the shift is a constant matrix exp(i h delta)).
    3. From the best fine sample, safeguarded Newton steps on f'(tau) = 0 (f' and
       f'' in closed form from the phasors) inside the bracket where f' changes
       sign, bisecting when a step leaves it: converges quadratically to the
       maximum, to rounding (checked against an independent dense maximisation;
       parabolic interpolation alone read up to 7e-6 low).
    """
    n_h, cols = A.shape
    H = int(h.max())
    n_t = max(16, 8 * H)
    dt = TWO_PI / n_t
    tau = np.arange(n_t) * dt
    table = np.exp(1j * h[None, :] * tau[:, None])  # (n_t, n_h)
    E = np.concatenate([table.real, -table.imag], axis=1).astype(np.float32)
    delta = np.linspace(-dt, dt, fine)
    P = np.exp(1j * h[:, None] * delta[None, :])  # (n_h, fine)
    Pr, Pi = P.real, P.imag
    hf = h.astype(float)[:, None]
    out = np.zeros(cols)
    step = max(1, chunk_cells // n_t)
    for c0 in range(0, cols, step):  # sequential: the matrix products already use BLAS threads
        a = A[:, c0:c0 + step]
        ch = a.shape[1]
        # coarse grid in single precision: it only picks the candidates (slack for rounding)
        S = np.abs(np.concatenate([a.real, a.imag], axis=0).T.astype(np.float32) @ E.T)  # (ch, n_t)
        slack = 1e-5 * np.abs(a).sum(0)
        thr = 0.92 * S.max(axis=1) - slack
        ci, ki = np.nonzero(S >= thr[:, None])
        best = np.zeros(ch)
        for p0 in range(0, len(ci), pair_chunk):
            c, k = ci[p0:p0 + pair_chunk], ki[p0:p0 + pair_chunk]
            B = a[:, c] * table[k].T  # phasors shifted to the candidate grid point (n_h, n_p)
            Fs = B.real.T @ Pr - B.imag.T @ Pi  # (n_p, fine) signed signal
            r = np.arange(len(c))
            m = np.argmax(np.abs(Fs), axis=1)
            sgn = np.sign(Fs[r, m])
            sgn = np.where(sgn == 0, 1.0, sgn)
            lo = delta[np.maximum(m - 1, 0)]
            hi = delta[np.minimum(m + 1, fine - 1)]
            t = delta[m].copy()
            f = np.abs(Fs[r, m])
            # a candidate whose best fine sample (spacing dt/4) is more than (pi/16)^2/8
            # below the column's best cannot hold the maximum (same bound): drop it
            np.maximum.at(best, c, f)
            act = np.flatnonzero(f >= (1.0 - 0.0049) * best[c] - slack[c])
            for _ in range(newton_steps):
                if not len(act):
                    break
                ta = t[act]
                z = B[:, act] * np.exp(1j * hf * ta[None, :])
                f[act] = np.maximum(f[act], np.abs(z.real.sum(0)))
                d1 = sgn[act] * -(hf * z).imag.sum(0)  # slope of sgn * f
                d2 = sgn[act] * -(hf * hf * z).real.sum(0)
                # the maximum of sgn * f lies where its slope turns negative
                lo[act] = np.where(d1 > 0, np.maximum(lo[act], ta), lo[act])
                hi[act] = np.where(d1 < 0, np.minimum(hi[act], ta), hi[act])
                with np.errstate(divide="ignore", invalid="ignore"):
                    tn = ta - d1 / d2
                bad = ~np.isfinite(tn) | (d2 >= 0) | (tn <= lo[act]) | (tn >= hi[act])
                tn = np.where(bad, 0.5 * (lo[act] + hi[act]), tn)
                t[act] = tn
                moving = np.abs(tn - ta) > 1e-13 * TWO_PI / H
                act = act[moving]
            z = B * np.exp(1j * hf * t[None, :])
            f = np.maximum(f, np.abs(z.real.sum(0)))
            np.maximum.at(best, c, f)
        out[c0:c0 + step] = best
    return out


def _phased_peak(Tg: np.ndarray, families) -> np.ndarray:
    """Phase-aware peak of the summed signal; Tg: (n_groups, cols) complex phasors."""
    total = np.zeros(Tg.shape[1])
    for members, h in families:
        if len(members) == 1:
            total += np.abs(Tg[members[0]])
        else:
            fam = Tg[members]
            # the sum of amplitudes bounds the peak; interpolation must not step over it
            total += np.minimum(_family_peak(fam, np.asarray(h)), np.abs(fam).sum(0))
    return total


def _link_max(values: np.ndarray, station_link: np.ndarray, n_links: int, fill=0.0) -> np.ndarray:
    """Largest value over each link's stations; values (n_stations, ...) -> (n_links, ...)."""
    out = np.full((n_links,) + values.shape[1:], fill, dtype=float)
    if len(station_link) and len(np.unique(station_link)) == len(station_link):
        out[station_link] = values  # one station per link: nothing to reduce
    elif len(station_link):
        order = np.argsort(station_link, kind="stable")
        sl = station_link[order]
        starts = np.flatnonzero(np.r_[True, sl[1:] != sl[:-1]])
        out[sl[starts]] = np.maximum.reduceat(values[order], starts, axis=0)
    return out


class _Setup:
    """Everything about the train that does not depend on frequency."""

    def __init__(self, train: Train):
        self.asm = asm = assemble(train)
        mem = asm.members
        self.schedule = cached_schedule(asm.n_nodes, asm.edges_a, asm.edges_b)
        self.tree = mem.b >= 0
        n_mem = len(mem.k)
        # node <- member scatter as sparse incidence matrices (each member touches a and b)
        rows = np.r_[mem.a, mem.b[self.tree]]
        cols = np.r_[np.arange(n_mem), np.flatnonzero(self.tree)]
        self.incidence = sp.csr_matrix((np.ones(len(rows)), (rows, cols)), shape=(asm.n_nodes, n_mem))
        nd = len(train.discs)
        # actual disc torque -> referred node load (times the disc's speed factor)
        self.disc_to_node = sp.csr_matrix((asm.disc_scale, (asm.disc_node, np.arange(nd))),
                                          shape=(asm.n_nodes, nd))
        # assemble straight into the elimination order of core.elimination
        order = self.schedule.order
        self.position = self.schedule.position
        self.incidence_e = self.incidence[order]
        self.disc_to_node_e = self.disc_to_node[order]
        self.inertia_e = asm.node_inertia[order][:, None]
        self.member_to_link = sp.csr_matrix((np.ones(n_mem), (mem.link, np.arange(n_mem))),
                                            shape=(len(train.links), n_mem))
        self.eta = np.array([l.loss_factor for l in train.links])[mem.link]
        self.c_over_k = np.array([l.damping / l.total_stiffness
                                  if not l.is_rigid and l.damping and not l.damping_only else 0.0
                                  for l in train.links])[mem.link]
        # links of damping alone (a viscous damper's ring): referred dashpot i omega c s^2
        self.c_pure = np.array([l.damping if l.damping_only else 0.0 for l in train.links])[mem.link] \
            * mem.scale ** 2
        self.pure = np.flatnonzero(self.c_pure > 0)
        self.damped = bool(np.any(self.eta) or np.any(self.c_over_k) or len(self.pure))
        node_c = np.zeros(asm.n_nodes)
        np.add.at(node_c, asm.disc_node, np.array([d.damping for d in train.discs]) * asm.disc_scale ** 2)
        self.node_c = node_c
        self.node_c_e = node_c[self.schedule.order][:, None]
        # springs without viscous link damping: the complex stiffness is the same at every omega
        self.constant_stiffness = not (np.any(mem.L_over_c > 0) or np.any(self.c_over_k) or len(self.pure))
        if self.constant_stiffness:
            self.mu_static = (1.0 + 1j * self.eta)[:, None]
            self.kmu_static = mem.k[:, None] * self.mu_static
            self.diag_static = np.asarray(self.incidence_e @ self.kmu_static)
        scale = max(float(mem.k.max()) if n_mem else 1.0, 1e-300)
        self.tiny = 1e-14 * scale
        self.dist = mem.L_over_c > 0
        # stations: one per spring member, STATIONS_PER_SEGMENT along each distributed member
        di = np.flatnonzero(self.dist)
        s = np.linspace(0.0, 1.0, STATIONS_PER_SEGMENT)
        self.st_member = np.r_[np.flatnonzero(~self.dist), np.tile(di, len(s))].astype(int)
        self.st_pos = np.r_[np.zeros(int((~self.dist).sum())), np.repeat(s, len(di))]
        self.rigid = [li for li, l in enumerate(train.links) if l.is_rigid]
        self.st_link = np.r_[mem.link[self.st_member], self.rigid].astype(int)
        factor = [_section_factor(train.links[li]) * train.links[li].stress_concentration
                  for li in mem.link[self.st_member]]
        self.st_factor = np.r_[np.array(factor, float), np.full(len(self.rigid), np.nan)]
        # segment of every station: distributed members are a link's segments in order
        rank = np.zeros(n_mem, int)
        for li in np.unique(mem.link[self.dist]):
            ms = np.flatnonzero((mem.link == li) & self.dist)
            rank[ms] = np.arange(len(ms))
        self.st_segment = np.r_[np.where(self.dist[self.st_member], rank[self.st_member], -1),
                                np.full(len(self.rigid), -1)].astype(int)


def _solve_chunk(train, st: _Setup, w, forcing, forced):
    """Node phasors and station torque phasors for frequencies w (m,); ``forcing``
    (n_forced, m) are the actual torques on the discs with indices ``forced``."""
    mem = st.asm.members
    m = w.size
    sch = st.schedule
    if st.constant_stiffness:  # springs with hysteretic damping only: k* does not vary
        mu = st.mu_static
        kaa, kab, x_dist = st.kmu_static, -st.kmu_static, None
        D = st.diag_static - st.inertia_e * (w * w)[None, :]
    else:
        mu = 1.0 + 1j * (st.eta[:, None] + st.c_over_k[:, None] * w[None, :])
        kaa, kab, x_dist = _complex_members(mem, mu, w)
        if len(st.pure):
            z = 1j * st.c_pure[st.pure][:, None] * w[None, :]
            kaa[st.pure] += z
            kab[st.pure] -= z
        D = st.incidence_e @ kaa  # diagonal, already in elimination order
        D -= st.inertia_e * (w * w)[None, :]
    if st.node_c.any():
        D = D + 1j * st.node_c_e * w[None, :]
    D = D.astype(complex, copy=False)
    W = np.empty((sch.n_slots, m), complex)
    if len(sch.slot_of_edge):
        W[sch.slot_of_edge] = st.asm.edge_sum(kab[st.tree])  # members in parallel add
    rhs = np.asarray(st.disc_to_node_e[:, forced] @ forcing, complex)
    _, _, factors = factor(sch, D, W, st.tiny, logdet=False, keep=True)
    phi = solve_factored(sch, factors, rhs)[st.position]  # back to node order
    Tst = _station_torques(mem, mu, x_dist, phi, st, w)
    if st.rigid:
        full = np.zeros((len(train.discs), m), complex)
        full[forced] = forcing
        Tst = np.concatenate([Tst, _mesh_torques(train, st, w, phi, full, Tst)])
    return phi, kaa, kab, Tst


def _member_power(st: _Setup, w, phi, kaa, kab):
    """Time-average power dissipated in each member, omega/2 Im(u^H Z u), W (n_members, m).

    Only damped members are evaluated; a spring's u^H Z u is k* |theta_a - theta_b|^2.
    """
    mem = st.asm.members
    out = np.zeros((len(mem.k), w.size))
    lossy = np.flatnonzero(((st.eta != 0) | (st.c_over_k != 0)) & st.dist)  # springs: from |T|
    if not len(lossy):
        return out
    a = phi[mem.a[lossy]]
    tree = st.tree[lossy]
    b = np.where(tree[:, None], phi[np.maximum(mem.b[lossy], 0)], 0.0)
    im = kaa[lossy].imag * (np.abs(a) ** 2 + np.abs(b) ** 2) + 2 * kab[lossy].imag * (np.conj(a) * b).real
    out[lossy] = 0.5 * w[None, :] * im
    return out


def _station_torques(members, mu, x_dist, phi, st: _Setup, w=None):
    """Torque phasors at every station, in the member's own shaft (n_stations, m).

    A spring carries k* (theta_a - theta_b) throughout; a distributed member
    T(s) = -k* x* (-theta_a cos(x*(1-s)) + theta_b cos(x* s)) / sin x* (field
    solution of the wave equation, see core.transfer.shaft_field_matrix).
    """
    springs = np.flatnonzero(~st.dist)
    # actual torque of a spring member = referred stiffness * referred twist / scale
    twist = phi[members.a[springs]]
    grounded = ~st.tree[springs]
    if not grounded.all():
        twist[~grounded] -= phi[members.b[springs[~grounded]]]
    gain = (members.k[springs] / members.scale[springs])[:, None]
    out = [twist * (gain * mu[springs]) if st.damped else twist * gain]
    if len(st.pure):  # a damper's ring: T = i omega c twist (actual = referred / scale)
        j = np.searchsorted(springs, st.pure)
        out[0][j] += twist[j] * (1j * (st.c_pure[st.pure] / members.scale[st.pure])[:, None] * w[None, :])
    if st.dist.any():
        pa = phi[members.a]
        pb = np.where(st.tree[:, None], phi[np.maximum(members.b, 0)], 0.0)
        sc = members.scale[:, None]
        k_act = (members.k / members.scale ** 2)[:, None] * mu
        di = np.flatnonzero(st.dist)
        x = x_dist
        sn = np.sin(x)
        sn = np.where(sn == 0.0, 1e-300, sn)
        small = np.abs(x) < 1e-6
        ta, tb, k = pa[di] * sc[di], pb[di] * sc[di], k_act[di]
        for sj in np.linspace(0.0, 1.0, STATIONS_PER_SEGMENT):
            T = -k * x * (-ta * np.cos(x * (1 - sj)) + tb * np.cos(x * sj)) / sn
            out.append(np.where(small, k * (ta - tb), T))
    return np.concatenate(out)


def _mesh_torques(train, st: _Setup, w, phi, forcing, Tst):
    """Torque phasors through the rigid gear meshes, (n_rigid, m)."""
    mem = st.asm.members
    sgn = np.where(mem.flip, -1.0, 1.0)
    end_torque = {}

    def at(member, pos):  # a spring has one station: its torque is uniform
        sel = np.flatnonzero((st.st_member == member) & (np.isclose(st.st_pos, pos) | ~st.dist[member]))
        return Tst[sel[0]] * sgn[member]

    for li in range(len(train.links)):
        ms = np.flatnonzero(mem.link == li)
        if len(ms):
            first, last = ms[0], ms[-1]
            end_torque[li] = (at(first, 1.0 if mem.flip[first] else 0.0),
                              at(last, 0.0 if mem.flip[last] else 1.0))
    theta = st.asm.disc_scale[:, None] * phi[st.asm.disc_node]
    J = st.asm.disc_inertia[:, None]
    c = np.array([d.damping for d in train.discs])[:, None]
    # a disc's link torques balance its inertia, its dashpot to ground and the applied torque
    peel_rigid_meshes(train, (-w ** 2 * J + 1j * w * c) * theta - forcing, end_torque)
    return np.stack([end_torque[li][0] for li in st.rigid])


def _missed_crossings(train, groups, speeds) -> list[str]:
    """A note when resonance crossings fall between the given speeds (peaks may be under-read)."""
    if speeds.size < 2:
        return []
    cross = crossing_speeds(train, groups, float(speeds.min()), float(speeds.max()))
    if not cross.size:
        return []
    grid = np.sort(speeds)
    i = np.clip(np.searchsorted(grid, cross), 1, grid.size - 1)
    near = np.minimum(np.abs(grid[i] - cross), np.abs(grid[i - 1] - cross))
    missed = cross[near > 1e-3 * cross]  # within 0.1 % of a crossing counts as on it
    if not missed.size:
        return []
    rpm = ", ".join(f"{v * 60 / TWO_PI:.0f}" for v in missed[:8]) + (" ..." if missed.size > 8 else "")
    return [f"{missed.size} resonance crossing(s) lie between the speeds computed (at {rpm} rpm); "
            "peaks there may be under-read — the default speeds include them"]


def forced_response(train: Train, speeds=None, chunk_columns: int = 4096,
                    check_crossings: bool = True) -> Response:
    """Steady-state damped response to every excitation with an amplitude.

    ``speeds``: reference-shaft speeds in rad/s (default :func:`default_speeds`).
    Frequencies are solved in chunks of about ``chunk_columns`` (speed x order)
    columns, which keeps the working arrays in cache.  Raises ModelError when the
    train has no operating data or no amplitudes.  ``check_crossings=False`` skips
    the note on resonance crossings stepped over by given speeds (it needs the
    natural frequencies; refinement steps that solve a few speeds do not).
    """
    t0 = time.perf_counter()
    groups, harmonics = excitation_harmonics(train)
    notes = []
    if speeds is None:
        speeds = default_speeds(train, groups)
    else:
        speeds = np.asarray(speeds, float).ravel()
        if speeds.size == 0 or np.any(~np.isfinite(speeds)) or np.any(speeds < 0):
            raise ModelError("speeds must be finite and not negative", "option", "speeds")
        if check_crossings:
            notes += _missed_crossings(train, groups, speeds)
    st = _Setup(train)
    asm, mem = st.asm, st.asm.members
    nd, nl, ng, ns = len(train.discs), len(train.links), len(groups), speeds.size
    n_st = len(st.st_link)
    omega = np.stack([g.omega(speeds) for g in groups])  # (ng, ns)
    geom = np.array([l.has_geometry for l in train.links], bool)
    geom_st = np.flatnonzero(np.isfinite(st.st_factor))  # stations that carry a stress
    springs = np.flatnonzero(~st.dist)  # spring members are the first stations
    ks = (mem.k / mem.scale ** 2)[springs][:, None]
    ks = np.where(ks > 0, ks, 1.0)  # a damper's ring (k = 0) has its own power formula
    damped_discs = np.flatnonzero([d.damping > 0 for d in train.discs])
    disc_c = np.array([d.damping for d in train.discs])[damped_discs][:, None]
    Tst_all = np.empty((n_st, ng, ns), complex)  # kept for the phase-aware synthesis
    order_link_torque = np.zeros((ng, nl, ns))
    order_link_stress = np.full((ng, nl, ns), np.nan)
    link_torque = np.zeros((nl, ns))
    link_stress = np.full((nl, ns), np.nan)
    theta_abs = np.empty((nd, ng, ns))
    power = np.zeros((nl, ns))
    disc_power = np.zeros((nd, ns))
    geom_links = np.unique(st.st_link[geom_st])
    forced = np.unique([hm.disc for hm in harmonics])
    forced_row = {int(d): i for i, d in enumerate(forced)}
    plain_discs = bool(np.array_equal(asm.disc_node, np.arange(nd)) and np.all(asm.disc_scale == 1.0))
    step = max(1, chunk_columns // ng)

    def chunk(s0):  # fills disjoint slices of the outputs: safe on threads
        s1 = min(ns, s0 + step)
        cs = s1 - s0
        sp_ = speeds[s0:s1]
        om = omega[:, s0:s1]
        forcing = np.zeros((len(forced), ng, cs), complex)
        for hm in harmonics:
            amp = hm.amplitude if hm.at_speed is None else \
                hm.amplitude * (sp_ * hm.source_ratio / hm.at_speed) ** 2
            forcing[forced_row[hm.disc], hm.group] += amp * np.exp(1j * hm.phase)
        forcing[:, om == 0.0] = 0.0  # an order has no vibratory part at standstill
        w = om.ravel()
        phi, kaa, kab, Tst = _solve_chunk(train, st, w, forcing.reshape(len(forced), -1), forced)
        Tst_all[:, :, s0:s1] = Tst.reshape(n_st, ng, cs)
        absT = np.abs(Tst)  # (n_st, m)
        a3 = absT.reshape(n_st, ng, cs)
        order_link_torque[:, :, s0:s1] = np.moveaxis(_link_max(a3, st.st_link, nl), 1, 0)
        link_torque[:, s0:s1] = _link_max(a3.sum(1), st.st_link, nl)
        if len(geom_st):
            sf = st.st_factor[geom_st][:, None, None]
            ols = _link_max(a3[geom_st] * sf, st.st_link[geom_st], nl)
            order_link_stress[:, geom_links, s0:s1] = np.moveaxis(ols[geom_links], 1, 0)
            link_stress[geom_links, s0:s1] = _link_max((a3[geom_st] * sf).sum(1),
                                                       st.st_link[geom_st], nl)[geom_links]
        theta = phi[:nd] if plain_discs else asm.disc_scale[:, None] * phi[asm.disc_node]
        theta_abs[:, :, s0:s1] = np.abs(theta).reshape(nd, ng, cs)
        if len(damped_discs):
            disc_power[damped_discs, s0:s1] = (0.5 * disc_c * w[None, :] ** 2 * theta_abs[
                damped_discs, :, s0:s1].reshape(len(damped_discs), -1) ** 2).reshape(-1, ng, cs).sum(1)
        if st.damped:  # dissipated power, omega/2 Im(u^H Z u) per member; orders add
            p_mem = _member_power(st, w, phi, kaa, kab)
            # springs: omega/2 Im(k*) |twist|^2 = omega/2 Im(k*) / |k*|^2 |T|^2
            p_sp = absT[:len(springs)] ** 2
            if st.constant_stiffness:
                eta = st.eta[springs][:, None]
                p_sp *= eta / (ks * (1.0 + eta ** 2))
            else:
                loss = st.eta[springs][:, None] + st.c_over_k[springs][:, None] * w[None, :]
                p_sp *= loss / (ks * (1.0 + loss ** 2))
            p_sp *= 0.5 * w[None, :]
            if len(st.pure):  # dashpot alone: omega/2 Im(k*) / |k*|^2 |T|^2 = |T|^2 / (2 c)
                j = np.searchsorted(springs, st.pure)
                c_act = (st.c_pure[st.pure] / mem.scale[st.pure] ** 2)[:, None]
                p_sp[j] = absT[j] ** 2 / (2.0 * c_act)
            p_mem[springs] = p_sp
            power[:, s0:s1] = (st.member_to_link @ p_mem).reshape(nl, ng, cs).sum(1)

    # numpy releases the GIL in array operations, so chunks run in parallel threads
    _map(chunk, list(range(0, ns, step)))
    link_stress[~geom] = np.nan
    if st.rigid and not np.all(np.isfinite(Tst_all[len(st.st_member):])):
        notes.append("a closed gear train: torque through some rigid meshes is not resolved")

    def permissible(attr):
        return np.array([getattr(l, attr) if getattr(l, attr) is not None else np.nan
                         for l in train.links], float)

    resp = Response(train, speeds, train.link_ids, train.disc_ids, [l.kind for l in train.links],
                    link_torque, link_stress, theta_abs.sum(1), np.maximum(power, 0.0),
                    [g.label for g in groups], groups, omega / TWO_PI, order_link_torque,
                    order_link_stress, np.moveaxis(theta_abs, 1, 0), permissible("permissible_torque"),
                    permissible("permissible_stress"), disc_power,
                    time.perf_counter() - t0, notes)
    resp._station = (Tst_all, st.st_link, st.st_factor)
    resp._segment = st.st_segment
    return resp


# ----------------------------------------------------------------- summaries
def _opt(v) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def response_bands(resp: Response):
    """The speed bands (:func:`core.bands.speed_bands`) of the response's train, the
    transient band starting at the lowest speed computed."""
    op = resp.train.operating
    lowest = min(float(resp.speed.min()), op.speed_min) if resp.speed.size else 0.0
    return speed_bands(op, lowest=lowest)


def _band_index(resp: Response, band: str | None) -> tuple[np.ndarray, str]:
    """Indices of the computed speeds inside ``band`` and the band's name; all speeds
    and '' when the band is None or holds none of the computed speeds."""
    if band is not None:
        for b in response_bands(resp):
            if b.name == band:
                idx = np.flatnonzero(b.contains(resp.speed))
                if idx.size:
                    return idx, b.name
    return np.arange(resp.speed.size), ""


def response_summary(resp: Response, band: str | None = OPERATING) -> list[LinkPeak]:
    """Peak values per link inside one speed band (default the operating range, where
    the train runs continuously and the permissible values apply), with pass/fail
    against the permissible values (sum of order amplitudes, the conservative
    combination).  ``band=None`` (or a band the computed speeds do not reach) takes
    every computed speed; :attr:`LinkPeak.band` says which.  Peaks here are the
    largest values at the computed speeds; :func:`band_peaks` refines them between
    speeds."""
    idx, name = _band_index(resp, band)
    sp = resp.speed[idx]
    out = []
    for i, lid in enumerate(resp.link_ids):
        T = resp.link_torque[i, idx]
        jt = int(np.nanargmax(T)) if np.any(np.isfinite(T)) else 0
        S = resp.link_stress[i, idx]
        has_s = bool(np.any(np.isfinite(S)))
        js = int(np.nanargmax(S)) if has_s else None
        P = resp.link_power[i, idx]
        jp = int(np.argmax(P)) if P.size else None
        pt, ps = _opt(resp.permissible_torque[i]), _opt(resp.permissible_stress[i])
        checks = []
        if pt is not None:
            checks.append(bool(T[jt] <= pt))
        if ps is not None and has_s:
            checks.append(bool(S[js] <= ps))
        out.append(LinkPeak(lid, resp.link_kinds[i], float(T[jt]), float(sp[jt]), pt,
                            float(S[js]) if has_s else None,
                            float(sp[js]) if has_s else None, ps,
                            all(checks) if checks else None,
                            float(np.nanmax(resp.link_torque_phased[i, idx])),
                            float(np.nanmax(resp.link_stress_phased[i, idx])) if has_s else None,
                            float(P[jp]) if jp is not None else 0.0,
                            float(sp[jp]) if jp is not None else None, name))
    return out


def transient_limits(link) -> tuple[float | None, float | None]:
    """(torque, stress) permissible while passing through (start-up, run-down,
    overspeed): the link's ``permissible_torque_transient`` /
    ``permissible_stress_transient`` when given, else None."""
    r = getattr(link, "ratings", None)
    if r is None:
        return None, None
    return r.permissible_torque_transient, r.permissible_stress_transient


def exceedances(resp: Response) -> list[Exceedance]:
    """Every link, quantity and speed band where the combined amplitude exceeds its
    permissible value, worst (largest ratio) first.  The operating range is judged
    against the permissible values (continuous running); the start-up/run-down and
    overspeed bands against the link's transient permissible values, or — where none
    is given — against the continuous ones (conservative; ``limit_basis`` says
    which).  Speeds in no band (above the range of a train without a trip speed)
    are not judged."""
    out = []
    bands = response_bands(resp)
    for i, lid in enumerate(resp.link_ids):
        tt, ts = transient_limits(resp.train.links[i])
        for qty, values, limit, transient in (
                ("torque", resp.link_torque[i], resp.permissible_torque[i], tt),
                ("stress", resp.link_stress[i], resp.permissible_stress[i], ts)):
            for b in bands:
                lim, basis = float(limit), "continuous"
                if b.name != OPERATING and transient is not None:
                    lim, basis = float(transient), "transient"
                if not math.isfinite(lim):
                    continue
                idx = np.flatnonzero(b.contains(resp.speed))
                v = values[idx]
                if not idx.size or not np.any(np.isfinite(v)):
                    continue
                over = np.flatnonzero(v > lim)
                if not len(over):
                    continue
                j = int(np.nanargmax(v))
                sp = resp.speed[idx]
                out.append(Exceedance(lid, qty, float(v[j]), lim, float(sp[j]),
                                      (float(sp[over[0]]), float(sp[over[-1]])), b.name, basis))
    out.sort(key=lambda e: -e.ratio)
    return out


@dataclass(frozen=True)
class BandPeak:
    """The largest value of one quantity of one link inside one speed band."""

    link_id: str
    kind: str
    band: str  # "transient" | "operating" | "overspeed"
    quantity: str  # "torque" (N*m) | "stress" (Pa) | "power" (W, dissipated)
    combination: str  # "sum" (of order amplitudes) | "phased" (peak of the summed signal) | "mean" (power)
    peak: float
    speed: float  # rad/s of the reference shaft
    refined: bool  # True: found between computed speeds by re-solving; False: at a computed speed


_QUANTITIES = (("torque", "sum"), ("torque", "phased"), ("stress", "sum"), ("stress", "phased"),
               ("power", "mean"))


def _grid_values(resp: Response, quantity: str, combination: str) -> np.ndarray:
    if quantity == "power":
        return resp.link_power
    if quantity == "torque":
        return resp.link_torque_phased if combination == "phased" else resp.link_torque
    return resp.link_stress_phased if combination == "phased" else resp.link_stress


def band_peaks(resp: Response, refine: bool = True, max_steps: int = 40) -> list[BandPeak]:
    """Peak vibratory torque, stress (sum of order amplitudes and phase-aware) and
    dissipated power of every link in every speed band.

    With ``refine``, a peak at an interior computed speed is polished between its
    neighbours by re-solving the response (all candidates together, one solve per
    step): successive parabolic interpolation with golden-section steps as the
    safeguard (Brent's method, R. P. Brent, Algorithms for Minimization without
    Derivatives, 1973, ch. 5 — from memory), to ~1e-8 of the speed (the peak value
    to ~1e-12: near a maximum it varies with the square of the speed error).  Peaks at a band
    edge (e.g. a fixed speed) stay where they are.
    """
    out: list[BandPeak] = []
    cand = []  # (index in out, link index, quantity, combination, a, x, b)
    sp = resp.speed
    for b in response_bands(resp):
        idx = np.flatnonzero(b.contains(sp))
        if not idx.size:
            continue
        for quantity, comb in _QUANTITIES:
            values = _grid_values(resp, quantity, comb)
            for i, lid in enumerate(resp.link_ids):
                v = values[i, idx]
                if not np.any(np.isfinite(v)):
                    continue
                j = int(np.nanargmax(v))
                out.append(BandPeak(lid, resp.link_kinds[i], b.name, quantity, comb, float(v[j]),
                                    float(sp[idx[j]]), False))
                if refine and 0 < j < idx.size - 1 and v[j] > 0:
                    cand.append((len(out) - 1, i, quantity, comb, sp[idx[j - 1]], sp[idx[j]],
                                 sp[idx[j + 1]], v[j - 1], v[j], v[j + 1]))
    if cand:
        _refine_peaks(resp, out, cand, max_steps)
    return out


def _values_at(resp: Response, speeds: np.ndarray, links, quantities, combinations) -> np.ndarray:
    """One quantity of one link per trial speed, from a fresh solve at those speeds."""
    r = forced_response(resp.train, speeds, check_crossings=False)
    k = np.arange(speeds.size)
    links = np.asarray(links)
    out = np.empty(speeds.size)
    for quantity, comb in _QUANTITIES:
        sel = np.flatnonzero((np.asarray(quantities) == quantity) & (np.asarray(combinations) == comb))
        if not sel.size:
            continue
        if comb != "phased":
            out[sel] = _grid_values(r, quantity, comb)[links[sel], k[sel]]
            continue
        # phase-aware peak only at the stations of each candidate's link, at its speed
        Tst, st_link, factor = r._station
        cols, owner, scale = [], [], []
        for c in sel:
            stn = np.flatnonzero(st_link == links[c])
            cols.append(Tst[stn, :, c])
            owner.append(np.full(stn.size, c))
            f = factor[stn] if quantity == "stress" else np.ones(stn.size)
            scale.append(np.where(np.isfinite(f), f, 0.0))
        A = np.concatenate(cols).T  # (n_groups, n_cols)
        peak = _phased_peak(A, _families(r.order_groups)) * np.concatenate(scale)
        res = np.full(speeds.size, -np.inf)
        np.maximum.at(res, np.concatenate(owner), peak)
        out[sel] = res[sel]
    return out


def _refine_peaks(resp: Response, out: list, cand: list, max_steps: int) -> None:
    """Vectorised bracketed maximisation (parabolic steps, golden-section safeguard)."""
    pos = np.array([c[0] for c in cand])
    links = [c[1] for c in cand]
    qty = [c[2] for c in cand]
    comb = [c[3] for c in cand]
    a, x, b, fa, fx, fb = (np.array([c[j] for c in cand], float) for j in range(4, 10))
    golden = 0.3819660112501051
    active = np.ones(len(cand), bool)
    for step in range(max_steps):
        idx = np.flatnonzero(active)
        if not idx.size:
            break
        A, X, B = a[idx], x[idx], b[idx]
        FA, FX, FB = fa[idx], fx[idx], fb[idx]
        tol = 1e-9 * X
        p = (X - A) ** 2 * (FX - FB) - (X - B) ** 2 * (FX - FA)
        q = (X - A) * (FX - FB) - (X - B) * (FX - FA)
        with np.errstate(divide="ignore", invalid="ignore"):
            u = X - 0.5 * p / q
        right = (B - X) > (X - A)
        g = X + golden * np.where(right, B - X, A - X)
        bad = ~np.isfinite(u) | (u <= A + tol) | (u >= B - tol)
        use_golden = bad | (step % 4 == 3)  # every fourth step golden: the bracket must shrink
        small = ~use_golden & (np.abs(u - X) <= 1e-7 * X)  # parabola settled: x* to ~1e-7, f to ~1e-12
        u = np.where(use_golden, g, u)
        u = np.where(np.abs(u - X) < tol, X + np.where(right, tol, -tol), u)
        fu = _values_at(resp, u, [links[i] for i in idx], [qty[i] for i in idx], [comb[i] for i in idx])
        up = fu > FX
        left = u < X
        # new bracket around the best point
        na = np.where(up, np.where(left, A, X), np.where(left, u, A))
        nb = np.where(up, np.where(left, X, B), np.where(left, B, u))
        nfa = np.where(up, np.where(left, FA, FX), np.where(left, fu, FA))
        nfb = np.where(up, np.where(left, FX, FB), np.where(left, FB, fu))
        nx = np.where(up, u, X)
        nfx = np.where(up, fu, FX)
        a[idx], b[idx], fa[idx], fb[idx], x[idx], fx[idx] = na, nb, nfa, nfb, nx, nfx
        active[idx] = ((nb - na) > 2e-8 * nx) & ~small  # below ~sqrt(eps): rounding
    for k, i in enumerate(pos):
        p = out[i]
        if fx[k] >= p.peak:
            out[i] = BandPeak(p.link_id, p.kind, p.band, p.quantity, p.combination, float(fx[k]),
                              float(x[k]), True)

