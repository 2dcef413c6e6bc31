"""Result views of the desktop program (app.gui.results), offscreen with pytest-qt.

The views must show exactly what core computed: the expected values here are
core's own results (core.solver, core.screening) printed through
app.formatting, which is the contract of the views (issue 4, item 5).
"""
from __future__ import annotations

import copy
import csv
import math
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pytestqt")
from PySide6 import QtCore, QtGui  # noqa: E402

from app import formatting as fmt  # noqa: E402
from app import wording  # noqa: E402
from core.about import CAUTION  # noqa: E402
from app.gui.results import rows as R  # noqa: E402
from app.gui.results.campbell_view import RPM, margin_band_hz  # noqa: E402
from app.gui.results.label_layout import Spot, place_labels, place_labels_staged  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.screening import nearest_at_speed, screen  # noqa: E402
from core.solver import natural_modes  # noqa: E402

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
IDS = [p.stem for p in SAMPLES]


def _solve(path):
    train = build_train(load_document(path))
    s = screen(train)
    return train, s.modes, s


@pytest.fixture(params=SAMPLES, ids=IDS)
def solved(request):
    return _solve(request.param)


@pytest.fixture
def panel(results_panel):
    return results_panel(1200, 800)


def _shown(model, row, col):
    return model.data(model.index(row, col), QtCore.Qt.DisplayRole)


# ------------------------------------------------------------ frequency table
def test_frequency_table_rows_equal_core_frequencies(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s, None, 0.003)
    model = panel.modes_view.table_model
    assert model.rowCount() == len(modes)
    for i in range(len(modes)):
        f = float(modes.frequency_hz[i])
        assert _shown(model, i, 0) == str(int(modes.number[i]))
        assert _shown(model, i, 1) == fmt.hz(f)
        assert _shown(model, i, 2) == fmt.cpm(f)
        assert _shown(model, i, 3) == ("yes" if modes.rigid_body[i] else "")
        if not modes.rigid_body[i]:
            # names over ids (issue 9, item 4): the element's name, its id where it has none
            assert _shown(model, i, 4).startswith(train.name_of(modes.dominant_link(i)) + " (")
        assert _shown(model, i, 5).startswith(train.name_of(modes.dominant_disc(i)) + " (")
        screened = "not screened" if modes.rigid_body[i] else (
            "above the screening limit" if f > s.cap_hz else "screened")
        assert _shown(model, i, 6) == screened


def test_selecting_a_frequency_row_draws_that_mode_and_emits(panel, qtbot, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    target = len(modes) - 1
    view = panel.modes_view.table
    rect = view.visualRect(panel.modes_view.table_model.index(target, 1))
    with qtbot.waitSignal(panel.modeSelected, timeout=2000) as sig:
        qtbot.mouseClick(view.viewport(), QtCore.Qt.LeftButton, pos=rect.center())
    assert sig.args == [target]
    assert panel.current_mode_index() == target
    assert f"Mode {int(modes.number[target])}" in panel.modes_view.title.text()


def test_select_mode_is_quiet_and_sticks(panel, qtbot, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    with qtbot.assertNotEmitted(panel.modeSelected):
        panel.select_mode(1)
    assert panel.current_mode_index() == 1
    # a live re-solve keeps the same mode number selected
    panel.set_results(train, modes, s)
    assert panel.current_mode_index() == 1


def test_mode_shape_plot_shows_the_core_shape(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    i = panel.current_mode_index()
    import pyqtgraph as pg
    curves = [c for c in panel.modes_view.upper.listDataItems() if isinstance(c, pg.PlotDataItem)]
    plotted = {}
    line = panel.modes_view._line
    for members in line.series:
        for d in members:
            plotted[d] = None
    assert set(plotted) == set(range(len(train.discs)))  # every disc is on a drawn line
    ys = np.concatenate([c.yData for c in curves])
    for d in range(len(train.discs)):
        assert np.any(np.isclose(ys, modes.shape[i, d]))
    panel.modes_view.show_box.setCurrentIndex(1)  # energy shares
    assert "Kinetic energy" in panel.modes_view.upper.titleLabel.text


# ------------------------------------------------------------ interference diagram
def test_campbell_has_one_line_per_elastic_mode_under_the_cap(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    cv = panel.campbell_view
    expected = [float(modes.frequency_hz[i]) for i in range(len(modes))
                if modes.elastic[i] and modes.frequency_hz[i] <= s.cap_hz]
    assert cv.mode_line_frequencies() == pytest.approx(expected, rel=1e-12)


def test_hidden_diagram_catches_up_when_its_tab_shows(panel):
    """A live re-solve draws only the visible tab; the diagram shows the newest
    results as soon as its tab is opened (and an export draws it too)."""
    doc = load_document(SAMPLES[IDS.index("pump_set")])
    train, modes, s = _solve(SAMPLES[IDS.index("pump_set")])
    panel.set_results(train, modes, s)
    lighter = copy.deepcopy(doc)  # every inertia halved: every natural frequency x sqrt(2)
    for disc in lighter["discs"]:
        disc["inertia"] = f"{0.5 * train.disc(disc['id']).inertia} kg*m^2"
    train2 = build_train(lighter)
    s2 = screen(train2)
    panel.set_results(train2, s2.modes, s2)  # the Modes tab is showing
    cv = panel.campbell_view
    assert cv._draw_pending
    assert [r.cells for r in cv.coincidence_model.rows] == [r.cells for r in R.coincidence_rows(s2, s2.modes)]
    panel.tabs.setCurrentIndex(1)
    assert not cv._draw_pending
    expected = [float(f) for i, f in enumerate(s2.modes.frequency_hz)
                if s2.modes.elastic[i] and f <= s2.cap_hz]
    assert cv.mode_line_frequencies() == pytest.approx(expected, rel=1e-12)
    assert len(cv.rings.points()) == len(s2.coincidences)


def test_campbell_has_one_line_per_excitation_order(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)  # the diagram is drawn when its tab shows
    cv = panel.campbell_view
    drawn = [c for c in cv.plot.listDataItems() if c.isVisible() and c.toolTip()]
    assert len(drawn) == len(s.lines)
    for c, line in zip(drawn, s.lines):
        assert c.toolTip().startswith(line.label)  # named as the line it is, then in words
        x, y = np.asarray(c.xData), np.asarray(c.yData)  # rpm, Hz (raw data, before any log axis)
        # excitation frequency = order x shaft speed ratio x reference rpm / 60 (definition of an
        # order); a line f = |a + b N| likewise point by point (its tip kept above zero on a log axis)
        assert np.allclose(y, np.maximum(line.frequency(x * RPM), y.min()), rtol=1e-12)


def test_campbell_axis_ranges(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)  # the diagram is drawn when its tab shows
    cv = panel.campbell_view
    (x0, x1), (y0, y1) = cv.plot.vb.viewRange()
    top = max(s.speed_max, train.operating.trip_speed or 0.0) / RPM
    assert x0 == pytest.approx(0.0, abs=1e-6) and x1 == pytest.approx(1.2 * top, rel=1e-6)
    assert cv._y_inv(y1) == pytest.approx(_window_top(s), rel=1e-6)


def _window_top(s):
    """Top of the diagram's frequency window, from its definition: the highest excitation
    frequency in the operating range plus twice the margin (above it every mode is clear
    by more than twice the margin), raised to each listed coincidence's mode plus the
    margin, never above the screening limit."""
    # a line |a - b N| is highest at one end of the span: standstill or the top speed
    f_exc = max(max(float(l.frequency(s.speed_max)), float(l.frequency(0.0))) for l in s.lines)
    top = max([f_exc * (1 + 2 * s.margin)] + [c.frequency_hz * (1 + s.margin) for c in s.coincidences])
    return min(top, s.cap_hz)


def test_coincidence_table_lists_core_coincidences_in_order(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)  # the diagram is drawn when its tab shows
    model = panel.campbell_view.coincidence_model
    assert model.rowCount() == len(s.coincidences)
    for r, c in enumerate(s.coincidences):
        assert _shown(model, r, 0) == str(c.mode)
        assert _shown(model, r, 2) == c.source
        assert _shown(model, r, 3) == R.line_order_text(c.line)
        assert _shown(model, r, 4) == fmt.percent(c.separation)
        assert _shown(model, r, 5) == ("—" if c.separation_band is None else fmt.percent(c.separation_band))
        assert _shown(model, r, 6) == c.status.upper()
        assert _shown(model, r, 7) == fmt.rpm(c.crossing_speed)
    rings = panel.campbell_view.rings
    assert rings.isVisible() == bool(s.coincidences)
    assert len(rings.points()) == len(s.coincidences)


def _mode_index(modes, number):
    return int(np.flatnonzero(modes.number == number)[0])


def test_clicking_a_coincidence_row_selects_its_mode(panel, qtbot, solved):
    train, modes, s = solved
    if not s.coincidences:
        pytest.skip("no coincidence in this sample")
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)
    view = panel.campbell_view.coincidence_table
    for r in (len(s.coincidences) - 1, 0):
        rect = view.visualRect(panel.campbell_view.coincidence_model.index(r, 2))
        with qtbot.waitSignal(panel.modeSelected, timeout=2000) as sig:
            qtbot.mouseClick(view.viewport(), QtCore.Qt.LeftButton, pos=rect.center())
        assert sig.args == [_mode_index(modes, s.coincidences[r].mode)]
        assert panel.current_mode_index() == sig.args[0]


def test_clicking_a_coincidence_ring_selects_its_mode(panel, qtbot, solved):
    train, modes, s = solved
    if not s.coincidences:
        pytest.skip("no coincidence in this sample")
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)
    qtbot.wait(50)
    cv = panel.campbell_view
    n = len(s.coincidences) - 1
    pt = cv.rings.points()[n]
    scene_pos = cv.plot.vb.mapViewToScene(pt.pos())
    widget_pos = cv.canvas.mapFromScene(scene_pos)
    if not cv.canvas.viewport().rect().contains(widget_pos):
        pytest.skip("ring outside the visible window")
    hits = [p for p in cv.rings.pointsAt(pt.pos()) if p.data() == n]
    if not hits:  # another ring drawn on top of it: click through the handler instead
        pytest.skip("ring hidden under another")
    with qtbot.waitSignal(cv.modeSelected, timeout=2000) as sig:
        qtbot.mouseClick(cv.canvas.viewport(), QtCore.Qt.LeftButton, pos=widget_pos)
    clicked = sig.args[0]
    assert int(modes.number[clicked]) in {c.mode for c in s.coincidences}
    assert panel.current_mode_index() == clicked


def test_speed_cursor_reads_out_nearest_at_speed(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    cv = panel.campbell_view
    assert cv.cursor.movable
    for rpm in (0.5 * s.speed_max / RPM, s.speed_min / RPM, 1.1 * s.speed_max / RPM):
        cv.set_cursor_rpm(rpm)
        expected = nearest_at_speed(s, rpm * RPM)
        model = cv.cursor_model
        assert model.rowCount() == len(expected)
        for r, e in enumerate(expected):
            assert _shown(model, r, 0) == e["line"].source
            assert _shown(model, r, 2) == fmt.hz(e["excitation_hz"])
            assert _shown(model, r, 3) == ("—" if e["mode"] is None else str(e["mode"]))
            assert _shown(model, r, 4) == ("—" if e["natural_hz"] is None else fmt.hz(e["natural_hz"]))
            assert _shown(model, r, 5) == ("—" if e["separation"] is None else fmt.percent(e["separation"]))
        assert fmt.rpm(rpm * RPM) in cv.cursor_title.text()


def test_margin_band_is_core_separation_band():
    # sep = |f_n - f_e| / f_e < m  <=>  f_n/(1+m) < f_e < f_n/(1-m)  (separation relative to the
    # excitation, as core.screening defines it after API 684 -- from memory)
    lo, hi = margin_band_hz(100.0, 0.1)
    assert lo == pytest.approx(100.0 / 1.1) and hi == pytest.approx(100.0 / 0.9)


def test_log_axis_chosen_for_wide_frequency_span_and_user_can_override(panel):
    train, modes, s = _solve(SAMPLES[IDS.index("compressor_train")])
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)  # the diagram is drawn when its tab shows
    cv = panel.campbell_view
    assert cv.log_box.isChecked()  # a 151st mesh order would flatten the low modes
    cv.log_box.setChecked(False)
    panel.set_results(train, modes, s)
    assert not cv.log_box.isChecked()
    (y0, y1), = [cv.plot.vb.viewRange()[1]]
    assert y1 == pytest.approx(_window_top(s), rel=1e-6)


def test_log_axis_bottom_holds_through_small_edits_and_follows_big_ones(panel):
    """Live editing: the log axis keeps its bottom while the lowest mode (or line) stays 2-4
    times above it (no jumping per keystroke), and moves when it leaves that band."""
    doc = load_document(SAMPLES[IDS.index("compressor_train")])
    panel.tabs.setCurrentIndex(1)
    cv = panel.campbell_view

    def show(inertia_factor):
        d = copy.deepcopy(doc)
        base = build_train(doc)
        for disc in d["discs"]:
            disc["inertia"] = f"{inertia_factor * base.disc(disc['id']).inertia} kg*m^2"
        train = build_train(d)
        s = screen(train)
        panel.set_results(train, s.modes, s)
        lowest = min(float(f) for i, f in enumerate(s.modes.frequency_hz) if s.modes.elastic[i] and f > 0)
        # the lowest thing the window must show: that mode, or a line where it runs in the range
        tops = [l.frequency_range(s.speed_min, s.speed_max)[1] for l in s.lines if l.fixed_hz is None]
        lowest = min([lowest] + [t for t in tops if t > 0])
        bottom = cv._y_inv(cv.plot.vb.viewRange()[1][0])
        assert cv._log
        assert 2.0 - 1e-9 <= lowest / bottom <= 4.0 + 1e-9  # it is in the window
        return bottom

    first = show(1.0)
    assert show(0.9) == pytest.approx(first)  # frequencies x 1.054 (f ~ 1/sqrt(J)): the axis holds
    # frequencies / 7 (f ~ 1/sqrt(J)): the lowest mode falls below the low order lines' tops
    # and the axis follows it down
    assert show(50.0) < 0.5 * first


# ------------------------------------------------------------ verdict, no operating data, clear
def test_verdict_line_follows_core(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s, None, 0.0123)
    text = panel.verdict.text()
    # the headline every view states (app.wording): the separation verdict where every mode
    # clears, else the acceptance argument (OPEN here: no forced response was given)
    assert (text, panel.verdict_text()[1]) == wording.headline(panel.study)
    assert text.startswith("PASS" if s.passed else ("FAIL", "OPEN"))
    assert "12.3 ms" in panel.details.text()
    assert f"{len(modes)} modes" in panel.details.text()


def test_without_operating_data_only_frequencies(panel):
    doc = load_document(SAMPLES[IDS.index("pump_set")])
    for key in ("reference", "operating_speed", "excitations", "margin_percent"):
        doc.pop(key, None)
    train = build_train(doc)
    modes = natural_modes(train, n_modes=4)
    panel.set_results(train, modes, None)
    assert panel.modes_view.table_model.rowCount() == len(modes)
    assert panel.campbell_view.message.isVisibleTo(panel.campbell_view)
    assert "No operating data" in panel.campbell_view.message.text()
    assert not panel.tabs.isTabEnabled(2)
    assert not panel.tabs.isTabEnabled(1)  # nothing to draw: the tab looks disabled and says why
    assert "operating speed range" in panel.tabs.tabToolTip(1)
    assert {r.cells[6] for r in panel.modes_view.table_model.rows} == {"—"}  # nothing was screened


def test_clear_results_shows_the_message(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    panel.clear_results("The model cannot be solved: link 'x' stiffness: not a number")
    assert "cannot be solved" in panel.verdict.text()
    assert panel.modes_view.table_model.rowCount() == 0
    assert panel.current_mode_index() == -1


def test_caution_is_visible_by_default(panel):
    assert panel.caution.isVisible() and panel.caution.text() == CAUTION


# ------------------------------------------------------------ exports
def _csv_rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    notes = [r for r in rows if r and r[0].startswith("#")]
    return notes, [r for r in rows if r and not r[0].startswith("#")]


def test_csv_exports_write_the_rows(panel, solved, tmp_path):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    f = tmp_path / "freq.csv"
    panel.export_frequency_csv(str(f))
    notes, rows = _csv_rows(f)
    assert any(CAUTION in n[0] for n in notes)
    assert rows[0] == list(R.FREQUENCY_HEADERS)
    assert [r[1] for r in rows[1:]] == [fmt.hz(v) for v in modes.frequency_hz]
    c = tmp_path / "coinc.csv"
    panel.export_coincidence_csv(str(c))
    _notes, rows = _csv_rows(c)
    assert rows[0] == list(R.COINCIDENCE_HEADERS)
    assert [(r[0], r[2], r[4]) for r in rows[1:]] == [
        (str(x.mode), x.source, fmt.percent(x.separation)) for x in s.coincidences]


@pytest.mark.parametrize("which", ["modes", "campbell"])
@pytest.mark.parametrize("ext", ["png", "svg"])
def test_plot_exports_write_files(panel, which, ext, tmp_path):
    train, modes, s = _solve(SAMPLES[IDS.index("engine_genset")])
    panel.set_results(train, modes, s)
    out = tmp_path / f"{which}.{ext}"
    panel.export_plot(which, str(out))
    assert out.stat().st_size > 1000
    if ext == "png":
        img = QtGui.QImage(str(out))
        assert img.width() >= 1000 and img.height() > 300
    else:
        text = out.read_text(encoding="utf-8")
        assert "<svg" in text and "licensed engineer" in text
    # the export leaves the on-screen layout as it was (no title or caution rows left behind)
    canvas = {"modes": panel.modes_view.canvas, "campbell": panel.campbell_view.canvas}[which]
    assert all(not hasattr(item, "text") or CAUTION not in getattr(item, "text", "")
               for item in canvas.ci.items)


def test_export_menu_actions(panel, qtbot):
    actions = panel.export_menu_actions(panel)
    texts = [a.text() for a in actions if not a.isSeparator()]
    assert "Natural frequencies as CSV…" in texts and "Coincidences as CSV…" in texts
    assert "Forced response peaks as CSV…" in texts
    for plot in ("Mode shape plot", "Interference diagram", "Forced response plot"):
        assert f"{plot} as PNG…" in texts and f"{plot} as SVG…" in texts
    assert all(isinstance(a, QtGui.QAction) for a in actions)


# ------------------------------------------------------------ label placement (pure)
def test_labels_do_not_overlap_and_fall_back_or_hide():
    spots = [Spot(10, 10, 0, 0), Spot(10, 40, 0, 0)]
    chosen = place_labels([(50, 12, spots), (50, 12, spots), (50, 12, spots)], 200, 100)
    assert chosen[0] == spots[0] and chosen[1] == spots[1] and chosen[2] is None
    assert place_labels([(50, 12, [Spot(190, 10, 0, 0)])], 200, 100) == [None]  # would leave the plot


def test_staged_labels_keep_first_choices_and_soft_boxes_give_way():
    end = Spot(100, 10, 0, 0)
    elsewhere = Spot(100, 50, 0, 0)
    # the second label's only first-stage spot is where the first label would go first:
    # staged, the first label falls back and the second keeps its line end
    labels = [(40, 12, [[], [end, elsewhere]]), (40, 12, [[end]])]
    assert place_labels_staged(labels, 200, 100) == [elsewhere, end]
    # a soft box (a marker) is avoided while there is room, given way to when there is none
    ring = (95, 5, 145, 25)
    assert place_labels_staged([(40, 12, [[end, elsewhere]])], 200, 100, soft=[ring]) == [elsewhere]
    assert place_labels_staged([(40, 12, [[end]])], 200, 100, soft=[ring]) == [end]
    assert place_labels_staged([(40, 12, [[end]])], 200, 100, blocked=[ring]) == [None]


def test_a_mode_labels_box_is_measured_exactly_before_its_text_is_set(qtbot):
    """The interference diagram places a long train's mode labels from their measured boxes
    and sets the text only on the labels shown: the measure must be the box the label then
    has, or labels would overlap or hide for nothing (the label itself is the reference)."""
    import pyqtgraph as pg

    from app.gui import theme
    from app.gui.results.campbell_view import LABEL_MARGIN, _LabelSizer
    sizer = _LabelSizer()
    label = pg.TextItem("")
    label.textItem.document().setDocumentMargin(LABEL_MARGIN)
    texts = ["mode 1: 0.012 Hz", "mode 23: 1.50 Hz", "mode 197: 12345.6 Hz", "mode 4: 88.88 Hz",
             "↑ modes 192–196 (454.78–511.44 Hz)", "mode 7: 7.07 Hz"]
    for font in (theme.font(theme.SMALL_POINT_SIZE), theme.font(theme.SMALL_POINT_SIZE, bold=True)):
        label.setFont(font)
        for text in texts:
            label.setText(text)
            br = label.textItem.boundingRect()
            assert sizer.size(text, font, font.key()) == (br.width(), br.height()), text


# ------------------------------------------------------------ look (rendered offscreen)
def test_every_view_renders(panel, solved):
    train, modes, s = solved
    panel.set_results(train, modes, s)
    for tab in range(panel.tabs.count()):
        if panel.tabs.isTabEnabled(tab):
            panel.tabs.setCurrentIndex(tab)
            img = panel.grab().toImage()
            assert not img.isNull() and img.width() == panel.width()
    assert math.isfinite(panel.solve_time_s)


def test_dragging_the_speed_cursor_with_the_mouse(panel, qtbot):
    train, modes, s = _solve(SAMPLES[IDS.index("compressor_train")])
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)
    qtbot.wait(50)
    cv = panel.campbell_view
    vb = cv.plot.vb
    start_rpm = cv.cursor_rpm()
    y_mid = sum(vb.viewRange()[1]) / 2
    view = cv.canvas

    def at(rpm):
        return view.mapFromScene(vb.mapViewToScene(QtCore.QPointF(rpm, y_mid)))

    target = 0.5 * start_rpm
    qtbot.mousePress(view.viewport(), QtCore.Qt.LeftButton, pos=at(start_rpm))
    for f in (0.9, 0.75, 0.6, 0.5):
        qtbot.mouseMove(view.viewport(), pos=at(f * start_rpm))
        qtbot.wait(5)
    qtbot.mouseRelease(view.viewport(), QtCore.Qt.LeftButton, pos=at(target))
    rpm = cv.cursor_rpm()
    if rpm == pytest.approx(start_rpm):
        pytest.skip("this Qt test backend delivers no drag to the graphics scene")
    assert rpm == pytest.approx(target, rel=0.03)
    expected = nearest_at_speed(s, rpm * RPM)
    assert [r.cells[2] for r in cv.cursor_model.rows] == [fmt.hz(e["excitation_hz"]) for e in expected]


@pytest.mark.parametrize("name", ["fan_drive", "sync_motor_compressor"])
def test_tolerance_bands_drawn_as_strips(panel, name):
    """Each natural frequency with a tolerance band is drawn as a shaded strip over exactly
    [f_low, f_high] of the screening (the corner trains' frequencies, core.tolerance), and the
    key says what it is; a train without tolerances draws none."""
    train, modes, s = _solve(SAMPLES[IDS.index(name)])
    panel.set_results(train, modes, s)
    panel.tabs.setCurrentIndex(1)
    cv = panel.campbell_view
    keys = " ".join(cv.legend.texts)
    if s.bands is None:
        assert not cv._tol_item.isVisible()
        assert "tolerance band" not in keys
        return
    assert cv._tol_item.isVisible() and "tolerance band" in keys
    path = cv._tol_item.path()
    rects = [path.toSubpathPolygons()[k].boundingRect() for k in range(len(path.toSubpathPolygons()))]
    f_top = cv.window_top_hz()
    want = [(s.bands[i, 0], s.bands[i, 1]) for i in cv._shown_modes if s.bands[i, 1] > s.bands[i, 0]]
    assert len(rects) == len(want)
    for r, (lo, hi) in zip(rects, want):
        y0, y1 = sorted((float(cv._y(lo)), float(cv._y(min(hi, 10 * f_top)))))
        assert (r.top(), r.bottom()) == pytest.approx((y0, y1), rel=1e-9, abs=1e-9)


def _weak_pair_doc():
    """Two discs (J1 = 4, J2 = 1 kg*m^2) whose mode twists 'a' a quarter as much as 'b'
    (theta_a / theta_b = -J2 / J1, closed form): order 1 at 'a' coincides with the mode and,
    below a 30 % weak-excitation threshold, is weakly excited; order 1 at 'b' is not."""
    import math
    J1, J2 = 4.0, 1.0
    f = 25.0  # 1500 rpm, order 1
    k = (2 * math.pi * f) ** 2 * J1 * J2 / (J1 + J2)
    return {"format": "twistwise-project", "version": 1, "title": "weak pair",
            "discs": [{"id": "a", "inertia": J1}, {"id": "b", "inertia": J2}],
            "links": [{"id": "c", "kind": "coupling", "from": "a", "to": "b", "stiffness": k}],
            "reference": "a", "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
            "margin_percent": 10, "weak_excitation_below": "30 %",
            "excitations": [{"name": "drive", "at": "a", "orders": [1]}, {"name": "load", "at": "b", "orders": [1]}]}


def test_weakly_excited_pairs_have_their_own_ring_and_key(panel):
    from app.gui import theme
    train = build_train(_weak_pair_doc())
    s = screen(train)
    assert sorted((c.source, c.weak) for c in s.coincidences) == [("drive", True), ("load", False)]
    panel.set_results(train, s.modes, s)
    panel.tabs.setCurrentIndex(1)
    cv = panel.campbell_view
    pens = {c.source: cv.rings.data["pen"][k].color().name() for k, c in enumerate(s.coincidences)}
    assert pens == {"drive": theme.COINCIDENCE_WEAK, "load": theme.COINCIDENCE_FAIL}
    assert any("weakly excited" in t for t in cv.legend.texts)
