"""The desktop program's editing side (issue 9 items 3-5 and 7, issue 10 items 2-4 and 6):
every key of the project file reachable with units, validation in place and undo;
names over ids; one unit system; views that follow the document.

Reference values: the project file format (core.project) and core itself run on
the edited document; conversion factors and damping relations are cited where used.
"""
from __future__ import annotations

import copy
import json
import math
import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6 import QtCore, QtWidgets  # noqa: E402

from app.gui import edits  # noqa: E402
from app.gui import main_window as mw  # noqa: E402
from app.gui.editors import ERROR_STYLE, ChoiceField, Field, TableEditor  # noqa: E402
from core.project import build_train, load_document  # noqa: E402

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
BY_NAME = {p.stem: p for p in SAMPLES}
PUMP, ENGINE, PROPULSION = BY_NAME["pump_set"], BY_NAME["engine_genset"], BY_NAME["propulsion_line"]


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


def wait_results(qtbot, win):
    qtbot.waitUntil(lambda: win.results is not None and win.results.train is win.project.train, timeout=15000)
    win.runner.wait()
    QtWidgets.QApplication.processEvents()


def open_sample(qtbot, win, path=PUMP):
    assert win.open_path(path)
    wait_results(qtbot, win)


def widget_at(win, path, cls=(Field, ChoiceField)):
    QtWidgets.QApplication.processEvents()
    for w in win.findChildren(QtWidgets.QWidget):
        if isinstance(w, cls) and w.path == tuple(path) and w.isVisible():
            return w
    raise AssertionError(f"no visible editor for {path}")


def type_into(qtbot, field: Field, text: str, enter: bool = True):
    field.setFocus()
    field.selectAll()
    qtbot.keyClicks(field, text)
    if enter:
        qtbot.keyClick(field, QtCore.Qt.Key_Return)


def visible_paths(win) -> set:
    """Paths of the fields, dropdowns and tables on screen (a table edits its list whole)."""
    QtWidgets.QApplication.processEvents()
    return {w.path for w in win.findChildren(QtWidgets.QWidget)
            if (isinstance(w, (Field, ChoiceField, TableEditor))
                or isinstance(w, QtWidgets.QCheckBox) and hasattr(w, "path")) and w.isVisible()}


def show_excitation(win, i):
    win.tabs.setCurrentWidget(win.excitations_form)
    win.excitations_form.select(i)
    QtWidgets.QApplication.processEvents()


# ----------------------------------------------------------------- issue 9 item 3: every key reachable
# keys edited by a dropdown of their own rather than a bound field
STRUCTURAL = {"format", "version", "kind", "material", "mass", "segments", "orders", "cylinders",
              "discs", "links", "excitations", "operating_speed", "scaling"}


def leaf_paths(obj, base=()):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from leaf_paths(v, base + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from leaf_paths(v, base + (i,))
    else:
        yield base


def reachable_paths(window) -> set:
    """Every document path an editor on screen is bound to, visiting every disc, link,
    excitation, load case and transient event."""
    doc = window.project.doc
    reachable = set()
    for d in doc["discs"]:
        window.set_selection(("disc", d["id"]))
        reachable |= visible_paths(window)
    for l in doc["links"]:
        window.set_selection(("link", l["id"]))
        reachable |= visible_paths(window)
    window.tabs.setCurrentWidget(window.operating_form)
    reachable |= visible_paths(window)
    for i in range(len(doc.get("excitations", []))):
        show_excitation(window, i)
        reachable |= visible_paths(window)
    for form, key in ((window.load_cases_form, "load_cases"), (window.transients_form, "transients")):
        window.tabs.setCurrentWidget(form)
        for i in range(len(doc.get(key, []))):
            form.select(i)
            reachable |= visible_paths(window)
    return reachable


@pytest.mark.parametrize("path", SAMPLES, ids=[p.stem for p in SAMPLES])
def test_every_key_of_the_samples_has_an_editor(qtbot, window, path):
    """Walk every disc, link, excitation, load case and transient event of a sample and collect
    the document paths the editors on screen are bound to: every value the file holds is among
    them, or below a table that edits it whole (a pressure curve, a torque table, a firing order)."""
    open_sample(qtbot, window, path)
    reachable = reachable_paths(window)
    missing = []
    for p in leaf_paths(window.project.doc):
        key = next((k for k in reversed(p) if isinstance(k, str)), None)
        if key in STRUCTURAL or p[-1] in STRUCTURAL:
            continue
        # a plain-number order (or output harmonic) is edited through its own cell
        if len(p) == 4 and p[0] == "excitations" and p[2] == "orders":
            p = p + ("order",)
        if len(p) == 5 and p[2:4] == ("electric_drive", "output_harmonics"):
            p = p + ("harmonic",)
        if not any(p[:n] in reachable for n in range(len(p), 0, -1)):
            missing.append(p)
    assert not missing, f"no editor for {missing}"


def test_excitation_keys_through_the_forms_with_units_validation_and_undo(qtbot, window):
    open_sample(qtbot, window, PUMP)
    original = copy.deepcopy(window.project.doc)
    stack = window.project.undo_stack
    show_excitation(window, 0)  # "Motor once and twice per rev": orders [1, 2] at 'motor'
    # amplitude and phase of order 2 (a plain number in the file becomes {"order": 2, ...})
    type_into(qtbot, widget_at(window, ("excitations", 0, "orders", 1, "amplitude")), "250 N*m")
    type_into(qtbot, widget_at(window, ("excitations", 0, "orders", 1, "phase_deg")), "30")
    assert window.project.doc["excitations"][0]["orders"] == [1, {"order": 2, "amplitude": "250 N*m",
                                                                  "phase_deg": 30}]
    # a wrong unit is framed red with the problem beside the cell; the model is not changed
    cell = widget_at(window, ("excitations", 0, "orders", 0, "amplitude"))
    type_into(qtbot, cell, "3 kg")
    cell = widget_at(window, ("excitations", 0, "orders", 0, "amplitude"))
    assert cell.styleSheet() == ERROR_STYLE and cell.problem_label.isVisible()
    assert "excitation 'Motor once and twice per rev' order 1" in str(window.project.error)
    stack.undo()
    assert window.project.error is None
    # speed-squared law with its speed: the 'at speed' cell opens with the law
    law = widget_at(window, ("excitations", 0, "orders", 1, "scaling"))
    at_speed = widget_at(window, ("excitations", 0, "orders", 1, "at_speed"))
    assert not at_speed.isEnabled()
    law.setCurrentIndex(law.findData("speed_squared"))
    assert window.project.error is not None and window.project.error.field == "at_speed"
    at_speed = widget_at(window, ("excitations", 0, "orders", 1, "at_speed"))
    assert at_speed.isEnabled() and at_speed.styleSheet() == ERROR_STYLE  # core asks for the speed
    type_into(qtbot, at_speed, "1480 rpm")
    assert window.project.error is None
    assert window.project.doc["excitations"][0]["orders"][1]["scaling"] == "speed_squared"
    # the disc it acts at: names shown, the id stored as 'at'
    at = widget_at(window, ("excitations", 0, "at"))
    assert at.currentText() == "Motor rotor"
    at.setCurrentIndex(at.findData("impeller"))
    assert window.project.doc["excitations"][0]["at"] == "impeller"
    # engine cylinders: a disc and a firing angle each
    window.excitations_form.cylinders.add_button.click()
    window.excitations_form.cylinders.add_button.click()
    type_into(qtbot, widget_at(window, ("excitations", 0, "cylinders", 1, "firing_deg")), "180")
    cyl = window.project.doc["excitations"][0]["cylinders"]
    assert [c["firing_deg"] for c in cyl] == [0, 180] and all(c["at"] in ("impeller",) for c in cyl[:1])
    # the fixed-frequency source: frequency, amplitude, phase, the disc
    show_excitation(window, 2)  # "Twice line frequency", 100 Hz, no disc
    assert widget_at(window, ("excitations", 2, "at")).currentText() == "(none)"
    type_into(qtbot, widget_at(window, ("excitations", 2, "amplitude")), "0.4 kN*m")
    type_into(qtbot, widget_at(window, ("excitations", 2, "phase_deg")), "15")
    at = widget_at(window, ("excitations", 2, "at"))
    at.setCurrentIndex(at.findData("motor"))
    e = window.project.doc["excitations"][2]
    assert (e["amplitude"], e["phase_deg"], e["at"]) == ("0.4 kN*m", 15, "motor")
    wait_results(qtbot, window)
    exc = window.project.train.operating.excitations[2]
    assert exc.amplitude == pytest.approx(400.0) and exc.applied_at == "motor"
    # every step undoes, back to the file as it was
    while stack.canUndo():
        stack.undo()
    assert window.project.doc == original


def test_applied_at_is_read_and_replaced_by_at_on_the_first_edit(qtbot, window, tmp_path):
    doc = load_document(PUMP)
    doc["excitations"][2]["applied_at"] = "motor"  # the older key
    doc["excitations"][2]["x_vendor_note"] = "kept"  # an unknown key
    p = tmp_path / "older.json"
    p.write_text(json.dumps(doc))
    assert window.open_path(p)
    show_excitation(window, 2)
    at = widget_at(window, ("excitations", 2, "applied_at"))  # bound to the key the file holds
    assert at.currentData() == "motor" and at.currentText() == "Motor rotor"
    at.setCurrentIndex(at.findData("impeller"))
    e = window.project.doc["excitations"][2]
    assert e["at"] == "impeller" and "applied_at" not in e and e["x_vendor_note"] == "kept"
    assert widget_at(window, ("excitations", 2, "at")).currentData() == "impeller"


def test_link_damping_one_way_at_a_time_with_the_equivalents(qtbot, window):
    open_sample(qtbot, window, PROPULSION)  # flex_coupling: relative_damping 1.1
    index = [l["id"] for l in window.project.doc["links"]].index("flex_coupling")
    window.set_selection(("link", "flex_coupling"))
    form = window.property_form
    # eta = psi / (2 pi) = 1 / M (loss factor, relative damping and dynamic magnifier;
    # common practice, from memory): psi 1.1 -> eta 0.175, M 5.71
    assert form.damping_note.text() == "η = 0.175 · ψ = 1.1 · M = 5.71"
    form.damping_box.setCurrentIndex(form.damping_box.findData("dynamic_magnifier"))
    link = window.project.doc["links"][index]
    assert "relative_damping" not in link and link["dynamic_magnifier"] == pytest.approx(2 * math.pi / 1.1, rel=1e-3)
    wait_results(qtbot, window)
    assert window.project.train.links[index].loss_factor == pytest.approx(1.1 / (2 * math.pi), rel=1e-3)
    type_into(qtbot, widget_at(window, ("links", index, "dynamic_magnifier")), "8")
    assert window.property_form.damping_note.text() == "η = 0.125 · ψ = 0.785 · M = 8"
    window.project.undo_stack.undo()
    window.project.undo_stack.undo()
    assert window.project.doc["links"][index]["relative_damping"] == 1.1
    assert window.property_form.damping_note.text().startswith("η = 0.175")
    # a link with no damping: choose the way, then type the value (nothing made up before)
    window.set_selection(("link", "input_shaft"))
    li = [l["id"] for l in window.project.doc["links"]].index("input_shaft")
    before = copy.deepcopy(window.project.doc)
    box = window.property_form.damping_box
    box.setCurrentIndex(box.findData("loss_factor"))
    assert window.project.doc == before
    type_into(qtbot, widget_at(window, ("links", li, "loss_factor")), "0.05")
    assert window.project.doc["links"][li]["loss_factor"] == 0.05
    # viscous damping and the limits, with units
    type_into(qtbot, widget_at(window, ("links", li, "damping")), "120 N*m*s/rad")
    type_into(qtbot, widget_at(window, ("links", li, "permissible_torque")), "25 kN*m")
    type_into(qtbot, widget_at(window, ("links", li, "stress_concentration")), "1.4")
    wait_results(qtbot, window)
    link = window.project.train.links[li]
    assert (link.damping, link.permissible_torque, link.stress_concentration) == (120.0, 25000.0, 1.4)
    bad = widget_at(window, ("links", li, "stress_concentration"))
    type_into(qtbot, bad, "0.7")  # core: a stress concentration factor is at least 1
    bad = widget_at(window, ("links", li, "stress_concentration"))
    assert bad.styleSheet() == ERROR_STYLE and "at least 1" in bad.problem_label.text()


def test_a_link_name_is_edited_kept_on_save_and_shown_over_the_id(qtbot, window, tmp_path):
    open_sample(qtbot, window, PUMP)
    index = [l["id"] for l in window.project.doc["links"]].index("coupling")
    window.set_selection(("link", "coupling"))
    type_into(qtbot, widget_at(window, ("links", index, "name")), "Flexible coupling")
    wait_results(qtbot, window)
    assert window.project.train.name_of("coupling") == "Flexible coupling"
    tip = window.canvas._items[("link", "coupling")].toolTip()
    assert "Flexible coupling" in tip and "Coupling hub, motor side" in tip  # names of the link and its ends
    window.project.doc["x_unknown"] = {"kept": True}
    target = tmp_path / "named.json"
    assert window._save_to(target)
    again = load_document(target)
    assert again["links"][index]["name"] == "Flexible coupling" and again["x_unknown"] == {"kept": True}


# ----------------------------------------------------------------- issue 9 item 4: names over ids
def test_names_over_ids_in_dropdowns_and_tables_ids_where_edited(qtbot, window):
    open_sample(qtbot, window, PUMP)
    window.tabs.setCurrentWidget(window.link_table)
    QtWidgets.QApplication.processEvents()
    t = window.link_table
    row = [l["id"] for l in window.project.doc["links"]].index("coupling")
    cols = [c[1] for c in t.columns]
    assert t.item(row, cols.index("id")).text() == "coupling"  # the id where it is edited
    assert t.item(row, cols.index("from")).text() == "Coupling hub, motor side"
    assert "hub_m" in t.item(row, cols.index("from")).toolTip()
    window.set_selection(("link", "coupling"))
    end = widget_at(window, ("links", row, "to"))
    assert end.currentText() == "Coupling hub, pump side" and end.currentData() == "hub_p"
    end.setCurrentIndex(end.findData("impeller"))  # choose by name, store the id
    assert window.project.doc["links"][row]["to"] == "impeller"
    window.project.undo_stack.undo()
    window.tabs.setCurrentWidget(window.operating_form)
    ref = widget_at(window, ("reference",))
    assert ref.currentText() == "Motor rotor" and ref.currentData() == "motor"
    window.set_selection(("disc", "motor"))  # from the Operation tab: the disc's own form opens
    assert widget_at(window, ("discs", 0, "id")).text() == "motor"  # the id where it is edited
    assert widget_at(window, ("discs", 0, "name")).text() == "Motor rotor"


def test_a_dropdown_in_the_link_table_stores_the_id(qtbot, window):
    open_sample(qtbot, window, PUMP)
    window.tabs.setCurrentWidget(window.link_table)
    t = window.link_table
    row = [l["id"] for l in window.project.doc["links"]].index("coupling")
    col = [c[1] for c in t.columns].index("to")
    index = t.model().index(row, col)
    delegate = t.itemDelegateForColumn(col)
    editor = delegate.createEditor(t.viewport(), QtWidgets.QStyleOptionViewItem(), index)
    delegate.setEditorData(editor, index)
    assert editor.currentData() == "hub_p"
    editor.setCurrentIndex(editor.findData("impeller"))
    delegate.setModelData(editor, t.model(), index)
    assert window.project.doc["links"][row]["to"] == "impeller"


# ----------------------------------------------------------------- issue 9 item 5: one unit system
def test_placeholders_tooltips_and_columns_follow_the_unit_switch(qtbot, window):
    open_sample(qtbot, window, PROPULSION)
    window.set_selection(("link", "flex_coupling"))
    show_excitation(window, 1)  # speed-squared orders: amplitude and at-speed cells
    window.set_unit_system("US")
    QtWidgets.QApplication.processEvents()
    checked = 0
    for tab in (window.disc_table, window.link_table, window.operating_form, window.excitations_form):
        window.tabs.setCurrentWidget(tab)
        if tab in (window.disc_table, window.link_table):
            window.set_selection(("disc", "engine") if tab is window.disc_table else ("link", "flex_coupling"))
        QtWidgets.QApplication.processEvents()
        for f in window.findChildren(Field):
            if not f.isVisible() or not hasattr(f.kind, "si_unit"):
                continue
            unit = __import__("core.units", fromlist=["x"]).display_unit(f.kind, "US")
            assert unit in f.toolTip(), (f.path, f.toolTip())
            assert f.fixed_placeholder or unit in f.placeholderText(), (f.path, f.placeholderText())
            assert all(unit in lab.toolTip() for lab in f.labels), f.path
            checked += 1
    assert checked >= 8
    t = window.disc_table
    header = t.horizontalHeaderItem([c[1] for c in t.columns].index("inertia"))
    assert "lb*ft^2" in header.toolTip()
    assert "lb*ft^2" in t.item(0, 2).text() and "lb*ft^2" in t.item(0, 2).toolTip()


# ----------------------------------------------------------------- issue 9 item 7
def test_every_speed_ratio_label_says_its_direction(qtbot, window):
    open_sample(qtbot, window, BY_NAME["compressor_train"])
    mesh = next(l for l in window.project.doc["links"] if l["kind"] == "gear_mesh")
    window.set_selection(("link", mesh["id"]))
    f = widget_at(window, ("links", window.project.doc["links"].index(mesh), "speed_ratio"))
    assert "output / input" in f.labels[0].text()
    assert "speed of the 'to' disc / speed of the 'from' disc" in f.toolTip()
    t = window.link_table
    col = [c[1] for c in t.columns].index("speed_ratio")
    assert "out / in" in t.horizontalHeaderItem(col).text()
    assert "'to' disc / speed of the 'from'" in t.horizontalHeaderItem(col).toolTip()
    tip = window.canvas._items[("link", mesh["id"])].toolTip()
    assert "speed ratio (output / input) = speed of" in tip


def test_the_error_banner_does_not_move_the_form_being_edited(qtbot, window):
    open_sample(qtbot, window, PUMP)
    window.set_selection(("disc", "motor"))
    field = widget_at(window, ("discs", 0, "inertia"))
    before = field.mapTo(window, QtCore.QPoint(0, 0))
    type_into(qtbot, field, "14.2 kg")  # wrong kind of unit: the model has an error
    QtWidgets.QApplication.processEvents()
    assert window.error_banner.isVisible()
    field = widget_at(window, ("discs", 0, "inertia"))
    assert field.mapTo(window, QtCore.QPoint(0, 0)) == before  # the banner pushed it down before
    banner = window.error_banner.geometry()
    forms = window.forms_split
    assert not QtCore.QRect(window.error_banner.mapTo(window, QtCore.QPoint(0, 0)), banner.size()).intersects(
        QtCore.QRect(forms.mapTo(window, QtCore.QPoint(0, 0)), forms.size()))
    window.project.undo_stack.undo()
    QtWidgets.QApplication.processEvents()
    assert not window.error_banner.isVisible()
    assert widget_at(window, ("discs", 0, "inertia")).mapTo(window, QtCore.QPoint(0, 0)) == before


# ----------------------------------------------------------------- the issue-9 acceptance test
def test_an_amplitude_entered_in_the_forms_turns_the_forced_response_on_and_undo_off(qtbot, window):
    from app.gui.results.panel import TAB_RESPONSE
    open_sample(qtbot, window, PUMP)  # no amplitudes in the file
    tabs = window.results_panel.tabs
    assert not tabs.isTabEnabled(TAB_RESPONSE)
    show_excitation(window, 0)
    type_into(qtbot, widget_at(window, ("excitations", 0, "orders", 0, "amplitude")), "1.5 kN*m")
    wait_results(qtbot, window)
    assert window.results.response is not None
    assert tabs.isTabEnabled(TAB_RESPONSE)
    tabs.setCurrentIndex(TAB_RESPONSE)
    view = window.results_panel.response_view
    view.ensure_drawn()
    QtWidgets.QApplication.processEvents()
    curves = [c for c in view.plot.listDataItems() if c.yData is not None and len(c.yData)]
    assert curves and all(math.isfinite(float(max(c.yData))) and max(c.yData) > 0 for c in curves)
    window.project.undo_stack.undo()
    wait_results(qtbot, window)
    assert window.results.response is None and not tabs.isTabEnabled(TAB_RESPONSE)


# ----------------------------------------------------------------- issue 10 item 2: no stale green
def test_while_the_model_has_errors_the_verdict_is_greyed_and_the_sheet_refused(qtbot, window, monkeypatch):
    open_sample(qtbot, window, PUMP)
    calls = []
    monkeypatch.setattr(window.results_panel, "set_stale", lambda message: calls.append(message), raising=False)
    assert window.status_verdict.text() == "PASS"
    for d in list(window.project.doc["discs"]):  # delete every disc: an empty train
        window.set_selection(("disc", d["id"]))
        window.delete_selected()
    assert window.project.error is not None
    assert "last valid model" in window.status_verdict.text()
    assert window.status_verdict.styleSheet() == mw.theme.STALE_STYLE
    assert calls and calls[-1] and "last valid model" in calls[-1]
    assert not window.act_sheet.isEnabled()
    messages = []
    monkeypatch.setattr(window, "_message", lambda title, text: messages.append(text))
    window.export_review_sheet()
    assert messages and "Fix the model first" in messages[0]
    while window.project.undo_stack.canUndo():
        window.project.undo_stack.undo()
    wait_results(qtbot, window)
    assert window.status_verdict.text() == "PASS" and calls[-1] is None and window.act_sheet.isEnabled()


def test_a_solve_that_gives_non_numbers_greys_the_last_verdict(qtbot, window, monkeypatch):
    """Seen: a speed ratio of 1e308 gave 'nan Hz' and a green PASS.  Whatever core lets
    through, a study with a non-finite frequency is no result: the last valid one stays,
    greyed, and the sheet is refused."""
    import dataclasses
    import types

    import numpy as np

    import core.study
    open_sample(qtbot, window, PUMP)
    calls = []
    monkeypatch.setattr(window.results_panel, "set_stale", lambda message: calls.append(message), raising=False)
    real = core.study.run_study
    monkeypatch.setattr(core.study, "run_study", lambda train, *a: dataclasses.replace(
        real(train, *a), modes=types.SimpleNamespace(frequency_hz=np.array([0.0, np.nan]))))
    window.project.set_value(("discs", 0, "inertia"), "15 kg*m^2")
    qtbot.waitUntil(lambda: "last valid model" in window.status_verdict.text(), timeout=15000)
    assert window.status_verdict.styleSheet() == mw.theme.STALE_STYLE
    assert calls[-1] and "cannot be solved" in calls[-1] and not window.act_sheet.isEnabled()
    monkeypatch.setattr(core.study, "run_study", real)
    window.project.undo_stack.undo()
    wait_results(qtbot, window)
    assert window.status_verdict.text() == "PASS" and calls[-1] is None


# ----------------------------------------------------------------- issue 10 item 3: saving never destroys
def test_saving_a_model_with_errors_asks_first_and_keeps_numbered_backups(qtbot, window, tmp_path, monkeypatch):
    open_sample(qtbot, window, PUMP)
    target = tmp_path / "pump.json"
    assert window._save_to(target)
    good = target.read_text()
    for d in list(window.project.doc["discs"]):
        window.set_selection(("disc", d["id"]))
        window.delete_selected()
    asked = []
    monkeypatch.setattr(window, "ask", lambda title, text, yes: asked.append(text) or False)
    assert not window.save()
    assert asked and "error" in asked[0] and target.read_text() == good  # nothing written
    monkeypatch.setattr(window, "ask", lambda title, text, yes: True)
    assert window.save()  # the user's work, saved on request
    assert json.loads(target.read_text())["discs"] == []
    assert (tmp_path / "pump.json.bak1").read_text() == good
    window.project.set_value(("title",), "third")
    assert window.save()
    assert (tmp_path / "pump.json.bak2").read_text() == good
    assert "bak1" in window.statusBar().currentMessage()


# ----------------------------------------------------------------- issue 10 item 4: views follow the document
def test_undo_from_the_menu_replaces_text_being_typed_in_the_property_form(qtbot, window):
    open_sample(qtbot, window, PUMP)
    window.set_selection(("disc", "motor"))
    field = widget_at(window, ("discs", 0, "inertia"))
    type_into(qtbot, field, "12 kg*m^2")
    type_into(qtbot, field, "5", enter=False)  # typed, not committed
    window.act_undo.trigger()
    field = widget_at(window, ("discs", 0, "inertia"))
    assert window.project.doc["discs"][0]["inertia"] == "14.2 kg*m^2"
    assert field.text() == "14.2 kg*m^2" == window.disc_table.item(0, 2).text()


def test_ctrl_z_in_a_field_undoes_the_document(qtbot, window):
    open_sample(qtbot, window, PUMP)
    window.set_selection(("disc", "motor"))
    field = widget_at(window, ("discs", 0, "inertia"))
    type_into(qtbot, field, "12 kg*m^2")
    assert window.project.doc["discs"][0]["inertia"] == "12 kg*m^2"
    qtbot.keyClick(field, QtCore.Qt.Key_Z, QtCore.Qt.ControlModifier)
    assert window.project.doc["discs"][0]["inertia"] == "14.2 kg*m^2"
    assert widget_at(window, ("discs", 0, "inertia")).text() == "14.2 kg*m^2"
    qtbot.keyClick(field, QtCore.Qt.Key_Z, QtCore.Qt.ControlModifier | QtCore.Qt.ShiftModifier)
    assert window.project.doc["discs"][0]["inertia"] == "12 kg*m^2"


def test_undo_brings_the_operating_and_excitation_forms_along(qtbot, window):
    open_sample(qtbot, window, PUMP)
    show_excitation(window, 0)
    name = widget_at(window, ("excitations", 0, "name"))
    type_into(qtbot, name, "Motor rotor orders")
    type_into(qtbot, name, " (draft)", enter=False)
    window.act_undo.trigger()
    assert widget_at(window, ("excitations", 0, "name")).text() == "Motor once and twice per rev"
    assert window.excitations_form.list.item(0).text() == "Motor once and twice per rev"


def test_text_typed_in_a_field_is_kept_when_its_tab_is_closed(qtbot, window):
    open_sample(qtbot, window, PUMP)
    show_excitation(window, 0)
    type_into(qtbot, widget_at(window, ("excitations", 0, "name")), "Motor orders", enter=False)
    window.tabs.setCurrentWidget(window.disc_table)
    QtWidgets.QApplication.processEvents()
    assert window.project.doc["excitations"][0]["name"] == "Motor orders"


def test_deleting_a_disc_deals_with_everything_that_names_it_in_one_undoable_step(qtbot, window):
    open_sample(qtbot, window, ENGINE)
    original = copy.deepcopy(window.project.doc)
    window.set_selection(("disc", "crank_1"))  # the excitations act at it; it holds cylinder 1
    window.delete_selected()
    doc = window.project.doc
    assert window.project.error is None
    for e in doc["excitations"]:
        assert "crank_1" not in (e.get("at"), e.get("applied_at"))
        assert all(c["at"] != "crank_1" for c in e.get("cylinders", []))
        assert all(c["at"] != "crank_1" for c in e.get("engine", {}).get("cylinders", []))
    said = " ".join(window.last_delete_changes)
    assert "cylinder" in said and "firing angles" in said
    # the engine's other cylinders keep their firing angles (order 1-5-3-6-2-4, 120 degrees apart)
    engine = doc["excitations"][0]["engine"]
    assert {c["at"]: c["firing_deg"] for c in engine["cylinders"]} == {
        "crank_5": 120.0, "crank_3": 240.0, "crank_6": 360.0, "crank_2": 480.0, "crank_4": 600.0}
    assert "Crank throw 1" in window.statusBar().currentMessage()
    window.set_selection(("disc", doc["reference"]))
    ref = doc["reference"]
    window.delete_selected()
    assert window.project.doc["reference"] != ref and window.project.error is None
    assert any("reference disc" in c for c in window.last_delete_changes)
    window.project.undo_stack.undo()
    window.project.undo_stack.undo()
    assert window.project.doc == original


def test_deleting_the_disc_an_excitation_acts_at_removes_it_and_says_so(qtbot, window):
    open_sample(qtbot, window, PUMP)
    window.set_selection(("disc", "impeller"))
    window.delete_selected()
    names = [e["name"] for e in window.project.doc["excitations"]]
    assert "Impeller vane pass (7 vanes)" not in names and window.project.error is None
    assert any("removed excitation 'Impeller vane pass (7 vanes)'" in c for c in window.last_delete_changes)


def test_renaming_a_disc_carries_cylinders_and_applied_at():
    doc = load_document(ENGINE)
    doc["excitations"][-1]["applied_at"] = "crank_3"
    doc["excitations"][-1].pop("at", None)
    new = edits.rename_disc(doc, "crank_3", "throw_3")
    build_train(new)  # still builds
    assert new["excitations"][-1]["applied_at"] == "throw_3"
    assert any(c["at"] == "throw_3" for e in new["excitations"]
               for c in e.get("cylinders", []) + e.get("engine", {}).get("cylinders", []))


def test_opening_another_project_resets_per_project_view_state(qtbot, window, monkeypatch):
    open_sample(qtbot, window, ENGINE)
    resets = []
    monkeypatch.setattr(window.results_panel, "reset_view_state", lambda: resets.append(1), raising=False)
    window.set_selection(("link", "flex_coupling"))
    show_excitation(window, 1)
    window.canvas.zoom(2.0)
    window.canvas._user_zoomed = True
    open_sample(qtbot, window, PUMP)
    assert resets and window.selection is None and not window.canvas._user_zoomed
    assert window.excitations_form.current == 0  # the new project's first excitation, not the old index


# ----------------------------------------------------------------- issue 10 item 6: modes never hidden
def test_status_bar_counts_the_modes_above_the_screening_limit(qtbot, window):
    open_sample(qtbot, window, PUMP)
    study = window.results.study
    n = int(study.modes.elastic.sum())
    m = int(study.above_screening_limit.sum())
    assert n >= 3 and m >= 1  # the study gives at least the lowest modes, marked above the limit
    assert window.status_modes.text() == f"{n} elastic modes ({m} above the screening limit)"
    window.new_blank() if not window.project.dirty else None
    window.load_document(edits.blank_document())
    wait_results(qtbot, window)
    assert window.status_modes.text().startswith("1 elastic mode")  # 87 Hz, no longer "0 elastic modes"


def test_the_results_panel_gets_the_study_when_it_takes_one(qtbot, window, monkeypatch):
    got = []
    monkeypatch.setattr(window.results_panel, "set_study", lambda study, t: got.append(study), raising=False)
    open_sample(qtbot, window, PUMP)
    assert got and got[-1] is window.results.study


# ----------------------------------------------------------------- references of the newer key families
def test_deleting_and_renaming_a_disc_reach_load_cases_transients_and_design_options():
    """Issue 10 item 4: everything that names a disc follows a delete or a rename, in one step."""
    from core.project import build_train
    doc = {"format": "twistwise-project", "version": 1, "title": "refs",
           "discs": [{"id": "m", "inertia": 10}, {"id": "a", "inertia": 2}, {"id": "b", "inertia": 2}],
           "links": [{"id": "s1", "kind": "shaft", "from": "m", "to": "a", "stiffness": 1e6},
                     {"id": "s2", "kind": "shaft", "from": "m", "to": "b", "stiffness": 1e6}],
           "reference": "m", "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
           "excitations": [{"name": "1x", "at": "m", "orders": [1]}],
           "load_cases": [{"name": "duty", "law": "constant_power", "power": "100 kW", "speed": "1500 rpm",
                           "driven": [{"at": "a", "share": "75 %"}, {"at": "b", "share": "25 %"}]}],
           "transients": [{"name": "kick", "duration": "0.1 s",
                           "torques": [{"at": "b", "table": [["0 s", "0 N*m"], ["1 ms", "1 kN*m"]]}]}],
           "design_options": ["s1", "b"]}
    renamed = edits.rename_disc(doc, "b", "pump_b")
    assert renamed["load_cases"][0]["driven"][1]["at"] == "pump_b"
    assert renamed["transients"][0]["torques"][0]["at"] == "pump_b"
    assert renamed["design_options"] == ["s1", "pump_b"]
    build_train(renamed)
    new, changes = edits.delete_report(doc, ("disc", "b"))
    assert new["load_cases"][0]["driven"] == [{"at": "a", "share": "100 %"}]
    assert "transients" not in new or new["transients"] == []
    assert new["design_options"] == ["s1"]
    assert any("load case 'duty'" in c for c in changes) and any("kick" in c for c in changes)
    build_train(new)  # the model still builds
