"""Damped natural frequencies, viscous dampers and the classical damper optimum.

Damped modes of a lumped model
------------------------------
With referred inertia M, stiffness K and damping C (:mod:`core.assembly`), free
vibration M q'' + C q' + K q = 0 becomes the first-order (state-space) form

    [[0, I], [-K, -C]] x = lambda [[I, 0], [0, M]] x,   x = [q, q'],

solved as a generalised eigenproblem by ``scipy.linalg.eig``.  Each complex pair
lambda = -zeta omega_n +- i omega_n sqrt(1 - zeta^2) is one damped mode: damped
natural frequency Im(lambda) / 2 pi, undamped-equivalent |lambda| / 2 pi, modal
damping ratio zeta = -Re(lambda) / |lambda|.  (State-space form of the damped
eigenproblem: e.g. D. J. Inman, Engineering Vibration, ch. "state-space"; W. T.
Thomson, Theory of Vibration with Applications, ch. "damped free vibration" —
from memory.)  Real negative roots are overdamped motions (e.g. a damper ring
creeping against its housing) and are listed apart.

C holds: relative viscous link damping (c s^2 across the link), disc damping to
ground (c s^2 on the disc), and hysteretic loss factors as an equivalent viscous
damping eta k / omega at the mode's own damped frequency (the standard
equivalence of hysteretic and viscous damping at one frequency; found by
fixed-point iteration per mode).  Shafts with distributed mass have no finite
state-space form: such trains get a note, not a result.

Viscous dampers: the choice for undamped frequencies
-----------------------------------------------------
A coupling of damping alone (a viscous damper's ring on its housing) transmits
no torque when damping is set to zero, so the undamped natural frequencies the
program screens are the *damper free* ones: the ring is a free body (a second
rigid-body mode) and takes no part in the elastic modes.  The *damper locked*
frequencies (ring rigidly joined to its housing, damping infinite) bound the
damped frequencies from the other side; both are given where a train has such a
damper, and the damped frequencies lie between them.

Damper optimum (suggestion)
---------------------------
For the mode to be damped, with modal inertia J_eff seen at the housing and ring
inertia J_d, mass ratio mu = J_d / J_eff, mode frequency omega_n (damper free):

* tuned damper (rubber: stiffness and damping): tuning f = omega_d / omega_n =
  1 / (1 + mu), damping (c / c_c)^2 = 3 mu / (8 (1 + mu)^3), c_c = 2 J_d omega_n;
  peak magnifier sqrt(1 + 2 / mu);
* untuned viscous damper (ring in fluid): (c / c_c)^2 = 1 / (2 (1 + mu)(2 + mu));
  peak magnifier 1 + 2 / mu.

(J. P. Den Hartog, Mechanical Vibrations, ch. 3, the damped vibration absorber
with Brock's optimum damping, and the untuned viscous (Lanchester) damper —
from memory.)  The two-mass result treats the train's mode as one undamped
mass-spring system; it is a starting point for a damper's selection, not its
rating.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from .assembly import assemble, effective_disc_inertia
from .errors import ModelError
from .model import Link, Train

TWO_PI = 2.0 * np.pi
DEN_HARTOG = "J. P. Den Hartog, Mechanical Vibrations, ch. 3 (damped vibration absorber)"


def has_damping(train: Train) -> bool:
    """True when any disc or link carries viscous damping or a loss factor."""
    return any(d.damping > 0 for d in train.discs) or any(
        l.damping > 0 or l.loss_factor > 0 for l in train.links)


def damper_links(train: Train) -> list[Link]:
    """Links of damping alone (viscous dampers' rings)."""
    return [l for l in train.links if l.damping_only]


# ----------------------------------------------------------------- matrices
@dataclass
class LumpedMatrices:
    """Referred lumped matrices of a train (node order of :func:`core.assembly.assemble`)."""

    M: np.ndarray  # kg*m^2
    K: np.ndarray  # N*m/rad
    C: np.ndarray  # N*m*s/rad, viscous (links and discs)
    H: np.ndarray  # N*m/rad, hysteretic eta k (equivalent viscous H / omega)
    disc_node: np.ndarray
    disc_scale: np.ndarray


def lumped_matrices(train: Train) -> LumpedMatrices:
    """M, K, C, H of a lumped train referred to the first disc's shaft (raises ModelError
    for a shaft with distributed mass)."""
    asm = assemble(train)
    if asm.distributed:
        li = next(i for i, l in enumerate(train.links) if l.mass == "distributed")
        raise ModelError("damped natural frequencies are computed for lumped models; this shaft has "
                         "distributed mass (use \"mass\": \"lumped\")", f"link '{train.links[li].id}'", "mass")
    n = asm.n_nodes
    mem = asm.members
    M = np.diag(asm.node_inertia)
    K = np.zeros((n, n))
    C = np.zeros((n, n))
    H = np.zeros((n, n))
    s2 = mem.scale ** 2
    c_link = np.array([l.damping for l in train.links])[mem.link] * s2
    eta = np.array([l.loss_factor for l in train.links])[mem.link]
    for a, b, k, c, h in zip(mem.a, mem.b, mem.k, c_link, eta * mem.k):
        for mat, v in ((K, k), (C, c), (H, h)):
            mat[a, a] += v
            if b >= 0:
                mat[b, b] += v
                mat[a, b] -= v
                mat[b, a] -= v
    np.add.at(C, (asm.disc_node, asm.disc_node),
              np.array([d.damping for d in train.discs]) * asm.disc_scale ** 2)
    return LumpedMatrices(M, K, C, H, asm.disc_node, asm.disc_scale)


def state_eigenvalues(M, K, C) -> np.ndarray:
    """All finite eigenvalues of M q'' + C q' + K q = 0 from the first-order form (scipy.linalg.eig):
    [[0, I], [-M^-1 K, -M^-1 C]] for a diagonal M of positive inertias, else the generalised
    pair ([[0, I], [-K, -C]], [[I, 0], [0, M]]) (massless junctions give infinite roots, dropped)."""
    import scipy.linalg  # here, not at the top: a train without damping never loads it
    n = M.shape[0]
    I, Z = np.eye(n), np.zeros((n, n))
    d = np.diag(M)
    if np.all(d > 0) and not np.any(M - np.diag(d)):  # lumped discs: the standard form is cheaper
        A = np.block([[Z, I], [-K / d[:, None], -C / d[:, None]]])
        return scipy.linalg.eig(A, right=False)
    A = np.block([[Z, I], [-K, -C]])
    B = np.block([[I, Z], [Z, M]])
    lam = scipy.linalg.eig(A, B, right=False)
    return lam[np.isfinite(lam)]


# ----------------------------------------------------------------- damped modes
@dataclass(frozen=True)
class DampedMode:
    frequency_hz: float  # damped natural frequency, Im(lambda) / 2 pi
    damping_ratio: float  # -Re(lambda) / |lambda|
    natural_frequency_hz: float  # |lambda| / 2 pi (undamped-equivalent)
    eigenvalue: complex  # 1/s


@dataclass
class DampedModes:
    train: Train
    modes: list  # DampedMode, ascending frequency
    overdamped_rates: list  # 1/s, decay rates of real roots (-lambda), ascending
    notes: list = field(default_factory=list)
    hysteretic: bool = False

    def to_json(self) -> list[dict]:
        """The ``"damped"`` list of ``twistwise solve --json``."""
        return [{"frequency_hz": m.frequency_hz, "damping_ratio": m.damping_ratio,
                 "natural_frequency_hz": m.natural_frequency_hz} for m in self.modes]


def _scale(m: LumpedMatrices) -> float:
    kd = np.abs(np.diag(m.K))
    jd = np.diag(m.M)
    return math.sqrt(max(kd.max(initial=0.0), 1e-300) / max(jd[jd > 0].min(initial=1.0), 1e-300))


def _split(lam: np.ndarray, w_scale: float):
    tiny = 1e-7 * w_scale
    rigid = np.abs(lam) < tiny
    osc = (lam.imag > 1e-9 * np.abs(lam)) & ~rigid
    real = (np.abs(lam.imag) <= 1e-9 * np.abs(lam)) & ~rigid & (lam.real < 0)
    return lam[osc], np.sort(-lam[real].real)


def _hysteretic_roots(m: LumpedMatrices, lam0: np.ndarray, w_scale: float, max_frequency_hz):
    """Damped roots with loss factors as viscous H / omega at each root's own damped frequency.

    For each mode, a fixed point of omega = Im(lambda) where lambda is the root of
    lambda^2 M + lambda (C + H / omega) + K near it: inverse iteration on the quadratic
    problem with the two-sided Rayleigh functional (x^T T(lambda) x = 0, T complex
    symmetric) and omega refreshed every step, from the roots of the problem without H
    (or the undamped ones).  One sparse n x n complex solve per step.
    """
    import scipy.linalg
    import scipy.sparse
    import scipy.sparse.linalg
    start = lam0[(lam0.imag > 1e-9 * np.abs(lam0)) & (np.abs(lam0) > 1e-7 * w_scale)]
    if max_frequency_hz is not None:
        start = start[np.abs(start) <= 1.25 * TWO_PI * max_frequency_hz]
    # eigenvectors of the undamped problem as start vectors (M may hold massless junctions)
    Md = np.diag(m.M)
    if np.all(Md > 0):
        w2, V = scipy.linalg.eigh(m.K, m.M)
    else:
        w2, V = scipy.linalg.eig(m.K, m.M)
        w2, V = w2.real, V.real
    wu = np.sqrt(np.maximum(w2, 0.0))
    Ms, Ks, Cs, Hs = (scipy.sparse.csc_matrix(a) for a in (m.M, m.K, m.C, m.H))  # tree-sparse
    out, notes = [], []
    for lam in start:
        x = V[:, int(np.argmin(np.abs(wu - abs(lam))))].astype(complex)
        for step in range(100):
            w = max(lam.imag, 1e-12 * w_scale)
            Ceq = Cs + Hs / w
            a, b, c = x @ (Ms @ x), x @ (Ceq @ x), x @ (Ks @ x)
            roots = np.roots([a, b, c]) if abs(a) > 0 else np.array([-c / b])
            new = roots[np.argmin(np.abs(roots - lam))]
            rhs = (2 * new) * (Ms @ x) + Ceq @ x
            try:
                y = scipy.sparse.linalg.splu((new * new * Ms + new * Ceq + Ks).tocsc()).solve(rhs)
            except RuntimeError:  # exactly singular: on the root
                y = x
            if not np.all(np.isfinite(y)):
                y = x
            x = y / y[np.argmax(np.abs(y))]
            done = abs(new - lam) <= 1e-13 * abs(new)
            lam = new
            if done and step:
                break
        else:
            notes.append(f"hysteretic damping: the mode near {abs(lam) / TWO_PI:.4g} Hz did not settle")
        out.append(lam)
    osc = np.array(out, complex)
    if len(osc):
        osc = osc[np.argsort(osc.imag)]
        keep = np.r_[True, np.abs(np.diff(osc)) > 1e-9 * np.abs(osc[1:])]
        osc = osc[keep]
    return osc, notes


def damped_modes(train: Train, max_frequency_hz: float | None = None) -> DampedModes:
    """Damped natural frequencies and modal damping ratios of a lumped train (every
    oscillatory mode, or those up to ``max_frequency_hz``).  A train with a
    distributed shaft gets an empty list and a note."""
    try:
        m = lumped_matrices(train)
    except ModelError as exc:
        return DampedModes(train, [], [], [f"damped natural frequencies not computed: {exc}"])
    w_scale = _scale(m)
    lam0 = state_eigenvalues(m.M, m.K, m.C)
    osc, rates = _split(lam0, w_scale)
    hyst = bool(np.any(m.H))
    notes = []
    if hyst:
        osc, more = _hysteretic_roots(m, lam0, w_scale, max_frequency_hz)
        notes += more
        notes.append("loss factors taken as an equivalent viscous damping eta k / omega at each mode's "
                     "damped frequency")
    osc = osc[np.argsort(osc.imag)]
    modes = [DampedMode(float(l.imag / TWO_PI), float(-l.real / abs(l)), float(abs(l) / TWO_PI), complex(l))
             for l in osc]
    if max_frequency_hz is not None:
        modes = [d for d in modes if d.frequency_hz <= max_frequency_hz]
    return DampedModes(train, modes, [float(r) for r in rates], notes, hyst)


# ----------------------------------------------------------------- dampers: free and locked
def _ring_side(train: Train, link: Link) -> set[str]:
    """Discs on the smaller side of ``link`` (the ring of a damper): the side with fewer
    discs, or less inertia when equal."""
    adj = {d: [] for d in train.disc_ids}
    pair = {link.from_id, link.to_id}
    for l in train.links:
        if l.grounded or {l.from_id, l.to_id} == pair:  # the link and any in parallel with it
            continue
        adj[l.from_id].append(l.to_id)
        adj[l.to_id].append(l.from_id)

    def side(start):
        seen, stack = {start}, [start]
        while stack:
            for j in adj[stack.pop()]:
                if j not in seen:
                    seen.add(j)
                    stack.append(j)
        return seen

    a, b = side(link.from_id), side(link.to_id)
    J = {d.id: d.inertia for d in train.discs}
    key = lambda s: (len(s), sum(J[i] for i in s))  # noqa: E731
    return a if key(a) <= key(b) else b


def damper_locked_train(train: Train) -> Train:
    """The train with every damping-only link made rigid (ring locked to its housing):
    each becomes a rigid speed-ratio-1 joint, so the discs keep their ids.  A link in
    parallel with a locked damper is locked with it (its two ends turn together, so it
    carries nothing); a shaft's own inertia stays, half at each end."""
    locked = {frozenset((l.from_id, l.to_id)) for l in train.links if l.damping_only and not l.grounded}

    def lock(l):
        mass = "lumped" if l.mass != "none" else "none"
        return replace(l, kind="gear_mesh", stiffness=None, damping=0.0, speed_ratio=1.0, mass=mass)

    links = tuple(lock(l) if l.damping_only or (not l.grounded and frozenset((l.from_id, l.to_id)) in locked)
                  else l for l in train.links)
    return replace(train, links=links, speed_factor=dict(train.speed_factor))


@dataclass(frozen=True)
class DamperBounds:
    """Elastic natural frequencies with every viscous damper's ring free and locked, Hz."""

    links: tuple[str, ...]
    free_hz: tuple[float, ...]
    locked_hz: tuple[float, ...]
    statement: str


DAMPER_STATEMENT = ("Undamped natural frequencies treat a viscous damper's ring as free (a coupling of "
                    "damping alone carries no torque without damping). With the ring locked to its housing "
                    "they fall to the locked values (the ring's inertia joins the housing's); the damped natural "
                    "frequencies lie between the two.")


def damper_bounds(train: Train, max_frequency_hz: float) -> DamperBounds | None:
    """Damper-free and damper-locked elastic frequencies up to ``max_frequency_hz``; None
    when the train has no ring joined by damping alone (a damping-only link beside a
    spring between the same discs holds no free ring: the spring carries the torque)."""
    from .solver import free_bodies, natural_modes
    dl = damper_links(train)
    if not dl or not free_bodies(assemble(train))[1]:
        return None
    free = natural_modes(train, max_frequency_hz=max_frequency_hz)
    locked = natural_modes(damper_locked_train(train), max_frequency_hz=max_frequency_hz)
    return DamperBounds(tuple(l.id for l in dl), tuple(float(f) for f in free.frequency_hz[free.elastic]),
                        tuple(float(f) for f in locked.frequency_hz[locked.elastic]), DAMPER_STATEMENT)


# ----------------------------------------------------------------- Den Hartog optimum
def tuned_optimum(mass_ratio: float) -> tuple[float, float, float]:
    """(tuning f = omega_damper / omega_n, optimum c / c_c, peak magnifier) of a tuned damper
    on an undamped one-mass system, c_c = 2 J_d omega_n (Den Hartog; Brock's damping)."""
    mu = mass_ratio
    return 1.0 / (1.0 + mu), math.sqrt(3.0 * mu / (8.0 * (1.0 + mu) ** 3)), math.sqrt(1.0 + 2.0 / mu)


def viscous_optimum(mass_ratio: float) -> tuple[float, float]:
    """(optimum c / c_c, peak magnifier) of an untuned viscous (Lanchester) damper, c_c = 2 J_d omega_n."""
    mu = mass_ratio
    return 1.0 / math.sqrt(2.0 * (1.0 + mu) * (2.0 + mu)), 1.0 + 2.0 / mu


@dataclass(frozen=True)
class DamperSuggestion:
    link_id: str
    ring: str  # disc id of the damper's ring (inertia member)
    housing: str  # disc the ring is joined to
    kind: str  # "tuned" (stiffness and damping) | "viscous" (damping alone)
    mode: int  # elastic mode of the damper-free train the suggestion is for
    mode_frequency_hz: float  # damper free
    ring_inertia: float  # kg*m^2
    effective_inertia: float  # kg*m^2, modal inertia seen at the housing
    mass_ratio: float
    stiffness: float  # N*m/rad as modelled
    damping: float  # N*m*s/rad as modelled
    optimum_stiffness: float | None  # N*m/rad (tuned only)
    optimum_damping: float  # N*m*s/rad
    optimum_magnifier: float  # peak of the two-mass model at the optimum
    source: str = DEN_HARTOG

    def lines(self) -> list[str]:
        """Plain words for a screen or sheet."""
        head = (f"Damper '{self.link_id}' (ring '{self.ring}' on '{self.housing}') against mode {self.mode} "
                f"at {self.mode_frequency_hz:.4g} Hz: inertia ratio {self.mass_ratio:.3g} "
                f"({self.ring_inertia:.4g} / {self.effective_inertia:.4g} kg·m²).")
        if self.kind == "tuned":
            body = (f"Classical optimum (two-mass model): stiffness {self.optimum_stiffness:.4g} N·m/rad "
                    f"(modelled {self.stiffness:.4g}), damping {self.optimum_damping:.4g} N·m·s/rad "
                    f"(modelled {self.damping:.4g}), peak magnifier {self.optimum_magnifier:.3g}.")
        else:
            body = (f"Classical optimum (untuned viscous damper): damping {self.optimum_damping:.4g} N·m·s/rad "
                    f"(modelled {self.damping:.4g}), peak magnifier {self.optimum_magnifier:.3g}.")
        return [head, body, f"Source: {self.source}; confirm the edition that applies."]


def damper_suggestion(train: Train, link_id: str, mode: int | None = None) -> DamperSuggestion:
    """Den Hartog's optimum for the damper ``link_id`` (a coupling whose one end is a disc
    joined to nothing else: the ring).  ``mode``: elastic mode number of the train with
    the ring removed; default, of its lowest six elastic modes, the lowest in which the
    housing holds at least 5 % of the kinetic energy (else the one where it holds most)."""
    from .solver import natural_modes
    try:
        link = next(l for l in train.links if l.id == link_id)
    except StopIteration:
        raise ModelError(f"unknown link '{link_id}'", "damper", "link") from None
    where = f"link '{link_id}'"
    if link.kind != "coupling" or link.grounded:
        raise ModelError("a damper is a coupling between its housing and its ring", where, "kind")
    pair = {link.from_id, link.to_id}
    group = [l for l in train.links if {l.from_id, l.to_id} == pair]  # the link and any in parallel
    touching = {d: sum(1 for l in train.links if d in (l.from_id, l.to_id)) for d in pair}
    rings = [d for d, n in touching.items() if n == len(group)]
    if not rings:
        raise ModelError("neither end is a ring (a disc joined only by this link)", where, "to")
    ring = link.to_id if link.to_id in rings else rings[0]
    housing = link.from_id if ring == link.to_id else link.to_id
    rest = replace(train, discs=tuple(d for d in train.discs if d.id != ring),
                   links=tuple(l for l in train.links if all(l is not g for g in group)),
                   speed_factor={k: v for k, v in train.speed_factor.items() if k != ring})
    modes = natural_modes(rest, n_modes=max(mode or 1, 6))
    h = rest.disc_ids.index(housing)
    elastic = [i for i in range(len(modes)) if modes.elastic[i]]
    if mode is None:
        # the lowest mode the housing takes a real part in (5 % of the kinetic energy: common
        # practice, no source); a crankshaft damper is sized for it
        pick = next((i for i in elastic if modes.kinetic_share[i, h] >= 0.05), None)
        if pick is None and elastic:
            pick = max(elastic, key=lambda i: modes.kinetic_share[i, h])
    else:
        pick = next((i for i in elastic if int(modes.number[i]) == mode), None)
    if pick is None:
        raise ModelError("no elastic mode moves the damper's housing", where, "from")
    J_h = effective_disc_inertia(rest)[h]
    share = modes.kinetic_share[pick, h]
    if J_h <= 0 or share <= 0:
        raise ModelError("the housing has no inertia of its own to refer the mode to", where, "from")
    J_eff = J_h / share  # sum J theta^2 / theta_housing^2
    J_d = train.disc(ring).inertia
    mu = J_d / J_eff
    wn = TWO_PI * float(modes.frequency_hz[pick])
    # links in parallel between ring and housing act as one damper: stiffnesses and dampings add
    k_now = sum(l.total_stiffness for l in group)
    if k_now > 0:
        f, zeta, peak = tuned_optimum(mu)
        k_opt = J_d * (f * wn) ** 2
        kind = "tuned"
    else:
        zeta, peak = viscous_optimum(mu)
        k_opt = None
        kind = "viscous"
    return DamperSuggestion(link_id, ring, housing, kind, int(modes.number[pick]), wn / TWO_PI, J_d, J_eff,
                            mu, k_now, sum(l.damping for l in group), k_opt, 2.0 * zeta * J_d * wn, peak)
