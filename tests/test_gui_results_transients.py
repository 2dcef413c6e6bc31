"""The Transients view (issue 14 item 5), offscreen: runs on request on a worker thread
with a progress bar, can be cancelled, shows torque and speed against time, marks the
crossing of the lowest mode, tabulates peaks and fatigue, and drops its results when
the model changes.

Outside reference for the crossing: a synchronous motor starting on its damper winding
pulsates at 2 s f_line with the slip s = 1 - n / n_sync (the definition of slip), so at
the marked crossing 2 (1 - n / n_sync) f_line equals the natural frequency crossed,
n read off the speed curve the view draws.  The numbers in the table are the study's
own (core.study.run_study with the transients part): the view must run the same recipe.
"""
from __future__ import annotations

import copy
import csv
import math
from pathlib import Path

import numpy as np
import pyqtgraph as pg
import pytest

pytest.importorskip("pytestqt")

from app import formatting as fmt  # noqa: E402
from app.gui.results.transient_view import ALL_EVENTS, _count  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import LIVE_PARTS, StudyOptions, run_study  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_projects"
RPM = 2.0 * math.pi / 60.0
SHORT = "Two-phase terminal short circuit"
START = "Start-up"


@pytest.fixture(scope="module")
def doc():
    return load_document(SAMPLES / "sync_motor_compressor.json")


@pytest.fixture
def panel(results_panel):
    return results_panel(1300, 850)


def _live(doc):
    """The study the desktop program computes after an edit (transients run on request)."""
    return run_study(build_train(doc), StudyOptions(parts=LIVE_PARTS))


def _show(panel, doc):
    study = _live(doc)
    panel.set_study(study)
    panel.tabs.setCurrentIndex(panel.tab_index("transients"))
    return study


def _run(qtbot, view, event):
    view.event_box.setCurrentText(event)
    with qtbot.waitSignal(view.runFinished, timeout=60000) as blocker:
        view.run()
    return blocker.args[0]


def test_no_events_greys_the_tab(panel):
    panel.set_study(_live(load_document(SAMPLES / "pump_set.json")))
    i = panel.tab_index("transients")
    assert not panel.tabs.isTabEnabled(i)
    assert "no transient events" in panel.tabs.tabToolTip(i)
    assert not panel.transient_view.run_button.isEnabled()


def test_run_shows_the_study_numbers(qtbot, panel, doc):
    study = _show(panel, doc)
    tv = panel.transient_view
    assert [tv.event_box.itemText(i) for i in range(tv.event_box.count())] == [ALL_EVENTS, START, SHORT]
    assert tv.run_button.isEnabled() and not tv.cancel_button.isEnabled()
    assert _run(qtbot, tv, SHORT) is True
    ev = tv.current_event()
    assert ev.name == SHORT
    # the same numbers as the study's own run of the event (the command line's recipe)
    ref = run_study(study.train, StudyOptions(parts=frozenset({"transients"}), events=(SHORT,))).transients
    expected = {l.link_id: l for l in ref.event(SHORT).links}
    for row in tv.peak_model.rows:
        l = expected[row.key]
        assert row.cells[0] == study.train.name_of(l.link_id)
        assert row.cells[1] == fmt.torque_knm(l.peak_torque)
        assert row.cells[2] == fmt.seconds(l.peak_time)
        assert row.cells[3] == fmt.torque_knm(l.permissible_peak)
        assert row.cells[6].startswith(_count(l.allowed_events))
        assert row.status == (None if l.passed is None else ("pass" if l.passed else "fail"))
    # torque against time of the ticked links, as core computed it
    curves = {c.name(): c for c in tv.torque_plot.listDataItems() if c.name()}
    assert curves and len(curves) == len(tv.checked_links())
    for lid in tv.checked_links():
        c = curves[study.train.name_of(lid)]
        j = list(ev.link_ids).index(lid)
        assert np.allclose(c.yData, ev.link_torque[j])
        assert np.allclose(c.xData, ev.time)
    # speed against time of the motor (the reference disc)
    speed = [c for c in tv.speed_plot.listDataItems()]
    assert len(speed) == 1
    i = list(ev.disc_ids).index(study.train.operating.reference)
    assert np.allclose(speed[0].yData, ev.disc_speed[i] / RPM)


def test_start_up_marks_the_lowest_mode_crossing(qtbot, panel, doc):
    _show(panel, doc)
    tv = panel.transient_view
    assert _run(qtbot, tv, START) is True
    ev = tv.current_event()
    lowest = min(ev.crossings, key=lambda c: c.mode_hz)
    for plot in (tv.torque_plot, tv.speed_plot):
        lines = [i for i in plot.items if isinstance(i, pg.InfiniteLine) and i.angle == 90]
        assert any(l.value() == pytest.approx(lowest.time_s) for l in lines)
    labels = [i.textItem.toPlainText() for i in tv.torque_plot.items if isinstance(i, pg.TextItem)]
    assert any(t.startswith("lowest mode: ") and fmt.hz(lowest.mode_hz) in t for t in labels)
    # 2 s f_line at the crossing, with the slip read off the drawn speed curve (definition of slip)
    start = next(e for e in tv.results_train.transients if e.name == START)
    motor = start.torques[0].motor
    curve = tv.speed_plot.listDataItems()[0]
    n = float(np.interp(lowest.time_s, curve.xData, curve.yData)) * RPM
    slip = 1.0 - n / motor.synchronous_speed
    assert 2.0 * slip * motor.line_frequency == pytest.approx(lowest.mode_hz, rel=2e-3)


def test_a_study_with_transients_shows_them(panel, doc):
    # the study's own run (as the command line and the sheet get it) is shown as it is
    study = run_study(build_train(doc), StudyOptions(parts=LIVE_PARTS | {"transients"}, events=(SHORT,)))
    panel.set_study(study)
    tv = panel.transient_view
    assert tv.results is study.transients and tv.current_event().name == SHORT


def test_every_event_and_the_event_shown(qtbot, panel, doc):
    _show(panel, doc)
    tv = panel.transient_view
    assert _run(qtbot, tv, ALL_EVENTS) is True
    assert [e.name for e in tv.results.events] == [START, SHORT]
    assert tv.shown_box.isVisibleTo(tv)
    tv.shown_box.setCurrentText(SHORT)
    assert tv.current_event().name == SHORT
    assert "Two-phase" in tv.verdict.text()


def test_cancel_keeps_the_window_free(qtbot, panel, doc):
    _show(panel, doc)
    tv = panel.transient_view
    tv.event_box.setCurrentText(START)
    tv.run()
    assert tv.is_running() and tv.cancel_button.isEnabled() and not tv.run_button.isEnabled()
    # the window keeps running its event loop while the worker integrates: progress arrives
    qtbot.waitUntil(lambda: tv.progress.value() > 0, timeout=20000)
    tv.cancel()
    assert not tv.is_running() and tv.run_button.isEnabled()
    assert tv.status.text() == "Run cancelled."
    assert tv.wait(20000)
    assert tv.results is None  # nothing from the cancelled run
    assert not tv.progress.isVisible()


def test_results_dropped_when_the_model_changes(qtbot, panel, doc):
    _show(panel, doc)
    tv = panel.transient_view
    assert _run(qtbot, tv, SHORT) is True
    # the same model solved again (a unit change, a recompute): the results stay
    panel.set_study(_live(copy.deepcopy(doc)))
    assert tv.results is not None
    # an edit: the results belong to the old model and go
    edited = copy.deepcopy(doc)
    edited["discs"][0]["inertia"] = "320 kg*m^2"
    panel.set_study(_live(edited))
    assert tv.results is None and tv.peak_model.rowCount() == 0
    assert "changed" in tv.message.text() and "run the events again" in tv.message.text()


def test_a_run_on_an_old_model_is_dropped(qtbot, panel, doc):
    _show(panel, doc)
    tv = panel.transient_view
    tv.event_box.setCurrentText(START)
    tv.run()
    edited = copy.deepcopy(doc)
    edited["discs"][0]["inertia"] = "320 kg*m^2"
    panel.set_study(_live(edited))  # cancels the run on the old model
    assert not tv.is_running()
    assert tv.wait(20000)
    assert tv.results is None


def test_no_run_while_the_model_has_an_error(panel, doc):
    _show(panel, doc)
    tv = panel.transient_view
    panel.set_stale("disc 'motor', inertia: not a number")
    assert not tv.run_button.isEnabled() and "error" in tv.run_button.toolTip()
    tv.run()
    assert not tv.is_running()
    panel.set_stale(None)
    assert tv.run_button.isEnabled()


def test_exports(qtbot, panel, doc, tmp_path):
    _show(panel, doc)
    with pytest.raises(ValueError):
        panel.export_transient_csv(str(tmp_path / "t.csv"))
    tv = panel.transient_view
    assert _run(qtbot, tv, SHORT) is True
    panel.export_transient_csv(str(tmp_path / "t.csv"))
    rows = list(csv.reader(open(tmp_path / "t.csv", encoding="utf-8")))
    assert rows[0][0].startswith("# Transient " + SHORT)
    assert len(rows) == 3 + len(tv.peak_model.rows)
    panel.export_plot("transients", str(tmp_path / "t.png"))
    assert (tmp_path / "t.png").stat().st_size > 1000


def test_counts():
    assert _count(None) == "—"
    assert _count(float("inf")) == "unlimited"
    assert _count(5000.0) == "5000"
    assert _count(249637.8) == "249638"
    assert _count(63395782.8) == "6.34e7"
    assert _count(12.5) == "12.5"
