"""Mode shapes, modal torques and energy shares (issue 2, items 5 and 9).

References:
* two-rotor system: node ratio theta2 / theta1 = -J1 / J2 at omega^2 =
  k (J1 + J2) / (J1 J2), shaft torque k (theta1 - theta2) (Thomson, Theory of
  Vibration with Applications, torsional two-rotor system -- from memory);
* Holzer's method: starting at a free end with (theta, T) = (1, 0), the torque
  left over at the far free end vanishes at a natural frequency, and the
  station angles are the mode shape (Holzer 1921; Thomson, "Holzer method" --
  from memory); a fixed end starts with (0, 1) and its far end has zero torque;
* uniform fixed-free shaft, mode n: theta(z) = sin((2n - 1) pi z / (2 L))
  (torsional wave equation, standard texts -- from memory).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from core import transfer
from core.project import build_train
from core.solver import natural_modes

J1, J2, K = 12.0, 3.0, 6.0e4


def doc(discs, links):
    return {"format": "twistwise-project", "version": 1, "discs": discs, "links": links}


def two_disc():
    return build_train(doc([{"id": "motor", "inertia": J1}, {"id": "load", "inertia": J2}],
                           [{"id": "shaft", "kind": "shaft", "from": "motor", "to": "load",
                             "stiffness": K}]))


def chain_doc(J, k, grounded=False):
    discs = [{"id": f"d{i}", "inertia": float(v)} for i, v in enumerate(J)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i - 1}", "to": f"d{i}", "stiffness": float(v)}
             for i, v in zip(range(1, len(J)), k)]
    if grounded:
        links.insert(0, {"id": "s0", "kind": "shaft", "from": "ground", "to": "d0", "stiffness": float(k[-1])})
    return doc(discs, links)


def test_two_disc_shape_and_modal_torque_by_hand():
    m = natural_modes(two_disc(), n_modes=1)
    assert list(m.number) == [0, 1]
    s = m.shape_dict(1)
    assert set(s) == {"motor", "load"}
    # the lighter disc swings more: load = 1, motor = -J2 / J1 (two-rotor node ratio)
    assert s["load"] == 1.0
    assert s["motor"] == pytest.approx(-J2 / J1, rel=1e-12)
    # torque per unit of the largest angle: k (theta_motor - theta_load), from-end ahead positive
    assert m.link_torque[1, 0] == pytest.approx(K * (-J2 / J1 - 1.0), rel=1e-12)
    # kinetic energy shares J theta^2 / sum; one link holds all the strain energy
    ke = np.array([J1 * (J2 / J1) ** 2, J2])
    np.testing.assert_allclose(m.kinetic_share[1], ke / ke.sum(), rtol=1e-12)
    assert m.strain_share[1, 0] == pytest.approx(1.0)
    assert m.dominant_link(1) == "shaft"


def test_rigid_body_mode_is_marked_at_zero():
    m = natural_modes(two_disc(), n_modes=1)
    assert m.rigid_body.tolist() == [True, False]
    assert m.frequency_hz[0] == 0.0
    assert m.shape_dict(0) == {"motor": 1.0, "load": 1.0}
    assert m.link_torque[0, 0] == 0.0 and m.dominant_link(0) is None


def test_grounded_train_has_no_rigid_body_mode_and_numbers_from_one():
    m = natural_modes(build_train(chain_doc([2.0, 1.0, 0.5], [1e5, 2e5, 3e5], grounded=True)), n_modes=3)
    assert not m.rigid_body.any()
    assert list(m.number) == [1, 2, 3]


@pytest.mark.parametrize("grounded", [False, True])
def test_energy_shares_sum_to_one(grounded):
    rng = np.random.default_rng(3)
    m = natural_modes(build_train(chain_doc(rng.uniform(0.5, 5, 8), rng.uniform(1e5, 1e6, 8), grounded)),
                      n_modes=6)
    el = m.elastic
    np.testing.assert_allclose(m.kinetic_share[el].sum(1) + m.link_kinetic_share[el].sum(1), 1.0, rtol=1e-12)
    np.testing.assert_allclose(m.strain_share[el].sum(1), 1.0, rtol=1e-12)


def test_energy_shares_of_a_distributed_shaft_sum_to_one():
    d = doc([{"id": "hub", "inertia": 0.4}, {"id": "rotor", "inertia": 2.0}],
            [{"id": "s", "kind": "shaft", "from": "hub", "to": "rotor", "mass": "distributed",
              "material": "carbon_steel",
              "segments": [{"length": "1.2 m", "outer_diameter": "90 mm"},
                           {"length": "0.8 m", "outer_diameter": "120 mm", "inner_diameter": "40 mm"}]}])
    m = natural_modes(build_train(d), n_modes=4)
    el = m.elastic
    np.testing.assert_allclose(m.kinetic_share[el].sum(1) + m.link_kinetic_share[el].sum(1), 1.0, rtol=1e-10)
    np.testing.assert_allclose(m.strain_share[el].sum(1), 1.0, rtol=1e-10)
    assert np.all(m.link_kinetic_share[el, 0] > 0)  # the shaft's own inertia moves


def holzer_stations(J, k):
    st = []
    for i, Ji in enumerate(J):
        st.append(lambda w, Ji=Ji: transfer.point_matrix(w, Ji))
        if i < len(k):
            st.append(lambda w, ki=k[i]: transfer.spring_field_matrix(w, ki))
    return st


def holzer_angles(w, J, k):
    """Station angles of Holzer's table from a free end (theta, T) = (1, 0), and the end torque."""
    state = np.array([[1.0, 0.0]])
    angles = []
    for j, Jj in enumerate(J):
        angles.append(state[0, 0])  # the angle is the same on both sides of a disc
        state = np.einsum("...ij,...j->...i", transfer.point_matrix(np.array([w]), Jj), state)
        if j < len(k):
            state = np.einsum("...ij,...j->...i", transfer.spring_field_matrix(np.array([w]), k[j]), state)
    return np.array(angles), state[0, 1]


def test_holzer_residual_vanishes_at_computed_frequencies():
    rng = np.random.default_rng(7)
    J, k = rng.uniform(0.2, 4.0, 9), rng.uniform(1e5, 2e6, 8)
    m = natural_modes(build_train(chain_doc(J, k)), n_modes=8)
    w = 2 * math.pi * m.frequency_hz[m.elastic]
    state = transfer.holzer_chain(w, holzer_stations(J, k))
    for wi, residual in zip(w, state[:, 1]):
        angles, _ = holzer_angles(wi, J, k)
        scale = wi ** 2 * np.sum(J * np.abs(angles))  # the inertia torques in the table
        assert abs(residual) <= 1e-10 * scale
        # away from a root the residual does not vanish (the check has teeth)
        off_angles, off = holzer_angles(wi * 1.001, J, k)
        assert abs(off) > 1e-5 * (wi * 1.001) ** 2 * np.sum(J * np.abs(off_angles))


def test_mode_shape_matches_holzer_station_angles():
    rng = np.random.default_rng(11)
    J, k = rng.uniform(0.2, 4.0, 6), rng.uniform(1e5, 2e6, 5)
    m = natural_modes(build_train(chain_doc(J, k)), n_modes=5)
    for i in np.flatnonzero(m.elastic):
        h, _ = holzer_angles(2 * math.pi * m.frequency_hz[i], J, k)
        h = h / h[np.argmax(np.abs(h))]
        np.testing.assert_allclose(m.shape[i], h, atol=1e-8)


def test_fixed_end_has_no_twist_and_free_end_no_torque():
    # lumped chain fixed to ground at d0's side: the ground link's torque is k (0 - theta_d0)
    J, k = [2.0, 1.0, 0.5], [1e5, 2e5, 3e5]
    train = build_train(chain_doc(J, k, grounded=True))
    m = natural_modes(train, n_modes=3)
    ids = train.link_ids
    for i in range(len(m)):
        s = m.shape_dict(i)
        assert m.link_torque[i, ids.index("s0")] == pytest.approx(k[-1] * (0.0 - s["d0"]), rel=1e-12)
        # Holzer from the fixed end (theta, T) = (0, 1): the free end's torque vanishes
        w = np.array([2 * math.pi * m.frequency_hz[i]])
        state = np.array([[0.0, 1.0]])
        stations = [lambda w_: transfer.spring_field_matrix(w_, k[-1])] + holzer_stations(J, k[:2])
        for f in stations:
            state = np.einsum("...ij,...j->...i", f(w), state)
        assert abs(state[0, 1]) <= 1e-9 * w[0] ** 2 * sum(J) * abs(state[0, 0])


def test_distributed_fixed_free_shape_follows_the_wave_solution():
    # ground - 1 m - mid - 1 m - tip, both pieces exact distributed members, no disc inertia
    mat = {"shear_modulus": "80 GPa", "density": "7850 kg/m^3"}
    seg = [{"length": "1 m", "outer_diameter": "100 mm"}]
    d = doc([{"id": "mid", "inertia": 0}, {"id": "tip", "inertia": 0}],
            [{"id": "a", "kind": "shaft", "from": "ground", "to": "mid", "mass": "distributed",
              "material": mat, "segments": seg},
             {"id": "b", "kind": "shaft", "from": "mid", "to": "tip", "mass": "distributed",
              "material": mat, "segments": seg}])
    m = natural_modes(build_train(d), n_modes=3)
    for i, n in enumerate((1, 2, 3)):
        s = m.shape_dict(i)
        x = (2 * n - 1) * math.pi / 2  # beta L at mode n
        assert abs(s["tip"]) == 1.0
        # sin(x z / L) at z = L / 2 over sin(x) at the tip (wave solution)
        assert s["mid"] / s["tip"] == pytest.approx(math.sin(x / 2) / math.sin(x), abs=1e-9)
        # the largest torque sits at the fixed end, G Ip theta'(0) = G Ip x / L per unit tip angle
        G, Ip, L = 80e9, math.pi * 0.1 ** 4 / 32, 2.0
        assert abs(m.link_torque[i, 0]) == pytest.approx(G * Ip * x / L, rel=1e-6)
        # ... and at the free end there is none: link b's torque at the tip end is tiny
        assert abs(m.link_torque[i, 1]) <= abs(m.link_torque[i, 0]) * (1 + 1e-9)


def test_repeated_roots_of_twin_branches_give_distinct_modes():
    # a hub with two identical branches: one mode where the branches swing against each other
    d = doc([{"id": "hub", "inertia": 5.0}, {"id": "a", "inertia": 1.0}, {"id": "b", "inertia": 1.0},
             {"id": "c", "inertia": 1.0}],
            [{"id": "la", "kind": "shaft", "from": "hub", "to": "a", "stiffness": 1e5},
             {"id": "lb", "kind": "shaft", "from": "hub", "to": "b", "stiffness": 1e5},
             {"id": "lc", "kind": "shaft", "from": "hub", "to": "c", "stiffness": 1e5}])
    m = natural_modes(build_train(d), n_modes=3)
    f = m.frequency_hz
    # the double root sits at the branch's own frequency sqrt(k / J) with the hub at rest
    assert f[1] == pytest.approx(math.sqrt(1e5) / (2 * math.pi), rel=1e-12)
    assert f[2] == pytest.approx(f[1], rel=1e-12)
    J = np.array([5.0, 1.0, 1.0, 1.0])
    # the two shapes are independent: inertia-weighted they are orthogonal
    assert abs(np.sum(J * m.shape[1] * m.shape[2])) <= 1e-8
