"""Interference screening against hand calculations (issue 3).

Reference formulas:
* two discs on a massless shaft: omega_n^2 = k (J1 + J2) / (J1 J2)
  (any vibration text, e.g. Thomson, Theory of Vibration with Applications — from memory);
* an order line f_e = n N / 60 [Hz, N in rpm] crosses f_n at N* = 60 f_n / n;
  a source behind a gear mesh of speed ratio r runs at r N, so N* = 60 f_n / (n r);
* separation relative to the excitation frequency, |f_n - f_e| / f_e, with a 10 %
  default margin as in API 617 and API 684 (from memory).
"""
from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import given, settings, strategies as st

from app.cli import main
from core.project import build_train
from core.screening import DEFAULT_MARGIN, pair_separation, screen, excitation_lines

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_projects"
J1, J2, K = 12.0, 3.0, 6.0e4  # f_n = 25.2 Hz, 1510 cpm


def two_disc_fn() -> float:
    return math.sqrt(K * (J1 + J2) / (J1 * J2)) / (2 * math.pi)  # Hz


def doc(excitations, nmin="900 rpm", nmax="1800 rpm", margin=None, geared=False):
    discs = [{"id": "motor", "inertia": J1}, {"id": "load", "inertia": J2}]
    links = [{"id": "shaft", "kind": "shaft", "from": "motor", "to": "load", "stiffness": K}]
    if geared:  # a light gear pair on the load side, rigid mesh, ratio 2.5
        discs += [{"id": "pinion", "inertia": 1e-3}, {"id": "fan", "inertia": 0.5}]
        links += [{"id": "mesh", "kind": "gear_mesh", "from": "load", "to": "pinion", "speed_ratio": 2.5},
                  {"id": "fan_shaft", "kind": "shaft", "from": "pinion", "to": "fan", "stiffness": 5e6}]
    d = {"format": "twistwise-project", "version": 1, "title": "Two discs",
         "discs": discs, "links": links, "reference": "motor",
         "operating_speed": {"min": nmin, "max": nmax}, "excitations": excitations}
    if margin is not None:
        d["margin_percent"] = margin
    return d


def test_default_margin_is_ten_percent():
    # API 617 / API 684 separation margin of 10 % (from memory)
    t = build_train(doc([{"name": "1x", "at": "motor", "orders": [1]}]))
    assert t.operating.margin == pytest.approx(0.10)
    assert DEFAULT_MARGIN == pytest.approx(0.10)


def test_order_line_crossing_inside_range_has_zero_separation():
    fn = two_disc_fn()  # order 1 crosses at 1510 rpm, inside 900-1800 rpm
    s = screen(build_train(doc([{"name": "1x", "at": "motor", "orders": [1]}])))
    c = s.coincidences[0]
    assert c.frequency_hz == pytest.approx(fn, rel=1e-12)
    assert c.crossing_speed * 60 / (2 * math.pi) == pytest.approx(60 * fn, rel=1e-12)  # N* = 60 f_n / n
    assert c.separation == 0.0 and c.status == "fail" and s.verdict == "fail"


def test_order_line_outside_range_margin_at_nearest_end():
    fn = two_disc_fn()
    s = screen(build_train(doc([{"name": "2x", "at": "motor", "orders": [2]}],
                               nmin="600 rpm", nmax="700 rpm")))
    c = s.coincidences[0] if s.coincidences else [p for p in s.all_pairs][0]
    fe_max = 2 * 700 / 60.0  # Hz at the top of the range
    assert c.separation == pytest.approx(abs(fn - fe_max) / fe_max, rel=1e-12)
    assert c.crossing_speed * 60 / (2 * math.pi) == pytest.approx(60 * fn / 2, rel=1e-12)


def test_geared_source_scales_with_speed_ratio():
    s = screen(build_train(doc([{"name": "fan blades", "at": "fan", "orders": [3]}], geared=True)))
    modes = s.modes
    for c in s.all_pairs:
        fn = modes.frequency_hz[list(modes.number).index(c.mode)]
        assert c.crossing_speed * 60 / (2 * math.pi) == pytest.approx(60 * fn / (3 * 2.5), rel=1e-12)


def test_fixed_frequency_source():
    fn = two_disc_fn()
    fe = 31.0
    s = screen(build_train(doc([{"name": "pulsation", "frequency": f"{fe} Hz"}])))
    c = s.all_pairs[0]
    assert c.order is None and c.crossing_speed is None
    assert c.separation == pytest.approx(abs(fn - fe) / fe, rel=1e-12)  # |f_n - f_e| / f_e
    assert c.passed == (abs(fn - fe) / fe >= 0.10)


def test_interference_band_edges():
    # sep < m  <=>  f_n / (a (1 + m)) < N < f_n / (a (1 - m))  (algebra of the definition)
    from core.screening import ExcitationLine
    line = ExcitationLine("x", 1.0, 1.0 / (2 * math.pi), None, "motor")
    lo, hi = pair_separation(50.0, line, 1.0, 2.0, 0.1)[3]
    for N in (lo * 1.0001, hi * 0.9999):
        assert abs(50.0 - line.frequency(N)) / line.frequency(N) < 0.1
    for N in (lo * 0.9999, hi * 1.0001):
        assert abs(50.0 - line.frequency(N)) / line.frequency(N) > 0.1


@settings(max_examples=60, deadline=None)
@given(nmin=st.floats(100, 3000), span=st.floats(0, 2000), margin=st.floats(0, 50),
       order=st.sampled_from([0.5, 1, 1.5, 2, 3, 7]), fixed=st.floats(5, 200),
       k=st.floats(1e4, 1e7))
def test_verdict_fails_exactly_when_a_band_overlaps_the_range(nmin, span, margin, order, fixed, k):
    d = doc([{"name": "orders", "at": "load", "orders": [order]}, {"name": "fixed", "frequency": fixed}],
            nmin=f"{nmin} rpm", nmax=f"{nmin + span} rpm", margin=margin)
    d["links"][0]["stiffness"] = k
    s = screen(build_train(d))

    def overlaps(c):
        if c.band is None:
            return False
        lo, hi = c.band
        return lo < s.speed_max and hi > s.speed_min

    assert (s.verdict == "fail") == any(overlaps(c) for c in s.all_pairs)
    for c in s.all_pairs:
        assert (not c.passed) == overlaps(c) or math.isclose(c.separation, s.margin, rel_tol=1e-9)


def test_modes_considered_reach_above_highest_excitation():
    s = screen(build_train(doc([{"name": "1x", "at": "motor", "orders": [1, 2]}])))
    top = 2 * 1800 / 60.0
    assert s.cap_hz > top * 1.2  # cap above the highest reachable excitation frequency, with headroom


# ------------------------------------------------------------------ command line
def run(args, capsys):
    code = main(args)
    out, err = capsys.readouterr()
    return code, out, err


def write(tmp_path, d, name="train.json"):
    p = tmp_path / name
    p.write_text(json.dumps(d))
    return str(p)


def test_check_json_contract(tmp_path, capsys):
    path = write(tmp_path, doc([{"name": "Motor 1x and 2x", "at": "motor", "orders": [1, 2]},
                                {"name": "Line", "frequency": "100 Hz"}]))
    code, out, _ = run(["check", path, "--json"], capsys)
    data = json.loads(out)
    assert code == 1 and data["verdict"] == "fail" and data["margin_percent"] == 10
    row = data["coincidences"][0]
    assert set(row) >= {"mode", "frequency_hz", "source", "order", "crossing_speed_rpm", "margin_percent", "status"}
    assert row["mode"] == 1 and row["order"] == 1 and row["status"] == "fail"
    assert row["crossing_speed_rpm"] == pytest.approx(60 * two_disc_fn(), rel=1e-9)
    margins = [r["margin_percent"] for r in data["coincidences"]]
    assert margins == sorted(margins)
    assert all(m < 20 for m in margins)  # every pair under twice the margin is listed
    fixed = [r for r in data["coincidences"] if r["source"] == "Line"]
    assert all(r["order"] is None and r["crossing_speed_rpm"] is None for r in fixed)
    assert data["modes_cap_hz"] > 0


def test_check_margin_option_and_pass_exit(tmp_path, capsys):
    path = write(tmp_path, doc([{"name": "2x", "at": "motor", "orders": [2]}], nmin="300 rpm", nmax="600 rpm"))
    code, out, _ = run(["check", path], capsys)
    assert code == 0 and "PASS" in out and "Screening only" in out
    code, out, _ = run(["check", path, "--margin", "50", "--json"], capsys)
    assert json.loads(out)["margin_percent"] == 50


@pytest.mark.parametrize("change, element, field", [
    (lambda d: d["excitations"][0].update(at="nowhere"), "excitation", "at"),
    (lambda d: d["operating_speed"].update(min="2000 rpm"), "operating data", "operating_speed.min"),
    (lambda d: d["operating_speed"].update(min="-100 rpm"), "operating data", "operating_speed"),
    (lambda d: d.update(margin_percent=60), "operating data", "margin_percent"),
    (lambda d: d.update(margin_percent=-1), "operating data", "margin_percent"),
    (lambda d: d["excitations"][0].update(orders=[0]), "excitation", "order"),
    (lambda d: d["excitations"][0].update(orders=[-2]), "excitation", "order"),
])
def test_check_bad_input_exit_2(tmp_path, capsys, change, element, field):
    d = doc([{"name": "Motor orders", "at": "motor", "orders": [1, 2]}])
    change(d)
    code, out, err = run(["check", write(tmp_path, d)], capsys)
    assert code == 2 and out == ""
    line = err.strip()
    assert "\n" not in line and "Traceback" not in line
    assert "train.json" in line and element in line and field in line


def test_check_margin_option_out_of_range(tmp_path, capsys):
    path = write(tmp_path, doc([{"name": "1x", "at": "motor", "orders": [1]}]))
    code, _, err = run(["check", path, "--margin", "75"], capsys)
    assert code == 2 and "--margin" in err


def test_samples_give_documented_verdicts():
    # the README's table of samples: pump set passes, the others fail
    expected = {"pump_set": "pass", "compressor_train": "fail", "engine_genset": "fail",
                "propulsion_line": "fail", "twin_pump_gearbox": "fail"}
    for name, verdict in expected.items():
        proc = subprocess.run([sys.executable, "-m", "app", "check", str(SAMPLES / f"{name}.json"), "--json"],
                              capture_output=True, text=True, cwd=ROOT)
        assert proc.returncode == (0 if verdict == "pass" else 1), (name, proc.stderr)
        assert json.loads(proc.stdout)["verdict"] == verdict


def test_every_sample_has_realistic_excitations():
    from core.project import load_train
    for path in SAMPLES.glob("*.json"):
        t = load_train(path)
        assert t.operating is not None and excitation_lines(t), path.name
