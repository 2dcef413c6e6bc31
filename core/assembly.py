"""Reduce a :class:`~core.model.Train` to a tree of referred nodes and members.

All speeds are referred to the first disc's shaft: a disc whose shaft turns s
times as fast has referred inertia J s^2, a spring on that shaft k s^2
(energy equivalence; e.g. Wilson, Practical Solution of Torsional Vibration
Problems, vol. 1, referred systems — from memory).  A rigid gear mesh merges
its two discs into one node.  A shaft with distributed mass becomes a chain of
exact uniform members, with zero-inertia junction nodes between its segments.
Ground is not a node: a member to ground adds to one node's diagonal only.
"""
from __future__ import annotations

from dataclasses import dataclass
from operator import attrgetter

import numpy as np

from .elimination import RowSum
from .model import GROUND, Train


@dataclass
class Members:
    """Arrays over members (index m). ``b`` is -1 for a member to ground."""

    a: np.ndarray  # node index at the member's `from` end
    b: np.ndarray  # node index at the `to` end, or -1
    k: np.ndarray  # referred static stiffness G Ip / L or spring k, N*m/rad
    L_over_c: np.ndarray  # length / wave speed [s] for distributed members, 0 for springs
    link: np.ndarray  # index of the link the member belongs to
    scale: np.ndarray  # actual angle = scale * referred angle, on that member's shaft
    flip: np.ndarray  # True when the member's a-end is the link's `to` end (ground at `from`)


@dataclass
class Assembly:
    n_nodes: int
    node_inertia: np.ndarray  # referred, kg*m^2
    disc_node: np.ndarray  # node of every disc (in train order)
    disc_scale: np.ndarray  # actual disc angle = disc_scale * referred node angle
    members: Members
    edges_a: np.ndarray  # tree edges between nodes (members not to ground)
    edges_b: np.ndarray
    member_edge: np.ndarray  # edge index of each member, -1 for grounded members
    grounded: bool
    distributed: bool
    # some edge carries more than one member (links in parallel between the same two
    # discs): an edge's off-diagonal is then the sum of its members' (see edge_sum);
    # without, edge j is tree member j and the sum is the identity (the fast path)
    parallel: bool = False
    # per disc: its own inertia plus half of every lumped shaft ending on it, actual (not
    # referred), kg*m^2 (:func:`effective_disc_inertia`)
    disc_inertia: np.ndarray | None = None
    link_mass: np.ndarray | None = None  # per link: 0 no own inertia, 1 lumped, 2 distributed
    link_rigid: np.ndarray | None = None  # per link: a rigid gear mesh (no stiffness)

    def edge_sum(self, values):
        """Off-diagonal per edge from values over the tree members (members with b >= 0,
        in member order), shape (n_tree_members, ...) -> (n_edges, ...): the dynamic
        stiffnesses of members in parallel add (they share both end angles)."""
        if not self.parallel:
            return values
        summer = self.__dict__.get("_edge_summer")
        if summer is None:
            tree = self.members.b >= 0
            summer = RowSum(self.member_edge[tree], np.arange(int(tree.sum())),
                            (len(self.edges_a), int(tree.sum())))
            self.__dict__["_edge_summer"] = summer
        return summer @ values

    @property
    def n_finite_modes(self) -> int | None:
        """Number of finite natural frequencies of a lumped model (None if distributed)."""
        if self.distributed:
            return None
        return int(np.count_nonzero(self.node_inertia > 0))


def assemble(train: Train) -> Assembly:
    """Referred nodes and members of ``train`` (numpy over links; a Python loop
    only over rigid meshes, lumped shafts and the segments of distributed shafts)."""
    discs, links = train.discs, train.links
    n_discs, nl = len(discs), len(links)
    index = dict(zip(train.disc_ids, range(n_discs)))
    index[GROUND] = -1
    sf = train.speed_factor
    if len(sf) == n_discs and set(sf.values()) == {1.0}:  # one speed throughout (no gears)
        s = np.ones(n_discs)
    else:
        s = np.fromiter(map(sf.__getitem__, train.disc_ids), float, n_discs)
    J = np.fromiter(map(attrgetter("inertia"), discs), float, n_discs)
    # one pass per field over the links (map and attrgetter: no Python frame per link)
    fi = np.fromiter(map(index.__getitem__, map(attrgetter("from_id"), links)), np.int64, nl)
    ti = np.fromiter(map(index.__getitem__, map(attrgetter("to_id"), links)), np.int64, nl)
    gear = np.fromiter(map("gear_mesh".__eq__, map(attrgetter("kind"), links)), bool, nl)
    MASS = {"none": 0, "lumped": 1, "distributed": 2}
    mass = np.fromiter(map(MASS.__getitem__, map(attrgetter("mass"), links)), np.int64, nl)
    given = np.array(list(map(attrgetter("stiffness"), links)), float).reshape(nl)  # None -> NaN
    rigid = gear & np.isnan(given)
    # merge discs joined by rigid gear meshes
    parent = list(range(len(discs)))

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for li in np.flatnonzero(rigid):
        parent[find(int(fi[li]))] = find(int(ti[li]))
    if rigid.any():
        roots = {}
        disc_node = np.array([roots.setdefault(find(i), len(roots)) for i in range(len(discs))],
                             np.int64)
        n_nodes = len(roots)
    else:
        disc_node = np.arange(len(discs), dtype=np.int64)
        n_nodes = len(discs)
    inertia = np.bincount(disc_node, weights=J * s * s, minlength=n_nodes)

    nd = np.where(fi >= 0, disc_node[np.maximum(fi, 0)], -1)  # node at `from` (-1 ground)
    nt = np.where(ti >= 0, disc_node[np.maximum(ti, 0)], -1)
    dist = mass == 2
    lumped = mass == 1
    # speed factor of each link's shaft; a mesh stiffness is referred to its `from` shaft
    end = np.where((fi >= 0) | gear, fi, ti)
    sc = s[np.maximum(end, 0)] if len(links) else np.zeros(0)
    simple = ~rigid & ~dist
    # a gear mesh's stiffness as given; a shaft's or coupling's total stiffness (given, or
    # from its segments in series)
    li_s = np.flatnonzero(simple)
    ks = given[li_s]
    for j in np.flatnonzero(np.isnan(ks)):
        ks[j] = links[int(li_s[j])].total_stiffness
    disc_inertia = J.copy()  # each disc's own inertia plus half of every lumped shaft at it
    if lumped.any():
        li_l = np.flatnonzero(lumped)
        own = np.array([links[li].own_inertia for li in li_l], float)
        half = np.zeros(len(links))
        half[li_l] = 0.5 * own
        # in link order, `from` end then `to` end
        ends = np.c_[fi[li_l], ti[li_l]].ravel()
        ok = ends >= 0
        np.add.at(disc_inertia, ends[ok], np.repeat(0.5 * own, 2)[ok])
        half *= sc * sc
        for ends in (nd, nt):
            ok = lumped & (ends >= 0)
            inertia += np.bincount(ends[ok], weights=half[ok], minlength=n_nodes)
    ma, mb = nd[li_s], nt[li_s]
    mk, mlc, mlink, msc = ks * sc[li_s] ** 2, np.zeros(len(li_s)), li_s, sc[li_s]
    # distributed shafts: a chain of exact uniform members with massless junctions
    da, db, dk, dlc, dlink, dsc = [], [], [], [], [], []
    extra = 0
    for li in np.flatnonzero(dist):
        l = links[li]
        G, rho = l.material.shear_modulus, l.material.density
        c = (G / rho) ** 0.5
        prev = int(nd[li])
        for j, seg in enumerate(l.segments):
            if j < len(l.segments) - 1:
                nxt = n_nodes + extra
                extra += 1
            else:
                nxt = int(nt[li])
            da.append(prev); db.append(nxt); dk.append(seg.stiffness(G) * sc[li] ** 2)
            dlc.append(seg.length / c); dlink.append(li); dsc.append(sc[li])
            prev = nxt
    if extra:
        inertia = np.r_[inertia, np.zeros(extra)]
    ma = np.r_[ma, np.array(da, np.int64)].astype(np.int64)
    mb = np.r_[mb, np.array(db, np.int64)].astype(np.int64)
    mk = np.r_[mk, dk].astype(float)
    mlc = np.r_[mlc, dlc].astype(float)
    mlink = np.r_[mlink, np.array(dlink, np.int64)].astype(np.int64)
    msc = np.r_[msc, dsc].astype(float)
    o = np.argsort(mlink, kind="stable")  # members in link order
    ma, mb, mk, mlc, mlink, msc = ma[o], mb[o], mk[o], mlc[o], mlink[o], msc[o]
    flip = ma == -1  # keep the ground end as b
    ma, mb = np.where(flip, mb, ma), np.where(flip, -1, mb)
    members = Members(ma, mb, mk, mlc, mlink, msc, flip)
    tree = members.b >= 0
    member_edge = np.full(len(ma), -1, np.int64)
    ta, tb = members.a[tree], members.b[tree]
    n_all = n_nodes + extra
    pair = np.minimum(ta, tb) * n_all + np.maximum(ta, tb)
    first_of, inv = np.unique(pair, return_index=True, return_inverse=True)[1:]
    parallel = len(first_of) < len(pair)
    if parallel:  # one edge per pair of nodes, in the order of its first member
        order = np.argsort(first_of, kind="stable")
        rank = np.empty_like(order)
        rank[order] = np.arange(len(order))
        member_edge[tree] = rank[inv.ravel()]
        ea, eb = ta[first_of[order]], tb[first_of[order]]
    else:
        member_edge[tree] = np.arange(int(tree.sum()))
        ea, eb = ta, tb
    return Assembly(n_all, np.asarray(inertia, float), disc_node, s, members, ea, eb, member_edge,
                    bool(np.any(~tree)), bool(dist.any()), parallel, disc_inertia, mass, rigid)


def member_stiffness(members: Members, omega):
    """Exact member end stiffness (K_aa = K_bb, K_ab) for an array of omega.

    Springs: (k, -k).  Uniform distributed members, from the exact field matrix
    of the torsional wave equation (see :func:`core.transfer.shaft_field_matrix`):
    K_aa = k x cos(x) / sin(x), K_ab = -k x / sin(x), x = omega L / c, k = G Ip / L.
    Returned shapes: (n_members, n_omega).
    """
    w = np.atleast_1d(np.asarray(omega, float))
    return end_stiffness(members.k[:, None], members.L_over_c[:, None] * w[None, :])


def end_stiffness(k, x):
    """(K_aa, K_ab) of uniform members of static stiffness k at x = omega L / c
    (arrays broadcast; x = 0 for a spring)."""
    sinc = np.sinc(x / np.pi)  # sin(x)/x, 1 at x = 0
    sinc = np.where(sinc == 0.0, 1e-300, sinc)  # exactly at a clamped frequency
    kab = -k / sinc
    kaa = -kab * np.cos(x)
    return kaa, kab


def clamped_count(members: Members, omega) -> np.ndarray:
    """J0 of the Wittrick-Williams algorithm: natural frequencies of all members
    with both ends clamped lying below omega; a uniform member has them at
    x = n pi (Wittrick & Williams, Q. J. Mech. Appl. Math. 24 (1971) 263-284)."""
    w = np.atleast_1d(np.asarray(omega, float))
    return clamped_count_x(members.L_over_c[:, None] * w[None, :])


def clamped_count_x(x) -> np.ndarray:
    """J0 summed over the first axis of x = omega L / c (members, trial points)."""
    n = np.floor(x / np.pi)
    # keep J0 consistent with the computed sign of sin(x) next to x = n pi, where
    # rounding can put x/pi and sin(x) on different sides of the pole
    sgn = np.sin(x) * np.where(n % 2 == 0, 1.0, -1.0)
    near_low = (x / np.pi - n) < 0.5
    n = np.where((sgn < 0) & near_low, n - 1, n)
    n = np.where((sgn < 0) & ~near_low, n + 1, n)
    return np.maximum(n, 0).sum(axis=0).astype(np.int64)


def effective_disc_inertia(train: Train) -> np.ndarray:
    """Each disc's inertia as its equation of motion sees it: its own J plus half
    the own inertia of every lumped shaft ending on it (kg*m^2, actual, not referred);
    :attr:`Assembly.disc_inertia` of the train's assembly."""
    return assemble(train).disc_inertia


def peel_rigid_meshes(train: Train, disc_load, end_torque: dict) -> None:
    """Torque through rigid gear meshes, from the equations of motion of their discs.

    ``disc_load[i]`` is what the sum of link torques acting on disc i must equal
    (e.g. -omega^2 J theta in free vibration; add i omega c theta - T_applied for a
    forced, damped disc).  A link acts on its `from` disc with -T_from and on its
    `to` disc with T_to / r (r the speed ratio of a gear mesh, 1 otherwise; power is
    conserved through a mesh).  ``end_torque[li] = (T_from, T_to)`` must hold every
    non-rigid link; each rigid mesh is added as (T, T), T on its `from` shaft, once
    every other link at one of its discs is known — peeling the gear train from its
    outer ends.  A mesh that cannot be peeled gets NaN.
    """
    links = train.links
    idx = {d: i for i, d in enumerate(train.disc_ids)}
    at_disc = {d: [] for d in idx}
    for li, l in enumerate(links):
        for end in (l.from_id, l.to_id):
            if end in at_disc:
                at_disc[end].append(li)

    def acting_on(lj, d):
        m = links[lj]
        r = m.speed_ratio if m.kind == "gear_mesh" else 1.0
        t_from, t_to = end_torque[lj]
        return t_to / r if m.to_id == d else -t_from

    pending = [li for li, l in enumerate(links) if l.is_rigid]
    while pending:
        progress = False
        for li in list(pending):
            l = links[li]
            for end in (l.from_id, l.to_id):
                others = [lj for lj in at_disc[end] if lj != li]
                if not all(lj in end_torque for lj in others):
                    continue
                rest = disc_load[idx[end]]
                for lj in others:
                    rest = rest - acting_on(lj, end)
                # rest is the torque the mesh exerts on this disc
                T = -rest if end == l.from_id else rest * l.speed_ratio
                end_torque[li] = (T, T)
                pending.remove(li)
                progress = True
                break
        if not progress:  # a closed gear train cannot be peeled
            for li in pending:
                nan = np.full(np.shape(disc_load[0]), np.nan)
                end_torque[li] = (nan, nan)
            break
