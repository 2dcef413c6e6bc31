"""`solve --json` writer (issue 15, speed): per-element values formatted with numpy into
fixed-width fields (app/commands/jsonarrays.py).

The reference for every number is Python's own decimal conversion: ``f"{v:.11e}"`` and
``float(f"{v:.12g}")`` (correctly rounded, round-half-even on the exact binary value;
the Python language reference, "Format Specification Mini-Language"), read back by
``json.loads``.  The reference for the whole object is a copy of the writer as it was
before (commit ce31812, the ``%.12g`` template), kept below.
"""
from __future__ import annotations

import io
import json
import math
import operator
import sys
from functools import lru_cache
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from app.commands import jsonarrays
from app.commands.jsonarrays import KeyedFloats, decimal_parts, fixed_width
from app.commands.solve import modes_to_json, write_modes_json
from core.about import CAUTION

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = sorted((ROOT / "sample_projects").glob("*.json"))


def field_texts(values):
    return [row.tobytes().decode("ascii") for row in fixed_width(values)]


def assert_as_python_formats(values):
    """Each field reads back (json.loads) as float(f"{v:.12g}"), its digits and exponent
    are those of f"{v:.11e}", and it is one JSON number in a fixed-width field."""
    values = np.asarray(values, float)
    texts = field_texts(values)
    assert len({len(t) for t in texts}) <= 1 and all(len(t) in (18, 19) for t in texts)
    for v, text in zip(values.tolist(), texts):
        got = json.loads(text)
        if not math.isfinite(v):
            assert got is None and text.strip() == "null", (v, text)
            continue
        assert got == float(f"{v:.12g}"), (v, text)
        if v == 0:  # "0" and "-0", as %.12g writes them
            assert text.strip() == ("-0" if math.copysign(1.0, v) < 0 else "0")
            continue
        assert math.copysign(1.0, got) == math.copysign(1.0, v), (v, text)
        mantissa, exponent = text.strip().split("e")
        want_mantissa, want_exponent = f"{v:.11e}".split("e")
        assert (mantissa, int(exponent)) == (want_mantissa, int(want_exponent)), (v, text)


# ------------------------------------------------------------------ numbers
finite = st.floats(allow_nan=False, allow_infinity=False)
# any decade, from the subnormals to the largest double
decades = st.builds(lambda m, k: float(f"{m!r}e{k}"), st.floats(1.0, 9.999999999999999), st.integers(-324, 308)
                    ).filter(math.isfinite)
# 13 digits ending in 5: halfway (up to the binary error) between two 12-digit decimals,
# where the floating-point rounding is unsure and Python formats the value
near_ties = st.builds(lambda n, k: float(f"{n}5e{k}"), st.integers(10**11, 10**12 - 1), st.integers(-335, 295)
                      ).filter(lambda v: math.isfinite(v) and v != 0)
# 12 nines and more: the rounding carries into a new decade (9.999999999995 -> 1.0e+01)
carries = st.builds(lambda d, k: float(f"9.99999999999{d}e{k}"), st.integers(0, 99_999), st.integers(-320, 300)
                    ).filter(math.isfinite)
specials = st.sampled_from([0.0, -0.0, math.nan, math.inf, -math.inf, 5e-324, -5e-324,
                            2.2250738585072014e-308, 1.7976931348623157e308])
any_value = st.one_of(finite, decades, near_ties, carries, specials)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.one_of(decades, finite), min_size=1, max_size=40), st.booleans())
def test_random_values_over_every_decade(values, negate):
    values = [-v for v in values] if negate else values
    assert_as_python_formats(values)


@settings(max_examples=300, deadline=None)
@given(st.lists(any_value, min_size=1, max_size=40))
def test_near_ties_carries_and_special_values(values):
    assert_as_python_formats(values)


def test_edge_values():
    powers = [float(f"1e{k}") for k in range(-323, 309)]
    neighbours = [np.nextafter(p, d) for p in powers for d in (0.0, math.inf)]
    twos = [math.ldexp(1.0, k) for k in range(-1074, 1024)]  # every binary exponent, subnormals too
    edges = [9.99999999999995, 9.999999999995e-5, 0.99999999999951, 999999999999.5, 999999999998.5,
             1234567890125.0, 1234567890135.0, 0.5, 1 / 3, 2 / 3, 0.1, 1e-310, 1e-100, 9.99999999999e99,
             9.999999999995e99, 9.999999999995e-100, 1e100, -1e-100]
    values = powers + neighbours + twos + edges + [0.0, -0.0, math.nan, math.inf, -math.inf]
    assert_as_python_formats(values)
    assert_as_python_formats(edges)  # on its own: the fields of an array are as wide as it needs
    # exact ties round half to even, as Python does
    assert [t.strip() for t in field_texts([1234567890125.0, 1234567890135.0, 999999999999.5])] == [
        "1.23456789012e+12", "1.23456789014e+12", "1.00000000000e+12"]


def test_two_digit_exponents_unless_an_array_needs_three():
    assert field_texts([1.5, -2e-5]) == [" 1.50000000000e+00", "-2.00000000000e-05"]
    assert field_texts([1.5, 1e-100]) == [" 1.50000000000e+000", " 1.00000000000e-100"]
    assert field_texts([1e-100 * 0, math.nan, 1.0]) == ["                 0", "              null",
                                                         " 1.00000000000e+00"]


def test_decimal_parts_against_python():
    rng = np.random.default_rng(15)
    v = rng.standard_normal(20_000) * 10.0 ** rng.integers(-300, 300, 20_000)
    mantissa, exponent, special = decimal_parts(v)
    assert not special.any()
    want = [f"{x:.11e}".split("e") for x in np.abs(v).tolist()]
    assert mantissa.tolist() == [int(m.replace(".", "")) for m, _ in want]
    assert exponent.tolist() == [int(e) for _, e in want]


# ------------------------------------------------------------------ objects
@pytest.mark.parametrize("block", [1, 3, 4096])
def test_keyed_object_reads_back_with_its_keys_in_order(monkeypatch, block):
    monkeypatch.setattr(jsonarrays, "_BLOCK", block)
    ids = ["motor", "a", 'quote"d', "back\\slash", "welle_ü", "", "x" * 70, "d1", "d10", "d100"]
    values = [1.0, -0.0, math.nan, 2.5e-300, -math.inf, 123456.7890125, 0.0, 1e5, -7.0, 3.0]
    text = bytes(KeyedFloats(ids).encode(values)).decode("ascii")
    assert "\n" not in text and text.startswith('{"motor":') and text.endswith("}")
    got = json.loads(text)
    assert list(got) == ids
    for v, g in zip(values, got.values()):
        assert g == (float(f"{v:.12g}") if math.isfinite(v) else None)


def test_keyed_object_reuses_its_layout_call_after_call():
    k = KeyedFloats([f"d{i}" for i in range(5000)])
    rng = np.random.default_rng(2)
    for scale in (1.0, 1e-200, 1.0):  # two-digit, three-digit, then two-digit exponents again
        v = rng.standard_normal(5000) * scale
        got = json.loads(bytes(k.encode(v)))
        assert list(got.values()) == [float(f"{x:.12g}") for x in v.tolist()]
    assert bytes(KeyedFloats([]).encode([])) == b"{}"
    for wrong in (np.zeros(3), np.zeros(1)):
        with pytest.raises(ValueError):
            k.encode(wrong)


# ------------------------------------------------------------------ the whole object
# The writer as it was at commit ce31812 (a %.12g template per id list): the reference.
class _OldKeyed:
    def __init__(self, ids):
        self.prefixes = [json.dumps(i) + ": " for i in ids]
        self.template = "{" + ", ".join(p + "%.12g" for p in self.prefixes) + "}"

    def __call__(self, values) -> str:
        vals = np.asarray(values, float)
        if np.isfinite(vals).all():
            return self.template % tuple(vals.tolist())
        texts = [f"{v:.12g}" if math.isfinite(v) else "null" for v in vals.tolist()]
        return "{" + ", ".join(map(operator.add, self.prefixes, texts)) + "}"


def _old_mode_texts(study):
    modes = study.modes
    above = study.above_screening_limit
    discs, links = _OldKeyed(modes.disc_ids), _OldKeyed(modes.link_ids)
    design = study.design
    sens = design.sensitivities if design is not None else None
    if sens is not None:
        s_links = links if tuple(sens.link_ids) == tuple(modes.link_ids) else _OldKeyed(sens.link_ids)
        s_discs = discs if tuple(sens.disc_ids) == tuple(modes.disc_ids) else _OldKeyed(sens.disc_ids)
        s_shafts = _OldKeyed(sens.shaft_ids) if sens.shaft_ids else None
    bands = design.bands if design is not None else None
    for i in range(len(modes)):
        number = int(modes.number[i])
        head = {"number": number, "frequency_hz": float(modes.frequency_hz[i]),
                "frequency_cpm": float(modes.frequency_hz[i] * 60.0), "rigid_body": bool(modes.rigid_body[i]),
                "above_screening_limit": bool(above[i]), "dominant_link": modes.dominant_link(i)}
        if bands is not None:
            head["frequency_band_hz"] = [float(bands[i, 0]), float(bands[i, 1])]
        text = (json.dumps(head)[:-1] + ', "shape": ' + discs(modes.shape[i])
                + ', "link_torque_nm": ' + links(modes.link_torque[i])
                + ', "kinetic_energy_share": ' + discs(modes.kinetic_share[i])
                + ', "strain_energy_share": ' + links(modes.strain_share[i]))
        if sens is not None and not modes.rigid_body[i]:
            r = sens.row(number)
            text += (', "sensitivity": {"stiffness": ' + s_links(sens.stiffness[r])
                     + ', "inertia": ' + s_discs(sens.inertia[r])
                     + (', "diameter": ' + s_shafts(sens.diameter[r]) if s_shafts else "") + "}")
        yield text + "}"


def old_modes_json(study) -> str:
    modes = study.modes
    head = {"title": modes.train.title, "requested": modes.requested,
            "screening_limit_hz": study.screening_limit_hz,
            "solve_time_s": modes.solve_time_s, "notes": list(study.notes), "caution": CAUTION}
    if study.damped is not None:
        head["damped"] = study.damped.to_json()
        head["notes"] += [n for n in study.damped.notes if n not in head["notes"]]
    if study.damper is not None:
        head["damper"] = {"free_hz": [float(f) for f in study.damper.free_hz],
                          "locked_hz": [float(f) for f in study.damper.locked_hz],
                          "statement": study.damper.statement}
    text = json.dumps(head, allow_nan=False)[:-1] + ', "modes": ['
    return text + ",\n".join("\n" * (k == 0) + m for k, m in enumerate(_old_mode_texts(study))) + "\n]}\n"


@lru_cache(maxsize=None)
def sample_study(path):
    from app.commands.common import load_train
    from core.study import StudyOptions, run_study
    return run_study(load_train(str(path)), StudyOptions(parts=frozenset({"screening", "sensitivities", "damped"})))


def assert_same(new, old, where="$"):
    """Same keys in the same order, same structure, same values (numbers: the same
    float, within 1e-11 relative at the very least; 1 and 1.0 are the same number)."""
    if isinstance(old, dict):
        assert isinstance(new, dict) and list(new) == list(old), where
        for key in old:
            assert_same(new[key], old[key], f"{where}.{key}")
    elif isinstance(old, list):
        assert isinstance(new, list) and len(new) == len(old), where
        for k, (a, b) in enumerate(zip(new, old)):
            assert_same(a, b, f"{where}[{k}]")
    elif isinstance(old, bool) or old is None or isinstance(old, str):
        assert new is old or new == old and type(new) is type(old), (where, new, old)
    else:
        assert isinstance(new, (int, float)) and not isinstance(new, bool), where
        assert new == old and math.isclose(new, old, rel_tol=1e-11, abs_tol=0.0), (where, new, old)


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_sample_projects_read_back_as_before(path):
    study = sample_study(path)
    assert_same(modes_to_json(study), json.loads(old_modes_json(study)))


def test_writes_bytes_after_the_text_before_it_and_mode_by_mode():
    study = sample_study(ROOT / "sample_projects" / "engine_genset.json")

    class Recorder(io.BytesIO):
        sizes: list = []

        def write(self, b):
            self.sizes.append(len(b))
            return super().write(b)

    raw = Recorder()
    stream = io.TextIOWrapper(raw, encoding="utf-8", write_through=False)
    stream.write("before\n")
    write_modes_json(study, stream)
    stream.write("after\n")
    stream.flush()
    text = raw.getvalue().decode("ascii")
    assert text.startswith("before\n{") and text.endswith("]}\nafter\n")
    assert_same(json.loads(text[len("before\n"):-len("after\n")]), json.loads(old_modes_json(study)))
    # written in pieces, none larger than one mode (never the whole output at once)
    assert len(Recorder.sizes) > len(study.modes) and max(Recorder.sizes) < len(text) / len(study.modes)


def test_stream_without_ascii_compatible_bytes_gets_text():
    study = sample_study(ROOT / "sample_projects" / "pump_set.json")
    raw = io.BytesIO()
    stream = io.TextIOWrapper(raw, encoding="utf-16")
    write_modes_json(study, stream)
    stream.flush()
    assert_same(json.loads(raw.getvalue().decode("utf-16")), json.loads(old_modes_json(study)))


def test_command_line_writes_the_same_object(tmp_path):
    import subprocess
    path = ROOT / "sample_projects" / "twin_pump_gearbox.json"
    out = subprocess.run([sys.executable, "-m", "app", "solve", str(path), "--json"], capture_output=True,
                         cwd=ROOT, check=True).stdout
    got, want = json.loads(out), json.loads(old_modes_json(sample_study(path)))
    got["solve_time_s"] = want["solve_time_s"]  # another process, another timing
    assert_same(got, want)
