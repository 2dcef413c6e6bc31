"""The quick paths of reading a long train (issue 15) against the full ones.

core.project reads plain discs and links by a quick loop, core.model.check_topology
finds a valid tree by array operations and core.units.quick reads common quantity texts
in two dict lookups; each leaves everything else to the full reading, which also words
every refusal.  These tests hold the quick paths to the full ones: the same objects (to
the repr of every field) for valid input, the same message, element and field for bad
input, and the quick path actually taken for every valid plain element and tree.  The
connection test is checked against scipy's connected components, an independent reference.
"""
from __future__ import annotations

import dataclasses
import gc
import json

import pytest
from hypothesis import given, settings, strategies as st

from core import model, project, units as u
from core.errors import ModelError
from core.model import Disc, Link, check_topology, plain_disc, plain_link
from core.project import build_train

# every unit the strategies write, read once so that the quick reading knows it
for _text, _kind in (("1 kg*m^2", u.INERTIA), ("1 lb*ft^2", u.INERTIA), ("1 N*m*s/rad", u.DAMPING),
                     ("1 MN*m/rad", u.STIFFNESS), ("1 kN*m/rad", u.STIFFNESS), ("1 N*m/rad", u.STIFFNESS)):
    u.parse(_text, _kind)


def outcome(fn, *args):
    """('ok', the repr of the result) or ('error', message, element, field)."""
    try:
        return ("ok", repr(fn(*args)))
    except ModelError as exc:
        return ("error", exc.message, exc.element, exc.field)


# ---------------------------------------------------------------- objects
def test_plain_constructors_give_the_constructors_objects():
    link = Link("s1", "coupling", "a", "b", 2.5e5, damping=12.0, name="Flex coupling")
    fast = plain_link("s1", "coupling", "a", "b", 2.5e5, 12.0, "Flex coupling")
    assert fast == link and repr(vars(fast)) == repr(vars(link))
    assert list(vars(fast)) == [f.name for f in dataclasses.fields(Link)]  # every field, in order
    disc = Disc("d1", "Motor rotor", 14.2, 3.0)
    fast = plain_disc("d1", "Motor rotor", 14.2, 3.0)
    assert fast == disc and repr(vars(fast)) == repr(vars(disc))
    assert list(vars(fast)) == [f.name for f in dataclasses.fields(Disc)]
    # the constructor would run a __post_init__; the plain ones do not
    assert not hasattr(Link, "__post_init__") and not hasattr(Disc, "__post_init__")
    with pytest.raises(dataclasses.FrozenInstanceError):
        fast.inertia = 1.0


# ---------------------------------------------------------------- quantities
quantity_texts = st.one_of(
    st.sampled_from(["18.5 kg*m^2", "0 kg*m^2", "-3 kg*m^2", "1e31 kg*m^2", "1e-400 kg*m^2",
                     "nan kg*m^2", "inf kg*m^2", "1_000 kg*m^2", "1,5 kg*m^2", " 2 kg*m^2",
                     "2  kg*m^2", "2\tkg*m^2", "2kg*m^2", "\u0662 kg*m^2", "2 N*m", "3 lb*ft^2",
                     "2 MN*m/rad", "40 N*m*s/rad", "0x10 kg*m^2", "1e5", "", " "]),
    st.builds(lambda x, unit: f"{x!r} {unit}", st.floats(allow_nan=True, allow_infinity=True),
              st.sampled_from(["kg*m^2", "lb*ft^2", "MN*m/rad", "N*m*s/rad"])),
    st.text(alphabet="0123456789.eE+-_ kgm*^2N/", max_size=14),
    st.floats(allow_nan=True, allow_infinity=True), st.integers(-10 ** 32, 10 ** 32),
    st.booleans(), st.none())


@settings(max_examples=300, deadline=None)
@given(quantity_texts, st.sampled_from([u.INERTIA, u.STIFFNESS, u.DAMPING]))
def test_quick_reading_is_parse_or_nothing(value, kind):
    x = u.quick(value, kind)
    if x is not None:
        assert repr(x) == repr(u.parse(value, kind))


# ---------------------------------------------------------------- discs and links
def mostly(valid, bad):
    """Values that are valid eleven times in twelve."""
    return st.integers(0, 11).flatmap(lambda i: bad if i == 0 else valid)


ids = mostly(st.sampled_from(["d0", "d1", "d2", "d3"]),
             st.one_of(st.sampled_from(["", "  ", "ground"]), st.integers(0, 3), st.none()))
inertias = mostly(st.one_of(st.sampled_from(["0.004 kg*m^2", "12 kg*m^2", "3e-2 kg*m^2", "2 lb*ft^2",
                                             "1.5e+3 kg*m^2", "-0 kg*m^2"]), st.floats(0, 100),
                            st.integers(0, 5)),
                  st.one_of(st.sampled_from(["0 kg*m^2", "-1 kg*m^2", "nan kg*m^2", "5 N*m", "5kg*m^2",
                                             " 5 kg*m^2", "1e31 kg*m^2"]),
                            st.floats(-1, 0), st.none(), st.booleans()))
stiffnesses = mostly(st.one_of(st.sampled_from(["2.1 MN*m/rad", "95 kN*m/rad", "7.5e5 N*m/rad"]),
                               st.floats(1e3, 1e7), st.integers(1, 10 ** 6)),
                     st.one_of(st.sampled_from(["0 N*m/rad", "-4 MN*m/rad", "inf N*m/rad", "3 kg*m^2",
                                                "95 florps"]), st.floats(-1e6, 0), st.none()))
dampings = mostly(st.one_of(st.sampled_from(["12 N*m*s/rad", "0.5 N*m*s/rad"]), st.floats(0.01, 50),
                            st.integers(1, 3), st.none()),
                  st.one_of(st.sampled_from(["0 N*m*s/rad", "-3 N*m*s/rad", "x"]), st.floats(-5, 0),
                            st.just(0)))
names = st.one_of(st.sampled_from(["Motor rotor", "", "Coupling hub"]), st.integers(0, 2), st.none())
kinds = mostly(st.sampled_from(["shaft", "coupling"]), st.sampled_from(["gear_mesh", "spring", None]))


def element(required, optional, extra):
    """A dict with the required keys (each sometimes missing), some optional keys, and now
    and then a key the quick path does not take (or, rarely, no dict at all)."""
    @st.composite
    def build(draw):
        obj = {}
        for key, values in required.items():
            if draw(st.integers(0, 15)):  # mostly present
                obj[key] = draw(values)
        for key, values in optional.items():
            if draw(st.booleans()):
                obj[key] = draw(values)
        if not draw(st.integers(0, 7)):
            key, values = draw(st.sampled_from(sorted(extra.items())))
            obj[key] = draw(values)
        if not draw(st.integers(0, 40)):
            return draw(st.sampled_from([[obj], "disc", 3]))
        return obj
    return build()


discs_st = element({"id": ids, "inertia": inertias}, {"name": names, "damping": dampings},
                   {"inertia_tolerance": st.sampled_from(["10 %", 0.1]), "note": st.just("spare")})
links_st = element({"id": mostly(st.sampled_from(["s0", "s1"]), st.sampled_from(["", " ", None])),
                    "kind": kinds, "from": ids, "to": ids, "stiffness": stiffnesses},
                   {"name": names, "damping": dampings},
                   {"loss_factor": st.sampled_from([0.05, "0.1", -1]), "mass": st.sampled_from(["lumped", "none"]),
                    "speed_ratio": st.sampled_from([2, 0.5]), "stress_concentration": st.sampled_from([1.5, 0.5]),
                    "note": st.just("spare")})


@settings(max_examples=300, deadline=None)
@given(st.lists(discs_st, min_size=1, max_size=4))
def test_quick_disc_reading_is_the_full_one(raw):
    full = outcome(lambda: tuple(project._disc(o, i) for i, o in enumerate(raw)))
    assert outcome(project._read_discs, raw) == full


@settings(max_examples=300, deadline=None)
@given(st.lists(links_st, min_size=1, max_size=4))
def test_quick_link_reading_is_the_full_one(raw):
    full = outcome(lambda: tuple(project._link(o, i) for i, o in enumerate(raw)))
    quick = outcome(lambda: project._read_links(raw)[0])
    assert quick == full


def test_plain_elements_take_the_quick_path(monkeypatch):
    def refuse(*args):
        raise AssertionError("read in full")
    doc = {"discs": [{"id": "d0", "inertia": "14.2 kg*m^2", "name": "Motor rotor"},
                     {"id": "d1", "inertia": 2.0, "damping": "5 N*m*s/rad"},
                     {"id": "d2", "inertia": "3 lb*ft^2"}],
           "links": [{"id": "s0", "kind": "shaft", "from": "d0", "to": "d1", "stiffness": "2.1 MN*m/rad"},
                     {"id": "s1", "kind": "coupling", "from": "d1", "to": "d2", "stiffness": 9.5e4,
                      "damping": "12 N*m*s/rad", "name": "Flex coupling"}]}
    expected = build_train(doc)
    monkeypatch.setattr(project, "_disc", refuse)
    monkeypatch.setattr(project, "_link", refuse)
    train = build_train(doc)
    assert repr(train) == repr(expected)
    assert train.disc("d1").damping == 5.0 and train.links[1].label == "Flex coupling"


SAMPLES = sorted((__import__("pathlib").Path(__file__).parents[1] / "sample_projects").glob("*.json"))


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_links_read_quickly_carry_no_ratings(monkeypatch, path):
    """attach_ratings reads only the links read in full; reading every link gives the same
    train (two sample projects carry coupling ratings, transient limits and shafting data)."""
    from core import ratings

    doc = project.load_document(path)
    expected = build_train(doc)
    monkeypatch.setattr(project, "attach_ratings",
                        lambda doc, train, links_to_read=None: ratings.attach_ratings(doc, train))
    assert repr(build_train(doc)) == repr(expected)


@pytest.mark.parametrize("enabled", [True, False])
def test_the_garbage_collector_is_left_as_found(enabled):
    doc = {"discs": [{"id": "d0", "inertia": 1.0}, {"id": "d1", "inertia": 1.0}],
           "links": [{"id": "s0", "kind": "shaft", "from": "d0", "to": "dx", "stiffness": 1e5}]}
    (gc.enable if enabled else gc.disable)()
    try:
        with pytest.raises(ModelError):
            build_train(doc)
        assert gc.isenabled() == enabled
        doc["links"][0]["to"] = "d1"
        build_train(doc)
        assert gc.isenabled() == enabled
    finally:
        gc.enable()


# ---------------------------------------------------------------- topology
@st.composite
def trains(draw):
    """A random tree of discs (gear meshes, parallel links and links to ground among its
    links), then now and then one break of a rule of check_topology."""
    n = draw(st.integers(1, 7))
    discs = [Disc(f"d{i}", f"d{i}", 1.0) for i in range(n)]
    links = []

    def link(a, b):
        kind = draw(st.sampled_from(["shaft", "coupling", "gear_mesh"]))
        ratio = draw(st.sampled_from([1.0, 2.0, 0.5, 3.0])) if kind == "gear_mesh" else 1.0
        k = None if kind == "gear_mesh" and draw(st.booleans()) else 1e5
        return Link(f"s{len(links)}", kind, a, b, k, speed_ratio=ratio)

    for i in range(1, n):
        j = draw(st.integers(0, i - 1))
        links.append(link(*((f"d{j}", f"d{i}") if draw(st.booleans()) else (f"d{i}", f"d{j}"))))
    for _ in range(draw(st.integers(0, 2))):  # parallel links and links to ground
        if links and draw(st.booleans()):
            same = draw(st.sampled_from(links))
            links.append(dataclasses.replace(link(same.from_id, same.to_id), id=f"s{len(links)}"))
        else:
            links.append(Link(f"s{len(links)}", draw(st.sampled_from(["shaft", "coupling", "gear_mesh"])),
                              draw(st.sampled_from([d.id for d in discs])), "ground", 1e5))
    draw(st.randoms()).shuffle(links)
    brk = draw(st.sampled_from(["none"] * 6 + ["loop", "drop", "duplicate disc", "ground disc",
                                               "duplicate link", "unknown", "self", "ground to ground"]))
    if brk == "loop" and n > 1:
        a, b = draw(st.sampled_from([(x.id, y.id) for x in discs for y in discs if x.id < y.id]))
        links.append(Link("extra", "coupling", a, b, 1e5))
    elif brk == "drop" and links:
        links.pop(draw(st.integers(0, len(links) - 1)))
    elif brk == "duplicate disc":
        discs.append(Disc(discs[0].id, "twin", 1.0))
    elif brk == "ground disc":
        discs.append(Disc("ground", "ground", 1.0))
    elif brk == "duplicate link" and links:
        links.append(dataclasses.replace(links[0], from_id=discs[-1].id, to_id="ground", kind="coupling"))
    elif brk == "unknown" and links:
        links[0] = dataclasses.replace(links[0], to_id="nowhere")
    elif brk == "self":
        links.append(Link("self", "shaft", discs[0].id, discs[0].id, 1e5))
    elif brk == "ground to ground":
        links.append(Link("gg", "coupling", "ground", "ground", 1e5))
    return tuple(discs), tuple(links)


@settings(max_examples=400, deadline=None)
@given(trains())
def test_tree_check_agrees_with_the_full_check(train):
    discs, links = train
    full = outcome(model._check_in_full, discs, links)
    quick = model._tree_speeds(discs, links)
    if full[0] == "ok":
        assert quick is not None  # every valid train takes the quick check
        speed = model._check_in_full(discs, links)
        assert quick == speed  # the same factors ...
        if any(l.kind == "gear_mesh" for l in links):
            assert list(quick) == list(speed)  # ... in the same order where meshes set them
        else:
            assert set(quick.values()) == {1.0}
    else:
        assert quick is None
    # the factors compared as a mapping (without meshes, the quick check lists them in
    # disc order); every refusal word for word
    got = outcome(lambda: sorted(check_topology(discs, links).items()))
    assert got == outcome(lambda: sorted(model._check_in_full(discs, links).items()))


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 30).flatmap(lambda n: st.tuples(
    st.just(n), st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)), max_size=2 * n))))
def test_connection_test_agrees_with_scipy(graph):
    import numpy as np
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    n, edges = graph
    a = np.array([e[0] for e in edges], dtype=np.int64)
    b = np.array([e[1] for e in edges], dtype=np.int64)
    adjacency = coo_matrix((np.ones(len(edges)), (a, b)), shape=(n, n))
    count, _labels = connected_components(adjacency, directed=False)
    assert model._connected(n, a, b) == (count == 1)


def test_the_connection_test_needs_few_rounds_on_a_star():
    """A star whose centre carries the largest label: hooking each root onto any smaller
    root (not the smallest) would take one round per leaf; the smallest takes two."""
    import time

    import numpy as np

    n = 50_000
    start = time.perf_counter()
    assert model._connected(n, np.full(n - 1, n - 1), np.arange(n - 1))
    assert not model._connected(n, np.full(n - 2, n - 1), np.arange(n - 2))
    assert time.perf_counter() - start < 2.0  # about 0.01 s; a round per leaf, many seconds


def test_a_long_chain_takes_the_quick_check():
    """A chain of 2000 discs in file order and in shuffled order: each disc turns at the first
    one's speed (no gear meshes), found without the full check."""
    import random

    discs = tuple(Disc(f"d{i}", "", 1.0) for i in range(2000))
    links = [Link(f"s{i}", "shaft", f"d{i}", f"d{i + 1}", 1e6) for i in range(1999)]
    random.Random(15).shuffle(links)
    speed = model._tree_speeds(discs, tuple(links))
    assert speed == {d.id: 1.0 for d in discs}


# ---------------------------------------------------------------- nesting depth
def reference_depth(obj) -> int:
    """The depth by its definition, recursively (common practice, no source)."""
    if isinstance(obj, dict):
        obj = list(obj.values())
    if not isinstance(obj, list):
        return 0
    return 1 + max((reference_depth(v) for v in obj), default=0)


json_values = st.recursive(st.one_of(st.none(), st.integers(), st.text(max_size=3)),
                           lambda inner: st.one_of(st.lists(inner, max_size=3),
                                                   st.dictionaries(st.text(max_size=2), inner, max_size=3)),
                           max_leaves=20)


@settings(max_examples=200, deadline=None)
@given(json_values)
def test_nesting_depth_is_the_recursive_depth(doc):
    assert project._nesting_depth(doc) == reference_depth(doc)
    assert project._nesting_depth(json.loads(json.dumps(doc))) == reference_depth(doc)
