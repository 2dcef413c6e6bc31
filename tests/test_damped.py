"""Damped natural frequencies, viscous dampers and the damper optimum (core.damped)."""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg
from hypothesis import given, settings, strategies as st

from core.damped import (damped_modes, damper_bounds, damper_locked_train, damper_suggestion, has_damping,
                         tuned_optimum, viscous_optimum)
from core.errors import ModelError
from core.project import build_train, load_train
from core.response import forced_response
from core.solver import natural_modes

TWO_PI = 2 * math.pi


def two_disc(c=40.0, eta=None, k=1e5, J1=2.0, J2=3.0):
    link = {"id": "s", "kind": "coupling", "from": "a", "to": "b", "stiffness": k, "damping": c}
    if eta is not None:
        link["loss_factor"] = eta
    return build_train({"discs": [{"id": "a", "inertia": J1}, {"id": "b", "inertia": J2}], "links": [link]})


def test_two_discs_with_a_viscous_link_match_the_closed_form():
    # relative motion of two free discs: J_r x'' + c x' + k x = 0, J_r = J1 J2 / (J1 + J2);
    # lambda = (-c + sqrt(c^2 - 4 J_r k)) / (2 J_r) (any vibration text, closed form)
    J1, J2, c, k = 2.0, 3.0, 40.0, 1e5
    d = damped_modes(two_disc(c, k=k, J1=J1, J2=J2))
    Jr = J1 * J2 / (J1 + J2)
    lam = (-c + np.sqrt(complex(c * c - 4 * Jr * k))) / (2 * Jr)
    assert len(d.modes) == 1
    m = d.modes[0]
    assert m.eigenvalue == pytest.approx(lam, rel=1e-10)
    assert m.frequency_hz == pytest.approx(lam.imag / TWO_PI, rel=1e-10)
    assert m.damping_ratio == pytest.approx(c / (2 * math.sqrt(k * Jr)), rel=1e-10)
    assert m.natural_frequency_hz == pytest.approx(math.sqrt(k / Jr) / TWO_PI, rel=1e-10)
    assert d.to_json()[0]["frequency_hz"] == m.frequency_hz


def test_hysteretic_loss_factor_as_equivalent_viscous_at_the_modes_frequency():
    # one relative coordinate with c = eta k / omega and omega = Im(lambda) the damped frequency:
    # omega^2 = k/J - (eta k / (2 J omega))^2  ->  omega^2 = (k/J) (1 + sqrt(1 - eta^2)) / 2
    J1, J2, k, eta = 2.0, 3.0, 1e5, 0.3
    d = damped_modes(two_disc(0.0, eta=eta, k=k, J1=J1, J2=J2))
    Jr = J1 * J2 / (J1 + J2)
    w = math.sqrt(k / Jr * (1 + math.sqrt(1 - eta ** 2)) / 2)
    assert d.modes[0].frequency_hz == pytest.approx(w / TWO_PI, rel=1e-10)
    assert d.modes[0].eigenvalue.real == pytest.approx(-eta * k / (2 * Jr * w), rel=1e-9)
    assert d.hysteretic and any("equivalent viscous" in n for n in d.notes)


def _random_doc(rng, n):
    discs = [{"id": f"d{i}", "inertia": float(rng.uniform(0.2, 5.0)),
              "damping": float(rng.uniform(0, 30)) if rng.random() < 0.4 else 0.0} for i in range(n)]
    links = []
    for i in range(1, n):
        j = int(rng.integers(0, i))  # a random tree
        links.append({"id": f"l{i}", "kind": "coupling", "from": f"d{j}", "to": f"d{i}",
                      "stiffness": float(rng.uniform(1e4, 1e6)), "damping": float(rng.uniform(0, 80))})
    if rng.random() < 0.5:
        links.append({"id": "g", "kind": "shaft", "from": "d0", "to": "ground", "stiffness": 3e5, "damping": 5.0})
    return {"discs": discs, "links": links}


@settings(max_examples=15, deadline=None)
@given(st.integers(0, 10_000), st.integers(2, 9))
def test_random_lumped_model_against_scipy_eig_of_an_independent_state_matrix(seed, n):
    rng = np.random.default_rng(seed)
    doc = _random_doc(rng, n)
    # assembled here straight from the document: A = [[0, I], [-M^-1 K, -M^-1 C]] (standard form)
    idx = {d["id"]: i for i, d in enumerate(doc["discs"])}
    M = np.diag([d["inertia"] for d in doc["discs"]])
    K = np.zeros((n, n))
    C = np.diag([d["damping"] for d in doc["discs"]])
    for l in doc["links"]:
        a = idx[l["from"]]
        b = idx.get(l["to"])
        for mat, v in ((K, l["stiffness"]), (C, l["damping"])):
            mat[a, a] += v
            if b is not None:
                mat[b, b] += v
                mat[a, b] -= v
                mat[b, a] -= v
    Minv = np.linalg.inv(M)
    A = np.block([[np.zeros((n, n)), np.eye(n)], [-Minv @ K, -Minv @ C]])
    lam = scipy.linalg.eigvals(A)
    scale = math.sqrt(K.diagonal().max() / M.diagonal().min())
    ref = np.sort_complex(lam[(lam.imag > 1e-9 * np.abs(lam)) & (np.abs(lam) > 1e-7 * scale)])
    got = np.array([m.eigenvalue for m in damped_modes(build_train(doc)).modes])
    assert len(got) == len(ref)
    ref = ref[np.argsort(ref.imag)]
    assert np.allclose(got, ref, rtol=1e-8, atol=1e-9 * scale)


def ring_doc(c=50.0, grounded=True, J_h=0.5, J_r=1.0, k=2e5):
    discs = [{"id": "housing", "inertia": J_h}, {"id": "ring", "inertia": J_r}]
    links = [{"id": "fluid", "kind": "coupling", "from": "housing", "to": "ring", "damping": c}]
    if grounded:
        links.insert(0, {"id": "shaft", "kind": "shaft", "from": "housing", "to": "ground", "stiffness": k})
    return {"discs": discs, "links": links}


def test_a_coupling_of_damping_alone_is_legal_and_the_ring_is_free_in_the_undamped_modes():
    train = build_train(ring_doc())
    assert train.links[1].damping_only and train.links[1].stiffness == 0.0
    assert has_damping(train)
    modes = natural_modes(train, n_modes=1)
    # damper free: the housing alone on the shaft, sqrt(k / J_h) (closed form); the ring stays still
    assert modes.frequency_hz[0] == pytest.approx(math.sqrt(2e5 / 0.5) / TWO_PI, rel=1e-12)
    assert modes.shape[0][1] == 0.0
    assert any("'ring'" in n for n in modes.notes)
    free = build_train(ring_doc(grounded=False))
    m = natural_modes(free, n_modes=2)
    assert list(m.rigid_body) == [True] and len(m) == 1  # one rigid-body mode; no elastic mode at all


def test_damper_free_and_locked_bound_the_damped_frequency():
    k, Jh, Jr = 2e5, 0.5, 1.0
    f_free, f_locked = math.sqrt(k / Jh) / TWO_PI, math.sqrt(k / (Jh + Jr)) / TWO_PI  # closed forms
    b = damper_bounds(build_train(ring_doc()), 500.0)
    assert b.free_hz == pytest.approx((f_free,), rel=1e-12) and b.locked_hz == pytest.approx((f_locked,), rel=1e-12)
    assert "free" in b.statement and "locked" in b.statement
    for c in (5.0, 300.0, 3e4):
        f = damped_modes(build_train(ring_doc(c))).modes[0].frequency_hz
        assert f_locked * 0.98 < f < f_free
    assert damped_modes(build_train(ring_doc(1e6))).modes[0].frequency_hz == pytest.approx(f_locked, rel=1e-3)
    assert damped_modes(build_train(ring_doc(1e-3))).modes[0].frequency_hz == pytest.approx(f_free, rel=1e-6)
    locked = damper_locked_train(build_train(ring_doc()))
    assert locked.disc_ids == ["housing", "ring"] and damper_bounds(locked, 500.0) is None


def test_forced_response_through_a_damper_ring_matches_the_complex_closed_form():
    # housing on a shaft k to ground, ring joined by a dashpot c; torque T on the housing:
    # ring: -w^2 J_r th_r = i w c (th_h - th_r);  housing: (k - w^2 J_h + Z_r) th_h = T,
    # Z_r = i w c (-w^2 J_r) / (i w c - w^2 J_r); fluid torque i w c (th_h - th_r), power |T_f|^2 / (2 c)
    k, Jh, Jr, c, T = 2e5, 0.5, 1.0, 50.0, 100.0
    doc = ring_doc(c)
    doc.update({"reference": "housing", "operating_speed": {"min": "300 rpm", "max": "3000 rpm"},
                "excitations": [{"name": "E", "at": "housing", "orders": [{"order": 1, "amplitude": T}]}]})
    train = build_train(doc)
    speeds = np.array([300.0, 1200.0, 2400.0, 3000.0]) * TWO_PI / 60
    r = forced_response(train, speeds)
    w = speeds
    Zr = 1j * w * c * (-w ** 2 * Jr) / (1j * w * c - w ** 2 * Jr)
    th_h = T / (k - w ** 2 * Jh + Zr)
    th_r = 1j * w * c * th_h / (1j * w * c - w ** 2 * Jr)
    Tf = np.abs(1j * w * c * (th_h - th_r))
    assert np.allclose(r.link_torque[0], np.abs(k * th_h), rtol=1e-10)
    assert np.allclose(r.link_torque[1], Tf, rtol=1e-10)
    assert np.allclose(r.link_power[1], Tf ** 2 / (2 * c), rtol=1e-10)
    assert np.allclose(r.disc_angle[1], np.abs(th_r), rtol=1e-10)


@pytest.mark.parametrize("link, field", [
    ({"id": "x", "kind": "coupling", "from": "housing", "to": "ring"}, "stiffness"),
    ({"id": "x", "kind": "coupling", "from": "housing", "to": "ring", "damping": 0}, "damping"),
    ({"id": "x", "kind": "coupling", "from": "housing", "to": "ring", "damping": 40, "loss_factor": 0.2},
     "loss_factor"),
    ({"id": "x", "kind": "shaft", "from": "housing", "to": "ring", "stiffness": 0, "damping": 40}, "stiffness"),
])
def test_bad_damper_input_names_the_link_and_field(link, field):
    doc = ring_doc()
    doc["links"][1] = link
    with pytest.raises(ModelError) as exc:
        build_train(doc)
    assert (exc.value.element, exc.value.field) == ("link 'x'", field), str(exc.value)


def _peak_magnifier(J, k, Jd, kd, cd):
    """Largest |theta k / T| of a one-mass system with a damper, by a dense complex solve."""
    w = np.linspace(0.3, 1.7, 200001) * math.sqrt(k / J)
    Zd = (kd + 1j * w * cd) * (-w ** 2 * Jd) / (kd + 1j * w * cd - w ** 2 * Jd)
    return float(np.max(np.abs(k / (k - w ** 2 * J + Zd))))


@pytest.mark.parametrize("mu", [0.05, 0.2])
def test_tuned_damper_suggestion_reaches_den_hartogs_peak(mu):
    # Den Hartog, Mechanical Vibrations, ch. 3 (from memory): with the optimum tuning
    # 1/(1+mu) and Brock's damping the peak magnifier is about sqrt(1 + 2/mu)
    J, k = 4.0, 1e6
    doc = {"discs": [{"id": "main", "inertia": J}, {"id": "ring", "inertia": mu * J}],
           "links": [{"id": "shaft", "kind": "shaft", "from": "main", "to": "ground", "stiffness": k},
                     {"id": "rubber", "kind": "coupling", "from": "main", "to": "ring", "stiffness": 1e4,
                      "damping": 10.0}]}
    s = damper_suggestion(build_train(doc), "rubber")
    assert s.kind == "tuned" and s.mode == 1 and s.mass_ratio == pytest.approx(mu, rel=1e-12)
    assert s.mode_frequency_hz == pytest.approx(math.sqrt(k / J) / TWO_PI, rel=1e-12)
    peak = _peak_magnifier(J, k, mu * J, s.optimum_stiffness, s.optimum_damping)
    assert peak == pytest.approx(math.sqrt(1 + 2 / mu), rel=0.015)
    assert "Den Hartog" in " ".join(s.lines())


@pytest.mark.parametrize("mu", [0.1, 0.5])
def test_viscous_damper_suggestion_is_the_lanchester_optimum(mu):
    # untuned viscous damper (Den Hartog, ch. 3, from memory): the optimum damping gives the
    # peak magnifier 1 + 2/mu, and any other damping a higher peak
    J, k = 4.0, 1e6
    doc = ring_doc(c=10.0, J_h=J, J_r=mu * J, k=k)
    s = damper_suggestion(build_train(doc), "fluid")
    assert s.kind == "viscous" and s.optimum_stiffness is None and s.ring == "ring"
    best = _peak_magnifier(J, k, mu * J, 0.0, s.optimum_damping)
    assert best == pytest.approx(1 + 2 / mu, rel=1e-4)
    for f in (0.8, 1.25):
        assert _peak_magnifier(J, k, mu * J, 0.0, f * s.optimum_damping) > best
    assert viscous_optimum(mu)[1] == pytest.approx(1 + 2 / mu) and tuned_optimum(mu)[0] == 1 / (1 + mu)


def test_damper_suggestion_refuses_a_link_without_a_ring():
    with pytest.raises(ModelError) as exc:
        damper_suggestion(two_disc(), "nothing")
    assert exc.value.field == "link"
    doc = ring_doc()
    doc["discs"].append({"id": "more", "inertia": 1.0})
    doc["links"].append({"id": "on", "kind": "coupling", "from": "ring", "to": "more", "stiffness": 1e5})
    doc["links"].append({"id": "on2", "kind": "coupling", "from": "housing", "to": "ground", "stiffness": 1e5})
    with pytest.raises(ModelError):
        damper_suggestion(build_train(doc), "fluid")


def test_sample_generator_set_damper_free_locked_and_damped():
    train = load_train("sample_projects/engine_genset.json")
    b = damper_bounds(train, 300.0)
    assert b.links == ("damper_fluid",)
    d = damped_modes(train, 300.0)
    assert d.modes and all(0 < m.damping_ratio < 1 for m in d.modes)
    # the crankshaft mode lies between its locked and free frequencies
    crank = [m.frequency_hz for m in d.modes if 60 < m.frequency_hz < 90]
    assert len(crank) == 1 and b.locked_hz[1] < crank[0] < b.free_hz[1]
    s = damper_suggestion(train, "damper_fluid")
    assert s.kind == "viscous" and s.housing == "damper" and s.mode == 2


def test_distributed_shafts_get_a_note_not_a_result():
    train = load_train("sample_projects/compressor_train.json")
    d = damped_modes(train)
    assert d.modes == [] and "distributed" in d.notes[0]
