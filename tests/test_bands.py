"""Speed bands and band peaks (issue 12, item 1).

Outside reference: the forced-response peak inside a band against an independent
complex solve (numpy.linalg.solve of the assembled dense matrix Z = K (1 + i eta)
- w^2 J + i w C on a dense speed grid, then scipy's bounded scalar maximisation).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from core.bands import band_of, speed_bands
from core.project import build_train, load_train
from core.response import band_peaks, default_speeds, exceedances, forced_response, response_summary

RPM = 2 * math.pi / 60


def test_bands_of_a_fixed_speed_set_with_trip():
    train = load_train("sample_projects/engine_genset.json")
    bands = speed_bands(train.operating, lowest=10 * RPM)
    assert [b.name for b in bands] == ["transient", "operating", "overspeed"]
    op = bands[1]
    assert op.low == op.high == pytest.approx(1500 * RPM)
    names = band_of(np.array([10, 1499.999, 1500, 1500.001, 1725, 1726]) * RPM, bands)
    assert list(names) == ["transient", "transient", "operating", "overspeed", "overspeed", ""]


def test_default_speeds_run_from_near_standstill_to_trip():
    train = load_train("sample_projects/propulsion_line.json")
    s = default_speeds(train)
    op = train.operating
    assert s[0] == pytest.approx(0.01 * op.trip_speed)
    assert s[-1] == pytest.approx(op.trip_speed)  # 810 rpm: nothing above the trip speed
    assert op.speed_min in s and op.speed_max in s


def test_propulsion_sample_reports_peaks_inside_its_bands():
    train = load_train("sample_projects/propulsion_line.json")
    r = forced_response(train)
    for p in response_summary(r):
        assert p.band == "operating"
        assert 350 * RPM <= p.speed_at_peak_torque <= 750 * RPM
    for p in band_peaks(r, refine=False):
        assert p.speed <= 810 * RPM * (1 + 1e-12)


def test_fixed_speed_set_reports_its_operating_values_at_rated_speed():
    train = load_train("sample_projects/engine_genset.json")
    r = forced_response(train)
    j = int(np.flatnonzero(np.isclose(r.speed, 1500 * RPM, rtol=1e-12))[0])
    for i, p in enumerate(response_summary(r)):
        assert p.speed_at_peak_torque == pytest.approx(1500 * RPM, rel=1e-12)
        assert p.peak_torque == pytest.approx(r.link_torque[i, j], rel=1e-12)


def _chain_doc():
    return {"discs": [{"id": "m", "inertia": 4.0, "damping": 3.0}, {"id": "h", "inertia": 0.6},
                      {"id": "p", "inertia": 2.5, "damping": 6.0}],
            "links": [{"id": "s1", "kind": "shaft", "from": "m", "to": "h", "stiffness": 6.0e5,
                       "loss_factor": 0.02},
                      {"id": "c", "kind": "coupling", "from": "h", "to": "p", "stiffness": 9.0e4,
                       "loss_factor": 0.12}],
            "reference": "m", "operating_speed": {"min": "900 rpm", "max": "2400 rpm", "trip": "2600 rpm"},
            "excitations": [{"name": "e", "at": "p", "orders": [{"order": 1, "amplitude": 150.0},
                                                                {"order": 2, "amplitude": 60.0,
                                                                 "phase_deg": 30}]}]}


def _dense_link_torque(w, link):
    """Sum over orders of |torque| in link 0 (s1) or 1 (c): dense numpy complex solve."""
    J = np.array([4.0, 0.6, 2.5])
    c = np.array([3.0, 0.0, 6.0])
    k = [(0, 1, 6.0e5 * (1 + 0.02j)), (1, 2, 9.0e4 * (1 + 0.12j))]
    total = 0.0
    for n, amp in ((1, 150.0), (2, 60.0 * np.exp(1j * math.radians(30)))):
        om = n * w
        Z = np.diag(-J * om ** 2 + 1j * om * c).astype(complex)
        for a, b, z in k:
            Z[a, a] += z
            Z[b, b] += z
            Z[a, b] -= z
            Z[b, a] -= z
        F = np.zeros(3, complex)
        F[2] = amp
        th = np.linalg.solve(Z, F)
        a, b, z = k[link]
        total += abs(z * (th[a] - th[b]))
    return total


def test_band_peak_inside_the_range_against_dense_complex_solve():
    train = build_train(_chain_doc())
    r = forced_response(train)
    peaks = {(p.link_id, p.band, p.quantity, p.combination): p for p in band_peaks(r)}
    for li, lid in enumerate(["s1", "c"]):
        for band, lo, hi in (("operating", 900, 2400), ("transient", 0.01 * 2600, 900)):
            p = peaks[(lid, band, "torque", "sum")]
            grid = np.linspace(lo, hi, 4001) * RPM
            vals = np.array([_dense_link_torque(w, li) for w in grid])
            j = int(np.argmax(vals))
            if 0 < j < grid.size - 1:
                res = minimize_scalar(lambda w: -_dense_link_torque(w, li), bounds=(grid[j - 1], grid[j + 1]),
                                      method="bounded", options={"xatol": 1e-12})
                ref, at = -res.fun, res.x
            else:
                ref, at = vals[j], grid[j]
            assert p.peak == pytest.approx(ref, rel=1e-9)
            assert p.speed == pytest.approx(at, rel=1e-5)


def test_exceedances_are_judged_per_band():
    doc = _chain_doc()
    doc["links"][1]["permissible_torque"] = "400 N*m"
    r = forced_response(build_train(doc))
    over = exceedances(r)
    assert over and {e.band for e in over} <= {"transient", "operating", "overspeed"}
    for e in over:
        band = [b for b in speed_bands(r.train.operating, r.speed.min()) if b.name == e.band][0]
        assert band.contains(e.speed) and e.limit_basis == "continuous"
