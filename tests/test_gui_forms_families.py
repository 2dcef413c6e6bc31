"""Editors of the key families the file format gained (acceptance, excitation physics,
transients, design options): for each, typing a value with a unit, a wrong value framed red
with the field named, undo restoring the file exactly, and the model built from the edit.

Reference values: the project-file grammar and checks of core (loads, ratings, engine,
electric, gears, events) run on the edited document; the mesh stiffness k = c_gamma b r_b^2
and the tooth ratio z_from / z_to are checked against hand-worked numbers (core.gears cites
the gear-rating practice they come from)."""
from __future__ import annotations

import copy
import json
import os
import shutil
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6 import QtCore, QtWidgets  # noqa: E402

from app.gui import edits  # noqa: E402
from app.gui import main_window as mw  # noqa: E402
from app.gui.editors import (ERROR_STYLE, TOLERANCE, ChoiceField, Field, TableEditor,  # noqa: E402
                             parse_pasted, stored_value, text_problem)
from core.project import build_train, load_document  # noqa: E402

SAMPLES_DIR = Path(__file__).resolve().parent.parent / "sample_projects"
PUMP, ENGINE, PROPULSION, TWIN, SYNC = (SAMPLES_DIR / f"{n}.json" for n in (
    "pump_set", "engine_genset", "propulsion_line", "twin_pump_gearbox", "sync_motor_compressor"))


@pytest.fixture
def window(qtbot, tmp_path, monkeypatch):
    monkeypatch.setattr(mw, "recovery_dir", lambda: tmp_path / "recovery")
    settings = QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.IniFormat)
    win = mw.MainWindow(settings=settings, autosave=False)
    win.runner.set_debounce(0)
    win.resize(1366, 768)
    win.show()
    qtbot.waitExposed(win)
    yield win
    win.project.undo_stack.setClean()
    win.runner.wait()
    win.close()
    win.deleteLater()


def open_sample(qtbot, win, path):
    assert win.open_path(path)
    qtbot.waitUntil(lambda: win.results is not None and win.results.train is win.project.train, timeout=15000)
    win.runner.wait()


def widget_at(win, path, cls=(Field, ChoiceField, TableEditor)):
    QtWidgets.QApplication.processEvents()
    for w in win.findChildren(QtWidgets.QWidget):
        if isinstance(w, cls) and getattr(w, "path", None) == tuple(path) and w.isVisible():
            return w
    raise AssertionError(f"no visible editor for {path}")


def type_into(qtbot, win, path, text):
    field = widget_at(win, path, Field)
    field.setFocus()
    field.selectAll()
    if text:
        qtbot.keyClicks(field, text)
    else:
        qtbot.keyClick(field, QtCore.Qt.Key_Delete)
    qtbot.keyClick(field, QtCore.Qt.Key_Return)
    return widget_at(win, path, Field)  # the form may have been rebuilt


def choose(win, path, value):
    box = widget_at(win, path, ChoiceField)
    i = box.findData(value)
    assert i >= 0, f"{value!r} not offered at {path}"
    box.setCurrentIndex(i)


def marked(field) -> bool:
    return field.styleSheet() == ERROR_STYLE and field.problem_label.isVisible()


def undo_all(win):
    while win.project.undo_stack.canUndo():
        win.project.undo_stack.undo()


def link_index(win, ident):
    return [l["id"] for l in win.project.doc["links"]].index(ident)


def show_tab(win, form, index=None):
    win.tabs.setCurrentWidget(form)
    if index is not None:
        form.select(index)
    QtWidgets.QApplication.processEvents()


# ----------------------------------------------------------------- acceptance: link ratings
def test_coupling_ratings_with_units_validation_in_place_and_undo(qtbot, window):
    open_sample(qtbot, window, PUMP)
    original = copy.deepcopy(window.project.doc)
    li = link_index(window, "coupling")
    window.set_selection(("link", "coupling"))
    type_into(qtbot, window, ("links", li, "nominal_torque"), "5 kN*m")
    type_into(qtbot, window, ("links", li, "maximum_torque"), "12")  # a bare number: the unit shown (kN*m)
    type_into(qtbot, window, ("links", li, "permissible_power"), "450 W")
    type_into(qtbot, window, ("links", li, "permissible_torque_frequency"), "none")
    type_into(qtbot, window, ("links", li, "temperature_factor"), "1.2")
    link = window.project.doc["links"][li]
    assert (link["nominal_torque"], link["maximum_torque"], link["permissible_torque_frequency"]) == \
        ("5 kN*m", "12 kN*m", "none")
    rating = window.project.train.links[li].ratings.coupling
    assert (rating.nominal_torque, rating.maximum_torque, rating.permissible_power) == (5000.0, 12000.0, 450.0)
    assert rating.reference_hz is None and rating.temperature_factor == 1.2
    # a value that does not read: framed red where it is typed, the model left alone
    f = type_into(qtbot, window, ("links", li, "nominal_torque"), "5 kg")
    assert marked(f) and "torque" in f.problem_label.text()
    window.project.undo_stack.undo()
    # a value the model refuses: core's message beside the field it names
    f = type_into(qtbot, window, ("links", li, "maximum_torque"), "2 kN*m")
    assert marked(f) and "nominal torque" in f.problem_label.text()
    assert window.project.error.field == "maximum_torque"
    undo_all(window)
    assert window.project.doc == original


def test_shaft_fatigue_propulsion_rule_strengths_and_transient_limits(qtbot, window):
    open_sample(qtbot, window, PROPULSION)
    original = copy.deepcopy(window.project.doc)
    li = link_index(window, "intermediate_shaft")
    window.set_selection(("link", "intermediate_shaft"))
    choose(window, ("links", li, "fatigue", "criterion"), "soderberg")  # creates "fatigue": {...}
    type_into(qtbot, window, ("links", li, "fatigue", "reliability_percent"), "90")
    assert window.project.doc["links"][li]["fatigue"] == {"criterion": "soderberg", "reliability_percent": 90}
    spec = window.project.train.links[li].ratings.fatigue
    assert (spec.criterion, spec.reliability_percent) == ("soderberg", 90.0)
    f = type_into(qtbot, window, ("links", li, "fatigue", "temperature_factor"), "1.5")
    assert marked(f) and "between 0 and 1.2" in f.problem_label.text()  # core's range, named in place
    window.project.undo_stack.undo()
    type_into(qtbot, window, ("links", li, "permissible_stress_transient"), "80 MPa")
    assert window.project.train.links[li].ratings.permissible_stress_transient == 80e6
    # the rule's design factor given as C_K instead of a feature: one or the other
    choose(window, ("links", li, "propulsion_shaft", "design_feature"), None)
    assert window.project.error is not None and "design factor" in window.project.error.message
    type_into(qtbot, window, ("links", li, "propulsion_shaft", "shaft_design_factor"), "0.9")
    assert window.project.error is None
    assert window.project.train.links[li].ratings.propulsion.design_factors == (0.9,)
    # switching the rule off removes its object in one step
    choose(window, ("links", li, "propulsion_shaft", "position"), None)
    assert "propulsion_shaft" not in window.project.doc["links"][li]
    undo_all(window)
    assert window.project.doc == original  # the created "fatigue" object goes too


def test_custom_material_strengths_and_an_s_n_curve(qtbot, window):
    open_sample(qtbot, window, SYNC)
    original = copy.deepcopy(window.project.doc)
    li = link_index(window, "pinion_shaft")
    window.set_selection(("link", "pinion_shaft"))
    type_into(qtbot, window, ("sn_curves", "pinion_shaft", "endurance_limit"), "60 MPa")
    curve = dict(window.project.train.sn_curves)["pinion_shaft"]
    assert curve.endurance_limit == 60e6
    f = type_into(qtbot, window, ("sn_curves", "pinion_shaft", "slope"), "-3")
    assert marked(f) and "greater than zero" in f.problem_label.text()
    window.project.undo_stack.undo()
    # a custom material gives its strengths
    form = window.property_form
    QtWidgets.QApplication.processEvents()
    combo = next(c for c in form.findChildren(QtWidgets.QComboBox)
                 if c.isVisible() and c.findText("custom") >= 0 and c.findText("alloy_steel") >= 0)
    combo.setCurrentText("custom")
    type_into(qtbot, window, ("links", li, "material", "tensile_strength"), "900 MPa")
    type_into(qtbot, window, ("links", li, "material", "yield_strength"), "700")  # MPa shown
    choose(window, ("links", li, "material", "steel"), "alloy")
    m = window.project.train.links[li].material
    assert (m.tensile_strength, m.yield_strength, m.steel) == (900e6, 700e6, "alloy")
    f = type_into(qtbot, window, ("links", li, "material", "yield_strength"), "950 MPa")
    assert marked(f) and "tensile strength" in f.problem_label.text()
    undo_all(window)
    assert window.project.doc == original


# ----------------------------------------------------------------- acceptance: load cases
def test_load_cases_tab_law_point_shares_scales_and_a_pasted_table(qtbot, window):
    open_sample(qtbot, window, TWIN)
    original = copy.deepcopy(window.project.doc)
    show_tab(window, window.load_cases_form, 0)
    type_into(qtbot, window, ("load_cases", 0, "power"), "550 kW")
    assert window.project.train.load_cases[0].power == 550e3
    type_into(qtbot, window, ("load_cases", 0, "speed"), "1480")  # rpm shown
    assert window.project.doc["load_cases"][0]["speed"] == "1480 rpm"
    f = type_into(qtbot, window, ("load_cases", 0, "power"), "5 kg")
    assert marked(f) and "power" in f.problem_label.text()
    window.project.undo_stack.undo()
    # shares that do not add to 100 %: the problem is said where the list is
    type_into(qtbot, window, ("load_cases", 0, "driven", 0, "share"), "60 %")
    form = window.load_cases_form
    assert window.project.error is not None and "100 %" in window.project.error.message
    assert form.detail_problem.isVisible() and "100 %" in form.detail_problem.text()
    window.project.undo_stack.undo()
    # a factor on one excitation's amplitudes
    name = window.project.doc["excitations"][0]["name"]
    next(ed for ed in form._editors if hasattr(ed, "show_map")).add_button.click()
    assert window.project.doc["load_cases"][0]["excitation_scale"] == {name: 1}
    type_into(qtbot, window, ("load_cases", 0, "excitation_scale", name), "50 %")
    assert dict(window.project.train.load_cases[0].excitation_scales)[name] == 0.5
    # the law as a table, pasted from a spreadsheet (tab-separated, a header row)
    choose(window, ("load_cases", 0, "law"), "table")
    table = widget_at(window, ("load_cases", 0, "table"), TableEditor)
    assert table.paste_text("speed\ttorque\n0 rpm\t1 kN*m\n1490 rpm\t3.2\n", at_cell=False)
    assert window.project.doc["load_cases"][0]["table"] == [["0 rpm", "1 kN*m"], ["1490 rpm", "3.2 kN*m"]]
    assert window.project.train.load_cases[0].table[-1][1] == pytest.approx(3200.0)
    # a cell that does not read is marked in the table and named below it
    table = widget_at(window, ("load_cases", 0, "table"), TableEditor)
    table.table.item(1, 1).setText("3.2 kg")
    table = widget_at(window, ("load_cases", 0, "table"), TableEditor)
    assert table.problem_label.isVisible() and "point 2" in table.problem_label.text()
    undo_all(window)
    assert window.project.doc == original


def test_adding_a_load_case_builds_and_renaming_it_reaches_a_transient(qtbot, window):
    open_sample(qtbot, window, SYNC)
    show_tab(window, window.load_cases_form)
    window.load_cases_form.add_button.click()
    assert window.project.error is None and window.project.train.load_cases[0].name == "Load case 1"
    doc = copy.deepcopy(window.project.doc)
    doc["transients"][0]["torques"][1] = {"at": "impellers", "load_case": "Load case 1"}
    window.project.replace(doc, "load from the load case")
    type_into(qtbot, window, ("load_cases", 0, "name"), "Rated flow")
    assert window.project.doc["transients"][0]["torques"][1]["load_case"] == "Rated flow"


# ----------------------------------------------------------------- excitation physics
def test_engine_data_block_units_checks_and_the_pressure_curve_table(qtbot, window):
    open_sample(qtbot, window, ENGINE)
    original = copy.deepcopy(window.project.doc)
    show_tab(window, window.excitations_form, 0)
    base = ("excitations", 0, "engine")
    type_into(qtbot, window, base + ("bore",), "170")  # mm shown
    assert window.project.doc["excitations"][0]["engine"]["bore"] == "170 mm"
    spec = window.project.train.operating.excitations[0].engine
    assert spec.bore == pytest.approx(0.170)
    f = type_into(qtbot, window, base + ("connecting_rod",), "80 mm")
    assert marked(f) and "longer than the crank radius" in f.problem_label.text()
    window.project.undo_stack.undo()
    f = type_into(qtbot, window, base + ("reciprocating_mass",), "6 bar")
    assert marked(f)
    window.project.undo_stack.undo()
    # one point of the curve edited in its table: one undoable edit of the list
    table = widget_at(window, base + ("pressure_curve", "points"), TableEditor)
    assert table.table.horizontalHeaderItem(1).text() == "Pressure, bar"
    table.table.item(0, 1).setText("2.5")
    assert window.project.doc["excitations"][0]["engine"]["pressure_curve"]["points"][0] == [-360, 2.5]
    # the gas torque from harmonic coefficients instead
    box = window.excitations_form.gas_box
    box.setCurrentIndex(box.findData("tangential_pressure"))
    assert "pressure_curve" not in window.project.doc["excitations"][0]["engine"]
    type_into(qtbot, window, base + ("tangential_pressure", "mean_indicated_pressure"), "21 bar")
    assert window.project.error is None
    assert window.project.train.operating.excitations[0].engine.indicated_mean_pressure == pytest.approx(21e5)
    undo_all(window)
    assert window.project.doc == original


def test_engine_excitation_made_from_an_order_excitation_builds(qtbot, window):
    open_sample(qtbot, window, PUMP)
    show_tab(window, window.excitations_form, 0)
    src = window.excitations_form.source_box
    src.setCurrentIndex(src.findData("engine"))
    e = window.project.doc["excitations"][0]
    assert "engine" in e and "orders" not in e and "at" not in e
    assert window.project.error is None, window.project.error
    assert window.project.train.operating.excitations[0].engine is not None
    choose(window, ("excitations", 0, "engine", "strokes"), 2)
    # a two-stroke cycle spans 360 degrees: whole orders only; the half order is named
    form = window.excitations_form
    assert form.detail_problem.isVisible() and "multiple of 1" in form.detail_problem.text()
    type_into(qtbot, window, ("excitations", 0, "engine", "tangential_pressure", "orders", 0, "order"), "1")
    assert window.project.error is None, window.project.error
    assert window.project.train.operating.excitations[0].engine.orders[:2] == (1.0, 2.0)


def test_electric_drive_lines_with_their_checks(qtbot, window):
    open_sample(qtbot, window, PUMP)
    original = copy.deepcopy(window.project.doc)
    show_tab(window, window.excitations_form, 0)
    src = window.excitations_form.source_box
    src.setCurrentIndex(src.findData("lines"))
    assert window.project.error is None
    line = window.project.train.operating.excitations[0].lines[0]
    assert (line.offset_hz, line.order, line.combination) == (300.0, 6.0, "difference")
    type_into(qtbot, window, ("excitations", 0, "lines", 0, "frequency_offset"), "0.3 kHz")
    window.excitations_form.drive_check.setChecked(True)
    base = ("excitations", 0, "electric_drive")
    f = type_into(qtbot, window, base + ("pole_pairs",), "1.5")
    assert marked(f) and "whole number" in f.problem_label.text()
    type_into(qtbot, window, base + ("pole_pairs",), "2")
    type_into(qtbot, window, base + ("slip",), "2 %")
    lines = window.project.train.operating.excitations[0].lines
    sixth = next(l for l in lines if l.name.startswith("6"))
    assert sixth.order == pytest.approx(6 * 2 / (1 - 0.02))  # 6 f_out per rev/s: 6 p / (1 - s)
    undo_all(window)
    assert window.project.doc == original


def test_gear_teeth_and_mesh_stiffness_from_tooth_data(qtbot, window):
    open_sample(qtbot, window, TWIN)
    original = copy.deepcopy(window.project.doc)
    li = link_index(window, "mesh_a")
    window.set_selection(("link", "mesh_a"))
    type_into(qtbot, window, ("links", li, "teeth", 1), "41")
    assert window.project.doc["links"][li]["teeth"] == [98, 41]
    assert window.project.train.links[li].speed_ratio == pytest.approx(98 / 41)  # z_from / z_to
    # a count cleared: the ratio the teeth gave stays, written as the speed ratio
    type_into(qtbot, window, ("links", li, "teeth", 0), "")
    assert "teeth" not in window.project.doc["links"][li]
    assert window.project.doc["links"][li]["speed_ratio"] == pytest.approx(98 / 41)
    assert window.project.error is None
    f = type_into(qtbot, window, ("links", li, "teeth", 0), "97.5")  # half a tooth
    assert marked(f) and "whole numbers" in f.problem_label.text()
    for _ in range(3):
        window.project.undo_stack.undo()
    assert window.project.doc == original
    # the mesh stiffness from c_gamma, face width and base radius
    QtWidgets.QApplication.processEvents()
    combo = next(c for c in window.property_form.findChildren(QtWidgets.QComboBox)
                 if c.isVisible() and c.findText("tooth data") >= 0)
    combo.setCurrentText("tooth data")
    base = ("links", li, "mesh_stiffness")
    type_into(qtbot, window, base + ("c_gamma",), "20 N/(mm*um)")
    type_into(qtbot, window, base + ("face_width",), "80 mm")
    type_into(qtbot, window, base + ("base_radius_from",), "100 mm")
    # k = c_gamma b r_b^2 = 20e9 N/m^2 * 0.08 m * (0.1 m)^2 = 1.6e7 N*m/rad (worked by hand)
    assert window.project.train.links[li].stiffness == pytest.approx(1.6e7)
    assert "referred to the 'from' shaft" in window.property_form.gear_note.text()
    f = type_into(qtbot, window, base + ("face_width",), "80 kg")
    assert marked(f)
    undo_all(window)
    assert window.project.doc == original


def test_a_damper_ring_is_entered_as_a_coupling_with_damping_alone(qtbot, window):
    open_sample(qtbot, window, PUMP)
    li = link_index(window, "coupling")
    window.set_selection(("link", "coupling"))
    f = type_into(qtbot, window, ("links", li, "stiffness"), "")
    assert marked(f) and "damping" in f.problem_label.text()  # no stiffness, no damping: core asks
    assert f.placeholderText().startswith("none")
    type_into(qtbot, window, ("links", li, "damping"), "450 N*m*s/rad")
    assert window.project.error is None
    link = window.project.train.links[li]
    assert link.stiffness == 0.0 and link.damping == 450.0


# ----------------------------------------------------------------- transients
def test_transient_events_tab_fields_tables_sources_and_counts(qtbot, window):
    open_sample(qtbot, window, SYNC)
    original = copy.deepcopy(window.project.doc)
    show_tab(window, window.transients_form, 1)
    type_into(qtbot, window, ("transients", 1, "duration"), "1.5")  # s shown
    assert window.project.doc["transients"][1]["duration"] == "1.5 s"
    assert window.project.train.transients[1].duration == 1.5
    f = type_into(qtbot, window, ("transients", 1, "duration"), "5 kg")
    assert marked(f) and "time" in f.problem_label.text()
    window.project.undo_stack.undo()
    f = type_into(qtbot, window, ("transients", 1, "torques", 1, "short_circuit", "subtransient_reactance"), "3")
    assert marked(f) and "per unit" in f.problem_label.text()
    window.project.undo_stack.undo()
    # a time table: a cell edited, then the torque turned into a ramp
    table = widget_at(window, ("transients", 1, "torques", 0, "table"), TableEditor)
    table.table.item(2, 0).setText("80 ms")
    assert window.project.doc["transients"][1]["torques"][0]["table"][2][0] == "80 ms"
    form = window.transients_form
    QtWidgets.QApplication.processEvents()
    box = next(c for c in form.findChildren(QtWidgets.QComboBox) if c.isVisible() and c.findData("ramp") >= 0)
    box.setCurrentIndex(box.findData("ramp"))
    t = window.project.doc["transients"][1]["torques"][0]
    assert "ramp" in t and "table" not in t and window.project.error is None
    type_into(qtbot, window, ("transients", 1, "torques", 0, "ramp", "to"), "-30 kN*m")
    assert window.project.train.transients[1].torques[0].table.torques[-1] == -30e3
    # required events per link instead of one count for every link
    type_into(qtbot, window, ("transients", 1, "required_events"), "")
    next(ed for ed in form._editors if hasattr(ed, "show_map")).add_button.click()
    req = window.project.doc["transients"][1]["required_events"]
    assert isinstance(req, dict) and len(req) == 1
    lid = next(iter(req))
    type_into(qtbot, window, ("transients", 1, "required_events", lid), "20")
    assert window.project.train.transients[1].required_for(lid) == 20
    undo_all(window)
    assert window.project.doc == original


def test_a_new_transient_event_builds(qtbot, window):
    open_sample(qtbot, window, PUMP)
    show_tab(window, window.transients_form)
    window.transients_form.add_button.click()
    assert window.project.error is None
    ev = window.project.train.transients[0]
    assert ev.name == "Event 1" and ev.torques[0].table is not None


# ----------------------------------------------------------------- design options
def test_tolerances_weak_excitation_and_design_options(qtbot, window):
    open_sample(qtbot, window, PUMP)
    original = copy.deepcopy(window.project.doc)
    li = link_index(window, "coupling")
    window.set_selection(("link", "coupling"))
    type_into(qtbot, window, ("links", li, "stiffness_tolerance"), "20 %")
    assert window.project.doc["links"][li]["stiffness_tolerance"] == "20 %"
    f = type_into(qtbot, window, ("links", li, "stiffness_tolerance"), "-10 %, +25 %")
    assert window.project.doc["links"][li]["stiffness_tolerance"] == ["-10 %", "+25 %"] and not marked(f)
    assert f.text() == "-10 %, +25 %"
    f = type_into(qtbot, window, ("links", li, "stiffness_tolerance"), "10 %, 25 %")
    assert marked(f) and "minus" in f.problem_label.text()
    window.set_selection(("disc", "motor"))
    f = type_into(qtbot, window, ("discs", 0, "inertia_tolerance"), "0.05")
    assert window.project.doc["discs"][0]["inertia_tolerance"] == 0.05 and not marked(f)
    show_tab(window, window.operating_form)
    type_into(qtbot, window, ("weak_excitation_below",), "20 %")
    assert window.project.doc["weak_excitation_below"] == "20 %"
    window.operating_form.design_options.add_button.click()
    options = window.project.doc["design_options"]
    assert len(options) == 1 and options[0] in edits.link_ids(window.project.doc)
    choose(window, ("design_options", 0), "motor")
    assert window.project.doc["design_options"] == ["motor"]
    undo_all(window)
    assert window.project.doc == original


def test_tolerance_text_grammar():
    # one value (symmetric) or a pair, minus first: the rule of the design options
    assert stored_value("20 %", TOLERANCE, "SI") == "20 %"
    assert stored_value("0.2", TOLERANCE, "SI") == 0.2
    assert stored_value("-10 %; +25 %", TOLERANCE, "SI") == ["-10 %", "+25 %"]
    assert text_problem("-10 %, +25 %", TOLERANCE) is None
    assert "minus" in text_problem("10 %, 25 %", TOLERANCE)
    assert "negative" in text_problem("-5 %", TOLERANCE)
    assert "100 %" in text_problem("-100 %, 5 %", TOLERANCE)
    assert text_problem("20 kg", TOLERANCE) is not None


def test_renaming_and_deleting_a_link_reach_everything_that_names_it(qtbot, window):
    open_sample(qtbot, window, SYNC)
    doc = copy.deepcopy(window.project.doc)
    doc["design_options"] = ["pinion_shaft", "motor"]
    doc["transients"][0]["required_events"] = {"pinion_shaft": 500, "hs_coupling": 200}
    window.project.replace(doc, "references")
    li = link_index(window, "pinion_shaft")
    window.set_selection(("link", "pinion_shaft"))
    type_into(qtbot, window, ("links", li, "id"), "hs_pinion_shaft")
    new = window.project.doc
    assert "hs_pinion_shaft" in new["sn_curves"] and "pinion_shaft" not in new["sn_curves"]
    assert new["design_options"] == ["hs_pinion_shaft", "motor"]
    assert list(new["transients"][0]["required_events"]) == ["hs_pinion_shaft", "hs_coupling"]
    assert window.selection == ("link", "hs_pinion_shaft") and window.project.error is None
    window.delete_selected()
    new = window.project.doc
    assert "sn_curves" not in new and new["design_options"] == ["motor"]
    assert new["transients"][0]["required_events"] == {"hs_coupling": 200}
    assert any("S-N curve" in c for c in window.last_delete_changes)
    window.project.undo_stack.undo()
    window.project.undo_stack.undo()
    assert window.project.doc == doc


def test_renaming_an_excitation_carries_its_load_case_factor(qtbot, window):
    open_sample(qtbot, window, PROPULSION)
    show_tab(window, window.excitations_form, 0)
    type_into(qtbot, window, ("excitations", 0, "name"), "Engine firing")
    assert window.project.doc["load_cases"][1]["excitation_scale"] == {"Engine firing": 0.6}
    assert window.project.error is None
    new = edits.remove_excitation(window.project.doc, 0)
    assert "excitation_scale" not in new["load_cases"][1]
    build_train(new)


# ----------------------------------------------------------------- files named by the project
def test_relative_files_are_read_from_the_project_folder_and_follow_save_as(qtbot, window, tmp_path,
                                                                             monkeypatch):
    here, elsewhere = tmp_path / "project", tmp_path / "elsewhere"
    here.mkdir()
    elsewhere.mkdir()
    doc = load_document(PUMP)
    doc["transients"] = [{"name": "Kick", "duration": "0.2 s",
                          "torques": [{"at": "impeller", "csv": "kick.csv"}]}]
    (here / "kick.csv").write_text("time,torque\n0,0\n0.01,-500\n")
    (here / "pump.json").write_text(json.dumps(doc))
    monkeypatch.chdir(tmp_path)  # not the project's folder
    assert window.open_path(here / "pump.json")
    assert window.project.error is None, window.project.error
    assert window.project.train.transients[0].torques[0].table.torques == (0.0, -500.0)
    assert window._save_to(elsewhere / "pump.json")  # no kick.csv there
    assert window.project.error is not None and "kick.csv" in window.project.error.message
    shutil.copy(here / "kick.csv", elsewhere / "kick.csv")
    window.recompute()
    window.project.rebuild()
    assert window.project.error is None


def test_a_sample_opened_as_a_new_project_reads_its_files_from_the_samples_folder(qtbot, window, tmp_path):
    doc = load_document(ENGINE)
    engine = doc["excitations"][0]["engine"]
    points = engine["pressure_curve"].pop("points")
    (tmp_path / "curve.csv").write_text("\n".join(f"{a},{p}" for a, p in points))
    engine["pressure_curve"]["file"] = "curve.csv"
    path = tmp_path / "engine.json"
    path.write_text(json.dumps(doc))
    window.new_from_sample(path)  # a copy: no file name yet, the folder it came from kept
    assert window.project.path is None and window.project.error is None, window.project.error


# ----------------------------------------------------------------- the status bar's verdict
def test_the_status_verdict_follows_the_headline_and_never_passes_while_stale(qtbot, window, monkeypatch):
    from app.wording import headline
    from app.gui import theme
    open_sample(qtbot, window, TWIN)
    panel = window.results_panel
    if hasattr(panel, "verdict_summary"):
        text, ok = panel.verdict_summary()
        assert window.status_verdict.text() == text
        assert window.status_verdict.styleSheet() == theme.verdict_style(ok)
    monkeypatch.delattr(type(panel), "verdict_summary", raising=False)
    window.recompute()
    qtbot.waitUntil(lambda: window.results is not None, timeout=15000)
    window._show_verdict()
    words, ok = headline(window.results.study)
    assert window.status_verdict.text().split()[0] == words.split(" — ")[0]
    assert window.status_verdict.styleSheet() == theme.verdict_style(ok)
    assert window.status_verdict.toolTip() == words
    window.project.set_value(("discs", 0, "inertia"), "3 kg")  # an error: the results are stale
    assert window.status_verdict.text() == "no verdict — last valid model"
    assert "PASS" not in window.status_verdict.text()


def test_headline_summary_words():
    from core.study import LIVE_PARTS, StudyOptions, run_study
    from core.project import load_train
    for p in (PUMP, TWIN, ENGINE):
        study = run_study(load_train(p), StudyOptions(parts=LIVE_PARTS))
        text, ok = mw.headline_summary(study)
        from app.wording import headline
        words, hok = headline(study)
        assert text.split()[0] == words.split(" — ")[0] and ok == hok


# ----------------------------------------------------------------- pieces
def test_pasted_text_in_the_forms_spreadsheets_write():
    assert parse_pasted("a\tb\n1\t2\n3\t4\n") == [["1", "2"], ["3", "4"]]
    assert parse_pasted("0;1,5 bar\r\n10;2 bar") == [["0", "1,5 bar"], ["10", "2 bar"]]
    assert parse_pasted("0, 1\n\n10, 2\n") == [["0", "1"], ["10", "2"]]
    assert parse_pasted("") == []


def test_set_value_undo_removes_the_objects_an_edit_created(qapp):
    from app.gui.document import Project
    p = Project()
    doc = load_document(PROPULSION)
    p.set_document(doc)
    before = copy.deepcopy(p.doc)
    p.set_value(("links", 0, "fatigue", "criterion"), "soderberg")
    assert p.doc["links"][0]["fatigue"] == {"criterion": "soderberg"}
    p.undo_stack.undo()
    assert p.doc == before
    p.undo_stack.redo()
    p.set_value(("links", 0, "fatigue", "criterion"), None)  # the last key: the object goes
    assert "fatigue" not in p.doc["links"][0]
    p.undo_stack.undo()
    assert p.doc["links"][0]["fatigue"] == {"criterion": "soderberg"}
    p.undo_stack.undo()
    assert p.doc == before


# ----------------------------------------------------------------- one unit system
def test_the_new_forms_follow_the_unit_switch(qtbot, window):
    open_sample(qtbot, window, SYNC)
    window.set_unit_system("US")
    show_tab(window, window.transients_form, 1)
    table = widget_at(window, ("transients", 1, "torques", 2, "speed_table"), TableEditor)
    assert table.table.horizontalHeaderItem(1).text() == "Torque, lbf*ft"
    assert table.table.item(1, 1).text().endswith("lbf*ft")
    rated = widget_at(window, ("transients", 1, "torques", 1, "short_circuit", "rated_torque"), Field)
    assert rated.text().endswith("lbf*ft")
    # a bare number is read in the unit on screen, and stored with it
    type_into(qtbot, window, ("transients", 1, "torques", 1, "short_circuit", "rated_torque"), "28000")
    assert window.project.doc["transients"][1]["torques"][1]["short_circuit"]["rated_torque"] == "28000 lbf*ft"
    show_tab(window, window.load_cases_form)
    window.load_cases_form.add_button.click()
    power = widget_at(window, ("load_cases", 0, "power"), Field)
    assert power.text().endswith("hp")
    window.set_unit_system("SI")
    assert widget_at(window, ("load_cases", 0, "power"), Field).text() == "100 kW"
