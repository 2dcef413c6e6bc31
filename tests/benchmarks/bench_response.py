"""Benchmark of the forced-response solver, from one run.

Run by hand (not collected by pytest):

    python3 tests/benchmarks/bench_response.py              # 200 discs, 2 000 speeds, 20 orders
    python3 tests/benchmarks/bench_response.py --discs 1000 --speeds 500
    python3 tests/benchmarks/bench_response.py --profile    # cProfile of ours

The train is an invented damped chain of N discs (seeded random inertias,
stiffnesses, disc dashpots to ground and hysteretic shafts), excited at the
first disc by 20 orders (0.5 ... 10) with amplitudes and phases, so every
(speed, order) pair is its own frequency: 40 000 complex solves.  Printed
side by side:

* ours: :func:`core.response.forced_response` end to
  end (referral, complex dynamic stiffness, tree elimination over all
  frequencies, torques per order and combined, power), plus the phase-aware
  synthesis (computed on first access) separately;
* banded: ``scipy.linalg.solve_banded`` of the complex tridiagonal system,
  one call per frequency (the LAPACK floor for a chain; timed on a sample of
  frequencies and scaled to all of them);
* dense: ``numpy.linalg.solve`` of the dense complex system, one call per
  frequency (sampled and scaled likewise).

Each timing is the best of a few repeats.  Ratios > 1 mean ours is faster.
Target (issue 6, item 2): 200 discs x 2 000 speeds x 20 orders well under a
second; cost linear in disc count per frequency.
"""
from __future__ import annotations

import argparse
import datetime
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np
import scipy
import scipy.linalg as sla

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from core.project import build_train  # noqa: E402
from core.response import forced_response  # noqa: E402

N_ORDERS = 20


def chain_document(n: int, seed: int = 1) -> tuple[dict, dict]:
    """An invented damped chain, clamped to ground at the last disc; returns (doc, arrays)."""
    rng = np.random.default_rng(seed)
    J = rng.uniform(0.5, 2.0, n)  # kg*m^2
    k = rng.uniform(1.0e6, 3.0e6, n)  # N*m/rad, k[n-1] to ground
    c = rng.uniform(2.0, 10.0, n)  # N*m*s/rad to ground
    eta = 0.02
    discs = [{"id": f"d{i}", "inertia": float(J[i]), "damping": float(c[i])} for i in range(n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}",
              "stiffness": float(k[i]), "loss_factor": eta} for i in range(n - 1)]
    links.append({"id": "root", "kind": "shaft", "from": f"d{n - 1}", "to": "ground",
                  "stiffness": float(k[n - 1]), "loss_factor": eta})
    orders = [{"order": 0.5 * (j + 1), "amplitude": float(100.0 / (j + 1)), "phase_deg": 17.0 * j}
              for j in range(N_ORDERS)]
    doc = {"title": f"chain {n}", "discs": discs, "links": links, "reference": "d0",
           "operating_speed": {"min": "300 rpm", "max": "1800 rpm"},
           "excitations": [{"name": "drive", "at": "d0", "orders": orders}]}
    return doc, {"J": J, "k": k, "c": c, "eta": eta, "orders": np.array([o["order"] for o in orders]),
                 "amp": np.array([o["amplitude"] * np.exp(1j * np.radians(o["phase_deg"])) for o in orders])}


def best_of(fn, repeats: int) -> float:
    best = np.inf
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def banded_system(arr, w):
    """Complex tridiagonal Z(w) of the chain in solve_banded layout (3, n)."""
    J, k, c, eta = arr["J"], arr["k"], arr["c"], arr["eta"]
    n = len(J)
    kc = k * (1 + 1j * eta)
    diag = -J * w ** 2 + 1j * c * w + 0j
    diag[:-1] += kc[:-1]
    diag[1:] += kc[:-1]
    diag[-1] += kc[-1]  # root spring to ground
    ab = np.zeros((3, n), complex)
    ab[0, 1:] = -kc[:-1]
    ab[1] = diag
    ab[2, :-1] = -kc[:-1]
    return ab


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--discs", type=int, default=200)
    p.add_argument("--speeds", type=int, default=2000)
    p.add_argument("--repeats", type=int, default=3)
    p.add_argument("--sample", type=int, default=400, help="frequencies timed for the LAPACK references")
    p.add_argument("--profile", action="store_true")
    a = p.parse_args(argv)
    n, ns = a.discs, a.speeds
    doc, arr = chain_document(n)
    train = build_train(doc)
    speeds = np.linspace(300, 1800, ns) * np.pi / 30
    if a.profile:
        import cProfile
        import pstats
        cProfile.runctx("forced_response(train, speeds)", globals(), locals(), "/tmp/bench_response.prof")
        pstats.Stats("/tmp/bench_response.prof").sort_stats("cumtime").print_stats(20)
        return 0

    forced_response(train, speeds[:50])  # warm up imports and caches
    holder = {}

    def ours():
        holder["r"] = forced_response(train, speeds)
    t_ours = best_of(ours, a.repeats)

    def synth():
        r = holder["r"]
        r._phased = None
        r.link_torque_phased
    t_synth = best_of(synth, a.repeats)

    n_freq = ns * N_ORDERS
    w_all = (arr["orders"][:, None] * speeds[None, :]).ravel()
    sample = w_all[np.linspace(0, n_freq - 1, min(a.sample, n_freq)).astype(int)]
    rhs = np.zeros(n, complex)

    def banded():
        for w in sample:
            rhs[0] = 1.0
            sla.solve_banded((1, 1), banded_system(arr, w), rhs)
    t_banded = best_of(banded, a.repeats) * n_freq / len(sample)

    def dense():
        for w in sample[: max(20, len(sample) // 10)]:
            ab = banded_system(arr, w)
            Z = np.diag(ab[1]) + np.diag(ab[0, 1:], 1) + np.diag(ab[2, :-1], -1)
            rhs[0] = 1.0
            np.linalg.solve(Z, rhs)
    t_dense = best_of(dense, a.repeats) * n_freq / max(20, len(sample) // 10)

    # correctness beside the speed: our disc angles against solve_banded at a few frequencies
    r = holder["r"]
    worst = 0.0
    for g in (0, N_ORDERS // 2, N_ORDERS - 1):
        for j in (0, ns // 3, ns - 1):
            w = arr["orders"][g] * speeds[j]
            f = np.zeros(n, complex)
            f[0] = arr["amp"][g]
            th = sla.solve_banded((1, 1), banded_system(arr, w), f)
            worst = max(worst, float(np.max(np.abs(np.abs(th) - r.order_disc_angle[g, :, j])
                                            / np.abs(th).max())))

    print(f"forced response benchmark — {datetime.date.today()}, {platform.processor() or platform.machine()}, "
          f"{os.cpu_count()} CPUs, numpy {np.__version__}, scipy {scipy.__version__}")
    print(f"chain of {n} discs, {ns} speeds x {N_ORDERS} orders = {n_freq} complex solves")
    print(f"{'':<38} {'seconds':>9} {'ours faster by':>15}")
    print(f"{'ours: forced_response (end to end)':<38} {t_ours:>9.3f} {'':>15}")
    print(f"{'ours: phase-aware synthesis (lazy)':<38} {t_synth:>9.3f} {'':>15}")
    print(f"{'scipy solve_banded per frequency':<38} {t_banded:>9.3f} {t_banded / t_ours:>14.1f}x")
    print(f"{'numpy dense solve per frequency':<38} {t_dense:>9.3f} {t_dense / t_ours:>14.1f}x")
    print(f"ours + synthesis vs solve_banded: {t_banded / (t_ours + t_synth):.1f}x; "
          f"largest disc-angle difference vs solve_banded {worst:.1e} (relative to the largest angle)")
    print("(reference timings sampled on "
          f"{len(sample)} / {max(20, len(sample) // 10)} frequencies and scaled to {n_freq})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
