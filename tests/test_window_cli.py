"""`twistwise window`, and the design keys of `solve --json` and `check --json` (issue 11 item 5)."""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from app.cli import main
from core.about import CAUTION

ROOT = Path(__file__).resolve().parent.parent


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def two_discs(path: Path, tolerance=None, speed="3000 rpm") -> Path:
    link = {"id": "c", "kind": "coupling", "from": "a", "to": "b", "stiffness": "60 kN*m/rad"}
    if tolerance is not None:
        link["stiffness_tolerance"] = tolerance
    doc = {"format": "twistwise-project", "version": 1, "title": "two discs",
           "discs": [{"id": "a", "inertia": "1 kg*m^2"}, {"id": "b", "inertia": "1 kg*m^2"}],
           "links": [link], "reference": "a", "operating_speed": {"min": speed, "max": speed},
           "margin_percent": 10, "excitations": [{"name": "once per rev", "at": "a", "orders": [1]}]}
    path.write_text(json.dumps(doc))
    return path


def k_of(f_hz: float) -> float:
    # two discs on one spring: f = (1/2 pi) sqrt(k (J1 + J2) / (J1 J2)), so with J1 = J2 = 1 kg*m^2
    # k = (2 pi f)^2 / 2 (any vibration text, e.g. Thomson, two-degree-of-freedom systems)
    return (2 * math.pi * f_hz) ** 2 / 2


def test_window_json_contract_against_the_closed_form(capsys, tmp_path):
    path = two_discs(tmp_path / "p.json")
    code, out, err = run(capsys, "window", str(path), "--link", "c", "--range", "1 kN*m/rad:1 MN*m/rad", "--json")
    assert code == 0, err
    data = json.loads(out)
    assert {"element", "quantity", "unit", "current", "current_clears", "range", "admissible"} <= set(data)
    assert data["element"] == "c" and data["quantity"] == "stiffness" and data["unit"] == "N*m/rad"
    assert data["range"] == [1000.0, 1e6] and data["caution"] == CAUTION
    # the 50 Hz once-per-rev line forbids 45 < f_n < 55 Hz
    lo, hi = k_of(50 * 0.9), k_of(50 * 1.1)
    assert len(data["admissible"]) == 2
    (a0, b0), (a1, b1) = data["admissible"]
    assert a0 == 1000.0 and b1 == 1e6  # intervals reaching the range's ends end there
    assert b0 == pytest.approx(lo, rel=1e-8) and a1 == pytest.approx(hi, rel=1e-8)
    # 60 kN*m/rad: f = sqrt(120e3)/(2 pi) = 55.1 Hz, 0.2 % outside the margin
    assert data["current_clears"] is True


def test_window_with_the_elements_own_tolerance(capsys, tmp_path):
    path = two_discs(tmp_path / "p.json", tolerance="20 %")
    code, out, err = run(capsys, "window", str(path), "--link", "c", "--json")
    assert code == 0, err
    data = json.loads(out)
    # the band [k 0.8, k 1.2] must clear: k 1.2 < k(45 Hz) or k 0.8 > k(55 Hz)
    (a0, b0), (a1, b1) = data["admissible"]
    assert b0 == pytest.approx(k_of(45) / 1.2, rel=1e-8)
    assert a1 == pytest.approx(k_of(55) / 0.8, rel=1e-8)
    assert data["current_clears"] is False


def test_window_exit_one_when_nothing_clears_and_bad_input_names_the_field(capsys, tmp_path):
    path = two_discs(tmp_path / "p.json")
    code, out, err = run(capsys, "window", str(path), "--link", "c", "--range", "50 kN*m/rad:55 kN*m/rad")
    assert code == 1 and "No value in the range clears" in out and CAUTION in out
    code, out, err = run(capsys, "window", str(path), "--disc", "zz")
    assert code == 2 and "disc 'zz'" in err
    code, out, err = run(capsys, "window", str(path), "--link", "c", "--range", "2 MN*m/rad:1 MN*m/rad")
    assert code == 2 and "--range" in err


def test_solve_and_check_json_gain_the_design_keys(capsys, tmp_path):
    path = two_discs(tmp_path / "p.json", tolerance="20 %")
    code, out, err = run(capsys, "solve", str(path), "--json")
    data = json.loads(out)
    (elastic,) = [m for m in data["modes"] if not m["rigid_body"]]
    # a single spring holds all the strain energy: d ln f / d ln k = 1/2 exactly (Rayleigh quotient)
    assert elastic["sensitivity"]["stiffness"]["c"] == pytest.approx(0.5, abs=1e-12)
    assert elastic["sensitivity"]["inertia"]["a"] == pytest.approx(-0.25, abs=1e-10)
    f = elastic["frequency_hz"]
    lo, hi = elastic["frequency_band_hz"]  # f sqrt(1 -+ t) for a stiffness tolerance t
    assert lo == pytest.approx(f * math.sqrt(0.8), rel=1e-10) and hi == pytest.approx(f * math.sqrt(1.2), rel=1e-10)
    code, out, err = run(capsys, "check", str(path), "--json")
    data = json.loads(out)
    (c,) = [c for c in data["coincidences"] if c["order"] == 1]
    assert c["participation"] == pytest.approx(1.0)  # two equal discs: the same twist at both
    assert c["margin_percent_band"] == pytest.approx(100 * (50 - hi) / 50 if hi < 50 else 0.0, abs=1e-9)
    assert data["verdict"] == "fail" and code == 1  # the band reaches into the margin


def test_without_tolerances_the_keys_stay_out(capsys, tmp_path):
    path = two_discs(tmp_path / "p.json")
    data = json.loads(run(capsys, "solve", str(path), "--json")[1])
    assert all("frequency_band_hz" not in m for m in data["modes"])
    data = json.loads(run(capsys, "check", str(path), "--json")[1])
    assert all("margin_percent_band" not in c for c in data["coincidences"])


def test_solve_json_carries_the_damped_modes(capsys, tmp_path):
    # two equal discs J on a spring k with a viscous dashpot c across it: the relative motion is
    # one degree of freedom with J_eff = J/2, w_n = sqrt(k / J_eff), zeta = c / (2 sqrt(k J_eff)),
    # w_d = w_n sqrt(1 - zeta^2) (any vibration text, e.g. Thomson, damped free vibration)
    J, k, c = 1.0, 60e3, 50.0
    doc = {"format": "twistwise-project", "version": 1, "title": "damped pair",
           "discs": [{"id": "a", "inertia": J}, {"id": "b", "inertia": J}],
           "links": [{"id": "s", "kind": "coupling", "from": "a", "to": "b", "stiffness": k, "damping": c}]}
    path = tmp_path / "d.json"
    path.write_text(json.dumps(doc))
    code, out, err = run(capsys, "solve", str(path), "--json")
    assert code == 0, err
    (m,) = json.loads(out)["damped"]
    j_eff = J / 2
    zeta = c / (2 * math.sqrt(k * j_eff))
    f_d = math.sqrt(k / j_eff) * math.sqrt(1 - zeta ** 2) / (2 * math.pi)
    assert m["damping_ratio"] == pytest.approx(zeta, rel=1e-9)
    assert m["frequency_hz"] == pytest.approx(f_d, rel=1e-9)
    doc["links"][0].pop("damping")
    path.write_text(json.dumps(doc))
    assert "damped" not in json.loads(run(capsys, "solve", str(path), "--json")[1])
