"""What to change when a train fails its screening.

* **Sensitivities** of every elastic natural frequency to every stiffness,
  inertia and (for shafts given by geometry) diameter, from the Rayleigh
  quotient omega^2 = U / T* (strain energy over kinetic energy per omega^2):
  the quotient is stationary at a mode, so a small change of one element moves
  omega^2 by the change of U or T* evaluated with the mode shape held (Lord
  Rayleigh, The Theory of Sound, vol. 1, sec. 88 -- from memory; the same
  first-order result as the eigenvalue derivative of Fox & Kapoor, AIAA J. 6
  (1968) 2426-2429 -- from memory).  Hence, for a link of stiffness k,

      d ln f / d ln k = U_link / (2 U),

  half the link's strain-energy share, and for a disc of inertia J

      d ln f / d ln J = -T_disc / (2 T),

  minus half its kinetic-energy share.  Both are energies, so a link or disc
  behind a gear mesh needs no referral.  A shaft with distributed mass scales
  its shear modulus G: k = G Ip / L and L / c change together and the strain
  energy of the exact mode scales with G, so the same half share applies.
  Scaling a geometric shaft's outer diameters by (1 + e), bores held, scales
  each segment's k and own inertia rho Ip L by 4 D^4 / (D^4 - d^4) e.

* **Tolerance bands** (:mod:`core.tolerance`): exact, from two corner trains.

* **The window** of one element: the values of its stiffness (a link) or its
  inertia (a disc), every other value held, for which every elastic mode
  clears every excitation by the margin over the whole operating range (its
  tolerance band, the element's own tolerance included, when tolerances are
  given).  Each excitation line gives one forbidden frequency interval
  (f_e(N_min) (1 - m), f_e(N_max) (1 + m)).  For a fixed trial frequency the
  count of natural frequencies below it is monotone in the element's value
  (Rayleigh monotonicity, see :mod:`core.tolerance`), so every edge of every
  forbidden interval maps to one value of the element per mode, found by
  multisection on the Wittrick-Williams count (W. H. Wittrick and F. W.
  Williams, Q. J. Mech. Appl. Math. 24 (1971) 263-284) to 1e-9 relative.  No
  frequency is sampled: the window is exact to that tolerance.  The count is
  evaluated for many trial values at once on the assembled system of
  :class:`core.solver.DynamicSystem`, changing only the element's member
  stiffnesses (or its node inertia) per trial column.

Units: SI inside (N*m/rad, kg*m^2, rad/s); frequencies reported in Hz.
"""
from __future__ import annotations

import math
import threading
import time
from dataclasses import dataclass, field, replace
from operator import attrgetter

import numpy as np

from .assembly import clamped_count, clamped_count_x, end_stiffness
from .elimination import RowSum, factor
from .errors import ModelError
from .model import Train
from .screening import Screening, excitation_lines, screen, screening_cap_hz
from .solver import (DynamicSystem, Modes, _inverse_iteration, _map, _rows, _segment_energies, dynamic_system,
                     member_ends, natural_modes, zero_roots)
from .tolerance import corner_trains, frequency_bands, scaled_disc, scaled_link

TWO_PI = 2.0 * np.pi
WINDOW_RTOL = 1e-9  # relative precision of every window edge
CHART_RTOL = 1e-6  # relative precision of the chart's frequencies
#: trains of at least this many nodes finish isolated brackets by the determinant (_polish_det):
#: there a factorization costs more than a multisection pass's fixed overhead (measured: the
#: polish is 2.5x faster on a 2000-disc chart, slower below a few hundred nodes)
POLISH_MIN_NODES = 500
UNITS = {"stiffness": "N*m/rad", "inertia": "kg*m^2"}


# ================================================================== sensitivities
@dataclass(frozen=True, eq=False)
class Sensitivities:
    """Logarithmic sensitivities d ln f / d ln value of the elastic modes (rows).

    ``stiffness``: per link with a stiffness (rigid gear meshes carry none);
    ``inertia``: per disc; ``diameter``: per shaft given by geometry (all its
    outer diameters scaled together, bores held; its own inertia moves with D
    when it has a mass model).  Sum rules: each row of ``stiffness`` sums to
    1/2; ``inertia`` sums to -1/2 less half the shafts' own kinetic share.
    """

    mode: np.ndarray  # (n,) solve numbers of the elastic modes (first elastic = 1)
    frequency_hz: np.ndarray  # (n,)
    link_ids: tuple[str, ...]
    stiffness: np.ndarray  # (n, len(link_ids))
    disc_ids: tuple[str, ...]
    inertia: np.ndarray  # (n, len(disc_ids))
    shaft_ids: tuple[str, ...]
    diameter: np.ndarray  # (n, len(shaft_ids))

    def row(self, mode_number: int) -> int:
        hits = np.flatnonzero(self.mode == mode_number)
        if not len(hits):
            raise KeyError(mode_number)
        return int(hits[0])

    def as_dict(self, mode_number: int) -> dict:
        """``{"stiffness": {LINK: x}, "inertia": {DISC: x}[, "diameter": {SHAFT: x}]}``
        for one mode (the ``sensitivity`` object of ``twistwise solve --json``)."""
        r = self.row(mode_number)
        out = {"stiffness": {i: float(v) for i, v in zip(self.link_ids, self.stiffness[r])},
               "inertia": {i: float(v) for i, v in zip(self.disc_ids, self.inertia[r])}}
        if self.shaft_ids:
            out["diameter"] = {i: float(v) for i, v in zip(self.shaft_ids, self.diameter[r])}
        return out

    def ranked(self, mode_number: int, count: int | None = None) -> list[tuple[str, str, float]]:
        """(quantity, element id, sensitivity), largest magnitude first ("what moves this mode")."""
        r = self.row(mode_number)
        items = ([("stiffness", i, float(v)) for i, v in zip(self.link_ids, self.stiffness[r])]
                 + [("inertia", i, float(v)) for i, v in zip(self.disc_ids, self.inertia[r])]
                 + [("diameter", i, float(v)) for i, v in zip(self.shaft_ids, self.diameter[r])])
        items.sort(key=lambda t: -abs(t[2]))
        return items[:count] if count else items


def _node_shapes(modes: Modes) -> np.ndarray:
    """(n_nodes, n_modes) referred node angles of ``modes``: kept by the solver, or by
    inverse iteration at the solved frequencies when a Modes object came without them."""
    if modes.node_shape is not None:
        return np.asarray(modes.node_shape, float).T
    system = DynamicSystem(modes.train)
    x = _inverse_iteration(system, TWO_PI * np.asarray(modes.frequency_hz, float))
    phi = np.empty_like(x)
    phi[system.schedule.order] = x
    return phi


def _diameter_factor(seg) -> float:
    """d ln Ip / d ln D with the bore held: 4 D^4 / (D^4 - d^4) (Ip = pi (D^4 - d^4) / 32)."""
    D4 = seg.outer_diameter ** 4
    return 4.0 * D4 / (D4 - seg.inner_diameter ** 4)


def sensitivities(modes: Modes) -> Sensitivities:
    """Sensitivities of every elastic mode of ``modes`` (see the module docstring).

    Energies per member come from the exact member formulas of the solver
    (springs: k (dtheta)^2 / 2; uniform distributed members: the integrals of
    the exact shape), with the solver's own mode vectors.
    """
    train = modes.train
    rows = np.flatnonzero(modes.elastic)
    omega = TWO_PI * np.asarray(modes.frequency_hz, float)[rows]
    phi = _rows(_node_shapes(modes).T, rows).T  # the elastic columns (a view where they run on)
    a = dynamic_system(train).asm  # the solver's own assembly of this train
    mem = a.members
    ta, tb, k_act = member_ends(mem, phi)
    if a.distributed:
        x = mem.L_over_c[:, None] * omega[None, :]
        U, Tk = _segment_energies(k_act, x, ta, tb)  # per member, (n_members, k)
        Tk = np.where(mem.L_over_c[:, None] > 0, Tk, 0.0)  # own kinetic energy of distributed members
    else:  # springs: U = k (dtheta)^2 / 2, no own kinetic energy
        U = np.subtract(ta, tb, order="C")
        np.square(U, out=U)
        U *= 0.5 * k_act
        Tk = None
    w2 = omega[None, :] ** 2
    links = train.links
    nl = len(links)
    J = np.fromiter(map(attrgetter("inertia"), train.discs), float, len(train.discs))
    plain = a.n_nodes == len(J) and np.array_equal(a.disc_node, np.arange(len(J))) and np.all(a.disc_scale == 1.0)
    T_disc = np.square(phi if plain else a.disc_scale[:, None] * phi[a.disc_node], order="C")
    T_disc *= (0.5 * J)[:, None]
    T_disc *= w2
    one_each = len(mem.link) == nl and np.array_equal(mem.link, np.arange(nl))  # a member per link
    per_link = None if one_each else RowSum(mem.link, np.arange(len(mem.link)), (nl, len(mem.link)))
    U_link = U if one_each else per_link @ U
    lumped = np.flatnonzero(a.link_mass == 1)
    # a shaft's own kinetic energy (None: no link has any)
    T_link = (Tk if one_each else per_link @ Tk) if Tk is not None else None
    if len(lumped):  # half its own inertia at each end (ground does not move); one member each
        if T_link is None:
            T_link = np.zeros((nl, len(rows)))
        m = np.searchsorted(mem.link, lumped)
        own = np.array([links[li].own_inertia for li in lumped.tolist()], float)
        T_link[lumped] = (0.25 * own)[:, None] * (ta[m] ** 2 + tb[m] ** 2) * w2
    U_tot = U_link.sum(0)
    T_tot = T_disc.sum(0) + (T_link.sum(0) if T_link is not None else 0.0)
    U_tot = np.where(U_tot > 0, U_tot, 1.0)
    T_tot = np.where(T_tot > 0, T_tot, 1.0)
    stiff_links = np.flatnonzero(~a.link_rigid)
    shafts = np.flatnonzero(np.fromiter(map(bool, map(attrgetter("segments"), links)), bool, nl)).tolist()
    diam = np.zeros((len(rows), len(shafts)))
    for c, li in enumerate(shafts):
        l = links[li]
        alpha = np.array([_diameter_factor(s) for s in l.segments])
        ms = np.flatnonzero(mem.link == li)
        if l.mass == "distributed":  # one member per segment, in segment order
            dU = alpha @ U[ms]
            dT = alpha @ Tk[ms]
        else:  # one spring: series segments share the torque, U_j in proportion to 1 / k_j
            G = l.material.shear_modulus
            flex = np.array([1.0 / s.stiffness(G) for s in l.segments])
            dU = (alpha @ flex / flex.sum()) * U_link[li]
            mass = np.array([s.polar_moment * s.length for s in l.segments])
            dT = (alpha @ mass / mass.sum()) * (T_link[li] if T_link is not None else 0.0)
        diam[:, c] = 0.5 * (dU / U_tot - dT / T_tot)
    all_stiff = len(stiff_links) == nl
    if all_stiff and U_link is U and not a.distributed:
        stiffness = U  # a temporary of this function: scaled in place
        stiffness *= 0.5
    else:
        stiffness = 0.5 * (U_link if all_stiff else U_link[stiff_links])
    stiffness /= U_tot
    T_disc *= -0.5
    T_disc /= T_tot
    return Sensitivities(
        mode=np.asarray(modes.number, int)[rows], frequency_hz=np.asarray(modes.frequency_hz)[rows],
        link_ids=tuple(train.link_ids) if all_stiff else tuple(train.link_ids[li] for li in stiff_links.tolist()),
        stiffness=stiffness.T, disc_ids=tuple(train.disc_ids), inertia=T_disc.T,
        shaft_ids=tuple(train.link_ids[li] for li in shafts), diameter=diam)


# ================================================================== the family count
class _Family:
    """One train with one element's value free per trial column.

    ``count(value, omega)``: natural frequencies strictly below each omega (rad/s)
    when the element has the given value (SI, per column).  The element's
    members (or its node inertia) are changed in the assembled, permuted arrays
    of :class:`DynamicSystem`; the elimination plan and every other entry are the
    system's own.  A geometric shaft's value is its total stiffness: its shear
    modulus scales, so every segment's k scales and a distributed segment's
    L / c = L sqrt(rho / G) scales by the inverse square root.
    """

    def __init__(self, train: Train, kind: str, element: str, base_value: float):
        # the assembled train is shared by the windows of all its elements (read only here)
        self.system = s = dynamic_system(train)
        self.kind = kind
        self.base = base_value
        a = s.asm
        if kind == "disc":
            d = train.disc_ids.index(element)
            self.pos = int(s.pos[a.disc_node[d]])
            self.s2 = float(a.disc_scale[d]) ** 2
            return
        mem = a.members
        li = train.link_ids.index(element)
        E = np.flatnonzero(mem.link == li)
        self.E = E
        self.k0 = mem.k[E]
        self.lc0 = mem.L_over_c[E]
        self.distributed = bool((self.lc0 > 0).any())
        self.tree = mem.b[E] >= 0
        self.pa = s._pa[E]
        self.pb = s._pb[E]
        slot_of = s.schedule.slot_of_edge
        self.slot = np.full(len(E), -1, np.int64)
        self.slot[self.tree] = slot_of[a.member_edge[E][self.tree]]
        # members of other links on the same edge (links in parallel): the edge's
        # off-diagonal is the sum over them all, so theirs is added to this link's
        self.partners = [np.zeros(0, np.int64)] * len(E)
        if a.parallel:
            for j, m in enumerate(E):
                if self.tree[j]:
                    shared = np.flatnonzero((a.member_edge == a.member_edge[m]) & (mem.link != li))
                    self.partners[j] = shared
        # members condensed at a free massless end (see DynamicSystem._condensable)
        self.cond_far = np.full(len(E), -1, np.int64)
        self.cond_leaf = np.full(len(E), -1, np.int64)
        fe = s._free_end
        for j, m in enumerate(E):
            hit = np.flatnonzero(fe == m)
            if len(hit):
                far = int(s._free_far_pos[hit[0]])
                self.cond_far[j] = far
                self.cond_leaf[j] = int(self.pb[j] if far == self.pa[j] else self.pa[j])

    def _apply(self, D, W, v, w, squared: bool):
        """Change D (diagonal) and W (slots) of the system's count arrays to value v per column."""
        if self.kind == "disc":
            D[self.pos] -= (v - self.base) * self.s2 * (w * w)
            return
        sc = v / self.base
        k_new = self.k0[:, None] * sc[None, :]
        if self.distributed:
            x0 = self.lc0[:, None] * w[None, :]
            x1 = x0 / np.sqrt(sc)[None, :]
            kaa0, _ = end_stiffness(self.k0[:, None], x0)
            kaa1, kab1 = end_stiffness(k_new, x1)
        else:
            kaa0 = self.k0[:, None]
            kaa1, kab1 = k_new, -k_new
        for j in range(len(self.E)):
            if self.cond_far[j] >= 0 and len(self.system._free_end):
                # condensed: the far end takes -k x tan x, the free end keeps K_aa, no coupling
                D[self.cond_far[j]] += (-k_new[j] * x1[j] * np.tan(x1[j])
                                        + self.k0[j] * x0[j] * np.tan(x0[j]))
                D[self.cond_leaf[j]] += kaa1[j] - kaa0[j]
                continue
            D[self.pa[j]] += kaa1[j] - kaa0[j]
            if self.tree[j]:
                D[self.pb[j]] += kaa1[j] - kaa0[j]
                kab = kab1[j]
                if len(self.partners[j]):  # links in parallel: sum first, then square
                    mem = self.system.asm.members
                    p = self.partners[j]
                    kab = kab + end_stiffness(mem.k[p][:, None], mem.L_over_c[p][:, None] * w[None, :])[1].sum(0)
                W[self.slot[j]] = kab * kab if squared else kab

    def _count_piece(self, v, w):
        s = self.system
        D, W = s._arrays(w, squared=True)
        self._apply(D, W, v, w, True)
        neg = factor(s.schedule, D, W, s.tiny, logdet=False, squared=True)[0]
        bad = neg < 0  # met 0 * inf: redo with the zero-pivot replacement
        if bad.any():
            D, W = s._arrays(w[bad])
            self._apply(D, W, v[bad], w[bad], False)
            neg[bad] = factor(s.schedule, D, W, s.tiny, True)[0]
        if s.asm.distributed:
            neg = neg + clamped_count(s.asm.members, w)
            if self.kind == "link" and self.distributed:
                x0 = self.lc0[:, None] * w[None, :]
                neg = neg - clamped_count_x(x0) + clamped_count_x(x0 / np.sqrt(v / self.base)[None, :])
        return neg

    def count(self, value, omega) -> np.ndarray:
        v = np.asarray(value, float)
        w = np.asarray(omega, float)
        pieces = self.system._pieces(w.size)
        if len(pieces) == 1:
            return self._count_piece(v, w)
        return np.concatenate(_map(lambda p: self._count_piece(v[p], w[p]), pieces))

    @property
    def lumped(self) -> bool:
        """No distributed member: the count is the negative pivots alone and det K has
        the sign (-1)^count (see :func:`_polish_det`)."""
        return not self.system.asm.distributed

    def _logdet_piece(self, v, w):
        s = self.system
        D, W = s._arrays(w)
        self._apply(D, W, v, w, False)
        neg, ld, _ = factor(s.schedule, D, W, s.tiny, logdet=True)
        return neg, ld

    def count_logdet(self, value, omega):
        """(count below each omega, log|det K|) per column of a lumped family."""
        v = np.asarray(value, float)
        w = np.asarray(omega, float)
        pieces = self.system._pieces(w.size)
        parts = [self._logdet_piece(v, w)] if len(pieces) == 1 else \
            _map(lambda p: self._logdet_piece(v[p], w[p]), pieces)
        return np.concatenate([q[0] for q in parts]), np.concatenate([q[1] for q in parts])


def _family_counts(families, roles, role_of, value, omega, logdet: bool = False):
    """Mode count below ``omega`` (and, with ``logdet``, log|det K|) of each column, each by the
    family its role names (``families[role] = (family, factor)``: the element at factor x value)."""
    cnt = np.empty(len(value), np.int64)
    ld = np.empty(len(value)) if logdet else None
    for role in roles:
        sel = role_of == role
        if sel.any():
            fam, c = families[role]
            if logdet:
                cnt[sel], ld[sel] = fam.count_logdet(c * value[sel], omega[sel])
            else:
                cnt[sel] = fam.count(c * value[sel], omega[sel])
    return (cnt, ld) if logdet else cnt


def _transitions(evaluate, key, t_a, t_b, level, p_a, tol: float, per_target: int = 4,
                 min_columns: int = 128, counts=None, logdet=None, ends_logdet=None, to_x=None, from_x=None,
                 straddle: bool = False):
    """Where monotone count functions pass given levels, by multisection.

    Target n: the count function ``key[n]`` over t in [t_a[n], t_b[n]], with
    P(t) = count(t) > level[n] equal to ``p_a[n]`` at t_a and its opposite at
    t_b.  Each pass spreads trial points evenly over every distinct bracket
    (targets sharing one bracket share the points) and keeps the sub-bracket
    where P switches.  Returns t at each switch, to ``tol``.
    ``evaluate(keys, ts) -> counts`` evaluates many columns at once.

    Points per pass: about ``per_target`` per unresolved target (at least
    ``min_columns`` in all), so a pass costs little more than its fixed overhead
    while the brackets are shared and each target gains ~2 bits a pass later.

    ``counts``: (count at t_a, count at t_b) per target, and ``logdet(keys, ts) ->
    (counts, log|det K|)`` (lumped systems, where det K has the sign (-1)^count):
    a bracket that holds the target's switch alone (the counts at its ends differ by
    one) is then finished by Illinois regula falsi on det K, which changes sign
    exactly there (:func:`_polish_det`), instead of more multisection passes;
    ``ends_logdet``: log|det K| at t_a and t_b where the caller has it (NaN: not known);
    ``to_x``, ``from_x``, ``straddle``: how the polish steps (see :func:`_polish_det`).
    """
    t_a, t_b = np.array(t_a, float), np.array(t_b, float)
    key, level, p_a = np.asarray(key), np.asarray(level), np.asarray(p_a, bool)
    active = (t_b - t_a) > tol
    polish = logdet is not None and counts is not None
    if polish:
        c_a, c_b = (np.array(c, np.int64) for c in counts)
        ld_a, ld_b = ((np.full(len(t_a), np.nan), np.full(len(t_a), np.nan)) if ends_logdet is None
                      else (np.array(x, float) for x in ends_logdet))
        tried = np.zeros(len(t_a), bool)
    while active.any():
        if polish:
            lone = active & ~tried & (np.abs(c_a - c_b) == 1)
            if lone.any():
                idx = np.flatnonzero(lone)
                t_a[idx], t_b[idx] = _polish_det(logdet, key[idx], t_a[idx], t_b[idx], c_a[idx], c_b[idx], tol,
                                                 ld_a[idx], ld_b[idx], to_x, from_x, straddle)
                tried[idx] = True  # a bracket the polish could not close goes on by multisection
                active[idx] = (t_b[idx] - t_a[idx]) > tol
                continue
        idx = np.flatnonzero(active)
        rows = np.column_stack([key[idx], t_a[idx], t_b[idx]])
        groups, inv = np.unique(rows, axis=0, return_inverse=True)
        inv = inv.ravel()
        p = int(np.clip(max(per_target * len(idx), min_columns) // len(groups), 3, 63))
        frac = np.arange(1, p + 1) / (p + 1)
        pts = groups[:, 1:2] + (groups[:, 2:3] - groups[:, 1:2]) * frac[None, :]
        counts_p = evaluate(np.repeat(groups[:, 0].astype(np.int64), p), pts.ravel()).reshape(len(groups), p)
        C = counts_p[inv]
        P = C > level[idx, None]
        j = np.count_nonzero(P == p_a[idx, None], axis=1)  # P keeps its t_a value on a prefix
        g_pts = pts[inv]
        r = np.arange(len(idx))
        moved_a, moved_b = j > 0, j < p
        t_a[idx] = np.where(moved_a, g_pts[r, np.maximum(j - 1, 0)], t_a[idx])
        t_b[idx] = np.where(moved_b, g_pts[r, np.minimum(j, p - 1)], t_b[idx])
        if polish:
            c_a[idx] = np.where(moved_a, C[r, np.maximum(j - 1, 0)], c_a[idx])
            c_b[idx] = np.where(moved_b, C[r, np.minimum(j, p - 1)], c_b[idx])
            ld_a[idx[moved_a]] = np.nan
            ld_b[idx[moved_b]] = np.nan
        active[idx] = (t_b[idx] - t_a[idx]) > tol
    return 0.5 * (t_a + t_b)


def _polish_det(logdet, key, a, b, c_a, c_b, tol: float, ld_a=None, ld_b=None, to_x=None, from_x=None,
                straddle: bool = False, iterations: int = 100):
    """Brackets (a, b] narrowed to ``tol`` around the one root of det K inside each.

    Each bracket holds exactly one switch of its count (the counts at its ends
    differ by one), so det K = (-1)^count |det K| changes sign exactly once in it:
    Illinois regula falsi on the signed determinant (the safeguarded false position of
    :func:`core.solver._polish_distributed`; M. Dowell and P. Jarratt, BIT 11 (1971)
    168-174 -- from memory), taken in the variable ``x = to_x(t)`` in which det K is
    nearly linear (the element's value for a window: det K is linear in a spring's
    stiffness), converges superlinearly.  Each step factors K at the false position,
    kept a quarter ``tol`` inside the bracket; with ``straddle`` at two points a quarter
    ``tol`` either side of it, so that an estimate as good as a linear det K gives closes
    the bracket at once.  The side of a trial point is read from its count, as
    multisection would.  A bracket whose end counts (from this factorization) are not
    ``c_a``, ``c_b`` is returned as it came.  ``ld_a``, ``ld_b``: log|det K| at the ends
    where known (NaN: factorized here).
    """
    a, b = np.array(a, float), np.array(b, float)
    c_a, c_b = np.asarray(c_a, np.int64), np.asarray(c_b, np.int64)
    n = len(a)
    if not n:
        return a, b
    to_x = to_x or (lambda t: t)
    from_x = from_x or (lambda x: x)
    ld_a = np.full(n, np.nan) if ld_a is None else np.array(ld_a, float)
    ld_b = np.full(n, np.nan) if ld_b is None else np.array(ld_b, float)
    cnt_a, cnt_b = c_a.copy(), c_b.copy()
    need_a, need_b = np.flatnonzero(np.isnan(ld_a)), np.flatnonzero(np.isnan(ld_b))
    if len(need_a) or len(need_b):
        c_new, ld_new = logdet(np.r_[key[need_a], key[need_b]], np.r_[a[need_a], b[need_b]])
        cnt_a[need_a], ld_a[need_a] = c_new[:len(need_a)], ld_new[:len(need_a)]
        cnt_b[need_b], ld_b[need_b] = c_new[len(need_a):], ld_new[len(need_a):]
    ref = np.maximum(ld_a, ld_b)
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        f_a = np.exp(np.clip(ld_a - ref, -700.0, 0.0))  # the a side taken as +
        f_b = -np.exp(np.clip(ld_b - ref, -700.0, 0.0))
    good = (cnt_a == c_a) & (cnt_b == c_b) & np.isfinite(ref)
    active = ((b - a) > tol) & good
    side = np.zeros(n, np.int64)  # +1: a moved last, -1: b moved last
    q = 0.25 * tol
    for _ in range(iterations):
        if not active.any():
            break
        idx = np.flatnonzero(active)
        k = len(idx)
        aa, bb, fa, fb = a[idx], b[idx], f_a[idx], f_b[idx]
        xa, xb = to_x(aa), to_x(bb)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            t = from_x((xa * fb - xb * fa) / (fb - fa))
        t = np.where(np.isfinite(t), t, 0.5 * (aa + bb))
        t = np.clip(t, aa + q, bb - q)
        if straddle:
            c, ld = logdet(np.r_[key[idx], key[idx]], np.r_[t - q, t + q])
            t1, t2, c1, c2, ld1, ld2 = t - q, t + q, c[:k], c[k:], ld[:k], ld[k:]
        else:
            c1, ld1 = logdet(key[idx], t)
            t1 = t2 = t
            c2, ld2 = c1, ld1
        on_a1, on_a2 = c1 == c_a[idx], c2 == c_a[idx]  # counts rise (or fall) with t
        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            g1 = np.exp(np.clip(ld1 - ref[idx], -700.0, 700.0))
            g2 = np.exp(np.clip(ld2 - ref[idx], -700.0, 700.0))
        new_a = np.where(on_a2, t2, np.where(on_a1, t1, aa))
        new_b = np.where(~on_a1, t1, np.where(~on_a2, t2, bb))
        moved_a, moved_b = on_a1 | on_a2, ~on_a1 | ~on_a2
        ga = np.where(on_a2, g2, g1)
        gb = -np.where(~on_a1, g1, g2)
        # Illinois: an end that stays while the other moves a second time has its value halved
        s_prev = side[idx]
        f_a[idx] = np.where(moved_a, ga, np.where(s_prev == -1, 0.5 * fa, fa))
        f_b[idx] = np.where(moved_b, gb, np.where(s_prev == 1, 0.5 * fb, fb))
        side[idx] = np.where(moved_a & moved_b, 0, np.where(moved_a, 1, -1))
        a[idx], b[idx] = new_a, new_b
        active[idx] = (new_b - new_a) > tol
    return a, b


# ================================================================== windows
@dataclass(frozen=True)
class Blocked:
    """One (mode, excitation) pair failing over an open interval of the element's value."""

    low: float  # SI value of the element
    high: float
    mode: int  # solve number (first elastic = 1)
    line: str  # the excitation line's label


@dataclass(frozen=True, eq=False)
class FrequencyChart:
    """Natural frequencies against the element's value (log grid), for the chart."""

    values: np.ndarray  # (n_points,) SI, ascending
    mode: np.ndarray  # (n_curves,) solve numbers
    frequency_hz: np.ndarray  # (n_points, n_curves), nominal; NaN below the chart floor
    band_low_hz: np.ndarray | None  # (n_points, n_curves) low corner, None without tolerances
    band_high_hz: np.ndarray | None
    cap_hz: float  # the screening cap: curves are the modes below it somewhere in the range


@dataclass(frozen=True, eq=False)
class WindowResult:
    """The values of one element for which every elastic mode clears every excitation.

    ``admissible``: closed intervals of SI values, ascending; one reaching an end of
    ``range`` ends exactly there.  ``blocked``: the failing pairs and the open value
    intervals where each fails (the complement of ``admissible`` in ``range`` is
    their union).  ``current_clears`` is judged at the current value by the count
    itself.  Weakly excited pairs are not exempt here (their participation moves
    with the value): the window is the conservative set.

    ``chart`` is computed on first use (it costs tens of times the window's edges, and
    a sheet draws a few charts of a train that may window hundreds of couplings); the
    desktop program asks for it on its worker thread.
    """

    element: str
    quantity: str  # "stiffness" | "inertia"
    unit: str  # "N*m/rad" | "kg*m^2"
    current: float
    current_clears: bool
    range: tuple[float, float]
    admissible: tuple[tuple[float, float], ...]
    nearest_admissible: float | None  # the admissible value nearest the current (ratio), None if none
    margin: float
    tolerance: tuple[float, float] | None  # the element's own (minus, plus), None if not given
    tolerances: bool  # any tolerance band in the train
    blocked: tuple[Blocked, ...]
    forbidden_hz: tuple[tuple[str, float, float], ...]  # (line label, low Hz, high Hz)
    # the FrequencyChart, None, or a function computing it (see ``chart``)
    chart_source: object = field(repr=False)
    time_s: float = 0.0
    _chart_lock: object = field(default_factory=threading.Lock, repr=False, compare=False)

    @property
    def chart(self) -> FrequencyChart | None:
        """Natural frequencies against the element's value (None when not asked for)."""
        source = self.chart_source
        if callable(source):
            with self._chart_lock:
                source = self.chart_source
                if callable(source):
                    source = source()
                    object.__setattr__(self, "chart_source", source)
        return source

    def as_json(self) -> dict:
        """The ``twistwise window --json`` object (SI), contract keys first."""
        return {"element": self.element, "quantity": self.quantity, "unit": self.unit,
                "current": self.current, "current_clears": self.current_clears,
                "range": [self.range[0], self.range[1]],
                "admissible": [[a, b] for a, b in self.admissible],
                "nearest_admissible": self.nearest_admissible,
                "margin_percent": 100.0 * self.margin,
                "blocked": [{"low": b.low, "high": b.high, "mode": b.mode, "excitation": b.line}
                            for b in self.blocked]}


def _element(train: Train, element_id: str, quantity: str | None):
    """(kind 'link'|'disc', quantity, current value, own tolerance) of an element id."""
    is_link = element_id in train.link_ids
    is_disc = element_id in train.disc_ids
    if quantity is None:
        if is_link and is_disc:
            raise ModelError(f"'{element_id}' names both a disc and a link; say which (stiffness or "
                             "inertia)", f"element '{element_id}'", "quantity")
        quantity = "stiffness" if is_link else "inertia"
    if quantity not in UNITS:
        raise ModelError(f"quantity must be 'stiffness' or 'inertia', got {quantity!r}",
                         f"element '{element_id}'", "quantity")
    if quantity == "stiffness":
        if not is_link:
            raise ModelError("no link with this id", f"link '{element_id}'", "id")
        l = train.links[train.link_ids.index(element_id)]
        if l.is_rigid:
            raise ModelError("a rigid gear mesh has no stiffness to choose", f"link '{element_id}'",
                             "stiffness")
        return "link", quantity, float(l.total_stiffness), l.stiffness_tolerance
    if not is_disc:
        raise ModelError("no disc with this id", f"disc '{element_id}'", "id")
    d = train.disc(element_id)
    return "disc", quantity, float(d.inertia), d.inertia_tolerance


def _forbidden(train: Train, margin: float):
    """(label, low, high) Hz per excitation line: the open interval of natural
    frequencies within the margin of the line somewhere in the operating range."""
    op = train.operating
    out = []
    if margin <= 0:
        return out
    for line in excitation_lines(train, op):
        e_lo, e_hi = line.frequency_range(op.speed_min, op.speed_max)
        if e_hi <= 0:
            continue
        out.append((line.label, max(e_lo * (1.0 - margin), 0.0), e_hi * (1.0 + margin)))
    return out


def element_window(train: Train, element_id: str, quantity: str | None = None,
                   value_range: tuple[float, float] | None = None,
                   screening_margin: float | None = None, chart_points: int = 41) -> WindowResult:
    """The window of one link's stiffness or one disc's inertia (see the module docstring).

    ``value_range``: (low, high) SI; default the current value / 100 to x 100.
    ``screening_margin``: fraction; default the project's margin.
    ``chart_points``: points of the log grid of the frequency chart (0: no chart).
    Raises ModelError naming the element and field for an unknown element, a rigid
    mesh, a bad range or a train without operating data.
    """
    t0 = time.perf_counter()
    op = train.operating
    if op is None or not op.excitations:
        raise ModelError("the window needs operating data with excitations", "operating data",
                         "excitations")
    kind, quantity, current, own_tol = _element(train, element_id, quantity)
    where = f"{kind} '{element_id}'"
    if value_range is None:
        if current <= 0:
            raise ModelError("the current value is zero: give a range for the window", where, "range")
        value_range = (current / 100.0, current * 100.0)
    lo_v, hi_v = (float(x) for x in value_range)
    if not (math.isfinite(lo_v) and math.isfinite(hi_v)) or lo_v <= 0 or hi_v <= lo_v:
        raise ModelError(f"the range must be two positive values, low below high, got {lo_v:g} to {hi_v:g}",
                         where, "range")
    m = op.margin if screening_margin is None else float(screening_margin)
    if not (math.isfinite(m) and m >= 0):
        raise ModelError(f"the margin must be a non-negative number, got {m!r}", "operating data",
                         "margin_percent")
    d = 1.0 if quantity == "stiffness" else -1.0  # r = d ln v raises every frequency
    tol = own_tol or (0.0, 0.0)
    # the element's own tolerance: low corner at v (1 - minus) [stiffness] or v (1 + plus) [inertia]
    c_low, c_high = ((1.0 - tol[0], 1.0 + tol[1]) if quantity == "stiffness"
                     else (1.0 + tol[1], 1.0 - tol[0]))
    skip = f"{kind}:{element_id}"
    toleranced = train.toleranced
    others = bool(toleranced - {skip})
    base = current if current > 0 else math.sqrt(lo_v * hi_v)

    def at_base(t: Train) -> Train:  # the element at a positive base value (a zero-inertia disc)
        if kind == "disc" and current <= 0:
            return replace(t, discs=tuple(replace(x, inertia=base) if x.id == element_id else x
                                          for x in t.discs))
        return t

    def make_families():
        nominal = _Family(at_base(train), kind, element_id, base)
        if others:
            tl, th = corner_trains(train, skip=skip)
            fam_low, fam_high = _Family(at_base(tl), kind, element_id, base), \
                _Family(at_base(th), kind, element_id, base)
        else:
            fam_low = fam_high = nominal
        return [(fam_low, c_low), (fam_high, c_high), (nominal, 1.0)]

    families = make_families()
    fam_low, fam_high, nominal = (f for f, _ in families)
    rb = zero_roots(nominal.system.asm)  # rigid-body mode and free damper rings
    r_min, r_max = sorted((d * math.log(lo_v), d * math.log(hi_v)))
    forbidden = _forbidden(train, m)
    lines = [(lab, TWO_PI * lo, TWO_PI * hi) for lab, lo, hi in forbidden]

    # count functions: (family role, omega); role 0 low corner at the upper edges, 1 high at the lower
    keys = [(0, hi) for _, _, hi in lines] + [(1, lo) for _, lo, _ in lines]
    key_role = np.array([k[0] for k in keys], np.int64)
    # a lower edge at 0 Hz (an order line from standstill) is never counted: every
    # elastic mode lies above it; a positive stand-in keeps the arrays finite
    key_omega = np.array([k[1] if k[1] > 0 else 1.0 for k in keys], float)

    def evaluate(k_idx, r, logdet=False):
        kk = np.asarray(k_idx)
        return _family_counts(families, (0, 1), key_role[kk], np.exp(d * np.asarray(r, float)),
                              key_omega[kk], logdet)

    def logdet(k_idx, r):  # as evaluate, with log|det K| (lumped families only)
        return evaluate(k_idx, r, logdet=True)

    nk = len(keys)
    if nk:
        ends = evaluate(np.r_[np.arange(nk), np.arange(nk)], np.r_[np.full(nk, r_min), np.full(nk, r_max)])
        n_at_min, n_at_max = ends[:nk], ends[nk:]  # counts fall as r rises
        zero = np.array([om <= 0 for _, om in keys])
        n_at_min = np.where(zero, rb, n_at_min)
        n_at_max = np.where(zero, rb, n_at_max)
    else:
        n_at_min = n_at_max = np.zeros(0, np.int64)
    t_key, t_level = [], []
    for k in range(nk):
        for i in range(max(int(n_at_max[k]), rb), int(n_at_min[k])):
            t_key.append(k)
            t_level.append(i)
    t_key = np.array(t_key, np.int64)
    t_level = np.array(t_level, np.int64)
    lumped = fam_low.lumped and fam_high.lumped and nominal.system.n_dof >= POLISH_MIN_NODES
    crossing = _transitions(evaluate, t_key, np.full(len(t_key), r_min), np.full(len(t_key), r_max),
                            t_level, np.ones(len(t_key), bool), WINDOW_RTOL,
                            counts=(n_at_min[t_key], n_at_max[t_key]) if len(t_key) else None,
                            logdet=logdet if lumped else None,  # det K is linear in a spring's value
                            to_x=lambda r: np.exp(d * r), from_x=lambda v: np.log(v) / d, straddle=True) \
        if len(t_key) else np.zeros(0)
    cross = {(int(k), int(i)): float(r) for k, i, r in zip(t_key, t_level, crossing)}

    def edge(k: int, i: int) -> float:
        """r where mode i (0-based count index) of key k's family rises through its frequency."""
        if i < n_at_max[k]:
            return math.inf  # below that frequency over the whole range
        if i >= n_at_min[k]:
            return -math.inf  # above it over the whole range
        return cross[(k, i)]

    nl = len(lines)
    blocked_r = []  # (a, b, mode index, line label)
    for j, (label, _, _) in enumerate(lines):
        for i in range(rb, int(n_at_min[j])):
            a = edge(nl + j, i)  # high corner reaches above the lower edge for r > a
            b = edge(j, i)  # low corner stays below the upper edge for r < b
            a, b = max(a, r_min), min(b, r_max)
            if a < b:
                blocked_r.append((a, b, i, label))
    admissible_r = _complement([(a, b) for a, b, _, _ in blocked_r], r_min, r_max, 2 * WINDOW_RTOL)

    def to_v(r):
        if r == r_min:
            return lo_v if d > 0 else hi_v
        if r == r_max:
            return hi_v if d > 0 else lo_v
        return math.exp(d * r)

    admissible = sorted(tuple(sorted((to_v(a), to_v(b)))) for a, b in admissible_r)
    number_of = (lambda i: i + 1 - rb)  # count index -> solve number (first elastic = 1)
    blocked = sorted((Blocked(*sorted((to_v(a), to_v(b))), number_of(i), lab) for a, b, i, lab in blocked_r),
                     key=lambda x: (x.low, x.mode))
    # the current value, judged by the count itself: no mode band meets a forbidden interval
    clears = True
    if lines:
        cols_v = np.r_[np.full(nl, c_low * current), np.full(nl, c_high * current)]
        if current > 0:
            hi_om = np.array([hi for _, _, hi in lines])
            lo_om = np.array([lo for _, lo, _ in lines])
            n_lo = fam_low.count(cols_v[:nl], hi_om)
            pos = lo_om > 0
            n_hi = np.full(nl, rb)
            if pos.any():
                n_hi[pos] = fam_high.count(cols_v[nl:][pos], lo_om[pos])
            clears = bool(np.all(n_lo == n_hi))
        else:
            clears = False
    nearest = None
    if clears and lo_v <= current <= hi_v:
        nearest = current
    elif admissible:
        cand = [x for iv in admissible for x in iv]
        inside = [current for a, b in admissible if a <= current <= b]
        if inside:
            nearest = current
        elif current > 0:
            nearest = min(cand, key=lambda x: abs(math.log(x / current)))
        else:
            nearest = cand[0]
    chart = None
    if chart_points:
        cap = screening_cap_hz(excitation_lines(train, op), op.speed_max, m)
        tolerances = bool(toleranced)

        def make_chart():  # on first use; the families are made again (a corner train is not kept)
            return _chart(make_families(), tolerances, lo_v, hi_v, chart_points, rb, d, cap)
        chart = make_chart
    return WindowResult(element_id, quantity, UNITS[quantity], current, clears, (lo_v, hi_v),
                        tuple(admissible), nearest, m, own_tol, bool(toleranced), tuple(blocked),
                        tuple(forbidden), chart, time.perf_counter() - t0)


def _complement(intervals, lo: float, hi: float, tol: float):
    """Closed pieces of [lo, hi] outside the union of open ``intervals`` (pieces shorter
    than ``tol`` dropped: they are below the precision of the edges)."""
    out = []
    at = lo
    for a, b in sorted(intervals):
        if a - at > tol:
            out.append((at, a))
        at = max(at, b)
    if hi - at > tol or (at == lo and not intervals):
        out.append((at, hi))
    return out


def _chart(families, tolerances: bool, lo_v: float, hi_v: float, n_points: int, rb: int, d: float,
           cap_hz: float) -> FrequencyChart:
    """Natural frequencies on a log grid of the element's value, by multisection on the count.

    Every frequency is monotone in the element's value, so once the two ends of
    the grid are solved, each grid point between two solved ones is bracketed by
    their frequencies (mode by mode): the grid is filled by halving, and a mode
    the element hardly moves needs almost no trial point.  Precision CHART_RTOL.
    """
    values = np.geomspace(lo_v, hi_v, n_points)
    roles = [2] + ([0, 1] if tolerances else [])
    cap_w = TWO_PI * max(cap_hz, 1e-9)
    # curves: every mode below the cap somewhere in the range (lowest-frequency end, low corner)
    v_soft = lo_v if d > 0 else hi_v
    fam, c = families[0 if tolerances else 2]
    n_curves = max(int(fam.count(np.array([c * v_soft]), np.array([cap_w]))[0]) - rb, 0)
    finite = families[2][0].system.asm.n_finite_modes
    if finite is not None:
        n_curves = max(min(n_curves, finite - rb), 0)
    if n_curves == 0:
        empty = np.zeros((n_points, 0))
        return FrequencyChart(values, np.zeros(0, int), empty, empty if tolerances else None,
                              empty if tolerances else None, cap_hz)
    need = rb + n_curves
    # keys: (role, grid point); grid points in raising order (frequencies non-decreasing)
    order = np.arange(n_points) if d > 0 else np.arange(n_points)[::-1]
    key_role = np.repeat(roles, n_points)
    key_v = np.tile(values[order], len(roles))

    def evaluate(k_idx, t, logdet=False):
        kk = np.asarray(k_idx)
        return _family_counts(families, roles, key_role[kk], key_v[kk], np.exp(np.asarray(t, float)), logdet)

    def logdet(k_idx, t):  # as evaluate, with log|det K| (lumped families only)
        return evaluate(k_idx, t, logdet=True)

    lumped = all(families[role][0].lumped for role in roles) and families[2][0].system.n_dof >= POLISH_MIN_NODES

    floor = math.log(cap_w * 1e-6)
    logf = np.full((len(roles), n_points, n_curves), np.nan)  # ln omega, raising order

    def solve(points, lower, upper):
        """Fill logf at grid points (raising index) with brackets (roles, points, curves)."""
        kk = (np.arange(len(roles))[:, None] * n_points + np.asarray(points)[None, :]).ravel()
        lvl = np.arange(rb, need)
        t_key = np.repeat(kk, n_curves)
        t_level = np.tile(lvl, len(kk))
        lo_t, hi_t = lower.reshape(-1).copy(), upper.reshape(-1).copy()

        def at_ends(keys, ts):  # counts (and log|det K| for the polish) at bracket ends
            if lumped:
                return logdet(keys, ts)
            return evaluate(keys, ts), np.full(len(ts), np.nan)

        # make sure of the bracket ends by the count (and find modes below the floor)
        c_lo, ld_lo = at_ends(t_key, lo_t)
        c_hi, ld_hi = at_ends(t_key, hi_t)
        grow = c_hi <= t_level
        for _ in range(60):
            if not grow.any():
                break
            hi_t[grow] += math.log(3.7)
            c_hi[grow], ld_hi[grow] = at_ends(t_key[grow], hi_t[grow])
            grow = c_hi <= t_level
        low_bad = (c_lo > t_level) & (lo_t > floor)  # a rounding outside the neighbours' bracket
        lo_t[low_bad] = floor
        c_lo[low_bad], ld_lo[low_bad] = at_ends(t_key[low_bad], lo_t[low_bad])
        below_floor = c_lo > t_level
        ok = ~below_floor
        t = np.full(len(t_key), np.nan)
        if ok.any():
            t[ok] = _transitions(evaluate, t_key[ok], lo_t[ok], hi_t[ok], t_level[ok],
                                 np.zeros(int(ok.sum()), bool), CHART_RTOL, counts=(c_lo[ok], c_hi[ok]),
                                 logdet=logdet if lumped else None, ends_logdet=(ld_lo[ok], ld_hi[ok]))
        logf[:, points, :] = t.reshape(len(roles), len(points), n_curves)

    ends = [0, n_points - 1] if n_points > 1 else [0]
    shape = (len(roles), len(ends), n_curves)
    solve(ends, np.full(shape, floor), np.full(shape, math.log(cap_w)))
    spans = [(0, n_points - 1)] if n_points > 2 else []
    pad = 2 * CHART_RTOL
    while spans:
        mids = [(a + b) // 2 for a, b in spans]
        lo_b = np.nan_to_num(logf[:, [a for a, _ in spans], :], nan=floor) - pad
        hi_b = np.nan_to_num(logf[:, [b for _, b in spans], :], nan=floor) + pad
        solve(mids, np.maximum(lo_b, floor), np.maximum(hi_b, floor + pad))
        spans = [p for a, b in spans for p in ((a, (a + b) // 2), ((a + b) // 2, b)) if p[1] - p[0] > 1]
    freq = np.exp(logf) / TWO_PI
    freq = freq[:, np.argsort(order), :]  # back to ascending values
    mode = np.arange(rb, need) + 1 - rb
    return FrequencyChart(values, mode, freq[0], freq[1] if tolerances else None,
                          freq[2] if tolerances else None, cap_hz)


# ================================================================== the study slot
@dataclass(frozen=True, eq=False)
class DesignResult:
    """Design options of a train: sensitivities of every elastic mode, tolerance bands
    (rows as the screened modes; None without tolerances) and windows."""

    sensitivities: Sensitivities
    bands: np.ndarray | None  # (n_modes, 2) Hz, rows as modes.frequency_hz
    windows: tuple[WindowResult, ...]
    elements: tuple[str, ...]  # the element ids windowed, in order

    def window(self, element_id: str, quantity: str | None = None) -> WindowResult | None:
        for w in self.windows:
            if w.element == element_id and (quantity is None or w.quantity == quantity):
                return w
        return None


def design_elements(train: Train) -> list[tuple[str, str]]:
    """(element id, quantity) windowed by default: every coupling, then every element
    named in the project's ``design_options``."""
    # a damper's ring joined by damping alone has no stiffness to choose
    out = [(l.id, "stiffness") for l in train.links if l.kind == "coupling" and l.stiffness]
    for eid in train.design_options:
        q = "stiffness" if eid in train.link_ids else "inertia"
        if (eid, q) not in out:
            out.append((eid, q))
    return out


def analyse_design(train: Train, modes: Modes | None = None, screening: Screening | None = None,
                   elements=None, chart_points: int = 41) -> DesignResult:
    """Sensitivities, bands and windows for the study.

    ``modes``: the screened modes (default: the screening's, else the lowest 10);
    ``screening``: reused for its modes and bands when given (computed when the
    train has operating data and it is None); ``elements``: ids (or (id,
    quantity) pairs) to window instead of the default (every coupling plus
    ``design_options``).  Without operating data there are no windows.
    """
    if screening is None and train.operating is not None and train.operating.excitations:
        screening = screen(train, modes)
    if modes is None:
        modes = screening.modes if screening is not None else natural_modes(train)
    if screening is not None and screening.modes is modes:
        bands = screening.bands
    else:
        bands = frequency_bands(train, modes) if train.has_tolerances else None
    sens = sensitivities(modes)
    if elements is None:
        todo = design_elements(train)
    else:
        todo = [e if isinstance(e, tuple) else (e, None) for e in elements]
    windows = []
    if train.operating is not None and train.operating.excitations:
        m = screening.margin if screening is not None else None
        windows = [element_window(train, eid, q, screening_margin=m, chart_points=chart_points)
                   for eid, q in todo]
    return DesignResult(sens, bands, tuple(windows), tuple(w.element for w in windows))


__all__ = ["Sensitivities", "sensitivities", "WindowResult", "Blocked", "FrequencyChart",
           "element_window", "DesignResult", "analyse_design", "design_elements", "frequency_bands",
           "corner_trains", "scaled_link", "scaled_disc"]
