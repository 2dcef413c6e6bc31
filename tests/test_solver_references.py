"""Natural frequencies against closed-form solutions (issue 2, item 9).

Sources, named beside each check:
* two discs on a massless shaft, omega^2 = k (J1 + J2) / (J1 J2): any vibration
  text, e.g. W. T. Thomson, Theory of Vibration with Applications, torsional
  two-rotor system (from memory);
* uniform shaft, torsional wave equation G theta'' = rho theta_tt with
  c = sqrt(G / rho): fixed-free f_n = (2n - 1) c / (4 L), free-free and
  fixed-fixed f_n = n c / (2 L) (standard texts, e.g. Thomson, "vibration of
  continuous systems", and Rao, Mechanical Vibrations, torsional vibration of
  shafts -- from memory);
* shaft fixed at one end with a disc J at the other: beta L tan(beta L) =
  rho Ip L / J, beta = omega / c (same texts, frequency equation of a shaft
  with an end rotor -- from memory), solved here independently with brentq;
* lumped N-element model (each element's inertia split half to its ends):
  converges to the continuous values with an error of order 1/N^2 (the
  lumped-mass finite-difference model is second-order accurate; from memory);
* k = G pi (D^4 - d^4) / (32 L), segments in series 1/k = sum 1/k_i (any
  strength-of-materials handbook, e.g. Roark's Formulas for Stress and Strain,
  torsion of round bars -- from memory);
* a geared train equals its equivalent referred to one shaft, inertias and
  stiffnesses times the square of the speed ratio (energy equivalence; e.g.
  Wilson, Practical Solution of Torsional Vibration Problems -- from memory).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from core.model import Segment
from core.project import build_train
from core.solver import natural_modes

G, RHO = 80.0e9, 7850.0  # invented material values, Pa and kg/m^3
C = math.sqrt(G / RHO)  # torsional wave speed, m/s
L, D = 2.0, 0.10  # m
IP = math.pi * D ** 4 / 32.0  # m^4, solid round section
MATERIAL = {"shear_modulus": G, "density": RHO}


def doc(discs, links, **extra):
    return {"format": "twistwise-project", "version": 1, "title": "reference",
            "discs": discs, "links": links, **extra}


def disc(i, inertia=0.0):
    return {"id": i, "inertia": inertia}


def shaft(i, a, b, length=L, mass="distributed", outer=D, inner=None):
    seg = {"length": length, "outer_diameter": outer}
    if inner is not None:
        seg["inner_diameter"] = inner
    return {"id": i, "kind": "shaft", "from": a, "to": b, "material": MATERIAL, "mass": mass,
            "segments": [seg]}


def elastic_hz(modes):
    return modes.frequency_hz[~modes.rigid_body]


# ------------------------------------------------------------------ two discs
def test_two_discs_on_massless_shaft():
    J1, J2, k = 12.0, 3.0, 6.0e4
    m = natural_modes(build_train(doc([disc("a", J1), disc("b", J2)],
                                      [{"id": "s", "kind": "shaft", "from": "a", "to": "b",
                                        "stiffness": k}])), n_modes=1)
    expected = math.sqrt(k * (J1 + J2) / (J1 * J2)) / (2 * math.pi)  # Thomson, two-rotor system
    assert m.rigid_body[0] and m.frequency_hz[0] == 0.0
    assert elastic_hz(m)[0] == pytest.approx(expected, rel=1e-13)


# ------------------------------------------------------------------ distributed shaft
def test_fixed_free_distributed_shaft():
    m = natural_modes(build_train(doc([disc("end")], [shaft("s", "ground", "end")])), n_modes=6)
    n = np.arange(1, 7)
    expected = (2 * n - 1) * C / (4 * L)  # torsional wave equation, fixed-free
    assert not m.rigid_body.any()
    np.testing.assert_allclose(m.frequency_hz, expected, rtol=1e-12)


def test_free_free_distributed_shaft():
    m = natural_modes(build_train(doc([disc("a"), disc("b")], [shaft("s", "a", "b")])), n_modes=6)
    n = np.arange(1, 7)
    expected = n * C / (2 * L)  # torsional wave equation, free-free
    assert m.rigid_body[0] and m.frequency_hz[0] == 0.0
    np.testing.assert_allclose(elastic_hz(m), expected, rtol=1e-12)


def test_fixed_fixed_distributed_shaft_in_two_links():
    # ground - half - mid (no inertia) - half - ground is one fixed-fixed shaft of length L
    m = natural_modes(build_train(doc([disc("mid")], [shaft("s1", "ground", "mid", L / 2),
                                                       shaft("s2", "mid", "ground", L / 2)])),
                      n_modes=6)
    n = np.arange(1, 7)
    expected = n * C / (2 * L)  # torsional wave equation, fixed-fixed
    np.testing.assert_allclose(m.frequency_hz, expected, rtol=1e-12)


def test_distributed_shaft_in_segments_equals_one_piece():
    one = natural_modes(build_train(doc([disc("end")], [shaft("s", "ground", "end")])), n_modes=5)
    link = shaft("s", "ground", "end")
    link["segments"] = [{"length": L / 4, "outer_diameter": D}, {"length": L / 2, "outer_diameter": D},
                        {"length": L / 4, "outer_diameter": D}]
    three = natural_modes(build_train(doc([disc("end")], [link])), n_modes=5)
    np.testing.assert_allclose(three.frequency_hz, one.frequency_hz, rtol=1e-12)


def test_cap_finds_every_distributed_mode_below_it():
    cap = 10.2 * C / (4 * L)  # between the 5th (9 c/4L) and 6th (11 c/4L) fixed-free modes
    m = natural_modes(build_train(doc([disc("end")], [shaft("s", "ground", "end")])),
                      max_frequency_hz=cap)
    assert len(m) == 5  # (2n - 1) c / (4 L) < cap for n = 1..5


# ------------------------------------------------------------------ shaft with an end disc
@pytest.mark.parametrize("J_disc", [0.05, 1.5, 40.0])
def test_fixed_shaft_with_end_disc(J_disc):
    m = natural_modes(build_train(doc([disc("rotor", J_disc)], [shaft("s", "ground", "rotor")])),
                      n_modes=3)
    ratio = RHO * IP * L / J_disc  # shaft inertia / disc inertia
    # beta L tan(beta L) = rho Ip L / J: one root in each (k pi, k pi + pi/2)
    roots = [brentq(lambda x: x * math.tan(x) - ratio, k * math.pi + 1e-12, k * math.pi + math.pi / 2 - 1e-12)
             for k in range(3)]
    expected = np.array(roots) * C / L / (2 * math.pi)
    np.testing.assert_allclose(m.frequency_hz, expected, rtol=1e-11)


# ------------------------------------------------------------------ lumped convergence
def lumped_fixed_free(n_el):
    discs = [disc(f"d{i}") for i in range(1, n_el + 1)]
    links = [shaft("s1", "ground", "d1", L / n_el, mass="lumped")]
    links += [shaft(f"s{i}", f"d{i - 1}", f"d{i}", L / n_el, mass="lumped") for i in range(2, n_el + 1)]
    return build_train(doc(discs, links))


def test_lumped_model_converges_at_second_order():
    exact = np.array([1, 3, 5]) * C / (4 * L)  # fixed-free, torsional wave equation
    errors = []
    for n_el in (16, 32, 64, 128):
        f = natural_modes(lumped_fixed_free(n_el), n_modes=3).frequency_hz
        errors.append(np.abs(f - exact) / exact)
    errors = np.array(errors)
    assert errors[-1].max() < 1e-3
    order = np.log2(errors[:-1] / errors[1:])  # observed order between successive halvings
    # lumped-mass model: error ~ 1/N^2 (from memory)
    np.testing.assert_allclose(order, 2.0, atol=0.05)
    # lumped masses lower the frequencies (from memory: the lumped model is softer in inertia terms)
    f128 = natural_modes(lumped_fixed_free(128), n_modes=3).frequency_hz
    assert np.all(f128 < exact)


# ------------------------------------------------------------------ stiffness formulas
def test_solid_and_hollow_shaft_stiffness():
    # k = G pi (D^4 - d^4) / (32 L), Roark (from memory)
    assert Segment(0.5, 0.06).stiffness(G) == pytest.approx(G * math.pi * 0.06 ** 4 / (32 * 0.5), rel=1e-15)
    assert Segment(0.5, 0.06, 0.04).stiffness(G) == pytest.approx(
        G * math.pi * (0.06 ** 4 - 0.04 ** 4) / (32 * 0.5), rel=1e-15)


def test_segments_in_series_through_a_project():
    segs = [{"length": "300 mm", "outer_diameter": "60 mm"},
            {"length": "200 mm", "outer_diameter": "80 mm", "inner_diameter": "30 mm"}]
    link = {"id": "s", "kind": "shaft", "from": "a", "to": "b", "material": MATERIAL, "segments": segs}
    train = build_train(doc([disc("a", 4.0), disc("b", 2.0)], [link]))
    k1 = G * math.pi * 0.06 ** 4 / (32 * 0.3)  # handbook formula, solid
    k2 = G * math.pi * (0.08 ** 4 - 0.03 ** 4) / (32 * 0.2)  # hollow
    k = 1.0 / (1.0 / k1 + 1.0 / k2)  # springs in series
    assert train.links[0].total_stiffness == pytest.approx(k, rel=1e-14)
    f = elastic_hz(natural_modes(train, n_modes=1))[0]
    assert f == pytest.approx(math.sqrt(k * 6.0 / 8.0) / (2 * math.pi), rel=1e-13)  # two-rotor formula


# ------------------------------------------------------------------ gears
def geared_pair(mesh_stiffness=None, r=3.5):
    discs = [disc("motor", 20.0), disc("pinion", 0.4), disc("wheel", 2.5), disc("load", 60.0)]
    mesh = {"id": "mesh", "kind": "gear_mesh", "from": "pinion", "to": "wheel", "speed_ratio": r}
    if mesh_stiffness is not None:
        mesh["stiffness"] = mesh_stiffness
    links = [{"id": "k1", "kind": "coupling", "from": "motor", "to": "pinion", "stiffness": 4.0e5},
             mesh,
             {"id": "k2", "kind": "shaft", "from": "wheel", "to": "load", "stiffness": 9.0e4}]
    return build_train(doc(discs, links))


def referred_pair(mesh_stiffness=None, r=3.5):
    # everything on the motor shaft: J r^2, k r^2 for the wheel side (Wilson, from memory)
    if mesh_stiffness is None:
        discs = [disc("motor", 20.0), disc("gears", 0.4 + 2.5 * r ** 2), disc("load", 60.0 * r ** 2)]
        links = [{"id": "k1", "kind": "coupling", "from": "motor", "to": "gears", "stiffness": 4.0e5},
                 {"id": "k2", "kind": "shaft", "from": "gears", "to": "load", "stiffness": 9.0e4 * r ** 2}]
    else:
        discs = [disc("motor", 20.0), disc("pinion", 0.4), disc("wheel", 2.5 * r ** 2),
                 disc("load", 60.0 * r ** 2)]
        links = [{"id": "k1", "kind": "coupling", "from": "motor", "to": "pinion", "stiffness": 4.0e5},
                 {"id": "km", "kind": "coupling", "from": "pinion", "to": "wheel", "stiffness": mesh_stiffness},
                 {"id": "k2", "kind": "shaft", "from": "wheel", "to": "load", "stiffness": 9.0e4 * r ** 2}]
    return build_train(doc(discs, links))


@pytest.mark.parametrize("mesh_k", [None, 2.0e6])
@pytest.mark.parametrize("r", [0.25, 3.5])
def test_geared_train_equals_referred_equivalent(mesh_k, r):
    g = natural_modes(geared_pair(mesh_k, r), n_modes=3)
    e = natural_modes(referred_pair(mesh_k, r), n_modes=3)
    assert len(g) == len(e)
    np.testing.assert_allclose(g.frequency_hz, e.frequency_hz, rtol=1e-12, atol=1e-12)


def test_geared_branch_shape_is_in_its_own_shafts_angle():
    r = 3.5
    g = natural_modes(geared_pair(None, r), n_modes=2)
    for i in range(len(g)):
        s = g.shape_dict(i)
        # a rigid mesh: the wheel turns r times the pinion angle (gear matrix, Pestel & Leckie)
        assert s["wheel"] == pytest.approx(r * s["pinion"], rel=1e-10, abs=1e-12)
    rigid = g.shape_dict(0)  # rigid body: every shaft turns at its own speed
    assert rigid["load"] == pytest.approx(1.0) and rigid["motor"] == pytest.approx(1.0 / r)
