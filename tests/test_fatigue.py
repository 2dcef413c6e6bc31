"""Rainflow counting and Miner's rule (core.fatigue) against the ASTM E1049 example and
hand-worked damage sums; fatigue of a shaft in a transient event."""
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.fatigue import (SN_CURVES, SNCurve, curve_for_material, event_fatigue, miner_damage,
                          rainflow_cycles, turning_points)
from core.materials import LIBRARY
from core.project import build_train
from core.transient import run_event

MPA = 1e6


def test_rainflow_counts_the_astm_e1049_example():
    # ASTM E1049-85 (2011), fig. 6 / table 4 (rainflow counting example), from memory:
    # history -2, 1, -3, 5, -1, 3, -4, 4, -2 gives ranges 3 (0.5), 4 (1.5), 6 (0.5),
    # 8 (1.0), 9 (0.5).
    rng, mean, cnt = rainflow_cycles([-2, 1, -3, 5, -1, 3, -4, 4, -2])
    counts = {}
    for r, c in zip(rng, cnt):
        counts[r] = counts.get(r, 0.0) + c
    assert counts == {3.0: 0.5, 4.0: 1.5, 6.0: 0.5, 8.0: 1.0, 9.0: 0.5}


@settings(max_examples=40, deadline=None)
@given(st.lists(st.integers(-1000, 1000).map(lambda i: i / 8), min_size=3, max_size=60))
def test_turning_points_change_no_count(xs):
    # Counting works on reversals only (ASTM E1049 5.4.1): reducing the history to its
    # turning points first changes nothing, against the rainflow package's own reversals
    # (cycles of zero range, from a flat history, do no damage and are left out; at least three
    # points: the package sees no reversal in two, where ASTM counts one half cycle, as we do;
    # values on a 1/8 grid, since the package multiplies steps and misses reversals whose
    # steps are so small that the product underflows).
    import rainflow
    full = sorted((round(c[0], 9), c[2]) for c in rainflow.extract_cycles(xs) if c[0] > 0)
    rng, _, cnt = rainflow_cycles(xs)
    ours = sorted((round(r, 9), c) for r, c in zip(rng, cnt) if r > 0)
    assert ours == full
    tp = turning_points(xs)
    assert tp.size <= len(xs)


def test_two_points_are_one_half_cycle():
    rng, mean, cnt = rainflow_cycles([0.0, 3.0])
    assert list(rng) == [3.0] and list(mean) == [1.5] and list(cnt) == [0.5]


def test_miner_sum_hand_worked():
    # N = N_knee (tau_e / tau_a)^k: with tau_e = 100 MPa, k = 5, N_knee = 1e6,
    # 200 MPa -> 31 250 cycles, 150 MPa -> 1e6 / 1.5^5 = 131 687 cycles, 50 MPa -> no damage;
    # one cycle at 200, two at 150, ten at 50: D = 1/31250 + 2 * 7.59375e-6 = 4.71875e-5
    # (Palmgren-Miner rule, hand-worked).
    curve = SNCurve(100 * MPA, 5.0, 1e6)
    amps = [200 * MPA, 150 * MPA, 50 * MPA]
    assert miner_damage(amps, [1, 2, 10], curve) == pytest.approx(4.71875e-5, rel=1e-12)
    # Haibach's slope 2k - 1 = 9 below the knee adds 10 / (1e6 * 2^9)
    curve2 = SNCurve(100 * MPA, 5.0, 1e6, slope_after_knee=9.0)
    assert miner_damage(amps, [1, 2, 10], curve2) == pytest.approx(4.71875e-5 + 10 / 5.12e8, rel=1e-12)


def test_event_fatigue_of_the_astm_history_hand_worked():
    # The ASTM example scaled by 50 MPa: amplitudes 75 (0.5), 100 (1.5), 150 (0.5), 200 (1.0),
    # 225 MPa (0.5); on tau_e = 100 MPa, k = 5, N_knee = 1e6 (100 MPa is not above the limit):
    # D = 0.5 * 1.5^5 / 1e6 + 1.0 * 2^5 / 1e6 + 0.5 * 2.25^5 / 1e6 = 6.4629394531e-5 (by hand).
    curve = SNCurve(100 * MPA, 5.0, 1e6)
    s = 50 * MPA * np.array([-2, 1, -3, 5, -1, 3, -4, 4, -2], float)
    r = event_fatigue(s, curve)
    assert r.damage == pytest.approx(6.4629394531e-5, rel=1e-9)
    assert r.allowed_events == pytest.approx(1 / 6.4629394531e-5, rel=1e-9)
    assert r.cycles == 4.0
    # a history inside the endurance limit does no damage (elementary Miner)
    assert event_fatigue(0.3 * s / 5, curve).allowed_events == math.inf


def test_library_curves_follow_the_stated_rule():
    # tau_W = 0.577 f_W R_m (FKM guideline, from memory): carbon steel, R_m 600 MPa, f_W 0.45
    assert SN_CURVES["carbon_steel"].endurance_limit == pytest.approx(0.577 * 0.45 * 600e6)
    for key, m in LIBRARY.items():
        c = curve_for_material(m)
        assert c is SN_CURVES[key] and c.source
        assert 30 * MPA < c.endurance_limit < 400 * MPA
    assert curve_for_material(None) is None


def test_shaft_fatigue_in_a_step_event_counts_one_cycle_per_period():
    # Two free discs under a torque step: the shaft's stress swings between 0 and
    # 2 tau_s, tau_s = T J2/(J1+J2) * 16 / (pi d^3) (Thomson, step response; torsion formula,
    # any strength-of-materials text), once per period 2 pi / w; rainflow counts one cycle of
    # amplitude tau_s per period, so D = cycles / N(tau_s) on the project's own S-N curve.
    J1, J2, T, d = 2.0, 3.0, 4000.0, 0.03
    doc = {"discs": [{"id": "a", "inertia": J1}, {"id": "b", "inertia": J2}],
           "links": [{"id": "s", "kind": "shaft", "from": "a", "to": "b", "material": "carbon_steel",
                      "segments": [{"length": "1 m", "outer_diameter": d}]}],
           "sn_curves": {"s": {"endurance_limit": "100 MPa", "slope": 6, "knee_cycles": 2e6,
                               "source": "test curve"}},
           "transients": [{"name": "step", "duration": 2.0, "required_events": 1e9,
                           "torques": [{"at": "a", "table": [[0, T]]}]}]}
    tr = build_train(doc)
    e = run_event(tr, tr.transients[0])  # the project's own curve
    tau_s = T * J2 / (J1 + J2) * 16 / (math.pi * d ** 3)
    assert tau_s > 100 * MPA
    k = tr.links[0].total_stiffness
    f = math.sqrt(k * (J1 + J2) / (J1 * J2)) / (2 * math.pi)
    cycles = 2.0 * f
    N = 2e6 * (100 * MPA / tau_s) ** 6
    link = e.link("s")
    assert link.sn_source == "test curve"
    assert link.damage == pytest.approx(cycles / N, abs=1.0 / N)
    assert link.allowed_events == pytest.approx(1 / link.damage)
    assert link.peak_stress == pytest.approx(2 * tau_s, rel=1e-3)
    assert link.passed is False  # 1e9 events required
