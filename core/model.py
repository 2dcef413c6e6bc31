"""The driveline model: inertia discs joined by links, all values SI floats.

A train is a tree of discs.  Links are shafts, couplings or gear meshes; the
reserved id ``ground`` is a rigid, non-rotating support.  Objects here are
immutable: the project file layer (:mod:`core.project`) builds them from text
with units, and every change makes a new :class:`Train`.
"""
from __future__ import annotations

import math
from dataclasses import MISSING, dataclass, field, fields
from functools import cached_property

from .errors import ModelError
from .materials import Material

GROUND = "ground"
LINK_KINDS = ("shaft", "coupling", "gear_mesh")
MASS_MODELS = ("none", "lumped", "distributed")


@dataclass(frozen=True)
class Disc:
    id: str
    name: str
    inertia: float  # kg*m^2
    damping: float = 0.0  # N*m*s/rad, absolute (to ground)
    # (minus, plus) fractions: the inertia lies in [J (1 - minus), J (1 + plus)]; None: not given
    inertia_tolerance: tuple[float, float] | None = None


@dataclass(frozen=True)
class Segment:
    """A uniform (hollow) round shaft piece."""

    length: float  # m
    outer_diameter: float  # m
    inner_diameter: float = 0.0  # m

    @property
    def polar_moment(self) -> float:
        """Polar second moment of area Ip = pi (D^4 - d^4) / 32, m^4."""
        return math.pi * (self.outer_diameter ** 4 - self.inner_diameter ** 4) / 32.0

    def stiffness(self, shear_modulus: float) -> float:
        """k = G Ip / L (any strength-of-materials handbook), N*m/rad."""
        return shear_modulus * self.polar_moment / self.length


@dataclass(frozen=True)
class Link:
    id: str
    kind: str  # "shaft" | "coupling" | "gear_mesh"
    from_id: str
    to_id: str
    stiffness: float | None = None  # N*m/rad as given; None: from geometry, or a rigid mesh
    segments: tuple[Segment, ...] = ()
    material: Material | None = None
    mass: str = "none"  # "none" | "lumped" | "distributed"
    speed_ratio: float = 1.0  # speed of `to` / speed of `from` (gear meshes)
    damping: float = 0.0  # N*m*s/rad, relative viscous
    loss_factor: float = 0.0  # hysteretic, k (1 + i eta)
    stress_concentration: float = 1.0
    permissible_torque: float | None = None  # N*m, vibratory amplitude
    permissible_stress: float | None = None  # Pa, vibratory shear amplitude
    name: str = ""  # as shown to people; the id where empty
    # acceptance data (core.ratings.LinkRatings): coupling ratings, fatigue and shafting
    # rule settings, transient permissible values; None when the project gives none
    ratings: object | None = None
    teeth: tuple[int, int] | None = None  # gear mesh: (teeth on `from`, teeth on `to`)
    # (minus, plus) fractions: the stiffness lies in [k (1 - minus), k (1 + plus)]; None: not
    # given.  A shaft given by geometry varies its shear modulus (own inertia held).
    stiffness_tolerance: tuple[float, float] | None = None

    @property
    def label(self) -> str:
        return self.name or self.id

    @property
    def is_rigid(self) -> bool:
        return self.kind == "gear_mesh" and self.stiffness is None

    @property
    def damping_only(self) -> bool:
        """A link of damping alone, no stiffness (a viscous damper's ring on its housing)."""
        return self.stiffness == 0.0 and not self.segments

    @property
    def has_geometry(self) -> bool:
        return bool(self.segments)

    @property
    def total_stiffness(self) -> float:
        """Torsional stiffness in N*m/rad (segments in series: 1/k = sum 1/k_i)."""
        if self.stiffness is not None:
            return self.stiffness
        if self.segments:
            G = self.material.shear_modulus
            return 1.0 / sum(1.0 / s.stiffness(G) for s in self.segments)
        return math.inf

    @property
    def own_inertia(self) -> float:
        """Polar mass moment of inertia of the shaft itself, rho Ip L, kg*m^2."""
        if not self.segments or self.material is None:
            return 0.0
        return sum(self.material.density * s.polar_moment * s.length for s in self.segments)

    @property
    def grounded(self) -> bool:
        return GROUND in (self.from_id, self.to_id)


# A frozen dataclass's __init__ sets every field through object.__setattr__ (about 0.1 us a
# field): a 100 000-link train spent a third of its reading building Links.  The plain
# elements of a long train are built by filling a new instance's __dict__ with every field's
# default, in field order (so the instances share one key table, as the constructor's do),
# then the given fields.  tests/test_project_fast.py checks that these give the
# constructor's objects (and that the classes have no __post_init__ to run).
_new = object.__new__


def _defaults(cls) -> dict:
    """Every field of the dataclass ``cls`` with its default (None where it has none)."""
    out = {}
    for f in fields(cls):
        assert f.default_factory is MISSING, f"{cls.__name__}.{f.name}: a shared default would be mutable"
        out[f.name] = None if f.default is MISSING else f.default
    return out


_LINK_DEFAULTS = _defaults(Link)
_DISC_DEFAULTS = _defaults(Disc)


def plain_link(link_id: str, kind: str, from_id: str, to_id: str, stiffness: float | None,
               damping: float, name: str) -> Link:
    """``Link(link_id, kind, from_id, to_id, stiffness, damping=damping, name=name)``, every
    other field at its default; about three times faster than the constructor."""
    link = _new(Link)
    d = link.__dict__
    d.update(_LINK_DEFAULTS)
    d.update(id=link_id, kind=kind, from_id=from_id, to_id=to_id, stiffness=stiffness,
             damping=damping, name=name)
    return link


def plain_disc(disc_id: str, name: str, inertia: float, damping: float) -> Disc:
    """``Disc(disc_id, name, inertia, damping)`` without a tolerance, built faster."""
    disc = _new(Disc)
    d = disc.__dict__
    d.update(_DISC_DEFAULTS)
    d.update(id=disc_id, name=name, inertia=inertia, damping=damping)
    return disc


@dataclass(frozen=True)
class Order:
    order: float
    amplitude: float | None = None  # N*m
    phase_deg: float = 0.0
    scaling: str = "constant"  # "constant" | "speed_squared"
    at_speed: float | None = None  # rad/s of the source shaft, for speed_squared


@dataclass(frozen=True)
class Excitation:
    name: str
    at: str | None = None  # disc id; None for a fixed frequency source
    orders: tuple[Order, ...] = ()
    frequency: float | None = None  # Hz, fixed frequency sources
    amplitude: float | None = None  # N*m, fixed frequency sources (forced response)
    phase_deg: float = 0.0
    # forced response only: the disc a fixed-frequency source's torque acts on
    applied_at: str | None = None
    # forced response only: (disc id, firing angle in degrees of the source shaft) per
    # cylinder; each order's amplitude then acts on every throw, with phase
    # phase_deg - order * firing_deg (the vector-sum method of engine torsional analysis)
    cylinders: tuple[tuple[str, float], ...] = ()
    # a reciprocating engine (core.engine.EngineSpec): its orders are generated from the
    # cylinder pressure and the crank-slider geometry; the forced response takes the
    # per-cylinder harmonics from it (core.engine.engine_harmonics)
    engine: object | None = None
    # speed-dependent lines f = offset + b N or |offset - b N| (core.electric.FrequencyLine),
    # N the speed of the `at` shaft: electric drives
    lines: tuple = ()


@dataclass(frozen=True)
class Operating:
    reference: str
    speed_min: float  # rad/s of the reference shaft
    speed_max: float
    margin: float = 0.10  # fraction
    excitations: tuple[Excitation, ...] = ()
    trip_speed: float | None = None
    range_name: str = "Operating range"
    # participation (fraction, 0..1) below which a coincidence counts as weakly excited
    weak_excitation_below: float | None = None


@dataclass(frozen=True)
class Train:
    title: str
    discs: tuple[Disc, ...]
    links: tuple[Link, ...]
    operating: Operating | None = None
    speed_factor: dict = field(default_factory=dict, compare=False)
    load_cases: tuple = ()  # core.loads.LoadCase, in file order
    # transient events (core.events.TransientEvent) and S-N curves given per link id
    # ((link id, core.fatigue.SNCurve) pairs), both from the project file
    transients: tuple = ()
    sn_curves: tuple = ()
    # elements (disc or link ids) whose window the design options list besides every coupling
    design_options: tuple[str, ...] = ()

    def disc(self, disc_id: str) -> Disc:
        for d in self.discs:
            if d.id == disc_id:
                return d
        raise KeyError(disc_id)

    def name_of(self, element_id: str | None) -> str:
        """The name people see for a disc or link id (the id itself where it has no name)."""
        if element_id is None:
            return ""
        names = self.__dict__.get("_names")
        if names is None:
            names = {l.id: l.label for l in self.links}
            names.update({d.id: d.name or d.id for d in self.discs})
            object.__setattr__(self, "_names", names)
        return names.get(element_id, element_id)

    @property
    def disc_ids(self) -> list[str]:
        """Disc ids in train order (built once: a long train asks for them often)."""
        ids = self.__dict__.get("_disc_ids")
        if ids is None:
            ids = [d.id for d in self.discs]
            object.__setattr__(self, "_disc_ids", ids)
        return ids

    @property
    def link_ids(self) -> list[str]:
        ids = self.__dict__.get("_link_ids")
        if ids is None:
            ids = [l.id for l in self.links]
            object.__setattr__(self, "_link_ids", ids)
        return ids

    @property
    def grounded(self) -> bool:
        return any(l.grounded for l in self.links)

    @cached_property
    def toleranced(self) -> frozenset:
        """'link:ID' / 'disc:ID' of every element given a tolerance (found once per train: the
        windows of a long train's couplings each ask)."""
        return frozenset([f"link:{l.id}" for l in self.links if l.stiffness_tolerance is not None]
                         + [f"disc:{d.id}" for d in self.discs if d.inertia_tolerance is not None])

    @property
    def has_tolerances(self) -> bool:
        """True when any link gives a stiffness tolerance or any disc an inertia tolerance."""
        return bool(self.toleranced)

    def relative_speed(self, disc_id: str, reference: str) -> float:
        """Speed of ``disc_id``'s shaft per unit speed of ``reference``'s shaft."""
        return self.speed_factor[disc_id] / self.speed_factor[reference]


def _ratio(link: Link, from_id: str) -> float:
    """Speed of the other end per unit speed of ``from_id``'s end (1 for a shaft or coupling)."""
    r = link.speed_ratio if link.kind == "gear_mesh" else 1.0
    return r if link.from_id == from_id else 1.0 / r


def _check_parallel(link: Link, first: Link) -> None:
    """A link between the same two discs as ``first``: both must turn the discs at one
    speed ratio, and neither may be a rigid mesh (it would lock the discs together and
    leave the torque split between it and the other link undetermined)."""
    where = f"link '{link.id}'"
    for rigid, other in ((link, first), (first, link)):
        if rigid.is_rigid:
            raise ModelError(f"a rigid gear mesh cannot run in parallel with link '{other.id}' between "
                             f"'{link.from_id}' and '{link.to_id}'; give the mesh a stiffness",
                             f"link '{rigid.id}'", "stiffness")
    r_new, r_old = _ratio(link, link.from_id), _ratio(first, link.from_id)
    if not math.isclose(r_new, r_old, rel_tol=1e-9):
        field_ = "speed_ratio" if link.kind == "gear_mesh" else "kind"
        raise ModelError(f"runs in parallel with link '{first.id}' between '{link.from_id}' and "
                         f"'{link.to_id}', which turns them at a speed ratio of {r_old:.6g}, not "
                         f"{r_new:.6g}; parallel links must share one speed ratio", where, field_)


def check_topology(discs, links) -> dict[str, float]:
    """Validate the tree and return each disc's speed factor (first disc = 1).

    Links may run in parallel (two or more between the same two discs: a shaft
    and a coupling, a spring and a damper); their dynamic stiffnesses add.  The
    discs and the pairs they form must still make a tree.

    Raises ModelError for duplicate or reserved ids, unknown ids, a link from a
    disc to itself, a loop through three or more discs, parallel links of
    different speed ratios or with a rigid mesh, or a disconnected disc.
    """
    if not discs:
        raise ModelError("the train has no discs", "train", "discs")
    speed = _tree_speeds(discs, links)
    # anything else (and every refusal) from the full check, which names the first
    # offending element in file order
    return speed if speed is not None else _check_in_full(discs, links)


def _join(adjacency: dict, link) -> None:
    """``link`` into the adjacency lists of its two discs, with the speed ratio each way."""
    ratio = link.speed_ratio if link.kind == "gear_mesh" else 1.0
    adjacency[link.from_id].append((link.to_id, ratio))
    adjacency[link.to_id].append((link.from_id, 1.0 / ratio))


def _speeds(first: str, adjacency: dict) -> dict[str, float]:
    """Each disc's speed factor, walking the tree out from ``first`` (factor 1)."""
    speed = {first: 1.0}
    stack = [first]
    while stack:
        i = stack.pop()
        for j, r in adjacency[i]:
            if j not in speed:
                speed[j] = speed[i] * r
                stack.append(j)
    return speed


def _tree_speeds(discs, links) -> dict[str, float] | None:
    """The speed factors of a valid train, found without naming anything; None where the
    train breaks any rule (the full check then finds the first break and names it).

    A connected graph of n discs with exactly n - 1 distinct disc pairs is a tree, so
    no loop needs looking for: the pairs are counted and the connection found by array
    operations (:func:`_connected`).  A train without gear meshes turns every disc at
    the first disc's speed (the factors listed in disc order); with meshes they come
    from the full check's walk over the same adjacency, so they (and their order) are
    the full check's."""
    import numpy as np

    n = len(discs)
    index = {d.id: i for i, d in enumerate(discs)}
    if len(index) != n or GROUND in index or len({l.id for l in links}) != len(links):
        return None  # a duplicate or reserved disc id, a duplicate link id
    get = index.get
    a = np.fromiter([get(l.from_id, -1) for l in links], np.int64, len(links))
    b = np.fromiter([get(l.to_id, -1) for l in links], np.int64, len(links))
    if (a == b).any():
        return None  # a link from a disc to itself (or from ground to ground)
    joined = (a >= 0) & (b >= 0)  # the links between two discs (the others run to ground)
    for k in np.flatnonzero(~joined).tolist():
        l = links[k]
        if l.kind == "gear_mesh" or (a[k] < 0 and l.from_id != GROUND) or (b[k] < 0 and l.to_id != GROUND):
            return None  # a mesh to ground, an unknown disc id
    at = np.flatnonzero(joined)  # file positions of the links between two discs
    lo, hi = np.minimum(a[at], b[at]), np.maximum(a[at], b[at])
    _pairs, first, which = np.unique(lo * n + hi, return_index=True, return_inverse=True)
    if len(first) != n - 1:
        return None  # a loop or a disconnected disc
    for p in np.flatnonzero(first[which] != np.arange(len(at))).tolist():
        try:  # a link between two discs already joined: legal where both turn them alike
            _check_parallel(links[at[p]], links[at[first[which[p]]]])
        except ModelError:
            return None
    if not _connected(n, lo[first], hi[first]):
        return None
    if not any(l.kind == "gear_mesh" for l in links):
        return dict.fromkeys(index, 1.0)
    adjacency: dict[str, list[tuple[str, float]]] = {i: [] for i in index}
    for k in np.sort(at[first]).tolist():  # the first link of each pair, in file order
        _join(adjacency, links[k])
    return _speeds(discs[0].id, adjacency)


def _connected(n: int, a, b) -> bool:
    """Whether the graph on nodes 0..n-1 with edges (a[k], b[k]) is connected.

    Hooking and pointer jumping in array operations, after Shiloach & Vishkin, "An
    O(log n) parallel connectivity algorithm", J. Algorithms 3 (1982) (from memory): each
    round hooks every root onto the smallest root joined to it (labels only decrease, so
    no cycle forms), then points every node straight at its root.  A root that is smaller
    than every root joined to it and that no root hooked onto is joined, after that
    round, only to smaller roots, so it hooks in the next one: every component with an
    edge leaving it merges within two rounds, and there are at most 2 log2(n) rounds.
    (Hooking onto any smaller root, not the smallest, can take n rounds: a star whose
    centre carries the largest label.)"""
    import numpy as np

    parent = np.arange(n)
    while True:
        ra, rb = parent[a], parent[b]
        cross = ra != rb
        if not cross.any():
            return bool((parent == 0).all())
        ra, rb = ra[cross], rb[cross]
        np.minimum.at(parent, np.maximum(ra, rb), np.minimum(ra, rb))
        while True:
            up = parent[parent]
            if np.array_equal(up, parent):
                break
            parent = up


def _check_in_full(discs, links) -> dict[str, float]:
    """check_topology's full check: every rule in file order, the first break named."""
    ids = {}
    for d in discs:
        if d.id == GROUND:
            raise ModelError("'ground' is reserved for the rigid support", f"disc '{d.id}'", "id")
        if d.id in ids:
            raise ModelError("duplicate disc id", f"disc '{d.id}'", "id")
        ids[d.id] = d
    link_ids = set()
    parent = {i: i for i in ids}

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    adjacency: dict[str, list[tuple[str, float]]] = {i: [] for i in ids}
    pairs: dict[frozenset, list[Link]] = {}  # links already joining each pair of discs
    for l in links:
        where = f"link '{l.id}'"
        if l.id in link_ids:
            raise ModelError("duplicate link id", where, "id")
        link_ids.add(l.id)
        for fld, end in (("from", l.from_id), ("to", l.to_id)):
            if end != GROUND and end not in ids:
                raise ModelError(f"unknown disc id '{end}'", where, fld)
        if l.from_id == l.to_id:
            raise ModelError("a link cannot join a disc to itself", where, "to")
        if l.grounded:
            if l.kind == "gear_mesh":
                raise ModelError("a gear mesh cannot run to ground", where, "to")
            continue
        same = pairs.setdefault(frozenset((l.from_id, l.to_id)), [])
        if same:  # in parallel with a link between the same two discs: legal, checked
            _check_parallel(l, same[0])
            same.append(l)
            continue
        same.append(l)
        a, b = find(l.from_id), find(l.to_id)
        if a == b:
            raise ModelError(f"closes a loop between '{l.from_id}' and '{l.to_id}'; "
                             "a train must be a tree", where, "to")
        parent[a] = b
        _join(adjacency, l)
    first = discs[0].id
    speed = _speeds(first, adjacency)
    for d in discs:
        if d.id not in speed:
            raise ModelError(f"is not connected to '{first}'; every disc must be linked into the train",
                             f"disc '{d.id}'", "links")
    return speed
