"""Reciprocating-engine excitation (core.engine) against outside references."""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.integrate import trapezoid

from core.engine import (firing_angles_from_throws, gas_torque_from_pressure, inertia_torque_orders,
                         with_load)
from core.errors import ModelError
from core.project import build_train, load_train
from core.response import forced_response
from core.screening import screen

TWO_PI = 2 * math.pi


def sine_parts(r, l, m, top=8):
    """b_n of T / (m r^2 omega^2) = sum b_n sin(n theta), from the engine's FFT."""
    orders, C = inertia_torque_orders(r, l, m, top)
    return orders, -C.imag / (m * r * r), C.real / (m * r * r)


# Series of the inertia torque of one cylinder in lambda = r / l, as the engine-dynamics
# texts give it (C. F. Taylor, The Internal-Combustion Engine in Theory and Practice, vol. 2,
# engine balance; J. P. Den Hartog, Mechanical Vibrations, reciprocating engines — from memory):
#   T / (m r^2 omega^2) = lam/4 sin t - 1/2 sin 2t - 3 lam/4 sin 3t - lam^2/4 sin 4t + ...
# The odd orders carry odd powers of lambda (next term lam^3), the even orders even powers
# (next term lam^4).
SERIES = {1: lambda lam: lam / 4, 2: lambda lam: -0.5, 3: lambda lam: -3 * lam / 4, 4: lambda lam: -lam ** 2 / 4}


def test_inertia_torque_agrees_with_the_series_to_the_order_it_is_exact():
    r, m = 0.1, 5.0
    errors = {}
    for lam in (0.05, 0.025):
        orders, b, a = sine_parts(r, r / lam, m)
        assert np.max(np.abs(a)) < 1e-12  # an odd function of theta: sine terms only
        for n in (1, 2, 3, 4):
            err = abs(b[n - 1] - SERIES[n](lam))
            errors.setdefault(n, []).append(err)
            bound = 2 * lam ** 3 if n % 2 else 2 * lam ** 4
            assert err < bound, (lam, n, err)
        assert abs(b[4]) < 2 * lam ** 3  # order 5 starts at lam^3
    # halving lambda divides the remainder by 2^3 (odd orders) or 2^4 (even orders)
    for n in (1, 3):
        assert errors[n][0] / errors[n][1] == pytest.approx(8.0, rel=0.02)
    for n in (2, 4):
        assert errors[n][0] / errors[n][1] == pytest.approx(16.0, rel=0.02)


def _torque_by_virtual_work(theta, r, l, m, omega):
    """Independent exact inertia torque: piston position from the crank-slider triangle
    (law of cosines), derivatives by central differences, T = -m x'' x' omega^2."""
    def x(t):
        return r + l - (r * np.cos(t) + np.sqrt(l * l - (r * np.sin(t)) ** 2))
    h = 1e-4
    x1 = (x(theta + h) - x(theta - h)) / (2 * h)
    x2 = (x(theta + h) - 2 * x(theta) + x(theta - h)) / h ** 2
    return -m * omega ** 2 * x2 * x1


@pytest.mark.parametrize("lam", [0.25, 0.4])
def test_inertia_torque_series_reproduces_the_exact_torque_elsewhere(lam):
    r, m, omega = 0.09, 6.0, 157.0
    l = r / lam
    orders, C = inertia_torque_orders(r, l, m, 60)
    theta = np.random.default_rng(3).uniform(0, TWO_PI, 50)
    synth = omega ** 2 * np.real(C[None, :] * np.exp(1j * orders[None, :] * theta[:, None])).sum(1)
    exact = _torque_by_virtual_work(theta, r, l, m, omega)
    assert np.max(np.abs(synth - exact)) < 1e-6 * m * r * r * omega ** 2


def test_constant_pressure_gives_order_one_exactly_and_no_odd_orders_above():
    # T = p A r g(theta), g = sin t + lam sin t cos t / sqrt(1 - lam^2 sin^2 t); the second
    # term repeats every half revolution, so order 1 is exactly p A r sin t and the other
    # odd orders vanish (crank-slider kinematics worked by hand).
    bore, r, l, p = 0.16, 0.095, 0.38, 20e5
    a = np.arange(0.0, 720.0, 2.0)
    g = gas_torque_from_pressure(a, np.full(a.size, p), bore, r, l, 4, 12)
    A = math.pi * bore ** 2 / 4
    c = dict(zip(g.orders, g.coefficients))
    assert c[1.0] == pytest.approx(-1j * p * A * r, rel=1e-9)
    for n in (3.0, 5.0, 7.0, 0.5, 1.5, 2.5):
        assert abs(c[n]) < 1e-9 * p * A * r
    assert abs(c[2.0]) > 1e-3 * p * A * r  # the rod's even orders
    assert abs(g.mean_torque) < 1e-9 * p * A * r and abs(g.indicated_mean_pressure) < 1e-6 * p


def test_indicated_mean_pressure_is_the_cycle_work_over_the_swept_volume():
    # W = closed integral of p dV (thermodynamics of the indicator diagram), V from the
    # crank-slider triangle, integrated here by the trapezoid rule on the p-V loop.
    bore, r, l = 0.16, 0.095, 0.38
    a = np.arange(-360.0, 360.0, 0.25)
    p = 2e5 + 140e5 * np.exp(-((a - 12.0) / 28.0) ** 2) + 1e5 * np.sin(np.radians(a / 2)) ** 2
    g = gas_torque_from_pressure(a, p, bore, r, l, 4, 12, crankcase_pressure=1e5)
    A = math.pi * bore ** 2 / 4
    t = np.radians(np.r_[a, a[0] + 720.0])
    V = A * (r + l - (r * np.cos(t) + np.sqrt(l * l - (r * np.sin(t)) ** 2)))
    W = trapezoid(np.r_[p, p[0]], V)
    assert g.indicated_mean_pressure == pytest.approx(W / (A * 2 * r), rel=1e-5)
    assert g.mean_torque == pytest.approx(W / (4 * math.pi), rel=1e-5)  # work per two revolutions


def one_cylinder_doc(order=2.5, sin_bar=3.0, cos_bar=0.0, mass="0 kg", extra=None):
    """One throw (J) on a spring to ground (k), one cylinder: a single-degree-of-freedom system."""
    eng = {"strokes": 4, "bore": "160 mm", "stroke": "190 mm", "connecting_rod": "380 mm",
           "reciprocating_mass": mass,
           "tangential_pressure": {"mean_indicated_pressure": "20 bar",
                                   "orders": [{"order": order, "sin": f"{sin_bar} bar", "cos": f"{cos_bar} bar"}]},
           "cylinders": [{"at": "throw"}]}
    eng.update(extra or {})
    return {"discs": [{"id": "throw", "inertia": "0.5 kg*m^2"}],
            "links": [{"id": "spring", "kind": "shaft", "from": "throw", "to": "ground", "stiffness": "2 MN*m/rad"}],
            "reference": "throw", "operating_speed": {"min": "600 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "Engine", "engine": eng}]}


def test_a_pure_sine_harmonic_reproduces_its_own_order_and_amplitude():
    train = build_train(one_cylinder_doc(2.5, 3.0))
    spec = train.operating.excitations[0].engine
    A, r = math.pi * 0.16 ** 2 / 4, 0.095
    amp = 3e5 * A * r  # tangential pressure times piston area times crank radius
    hs = [h for h in spec.harmonics() if h.gas != 0]
    assert [h.order for h in hs] == [2.5]
    assert hs[0].gas == pytest.approx(-1j * amp, rel=1e-12)  # sin(2.5 theta) = Re(-i exp(2.5 i theta))
    # the time signal of the engine's torque is exactly that sine
    theta = np.linspace(0, 4 * math.pi, 97)
    P = spec.phased_sum(0.0)
    sig = np.real(P[:, None] * np.exp(1j * np.array(spec.orders)[:, None] * theta[None, :])).sum(0)
    assert np.allclose(sig, amp * np.sin(2.5 * theta), atol=1e-9 * amp)
    # and the forced response of the one-degree-of-freedom system is the closed form
    # T_spring = k / |k - omega^2 J| * amp at omega = 2.5 x speed
    speeds = np.array([600.0, 900.0, 1234.0, 1500.0]) * TWO_PI / 60
    resp = forced_response(train, speeds)
    w = 2.5 * speeds
    k, J = 2e6, 0.5
    assert np.allclose(resp.link_torque[0], k / np.abs(k - w ** 2 * J) * amp, rtol=1e-9)


def test_inertia_torque_scales_with_speed_squared_in_the_forced_response():
    train = build_train(one_cylinder_doc(2.5, 0.0, 0.0, mass="6 kg"))
    spec = train.operating.excitations[0].engine
    speeds = np.array([700.0, 1400.0]) * TWO_PI / 60
    resp = forced_response(train, speeds)
    k, J = 2e6, 0.5
    row = resp.orders.index("Engine, order 2")
    C2 = dict(zip(spec.orders, spec.inertia))[2.0]
    expect = abs(C2) * speeds ** 2 * k / np.abs(k - (2 * speeds) ** 2 * J)
    assert np.allclose(resp.order_link_torque[row, 0], expect, rtol=1e-9)


def six_doc(extra=None, firing=None):
    eng = {"strokes": 4, "bore": "160 mm", "stroke": "190 mm", "connecting_rod": "380 mm",
           "reciprocating_mass": "6 kg",
           "tangential_pressure": {"mean_indicated_pressure": "20 bar",
                                   "orders": [{"order": n / 2, "sin": "1 bar", "cos": "0.5 bar"} for n in range(1, 25)]},
           "cylinders": [{"at": f"c{i}"} for i in range(1, 7)],
           "firing_order": [1, 5, 3, 6, 2, 4]}
    eng.update(extra or {})
    discs = [{"id": f"c{i}", "inertia": "0.5 kg*m^2"} for i in range(1, 7)] + [{"id": "fw", "inertia": "9 kg*m^2"}]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"c{i}", "to": f"c{i + 1}" if i < 6 else "fw",
              "stiffness": "3 MN*m/rad"} for i in range(1, 7)]
    return {"discs": discs, "links": links, "reference": "fw",
            "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "Engine", "engine": eng}]}


def test_inline_six_cancels_the_non_major_inertia_orders_exactly():
    # An evenly firing in-line six four-stroke engine: only the orders that are multiples of
    # z/2 = 3 survive in the summed torque (the major orders; engine-dynamics texts, e.g.
    # Den Hartog, Mechanical Vibrations, "critical speeds of engines" — from memory).
    spec = build_train(six_doc()).operating.excitations[0].engine
    assert spec.major_orders == (3.0, 6.0, 9.0, 12.0)
    assert sorted(c.firing_deg for c in spec.cylinders) == [0, 120, 240, 360, 480, 600]
    inert = with_load(spec, 0.0)  # inertia torque alone
    w = 157.0
    P = dict(zip(spec.orders, inert.phased_sum(w)))
    single = dict(zip(spec.orders, spec.inertia))
    for n, v in P.items():
        if n in spec.major_orders:
            assert v == pytest.approx(6 * single[n] * w ** 2, rel=1e-12)
        else:
            assert abs(v) < 1e-12 * abs(single[2.0]) * w ** 2
    # the same from the exact time signal of six cylinders, analysed afresh
    r, l, m = 0.095, 0.38, 6.0
    theta = TWO_PI * np.arange(2048) / 2048
    from core.engine import inertia_torque
    total = sum(inertia_torque(theta - math.radians(c.firing_deg), r, l, m, w) for c in spec.cylinders)
    X = 2 * np.fft.rfft(total) / theta.size
    for n in range(1, 13):
        if n % 3:
            assert abs(X[n]) < 1e-9 * abs(X[3])
        else:
            assert X[n] == pytest.approx(P[float(n)], rel=1e-9)


def test_a_misfire_leaves_the_missing_cylinders_vector_and_load_scales_the_gas_torque():
    spec = build_train(six_doc()).operating.excitations[0].engine
    w = 100.0
    full = dict(zip(spec.orders, spec.phased_sum(w)))
    half = dict(zip(spec.orders, with_load(spec, 0.5).phased_sum(w)))
    gas_sum = {n: g * spec.phase_sum(n) for n, g in zip(spec.orders, spec.gas)}
    for n in spec.orders:
        assert half[n] == pytest.approx(full[n] - 0.5 * gas_sum[n], abs=1e-9 * abs(full[3.0]))
    mis = with_load(spec, misfire={"3": 0.0})
    phi3 = math.radians(next(c.firing_deg for c in spec.cylinders if c.name == "3"))
    P = dict(zip(spec.orders, mis.phased_sum(w)))
    G = dict(zip(spec.orders, spec.gas))
    for n in (0.5, 1.0, 4.5):  # non-major: the other five sum to minus the missing one
        assert P[n] == pytest.approx(-G[n] * np.exp(-1j * n * phi3) + (full[n] - gas_sum[n]), rel=1e-9)
    assert mis.mean_torque == pytest.approx(spec.mean_torque * 5 / 6)
    # the same through the project file
    doc = six_doc({"load_fraction": "50 %", "misfire": {"cylinder": 3, "gas_fraction": 0}})
    spec2 = build_train(doc).operating.excitations[0].engine
    assert spec2.load_fraction == 0.5 and spec2.gas_fraction[2] == 0.0


def test_firing_angles_from_throws_and_bank_angle():
    # 90 deg V-twin on one crank pin fires 270 / 450 deg apart, a 45 deg one 315 / 405
    # (well-known motorcycle engines — from memory); an in-line six with throws 1/6, 2/5, 3/4
    # and firing order 1-5-3-6-2-4 fires every 120 deg.
    assert list(firing_angles_from_throws([0, 90], 4, [0, 1])) == [0, 450]
    assert list(firing_angles_from_throws([0, 45], 4, [0, 1])) == [0, 405]
    phi = firing_angles_from_throws([0, 120, 240, 240, 120, 0], 4, [0, 4, 2, 5, 1, 3])
    assert sorted(phi) == [0, 120, 240, 360, 480, 600]
    assert firing_angles_from_throws([0, 120, 240], 2, [0, 2, 1]) is None  # goes round twice
    doc = six_doc()
    doc["discs"] = doc["discs"][:2] + [doc["discs"][-1]]
    doc["links"] = [{"id": "s1", "kind": "shaft", "from": "c1", "to": "c2", "stiffness": "3 MN*m/rad"},
                    {"id": "s2", "kind": "shaft", "from": "c2", "to": "fw", "stiffness": "3 MN*m/rad"}]
    eng = doc["excitations"][0]["engine"]
    eng.update({"layout": "V", "bank_angle_deg": 90,
                "cylinders": [{"name": "A1", "at": "c1", "throw_deg": 0},
                              {"name": "B1", "at": "c1", "throw_deg": 0, "bank": "B"},
                              {"name": "A2", "at": "c2", "throw_deg": 180},
                              {"name": "B2", "at": "c2", "throw_deg": 180, "bank": "B"}],
                "firing_order": ["A1", "B1", "A2", "B2"]})
    spec = build_train(doc).operating.excitations[0].engine
    fire = {c.name: c.firing_deg for c in spec.cylinders}
    tdc = {"A1": 0, "B1": 90, "A2": 180, "B2": 270}  # throw angle, plus the bank angle on bank B
    for name, phi in fire.items():
        assert (phi - tdc[name]) % 360 == pytest.approx(0.0)  # fires at one of its top dead centres
    assert [fire[n] for n in ["A1", "B1", "A2", "B2"]] == sorted(fire.values())  # in the firing order
    assert max(fire.values()) < 720


def test_pressure_curve_from_a_csv_file_beside_the_project(tmp_path):
    a = np.arange(-360.0, 360.0, 1.0)
    p = np.round(2.4 + 130 * np.exp(-((a - 10) / 25) ** 2), 6)
    (tmp_path / "curve.csv").write_text("crank deg;bar\n" + "\n".join(f"{x:g};{y:.6f}" for x, y in zip(a, p)))
    doc = six_doc()
    eng = doc["excitations"][0]["engine"]
    del eng["tangential_pressure"]
    eng["pressure_curve"] = {"file": "curve.csv", "unit": "bar", "crankcase_pressure": "1 bar"}
    (tmp_path / "p.json").write_text(json.dumps(doc))
    from_file = load_train(tmp_path / "p.json").operating.excitations[0].engine
    eng["pressure_curve"] = {"points": [[float(x), float(y)] for x, y in zip(a, p)], "unit": "bar",
                             "crankcase_pressure": "1 bar"}
    inline = build_train(doc).operating.excitations[0].engine
    assert np.allclose(from_file.gas, inline.gas, rtol=1e-12, atol=0)
    assert from_file.gas_source == "pressure curve" and from_file.indicated_mean_pressure > 0
    with pytest.raises(ModelError) as exc:  # a relative path needs the project's folder
        build_train(json.loads((tmp_path / "p.json").read_text()))
    assert exc.value.field == "engine.pressure_curve.file"


def test_sample_generator_set_screens_every_half_order_to_twelve():
    train = load_train("sample_projects/engine_genset.json")
    e = train.operating.excitations[0]
    assert e.engine.major_orders == (3.0, 6.0, 9.0, 12.0)
    assert [o.order for o in e.orders] == [n / 2 for n in range(1, 25)]
    s = screen(train)
    majors = {c.line.order for c in s.all_pairs if c.line.major}
    assert majors == {3.0, 6.0, 9.0, 12.0}
    assert 15e5 < e.engine.indicated_mean_pressure < 30e5


@pytest.mark.parametrize("change, element, field", [
    (lambda e: e.pop("bore"), "excitation 'Engine'", "engine.bore"),
    (lambda e: e.update(connecting_rod="80 mm"), "excitation 'Engine'", "engine.connecting_rod"),
    (lambda e: e.update(strokes=3), "excitation 'Engine'", "engine.strokes"),
    (lambda e: e.update(firing_order=[1, 2, 3]), "excitation 'Engine'", "engine.firing_order"),
    (lambda e: e["cylinders"][1].update(at="nowhere"), "excitation 'Engine' engine cylinder 2", "at"),
    (lambda e: e.update(misfire={"cylinder": 9}), "excitation 'Engine'", "engine.misfire.cylinder"),
    (lambda e: e.update(load_fraction=-0.2), "excitation 'Engine'", "engine.load_fraction"),
    (lambda e: e.update(pressure_curve={"points": [[0, 1]] * 3, "unit": "bar"}), "excitation 'Engine'",
     "engine.pressure_curve"),
    (lambda e: e.update(stroke="12 kg"), "excitation 'Engine'", "engine.stroke"),
    (lambda e: e.update(bank_angle_deg=60), "excitation 'Engine'", "engine.bank_angle_deg"),
    (lambda e: e["tangential_pressure"]["orders"][0].update(order=0.75), "excitation 'Engine'",
     "engine.tangential_pressure.orders"),
])
def test_bad_engine_input_names_element_and_field(change, element, field):
    doc = six_doc()
    change(doc["excitations"][0]["engine"])
    with pytest.raises(ModelError) as exc:
        build_train(doc)
    assert exc.value.element == element and exc.value.field == field, str(exc.value)


def test_bad_pressure_curve_rows_are_named():
    doc = six_doc()
    eng = doc["excitations"][0]["engine"]
    del eng["tangential_pressure"]
    eng["pressure_curve"] = {"points": [[x, 10] for x in range(0, 360, 10)], "unit": "bar"}
    with pytest.raises(ModelError, match="720 deg") as exc:  # half a four-stroke cycle
        build_train(doc)
    assert exc.value.field == "engine.pressure_curve.points"
    eng["pressure_curve"] = {"points": [[x, 10] for x in range(0, 720, 10)][::-1], "unit": "bar"}
    with pytest.raises(ModelError, match="increase"):
        build_train(doc)
    doc["excitations"][0]["orders"] = [1]
    with pytest.raises(ModelError) as exc:
        build_train(doc)
    assert exc.value.field == "orders"
