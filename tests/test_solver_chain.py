"""Lumped chains solved as a symmetric tridiagonal eigenproblem (issue 15, speed).

A train whose stiffness matrix is tridiagonal in chain order is solved with LAPACK
(core.solver.TridiagonalChain) instead of the general tree elimination.  Checked here:

* random chains (hypothesis, fixed budget; springs, couplings, lumped shafts, elastic and
  rigid gear meshes, links in parallel, springs to ground, discs numbered out of chain
  order) against scipy.linalg.eigh on dense matrices assembled by this file (LAPACK
  dsygvd; the independent reference), and against the general method of the solver:
  the same mode count, rigid-body mode, numbering, notes and completeness, frequencies
  to 1e-12, shapes, torques and energy shares to rounding;
* a uniform free-free chain of N discs J joined by springs k, against the textbook
  closed form omega_k = 2 sqrt(k / J) sin(k pi / (2 N)), k = 0 .. N - 1 (eigenvalues of
  the path graph's Laplacian; e.g. Thomson, Theory of Vibration with Applications, the
  lumped-mass chain -- from memory), and a uniform chain fixed through a spring at one
  end and free at the other, omega_r = 2 sqrt(k / J) sin((2 r - 1) pi / (2 (2 N + 1))),
  r = 1 .. N (same source, from memory; both also checked against dense eigh here);
* a chain with an elastic gear pair against the same chain with the inertias and
  stiffnesses beyond the mesh referred to the first shaft by the speed ratio squared
  (energy equivalence; e.g. Wilson, Practical Solution of Torsional Vibration Problems
  -- from memory);
* the long-chain route (roots started from a coarse model, proven by Sturm counts) and
  the bisection route agree, and a chain too degenerate for either falls back to the
  general method with the right frequencies.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg as sla
from hypothesis import HealthCheck, given, settings, strategies as st

import core.solver as solver
from core.elimination import build_schedule, path_order
from core.project import build_train
from core.solver import natural_modes

G, RHO = 79.3e9, 7850.0  # invented material values, Pa and kg/m^3


def _doc(discs, links):
    return {"format": "twistwise-project", "version": 1, "title": "chain", "discs": discs, "links": links}


def uniform_chain(n, J=2.0, k=3.0e6, ground=False):
    """n discs of inertia J joined by springs k in order; with ``ground`` a spring k from
    ground to the first disc (fixed-free)."""
    discs = [{"id": f"d{i}", "inertia": J} for i in range(n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}", "stiffness": k}
             for i in range(n - 1)]
    if ground:
        links.append({"id": "g", "kind": "shaft", "from": "ground", "to": "d0", "stiffness": k})
    return _doc(discs, links)


@st.composite
def chains(draw):
    n = draw(st.integers(2, 40))
    order = draw(st.permutations(list(range(n))))  # disc i of the file sits at chain place order[i]
    discs = [{"id": f"d{i}", "inertia": draw(st.floats(0.05, 20.0))} for i in range(n)]
    at = {p: f"d{i}" for i, p in enumerate(order)}
    links = []
    meshes = 0  # at most four gear stages: a steeper train is refused (speeds 1e6 apart)
    for p in range(n - 1):
        a, b = (at[p], at[p + 1]) if draw(st.booleans()) else (at[p + 1], at[p])
        kinds = ["spring", "spring", "coupling", "lumped"] + (["elastic_mesh", "rigid_mesh"] if meshes < 4 else [])
        kind = draw(st.sampled_from(kinds))
        meshes += kind.endswith("mesh")
        lid = f"l{p}"
        if kind in ("spring", "coupling"):
            links.append({"id": lid, "kind": "shaft" if kind == "spring" else "coupling", "from": a, "to": b,
                          "stiffness": draw(st.floats(1e4, 1e7))})
            if draw(st.integers(0, 7)) == 0:  # now and then a second spring beside it
                links.append({"id": f"{lid}p", "kind": "shaft", "from": a, "to": b,
                              "stiffness": draw(st.floats(1e4, 1e7))})
        elif kind == "lumped":
            links.append({"id": lid, "kind": "shaft", "from": a, "to": b, "mass": "lumped",
                          "material": {"shear_modulus": G, "density": RHO},
                          "segments": [{"length": draw(st.floats(0.1, 2.0)),
                                        "outer_diameter": draw(st.floats(0.03, 0.2))}]})
        else:
            mesh = {"id": lid, "kind": "gear_mesh", "from": a, "to": b,
                    "speed_ratio": draw(st.sampled_from([0.25, 0.5, 1.7, 3.0]))}
            if kind == "elastic_mesh":
                mesh["stiffness"] = draw(st.floats(1e5, 1e8))
            links.append(mesh)
    for i in range(n):
        if draw(st.integers(0, 11)) == 0:  # now and then a spring to ground
            links.append({"id": f"g{i}", "kind": "shaft", "from": "ground", "to": f"d{i}",
                          "stiffness": draw(st.floats(1e4, 1e7))})
    return _doc(discs, links)


def dense_reference(doc):
    """K and M referred to the first disc's shaft (speed factors by a walk along the links;
    a mesh stiffness is given on its `from` shaft; a lumped shaft puts half its polar mass
    moment rho Ip L on each end, Ip = pi D^4 / 32), rigid meshes as a constraint matrix T
    (K_r = T' K T).  Returns K_r, M_r, whether the train is grounded, T and each disc's
    speed factor."""
    ids = [d["id"] for d in doc["discs"]]
    ix = {d: i for i, d in enumerate(ids)}
    n = len(ids)
    speed = {ids[0]: 1.0}
    todo = [ids[0]]
    while todo:
        d = todo.pop()
        for l in doc["links"]:
            if "ground" in (l["from"], l["to"]):
                continue
            r = l.get("speed_ratio", 1.0) if l["kind"] == "gear_mesh" else 1.0
            for here, there, f in ((l["from"], l["to"], r), (l["to"], l["from"], 1.0 / r)):
                if here == d and there not in speed:
                    speed[there] = speed[d] * f
                    todo.append(there)
    K = np.zeros((n, n))
    M = np.diag([d["inertia"] * speed[d["id"]] ** 2 for d in doc["discs"]])
    groups = list(range(n))

    def root(i):
        while groups[i] != i:
            i = groups[i]
        return i

    for l in doc["links"]:
        ends = [e for e in (l["from"], l["to"]) if e != "ground"]
        if l["kind"] == "gear_mesh" and "stiffness" not in l:
            groups[root(ix[l["from"]])] = root(ix[l["to"]])
            continue
        if "segments" in l:
            s = l["segments"][0]
            Ip = math.pi * s["outer_diameter"] ** 4 / 32.0
            k = G * Ip / s["length"]
            for e in ends:
                M[ix[e], ix[e]] += 0.5 * RHO * Ip * s["length"] * speed[e] ** 2
        else:
            k = l["stiffness"]
        k *= (speed[l["from"]] if l["kind"] == "gear_mesh" else speed[ends[0]]) ** 2
        if len(ends) == 1:
            K[ix[ends[0]], ix[ends[0]]] += k
        else:
            i, j = ix[l["from"]], ix[l["to"]]
            K[i, i] += k
            K[j, j] += k
            K[i, j] -= k
            K[j, i] -= k
    reps = sorted({root(i) for i in range(n)})
    T = np.zeros((n, len(reps)))
    for i in range(n):
        T[i, reps.index(root(i))] = 1.0
    grounded = any("ground" in (l["from"], l["to"]) for l in doc["links"])
    return T.T @ K @ T, T.T @ M @ T, grounded, T, np.array([speed[i] for i in ids])


@pytest.fixture
def chain_path(monkeypatch):
    """Every lumped chain, however short, takes the tridiagonal route; ``coarse=True``
    makes even a short one start from a coarse model of itself."""
    def use(coarse: bool):
        monkeypatch.setattr(solver, "CHAIN_MIN_WORK", 0)
        monkeypatch.setattr(solver, "COARSE_NODES", 2)
        monkeypatch.setattr(solver, "COARSE_FACTOR", 1 if coarse else 10 ** 9)
    return use


def _general(doc, **kw):
    """The same solve by the general method (the tridiagonal route switched off)."""
    old = solver.CHAIN_MIN_WORK
    solver.CHAIN_MIN_WORK = 10 ** 18
    try:
        solver._LAST_SYSTEM = (None, None)
        return natural_modes(build_train(doc), **kw)
    finally:
        solver.CHAIN_MIN_WORK = old
        solver._LAST_SYSTEM = (None, None)


def _same_modes(a, b, shape_atol=1e-6):
    """Two solves of one train agree: count, numbering, rigid body, notes, completeness,
    frequencies to 1e-12, and the per-mode arrays to the general method's precision (it
    stops its iteration once omega has converged, which leaves a shape within about 1e-6 g^-1/3
    for a relative gap g to the next root; the tridiagonal route iterates to rounding; a
    mode's sign may differ where two discs tie for its largest angle)."""
    assert len(a) == len(b)
    assert np.array_equal(a.number, b.number) and np.array_equal(a.rigid_body, b.rigid_body)
    assert a.notes == b.notes and a.requested == b.requested
    assert a.complete_to_hz == pytest.approx(b.complete_to_hz, rel=1e-12)
    np.testing.assert_allclose(a.frequency_hz, b.frequency_hz, rtol=1e-12, atol=1e-300)
    sign = np.sign(np.sum(a.shape * b.shape, axis=1))
    sign[sign == 0] = 1.0
    np.testing.assert_allclose(a.shape, sign[:, None] * b.shape, atol=shape_atol)
    big = max(np.abs(b.link_torque).max(), 1e-300)
    np.testing.assert_allclose(a.link_torque / big, sign[:, None] * b.link_torque / big, atol=shape_atol)
    for name in ("kinetic_share", "strain_share", "link_kinetic_share"):
        np.testing.assert_allclose(getattr(a, name), getattr(b, name), atol=shape_atol)


@pytest.mark.parametrize("coarse", [False, True])
@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(doc=chains())
def test_random_chains_agree_with_dense_eigh_and_the_general_method(chain_path, coarse, doc):
    chain_path(coarse)
    K, M, grounded, T, speed = dense_reference(doc)
    lam = sla.eigh(K, M, eigvals_only=True)  # scipy / LAPACK dsygvd: the independent reference
    f_ref = np.sqrt(np.clip(lam, 0.0, None)) / (2 * math.pi)
    rb = 0 if grounded else 1
    train = build_train(doc)
    solver._LAST_SYSTEM = (None, None)
    system = solver.dynamic_system(train)
    # the route under test (rigid meshes may fold every disc onto one node: no chain left)
    assert (system.chain is not None) == (system.asm.n_nodes >= 2)
    want = max(1, min(len(lam) - rb, 12))
    modes = natural_modes(train, n_modes=want)
    assert len(modes) == min(want + rb, len(lam))  # a train folded onto one node: rigid body only
    assert int(modes.rigid_body.sum()) == rb
    # dense eigh is accurate to eps ||M^-1 K|| absolute: a low mode of a stiff train to less
    lam_ours = (2 * math.pi * modes.frequency_hz[rb:]) ** 2
    np.testing.assert_allclose(lam_ours, lam[rb:want + rb], rtol=1e-9, atol=1e3 * np.finfo(float).eps * lam.max())
    _same_modes(modes, _general(doc, n_modes=want))
    # every mode below a cap between two reference frequencies, as the general method finds
    if len(lam) - rb >= 2:
        gap = int(np.argmax(np.diff(f_ref[rb:]) / f_ref[rb + 1:]))
        lo_f, hi_f = f_ref[rb + gap], f_ref[rb + gap + 1]
        if hi_f > lo_f * (1 + 1e-6):
            cap = 0.5 * (lo_f + hi_f)
            solver._LAST_SYSTEM = (None, None)
            capped = natural_modes(build_train(doc), max_frequency_hz=cap)
            assert int(capped.elastic.sum()) == gap + 1
            _same_modes(capped, _general(doc, max_frequency_hz=cap))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(doc=chains())
def test_random_chain_shapes_solve_the_dense_eigenproblem(chain_path, doc):
    """Each mode's referred node angles leave (K - w^2 M) q at rounding; its disc angles
    are those times each disc's speed factor (discs on a rigid mesh turn together),
    normalised to a largest angle of +1."""
    chain_path(True)
    K, M, grounded, T, speed = dense_reference(doc)
    solver._LAST_SYSTEM = (None, None)
    train = build_train(doc)
    modes = natural_modes(train, n_modes=max(1, min(len(K) - (0 if grounded else 1), 12)))
    # the solver's node of each reference coordinate (a disc of each rigid group)
    nodes = solver.dynamic_system(train).asm.disc_node[np.argmax(T, axis=0)]
    for i in range(len(modes)):
        assert np.abs(modes.shape[i]).max() == 1.0 and modes.shape[i].max() == 1.0
        q = modes.node_shape[i][nodes]
        actual = T @ q * speed
        np.testing.assert_allclose(modes.shape[i], actual / actual[np.argmax(np.abs(actual))], atol=1e-12)
        w2 = (2 * math.pi * modes.frequency_hz[i]) ** 2
        res = (K - w2 * M) @ q
        scale = (np.abs(K) @ np.abs(q) + w2 * np.abs(M) @ np.abs(q)).max()
        assert np.abs(res).max() <= 1e-10 * scale


def test_long_uniform_free_free_chain_matches_the_closed_form():
    """The route a 20 000-disc chain takes by default for 20 modes (roots from a coarse
    model, proven by counts) against omega_k = 2 sqrt(k / J) sin(k pi / (2 N)) (closed
    form, see the module docstring)."""
    n, J, k = 20_000, 2.0, 3.0e6
    solver._LAST_SYSTEM = (None, None)
    train = build_train(uniform_chain(n, J, k))
    assert solver.dynamic_system(train).chain is not None
    modes = natural_modes(train, n_modes=20)
    kk = np.arange(0, 21)
    ref = 2.0 * np.sqrt(k / J) * np.sin(kk * np.pi / (2 * n)) / (2 * math.pi)
    assert modes.rigid_body[0] and not modes.rigid_body[1:].any()
    np.testing.assert_allclose(modes.frequency_hz[1:], ref[1:], rtol=1e-11)
    # the exact shape of mode k: cos(k pi (i + 1/2) / N) (same source); both ends tie for the
    # largest angle, so either may be the +1 of the normalisation
    i = np.arange(n)
    for m in (1, 7, 20):
        shape = np.cos(m * np.pi * (i + 0.5) / n)
        shape /= np.abs(shape).max()
        got = modes.shape[m]
        assert min(np.abs(got - shape).max(), np.abs(got + shape).max()) < 1e-8


@pytest.mark.parametrize("coarse", [False, True])
def test_uniform_fixed_free_chain_matches_the_closed_form(chain_path, coarse):
    """omega_r = 2 sqrt(k / J) sin((2 r - 1) pi / (2 (2 N + 1))) (closed form, see the module
    docstring), and the same from dense eigh."""
    chain_path(coarse)
    n, J, k = 400, 1.5, 2.0e6
    doc = uniform_chain(n, J, k, ground=True)
    solver._LAST_SYSTEM = (None, None)
    modes = natural_modes(build_train(doc), n_modes=30)
    r = np.arange(1, 31)
    ref = 2.0 * np.sqrt(k / J) * np.sin((2 * r - 1) * np.pi / (2 * (2 * n + 1))) / (2 * math.pi)
    assert not modes.rigid_body.any()
    np.testing.assert_allclose(modes.frequency_hz, ref, rtol=1e-11)
    K, M = dense_reference(doc)[:2]
    lam = sla.eigh(K, M, eigvals_only=True, subset_by_index=[0, 29])
    np.testing.assert_allclose(modes.frequency_hz, np.sqrt(lam) / (2 * math.pi), rtol=1e-9)


@pytest.mark.parametrize("ratio", [0.4, 2.5])
def test_chain_with_a_gear_pair_equals_its_referred_equivalent(chain_path, ratio):
    """A 12 000-disc chain with an elastic gear mesh in the middle (the coarse-model route) against the
    same chain without the mesh: the discs beyond it and the shafts between them referred to
    the first shaft by ratio^2, the mesh a spring of its own stiffness (given on its `from`
    shaft, energy equivalence; see the module docstring)."""
    chain_path(True)
    n, half = 12_000, 6_000
    rng = np.random.default_rng(7)
    J = rng.uniform(0.5, 2.0, n) * 1e-2  # invented
    k = rng.uniform(0.5, 2.0, n - 1) * 1e8
    geared = {"discs": [{"id": f"d{i}", "inertia": float(J[i])} for i in range(n)], "links": []}
    referred = {"discs": [{"id": f"d{i}", "inertia": float(J[i] * (ratio ** 2 if i >= half else 1.0))}
                          for i in range(n)], "links": []}
    for i in range(n - 1):
        a, b = f"d{i}", f"d{i + 1}"
        if i == half - 1:
            geared["links"].append({"id": "mesh", "kind": "gear_mesh", "from": a, "to": b,
                                    "speed_ratio": ratio, "stiffness": float(k[i])})
            referred["links"].append({"id": "mesh", "kind": "shaft", "from": a, "to": b, "stiffness": float(k[i])})
        else:
            s = ratio ** 2 if i >= half else 1.0
            geared["links"].append({"id": f"s{i}", "kind": "shaft", "from": a, "to": b, "stiffness": float(k[i])})
            referred["links"].append({"id": f"s{i}", "kind": "shaft", "from": a, "to": b,
                                      "stiffness": float(k[i] * s)})
    solver._LAST_SYSTEM = (None, None)
    g = natural_modes(build_train(_doc(**geared)), n_modes=15)
    solver._LAST_SYSTEM = (None, None)
    r = natural_modes(build_train(_doc(**referred)), n_modes=15)
    np.testing.assert_allclose(g.frequency_hz, r.frequency_hz, rtol=1e-11)
    # the geared branch's actual angles are the referred ones times the speed ratio
    scale = np.where(np.arange(n) >= half, ratio, 1.0)
    ga = g.shape / np.abs(g.shape).max(axis=1, keepdims=True)
    ra = r.shape * scale[None, :]
    ra = ra / ra[np.arange(len(ra)), np.argmax(np.abs(ra), axis=1)][:, None]
    np.testing.assert_allclose(ga, ra, atol=1e-7)


def test_long_chain_takes_the_tridiagonal_route_without_an_elimination_plan(monkeypatch):
    """A long chain's modes need neither the general root finder nor the elimination plan."""
    def refuse(*args, **kwargs):
        raise AssertionError("general method used")
    monkeypatch.setattr(solver, "_find_roots", refuse)
    monkeypatch.setattr(solver, "cached_schedule", refuse)
    solver._LAST_SYSTEM = (None, None)
    modes = natural_modes(build_train(uniform_chain(20_000)), n_modes=20)
    assert len(modes) == 21 and modes.rigid_body[0]


def test_bisection_and_coarse_routes_agree_on_a_rough_long_chain():
    """Invented, strongly varying inertias and stiffnesses (a soft coupling now and then)."""
    n = 12_000
    rng = np.random.default_rng(3)
    J = rng.uniform(0.2, 5.0, n)
    k = rng.uniform(0.5e7, 2e7, n - 1)
    k[rng.choice(n - 1, 20, replace=False)] *= 1e-3  # soft couplings
    doc = _doc([{"id": f"d{i}", "inertia": float(J[i])} for i in range(n)],
               [{"id": f"s{i}", "kind": "coupling", "from": f"d{i}", "to": f"d{i + 1}", "stiffness": float(k[i])}
                for i in range(n - 1)])
    solver._LAST_SYSTEM = (None, None)
    _routes_agree(solver.dynamic_system(build_train(doc)).chain, np.arange(1, 41))


def _routes_agree(chain, targets):
    """The coarse-model route and the bisection route give the same roots and vectors."""
    d, e, slack = chain.symmetric()
    Xc, Xb = np.empty((chain.n, len(targets))), np.empty((chain.n, len(targets)))
    coarse = chain._from_coarse(targets, d, e, slack, Xc)
    bisected = chain._from_bisection(targets, d, e, slack, Xb)
    assert coarse is not None and bisected is not None
    np.testing.assert_allclose(coarse, bisected, rtol=1e-12)
    sign = np.sign(np.sum(Xc * Xb, axis=0))
    np.testing.assert_allclose(Xc, Xb * sign, atol=1e-8)


def test_coarse_route_on_rough_chains_with_heavy_discs_and_soft_couplings():
    """Invented long chains, inertias and stiffnesses spread over decades, heavy discs and
    very soft couplings here and there, some springs to ground: the coarse-model route
    (seed 3 has two close roots that the polish swaps) agrees with the bisection route."""
    from core.model import Disc, Link, Train
    for seed in (0, 3):
        rng = np.random.default_rng(seed)
        n = int(rng.integers(10000, 40000))
        rng = np.random.default_rng(seed)
        J = rng.uniform(0.1, 3.0, n) * 10 ** rng.uniform(-1, 1, n)
        k = rng.uniform(0.5e6, 2e6, n - 1) * n / 1000
        soft = rng.choice(n - 1, rng.integers(0, 30), replace=False)
        k[soft] *= 10 ** rng.uniform(-5, -1, len(soft))
        heavy = rng.choice(n, rng.integers(0, 10), replace=False)
        J[heavy] *= 10 ** rng.uniform(1, 4, len(heavy))
        links = [Link(f"s{i}", "shaft", f"d{i}", f"d{i + 1}", float(k[i])) for i in range(n - 1)]
        if seed % 3 == 0:
            links += [Link(f"g{i}", "shaft", "ground", f"d{i}", float(rng.uniform(1e5, 1e7)))
                      for i in rng.choice(n, 5, replace=False)]
        train = Train("rough", tuple(Disc(f"d{i}", f"d{i}", float(J[i])) for i in range(n)), tuple(links),
                      speed_factor={f"d{i}": 1.0 for i in range(n)})
        solver._LAST_SYSTEM = (None, None)
        _routes_agree(solver.dynamic_system(train).chain, np.arange(25))  # grounded: the first root is elastic


def test_chain_route_gets_past_an_exactly_singular_shift(chain_path, monkeypatch):
    """Equal discs, doubled shafts and equal springs to ground: K - sigma J is singular to
    the last bit at a root, where LAPACK's solve stops; the route solves a hair off it and
    keeps the vector at rounding (against dense eigh) without the general method."""
    chain_path(True)
    monkeypatch.setattr(solver, "_find_roots", lambda *a, **k: pytest.fail("general method used"))
    n = 18
    discs = [{"id": f"d{i}", "inertia": 0.05078125} for i in range(n)]
    links = [{"id": f"s{i}{c}", "kind": "shaft", "from": f"d{i + 1}", "to": f"d{i}", "stiffness": 1e4}
             for i in range(n - 1) for c in "ab"]
    links += [{"id": f"g{i}", "kind": "shaft", "from": "ground", "to": f"d{i}", "stiffness": 1e4} for i in range(n)]
    doc = _doc(discs, links)
    K, M = dense_reference(doc)[:2]
    lam = sla.eigh(K, M, eigvals_only=True)
    solver._LAST_SYSTEM = (None, None)
    modes = natural_modes(build_train(doc), n_modes=12)
    np.testing.assert_allclose(modes.frequency_hz, np.sqrt(lam[:12]) / (2 * math.pi), rtol=1e-12)
    for i in range(12):
        q = modes.node_shape[i]
        w2 = (2 * math.pi * modes.frequency_hz[i]) ** 2
        scale = (np.abs(K) @ np.abs(q) + w2 * np.abs(M) @ np.abs(q)).max()
        assert np.abs((K - w2 * M) @ q).max() <= 1e-13 * scale


def test_nearly_repeated_roots_fall_back_to_the_general_method(chain_path):
    """Two equal chains joined by a spring 1e-14 of the others': pairs of roots closer than
    the Sturm counts resolve; the general method (repeated roots made M-orthogonal) answers."""
    chain_path(True)
    n = 30
    J, k = 1.0, 1.0e6
    discs = [{"id": f"d{i}", "inertia": J} for i in range(2 * n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}",
              "stiffness": k if i != n - 1 else k * 1e-14} for i in range(2 * n - 1)]
    doc = _doc(discs, links)
    K, M = dense_reference(doc)[:2]
    lam = sla.eigh(K, M, eigvals_only=True)
    solver._LAST_SYSTEM = (None, None)
    system = solver.dynamic_system(build_train(doc))
    assert system.chain is not None
    assert system.chain.modes(np.arange(1, 9)) is None  # the tridiagonal route declines
    modes = natural_modes(build_train(doc), n_modes=8)
    # the pairs split by ~1e-14: each member of a pair against the pair's reference value
    np.testing.assert_allclose(modes.frequency_hz[2:], np.sqrt(lam[2:9]) / (2 * math.pi), rtol=1e-9)


@pytest.mark.parametrize("n", [6, 8, 12])
@pytest.mark.parametrize("doubled", [False, True])
def test_general_method_on_chains_of_equal_discs(n, doubled):
    """Equal discs and shafts make K - omega^2 J cancel on its diagonal at a root; the
    general method's tree elimination (no pivoting) then needs its off-root refinement.
    Against dense eigh (the independent reference): frequencies to 1e-12, shapes to 1e-8."""
    discs = [{"id": f"d{i}", "inertia": 1.0} for i in range(n)]
    links = []
    for i in range(n - 1):
        links.append({"id": f"s{i}", "kind": "shaft", "from": f"d{i + 1}", "to": f"d{i}", "stiffness": 1e4})
        if doubled and i % 3 != 2:  # some links doubled by a second one beside them
            links.append({"id": f"p{i}", "kind": "shaft", "from": f"d{i + 1}", "to": f"d{i}", "stiffness": 1e4})
    doc = _doc(discs, links)
    K, M = dense_reference(doc)[:2]
    lam, V = sla.eigh(K, M)
    modes = _general(doc, n_modes=n - 1)
    np.testing.assert_allclose(modes.frequency_hz[1:], np.sqrt(lam[1:]) / (2 * math.pi), rtol=1e-12)
    for i in range(1, n):
        v = V[:, i] / np.abs(V[:, i]).max()
        assert min(np.abs(modes.shape[i] - v).max(), np.abs(modes.shape[i] + v).max()) < 1e-8


# ------------------------------------------------------------------ chain order
def test_path_order_of_chains_in_and_out_of_order():
    assert np.array_equal(path_order(5, [0, 2, 1, 3], [1, 3, 2, 4]), np.arange(5))
    # numbered out of order: 3 - 0 - 4 - 1 - 2
    got = path_order(5, [0, 4, 1, 3], [4, 1, 2, 0])
    assert got.tolist() in ([3, 0, 4, 1, 2], [2, 1, 4, 0, 3])
    assert path_order(4, [0, 0, 0], [1, 2, 3]) is None  # a star
    assert path_order(5, [0, 2, 3, 4], [1, 3, 4, 2]) is None  # a pair and a ring: not connected
    assert path_order(3, [0], [1]) is None  # too few links


def test_elimination_plan_of_a_shuffled_chain_counts_like_dense_eigh():
    """The plan built along a chain numbered out of order gives the Sturm count of dense
    eigh (the count of eigenvalues below each trial value, Sylvester's law of inertia)."""
    from core.elimination import eliminate
    n = 300
    rng = np.random.default_rng(11)
    perm = rng.permutation(n)
    k = rng.uniform(1.0, 3.0, n - 1)
    ea, eb = perm[:-1], perm[1:]
    D = np.zeros(n)
    np.add.at(D, ea, k)
    np.add.at(D, eb, k)
    Kd = np.zeros((n, n))
    Kd[ea, eb] = Kd[eb, ea] = -k
    Kd[np.arange(n), np.arange(n)] = D
    lam = np.linalg.eigvalsh(Kd)
    sch = build_schedule(n, ea, eb)
    trial = 0.5 * (lam[1:] + lam[:-1])[::17]
    neg = eliminate(sch, D[:, None] - trial[None, :], np.repeat(-k[:, None], len(trial), axis=1), 1e-14)[0]
    assert neg.tolist() == [int(np.count_nonzero(lam < t)) for t in trial]
