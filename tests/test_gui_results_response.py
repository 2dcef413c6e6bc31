"""Forced-response view of the desktop program (issue 6, item 4), offscreen.

First against a small hand-made Response (the agreed core.response API), so
the view's contract is pinned independently of the solver; then against the
real core.response on the samples that carry amplitudes.  Expected values
are the Response's own arrays: the view must draw them unchanged.
"""
from __future__ import annotations

import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

pytest.importorskip("pytestqt")
import pyqtgraph as pg  # noqa: E402
from PySide6 import QtCore  # noqa: E402

from app import formatting as fmt  # noqa: E402
from app.gui.results import ResultsPanel  # noqa: E402
from app.gui.results.response_view import PHASED, SHARE, STRESS, TORQUE, ResponseView  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.screening import screen  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_projects"
RPM = 2.0 * math.pi / 60.0


def _fake():
    train = build_train(load_document(SAMPLES / "pump_set.json"))
    speed = np.linspace(100.0, 200.0, 51)  # rad/s
    links = train.link_ids
    n_l, n_s = len(links), speed.size
    base = np.vstack([(k + 1) * 1000.0 * (1 + 0.5 * np.sin(speed / 20.0)) for k in range(n_l)])
    order_torque = np.stack([0.6 * base, 0.4 * base])
    stress = np.full((n_l, n_s), np.nan)
    stress[0] = base[0] * 2e3
    resp = SimpleNamespace(
        speed=speed, link_ids=links, disc_ids=train.disc_ids,
        link_torque=base, link_torque_phased=0.8 * base, link_stress=stress,
        disc_angle=np.zeros((len(train.discs), n_s)), link_power=np.zeros((n_l, n_s)),
        orders=["Motor, order 1", "Motor, order 2"], order_link_torque=order_torque)
    summary = []
    for j, lid in enumerate(links):
        k = int(np.argmax(base[j]))
        permissible = 2500.0 if j == 1 else None
        summary.append(SimpleNamespace(
            link_id=lid, kind=train.links[j].kind, peak_torque=float(base[j, k]),
            speed_at_peak_torque=float(speed[k]), permissible_torque=permissible,
            peak_stress=float(stress[j, k]) if j == 0 else None,
            speed_at_peak_stress=float(speed[k]) if j == 0 else None, permissible_stress=None,
            passed=None if permissible is None else bool(base[j].max() <= permissible)))
    exceeded = [SimpleNamespace(link_id=links[1], quantity="torque", peak=float(base[1].max()),
                                permissible=2500.0, speed=float(speed[int(np.argmax(base[1]))]))]
    return train, resp, summary, exceeded


@pytest.fixture
def view(qtbot):
    v = ResponseView()
    qtbot.addWidget(v)
    v.resize(1000, 700)
    v.show()
    return v


def _curves(view):
    return {c.name(): c for c in view.plot.listDataItems() if isinstance(c, pg.PlotDataItem) and c.name()}


def test_fake_response_torque_curves_are_the_response_rows(view):
    train, resp, summary, exceeded = _fake()
    view.set_response(train, resp, summary, exceeded)
    view.set_checked_links(resp.link_ids)
    curves = _curves(view)
    assert set(curves) == set(resp.link_ids)
    for j, lid in enumerate(resp.link_ids):
        assert np.allclose(curves[lid].xData, resp.speed / RPM)
        assert np.allclose(curves[lid].yData, resp.link_torque[j])


def test_fake_response_order_choices(view):
    train, resp, summary, exceeded = _fake()
    view.set_response(train, resp, summary, exceeded)
    view.set_checked_links([resp.link_ids[0]])
    view.combination.setCurrentText(PHASED)
    assert np.allclose(_curves(view)[resp.link_ids[0]].yData, resp.link_torque_phased[0])
    view.combination.setCurrentIndex(3)  # the second order alone
    assert np.allclose(_curves(view)[resp.link_ids[0]].yData, resp.order_link_torque[1, 0])


def test_fake_response_stress_and_share(view):
    train, resp, summary, exceeded = _fake()
    view.set_response(train, resp, summary, exceeded)
    view.set_checked_links(resp.link_ids)
    view.quantity.setCurrentText(STRESS)
    curves = _curves(view)
    assert list(curves) == [resp.link_ids[0]]  # the only link with geometry
    assert np.allclose(curves[resp.link_ids[0]].yData, resp.link_stress[0])
    view.quantity.setCurrentText(SHARE)
    curves = _curves(view)
    assert list(curves) == [resp.link_ids[1]]  # the only link with a permissible value
    assert np.allclose(curves[resp.link_ids[1]].yData, 100.0 * resp.link_torque[1] / 2500.0)


def test_fake_response_permissible_line_and_verdict(view):
    train, resp, summary, exceeded = _fake()
    view.set_response(train, resp, summary, exceeded)
    view.quantity.setCurrentText(TORQUE)
    view.set_checked_links([resp.link_ids[1]])
    lines = [i for i in view.plot.items if isinstance(i, pg.InfiniteLine) and i.angle == 0]
    assert [pytest.approx(l.value()) for l in lines] == [2500.0]
    assert "exceeded" in view.verdict.text() and resp.link_ids[1] in view.verdict.text()


def test_fake_response_peak_table(view):
    train, resp, summary, exceeded = _fake()
    view.set_response(train, resp, summary, exceeded)
    m = view.peak_model
    assert m.rowCount() == len(summary)
    for r, p in enumerate(summary):
        cell = lambda c: m.data(m.index(r, c), QtCore.Qt.DisplayRole)  # noqa: E731
        assert cell(0) == p.link_id
        assert cell(2) == fmt.torque_knm(p.peak_torque)
        assert cell(3) == fmt.rpm(p.speed_at_peak_torque)
        assert cell(4) == fmt.torque_knm(p.permissible_torque)
        assert cell(5) == fmt.stress_mpa(p.peak_stress)
        assert cell(8) == ("—" if p.passed is None else ("PASS" if p.passed else "FAIL"))


# ------------------------------------------------------------ the real core.response
@pytest.mark.parametrize("name", ["engine_genset", "propulsion_line"])
def test_real_response_in_the_panel(qtbot, name, tmp_path):
    core_response = pytest.importorskip("core.response")
    train = build_train(load_document(SAMPLES / f"{name}.json"))
    if not core_response.has_amplitudes(train):
        pytest.skip("sample has no amplitudes")
    resp = core_response.forced_response(train)
    s = screen(train)
    panel = ResultsPanel()
    qtbot.addWidget(panel)
    panel.resize(1200, 800)
    panel.show()
    panel.set_results(train, s.modes, s, resp, 0.01)
    panel.tabs.setCurrentIndex(2)  # the plot is drawn when its tab shows
    assert panel.tabs.isTabEnabled(2)
    rv = panel.response_view
    summary = core_response.response_summary(resp)
    assert rv.peak_model.rowCount() == len(summary)
    assert [r.cells[0] for r in rv.peak_model.rows] == [p.link_id for p in summary]
    rv.set_checked_links(resp.link_ids)
    curves = _curves(rv)
    for j, lid in enumerate(resp.link_ids):
        assert np.allclose(curves[lid].yData, resp.link_torque[j], equal_nan=True)
    out = tmp_path / "response.png"
    panel.export_plot("response", str(out))
    assert out.stat().st_size > 1000


def test_no_response_disables_the_tab(qtbot):
    train = build_train(load_document(SAMPLES / "pump_set.json"))
    s = screen(train)
    panel = ResultsPanel()
    qtbot.addWidget(panel)
    panel.set_results(train, s.modes, s, None)
    assert not panel.tabs.isTabEnabled(2)
    with pytest.raises(ValueError):
        panel.export_plot("response", "unused.png")
