"""Benchmark of the stiffness window against a dense eigenvalue sweep, from one run.

Run by hand (not collected by pytest):

    python3 tests/benchmarks/bench_window.py [--discs 200] [--sweep 2000] [--repeats 3]

The train: an invented n-disc marine propulsion line (a V12 medium-speed engine
with damper, six throws and flywheel; a highly flexible coupling given +/-25 %
stiffness tolerance; a 3.5:1 reduction gearbox; a 48 m line shaft of 380 mm lumped
into stations, k = G Ip / L and I = rho Ip L per station, G = 79.3 GPa,
rho = 7850 kg/m^3 (the textbook lumping of a uniform shaft, from memory); a
four-blade propeller), run at a constant 550 rpm (a controllable-pitch propeller),
the engine's orders 3 and 6 and the blade rate.
The element is the flexible coupling over its current value / 100 ... x 100.

Printed side by side:

* ours: :func:`core.design.element_window` -- every window edge to 1e-9
  relative by multisection on the Wittrick-Williams count, with its tolerance
  bands (the coupling's own +/-25 %), without the chart and with its 41-point
  chart of the natural frequencies;
* naive: ``scipy.linalg.eigh`` (LAPACK evr, eigenvalues below the screening
  range only) of the assembled lumped model, in standard form M^-1/2 K M^-1/2,
  at each of ``--sweep`` values of the coupling (log-spaced), both corners per
  value (the band), then pass/fail per value; its window edges are only known
  to the grid spacing (0.46 % for 2 000 values over x 10^4).

Also printed: how many sweep values the naive run classifies differently from
ours (only values within a grid step of an edge can differ).  Times are the best
of a few repeats.
"""
from __future__ import annotations

import argparse
import datetime
import math
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np
import scipy
import scipy.linalg as sla

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from core.assembly import assemble  # noqa: E402
from core.design import element_window  # noqa: E402
from core.project import build_train  # noqa: E402
from core.screening import excitation_lines, screening_cap_hz  # noqa: E402
from core.tolerance import corner_trains  # noqa: E402


def line_document(n: int = 200) -> dict:
    G, rho, D, length = 79.3e9, 7850.0, 0.38, 48.0
    stations = n - 11
    Ip = math.pi * D ** 4 / 32.0
    L = length / (stations - 1)
    k_line, i_line = G * Ip / L, rho * Ip * L
    discs = [{"id": "damper", "inertia": "60 kg*m^2"}]
    discs += [{"id": f"throw{c}", "inertia": "140 kg*m^2"} for c in range(1, 7)]
    discs += [{"id": "flywheel", "inertia": "1900 kg*m^2"}, {"id": "coupling_out", "inertia": "95 kg*m^2"},
              {"id": "pinion", "inertia": "30 kg*m^2"}, {"id": "wheel", "inertia": "1100 kg*m^2"}]
    discs += [{"id": f"st{j}", "inertia": f"{i_line:.4g} kg*m^2"} for j in range(stations)]
    discs[-1] = {"id": discs[-1]["id"], "inertia": "32000 kg*m^2"}  # the propeller with entrained water
    links = [{"id": "damper_crank", "kind": "shaft", "from": "damper", "to": "throw1", "stiffness": "70 MN*m/rad"}]
    links += [{"id": f"crank{c}", "kind": "shaft", "from": f"throw{c}", "to": f"throw{c + 1}",
               "stiffness": "105 MN*m/rad"} for c in range(1, 6)]
    links += [{"id": "crank_flywheel", "kind": "shaft", "from": "throw6", "to": "flywheel", "stiffness": "130 MN*m/rad"},
              {"id": "flex_coupling", "kind": "coupling", "from": "flywheel", "to": "coupling_out",
               "stiffness": "0.9 MN*m/rad", "stiffness_tolerance": "25 %"},
              {"id": "input_shaft", "kind": "shaft", "from": "coupling_out", "to": "pinion", "stiffness": "45 MN*m/rad"},
              {"id": "mesh", "kind": "gear_mesh", "from": "pinion", "to": "wheel", "speed_ratio": 1 / 3.5},
              {"id": "output_shaft", "kind": "shaft", "from": "wheel", "to": "st0", "stiffness": "300 MN*m/rad"}]
    links += [{"id": f"line{j}", "kind": "shaft", "from": f"st{j}", "to": f"st{j + 1}",
               "stiffness": f"{k_line / 1e6:.4g} MN*m/rad"} for j in range(stations - 1)]
    assert len(discs) == n and len(links) == n - 1
    return {"format": "twistwise-project", "version": 1, "title": f"Line shaft, {n} discs",
            "discs": discs, "links": links, "reference": "throw1",
            "operating_speed": {"min": "550 rpm", "max": "550 rpm"}, "margin_percent": 10,
            "excitations": [
                {"name": "Engine firing (12 cylinders, four-stroke)", "at": "throw3", "orders": [3, 6]},
                {"name": "Propeller blade rate (4 blades)", "at": discs[-1]["id"], "orders": [4]}]}


def naive_window(train, element, values, tol):
    """pass/fail at each value by dense eigh of both corners (lumped model, referred)."""
    op = train.operating
    m = op.margin
    lines = excitation_lines(train, op)
    forb = np.array([(l.frequency(op.speed_min) * (1 - m), l.frequency(op.speed_max) * (1 + m)) for l in lines])
    cap_w2 = (2 * np.pi * screening_cap_hz(lines, op.speed_max, m)) ** 2
    corners = corner_trains(train, skip=f"link:{element}")
    mats = []
    for t in corners:
        a = assemble(t)
        mem = a.members
        n = a.n_nodes
        K = np.zeros((n, n))
        for i, (p, q, k) in enumerate(zip(mem.a, mem.b, mem.k)):
            K[p, p] += k
            if q >= 0:
                K[q, q] += k
                K[p, q] -= k
                K[q, p] -= k
        li = t.link_ids.index(element)
        e = int(np.flatnonzero(mem.link == li)[0])
        u = np.zeros(n)
        u[mem.a[e]] = 1.0
        if mem.b[e] >= 0:
            u[mem.b[e]] = -1.0
        mats.append((K - mem.k[e] * np.outer(u, u), np.diag(a.node_inertia), u, mem.scale[e] ** 2))
    # standard form A = M^-1/2 K M^-1/2 once per corner (every node has inertia here)
    std = []
    for K0, M, u, s2 in mats:
        r = 1.0 / np.sqrt(np.diag(M))
        std.append((K0 * r[:, None] * r[None, :], u * r, s2))
    ok = np.empty(len(values), bool)
    for j, v in enumerate(values):
        f = []
        for (A0, ur, s2), c in zip(std, (1 - tol[0], 1 + tol[1])):
            lam = sla.eigh(A0 + c * v * s2 * np.outer(ur, ur), eigvals_only=True, driver="evr",
                           subset_by_value=(1e-9 * cap_w2, 4 * cap_w2))
            f.append(np.sqrt(lam) / (2 * np.pi))
        lo_f, hi_f = f[0], f[1]
        nn = min(len(lo_f), len(hi_f))
        lo_f, hi_f = lo_f[:nn], hi_f[:nn]
        ok[j] = not np.any((hi_f[:, None] > forb[None, :, 0]) & (lo_f[:, None] < forb[None, :, 1]))
    return ok


def machine() -> str:
    cpu = platform.processor() or "unknown CPU"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return (f"{datetime.date.today().isoformat()}, {os.cpu_count()} CPUs (nproc {len(os.sched_getaffinity(0))}), "
            f"{cpu}, Python {platform.python_version()}, numpy {np.__version__}, scipy {scipy.__version__}")


def best_of(fn, repeats):
    best, out = math.inf, None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--discs", type=int, default=200)
    ap.add_argument("--sweep", type=int, default=2000)
    ap.add_argument("--repeats", type=int, default=3)
    a = ap.parse_args()
    train = build_train(line_document(a.discs))
    el = "flex_coupling"
    print(f"Machine: {machine()}")
    print(f"Train: {train.title}; element '{el}', range current / 100 ... x 100, ±25 % own tolerance")
    t_win, w = best_of(lambda: element_window(train, el, chart_points=0), a.repeats)
    def with_chart():
        w = element_window(train, el)
        w.chart  # noqa: B018 -- the chart is computed on first use
        return w

    t_chart, wc = best_of(with_chart, a.repeats)
    values = np.geomspace(*w.range, a.sweep)
    t_naive, ok = best_of(lambda: naive_window(train, el, values, w.tolerance), 1)
    inside = np.array([any(lo <= v <= hi for lo, hi in w.admissible) for v in values])
    differ = int(np.count_nonzero(inside != ok))
    print(f"window: {len(w.admissible)} admissible interval(s): "
          + ", ".join(f"{lo / 1e3:.6g}-{hi / 1e3:.6g} kN*m/rad" for lo, hi in w.admissible))
    print(f"{'method':<44} {'seconds':>9} {'naive / method':>15}")
    print(f"{'ours: window (edges to 1e-9), no chart':<44} {t_win:9.4f} {t_naive / t_win:14.1f}x")
    print(f"{'ours: window + 41-point frequency chart':<44} {t_chart:9.4f} {t_naive / t_chart:14.1f}x")
    print(f"{f'naive: dense eigh sweep, {a.sweep} values x 2':<44} {t_naive:9.4f} {1.0:14.1f}x")
    print(f"sweep values classified differently from ours: {differ} of {a.sweep} "
          f"(grid step {100 * (values[1] / values[0] - 1):.2f} %)")
    print("Target (issue 11, item 9): the window of a 200-disc train under 0.5 s.")
    return 0


if __name__ == "__main__":
    sys.exit(main())
