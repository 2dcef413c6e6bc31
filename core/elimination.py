"""Symmetric Gaussian elimination on a tree, vectorised over frequency.

A train's dynamic stiffness matrix K(omega) has the sparsity of a tree.
Eliminating leaves ("rake") and independent chain nodes ("compress") in
rounds keeps it sparse (no fill-in) and takes O(log n) rounds of array
operations for any tree shape (tree contraction: Miller & Reif, "Parallel
tree contraction and its application", FOCS 1985).  The pivots give

* the inertia of K(omega): by Sylvester's law of inertia and Haynsworth's
  inertia additivity, the number of negative pivots is the number of negative
  eigenvalues of K(omega) -- the Sturm count used to bracket natural
  frequencies (Wittrick & Williams 1971);
* the determinant (product of pivots), for root polishing;
* linear solves, for mode shapes by inverse iteration.

Speed: the plan is built with numpy (no Python loop over nodes) and relabels
nodes and edge slots in elimination order, so every round reads its pivots and
off-diagonals as contiguous slices.  A compress round joins the two neighbours
of a chain node by a new edge slot; every slot is consumed exactly once.
Neighbour updates are plain indexed subtractions where a round's targets are
distinct (always for the child side, see :func:`build_schedule`), otherwise a
sparse summation matrix; ``np.add.at`` is avoided.
"""
from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np


class RowSum:
    """Sum of columns into rows, ``S @ X`` for the 0/1 matrix with a one at each
    (rows[j], cols[j]): out[rows[j]] += X[cols[j]].  A small numpy stand-in for a
    sparse incidence matrix (sorted once; one ``np.add.reduceat`` per product), so the
    solver needs no scipy.sparse on its way (the command line starts faster)."""

    def __init__(self, rows, cols, shape):
        rows = np.asarray(rows, np.int64)
        cols = np.asarray(cols, np.int64)
        order = np.argsort(rows, kind="stable")
        self.rows, self.cols = rows[order], cols[order]
        self.shape = shape
        if len(self.rows):
            self.starts = np.flatnonzero(np.r_[True, self.rows[1:] != self.rows[:-1]])
        else:
            self.starts = np.zeros(0, np.int64)
        self.targets = self.rows[self.starts]

    def __matmul__(self, x):
        x = np.asarray(x)
        out = np.zeros((self.shape[0],) + x.shape[1:], dtype=np.result_type(x.dtype, np.float64))
        if len(self.cols):
            out[self.targets] = np.add.reduceat(x[self.cols], self.starts, axis=0)
        return out


@dataclass
class Round:
    kind: str  # "rake" or "compress"
    nodes: slice  # eliminated nodes (elimination order labels)
    e1: slice  # slots of the edges to the first neighbour
    n1: np.ndarray  # first neighbour (elimination order label)
    e2: slice | None = None  # compress: slots of the edges to the second neighbour
    n2: np.ndarray | None = None
    new: np.ndarray | None = None  # compress: slot of the new edge n1 - n2
    # n1 targets repeat (several leaves / chain nodes on one node): summation plan
    n1_unique: np.ndarray | None = None
    n1_sum: RowSum | None = None


@dataclass
class Schedule:
    n_nodes: int
    rounds: list
    root: int  # original label of the last node
    order: np.ndarray  # original node label at each elimination position
    slot_of_edge: np.ndarray  # elimination slot of every original edge
    n_slots: int

    @property
    def position(self) -> np.ndarray:
        """Elimination position of every original node."""
        pos = np.empty(self.n_nodes, np.int64)
        pos[self.order] = np.arange(self.n_nodes)
        return pos


PYTHON_DFS_MAX = 40_000  # above this many edges the compiled traversal of scipy pays for its import


def path_order(n_nodes: int, ea, eb) -> np.ndarray | None:
    """The nodes in order along the tree when it is a path (a chain: every node joined to
    at most two others, n - 1 edges, all connected), from one end; None otherwise.

    A chain numbered in order (edge j joins nodes j and j + 1, either way round, in any
    edge order) is recognised with a few array operations; any other numbering of a
    chain is walked once."""
    ea = np.asarray(ea, np.int64)
    eb = np.asarray(eb, np.int64)
    if n_nodes < 1 or len(ea) != n_nodes - 1:
        return None
    if n_nodes == 1:
        return np.zeros(1, np.int64)
    lo, hi = np.minimum(ea, eb), np.maximum(ea, eb)
    if np.all(hi - lo == 1) and np.array_equal(np.sort(lo), np.arange(n_nodes - 1)):
        return np.arange(n_nodes, dtype=np.int64)
    deg = np.bincount(ea, minlength=n_nodes) + np.bincount(eb, minlength=n_nodes)
    if deg.max() > 2 or deg.min() < 1:
        return None
    # neighbour table: two slots per node, -1 where a chain end has only one
    src = np.r_[ea, eb]
    dst = np.r_[eb, ea]
    o = np.argsort(src, kind="stable")
    src, dst = src[o], dst[o]
    first = np.searchsorted(src, np.arange(n_nodes))
    nb = np.full((n_nodes, 2), -1, np.int64)
    nb[:, 0] = dst[first]
    two = deg == 2
    nb[two, 1] = dst[first[two] + 1]
    nb0, nb1 = nb[:, 0].tolist(), nb[:, 1].tolist()
    v, prev = int(np.flatnonzero(deg == 1)[0]), -1
    out = [v]
    for _ in range(n_nodes - 1):
        nxt = nb0[v] if nb0[v] != prev else nb1[v]
        if nxt < 0:
            return None  # the walk ended early: not connected (a cycle elsewhere)
        prev, v = v, nxt
        out.append(v)
    return np.array(out, np.int64)


def _preorder(n_nodes, ea, eb, start: int = 0):
    """Depth-first preorder rank of the nodes reachable from ``start`` (others: -1).

    A chain is ranked along itself from its end (:func:`path_order`); small trees are
    walked here (an iterative depth-first search over adjacency lists built with
    numpy); large ones by scipy.sparse.csgraph, imported only then."""
    if n_nodes <= 1 or not len(ea):
        return np.arange(n_nodes)
    pre = np.full(n_nodes, -1, np.int64)
    chain = path_order(n_nodes, ea, eb) if len(ea) == n_nodes - 1 else None
    if chain is not None:
        pre[chain] = np.arange(n_nodes)
        return pre
    if len(ea) > PYTHON_DFS_MAX:
        import scipy.sparse as sp
        from scipy.sparse.csgraph import depth_first_order
        g = sp.coo_matrix((np.ones(len(ea)), (ea, eb)), shape=(n_nodes, n_nodes)).tocsr()
        order = depth_first_order(g, start, directed=False, return_predecessors=False)
        pre[order] = np.arange(len(order))
        return pre
    # adjacency in CSR form, neighbours in ascending order (as csgraph visits them)
    src = np.r_[ea, eb]
    dst = np.r_[eb, ea]
    o = np.lexsort((dst, src))
    src, dst = src[o], dst[o]
    ptr = np.searchsorted(src, np.arange(n_nodes + 1)).tolist()
    nbr = dst.tolist()
    seen = [False] * n_nodes
    out = []
    stack = [start]
    while stack:
        v = stack.pop()
        if seen[v]:
            continue
        seen[v] = True
        out.append(v)
        # push in reverse so the lowest neighbour is visited first
        for w in reversed(nbr[ptr[v]:ptr[v + 1]]):
            if not seen[w]:
                stack.append(w)
    pre[np.array(out, np.int64)] = np.arange(len(out))
    return pre


def build_schedule(n_nodes: int, edges_a: np.ndarray, edges_b: np.ndarray) -> Schedule:
    """Plan the elimination order for a tree given as edge lists (numpy, O(n log n)).

    Orientation: with a depth-first preorder, every edge of a partly contracted
    tree still joins an ancestor to a descendant, so the second neighbour of a
    compressed node (the one later in preorder) is its child, which has no other
    parent: the second-neighbour updates of a round never collide.
    """
    ea = np.asarray(edges_a, np.int64)
    eb = np.asarray(edges_b, np.int64)
    n_edges = len(ea)
    pre = _preorder(n_nodes, ea, eb)
    # the preorder restricted to the nodes still alive is a depth-first preorder of the
    # contracted tree (contraction keeps every subtree contiguous in it, and a chain node's
    # child follows it directly): ranks per round without a new traversal
    live = np.argsort(pre, kind="stable") if n_nodes and pre.min() >= 0 else None
    rank = np.zeros(n_nodes, np.int64)
    priority = (np.arange(n_nodes, dtype=np.uint64) * np.uint64(2654435761)) % np.uint64(2 ** 32)
    A, B, S = ea.copy(), eb.copy(), np.arange(n_edges, dtype=np.int64)
    alive = np.ones(n_nodes, bool)
    n_alive = n_nodes
    next_slot = n_edges
    raw = []  # (kind, nodes, s1, n1, s2, n2, new)
    while n_alive > 1:
        deg = np.bincount(A, minlength=n_nodes) + np.bincount(B, minlength=n_nodes)
        la, lb = deg[A] == 1, deg[B] == 1
        la &= ~lb  # the last edge: rake only its b end
        leaf = np.r_[A[la], B[lb]]
        if len(leaf):
            raw.append(("rake", leaf, np.r_[S[la], S[lb]], np.r_[B[la], A[lb]], None, None, None))
            keep = ~(la | lb)
            A, B, S = A[keep], B[keep], S[keep]
            alive[leaf] = False
            n_alive -= len(leaf)
        if n_alive <= 2:
            continue
        deg = np.bincount(A, minlength=n_nodes) + np.bincount(B, minlength=n_nodes)
        # incidences (node, neighbour, slot, edge index) of degree-2 nodes
        inc_v = np.r_[A, B]
        inc_u = np.r_[B, A]
        inc_s = np.r_[S, S]
        inc_e = np.r_[np.arange(len(A)), np.arange(len(A))]
        two = deg[inc_v] == 2
        inc_v, inc_u, inc_s, inc_e = inc_v[two], inc_u[two], inc_s[two], inc_e[two]
        # independent set: even depth-first rank in the current tree, so that along
        # a chain every other node goes (half per round); where two even nodes
        # meet (a branch point), the higher fixed priority wins
        if live is not None:
            live = live[alive[live]]
            rank[live] = np.arange(len(live))
        else:  # not all connected to node 0: a traversal of the current tree
            rank = _preorder(n_nodes, A, B, int(A[0]))
        even = (rank % 2) == 0
        cand = np.zeros(n_nodes, bool)
        cand[inc_v] = even[inc_v]
        beaten = cand[inc_u] & (deg[inc_u] == 2) & (priority[inc_u] > priority[inc_v])
        lost = ~cand
        lost[inc_v[beaten]] = True
        chosen_inc = ~lost[inc_v]
        if not chosen_inc.any():
            continue
        inc_v, inc_u, inc_s, inc_e = (inc_v[chosen_inc], inc_u[chosen_inc], inc_s[chosen_inc],
                                      inc_e[chosen_inc])
        o = np.lexsort((pre[inc_u], inc_v))  # per node: earlier-preorder neighbour first
        inc_v, inc_u, inc_s, inc_e = inc_v[o], inc_u[o], inc_s[o], inc_e[o]
        v = inc_v[0::2]
        n1, n2 = inc_u[0::2], inc_u[1::2]
        s1, s2 = inc_s[0::2], inc_s[1::2]
        new = np.arange(next_slot, next_slot + len(v))
        next_slot += len(v)
        raw.append(("compress", v, s1, n1, s2, n2, new))
        keep = np.ones(len(A), bool)
        keep[inc_e] = False
        A, B, S = np.r_[A[keep], n1], np.r_[B[keep], n2], np.r_[S[keep], new]
        alive[v] = False
        n_alive -= len(v)
    root = int(np.flatnonzero(alive)[0]) if n_nodes else 0
    order = np.r_[np.concatenate([r[1] for r in raw]) if raw else np.zeros(0, np.int64), root]
    order = order.astype(np.int64)
    pos = np.empty(n_nodes, np.int64)
    pos[order] = np.arange(n_nodes)
    consumed = [s for r in raw for s in ((r[2],) if r[0] == "rake" else (r[2], r[4]))]
    consumed = np.concatenate(consumed) if consumed else np.zeros(0, np.int64)
    slot_pos = np.empty(next_slot, np.int64)
    slot_pos[consumed] = np.arange(len(consumed))
    rounds = []
    i_node = i_slot = 0
    for kind, nodes, s1, n1, s2, n2, new in raw:
        k = len(nodes)
        nsl = slice(i_node, i_node + k)
        i_node += k
        e1 = slice(i_slot, i_slot + k)
        i_slot += k
        r = Round(kind, nsl, e1, pos[n1])
        if kind == "compress":
            r.e2 = slice(i_slot, i_slot + k)
            i_slot += k
            r.n2 = pos[n2]
            r.new = slot_pos[new]
        u, inv = np.unique(r.n1, return_inverse=True)
        if len(u) < k:
            r.n1_unique = u
            r.n1_sum = RowSum(inv.ravel(), np.arange(k), (len(u), k))
        rounds.append(r)
    return Schedule(n_nodes, rounds, root, order, slot_pos[:n_edges], next_slot)


_PLANS: "OrderedDict[tuple, Schedule]" = OrderedDict()
_PLANS_LOCK = threading.Lock()  # the desktop program solves in a worker thread


def cached_schedule(n_nodes: int, edges_a: np.ndarray, edges_b: np.ndarray) -> Schedule:
    """:func:`build_schedule`, remembered for the last few topologies.

    The plan depends only on which nodes are joined, not on any value, and a live
    edit of a stiffness or an inertia keeps the topology; schedules are read-only.
    """
    ea = np.ascontiguousarray(edges_a, np.int64)
    eb = np.ascontiguousarray(edges_b, np.int64)
    key = (n_nodes, ea.tobytes(), eb.tobytes())
    with _PLANS_LOCK:
        plan = _PLANS.get(key)
        if plan is not None:
            _PLANS.move_to_end(key)
            return plan
    plan = build_schedule(n_nodes, ea, eb)
    with _PLANS_LOCK:
        _PLANS[key] = plan
        while len(_PLANS) > 8:
            _PLANS.popitem(last=False)
    return plan


def _sub_n1(D, r, upd):
    if r.n1_sum is None:
        D[r.n1] -= upd
    else:
        D[r.n1_unique] -= r.n1_sum @ upd


def _safe(d, tiny):
    return np.where(d == 0.0, tiny, d)


def permute(schedule: Schedule, D: np.ndarray, W: np.ndarray):
    """Diagonal and off-diagonal from original node / edge order to elimination order."""
    Dp = D[schedule.order]
    Wp = np.empty((schedule.n_slots,) + D.shape[1:], dtype=np.result_type(D, W))
    if len(schedule.slot_of_edge):
        Wp[schedule.slot_of_edge] = W
    return Dp, Wp


def factor(schedule: Schedule, D: np.ndarray, W: np.ndarray, tiny: float, logdet: bool = True,
           keep: bool = False, squared: bool = False):
    """Eliminate in elimination order (arrays from :func:`permute`), overwriting D and W.

    ``squared``: W holds the squares of the off-diagonals (a count only).

    Returns (negative pivot count (m,), log|det| (m,) or None, factors or None).
    The count is only meaningful for real (Hermitian) K.

    A zero pivot is replaced by ``tiny`` (as in LAPACK's bisection, dstebz)
    when the determinant or the factors are wanted.  For a count alone the
    IEEE infinities of 1/0 give the same count as that replacement, so the
    check is skipped; a column that met 0 * inf (NaN at the last pivot) is
    returned with count -1, to be redone with ``logdet=True``.
    """
    if not (logdet or keep or np.iscomplexobj(D)):
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            neg = _count(schedule, D, W if squared else W * W)
        bad = np.isnan(D[-1])
        if bad.any():
            neg[bad] = -1  # the caller redoes these columns with logdet=True
        return neg, None, None
    m = D.shape[1:]
    real = not np.iscomplexobj(D)
    neg = np.zeros(m, np.int64)
    ld = np.zeros(m) if logdet else None
    factors = [] if keep else None
    for r in schedule.rounds:
        d = D[r.nodes]
        if (d == 0.0).any():
            d = _safe(d, tiny)
        if real:
            neg += np.count_nonzero(d < 0, axis=0)
        if logdet:
            ld += np.log(np.abs(d)).sum(axis=0)
        inv = 1.0 / d
        w1 = W[r.e1]
        w1i = w1 * inv
        if r.kind == "rake":
            _sub_n1(D, r, w1 * w1i)
            if keep:
                factors.append((inv, w1, None))
        else:
            w2 = W[r.e2]
            _sub_n1(D, r, w1 * w1i)
            D[r.n2] -= w2 * w2 * inv
            W[r.new] = -w1i * w2
            if keep:
                factors.append((inv, w1, w2))
    d = D[-1]
    if d.size and (d == 0.0).any():
        d = _safe(d, tiny)
    if real:
        neg += d < 0
    if logdet:
        ld += np.log(np.abs(d))
    if keep:
        factors.append(1.0 / d)
    return neg, ld, factors


def _count(schedule: Schedule, D: np.ndarray, Q: np.ndarray) -> np.ndarray:
    """Negative pivots only: the hot loop of bracketing, with reused work buffers.

    ``Q`` holds squared off-diagonals: the pivots depend on w^2 only, and a
    compress round's new edge is then simply (w1^2 / d) (w2^2 / d), the
    product of the two diagonal updates.
    """
    m = D.shape[1]
    neg = np.zeros(m, np.int64)
    big = max((r.nodes.stop - r.nodes.start for r in schedule.rounds), default=0)
    inv_b, a_b, b_b = (np.empty((big, m)) for _ in range(3))
    sign_b = np.empty((big, m), bool)
    for r in schedule.rounds:
        k = r.nodes.stop - r.nodes.start
        d = D[r.nodes]
        neg += np.count_nonzero(np.less(d, 0.0, out=sign_b[:k]), axis=0)
        inv = np.divide(1.0, d, out=inv_b[:k])
        u1 = np.multiply(Q[r.e1], inv, out=a_b[:k])
        _sub_n1(D, r, u1)
        if r.kind == "compress":
            u2 = np.multiply(Q[r.e2], inv, out=b_b[:k])
            D[r.n2] -= u2
            Q[r.new] = np.multiply(u1, u2, out=u2)
    neg += D[-1] < 0
    return neg


def factor_solve(schedule: Schedule, D: np.ndarray, W: np.ndarray, b: np.ndarray, tiny: float):
    """Negative pivots of K and the solution of K x = b, in one elimination sweep.

    The right-hand side is reduced in the same rounds as the matrix, and the
    back substitution keeps only b_v / d, w1 / d and w2 / d per round, so a
    shifted solve costs little more than a count.  All arrays in elimination
    order; D, W and b are overwritten.  Returns (count (m,), x (n, m)).
    """
    m = D.shape[1]
    neg = np.zeros(m, np.int64)
    saved = []
    big = max((r.nodes.stop - r.nodes.start for r in schedule.rounds), default=0)
    inv_b, t_b = np.empty((big, m)), np.empty((big, m))
    sign_b = np.empty((big, m), bool)
    for r in schedule.rounds:
        k = r.nodes.stop - r.nodes.start
        d = D[r.nodes]
        if not np.all(d):  # a zero pivot (never NaN here): LAPACK's tiny replacement
            d = _safe(d, tiny)
        neg += np.count_nonzero(np.less(d, 0.0, out=sign_b[:k]), axis=0)
        inv = np.divide(1.0, d, out=inv_b[:k])
        t = t_b[:k]
        w1 = W[r.e1]
        w1i = w1 * inv
        bv = b[r.nodes] * inv
        _sub_n1(D, r, np.multiply(w1, w1i, out=t))
        _sub_n1(b, r, np.multiply(w1, bv, out=t))
        if r.kind == "compress":
            w2 = W[r.e2]
            w2i = w2 * inv
            D[r.n2] -= np.multiply(w2, w2i, out=t)
            b[r.n2] -= np.multiply(w2, bv, out=t)
            np.multiply(w1i, w2, out=t)
            W[r.new] = np.negative(t, out=t)
            saved.append((bv, w1i, w2i))
        else:
            saved.append((bv, w1i, None))
    d = D[-1]
    if d.size and (d == 0.0).any():
        d = _safe(d, tiny)
    neg += d < 0
    x = b
    x[-1] = b[-1] / d
    for r, (bv, w1i, w2i) in zip(reversed(schedule.rounds), reversed(saved)):
        acc = bv - w1i * x[r.n1]
        if w2i is not None:
            acc -= w2i * x[r.n2]
        x[r.nodes] = acc
    return neg, x


def solve_factored(schedule: Schedule, factors, b: np.ndarray) -> np.ndarray:
    """Solve K x = b in elimination order with factors from :func:`factor` (b is overwritten)."""
    for r, (inv, w1, w2) in zip(schedule.rounds, factors[:-1]):
        bv = b[r.nodes] * inv
        _sub_n1(b, r, w1 * bv)
        if w2 is not None:
            b[r.n2] -= w2 * bv
    x = b
    x[-1] = b[-1] * factors[-1]
    for r, (inv, w1, w2) in zip(reversed(schedule.rounds), reversed(factors[:-1])):
        acc = x[r.nodes] - w1 * x[r.n1]
        if w2 is not None:
            acc -= w2 * x[r.n2]
        x[r.nodes] = acc * inv
    return x


def eliminate(schedule: Schedule, D: np.ndarray, W: np.ndarray, tiny: float, keep: bool = False):
    """Eliminate K given in original order.  D: (n_nodes, m) diagonal, W: (n_edges, m) off-diagonal.

    Returns (negative pivot count (m,), log|det| (m,), factors or None).
    """
    Dp, Wp = permute(schedule, D, W)
    return factor(schedule, Dp, Wp, tiny, True, keep)


def solve(schedule: Schedule, factors, rhs: np.ndarray) -> np.ndarray:
    """Solve K x = rhs (shape (n_nodes, m), original order) with factors from :func:`eliminate`."""
    x = solve_factored(schedule, factors, rhs[schedule.order].astype(
        np.result_type(rhs, factors[-1]), copy=True))
    out = np.empty_like(x)
    out[schedule.order] = x
    return out
