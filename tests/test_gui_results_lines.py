"""The headline verdict (issue 12 item 2) and the excitation lines as what they are
(issue 13 item 2) in the result views, offscreen.

Expected values come from the definitions: an inverter or interharmonic line is
f = |a + b N| (N in rev/s of the shaft it acts on), so its tip lies at N = -a / b and
at a reference speed n rpm its frequency is |a + b n / 60| (worked by hand below);
the headline is the one sentence app.wording states for every view.
"""
from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pytestqt")
from app import wording  # noqa: E402
from app.gui import theme  # noqa: E402
from app.gui.results import rows as R  # noqa: E402
from app.gui.results.campbell_view import RPM, excitation_group, line_curve  # noqa: E402
from app.gui.results.label_layout import stack_close_labels  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import run_study  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_projects"


def _study(name, edit=None):
    doc = load_document(SAMPLES / f"{name}.json")
    if edit is not None:
        doc = copy.deepcopy(doc)
        edit(doc)
    return run_study(build_train(doc))


@pytest.fixture
def panel(results_panel):
    return results_panel(1300, 850)


@pytest.fixture(scope="module")
def compressor():
    return _study("compressor_train")


# ------------------------------------------------------------ the headline
@pytest.mark.parametrize("name", ["engine_genset", "propulsion_line", "pump_set", "compressor_train"])
def test_the_verdict_line_is_the_headline(panel, name):
    study = _study(name)
    panel.set_study(study)
    text, ok = wording.headline(study)
    assert panel.verdict.text() == text
    assert panel.verdict.styleSheet() == theme.verdict_style(ok)
    summary, colour = panel.verdict_summary()
    assert colour == ok
    assert summary.split(" ")[0] == text.split(" — ")[0]  # PASS, FAIL or OPEN, as the headline
    if ok is not True:
        assert "(" in summary  # says what it rests on
    panel.set_stale("disc 'x', inertia: not a number")
    assert panel.verdict_summary() == ("no verdict (the model has an error)", None)
    assert "PASS" not in panel.verdict.text()


def test_headline_fail_on_the_forced_response_alone(panel):
    # the pump set clears every margin; a tiny permissible torque fails the forced response
    def edit(doc):
        doc["excitations"][0]["orders"] = [{"order": 1, "amplitude": "200 N*m"}, 2]
        for link in doc["links"]:
            if link["kind"] == "coupling":
                link["permissible_torque"] = "1 N*m"
    study = _study("pump_set", edit)
    assert study.screening.passed and study.acceptance_failed
    panel.set_study(study)
    text, ok = wording.headline(study)
    assert ok is False and panel.verdict.text() == text and text.startswith("FAIL")
    summary, colour = panel.verdict_summary()
    assert colour is False and summary.startswith("FAIL (") and "fail" in summary


# ------------------------------------------------------------ lines f = |a + b N|
def test_inverter_lines_drawn_point_by_point_with_a_sharp_tip(panel, compressor):
    s = compressor.screening
    lines = [l for l in s.lines if l.kind == "line"]
    assert len(lines) == 2  # |6 f_supply - 6 f_out| and |12 f_supply - 12 f_out|
    panel.set_study(compressor)
    panel.tabs.setCurrentIndex(1)
    cv = panel.campbell_view
    drawn = dict((id(line), item) for line, item in cv.line_items)
    for line in lines:
        item = drawn[id(line)]
        x, y = np.asarray(item.xData), np.asarray(item.yData)
        # tip of |a + b N| at N = -a / b rev/s (definition); both on the motor, the reference
        tip_rpm = -line.offset_hz / (line.slope * RPM)
        assert 0 < tip_rpm < x[-1]
        k = int(np.argmin(np.abs(x - tip_rpm)))
        assert x[k] == pytest.approx(tip_rpm, rel=1e-12)
        assert y[k] == pytest.approx(y.min())  # the lowest point drawn is the tip
        # at standstill the line starts at a (300 or 600 Hz)
        assert y[0] == pytest.approx(line.offset_hz, rel=1e-12)
    # the label of each is its formula, to four significant digits
    labels = [item.textItem.toPlainText() for item, kind, _v in cv._labels if kind == "line"]
    assert labels == ["|300 Hz − 12.1·N|", "|600 Hz − 24.19·N|"]


def test_line_curve_by_hand():
    # |300 Hz - 12.0968 N|, N rev/s of the reference shaft: at 1000 rpm N = 16.667 rev/s,
    # f = |300 - 201.61| = 98.39 Hz; tip at 300 / 12.0968 = 24.80 rev/s = 1488.0 rpm (by hand)
    from core.screening import ExcitationLine
    b = 12.0968
    line = ExcitationLine("Inverter: test", None, -b / (2 * np.pi), None, "motor", offset_hz=300.0,
                          formula="f = |300 Hz − 12.0968·N|")
    assert line.kind == "line"
    xs, fs = line_curve(line, 2000.0)
    assert 1488.0 == pytest.approx(xs[np.argmin(fs)], abs=0.05)
    assert float(line.frequency(1000.0 * RPM)) == pytest.approx(98.39, abs=0.01)
    assert R.line_order_text(line) == "|300 Hz − 12.1·N|"
    assert "N: speed of motor in rev/s" in R.line_words(line)
    assert excitation_group(line) == "Inverter"


def test_tables_name_a_line_by_its_formula(panel, compressor):
    panel.set_study(compressor)
    cv = panel.campbell_view
    by_kind = {}
    for row in cv.coincidence_model.rows:
        c = row.extra["coincidence"]
        by_kind.setdefault(c.line.kind, []).append((row, c))
    assert set(by_kind) >= {"order", "line", "fixed"}
    for row, c in by_kind["line"]:
        assert row.cells[3].startswith("|") and "·N|" in row.cells[3]  # never "fixed"
        assert c.line.formula in row.tooltip
    for row, c in by_kind["fixed"]:
        assert row.cells[3] == "fixed"
    for row, c in by_kind["order"]:
        assert row.cells[3] == R.line_order_text(c.line) and "order" in row.tooltip
    # the cursor read-out at 1000 rpm: the 300 Hz line is at |300 - 12.0968 x 16.667| = 98.39 Hz
    cv.set_cursor_rpm(1000.0)
    rows = {r.cells[1]: r for r in cv.cursor_readout()}
    row = rows["|300 Hz − 12.1·N|"]
    assert float(row.cells[2]) == pytest.approx(98.39, abs=0.01)
    assert "fixed" not in [r.cells[1] for r in cv.cursor_readout() if r.extra["nearest"]["line"].kind != "fixed"]


def test_major_orders_heavier(panel):
    study = _study("engine_genset")
    panel.set_study(study)
    panel.tabs.setCurrentIndex(1)
    cv = panel.campbell_view
    widths = {line.major: set() for line, _i in cv.line_items}
    for line, item in cv.line_items:
        widths[line.major].add(item.opts["pen"].widthF())
    assert widths[True] and widths[False]
    assert min(widths[True]) > max(widths[False])
    assert any("major orders heavier" in t for t in cv.legend.texts)


# ------------------------------------------------------------ close mode labels stacked
def test_close_lines_get_a_stack_in_frequency_order():
    h = 15.0
    sizes = {0: (100.0, h), 1: (100.0, h), 2: (100.0, h), 3: (100.0, h)}
    # lines 0 and 1 are 8 px apart (a label each above its line would overlap); 2 is 40 px below
    ys = {0: 100.0, 1: 108.0, 2: 148.0}
    stacks = stack_close_labels(ys, sizes)
    assert len(stacks) == 1
    top, members = stacks[0]
    assert [i for i, _dy in members] == [0, 1]  # the higher line (smaller y) on top
    tops = [top + dy for _i, dy in members]
    assert tops[0] + h == pytest.approx(ys[0])  # just above its line
    assert tops[1] == pytest.approx(ys[1])  # just below its line
    # three lines within 6 px: kept in order, none overlapping, none far from its line
    ys = {3: 200.0, 1: 203.0, 2: 206.0}
    (top, members), = stack_close_labels(ys, sizes)
    assert [i for i, _dy in members] == [3, 1, 2]
    tops = [top + dy for _i, dy in members]
    for a, b in zip(tops, tops[1:]):
        assert b >= a + h - 1e-9
    for (i, _dy), t in zip(members, tops):
        assert abs(t + h / 2 - ys[i]) <= 1.5 * h
