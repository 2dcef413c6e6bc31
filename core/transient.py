"""Transient events in the time domain: start-ups, electrical faults, load steps.

Model
-----
The whole train as :func:`core.assembly.assemble` refers it to the first disc's
shaft (inertias J s^2, stiffnesses k s^2, rigid gear meshes merged, branches
and links to ground kept), integrated in absolute angles so that the rigid-body
rotation and the speed-dependent torques run together with the vibration.

* Distributed shafts are cut into lumped elements (stiffness n k, half of each
  element's inertia at either end) with at least ``ELEMENTS_PER_WAVELENGTH``
  (20) elements per wavelength c / f_res at the highest resolved frequency.
  A lumped chain of spacing d carries waves of wave number kappa at
  omega = (2 c / d) sin(kappa d / 2), so its natural frequencies are low by
  about (kappa d)^2 / 24 = (2 pi / 20)^2 / 24 = 0.41 % at f_res and less below
  (dispersion of a monatomic lattice, e.g. L. Brillouin, Wave Propagation in
  Periodic Structures (1946), ch. 1 — from memory); tested against the closed
  form f_n = n c / (2 L) of a free-free uniform shaft.
* Damping as in the forced response (:mod:`core.response`): a disc's dashpot to
  ground; a link's relative dashpot (spread along a distributed shaft in
  proportion to stiffness, c / k kept); a hysteretic loss factor eta turned into
  the equivalent viscous c = eta k / omega_d at the event's
  ``damping_frequency`` (default: the train's lowest elastic natural frequency,
  where a start-up spends most of its fatigue; common practice, no source) — a
  viscous dashpot dissipates per cycle what the hysteretic spring does only at
  omega_d (Thomson, Theory of Vibration with Applications, "equivalent viscous
  damping" — from memory).

Integration
-----------
Trapezoidal rule on the first-order system, which is Newmark's average
acceleration method (beta = 1/4, gamma = 1/2): implicit, unconditionally stable,
second order, no numerical damping, and it conserves the energy of an undamped
linear system exactly (T. J. R. Hughes, The Finite Element Method (1987), ch. 9
— from memory).  With u = v_n + v_n+1 each step solves

    (M + h/2 C + h^2/4 K) u = 2 M v_n - h K theta_n + h/2 (F_n + F_n+1),
    theta_n+1 = theta_n + h/2 u,   v_n+1 = u - v_n,

with the matrix factored once (scipy's sparse LU; the train is a tree, so the
factor has no fill-in).  Speed-dependent torques (the motor's air-gap torque,
load curves) are implicit too: u is linear in the few forces F_n+1 at their
discs, so F_n+1 is found by fixed-point iteration on those few scalars through
the precomputed columns of the inverse (converges when h dT/domega / (2 J) < 1,
checked; typically two or three iterations).  The motor's pulsation phase is
exact in the motor's simulated angle: phi = 2 pi integral 2 s f dt
= 4 pi f (t - theta_motor / omega_sync).

Step: h = 1 / (``STEPS_PER_PERIOD`` f_res) (20 per period: the rule's period
error (omega h)^2 / 12 is 0.82 % at f_res, 0.2 % at half of it), f_res = 1.25 x the highest
frequency the event excites (a sinusoid's frequency, 2 f_line for a motor start,
1 / (shortest row interval) of a table), and at least 4 x the lowest elastic
natural frequency when the event has a jump (a step excites every mode); or the
event's ``resolve_up_to`` / ``time_step``.  Modes above f_res are integrated
stably but with period error.  The phase error of a lightly damped mode grows
with the number of its cycles (as for every second-order rule), so over a long
event the time histories agree between step sizes to the rule's h^2 rate while
the peaks, set by the resonance passages, move by well under 1 % when the
step halves (tested; ``refine`` in :func:`run_event` repeats an event at a
shorter step).

Outputs: each link's torque on its own shaft (spring plus dashpot; the most
loaded element of a distributed shaft; rigid meshes from their discs'
equations of motion), each disc's speed, peaks against the permissible torque,
shear stress T r / Ip x stress concentration in the smallest section (per
element of a distributed shaft) and its fatigue per event
(:mod:`core.fatigue`).  Units: SI — s, rad/s, N*m, Pa, Hz.
"""
from __future__ import annotations

import bisect
import math
import time as _time
from dataclasses import dataclass
from typing import Mapping

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .assembly import assemble, effective_disc_inertia, peel_rigid_meshes
from .errors import ModelError
from .events import AppliedTorque, SpeedTable, TransientEvent
from .fatigue import FatigueResult, SNCurve, curve_for_material, event_fatigue
from .model import Train

TWO_PI = 2.0 * math.pi
ELEMENTS_PER_WAVELENGTH = 20
STEPS_PER_PERIOD = 20
EXCITATION_MARGIN = 1.25  # resolve 25 % above the highest excited frequency
JUMP_MODE_FACTOR = 4.0  # a jump: resolve up to 4 x the lowest elastic mode
MAX_STEPS = 2_000_000
_FIXED_POINT_ITERATIONS = 30


class TransientCancelled(Exception):
    """The caller's cancel flag was raised during a run."""


# ----------------------------------------------------------------- results
@dataclass(frozen=True)
class LinkTransient:
    """One link in one event (torque on the link's own shaft)."""

    link_id: str
    kind: str
    peak_torque: float  # N*m, largest |T|
    peak_time: float  # s
    max_torque: float  # N*m, largest signed value
    min_torque: float  # N*m, smallest signed value
    permissible_peak: float | None  # N*m (the link's permissible torque until a peak limit exists)
    peak_stress: float | None  # Pa, largest |tau| (None without geometry)
    damage: float | None  # Miner sum for one event (None: no stress or no S-N curve)
    allowed_events: float | None  # 1 / damage; inf when no cycle does damage
    required_events: float | None
    sn_source: str | None
    passed: bool | None  # None when nothing is checked

    def to_json(self) -> dict:
        """The contract's keys ``peak_torque_nm``, ``peak_time_s``, ``damage`` (null: not
        computed) and ``allowed_events`` (null: not computed, or unlimited when damage is 0),
        and alongside them the signed extremes, the permissible peak, the peak stress, the
        required events and the verdict (null: nothing checked)."""
        def fin(x):
            return None if x is None or not math.isfinite(x) else float(x)
        return {"peak_torque_nm": float(self.peak_torque), "peak_time_s": float(self.peak_time),
                "damage": fin(self.damage), "allowed_events": fin(self.allowed_events),
                "max_torque_nm": float(self.max_torque), "min_torque_nm": float(self.min_torque),
                "permissible_peak_nm": fin(self.permissible_peak), "peak_stress_pa": fin(self.peak_stress),
                "required_events": fin(self.required_events), "passed": self.passed}


@dataclass(frozen=True)
class ModeCrossing:
    mode_hz: float  # natural frequency
    time_s: float  # when the excitation frequency passes it
    motor_speed: float  # rad/s of the motor shaft at that time


@dataclass(frozen=True, eq=False)
class EventResult:
    """Time histories (last axis time) and per-link peaks and fatigue of one event."""

    name: str
    duration: float  # s
    time: np.ndarray  # (n_t,) s
    link_ids: tuple[str, ...]
    disc_ids: tuple[str, ...]
    link_torque: np.ndarray  # (n_links, n_t) N*m, own shaft
    link_stress: np.ndarray  # (n_links, n_t) Pa, NaN rows without geometry
    disc_speed: np.ndarray  # (n_discs, n_t) rad/s, own shaft
    applied_torque: np.ndarray  # (n_discs, n_t) N*m, sum of the event's torques at each disc
    links: tuple[LinkTransient, ...]
    step: float  # s
    resolved_hz: float  # f_res
    damping_frequency_hz: float | None
    natural_frequencies_hz: np.ndarray  # elastic modes up to 1.25 x the highest excited frequency
    excitation_frequency_hz: np.ndarray | None  # (n_t,) 2 s f_line of a motor start
    crossings: tuple[ModeCrossing, ...]
    elements: int  # degrees of freedom integrated
    solve_time_s: float
    notes: tuple[str, ...] = ()

    def link(self, link_id: str) -> LinkTransient:
        return self.links[self.link_ids.index(link_id)]

    def to_json(self) -> dict:
        return {"name": self.name, "duration_s": float(self.duration),
                "links": {l.link_id: l.to_json() for l in self.links}}

    def history_table(self) -> tuple[list[str], np.ndarray]:
        """Column names and an (n_t, n_cols) array for CSV: time, each disc's speed,
        each link's torque and (where a stress is known) its shear stress, SI units."""
        names = ["time_s"] + [f"speed_{d}_rad_per_s" for d in self.disc_ids] \
            + [f"torque_{l}_nm" for l in self.link_ids]
        cols = [self.time[None, :], self.disc_speed, self.link_torque]
        has = [i for i in range(len(self.link_ids)) if np.all(np.isfinite(self.link_stress[i]))]
        names += [f"stress_{self.link_ids[i]}_pa" for i in has]
        cols.append(self.link_stress[has])
        return names, np.concatenate(cols).T


@dataclass(frozen=True, eq=False)
class TransientResults:
    events: tuple[EventResult, ...]
    solve_time_s: float = 0.0

    def event(self, name: str) -> EventResult:
        for e in self.events:
            if e.name == name:
                return e
        raise KeyError(name)

    @property
    def passed(self) -> bool | None:
        checks = [l.passed for e in self.events for l in e.links if l.passed is not None]
        return all(checks) if checks else None

    def to_json(self) -> dict:
        """``{"events": [{"name", "duration_s", "links": {ID: {"peak_torque_nm",
        "peak_time_s", "damage", "allowed_events"}}}]}``; damage and allowed events
        are null where not computed, allowed events null also when unlimited."""
        return {"events": [e.to_json() for e in self.events]}


# ----------------------------------------------------------------- time-domain model
@dataclass
class _Lumped:
    n: int
    mass: np.ndarray  # (n,) referred node inertia
    K: sp.csr_matrix
    C: sp.csr_matrix
    D: sp.csr_matrix  # (n_e, n) element incidence (+1 at a, -1 at b)
    ea: np.ndarray  # element end nodes
    eb: np.ndarray  # -1: ground
    ek: np.ndarray  # element referred stiffness
    ec: np.ndarray  # element referred damping
    egain: np.ndarray  # sign / scale: actual link-convention torque per referred element force
    elink: np.ndarray
    efactor: np.ndarray  # r / Ip x stress concentration of the element's section (NaN: none)
    link_elements: list  # per link: element indices from the `from` end to the `to` end
    disc_node: np.ndarray
    disc_scale: np.ndarray
    disc_extra_inertia: np.ndarray  # actual: element half-inertias at discs (distributed shafts)
    grounded: bool


def _section_factor(link, seg=None) -> float:
    if not link.segments:
        return math.nan
    segs = link.segments if seg is None else (seg,)
    return max(0.5 * s.outer_diameter / s.polar_moment for s in segs) * link.stress_concentration


def elements_for(L_over_c: float, f_res: float) -> int:
    """Lumped elements for a uniform shaft piece of length L (L / c in s): at least
    ELEMENTS_PER_WAVELENGTH per wavelength c / f_res."""
    return max(1, int(math.ceil(ELEMENTS_PER_WAVELENGTH * f_res * L_over_c - 1e-9)))


def lumped_model(train: Train, f_res: float, damping_omega: float | None) -> _Lumped:
    """The referred train as a lumped chain/tree of nodes and spring-dashpot elements."""
    asm = assemble(train)
    mem = asm.members
    links = train.links
    c_over_k = np.array([l.damping / l.total_stiffness if (not l.is_rigid and l.damping) else 0.0
                         for l in links])
    eta = np.array([l.loss_factor for l in links])
    if np.any(eta > 0) and not damping_omega:
        raise ModelError("a loss factor needs a frequency to act at: give the event a damping_frequency",
                         "transient", "damping_frequency")
    ratio = c_over_k + (eta / damping_omega if damping_omega else 0.0)
    mass = list(asm.node_inertia)
    n = asm.n_nodes
    ea, eb, ek, elink, egain, efactor = [], [], [], [], [], []
    extra = np.zeros(len(train.discs))
    index = {d: i for i, d in enumerate(train.disc_ids)}
    link_elements = [[] for _ in links]
    emass = {}  # referred inertia of each distributed element
    seg_no = np.zeros(len(links), int)
    for m in range(len(mem.k)):
        li = int(mem.link[m])
        l = links[li]
        a, b, k, s = int(mem.a[m]), int(mem.b[m]), float(mem.k[m]), float(mem.scale[m])
        sign = -1.0 if mem.flip[m] else 1.0
        if mem.L_over_c[m] <= 0:
            ea.append(a); eb.append(b); ek.append(k); elink.append(li); egain.append(sign / s)
            efactor.append(_section_factor(l))
            link_elements[li].append(len(ea) - 1)
            continue
        seg = l.segments[seg_no[li]]
        seg_no[li] += 1
        ne = elements_for(float(mem.L_over_c[m]), f_res)
        Jm = k * float(mem.L_over_c[m]) ** 2  # rho Ip L s^2
        nodes = [a] + list(range(n, n + ne - 1)) + [b]
        mass += [Jm / ne] * (ne - 1)
        n += ne - 1
        half = 0.5 * Jm / ne
        mass[a] += half
        if b >= 0:
            mass[b] += half
        idx = []
        for j in range(ne):
            ea.append(nodes[j]); eb.append(nodes[j + 1]); ek.append(k * ne); elink.append(li)
            egain.append(sign / s); efactor.append(_section_factor(l, seg))
            emass[len(ea) - 1] = Jm / ne
            idx.append(len(ea) - 1)
        link_elements[li].extend(idx[::-1] if mem.flip[m] else idx)
    # element half-inertias that sit on discs (for the rigid-mesh torque balance), actual units
    for li, els in enumerate(link_elements):
        l = links[li]
        if els and els[0] in emass and l.from_id in index:
            d = index[l.from_id]
            extra[d] += 0.5 * emass[els[0]] / asm.disc_scale[d] ** 2
        if els and els[-1] in emass and l.to_id in index:
            d = index[l.to_id]
            extra[d] += 0.5 * emass[els[-1]] / asm.disc_scale[d] ** 2
    mass = np.asarray(mass, float)
    if np.any(mass <= 0):
        raise ModelError("a node of the train has no inertia (a zero-inertia disc needs an adjoining "
                         "shaft with mass)", "train", "inertia")
    ea = np.asarray(ea, np.int64)
    eb = np.asarray(eb, np.int64)
    ek = np.asarray(ek, float)
    elink = np.asarray(elink, np.int64)
    ec = ek * ratio[elink]
    ne = len(ea)
    tree = eb >= 0
    rows = np.r_[np.arange(ne), np.flatnonzero(tree)]
    cols = np.r_[ea, eb[tree]]
    vals = np.r_[np.ones(ne), -np.ones(int(tree.sum()))]
    D = sp.csr_matrix((vals, (rows, cols)), shape=(ne, n))
    K = (D.T @ sp.diags(ek) @ D).tocsr()
    node_c = np.zeros(n)
    np.add.at(node_c, asm.disc_node, np.array([d.damping for d in train.discs]) * asm.disc_scale ** 2)
    C = (D.T @ sp.diags(ec) @ D + sp.diags(node_c)).tocsr()
    return _Lumped(n, mass, K, C, D, ea, eb, ek, ec, np.asarray(egain), elink, np.asarray(efactor, float),
                   link_elements, asm.disc_node, asm.disc_scale, extra, asm.grounded)


# ----------------------------------------------------------------- sources
def _interp_fn(xs, ys):
    """Scalar linear interpolation, held outside the table (fast for one value)."""
    xs, ys = list(xs), list(ys)
    if len(xs) == 1:
        y0 = ys[0]
        return lambda x: y0
    last = len(xs) - 1

    def f(x):
        if x <= xs[0]:
            return ys[0]
        if x >= xs[last]:
            return ys[last]
        i = bisect.bisect_right(xs, x)
        x0, x1 = xs[i - 1], xs[i]
        return ys[i - 1] + (ys[i] - ys[i - 1]) * (x - x0) / (x1 - x0)
    return f


def _time_torque(src: AppliedTorque, t: np.ndarray) -> np.ndarray:
    """A time-only source over the time grid, N*m."""
    if src.table is not None:
        return np.interp(t, src.table.times, src.table.torques)
    out = np.zeros_like(t)
    for s in src.sinusoids:
        tau = t - s.start
        on = tau >= 0
        tt = tau[on]
        w = np.sin(TWO_PI * s.frequency * tt + math.radians(s.phase_deg))
        if s.decay is not None:
            w *= np.exp(-tt / s.decay)
        out[on] += s.amplitude * w
    return out


def _state_torque(src: AppliedTorque, where: str, load_case_torque):
    """(torque(t, angle since start, speed) in N*m on the disc's shaft, excitation
    frequency(speed) in Hz or None, largest |dT/d speed|, largest |dT/d angle|) of a
    speed-dependent source."""
    if src.motor is not None:
        m = src.motor
        v2 = m.voltage_factor ** 2
        avg = _interp_fn(m.speeds, [v2 * x for x in m.average])
        puls = _interp_fn(m.pulsating_speeds, [v2 * x for x in m.pulsating])
        k_phase = 2.0 * TWO_PI * m.line_frequency
        ws = m.synchronous_speed
        ph0 = math.radians(m.phase_deg)
        sin = math.sin

        def motor(t, angle, speed):
            # phase = 2 pi int 2 s f dt with s = 1 - omega / omega_s: exact in the motor's angle
            return avg(speed) + puls(speed) * sin(k_phase * (t - angle / ws) + ph0)

        def freq(speed):
            return 2.0 * (1.0 - np.asarray(speed) / ws) * m.line_frequency
        lw = v2 * (_max_slope(m.speeds, m.average) + _max_slope(m.pulsating_speeds, m.pulsating))
        la = v2 * max(abs(x) for x in m.pulsating) * k_phase / ws
        return motor, freq, lw, la
    st: SpeedTable = src.speed_table
    if st.load_case is not None:
        if load_case_torque is None:
            raise ModelError(f"load case {st.load_case!r} cannot be used in a transient yet; give a "
                             "speed_table", where, "load_case")
        try:
            speeds, torques = load_case_torque(st.load_case, src.at)
        except KeyError:
            raise ModelError(f"unknown load case {st.load_case!r}", where, "load_case") from None
        speeds = np.asarray(speeds, float)
        torques = np.asarray(torques, float)
        if speeds.ndim != 1 or speeds.shape != torques.shape or not speeds.size or \
                not np.all(np.isfinite(speeds)) or not np.all(np.isfinite(torques)) or \
                np.any(np.diff(speeds) <= 0):
            raise ModelError(f"load case {st.load_case!r} gives no usable torque table", where, "load_case")
    else:
        speeds, torques = st.speeds, st.torques
    f = _interp_fn(speeds, torques)
    return (lambda t, angle, speed: f(speed)), None, _max_slope(speeds, torques), 0.0


# ----------------------------------------------------------------- step rule
def excited_frequency(event: TransientEvent) -> tuple[float, bool]:
    """(highest frequency the event's torques excite in Hz, whether it has a jump)."""
    f, jump = 0.0, False
    for src in event.torques:
        if src.table is not None:
            tt = np.asarray(src.table.times)
            dt = np.diff(tt)
            inside = tt[:-1] < event.duration  # rows after the event's end excite nothing
            pos = dt[(dt > 0) & inside]
            if pos.size:
                f = max(f, 1.0 / float(pos.min()))
            if np.any((dt == 0) & inside):
                jump = True
            if event.initial_state == "untwisted" and src.table.torques[0] != 0 and tt[0] <= event.duration:
                jump = True
        for s in src.sinusoids:
            f = max(f, s.frequency)
            jump = jump or abs(math.sin(math.radians(s.phase_deg))) > 1e-12  # starts with a jump
        if src.motor is not None:
            f = max(f, 2.0 * src.motor.line_frequency)
    return f, jump


def _lowest_modes(train: Train, cap_hz: float):
    from .solver import natural_modes
    modes = natural_modes(train, max_frequency_hz=cap_hz) if cap_hz > 0 else None
    fn = modes.frequency_hz[modes.elastic] if modes is not None else np.zeros(0)
    if fn.size == 0:
        try:
            m1 = natural_modes(train, n_modes=1)
            f1 = m1.frequency_hz[m1.elastic]
            return fn, (float(f1[0]) if f1.size else None)
        except ModelError:
            return fn, None
    return fn, float(fn[0])


# ----------------------------------------------------------------- the integrator
def _check_cancel(cancel) -> None:
    if cancel is None:
        return
    flag = cancel.is_set() if hasattr(cancel, "is_set") else cancel()
    if flag:
        raise TransientCancelled("transient run cancelled")


def run_event(train: Train, event: TransientEvent, *, refine: int = 1,
              peak_limits: Mapping[str, float] | None = None,
              sn_curves: Mapping[str, SNCurve] | None = None,
              load_case_torque=None, progress=None, cancel=None) -> EventResult:
    """Integrate one event (see the module docstring).  ``refine`` divides the step
    (convergence checks); ``peak_limits`` overrides each link's permissible peak
    torque (N*m; default its ``permissible_torque``: the hook for a separate transient
    limit); ``sn_curves`` adds to or overrides the project's S-N curves per link id
    (else the material's library curve); ``load_case_torque(name, disc_id) ->
    (speeds rad/s, torques N*m)`` resolves a torque that names a load case;
    ``progress(fraction)``; ``cancel`` a callable or threading.Event."""
    t_start = _time.perf_counter()
    ew = f"transient '{event.name}'"
    index = {d: i for i, d in enumerate(train.disc_ids)}
    notes = []
    f_exc, jump = excited_frequency(event)
    fn, f1 = _lowest_modes(train, max(f_exc, 1e-9) * EXCITATION_MARGIN)
    # resolved frequency and step
    if event.resolve_up_to is not None:
        f_res = event.resolve_up_to
    else:
        f_res = EXCITATION_MARGIN * f_exc
        if jump and f1:
            f_res = max(f_res, JUMP_MODE_FACTOR * f1)
        if f_res <= 0 and f1:
            f_res = JUMP_MODE_FACTOR * f1
    if event.time_step is not None:
        h0 = event.time_step
        f_res = f_res or 1.0 / (STEPS_PER_PERIOD * h0)
    elif f_res > 0:
        h0 = 1.0 / (STEPS_PER_PERIOD * f_res)
    else:
        h0 = event.duration / 1000.0
        f_res = 1.0 / (STEPS_PER_PERIOD * h0)
    n_steps = max(10, int(math.ceil(event.duration / h0 - 1e-9))) * int(refine)
    if n_steps > MAX_STEPS:
        raise ModelError(f"{n_steps} time steps needed to resolve {f_res:.4g} Hz over {event.duration:g} s "
                         f"(limit {MAX_STEPS}); give resolve_up_to or a longer time_step", ew,
                         "resolve_up_to")
    h = event.duration / n_steps
    if f1 is not None and event.damping_frequency is None:
        omega_d = TWO_PI * f1
        fd_hz = f1
    elif event.damping_frequency is not None:
        omega_d = TWO_PI * event.damping_frequency
        fd_hz = event.damping_frequency
    else:
        omega_d, fd_hz = None, None
    lm = lumped_model(train, f_res, omega_d)
    n = lm.n
    if fd_hz is not None and any(l.loss_factor > 0 for l in train.links):
        notes.append(f"loss factors act as viscous damping matched at {fd_hz:.4g} Hz"
                     f"{'' if event.damping_frequency is not None else ' (the lowest mode)'}: modes "
                     "below it are damped less, modes above it more than the loss factor gives; "
                     "set the event's damping_frequency near the mode that matters")
    # speed-dependent torques
    state_srcs = [(j, src, index[src.at]) for j, src in enumerate(event.torques) if src.depends_on_state]
    fns, freq_fn, slopes = [], None, []
    s_nodes, s_scale = [], []
    for j, src, d in state_srcs:
        fn_j, fq, lw, la = _state_torque(src, f"{ew} torque {j + 1}", load_case_torque)
        fns.append(fn_j)
        slopes.append((lw, la))
        if fq is not None:
            freq_fn = (d, fq)
        s_nodes.append(int(lm.disc_node[d]))
        s_scale.append(float(lm.disc_scale[d]))
    ps = len(fns)
    # steep torque curves: shorten the step until the fixed point contracts by half or more
    rho = contraction_bound(lm, h, slopes, s_nodes, s_scale)
    while rho > 0.5:
        n_steps *= 2
        if n_steps > MAX_STEPS:
            raise ModelError(f"the speed-dependent torques are too steep against speed (contraction "
                             f"{rho:.2f} at a step of {h:.3g} s) for {MAX_STEPS} steps", ew, "torques")
        h = event.duration / n_steps
        rho = contraction_bound(lm, h, slopes, s_nodes, s_scale)
        notes.append(f"step shortened to {h:.3g} s for the slope of the speed-dependent torques")
    t = np.arange(n_steps + 1) * h
    # time-only torques: node forces over the grid
    disc_torque = np.zeros((len(train.discs), n_steps + 1))
    for j, src in enumerate(event.torques):
        if not src.depends_on_state:
            disc_torque[index[src.at]] += _time_torque(src, t)
    known_discs = np.flatnonzero(np.any(disc_torque != 0, axis=1))
    kn_nodes = lm.disc_node[known_discs]
    Fk = disc_torque[known_discs].T * lm.disc_scale[known_discs]  # (n_t, p) referred node forces
    if len(np.unique(kn_nodes)) < len(kn_nodes):  # discs merged by a rigid mesh share a node
        u_nodes, inv = np.unique(kn_nodes, return_inverse=True)
        Fk = np.stack([Fk[:, inv == i].sum(1) for i in range(len(u_nodes))], axis=1)
        kn_nodes = u_nodes
    # initial state: rigid rotation at the initial speed
    ref = train.operating.reference if train.operating is not None else train.disc_ids[0]
    v0 = event.initial_speed / lm.disc_scale[index[ref]]
    theta = np.zeros(n)
    v = np.full(n, v0)
    f_state = [fns[i](0.0, 0.0, s_scale[i] * v0) for i in range(ps)]
    if event.initial_state == "equilibrium":
        F0 = np.zeros(n)
        np.add.at(F0, kn_nodes, Fk[0])
        for i in range(ps):
            F0[s_nodes[i]] += s_scale[i] * f_state[i]
        theta = _equilibrium(lm, F0 - lm.C @ v)
    scale_f = max([1.0] + [abs(x) for x in f_state])
    for _, src, _ in state_srcs:
        tab = src.motor.average + src.motor.pulsating if src.motor else src.speed_table.torques
        scale_f = max([scale_f] + [abs(x) for x in tab])  # (a load case: the initial value)
    hist, F_state, worst = _integrate(lm, h, n_steps, t, theta, v, kn_nodes, Fk, fns, s_nodes, s_scale,
                                      f_state, max(rho, 1e-3), 1e-6 * scale_f, ew, progress, cancel)
    for i, (j, src, d) in enumerate(state_srcs):
        disc_torque[d] += F_state[:, i]
    return _event_result(train, event, lm, t, hist[:, :n], hist[:, n:], disc_torque, f_res, fd_hz, fn, freq_fn, h,
                         peak_limits, sn_curves, notes, _time.perf_counter() - t_start)


try:  # the compiled kernel behind ``csr_matrix @ vector``, without its per-call checks
    from scipy.sparse._sparsetools import csr_matvec as _csr_matvec
except ImportError:  # pragma: no cover - a future scipy may move it
    _csr_matvec = None


def _integrate(lm: _Lumped, h, n_steps, t, theta, v, kn_nodes, Fk, fns, s_nodes, s_scale, f0, rho, tol,
               ew, progress, cancel):
    """Trapezoidal rule (Newmark average acceleration) over n_steps; returns the history
    [theta | v] (n_steps + 1, 2 n), the speed-dependent torques (n_steps + 1, p) and the
    largest number of fixed-point iterations a step took.

    Speed-dependent torques: the fixed point f = F(u(f)) is iterated from a linear
    extrapolation of the last two steps; ``rho`` bounds the iteration's contraction
    (Lipschitz constant of F times the inverse's entries), so an iterate is accepted when
    rho / (1 - rho) |f_k+1 - f_k| <= tol, a bound on its error (Banach's fixed-point
    theorem, a-posteriori estimate)."""
    n = lm.n
    ps = len(fns)
    S = (sp.diags(lm.mass) + 0.5 * h * lm.C + 0.25 * h * h * lm.K).tocsc()
    lu = spla.splu(S)
    R = sp.hstack([-h * lm.K, sp.diags(2.0 * lm.mass)]).tocsr()
    R.sort_indices()
    half_h = 0.5 * h
    Fk_half_sum = half_h * (Fk[:-1] + Fk[1:])  # (n_steps, p) trapezoidal impulse of known torques
    has_known = len(kn_nodes) > 0
    sn = [int(x) for x in s_nodes]
    scl = [float(x) for x in s_scale]
    rng = range(ps)
    if ps:
        E = np.zeros((n, ps))
        E[sn, np.arange(ps)] = 1.0
        Sinv = lu.solve(E)  # columns of S^-1 at the sources (S is symmetric: also its rows)
        rows = np.ascontiguousarray(Sinv.T)  # (ps, n)
        g = [[float(Sinv[sn[i], q]) * half_h * scl[q] for q in rng] for i in rng]
        gain = rho / (1.0 - rho)
    hist = np.empty((n_steps + 1, 2 * n))
    state = hist[0]
    state[:n] = theta
    state[n:] = v
    f_hist = [tuple(f0)]
    f_now = list(f0)
    f_old = list(f0)
    theta0 = [float(state[sn[i]]) * scl[i] for i in rng]
    worst = 0
    report_every = max(1, n_steps // 200)
    rhs = np.empty(n)
    tmp = np.empty(n)
    t_list = t.tolist()
    ip, ix, dat = R.indptr, R.indices, R.data
    for k in range(n_steps):
        if k % report_every == 0:
            _check_cancel(cancel)
            if progress is not None:
                progress(k / n_steps)
        if _csr_matvec is not None:
            rhs.fill(0.0)
            _csr_matvec(n, 2 * n, ip, ix, dat, state, rhs)
        else:
            rhs[:] = R @ state
        if has_known:
            rhs[kn_nodes] += Fk_half_sum[k]
        if ps:
            t1 = t_list[k + 1]
            ub = (rows @ rhs).tolist()
            thn = [state.item(sn[i]) for i in rng]
            vn = [state.item(n + sn[i]) for i in rng]
            f = [2.0 * a - b for a, b in zip(f_now, f_old)]  # linear extrapolation
            for it in range(_FIXED_POINT_ITERATIONS):
                change = 0.0
                new = []
                for i in rng:
                    ui = ub[i]
                    gi = g[i]
                    for q in rng:
                        ui += gi[q] * (f_now[q] + f[q])
                    sc = scl[i]
                    fi = fns[i](t1, sc * (thn[i] + half_h * ui) - theta0[i], sc * (ui - vn[i]))
                    d = abs(fi - f[i])
                    if d > change:
                        change = d
                    new.append(fi)
                f = new
                if gain * change <= tol:
                    break
            else:
                raise ModelError(f"the speed-dependent torques do not settle within a step at t = {t1:.4g} s: "
                                 "give a smaller time_step", ew, "time_step")
            if it >= worst:
                worst = it + 1
            for i in rng:
                rhs[sn[i]] += half_h * scl[i] * (f_now[i] + f[i])
            f_old, f_now = f_now, f
            f_hist.append(tuple(f))
        u = lu.solve(rhs)
        nxt = hist[k + 1]
        np.multiply(u, half_h, out=tmp)
        np.add(state[:n], tmp, out=nxt[:n])
        np.subtract(u, state[n:], out=nxt[n:])
        state = nxt
    if progress is not None:
        progress(1.0)
    _check_cancel(cancel)
    return hist, np.array(f_hist, float).reshape(n_steps + 1, ps), worst


def contraction_bound(lm: _Lumped, h: float, slopes, s_nodes, s_scale) -> float:
    """Upper bound rho of the fixed-point map's contraction for one step: the infinity
    norm of its Jacobian, from each source's largest slope against speed and angle
    (``slopes``: (dT/d speed, dT/d angle) per source)."""
    n = lm.n
    ps = len(slopes)
    if not ps:
        return 0.0
    S = (sp.diags(lm.mass) + 0.5 * h * lm.C + 0.25 * h * h * lm.K).tocsc()
    E = np.zeros((n, ps))
    E[list(s_nodes), np.arange(ps)] = 1.0
    Sinv = spla.splu(S).solve(E)
    rho = 0.0
    for i, (lw, la) in enumerate(slopes):
        row = sum(abs(Sinv[s_nodes[i], q]) * 0.5 * h * s_scale[q] for q in range(ps))
        rho = max(rho, s_scale[i] * (lw + la * 0.5 * h) * row)
    return rho


def _max_slope(xs, ys) -> float:
    xs, ys = np.asarray(xs, float), np.asarray(ys, float)
    if xs.size < 2:
        return 0.0
    dx = np.diff(xs)
    ok = dx > 0
    return float(np.max(np.abs(np.diff(ys)[ok] / dx[ok]))) if ok.any() else 0.0


def _equilibrium(lm: _Lumped, load: np.ndarray) -> np.ndarray:
    """Angles in quasi-static equilibrium with ``load`` (the rigid-body acceleration of a
    free train taken out with d'Alembert's inertia torques)."""
    if not lm.grounded:
        alpha = load.sum() / lm.mass.sum()
        load = load - lm.mass * alpha
        keep = np.arange(1, lm.n)
        K = lm.K[keep][:, keep].tocsc()
        out = np.zeros(lm.n)
        if len(keep):
            out[keep] = spla.spsolve(K, load[keep])
        return out
    return spla.spsolve(lm.K.tocsc(), load)


def _event_result(train, event, lm: _Lumped, t, Theta, V, disc_torque, f_res, fd_hz, fn, freq_fn, h,
                  peak_limits, sn_curves, notes, elapsed) -> EventResult:
    """Peaks, stresses and fatigue from the node histories Theta, V (n_t, n), time-major."""
    links = train.links
    nl, nt = len(links), t.size
    # element torques in the link's convention (from-end ahead of to-end positive), own shaft
    Te = _element_torques(lm, Theta, V)  # (n_t, n_e)
    torque = np.zeros((nl, nt))
    stress = np.full((nl, nt), np.nan)
    single = [li for li, els in enumerate(lm.link_elements) if len(els) == 1]
    if single:
        cols = [lm.link_elements[li][0] for li in single]
        torque[single] = Te[:, cols].T
        fac = lm.efactor[cols]
        ok = np.isfinite(fac)
        rows = np.asarray(single)[ok]
        stress[rows] = torque[rows] * fac[ok][:, None]
    for li, els in enumerate(lm.link_elements):
        if len(els) < 2:
            continue
        sub = Te[:, els].T
        torque[li] = sub[int(np.argmax(np.abs(sub).max(axis=1)))]
        fac = lm.efactor[els]
        if np.all(np.isfinite(fac)):
            ss = sub * fac[:, None]
            stress[li] = ss[int(np.argmax(np.abs(ss).max(axis=1)))]
    rigid = [li for li, l in enumerate(links) if l.is_rigid]
    if rigid:
        _rigid_mesh_torques(train, lm, Theta, V, disc_torque, Te, torque, rigid, notes)
    speed = (V[:, lm.disc_node] * lm.disc_scale[None, :]).T.copy()
    # peaks and fatigue
    curves = dict(getattr(train, "sn_curves", ()) or ())
    curves.update(sn_curves or {})
    out = []
    for li, l in enumerate(links):
        T = torque[li]
        j = int(np.argmax(np.abs(T)))
        limit = (peak_limits or {}).get(l.id, l.permissible_torque)
        S = stress[li]
        has_s = bool(np.all(np.isfinite(S)))
        curve = curves.get(l.id) or curve_for_material(l.material)
        fat: FatigueResult | None = event_fatigue(S, curve) if has_s and curve is not None else None
        req = event.required_for(l.id)
        checks = []
        if limit is not None:
            checks.append(bool(abs(T[j]) <= limit))
        if req is not None and fat is not None:
            checks.append(bool(fat.allowed_events >= req))
        out.append(LinkTransient(l.id, l.kind, float(abs(T[j])), float(t[j]), float(T.max()),
                                 float(T.min()), limit, float(np.abs(S).max()) if has_s else None,
                                 fat.damage if fat else None, fat.allowed_events if fat else None, req,
                                 curve.source if (curve is not None and has_s) else None,
                                 all(checks) if checks else None))
        if has_s and curve is None:
            notes.append(f"link '{l.id}': no S-N curve for its material; fatigue not computed")
    exc_f, crossings = None, []
    if freq_fn is not None:
        d, fq = freq_fn
        exc_f = fq(speed[d])
        for f_n in fn:
            above = exc_f - f_n
            idx = np.flatnonzero((above[:-1] > 0) & (above[1:] <= 0))
            if idx.size:
                i = int(idx[0])
                w = above[i] / (above[i] - above[i + 1])
                tc = t[i] + w * (t[i + 1] - t[i])
                crossings.append(ModeCrossing(float(f_n), float(tc),
                                              float(speed[d, i] + w * (speed[d, i + 1] - speed[d, i]))))
    if not np.all(np.isfinite(torque)):
        raise ModelError("the integration produced a non-number (check the event's torques)",
                         f"transient '{event.name}'", "torques")
    return EventResult(event.name, event.duration, t, tuple(train.link_ids), tuple(train.disc_ids), torque,
                       stress, speed, disc_torque, tuple(out), h, f_res, fd_hz,
                       np.asarray(fn, float), exc_f, tuple(crossings), lm.n, elapsed, tuple(notes))


def _element_torques(lm: _Lumped, Theta, V) -> np.ndarray:
    """(n_t, n_e) element torques, actual, on the link's own shaft, from time-major node
    histories: gain (k twist + c twist rate), twist = D theta."""
    DT = lm.D.T.tocsr()
    Te = Theta @ DT
    Te *= (lm.ek * lm.egain)[None, :]
    if np.any(lm.ec):
        Tc = V @ DT
        Tc *= (lm.ec * lm.egain)[None, :]
        Te += Tc
    return Te


def _rigid_mesh_torques(train, lm: _Lumped, Theta, V, disc_torque, Te, torque, rigid, notes):
    """Torque through rigid gear meshes from their discs' equations of motion."""
    links = train.links
    end_torque = {}
    for li, els in enumerate(lm.link_elements):
        if els:
            end_torque[li] = (Te[:, els[0]], Te[:, els[-1]])
    discs = set()
    for li in rigid:
        discs.update((links[li].from_id, links[li].to_id))
    index = {d: i for i, d in enumerate(train.disc_ids)}
    J = effective_disc_inertia(train) + lm.disc_extra_inertia
    load = np.zeros((len(train.discs), Theta.shape[0]))
    # node accelerations from the equation of motion (Newmark's a_n)
    F = np.zeros((lm.n, Theta.shape[0]))
    np.add.at(F, lm.disc_node, disc_torque * lm.disc_scale[:, None])
    for dname in discs:
        d = index[dname]
        node = lm.disc_node[d]
        acc = (F[node] - lm.C[node] @ V.T - lm.K[node] @ Theta.T) / lm.mass[node]
        s = lm.disc_scale[d]
        load[d] = J[d] * s * np.ravel(acc) + train.discs[d].damping * s * V[:, node] - disc_torque[d]
    peel_rigid_meshes(train, load, end_torque)
    for li in rigid:
        torque[li] = end_torque[li][0]
        if not np.all(np.isfinite(torque[li])):
            notes.append("a closed gear train: torque through some rigid meshes is not resolved")
            torque[li] = 0.0


# ----------------------------------------------------------------- entry point
def run_transients(train: Train, event_names=None, progress=None, cancel=None, *,
                   peak_limits: Mapping[str, float] | None = None,
                   load_case_torque=None, refine: int = 1) -> TransientResults:
    """Integrate the project's transient events (all, or those named).

    ``progress(fraction)`` is called from the running thread (0..1 over all events);
    ``cancel`` is a callable returning True or a ``threading.Event``: the run stops
    with :class:`TransientCancelled`.  Raises ModelError when the project has no
    events or names an unknown one.
    """
    t0 = _time.perf_counter()
    events = getattr(train, "transients", ()) or ()
    if not events:
        raise ModelError("the project has no transient events: add a \"transients\" list", "transients",
                         "transients")
    if event_names is not None:
        if isinstance(event_names, str):
            event_names = [event_names]
        byname = {e.name: e for e in events}
        for nm in event_names:
            if nm not in byname:
                raise ModelError(f"no transient event named {nm!r} (events: {', '.join(byname)})",
                                 "option", "event")
        events = [byname[nm] for nm in event_names]
    weights = np.array([e.duration for e in events], float)
    weights = weights / weights.sum()
    done = 0.0
    out = []
    for e, w in zip(events, weights):
        def sub(frac, done=done, w=w):
            if progress is not None:
                progress(min(1.0, done + w * frac))
        out.append(run_event(train, e, refine=refine, peak_limits=peak_limits,
                             load_case_torque=load_case_torque, progress=sub, cancel=cancel))
        done += w
    return TransientResults(tuple(out), _time.perf_counter() - t0)
