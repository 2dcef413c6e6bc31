"""Damped natural frequencies and damping ratios in the Modes view (issue 13 item 4),
offscreen.  The study gets ``damped`` (core.damped.DampedModes) and, for a train with a
viscous damper, ``damper`` (core.damped.DamperBounds) from the core; the view shows them
in a tab beside the undamped frequencies, and nothing when the study has none.

Outside reference: two discs J1, J2 joined by a spring k and a dashpot c vibrate in their
relative angle as one mass J = J1 J2 / (J1 + J2): omega_n = sqrt(k / J),
zeta = c / (2 sqrt(k J)), omega_d = omega_n sqrt(1 - zeta^2) (any vibration text, e.g.
W. T. Thomson, Theory of Vibration with Applications, ch. 2 — from memory).
"""
from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import pytest

pytest.importorskip("pytestqt")
from app import formatting as fmt  # noqa: E402
from core.damped import damped_modes, damper_bounds  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import run_study  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_projects"


@pytest.fixture
def panel(results_panel):
    return results_panel(1300, 850)


def _two_discs(J1=2.0, J2=3.0, k=8.0e4, c=40.0):
    doc = {"format": "twistwise-project", "version": 1, "title": "Two discs",
           "discs": [{"id": "a", "inertia": f"{J1} kg*m^2"}, {"id": "b", "inertia": f"{J2} kg*m^2"}],
           "links": [{"id": "ab", "kind": "coupling", "from": "a", "to": "b", "stiffness": f"{k} N*m/rad",
                      "damping": f"{c} N*m*s/rad"}]}
    return build_train(doc)


def test_two_discs_against_the_closed_form(panel):
    J1, J2, k, c = 2.0, 3.0, 8.0e4, 40.0
    train = _two_discs(J1, J2, k, c)
    study = dataclasses.replace(run_study(train), damped=damped_modes(train))
    panel.set_study(study)
    mv = panel.modes_view
    assert mv.left_tabs.indexOf(mv.damped_page) == 1
    assert not mv.left_tabs.tabBar().isHidden()
    J = J1 * J2 / (J1 + J2)
    wn = math.sqrt(k / J)
    zeta = c / (2.0 * math.sqrt(k * J))
    fd = wn * math.sqrt(1.0 - zeta ** 2) / (2.0 * math.pi)
    rows = mv.damped_model.rows
    assert len(rows) == 1
    assert rows[0].cells[1] == fmt.hz(fd)
    assert rows[0].cells[2] == fmt.percent(zeta)
    assert rows[0].cells[3] == fmt.hz(wn / (2.0 * math.pi))
    assert not mv.damper_table.isVisibleTo(mv)  # no viscous damper here


def test_no_damped_no_tab(panel):
    study = run_study(build_train(load_document(SAMPLES / "pump_set.json")))
    assert study.damped is None
    panel.set_study(study)
    mv = panel.modes_view
    assert mv.left_tabs.indexOf(mv.damped_page) < 0
    assert mv.left_tabs.tabBar().isHidden()  # one tab: no tab bar


def test_damper_free_and_locked(panel):
    train = build_train(load_document(SAMPLES / "engine_genset.json"))
    base = run_study(train)
    top = float(base.modes.frequency_hz[-1]) * (1 + 1e-9)  # the last mode inside, not on the edge
    bounds = damper_bounds(train, top)
    assert bounds is not None
    study = dataclasses.replace(base, damper=bounds, damped=damped_modes(train, max_frequency_hz=1.5 * top))
    panel.set_study(study)
    mv = panel.modes_view
    mv.left_tabs.setCurrentIndex(1)
    assert mv.damper_table.isVisible() and mv.damper_note.isVisible()
    assert bounds.statement in mv.damper_note.text()
    assert train.name_of(bounds.links[0]) in mv.damper_note.text()
    cells = [r.cells for r in mv.damper_model.rows]
    assert [c[1] for c in cells] == [fmt.hz(f) for f in bounds.free_hz]
    assert [c[2] for c in cells] == [fmt.hz(f) for f in bounds.locked_hz]
    # the engine's loss factors and its damper ring's creep are said beside the damped table
    assert "overdamped" in mv.damped_note.text() and "loss factors" in mv.damped_note.text()
    # a study without them again: the tab goes
    panel.set_study(dataclasses.replace(base, damped=None, damper=None))
    assert mv.left_tabs.indexOf(mv.damped_page) < 0
