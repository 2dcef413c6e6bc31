"""Symmetric Gaussian elimination on a tree, vectorised over frequency.

A train's dynamic stiffness matrix K(omega) has the sparsity of a tree.
Eliminating leaves ("rake") and independent chain nodes ("compress") in
rounds keeps it sparse (no fill-in) and takes O(log n) rounds of array
operations for any tree shape (tree contraction: Miller & Reif, "Parallel
tree contraction and its application", FOCS 1985).  The pivots give

* the inertia of K(omega): by Sylvester's law of inertia and Haynsworth's
  inertia additivity, the number of negative pivots is the number of negative
  eigenvalues of K(omega) — the Sturm count used to bracket natural
  frequencies (Wittrick & Williams 1971);
* the determinant (product of pivots), for root polishing;
* linear solves, for mode shapes by inverse iteration.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass
class Round:
    kind: str  # "rake" or "compress"
    nodes: np.ndarray  # eliminated nodes
    e1: np.ndarray  # edge to the (first) neighbour
    n1: np.ndarray  # first neighbour
    e2: np.ndarray | None = None  # compress: edge to the second neighbour
    n2: np.ndarray | None = None
    # scatter-add plan for diagonal updates of the neighbours
    targets: np.ndarray | None = None
    order: np.ndarray | None = None
    starts: np.ndarray | None = None


@dataclass
class Schedule:
    n_nodes: int
    rounds: list
    root: int


def _scatter_plan(targets: np.ndarray):
    order = np.argsort(targets, kind="stable")
    t = targets[order]
    starts = np.flatnonzero(np.r_[True, t[1:] != t[:-1]])
    return t[starts], order, starts


def build_schedule(n_nodes: int, edges_a: np.ndarray, edges_b: np.ndarray) -> Schedule:
    """Plan the elimination order for a tree given as edge lists."""
    adj: list[dict[int, int]] = [dict() for _ in range(n_nodes)]
    for e, (a, b) in enumerate(zip(edges_a.tolist(), edges_b.tolist())):
        adj[a][b] = e
        adj[b][a] = e
    active = set(range(n_nodes))
    # fixed pseudo-random priorities pick independent chain nodes deterministically
    priority = (np.arange(n_nodes, dtype=np.uint64) * np.uint64(2654435761)) % np.uint64(2 ** 32)
    priority = priority.tolist()
    rounds = []
    while len(active) > 1:
        leaves = [v for v in active if len(adj[v]) == 1]
        if len(active) == 2:
            leaves = leaves[:1]
        if leaves:
            par = [next(iter(adj[v])) for v in leaves]
            edg = [adj[v][p] for v, p in zip(leaves, par)]
            for v, p in zip(leaves, par):
                del adj[p][v]
                adj[v].clear()
                active.discard(v)
            r = Round("rake", np.array(leaves), np.array(edg), np.array(par))
            r.targets, r.order, r.starts = _scatter_plan(r.n1)
            rounds.append(r)
        if len(active) <= 2:
            continue
        chosen = []
        for v in active:
            nb = adj[v]
            if len(nb) != 2:
                continue
            pv = priority[v]
            if all(len(adj[u]) != 2 or priority[u] < pv for u in nb):
                chosen.append(v)
        if not chosen:
            continue
        V, E1, E2, A, B = [], [], [], [], []
        for v in chosen:
            (a, ea), (b, eb) = adj[v].items()
            V.append(v); A.append(a); B.append(b); E1.append(ea); E2.append(eb)
            del adj[a][v]
            del adj[b][v]
            adj[a][b] = ea  # edge slot ea now joins a and b
            adj[b][a] = ea
            adj[v].clear()
            active.discard(v)
        r = Round("compress", np.array(V), np.array(E1), np.array(A), np.array(E2), np.array(B))
        r.targets, r.order, r.starts = _scatter_plan(np.r_[r.n1, r.n2])
        rounds.append(r)
    root = next(iter(active))
    return Schedule(n_nodes, rounds, root)


def _safe(d, tiny):
    return np.where(d == 0.0, tiny, d)


def eliminate(schedule: Schedule, D: np.ndarray, W: np.ndarray, tiny: float, keep: bool = False):
    """Eliminate in place.  D: (n_nodes, m) diagonal, W: (n_edges, m) off-diagonal.

    Returns (negative pivot count (m,), log|det| (m,), factors or None).
    """
    m = D.shape[1]
    neg = np.zeros(m, np.int64)
    logdet = np.zeros(m)
    factors = [] if keep else None
    for r in schedule.rounds:
        d = _safe(D[r.nodes], tiny)
        neg += np.count_nonzero(d < 0, axis=0)
        logdet += np.log(np.abs(d)).sum(axis=0)
        w1 = W[r.e1]
        if r.kind == "rake":
            upd = w1 * w1 / d
            if keep:
                factors.append((d, w1, None))
        else:
            w2 = W[r.e2]
            upd = np.concatenate([w1 * w1 / d, w2 * w2 / d])
            W[r.e1] = -w1 * w2 / d
            if keep:
                factors.append((d, w1, w2))
        D[r.targets] -= np.add.reduceat(upd[r.order], r.starts, axis=0)
    d = _safe(D[schedule.root], tiny)
    neg += d < 0
    logdet += np.log(np.abs(d))
    if keep:
        factors.append(d)
    return neg, logdet, factors


def solve(schedule: Schedule, factors, rhs: np.ndarray) -> np.ndarray:
    """Solve K x = rhs (shape (n_nodes, m)) with factors from :func:`eliminate`."""
    b = rhs.copy()
    for r, (d, w1, w2) in zip(schedule.rounds, factors[:-1]):
        bv = b[r.nodes] / d
        if r.kind == "rake":
            np.subtract.at(b, r.n1, w1 * bv)
        else:
            np.subtract.at(b, r.n1, w1 * bv)
            np.subtract.at(b, r.n2, w2 * bv)
    x = np.zeros_like(b)
    x[schedule.root] = b[schedule.root] / factors[-1]
    for r, (d, w1, w2) in zip(reversed(schedule.rounds), reversed(factors[:-1])):
        acc = b[r.nodes] - w1 * x[r.n1]
        if w2 is not None:
            acc -= w2 * x[r.n2]
        x[r.nodes] = acc / d
    return x
