"""`twistwise solve`: the JSON contract, the readable table and every bad input (issue 2, items 7, 8)."""
from __future__ import annotations

import copy
import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from app.cli import CAUTION, main

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = sorted((ROOT / "sample_projects").glob("*.json"))


def base():
    return {
        "format": "twistwise-project", "version": 1, "title": "Test set",
        "discs": [{"id": "motor", "inertia": "14.2 kg*m^2"}, {"id": "hub", "inertia": "0.3 kg*m^2"},
                  {"id": "pump", "inertia": "3.9 kg*m^2"}],
        "links": [{"id": "motor_shaft", "kind": "shaft", "from": "motor", "to": "hub", "stiffness": "3.4 MN*m/rad"},
                  {"id": "coupling", "kind": "coupling", "from": "hub", "to": "pump", "stiffness": "95 kN*m/rad"}],
    }


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


# ------------------------------------------------------------------ contract
@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_json_contract_on_every_sample(capsys, path):
    code, out, err = run(capsys, "solve", str(path), "--json")
    assert code == 0, err
    data = json.loads(out)  # stdout is one JSON object
    modes = data["modes"]
    disc_ids = [d["id"] for d in json.loads(path.read_text())["discs"]]
    f = [m["frequency_hz"] for m in modes]
    assert f == sorted(f)
    elastic = [m for m in modes if not m["rigid_body"]]
    assert elastic[0]["number"] == 1
    assert [m["number"] for m in elastic] == list(range(1, len(elastic) + 1))
    for m in modes:
        assert set(m["shape"]) == set(disc_ids)
        assert max(abs(v) for v in m["shape"].values()) == 1.0
        if m["rigid_body"]:
            assert m["number"] == 0 and m["frequency_hz"] == 0.0


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_readable_table_on_every_sample(capsys, path):
    code, out, err = run(capsys, "solve", str(path))
    assert code == 0, err
    assert "mode" in out and "Hz" in out
    assert CAUTION in out
    assert not out.lstrip().startswith("{")


def test_modes_option_gives_n_elastic_modes_plus_rigid(capsys, tmp_path):
    p = tmp_path / "t.json"
    p.write_text(json.dumps(base()))
    code, out, _ = run(capsys, "solve", str(p), "--modes", "2", "--json")
    modes = json.loads(out)["modes"]
    assert code == 0
    assert [m["number"] for m in modes] == [0, 1, 2]
    assert modes[0]["rigid_body"] and modes[0]["frequency_hz"] == 0.0
    assert modes[0]["shape"] == {"motor": 1.0, "hub": 1.0, "pump": 1.0}


def test_grounded_train_numbers_from_one(capsys, tmp_path):
    d = base()
    d["links"].append({"id": "mount", "kind": "coupling", "from": "ground", "to": "motor", "stiffness": "1 MN*m/rad"})
    p = tmp_path / "t.json"
    p.write_text(json.dumps(d))
    code, out, _ = run(capsys, "solve", str(p), "--modes", "3", "--json")
    modes = json.loads(out)["modes"]
    assert [m["number"] for m in modes] == [1, 2, 3]
    assert not any(m["rigid_body"] for m in modes)


def test_max_frequency_option_lists_every_mode_below(capsys, tmp_path):
    p = tmp_path / "t.json"
    p.write_text(json.dumps(base()))
    _, out, _ = run(capsys, "solve", str(p), "--modes", "2", "--json")
    f1, f2 = [m["frequency_hz"] for m in json.loads(out)["modes"][1:]]
    cap = 0.5 * (f1 + f2)
    code, out, _ = run(capsys, "solve", str(p), "--max-frequency", f"{cap * 60:.6f} cpm", "--json")
    modes = json.loads(out)["modes"]
    assert code == 0
    assert [m["number"] for m in modes] == [0, 1]
    assert modes[1]["frequency_hz"] == pytest.approx(f1, rel=1e-12)
    # rough hand check: the coupling mode with the 36x stiffer motor shaft taken as rigid
    # (two-rotor formula; the motor shaft's flexibility lowers it by a few per cent)
    J_m, J_h, J_p, k2 = 14.2, 0.3, 3.9, 95e3
    approx = math.sqrt(k2 * (J_m + J_h + J_p) / ((J_m + J_h) * J_p)) / (2 * math.pi)
    assert 0.95 * approx < f1 < approx


def test_json_and_table_agree(capsys):
    path = str(ROOT / "sample_projects" / "pump_set.json")
    _, out_j, _ = run(capsys, "solve", path, "--json", "--modes", "3")
    _, out_t, _ = run(capsys, "solve", path, "--modes", "3")
    for m in json.loads(out_j)["modes"]:
        assert f"{m['frequency_hz']:.2f}" in out_t


def test_real_command_line_entry(tmp_path):
    """The console entry (python -m app) in a subprocess: exit codes and no traceback."""
    ok = subprocess.run([sys.executable, "-m", "app", "solve", str(SAMPLES[0]), "--json"],
                        capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert ok.returncode == 0 and json.loads(ok.stdout)["modes"]
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    r = subprocess.run([sys.executable, "-m", "app", "solve", str(bad)], capture_output=True, text=True,
                       cwd=ROOT, timeout=120)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1
    assert str(bad) in r.stderr


# ------------------------------------------------------------------ bad input
def edit(fn):
    d = base()
    fn(d)
    return d


def set_disc(i, key, value):
    return lambda d: d["discs"][i].__setitem__(key, value)


def set_link(i, key, value):
    return lambda d: d["links"][i].__setitem__(key, value)


def geared(d):
    d["discs"].append({"id": "fan", "inertia": 0.5})
    d["links"].append({"id": "mesh", "kind": "gear_mesh", "from": "pump", "to": "fan", "speed_ratio": 0})


def negative_ratio(d):
    geared(d)
    d["links"][-1]["speed_ratio"] = -2.0


def shaft_with_bore(bore):
    def f(d):
        d["links"][0] = {"id": "motor_shaft", "kind": "shaft", "from": "motor", "to": "hub",
                         "material": "carbon_steel",
                         "segments": [{"length": "400 mm", "outer_diameter": "60 mm"},
                                      {"length": "200 mm", "outer_diameter": "60 mm", "inner_diameter": bore}]}
    return f


BAD = {
    # name: (document edit, element text, field)
    "zero inertia": (set_disc(1, "inertia", "0 kg*m^2"), "disc 'hub'", "inertia"),
    "negative inertia": (set_disc(2, "inertia", "-3.9 kg*m^2"), "disc 'pump'", "inertia"),
    "zero stiffness": (set_link(1, "stiffness", "0 kN*m/rad"), "link 'coupling'", "stiffness"),
    "negative stiffness": (set_link(0, "stiffness", "-3.4 MN*m/rad"), "link 'motor_shaft'", "stiffness"),
    "nan text": (set_disc(0, "inertia", "nan kg*m^2"), "disc 'motor'", "inertia"),
    "infinite": (set_link(1, "stiffness", "inf N*m/rad"), "link 'coupling'", "stiffness"),
    "wrong kind of unit": (set_disc(0, "inertia", "14.2 N*m"), "disc 'motor'", "inertia"),
    "length as stiffness": (set_link(1, "stiffness", "95 mm"), "link 'coupling'", "stiffness"),
    "unknown unit": (set_link(1, "stiffness", "95 florps"), "link 'coupling'", "stiffness"),
    "unknown disc id": (set_link(1, "to", "pmup"), "link 'coupling'", "to"),
    "loop": (lambda d: d["links"].append({"id": "extra", "kind": "coupling", "from": "pump", "to": "motor",
                                          "stiffness": 1e5}), "link 'extra'", "to"),
    "disconnected disc": (lambda d: d["discs"].append({"id": "spare", "inertia": 1.0}), "disc 'spare'", "links"),
    "bore equals outer": (shaft_with_bore("60 mm"), "link 'motor_shaft' segment 2", "inner_diameter"),
    "bore above outer": (shaft_with_bore("70 mm"), "link 'motor_shaft' segment 2", "inner_diameter"),
    "zero speed ratio": (geared, "link 'mesh'", "speed_ratio"),
    "negative speed ratio": (negative_ratio, "link 'mesh'", "speed_ratio"),
    "newer version": (lambda d: d.__setitem__("version", 99), "file", "version"),
    "empty train": (lambda d: (d.__setitem__("discs", []), d.__setitem__("links", [])), "train", "discs"),
    "missing inertia": (lambda d: d["discs"][0].pop("inertia"), "disc 'motor'", "inertia"),
    "zero length": (lambda d: (shaft_with_bore("20 mm")(d), d["links"][0]["segments"][0].__setitem__("length", "0 m")),
                    "link 'motor_shaft' segment 1", "length"),
    "negative density": (lambda d: (shaft_with_bore("20 mm")(d), d["links"][0].__setitem__(
        "material", {"shear_modulus": "80 GPa", "density": "-7850 kg/m^3"})), "link 'motor_shaft'", "density"),
    "unknown material": (lambda d: (shaft_with_bore("20 mm")(d), d["links"][0].__setitem__("material", "cheese")),
                         "link 'motor_shaft'", "material"),
}


def check_one_line(err, path, element, field):
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    line = lines[0]
    assert str(path) in line  # names the file
    assert element in line  # the element id
    assert field in line  # and the field
    return line


@pytest.mark.parametrize("name", list(BAD))
def test_bad_input_exits_2_with_one_line(capsys, tmp_path, name):
    fn, element, field = BAD[name]
    p = tmp_path / "bad.json"
    p.write_text(json.dumps(edit(fn)))
    code, out, err = run(capsys, "solve", str(p))
    assert code == 2, (out, err)
    assert out == ""
    check_one_line(err, p, element, field)


def test_nan_literal_in_json(capsys, tmp_path):
    p = tmp_path / "bad.json"
    p.write_text(json.dumps(base()).replace('"14.2 kg*m^2"', "NaN"))  # Python's json accepts NaN
    code, _, err = run(capsys, "solve", str(p))
    assert code == 2
    check_one_line(err, p, "disc 'motor'", "inertia")


def test_infinity_literal_in_json(capsys, tmp_path):
    p = tmp_path / "bad.json"
    p.write_text(json.dumps(base()).replace('"95 kN*m/rad"', "Infinity"))
    code, _, err = run(capsys, "solve", str(p))
    assert code == 2
    check_one_line(err, p, "link 'coupling'", "stiffness")


@pytest.mark.parametrize("text, field", [("{\"discs\": [", "line 1"), ("[1, 2, 3]", "JSON object"),
                                         ("\"a string\"", "JSON object"), ("", "line 1")])
def test_file_level_errors(capsys, tmp_path, text, field):
    p = tmp_path / "bad.json"
    p.write_text(text)
    code, _, err = run(capsys, "solve", str(p))
    assert code == 2
    check_one_line(err, p, "file", field)


def test_missing_file(capsys, tmp_path):
    p = tmp_path / "nowhere.json"
    code, _, err = run(capsys, "solve", str(p))
    assert code == 2
    check_one_line(err, p, "file", "not found")


@pytest.mark.parametrize("args, field", [(["--modes", "0"], "--modes"), (["--max-frequency", "12 kg"], "--max-frequency"),
                                         (["--max-frequency", "-5 Hz"], "--max-frequency")])
def test_bad_options(capsys, tmp_path, args, field):
    p = tmp_path / "t.json"
    p.write_text(json.dumps(base()))
    code, _, err = run(capsys, "solve", str(p), *args)
    assert code == 2
    check_one_line(err, p, "option", field)


def test_bad_input_leaves_the_file_untouched(capsys, tmp_path):
    d = edit(set_link(1, "stiffness", "95 florps"))
    p = tmp_path / "bad.json"
    text = json.dumps(d, indent=1)
    p.write_text(text)
    run(capsys, "solve", str(p))
    assert p.read_text() == text
    assert not (tmp_path / "bad.json.bak").exists()
