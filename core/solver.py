"""Natural frequencies and modes of a drive train, complete and exact.

Method
------
* The train is reduced to a tree of referred nodes and exact members
  (:mod:`core.assembly`); member end stiffnesses come from the Holzer field
  matrices (:mod:`core.transfer`), so a shaft with distributed inertia is
  exact at every frequency and needs no subdivision.
* The number of natural frequencies below a trial omega is counted with the
  Wittrick-Williams algorithm, J(omega) = J0(omega) + s{K(omega)}, where s{K}
  is the number of negative pivots of the dynamic stiffness matrix, found by
  tree elimination in O(n) per trial frequency (:mod:`core.elimination`).  For
  a lumped model J0 = 0 and this is the Sturm-sequence count of K - omega^2 M.
  (W. H. Wittrick and F. W. Williams, "A general algorithm for computing
  natural frequencies of elastic structures", Q. J. Mech. Appl. Math. 24 (1971)
  263-284.)  Counting brackets every root, so no mode is missed or found twice.
* Each bracketed root is isolated by multisection on the count, then polished
  to near machine precision by safeguarded regula falsi (Illinois variant) on
  the determinant, which changes sign exactly once in an isolated bracket.
* Mode shapes come from one step of inverse iteration at the root.

Units: SI inside (rad/s, kg*m^2, N*m/rad); frequencies are reported in Hz.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from .assembly import Assembly, assemble, clamped_count, member_stiffness
from .elimination import build_schedule, eliminate, solve
from .model import Train

TWO_PI = 2.0 * np.pi


# ----------------------------------------------------------------- counting
class DynamicSystem:
    """The assembled train with its elimination plan, evaluated at any omega."""

    def __init__(self, train: Train):
        self.train = train
        self.asm: Assembly = assemble(train)
        a = self.asm
        self.schedule = build_schedule(a.n_nodes, a.edges_a, a.edges_b)
        mem = a.members
        self._tree = mem.b >= 0
        scale = max(float(mem.k.max()) if len(mem.k) else 1.0, 1e-300)
        self.tiny = 1e-14 * scale
        self._ground_nodes = mem.a[~self._tree]
        self._tree_a = mem.a[self._tree]
        self._tree_b = mem.b[self._tree]
        self.n_dof = a.n_nodes

    def matrices(self, omega):
        """Diagonal (n_nodes, m) and off-diagonal (n_edges, m) of K(omega)."""
        w = np.atleast_1d(np.asarray(omega, float))
        a = self.asm
        kaa, kab = member_stiffness(a.members, w)
        D = -a.node_inertia[:, None] * (w * w)[None, :]
        D = D + np.zeros((a.n_nodes, w.size))
        np.add.at(D, a.members.a, kaa)
        t = self._tree
        np.add.at(D, a.members.b[t], kaa[t])
        W = kab[t].copy()
        return D, W

    def evaluate(self, omega, keep: bool = False):
        """Count of natural frequencies strictly below each omega, log|det K|, factors."""
        w = np.atleast_1d(np.asarray(omega, float))
        D, W = self.matrices(w)
        neg, logdet, factors = eliminate(self.schedule, D, W, self.tiny, keep)
        count = neg + (clamped_count(self.asm.members, w) if self.asm.distributed else 0)
        return count, logdet, neg, factors

    def count(self, omega) -> np.ndarray:
        return self.evaluate(omega)[0]


# ----------------------------------------------------------------- results
@dataclass
class Modes:
    """Natural modes, arrays over modes (first axis) and discs or links.

    ``shape``: actual twist angle of every disc (a geared branch in its own
    shaft's angle), normalised to max |angle| = 1.  ``link_torque``: modal
    torque in each link for that shape, N*m per rad of the largest disc angle
    (largest magnitude along a distributed shaft, sign: from-end ahead of
    to-end is positive).  Shares are fractions of the mode's total kinetic or
    strain energy.
    """

    train: Train
    frequency_hz: np.ndarray
    rigid_body: np.ndarray
    number: np.ndarray
    shape: np.ndarray  # (n_modes, n_discs)
    link_torque: np.ndarray  # (n_modes, n_links)
    kinetic_share: np.ndarray  # (n_modes, n_discs)
    link_kinetic_share: np.ndarray  # (n_modes, n_links): distributed shafts' own inertia
    strain_share: np.ndarray  # (n_modes, n_links)
    cap_hz: float | None
    requested: str
    solve_time_s: float = 0.0
    notes: list = field(default_factory=list)

    def __len__(self):
        return len(self.frequency_hz)

    @property
    def disc_ids(self):
        return self.train.disc_ids

    @property
    def link_ids(self):
        return self.train.link_ids

    @property
    def elastic(self) -> np.ndarray:
        return ~self.rigid_body

    def dominant_link(self, i: int) -> str | None:
        """Link with the largest share of strain energy in mode i (None for rigid body)."""
        if self.rigid_body[i] or not len(self.link_ids):
            return None
        return self.link_ids[int(np.argmax(self.strain_share[i]))]

    def dominant_disc(self, i: int) -> str:
        return self.disc_ids[int(np.argmax(self.kinetic_share[i]))]

    def shape_dict(self, i: int) -> dict[str, float]:
        return {d: float(v) for d, v in zip(self.disc_ids, self.shape[i])}


# ----------------------------------------------------------------- root finding
def _upper_bound(system: DynamicSystem, need: int) -> float:
    """An omega with at least ``need`` natural frequencies below it (or all finite ones)."""
    a = system.asm
    J = a.node_inertia
    k = a.members.k
    Jpos = J[J > 0]
    w = np.sqrt(k.max() / Jpos.min()) if len(k) and len(Jpos) else 1.0
    if a.distributed:
        lc = a.members.L_over_c[a.members.L_over_c > 0]
        w = max(w, np.pi / lc.max())
    finite = a.n_finite_modes
    target = need if finite is None else min(need, finite)
    w = max(w, 1e-6)
    for _ in range(400):
        if system.count(w)[0] >= target:
            return w
        w *= 3.7  # not a power of two: keeps clear of exact member poles
    raise RuntimeError("could not bracket the requested modes")


def _find_roots(system: DynamicSystem, targets: np.ndarray, hi: float, rtol: float = 4e-16):
    """omega of the natural frequencies with the given 0-based count indices."""
    K = len(targets)
    lo = np.zeros(K)
    hi = np.full(K, hi)
    clo = np.zeros(K, np.int64)
    chi = np.full(K, system.count(hi)[0])
    n = max(system.n_dof, 1)
    m_per = int(np.clip(3e5 / n, 6, 64))
    # phase 1: multisection on the count until each root is alone in its bracket
    for _ in range(200):
        iso = (clo == targets) & (chi == targets + 1)
        narrow = (hi - lo) <= rtol * hi
        todo = ~(iso | narrow)
        if not todo.any():
            break
        keys = {}
        for i in np.flatnonzero(todo):
            keys.setdefault((lo[i], hi[i]), []).append(i)
        pts = []
        for (a, b), members in keys.items():
            npts = min(m_per * len(members), 4096)
            pts.append(a + (b - a) * np.arange(1, npts + 1) / (npts + 1))
        pts = np.unique(np.concatenate(pts))
        cnt = system.count(pts)
        for i in np.flatnonzero(todo):
            sel = (pts > lo[i]) & (pts < hi[i])
            p, c = pts[sel], cnt[sel]
            below = c <= targets[i]
            if below.any():
                j = np.flatnonzero(below)[-1]
                lo[i], clo[i] = p[j], c[j]
            above = ~below
            if above.any():
                j = np.flatnonzero(above)[0]
                hi[i], chi[i] = p[j], c[j]
    # distributed members: keep the clamped count constant inside the bracket,
    # so that the determinant has no pole there
    if system.asm.distributed:
        for _ in range(200):
            j_lo = clamped_count(system.asm.members, lo)
            j_hi = clamped_count(system.asm.members, hi)
            bad = (j_lo != j_hi) & ((hi - lo) > rtol * hi)
            if not bad.any():
                break
            mid = 0.5 * (lo + hi)
            c = system.count(mid)
            go_lo = bad & (c <= targets)
            go_hi = bad & ~(c <= targets)
            lo[go_lo] = mid[go_lo]
            hi[go_hi] = mid[go_hi]
    # phase 2: Illinois regula falsi on the determinant, bracket kept by the count
    _, ld_lo, neg_lo, _ = system.evaluate(lo)
    _, ld_hi, neg_hi, _ = system.evaluate(hi)
    ref = np.maximum(ld_lo, ld_hi)
    f_lo = np.where(neg_lo % 2, -1.0, 1.0) * np.exp(ld_lo - ref)
    f_hi = np.where(neg_hi % 2, -1.0, 1.0) * np.exp(ld_hi - ref)
    side = np.zeros(K, int)
    active = (hi - lo) > rtol * hi
    for _ in range(100):
        if not active.any():
            break
        idx = np.flatnonzero(active)
        a, b, fa, fb = lo[idx], hi[idx], f_lo[idx], f_hi[idx]
        with np.errstate(divide="ignore", invalid="ignore"):
            x = (a * fb - b * fa) / (fb - fa)
        ok = np.isfinite(x) & (x > a) & (x < b) & (np.sign(fa) != np.sign(fb))
        x = np.where(ok, x, 0.5 * (a + b))
        # keep x away from the ends so the bracket always shrinks
        eps = 1e-3 * (b - a) * 1e-9
        x = np.clip(x, a + eps, b - eps)
        c, ld, neg, _ = system.evaluate(x)
        fx = np.where(neg % 2, -1.0, 1.0) * np.exp(ld - ref[idx])
        left = c <= targets[idx]  # root is above x
        # Illinois: halve the stale end's value when the same end is kept twice
        s_prev = side[idx]
        fa_new = np.where(left, fx, np.where(s_prev == -1, fa * 0.5, fa))
        fb_new = np.where(~left, fx, np.where(s_prev == 1, fb * 0.5, fb))
        lo[idx] = np.where(left, x, a)
        hi[idx] = np.where(left, b, x)
        f_lo[idx], f_hi[idx] = fa_new, fb_new
        side[idx] = np.where(left, 1, -1)
        step_small = (hi[idx] - lo[idx]) <= rtol * hi[idx]
        hit = fx == 0.0
        done = step_small | hit
        lo[idx[hit]] = x[hit]
        hi[idx[hit]] = x[hit]
        active[idx[done]] = False
    return 0.5 * (lo + hi)


# ----------------------------------------------------------------- modes
def _node_shapes(system: DynamicSystem, omega: np.ndarray) -> np.ndarray:
    """Referred node amplitudes (n_nodes, k) by inverse iteration near each root."""
    n = system.n_dof
    if omega.size == 0:
        return np.zeros((n, 0))
    rng = np.random.default_rng(12345)
    x = rng.uniform(0.5, 1.5, size=(n, omega.size))
    shift = omega * (1.0 + 1e-9) + 1e-12
    for _ in range(2):
        _, _, _, fac = system.evaluate(shift, keep=True)
        x = solve(system.schedule, fac, x)
        x /= np.abs(x).max(axis=0, keepdims=True)
    return x


def _segment_energies(k, x, ta, tb):
    """Strain and kinetic integrals of a uniform member between end angles ta, tb.

    theta(s) = (ta sin(x(1-s)) + tb sin(x s)) / sin x along the member.  Returns
    U = 1/2 G Ip int theta'^2, and T/omega^2 = 1/2 rho Ip int theta^2, both in
    terms of k = G Ip / L (rho Ip L = k x^2 / omega^2).
    """
    small = x < 1e-4
    xs = np.where(small, 1.0, x)
    s, c = np.sin(xs), np.cos(xs)
    s2 = np.where(np.abs(s) < 1e-300, 1e-300, s) ** 2
    # integrals over s in [0, 1] of sin^2, cos^2 and mixed terms, times x where needed
    I1 = 0.5 - np.sin(2 * xs) / (4 * xs)
    I2 = 0.5 * (s / xs - c)
    C1 = 0.5 + np.sin(2 * xs) / (4 * xs)
    C2 = 0.5 * (s / xs + c)
    int_t2 = ((ta ** 2 + tb ** 2) * I1 + 2 * ta * tb * I2) / s2  # int theta^2 ds
    int_d2 = xs ** 2 * ((ta ** 2 + tb ** 2) * C1 - 2 * ta * tb * C2) / s2  # int (dtheta/ds)^2 ds
    U = 0.5 * k * int_d2
    Tk = 0.5 * k * xs ** 2 * int_t2  # = 1/2 rho Ip L omega^2 int theta^2 ds
    # static limit: linear twist
    U = np.where(small, 0.5 * k * (ta - tb) ** 2, U)
    Tk = np.where(small, 0.5 * k * x ** 2 * (ta ** 2 + ta * tb + tb ** 2) / 3.0, Tk)
    return U, Tk


def _member_torques(k, x, ta, tb, samples: int = 33):
    """Internal torque T = -G Ip dtheta/dz of uniform members between end angles.

    Returns (torque at the a-end, torque at the b-end, signed torque of largest
    magnitude along the member); a spring (x = 0) carries k (ta - tb) throughout.
    """
    small = x < 1e-4
    xs = np.where(small, 1.0, x)
    sn = np.sin(xs)
    sn = np.where(np.abs(sn) < 1e-300, 1e-300, sn)
    s = np.linspace(0.0, 1.0, samples)[:, None, None]
    # dtheta/ds = x (-ta cos(x (1 - s)) + tb cos(x s)) / sin x
    T = -k * xs * (-ta * np.cos(xs * (1 - s)) + tb * np.cos(xs * s)) / sn
    T = np.where(small, k * (ta - tb), T)
    j = np.argmax(np.abs(T), axis=0)
    tmax = np.take_along_axis(T, j[None], axis=0)[0]
    return T[0], T[-1], tmax


def _modal_quantities(system: DynamicSystem, omega: np.ndarray, phi: np.ndarray):
    train = system.train
    a = system.asm
    mem = a.members
    nd, nl = len(train.discs), len(train.links)
    theta = a.disc_scale[:, None] * phi[a.disc_node]  # actual disc angles (nd, k)
    big = np.abs(theta).max(axis=0)
    big = np.where(big == 0, 1.0, big)
    jmax = np.argmax(np.abs(theta), axis=0)
    sign = np.sign(theta[jmax, np.arange(theta.shape[1])])
    sign = np.where(sign == 0, 1.0, sign)
    norm = sign / big
    theta = theta * norm
    phi = phi * norm
    # member end angles in actual units of the member's own shaft
    pa = phi[mem.a]
    pb = np.where((mem.b >= 0)[:, None], phi[np.maximum(mem.b, 0)], 0.0)
    ta = pa * mem.scale[:, None]
    tb = pb * mem.scale[:, None]
    k_act = (mem.k / mem.scale ** 2)[:, None]
    x = mem.L_over_c[:, None] * omega[None, :]
    U, Tk = _segment_energies(k_act, x, ta, tb)
    Ta, Tb, Tm = _member_torques(k_act, x, ta, tb)
    # a member stored from its link's `to` end carries the opposite sign
    sgn = np.where(mem.flip, -1.0, 1.0)[:, None]
    Ta, Tb, Tm = Ta * sgn, Tb * sgn, Tm * sgn
    Ta, Tb = np.where(mem.flip[:, None], Tb, Ta), np.where(mem.flip[:, None], Ta, Tb)
    strain = np.zeros((nl, omega.size))
    link_kin = np.zeros((nl, omega.size))
    np.add.at(strain, mem.link, U)
    np.add.at(link_kin, mem.link, np.where(mem.L_over_c[:, None] > 0, Tk, 0.0))
    torque = np.zeros((nl, omega.size))
    t_from = np.zeros((nl, omega.size))
    t_to = np.zeros((nl, omega.size))
    for li in range(nl):
        ms = np.flatnonzero(mem.link == li)
        if not len(ms):
            continue
        j = np.argmax(np.abs(Tm[ms]), axis=0)
        torque[li] = Tm[ms][j, np.arange(omega.size)]
        first, last = (ms[-1], ms[0]) if mem.flip[ms[0]] else (ms[0], ms[-1])
        t_from[li], t_to[li] = Ta[first], Tb[last]
    # disc inertia as the equations of motion see it (lumped shaft halves included)
    J_eff = np.array([d.inertia for d in train.discs])
    index = {d: i for i, d in enumerate(train.disc_ids)}
    for l in train.links:
        if l.mass == "lumped":
            for end in (l.from_id, l.to_id):
                if end in index:
                    J_eff[index[end]] += 0.5 * l.own_inertia
    # a rigid-body mode (omega = 0) still has kinetic energy shares in proportion to J theta^2
    w_kin = np.where(omega > 0, omega, 1.0)
    disc_kin = 0.5 * J_eff[:, None] * theta ** 2 * w_kin[None, :] ** 2
    if any(l.is_rigid for l in train.links):
        _rigid_mesh_torques(train, omega, theta, J_eff, torque, t_from, t_to)
    tot_kin = disc_kin.sum(0) + link_kin.sum(0)
    tot_kin = np.where(tot_kin == 0, 1.0, tot_kin)
    tot_str = strain.sum(0)
    tot_str = np.where(tot_str == 0, 1.0, tot_str)
    return (theta.T, torque.T, (disc_kin / tot_kin).T, (link_kin / tot_kin).T,
            (strain / tot_str).T)


def _rigid_mesh_torques(train, omega, theta, J_eff, torque, t_from, t_to):
    """Torque through rigid gear meshes, from the equations of motion of their discs.

    For disc d: -omega^2 J_d theta_d = sum of the link torques acting on it, where a
    link acts on its `from` disc with -T_from and on its `to` disc with T_to / r
    (r the speed ratio of a gear mesh, 1 otherwise; power is conserved through a
    mesh).  A rigid mesh is resolved once every other link at one of its end
    discs is known, peeling the gear train from its outer ends.
    """
    idx = {d: i for i, d in enumerate(train.disc_ids)}
    links = train.links
    known = {li for li, l in enumerate(links) if not l.is_rigid}
    at_disc = {d: [] for d in idx}
    for li, l in enumerate(links):
        for end in (l.from_id, l.to_id):
            if end in at_disc:
                at_disc[end].append(li)

    def acting_on(lj, d):
        m = links[lj]
        r = m.speed_ratio if m.kind == "gear_mesh" else 1.0
        return t_to[lj] / r if m.to_id == d else -t_from[lj]

    pending = [li for li, l in enumerate(links) if l.is_rigid]
    while pending:
        progress = False
        for li in list(pending):
            l = links[li]
            for end in (l.from_id, l.to_id):
                others = [lj for lj in at_disc[end] if lj != li]
                if not all(lj in known for lj in others):
                    continue
                i = idx[end]
                rest = -omega ** 2 * J_eff[i] * theta[i] - sum(
                    (acting_on(lj, end) for lj in others), np.zeros_like(omega))
                # rest is the torque the mesh exerts on this disc
                T = -rest if end == l.from_id else rest * l.speed_ratio
                torque[li] = t_from[li] = T
                t_to[li] = T
                known.add(li)
                pending.remove(li)
                progress = True
                break
        if not progress:
            for li in pending:
                torque[li] = np.nan
            break


def natural_modes(train: Train, max_frequency_hz: float | None = None,
                  n_modes: int | None = None) -> Modes:
    """Natural frequencies and modes of ``train``.

    Give either ``max_frequency_hz`` (every mode up to that cap) or ``n_modes``
    (the lowest N elastic modes; a rigid-body mode is reported in addition).
    Without either, the lowest 10 elastic modes.
    """
    t0 = time.perf_counter()
    system = DynamicSystem(train)
    rb = 0 if system.asm.grounded else 1
    notes = []
    if max_frequency_hz is not None:
        cap_w = TWO_PI * max_frequency_hz
        total = int(system.count(cap_w)[0])
        targets = np.arange(rb, total)
        hi = cap_w
        requested = f"all modes up to {max_frequency_hz:.6g} Hz"
    else:
        N = 10 if n_modes is None else int(n_modes)
        finite = system.asm.n_finite_modes
        want = N + rb
        if finite is not None and want > finite:
            notes.append(f"the lumped model has only {finite - rb} elastic modes")
            want = finite
        hi = _upper_bound(system, want) if want > rb else 1.0
        targets = np.arange(rb, want)
        requested = f"lowest {N} elastic modes"
    omega = _find_roots(system, targets, hi) if len(targets) else np.zeros(0)
    phi = _node_shapes(system, omega)
    if rb:
        omega = np.r_[0.0, omega]
        phi = np.c_[np.ones(system.n_dof), phi]
    theta, torque, kin, lkin, strain = _modal_quantities(system, omega, phi)
    rigid = np.zeros(len(omega), bool)
    if rb:
        rigid[0] = True
        torque[0] = 0.0
        strain[0] = 0.0
    numbers = np.arange(len(omega)) + (1 - rb)
    return Modes(train, omega / TWO_PI, rigid, numbers, theta, torque, kin, lkin, strain,
                 max_frequency_hz, requested, time.perf_counter() - t0, notes)
