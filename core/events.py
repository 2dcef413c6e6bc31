"""Transient events: torques applied at discs over time, as SI model objects.

A project names its events under the top-level key ``"transients"``; each event
is a list of torques, each acting at one disc (positive in the direction of
rotation, on the disc's own shaft).  One torque entry holds exactly one of:

``"table"``
    torque against time, ``[[time, torque], ...]``, linearly interpolated,
    held at the first row's value before it and the last row's after it.
    Two rows at the same time make a jump.
``"csv"``
    the same table from a CSV file (two columns: time, torque; an optional
    header row; ``"time_unit"`` / ``"torque_unit"`` for bare numbers, SI by
    default; a path relative to the project file).
``"ramp"``
    a step or ramp of torque: ``{"start": "1 s", "rise": "20 ms", "from": "0 N*m",
    "to": "-2 kN*m"}`` (``rise`` 0 or absent: a step) — a clutch engagement, a
    sudden load.
``"sinusoids"``
    a sum of decaying sinusoids, each ``{"amplitude", "frequency", "decay",
    "phase_deg", "start"}``: A exp(-(t - t0) / tau) sin(2 pi f (t - t0) + phi)
    for t >= t0 (``decay`` absent: no decay; frequency 0 with phase 90 deg: a
    decaying unidirectional torque) — electrical faults, faulty synchronisation.
``"short_circuit"``
    a preset of ``sinusoids`` for a two- or three-phase terminal short circuit
    from the machine's rated torque, subtransient reactance and time constants
    (see :func:`short_circuit_terms`).
``"speed_table"``
    torque against the disc's own speed, ``[[speed, torque], ...]`` (a load
    curve); ``"load_case": NAME`` instead names a project load case, resolved at
    run time (hook for the load cases of the acceptance work).
``"synchronous_start"``
    the air-gap torque of a synchronous motor starting asynchronously on its
    damper winding: average torque and pulsating-torque amplitude against the
    motor's speed (the motor maker's curves), the pulsation at 2 s f_line with
    the slip s = 1 - n / n_sync following the motor's own simulated speed, and a
    supply-voltage factor (torque proportional to the voltage squared).

Every quantity is text with a unit or a bare number in SI (:mod:`core.units`).
"""
from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass
from pathlib import Path

from . import units as u
from .errors import ModelError

TWO_PI = 2.0 * math.pi
TIME = u.Kind("time", "s", "10 ms")
_RATIO = "a plain number"


# ----------------------------------------------------------------- model objects
@dataclass(frozen=True)
class TimeTable:
    """Torque against time, N*m at s; linear between rows, held outside them."""

    times: tuple[float, ...]
    torques: tuple[float, ...]


@dataclass(frozen=True)
class Sinusoid:
    """A exp(-(t - t0)/tau) sin(2 pi f (t - t0) + phase) for t >= t0, N*m."""

    amplitude: float  # N*m
    frequency: float  # Hz
    decay: float | None = None  # s (time constant); None: no decay
    phase_deg: float = 0.0
    start: float = 0.0  # s


@dataclass(frozen=True)
class SpeedTable:
    """Torque against the disc's own speed (rad/s -> N*m), or a named load case."""

    speeds: tuple[float, ...] = ()
    torques: tuple[float, ...] = ()
    load_case: str | None = None


@dataclass(frozen=True)
class SynchronousStart:
    """Asynchronous start-up torque of a synchronous motor (damper-winding start)."""

    line_frequency: float  # Hz
    synchronous_speed: float  # rad/s of the motor shaft
    speeds: tuple[float, ...]  # rad/s of the motor shaft (average torque table)
    average: tuple[float, ...]  # N*m at rated voltage
    pulsating_speeds: tuple[float, ...]  # rad/s (pulsating amplitude table)
    pulsating: tuple[float, ...]  # N*m at rated voltage
    voltage_factor: float = 1.0  # supply voltage / rated voltage
    phase_deg: float = 0.0  # of the pulsating torque at switch-on


@dataclass(frozen=True)
class AppliedTorque:
    """One torque acting at one disc; exactly one of the sources is set."""

    at: str
    label: str
    table: TimeTable | None = None
    sinusoids: tuple[Sinusoid, ...] = ()
    speed_table: SpeedTable | None = None
    motor: SynchronousStart | None = None

    @property
    def depends_on_state(self) -> bool:
        return self.speed_table is not None or self.motor is not None


@dataclass(frozen=True)
class TransientEvent:
    name: str
    duration: float  # s
    torques: tuple[AppliedTorque, ...]
    initial_speed: float = 0.0  # rad/s of the reference disc's shaft
    initial_state: str = "untwisted"  # "untwisted" | "equilibrium"
    resolve_up_to: float | None = None  # Hz; None: the rule in core.transient
    time_step: float | None = None  # s; None: from the resolved frequency
    damping_frequency: float | None = None  # Hz, hysteretic -> viscous; None: lowest mode
    required_events: float | None = None  # every link
    required_per_link: tuple[tuple[str, float], ...] = ()

    def required_for(self, link_id: str) -> float | None:
        for lid, n in self.required_per_link:
            if lid == link_id:
                return n
        return self.required_events


INITIAL_STATES = ("untwisted", "equilibrium")
SOURCE_KEYS = ("table", "csv", "ramp", "sinusoids", "short_circuit", "speed_table", "load_case",
               "synchronous_start")


# ----------------------------------------------------------------- presets
def short_circuit_terms(phases: int, base_torque: float, x_subtransient: float,
                        armature_time_constant: float, line_frequency: float, start: float = 0.0,
                        x_transient: float | None = None,
                        subtransient_time_constant: float | None = None) -> tuple[Sinusoid, ...]:
    """Air-gap torque of a terminal short circuit from no load at rated voltage, as
    decaying sinusoids acting on the rotor (braking: negative in the direction of rotation).

    Three-phase: T(t) = (T_b / x''_d) exp(-t / T_a) sin(omega t).
    Two-phase (line to line): T(t) = (T_b / x''_d) [exp(-t / T_a) sin(omega t)
    - 1/2 g(t) sin(2 omega t)], g(t) = x''_d/x'_d + (1 - x''_d/x'_d) exp(-t / T''_d)
    when x'_d and T''_d are given, else 1 (conservative: the a.c. term held at its
    subtransient value).  Fault at voltage zero (largest offset), negative-sequence
    reactance x_2 = x''_d, stator resistance and saliency neglected; T_b is the torque
    of rated apparent power, S_N / omega_s.  Peaks: 1/x''_d (three-phase), 1.30/x''_d
    (two-phase).  Source: derived from the instantaneous power of the faulted phases,
    p = sum e i, as in C. Concordia, Synchronous Machines: Theory and Performance
    (1951), ch. on short-circuit torque, and E. W. Kimbark, Power System Stability
    vol. III (1956) — from memory.
    """
    if phases not in (2, 3):
        raise ValueError("phases must be 2 or 3")
    A = -base_torque / x_subtransient  # braking
    terms = [Sinusoid(A, line_frequency, armature_time_constant, 0.0, start)]
    if phases == 2:
        half = -0.5 * A
        if x_transient is not None and subtransient_time_constant is not None:
            r = x_subtransient / x_transient
            terms.append(Sinusoid(half * r, 2 * line_frequency, None, 0.0, start))
            terms.append(Sinusoid(half * (1 - r), 2 * line_frequency, subtransient_time_constant, 0.0,
                                  start))
        else:
            terms.append(Sinusoid(half, 2 * line_frequency, None, 0.0, start))
    return tuple(terms)


# ----------------------------------------------------------------- parsing
def _num(obj: dict, key: str, where: str, default=None, required: bool = False) -> float | None:
    if obj.get(key) is None:
        if required:
            raise ModelError(f"missing {key}", where, key)
        return default
    return u.parse_number(obj[key], where, key)


def _qty(obj: dict, key: str, kind: u.Kind, where: str, default=None, required: bool = False):
    if obj.get(key) is None:
        if required:
            raise ModelError(f"missing {key} (example: '{kind.example}')", where, key)
        return default
    return u.parse(obj[key], kind, where, key)


def _rows(raw, kinds, where: str, key: str, increasing: str = "strict"):
    """Parse a list of [a, b, ...] rows; the first column must not decrease
    (``increasing='strict'`` forbids equal values too)."""
    if not isinstance(raw, list) or len(raw) < 1:
        raise ModelError("give a non-empty list of rows such as [[a, b], ...]", where, key)
    cols = [[] for _ in kinds]
    for i, row in enumerate(raw):
        if not isinstance(row, (list, tuple)) or len(row) != len(kinds):
            raise ModelError(f"row {i + 1} must have {len(kinds)} values", where, key)
        for j, (kind, v) in enumerate(zip(kinds, row)):
            cols[j].append(u.parse(v, kind, where, f"{key} row {i + 1}"))
    first = cols[0]
    for i in range(1, len(first)):
        if first[i] < first[i - 1] or (increasing == "strict" and first[i] == first[i - 1]):
            raise ModelError(f"row {i + 1}: the first column must {'increase' if increasing == 'strict' else 'not decrease'}",
                             where, key)
    return tuple(tuple(c) for c in cols)


def read_csv_table(path: Path, time_unit: str, torque_unit: str, where: str) -> TimeTable:
    """Time and torque columns of a CSV file (an optional header row is skipped)."""
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            rows = [r for r in csv.reader(fh) if r and any(c.strip() for c in r)]
    except FileNotFoundError:
        raise ModelError(f"file not found: {path}", where, "csv") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ModelError(f"cannot read {path} ({exc})", where, "csv") from None
    ft = u.parse(f"1 {time_unit}", TIME, where, "time_unit")
    fq = u.parse(f"1 {torque_unit}", u.TORQUE, where, "torque_unit")
    times, torques = [], []
    for i, r in enumerate(rows):
        if len(r) < 2:
            raise ModelError(f"line {i + 1} needs two columns (time, torque)", where, "csv")
        vals = []
        for c, (kind, f) in zip(r[:2], ((TIME, ft), (u.TORQUE, fq))):
            c = c.strip()
            try:
                vals.append(float(c) * f)
            except ValueError:
                if i == 0 and not any(ch.isdigit() for ch in c):
                    vals = None  # a header row
                    break
                vals.append(u.parse(c, kind, where, f"csv line {i + 1}"))
        if vals is None:
            continue
        if not all(math.isfinite(v) for v in vals):
            raise ModelError(f"line {i + 1}: not a finite number", where, "csv")
        times.append(vals[0])
        torques.append(vals[1])
    if not times:
        raise ModelError(f"{path} holds no rows of numbers", where, "csv")
    for i in range(1, len(times)):
        if times[i] < times[i - 1]:
            raise ModelError(f"line {i + 1}: times must not decrease", where, "csv")
    return TimeTable(tuple(times), tuple(torques))


def _sinusoid(obj, where: str) -> Sinusoid:
    if not isinstance(obj, dict):
        raise ModelError("each sinusoid must be a JSON object", where, "sinusoids")
    amp = _qty(obj, "amplitude", u.TORQUE, where, required=True)
    f = _qty(obj, "frequency", u.FREQUENCY, where, 0.0)
    if f < 0:
        raise ModelError("frequency must not be negative", where, "frequency")
    decay = obj.get("decay")
    tau = None
    if decay is not None and decay != "none":
        tau = u.parse(decay, TIME, where, "decay")
        if tau <= 0:
            raise ModelError("decay time constant must be greater than zero", where, "decay")
    phase = _num(obj, "phase_deg", where, 0.0)
    t0 = _qty(obj, "start", TIME, where, 0.0)
    if t0 < 0:
        raise ModelError("start must not be negative", where, "start")
    return Sinusoid(amp, f, tau, phase, t0)


def _short_circuit(obj, where: str) -> tuple[Sinusoid, ...]:
    if not isinstance(obj, dict):
        raise ModelError("give {\"phases\": 3, \"rated_torque\": ..., \"subtransient_reactance\": ..., "
                         "\"armature_time_constant\": ..., \"line_frequency\": ...}", where, "short_circuit")
    phases = _num(obj, "phases", where, 3.0)
    if phases not in (2.0, 3.0):
        raise ModelError(f"phases must be 2 or 3, got {phases:g}", where, "short_circuit.phases")
    T = _qty(obj, "rated_torque", u.TORQUE, where, required=True)
    if T <= 0:
        raise ModelError("rated torque must be greater than zero", where, "rated_torque")
    pf = _num(obj, "power_factor", where, 1.0)
    if not 0 < pf <= 1:
        raise ModelError(f"power factor must lie in (0, 1], got {pf:g}", where, "power_factor")
    x2 = _num(obj, "subtransient_reactance", where, required=True)
    if not 0 < x2 < 2:
        raise ModelError(f"subtransient reactance (per unit) must lie in (0, 2), got {x2:g}", where,
                         "subtransient_reactance")
    Ta = _qty(obj, "armature_time_constant", TIME, where, required=True)
    if Ta <= 0:
        raise ModelError("must be greater than zero", where, "armature_time_constant")
    f = _qty(obj, "line_frequency", u.FREQUENCY, where, required=True)
    if f <= 0:
        raise ModelError("must be greater than zero", where, "line_frequency")
    t0 = _qty(obj, "start", TIME, where, 0.0)
    if t0 < 0:
        raise ModelError("start must not be negative", where, "start")
    x1 = _num(obj, "transient_reactance", where)
    Td = _qty(obj, "subtransient_time_constant", TIME, where)
    if x1 is not None and x1 < x2:
        raise ModelError("the transient reactance is at least the subtransient one", where,
                         "transient_reactance")
    if Td is not None and Td <= 0:
        raise ModelError("must be greater than zero", where, "subtransient_time_constant")
    return short_circuit_terms(int(phases), T / pf, x2, Ta, f, t0, x1, Td)


def _synchronous_start(obj, where: str) -> SynchronousStart:
    if not isinstance(obj, dict):
        raise ModelError("give the motor's line_frequency, synchronous_speed, average_torque and "
                         "pulsating_torque tables", where, "synchronous_start")
    f = _qty(obj, "line_frequency", u.FREQUENCY, where, required=True)
    if f <= 0:
        raise ModelError("must be greater than zero", where, "line_frequency")
    ns = _qty(obj, "synchronous_speed", u.SPEED, where, required=True)
    if ns <= 0:
        raise ModelError("must be greater than zero", where, "synchronous_speed")
    sp, avg = _rows(obj.get("average_torque"), (u.SPEED, u.TORQUE), where, "average_torque")
    pp, puls = _rows(obj.get("pulsating_torque"), (u.SPEED, u.TORQUE), where, "pulsating_torque")
    if any(p < 0 for p in puls):
        raise ModelError("a pulsating-torque amplitude must not be negative", where, "pulsating_torque")
    vf = _num(obj, "voltage_factor", where, 1.0)
    if not 0 < vf <= 2:
        raise ModelError(f"voltage factor (supply / rated voltage) must lie in (0, 2], got {vf:g}", where,
                         "voltage_factor")
    return SynchronousStart(f, ns, sp, avg, pp, puls, vf, _num(obj, "phase_deg", where, 0.0))


def _ramp(obj, where: str) -> TimeTable:
    if not isinstance(obj, dict):
        raise ModelError("give {\"start\": ..., \"rise\": ..., \"from\": ..., \"to\": ...}", where, "ramp")
    t0 = _qty(obj, "start", TIME, where, 0.0)
    rise = _qty(obj, "rise", TIME, where, 0.0)
    if t0 < 0 or rise < 0:
        raise ModelError("start and rise must not be negative", where, "start" if t0 < 0 else "rise")
    a = _qty(obj, "from", u.TORQUE, where, 0.0)
    b = _qty(obj, "to", u.TORQUE, where, required=True)
    return TimeTable((t0, t0 + rise), (a, b))


def _torque(obj, index: int, ev: str, disc_ids, base_dir: Path | None) -> AppliedTorque:
    where = f"{ev} torque {index + 1}"
    if not isinstance(obj, dict):
        raise ModelError("each torque must be a JSON object with 'at' and one source", where)
    at = obj.get("at")
    if at not in disc_ids:
        raise ModelError(f"unknown disc {at!r}", where, "at")
    given = [k for k in SOURCE_KEYS if obj.get(k) is not None]
    if len(given) != 1:
        raise ModelError(("give exactly one of " if not given else "give only one of ")
                         + ", ".join(SOURCE_KEYS) + (f" (found {', '.join(given)})" if given else ""),
                         where, given[1] if len(given) > 1 else "table")
    key = given[0]
    label = str(obj.get("label") or f"{key.replace('_', ' ')} at {at}")
    if key == "table":
        times, torques = _rows(obj["table"], (TIME, u.TORQUE), where, "table", increasing="weak")
        return AppliedTorque(at, label, table=TimeTable(times, torques))
    if key == "csv":
        if not isinstance(obj["csv"], str) or not obj["csv"].strip():
            raise ModelError("give the CSV file's path", where, "csv")
        path = Path(obj["csv"])
        if not path.is_absolute():
            path = (base_dir or Path(os.getcwd())) / path
        tu = str(obj.get("time_unit", "s"))
        qu = str(obj.get("torque_unit", "N*m"))
        return AppliedTorque(at, label, table=read_csv_table(path, tu, qu, where))
    if key == "ramp":
        return AppliedTorque(at, label, table=_ramp(obj["ramp"], where))
    if key == "sinusoids":
        raw = obj["sinusoids"]
        if not isinstance(raw, list) or not raw:
            raise ModelError("give a non-empty list of sinusoids", where, "sinusoids")
        return AppliedTorque(at, label, sinusoids=tuple(_sinusoid(s, f"{where} sinusoid {i + 1}")
                                                        for i, s in enumerate(raw)))
    if key == "short_circuit":
        return AppliedTorque(at, label, sinusoids=_short_circuit(obj["short_circuit"], where))
    if key == "speed_table":
        speeds, torques = _rows(obj["speed_table"], (u.SPEED, u.TORQUE), where, "speed_table")
        return AppliedTorque(at, label, speed_table=SpeedTable(speeds, torques))
    if key == "load_case":
        name = obj["load_case"]
        if not isinstance(name, str) or not name:
            raise ModelError("give the load case's name", where, "load_case")
        return AppliedTorque(at, label, speed_table=SpeedTable(load_case=name))
    return AppliedTorque(at, label, motor=_synchronous_start(obj["synchronous_start"], where))


def _required(raw, where: str, link_ids) -> tuple[float | None, tuple]:
    if raw is None:
        return None, ()
    if isinstance(raw, dict):
        out = []
        for lid, n in raw.items():
            if lid not in link_ids:
                raise ModelError(f"unknown link {lid!r}", where, "required_events")
            v = u.parse_number(n, where, f"required_events.{lid}")
            if v <= 0:
                raise ModelError("a required number of events must be greater than zero", where,
                                 f"required_events.{lid}")
            out.append((lid, v))
        return None, tuple(out)
    v = u.parse_number(raw, where, "required_events")
    if v <= 0:
        raise ModelError("a required number of events must be greater than zero", where, "required_events")
    return v, ()


def parse_transients(doc: dict, disc_ids, link_ids, base_dir: str | os.PathLike | None = None
                     ) -> tuple[TransientEvent, ...]:
    """The project's ``"transients"`` list as model objects (raises ModelError naming
    the event, the torque and the field).  CSV paths are read relative to ``base_dir``
    (the project file's folder; the working folder when None)."""
    raw = doc.get("transients")
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise ModelError("must be a list of events", "transients", "transients")
    base = Path(base_dir) if base_dir is not None else None
    events, names = [], set()
    for i, e in enumerate(raw):
        if not isinstance(e, dict):
            raise ModelError("each transient event must be a JSON object", f"transient #{i + 1}")
        name = e.get("name")
        if not isinstance(name, str) or not name.strip():
            raise ModelError("missing or empty name", f"transient #{i + 1}", "name")
        where = f"transient '{name}'"
        if name in names:
            raise ModelError("duplicate event name", where, "name")
        names.add(name)
        dur = _qty(e, "duration", TIME, where, required=True)
        if dur <= 0:
            raise ModelError("duration must be greater than zero", where, "duration")
        tq = e.get("torques")
        if not isinstance(tq, list) or not tq:
            raise ModelError("give a non-empty list of torques", where, "torques")
        torques = tuple(_torque(t, j, where, disc_ids, base) for j, t in enumerate(tq))
        if sum(t.motor is not None for t in torques) > 1:
            raise ModelError("one synchronous_start per event", where, "torques")
        n0 = _qty(e, "initial_speed", u.SPEED, where, 0.0)
        state = e.get("initial_state", "untwisted")
        if state not in INITIAL_STATES:
            raise ModelError(f"must be one of {', '.join(INITIAL_STATES)}, got {state!r}", where,
                             "initial_state")
        fres = _qty(e, "resolve_up_to", u.FREQUENCY, where)
        if fres is not None and fres <= 0:
            raise ModelError("must be greater than zero", where, "resolve_up_to")
        h = _qty(e, "time_step", TIME, where)
        if h is not None and not 0 < h <= dur:
            raise ModelError("must be greater than zero and not longer than the duration", where,
                             "time_step")
        fd = _qty(e, "damping_frequency", u.FREQUENCY, where)
        if fd is not None and fd <= 0:
            raise ModelError("must be greater than zero", where, "damping_frequency")
        req, per_link = _required(e.get("required_events"), where, link_ids)
        events.append(TransientEvent(name.strip(), dur, torques, n0, state, fres, h, fd, req, per_link))
    return tuple(events)


def parse_sn_curves(doc: dict, link_ids) -> tuple:
    """``"sn_curves": {LINK_ID: {"endurance_limit": "120 MPa", "slope": 8,
    "knee_cycles": 1e6, "slope_after_knee": 15, "source": "..."}}`` as
    ((link id, :class:`core.fatigue.SNCurve`), ...): a shaft's own S-N curve in
    shear stress amplitude, in place of its material's library curve."""
    from .fatigue import SNCurve
    raw = doc.get("sn_curves")
    if raw is None:
        return ()
    if not isinstance(raw, dict):
        raise ModelError("give {link id: {\"endurance_limit\": ..., \"slope\": ..., \"knee_cycles\": ...}}",
                         "sn_curves", "sn_curves")
    out = []
    for lid, c in raw.items():
        where = f"S-N curve of link '{lid}'"
        if lid not in link_ids:
            raise ModelError(f"unknown link {lid!r}", where, "sn_curves")
        if not isinstance(c, dict):
            raise ModelError("must be a JSON object", where, "sn_curves")
        tau = _qty(c, "endurance_limit", u.STRESS, where, required=True)
        if tau <= 0:
            raise ModelError("must be greater than zero", where, "endurance_limit")
        k = _num(c, "slope", where, required=True)
        if k <= 0:
            raise ModelError("must be greater than zero", where, "slope")
        nk = _num(c, "knee_cycles", where, required=True)
        if nk <= 0:
            raise ModelError("must be greater than zero", where, "knee_cycles")
        k2 = _num(c, "slope_after_knee", where)
        if k2 is not None and k2 <= 0:
            raise ModelError("must be greater than zero", where, "slope_after_knee")
        out.append((lid, SNCurve(tau, k, nk, k2, str(c.get("source", "given in the project")))))
    return tuple(out)
