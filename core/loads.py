"""Load cases: the mean torque a train transmits, as a function of speed, in every link.

A project may give named load cases (``"load_cases": [...]``, see :func:`parse_load_cases`).
Each gives the transmitted load against the reference shaft's speed n:

* ``constant_torque`` — T(n) = T0;
* ``constant_power`` — P(n) = P0, T = P0 / n.  Below the operating range the
  torque stays at its value at the bottom of the range (a drive cannot give
  unbounded torque towards standstill; common practice, no source — give a
  ``table`` for any other curve);
* ``propeller`` — P proportional to n^3 through the given point, T = T0 (n / n0)^2
  (the propeller law; e.g. Harvald, Resistance and Propulsion of Ships — from memory);
* ``table`` — [[speed, torque or power], ...], linear in torque between points,
  constant beyond the ends.

``torque`` is the load torque referred to the reference shaft (the torque the
reference shaft would carry if it carried all the power), ``power`` the total
power; ``speed`` is the reference shaft's speed at which they hold.

Where the load goes: ``driven`` lists the discs where the load is taken off, with
their shares of the power; ``driving`` the discs where it is put in (default: the
reference disc, 100 %).  Gear meshes are taken as lossless.

Mean torque in a link (:func:`mean_torque`): removing a link splits the tree in two;
the power through it is the net power taken off on its `to` side, and its torque
is that power over the speed of the link's own shaft (a gear mesh: its `from`
shaft, the side its stiffness and torque are referred to), i.e. T x speed ratio
through every stage, and the branch split by the shares (power balance, any
machine-design text).  Sign: positive when the link passes power from its
`from` disc to its `to` disc.  Links to ground carry no mean torque (a support or
a dashpot to ground transmits no power).  Links in parallel between the same two
discs share the pair's power in proportion to their static stiffness
(:func:`parallel_shares`).

Load cases may also scale the excitations (``excitation_scale``: one factor for
all, or per excitation name) and reduce one engine cylinder's excitation
(``misfire``): see :func:`load_case_train`.

Units: SI — rad/s, N*m, W.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from . import units as u
from .errors import ModelError
from .model import GROUND, Train

LAWS = ("constant_torque", "constant_power", "propeller", "table")


@dataclass(frozen=True)
class LoadShare:
    at: str  # disc id
    share: float  # fraction of the transmitted power (0..1)


@dataclass(frozen=True)
class Misfire:
    """One cylinder's excitation reduced to a fraction (0: no firing)."""

    cylinder: str  # disc id of the crank throw
    gas_torque_fraction: float = 0.0
    excitation: str | None = None  # name of the engine excitation; None: every one acting there


@dataclass(frozen=True)
class LoadCase:
    name: str
    law: str  # one of LAWS
    torque: float | None = None  # N*m on the reference shaft at `speed`
    power: float | None = None  # W at `speed`
    speed: float | None = None  # rad/s of the reference shaft
    table: tuple[tuple[float, float], ...] = ()  # (rad/s, N*m or W)
    table_quantity: str = "torque"  # "torque" | "power"
    driven: tuple[LoadShare, ...] = ()
    driving: tuple[LoadShare, ...] = ()
    excitation_scale: float = 1.0  # every excitation amplitude
    excitation_scales: tuple[tuple[str, float], ...] = ()  # per excitation name (times the above)
    misfire: tuple[Misfire, ...] = ()

    @property
    def changes_excitation(self) -> bool:
        return self.excitation_scale != 1.0 or any(s != 1.0 for _, s in self.excitation_scales) \
            or bool(self.misfire)


# ------------------------------------------------------------------ parsing
def _shares(raw, where: str, key: str, disc_ids) -> tuple[LoadShare, ...]:
    if not isinstance(raw, list) or not raw:
        raise ModelError(f"give a non-empty list of {{\"at\": disc, \"share\": \"100 %\"}}", where, key)
    out, seen = [], set()
    for i, item in enumerate(raw):
        iw = f"{where} {key} {i + 1}"
        if not isinstance(item, dict):
            raise ModelError("each entry must be a JSON object with 'at' and 'share'", iw)
        at = item.get("at")
        if at not in disc_ids:
            raise ModelError(f"unknown disc {at!r}", iw, "at")
        if at in seen:
            raise ModelError(f"disc '{at}' is listed twice", iw, "at")
        seen.add(at)
        # no share anywhere: the load divides equally (six crank throws of one engine)
        equal = all(isinstance(x, dict) and "share" not in x for x in raw)
        raw_share = 1.0 / len(raw) if equal else item.get("share", "100 %" if len(raw) == 1 else None)
        share = u.parse_fraction(raw_share, iw, "share")
        if isinstance(raw_share, (int, float)) and share > 1.0:
            raise ModelError(f"give a fraction (0.5) or a percentage (\"50 %\"), got {share:g}", iw, "share")
        if not 0.0 <= share <= 1.0:
            raise ModelError(f"a share must be between 0 and 100 %, got {share * 100:g} %", iw, "share")
        out.append(LoadShare(at, share))
    total = sum(s.share for s in out)
    if abs(total - 1.0) > 1e-6:
        raise ModelError(f"the shares add up to {total * 100:.6g} %, not 100 %", where, key)
    return tuple(out)


def _table(raw, where: str, quantity: str | None) -> tuple[tuple[tuple[float, float], ...], str]:
    if not isinstance(raw, list) or len(raw) < 2:
        raise ModelError("give at least two [speed, torque or power] points", where, "table")
    pts, kinds = [], set()
    for i, row in enumerate(raw):
        rw = f"{where} table row {i + 1}"
        if not isinstance(row, (list, tuple)) or len(row) != 2:
            raise ModelError("each row is [speed, torque or power]", rw)
        n = u.parse(row[0], u.SPEED, rw, "speed")
        if n < 0:
            raise ModelError("speed must not be negative", rw, "speed")
        v = row[1]
        if isinstance(v, str):
            kind = None
            for k, name in ((u.TORQUE, "torque"), (u.POWER, "power")):
                try:
                    value = u.parse(v, k, rw, name)
                    kind = name
                    break
                except ModelError:
                    continue
            if kind is None:
                raise ModelError(f"'{v}' is neither a torque nor a power", rw, "value")
            kinds.add(kind)
        else:
            value = u.parse(v, u.TORQUE, rw, "value")
            kind = None
        pts.append((n, value, kind))
    if len(kinds) > 1:
        raise ModelError("mixes torques and powers; give one kind", where, "table")
    kind = quantity or (kinds.pop() if kinds else None)
    if kind is None:
        raise ModelError("bare numbers: say what they are with \"table_quantity\": \"torque\" or \"power\"",
                         where, "table_quantity")
    if kind not in ("torque", "power"):
        raise ModelError(f"table_quantity must be 'torque' or 'power', got {kind!r}", where, "table_quantity")
    if any(k is not None and k != kind for _, _, k in pts):
        raise ModelError(f"table_quantity is '{kind}' but the table's units say otherwise", where, "table")
    speeds = [p[0] for p in pts]
    if any(b <= a for a, b in zip(speeds, speeds[1:])):
        raise ModelError("speeds must rise from row to row", where, "table")
    if kind == "power" and speeds[0] <= 0:
        raise ModelError("a power table needs speeds above zero (torque = power / speed)", where, "table")
    return tuple((n, v) for n, v, _ in pts), kind


def _excitation_scales(raw, where: str, names: set[str]) -> tuple[float, tuple[tuple[str, float], ...]]:
    if raw is None:
        return 1.0, ()
    if isinstance(raw, dict):
        overall, per = 1.0, []
        for name, v in raw.items():
            s = u.parse_fraction(v, where, f"excitation_scale.{name}")
            if s < 0:
                raise ModelError("a scale must not be negative", where, f"excitation_scale.{name}")
            if name == "*":
                overall = s
            elif name not in names:
                raise ModelError(f"no excitation is named {name!r}", where, f"excitation_scale.{name}")
            else:
                per.append((name, s))
        return overall, tuple(per)
    s = u.parse_fraction(raw, where, "excitation_scale")
    if s < 0:
        raise ModelError("a scale must not be negative", where, "excitation_scale")
    return s, ()


def _misfires(raw, where: str, train: Train) -> tuple[Misfire, ...]:
    if raw is None:
        return ()
    items = raw if isinstance(raw, list) else [raw]
    op = train.operating
    out = []
    for i, m in enumerate(items):
        mw = f"{where} misfire {i + 1}" if isinstance(raw, list) else where
        if not isinstance(m, dict):
            raise ModelError("give {\"cylinder\": disc, \"gas_torque_fraction\": 0}", mw, "misfire")
        cyl = m.get("cylinder")
        exc = m.get("excitation")
        engines = [e for e in (op.excitations if op else ()) if e.cylinders
                   and (exc is None or e.name == exc)]
        if exc is not None and not engines:
            raise ModelError(f"no excitation with cylinders is named {exc!r}", mw, "misfire.excitation")
        if not any(cyl == c for e in engines for c, _ in e.cylinders):
            raise ModelError(f"{cyl!r} is not a cylinder of an engine excitation (one with \"cylinders\")",
                             mw, "misfire.cylinder")
        frac = u.parse_fraction(m.get("gas_torque_fraction", 0.0), mw, "misfire.gas_torque_fraction")
        if not 0.0 <= frac <= 1.0:
            raise ModelError(f"must be between 0 and 1, got {frac:g}", mw, "misfire.gas_torque_fraction")
        out.append(Misfire(cyl, frac, exc))
    return tuple(out)


def parse_load_cases(raw, train: Train) -> tuple[LoadCase, ...]:
    """Validate ``doc["load_cases"]`` against ``train`` (raises ModelError naming the
    load case and the field)."""
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise ModelError("must be a list of load cases", "project", "load_cases")
    if raw and train.operating is None:
        raise ModelError("load cases need operating data (reference and operating_speed)",
                         "project", "load_cases")
    disc_ids = set(train.disc_ids)
    names = {e.name for e in train.operating.excitations} if train.operating else set()
    out, seen = [], set()
    for i, lc in enumerate(raw):
        if not isinstance(lc, dict):
            raise ModelError("each load case must be a JSON object", f"load case #{i + 1}")
        name = lc.get("name")
        if not isinstance(name, str) or not name.strip():
            raise ModelError("missing or empty name", f"load case #{i + 1}", "name")
        where = f"load case '{name}'"
        if name in seen:
            raise ModelError("duplicate load case name", where, "name")
        seen.add(name)
        law = lc.get("law")
        if law not in LAWS:
            raise ModelError(f"law must be one of {', '.join(LAWS)}, got {law!r}", where, "law")
        torque = power = speed = None
        table, quantity = (), "torque"
        if law == "table":
            table, quantity = _table(lc.get("table"), where, lc.get("table_quantity"))
        else:
            has_t, has_p = lc.get("torque") is not None, lc.get("power") is not None
            if has_t == has_p:
                raise ModelError("give either 'power' or 'torque'", where, "power")
            if has_t:
                torque = u.parse(lc["torque"], u.TORQUE, where, "torque")
                if torque < 0:
                    raise ModelError("must not be negative", where, "torque")
            else:
                power = u.parse(lc["power"], u.POWER, where, "power")
                if power < 0:
                    raise ModelError("must not be negative", where, "power")
            if lc.get("speed") is None:
                if law == "constant_torque" and has_t:
                    speed = None
                else:
                    raise ModelError("give the reference shaft's speed at which the load holds", where, "speed")
            else:
                speed = u.parse(lc["speed"], u.SPEED, where, "speed")
                if speed <= 0:
                    raise ModelError("must be greater than zero", where, "speed")
        if "driven" not in lc:
            raise ModelError("say where the load is taken off: [{\"at\": disc, \"share\": \"100 %\"}]",
                             where, "driven")
        driven = _shares(lc.get("driven"), where, "driven", disc_ids)
        if lc.get("driving") is None:
            driving = (LoadShare(train.operating.reference, 1.0),)
        else:
            driving = _shares(lc.get("driving"), where, "driving", disc_ids)
        both = {s.at for s in driven} & {s.at for s in driving}
        if both:
            raise ModelError(f"disc '{sorted(both)[0]}' both drives and is driven", where, "driven")
        scale, scales = _excitation_scales(lc.get("excitation_scale"), where, names)
        out.append(LoadCase(name, law, torque, power, speed, table, quantity, driven, driving, scale,
                            scales, _misfires(lc.get("misfire"), where, train)))
    return tuple(out)


# ------------------------------------------------------------------ torque
def reference_torque(load_case: LoadCase, speeds, operating) -> np.ndarray:
    """Load torque referred to the reference shaft, N*m, at reference speeds (rad/s)."""
    lc = load_case
    w = np.asarray(speeds, float)
    if lc.law == "table":
        n = np.array([p[0] for p in lc.table])
        v = np.array([p[1] for p in lc.table])
        T = v / n if lc.table_quantity == "power" else v
        return np.interp(w, n, T)
    if lc.law == "constant_torque":
        T0 = lc.torque if lc.torque is not None else lc.power / lc.speed
        return np.full(w.shape, T0)
    P0 = lc.power if lc.power is not None else lc.torque * lc.speed
    if lc.law == "propeller":  # P ~ n^3, T ~ n^2 through (speed, P0)
        return P0 / lc.speed * (w / lc.speed) ** 2
    floor = operating.speed_min if operating.speed_min > 0 else lc.speed
    return P0 / np.maximum(w, floor)


def power_flow(train: Train, load_case: LoadCase) -> np.ndarray:
    """Per link, the fraction of the transmitted power it passes from its `from` to its
    `to` disc (negative: the other way; 0 for links to ground)."""
    ids = train.disc_ids
    net = {d: 0.0 for d in ids}  # power taken off (+) or put in (-), fractions
    for s in load_case.driven:
        net[s.at] += s.share
    for s in load_case.driving:
        net[s.at] -= s.share
    adj: dict[str, list[tuple[str, int]]] = {d: [] for d in ids}
    for li, l in enumerate(train.links):
        if not l.grounded:
            adj[l.from_id].append((l.to_id, li))
            adj[l.to_id].append((l.from_id, li))
    # root the tree at the first disc; subtree sums give every link's flow
    root = ids[0]
    parent = {root: (None, -1)}
    order = [root]
    for d in order:
        for e, li in adj[d]:
            if e not in parent:
                parent[e] = (d, li)
                order.append(e)
    below = dict(net)
    flow = np.zeros(len(train.links))
    pairs: dict[frozenset, list[int]] = {}  # links in parallel between the same two discs
    for li, l in enumerate(train.links):
        if not l.grounded:
            pairs.setdefault(frozenset((l.from_id, l.to_id)), []).append(li)
    for d in reversed(order[1:]):
        p, li = parent[d]
        below[p] += below[d]
        group = pairs[frozenset((p, d))]
        for lj, share in zip(group, parallel_shares(train, group)):
            link = train.links[lj]
            # power leaving the subtree of d through lj, in the link's from -> to sense
            flow[lj] = share * (below[d] if link.to_id == d else -below[d])
    return flow


def parallel_shares(train: Train, group: list[int]) -> np.ndarray:
    """Fractions of the power (and of the static torque on a common shaft) that links in
    parallel between the same two discs carry: they share one static twist, so each
    carries in proportion to its static stiffness referred to one shaft (k s^2, s its
    own shaft's speed factor; statics of springs in parallel).  A link without stiffness
    (a damper of damping alone) carries none; when no link has stiffness, in proportion
    to damping, else equally."""
    if len(group) == 1:
        return np.ones(1)
    links = [train.links[li] for li in group]
    s = np.array([train.speed_factor[l.from_id if l.from_id != GROUND else l.to_id] for l in links])
    k = np.array([l.total_stiffness for l in links]) * s * s
    c = np.array([l.damping for l in links]) * s * s
    w = k if k.sum() > 0 else c if c.sum() > 0 else np.ones(len(links))
    return w / w.sum()


def link_shaft_speed(train: Train, link) -> float:
    """Speed of a link's own shaft per unit reference speed (a gear mesh: its `from` shaft)."""
    ref = train.operating.reference
    end = link.from_id if link.from_id != GROUND else link.to_id
    return train.relative_speed(end, ref)


def mean_torque(train: Train, load_case: LoadCase, speeds) -> np.ndarray:
    """(n_links, n_speeds) N*m: mean torque in every link on its own shaft, positive
    when the link passes power from its `from` disc to its `to` disc."""
    T_ref = reference_torque(load_case, speeds, train.operating)
    flow = power_flow(train, load_case)
    ratio = np.array([link_shaft_speed(train, l) for l in train.links])
    return (flow / ratio)[:, None] * T_ref[None, :]


# ------------------------------------------------------------------ excitations
def load_case_train(train: Train, load_case: LoadCase) -> Train:
    """``train`` with its excitation amplitudes as the load case has them.

    ``excitation_scale`` multiplies every amplitude (per-name factors on top); a
    misfire splits the engine excitation: the misfiring throw gets its own
    excitation with the orders' amplitudes times ``gas_torque_fraction`` and the
    throw's firing phase (phase_deg - order x firing_deg, the vector-sum method),
    the other throws keep theirs.  The given order amplitudes are taken as gas
    torque; an inertia torque that does not misfire needs the engine model.
    """
    lc = load_case
    op = train.operating
    if op is None or not lc.changes_excitation:
        return train
    per = dict(lc.excitation_scales)
    out = []
    for e in op.excitations:
        s = lc.excitation_scale * per.get(e.name, 1.0)
        orders = tuple(replace(o, amplitude=None if o.amplitude is None else o.amplitude * s)
                       for o in e.orders)
        e2 = replace(e, orders=orders, amplitude=None if e.amplitude is None else e.amplitude * s)
        fires = [m for m in lc.misfire if e.cylinders and (m.excitation in (None, e.name))
                 and any(c == m.cylinder for c, _ in e.cylinders)]
        if not fires:
            out.append(e2)
            continue
        keep = tuple(c for c in e.cylinders if c[0] not in {m.cylinder for m in fires})
        if keep:
            out.append(replace(e2, cylinders=keep, at=keep[0][0]))
        for m in fires:
            firing = dict(e.cylinders)[m.cylinder]
            orders_m = tuple(replace(o, amplitude=None if o.amplitude is None
                                     else o.amplitude * m.gas_torque_fraction,
                                     phase_deg=o.phase_deg - o.order * firing) for o in orders)
            out.append(replace(e2, name=e.name, at=m.cylinder, orders=orders_m, cylinders=()))
    return replace(train, operating=replace(op, excitations=tuple(out)))


def describe(load_case: LoadCase) -> str:
    """One line a reader understands: the law and its point."""
    lc = load_case
    rpm = 60.0 / (2 * math.pi)
    if lc.law == "table":
        return f"table of {lc.table_quantity} against speed ({len(lc.table)} points)"
    what = f"{lc.power / 1e3:.6g} kW" if lc.power is not None else f"{lc.torque:.6g} N*m"
    at = f" at {lc.speed * rpm:.6g} rpm" if lc.speed else ""
    return f"{lc.law.replace('_', ' ')}, {what}{at}"


def load_torque_table(train: Train, name: str, disc_id: str, points: int = 256):
    """A load case as the speed-dependent load torque a transient applies at ``disc_id``
    (:mod:`core.transient`'s ``load_case_torque`` hook): (speeds of that disc's shaft in
    rad/s, torque on that disc in N*m), negative as a load brakes.  The disc takes its
    ``driven`` share of the load case's power (all of it when it is not listed and the
    case names no driven disc).  Raises KeyError for an unknown load case."""
    cases = {lc.name: lc for lc in train.load_cases}
    lc = cases[name]
    op = train.operating
    shares = {s.at: s.share for s in lc.driven}
    share = shares.get(disc_id, 0.0 if shares else 1.0)
    r = train.relative_speed(disc_id, op.reference) if op is not None else 1.0
    top = max(op.trip_speed or 0.0, op.speed_max, lc.speed or 0.0) if op is not None else (lc.speed or 1.0)
    ref = np.linspace(0.0, 1.2 * top, points)
    torque = -share * reference_torque(lc, ref, op) / r
    return ref * r, torque
