"""Forced response (issue 6) against outside references: closed-form single-degree
solutions, independent dense numpy solves, strength-of-materials formulas."""
import math

import numpy as np
import pytest

from core.errors import ModelError
from core.project import build_train
from core.response import (exceedances, forced_response, has_amplitudes, response_summary)
from core.solver import natural_modes

RPM = 2 * math.pi / 60


def single_disc(J=2.0, k=8.0e4, T=100.0, disc_damping=None, loss_factor=None, **link_extra):
    disc = {"id": "d", "inertia": J}
    if disc_damping is not None:
        disc["damping"] = disc_damping
    link = {"id": "s", "kind": "shaft", "from": "ground", "to": "d", "stiffness": k, **link_extra}
    if loss_factor is not None:
        link["loss_factor"] = loss_factor
    return build_train({"discs": [disc], "links": [link], "reference": "d",
                        "operating_speed": {"min": 10, "max": 400},
                        "excitations": [{"name": "drive", "at": "d",
                                         "orders": [{"order": 1, "amplitude": T}]}]})


# ---------------------------------------------------------------- single degree of freedom
def test_viscous_single_disc_matches_closed_form():
    # |theta| = T / sqrt((k - J w^2)^2 + (c w)^2): steady state of a damped single-degree
    # system (W. T. Thomson, Theory of Vibration with Applications, ch. 3 — from memory)
    J, k, c, T = 2.0, 8.0e4, 40.0, 100.0
    w = np.linspace(10, 400, 97)
    r = forced_response(single_disc(J, k, T, disc_damping=c), w)
    ref = T / np.sqrt((k - J * w ** 2) ** 2 + (c * w) ** 2)
    assert r.disc_angle[0] == pytest.approx(ref, rel=1e-10)
    assert r.link_torque[0] == pytest.approx(k * ref, rel=1e-10)  # the dashpot is to ground
    # a disc dashpot dissipates c w^2 |theta|^2 / 2 (same textbook, energy per cycle)
    assert r.disc_power[0] == pytest.approx(0.5 * c * w ** 2 * ref ** 2, rel=1e-10)
    assert np.all(r.link_power[0] == 0)


def test_viscous_resonance_amplification_is_one_over_two_zeta():
    # dynamic amplification at w_n = sqrt(k/J) is 1 / (2 zeta), zeta = c / (2 sqrt(k J))
    # (Thomson, ch. 3 — from memory)
    J, k, c, T = 2.0, 8.0e4, 40.0, 100.0
    wn = math.sqrt(k / J)
    zeta = c / (2 * math.sqrt(k * J))
    r = forced_response(single_disc(J, k, T, disc_damping=c), [wn])
    assert r.disc_angle[0, 0] * k / T == pytest.approx(1 / (2 * zeta), rel=1e-10)


def test_hysteretic_resonance_amplification_is_one_over_eta():
    # structural (hysteretic) damping k (1 + i eta): amplification 1/eta at w_n
    # (Thomson, "complex stiffness" — from memory)
    J, k, T, eta = 2.0, 8.0e4, 100.0, 0.05
    wn = math.sqrt(k / J)
    r = forced_response(single_disc(J, k, T, loss_factor=eta), [0.5 * wn, wn, 1.5 * wn])
    assert r.disc_angle[0, 1] * k / T == pytest.approx(1 / eta, rel=1e-10)
    w = np.array([0.5, 1.0, 1.5]) * wn
    ref = T / np.abs(k * (1 + 1j * eta) - J * w ** 2)
    assert r.disc_angle[0] == pytest.approx(ref, rel=1e-10)
    # the shaft carries the elastic plus the hysteretic torque, |k (1 + i eta)| |theta|
    assert r.link_torque[0] == pytest.approx(k * math.hypot(1, eta) * ref, rel=1e-10)
    # hysteretic loss per cycle pi eta k |theta|^2, i.e. power eta k w |theta|^2 / 2 (same source)
    assert r.link_power[0] == pytest.approx(0.5 * eta * k * w * ref ** 2, rel=1e-10)


def test_relative_damping_and_dynamic_magnifier_are_converted():
    # psi = 2 pi eta and M = 1 / eta (coupling catalogue conventions — from memory)
    J, k, T = 2.0, 8.0e4, 100.0
    wn = math.sqrt(k / J)
    a = forced_response(single_disc(J, k, T, relative_damping=2 * math.pi * 0.08), [wn])
    b = forced_response(single_disc(J, k, T, dynamic_magnifier=12.5), [wn])
    assert a.disc_angle[0, 0] * k / T == pytest.approx(12.5, rel=1e-10)
    assert b.disc_angle[0, 0] * k / T == pytest.approx(12.5, rel=1e-10)


# ---------------------------------------------------------------- two discs, dense reference
def two_disc_doc(c_rel=35.0, J1=3.0, J2=1.2, k=2.0e5, c1=0.0):
    return {"discs": [{"id": "a", "inertia": J1, "damping": c1}, {"id": "b", "inertia": J2}],
            "links": [{"id": "s", "kind": "coupling", "from": "a", "to": "b", "stiffness": k,
                       "damping": c_rel}],
            "reference": "a", "operating_speed": {"min": 100, "max": 1000},
            "excitations": [{"name": "drive", "at": "b",
                             "orders": [{"order": 1, "amplitude": 250.0, "phase_deg": 30},
                                        {"order": 2, "amplitude": 80.0}]}]}


def test_two_discs_with_relative_damping_match_dense_complex_solve():
    J1, J2, k, c, c1 = 3.0, 1.2, 2.0e5, 35.0, 4.0
    train = build_train(two_disc_doc(c, J1, J2, k, c1))
    speeds = np.linspace(100, 1000, 61)
    r = forced_response(train, speeds)
    # independent reference: numpy.linalg.solve of the complex 2x2 system per frequency
    for g, (n, amp, ph) in enumerate([(1, 250.0, 30.0), (2, 80.0, 0.0)]):
        for j, s in enumerate(speeds):
            w = n * s
            z = k + 1j * w * c
            Z = np.array([[z - J1 * w ** 2 + 1j * w * c1, -z], [-z, z - J2 * w ** 2]])
            th = np.linalg.solve(Z, np.array([0.0, amp * np.exp(1j * math.radians(ph))]))
            assert r.order_disc_angle[g, :, j] == pytest.approx(np.abs(th), rel=1e-9)
            assert r.order_link_torque[g, 0, j] == pytest.approx(abs(z * (th[0] - th[1])), rel=1e-9)
    assert r.link_torque[0] == pytest.approx(r.order_link_torque[:, 0].sum(0), rel=1e-12)
    # a relative dashpot dissipates c w^2 |twist|^2 / 2 (Thomson — from memory); orders add
    p = 0
    for g, n in enumerate((1, 2)):
        twist = r.order_link_torque[g, 0] / np.abs(k + 1j * n * speeds * c)
        p = p + 0.5 * c * (n * speeds) ** 2 * twist ** 2
    assert r.link_power[0] == pytest.approx(p, rel=1e-9)


def test_phase_aware_synthesis_matches_a_dense_time_signal():
    train = build_train(two_disc_doc())
    speeds = np.linspace(100, 1000, 31)
    r = forced_response(train, speeds)
    # reference: build the torque phasors per order from the response and sample the
    # time signal T(t) = sum_n Re(T_n exp(i n s t)) densely over one revolution
    Tst = r._station[0][0]  # (orders, speeds) phasors of the single link
    tau = np.linspace(0, 2 * np.pi, 20001)
    for j in range(len(speeds)):
        sig = (Tst[0, j] * np.exp(1j * tau) + Tst[1, j] * np.exp(2j * tau)).real
        # grid + parabolic interpolation: ~1e-5 of the peak
        assert r.link_torque_phased[0, j] == pytest.approx(np.abs(sig).max(), rel=1e-4)
    assert np.all(r.link_torque_phased[0] <= r.link_torque[0] * (1 + 1e-9))


def test_phased_synthesis_of_incommensurate_sources_is_the_sum():
    # a fixed-frequency source drifts in phase against speed-proportional orders, so
    # over time their peaks line up (Kronecker's theorem — from memory): sum of amplitudes
    doc = two_disc_doc()
    doc["excitations"] = [{"name": "drive", "at": "b", "orders": [{"order": 1, "amplitude": 250.0}]},
                          {"name": "grid", "frequency": "50 Hz", "amplitude": 40.0, "applied_at": "a"}]
    r = forced_response(build_train(doc), np.linspace(100, 1000, 11))
    assert r.link_torque_phased[0] == pytest.approx(r.link_torque[0], rel=1e-12)
    # the fixed source's response does not change with speed
    g = r.orders.index("grid (50 Hz)")
    assert np.ptp(r.order_link_torque[g, 0]) < 1e-9 * r.order_link_torque[g, 0].max()


def test_per_cylinder_firing_angles_against_dense_solve():
    # two throws firing 180 degrees apart: order n acts on throw 2 with phase -n*180 deg
    J, k = 1.0, 3.0e5
    doc = {"discs": [{"id": "c1", "inertia": J}, {"id": "c2", "inertia": J},
                     {"id": "fw", "inertia": 8.0}],
           "links": [{"id": "k12", "kind": "shaft", "from": "c1", "to": "c2", "stiffness": k,
                      "loss_factor": 0.02},
                     {"id": "k2f", "kind": "shaft", "from": "c2", "to": "fw", "stiffness": k,
                      "loss_factor": 0.02}],
           "reference": "fw", "operating_speed": {"min": 50, "max": 300},
           "excitations": [{"name": "gas", "orders": [{"order": 1, "amplitude": 100.0},
                                                      {"order": 1.5, "amplitude": 60.0, "phase_deg": 20}],
                            "cylinders": [{"at": "c1", "firing_deg": 0}, {"at": "c2", "firing_deg": 180}]}]}
    train = build_train(doc)
    assert train.operating.excitations[0].at == "c1"  # "at" defaults to the first cylinder
    speeds = np.linspace(50, 300, 9)
    r = forced_response(train, speeds)
    kc = k * (1 + 0.02j)
    for g, (n, amp, ph) in enumerate([(1, 100.0, 0.0), (1.5, 60.0, 20.0)]):
        for j, s in enumerate(speeds):
            w = n * s
            Z = np.array([[kc - J * w ** 2, -kc, 0], [-kc, 2 * kc - J * w ** 2, -kc],
                          [0, -kc, kc - 8.0 * w ** 2]])
            F = amp * np.exp(1j * np.radians([ph, ph - n * 180.0, 0.0])) * np.array([1, 1, 0])
            th = np.linalg.solve(Z, F)  # numpy as the independent reference
            assert r.order_disc_angle[g, :, j] == pytest.approx(np.abs(th), rel=1e-9)


def test_speed_squared_scaling():
    doc = two_disc_doc()
    doc["excitations"] = [{"name": "fan", "at": "b", "orders": [
        {"order": 1, "amplitude": 100.0, "scaling": "speed_squared", "at_speed": 500}]}]
    speeds = np.array([250.0, 500.0, 1000.0])
    r = forced_response(build_train(doc), speeds)
    doc["excitations"][0]["orders"][0].pop("scaling")
    flat = forced_response(build_train(doc), speeds)
    # amplitude A (n / n_at)^2 (definition of the project key)
    assert r.link_torque[0] == pytest.approx(flat.link_torque[0] * (speeds / 500.0) ** 2, rel=1e-12)


# ---------------------------------------------------------------- undamped limit
def test_light_damping_peaks_sit_on_the_natural_frequencies():
    doc = {"discs": [{"id": f"d{i}", "inertia": J} for i, J in enumerate([4.0, 1.5, 2.5, 0.8])],
           "links": [{"id": f"k{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}",
                      "stiffness": k, "loss_factor": 1e-5} for i, k in enumerate([6e5, 3e5, 9e5])],
           "reference": "d0", "operating_speed": {"min": 10, "max": 2000},
           "excitations": [{"name": "drive", "at": "d3", "orders": [{"order": 1, "amplitude": 10.0}]}]}
    train = build_train(doc)
    modes = natural_modes(train, n_modes=3)  # independent: the undamped eigen-solver
    for f in modes.frequency_hz[modes.elastic]:
        wn = 2 * math.pi * f
        w = wn * np.linspace(0.99, 1.01, 4001)
        r = forced_response(train, w)
        peak = w[np.argmax(r.disc_angle[3])]
        assert peak == pytest.approx(wn, rel=2e-5)  # grid step 5e-6


# ---------------------------------------------------------------- stress
@pytest.mark.parametrize("outer,inner", [(0.08, 0.0), (0.1, 0.06)])
def test_shear_stress_of_round_shaft(outer, inner):
    # tau = 16 T D / (pi (D^4 - d^4)); solid: 16 T / (pi d^3) (Roark's Formulas for Stress
    # and Strain, torsion of round bars — from memory)
    doc = {"discs": [{"id": "m", "inertia": 5.0}, {"id": "p", "inertia": 2.0}],
           "links": [{"id": "sh", "kind": "shaft", "from": "m", "to": "p", "material": "carbon_steel",
                      "stress_concentration": 1.4,
                      "segments": [{"length": "300 mm", "outer_diameter": outer + 0.03},
                                   {"length": "400 mm", "outer_diameter": outer,
                                    "inner_diameter": inner}]}],
           "reference": "m", "operating_speed": {"min": 100, "max": 300},
           "excitations": [{"name": "drive", "at": "p", "orders": [{"order": 2, "amplitude": 500.0}]}]}
    r = forced_response(build_train(doc), np.linspace(100, 300, 21))
    tau = 16 * r.link_torque[0] * outer / (math.pi * (outer ** 4 - inner ** 4))
    assert r.link_stress[0] == pytest.approx(1.4 * tau, rel=1e-12)  # the smaller section governs


def test_distributed_shaft_against_wave_equation_closed_form():
    # clamped uniform shaft with a tip disc driven by T: theta_tip = T / (k x cot x - J w^2),
    # x = w L sqrt(rho / G), root torque T_root = k x theta_tip / sin x (torsional wave
    # equation, Timoshenko, Vibration Problems in Engineering — from memory)
    G, rho, L, D, J, T = 79.3e9, 7850.0, 2.0, 0.06, 0.4, 50.0
    doc = {"discs": [{"id": "tip", "inertia": J}],
           "links": [{"id": "sh", "kind": "shaft", "from": "ground", "to": "tip", "mass": "distributed",
                      "material": {"shear_modulus": G, "density": rho},
                      "segments": [{"length": L, "outer_diameter": D}]}],
           "reference": "tip", "operating_speed": {"min": 100, "max": 2000},
           "excitations": [{"name": "drive", "at": "tip", "orders": [{"order": 1, "amplitude": T}]}]}
    w = np.linspace(100, 2000, 40)
    r = forced_response(build_train(doc), w)
    Ip = math.pi * D ** 4 / 32
    k = G * Ip / L
    x = w * L * math.sqrt(rho / G)
    th = T / (k * x / np.tan(x) - J * w ** 2)
    assert r.disc_angle[0] == pytest.approx(np.abs(th), rel=1e-9)
    assert np.all(x < np.pi / 2)  # below the first clamped-shaft quarter wave: largest at the root
    assert r.link_torque[0] == pytest.approx(np.abs(k * x * th / np.sin(x)), rel=1e-9)


# ---------------------------------------------------------------- gears
def test_geared_train_equals_its_speed_referred_equivalent():
    # referral by energy equivalence: J r^2, k r^2, torque T r, angle theta / r (Wilson,
    # Practical Solution of Torsional Vibration Problems — from memory)
    r_ = 0.4
    geared = {"discs": [{"id": "m", "inertia": 6.0, "damping": 20.0}, {"id": "pin", "inertia": 0.5},
                        {"id": "whl", "inertia": 3.0}, {"id": "load", "inertia": 40.0, "damping": 300.0}],
              "links": [{"id": "k1", "kind": "shaft", "from": "m", "to": "pin", "stiffness": 4e5,
                         "loss_factor": 0.03},
                        {"id": "mesh", "kind": "gear_mesh", "from": "pin", "to": "whl", "speed_ratio": r_},
                        {"id": "k2", "kind": "shaft", "from": "whl", "to": "load", "stiffness": 1.5e6,
                         "damping": 150.0}],
              "reference": "m", "operating_speed": {"min": 50, "max": 400},
              "excitations": [{"name": "load pulses", "at": "load", "orders": [{"order": 3, "amplitude": 900.0}]},
                              {"name": "motor", "at": "m", "orders": [{"order": 2, "amplitude": 200.0}]}]}
    referred = {"discs": [{"id": "m", "inertia": 6.0, "damping": 20.0},
                          {"id": "gears", "inertia": 0.5 + 3.0 * r_ ** 2},
                          {"id": "load", "inertia": 40.0 * r_ ** 2, "damping": 300.0 * r_ ** 2}],
                "links": [{"id": "k1", "kind": "shaft", "from": "m", "to": "gears", "stiffness": 4e5,
                           "loss_factor": 0.03},
                          {"id": "k2", "kind": "shaft", "from": "gears", "to": "load",
                           "stiffness": 1.5e6 * r_ ** 2, "damping": 150.0 * r_ ** 2}],
                "reference": "m", "operating_speed": {"min": 50, "max": 400},
                "excitations": [{"name": "load pulses", "at": "load",
                                 "orders": [{"order": 3 * r_, "amplitude": 900.0 * r_}]},
                                {"name": "motor", "at": "m", "orders": [{"order": 2, "amplitude": 200.0}]}]}
    speeds = np.linspace(50, 400, 57)
    a = forced_response(build_train(geared), speeds)
    b = forced_response(build_train(referred), speeds)
    assert a.link_torque[0] == pytest.approx(b.link_torque[0], rel=1e-9)
    assert a.link_torque[2] == pytest.approx(b.link_torque[1] / r_, rel=1e-9)
    assert a.disc_angle[3] == pytest.approx(b.disc_angle[2] * r_, rel=1e-9)
    assert a.link_power[2] == pytest.approx(b.link_power[1], rel=1e-9)


def test_rigid_mesh_torque_from_the_wheel_side():
    # a rigid mesh to a single load disc: the mesh transmits what accelerates the wheel
    # and the load, referred to the pinion: T = r * (-w^2 (J_w + ...)) — checked against a
    # dense numpy solve of the referred 2-node system (numpy as the independent reference)
    r_, Jm, Jp, Jw, k = 2.5, 4.0, 0.3, 0.9, 5e5
    doc = {"discs": [{"id": "m", "inertia": Jm}, {"id": "pin", "inertia": Jp}, {"id": "whl", "inertia": Jw}],
           "links": [{"id": "k1", "kind": "shaft", "from": "m", "to": "pin", "stiffness": k},
                     {"id": "mesh", "kind": "gear_mesh", "from": "pin", "to": "whl", "speed_ratio": r_}],
           "reference": "m", "operating_speed": {"min": 50, "max": 400},
           "excitations": [{"name": "m", "at": "m", "orders": [{"order": 1, "amplitude": 100.0}]}]}
    speeds = np.linspace(50, 400, 15)
    resp = forced_response(build_train(doc), speeds)
    for j, w in enumerate(speeds):
        Jn = Jp + Jw * r_ ** 2
        Z = np.array([[k - Jm * w ** 2, -k], [-k, k - Jn * w ** 2]])
        th = np.linalg.solve(Z, np.array([100.0, 0.0]))
        # wheel on its own shaft: theta_w = r theta_n; torque on the wheel -w^2 Jw theta_w = T_mesh / r
        t_mesh = abs(-w ** 2 * Jw * r_ * th[1] * r_)
        assert resp.link_torque[1, j] == pytest.approx(t_mesh, rel=1e-9)
        assert resp.link_torque[0, j] == pytest.approx(abs(k * (th[0] - th[1])), rel=1e-9)


# ---------------------------------------------------------------- summaries and input
def test_summary_and_exceedances():
    doc = two_disc_doc()
    doc["links"][0]["permissible_torque"] = "1 kN*m"
    train = build_train(doc)
    r = forced_response(train, np.linspace(100, 1000, 200))
    (peak,) = response_summary(r)
    assert peak.peak_torque == pytest.approx(r.link_torque[0].max())
    assert peak.permissible_torque == 1000.0
    over = exceedances(r)
    assert (peak.passed is False) == bool(over)
    if over:
        assert over[0].quantity == "torque" and over[0].peak > 1000.0
    doc["links"][0]["permissible_torque"] = "1 MN*m"
    r2 = forced_response(build_train(doc), np.linspace(100, 1000, 20))
    assert response_summary(r2)[0].passed is True and exceedances(r2) == []
    doc["links"][0].pop("permissible_torque")
    r3 = forced_response(build_train(doc), np.linspace(100, 1000, 20))
    assert response_summary(r3)[0].passed is None


def test_no_amplitudes_is_a_clear_error():
    doc = two_disc_doc()
    doc["excitations"] = [{"name": "drive", "at": "b", "orders": [1, 2]}]
    train = build_train(doc)
    assert not has_amplitudes(train)
    with pytest.raises(ModelError) as e:
        forced_response(train)
    assert e.value.field == "excitations"


def test_fixed_source_amplitude_needs_the_disc_it_acts_at():
    doc = two_disc_doc()
    doc["excitations"].append({"name": "grid", "frequency": "100 Hz", "amplitude": "50 N*m"})
    with pytest.raises(ModelError) as e:
        forced_response(build_train(doc), [200.0])
    assert e.value.field == "at" and "grid" in e.value.element
    doc["excitations"][-1]["applied_at"] = "nowhere"
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert e.value.field == "applied_at"
    doc["excitations"][-1].pop("applied_at")
    doc["excitations"][-1]["at"] = "nowhere"
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert e.value.field == "at"


def test_at_and_applied_at_name_one_idea():
    # issue 9 item 7: both keys are read for a fixed-frequency source; they must agree
    doc = two_disc_doc()
    doc["excitations"].append({"name": "grid", "frequency": "100 Hz", "amplitude": "50 N*m", "at": "b"})
    old = two_disc_doc()
    old["excitations"].append({"name": "grid", "frequency": "100 Hz", "amplitude": "50 N*m", "applied_at": "b"})
    a = forced_response(build_train(doc), [200.0])
    b = forced_response(build_train(old), [200.0])
    assert np.array_equal(a.link_torque, b.link_torque)
    doc["excitations"][-1]["applied_at"] = "a"
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert e.value.field == "applied_at" and "grid" in e.value.element


def test_cylinders_must_be_on_one_shaft():
    doc = two_disc_doc()
    doc["links"] = [{"id": "g", "kind": "gear_mesh", "from": "a", "to": "b", "speed_ratio": 2,
                     "stiffness": 1e6}]
    doc["excitations"] = [{"name": "gas", "orders": [{"order": 1, "amplitude": 1.0}],
                           "cylinders": [{"at": "a", "firing_deg": 0}, {"at": "b", "firing_deg": 180}]}]
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert "cylinder 2" in e.value.element


def test_default_speeds_include_resonance_crossings():
    train = build_train(two_disc_doc(c_rel=0.5))
    r = forced_response(train)
    op = train.operating
    # the speed bands (issue 12): from near standstill (1 % of the top speed: start-up and
    # run-down) to the top of the range widened by the margin (no trip speed given)
    top = op.speed_max * (1 + op.margin)
    assert r.speed[0] == pytest.approx(0.01 * top)
    assert r.speed[-1] == pytest.approx(top)
    assert op.speed_min in r.speed and op.speed_max in r.speed
    wn = 2 * math.pi * natural_modes(train, n_modes=1).frequency_hz[-1]
    assert np.any(np.isclose(r.speed, wn / 2, rtol=1e-12))  # order 2 crossing is a grid point


@pytest.mark.parametrize("path", ["sample_projects/engine_genset.json",
                                  "sample_projects/propulsion_line.json"])
def test_samples_with_amplitudes_run(path):
    from core.project import load_train
    train = load_train(path)
    assert has_amplitudes(train)
    r = forced_response(train)
    assert np.all(np.isfinite(r.link_torque)) and np.all(r.link_torque >= 0)
    assert np.all(r.link_torque_phased <= r.link_torque * (1 + 1e-9))
    assert len(response_summary(r)) == len(train.links)


def test_user_speeds_that_step_over_a_crossing_get_a_note():
    train = build_train(two_disc_doc(c_rel=0.5))
    wn = 2 * math.pi * natural_modes(train, n_modes=1).frequency_hz[-1]
    coarse = np.array([0.5, 0.8, 1.3, 1.6]) * wn  # order 1 crosses at wn, order 2 at wn / 2
    r = forced_response(train, coarse)
    assert any("between the speeds computed" in n for n in r.notes)
    r = forced_response(train, np.r_[coarse, wn, wn / 2])
    assert not r.notes


def test_random_branched_trees_match_dense_complex_solve():
    # independent reference: numpy.linalg.solve of the assembled dense complex matrix
    # Z = K (1 + i eta) + i w C_rel - w^2 J + i w C_disc for random branched lumped trees
    rng = np.random.default_rng(7)
    for trial in range(6):
        n = int(rng.integers(3, 14))
        J = rng.uniform(0.2, 5.0, n)
        cd = rng.uniform(0, 20, n) * (rng.random(n) < 0.5)
        parent = [int(rng.integers(0, i)) for i in range(1, n)]
        k = rng.uniform(1e4, 1e6, n - 1)
        eta = rng.uniform(0, 0.2, n - 1)
        crel = rng.uniform(0, 50, n - 1) * (rng.random(n - 1) < 0.5)
        grounded = bool(trial % 2)
        links = [{"id": f"l{i}", "kind": "shaft", "from": f"d{parent[i]}", "to": f"d{i + 1}",
                  "stiffness": float(k[i]), "loss_factor": float(eta[i]), "damping": float(crel[i])}
                 for i in range(n - 1)]
        if grounded:
            links.append({"id": "g", "kind": "shaft", "from": "ground", "to": "d0", "stiffness": 2e5})
        at = int(rng.integers(0, n))
        doc = {"discs": [{"id": f"d{i}", "inertia": float(J[i]), "damping": float(cd[i])} for i in range(n)],
               "links": links, "reference": "d0", "operating_speed": {"min": 10, "max": 500},
               "excitations": [{"name": "e", "at": f"d{at}", "orders": [{"order": 1, "amplitude": 10.0}]}]}
        speeds = np.linspace(10, 500, 23)
        r = forced_response(build_train(doc), speeds)
        for j, w in enumerate(speeds):
            Z = np.diag(-J * w ** 2 + 1j * w * cd).astype(complex)
            for i, p in enumerate(parent):
                z = k[i] * (1 + 1j * eta[i]) + 1j * w * crel[i]
                a, b = p, i + 1
                Z[a, a] += z
                Z[b, b] += z
                Z[a, b] -= z
                Z[b, a] -= z
            if grounded:
                Z[0, 0] += 2e5
            F = np.zeros(n, complex)
            F[at] = 10.0
            th = np.linalg.solve(Z, F)
            assert r.disc_angle[:, j] == pytest.approx(np.abs(th), rel=1e-8, abs=1e-14)
            for i, p in enumerate(parent):
                z = k[i] * (1 + 1j * eta[i]) + 1j * w * crel[i]
                assert r.link_torque[i, j] == pytest.approx(abs(z * (th[p] - th[i + 1])), rel=1e-7,
                                                            abs=1e-12)


def test_elastic_mesh_equals_referred_spring():
    # an elastic mesh (stiffness referred to its `from` shaft) is a spring in the referred
    # train; the wheel side scales by the speed ratio (energy equivalence, Wilson — from memory)
    r_, km = 3.0, 8e5
    geared = {"discs": [{"id": "m", "inertia": 2.0}, {"id": "whl", "inertia": 0.1, "damping": 2.0}],
              "links": [{"id": "mesh", "kind": "gear_mesh", "from": "m", "to": "whl", "speed_ratio": r_,
                         "stiffness": km, "loss_factor": 0.05}],
              "reference": "m", "operating_speed": {"min": 50, "max": 400},
              "excitations": [{"name": "x", "at": "whl", "orders": [{"order": 1, "amplitude": 30.0}]}]}
    referred = {"discs": [{"id": "m", "inertia": 2.0}, {"id": "whl", "inertia": 0.1 * r_ ** 2,
                                                        "damping": 2.0 * r_ ** 2}],
                "links": [{"id": "mesh", "kind": "coupling", "from": "m", "to": "whl", "stiffness": km,
                           "loss_factor": 0.05}],
                "reference": "m", "operating_speed": {"min": 50, "max": 400},
                "excitations": [{"name": "x", "at": "whl", "orders": [{"order": r_, "amplitude": 30.0 * r_}]}]}
    speeds = np.linspace(50, 400, 31)
    a = forced_response(build_train(geared), speeds)
    b = forced_response(build_train(referred), speeds)
    assert a.link_torque[0] == pytest.approx(b.link_torque[0], rel=1e-9)  # pinion-side mesh torque
    assert a.disc_angle[1] == pytest.approx(b.disc_angle[1] * r_, rel=1e-9)
    assert a.link_power[0] == pytest.approx(b.link_power[0], rel=1e-9)
