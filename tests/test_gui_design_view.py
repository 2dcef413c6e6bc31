"""The design-options view of the desktop program (offscreen).

What it shows is checked against core.design (the windows and sensitivities, themselves
verified in tests/test_design.py) and, for a two-disc train, against closed forms:

* one elastic mode, f = (1 / 2 pi) sqrt(k (J1 + J2) / (J1 J2)) (any vibration text, e.g.
  W. T. Thomson, Theory of Vibration with Applications, the two-disc torsional system --
  from memory), so the window edges of the coupling's stiffness for a fixed excitation
  frequency f_e and margin m are k = (2 pi f)^2 J1 J2 / (J1 + J2) at f = f_e (1 -+ m), and
  those of disc 1's inertia 1 / J1 = (2 pi f)^2 / k - 1 / J2;
* d ln f / d ln k = 1/2 (the only spring) and d ln f / d ln J1 = -J2 / (2 (J1 + J2)), by
  differentiating ln f = (ln(J1 + J2) - ln J1 - ln J2 + ln k) / 2 (from the formula above);
* Rayleigh's quotient: the stiffness sensitivities of any mode sum to 1/2 (each is half its
  link's strain-energy share; Lord Rayleigh, The Theory of Sound, sec. 88 -- from memory).
"""
from __future__ import annotations

import copy
import csv
import itertools
import math
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pytestqt")
from PySide6 import QtCore, QtGui, QtWidgets  # noqa: E402

from app.gui import main_window as mw  # noqa: E402
from app.gui.results import design_view as DV  # noqa: E402
from app.gui.results.panel import TAB_DESIGN  # noqa: E402
from core import units  # noqa: E402
from core.about import CAUTION  # noqa: E402
from core.design import element_window  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import run_study  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = sorted((ROOT / "sample_projects").glob("*.json"))
FAN = ROOT / "sample_projects" / "fan_drive.json"
SIZES = [(1366, 768), (1600, 1000)]
KNM = 1e3  # N*m/rad per kN*m/rad

# the two-disc train of the closed forms
J1, J2, K, F_E, MARGIN = 2.0, 3.0, 1.0e5, 50.0, 0.10


def two_disc_doc() -> dict:
    return {
        "format": "twistwise-project", "version": 1, "title": "Two discs and a coupling",
        "discs": [{"id": "a", "name": "Driver", "inertia": f"{J1} kg*m^2"},
                  {"id": "b", "name": "Driven", "inertia": f"{J2} kg*m^2"}],
        "links": [{"id": "c", "kind": "coupling", "from": "a", "to": "b", "stiffness": f"{K} N*m/rad"}],
        "reference": "a",
        "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
        "margin_percent": 100 * MARGIN,
        "excitations": [{"name": "Fixed 50 Hz", "frequency": f"{F_E} Hz", "applied_at": "a"}],
    }


def _study(doc):
    return run_study(build_train(doc))


@pytest.fixture
def panel(results_panel):
    return results_panel(1200, 900)


def _show(panel, study, qtbot=None):
    panel.set_study(study)
    panel.tabs.setCurrentIndex(TAB_DESIGN)
    for _ in range(3):
        QtWidgets.QApplication.processEvents()
    return panel.design_view


def _kn(v_si: float) -> str:
    return DV.number_text(v_si / KNM)


# ------------------------------------------------------------ what is listed and shown
def test_the_coupling_comes_first_and_its_window_is_the_studys(panel):
    study = _study(load_document(FAN))
    dv = _show(panel, study)
    els = dv.elements()
    assert els[0] == ("coupling", "stiffness")
    # then the other links, then the discs (by name in the picker, not by id)
    assert [q for _e, q in els[1:3]] == ["stiffness", "stiffness"]
    assert {e for e, q in els if q == "inertia"} == set(study.train.disc_ids)
    texts = [dv.picker.itemText(i) for i in range(dv.picker.count())]
    assert "Fan impeller — inertia" in texts and "Couplings" == texts[0]
    assert dv.window() is study.design.window("coupling", "stiffness")  # never re-chosen


def test_the_admissible_range_shown_is_core_s(panel):
    study = _study(load_document(FAN))
    dv = _show(panel, study)
    ref = element_window(study.train, "coupling", "stiffness", screening_margin=study.screening.margin)
    rows = [r for r in dv.range_model.rows if r.cells[0] == "admissible"]
    assert [(r.cells[1], r.cells[2]) for r in rows] == [(_kn(a), _kn(b)) for a, b in ref.admissible]
    # the remedy of the sample: about 155 to 295 kN*m/rad (sample_projects/fan_drive.json)
    assert any(150 <= a / KNM <= 160 and 290 <= b / KNM <= 300 for a, b in ref.admissible)
    # written inwards: 295.3 would lie just outside the interval's upper end (295.2856)
    assert "Nearest admissible value: 295.2 kN·m/rad" in dv.ranges_note.text()
    blocked = [r for r in dv.range_model.rows if r.cells[0] == "blocked"]
    assert len(blocked) == len(ref.blocked) and all(r.status == "fail" for r in blocked)


def test_two_disc_window_edges_are_the_closed_form(panel, qtbot):
    dv = _show(panel, _study(two_disc_doc()))
    w = dv.window()
    # closed form (module docstring): k = (2 pi f)^2 J1 J2 / (J1 + J2) at f = f_e (1 -+ m)
    k_lo = (2 * math.pi * F_E * (1 - MARGIN)) ** 2 * J1 * J2 / (J1 + J2)
    k_hi = (2 * math.pi * F_E * (1 + MARGIN)) ** 2 * J1 * J2 / (J1 + J2)
    assert len(w.admissible) == 2
    assert w.admissible[0][1] == pytest.approx(k_lo, rel=1e-8)
    assert w.admissible[1][0] == pytest.approx(k_hi, rel=1e-8)
    cells = [(r.cells[1], r.cells[2]) for r in dv.range_model.rows if r.cells[0] == "admissible"]
    assert cells[0][1] == _kn(k_lo) and cells[1][0] == _kn(k_hi)
    assert not w.current_clears and "FAIL" in dv.now_label.text()

    # a disc's window is not in the study: computed on the worker, with the same closed form
    dv.select_element("a", "inertia")
    assert dv.window() is None and "Computing" in dv.message.text()
    qtbot.waitUntil(lambda: dv.window() is not None, timeout=10000)
    wj = dv.window()
    j_small = 1.0 / ((2 * math.pi * F_E * (1 + MARGIN)) ** 2 / K - 1.0 / J2)
    j_large = 1.0 / ((2 * math.pi * F_E * (1 - MARGIN)) ** 2 / K - 1.0 / J2)
    assert wj.quantity == "inertia" and len(wj.admissible) == 2
    assert wj.admissible[0][1] == pytest.approx(j_small, rel=1e-8)
    assert wj.admissible[1][0] == pytest.approx(j_large, rel=1e-8)


def test_a_window_computed_here_starts_after_the_redraw(panel, qtbot):
    """The view's own window job waits until what it shows now is painted (a worker running
    Python beside the redraw would slow it through the interpreter lock), and a newer choice
    replaces a job still waiting."""
    dv = _show(panel, _study(two_disc_doc()))
    dv.select_element("a", "inertia")
    assert "Computing" in dv.message.text() and not dv._running  # queued, not started
    dv.select_element("b", "inertia")  # chosen before the first job started: only this one runs
    qtbot.waitUntil(lambda: dv.window() is not None, timeout=10000)
    assert dv.window().element == "b" and "a" not in {e for e, _q in dv._own}


def test_two_disc_sensitivities_are_the_closed_form(panel):
    dv = _show(panel, _study(two_disc_doc()))
    bars = {(q, e): v for q, e, v in dv.sensitivity_bars()}
    assert bars[("stiffness", "c")] == pytest.approx(0.5, abs=1e-9)
    assert bars[("inertia", "a")] == pytest.approx(-J2 / (2 * (J1 + J2)), abs=1e-9)
    assert bars[("inertia", "b")] == pytest.approx(-J1 / (2 * (J1 + J2)), abs=1e-9)


# ------------------------------------------------------------ trying a value
def test_a_value_inside_the_admissible_range_passes_beside_the_failing_current(panel, qtbot):
    dv = _show(panel, _study(load_document(FAN)))
    assert "FAIL" in dv.now_label.text() and "Motor once and twice per rev, order 2" in dv.now_label.text()
    dv.try_value(220 * KNM)
    assert dv.tried_value() == 220 * KNM
    assert dv.tried_label.text().startswith("Tried 220 kN·m/rad, separation: PASS")
    assert dv.now_label.text().startswith("Now 380 kN·m/rad, separation: FAIL")
    assert dv.use_button.isEnabled()
    dv.try_value(100 * KNM)  # blocked: mode 1 against once per rev
    assert "FAIL" in dv.tried_label.text() and "order 1" in dv.tried_label.text()
    # the nearest admissible value is an edge: tried as written, it stays admissible
    dv.try_nearest()
    v = dv.tried_value()
    assert "PASS" in dv.tried_label.text() and DV.verdict_at(dv.window(), v)[0] is True
    assert v == pytest.approx(295.2 * KNM, rel=1e-12)
    assert units.parse(DV.quantity_text(v, "stiffness", "SI"), units.STIFFNESS) == pytest.approx(v, rel=1e-12)


def test_clicking_the_chart_and_dragging_the_line_try_values(panel, qtbot):
    dv = _show(panel, _study(load_document(FAN)))
    vb = dv.plot.vb
    x = math.log10(200.0)  # kN*m/rad on the chart's log axis
    y = sum(vb.viewRange()[1]) / 2
    pos = dv.canvas.mapFromScene(vb.mapViewToScene(QtCore.QPointF(x, y)))
    qtbot.mouseClick(dv.canvas.viewport(), QtCore.Qt.LeftButton, pos=pos)
    assert dv.tried_value() == pytest.approx(200 * KNM, rel=0.02)
    assert "PASS" in dv.tried_label.text()
    dv.tried_line.setValue(math.log10(1000.0))  # as a drag does
    assert dv.tried_value() == pytest.approx(1000 * KNM, rel=1e-3)
    assert "FAIL" in dv.tried_label.text()


def test_clicking_a_range_row_tries_its_middle(panel):
    dv = _show(panel, _study(load_document(FAN)))
    row = next(i for i, r in enumerate(dv.range_model.rows) if r.cells[0] == "admissible" and r.key[0] > 1e5)
    dv._range_clicked(dv.range_model.index(row, 0))
    a, b = dv.range_model.rows[row].key
    assert a <= dv.tried_value() <= b and "PASS" in dv.tried_label.text()


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    monkeypatch.setattr(mw, "recovery_dir", lambda: tmp_path / "recovery")
    made = []

    def make(path=FAN, size=(1366, 768), system="SI"):
        settings = QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.IniFormat)
        settings.setValue("unit_system", system)
        win = mw.MainWindow(settings=settings, autosave=False)
        win.resize(*size)
        win.load_document(load_document(path), str(path))
        win.show()
        qtbot.waitExposed(win)
        win.runner.compute_now(win.project.train)
        win.results_panel.tabs.setCurrentIndex(TAB_DESIGN)
        for _ in range(3):
            QtWidgets.QApplication.processEvents()
        made.append(win)
        return win

    yield make
    for win in made:
        win.project.undo_stack.setClean()
        win.results_panel.design_view.wait()
        win.runner.wait()
        win.close()
        win.deleteLater()


def test_use_this_value_is_one_undo_step_that_undo_restores_exactly(window, qtbot):
    win = window()
    dv = win.results_panel.design_view
    before = copy.deepcopy(win.project.doc)
    stack = win.project.undo_stack
    n = stack.count()
    dv.try_value(220 * KNM)
    qtbot.mouseClick(dv.use_button, QtCore.Qt.LeftButton)
    assert stack.count() == n + 1
    i = [l["id"] for l in win.project.doc["links"]].index("coupling")
    assert win.project.doc["links"][i]["stiffness"] == "220 kN*m/rad"
    assert win.project.train.links[i].stiffness == pytest.approx(220 * KNM)
    assert "coupling" in stack.undoText()
    # the new study: the coupling now clears every excitation
    win.runner.compute_now(win.project.train)
    QtWidgets.QApplication.processEvents()
    assert "PASS" in dv.now_label.text() and dv.now_label.text().startswith("Now 220 kN·m/rad")
    stack.undo()
    assert win.project.doc == before and win.project.doc["links"][i]["stiffness"] == "380 kN*m/rad"


def test_use_this_value_in_us_units_writes_a_us_quantity(window, qtbot):
    win = window(system="US")
    dv = win.results_panel.design_view
    dv.try_value(220 * KNM)
    value = dv.tried_value()
    dv.use_tried_value()
    i = [l["id"] for l in win.project.doc["links"]].index("coupling")
    text = win.project.doc["links"][i]["stiffness"]
    assert text.endswith(" lbf*in/rad")
    assert units.parse(text, units.STIFFNESS) == pytest.approx(value, rel=1e-9)


def test_a_value_the_project_derives_cannot_be_written(window):
    """The fan shaft's stiffness comes from its segments: the button says so instead."""
    win = window()
    dv = win.results_panel.design_view
    dv.select_element("fan_shaft", "stiffness")
    dv.wait()
    QtWidgets.QApplication.processEvents()
    assert dv.window() is not None
    dv.try_value(dv.window().current * 0.5)
    assert not dv.use_button.isEnabled() and "segments" in dv.use_button.toolTip()


# ------------------------------------------------------------ sensitivities
def test_sensitivity_bars_are_sorted_and_sum_to_a_half(panel, tmp_path):
    study = _study(load_document(FAN))
    dv = _show(panel, study)
    panel.select_mode(1)  # mode 1 (index 0 is the rigid-body mode)
    bars = dv.sensitivity_bars()
    mags = [abs(v) for _q, _e, v in bars]
    assert mags == sorted(mags, reverse=True) and len(bars) <= DV.MAX_BARS
    assert all((v > 0) == (q == "stiffness") for q, _e, v in bars if abs(v) > 1e-12)
    assert "What moves mode 1" in dv.sens_title.text()
    # every stiffness sensitivity (the CSV holds them all): Rayleigh's quotient, they sum to 1/2
    out = tmp_path / "s.csv"
    panel.export_sensitivity_csv(str(out))
    rows = list(csv.reader(out.open(encoding="utf-8")))
    assert CAUTION in rows[1][0]
    stiff = [float(r[3]) for r in rows[3:] if r[2] == "stiffness"]
    assert sum(stiff) == pytest.approx(0.5, abs=1e-5)
    sens = study.design.sensitivities
    assert np.allclose(sens.stiffness.sum(axis=1), 0.5, atol=1e-9)
    # the selection follows the modes view
    panel.modes_view.select_mode(2)
    assert "What moves mode 2" in dv.sens_title.text()


def test_names_label_the_bars(panel):
    dv = _show(panel, _study(load_document(FAN)))
    ticks = [t for _y, t in dv.sens_plot.getAxis("left")._tickLevels[0]]
    assert "Motor rotor" in ticks and "motor" not in ticks


# ------------------------------------------------------------ units, no operating data, exports
def test_the_unit_system_reaches_the_value_axis_and_the_table(panel):
    dv = _show(panel, _study(load_document(FAN)))
    assert "kN·m/rad" in dv.plot.getAxis("bottom").labelText
    assert "kN·m/rad" in dv.range_model.headers[1]
    panel.set_unit_system("US")
    assert "lbf·in/rad" in dv.plot.getAxis("bottom").labelText
    assert "lbf·in/rad" in dv.range_model.headers[1]
    lbf_in = units.convert(380 * KNM, units.STIFFNESS, "lbf*in/rad")
    assert dv.now_label.text().startswith(f"Now {DV.number_text(lbf_in)} lbf·in/rad")
    dv.select_element("motor", "inertia")
    dv.wait()
    QtWidgets.QApplication.processEvents()
    assert "lb·ft²" in dv.plot.getAxis("bottom").labelText


def test_without_operating_data_the_tab_looks_disabled_and_shows_the_sensitivities(panel):
    doc = two_disc_doc()
    del doc["excitations"]
    dv = _show(panel, _study(doc))
    i = panel.tab_index("design_options")
    assert panel.tabs.isTabEnabled(i)
    assert panel.tabs.tabBar().tabTextColor(i) == QtGui.QColor("#a3abb5")
    assert panel.tabs.tabToolTip(i) == dv.NO_OPERATING == dv.limited
    assert dv.sensitivity_bars() and not dv.picker.isEnabled() and dv.window() is None
    assert not dv.use_button.isEnabled()
    # operating data again: the tab looks as any other
    dv = _show(panel, _study(two_disc_doc()))
    assert not panel.tabs.tabBar().tabTextColor(i).isValid() and dv.limited is None


def test_exports(panel, tmp_path):
    dv = _show(panel, _study(load_document(FAN)))
    texts = [a.text() for a in panel.export_menu_actions(panel) if not a.isSeparator()]
    assert "Design options chart as PNG…" in texts and "Sensitivity chart as SVG…" in texts
    out = tmp_path / "d.csv"
    panel.export_design_csv(str(out))
    rows = list(csv.reader(out.open(encoding="utf-8")))
    assert CAUTION in rows[1][0] and rows[2][1] == "From, kN·m/rad"
    assert [r[1:3] for r in rows[3:]] == [r.cells[1:3] for r in dv.range_model.rows]
    for which in ("design", "sensitivity"):
        png = tmp_path / f"{which}.png"
        panel.export_plot(which, str(png))
        assert QtGui.QImage(str(png)).width() >= 1000


# ------------------------------------------------------------ pure helpers
def test_numbers_and_written_quantities():
    assert DV.number_text(295.2856) == "295.3" and DV.number_text(3363258.0) == "3363000"
    assert DV.number_text(0.0123456) == "0.01235" and DV.number_text(220.0) == "220"
    assert DV.quantity_text(152.3e3, "stiffness", "SI") == "152.3 kN*m/rad"
    v = 152_345.678
    text = DV.quantity_text(v, "stiffness", "SI")
    assert units.parse(text, units.STIFFNESS) == pytest.approx(v, rel=1e-9)
    assert DV.short_line("Motor once and twice per rev, order 2") == "2×"
    assert DV.short_line("Engine gas and inertia torque, order 3 (major)") == "3×"
    assert DV.short_line("Twice line frequency (100 Hz)") == "100 Hz"
    assert DV.merged_bands([("a", 10, 20), ("b", 15, 30), ("c", 40, 50)]) == [(10, 30, ["a", "b"]),
                                                                              (40, 50, ["c"])]


# ------------------------------------------------------------ legibility on every sample
def _overlap(a: QtCore.QRectF, b: QtCore.QRectF) -> bool:
    return a.intersected(b).width() > 0.5 and a.intersected(b).height() > 0.5


@pytest.mark.parametrize("size", SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
@pytest.mark.parametrize("path", SAMPLES, ids=[p.stem for p in SAMPLES])
def test_the_design_view_is_legible(window, path, size, tmp_path):
    win = window(path, size)
    panel = win.results_panel
    dv = panel.design_view
    assert panel.tabs.currentIndex() == TAB_DESIGN
    win.grab().save(str(tmp_path / f"{path.stem}_{size[0]}x{size[1]}.png"))
    assert dv.window() is not None
    vb = dv.plot.vb.sceneBoundingRect()
    assert vb.height() > 120 and vb.width() > 250, "the chart is squeezed by its surroundings"
    rects = dv.label_rects()
    assert rects
    for a, b in itertools.combinations(rects, 2):
        assert not _overlap(a, b), "two labels of the chart overlap"
    for r in rects:
        assert vb.adjusted(-2, -2, 2, 2).contains(r), "a label leaves the chart"
    # the bars' names each have a line of their own
    line = QtGui.QFontMetricsF(DV.theme.font(DV.theme.SMALL_POINT_SIZE)).height()
    assert len(dv.sensitivity_bars()) >= 3
    y0, y1 = dv.sens_plot.vb.viewRange()[1]
    assert dv.sens_plot.vb.height() / (y1 - y0) >= line  # px per bar
    bars_vb = dv.sens_plot.vb.sceneBoundingRect().adjusted(-1, -1, 1, 1)
    for t in dv.bar_texts:  # each bar's value is written whole beside it
        assert bars_vb.contains(DV._scene_rect(t)), t.textItem.toPlainText()
    # the verdicts are not cut
    for label in (dv.now_label, dv.tried_label):
        assert label.heightForWidth(label.width()) <= label.height() + 1


# ------------------------------------------------------------ live edits, stages, stale model
def test_a_live_edit_shows_the_new_studys_window(window, qtbot):
    """The study comes in two stages (app.gui.compute): the windows follow the modes; the view
    shows the study's own window once it is there, and keeps the element chosen."""
    win = window()
    dv = win.results_panel.design_view
    dv.select_element("coupling", "stiffness")
    i = [l["id"] for l in win.project.doc["links"]].index("coupling")
    win._edit(("links", i, "stiffness"), "250 kN*m/rad", "edit")
    qtbot.waitUntil(lambda: win.results is not None and win.results.complete
                    and win.results.train.links[i].stiffness == 250e3, timeout=20000)
    QtWidgets.QApplication.processEvents()
    study = win.results.study
    assert dv.window() is study.design.window("coupling", "stiffness")
    assert dv.now_label.text().startswith("Now 250 kN·m/rad, separation: PASS")


def test_a_study_without_its_windows_gets_them_from_the_view(panel, qtbot):
    from core.study import StudyOptions
    train = build_train(load_document(FAN))
    study = run_study(train, StudyOptions(parts=frozenset({"screening", "sensitivities"})))
    assert study.design is not None and not study.design.windows
    dv = _show(panel, study)
    assert dv.window() is None and "Computing" in dv.message.text()
    qtbot.waitUntil(lambda: dv.window() is not None, timeout=DV.FALLBACK_MS + 10000)
    ref = element_window(train, "coupling", "stiffness", screening_margin=study.screening.margin)
    assert np.allclose(dv.window().admissible, ref.admissible, rtol=1e-12)


def test_no_value_is_used_while_the_model_on_screen_has_an_error(panel):
    dv = _show(panel, _study(load_document(FAN)))
    dv.try_value(220 * KNM)
    assert dv.use_button.isEnabled()
    panel.set_stale("disc 'motor': inertia must not be negative")
    assert not dv.use_button.isEnabled() and "error" in dv.use_button.toolTip()
    seen = []
    dv.designValueChosen.connect(lambda *a: seen.append(a))
    dv.use_tried_value()
    assert not seen
    panel.set_stale(None)
    dv.use_tried_value()
    assert seen == [("coupling", "stiffness", 220 * KNM)]
