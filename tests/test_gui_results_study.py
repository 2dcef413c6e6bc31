"""The result panel fed one study (issue 9 items 3-7, issue 10 items 2, 4 and 6), offscreen.

Expected values come from core (core.study.run_study, core.units for
conversions) printed through app.formatting: the views must show what the
study holds, by name, in the chosen unit system, and never a verdict the
model on screen has not earned.
"""
from __future__ import annotations

import copy
import csv
import dataclasses
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pytestqt")
import pyqtgraph as pg  # noqa: E402
from PySide6 import QtCore, QtGui, QtWidgets  # noqa: E402

from app import formatting as fmt  # noqa: E402
from app.gui.results import rows as R  # noqa: E402
from app.gui.results.campbell_view import RPM, margin_band_hz, margin_band_text  # noqa: E402
from core import units  # noqa: E402
from core.about import CAUTION  # noqa: E402
from core.errors import ModelError  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import Study, run_study  # noqa: E402

SAMPLES = Path(__file__).resolve().parent.parent / "sample_projects"


def _doc(name):
    return load_document(SAMPLES / f"{name}.json")


def _study(doc):
    return run_study(build_train(doc))


@pytest.fixture
def panel(results_panel):
    return results_panel(1200, 800)


def _texts(widget) -> list[str]:
    """Every text a person can read in the panel: labels, buttons, tab titles and tips,
    table cells and tips, plot labels and key entries."""
    out = []
    for w in widget.findChildren(QtWidgets.QWidget):
        for attr in ("text", "toolTip"):
            f = getattr(w, attr, None)
            if callable(f):
                try:
                    t = f()
                except TypeError:
                    continue
                if isinstance(t, str) and t:
                    out.append(t)
        if isinstance(w, QtWidgets.QTabWidget):
            for i in range(w.count()):
                out += [w.tabText(i), w.tabToolTip(i)]
        if isinstance(w, QtWidgets.QAbstractItemView) and w.model() is not None:
            m = w.model()
            for r in range(m.rowCount()):
                for c in range(m.columnCount()):
                    for role in (QtCore.Qt.DisplayRole, QtCore.Qt.ToolTipRole):
                        v = m.data(m.index(r, c), role)
                        if v:
                            out.append(str(v))
            for c in range(m.columnCount()):
                out.append(str(m.headerData(c, QtCore.Qt.Horizontal, QtCore.Qt.DisplayRole)))
    for view in widget.findChildren(pg.GraphicsView):
        for item in view.scene().items():
            if isinstance(item, QtWidgets.QGraphicsTextItem):
                out.append(item.toPlainText())
            elif isinstance(item, QtWidgets.QGraphicsSimpleTextItem):
                out.append(item.text())
            if item.toolTip():
                out.append(item.toolTip())
    return out


# ------------------------------------------------------------ set_study
@pytest.mark.parametrize("name", ["pump_set", "engine_genset", "compressor_train"])
def test_set_study_fills_every_view(panel, name):
    study = _study(_doc(name))
    panel.set_study(study, 0.0123)
    assert panel.study is study and panel.screening is study.screening
    rows = panel.modes_view.table_model.rows
    assert len(rows) == len(study.modes)
    assert panel.tabs.isTabEnabled(1)
    assert panel.tabs.isTabEnabled(2) == (study.response is not None)
    assert "12.3 ms" in panel.details.text()
    # issue 10 item 6: modes above the screening limit are listed and marked, not hidden
    for i, row in enumerate(rows):
        if study.above_screening_limit[i]:
            assert row.cells[6] == "above the screening limit" and row.status == "muted"
            assert "above the screening limit" in row.tooltip.lower()
        elif study.modes.elastic[i]:
            assert row.cells[6] == "screened"


def test_pump_set_lists_the_modes_above_the_screening_limit(panel):
    study = _study(_doc("pump_set"))
    assert study.above_screening_limit.any()  # the sample has some (core's rule: at least six elastic modes)
    panel.set_study(study)
    marked = [r.cells[0] for r in panel.modes_view.table_model.rows if r.cells[6] == "above the screening limit"]
    assert marked == [str(int(n)) for n in study.modes.number[study.above_screening_limit]]


def test_set_results_is_a_thin_wrapper(panel):
    study = _study(_doc("engine_genset"))
    panel.set_results(study.train, study.modes, study.screening, study.response, 0.01)
    assert panel.tabs.isTabEnabled(2)
    assert panel.study.response is study.response
    assert len(panel.modes_view.table_model.rows) == len(study.modes)


# ------------------------------------------------------------ item 3: the forced-response tab
def _darkest(image: QtGui.QImage, rect: QtCore.QRect) -> int:
    """Lowest grey value (0 black .. 255 white) inside ``rect`` of ``image``: the tab's text."""
    low = 255
    for x in range(rect.left() + 2, rect.right() - 2):
        for y in range(rect.top() + 2, rect.bottom() - 2):
            low = min(low, QtGui.qGray(image.pixel(x, y)))
    return low


def test_response_tab_turns_on_with_one_amplitude_and_looks_disabled_without(panel, qtbot):
    doc = _doc("pump_set")
    panel.set_study(_study(doc))
    bar = panel.tabs.tabBar()
    assert not panel.tabs.isTabEnabled(2)
    assert panel.tabs.tabToolTip(2) == "Give an excitation an amplitude to see the forced response."
    # looks disabled: its text is drawn much lighter than an enabled tab's (not just unresponsive)
    image = bar.grab().toImage()
    assert _darkest(image, bar.tabRect(2)) > _darkest(image, bar.tabRect(1)) + 60
    # and its tooltip shows although the tab is disabled
    pos = bar.tabRect(2).center()
    QtWidgets.QApplication.sendEvent(bar, QtGui.QHelpEvent(QtCore.QEvent.ToolTip, pos, bar.mapToGlobal(pos)))
    assert QtWidgets.QToolTip.text() == panel.tabs.tabToolTip(2)
    QtWidgets.QToolTip.hideText()
    # one amplitude is enough
    doc = copy.deepcopy(doc)
    doc["excitations"][0]["orders"] = [{"order": 1, "amplitude": "200 N*m"}, 2]
    study = _study(doc)
    assert study.response is not None
    panel.set_study(study)
    assert panel.tabs.isTabEnabled(2)
    assert panel.tabs.tabToolTip(2) == panel.response_tip
    panel.tabs.setCurrentIndex(2)
    curves = [c for c in panel.response_view.plot.listDataItems() if c.name()]
    assert curves


def test_response_error_is_the_tab_tip_and_in_the_verdict(panel):
    study = _study(_doc("engine_genset"))
    error = ModelError("the speed range gives no speed to compute at", "operating_speed", "min")
    broken = dataclasses.replace(study, response=None, response_error=error)
    panel.set_study(broken)
    assert not panel.tabs.isTabEnabled(2)
    assert panel.tabs.tabToolTip(2) == f"Forced response not computed: {error}"
    assert str(error) in panel.verdict.text()


def test_a_view_that_fails_greys_its_tab_and_says_why(panel, monkeypatch):
    study = _study(_doc("engine_genset"))

    def boom(*_a, **_k):
        raise ValueError("array of the wrong shape")
    monkeypatch.setattr(panel.response_view, "set_response", boom)
    panel.set_study(study)
    assert not panel.tabs.isTabEnabled(2)
    assert "array of the wrong shape" in panel.tabs.tabToolTip(2)
    assert panel.modes_view.table_model.rowCount() == len(study.modes)  # the rest still shows


# ------------------------------------------------------------ item 4: names over ids
def _named_pump_set():
    doc = _doc("pump_set")
    names = {"motor_shaft": "Motor shaft end", "coupling": "Flexible coupling", "pump_shaft": "Pump shaft"}
    for link in doc["links"]:
        link["name"] = names[link["id"]]
    doc["excitations"][0]["orders"] = [{"order": 1, "amplitude": "200 N*m"}, {"order": 2, "amplitude": "50 N*m"}]
    for link in doc["links"]:
        link["permissible_torque"] = "5 kN*m"
    return doc, names


def test_names_over_ids_in_every_table_plot_and_key(panel):
    doc, names = _named_pump_set()
    study = _study(doc)
    train = study.train
    panel.set_study(study)
    m = study.modes
    # frequency table: dominant link and disc by name
    for i, row in enumerate(panel.modes_view.table_model.rows):
        if m.elastic[i]:
            assert row.cells[4].startswith(train.name_of(m.dominant_link(i)) + " (")
            assert row.cells[4].split(" (")[0] in names.values()
        assert row.cells[5].startswith(train.name_of(m.dominant_disc(i)) + " (")
    # mode-shape axis: disc names (shortened with an ellipsis only where they do not fit)
    ticks = [t for _x, t in panel.modes_view.lower.getAxis("bottom")._tickLevels[0] if t]
    disc_names = [d.name for d in train.discs]
    assert ticks and all(any(n.startswith(t.rstrip("…")) for n in disc_names) for t in ticks)
    # modal torque bars: tips by link name
    tip = panel.modes_view._bar_tip(1, 0.0)
    assert tip.startswith(names[train.links[1].id])
    # forced response: table, curves and key by link name
    panel.tabs.setCurrentIndex(2)
    rv = panel.response_view
    assert [r.cells[0] for r in rv.peak_model.rows] == [names[l.id] for l in train.links]
    rv.set_checked_links(train.link_ids)
    assert sorted(c.name() for c in rv.plot.listDataItems() if c.name()) == sorted(names.values())
    assert all(any(t.startswith(n) for n in names.values()) for t in rv.curve_key_texts)
    assert set(rv.curve_key_texts) <= set(rv.legend.texts)
    # no link id appears where a name exists ('coupling' is also a kind and a word of a name)
    shown = "\n".join(_texts(panel))
    for lid in ("motor_shaft", "pump_shaft"):
        assert lid not in shown, lid


def test_coincidence_tip_names_the_disc(panel):
    study = _study(_doc("twin_pump_gearbox"))
    panel.set_study(study)
    tips = [r.tooltip for r in panel.campbell_view.coincidence_model.rows if "order" in r.tooltip]
    assert tips and all("'pump_a'" not in t and "'pump_b'" not in t for t in tips)
    assert any("Booster pump A" in t for t in tips)


# ------------------------------------------------------------ item 5: one unit system
def test_unit_system_reaches_every_axis_column_tip_and_export(panel, tmp_path):
    doc, _names = _named_pump_set()
    study = _study(doc)
    panel.set_study(study)
    panel.tabs.setCurrentIndex(2)
    panel.set_unit_system("US")
    rv = panel.response_view
    headers = rv.peak_model.headers
    assert "lbf·ft" in headers[2] and "ksi" in headers[5]
    for row, peak in zip(rv.peak_model.rows, study.response_peaks):
        # 1 lbf*ft = 1.3558179 N*m (0.3048 m x 4.4482216 N, exact definitions of the foot and the
        # pound-force), three significant digits, never in exponent form
        expected = peak.peak_torque / (0.3048 * 4.4482216152605)
        assert "e" not in row.cells[2]
        assert float(row.cells[2]) == pytest.approx(expected, rel=5e-3)
        assert "lbf·ft" in row.tooltip
    assert "lbf·ft" in rv.plot.getAxis("left").labelText
    # modal torque axis and tips
    panel.tabs.setCurrentIndex(0)
    title = panel.modes_view.lower.titleLabel.text
    assert "lbf·ft" in title or "kip·ft" in title
    assert "lbf·ft" in panel.modes_view._bar_tip(0, 0.0) or "kip·ft" in panel.modes_view._bar_tip(0, 0.0)
    # export follows
    out = tmp_path / "response.csv"
    panel.export_response_csv(str(out))
    rows = list(csv.reader(out.open(encoding="utf-8")))
    assert rows[2] == list(R.response_headers("US", one_line=True)) and "lbf·ft" in rows[2][2]
    # and back
    panel.set_unit_system("SI")
    assert "kN·m" in rv.peak_model.headers[2]
    assert "N·m" in panel.modes_view.lower.titleLabel.text


# ------------------------------------------------------------ item 7: words and exports
def test_margin_band_key_says_what_the_band_is(panel):
    study = _study(_doc("engine_genset"))
    panel.set_study(study)
    panel.tabs.setCurrentIndex(1)
    m = study.screening.margin
    text = margin_band_text(m)
    assert text in panel.campbell_view.legend.texts
    # the words match the band drawn: an excitation f_exc is inside it when
    # |f_n - f_exc| < m * f_exc, i.e. f_n/(1+m) < f_exc < f_n/(1-m) (algebra)
    lo, hi = margin_band_hz(100.0, m)
    for f_exc in (lo * 1.0001, hi * 0.9999):
        assert abs(100.0 - f_exc) < m * f_exc
    for f_exc in (lo * 0.999, hi * 1.001):
        assert not abs(100.0 - f_exc) < m * f_exc


def test_no_screen_says_cap(panel):
    for name in ("pump_set", "compressor_train"):
        panel.set_study(_study(_doc(name)))
        for tab in range(3):
            if panel.tabs.isTabEnabled(tab):
                panel.tabs.setCurrentIndex(tab)
        text = "\n".join(_texts(panel)).lower()
        assert "above cap" not in text and "screening cap" not in text


def test_forced_response_exports_to_csv_with_the_caution(panel, tmp_path):
    study = _study(_doc("propulsion_line"))
    panel.set_study(study)
    out = tmp_path / "peaks.csv"
    panel.export_response_csv(str(out))
    rows = list(csv.reader(out.open(encoding="utf-8")))
    assert rows[0][0].startswith("# Forced response peaks") and rows[1][0] == f"# {CAUTION}"
    assert rows[2] == list(R.response_headers("SI", one_line=True))
    assert [r[0] for r in rows[3:]] == [study.train.name_of(p.link_id) for p in study.response_peaks]
    assert [r[2] for r in rows[3:]] == [fmt.torque_knm(p.peak_torque) for p in study.response_peaks]


# ------------------------------------------------------------ issue 10 item 2: stale and non-finite
def _saturated(image: QtGui.QImage) -> int:
    """Pixels of strong colour (the red FAIL fill, series colours): fewer when greyed."""
    n = 0
    for x in range(0, image.width(), 3):
        for y in range(0, image.height(), 3):
            c = QtGui.QColor(image.pixel(x, y))
            if c.hsvSaturation() > 120 and c.value() > 60:
                n += 1
    return n


def test_stale_greys_every_view_and_shows_no_verdict(panel, tmp_path):
    study = _study(_doc("pump_set"))
    assert study.passed
    panel.set_study(study)
    panel.tabs.setCurrentIndex(1)
    assert panel.verdict.text().startswith("PASS")
    before = _saturated(panel.tabs.grab().toImage())
    message = "disc 'hub_m', inertia: not a number"
    panel.set_stale(message)
    text = panel.verdict.text()
    assert text.startswith("No verdict") and message in text and "last valid model" in text
    assert "PASS" not in text and "FAIL" not in text
    assert panel.verdict.styleSheet() == R_style_none()
    assert isinstance(panel.tabs.graphicsEffect(), QtWidgets.QGraphicsColorizeEffect)
    after = _saturated(panel.tabs.grab().toImage())
    assert after < 0.3 * before
    assert "last valid model" in panel.details.text()
    assert panel.verdict_summary() == ("no verdict (the model has an error)", None)
    with pytest.raises(ValueError):
        panel.export_frequency_csv(str(tmp_path / "f.csv"))
    # a new solve of the last valid model does not un-grey: only set_stale(None) does
    panel.set_study(study)
    assert panel.verdict.text().startswith("No verdict")
    panel.set_stale(None)
    assert panel.verdict.text().startswith("PASS")
    assert panel.verdict_summary() == ("PASS", True)
    assert panel.tabs.graphicsEffect() is None


def R_style_none():
    from app.gui import theme
    return theme.verdict_style(None)


def test_a_non_finite_result_never_shows_pass(panel):
    study = _study(_doc("pump_set"))
    f = np.array(study.modes.frequency_hz, float)
    f[2] = np.nan
    bad = dataclasses.replace(study, modes=dataclasses.replace(study.modes, frequency_hz=f))
    panel.set_study(bad)
    assert panel.verdict.text().startswith("No verdict") and "not a number" in panel.verdict.text()
    assert "PASS" not in panel.verdict.text()
    assert panel.modes_view.table_model.rowCount() == 0


# ------------------------------------------------------------ issue 10 item 4: per-project view state
def test_reset_view_state_forgets_cursor_selection_and_zoom(panel):
    first = _study(_doc("compressor_train"))
    panel.set_study(first)
    panel.tabs.setCurrentIndex(1)
    cv = panel.campbell_view
    cv.set_cursor_rpm(1000.0)
    panel.select_mode(3)
    cv.log_box.setChecked(False)  # a choice of the user's
    cv.plot.vb.setYRange(10.0, 20.0, padding=0)  # zoomed in
    panel.reset_view_state()
    second = _study(_doc("compressor_train"))
    panel.set_study(second)
    panel.tabs.setCurrentIndex(1)
    s = second.screening
    assert cv.cursor_rpm() == pytest.approx(s.speed_max / RPM)
    first_elastic = int(np.flatnonzero(second.modes.elastic)[0])
    assert panel.current_mode_index() == first_elastic
    assert cv.log_box.isChecked() == cv.auto_log()
    y1 = cv.plot.vb.viewRange()[1][1]
    assert cv._y_inv(y1) == pytest.approx(cv.window_top_hz(), rel=1e-6)


def test_a_non_finite_response_never_shows_pass(panel):
    study = _study(_doc("engine_genset"))
    peaks = list(study.response_peaks)
    peaks[0] = dataclasses.replace(peaks[0], peak_torque=float("inf"))
    bad = dataclasses.replace(study)
    object.__setattr__(bad, "response_peaks", tuple(peaks))  # the cached value
    panel.set_study(bad)
    assert panel.verdict.text().startswith("No verdict") and "PASS" not in panel.verdict.text()


def test_without_reset_a_live_edit_keeps_cursor_and_mode(panel):
    study = _study(_doc("compressor_train"))
    panel.set_study(study)
    panel.campbell_view.set_cursor_rpm(1000.0)
    panel.select_mode(3)
    panel.set_study(_study(_doc("compressor_train")))
    assert panel.campbell_view.cursor_rpm() == pytest.approx(1000.0)
    assert panel.current_mode_index() == 3


# ------------------------------------------------------------ item 7 of the brief: new tabs plug in
class _DummyView(QtWidgets.QWidget):
    def __init__(self):
        super().__init__()
        self.calls = []
        self.why = None

    def show_study(self, study):
        self.calls.append(("show", study))
        return self.why

    def clear(self, message=""):
        self.calls.append(("clear", message))

    def set_unit_system(self, system):
        self.calls.append(("units", system))

    def reset_view_state(self):
        self.calls.append(("reset",))


def test_a_new_view_plugs_in_with_add_view(panel):
    study = _study(_doc("pump_set"))
    panel.set_study(study)
    view = _DummyView()
    view.why = "Give the coupling a stiffness range to see the design options."
    panel.add_view("design", view, "Design options", "What moves each mode")
    i = panel.tab_index("design")
    assert panel.tabs.tabText(i) == "Design options"
    assert ("show", study) in view.calls  # shown at once with the study on screen
    assert not panel.tabs.isTabEnabled(i) and panel.tabs.tabToolTip(i) == view.why
    view.why = None
    panel.set_study(study)
    assert panel.tabs.isTabEnabled(i) and panel.tabs.tabToolTip(i) == "What moves each mode"
    panel.set_unit_system("US")
    panel.reset_view_state()
    assert ("units", "US") in view.calls and ("reset",) in view.calls
    panel.clear_results("The model cannot be solved")
    assert view.calls[-1][0] == "clear"


def test_the_saved_unit_system_reaches_the_results_from_the_start(qtbot, tmp_path):
    """A user whose saved choice is US customary sees US units in the results at once."""
    from PySide6 import QtCore

    from app.gui.main_window import MainWindow
    settings = QtCore.QSettings(str(tmp_path / "s.ini"), QtCore.QSettings.IniFormat)
    settings.setValue("unit_system", "US")
    win = MainWindow(settings=settings, autosave=False)
    qtbot.addWidget(win)
    assert win.results_panel.unit_system == "US"
