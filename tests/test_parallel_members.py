"""Links in parallel between the same two discs (a shaft and a coupling, a spring and a
damper): accepted, solved exactly (massless, lumped and distributed members), drawn
side by side.

References: closed forms of two-disc systems, statics of springs in parallel, and
scipy (eigh, eig, brentq) on matrices and determinants assembled here from the
document, independently of core.assembly.  Each check names its source.
"""
from __future__ import annotations

import copy
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg
import scipy.optimize
from hypothesis import given, settings, strategies as st

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from app.schematic_layout import place, place_document  # noqa: E402
from core.damped import damped_modes, damper_bounds  # noqa: E402
from core.design import _Family  # noqa: E402
from core.errors import ModelError  # noqa: E402
from core.loads import mean_torque  # noqa: E402
from core.project import build_train  # noqa: E402
from core.response import forced_response  # noqa: E402
from core.solver import natural_modes  # noqa: E402
from core.tolerance import frequency_bands  # noqa: E402
from core.transient import run_event  # noqa: E402

TWO_PI = 2 * math.pi
ROOT = Path(__file__).resolve().parent.parent
G, RHO = 80e9, 7850.0  # the test's own material (a steel), Pa and kg/m^3
MATERIAL = {"shear_modulus": "80 GPa", "density": "7850 kg/m^3"}


def two_discs(*links, J1=2.0, J2=3.0, **extra):
    doc = {"discs": [{"id": "a", "inertia": J1}, {"id": "b", "inertia": J2}], "links": list(links)}
    doc.update(extra)
    return doc


def spring(lid, k, a="a", b="b", kind="coupling", **more):
    return {"id": lid, "kind": kind, "from": a, "to": b, "stiffness": k, **more}


def tube(lid, L, D, d=0.0, a="a", b="b", mass="distributed"):
    return {"id": lid, "kind": "shaft", "from": a, "to": b, "material": dict(MATERIAL), "mass": mass,
            "segments": [{"length": L, "outer_diameter": D, "inner_diameter": d}]}


def polar(D, d=0.0):
    return math.pi * (D ** 4 - d ** 4) / 32.0


def elastic_hz(train, n=None, cap=None):
    m = natural_modes(train, n_modes=n) if cap is None else natural_modes(train, max_frequency_hz=cap)
    return np.asarray(m.frequency_hz)[m.elastic]


# ---------------------------------------------------------------- massless members
def test_two_springs_in_parallel_between_two_discs_match_the_closed_form():
    # two free discs joined by k1 and k2 in parallel: k = k1 + k2 (springs in parallel add),
    # f = sqrt(k (J1 + J2) / (J1 J2)) / 2 pi (two-disc free-free system; W. T. Thomson,
    # Theory of Vibration with Applications, ch. "two degrees of freedom" -- from memory)
    J1, J2, k1, k2 = 2.0, 3.0, 1.2e5, 4.5e4
    train = build_train(two_discs(spring("s1", k1), spring("s2", k2, "b", "a", kind="shaft"), J1=J1, J2=J2))
    m = natural_modes(train)
    f = math.sqrt((k1 + k2) * (J1 + J2) / (J1 * J2)) / TWO_PI
    assert elastic_hz(train) == pytest.approx([f], rel=1e-12)
    # each member carries its own k times the twist (s2 runs b -> a: opposite sign), and the
    # strain energy divides as the stiffnesses
    i = int(np.flatnonzero(m.elastic)[0])
    twist = m.shape[i, 0] - m.shape[i, 1]
    assert m.link_torque[i] == pytest.approx([k1 * twist, -k2 * twist], rel=1e-10)
    assert m.strain_share[i] == pytest.approx([k1 / (k1 + k2), k2 / (k1 + k2)], rel=1e-10)


def test_a_spring_beside_a_pure_damper_has_the_springs_undamped_frequency_and_exact_damped_roots():
    # undamped: a link of damping alone carries nothing without damping, so the spring alone
    # sets f (closed form as above)
    J1, J2, k, c = 2.0, 3.0, 1e5, 60.0
    doc = two_discs(spring("rubber", k), spring("damper", 0, damping=c), J1=J1, J2=J2)
    train = build_train(doc)
    f = math.sqrt(k * (J1 + J2) / (J1 * J2)) / TWO_PI
    assert elastic_hz(train) == pytest.approx([f], rel=1e-12)
    # damped: eigenvalues of the state matrix [[0, I], [-M^-1 K, -M^-1 C]] assembled here
    # (state-space form; D. J. Inman, Engineering Vibration -- from memory), scipy.linalg.eig
    M = np.diag([J1, J2])
    K = k * np.array([[1.0, -1.0], [-1.0, 1.0]])
    C = c * np.array([[1.0, -1.0], [-1.0, 1.0]])
    A = np.block([[np.zeros((2, 2)), np.eye(2)], [-np.linalg.solve(M, K), -np.linalg.solve(M, C)]])
    lam = scipy.linalg.eigvals(A)
    ref = lam[lam.imag > 1e-6]
    got = damped_modes(train).modes
    assert len(got) == 1
    assert got[0].eigenvalue == pytest.approx(ref[0], rel=1e-10)
    # and the closed form of the relative coordinate: zeta = c / (2 sqrt(k J_r)) (Thomson -- from memory)
    Jr = J1 * J2 / (J1 + J2)
    assert got[0].damping_ratio == pytest.approx(c / (2 * math.sqrt(k * Jr)), rel=1e-10)
    # no ring joined by damping alone (the spring holds it): no free / locked statement
    assert damper_bounds(train, 10 * f) is None


def test_parallel_compliant_meshes_of_one_ratio_add_referred_stiffness():
    # mesh g1 a -> b (ratio r, k1 on a's shaft) and g2 b -> a (ratio 1/r, k2 on b's shaft):
    # referred to a's shaft, k = k1 + k2 r^2 and J2 -> J2 r^2 (referred systems: W. K. Wilson,
    # Practical Solution of Torsional Vibration Problems, vol. 1 -- from memory)
    J1, J2, k1, k2, r = 2.0, 0.5, 3e5, 1e5, 2.5
    train = build_train(two_discs(spring("g1", k1, kind="gear_mesh", speed_ratio=r),
                                  spring("g2", k2, "b", "a", kind="gear_mesh", speed_ratio=1 / r), J1=J1, J2=J2))
    k, J2r = k1 + k2 * r * r, J2 * r * r
    assert elastic_hz(train) == pytest.approx([math.sqrt(k * (J1 + J2r) / (J1 * J2r)) / TWO_PI], rel=1e-12)


# ---------------------------------------------------------------- distributed and lumped members
def fe_frequencies(discs, shafts, n_el, count):
    """Lowest ``count`` elastic natural frequencies (Hz) by linear finite elements with
    consistent mass (each element: k = G Ip / h [[1, -1], [-1, 1]], m = rho Ip h / 6 [[2, 1],
    [1, 2]]; e.g. Petyt, Introduction to Finite Element Vibration Analysis -- from memory),
    scipy.linalg.eigh.  ``discs``: inertias of the end nodes; ``shafts``: (end, end, L, Ip)
    per distributed shaft or (end, end, k) per massless spring."""
    n = len(discs)
    rows = []
    for s in shafts:
        if len(s) == 3:
            rows.append(("spring", s))
            continue
        rows.append(("shaft", s))
        n += n_el - 1
    K = np.zeros((n, n))
    M = np.diag(np.r_[np.asarray(discs, float), np.zeros(n - len(discs))])
    nxt = len(discs)
    for kind, s in rows:
        if kind == "spring":
            a, b, k = s
            K[np.ix_([a, b], [a, b])] += k * np.array([[1, -1], [-1, 1]])
            continue
        a, b, L, Ip = s
        nodes = [a] + list(range(nxt, nxt + n_el - 1)) + [b]
        nxt += n_el - 1
        h = L / n_el
        ke = G * Ip / h * np.array([[1, -1], [-1, 1]])
        me = RHO * Ip * h / 6 * np.array([[2, 1], [1, 2]])
        for e in range(n_el):
            idx = np.ix_([nodes[e], nodes[e + 1]], [nodes[e], nodes[e + 1]])
            K[idx] += ke
            M[idx] += me
    w2 = scipy.linalg.eigh(K, M, eigvals_only=True)
    return np.sqrt(np.maximum(w2[1:count + 1], 0)) / TWO_PI


def fe_reference(discs, shafts, count):
    """Richardson extrapolation of two meshes (the consistent-mass error falls as h^2)."""
    f1 = fe_frequencies(discs, shafts, 120, count)
    f2 = fe_frequencies(discs, shafts, 240, count)
    return (4 * f2 - f1) / 3


def test_two_distributed_shafts_in_parallel_against_finite_elements_and_the_exact_determinant():
    J1, J2 = 0.8, 1.5
    L1, D1 = 1.2, 0.06
    L2, D2, d2 = 1.2, 0.09, 0.078
    train = build_train(two_discs(tube("solid", L1, D1), tube("hollow", L2, D2, d2, "b", "a"), J1=J1, J2=J2))
    got = elastic_hz(train, n=4)
    ref = fe_reference([J1, J2], [(0, 1, L1, polar(D1)), (0, 1, L2, polar(D2, d2))], 4)
    assert got == pytest.approx(ref, rel=2e-6)
    # the exact frequency equation: det of the 2 x 2 dynamic stiffness of the two uniform
    # shafts (wave equation, end stiffness G Ip beta [[cot bL, -csc bL], [-csc bL, cot bL]],
    # beta = omega sqrt(rho / G); e.g. Wilson, vol. 1, distributed shafts -- from memory),
    # roots by scipy.optimize.brentq between sign changes that do not straddle a pole
    c = math.sqrt(G / RHO)

    def det(w):
        K = np.zeros((2, 2))
        for L, Ip in ((L1, polar(D1)), (L2, polar(D2, d2))):
            bL = w * L / c
            g = G * Ip * (w / c)
            K += g * np.array([[np.cos(bL), -1.0], [-1.0, np.cos(bL)]]) / np.sin(bL)
        return (K[0, 0] - w * w * J1) * (K[1, 1] - w * w * J2) - K[0, 1] ** 2

    grid = np.linspace(1.0, TWO_PI * got[-1] * 1.001, 20001)
    vals = np.array([det(w) for w in grid])
    poles = np.floor(grid * L1 / c / math.pi)
    roots = np.array([scipy.optimize.brentq(det, grid[i], grid[i + 1], xtol=1e-12, rtol=1e-14)
                      for i in range(len(grid) - 1)
                      if vals[i] * vals[i + 1] < 0 and poles[i] == poles[i + 1]]) / TWO_PI
    found = [np.any(np.isclose(roots, f, rtol=1e-9)) for f in got]
    assert len(roots) == sum(found)  # every root of the determinant is a mode found
    # the others sit on the poles: the two equal-length shafts twist against each other with
    # both discs at rest, at the clamped-clamped frequencies n c / 2L (closed form of a
    # uniform shaft fixed at both ends -- any vibration text)
    for f, hit in zip(got, found):
        if not hit:
            n = round(2 * L1 * f / c)
            assert n >= 1 and f == pytest.approx(n * c / (2 * L1), rel=1e-9)
    assert sum(found) >= 2


def test_two_identical_shafts_in_parallel_are_one_shaft_of_twice_the_polar_moment():
    # closed form: in the modes where two equal uniform shafts between the same discs twist
    # alike they act as one of twice G Ip / L and twice rho Ip L, i.e. twice Ip (same L and
    # material); the other modes twist them against each other with both discs at rest, at
    # the clamped-clamped frequencies n c / 2L (uniform shaft fixed at both ends -- any
    # vibration text)
    J1, J2, L, D = 0.8, 1.5, 1.0, 0.05
    pair = build_train(two_discs(tube("s1", L, D), tube("s2", L, D), J1=J1, J2=J2))
    one = build_train(two_discs(tube("s", L, D * 2 ** 0.25), J1=J1, J2=J2))
    cap = 5000.0
    clamped = [n * math.sqrt(G / RHO) / (2 * L) for n in range(1, 10) if n * math.sqrt(G / RHO) / (2 * L) < cap]
    expect = np.sort(np.r_[elastic_hz(one, cap=cap), clamped])
    assert elastic_hz(pair, cap=cap) == pytest.approx(expect, rel=1e-11)


def test_a_distributed_shaft_beside_a_spring_against_finite_elements():
    J1, J2, L, D, k = 0.8, 1.5, 1.4, 0.07, 2.5e5
    train = build_train(two_discs(tube("shaft", L, D), spring("coupling", k, "b", "a"), J1=J1, J2=J2))
    ref = fe_reference([J1, J2], [(0, 1, L, polar(D)), (0, 1, k)], 4)
    assert elastic_hz(train, n=4) == pytest.approx(ref, rel=2e-6)


def test_a_massless_node_joined_by_two_parallel_shafts_is_not_a_free_end():
    # the far disc has no inertia of its own: its node is joined by two distributed members,
    # so it must not be condensed as a free end of one.  Reference: finite elements as above.
    J1, L1, D1, L2, D2 = 1.1, 0.9, 0.05, 1.3, 0.06
    train = build_train(two_discs(tube("s1", L1, D1), tube("s2", L2, D2), J1=J1, J2=0.0))
    ref = fe_reference([J1, 0.0], [(0, 1, L1, polar(D1)), (0, 1, L2, polar(D2))], 4)
    assert elastic_hz(train, n=4) == pytest.approx(ref, rel=2e-6)


def test_a_lumped_shaft_beside_a_coupling_against_scipy_eigh():
    # lumped: half the shaft's own inertia rho Ip L at each end (common practice, no source)
    J1, J2, L, D, k = 0.8, 1.5, 1.0, 0.08, 1e5
    train = build_train(two_discs(tube("shaft", L, D, mass="lumped"), spring("coupling", k), J1=J1, J2=J2))
    Ip = polar(D)
    half = 0.5 * RHO * Ip * L
    kt = G * Ip / L + k
    w2 = scipy.linalg.eigh(kt * np.array([[1, -1], [-1, 1]]), np.diag([J1 + half, J2 + half]), eigvals_only=True)
    assert elastic_hz(train) == pytest.approx([math.sqrt(w2[1]) / TWO_PI], rel=1e-12)


# ---------------------------------------------------------------- random trees
@settings(max_examples=25, deadline=None)
@given(st.integers(0, 100_000), st.integers(2, 9), st.integers(1, 3))
def test_parallel_pairs_inside_a_random_tree_against_scipy_eigh(seed, n, n_parallel):
    rng = np.random.default_rng(seed)
    discs = [{"id": f"d{i}", "inertia": float(rng.uniform(0.1, 5.0))} for i in range(n)]
    links = []
    for i in range(1, n):
        j = int(rng.integers(0, i))
        if rng.random() < 0.3:
            links.append(spring(f"l{i}", float(rng.uniform(1e4, 1e6)), f"d{j}", f"d{i}", kind="gear_mesh",
                                speed_ratio=float(rng.uniform(0.5, 3.0))))
        else:
            links.append(spring(f"l{i}", float(rng.uniform(1e4, 1e6)), f"d{j}", f"d{i}"))
    for p in range(n_parallel):  # a second (or third) link beside a random one, either way round
        base = links[int(rng.integers(0, len(links)))]
        flip = bool(rng.random() < 0.5)
        a, b = (base["to"], base["from"]) if flip else (base["from"], base["to"])
        extra = spring(f"p{p}", float(rng.uniform(1e4, 1e6)), a, b, kind=base["kind"])
        if base["kind"] == "gear_mesh":
            extra["speed_ratio"] = 1 / base["speed_ratio"] if flip else base["speed_ratio"]
        links.insert(int(rng.integers(0, len(links) + 1)), extra)
    if rng.random() < 0.4:
        links.append(spring("g", 2e5, "d0", "ground", kind="shaft"))
    doc = {"discs": discs, "links": links}
    # referred lumped matrices assembled here: speed factors along the tree, J s^2, and a
    # mesh's stiffness (given on its `from` shaft) times that shaft's s^2 (Wilson -- from memory)
    idx = {d["id"]: i for i, d in enumerate(discs)}
    s = {"d0": 1.0}
    while len(s) < n:
        for l in links:
            r = l.get("speed_ratio", 1.0)
            if l["from"] in s and l["to"] in idx and l["to"] not in s:
                s[l["to"]] = s[l["from"]] * r
            elif l["to"] in s and l["from"] not in s:
                s[l["from"]] = s[l["to"]] / r
    M = np.diag([d["inertia"] * s[d["id"]] ** 2 for d in discs])
    K = np.zeros((n, n))
    for l in links:
        a, b = idx[l["from"]], idx.get(l["to"])
        k = l["stiffness"] * s[l["from"]] ** 2
        K[a, a] += k
        if b is not None:
            K[b, b] += k
            K[a, b] -= k
            K[b, a] -= k
    w = np.sqrt(np.maximum(scipy.linalg.eigh(K, M, eigvals_only=True), 0)) / TWO_PI
    grounded = any(l["to"] == "ground" for l in links)
    ref = w if grounded else w[1:]
    got = elastic_hz(build_train(doc), n=n)
    assert got == pytest.approx(ref, rel=1e-8, abs=1e-9 * w.max())


# ---------------------------------------------------------------- forced response, torque split
def test_forced_response_through_parallel_springs_matches_a_dense_complex_solve():
    # (K (1 + i eta) - omega^2 M) theta = T, solved here with numpy (complex stiffness; Thomson,
    # "forced harmonic vibration" -- from memory); each spring carries |k_j (1 + i eta_j) twist|
    J1, J2, k1, k2, eta1, eta2, T = 2.0, 3.0, 1.2e5, 4e4, 0.05, 0.2, 150.0
    doc = two_discs(spring("s1", k1, loss_factor=eta1), spring("s2", k2, "b", "a", loss_factor=eta2),
                    J1=J1, J2=J2, reference="a", operating_speed={"min": 10, "max": 400},
                    excitations=[{"name": "drive", "at": "a", "orders": [{"order": 1, "amplitude": T}]}])
    w = np.linspace(20.0, 400.0, 41)
    r = forced_response(build_train(doc), w)
    kc = k1 * (1 + 1j * eta1) + k2 * (1 + 1j * eta2)
    for j, wj in enumerate(w):
        Z = kc * np.array([[1, -1], [-1, 1]]) - wj ** 2 * np.diag([J1, J2])
        th = np.linalg.solve(Z, [T, 0.0])
        tw = th[0] - th[1]
        assert r.disc_angle[:, j] == pytest.approx(np.abs(th), rel=1e-9)
        assert r.link_torque[:, j] == pytest.approx([abs(k1 * (1 + 1j * eta1) * tw),
                                                     abs(k2 * (1 + 1j * eta2) * tw)], rel=1e-9)


def test_mean_torque_divides_between_parallel_links_as_their_stiffness():
    # statics of springs in parallel: one twist, so T_j = T k_j / sum k (any strength-of-
    # materials text); a damper of damping alone carries no steady torque; power P = T omega
    k1, k2, P, n = 3e5, 1e5, 100e3, 1500 * TWO_PI / 60
    doc = two_discs(spring("stiff", k1), spring("soft", k2, "b", "a"), spring("damper", 0, damping=20.0),
                    reference="a", operating_speed={"min": "1000 rpm", "max": "1500 rpm"},
                    excitations=[{"name": "drive", "at": "a", "orders": [1]}],
                    load_cases=[{"name": "rated", "law": "constant_power", "power": P, "speed": n,
                                 "driven": [{"at": "b"}]}])
    train = build_train(doc)
    T = mean_torque(train, train.load_cases[0], np.array([n]))[:, 0]
    total = P / n
    # `soft` runs b -> a: power flows against its from -> to sense, so its torque is negative
    assert T == pytest.approx([total * k1 / (k1 + k2), -total * k2 / (k1 + k2), 0.0], rel=1e-12)


def test_mean_torque_between_parallel_meshes_follows_the_referred_stiffness():
    # g1 a -> b (k1 on a's shaft), g2 b -> a (k2 on b's shaft, k2 r^2 referred to a's): the
    # pair shares the power as k1 : k2 r^2; each torque is its power over its own shaft's
    # speed (lossless gears, Wilson -- from memory; P = T omega)
    k1, k2, r, P, n = 3e5, 1e5, 2.0, 50e3, 1000 * TWO_PI / 60
    doc = two_discs(spring("g1", k1, kind="gear_mesh", speed_ratio=r),
                    spring("g2", k2, "b", "a", kind="gear_mesh", speed_ratio=1 / r),
                    reference="a", operating_speed={"min": "500 rpm", "max": "1000 rpm"},
                    excitations=[{"name": "drive", "at": "a", "orders": [1]}],
                    load_cases=[{"name": "rated", "law": "constant_power", "power": P, "speed": n,
                                 "driven": [{"at": "b"}]}])
    train = build_train(doc)
    T = mean_torque(train, train.load_cases[0], np.array([n]))[:, 0]
    p1 = k1 / (k1 + k2 * r * r)
    assert T == pytest.approx([p1 * P / n, -(1 - p1) * P / (n * r)], rel=1e-12)


def test_a_torque_step_through_parallel_springs_divides_as_their_stiffness():
    # step T on disc a of two free discs: the joint torque is T J2 / (J1 + J2) (1 - cos w t)
    # (Thomson, step excitation of a semi-definite system -- from memory); springs in parallel
    # share it as k_j / sum k at every instant (one twist)
    J1, J2, k1, k2, T = 2.0, 3.0, 6e4, 4e4, 100.0
    w = math.sqrt((k1 + k2) * (J1 + J2) / (J1 * J2))
    doc = two_discs(spring("s1", k1, kind="shaft"), spring("s2", k2, kind="shaft"), J1=J1, J2=J2,
                    transients=[{"name": "step", "duration": 3 * TWO_PI / w,
                                 "torques": [{"at": "a", "table": [[0, T], [1, T]]}]}])
    train = build_train(doc)
    e = run_event(train, train.transients[0])
    total = e.link_torque[0] + e.link_torque[1]
    assert e.link_torque[0] == pytest.approx(total * k1 / (k1 + k2), rel=1e-9, abs=1e-9 * T)
    assert total.max() == pytest.approx(2 * T * J2 / (J1 + J2), rel=2e-3)


# ---------------------------------------------------------------- design window and tolerance
def test_the_design_count_varies_one_parallel_link_with_the_other_held():
    # the count of natural frequencies below omega with s1 at value v is the number of
    # closed-form frequencies f(v + k2) below omega (two-disc closed form, as above)
    J1, J2, k1, k2 = 2.0, 3.0, 1e5, 5e4
    train = build_train(two_discs(spring("s1", k1), spring("s2", k2), J1=J1, J2=J2))
    fam = _Family(train, "link", "s1", k1)
    v = np.array([2e4, 2e4, 4e5, 4e5])
    wn = np.sqrt((v + k2) * (J1 + J2) / (J1 * J2))
    omega = wn * np.array([0.99, 1.01, 0.99, 1.01])
    assert fam.count(v, omega).tolist() == [1, 2, 1, 2]  # the rigid-body root counts from 0+


def test_the_design_count_beside_a_distributed_shaft_matches_finite_elements():
    J1, J2, L, D, k = 0.8, 1.5, 1.4, 0.07, 2.5e5
    train = build_train(two_discs(tube("shaft", L, D), spring("coupling", k), J1=J1, J2=J2))
    fam = _Family(train, "link", "coupling", k)
    v = 3 * k
    ref = fe_reference([J1, J2], [(0, 1, L, polar(D)), (0, 1, v)], 3)  # Hz
    omega = TWO_PI * np.r_[ref * 0.999, ref * 1.001]
    got = fam.count(np.full(omega.size, v), omega)
    assert got.tolist() == [1, 2, 3, 2, 3, 4]


def test_tolerance_bands_of_a_parallel_spring_are_the_closed_form_at_its_corners():
    # the band edges are the frequencies at the tolerance corners (Rayleigh monotonicity,
    # see core.tolerance); closed form of the two-disc system at k1 (1 -+ t) + k2
    J1, J2, k1, k2, t = 2.0, 3.0, 1e5, 5e4, 0.2
    train = build_train(two_discs(spring("s1", k1, stiffness_tolerance="20 %"), spring("s2", k2),
                                  J1=J1, J2=J2))
    bands = frequency_bands(train, natural_modes(train))
    f = lambda k: math.sqrt(k * (J1 + J2) / (J1 * J2)) / TWO_PI  # noqa: E731
    assert bands[1] == pytest.approx([f(k1 * (1 - t) + k2), f(k1 * (1 + t) + k2)], rel=1e-12)


# ---------------------------------------------------------------- what is still refused
def test_a_true_loop_through_three_discs_is_still_refused_naming_link_and_field():
    doc = {"discs": [{"id": "a", "inertia": 1.0}, {"id": "b", "inertia": 1.0}, {"id": "c", "inertia": 1.0}],
           "links": [spring("ab", 1e5, "a", "b"), spring("ab2", 2e5, "b", "a"), spring("bc", 1e5, "b", "c"),
                     spring("ca", 1e5, "c", "a")]}
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert "link 'ca'" in str(e.value) and e.value.field == "to" and "closes a loop" in str(e.value)


def test_parallel_meshes_of_different_ratios_are_refused():
    doc = two_discs(spring("g1", 1e6, kind="gear_mesh", speed_ratio=2.0),
                    spring("g2", 1e6, kind="gear_mesh", speed_ratio=2.5))
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert "link 'g2'" in str(e.value) and e.value.field == "speed_ratio"
    # the same ratio given the other way round is the same pair of speeds: accepted
    doc["links"][1].update({"from": "b", "to": "a", "speed_ratio": 0.5})
    build_train(doc)
    # a shaft beside a mesh of ratio 2 cannot turn both ends at once
    doc["links"][1] = spring("s", 1e6, kind="shaft")
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert "link 's'" in str(e.value) and e.value.field == "kind"


def test_a_rigid_mesh_in_parallel_is_refused_naming_its_stiffness():
    rigid = {"id": "g", "kind": "gear_mesh", "from": "a", "to": "b", "speed_ratio": 1.0}
    for links in ([rigid, spring("s", 1e5)], [spring("s", 1e5), rigid]):
        with pytest.raises(ModelError) as e:
            build_train(two_discs(*links))
        assert "link 'g'" in str(e.value) and e.value.field == "stiffness"


# ---------------------------------------------------------------- command line
def parallel_project(tmp_path) -> Path:
    doc = two_discs(spring("coupling", "60 kN*m/rad"), spring("damper", 0, damping="25 N*m*s/rad"),
                    tube("tube", "900 mm", "60 mm", "40 mm", "b", "a"),
                    reference="a", operating_speed={"min": "1400 rpm", "max": "1500 rpm"},
                    excitations=[{"name": "drive", "at": "a", "orders": [1]}])
    doc.update({"format": "twistwise-project", "version": 1, "title": "Parallel links"})
    p = tmp_path / "parallel.json"
    p.write_text(json.dumps(doc))
    return p


def test_cli_solve_and_check_run_on_a_parallel_example(tmp_path):
    p = parallel_project(tmp_path)
    run = lambda *a: subprocess.run([sys.executable, "-m", "app.cli", *a], cwd=ROOT,  # noqa: E731
                                    capture_output=True, text=True, timeout=120)
    solved = run("solve", str(p), "--json")
    assert solved.returncode == 0, solved.stderr
    out = json.loads(solved.stdout)
    mode = next(m for m in out["modes"] if not m["rigid_body"])
    assert set(mode["link_torque_nm"]) == {"coupling", "damper", "tube"}
    checked = run("check", str(p))
    assert checked.returncode == 0, checked.stdout + checked.stderr


# ---------------------------------------------------------------- schematic
def test_the_schematic_layout_puts_parallel_links_on_distinct_lanes():
    pl = place(["a", "b", "c"], [("s1", "a", "b"), ("s2", "b", "a"), ("s3", "a", "b"), ("bc", "b", "c")])
    assert pl.n_rows == 1 and pl.column == {"a": 0, "b": 1, "c": 2}  # no row for a repeated neighbour
    offsets = [pl.lane_offset(lid, 10.0) for lid in ("s1", "s2", "s3")]
    assert offsets == [-10.0, 0.0, 10.0]
    assert pl.lane_offset("bc", 10.0) == 0.0


def test_the_sheet_and_the_canvas_draw_parallel_links_apart(tmp_path):
    from reportlab.graphics.shapes import Line

    from app.report.schematic import schematic_drawings
    from app.report.styles import register_fonts
    register_fonts()
    doc = json.loads(parallel_project(tmp_path).read_text())
    train = build_train(doc)
    (drawing,), _ = schematic_drawings(doc, train, 480.0)
    heights = {round(s.y1, 3) for s in drawing.contents if isinstance(s, Line) and s.y1 == s.y2
               and s.x2 - s.x1 > 20}
    assert len(heights) == 3  # three links side by side, each on its own level

    from PySide6 import QtWidgets
    from app.gui.canvas import TrainCanvas
    QtWidgets.QApplication.instance() or QtWidgets.QApplication([])
    canvas = TrainCanvas()
    canvas.set_document(doc)
    boxes = [canvas._items[("link", lid)].sceneBoundingRect() for lid in ("coupling", "damper", "tube")]
    centres = sorted(b.center().y() for b in boxes)
    assert min(np.diff(centres)) > 20  # scene units apart, not drawn over each other


# ---------------------------------------------------------------- desktop editing
def test_desktop_edits_add_a_link_in_parallel_and_keep_the_tree_when_inserting(qtbot, tmp_path, monkeypatch):
    from PySide6 import QtCore
    from app.gui import edits
    from app.gui import main_window as mw
    doc = json.loads(parallel_project(tmp_path).read_text())
    # a link beside the selected one: same ends, the model builds (no loop error)
    new, sel = edits.insert_parallel(doc, ("link", "coupling"))
    assert sel[0] == "link" and {l["id"] for l in new["links"]} == {"coupling", "damper", "tube", sel[1]}
    build_train(new)
    # inserting a disc after 'a' moves every link of the parallel group to the new disc
    new2, _ = edits.insert_after(doc, ("disc", "a"), "shaft")
    build_train(new2)
    # splitting one link of the group takes its partners along (still a tree)
    new3, _ = edits.insert_after(doc, ("link", "damper"), "coupling")
    build_train(new3)
    # deleting a disc joined only by a parallel group removes the group (no link to itself)
    new4, _ = edits.delete_report(doc, ("disc", "b"))
    assert new4["links"] == []
    # the window: select a link, add one in parallel, results come without a model error
    monkeypatch.setattr(mw, "recovery_dir", lambda: tmp_path / "recovery")
    settings_ = QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.IniFormat)
    win = mw.MainWindow(settings=settings_, autosave=False)
    win.runner.set_debounce(0)
    win.show()
    qtbot.waitExposed(win)
    try:
        assert win.open_path(parallel_project(tmp_path))
        win.set_selection(("link", "tube"))
        win.act_ins_parallel.trigger()
        assert win.project.error is None
        assert len(win.project.train.links) == 4
        # joining two discs that already share a link by editing an end is no loop either
        doc5 = copy.deepcopy(win.project.doc)
        doc5["discs"].append({"id": "c", "inertia": 1.0})
        doc5["links"].append(spring("bc", 1e5, "b", "c"))
        win.project.replace(doc5, "add c")
        win.project.set_value(("links", len(doc5["links"]) - 1, "to"), "a")
        assert win.project.error is not None and "loop" not in str(win.project.error)  # 'c' unlinked
        assert "disc 'c'" in str(win.project.error)
        qtbot.waitUntil(lambda: win.results is not None, timeout=15000)
    finally:
        win.project.undo_stack.setClean()
        win.runner.wait()
        win.close()
        win.deleteLater()


def test_a_damper_beside_a_spring_holds_no_free_ring():
    """A damping-only link in parallel with a spring joins nothing by damping alone: the spring
    carries the torque, so there is no damper ring to free or lock and no such statement."""
    from core.damped import damper_bounds
    from core.project import build_train
    doc = {"title": "spring and damper", "discs": [{"id": "a", "inertia": "1 kg*m^2"}, {"id": "b", "inertia": "0.2 kg*m^2"}],
           "links": [{"id": "k", "kind": "coupling", "from": "a", "to": "b", "stiffness": "1000 N*m/rad"},
                     {"id": "c", "kind": "coupling", "from": "a", "to": "b", "damping": "5 N*m*s/rad"}]}
    assert damper_bounds(build_train(doc), 100.0) is None
