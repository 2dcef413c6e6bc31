"""The study pipeline (issue 9 item 1) and the limits it states (issue 10 items 6 and 7)."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from core.errors import ModelError
from core.project import build_train, load_document
from core.solver import MAX_MODES, mode_limit
from core.study import MIN_ELASTIC_MODES, StudyOptions, run_study

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = sorted((ROOT / "sample_projects").glob("*.json"))


def two_discs(k="1 MN*m/rad", operating=True, speed="3000 rpm"):
    doc = {"format": "twistwise-project", "version": 1, "title": "two",
           "discs": [{"id": "a", "inertia": "1 kg*m^2"}, {"id": "b", "inertia": "1 kg*m^2"}],
           "links": [{"id": "s", "kind": "shaft", "from": "a", "to": "b", "stiffness": k}]}
    if operating:
        doc.update({"reference": "a", "operating_speed": {"min": speed, "max": speed},
                    "excitations": [{"name": "once per rev", "at": "a", "orders": [1]}]})
    return doc


def chain(n, k=2e6, J=1.0):
    return {"format": "twistwise-project", "version": 1, "title": f"chain {n}",
            "discs": [{"id": f"d{i}", "inertia": J} for i in range(n)],
            "links": [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}", "stiffness": k}
                      for i in range(n - 1)],
            "reference": "d0", "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "1x", "at": "d0", "orders": [1, 2]}]}


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_study_holds_modes_screening_and_response(path):
    train = build_train(load_document(path))
    study = run_study(train)
    assert study.modes is not None and study.screening is not None
    # the screening saw the very modes the study shows
    assert study.screening.modes is study.modes
    # at least the minimum, or every elastic mode a lumped model has
    finite = len(train.discs) - (0 if train.grounded else 1)
    assert int(study.modes.elastic.sum()) >= min(MIN_ELASTIC_MODES, finite)
    assert (study.response is not None) == study.has_amplitudes
    # the review verdict: separation where every mode clears, else the acceptance argument;
    # a failing limit fails it (issue 12 item 2)
    if study.screening.passed and not study.acceptance_failed and not study.response_failed:
        assert study.verdict == "pass" and study.passed
    if study.acceptance_failed:
        assert study.verdict == "fail" and not study.passed
    assert study.passed == (study.verdict == "pass")


def test_modes_above_the_screening_limit_are_shown_and_marked():
    # two discs of 1 kg*m^2 on 1 MN*m/rad: f = sqrt(2k/J)/(2 pi) = 225.08 Hz (closed form);
    # the 3000 rpm once-per-rev line reaches 50 Hz, so the limit is 50*1.2*1.25 = 75 Hz
    study = run_study(build_train(two_discs()))
    f = study.modes.frequency_hz[study.modes.elastic]
    assert f[0] == pytest.approx(np.sqrt(2e6) / (2 * np.pi), rel=1e-12)
    assert study.screening_limit_hz == pytest.approx(75.0)
    assert study.above_screening_limit[study.modes.elastic].all()  # shown, marked


def test_a_blank_train_shows_its_mode_without_operating_data():
    # issue 10 item 6: a new train with no operating data still shows its modes
    study = run_study(build_train(two_discs(operating=False)))
    assert int(study.modes.elastic.sum()) == 1  # the lumped two-disc model has one elastic mode
    assert study.screening is None and not study.above_screening_limit.any()


def test_explicit_requests_are_kept():
    train = build_train(load_document(ROOT / "sample_projects" / "propulsion_line.json"))
    study = run_study(train, StudyOptions(n_modes=2))
    assert int(study.modes.elastic.sum()) == 2
    assert study.screening is not None  # screened on its own, complete set
    study = run_study(train, StudyOptions(max_frequency_hz=10.0))
    assert (study.modes.frequency_hz <= 10.0).all()


def test_options_are_checked():
    with pytest.raises(ModelError) as e:
        StudyOptions(n_modes=0)
    assert e.value.field == "--modes"
    with pytest.raises(ModelError) as e:
        StudyOptions(margin=0.9)
    assert e.value.field == "--margin"


def test_mode_limit_is_stated_and_a_request_beyond_it_is_named():
    train = build_train(chain(30))
    with pytest.raises(ModelError) as e:
        run_study(train, StudyOptions(n_modes=MAX_MODES + 1))
    assert e.value.field == "--modes" and str(MAX_MODES) in e.value.message
    assert mode_limit(100_000) < MAX_MODES  # long trains: bounded shape memory


def test_a_screening_that_cannot_be_complete_never_passes(monkeypatch):
    # a fine chain with far more modes below the screening limit than one solve returns
    import core.solver as solver
    monkeypatch.setattr(solver, "MAX_MODES", 20)
    train = build_train(chain(300, k=2e5))  # about 100 modes below 75 Hz
    study = run_study(train)
    assert study.screening is None and study.screening_error is not None
    assert study.screening_error.field == "excitations"
    assert not study.passed
    assert int(study.modes.elastic.sum()) == 20 and study.notes


def test_check_on_a_too_fine_train_ends_cleanly(tmp_path):
    path = tmp_path / "fine.json"
    doc = chain(4000, k=1e6)  # about 600 modes below the 75 Hz screening limit
    path.write_text(json.dumps(doc))
    p = subprocess.run([sys.executable, "-m", "app", "check", str(path)], capture_output=True, text=True,
                       cwd=ROOT, timeout=300)
    assert p.returncode == 2, p.stderr
    assert "operating data" in p.stderr and "excitations" in p.stderr
    assert "Traceback" not in p.stderr and len(p.stderr.strip().splitlines()) == 1


@pytest.mark.parametrize("text, words", [
    ("[" * 100_000 + "]" * 100_000, "nested"),  # RecursionError before (issue 10 item 9)
    ('{"discs": ' + "[" * 40 + "]" * 40 + "}", "nested"),
    ('{"v": ' + "9" * 5000 + "}", "digits"),  # ValueError before
], ids=["deep-list", "deep-discs", "long-integer"])
def test_hostile_files_end_with_one_named_line(tmp_path, text, words):
    path = tmp_path / "hostile.json"
    path.write_text(text)
    p = subprocess.run([sys.executable, "-m", "app", "check", str(path)], capture_output=True, text=True,
                       cwd=ROOT, timeout=120)
    assert p.returncode == 2
    assert words in p.stderr and "file" in p.stderr and "Traceback" not in p.stderr


@pytest.mark.parametrize("ratio", [1e308, 1e200, 1e150, 1e-200, 5000.0])
def test_absurd_gear_ratios_are_refused_naming_the_field(ratio):
    # issue 10 item 2: a ratio of 1e308 gave NaN frequencies and a green PASS
    doc = two_discs()
    doc["discs"].append({"id": "c", "inertia": "1 kg*m^2"})
    doc["links"].append({"id": "g", "kind": "gear_mesh", "from": "b", "to": "c", "stiffness": "1 MN*m/rad",
                         "speed_ratio": ratio})
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert e.value.field == "speed_ratio" and "'g'" in e.value.element


def test_speed_factors_across_many_stages_are_bounded():
    doc = two_discs(operating=False)
    prev = "b"
    for i in range(4):  # 4 stages of 1:100 -> 1e8 across the train
        doc["discs"].append({"id": f"g{i}", "inertia": "1 kg*m^2"})
        doc["links"].append({"id": f"m{i}", "kind": "gear_mesh", "from": prev, "to": f"g{i}",
                             "stiffness": "1 MN*m/rad", "speed_ratio": 100})
        prev = f"g{i}"
    with pytest.raises(ModelError) as e:
        build_train(doc)
    assert e.value.field == "links"


def test_a_non_finite_result_stops_the_study():
    from core.study import _require_finite

    class Fake:  # a mode set with a NaN frequency, as a meaningless model would give
        frequency_hz = np.array([0.0, np.nan])
        shape = np.zeros((2, 2))

        def __len__(self):
            return 2

    with pytest.raises(ModelError):
        _require_finite(Fake())
