"""A legible interference diagram and forced-response view on every sample at
1366x768 and 1600x1000 (issue 9, items 6 and 7), checked on the laid-out window:

* no two labels (mode, order, fixed-frequency, the note on modes above the
  window) overlap, and each lies inside the plot;
* every mode in the window, every excitation line and the note have a visible label;
* the lowest mode in the window is not squeezed into the bottom of the plot;
* every key entry is whole (its full text, inside the canvas, clear of the plot
  and of the other entries);
* the forced response's order box and peak table fit without scrolling, and
  every curve named in the key can be seen.

The images themselves were looked at too (sample_projects/screenshots/).
"""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("pytestqt")
from PySide6 import QtCore, QtGui, QtWidgets  # noqa: E402

from app.gui import main_window as mw  # noqa: E402
from app.gui.results.response_view import OVERLAP, SUM, overlapping  # noqa: E402
from core.project import load_document  # noqa: E402

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
SIZES = [(1366, 768), (1600, 1000)]


@pytest.fixture
def make_window(qtbot, tmp_path, monkeypatch):
    monkeypatch.setattr(mw, "recovery_dir", lambda: tmp_path / "recovery")
    made = []

    def make(path, size, tab):
        settings = QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.IniFormat)
        win = mw.MainWindow(settings=settings, autosave=False)
        win.resize(*size)
        win.load_document(load_document(path), str(path))
        win.show()
        qtbot.waitExposed(win)
        win.runner.compute_now(win.project.train)
        win.results_panel.tabs.setCurrentIndex(tab)
        for _ in range(3):
            QtWidgets.QApplication.processEvents()
        made.append(win)
        return win

    yield make
    for win in made:
        win.project.undo_stack.setClean()
        win.runner.wait()
        win.close()
        win.deleteLater()


def _rect(item) -> QtCore.QRectF:
    return item.mapRectToScene(item.boundingRect())


# the engine set's excitation comes from its pressure curve (24 half orders) and its modes 3 and 4
# lie 5 % apart (their labels are stacked); the compressor train has inverter lines |a - b N|


@pytest.mark.parametrize("size", SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
@pytest.mark.parametrize("path", SAMPLES, ids=[p.stem for p in SAMPLES])
def test_interference_diagram_is_legible(make_window, path, size):
    win = make_window(path, size, 1)
    panel = win.results_panel
    cv = panel.campbell_view
    s, m = cv.screening, cv.modes
    assert s is not None
    vb = cv.plot.vb
    plot_rect = vb.sceneBoundingRect()
    assert plot_rect.height() > 150, "the diagram is squeezed by its surroundings"

    shown = [(item, kind, value) for item, kind, value in cv._labels if item.isVisible()]
    rects = [_rect(item) for item, _k, _v in shown]
    # no two labels overlap; each inside the plot
    for (a, ra), (b, rb) in itertools.combinations(zip(shown, rects), 2):
        assert not ra.adjusted(0.5, 0.5, -0.5, -0.5).intersects(rb), \
            f"{a[0].textItem.toPlainText()!r} overlaps {b[0].textItem.toPlainText()!r}"
    for (item, _k, _v), r in zip(shown, rects):
        assert plot_rect.adjusted(-1, -1, 1, 1).contains(r), f"{item.textItem.toPlainText()!r} leaves the plot"

    # every mode in the window, every excitation line and the note are labelled
    top = cv.window_top_hz()
    in_window = [float(f) for i, f in enumerate(m.frequency_hz) if m.elastic[i] and 0 < f <= top]
    mode_labels = [v for _i, k, v in shown if k == "mode"]
    assert sorted(mode_labels) == pytest.approx(sorted(in_window))
    n_lines = sum(1 for _i, k, _v in cv._labels if k in ("order", "fixed", "line"))
    assert n_lines == len(s.lines)
    assert sum(1 for _i, k, _v in shown if k in ("order", "fixed", "line")) == n_lines
    above = [f for i, f in enumerate(m.frequency_hz) if m.elastic[i] and top < f <= s.cap_hz]
    # the note on the modes above the window: in the plot, or where the plot has no room for it,
    # beside the controls above the plot, whole
    in_plot = any(k == "above" for _i, k, _v in shown)
    beside = cv.above_bar.isVisible()
    assert (in_plot or beside) == bool(above) and not (in_plot and beside)
    if beside:
        assert cv.above_bar.text().startswith("↑ mode")
        assert cv.above_bar.width() >= cv.above_bar.fontMetrics().horizontalAdvance(cv.above_bar.text())

    # the low modes are not squeezed into the bottom: the lowest sits a tenth of the height up
    (_x0, _x1), (y0, y1) = vb.viewRange()
    lowest = min(in_window)
    assert (cv._y(lowest) - y0) / (y1 - y0) >= 0.1

    # the key: whole entries, inside the canvas, clear of the plot and of each other
    lg = cv.legend
    canvas_rect = cv.canvas.mapToScene(cv.canvas.viewport().rect()).boundingRect()
    entry_rects = lg.entry_rects()
    assert entry_rects and len(entry_rects) == len(lg.texts)
    for r in entry_rects:
        assert canvas_rect.adjusted(-1, -1, 1, 1).contains(r)
        assert not r.intersects(plot_rect)
    for ra, rb in itertools.combinations(entry_rects, 2):
        assert not ra.adjusted(0.5, 0.5, -0.5, -0.5).intersects(rb)
    for (_sample, text_item, text) in lg._entries:
        assert " ".join(text_item.text().split("\n")) == text  # wrapped perhaps, never cut


@pytest.mark.parametrize("system", ["SI", "US"])
@pytest.mark.parametrize("name", ["engine_genset", "propulsion_line"])
def test_forced_response_fits_1366x768(make_window, name, system):
    path = next(p for p in SAMPLES if p.stem == name)
    win = make_window(path, (1366, 768), 2)
    win.results_panel.set_unit_system(system)
    for _ in range(3):
        QtWidgets.QApplication.processEvents()
    rv = win.results_panel.response_view
    assert (system == "US") == ("lbf·ft" in rv.peak_model.headers[2])
    assert rv.response is not None
    rv.lower_tabs.setCurrentIndex(1)  # the peaks per link
    for _ in range(3):
        QtWidgets.QApplication.processEvents()
    t = rv.peak_table
    assert t.isVisible()
    assert not t.horizontalScrollBar().isVisible() and not t.verticalScrollBar().isVisible()
    # every link's name is readable in full
    fm = t.fontMetrics()
    assert t.horizontalHeader().sectionSize(0) >= max(fm.horizontalAdvance(r.cells[0]) for r in rv.peak_model.rows) + 24
    # the acceptance checks: no sideways scrolling; each criterion's words whole on at most two lines
    rv.lower_tabs.setCurrentIndex(0)
    for _ in range(3):
        QtWidgets.QApplication.processEvents()
    a = rv.acceptance_table
    assert a.isVisible() and rv.acceptance_model.rowCount() > 0
    assert not a.horizontalScrollBar().isVisible()
    width = a.horizontalHeader().sectionSize(1) - 8
    for r in range(rv.acceptance_model.rowCount()):
        words = rv.acceptance_model.rows[r].cells[1]
        assert a.rowHeight(r) >= (2 if fm.horizontalAdvance(words) > width else 1) * fm.height()
        assert fm.horizontalAdvance(max(words.split(" "), key=len)) <= width  # no word is cut
    # the order box shows its text whole
    box = rv.combination
    assert box.currentText() == SUM
    room = box.width() - box.style().pixelMetric(QtWidgets.QStyle.PM_ComboBoxFrameWidth) * 2 - 24
    assert box.fontMetrics().horizontalAdvance(SUM) <= room
    assert rv.plot.vb.height() > 120  # the plot keeps its room beside the tables and the key


def test_every_curve_in_the_key_can_be_seen(make_window):
    path = next(p for p in SAMPLES if p.stem == "propulsion_line")
    win = make_window(path, (1366, 768), 2)
    rv = win.results_panel.response_view
    rv.set_checked_links(rv.response.link_ids)
    curves = [c for c in rv.plot.listDataItems() if c.name()]
    ys = [np.asarray(c.yData, float) for c in curves]
    top = rv.plot.vb.viewRange()[1][1]
    under = overlapping(ys, OVERLAP * top / 1.12)
    assert any(u is not None for u in under)  # the sample has shafts carrying the same torque
    for c, y, u in zip(curves, ys, under):
        assert np.nanmax(y) <= top  # inside the plot
        if u is not None:  # drawn dashed on the curve it lies on, and the key says so
            assert c.opts["pen"].style() == QtCore.Qt.DashLine
    texts = rv.curve_key_texts  # the key's other entries: the speed bands and ranges
    assert len(texts) == len(curves) and set(texts) <= set(rv.legend.texts)
    assert sum("lies on" in t for t in texts) == sum(u is not None for u in under)


def test_overlapping_curves():
    y = np.linspace(0.0, 1.0, 11)
    near = y + 0.001
    far = y + 0.5
    spike = near.copy()
    spike[3] += 1.0  # differs at one speed only: still hidden at most
    assert overlapping([y, near, far, spike], 0.01) == [None, 0, None, 0]
