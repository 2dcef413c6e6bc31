"""Main window of the desktop program (issue 4, items 1-4, 6-10): pytest-qt, offscreen.

Reference values come from core itself run on the edited document (the GUI
must show exactly what core computes) and from app.formatting (the digits
every view prints).
"""
from __future__ import annotations

import copy
import json
import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6 import QtCore, QtGui, QtWidgets  # noqa: E402

from app import formatting as fmt  # noqa: E402
from app.cli import CAUTION, main as cli_main  # noqa: E402
from app.gui import edits  # noqa: E402
from app.gui import main_window as mw  # noqa: E402
from app.gui.compute import compute  # noqa: E402
from app.gui.forms import ERROR_STYLE, Field  # noqa: E402
from core.project import build_train, load_document  # noqa: E402

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
PUMP = next(p for p in SAMPLES if p.name == "pump_set.json")


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
    win.project.undo_stack.setClean()  # no "unsaved changes" prompt at teardown
    win.runner.wait()
    win.close()
    win.deleteLater()


def wait_results(qtbot, win):
    """Until the results shown belong to the current (last good) train."""
    qtbot.waitUntil(lambda: win.results is not None and win.results.train is win.project.train, timeout=15000)
    win.runner.wait()
    QtWidgets.QApplication.processEvents()


def open_sample(qtbot, win, path=PUMP):
    assert win.open_path(path)
    wait_results(qtbot, win)


def texts_in_views(widget) -> set[str]:
    """Every cell text of every item view inside ``widget``."""
    out = set()
    for view in widget.findChildren(QtWidgets.QAbstractItemView):
        model = view.model()
        if model is None:
            continue
        root = QtCore.QModelIndex()
        for r in range(model.rowCount(root)):
            try:
                n_columns = model.columnCount(root)
            except TypeError:  # list models keep columnCount private
                n_columns = 1
            for c in range(n_columns):
                v = model.data(model.index(r, c))
                if v is not None:
                    out.add(str(v).strip())
    return out


def field_at(win, path) -> Field:
    QtWidgets.QApplication.processEvents()  # new form widgets are shown on the next event loop pass
    for f in win.findChildren(Field):
        if f.path == tuple(path) and f.isVisible():
            return f
    raise AssertionError(f"no visible field for {path}")


def type_into(qtbot, field: Field, text: str):
    field.setFocus()
    field.selectAll()
    qtbot.keyClicks(field, text)
    qtbot.keyClick(field, QtCore.Qt.Key_Return)


def test_the_live_study_reads_ahead_what_every_redraw_reads():
    # the verdict's acceptance argument and the marks of modes above the screening limit are
    # computed on first use; the live study computes them where it is made (the worker), so the
    # redraw on the GUI thread only reads them
    from app.gui.compute import complete
    first = compute(build_train(load_document(PUMP)), first_stage=True)
    for res in (first, complete(first)):
        assert {"argument", "above_screening_limit"} <= set(vars(res.study))


# ----------------------------------------------------------------- items 1 and 2
@pytest.mark.parametrize("path", SAMPLES, ids=[p.stem for p in SAMPLES])
def test_every_sample_opens_with_results_and_a_drawn_train(qtbot, window, path):
    open_sample(qtbot, window, path)
    doc = load_document(path)
    expected = compute(build_train(doc))  # what core computes for the file
    got = window.results
    assert list(got.modes.frequency_hz) == pytest.approx(list(expected.modes.frequency_hz), rel=1e-12)
    shown = texts_in_views(window.results_panel)
    for f in expected.modes.frequency_hz[expected.modes.elastic]:
        assert fmt.hz(f) in shown
    keys = set(window.canvas._items)
    assert {("disc", d["id"]) for d in doc["discs"]} <= keys
    assert {("link", l["id"]) for l in doc["links"]} <= keys
    assert doc["title"] in window.windowTitle() and path.name in window.windowTitle()
    assert not window.isWindowModified()
    assert window.status_verdict.text().split()[0] in ("PASS", "FAIL", "OPEN")
    assert "ms" in window.status_time.text()


def test_title_carries_the_unsaved_mark(qtbot, window):
    open_sample(qtbot, window)
    window.project.set_value(("title",), "Pump set, softer coupling")
    assert window.isWindowModified()
    assert "Pump set, softer coupling" in window.windowTitle() and "[*]" in window.windowTitle()


# ----------------------------------------------------------------- item 3: forms
def test_stiffness_edited_in_the_form_changes_the_frequency_table_to_core_values(qtbot, window):
    open_sample(qtbot, window)
    before = set(fmt.hz(f) for f in window.results.modes.frequency_hz)
    index = [l["id"] for l in window.project.doc["links"]].index("coupling")
    window.set_selection(("link", "coupling"))
    field = field_at(window, ("links", index, "stiffness"))
    type_into(qtbot, field, "40 kN*m/rad")
    wait_results(qtbot, window)
    assert window.project.doc["links"][index]["stiffness"] == "40 kN*m/rad"  # the user's text, kept
    edited = copy.deepcopy(load_document(PUMP))
    edited["links"][index]["stiffness"] = "40 kN*m/rad"
    expected = compute(build_train(edited))
    shown = texts_in_views(window.results_panel)
    for f in expected.modes.frequency_hz[expected.modes.elastic]:
        assert fmt.hz(f) in shown
    assert set(fmt.hz(f) for f in expected.modes.frequency_hz) != before
    # the interference diagram gets the same screening (natural-frequency lines at these values)
    panel_screening = getattr(window.results_panel, "screening", None) or window.results.screening
    assert list(panel_screening.modes.frequency_hz) == pytest.approx(list(expected.modes.frequency_hz), rel=1e-12)


def test_bare_number_is_read_in_the_displayed_unit(qtbot, window):
    open_sample(qtbot, window)
    window.set_unit_system("US")
    window.set_selection(("disc", "motor"))
    type_into(qtbot, field_at(window, ("discs", 0, "inertia")), "300")
    assert window.project.doc["discs"][0]["inertia"] == "300 lb*ft^2"
    wait_results(qtbot, window)
    # 1 lb*ft^2 = 0.0421401 kg*m^2 (NIST SP 811 conversion factors, from memory)
    assert window.project.train.disc("motor").inertia == pytest.approx(300 * 0.0421401, rel=1e-5)


def test_wrong_unit_is_marked_in_place_and_the_model_is_unchanged(qtbot, window):
    open_sample(qtbot, window)
    good_train, good_results = window.project.train, window.results
    window.set_selection(("disc", "motor"))
    field = field_at(window, ("discs", 0, "inertia"))
    type_into(qtbot, field, "14.2 kg")  # a mass, not an inertia
    QtWidgets.QApplication.processEvents()
    field = field_at(window, ("discs", 0, "inertia"))
    assert field.styleSheet() == ERROR_STYLE
    assert field.problem_label.isVisible() and "wrong kind of unit" in field.problem_label.text()
    # the error names the element and the field, and the last good model keeps showing
    assert window.error_banner.isVisible()
    assert "disc 'motor'" in window.error_banner.text() and "inertia" in window.error_banner.text()
    assert window.project.train is good_train and window.results is good_results
    # nothing typed is lost: the document holds the text, the discs table marks the cell
    assert window.project.doc["discs"][0]["inertia"] == "14.2 kg"
    cell = window.disc_table.item(0, 2)
    assert cell.background().color() != QtGui.QColor(QtCore.Qt.white) and "Problem" in cell.toolTip()
    # undo brings the good value back and clears the marks
    window.project.undo_stack.undo()
    assert window.project.error is None and not window.error_banner.isVisible()


def test_unit_system_switch_is_display_only(qtbot, window):
    open_sample(qtbot, window)
    doc_before = copy.deepcopy(window.project.doc)
    window.set_unit_system("US")
    assert "lb*ft^2" in window.disc_table.item(0, 2).text()
    assert window.project.doc == doc_before and not window.isWindowModified()
    window.set_unit_system("SI")
    assert "kg*m^2" in window.disc_table.item(0, 2).text()


def test_table_edit_and_disc_rename_update_references(qtbot, window):
    open_sample(qtbot, window)
    item = window.disc_table.item(0, 0)
    item.setText("drive_motor")
    doc = window.project.doc
    assert doc["discs"][0]["id"] == "drive_motor"
    assert doc["links"][0]["from"] == "drive_motor" and doc["reference"] == "drive_motor"
    assert any(e.get("at") == "drive_motor" for e in doc["excitations"])
    assert window.project.error is None


def test_hidden_forms_tab_shows_the_current_document_when_opened(qtbot, window):
    """Only the forms tab on screen is refreshed per edit; the link table catches up
    (values and selection) as soon as its tab is opened."""
    open_sample(qtbot, window)
    window.tabs.setCurrentWidget(window.disc_table)
    index = [l["id"] for l in window.project.doc["links"]].index("coupling")
    window.project.set_value(("links", index, "stiffness"), "41 kN*m/rad")
    window.project.set_value(("links", index, "id"), "soft_coupling")
    window.set_selection(("link", "soft_coupling"))  # opens the Links tab
    assert window.tabs.currentWidget() is window.link_table
    assert window.link_table.item(index, 0).text() == "soft_coupling"
    assert "41" in window.link_table.item(index, 5).text()  # Id, Name, Kind, From, To, Stiffness
    assert window.link_table.selectionModel().selectedRows()[0].row() == index


def test_editing_the_selected_link_repeatedly_keeps_it_highlighted(qtbot, window):
    """Each edit redraws the selected link; its highlight moves to the new drawing
    (an earlier highlight made with a graphics effect crashed on the second edit)."""
    open_sample(qtbot, window)
    window.set_selection(("link", "coupling"))
    index = [l["id"] for l in window.project.doc["links"]].index("coupling")
    for value in ("30 kN*m/rad", "31 kN*m/rad", "32 kN*m/rad", "33 kN*m/rad"):
        window.project.set_value(("links", index, "stiffness"), value)
        wait_results(qtbot, window)
        window.canvas.viewport().grab()  # paint now
        halos = window.canvas._halos.get(("link", "coupling"))
        assert halos and all(h.scene() is window.canvas.scene() for h in halos)
    window.set_selection(None)
    assert not window.canvas._halos


def test_shaft_geometry_segments_and_material(qtbot, window):
    open_sample(qtbot, window)
    links = window.project.doc["links"]
    index = [l["id"] for l in links].index("pump_shaft")
    window.set_selection(("link", "pump_shaft"))
    n = len(links[index]["segments"])
    add = [b for b in window.property_form.findChildren(QtWidgets.QPushButton) if b.text() == "Add segment"][0]
    add.click()
    assert len(window.project.doc["links"][index]["segments"]) == n + 1
    type_into(qtbot, field_at(window, ("links", index, "segments", n, "length")), "2.5 in")
    assert window.project.doc["links"][index]["segments"][n]["length"] == "2.5 in"
    wait_results(qtbot, window)
    seg = window.project.train.links[index].segments[n]
    assert seg.length == pytest.approx(2.5 * 0.0254)  # 1 in = 25.4 mm exactly (international inch)
    combo = [c for c in window.property_form.findChildren(QtWidgets.QComboBox) if c.findText("custom") >= 0][0]
    combo.setCurrentText("custom")
    mat = window.project.doc["links"][index]["material"]
    assert isinstance(mat, dict) and {"shear_modulus", "density"} <= set(mat)
    assert window.project.error is None


def test_operating_data_editor(qtbot, window):
    open_sample(qtbot, window)
    form = window.operating_form
    window.project.set_value(("margin_percent",), 12)  # while the tab is hidden: shown when it opens
    window.tabs.setCurrentWidget(form)
    assert field_at(window, ("margin_percent",)).text() == "12"
    type_into(qtbot, field_at(window, ("margin_percent",)), "15")
    assert window.project.doc["margin_percent"] == 15
    wait_results(qtbot, window)
    assert window.results.screening.margin == pytest.approx(0.15)
    n = len(window.project.doc["excitations"])
    window.tabs.setCurrentWidget(window.excitations_form)
    window.excitations_form.add_button.click()
    assert len(window.project.doc["excitations"]) == n + 1
    assert window.excitations_form.current == n
    type_into(qtbot, field_at(window, ("excitations", n, "orders", 0, "order")), "3")
    window.excitations_form.orders.add_button.click()
    assert window.project.doc["excitations"][n]["orders"] == [3, 4]
    window.tabs.setCurrentWidget(form)
    type_into(qtbot, field_at(window, ("operating_speed", "max")), "1400 rpm")  # below min 1485 rpm
    assert window.project.error is not None and window.project.error.element == "operating data"
    f = field_at(window, ("operating_speed", "min"))
    assert f.styleSheet() == ERROR_STYLE and f.problem_label.isVisible()


# ----------------------------------------------------------------- item 6: undo, files
def test_undo_redo_round_trip(qtbot, window):
    open_sample(qtbot, window)
    original = copy.deepcopy(window.project.doc)
    window.project.set_value(("discs", 3, "inertia"), "4.4 kg*m^2", "edit")
    window.set_selection(("disc", "hub_m"))
    window.insert("coupling")
    window.set_selection(("link", "pump_shaft"))
    window.delete_selected()
    window.project.replace(edits.rename_disc(window.project.doc, "motor", "m1"), "rename")
    after = copy.deepcopy(window.project.doc)
    stack = window.project.undo_stack
    assert stack.count() == 4
    while stack.canUndo():
        stack.undo()
    assert window.project.doc == original and not window.isWindowModified()
    while stack.canRedo():
        stack.redo()
    assert window.project.doc == after


def test_save_reopen_compare(qtbot, window, tmp_path):
    open_sample(qtbot, window)
    window.project.set_value(("links", 1, "stiffness"), "120 kN*m/rad")
    window.project.doc["extra_key_kept"] = {"note": "unknown keys survive"}
    target = tmp_path / "pump.json"
    assert window._save_to(target)
    assert not window.isWindowModified() and target.name in window.windowTitle()
    window.project.set_value(("title",), "Second save")
    assert window.save()
    assert (tmp_path / "pump.json.bak1").exists()  # previous version kept
    saved = json.loads(target.read_text(encoding="utf-8"))
    assert saved == window.project.doc
    assert str(target.resolve()) in window.recent_files()
    other = mw.MainWindow(settings=window.settings, autosave=False)
    qtbot.addWidget(other)
    assert other.open_path(target)
    assert other.project.doc == window.project.doc


def test_unsaved_changes_prompt_guards_new_and_close(qtbot, window, monkeypatch):
    open_sample(qtbot, window)
    window.project.set_value(("title",), "changed")
    asked = []
    monkeypatch.setattr(QtWidgets.QMessageBox, "exec", lambda self: asked.append(self.text()) or
                        QtWidgets.QMessageBox.Cancel)
    window.new_blank()
    assert asked and window.project.doc["title"] == "changed"  # cancelled: nothing lost
    event = QtGui.QCloseEvent()
    window.closeEvent(event)
    assert not event.isAccepted()


def test_autosave_recovery_after_a_crash(qtbot, window, tmp_path):
    open_sample(qtbot, window)
    window.project.set_value(("discs", 0, "inertia"), "15 kg*m^2")
    window.write_recovery()
    files = list((tmp_path / "recovery").glob("unsaved-*.json"))
    assert len(files) == 1
    # the program "crashes" (no close); a new one starts and offers the work back
    fresh = mw.MainWindow(settings=window.settings, autosave=False)
    qtbot.addWidget(fresh)
    offered = []
    assert fresh.offer_recovery(ask=lambda text: offered.append(text) or True)
    assert "did not close normally" in offered[0]
    assert fresh.project.doc == window.project.doc and fresh.project.dirty
    fresh.project.undo_stack.setClean()
    fresh.remove_recovery()


# ----------------------------------------------------------------- canvas insert / delete
def test_insert_and_delete_on_the_canvas(qtbot, window):
    open_sample(qtbot, window)
    original = copy.deepcopy(window.project.doc)
    canvas = window.canvas
    item = canvas._items[("disc", "hub_m")]
    pos = canvas.mapFromScene(item.sceneBoundingRect().center())
    qtbot.mouseClick(canvas.viewport(), QtCore.Qt.LeftButton, pos=pos)
    assert window.selection == ("disc", "hub_m")
    assert window.disc_table.selectionModel().selectedRows()[0].row() == 1  # selected in the forms too
    assert window.act_ins_coupling in canvas.context_actions and window.act_delete in canvas.context_actions
    window.act_ins_coupling.trigger()
    doc = window.project.doc
    new_disc = window.selection[1]
    assert len(doc["discs"]) == len(original["discs"]) + 1 and len(doc["links"]) == len(original["links"]) + 1
    new_link = next(l for l in doc["links"] if l["to"] == new_disc)
    assert new_link["kind"] == "coupling" and new_link["from"] == "hub_m"
    assert window.project.error is None  # still one connected train
    assert ("disc", new_disc) in canvas._items and ("link", new_link["id"]) in canvas._items
    wait_results(qtbot, window)
    assert len(window.results.train.discs) == len(original["discs"]) + 1
    window.act_delete.trigger()
    assert window.project.doc == original
    # a link selected on the canvas and deleted
    window.set_selection(("link", "coupling"))
    window.act_delete.trigger()
    assert "coupling" not in edits.link_ids(window.project.doc)


def _drawn(canvas) -> dict:
    """What the schematic shows per element: block rectangle and pen, line weights,
    label texts, fill (compared between a live-edited and a freshly drawn canvas)."""
    out = {}
    for key, item in canvas._items.items():
        if key[0] == "disc":
            r = item.rect()
            look = ((round(r.x(), 6), round(r.y(), 6), round(r.width(), 6), round(r.height(), 6)),
                    item.pen().color().name(), round(item.pen().widthF(), 6), item.brush().color().name())
        else:
            look = tuple(sorted((type(c).__name__, round(c.pen().widthF(), 6), c.pen().color().name())
                                for c in item.childItems() if hasattr(c, "pen")))
        labels = tuple(sorted(rec[1] for rec in canvas._element_labels.get(key, ())))
        out[key] = (look, labels, item.toolTip())
    return out


@pytest.mark.parametrize("path", SAMPLES, ids=[p.stem for p in SAMPLES])
def test_schematic_after_live_edits_equals_a_fresh_drawing(qtbot, window, path):
    """The schematic redraws only what an edit changed; after a series of edits it
    must look exactly as the same document drawn from scratch."""
    open_sample(qtbot, window, path)
    doc = window.project.doc
    softest = min(range(len(doc["links"])), key=lambda k: window.project.train.links[k].stiffness or 1e99)
    heaviest = max(range(len(doc["discs"])), key=lambda k: window.project.train.discs[k].inertia)
    window.project.set_value(("links", softest, "stiffness"), "1 N*m/rad")  # moves the log scale's end
    window.project.set_value(("discs", heaviest, "inertia"), "1e6 kg*m^2")
    window.project.set_value(("discs", 0, "name"), "Renamed first disc")
    window.set_selection(("link", doc["links"][0]["id"]))
    before = copy.deepcopy(window.project.doc["links"][0])
    window.project.set_value(("links", 0, "stiffness"), "bad value")  # an error mark, then undone
    window.project.undo_stack.undo()
    assert window.project.doc["links"][0] == before  # a field that was absent is absent again
    assert window.project.error is None
    window.insert("coupling")
    window.set_unit_system("US")
    fresh = mw.TrainCanvas()
    qtbot.addWidget(fresh)
    fresh.set_document(window.project.doc, "US")
    fresh.select(window.selection)
    fresh.set_mode_shape(window.canvas._shape)
    assert _drawn(window.canvas) == _drawn(fresh)
    assert len(window.canvas.scene().items()) == len(fresh.scene().items())


def test_gear_mesh_insert_after_a_link_splits_it():
    doc = load_document(PUMP)
    new, sel = edits.insert_after(doc, ("link", "coupling"), "gear_mesh")
    ids = [(l["id"], l["from"], l["to"]) for l in new["links"]]
    assert ("gear_mesh_1", "hub_m", sel[1]) in ids and ("coupling", sel[1], "hub_p") in ids
    build_train(new)
    assert edits.delete(new, sel) == doc


def test_mode_amplitude_colours_the_discs(qtbot, window):
    open_sample(qtbot, window)
    modes = window.results.modes
    i = int(next(j for j in range(len(modes)) if not modes.rigid_body[j]))
    window.results_panel.select_mode(i)
    window._show_mode_colour()
    shape = modes.shape_dict(i)
    brushes = {d: window.canvas._items[("disc", d)].brush().color() for d in shape}
    biggest = max(shape, key=lambda d: abs(shape[d]))
    assert brushes[biggest] != QtGui.QColor("white")
    assert len({c.name() for c in brushes.values()}) > 1


# ----------------------------------------------------------------- live results
def test_slow_solves_go_to_a_worker_and_stale_results_are_dropped(qtbot, window):
    open_sample(qtbot, window)
    window.runner.last_time_s = 1.0  # pretend the last solve was slow: use the worker thread
    shown = []
    window.runner.resultsReady.connect(lambda res: shown.append(res))
    window.project.set_value(("links", 1, "stiffness"), "90 kN*m/rad")
    window.project.set_value(("links", 1, "stiffness"), "80 kN*m/rad")
    window.runner.last_time_s = 1.0
    qtbot.waitUntil(lambda: bool(shown) and shown[-1].train is window.project.train, timeout=15000)
    window.runner.wait()
    QtWidgets.QApplication.processEvents()
    assert all(r.train is window.project.train for r in shown)  # no stale result reached the views
    assert window.project.train.links[1].stiffness == pytest.approx(80e3)


# ----------------------------------------------------------------- items 7 and 8
def test_caution_is_visible(qtbot, window):
    open_sample(qtbot, window)
    assert window.caution.isVisible() and CAUTION in window.caution.text()
    window.tabs.setCurrentIndex(2)
    window.set_selection(("link", "coupling"))
    assert window.caution.isVisible()
    assert window.caution.geometry().height() > 10


def test_screenshot_command_writes_a_png(qtbot, tmp_path):
    out = tmp_path / "shot.png"
    assert cli_main(["screenshot", str(PUMP), "-o", str(out), "--size", "1200x750"]) == 0
    image = QtGui.QImage(str(out))
    assert out.stat().st_size > 10_000 and (image.width(), image.height()) == (1200, 750)


def test_screenshot_shows_the_results_view_asked_for(qtbot, tmp_path, monkeypatch):
    """--tab picks the results view in the picture (README images of the interference diagram)."""
    shown = []
    real = mw.render_window

    def spy(*args, **kwargs):
        shown.append(kwargs.get("results_tab"))
        return real(*args, **kwargs)

    monkeypatch.setattr(mw, "render_window", spy)
    out = tmp_path / "diagram.png"
    assert cli_main(["screenshot", str(PUMP), "-o", str(out), "--size", "900x600", "--tab", "interference"]) == 0
    assert shown == ["campbell"] and out.stat().st_size > 10_000


@pytest.mark.parametrize("argv", [
    ["screenshot", "missing.json", "-o", "x.png"],
    ["screenshot", str(PUMP), "-o", "x.png", "--size", "big"],
])
def test_screenshot_bad_input_is_one_line_and_exit_2(tmp_path, capsys, argv):
    argv = [a if a != "x.png" else str(tmp_path / "x.png") for a in argv]
    assert cli_main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("twistwise:") and "\n" not in err and "Traceback" not in err


def test_a_file_whose_model_does_not_build_still_opens_with_the_error_shown(qtbot, window, tmp_path):
    doc = load_document(PUMP)
    doc["links"][1]["stiffness"] = "95 kg"  # a mass, not a stiffness
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(doc), encoding="utf-8")
    assert window.open_path(bad)
    QtWidgets.QApplication.processEvents()
    assert window.project.doc == doc  # nothing the user saved is lost
    assert window.project.train is None and window.results is None
    assert window.error_banner.isVisible() and "link 'coupling'" in window.error_banner.text()
    assert "stiffness" in window.error_banner.text()
    assert ("link", "coupling") in window.canvas._items  # the train is still drawn
    window.project.set_value(("links", 1, "stiffness"), "95 kN*m/rad")
    wait_results(qtbot, window)
    assert not window.error_banner.isVisible()


def test_renamed_link_stays_selected(qtbot, window):
    open_sample(qtbot, window)
    window.set_selection(("link", "coupling"))
    type_into(qtbot, field_at(window, ("links", 1, "id")), "disc_pack")
    assert window.project.doc["links"][1]["id"] == "disc_pack"
    assert window.selection == ("link", "disc_pack")


def test_closing_the_window_cancels_a_transient_run(qtbot, window):
    """A start-up simulation still running when the user quits is cancelled and waited for:
    no worker outlives its widgets (a late result after quit used to be a traceback)."""
    open_sample(qtbot, window, next(p for p in SAMPLES if p.name == "sync_motor_compressor.json"))
    panel = window.results_panel
    qtbot.waitUntil(lambda: getattr(window.results, "complete", True), timeout=30000)
    panel.tabs.setCurrentIndex(panel.tab_index("transients"))
    view = panel.transient_view
    assert view.run_button.isEnabled()
    view.run()
    assert view.is_running()
    window.project.undo_stack.setClean()
    window.close()
    assert not view.is_running()
