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

import numpy as np

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

    @property
    def n_finite_modes(self) -> int | None:
        """Number of finite natural frequencies of a lumped model (None if distributed)."""
        if self.distributed:
            return None
        return int(np.count_nonzero(self.node_inertia > 0))


def assemble(train: Train) -> Assembly:
    discs = train.discs
    index = {d.id: i for i, d in enumerate(discs)}
    s = np.array([train.speed_factor[d.id] for d in discs])
    # merge discs joined by rigid gear meshes
    parent = list(range(len(discs)))

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for l in train.links:
        if l.is_rigid:
            parent[find(index[l.from_id])] = find(index[l.to_id])
    roots = {}
    disc_node = np.empty(len(discs), int)
    for i in range(len(discs)):
        disc_node[i] = roots.setdefault(find(i), len(roots))
    inertia = [0.0] * len(roots)
    for i, d in enumerate(discs):
        inertia[disc_node[i]] += d.inertia * s[i] ** 2

    ma, mb, mk, mlc, mlink, mscale, mflip = [], [], [], [], [], [], []

    def node_of(disc_id):
        return -1 if disc_id == GROUND else int(disc_node[index[disc_id]])

    def add(a, b, k, lc, li, sc):
        flip = a == -1
        if flip:  # keep the ground end as b
            a, b = b, a
        ma.append(a); mb.append(b); mk.append(k); mlc.append(lc); mlink.append(li); mscale.append(sc)
        mflip.append(flip)

    distributed = False
    for li, l in enumerate(train.links):
        if l.is_rigid:
            continue
        a, b = node_of(l.from_id), node_of(l.to_id)
        end = l.from_id if l.from_id != GROUND else l.to_id
        sc = float(s[index[end]])  # speed factor of this link's shaft
        if l.kind == "gear_mesh":
            # mesh stiffness is given referred to the `from` shaft
            sc = float(s[index[l.from_id]])
            add(a, b, l.stiffness * sc ** 2, 0.0, li, sc)
        elif l.mass == "distributed":
            distributed = True
            G, rho = l.material.shear_modulus, l.material.density
            c = (G / rho) ** 0.5
            prev = a
            for j, seg in enumerate(l.segments):
                if j < len(l.segments) - 1:
                    nxt = len(inertia)
                    inertia.append(0.0)
                else:
                    nxt = b
                add(prev, nxt, seg.stiffness(G) * sc ** 2, seg.length / c, li, sc)
                prev = nxt
        else:
            if l.mass == "lumped":
                half = 0.5 * l.own_inertia * sc ** 2
                for n in (a, b):
                    if n >= 0:
                        inertia[n] += half
            add(a, b, l.total_stiffness * sc ** 2, 0.0, li, sc)
    members = Members(np.array(ma, int), np.array(mb, int), np.array(mk, float),
                      np.array(mlc, float), np.array(mlink, int), np.array(mscale, float),
                      np.array(mflip, bool))
    tree = members.b >= 0
    member_edge = np.full(len(ma), -1, int)
    member_edge[tree] = np.arange(int(tree.sum()))
    return Assembly(len(inertia), np.array(inertia, float), disc_node, s, members,
                    members.a[tree], members.b[tree], member_edge,
                    bool(np.any(~tree)), distributed)


def member_stiffness(members: Members, omega):
    """Exact member end stiffness (K_aa = K_bb, K_ab) for an array of omega.

    Springs: (k, -k).  Uniform distributed members, from the exact field matrix
    of the torsional wave equation (see :func:`core.transfer.shaft_field_matrix`):
    K_aa = k x cos(x) / sin(x), K_ab = -k x / sin(x), x = omega L / c, k = G Ip / L.
    Returned shapes: (n_members, n_omega).
    """
    w = np.atleast_1d(np.asarray(omega, float))
    x = members.L_over_c[:, None] * w[None, :]
    k = members.k[:, None]
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
    x = members.L_over_c[:, None] * w[None, :]
    n = np.floor(x / np.pi)
    # keep J0 consistent with the computed sign of sin(x) next to x = n pi, where
    # rounding can put x/pi and sin(x) on different sides of the pole
    sgn = np.sin(x) * np.where(n % 2 == 0, 1.0, -1.0)
    near_low = (x / np.pi - n) < 0.5
    n = np.where((sgn < 0) & near_low, n - 1, n)
    n = np.where((sgn < 0) & ~near_low, n + 1, n)
    return np.maximum(n, 0).sum(axis=0).astype(np.int64)
