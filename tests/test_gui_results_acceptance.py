"""Acceptance in the desktop program's forced-response view and on every speed axis
(issue 12 items 1, 5, 7 and 9), offscreen.

The view must show what the study's acceptance holds (core.acceptance): every check,
worst first, its criterion in words (app.wording), its utilisation as a bar, failing
rows marked; a click shows that link's curve at the check's speed.  Independent
checks: the mean torque of a propeller-law load case is T = P / omega at the rated
point and falls with the square of the speed below it (P proportional to N^3; the
propeller law as the trade states it — from memory); the speed bands come from the
operating data (start-up below the range, overspeed from the range to trip).
"""
from __future__ import annotations

import copy
import dataclasses
import math
from pathlib import Path

import numpy as np
import pyqtgraph as pg
import pytest

pytest.importorskip("pytestqt")
from PySide6 import QtCore, QtWidgets  # noqa: E402

from app import formatting as fmt  # noqa: E402
from app import wording  # noqa: E402
from app.gui.results import speed_axis as SA  # noqa: E402
from app.gui.results.response_view import MEAN_PREFIX, STRESS, TORQUE  # noqa: E402
from core.acceptance import SpeedRange  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import run_study  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_projects"
RPM = 2.0 * math.pi / 60.0


@pytest.fixture(scope="module")
def propulsion():
    return run_study(build_train(load_document(SAMPLES / "propulsion_line.json")))


@pytest.fixture(scope="module")
def engine():
    return run_study(build_train(load_document(SAMPLES / "engine_genset.json")))


@pytest.fixture
def panel(results_panel):
    return results_panel(1400, 900)


def _process():
    for _ in range(3):
        QtWidgets.QApplication.processEvents()


def _regions(plot):
    return [i for i in plot.items if isinstance(i, pg.LinearRegionItem)]


# ------------------------------------------------------------ the table
def test_every_check_worst_first_in_words(panel, engine):
    panel.set_study(engine)
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    acc = engine.acceptance
    assert rv.lower_tabs.currentIndex() == 0 and rv.lower_tabs.isTabEnabled(0)
    rows = rv.acceptance_model.rows
    assert len(rows) == len(acc.checks)  # one load case: all of them
    us = [r.extra["utilisation"] for r in rows]
    assert us == sorted(us, reverse=True)
    for r in rows:
        c = r.extra["check"]
        assert r.cells[0].startswith(engine.train.name_of(c.link))
        assert r.cells[1] == wording.criterion(c.criterion)
        assert r.cells[4] == f"{fmt.percent(c.utilisation)} %"
        assert r.cells[6] == fmt.rpm(c.at)
        assert r.status == ("pass" if c.passed else "fail") and r.cells[7] == r.status.upper()
    n_fail = sum(not c.passed for c in acc.checks)
    assert n_fail and f"({n_fail} fail)" in rv.lower_tabs.tabText(0)
    assert rv.acceptance_verdict.text().startswith(f"{n_fail} of {len(acc.checks)} checks fail")


def test_utilisation_drawn_as_a_bar(panel, engine):
    panel.set_study(engine)
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    _process()
    t = rv.acceptance_table
    image = t.viewport().grab().toImage()
    # the worst row fails (red bar), a passing row further down is green; sample the cell's left part
    rect = t.visualRect(rv.acceptance_model.index(0, 4))

    def colours(rect):
        out = []
        for x in range(rect.left() + 4, rect.left() + 30):
            c = image.pixelColor(x, rect.center().y())
            out.append((c.red(), c.green(), c.blue()))
        return out
    reds = [c for c in colours(rect) if c[0] > 150 and c[1] < 120 and c[2] < 120]
    assert reds, "the failing check's bar is red"
    passing = next(i for i, r in enumerate(rv.acceptance_model.rows) if r.status == "pass")
    t.scrollTo(rv.acceptance_model.index(passing, 4))
    _process()
    image = t.viewport().grab().toImage()
    rect = t.visualRect(rv.acceptance_model.index(passing, 4))
    greens = [c for c in colours(rect) if c[1] > c[0] + 20]
    assert greens, "a passing check's bar is green"


def test_per_load_case(panel, propulsion):
    panel.set_study(propulsion)
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    acc = propulsion.acceptance
    cases = [lc.name for lc in acc.load_cases]
    assert len(cases) == 2 and rv.case_box.isVisibleTo(rv)
    # at first the load case of the worst check, its column hidden
    worst = acc.worst_first()[0].load_case
    assert rv.case_box.currentData() == worst and rv.acceptance_table.isColumnHidden(2)
    assert {r.extra["check"].load_case for r in rv.acceptance_model.rows} == {worst}
    rv.case_box.setCurrentIndex(rv.case_box.findData(None))  # every load case
    assert len(rv.acceptance_model.rows) == len(acc.checks) and not rv.acceptance_table.isColumnHidden(2)
    assert {r.cells[2] for r in rv.acceptance_model.rows} == set(cases)


# ------------------------------------------------------------ a click shows the curve at the speed
def _marker(rv):
    line, label, y = rv._marker_item
    return line.value(), y, label.textItem.toPlainText()


def test_click_shows_the_link_at_the_check_speed(panel, engine):
    panel.set_study(engine)
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    # a stress check, its link unticked first
    r = next(i for i, row in enumerate(rv.acceptance_model.rows) if row.extra["check"].unit == "Pa")
    c = rv.acceptance_model.rows[r].extra["check"]
    rv.set_checked_links([lid for lid in rv.checked_links() if lid != c.link])
    assert c.link not in rv.checked_links() and rv.quantity.currentText() == TORQUE
    rv.acceptance_table.selectRow(r)
    _process()
    assert c.link in rv.checked_links()
    assert rv.quantity.currentText() == STRESS
    x, y, text = _marker(rv)
    assert x == pytest.approx(c.at / RPM)
    j = list(engine.response.link_ids).index(c.link)
    curve = np.asarray(engine.response.link_stress[j], float)
    assert y == pytest.approx(np.interp(x, engine.response.speed / RPM, curve))
    assert fmt.percent(c.utilisation) in text


def test_mean_torque_of_a_propeller_law(panel, propulsion):
    panel.set_study(propulsion)
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    rv.case_box.setCurrentIndex(rv.case_box.findData("Propeller law, 1200 kW at 750 rpm"))
    # the coupling's nominal-torque check judges the mean torque: the marker sits on it
    r = next(i for i, row in enumerate(rv.acceptance_model.rows)
             if row.extra["check"].criterion == "coupling_nominal_torque")
    c = rv.acceptance_model.rows[r].extra["check"]
    rv.acceptance_table.selectRow(r)
    _process()
    assert rv.quantity.currentText() == MEAN_PREFIX + c.load_case
    # T = P / omega: 1200 kW at 750 rpm on the engine shaft (the reference) = 15 279 N*m
    t_rated = 1.2e6 / (750.0 * RPM)
    x, y, _text = _marker(rv)
    assert x == pytest.approx(750.0)
    assert y == pytest.approx(t_rated, rel=1e-6)
    assert c.value == pytest.approx(t_rated, rel=1e-9)
    # the dotted curve: P ~ N^3, so T ~ N^2 below the rated point: a quarter at 375 rpm
    dotted = [i for i in rv.plot.listDataItems()
              if i.opts["pen"] is not None and pg.mkPen(i.opts["pen"]).style() == QtCore.Qt.DotLine
              and "flex" in (i.toolTip() or "").lower()]
    assert len(dotted) == 1
    xs, ys = np.asarray(dotted[0].xData), np.asarray(dotted[0].yData)
    assert np.interp(375.0, xs, ys) == pytest.approx(t_rated / 4.0, rel=2e-3)
    assert any(t.startswith("mean torque, Propeller law") for t in rv.legend.texts)
    rv.quantity.setCurrentText(TORQUE)
    assert not any(t.startswith("mean torque") for t in rv.legend.texts)


# ------------------------------------------------------------ peaks per speed band
def test_peaks_per_speed_band(panel, propulsion):
    panel.set_study(propulsion)
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    rv.lower_tabs.setCurrentIndex(1)
    assert [rv.band_box.itemData(i) for i in range(rv.band_box.count())] == ["operating", "transient", "overspeed"]
    assert rv.wait_band_peaks()
    assert rv.lower_tabs.tabText(1) == "Peaks per link"  # polished
    bp = propulsion.band_peaks
    for band in ("operating", "transient", "overspeed"):
        rv.band_box.setCurrentIndex(rv.band_box.findData(band))
        rows = {r.key: r for r in rv.peak_model.rows}
        assert set(rows) == set(propulsion.response.link_ids)
        for p in bp:
            if p.band == band and p.combination == "sum" and p.quantity == "torque":
                assert rows[p.link_id].cells[2] == fmt.torque_knm(p.peak)
                assert rows[p.link_id].cells[3] == fmt.rpm(p.speed)
        # judged as the acceptance judged this band
        for c in propulsion.acceptance.checks:
            if c.speed_band == band and c.criterion == "permissible_torque":
                assert rows[c.link].cells[4] == fmt.torque_knm(c.limit)
                assert rows[c.link].status in ("pass", "fail")
    # a transient peak lies below the range
    rv.band_box.setCurrentIndex(rv.band_box.findData("transient"))
    op = propulsion.train.operating
    for r in rv.peak_model.rows:
        if r.cells[3] != "—":
            assert float(r.cells[3]) <= op.speed_min / RPM + 0.5


def test_band_peaks_polished_off_the_gui_thread(panel, propulsion):
    study = dataclasses.replace(propulsion)  # a fresh study: nothing cached yet
    assert "band_peaks" not in study.__dict__
    panel.tabs.setCurrentIndex(2)
    panel.set_study(study)
    rv = panel.response_view
    rv.lower_tabs.setCurrentIndex(1)
    # the table shows the peaks at the computed speeds at once
    assert rv.peak_model.rowCount() == len(study.response.link_ids)
    assert rv.wait_band_peaks()
    assert "band_peaks" in study.__dict__


# ------------------------------------------------------------ every speed axis
def test_speed_bands_on_both_axes(panel, propulsion):
    op = propulsion.train.operating
    panel.set_study(propulsion)
    for tab, view in ((1, panel.campbell_view), (2, panel.response_view)):
        panel.tabs.setCurrentIndex(tab)
        _process()
        spans = {tuple(round(v, 6) for v in r.getRegion()) for r in _regions(view.plot)}
        lo, hi, trip = op.speed_min / RPM, op.speed_max / RPM, op.trip_speed / RPM
        assert (round(lo, 6), round(hi, 6)) in spans  # operating range
        assert (0.0, round(lo, 6)) in spans  # start-up / run-down strip
        assert (round(hi, 6), round(trip, 6)) in spans  # overspeed up to trip
        texts = view.legend.texts
        assert any(t.startswith(wording.speed_band("transient")) for t in texts)
        assert any(t.startswith(wording.speed_band("overspeed")) for t in texts)
        # the gear-hammer ranges (propeller law and light running, joined)
        hammer = [r for r in _regions(view.plot) if "hammer" in r.toolTip()]
        ranges = [(h.low_rpm, h.high_rpm) for h in propulsion.acceptance.hammer_ranges]
        assert hammer and any("gear teeth hammer" in t for t in texts)
        lo_h = min(a for a, _b in ranges)
        hi_h = max(b for _a, b in ranges)
        assert min(r.getRegion()[0] for r in hammer) == pytest.approx(lo_h)
        assert max(r.getRegion()[1] for r in hammer) == pytest.approx(hi_h)


def test_barred_range_drawn_on_both_axes(panel, propulsion):
    acc = copy.copy(propulsion.acceptance)
    barred = SpeedRange("barred", "intermediate_shaft", acc.load_cases[0].name, 400 * RPM, 480 * RPM,
                        True, True, 1.3, 440 * RPM, permitted=False)
    acc.barred_ranges = [barred]
    study = dataclasses.replace(propulsion, acceptance=acc)
    panel.set_study(study)
    for tab, view in ((1, panel.campbell_view), (2, panel.response_view)):
        panel.tabs.setCurrentIndex(tab)
        _process()
        hit = [r for r in _regions(view.plot) if r.toolTip().startswith("Barred speed range")]
        assert len(hit) == 1
        assert hit[0].getRegion() == pytest.approx((400.0, 480.0))
        assert "not permitted" in hit[0].toolTip()
        assert "barred speed range (hatched)" in view.legend.texts


def test_speed_marks_by_definition():
    train = build_train(load_document(SAMPLES / "compressor_train.json"))
    op = train.operating
    marks = {m.kind: m for m in SA.speed_marks(train)}
    assert marks["startup"].low_rpm == 0.0 and marks["startup"].high_rpm == pytest.approx(op.speed_min / RPM)
    assert (marks["operating"].low_rpm, marks["operating"].high_rpm) == pytest.approx(
        (op.speed_min / RPM, op.speed_max / RPM))
    assert (marks["overspeed"].low_rpm, marks["overspeed"].high_rpm) == pytest.approx(
        (op.speed_max / RPM, op.trip_speed / RPM))
    # joined ranges keep every text
    joined = SA._join([(10.0, 20.0, "a"), (15.0, 30.0, "b"), (40.0, 50.0, "c")])
    assert joined == [(10.0, 30.0, ["a", "b"]), (40.0, 50.0, ["c"])]


def test_acceptance_in_us_units(panel, engine):
    panel.set_study(engine)
    panel.set_unit_system("US")
    rv = panel.response_view
    torque = [r for r in rv.acceptance_model.rows if r.extra["check"].unit == "N*m"]
    stress = [r for r in rv.acceptance_model.rows if r.extra["check"].unit == "Pa"]
    assert torque and all(r.cells[5].endswith("lbf·ft") for r in torque)
    assert stress and all(r.cells[5].endswith("ksi") or r.cells[5].endswith("psi") for r in stress)
    # the value in US units is the SI value converted (core.units), to three digits
    from core import units
    c = torque[0].extra["check"]
    found = float(torque[0].cells[5].split(" / ")[0])
    assert found == pytest.approx(units.convert(c.value, units.TORQUE, "lbf*ft"), rel=5e-3)
    panel.set_unit_system("SI")
    assert rv.acceptance_model.rows[0].cells[5].endswith(("kN·m", "MPa", "kW")) or "/" in rv.acceptance_model.rows[0].cells[5]
