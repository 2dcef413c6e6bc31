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
* A long lumped chain (its stiffness matrix tridiagonal in chain order) is solved
  instead as the symmetric tridiagonal eigenproblem J^-1/2 K J^-1/2 with LAPACK
  (:class:`TridiagonalChain`): the same Sturm counts prove every root, found by
  Rayleigh-quotient iteration on LAPACK's pivoting tridiagonal solver.

Units: SI inside (rad/s, kg*m^2, N*m/rad); frequencies are reported in Hz.
"""
from __future__ import annotations

import os
import time
import weakref
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from .assembly import (Assembly, assemble, clamped_count, member_stiffness,
                       peel_rigid_meshes)
from .elimination import RowSum, cached_schedule, factor, factor_solve, path_order, solve_factored
from .errors import ModelError
from .model import Train

TWO_PI = 2.0 * np.pi
_WORKERS = min(os.cpu_count() or 1, 4)
_POOL: ThreadPoolExecutor | None = None


def _map(fn, items):
    """Map over column pieces on a few threads (independent trial frequencies)."""
    global _POOL
    if len(items) < 2 or _WORKERS < 2:
        return [fn(i) for i in items]
    if _POOL is None:
        _POOL = ThreadPoolExecutor(_WORKERS, thread_name_prefix="twistwise-solver")
    return list(_POOL.map(fn, items))


# ----------------------------------------------------------------- counting
class DynamicSystem:
    """The assembled train with its elimination plan, evaluated at any omega.

    Arrays are kept in elimination order (:func:`core.elimination.permute`):
    node inertia, the static stiffness diagonal and off-diagonal of a lumped
    model, and a sparse incidence matrix that sums member end stiffnesses onto
    the diagonal when distributed members make them frequency dependent.
    """

    #: built on first use (:meth:`_plan`): a chain solved by :class:`TridiagonalChain`
    #: needs no elimination plan for its modes
    _PLANNED = frozenset({"schedule", "pos", "J", "_incidence", "_free_end", "_incidence_count",
                          "_free_far_pos", "_free_slot", "_slot", "_pa", "_pb", "_Kd", "_Wd"})

    def __init__(self, train: Train):
        self.train = train
        self.asm: Assembly = assemble(train)
        a = self.asm
        mem = a.members
        self._tree = mem.b >= 0
        scale = max(float(mem.k.max()) if len(mem.k) else 1.0, 1e-300)
        self.tiny = 1e-14 * scale
        self.n_dof = a.n_nodes
        # points per elimination pass: bounds the working arrays to a few MB
        self.chunk = int(np.clip(2 ** 21 // max(a.n_nodes, 1), 16, 1024))

    @property
    def chain(self) -> "TridiagonalChain | None":
        """The train as a tridiagonal chain (:class:`TridiagonalChain`), or None when it is
        not one; made on first use."""
        if "_chain" not in self.__dict__:
            self._chain = TridiagonalChain.of(self.asm)
        return self._chain

    def __getattr__(self, name):
        if name in DynamicSystem._PLANNED and "schedule" not in self.__dict__:
            self._plan()
            return getattr(self, name)
        raise AttributeError(name)

    def _plan(self):
        """The elimination plan and the system's arrays in elimination order."""
        a = self.asm
        sch = cached_schedule(a.n_nodes, a.edges_a, a.edges_b)
        mem = a.members
        self.pos = sch.position  # elimination position of every node
        self.J = a.node_inertia[sch.order]
        pa = self.pos[mem.a]
        pb = np.where(self._tree, self.pos[np.maximum(mem.b, 0)], 0)
        t = self._tree
        rows = np.r_[pa, pb[t]]
        cols = np.r_[np.arange(len(mem.a)), np.flatnonzero(t)]
        # diagonal = incidence @ K_aa (K_aa = K_bb for a uniform member)
        self._incidence = RowSum(rows, cols, (a.n_nodes, len(mem.a)))
        self._free_end, far_is_a = self._condensable(a)
        if len(self._free_end):
            # counting: a member with a free massless end is condensed exactly, so
            # its far end takes -k x tan x, not K_aa - K_ab^2 / K_aa (that cancels
            # near the member's poles, where a free-free shaft has its roots)
            fe = self._free_end
            drop_a = np.zeros(len(mem.a), bool)
            drop_a[fe[far_is_a]] = True
            drop_b = np.zeros(len(mem.a), bool)
            drop_b[fe[~far_is_a]] = True
            keep = ~np.r_[drop_a, drop_b[t]]
            self._incidence_count = RowSum(rows[keep], cols[keep], (a.n_nodes, len(mem.a)))
            self._free_far_pos = np.where(far_is_a, pa[fe], pb[fe])
            self._free_slot = sch.slot_of_edge[a.member_edge[fe]]
        # slot of every edge; without parallel members edge j is tree member j
        self._slot = sch.slot_of_edge
        self._pa, self._pb = pa, pb
        if not a.distributed:
            self._Kd = self._incidence @ mem.k
            self._Wd = a.edge_sum(-mem.k[t])  # members in parallel: their stiffnesses add
        self.schedule = sch  # last: another thread asking meanwhile plans on its own

    @staticmethod
    def _condensable(a: Assembly):
        """Distributed tree members with a massless end joined to nothing else
        (a free end): member indices, and whether their far end is the `a` end."""
        mem = a.members
        t = mem.b >= 0
        deg = np.bincount(np.r_[mem.a, mem.b[t]], minlength=a.n_nodes)
        leaf = (a.node_inertia == 0) & (deg == 1)
        dist = t & (mem.L_over_c > 0)
        b_free = dist & leaf[np.maximum(mem.b, 0)]
        a_free = dist & leaf[mem.a] & ~b_free
        idx = np.flatnonzero(b_free | a_free)
        return idx, b_free[idx]  # the far end is `a` when `b` is free

    def _arrays(self, w, squared: bool = False, exact: bool = False):
        """Permuted diagonal (n, m) and slot array (n_slots, m) of K(omega)
        (squared off-diagonals with ``squared``).  ``exact``: the true matrix
        (for solves); otherwise free massless ends may be condensed, which
        keeps the inertia and the determinant."""
        sch = self.schedule
        Wp = np.empty((sch.n_slots, w.size))
        if self.asm.distributed:
            kaa, kab = member_stiffness(self.asm.members, w)
            cond = len(self._free_end) and not exact
            D = (self._incidence_count if cond else self._incidence) @ kaa
            D -= self.J[:, None] * (w * w)[None, :]
            kab = self.asm.edge_sum(kab[self._tree])  # sum members in parallel, then square
            Wp[self._slot] = kab * kab if squared else kab
            if cond:
                mem = self.asm.members
                fe = self._free_end
                x = mem.L_over_c[fe][:, None] * w[None, :]
                np.subtract.at(D, self._free_far_pos, mem.k[fe][:, None] * x * np.tan(x))
                Wp[self._free_slot] = 0.0
        else:
            D = np.multiply.outer(self.J, -(w * w))
            D += self._Kd[:, None]
            Wp[self._slot] = (self._Wd * self._Wd if squared else self._Wd)[:, None]
        return D, Wp

    def _pieces(self, m: int, keep: bool = False) -> list[slice]:
        """Column pieces: at most ``chunk`` trial points each, and one per worker
        thread when the work is large enough to share (numpy releases the GIL)."""
        if self.n_dof * m < 100_000 or m < 2:
            per = m if keep else min(m, self.chunk)
        else:
            per = -(-m // max(_WORKERS, -(-m // (m if keep else self.chunk))))
            per = min(per, m if keep else self.chunk)
        return [slice(i, min(i + per, m)) for i in range(0, m, max(per, 1))]

    def _evaluate_piece(self, w, logdet: bool, keep: bool):
        count_only = not (logdet or keep)
        D, Wp = self._arrays(w, squared=count_only, exact=keep)
        neg, ld, factors = factor(self.schedule, D, Wp, self.tiny, logdet, keep, squared=count_only)
        bad = neg < 0  # met 0 * inf in the unchecked count: redo with zero-pivot care
        if bad.any():
            D, Wp = self._arrays(w[bad])
            neg[bad] = factor(self.schedule, D, Wp, self.tiny, True)[0]
        return neg, ld, factors

    def evaluate(self, omega, logdet: bool = True, keep: bool = False):
        """Count of natural frequencies strictly below each omega, log|det K|, neg pivots, factors.

        Factors (``keep``) are in elimination order, for :meth:`solve`.
        """
        w = np.atleast_1d(np.asarray(omega, float))
        pieces = self._pieces(w.size) if not keep else [slice(0, w.size)]
        if len(pieces) == 1:
            neg, ld, factors = self._evaluate_piece(w, logdet, keep)
        else:
            parts = _map(lambda s: self._evaluate_piece(w[s], logdet, False), pieces)
            neg = np.concatenate([p[0] for p in parts])
            ld = np.concatenate([p[1] for p in parts]) if logdet else None
            factors = None
        count = neg + (clamped_count(self.asm.members, w) if self.asm.distributed else 0)
        return count, ld, neg, factors

    def shifted_solve(self, sigma, rhs):
        """Count below each omega = sigma and x solving (K(sigma) ) x = rhs, per column (permuted)."""
        parts = _map(lambda s: self._shifted_piece(sigma[s], rhs[:, s]),
                     self._pieces(sigma.size, keep=True))
        return np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts], axis=1)

    def _shifted_piece(self, w, rhs, rayleigh: bool = False):
        D, Wp = self._arrays(w, exact=True)
        neg, x = factor_solve(self.schedule, D, Wp, rhs.copy(), self.tiny)
        count = neg + (clamped_count(self.asm.members, w) if self.asm.distributed else 0)
        if not rayleigh:
            return count, x
        x /= np.abs(x).max(axis=0, keepdims=True)
        return count, x, self.rayleigh(x)

    def inverse_step(self, sigma, x):
        """One Rayleigh-quotient step per column: count below sigma, the next iterate
        y = (K - sigma^2 M)^-1 M x normalised to max |y| = 1, and its Rayleigh quotient."""
        parts = _map(lambda s: self._shifted_piece(sigma[s], self.J[:, None] * x[:, s], True),
                     self._pieces(sigma.size, keep=True))
        return (np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts], axis=1),
                np.concatenate([p[2] for p in parts]))

    def count(self, omega) -> np.ndarray:
        return self.evaluate(omega, logdet=False)[0]

    def residual(self, omega: np.ndarray, x: np.ndarray) -> np.ndarray:
        """max |(K - omega^2 J) x| / max (|K| |x| + omega^2 J |x|) per column of a lumped
        model (x permuted): near rounding for an accurate mode vector."""
        mem = self.asm.members
        t = self._tree
        sums = self.__dict__.get("_end_sums")
        if sums is None:  # member forces onto their a ends, and onto their b ends
            m = len(mem.a)
            sums = (RowSum(self._pa, np.arange(m), (self.n_dof, m)),
                    RowSum(self._pb[t], np.flatnonzero(t), (self.n_dof, m)))
            self._end_sums = sums
        xb = np.where(t[:, None], x[self._pb], 0.0)
        xa = x[self._pa]
        f = mem.k[:, None] * (xa - xb)
        g = np.abs(mem.k)[:, None] * (np.abs(xa) + np.abs(xb))
        w2J = self.J[:, None] * (omega * omega)[None, :]
        r = sums[0] @ f - sums[1] @ f - w2J * x
        scale = sums[0] @ g + sums[1] @ g + w2J * np.abs(x)
        return np.abs(r).max(axis=0) / np.maximum(scale.max(axis=0), 1e-300)

    def solve(self, factors, rhs_perm: np.ndarray) -> np.ndarray:
        return solve_factored(self.schedule, factors, rhs_perm)

    def rayleigh(self, x: np.ndarray) -> np.ndarray:
        """Rayleigh quotient x'Kx / x'Mx of a lumped model per column (x permuted).

        The stiffness term is summed as member strain energies k (x_a - x_b)^2,
        all positive, so a low mode of a long chain keeps full relative precision.
        """
        mem = self.asm.members
        xb = np.where(self._tree[:, None], x[self._pb], 0.0)
        dx = x[self._pa] - xb
        # summed per column along contiguous rows (pairwise summation), not as a BLAS
        # matrix-vector product: a threaded BLAS call on a few columns of a long train
        # cost 10-15 ms each on a busy two-core machine, against 0.5 ms here
        num = np.ascontiguousarray((mem.k[:, None] * dx * dx).T).sum(axis=1)
        den = np.ascontiguousarray((self.J[:, None] * x * x).T).sum(axis=1)
        return num / den


#: a lumped chain finds its modes with LAPACK as a symmetric tridiagonal eigenproblem
#: (:class:`TridiagonalChain`) when its nodes times the roots wanted reach this.  The
#: general method's work grows with that product; below it, it takes less time than
#: loading scipy.linalg does (0.15-0.2 s, once per command line run).  Measured, lowest 20
#: modes: 10 000 discs 0.10 s general against 0.05 s tridiagonal, 20 000 discs 0.20 s
#: against 0.07 s; a screening of 20 000 discs asks for about 5 and stays general.
CHAIN_MIN_WORK = 400_000
#: a chain at least COARSE_FACTOR times longer than its coarse model (COARSE_NODES nodes, or
#: 8 per mode wanted) starts its roots from that model rather than bisecting for them
COARSE_NODES = 2000
COARSE_FACTOR = 4


class TridiagonalChain:
    """A lumped train whose stiffness matrix is tridiagonal in chain order: its nodes (a
    disc, or discs on a rigid gear mesh, referred to one speed as :mod:`core.assembly`
    does) in a row, each with inertia, joined by links that all have stiffness, with
    springs to ground anywhere.

    Natural frequencies: omega^2 are the eigenvalues of the symmetric tridiagonal matrix
    J^-1/2 K J^-1/2.  Each root is polished by Rayleigh-quotient iteration on K - sigma J
    (LAPACK dgtsv, which pivots; the quotient summed as member strain energies k dx^2,
    all positive, as the general method does), cubically convergent (B. N. Parlett, The
    Symmetric Eigenvalue Problem, 1980, ch. 4), until a step from a quotient changes it
    by less than 1e-12.  It starts either

    * on a long chain, from the roots and shapes of a coarse model of itself
      (:meth:`_coarse`, a Ritz reduction in the manner of R. J. Guyan, "Reduction of
      stiffness and mass matrices", AIAA J. 3 (1965) 380 -- from memory); the polished
      roots are then proven to be those with the wanted indices by Sturm counts below,
      between and above them (LAPACK dstebz asked only to count; Sylvester's law of
      inertia, as the Wittrick-Williams count of the general method); or
    * from LAPACK's bisection on the Sturm sequence (dstebz; W. Kahan, "Accurate
      eigenvalues of a symmetric tri-diagonal matrix", Stanford CS41, 1966 -- from
      memory), which locates every root by its index to eps ||J^-1/2 K J^-1/2||
      absolute (on a long chain a relative 1e-7 of its low modes, hence the polish);
      each polished root must stay in its own interval.

    Either way no mode is missed or found twice.  Where roots lie closer than the counts
    resolve, :meth:`modes` returns None and the general method is used.
    """

    def __init__(self, asm: Assembly, order: np.ndarray):
        n = asm.n_nodes
        mem = asm.members
        tree = mem.b >= 0
        pos = np.empty(n, np.int64)
        pos[order] = np.arange(n)
        self.order = order
        self.n = n
        self.J = asm.node_inertia[order]
        lower = np.minimum(pos[asm.edges_a], pos[asm.edges_b])
        self.k_edge = np.empty(n - 1)  # stiffness between chain positions i and i + 1
        self.k_edge[lower] = asm.edge_sum(mem.k[tree])  # links in parallel add
        self.k_ground = np.bincount(pos[mem.a[~tree]], mem.k[~tree], n)
        self.K_diag = np.r_[self.k_edge, 0.0] + np.r_[0.0, self.k_edge] + self.k_ground
        self.free = not asm.grounded

    @classmethod
    def of(cls, asm: Assembly) -> "TridiagonalChain | None":
        """The chain form of ``asm``, or None when it is not such a chain."""
        mem = asm.members
        if asm.distributed or asm.n_nodes < 2 or not np.all(asm.node_inertia > 0) \
                or not np.all((mem.k > 0) & np.isfinite(mem.k)):
            return None
        order = path_order(asm.n_nodes, asm.edges_a, asm.edges_b)
        return None if order is None else cls(asm, order)

    def rayleigh(self, x: np.ndarray) -> float:
        """x'Kx / x'Jx as strain energies over kinetic energies, all terms positive."""
        dx = x[:-1] - x[1:]
        return float(((self.k_edge * dx * dx).sum() + (self.k_ground * x * x).sum()) / (self.J * x * x).sum())

    def symmetric(self) -> tuple[np.ndarray, np.ndarray, float]:
        """Diagonal and off-diagonal of J^-1/2 K J^-1/2, and the `slack` of its Sturm
        counts: each is exact for a matrix within a few eps ||J^-1/2 K J^-1/2|| of this
        one (its entries are rounded too), so a root lies within `slack` of where the
        counts place it."""
        s = 1.0 / np.sqrt(self.J)
        d = self.K_diag * s * s
        e = -self.k_edge * s[:-1] * s[1:]
        norm = float(np.abs(d).max() + 2.0 * np.abs(e).max())
        return d, e, 32.0 * np.finfo(float).eps * norm

    def modes(self, targets: np.ndarray, rigid_column: bool = False):
        """omega (rad/s) and node mode vectors (node order, columns) of the natural
        frequencies with the given 0-based count indices (consecutive), or None when a
        root cannot be told from its neighbours to the precision of the counts.  With
        ``rigid_column`` the vectors come after a first column of ones (the rigid-body
        mode, made in the same array: on a long chain each copy is tens of MB).

        A long chain starts each root from a coarse model of itself (:meth:`_coarse`)
        and proves the polished roots by Sturm counts between them; where that does
        not hold, or on a short chain, the roots are located by bisection first."""
        d, e, slack = self.symmetric()
        targets = np.asarray(targets, np.int64)
        lead = int(rigid_column)
        X = np.empty((self.n, lead + len(targets)))  # chain order
        X[:, :lead] = 1.0
        omega2 = None
        if self.n >= COARSE_FACTOR * max(COARSE_NODES, 8 * (int(targets[-1]) + 2)):
            omega2 = self._from_coarse(targets, d, e, slack, X[:, lead:])
        if omega2 is None:
            omega2 = self._from_bisection(targets, d, e, slack, X[:, lead:])
        if omega2 is None:
            return None
        if not np.array_equal(self.order, np.arange(self.n)):
            X[self.order] = X.copy()  # node order
        return np.sqrt(omega2), X

    def _from_bisection(self, targets, d, e, slack, X):
        """Every target located by LAPACK's bisection (dstebz), then polished: omega^2, the
        vectors written into the columns of X (chain order)."""
        from scipy.linalg.lapack import dstebz
        first, last = int(targets[0]), int(targets[-1])
        lo, hi = max(first - 1, 0), min(last + 1, self.n - 1)  # with the neighbours: their gaps
        m, w, _, _, info = dstebz(d, e, 2, 0.0, 0.0, lo + 1, hi + 1, 0.0, "E")
        if info != 0 or m != hi - lo + 1:
            return None
        w = w[:m]
        if m > 1 and np.diff(w).min() <= 4.0 * slack:
            return None  # neighbouring roots closer than the bisection resolves
        x0 = self._start()
        omega2 = np.empty(len(targets))
        for j, lam in enumerate(w[targets - lo]):
            got = self._polish(float(lam), x0, slack)
            if got is None or not abs(got[0] - lam) <= slack:
                return None  # the iteration settled on another root than this index's
            omega2[j], X[:, j] = got
        return omega2

    def _from_coarse(self, targets, d, e, slack, X):
        """Targets started from the coarse model's roots and shapes, polished, and proven
        to be the roots with these indices by Sturm counts below, between and above them:
        omega^2, the vectors written into the columns of X (chain order)."""
        coarse = self._coarse(targets)
        if coarse is None:
            return None
        est, start = coarse
        omega2 = np.empty(len(targets))
        for j in range(len(targets)):
            got = self._polish(float(est[j]), start(j), slack)
            if got is None:
                return None
            omega2[j], X[:, j] = got
        # two close roots may each have settled on the other's: the set is what counts
        order = np.argsort(omega2, kind="stable")
        if not np.array_equal(order, np.arange(len(order))):
            omega2 = omega2[order]
            X[:] = X[:, order]
        if len(omega2) > 1 and not np.diff(omega2).min() > 8.0 * slack:
            return None
        # a root polished to rounding lies within `slack` of an eigenvalue; the counts at
        # these points are then exactly the targets' indices only if no root was missed,
        # none found twice and each has its own index (Sylvester's law of inertia)
        points = np.r_[omega2[0] - 3.0 * slack, 0.5 * (omega2[1:] + omega2[:-1]), omega2[-1] + 3.0 * slack]
        want = np.r_[targets, targets[-1] + 1]
        if not np.array_equal(self._counts(d, e, points), want):
            return None
        return omega2

    @staticmethod
    def _counts(d, e, points) -> np.ndarray:
        """Number of eigenvalues of the symmetric tridiagonal (d, e) at or below each point:
        dstebz asked for the interval from below every eigenvalue (Gershgorin) to the
        point with a tolerance wider than it, so it counts and does not bisect."""
        from scipy.linalg.lapack import dstebz
        ae = np.abs(e)
        floor = float((d - np.r_[ae, 0.0] - np.r_[0.0, ae]).min())
        vl = floor - max(1.0, abs(floor))
        out = np.empty(len(points), np.int64)
        for i, p in enumerate(points.tolist()):
            m, _, _, _, info = dstebz(d, e, 1, vl, p, 0, 0, 4.0 * (p - vl) + 1.0, "E")
            out[i] = m if info == 0 else -1
        return out

    def _coarse(self, targets):
        """Estimates of the target roots and their shapes from the chain coarsened to about
        COARSE_NODES nodes (or enough for the highest target): every b-th node kept, the
        nodes between them following linearly in the compliance along the chain (exact for
        massless discs between: the kept nodes are joined by the links' series stiffness),
        their inertia and springs to ground shared out by the same weights (a Ritz
        reduction with lumped inertia).  Returns the coarse roots and a function giving
        the start vector of target j, its coarse mode interpolated; None if it fails."""
        from scipy.linalg.lapack import dgtsv, dstebz
        n = self.n
        want = max(COARSE_NODES, 8 * (int(targets[-1]) + 2))
        b = max(2, (n - 1) // want)
        nb = -(-(n - 1) // b)  # blocks of b links; the last padded with rigid, massless stations
        comp = np.zeros(nb * b)
        comp[:n - 1] = 1.0 / self.k_edge
        blocks = comp.reshape(nb, b)
        Q = blocks.sum(axis=1)  # compliance of each block: the coarse springs are 1 / Q
        w = np.zeros((nb, b))  # weight of the block's far end at each station of the block
        w[:, 1:] = np.cumsum(blocks[:, :-1], axis=1) / Q[:, None]
        J = np.zeros(nb * b + 1)
        J[:n] = self.J
        Jb = J[:-1].reshape(nb, b)
        Jc = np.zeros(nb + 1)
        Jc[:-1] = (Jb * (1.0 - w)).sum(axis=1)
        Jc[1:] += (Jb * w).sum(axis=1)
        Jc[-1] += J[-1]
        kc = 1.0 / Q
        Kd = np.r_[kc, 0.0] + np.r_[0.0, kc]
        Ko = -kc
        if self.k_ground.any():
            g = np.zeros(nb * b + 1)
            g[:n] = self.k_ground
            gb = g[:-1].reshape(nb, b)
            Kd[:-1] += (gb * (1.0 - w) ** 2).sum(axis=1)
            Kd[1:] += (gb * w * w).sum(axis=1)
            Kd[-1] += g[-1]
            Ko = Ko + (gb * w * (1.0 - w)).sum(axis=1)
        s = 1.0 / np.sqrt(Jc)
        first, last = int(targets[0]), int(targets[-1])
        m, lam, _, _, info = dstebz(Kd * s * s, Ko * s[:-1] * s[1:], 2, 0.0, 0.0, first + 1, last + 1,
                                    0.0, "E")
        if info != 0 or m != len(targets):
            return None
        lam = lam[:m]
        # coarse shapes: two inverse iteration steps each on the coarse chain
        y0 = np.random.default_rng(12345).uniform(0.5, 1.5, nb + 1)
        Y = np.empty((nb + 1, m))
        for j in range(m):
            y = y0
            for _ in range(2):
                y, info = dgtsv(Ko, Kd - lam[j] * Jc, Ko, Jc * y)[3:]
                if info != 0 or not np.all(np.isfinite(y)):
                    return None
                y = y / np.abs(y).max()
            Y[:, j] = y

        def start(j):  # stations between kept nodes: (1 - w) at the near end, w at the far end
            y = Y[:, j]
            x = ((1.0 - w) * y[:-1, None] + w * y[1:, None]).ravel()
            return np.r_[x, y[-1]][:n]
        return lam, start

    def _start(self) -> np.ndarray:
        """A start vector with no rigid-body part (the start leans on the elastic modes)."""
        x0 = np.random.default_rng(12345).uniform(0.5, 1.5, self.n)
        if self.free:
            x0 -= (self.J @ x0) / self.J.sum()
        return x0

    def _polish(self, sigma: float, x: np.ndarray, slack: float):
        """Rayleigh-quotient iteration from (sigma, x): (omega^2, vector normalised to
        max |x| = 1) once a step from a quotient changes it by less than 1e-12, else None."""
        from scipy.linalg.lapack import dgtsv
        J, kd, sub = self.J, self.K_diag, -self.k_edge
        from_quotient = False  # convergence is judged from a shift that is itself a quotient
        for _ in range(12):
            y, info = dgtsv(sub, kd - sigma * J, sub, J * x)[3:]
            if info != 0:  # K - sigma J exactly singular: sigma is the root to rounding,
                # and a solve a hair off it gives its vector
                y, info = dgtsv(sub, kd - (sigma * (1.0 + 1e-13) + 1e-3 * slack) * J, sub, J * x)[3:]
                if info != 0:
                    return None
            y /= np.abs(y).max()
            rho = self.rayleigh(y)
            x = y
            done = from_quotient and abs(rho - sigma) <= 1e-12 * rho
            sigma, from_quotient = rho, True
            if done:
                return sigma, x
        return None


_LAST_SYSTEM: tuple = (None, None)


def dynamic_system(train: Train) -> DynamicSystem:
    """The assembled system of ``train``, reused while the same (immutable) train is
    solved again — a study asks for its modes and its screening one after the other."""
    global _LAST_SYSTEM
    ref, system = _LAST_SYSTEM
    if ref is not None and ref() is train:
        return system
    system = DynamicSystem(train)
    _LAST_SYSTEM = (weakref.ref(train), system)
    return system


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
    # every natural frequency up to this one (Hz) is in the set: the cap of a
    # frequency request, the highest mode of a count request, inf when a lumped
    # model's every finite mode was found
    complete_to_hz: float = 0.0
    # (n_modes, n_nodes): angles of the referred nodes of core.assembly (junctions of
    # distributed shafts included), any scale per mode; None when not kept
    node_shape: np.ndarray | None = None

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
def _upper_bound(system: DynamicSystem, need: int) -> tuple[float, int]:
    """An omega with at least ``need`` natural frequencies below it (or all finite
    ones), and the count there."""
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
        c = int(system.count(w)[0])
        if c >= target:
            return w, c
        w *= 3.7  # not a power of two: keeps clear of exact member poles
    raise RuntimeError("could not bracket the requested modes")


def _grid(a: float, b: float, n: int) -> np.ndarray:
    """n interior trial points of (a, b): geometric over a wide span (or from 0), else even."""
    if a <= 0.0 or b > 4.0 * a:
        a0 = max(a, b * 1e-6)
        pts = np.geomspace(a0, b, n + 1)[:-1] if a <= 0.0 else np.geomspace(a, b, n + 2)[1:-1]
        return pts
    return a + (b - a) * np.arange(1, n + 1) / (n + 1)


def _isolate(system: DynamicSystem, targets: np.ndarray, hi, c_hi, rtol: float = 4e-16,
             per_root: int = 3, lo=None, c_lo=None, passes: int = 200):
    """Brackets (lo, hi] holding exactly the natural frequency with each 0-based count index.

    Multisection on the mode count (Sturm / Wittrick-Williams): every bracket
    holding targets gets ``per_root`` trial points per target it holds, spread
    geometrically over a wide bracket and evenly over a narrow one.  A bracket
    narrower than ``rtol`` that still holds several roots is a repeated root.
    Returns lo, hi, count at lo, count at hi.
    """
    K = len(targets)
    lo = np.zeros(K) if lo is None else np.array(lo, float)
    hi = np.broadcast_to(np.asarray(hi, float), (K,)).copy()
    clo = np.zeros(K, np.int64) if c_lo is None else np.array(c_lo, np.int64)
    chi = np.broadcast_to(np.asarray(c_hi, np.int64), (K,)).copy()
    force = passes < 200  # shrink isolated brackets too (polishing fallback)
    for _ in range(passes):
        iso = (clo == targets) & (chi == targets + 1) & (not force)
        todo = ~(iso | ((hi - lo) <= rtol * hi))
        if not todo.any():
            break
        idx = np.flatnonzero(todo)
        # targets sharing a bracket are contiguous (brackets are nested by count)
        starts = np.flatnonzero(np.r_[True, (lo[idx][1:] != lo[idx][:-1]) | (hi[idx][1:] != hi[idx][:-1])])
        sizes = np.diff(np.r_[starts, len(idx)])
        pts = [_grid(lo[idx[s]], hi[idx[s]], min(per_root * int(z) + 1, 4096))
               for s, z in zip(starts, sizes)]
        pts = np.unique(np.concatenate(pts))
        cnt = system.count(pts)
        # for each target: the last point with count <= target and the first above
        j = np.searchsorted(cnt, targets[idx], side="right")  # counts ascend with omega
        below = j > 0
        jl = np.maximum(j - 1, 0)
        new_lo = np.where(below, pts[jl], -np.inf)
        upd = below & (new_lo > lo[idx])
        lo[idx[upd]] = new_lo[upd]
        clo[idx[upd]] = cnt[jl][upd]
        above = j < len(pts)
        jh = np.minimum(j, len(pts) - 1)
        new_hi = np.where(above, pts[jh], np.inf)
        upd = above & (new_hi < hi[idx])
        hi[idx[upd]] = new_hi[upd]
        chi[idx[upd]] = cnt[jh][upd]
    return lo, hi, clo, chi


def _polish_lumped(system: DynamicSystem, targets, lo, hi):
    """Safeguarded Rayleigh-quotient iteration inside count-isolated brackets.

    Each step factors K - sigma M once (its negative pivots tighten the bracket,
    Sylvester's law of inertia), solves for the next iterate and takes its
    Rayleigh quotient; a quotient outside the bracket is replaced by the
    bracket's midpoint, so the iteration can only converge to the bracketed
    root.  Convergence is cubic near a root (B. N. Parlett, The Symmetric
    Eigenvalue Problem, 1980, ch. 4): the error after a step is about
    e^3 / g^2 (e the shift's relative error, g the relative gap to the next
    root), so a step changing omega by less than 1e-6 g^(2/3) leaves the new
    value at rounding level.  Gaps come from the neighbouring roots and the
    isolating brackets (the next root lies outside).  Returns omega and the
    (elimination order) mode vectors.
    """
    K = len(targets)
    n = system.n_dof
    lo, hi = lo.copy(), hi.copy()
    rng = np.random.default_rng(12345)
    x = rng.uniform(0.5, 1.5, size=(n, K))
    w = np.where(lo > 0, np.sqrt(lo * hi), 0.5 * hi)
    active = np.ones(K, bool)
    # the shift is a Rayleigh quotient (not a bracket point): only then does a step that
    # leaves the quotient where it was mean convergence -- a first quotient can fall on
    # its shift by symmetry with the iterate still a blend of modes
    from_quotient = np.zeros(K, bool)
    lo0, hi0 = lo.copy(), hi.copy()
    for _ in range(60):
        gap = np.minimum(w - lo0, hi0 - w)
        if K > 1:
            d = np.abs(np.diff(w))
            gap = np.minimum(gap, np.minimum(np.r_[np.inf, d], np.r_[d, np.inf]))
        rel_gap = np.maximum(gap, 0.0) / np.maximum(w, 1e-300)
        rtol = np.clip(1e-6 * rel_gap ** (2 / 3), 1e-15, 1e-6)
        idx = np.flatnonzero(active)
        if not len(idx):
            break
        sig = w[idx]
        c, y, rho = system.inverse_step(sig, x[:, idx])
        below = c <= targets[idx]  # the root lies above sigma
        lo[idx] = np.where(below, np.maximum(lo[idx], sig), lo[idx])
        hi[idx] = np.where(below, hi[idx], np.minimum(hi[idx], sig))
        x[:, idx] = y
        w_new = np.sqrt(np.maximum(rho, 0.0))
        # at convergence sigma sits on the root and the count may put it on
        # either side, so the bracket test allows rounding
        slack = 1e-12 * w_new
        inside = (w_new > lo[idx] - slack) & (w_new < hi[idx] + slack)
        done = inside & (np.abs(w_new - sig) <= rtol[idx] * w_new) & from_quotient[idx]
        narrow = (hi[idx] - lo[idx]) <= 4e-16 * hi[idx]
        w[idx] = w_new
        from_quotient[idx] = True
        out = idx[~inside & ~narrow]
        # the quotient left the bracket (the iterate still leans to a neighbour):
        # bisect instead; the bracket has just shrunk by the count at sigma
        w[out] = 0.5 * (lo[out] + hi[out])
        from_quotient[out] = False
        active[idx[done | narrow]] = False
    return w, x


def _polish_distributed(system: DynamicSystem, targets, lo, hi, rtol: float = 4e-16):
    """Illinois regula falsi on the determinant inside isolated brackets (distributed members).

    The clamped-member count J0 is first made constant inside every bracket, so
    det K(omega) has no pole there and changes sign exactly once.
    """
    K = len(targets)
    lo, hi = lo.copy(), hi.copy()
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


def _find_roots(system: DynamicSystem, targets: np.ndarray, hi: float, c_hi: int | None = None):
    """omega of the natural frequencies with the given 0-based count indices, and
    the node mode vectors (original node order, columns per root)."""
    if c_hi is None:
        c_hi = int(system.count(hi)[0])
    lo, hi_, clo, chi = _isolate(system, targets, hi, c_hi)
    if system.asm.distributed:
        omega = _polish_distributed(system, targets, lo, hi_)
        x = _inverse_iteration(system, omega)
    else:
        omega, x = _polish_lumped(system, targets, lo, hi_)
        omega, x = _refine_lumped(system, omega, x)
    order = np.argsort(omega, kind="stable")  # a repeated root may come out a rounding apart
    omega, x = omega[order], x[:, order]
    x = _separate_repeated(system, omega, x)
    phi = np.empty_like(x)
    phi[system.schedule.order] = x
    return omega, phi


def _refine_lumped(system: DynamicSystem, omega: np.ndarray, x: np.ndarray):
    """Roots whose mode vector has a residual above rounding, inverse-iterated again a
    little off the root, and their omega taken afresh as the Rayleigh quotient.

    The tree elimination does not pivot: where K - omega^2 J has entries that cancel at
    the root exactly (a chain of equal discs and shafts, whose middle mode zeroes every
    inner diagonal entry), the pivots next to the root are rounding noise and a solve
    there loses its digits to element growth -- such a mode's shape came out wrong by
    1e-5 to 1e-1 and its quotient (so its frequency) by up to 5e-4.  A shift 1e-7 off
    the root keeps the pivots at 1e-7 of the diagonal, so a solve keeps about 1e-9, and
    steps at it cut every other mode by (shift error / gap) each.  A root is replaced
    only where its residual falls."""
    res = system.residual(omega, x)
    bad = np.flatnonzero(~(res <= 1e-10))
    for _ in range(2):
        if not len(bad):
            break
        sigma = omega[bad] * (1.0 + 5e-8)
        y = x[:, bad]
        for _ in range(3):
            y = system.inverse_step(sigma, y)[1]
        w = np.sqrt(np.maximum(system.rayleigh(y), 0.0))
        r = system.residual(w, y)
        better = r < res[bad]
        keep = bad[better]
        x[:, keep], omega[keep], res[keep] = y[:, better], w[better], r[better]
        bad = bad[better & ~(r <= 1e-10)]
    return omega, x


# ----------------------------------------------------------------- modes
def _inverse_iteration(system: DynamicSystem, omega: np.ndarray) -> np.ndarray:
    """Node amplitudes (elimination order, (n_nodes, k)) by inverse iteration at each root."""
    n = system.n_dof
    if omega.size == 0:
        return np.zeros((n, 0))
    rng = np.random.default_rng(12345)
    x = rng.uniform(0.5, 1.5, size=(n, omega.size))
    shift = omega * (1.0 + 1e-9) + 1e-12
    for _ in range(2):
        _, _, _, fac = system.evaluate(shift, logdet=False, keep=True)
        x = system.solve(fac, x)
        x /= np.abs(x).max(axis=0, keepdims=True)
    # The null vector of K(sigma) moves with sigma: at sigma = omega (1 + 1e-9) it
    # differs from the mode by about 1e-9 times dK/domega over the gap to the next
    # eigenvalue of K (up to ~1e-8 on the samples).  One more step at the polished
    # root itself (K(omega) singular to rounding; a zero pivot takes `tiny`) lands
    # on the mode to rounding: checked against closed-form shapes of uniform shafts.
    _, _, _, fac = system.evaluate(np.maximum(omega, 1e-300), logdet=False, keep=True)
    y = system.solve(fac, x)
    big = np.abs(y).max(axis=0, keepdims=True)
    ok = np.all(np.isfinite(y), axis=0) & (big[0] > 0) & np.isfinite(big[0])
    if ok.any():
        x[:, ok] = y[:, ok] / big[:, ok]
    return x


def _separate_repeated(system: DynamicSystem, omega: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Make the vectors of a repeated root (twin branches) M-orthogonal (Gram-Schmidt).

    Inverse iteration from different starts gives independent vectors of the
    root's eigenspace; orthogonalising them in the inertia inner product makes
    them distinct modes.  Groups: roots equal to 1e-9 relative.
    """
    if len(omega) < 2:
        return x
    same = np.abs(np.diff(omega)) <= 1e-9 * np.maximum(omega[1:], 1e-300)
    if not same.any():
        return x
    J = np.where(system.J > 0, system.J, 1.0)  # massless junctions: plain weight
    i = 0
    while i < len(omega):
        j = i
        while j < len(same) and same[j]:
            j += 1
        for a in range(i + 1, j + 1):
            v = x[:, a]
            for b in range(i, a):
                u = x[:, b]
                v = v - u * ((J * u) @ v) / ((J * u) @ u)
            x[:, a] = v / np.abs(v).max()
        i = j + 1
    return x


def _segment_energies(k, x, ta, tb):
    """Strain and kinetic integrals of a uniform member between end angles ta, tb.

    theta(s) = (ta sin(x(1-s)) + tb sin(x s)) / sin x along the member.  Returns
    U = 1/2 G Ip int theta'^2, and T/omega^2 = 1/2 rho Ip int theta^2, both in
    terms of k = G Ip / L (rho Ip L = k x^2 / omega^2).  Springs (x = 0 for
    every mode) take the static limit directly.
    """
    U = 0.5 * k * (ta - tb) ** 2
    if not x.any():  # springs only: no kinetic energy of their own
        return U, np.zeros_like(U)
    Tk = 0.5 * k * x ** 2 * (ta ** 2 + ta * tb + tb ** 2) / 3.0
    rows = np.flatnonzero((x >= 1e-4).any(axis=1))  # distributed members only
    if not len(rows):
        return U, Tk
    k, x, ta, tb = k[rows], x[rows], ta[rows], tb[rows]
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
    U[rows] = np.where(small, U[rows], 0.5 * k * int_d2)
    Tk[rows] = np.where(small, Tk[rows], 0.5 * k * xs ** 2 * int_t2)  # 1/2 rho Ip L w^2 int theta^2
    return U, Tk


def _member_torques(k, x, ta, tb, samples: int = 33):
    """Internal torque T = -G Ip dtheta/dz of uniform members between end angles.

    Returns (torque at the a-end, torque at the b-end, signed torque of largest
    magnitude along the member); a spring (x = 0) carries k (ta - tb) throughout.
    """
    spring = k * (ta - tb)
    Ta, Tb, Tm = spring.copy(), spring.copy(), spring.copy()
    rows = np.flatnonzero((x >= 1e-4).any(axis=1))  # distributed members only
    if len(rows):
        k, x, ta, tb = k[rows], x[rows], ta[rows], tb[rows]
        small = x < 1e-4
        xs = np.where(small, 1.0, x)
        sn = np.sin(xs)
        sn = np.where(np.abs(sn) < 1e-300, 1e-300, sn)
        s = np.linspace(0.0, 1.0, samples)[:, None, None]
        # dtheta/ds = x (-ta cos(x (1 - s)) + tb cos(x s)) / sin x
        T = -k * xs * (-ta * np.cos(xs * (1 - s)) + tb * np.cos(xs * s)) / sn
        T = np.where(small, k * (ta - tb), T)
        j = np.argmax(np.abs(T), axis=0)
        Tm[rows] = np.take_along_axis(T, j[None], axis=0)[0]
        Ta[rows], Tb[rows] = T[0], T[-1]
    return Ta, Tb, Tm


def _link_torques(mem, nl, Ta, Tb, Tm):
    """Per link: the signed torque of largest magnitude over its members, and the
    torques at its `from` and `to` ends (array operations over links; members are
    stored in link order, a link's members contiguous).  A link without members (a
    rigid mesh) gets zeros here."""
    k = Ta.shape[1]
    if len(mem.link) == nl and np.array_equal(mem.link, np.arange(nl)):
        return Tm, Ta, Tb  # one member per link, in link order
    torque = np.zeros((nl, k))
    t_from = np.zeros((nl, k))
    t_to = np.zeros((nl, k))
    if not len(mem.link):
        return torque, t_from, t_to
    starts = np.flatnonzero(np.r_[True, mem.link[1:] != mem.link[:-1]])
    last = np.r_[starts[1:], len(mem.link)] - 1
    links = mem.link[starts]
    group = np.repeat(np.arange(len(starts)), np.diff(np.r_[starts, len(mem.link)]))
    mag = np.abs(Tm)
    best = np.maximum.reduceat(mag, starts, axis=0)
    # the first member of each link reaching its largest magnitude (as argmax picks)
    at = np.where(mag == best[group], np.arange(len(mem.link))[:, None], len(mem.link))
    first_best = np.minimum.reduceat(at, starts, axis=0)
    lost = first_best == len(mem.link)  # a NaN torque: no member compares equal
    first_best[lost] = np.broadcast_to(starts[:, None], first_best.shape)[lost]
    torque[links] = np.where(lost, np.nan, np.take_along_axis(Tm, first_best, axis=0))
    flip = mem.flip[starts]  # stored from the link's `to` end: its ends swap
    t_from[links] = Ta[np.where(flip, last, starts)]
    t_to[links] = Tb[np.where(flip, starts, last)]
    return torque, t_from, t_to


def _rows(x: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """x[idx] for row indices idx; a view, not a copy, where idx is a run of consecutive rows
    (a chain's member ends): on a long train each copy is tens of MB of fresh memory."""
    if len(idx) and idx[-1] - idx[0] == len(idx) - 1 and np.all(np.diff(idx) == 1):
        return x[idx[0]:idx[-1] + 1]
    return x[idx]


def member_ends(mem, phi: np.ndarray):
    """Each member's end angles in actual units of its own shaft (rad, rows by member,
    columns as ``phi``'s; views where they can be) and its actual stiffness k / scale^2
    (N*m/rad, a column).  A member to ground has zero twist at its ground end."""
    tree = mem.b >= 0
    pa = _rows(phi, mem.a)
    pb = _rows(phi, mem.b) if tree.all() else np.where(tree[:, None], phi[np.maximum(mem.b, 0)], 0.0)
    if np.all(mem.scale == 1.0):
        ta, tb = pa, pb
    else:
        ta, tb = pa * mem.scale[:, None], pb * mem.scale[:, None]
    return ta, tb, (mem.k / mem.scale ** 2)[:, None]


def _largest(theta: np.ndarray):
    """Per column: max |theta| and the first row where it is reached (as argmax of |theta|),
    without an |theta| copy."""
    hi, lo = theta.max(axis=0), theta.min(axis=0)
    i_hi, i_lo = np.argmax(theta, axis=0), np.argmin(theta, axis=0)
    big = np.maximum(hi, -lo)
    at = np.where(hi > -lo, i_hi, np.where(hi < -lo, i_lo, np.minimum(i_hi, i_lo)))
    return big, at


def _modal_quantities(system: DynamicSystem, omega: np.ndarray, phi: np.ndarray):
    """Disc angles normalised to a largest angle of +1, link torques and energy shares
    per mode (arrays over discs or links and modes; see :class:`Modes`).  Full-size
    arrays are made as few as the results need (a 100 000-disc train: 17 MB each)."""
    train = system.train
    a = system.asm
    mem = a.members
    nd, nl = len(train.discs), len(train.links)
    cols = np.arange(phi.shape[1])
    plain = a.n_nodes == nd and np.array_equal(a.disc_node, np.arange(nd)) and np.all(a.disc_scale == 1.0)
    theta = phi if plain else a.disc_scale[:, None] * phi[a.disc_node]  # actual disc angles
    big, jmax = _largest(theta)
    big = np.where(big == 0, 1.0, big)
    sign = np.sign(theta[jmax, cols])
    sign = np.where(sign == 0, 1.0, sign)
    norm = sign / big
    if plain:
        phi = phi * norm
        theta = np.clip(phi, -1.0, 1.0, order="C")  # C order: sums over discs as before
    else:
        theta *= norm
        np.clip(theta, -1.0, 1.0, out=theta)
        phi = phi * norm
    theta[jmax, cols] = 1.0  # exactly, not a rounding below
    ta, tb, k_act = member_ends(mem, phi)
    if a.distributed:
        x = mem.L_over_c[:, None] * omega[None, :]
        U, Tk = _segment_energies(k_act, x, ta, tb)
        Ta, Tb, Tm = _member_torques(k_act, x, ta, tb)
        # a member stored from its link's `to` end carries the opposite sign
        fl = np.flatnonzero(mem.flip)
        if len(fl):
            Ta[fl], Tb[fl], Tm[fl] = -Tb[fl], -Ta[fl], -Tm[fl]
        Tk = np.where(mem.L_over_c[:, None] > 0, Tk, 0.0)
    else:  # springs: k (ta - tb) throughout, strain energy k (ta - tb)^2 / 2
        Tm = np.subtract(ta, tb, order="C")
        del ta, tb, phi  # the full-size arrays freed before the next ones are made
        U = np.square(Tm)
        U *= 0.5 * k_act
        Tm *= k_act
        if mem.flip.any():
            Tm[mem.flip] *= -1.0
        Ta = Tb = Tm
        Tk = None
    if len(mem.link) == nl and np.array_equal(mem.link, np.arange(nl)):
        strain = U  # one member per link, in link order (no rigid mesh, no segments)
        link_kin = Tk
    else:
        per_link = RowSum(mem.link, np.arange(len(mem.link)), (nl, len(mem.link)))
        strain = per_link @ U
        link_kin = per_link @ Tk if Tk is not None else None
    torque, t_from, t_to = _link_torques(mem, nl, Ta, Tb, Tm)
    J_eff = a.disc_inertia
    # a rigid-body mode (omega = 0) still has kinetic energy shares in proportion to J theta^2
    w_kin = np.where(omega > 0, omega, 1.0)
    disc_kin = np.square(theta)
    disc_kin *= (0.5 * J_eff)[:, None]
    disc_kin *= (w_kin ** 2)[None, :]
    if len(a.disc_node) and a.disc_node.max() + 1 < nd:  # discs merged: rigid meshes
        rigid = a.link_rigid
        end_torque = {li: (t_from[li], t_to[li]) for li in np.flatnonzero(~rigid).tolist()}
        peel_rigid_meshes(train, -omega ** 2 * J_eff[:, None] * theta, end_torque)
        if torque is t_from:
            torque, t_from, t_to = torque.copy(), t_from.copy(), t_to.copy()
        for li in np.flatnonzero(rigid).tolist():
            torque[li] = t_from[li] = t_to[li] = end_torque[li][0]
    tot_kin = disc_kin.sum(0) + (link_kin.sum(0) if link_kin is not None else 0.0)
    tot_kin = np.where(tot_kin == 0, 1.0, tot_kin)
    tot_str = strain.sum(0)
    tot_str = np.where(tot_str == 0, 1.0, tot_str)
    disc_kin /= tot_kin
    strain /= tot_str  # U, or the per-link sums of U: made here either way
    link_share = np.zeros((nl, len(cols))) if link_kin is None else link_kin / tot_kin
    return theta.T, torque.T, disc_kin.T, link_share.T, strain.T


MAX_MODES = 400  # elastic modes one solve returns with their shapes
MAX_SHAPE_VALUES = 4_000_000  # modes x degrees of freedom held in memory (~32 MB per array)


def mode_limit(n_dof: int) -> int:
    """How many elastic modes one solve returns with shapes: MAX_MODES, fewer on a very
    long train so that the shape arrays stay bounded (100 modes of a 100 000-disc train)."""
    return int(max(20, min(MAX_MODES, MAX_SHAPE_VALUES // max(n_dof, 1))))


class ModeLimitError(ModelError):
    """More modes were asked for than one solve returns (:func:`mode_limit`)."""

    def __init__(self, count: int, limit: int, below_hz: float | None = None):
        self.count, self.limit, self.below_hz = count, limit, below_hz
        where = "" if below_hz is None else f" below {below_hz:.6g} Hz"
        super().__init__(f"{count} natural frequencies lie{where}; one solve returns at most {limit} "
                         f"modes for this train (limit {MAX_MODES}, fewer for very long trains so the "
                         "mode shapes fit in memory)", "option", "--modes")


def free_bodies(asm: Assembly) -> tuple[np.ndarray | None, list[np.ndarray]]:
    """The train's free body and the rings joined to it by damping alone.

    Components of the node graph joined by members that have stiffness.  When a
    member with stiffness ties a component to ground the train is grounded and
    every component not tied is a ring; otherwise the largest component (most
    nodes, then most inertia) is the train, free as a rigid body, and the others
    are rings: bodies joined by damping alone (a viscous damper's ring), free in
    the undamped problem.  Returns (train's
    node set or None when grounded, list of ring node sets).
    """
    mem = asm.members
    n = asm.n_nodes
    if np.all(mem.k > 0):  # every member has stiffness: the tree is one body (the common case)
        return (None if asm.grounded else np.arange(n)), []
    parent = np.arange(n)

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    stiff = mem.k > 0
    tree = stiff & (mem.b >= 0)
    for a, b in zip(mem.a[tree], mem.b[tree]):
        parent[find(int(a))] = find(int(b))
    roots = np.array([find(i) for i in range(n)])
    tied = set(roots[mem.a[stiff & (mem.b < 0)]].tolist())
    comps = [np.flatnonzero(roots == r) for r in dict.fromkeys(roots.tolist())]
    free = [j for j in range(len(comps)) if roots[comps[j][0]] not in tied]
    if len(free) < len(comps):  # grounded: every free component is a ring
        return None, [comps[j] for j in free]
    main = max(free, key=lambda j: (len(comps[j]), asm.node_inertia[comps[j]].sum()))
    return comps[main], [comps[j] for j in free if j != main]


def zero_roots(asm: Assembly) -> int:
    """Number of zero natural frequencies of the undamped problem: the train's
    rigid-body mode (when it is not grounded) and one for each ring joined to it
    by damping alone.  Counting from this index gives the first elastic mode."""
    train_body, rings = free_bodies(asm)
    return (0 if train_body is None else 1) + len(rings)


def natural_modes(train: Train, max_frequency_hz: float | None = None,
                  n_modes: int | None = None) -> Modes:
    """Natural frequencies and modes of ``train``.

    Give either ``max_frequency_hz`` (every mode up to that cap) or ``n_modes``
    (the lowest N elastic modes; a rigid-body mode is reported in addition).
    Without either, the lowest 10 elastic modes.  Raises :class:`ModeLimitError`
    when more than :func:`mode_limit` elastic modes are asked for (counted first,
    in time proportional to the train's size).
    """
    t0 = time.perf_counter()
    system = dynamic_system(train)
    train_body, rings = free_bodies(system.asm)
    rb = 0 if train_body is None else 1
    n_zero = rb + len(rings)  # zero roots: the train's rigid-body mode and each free ring
    notes = []
    limit = mode_limit(system.n_dof)
    if n_modes is not None and int(n_modes) > limit:
        raise ModeLimitError(int(n_modes), limit)
    if max_frequency_hz is not None:
        cap_w = TWO_PI * max_frequency_hz
        total = int(system.count(cap_w)[0])
        if total - n_zero > limit:
            raise ModeLimitError(total - n_zero, limit, max_frequency_hz)
        targets = np.arange(n_zero, total)
        hi = cap_w
        requested = f"all modes up to {max_frequency_hz:.6g} Hz"
    else:
        N = 10 if n_modes is None else int(n_modes)
        finite = system.asm.n_finite_modes
        want = N + n_zero
        if finite is not None and want > finite:
            notes.append(f"the lumped model has only {finite - n_zero} elastic modes")
            want = finite
        hi = total = None  # bracketed when the general method needs it
        targets = np.arange(n_zero, want)
        requested = f"lowest {N} elastic modes"
    solved = None
    if len(targets) and system.n_dof * len(targets) >= CHAIN_MIN_WORK and system.chain is not None:
        # the rigid-body column is made in place
        solved = system.chain.modes(targets, rigid_column=bool(rb))
    if solved is not None:
        omega, phi = solved
    elif len(targets):
        if hi is None:
            hi, total = _upper_bound(system, want)
        omega, phi = _find_roots(system, targets, hi, total)
    else:
        omega, phi = np.zeros(0), np.zeros((system.n_dof, 0))
    for nodes in rings:  # a ring joined by damping alone stays at rest in the elastic modes
        J = system.asm.node_inertia[nodes]
        x = phi[nodes]
        phi[nodes] = x - (J @ x)[None, :] / max(J.sum(), 1e-300)
    if rings:
        names = [train.disc_ids[i] for i in range(len(train.discs))
                 if any(system.asm.disc_node[i] in set(r.tolist()) for r in rings)]
        notes.append("joined by damping alone (damper free): " + ", ".join(f"'{d}'" for d in names)
                     + " takes no part in the undamped modes; see the damper-locked and damped frequencies")
    if rb:
        omega = np.r_[0.0, omega]
        if solved is None:
            phi = np.c_[np.ones(system.n_dof), phi]
    theta, torque, kin, lkin, strain = _modal_quantities(system, omega, phi)
    rigid = np.zeros(len(omega), bool)
    if rb:
        rigid[0] = True
        torque[0] = 0.0
        strain[0] = 0.0
    numbers = np.arange(len(omega)) + (1 - rb)
    if system.asm.n_finite_modes is not None and len(omega) + len(rings) >= system.asm.n_finite_modes:
        complete = float("inf")
    elif max_frequency_hz is not None:
        complete = float(max_frequency_hz)
    else:
        complete = float(omega[-1] / TWO_PI) if len(omega) else 0.0
    return Modes(train, omega / TWO_PI, rigid, numbers, theta, torque, kin, lkin, strain,
                 max_frequency_hz, requested, time.perf_counter() - t0, notes, complete,
                 phi.T)
