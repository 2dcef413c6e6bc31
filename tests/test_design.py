"""Design options (issue 11) against outside references.

References:
* two discs on one spring: f = (1/2 pi) sqrt(k (J1 + J2) / (J1 J2)) (any vibration
  text, e.g. Thomson, Theory of Vibration with Applications -- from memory); so
  d ln f / d ln k = 1/2 and d ln f / d ln J1 = -J2 / (2 (J1 + J2)) by differentiating
  that closed form; the node divides the spring so that theta_1 / theta_2 = -J2 / J1
  (zero total angular momentum of a free-free pair, from memory);
* tolerance bands of that pair: f sqrt(1 - t) and f sqrt(1 + t) (the closed form);
* window edges: the closed form solved for k, k = (2 pi f)^2 J1 J2 / (J1 + J2), at the
  edges f = f_e (1 -/+ margin) of the forbidden interval;
* sensitivities against central finite differences of the frequencies (the
  derivative's definition; O(h^2) error);
* window edges against an independent lumped model: matrices assembled here,
  scipy.linalg.eigh (LAPACK) for the frequencies, scipy.optimize.brentq for the
  value where a frequency meets a forbidden edge, and a pass/fail check of every
  piece between the edges with eigh.
"""
from __future__ import annotations

import copy
import math

import numpy as np
import pytest
import scipy.linalg as sla
from hypothesis import HealthCheck, given, settings, strategies as st
from scipy.optimize import brentq

from core.design import analyse_design, element_window, sensitivities
from core.errors import ModelError
from core.project import build_train
from core.screening import screen
from core.solver import natural_modes
from core.tolerance import frequency_bands

TWO_PI = 2 * math.pi
J1, J2, K = 12.0, 3.0, 6.0e4


def pair_doc(tol=None, margin=10, nmin="1500 rpm", nmax="1500 rpm", orders=(1,), jtol=None, **extra):
    coupling = {"id": "c", "kind": "coupling", "from": "a", "to": "b", "stiffness": K}
    if tol is not None:
        coupling["stiffness_tolerance"] = tol
    discs = [{"id": "a", "inertia": J1}, {"id": "b", "inertia": J2}]
    if jtol is not None:
        for d in discs:
            d["inertia_tolerance"] = jtol
    doc = {"format": "twistwise-project", "version": 1, "discs": discs, "links": [coupling],
           "reference": "a", "operating_speed": {"min": nmin, "max": nmax}, "margin_percent": margin,
           "excitations": [{"name": "drive", "at": "a", "orders": list(orders)}]}
    doc.update(extra)
    return doc


def pair_f(k=K, j1=J1, j2=J2):
    return math.sqrt(k * (j1 + j2) / (j1 * j2)) / TWO_PI  # closed form (from memory)


def k_for(f, j1=J1, j2=J2):
    return (TWO_PI * f) ** 2 * j1 * j2 / (j1 + j2)  # the closed form solved for k


# ------------------------------------------------------------------ two discs, closed forms
def test_pair_sensitivities_are_the_closed_form():
    s = sensitivities(natural_modes(build_train(pair_doc())))
    d = s.as_dict(1)
    assert d["stiffness"]["c"] == pytest.approx(0.5, abs=1e-12)  # d ln f / d ln k = 1/2 exactly
    assert d["inertia"]["a"] == pytest.approx(-J2 / (2 * (J1 + J2)), abs=1e-12)
    assert d["inertia"]["b"] == pytest.approx(-J1 / (2 * (J1 + J2)), abs=1e-12)
    assert s.ranked(1)[0][:2] == ("stiffness", "c")


@pytest.mark.parametrize("tol,minus,plus", [("20 %", 0.2, 0.2), (0.3, 0.3, 0.3), (["-10 %", "+25 %"], 0.1, 0.25)])
def test_pair_band_edges_are_f_sqrt_1_pm_t(tol, minus, plus):
    t = build_train(pair_doc(tol))
    modes = natural_modes(t)
    band = frequency_bands(t, modes)[1]
    f = pair_f()
    # f sqrt(1 - t) and f sqrt(1 + t): the closed form at k (1 -/+ t)
    assert band[0] == pytest.approx(f * math.sqrt(1 - minus), rel=1e-12)
    assert band[1] == pytest.approx(f * math.sqrt(1 + plus), rel=1e-12)
    assert frequency_bands(t, modes)[0].tolist() == [0.0, 0.0]  # rigid-body row


def test_pair_inertia_tolerance_band():
    t = build_train(pair_doc(jtol=["-5 %", "+10 %"]))
    band = frequency_bands(t, natural_modes(t))[1]
    f = pair_f()
    # both inertias times (1 + 0.10) -> f / sqrt(1.10); times (1 - 0.05) -> f / sqrt(0.95)
    assert band[0] == pytest.approx(f / math.sqrt(1.10), rel=1e-12)
    assert band[1] == pytest.approx(f / math.sqrt(0.95), rel=1e-12)


def test_pair_window_edges_follow_from_the_closed_form():
    fe = 25.0  # order 1 at 1500 rpm
    w = element_window(build_train(pair_doc()), "c")
    lo, hi = k_for(fe * 0.9), k_for(fe * 1.1)  # k at f = f_e (1 -/+ 10 %)
    assert w.quantity == "stiffness" and w.unit == "N*m/rad"
    assert w.range == (K / 100, K * 100)
    assert len(w.admissible) == 2
    (a0, b0), (a1, b1) = w.admissible
    assert a0 == K / 100 and b1 == K * 100  # intervals reaching the range's ends end there
    assert b0 == pytest.approx(lo, rel=1e-9)
    assert a1 == pytest.approx(hi, rel=1e-9)
    # 60 kN*m/rad gives 25.2 Hz: inside the margin; the nearest admissible value is the upper edge
    assert not w.current_clears
    assert w.nearest_admissible == pytest.approx(hi, rel=1e-9)
    assert [(b.mode, b.line) for b in w.blocked] == [(1, "drive, order 1")]
    js = w.as_json()
    assert list(js)[:7] == ["element", "quantity", "unit", "current", "current_clears", "range", "admissible"]


def test_pair_window_over_a_speed_range_and_own_tolerance():
    # forbidden: (f(N_min) (1 - m), f(N_max) (1 + m)) = (15 * 0.9, 30 * 1.1) Hz for 900-1800 rpm
    w = element_window(build_train(pair_doc(["-10 %", "+20 %"], nmin="900 rpm", nmax="1800 rpm")), "c")
    lo, hi = k_for(15 * 0.9), k_for(30 * 1.1)
    # the band [k (1 - 0.1), k (1 + 0.2)] must stay outside: k (1 + 0.2) <= lo or k (1 - 0.1) >= hi
    (a0, b0), (a1, b1) = w.admissible
    assert b0 == pytest.approx(lo / 1.2, rel=1e-9)
    assert a1 == pytest.approx(hi / 0.9, rel=1e-9)
    assert w.tolerance == (0.1, 0.2)


def test_pair_inertia_window():
    # f^2 = k (1/J1 + 1/J2) / (2 pi)^2, solved for J1 at f = 25 (1 -/+ 0.1) Hz
    w = element_window(build_train(pair_doc(nmin="1800 rpm", nmax="1800 rpm")), "a",
                       value_range=(0.5, 500.0))
    fe = 30.0

    def j1_for(f):
        return 1.0 / ((TWO_PI * f) ** 2 / K - 1.0 / J2)

    # f falls as J1 grows: admissible up to J1(f_e (1 + m)) and from J1(f_e (1 - m))
    assert w.quantity == "inertia" and w.unit == "kg*m^2"
    (a0, b0), (a1, b1) = w.admissible
    assert a0 == 0.5 and b1 == 500.0
    assert b0 == pytest.approx(j1_for(fe * 1.1), rel=1e-9)
    assert a1 == pytest.approx(j1_for(fe * 0.9), rel=1e-9)
    assert w.current_clears  # 25.2 Hz, 16 % below 30 Hz
    # f > sqrt(k / J2) / 2 pi for every J1: with J2 = 1.6 that is 30.8 Hz > 27 Hz, no lower piece
    d = pair_doc(nmin="1800 rpm", nmax="1800 rpm")
    d["discs"][1]["inertia"] = 1.6
    w = element_window(build_train(d), "a", value_range=(0.5, 500.0))
    assert len(w.admissible) == 1 and w.admissible[0][0] == 0.5
    assert w.admissible[0][1] == pytest.approx(1.0 / ((TWO_PI * 33.0) ** 2 / K - 1 / 1.6), rel=1e-9)


def test_window_of_an_order_line_from_standstill():
    # 0-1500 rpm: the order line sweeps 0-25 Hz, so every mode below 25 x 1.1 Hz crosses it;
    # with the coupling's own -10 % the band's low edge must clear 27.5 Hz: k (1 - 0.1) >= k(27.5 Hz)
    w = element_window(build_train(pair_doc(["-10 %", "+10 %"], nmin="0 rpm")), "c")
    assert len(w.admissible) == 1
    assert w.admissible[0][0] == pytest.approx(k_for(27.5) / 0.9, rel=1e-9)
    assert w.admissible[0][1] == K * 100
    assert not w.current_clears


def test_sensitivities_without_kept_node_shapes():
    from dataclasses import replace
    modes = natural_modes(build_train(_engine_doc()))
    a, b = sensitivities(modes), sensitivities(replace(modes, node_shape=None))  # by inverse iteration
    np.testing.assert_allclose(a.stiffness, b.stiffness, atol=1e-10)
    np.testing.assert_allclose(a.inertia, b.inertia, atol=1e-10)


def test_fixed_frequency_line_window():
    d = pair_doc()
    d["excitations"] = [{"name": "hum", "frequency": "40 Hz", "applied_at": "b"}]
    w = element_window(build_train(d), "c")
    (_, b0), (a1, _) = w.admissible
    assert b0 == pytest.approx(k_for(36.0), rel=1e-9) and a1 == pytest.approx(k_for(44.0), rel=1e-9)


# ------------------------------------------------------------------ screening with bands
def test_screening_band_separation_and_verdict():
    # nominal 25.17 Hz vs order 1 at 1800 rpm = 30 Hz: 16.1 % nominal separation, PASS;
    # with +/-30 % the band top is f sqrt(1.3) = 28.70 Hz: 4.3 % from 30 Hz, FAIL
    f = pair_f()
    plain = screen(build_train(pair_doc(nmin="1800 rpm", nmax="1800 rpm")))
    assert plain.bands is None and plain.passed
    assert plain.all_pairs[0].separation_band is None
    t = build_train(pair_doc("30 %", nmin="1800 rpm", nmax="1800 rpm"))
    s = screen(t)
    c = s.all_pairs[0]
    assert c.separation == pytest.approx((30 - f) / 30, rel=1e-12)
    assert c.separation_band == pytest.approx((30 - f * math.sqrt(1.3)) / 30, rel=1e-12)
    assert not c.passed and s.verdict == "fail"
    assert s.bands[1, 1] == pytest.approx(f * math.sqrt(1.3), rel=1e-12)
    # inside the band: zero
    t = build_train(pair_doc("30 %", nmin="1560 rpm", nmax="1560 rpm"))
    assert screen(t).all_pairs[0].separation_band == 0.0


def test_band_listing_includes_pairs_near_only_through_the_band():
    # nominal separation 25 % (> 2 x 10 %, not listed without a band)
    f = pair_f()
    rpm = f / 0.75 * 60
    d = pair_doc(nmin=f"{rpm} rpm", nmax=f"{rpm} rpm")
    assert not screen(build_train(d)).coincidences
    d["links"][0]["stiffness_tolerance"] = "16 %"  # band top f sqrt(1.16): 19.2 % away
    s = screen(build_train(d))
    assert len(s.coincidences) == 1 and s.coincidences[0].separation == pytest.approx(0.25, rel=1e-9)


def test_band_screens_modes_whose_low_edge_drops_below_the_cap():
    # the nominal mode sits above the cap, its -60 % band edge below it (every such mode is screened)
    d = pair_doc(nmin="300 rpm", nmax="300 rpm")  # 5 Hz line: cap 5 * 1.2 * 1.25 = 7.5 Hz
    d["links"][0]["stiffness"] = k_for(10.0)
    d["links"][0]["stiffness_tolerance"] = ["-60 %", "+0 %"]
    s = screen(build_train(d))
    assert [c.mode for c in s.all_pairs] == [1]
    assert s.bands[1, 0] == pytest.approx(10.0 * math.sqrt(0.4), rel=1e-12)


def test_participation_and_weak_excitation():
    # theta_a / theta_b = -J2 / J1 = -0.25 (closed form): participation 0.25 at 'a', 1 at 'b'
    d = pair_doc(nmin="1500 rpm", nmax="1500 rpm")
    d["excitations"].append({"name": "load", "at": "b", "orders": [1]})
    d["excitations"].append({"name": "hum", "frequency": "25 Hz"})
    s = screen(build_train(d))
    part = {c.source: c.participation for c in s.all_pairs}
    assert part["drive"] == pytest.approx(J2 / J1, rel=1e-12)
    assert part["load"] == pytest.approx(1.0, rel=1e-12)
    assert part["hum"] is None  # a fixed frequency without applied_at names no disc
    assert s.verdict == "fail" and len(s.failures) == 3
    d["weak_excitation_below"] = "30 %"
    s = screen(build_train(d))
    weak = [c for c in s.coincidences if c.weak]
    assert [c.source for c in weak] == ["drive"] and weak[0].status == "weak"
    assert len(s.coincidences) == 3 and len(s.failures) == 2  # listed, not counted


def test_engine_participation_is_the_largest_over_its_cylinders():
    from core.screening import participation
    t = build_train(_engine_doc())
    s = screen(t)
    for c in s.all_pairs:
        if c.source == "engine":
            row = list(s.modes.number).index(c.mode)
            shape = np.abs(s.modes.shape[row])
            ids = s.modes.disc_ids
            assert c.participation == pytest.approx(max(shape[ids.index(x)] for x in ("k1", "k2", "k3")))
            assert c.participation == participation(s.modes, row, c.line)


def _engine_doc():
    discs = [{"id": i, "inertia": j} for i, j in (("k1", 0.5), ("k2", 0.5), ("k3", 0.5), ("fly", 8.0),
                                                  ("gen", 12.0))]
    links = [{"id": "s12", "kind": "shaft", "from": "k1", "to": "k2", "stiffness": 2e6},
             {"id": "s23", "kind": "shaft", "from": "k2", "to": "k3", "stiffness": 2e6},
             {"id": "s3f", "kind": "shaft", "from": "k3", "to": "fly", "stiffness": 3e6},
             {"id": "cpl", "kind": "coupling", "from": "fly", "to": "gen", "stiffness": 5e4}]
    cyl = [{"at": "k1", "firing_deg": 0}, {"at": "k2", "firing_deg": 240}, {"at": "k3", "firing_deg": 480}]
    return {"format": "twistwise-project", "version": 1, "discs": discs, "links": links, "reference": "fly",
            "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "engine", "at": "k1", "orders": [1.5, 3, 4.5], "cylinders": cyl}]}


def test_no_tolerance_keeps_the_screening_unchanged():
    """Without tolerances the verdict, order and separations are the nominal ones."""
    t = build_train(_engine_doc())
    s = screen(t)
    assert s.bands is None
    assert all(c.separation_band is None and not c.weak for c in s.all_pairs)
    assert [c.separation for c in s.all_pairs] == sorted(c.separation for c in s.all_pairs)
    assert all(c.passed == (c.separation >= s.margin) for c in s.all_pairs)


# ------------------------------------------------------------------ random trees
G, RHO = 79.3e9, 7850.0


@st.composite
def trees(draw, distributed=True, tolerances=False, rigid=True):
    n = draw(st.integers(2, 7))
    discs = [{"id": f"d{i}", "inertia": draw(st.floats(0.05, 20.0))} for i in range(n)]
    kinds = ["spring", "coupling", "lumped", "elastic_mesh"] + (["distributed"] if distributed else []) \
        + (["rigid_mesh"] if rigid else [])
    links = []
    for i in range(1, n):
        p = draw(st.integers(0, i - 1))
        a, b = (f"d{p}", f"d{i}") if draw(st.booleans()) else (f"d{i}", f"d{p}")
        kind = draw(st.sampled_from(kinds))
        lid = f"l{i}"
        if kind in ("spring", "coupling"):
            links.append({"id": lid, "kind": "shaft" if kind == "spring" else "coupling", "from": a, "to": b,
                          "stiffness": draw(st.floats(1e4, 1e7))})
        elif kind in ("lumped", "distributed"):
            segs = []
            for _ in range(draw(st.integers(1, 3 if kind == "distributed" else 2))):
                D = draw(st.floats(0.05, 0.3))
                seg = {"length": draw(st.floats(0.2, 3.0)), "outer_diameter": D}
                bore = draw(st.sampled_from([0.0, 0.4]))
                if bore:
                    seg["inner_diameter"] = bore * D
                segs.append(seg)
            links.append({"id": lid, "kind": "shaft", "from": a, "to": b, "mass": kind,
                          "material": {"shear_modulus": G, "density": RHO}, "segments": segs})
        else:
            mesh = {"id": lid, "kind": "gear_mesh", "from": a, "to": b,
                    "speed_ratio": draw(st.sampled_from([0.3, 0.5, 1.7, 2.5]))}
            if kind == "elastic_mesh":
                mesh["stiffness"] = draw(st.floats(1e5, 1e8))
            links.append(mesh)
    if draw(st.integers(0, 3)) == 0:
        links.append({"id": "g", "kind": "shaft", "from": "ground", "to": f"d{draw(st.integers(0, n - 1))}",
                      "stiffness": draw(st.floats(1e4, 1e7))})
    if tolerances:
        for l in links:
            if (l["kind"] != "gear_mesh" or "stiffness" in l) and draw(st.booleans()):
                l["stiffness_tolerance"] = [-draw(st.floats(0.0, 0.4)), draw(st.floats(0.0, 0.4))]
        for d in discs:
            if draw(st.integers(0, 2)) == 0:
                d["inertia_tolerance"] = draw(st.floats(0.0, 0.2))
    return {"format": "twistwise-project", "version": 1, "discs": discs, "links": links}


def _log_f(doc, n):
    m = natural_modes(build_train(doc), n_modes=n)
    return np.log(m.frequency_hz[m.elastic])


def _scaled(doc, what, eid, factor):
    d = copy.deepcopy(doc)
    if what == "inertia":
        for x in d["discs"]:
            if x["id"] == eid:
                x["inertia"] *= factor
        return d
    for l in d["links"]:
        if l["id"] != eid:
            continue
        if what == "stiffness" and "stiffness" in l:
            l["stiffness"] *= factor
        elif what == "stiffness":  # a geometric shaft: scale G, own inertia held
            l["material"] = {"shear_modulus": G * factor, "density": RHO}
        else:  # diameter: every outer diameter, bores held
            for s in l["segments"]:
                s["outer_diameter"] *= factor
    return d


def _scale_link(l, factor):
    """A link's stiffness times factor in place (a geometric shaft: its G, own inertia held)."""
    if "stiffness" in l:
        l["stiffness"] *= factor
    else:
        l["material"] = {"shear_modulus": l["material"]["shear_modulus"] * factor, "density": RHO}


@settings(max_examples=20, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(trees())
def test_sensitivities_match_central_differences(doc):
    train = build_train(doc)
    n = 6
    modes = natural_modes(train, n_modes=n)
    s = sensitivities(modes)
    f = modes.frequency_hz[modes.elastic]
    if not len(f):
        return  # every disc on one rigid gear train: no elastic mode
    rel = np.diff(f) / f[1:]
    well = np.minimum(np.r_[np.inf, rel], np.r_[rel, np.inf]) > 1e-3  # near-repeated: no smooth derivative
    h = 1e-4  # rounding of ln f (~1e-11 here) / h stays below 1e-6

    def central(what, eid, step):  # central difference: the derivative's definition, O(step^2)
        up = _log_f(_scaled(doc, what, eid, math.exp(step)), n)
        dn = _log_f(_scaled(doc, what, eid, math.exp(-step)), n)
        return (up - dn) / (2 * step)

    checks = [("stiffness", i, s.stiffness[:, j]) for j, i in enumerate(s.link_ids)] \
        + [("inertia", i, s.inertia[:, j]) for j, i in enumerate(s.disc_ids)] \
        + [("diameter", i, s.diameter[:, j]) for j, i in enumerate(s.shaft_ids)]
    for what, eid, ours in checks:
        fd = central(what, eid, h)
        if not np.allclose(ours[well], fd[well], rtol=0, atol=1e-6):
            # a strongly curved f(x): Richardson's extrapolation removes the h^2 term
            fd = (4 * fd - central(what, eid, 2 * h)) / 3
        np.testing.assert_allclose(ours[well], fd[well], rtol=0, atol=1e-6, err_msg=f"{what} {eid}")
    # sum rule: every stiffness scaled by (1 + e) raises every frequency by sqrt(1 + e)
    np.testing.assert_allclose(s.stiffness.sum(axis=1), 0.5, atol=1e-10)


def test_geared_sensitivity_is_independent_of_referral():
    # the same pair behind a 1:3 rigid step-up: the share is energy, the sensitivity 1/2
    doc = {"format": "twistwise-project", "version": 1,
           "discs": [{"id": "m", "inertia": 5.0}, {"id": "p", "inertia": 0.01}, {"id": "l", "inertia": 0.4}],
           "links": [{"id": "mesh", "kind": "gear_mesh", "from": "m", "to": "p", "speed_ratio": 3.0},
                     {"id": "c", "kind": "coupling", "from": "p", "to": "l", "stiffness": 2e4}]}
    s = sensitivities(natural_modes(build_train(doc)))
    assert s.link_ids == ("c",)  # a rigid mesh carries none
    assert s.as_dict(1)["stiffness"]["c"] == pytest.approx(0.5, abs=1e-12)


@settings(max_examples=15, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(trees(tolerances=True), st.integers(0, 2 ** 31 - 1))
def test_random_samples_inside_the_tolerance_box_stay_inside_the_band(doc, seed):
    train = build_train(doc)
    n = 5
    modes = natural_modes(train, n_modes=n)
    bands = frequency_bands(train, modes)[modes.elastic]
    rng = np.random.default_rng(seed)
    for _ in range(6):
        d = copy.deepcopy(doc)
        for x in d["discs"]:
            t = x.pop("inertia_tolerance", None)
            if t is not None:
                x["inertia"] *= rng.uniform(1 - t, 1 + t)
        for l in d["links"]:
            t = l.pop("stiffness_tolerance", None)
            if t is not None:
                _scale_link(l, rng.uniform(1 + t[0], 1 + t[1]))
        f = np.exp(_log_f(d, n))
        assert np.all(f >= bands[:, 0] * (1 - 1e-10)) and np.all(f <= bands[:, 1] * (1 + 1e-10))
    # the corners, built here from the document, reach the edges
    for side in (0, 1):
        d = copy.deepcopy(doc)
        for x in d["discs"]:
            t = x.pop("inertia_tolerance", None)
            if t is not None:
                x["inertia"] *= (1 + t) if side == 0 else (1 - t)
        for l in d["links"]:
            t = l.pop("stiffness_tolerance", None)
            if t is not None:
                _scale_link(l, (1 + t[0]) if side == 0 else (1 + t[1]))
        np.testing.assert_allclose(np.exp(_log_f(d, n)), bands[:, side], rtol=1e-10)


# ------------------------------------------------------------------ windows vs eigh + brentq
def lumped_matrices(doc, override=None):
    """Referred lumped K, M of springs, couplings, elastic and rigid gear meshes and springs to
    ground (assembled here: energy-equivalent referral k s^2, J s^2, a rigid mesh as a
    constraint); ``override`` = (kind, id, value) replaces one stiffness or inertia."""
    ids = [d["id"] for d in doc["discs"]]
    ix = {d: i for i, d in enumerate(ids)}
    nbr = {d: [] for d in ids}
    for l in doc["links"]:
        if "ground" not in (l["from"], l["to"]):
            r = l.get("speed_ratio", 1.0) if l["kind"] == "gear_mesh" else 1.0
            nbr[l["from"]].append((l["to"], r))
            nbr[l["to"]].append((l["from"], 1.0 / r))
    speed, todo = {ids[0]: 1.0}, [ids[0]]
    while todo:
        x = todo.pop()
        for y, r in nbr[x]:
            if y not in speed:
                speed[y] = speed[x] * r
                todo.append(y)
    n = len(ids)
    Kd, Md = np.zeros((n, n)), np.zeros((n, n))
    for d in doc["discs"]:
        J = d["inertia"] if override is None or override[:2] != ("disc", d["id"]) else override[2]
        Md[ix[d["id"]], ix[d["id"]]] = J * speed[d["id"]] ** 2
    group = list(range(n))

    def root(i):
        while group[i] != i:
            i = group[i]
        return i

    for l in doc["links"]:
        if l["kind"] == "gear_mesh" and "stiffness" not in l:
            group[root(ix[l["from"]])] = root(ix[l["to"]])
            continue
        k = l["stiffness"] if override is None or override[:2] != ("link", l["id"]) else override[2]
        ends = [e for e in (l["from"], l["to"]) if e != "ground"]
        k *= (speed[l["from"]] if l["kind"] == "gear_mesh" else speed[ends[0]]) ** 2
        if len(ends) == 1:
            Kd[ix[ends[0]], ix[ends[0]]] += k
        else:
            i, j = ix[l["from"]], ix[l["to"]]
            Kd[i, i] += k
            Kd[j, j] += k
            Kd[i, j] -= k
            Kd[j, i] -= k
    reps = sorted({root(i) for i in range(n)})
    T = np.zeros((n, len(reps)))
    for i in range(n):
        T[i, reps.index(root(i))] = 1.0
    grounded = any("ground" in (l["from"], l["to"]) for l in doc["links"])
    return T.T @ Kd @ T, T.T @ Md @ T, grounded


def eigh_hz(doc, override=None):
    K_, M_, grounded = lumped_matrices(doc, override)
    lam = sla.eigh(K_, M_, eigvals_only=True)  # LAPACK, the independent reference
    f = np.sqrt(np.clip(lam, 0, None)) / TWO_PI
    return f if grounded else f[1:]


def corner_docs(doc, kind, eid):
    """(low, high) corner documents built here (every toleranced value but the candidate's at its
    minus/plus side, stiffness low with inertia high) and the candidate's own factors."""
    out = []
    own = [1.0, 1.0]
    for side in (0, 1):
        d = copy.deepcopy(doc)
        for x in d["discs"]:
            t = x.pop("inertia_tolerance", None)
            if t is not None:
                fac = (1 + t) if side == 0 else (1 - t)
                if (kind, eid) == ("disc", x["id"]):
                    own[side] = fac
                else:
                    x["inertia"] *= fac
        for l in d["links"]:
            t = l.pop("stiffness_tolerance", None)
            if t is not None:
                fac = (1 + t[0]) if side == 0 else (1 + t[1])
                if (kind, eid) == ("link", l["id"]):
                    own[side] = fac
                else:
                    l["stiffness"] *= fac
        out.append(d)
    return out[0], out[1], own


def reference_window(doc, kind, eid, lo, hi, forbidden):
    """The window by eigh + brentq: every value where a band edge meets a forbidden edge (root of
    f_i(v) - edge in ln v, low corner against upper edges, high corner against lower edges),
    then pass/fail of each piece by eigh of both corners at its middle."""
    low, high, own = corner_docs(doc, kind, eid)

    def f_at(u, side):
        return eigh_hz((low, high)[side], (kind, eid, math.exp(u) * own[side]))

    ua, ub = math.log(lo), math.log(hi)
    grid = np.linspace(ua, ub, 241)  # to bracket the roots for brentq; each root then exact
    F = [np.array([f_at(u, side) for u in grid]) for side in (0, 1)]
    roots = []
    for side, edges_of in ((0, [b for _, _, b in forbidden]), (1, [a for _, a, _ in forbidden])):
        for i in range(F[side].shape[1]):
            for e in edges_of:
                g = F[side][:, i] - e
                for j in np.flatnonzero(np.sign(g[:-1]) * np.sign(g[1:]) < 0):
                    roots.append(brentq(lambda u: f_at(u, side)[i] - e, grid[j], grid[j + 1],
                                        xtol=1e-13, rtol=1e-13))
    edges = sorted([ua, ub] + roots)

    def clears(u):
        fl, fh = f_at(u, 0), f_at(u, 1)
        return not any(np.any((fh > a) & (fl < b)) for _, a, b in forbidden)

    pieces = []
    for a, b in zip(edges[:-1], edges[1:]):
        if b - a > 1e-9 and clears(0.5 * (a + b)):
            if pieces and abs(pieces[-1][1] - a) < 1e-9:
                pieces[-1] = (pieces[-1][0], b)
            else:
                pieces.append((a, b))
    return [(math.exp(a), math.exp(b)) for a, b in pieces], clears(math.log(_current(doc, kind, eid)))


def _current(doc, kind, eid):
    return (next(l["stiffness"] for l in doc["links"] if l["id"] == eid) if kind == "link"
            else next(d["inertia"] for d in doc["discs"] if d["id"] == eid))


@st.composite
def lumped_trains(draw, tolerances=False):
    doc = draw(trees(distributed=False, tolerances=tolerances))
    for l in doc["links"]:  # lumped shafts become plain springs here
        if "segments" in l:
            for key in ("segments", "material", "mass"):
                l.pop(key)
            l["stiffness"] = draw(st.floats(1e4, 1e7))
    ids = [d["id"] for d in doc["discs"]]
    doc["reference"] = ids[0]
    n_min = draw(st.floats(300, 1500))
    doc["operating_speed"] = {"min": f"{n_min:.1f} rpm", "max": f"{n_min * draw(st.floats(1, 1.8)):.1f} rpm"}
    doc["excitations"] = [{"name": "src", "at": draw(st.sampled_from(ids)),
                           "orders": draw(st.lists(st.sampled_from([0.5, 1, 2, 3, 6]), min_size=1, max_size=3,
                                                   unique=True))}]
    if draw(st.booleans()):
        doc["excitations"].append({"name": "hum", "frequency": f"{draw(st.floats(5, 120)):.2f} Hz"})
    return doc


def _check_window_against_eigh(doc, data):
    train = build_train(doc)
    stiff = [l["id"] for l in doc["links"] if "stiffness" in l]
    kind, eid = data.draw(st.sampled_from([("link", x) for x in stiff] + [("disc", d["id"]) for d in doc["discs"]]))
    current = _current(doc, kind, eid)
    lo, hi = current / 30, current * 30
    w = element_window(train, eid, "stiffness" if kind == "link" else "inertia", (lo, hi), chart_points=0)
    ref, ref_clears = reference_window(doc, kind, eid, lo, hi, list(w.forbidden_hz))
    assert len(w.admissible) == len(ref), (w.admissible, ref)
    low, high, own = corner_docs(doc, kind, eid)

    def residual(v):
        """Backward error at an edge: how far the nearest band edge (eigh) is from a forbidden edge."""
        fl = eigh_hz(low, (kind, eid, v * own[0]))
        fh = eigh_hz(high, (kind, eid, v * own[1]))
        r = [abs(fl / b - 1).min() for _, _, b in w.forbidden_hz] + \
            [abs(fh / a - 1).min() for _, a, _ in w.forbidden_hz if a > 0]
        return min(r)

    for (a, b), (ra, rb) in zip(w.admissible, ref):
        for ours, theirs, end in ((a, ra, lo), (b, rb, hi)):
            if ours == end:
                assert theirs == pytest.approx(end, rel=1e-12)
            elif ours != pytest.approx(theirs, rel=1e-8):
                # an element that hardly moves the mode (small d ln f / d ln v) makes the edge
                # ill-conditioned for either method: then the eigh frequency at our edge must
                # meet the forbidden edge (backward error)
                assert residual(ours) < 1e-10, (ours, theirs)
    assert w.current_clears == ref_clears


@settings(max_examples=15, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lumped_trains(), st.data())
def test_window_edges_match_eigh_and_brentq(doc, data):
    _check_window_against_eigh(doc, data)


@settings(max_examples=15, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(lumped_trains(tolerances=True), st.data())
def test_window_edges_with_tolerance_bands_match_eigh_and_brentq(doc, data):
    _check_window_against_eigh(doc, data)


def test_window_of_a_distributed_shaft_and_its_chart():
    """A distributed shaft (stiffness k and L / c change with G) and a condensed free shaft end:
    at each window edge the solver's frequency of the train rebuilt with that G meets a
    forbidden edge; the chart's curves agree with full solves at its grid points."""
    doc = {"format": "twistwise-project", "version": 1,
           "discs": [{"id": "m", "inertia": 4.0}, {"id": "p", "inertia": 1.5}, {"id": "tip", "inertia": 0}],
           "links": [{"id": "s", "kind": "shaft", "from": "m", "to": "p", "mass": "distributed",
                      "material": {"shear_modulus": G, "density": RHO},
                      "segments": [{"length": 1.2, "outer_diameter": 0.08}, {"length": 0.8, "outer_diameter": 0.1}]},
                     {"id": "stub", "kind": "shaft", "from": "p", "to": "tip", "mass": "distributed",
                      "material": {"shear_modulus": G, "density": RHO},
                      "segments": [{"length": 1.5, "outer_diameter": 0.12}]}],
           "reference": "m", "operating_speed": {"min": "1000 rpm", "max": "1200 rpm"},
           "excitations": [{"name": "m", "at": "m", "orders": [1, 6]}]}
    train = build_train(doc)
    for li, eid in enumerate(("s", "stub")):  # the stub has a free massless end (condensed count)
        w = element_window(train, eid, chart_points=9)
        k0 = w.current
        edges = [x for a, b in w.admissible for x in (a, b) if w.range[0] < x < w.range[1]]
        assert edges
        targets = np.array([e for _, a, b in w.forbidden_hz for e in (a, b)])
        for v in edges:
            f = natural_modes(_scaled_train(doc, li, v / k0), n_modes=8).frequency_hz[1:]
            assert np.min(np.abs(f[:, None] / targets[None, :] - 1)) < 1e-8
        for g, v in enumerate(w.chart.values):
            f = natural_modes(_scaled_train(doc, li, v / k0),
                              n_modes=w.chart.frequency_hz.shape[1]).frequency_hz[1:]
            np.testing.assert_allclose(w.chart.frequency_hz[g], f, rtol=3e-4)


def _scaled_train(doc, li, factor):
    d = copy.deepcopy(doc)
    d["links"][li]["material"] = {"shear_modulus": G * factor, "density": RHO}
    return build_train(d)


def test_analyse_design_windows_every_coupling_and_design_options():
    d = _engine_doc()
    d["design_options"] = ["fly", "s3f"]
    res = analyse_design(build_train(d), chart_points=5)
    assert res.elements == ("cpl", "fly", "s3f")
    assert [w.quantity for w in res.windows] == ["stiffness", "inertia", "stiffness"]
    assert res.bands is None
    assert res.window("fly").unit == "kg*m^2"
    assert set(res.sensitivities.link_ids) == {"s12", "s23", "s3f", "cpl"}
    d["links"][-1]["stiffness_tolerance"] = "20 %"
    t = build_train(d)
    s = screen(t)
    res = analyse_design(t, s.modes, s, elements=["cpl"], chart_points=3)
    assert res.bands is s.bands and res.elements == ("cpl",)
    ch = res.windows[0].chart
    assert res.windows[0].tolerance == (0.2, 0.2) and ch.band_low_hz.shape == ch.frequency_hz.shape
    assert np.all(ch.band_low_hz <= ch.frequency_hz * (1 + 1e-6))
    assert np.all(ch.band_high_hz >= ch.frequency_hz * (1 - 1e-6))


# ------------------------------------------------------------------ bad input
@pytest.mark.parametrize("value,problem", [
    ("-5 %", "negative"), ("100 %", "below 100"), (1.5, "below 100"), ("lots", "percentage"),
    (["-10 %"], "list of 1"), (["-10 %", "5 %", "6 %"], "list of 3"), (["10 %", "20 %"], "minus side"),
    (["-10 %", "-20 %"], "plus side"), (True, "percentage"), ("nan", "finite"), ({"a": 1}, "percentage")])
def test_bad_stiffness_tolerance_names_element_and_field(value, problem):
    with pytest.raises(ModelError) as err:
        build_train(pair_doc(value))
    assert err.value.element == "link 'c'" and err.value.field == "stiffness_tolerance"
    assert problem in err.value.message


def test_bad_inertia_tolerance_and_rigid_mesh_tolerance():
    with pytest.raises(ModelError) as err:
        build_train(pair_doc(jtol="-1 %"))
    assert err.value.element == "disc 'a'" and err.value.field == "inertia_tolerance"
    doc = {"format": "twistwise-project", "version": 1, "discs": [{"id": "a", "inertia": 1}, {"id": "b", "inertia": 1}],
           "links": [{"id": "g", "kind": "gear_mesh", "from": "a", "to": "b", "speed_ratio": 2,
                      "stiffness_tolerance": "10 %"}]}
    with pytest.raises(ModelError) as err:
        build_train(doc)
    assert err.value.element == "link 'g'" and err.value.field == "stiffness_tolerance"


@pytest.mark.parametrize("value", ["150 %", "-1 %", "often", 2])
def test_bad_weak_excitation_threshold(value):
    with pytest.raises(ModelError) as err:
        build_train(pair_doc(weak_excitation_below=value))
    assert err.value.element == "operating data" and err.value.field == "weak_excitation_below"


def test_weak_excitation_threshold_reads_percent_or_fraction():
    assert build_train(pair_doc(weak_excitation_below="5 %")).operating.weak_excitation_below == 0.05
    assert build_train(pair_doc(weak_excitation_below=0.05)).operating.weak_excitation_below == 0.05
    assert build_train(pair_doc()).operating.weak_excitation_below is None


@pytest.mark.parametrize("value", ["c", ["nope"], [3]])
def test_bad_design_options(value):
    with pytest.raises(ModelError) as err:
        build_train(pair_doc(design_options=value))
    assert err.value.element == "train" and err.value.field == "design_options"


def test_window_bad_input_names_element_and_field():
    t = build_train(pair_doc())
    cases = [(("x",), {"quantity": "stiffness"}, "link 'x'", "id"),
             (("x",), {"quantity": "inertia"}, "disc 'x'", "id"),
             (("c",), {"value_range": (5.0, 1.0)}, "link 'c'", "range"),
             (("c",), {"value_range": (0.0, 1.0)}, "link 'c'", "range"),
             (("c",), {"value_range": (1.0, math.inf)}, "link 'c'", "range"),
             (("c",), {"quantity": "colour"}, "element 'c'", "quantity")]
    for args, kw, element, fld in cases:
        with pytest.raises(ModelError) as err:
            element_window(t, *args, **kw)
        assert (err.value.element, err.value.field) == (element, fld)
    d = pair_doc()
    for key in ("reference", "operating_speed", "excitations"):
        d.pop(key)
    with pytest.raises(ModelError) as err:
        element_window(build_train(d), "c")
    assert err.value.field == "excitations"
    d = {"format": "twistwise-project", "version": 1, "discs": [{"id": "a", "inertia": 1}, {"id": "b", "inertia": 1}],
         "links": [{"id": "g", "kind": "gear_mesh", "from": "a", "to": "b", "speed_ratio": 2},
                   {"id": "s", "kind": "shaft", "from": "b", "to": "ground", "stiffness": 1e5}],
         "reference": "a", "operating_speed": {"min": "1000 rpm"}, "excitations": [{"at": "a", "orders": [1]}]}
    with pytest.raises(ModelError) as err:
        element_window(build_train(d), "g")
    assert (err.value.element, err.value.field) == ("link 'g'", "stiffness")


def test_bands_count_past_a_damper_ring_joined_by_damping_alone():
    """A viscous damper's ring joined to its housing by damping alone is a second zero root of
    the undamped problem: the band of mode 1 must be that of the first elastic mode, not the
    ring's zero (each band holds its nominal frequency: monotonicity, issue text)."""
    import pathlib

    from core.project import load_train
    from core.study import run_study
    path = pathlib.Path(__file__).resolve().parent.parent / "sample_projects" / "engine_genset.json"
    study = run_study(load_train(path))
    m, bands = study.modes, study.design.bands
    for i in np.flatnonzero(m.elastic):
        assert bands[i, 0] > 0
        assert bands[i, 0] <= m.frequency_hz[i] * (1 + 1e-9)
        assert bands[i, 1] >= m.frequency_hz[i] * (1 - 1e-9)
    # the screening's band margins and the window counts use the same count (core.solver.zero_roots)
    # the screening's band margins use the same count: never larger than the nominal margin
    for c in study.screening.coincidences:
        if c.separation_band is not None:
            assert c.separation_band <= c.separation + 1e-12
