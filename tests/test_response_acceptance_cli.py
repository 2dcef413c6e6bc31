"""`twistwise response --json` acceptance contract (issue 12 item 8)."""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from app.cli import main

ROOT = Path(__file__).resolve().parent.parent
PROPULSION = ROOT / "sample_projects" / "propulsion_line.json"
CHECK_KEYS = {"criterion", "load_case", "speed_band", "value", "limit", "utilisation", "at_rpm", "passed"}


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_mean_torque_checks_and_barred_ranges_in_the_json(capsys):
    code, out, err = run(capsys, "response", str(PROPULSION), "--json")
    assert code == 0, err
    data = json.loads(out)
    names = [lc["name"] for lc in json.loads(PROPULSION.read_text())["load_cases"]]
    n = len(data["speed_rpm"])
    for lid, link in data["links"].items():
        assert set(link["mean_torque_nm"]) == set(names)
        for values in link["mean_torque_nm"].values():
            assert len(values) == n
    assert data["checks"] and all(CHECK_KEYS <= set(c) for c in data["checks"])
    assert {c["speed_band"] for c in data["checks"]} <= {"operating", "transient", "overspeed"}
    assert {c["load_case"] for c in data["checks"]} <= set(names) | {None}
    assert "barred_speed_ranges" in data
    # peaks are reported with their band; the operating peaks stay inside the range (issue 12 item 1)
    op = data["operating_speed_rpm"]
    for p in data["peaks"]:
        assert p["speed_band"] == "operating"
        assert op["min"] - 1e-6 <= p["speed_at_peak_torque_rpm"] <= op["max"] + 1e-6


def test_a_failing_check_exits_one(capsys, tmp_path):
    doc = json.loads(PROPULSION.read_text())
    for link in doc["links"]:
        if link["id"] == "flex_coupling":
            link["nominal_torque"] = "1 kN*m"  # far below what the propeller law transmits
    path = tmp_path / "weak_coupling.json"
    path.write_text(json.dumps(doc))
    code, out, err = run(capsys, "response", str(path), "--json")
    assert code == 1, err
    data = json.loads(out)
    assert data["verdict"] == "fail" and data["acceptance_passed"] is False
    failed = [c for c in data["checks"] if not c["passed"]]
    assert failed and failed[0]["criterion"] == "coupling_nominal_torque"
    assert failed[0]["utilisation"] > 1
