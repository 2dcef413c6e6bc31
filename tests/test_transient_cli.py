"""`twistwise transient` (issue 14 item 4): JSON contract, CSV histories, exit codes."""
from __future__ import annotations

import csv
import json
from pathlib import Path

from app.cli import main
from core.about import CAUTION

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = ROOT / "sample_projects" / "sync_motor_compressor.json"


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def small_doc():
    # two free discs and a torque step (the closed-form case of tests/test_transient.py)
    return {"format": "twistwise-project", "version": 1, "title": "step",
            "discs": [{"id": "a", "inertia": "1 kg*m^2"}, {"id": "b", "inertia": "3 kg*m^2"}],
            "links": [{"id": "s", "kind": "shaft", "from": "a", "to": "b", "stiffness": "100 kN*m/rad",
                       "permissible_torque": "10 kN*m"}],
            "transients": [{"name": "Load step", "duration": "0.5 s",
                            "torques": [{"at": "a", "table": [["0 s", "0 N*m"], ["1 ms", "2 kN*m"],
                                                              ["10 s", "2 kN*m"]]}]}]}


def test_json_contract_and_csv(capsys, tmp_path):
    path = tmp_path / "step.json"
    path.write_text(json.dumps(small_doc()))
    code, out, err = run(capsys, "transient", str(path), "--json", "--csv", str(tmp_path))
    assert code == 0, err
    data = json.loads(out)
    assert data["caution"] == CAUTION
    (ev,) = data["events"]
    assert ev["name"] == "Load step" and ev["duration_s"] == 0.5
    link = ev["links"]["s"]
    assert {"peak_torque_nm", "peak_time_s", "damage", "allowed_events"} <= set(link)
    # a step T on free discs swings the shaft torque up to 2 T J2/(J1+J2) (any vibration text,
    # e.g. Thomson, Theory of Vibration with Applications, step response): 2*2000*3/4 = 3000 N*m
    assert abs(link["peak_torque_nm"] - 3000.0) < 0.02 * 3000.0
    rows = list(csv.reader(open(tmp_path / "Load_step.csv", encoding="utf-8")))
    assert rows[0][0].startswith("# ") and CAUTION in rows[0][0] + ",".join(rows[0][1:])
    header = rows[2]
    assert header[0] == "time_s" and "torque_s_nm" in header


def test_exit_one_when_a_peak_exceeds_its_limit(capsys, tmp_path):
    doc = small_doc()
    doc["links"][0]["permissible_torque"] = "2.5 kN*m"  # below the 3 kN*m swing
    path = tmp_path / "weak.json"
    path.write_text(json.dumps(doc))
    code, out, err = run(capsys, "transient", str(path))
    assert code == 1, err
    assert "FAIL" in out and CAUTION in out


def test_unknown_event_and_no_events_name_the_field(capsys, tmp_path):
    path = tmp_path / "step.json"
    path.write_text(json.dumps(small_doc()))
    code, out, err = run(capsys, "transient", str(path), "--event", "nothing")
    assert code == 2 and "event" in err and "nothing" in err
    doc = small_doc()
    del doc["transients"]
    path.write_text(json.dumps(doc))
    code, out, err = run(capsys, "transient", str(path))
    assert code == 2 and "transients" in err


def test_sample_runs_and_passes(capsys):
    code, out, err = run(capsys, "transient", str(SAMPLE), "--event", "Two-phase terminal short circuit")
    assert code == 0, err
    assert "Two-phase terminal short circuit" in out and "Start-up" not in out
