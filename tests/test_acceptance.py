"""Acceptance checks (issue 12, items 1-8) against outside references.

* Independent reference for every vibratory quantity: numpy.linalg.solve of the
  assembled dense complex dynamic stiffness Z = K (1 + i eta) - w^2 J + i w C of the
  lumped train (referred to one shaft through a gear stage by the square of the speed
  ratio: energy equivalence, e.g. Wilson, Practical Solution of Torsional Vibration
  Problems — from memory), on dense speed grids.
* Shear stress of a round shaft tau = 16 T / (pi d^3) (any strength-of-materials text).
* IACS UR M68 limits, Shigley's fatigue relations: see tests/test_shafting.py.
* Coupling vibratory torque frequency correction T_KW sqrt(10 Hz / f) above 10 Hz:
  common practice of coupling data sheets, no source; dissipated power of a hysteretic
  element omega/2 eta k |twist|^2 (Thomson, Theory of Vibration — from memory).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from core.acceptance import acceptance_argument, acceptance_json, analyse_acceptance
from core.errors import ModelError
from core.project import build_train, load_train
from core.response import forced_response
from core.screening import screen

RPM = 2 * math.pi / 60
MPA = 1e6


def dense_max(fn, lo, hi, n=4001):
    """Independent maximisation: fn on a dense grid, then scipy's bounded scalar
    minimisation between the neighbours of the best sample."""
    grid = np.linspace(lo, hi, n)
    v = np.array([fn(w) for w in grid])
    j = int(np.argmax(v))
    a, b = grid[max(j - 1, 0)], grid[min(j + 1, n - 1)]
    res = minimize_scalar(lambda w: -fn(w), bounds=(a, b), method="bounded", options={"xatol": 1e-13})
    return max(-res.fun, float(v.max()))
G_STEEL = 79.3e9  # library carbon steel


# ------------------------------------------------------------------ a propulsion shaft
D, LEN = 0.1, 2.0
IP = math.pi * D ** 4 / 32
K_SHAFT = G_STEEL * IP / LEN
J1, J2, ETA = 10.0, 30.0, 0.05


def shaft_doc(T0=1200.0, load=None, **shaft_extra):
    shaft = {"id": "line", "kind": "shaft", "from": "engine", "to": "prop", "material": "carbon_steel",
             "segments": [{"length": LEN, "outer_diameter": D}], "loss_factor": ETA,
             "propulsion_shaft": {"position": "intermediate", "design_feature": "integral_flange"}}
    shaft.update(shaft_extra)
    doc = {"discs": [{"id": "engine", "inertia": J1}, {"id": "prop", "inertia": J2}],
           "links": [shaft], "reference": "engine",
           "operating_speed": {"min": "300 rpm", "max": "1000 rpm", "trip": "1060 rpm"},
           "excitations": [{"name": "Firing", "at": "engine", "orders": [{"order": 4, "amplitude": T0}]}]}
    if load:
        doc["load_cases"] = [load]
    return doc


def dense_shaft_torque(w, T0=1200.0):
    """|torque| in the shaft at reference speed w (rad/s): dense 2x2 complex solve."""
    om = 4 * w
    k = K_SHAFT * (1 + 1j * ETA)
    Z = np.array([[k - J1 * om ** 2, -k], [-k, k - J2 * om ** 2]])
    th = np.linalg.solve(Z, np.array([T0, 0.0]))
    return abs(k * (th[0] - th[1]))


def tau_c(w, n0=1000 * RPM, sigma_b=570.0, ck=1.0, d_mm=100.0):
    """UR M68 continuous limit, worked from the formula (from memory), Pa."""
    lam = w / n0
    cd = 0.35 + 0.93 * d_mm ** -0.2
    return (sigma_b + 160) / 18 * ck * cd * (3 - 2 * lam ** 2 if lam < 0.9 else 1.38) * MPA


def nominal_stress(T):
    return 16 * T / (math.pi * D ** 3)


def test_barred_range_edges_where_the_stress_meets_tau_c():
    train = build_train(shaft_doc())
    acc = analyse_acceptance(train, forced_response(train))
    (barred,) = acc.barred_ranges
    assert barred.low_exact and barred.high_exact and barred.permitted
    # at both edges the independently computed nominal stress equals tau_C
    for w in (barred.low, barred.high):
        assert nominal_stress(dense_shaft_torque(w)) / tau_c(w) == pytest.approx(1.0, rel=1e-8)
    mid = 0.5 * (barred.low + barred.high)
    assert nominal_stress(dense_shaft_torque(mid)) > tau_c(mid)
    # the resonance (order 4 with the shaft's mode) lies inside: omega_n = sqrt(k (J1+J2) / (J1 J2))
    wn = math.sqrt(K_SHAFT * (J1 + J2) / (J1 * J2)) / 4
    assert barred.low < wn < barred.high
    checks = {(c.criterion, c.speed_band): c for c in acc.checks}
    inside = checks[("shafting_barred_range", "operating")]
    assert inside.passed and inside.value > tau_c(inside.at) and inside.value < inside.limit
    # tau_T = 1.7 tau_C / sqrt(C_K) at the worst speed (C_K = 1)
    assert inside.limit == pytest.approx(1.7 * tau_c(inside.at), rel=1e-9)
    cont = checks[("shafting_continuous", "operating")]
    assert cont.passed and cont.utilisation <= 1.0


def test_barred_range_above_the_transient_limit_fails():
    train = build_train(shaft_doc(T0=3000.0))
    acc = analyse_acceptance(train, forced_response(train))
    (barred,) = acc.barred_ranges
    assert not barred.permitted
    failed = {c.criterion for c in acc.failures}
    assert "shafting_barred_range" in failed and "shafting_continuous" in failed
    assert acc.passed is False
    # the worst point against an independent dense solve: peak of the nominal stress over
    # tau_T between the edges, on a dense grid
    ratio = dense_max(lambda w: nominal_stress(dense_shaft_torque(w, 3000.0)) / (1.7 * tau_c(w)),
                      barred.low, barred.high)
    worst = [c for c in acc.checks if c.criterion == "shafting_barred_range"][0]
    assert worst.utilisation == pytest.approx(ratio, rel=1e-6)


def test_shaft_fatigue_against_the_textbook_relations():
    load = {"name": "Full load", "law": "constant_torque", "torque": "6 kN*m",
            "driven": [{"at": "prop", "share": "100 %"}]}
    train = build_train(shaft_doc(load=load, stress_concentration=1.3,
                                  fatigue={"criterion": "goodman", "surface": "machined"}))
    acc = analyse_acceptance(train, forced_response(train))
    fat = [c for c in acc.checks if c.criterion == "shaft_fatigue"]
    assert len(fat) == 1 and fat[0].speed_band == "operating" and fat[0].segment == 0
    c = fat[0]
    # by hand: S_ut = 570 MPa, S'_se = 0.59 x 0.5 x 570 = 168.15 MPa; machined
    # k_a = 4.51 x 570^-0.265 = 4.51 x exp(-0.265 x 6.34564) = 4.51 x 0.186077 = 0.839208;
    # d = 100 mm: k_b = 1.51 x 100^-0.157 = 0.732786;
    # S_se = 0.839208 x 0.732786 x 168.15 = 103.405 MPa; S_su = 0.67 x 570 = 381.9 MPa
    S_se, S_su = 103.405 * MPA, 381.9 * MPA

    def n(w):
        ta = 1.3 * nominal_stress(dense_shaft_torque(w))
        tm = 1.3 * nominal_stress(6000.0)
        return 1.0 / (ta / S_se + tm / S_su)
    assert c.value == pytest.approx(n(c.at), rel=1e-5)
    assert c.value == pytest.approx(-dense_max(lambda w: -n(w), 300 * RPM, 1000 * RPM), rel=1e-5)
    assert c.limit == 1.5 and c.utilisation == pytest.approx(1.5 / c.value)
    # Soderberg with S_sy = 0.577 x 310 = 178.87 MPa is stricter
    train_s = build_train(shaft_doc(load=load, stress_concentration=1.3, fatigue={"criterion": "soderberg"}))
    acc_s = analyse_acceptance(train_s, forced_response(train_s))
    (cs,) = [x for x in acc_s.checks if x.criterion == "shaft_fatigue"]
    assert cs.value < c.value
    ta = 1.3 * nominal_stress(dense_shaft_torque(cs.at))
    assert cs.value == pytest.approx(1 / (ta / S_se + 1.3 * nominal_stress(6000.0) / (178.87 * MPA)), rel=1e-5)


# ------------------------------------------------------------------ a flexible coupling
JM, JF, KC, ETA_C = 2.0, 5.0, 4.0e4, 0.3


def coupling_doc(**extra):
    link = {"id": "cpl", "kind": "coupling", "from": "motor", "to": "fan", "stiffness": KC,
            "loss_factor": ETA_C, "permissible_torque": "900 N*m", "nominal_torque": "1.2 kN*m",
            "maximum_torque": "3 kN*m", "permissible_power": "150 W"}
    link.update(extra)
    return {"discs": [{"id": "motor", "inertia": JM}, {"id": "fan", "inertia": JF}], "links": [link],
            "reference": "motor", "operating_speed": {"min": "600 rpm", "max": "1800 rpm"},
            "excitations": [{"name": "Fan", "at": "fan", "orders": [{"order": 2, "amplitude": 300.0}]}],
            "load_cases": [{"name": "Duty", "law": "propeller", "power": "90 kW", "speed": "1800 rpm",
                            "driven": [{"at": "fan"}]}]}


def dense_coupling(w):
    """(|torque|, twist) in the coupling at reference speed w: dense complex solve."""
    om = 2 * w
    k = KC * (1 + 1j * ETA_C)
    Z = np.array([[k - JM * om ** 2, -k], [-k, k - JF * om ** 2]])
    th = np.linalg.solve(Z, np.array([0.0, 300.0]))
    return abs(k * (th[0] - th[1])), abs(th[0] - th[1])


def test_coupling_checks_against_dense_solve_and_data_sheet_rules():
    train = build_train(coupling_doc())
    acc = analyse_acceptance(train, forced_response(train))
    c = {x.criterion: x for x in acc.checks if x.speed_band == "operating"}
    lo, hi = 600 * RPM, 1800 * RPM
    # vibratory torque against T_KW corrected above 10 Hz: T_KW sqrt(10 / f), f = 2 n
    util = dense_max(lambda w: dense_coupling(w)[0] / (900.0 * math.sqrt(min(1.0, 10.0 / (2 * w / (2 * math.pi))))),
                     lo, hi)
    assert c["coupling_vibratory_torque"].utilisation == pytest.approx(util, rel=1e-9)
    # mean torque against T_KN: 90 kW at 1800 rpm -> 477.465 N*m, propeller law: largest at the top
    assert c["coupling_nominal_torque"].value == pytest.approx(477.465, rel=1e-5)
    assert c["coupling_nominal_torque"].limit == 1200.0
    # dissipated power omega/2 eta k |twist|^2 (Thomson — from memory)
    power = dense_max(lambda w: 0.5 * 2 * w * ETA_C * KC * dense_coupling(w)[1] ** 2, lo, hi)
    assert c["coupling_dissipated_power"].value == pytest.approx(power, rel=1e-9)
    # maximum torque: mean plus vibratory, every band
    mx = [x for x in acc.checks if x.criterion == "coupling_maximum_torque"]
    assert {x.speed_band for x in mx} == {"transient", "operating"}
    om = [x for x in mx if x.speed_band == "operating"][0]
    tot = dense_max(lambda w: 90e3 / (1800 * RPM) * (w / (1800 * RPM)) ** 2 + dense_coupling(w)[0], lo, hi)
    assert om.value == pytest.approx(tot, rel=1e-9)


def test_coupling_without_frequency_correction_and_with_temperature_factor():
    train = build_train(coupling_doc(permissible_torque_frequency=False, temperature_factor=1.25))
    acc = analyse_acceptance(train, forced_response(train))
    (c,) = [x for x in acc.checks if x.criterion == "coupling_vibratory_torque"]
    # flat T_KW, divided by S_t = 1.25
    peak = dense_max(lambda w: dense_coupling(w)[0], 600 * RPM, 1800 * RPM)
    assert c.utilisation == pytest.approx(peak * 1.25 / 900.0, rel=1e-9)
    (n,) = [x for x in acc.checks if x.criterion == "coupling_nominal_torque"]
    assert n.limit == pytest.approx(1200.0 / 1.25)


# ------------------------------------------------------------------ gear hammer
def geared_doc(mean="150 N*m"):
    return {"discs": [{"id": "motor", "inertia": 3.0}, {"id": "pinion", "inertia": 0.05},
                      {"id": "wheel", "inertia": 0.8}, {"id": "load", "inertia": 12.0}],
            "links": [{"id": "input", "kind": "shaft", "from": "motor", "to": "pinion", "stiffness": 2.0e5,
                       "loss_factor": 0.04},
                      {"id": "mesh", "kind": "gear_mesh", "from": "pinion", "to": "wheel", "speed_ratio": 0.5,
                       "stiffness": 5.0e7},
                      {"id": "output", "kind": "shaft", "from": "wheel", "to": "load", "stiffness": 6.0e5,
                       "loss_factor": 0.04}],
            "reference": "motor", "operating_speed": {"min": "400 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "Motor", "at": "motor", "orders": [{"order": 6, "amplitude": 40.0}]}],
            "load_cases": [{"name": "Part load", "law": "constant_torque", "torque": mean,
                            "driven": [{"at": "load"}]}]}


def dense_mesh_torque(w):
    """|torque| through the mesh on the pinion shaft: dense solve of the train referred
    to the motor shaft (wheel side x ratio^2)."""
    r = 0.5
    om = 6 * w
    J = np.array([3.0, 0.05, 0.8 * r * r, 12.0 * r * r])
    ks = [(0, 1, 2.0e5 * (1 + 0.04j)), (1, 2, 5.0e7), (2, 3, 6.0e5 * r * r * (1 + 0.04j))]
    Z = np.diag(-J * om ** 2).astype(complex)
    for a, b, k in ks:
        Z[a, a] += k
        Z[b, b] += k
        Z[a, b] -= k
        Z[b, a] -= k
    th = np.linalg.solve(Z, np.array([40.0, 0, 0, 0]))
    return abs(5.0e7 * (th[1] - th[2]))


def test_gear_hammer_ranges_where_vibratory_meets_mean_torque():
    train = build_train(geared_doc())
    acc = analyse_acceptance(train, forced_response(train))
    assert acc.hammer_ranges
    for h in acc.hammer_ranges:
        assert h.kind == "gear_hammer" and h.link == "mesh"
        # the mean torque through the mesh on the pinion shaft is the reference torque, 150 N*m
        for w, exact in ((h.low, h.low_exact), (h.high, h.high_exact)):
            if exact:
                assert dense_mesh_torque(w) / 150.0 == pytest.approx(1.0, rel=1e-8)
        assert dense_mesh_torque(0.5 * (h.low + h.high)) > 150.0
    (c,) = [x for x in acc.checks if x.criterion == "gear_hammer"]
    assert c.speed_band == "operating" and c.limit == pytest.approx(150.0)
    peak = dense_max(dense_mesh_torque, 400 * RPM, 1500 * RPM)
    assert c.utilisation == pytest.approx(peak / 150.0, rel=1e-9)
    assert c.passed == (c.utilisation <= 1)
    # a heavier load keeps the teeth in contact
    heavy = build_train(geared_doc("20 kN*m"))
    acc2 = analyse_acceptance(heavy, forced_response(heavy))
    assert not acc2.hammer_ranges
    assert all(x.passed for x in acc2.checks if x.criterion == "gear_hammer")


# ------------------------------------------------------------------ the headline
def half_order_doc(amplitude=None, permissible=None):
    orders = [{"order": k / 2, **({"amplitude": amplitude} if amplitude else {})} for k in range(1, 25)]
    link = {"id": "cpl", "kind": "coupling", "from": "engine", "to": "gen", "stiffness": 3.5e6,
            "loss_factor": 0.1}
    if permissible:
        link["permissible_torque"] = permissible
    return {"discs": [{"id": "engine", "inertia": 12.0}, {"id": "gen", "inertia": 15.0}], "links": [link],
            "reference": "engine", "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "Engine", "at": "engine", "orders": orders}]}


def test_headline_names_the_crowded_half_orders():
    # a four-stroke engine's half orders at 1500 rpm lie 12.5 Hz apart: with 10 % margin
    # the zones (0.9 k, 1.1 k) x 12.5 Hz merge from k = 5 on, 56.25 Hz upwards (by hand)
    train = build_train(half_order_doc())
    sc = screen(train)
    f1 = sc.modes.frequency_hz[1]  # sqrt(k (J1 + J2) / (J1 J2)) / 2 pi = 116 Hz
    assert f1 == pytest.approx(math.sqrt(3.5e6 * 27 / 180) / (2 * math.pi), rel=1e-12)
    arg = acceptance_argument(sc, None)
    lo, hi, n = arg.crowded_zones_hz[0]
    assert lo == pytest.approx(56.25) and n >= 2
    (m,) = [x for x in arg.modes if x.mode == 1]
    assert m.basis == "open" and "overlap" in m.reason
    assert arg.verdict == "open"


def test_headline_accepts_by_forced_response_or_fails_naming_checks():
    ok = build_train(half_order_doc(amplitude="30 N*m", permissible="50 kN*m"))
    acc = analyse_acceptance(ok, forced_response(ok))
    arg = acceptance_argument(screen(ok), acc)
    (m,) = [x for x in arg.modes if x.mode == 1]
    assert m.basis == "forced_response" and m.checks and arg.verdict == "pass"
    bad = build_train(half_order_doc(amplitude="30 N*m", permissible="10 N*m"))
    acc = analyse_acceptance(bad, forced_response(bad))
    arg = acceptance_argument(screen(bad), acc)
    (m,) = [x for x in arg.modes if x.mode == 1]
    assert m.basis == "fail" and all(not c.passed for c in m.checks)
    assert arg.verdict == "fail"


# ------------------------------------------------------------------ contract and samples
def test_json_numbers_follow_the_contract():
    train = build_train(coupling_doc())
    r = forced_response(train)
    data = acceptance_json(analyse_acceptance(train, r))
    json.dumps(data)  # plain JSON
    assert set(data["mean_torque_nm"]) == {"cpl"}
    assert len(data["mean_torque_nm"]["cpl"]["Duty"]) == r.speed.size
    for c in data["checks"]:
        assert {"criterion", "load_case", "speed_band", "value", "limit", "utilisation", "at_rpm",
                "passed"} <= set(c)
        assert c["speed_band"] in ("operating", "transient", "overspeed")
    assert isinstance(data["barred_speed_ranges"], list)


@pytest.mark.parametrize("change, field", [
    ({"nominal_torque": "-1 kN*m"}, "nominal_torque"),
    ({"maximum_torque": "1 kN*m"}, "maximum_torque"),  # below the nominal torque
    ({"permissible_power": "3 N*m"}, "permissible_power"),
    ({"permissible_torque_frequency": "0 Hz"}, "permissible_torque_frequency"),
    ({"temperature_factor": 0.8}, "temperature_factor"),
    ({"permissible_torque_transient": "0 N*m"}, "permissible_torque_transient"),
])
def test_bad_coupling_ratings_name_link_and_field(change, field):
    with pytest.raises(ModelError) as err:
        build_train(coupling_doc(**change))
    assert err.value.element == "link 'cpl'" and err.value.field == field


@pytest.mark.parametrize("change, element, field", [
    ({"propulsion_shaft": {"position": "stern"}}, "link 'line'", "propulsion_shaft.position"),
    ({"propulsion_shaft": {"position": "thrust", "design_feature": "weld"}}, "link 'line'",
     "propulsion_shaft.design_feature"),
    ({"propulsion_shaft": {"position": "thrust"}}, "link 'line'", "propulsion_shaft.design_feature"),
    ({"propulsion_shaft": {"position": "thrust", "shaft_design_factor": 1.4}}, "link 'line'",
     "propulsion_shaft.shaft_design_factor"),
    ({"material": "titanium"}, "link 'line'", "material"),
    ({"fatigue": {"criterion": "gerber"}}, "link 'line'", "fatigue.criterion"),
    ({"fatigue": {"surface": "polished"}}, "link 'line'", "fatigue.surface"),
    ({"fatigue": {"reliability_percent": 97}}, "link 'line'", "fatigue.reliability_percent"),
    ({"fatigue": {"required_safety_factor": 0.5}}, "link 'line'", "fatigue.required_safety_factor"),
    ({"material": {"shear_modulus": "80 GPa", "density": 7850, "tensile_strength": "-5 MPa"}}, "link 'line'",
     "material.tensile_strength"),
    ({"material": {"shear_modulus": "80 GPa", "density": 7850, "tensile_strength": "500 MPa",
                   "yield_strength": "600 MPa"}}, "link 'line'", "material.yield_strength"),
    ({"material": {"shear_modulus": "80 GPa", "density": 7850, "steel": "bronze"}}, "link 'line'",
     "material.steel"),
    ({"nominal_torque": "1 kN*m"}, "link 'line'", "nominal_torque"),
])
def test_bad_shaft_ratings_name_link_and_field(change, element, field):
    with pytest.raises(ModelError) as err:
        build_train(shaft_doc(**change))
    assert err.value.element == element and err.value.field == field


def test_fatigue_on_a_shaft_without_geometry_is_refused():
    doc = shaft_doc()
    link = doc["links"][0]
    for k in ("segments", "material", "propulsion_shaft"):
        link.pop(k)
    link["stiffness"] = 1e6
    link["fatigue"] = {}
    with pytest.raises(ModelError) as err:
        build_train(doc)
    assert err.value.element == "link 'line'" and err.value.field == "fatigue"


def test_custom_material_gives_its_strengths():
    mat = {"shear_modulus": "80 GPa", "density": 7850, "tensile_strength": "650 MPa",
           "yield_strength": "420 MPa", "torsional_endurance_limit": "190 MPa", "steel": "carbon"}
    train = build_train(shaft_doc(material=mat))
    m = train.links[0].material
    assert (m.tensile_strength, m.yield_strength, m.torsional_endurance) == (650e6, 420e6, 190e6)
    assert m.steel == "carbon" and m.strength_source == "given in the project"
