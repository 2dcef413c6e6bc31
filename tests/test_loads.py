"""Load cases and mean torque (issue 12, items 3 and 8), against hand-worked values.

Sources: power = torque x angular speed, P = T omega, and power is conserved through a
lossless gear stage (any machine-design text, e.g. Shigley's Mechanical Engineering
Design, power transmission — from memory); the propeller law P ~ n^3 (e.g. Harvald,
Resistance and Propulsion of Ships — from memory).
"""
from __future__ import annotations

import copy
import math

import numpy as np
import pytest

from core.errors import ModelError
from core.loads import describe, load_case_train, mean_torque, reference_torque
from core.project import build_train
from core.response import forced_response

RPM = 2 * math.pi / 60


def geared_doc(**load):
    """motor - shaft - pinion =(mesh, speed ratio 0.25)= wheel - shaft - load."""
    lc = {"name": "Rated", "law": "constant_power", "power": "100 kW", "speed": "1500 rpm",
          "driven": [{"at": "load", "share": "100 %"}]}
    lc.update(load)
    return {"discs": [{"id": "motor", "inertia": 2.0}, {"id": "pinion", "inertia": 0.1},
                      {"id": "wheel", "inertia": 1.5}, {"id": "load", "inertia": 8.0}],
            "links": [{"id": "motor_shaft", "kind": "shaft", "from": "motor", "to": "pinion", "stiffness": 4e5},
                      {"id": "mesh", "kind": "gear_mesh", "from": "pinion", "to": "wheel", "speed_ratio": 0.25},
                      {"id": "output_shaft", "kind": "shaft", "from": "wheel", "to": "load", "stiffness": 2e6}],
            "reference": "motor", "operating_speed": {"min": "900 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "motor", "at": "motor", "orders": [{"order": 2, "amplitude": 50.0}]}],
            "load_cases": [lc]}


def test_power_over_speed_through_a_gear_stage():
    train = build_train(geared_doc())
    (lc,) = train.load_cases
    T = mean_torque(train, lc, np.array([1500 * RPM, 1200 * RPM]))
    # hand-worked: omega = 1500 rpm = 157.0796 rad/s; T = 100 000 W / 157.0796 rad/s = 636.620 N*m
    assert T[0, 0] == pytest.approx(636.620, rel=1e-6)
    assert T[1, 0] == pytest.approx(636.620, rel=1e-6)  # the mesh: on its `from` (pinion) shaft
    # output shaft at 1500 / 4 = 375 rpm = 39.2699 rad/s: 100 000 / 39.2699 = 2546.48 N*m,
    # i.e. T x speed ratio n_in / n_out = 636.620 x 4
    assert T[2, 0] == pytest.approx(2546.48, rel=1e-6)
    # constant power: at 1200 rpm (125.664 rad/s) the motor shaft carries 795.775 N*m
    assert T[0, 1] == pytest.approx(795.775, rel=1e-6)


def test_branch_split_by_power_shares():
    # one bull gear drives two pinions (speed ratios 2.45 and 3.1), 60 % / 40 % of 300 kW
    doc = {"discs": [{"id": "motor", "inertia": 60.0}, {"id": "bull", "inertia": 28.0},
                     {"id": "pa", "inertia": 0.4}, {"id": "pump_a", "inertia": 1.9},
                     {"id": "pb", "inertia": 0.35}, {"id": "pump_b", "inertia": 1.4}],
           "links": [{"id": "input", "kind": "shaft", "from": "motor", "to": "bull", "stiffness": 9e6},
                     {"id": "mesh_a", "kind": "gear_mesh", "from": "bull", "to": "pa", "speed_ratio": 2.45},
                     {"id": "shaft_a", "kind": "shaft", "from": "pa", "to": "pump_a", "stiffness": 1.2e6},
                     {"id": "mesh_b", "kind": "gear_mesh", "from": "bull", "to": "pb", "speed_ratio": 3.1},
                     {"id": "shaft_b", "kind": "shaft", "from": "pump_b", "to": "pb", "stiffness": 0.9e6}],
           "reference": "motor", "operating_speed": {"min": "1490 rpm", "max": "1490 rpm"},
           "load_cases": [{"name": "Both pumps", "law": "constant_power", "power": "300 kW",
                           "speed": "1490 rpm", "driven": [{"at": "pump_a", "share": "60 %"},
                                                           {"at": "pump_b", "share": 0.4}]}]}
    train = build_train(doc)
    w = 1490 * RPM  # 156.0324351 rad/s (1490 x 0.10471976)
    T = mean_torque(train, train.load_cases[0], np.array([w]))[:, 0]
    # hand-worked: input 300 000 / 156.0324351 = 1922.6772 N*m; mesh a (bull shaft) 0.6 x that =
    # 1153.6063 N*m; shaft a at 2.45 x speed: 180 000 / 382.27947 = 470.8597 N*m; mesh b
    # 769.0709 N*m; shaft b at 3.1 x speed: 120 000 / 483.70055 = 248.0874 N*m, drawn from
    # the pump to the pinion, so the power runs to -> from: negative
    assert T[0] == pytest.approx(1922.6772, rel=1e-7)
    assert T[1] == pytest.approx(1153.6063, rel=1e-7)
    assert T[2] == pytest.approx(470.8597, rel=1e-7)
    assert T[3] == pytest.approx(769.0709, rel=1e-7)
    assert T[4] == pytest.approx(-248.0874, rel=1e-6)


def test_engine_torque_builds_up_along_the_crankshaft():
    # six throws each put in 1/6 of the power; the link behind throw k carries k/6 of it
    discs = [{"id": f"c{i}", "inertia": 0.5} for i in range(1, 7)] + [{"id": "gen", "inertia": 16.0}]
    links = [{"id": f"k{i}", "kind": "shaft", "from": f"c{i}", "to": f"c{i + 1}", "stiffness": 2e6}
             for i in range(1, 6)] + [{"id": "out", "kind": "shaft", "from": "c6", "to": "gen", "stiffness": 3e6}]
    doc = {"discs": discs, "links": links, "reference": "gen",
           "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
           "load_cases": [{"name": "Rated", "law": "constant_power", "power": "500 kW", "speed": "1500 rpm",
                           "driven": [{"at": "gen"}],
                           "driving": [{"at": f"c{i}"} for i in range(1, 7)]}]}  # no share: equal
    train = build_train(doc)
    T = mean_torque(train, train.load_cases[0], np.array([1500 * RPM]))[:, 0]
    full = 500e3 / (1500 * RPM)  # 3183.10 N*m
    assert T == pytest.approx(full * np.arange(1, 7) / 6, rel=1e-12)


def test_laws_against_their_formulas():
    op = build_train(geared_doc()).operating
    w = np.array([300, 900, 1200, 1500]) * RPM
    prop = build_train(geared_doc(law="propeller")).load_cases[0]
    T0 = 100e3 / (1500 * RPM)
    assert reference_torque(prop, w, op) == pytest.approx(T0 * (w / (1500 * RPM)) ** 2, rel=1e-12)
    cp = build_train(geared_doc()).load_cases[0]
    # below the operating range (900 rpm) the torque stays at its value there
    assert reference_torque(cp, w, op) == pytest.approx(100e3 / np.maximum(w, 900 * RPM), rel=1e-12)
    ct = build_train(geared_doc(law="constant_torque", power=None, torque="500 N*m", speed=None)).load_cases[0]
    assert reference_torque(ct, w, op) == pytest.approx(500.0)
    tab = build_train(geared_doc(law="table", power=None, speed=None,
                                 table=[["600 rpm", "20 kW"], ["1500 rpm", "100 kW"]])).load_cases[0]
    # power table: torques at the points 20 000 / 62.832 = 318.31 and 636.62 N*m, linear between
    got = reference_torque(tab, np.array([600, 1050, 1500, 2000]) * RPM, op)
    assert got == pytest.approx([318.310, 477.465, 636.620, 636.620], rel=1e-5)
    assert "propeller" in describe(prop) and "kW" in describe(prop)


def test_excitation_scale_scales_the_response_linearly():
    train = build_train(geared_doc(excitation_scale=0.4))
    lc = train.load_cases[0]
    speeds = np.linspace(300, 1500, 7) * RPM
    full = forced_response(train, speeds)
    part = forced_response(load_case_train(train, lc), speeds)
    assert part.link_torque == pytest.approx(0.4 * full.link_torque, rel=1e-12)


def engine_doc(cylinders, misfire=None):
    discs = [{"id": f"c{i}", "inertia": 0.5, "damping": 8.0} for i in range(1, 5)] + \
        [{"id": "fly", "inertia": 6.0}]
    links = [{"id": f"k{i}", "kind": "shaft", "from": f"c{i}", "to": f"c{i + 1}", "stiffness": 2e6}
             for i in range(1, 4)] + [{"id": "rear", "kind": "shaft", "from": "c4", "to": "fly",
                                       "stiffness": 3e6, "loss_factor": 0.05}]
    lc = {"name": "Misfire", "law": "constant_torque", "torque": "1 kN*m", "driven": [{"at": "fly"}],
          "driving": [{"at": f"c{i}", "share": "25 %"} for i in range(1, 5)]}
    if misfire:
        lc["misfire"] = misfire
    return {"discs": discs, "links": links, "reference": "fly",
            "operating_speed": {"min": "1000 rpm", "max": "1800 rpm"},
            "excitations": [{"name": "Gas", "orders": [{"order": 0.5, "amplitude": 200.0, "phase_deg": 20},
                                                       {"order": 2, "amplitude": 300.0, "phase_deg": 50}],
                             "cylinders": cylinders}],
            "load_cases": [lc]}


FIRING = [{"at": "c1", "firing_deg": 0}, {"at": "c3", "firing_deg": 180},
          {"at": "c4", "firing_deg": 360}, {"at": "c2", "firing_deg": 540}]


def test_misfire_equals_the_engine_without_that_cylinder():
    # independent construction: the same engine with the misfiring throw left out
    speeds = np.linspace(1000, 1800, 9) * RPM
    train = build_train(engine_doc(FIRING, {"cylinder": "c3", "gas_torque_fraction": 0}))
    misfiring = forced_response(load_case_train(train, train.load_cases[0]), speeds)
    without = forced_response(build_train(engine_doc([c for c in FIRING if c["at"] != "c3"])), speeds)
    assert misfiring.link_torque == pytest.approx(without.link_torque, rel=1e-10)
    # a fraction of one gives the healthy engine back
    healthy = build_train(engine_doc(FIRING))
    train1 = build_train(engine_doc(FIRING, {"cylinder": "c3", "gas_torque_fraction": 1.0}))
    a = forced_response(load_case_train(train1, train1.load_cases[0]), speeds)
    b = forced_response(healthy, speeds)
    assert a.link_torque == pytest.approx(b.link_torque, rel=1e-10)


@pytest.mark.parametrize("change, element, field", [
    ({"law": "linear"}, "load case 'Rated'", "law"),
    ({"driven": [{"at": "load", "share": "60 %"}]}, "load case 'Rated'", "driven"),
    ({"driven": [{"at": "nowhere"}]}, "load case 'Rated' driven 1", "at"),
    ({"driven": [{"at": "load", "share": 60}]}, "load case 'Rated' driven 1", "share"),
    ({"driving": [{"at": "load"}]}, "load case 'Rated'", "driven"),
    ({"torque": "1 kN*m"}, "load case 'Rated'", "power"),
    ({"speed": "-3 rpm"}, "load case 'Rated'", "speed"),
    ({"power": "100 kN*m"}, "load case 'Rated'", "power"),
    ({"law": "table", "table": [["100 rpm", 5]]}, "load case 'Rated'", "table"),
    ({"law": "table", "table": [["100 rpm", 5], ["200 rpm", 6]]}, "load case 'Rated'", "table_quantity"),
    ({"law": "table", "table": [["200 rpm", "5 kW"], ["100 rpm", "6 kW"]]}, "load case 'Rated'", "table"),
    ({"law": "table", "table": [["0 rpm", "5 kW"], ["100 rpm", "6 kW"]]}, "load case 'Rated'", "table"),
    ({"law": "table", "table": [["10 rpm", "5 kW"], ["100 rpm", "6 kN*m"]]}, "load case 'Rated'", "table"),
    ({"law": "table", "table": [["10 rpm", "5 m"], ["100 rpm", "6 kW"]]}, "load case 'Rated' table row 1",
     "value"),
    ({"excitation_scale": {"nothing": 0.5}}, "load case 'Rated'", "excitation_scale.nothing"),
    ({"excitation_scale": -1}, "load case 'Rated'", "excitation_scale"),
    ({"misfire": {"cylinder": "motor"}}, "load case 'Rated'", "misfire.cylinder"),
])
def test_bad_load_cases_name_element_and_field(change, element, field):
    doc = geared_doc(**change)
    with pytest.raises(ModelError) as err:
        build_train(doc)
    assert err.value.element == element and err.value.field == field


def test_bad_load_case_list_and_names():
    doc = geared_doc()
    doc["load_cases"] = {"name": "x"}
    with pytest.raises(ModelError) as err:
        build_train(doc)
    assert err.value.field == "load_cases"
    doc = geared_doc()
    doc["load_cases"].append(copy.deepcopy(doc["load_cases"][0]))
    with pytest.raises(ModelError) as err:
        build_train(doc)
    assert err.value.element == "load case 'Rated'" and err.value.field == "name"
    doc = geared_doc()
    del doc["load_cases"][0]["driven"]
    with pytest.raises(ModelError) as err:
        build_train(doc)
    assert err.value.field == "driven"


def test_misfire_of_a_non_cylinder_names_the_field():
    with pytest.raises(ModelError) as err:
        build_train(engine_doc(FIRING, {"cylinder": "fly"}))
    assert err.value.element == "load case 'Misfire'" and err.value.field == "misfire.cylinder"
    with pytest.raises(ModelError) as err:
        build_train(engine_doc(FIRING, {"cylinder": "c1", "gas_torque_fraction": 2}))
    assert err.value.field == "misfire.gas_torque_fraction"
