"""`twistwise response` contract (issue 6 item 3): JSON keys, exit codes, bad input."""
import json
import math
from pathlib import Path

import pytest

from app.cli import CAUTION, main

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_projects"


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def two_disc(tmp_path, permissible=None, amplitudes=True):
    link = {"id": "coupling", "kind": "coupling", "from": "motor", "to": "fan", "stiffness": "20 kN*m/rad",
            "loss_factor": 0.1}
    if permissible:
        link["permissible_torque"] = permissible
    orders = [{"order": 1, "amplitude": "200 N*m"}, {"order": 2, "amplitude": "50 N*m"}] if amplitudes else [1, 2]
    doc = {"format": "twistwise-project", "version": 1, "title": "Motor and fan",
           "discs": [{"id": "motor", "inertia": "1.5 kg*m^2"},
                     {"id": "fan", "inertia": "3 kg*m^2", "damping": "5 N*m*s/rad"}],
           "links": [link], "reference": "motor",
           "operating_speed": {"min": "600 rpm", "max": "1500 rpm"},
           "excitations": [{"name": "Fan pulsation", "at": "fan", "orders": orders}]}
    p = tmp_path / "train.json"
    p.write_text(json.dumps(doc), encoding="utf-8")
    return p


@pytest.mark.parametrize("name", ["engine_genset.json", "propulsion_line.json"])
def test_json_contract_on_samples(capsys, name):
    code, out, err = run(capsys, "response", str(SAMPLES / name), "--json")
    assert code in (0, 1), err
    data = json.loads(out)
    n = len(data["speed_rpm"])
    assert n >= 2
    assert all(b > a for a, b in zip(data["speed_rpm"], data["speed_rpm"][1:]))
    # the peak is the operating range's (issue 12: peaks per speed band; the permissible
    # values judge continuous running), no longer the largest over every computed speed
    lo, hi = data["operating_speed_rpm"]["min"], data["operating_speed_rpm"]["max"]
    inside = [j for j, v in enumerate(data["speed_rpm"]) if lo * (1 - 1e-12) <= v <= hi * (1 + 1e-12)]
    assert inside
    for lid, link in data["links"].items():
        assert len(link["torque_amplitude_nm"]) == n
        assert link["stress_amplitude_pa"] is None or len(link["stress_amplitude_pa"]) == n
        assert link["peak"]["peak_torque_nm"] == pytest.approx(
            max(link["torque_amplitude_nm"][j] for j in inside))
        assert lo * (1 - 1e-9) <= link["peak"]["speed_at_peak_torque_rpm"] <= hi * (1 + 1e-9)
    for disc in data["discs"].values():
        assert len(disc["angle_amplitude_rad"]) == n
    assert isinstance(data["exceedances"], list)
    assert (code == 1) == bool(data["exceedances"])
    assert {p["link"] for p in data["peaks"]} == set(data["links"])
    assert data["caution"] == CAUTION


def test_shafts_with_geometry_carry_stress(capsys):
    code, out, _ = run(capsys, "response", str(SAMPLES / "propulsion_line.json"), "--json")
    links = json.loads(out)["links"]
    assert links["intermediate_shaft"]["stress_amplitude_pa"] is not None
    assert links["flex_coupling"]["stress_amplitude_pa"] is None
    assert links["engine_crank"]["stress_amplitude_pa"] is None  # given by stiffness only


def test_speeds_option_gives_the_grid(capsys, tmp_path):
    code, out, _ = run(capsys, "response", str(two_disc(tmp_path)), "--speeds", "500:1500:11", "--json")
    data = json.loads(out)
    assert data["speed_rpm"] == pytest.approx([500 + 100 * i for i in range(11)])
    assert data["verdict"] == "no permissible values given" and code == 0


def test_exceedance_gives_exit_1_and_is_listed(capsys, tmp_path):
    path = two_disc(tmp_path, permissible="100 N*m")
    code, out, _ = run(capsys, "response", str(path), "--json")
    data = json.loads(out)
    assert code == 1
    # one exceedance per speed band where the limit is passed (issue 12): here the
    # operating range and the start-up band below it, judged against the same value
    assert data["exceedances"]
    for e in data["exceedances"]:
        assert e["link"] == "coupling" and e["quantity"] == "torque" and e["peak"] > 100.0
        assert e["permissible"] == pytest.approx(100.0)
    code, out, _ = run(capsys, "response", str(path))
    assert code == 1 and "FAIL" in out and "coupling" in out and CAUTION in out


def test_text_table_passes_with_a_generous_limit(capsys, tmp_path):
    code, out, _ = run(capsys, "response", str(two_disc(tmp_path, permissible="1 MN*m")))
    assert code == 0
    assert "PASS" in out and CAUTION in out
    assert "coupling" in out and "kN*m" in out


@pytest.mark.parametrize("speeds", ["abc", "100:200", "100:200:1", "300:200:10", "-100:200:10",
                                    "100:200:x", "100:nan:10", "1:2:3:4"])
def test_bad_speeds_exit_2_naming_the_option(capsys, tmp_path, speeds):
    code, out, err = run(capsys, "response", str(two_disc(tmp_path)), f"--speeds={speeds}")
    assert code == 2
    assert "--speeds" in err and "Traceback" not in err
    assert out == ""


def test_no_amplitudes_exit_2(capsys, tmp_path):
    code, _, err = run(capsys, "response", str(two_disc(tmp_path, amplitudes=False)))
    assert code == 2 and "amplitude" in err


def test_bad_file_exit_2(capsys, tmp_path):
    code, _, err = run(capsys, "response", str(tmp_path / "missing.json"))
    assert code == 2 and "not found" in err
    bad = tmp_path / "bad.json"
    doc = json.loads(two_disc(tmp_path).read_text())
    doc["excitations"][0]["orders"][0]["amplitude"] = "200 kg"
    bad.write_text(json.dumps(doc))
    code, _, err = run(capsys, "response", str(bad))
    assert code == 2 and "amplitude" in err and "Traceback" not in err


def test_json_values_are_finite_or_null(capsys):
    _, out, _ = run(capsys, "response", str(SAMPLES / "engine_genset.json"), "--json")

    def walk(v):
        if isinstance(v, float):
            assert math.isfinite(v)
        elif isinstance(v, dict):
            for x in v.values():
                walk(x)
        elif isinstance(v, list):
            for x in v:
                walk(x)
    walk(json.loads(out))
