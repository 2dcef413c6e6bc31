"""Benchmark: a 200-disc train's 10-second synchronous-motor start-up, resolved up to
2.5 x line frequency (f_res = 125 Hz at 50 Hz), by core.transient (trapezoidal rule,
sparse LU factored once) against scipy's solve_ivp (RK45) on the full first-order
system of the same lumped model.  Prints both times (wall clock and CPU, since the
machine may be shared), their ratio and how far the two peak torques agree;
``--half-step`` also repeats ours at half the step.  Run by hand:
python3 tests/benchmarks/bench_transient.py [--half-step]
"""
from __future__ import annotations

import math
import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", ".."))

from core.project import build_train  # noqa: E402
from core.transient import _state_torque, lumped_model, run_event  # noqa: E402


def bench_document(n_discs: int = 200) -> dict:
    """An invented motor - coupling - compressor line: a 40-station motor rotor, a
    flexible coupling, and a compressor rotor of n_discs - 40 stations."""
    discs, links = [], []
    n_motor = 40
    for i in range(n_discs):
        motor = i < n_motor
        discs.append({"id": f"d{i}", "inertia": f"{(4.0 if motor else 1.2) * (1 + 0.3 * math.sin(i)):.4f} kg*m^2"})
        if i:
            if i == n_motor:
                links.append({"id": "coupling", "kind": "coupling", "from": f"d{i - 1}", "to": f"d{i}",
                              "stiffness": "0.9 MN*m/rad", "loss_factor": 0.08,
                              "permissible_torque": "60 kN*m"})
            else:
                links.append({"id": f"s{i}", "kind": "shaft", "from": f"d{i - 1}", "to": f"d{i}",
                              "segments": [{"length": "80 mm", "outer_diameter": f"{180 if i < n_motor else 140} mm"}],
                              "material": "alloy_steel", "damping": "5 N*m*s/rad"})
    rated = 19.1e3
    return {
        "title": "Benchmark line", "discs": discs, "links": links,
        "transients": [{
            "name": "Start-up", "duration": "10 s",
            "torques": [
                {"at": "d0", "synchronous_start": {
                    "line_frequency": "50 Hz", "synchronous_speed": "1500 rpm", "voltage_factor": 0.9,
                    "average_torque": [["0 rpm", 1.1 * rated], ["750 rpm", 1.0 * rated],
                                       ["1350 rpm", 1.6 * rated], ["1470 rpm", 1.2 * rated],
                                       ["1500 rpm", 0.0]],
                    "pulsating_torque": [["0 rpm", 0.6 * rated], ["1200 rpm", 0.3 * rated],
                                         ["1500 rpm", 0.05 * rated]]}},
                {"at": f"d{n_discs - 1}", "speed_table": [
                    ["0 rpm", -0.05 * rated], ["500 rpm", -0.08 * rated], ["1000 rpm", -0.18 * rated],
                    ["1500 rpm", -0.35 * rated]]},
            ]}],
    }


def solve_ivp_reference(train, event, f_res, rtol=1e-6):
    """The same lumped model and torques through scipy.integrate.solve_ivp (RK45)."""
    from scipy.integrate import solve_ivp
    from core.transient import TWO_PI
    lm = lumped_model(train, f_res, TWO_PI * _first_mode(train))
    n = lm.n
    idx = {d: i for i, d in enumerate(train.disc_ids)}
    srcs = [(_state_torque(s, "", None)[0], int(lm.disc_node[idx[s.at]]), float(lm.disc_scale[idx[s.at]]))
            for s in event.torques]
    Minv = 1.0 / lm.mass
    K, C = lm.K, lm.C

    def rhs(t, x):
        th, v = x[:n], x[n:]
        F = -(K @ th) - (C @ v)
        for fn, node, sc in srcs:
            F[node] += sc * fn(t, sc * th[node], sc * v[node])
        return np.concatenate([v, Minv * F])

    t0 = time.perf_counter()
    sol = solve_ivp(rhs, (0.0, event.duration), np.zeros(2 * n), method="RK45", rtol=rtol,
                    atol=1e-9, dense_output=False)
    elapsed = time.perf_counter() - t0
    return sol, lm, elapsed


def _first_mode(train):
    from core.solver import natural_modes
    m = natural_modes(train, n_modes=1)
    return float(m.frequency_hz[m.elastic][0])


def main():
    train = build_train(bench_document())
    event = train.transients[0]
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    t0, c0 = time.perf_counter(), time.process_time()
    ours = run_event(train, event)
    t_ours, c_ours = time.perf_counter() - t0, time.process_time() - c0
    print(f"train: {len(train.discs)} discs, {ours.elements} degrees of freedom; "
          f"resolved to {ours.resolved_hz:.1f} Hz (2.5 x 50 Hz), step {ours.step * 1e6:.1f} us, "
          f"{ours.time.size - 1} steps; load average before the run {load:.1f} on {os.cpu_count()} CPUs")
    ci = train.link_ids.index("coupling")
    print(f"core.transient:    {t_ours:7.2f} s wall, {c_ours:7.2f} s CPU   (peak coupling torque "
          f"{ours.links[ci].peak_torque / 1e3:.3f} kN*m at {ours.links[ci].peak_time:.3f} s; first-mode crossing "
          f"{ours.crossings[0].mode_hz:.1f} Hz at {ours.crossings[0].time_s:.3f} s)")
    t0, c0 = time.perf_counter(), time.process_time()
    sol, lm, _ = solve_ivp_reference(train, event, ours.resolved_hz)
    t_ref, c_ref = time.perf_counter() - t0, time.process_time() - c0
    n = lm.n
    Te = (lm.D @ sol.y[:n]) * lm.ek[:, None] + (lm.D @ sol.y[n:]) * lm.ec[:, None]
    Te *= lm.egain[:, None]
    el = lm.link_elements[ci][0]
    peak_ref = float(np.abs(Te[el]).max())
    print(f"solve_ivp (RK45):  {t_ref:7.2f} s wall, {c_ref:7.2f} s CPU   ({sol.t.size - 1} steps, {sol.nfev} "
          f"evaluations, rtol 1e-6; peak coupling torque {peak_ref / 1e3:.3f} kN*m)")
    print(f"ratio solve_ivp / ours: {t_ref / t_ours:.1f} (wall), {c_ref / c_ours:.1f} (CPU)")
    if "--half-step" in sys.argv:
        half = run_event(train, event, refine=2)
        print(f"ours at half the step: peak coupling torque {half.links[ci].peak_torque / 1e3:.3f} kN*m")
    from core.fatigue import rainflow_cycles
    shafts = [i for i in range(len(train.links)) if np.all(np.isfinite(ours.link_stress[i]))]
    c0 = time.process_time()
    for i in shafts:
        rainflow_cycles(ours.link_stress[i])
    print(f"rainflow count of all {len(shafts)} shaft stress histories (not needed here: every shaft stays "
          f"below its endurance limit): {time.process_time() - c0:.2f} s CPU")


if __name__ == "__main__":
    main()
