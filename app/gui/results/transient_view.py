"""Transients: torque and speed against time for the project's events (issue 14 item 5).

The events run on request (they take seconds, not a frame): the Run button starts
:func:`core.transient.run_transients` on a worker thread with a progress bar and a
Cancel button (a ``threading.Event``), so the window never waits.  The results show
torque against time for the links the user ticks, the speed against time, every
crossing of a natural frequency by the excitation (the lowest mode's marked), and
per link the peak torque against its permissible peak, the fatigue damage per
event (rainflow and Miner's rule) and the events it allows.

The results belong to the model they were run on: when the model changes they are
dropped (the view says to run again), and a run still going is cancelled.  Nothing
is computed here that core computes; numbers are formatted through app.formatting.
"""
from __future__ import annotations

import math
import threading

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from app import formatting as fmt
from app.gui import theme
from core import units

from . import rows as R
from .legend import FlowLegend, arrange_key
from .plotting import PlotCanvas, new_plot, plot_over_table
from .response_view import fit_peak_columns, overlapping
from .table import RowsModel, make_table_view, write_csv

ALL_EVENTS = "every event"
MAX_DEFAULT_LINKS = 3
#: histories closer than this share of the largest peak (at half the steps or more) lie on each
#: other: drawn dashed; and links are plotted at first only when this far apart (5 %)
LIES_ON = 0.03
DEFAULT_APART = 0.05
RPM = 2.0 * math.pi / 60.0

def transient_headers(unit_system: str = "SI", one_line: bool = False) -> tuple:
    _t, _s, tu, su = R.torque_stress_formats(unit_system)
    if one_line:
        return ("Link", f"Peak torque, {tu}", "at s", f"Permissible peak, {tu}", f"Peak stress, {su}",
                "Damage per event", "Events allowed / required", "Status")
    return ("Link", f"Peak\ntorque\n{tu}", "at\ns", f"Permissible\npeak\n{tu}", f"Peak\nstress\n{su}",
            "Damage\nper event", "Events allowed\n/ required", "Status")


def _count(value) -> str:
    """An event count: 'unlimited' (no cycle does damage), plain digits below a million
    ('5000', '249638'), else in powers of ten ('6.34e7'); '—' where not computed."""
    if value is None:
        return "—"
    if not math.isfinite(value):
        return "unlimited"
    if value < 1e6:
        return f"{value:.3g}" if value < 100 else f"{value:.0f}"
    mant, exp = f"{value:.2e}".split("e")
    return f"{mant}e{int(exp)}"


def transient_rows(event, train=None, unit_system: str = "SI") -> list[R.Row]:
    """Per link of one event (core.transient.EventResult): peak torque (on the link's own
    shaft) and when, the permissible peak, the peak shear stress, the Miner damage of one
    event, the events the link can take, the count the project requires, and the verdict.
    ``key``: the link id."""
    torque, stress, tu, su = R.torque_stress_formats(unit_system)
    rows = []
    for l in event.links:
        name = R.name_of(train, l.link_id)
        status = None if l.passed is None else ("pass" if l.passed else "fail")
        damage = "—" if l.damage is None else ("0" if l.damage == 0 else f"{l.damage:.3g}")
        tip = (f"{name} in {event.name}: peak torque {torque(l.peak_torque)} {tu} at {fmt.seconds(l.peak_time)} s "
               f"(largest {torque(l.max_torque)}, smallest {torque(l.min_torque)} {tu})")
        if l.permissible_peak is not None:
            tip += f", permissible peak {torque(l.permissible_peak)} {tu}"
        if l.damage is not None:
            tip += (f"; fatigue: rainflow cycles of the shear stress, Miner's rule, damage {damage} per event, "
                    f"{_count(l.allowed_events)} events allowed")
            if l.sn_source:
                tip += f" (S-N curve: {l.sn_source})"
        events = (f"{_count(l.allowed_events)} / {_count(l.required_events)}"
                  if l.required_events is not None else _count(l.allowed_events))
        rows.append(R.Row([name, torque(l.peak_torque), fmt.seconds(l.peak_time), torque(l.permissible_peak),
                           stress(l.peak_stress), damage, events,
                           "—" if status is None else status.upper()], tip + ".", status, l.link_id))
    return rows


def default_links(event) -> list[str]:
    """The most loaded links first (largest share of their permissible peak, else of torque),
    leaving out a link whose torque history lies on one already chosen (a shaft and the
    coupling beside it often carry the same torque): at most MAX_DEFAULT_LINKS."""
    def load(l):
        if l.permissible_peak:
            return (1, l.peak_torque / l.permissible_peak)
        return (0, l.peak_torque)
    ranked = sorted(event.links, key=load, reverse=True)
    ids = list(event.link_ids)
    top = max((l.peak_torque for l in event.links), default=0.0)
    chosen = []
    for l in ranked:
        y = np.asarray(event.link_torque[ids.index(l.link_id)], float)
        curves = [np.asarray(event.link_torque[ids.index(c)], float) for c in chosen] + [y]
        if overlapping(curves, DEFAULT_APART * max(top, 1e-30))[-1] is None:
            chosen.append(l.link_id)
        if len(chosen) == MAX_DEFAULT_LINKS:
            break
    return chosen


class _Signals(QtCore.QObject):
    progress = QtCore.Signal(int, float)  # run number, fraction done
    done = QtCore.Signal(int, object, str)  # run number, TransientResults or None, error ('' / 'cancelled')


class _Run(QtCore.QRunnable):
    def __init__(self, number: int, train, names, cancel: threading.Event, signals: _Signals):
        super().__init__()
        self.number, self.train, self.names, self.cancel, self.signals = number, train, names, cancel, signals
        self._last = -1

    def _progress(self, fraction: float) -> None:
        step = int(200 * float(fraction))  # at most 200 updates: the GUI thread is not flooded
        if step != self._last:
            self._last = step
            self._emit(self.signals.progress, self.number, float(fraction))

    def _emit(self, signal, *args) -> None:
        try:
            signal.emit(*args)
        except RuntimeError:
            pass  # the view went while the events ran

    def run(self):
        from core.transient import TransientCancelled
        try:
            results, error = run_events(self.train, self.names, self._progress, self.cancel), ""
        except TransientCancelled:
            results, error = None, "cancelled"
        except Exception as exc:  # a model the time-domain solve refuses: say why, no traceback
            results, error = None, getattr(exc, "message", None) or str(exc) or type(exc).__name__
        self._emit(self.signals.done, self.number, results, error)


def run_events(train, names=None, progress=None, cancel=None):
    """The project's transient events (all, or those named) exactly as the study runs them:
    :func:`core.study.run_study` passes the load cases as load torques
    (:func:`core.loads.load_torque_table`) and the permissible peaks of
    :func:`core.ratings.transient_peak_limits` — the same two hooks here, so the desktop
    program and the command line give the same numbers.  It calls
    :func:`core.transient.run_transients` directly because the study's call cannot be
    cancelled.  Keep the two recipes identical."""
    from core.loads import load_torque_table
    from core.ratings import transient_peak_limits
    from core.transient import run_transients

    def load_case_torque(name, disc_id):
        return load_torque_table(train, name, disc_id)
    return run_transients(train, names, progress=progress, cancel=cancel,
                          peak_limits=transient_peak_limits(train), load_case_torque=load_case_torque)


def _same_model(a, b) -> bool:
    if a is b:
        return True
    try:
        return bool(a == b)
    except Exception:  # a field that does not compare (an array): not the same
        return False


class TransientView(QtWidgets.QWidget):
    """Run controls on top; torque (above) and speed (below) against time; the peak and
    damage table of the event shown (tick links to plot them)."""

    #: its plots draw when the tab shows; the tables it keeps current cost little (see panel)
    light_when_hidden = True

    runStarted = QtCore.Signal()
    runFinished = QtCore.Signal(bool)  # True: results shown

    NO_EVENTS = ("the project has no transient events: add a start-up, a short circuit, a torque table or a "
                 "load step under \"transients\" to run them here")

    def __init__(self, parent=None):
        super().__init__(parent)
        self.train = None  # the model on screen
        self.results = None  # core.transient.TransientResults of results_train
        self.results_train = None
        self.unit_system = "SI"
        self.stale_message = None
        self._run_number = 0
        self._running = None  # (run number, threading.Event, train)
        self._user_ticked = False
        self._pool = QtCore.QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._signals = _Signals(self)
        self._signals.progress.connect(self._progress, QtCore.Qt.QueuedConnection)
        self._signals.done.connect(self._done, QtCore.Qt.QueuedConnection)

        self.event_box = QtWidgets.QComboBox(self)
        self.event_box.setToolTip("Which event to run: one, or every event of the project")
        self.event_box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToContents)
        self.run_button = QtWidgets.QPushButton("Run", self)
        self.run_button.setToolTip("Integrate the event in the time domain (takes seconds; the window stays free)")
        self.run_button.clicked.connect(self.run)
        self.cancel_button = QtWidgets.QPushButton("Cancel", self)
        self.cancel_button.setToolTip("Stop the run; the results shown before stay")
        self.cancel_button.clicked.connect(self.cancel)
        self.cancel_button.setEnabled(False)
        self.progress = QtWidgets.QProgressBar(self)
        self.progress.setRange(0, 1000)
        self.progress.setTextVisible(True)
        self.progress.setFormat("%p %")
        self.progress.setMaximumWidth(220)
        self.progress.hide()
        self.status = QtWidgets.QLabel(self)
        self.status.setStyleSheet(f"color: {theme.INK_MUTED};")
        self.status.setSizePolicy(QtWidgets.QSizePolicy.Ignored, QtWidgets.QSizePolicy.Preferred)
        self.shown_box = QtWidgets.QComboBox(self)
        self.shown_box.setToolTip("The event whose results are shown")
        self.shown_box.setSizeAdjustPolicy(QtWidgets.QComboBox.AdjustToContents)
        self.shown_box.currentIndexChanged.connect(lambda _i: self._show_event())
        self.shown_label = QtWidgets.QLabel("Show", self)

        self.canvas = PlotCanvas(self)
        self.canvas.export_title = "Transient"
        self.torque_plot = new_plot(self.canvas, 0, "", "Torque")
        self.speed_plot = new_plot(self.canvas, 1, "Time, s", "Speed, rpm")
        self.speed_plot.setXLink(self.torque_plot)
        self.torque_plot.getAxis("bottom").setStyle(showValues=False)
        for p in (self.torque_plot, self.speed_plot):
            p.getAxis("left").setWidth(72)
            p.setClipToView(True)
            p.setDownsampling(auto=True, mode="peak")  # tens of thousands of steps per curve
        self.canvas.ci.layout.setRowStretchFactor(0, 3)
        self.canvas.ci.layout.setRowStretchFactor(1, 1)
        self.legend = FlowLegend()
        self.canvas.addItem(self.legend, row=2, col=0)
        self._key_side = False
        self.canvas.layout_hooks.append(self._arrange_key)
        self.message = QtWidgets.QLabel(self)
        self.message.setWordWrap(True)
        self.message.setAlignment(QtCore.Qt.AlignCenter)
        self.message.setStyleSheet(f"color: {theme.INK_MUTED}; font-size: {theme.TITLE_POINT_SIZE}pt;")

        self.peak_model = RowsModel(transient_headers(), self, numeric_columns=(1, 2, 3, 4, 5, 6),
                                    status_column=7, check_column=0)
        self.peak_table = make_table_view(self.peak_model, self)
        self.peak_table.horizontalHeader().setDefaultAlignment(QtCore.Qt.AlignLeft | QtCore.Qt.AlignBottom)
        self.peak_table.verticalHeader().setDefaultSectionSize(self.peak_table.fontMetrics().height() + 3)
        self.peak_table.setToolTip("Per link: the peak torque of the event against its permissible peak, the "
                                   "fatigue damage of one event and the events it allows. Tick a link to plot it.")
        self.peak_model.checkedChanged.connect(self._ticked)
        self.verdict = QtWidgets.QLabel(self)
        self.verdict.setWordWrap(True)

        bar = QtWidgets.QHBoxLayout()
        bar.setContentsMargins(0, 0, 0, 0)
        bar.addWidget(QtWidgets.QLabel("Event"))
        bar.addWidget(self.event_box)
        bar.addWidget(self.run_button)
        bar.addWidget(self.cancel_button)
        bar.addWidget(self.progress)
        bar.addSpacing(8)
        bar.addWidget(self.status, 1)
        bar.addWidget(self.shown_label)
        bar.addWidget(self.shown_box)

        upper = QtWidgets.QWidget(self)
        ul = QtWidgets.QVBoxLayout(upper)
        ul.setContentsMargins(0, 0, 0, 0)
        ul.setSpacing(2)
        ul.addLayout(bar)
        ul.addWidget(self.canvas, 1)
        ul.addWidget(self.message, 1)
        lower = QtWidgets.QWidget(self)
        ll = QtWidgets.QVBoxLayout(lower)
        ll.setContentsMargins(0, 4, 0, 0)
        ll.setSpacing(2)
        ll.addWidget(self.verdict)
        ll.addWidget(self.peak_table, 1)
        self.splitter = plot_over_table(self, upper, lower)
        self.splitter.setSizes([640, 240])
        self._show_nothing("Run the events to see torque and speed against time.")

    # ------------------------------------------------------------ the result-view protocol (see panel)
    def show_study(self, study) -> str | None:
        """The model on screen: its events to run.  Results of another model are dropped
        (and a run on another model cancelled); a study that holds transients shows them."""
        train = study.train
        events = tuple(getattr(train, "transients", ()) or ())
        self.train = train
        self._fill_event_box(events)
        if self._running is not None and not _same_model(self._running[2], train):
            self.cancel()
        if getattr(study, "transients", None) is not None:
            self._set_results(study.transients, train)
        elif self.results is not None and not _same_model(self.results_train, train):
            self._drop("The model has changed since the last run: run the events again.")
        self._enable()
        if not events:
            self._drop("")
            self._show_nothing("No transient events: " + self.NO_EVENTS + ".")
            return self.NO_EVENTS[0].upper() + self.NO_EVENTS[1:] + "."
        if self.results is None and self._running is None and not self.message.text().startswith("The model"):
            self._show_nothing(f"{len(events)} event{'s' if len(events) != 1 else ''}: "
                               + ", ".join(e.name for e in events) + ". Press Run to integrate "
                               + ("them" if len(events) != 1 else "it") + " in the time domain.")
        return None

    def clear(self, message: str = "") -> None:
        self.train = None
        self.cancel()
        self._drop("")
        self._show_nothing(message or "No results yet.")
        self._enable()

    def set_unit_system(self, system: str) -> None:
        if system != self.unit_system:
            self.unit_system = system
            if self.results is not None:
                self._show_event()

    def reset_view_state(self) -> None:
        """A newly opened project: no results, no run, no links chosen."""
        self.cancel()
        self._drop("")
        self._user_ticked = False
        self.event_box.setCurrentIndex(0)

    def set_stale(self, message: str | None) -> None:
        """While the model on screen has an error nothing runs (the results would be of the
        last valid model)."""
        self.stale_message = message or None
        self._enable()

    # ------------------------------------------------------------ running
    def _fill_event_box(self, events) -> None:
        names = [e.name for e in events]
        want = ([ALL_EVENTS] if len(names) > 1 else []) + names
        if [self.event_box.itemText(i) for i in range(self.event_box.count())] == want:
            return
        keep = self.event_box.currentText()
        self.event_box.blockSignals(True)
        self.event_box.clear()
        self.event_box.addItems(want)
        self.event_box.setCurrentIndex(max(self.event_box.findText(keep), 0))
        self.event_box.blockSignals(False)

    def _enable(self) -> None:
        running = self._running is not None
        has = self.train is not None and bool(getattr(self.train, "transients", ()))
        ok = has and not running and self.stale_message is None
        self.run_button.setEnabled(ok)
        self.run_button.setToolTip(
            "Integrate the event in the time domain (takes seconds; the window stays free)" if ok else
            f"Not while the model has an error: {self.stale_message}" if self.stale_message else
            "Running…" if running else "The project has no transient events")
        self.cancel_button.setEnabled(running)
        self.event_box.setEnabled(has and not running)

    def is_running(self) -> bool:
        return self._running is not None

    def run(self) -> None:
        """Run the chosen event(s) of the model on screen on the worker thread."""
        if self.train is None or self._running is not None or self.stale_message is not None:
            return
        choice = self.event_box.currentText()
        names = None if choice in ("", ALL_EVENTS) else [choice]
        self._run_number += 1
        cancel = threading.Event()
        self._running = (self._run_number, cancel, self.train)
        self.progress.setValue(0)
        self.progress.show()
        self.status.setText(f"Running {choice}…")
        self._enable()
        self.runStarted.emit()
        self._pool.start(_Run(self._run_number, self.train, names, cancel, self._signals))

    def cancel(self) -> None:
        """Stop a run (its result, if it still arrives, is dropped)."""
        if self._running is None:
            return
        self._running[1].set()
        self._running = None
        self.progress.hide()
        self.status.setText("Run cancelled.")
        self._enable()

    def wait(self, msecs: int = 60000) -> bool:
        """Wait for the worker (tests, closing the window); True when it is idle."""
        ok = self._pool.waitForDone(msecs)
        QtWidgets.QApplication.processEvents()
        return ok

    def _progress(self, number: int, fraction: float) -> None:
        if self._running is not None and number == self._running[0]:
            self.progress.setValue(int(round(1000 * fraction)))

    def _done(self, number: int, results, error: str) -> None:
        if self._running is None or number != self._running[0]:
            return  # cancelled, or of a model no longer on screen
        train = self._running[2]
        self._running = None
        self.progress.hide()
        if results is None:
            self.status.setText("Run cancelled." if error == "cancelled" else f"The run failed: {error}")
            self._enable()
            self.runFinished.emit(False)
            return
        self._set_results(results, train)
        self.status.setText(f"Ran {len(results.events)} event{'s' if len(results.events) != 1 else ''} in "
                            f"{results.solve_time_s:.1f} s.")
        self._enable()
        self.runFinished.emit(True)

    # ------------------------------------------------------------ results
    def _drop(self, message: str) -> None:
        self.results = self.results_train = None
        self.peak_model.set_rows([])
        self.verdict.setText("")
        self.shown_box.blockSignals(True)
        self.shown_box.clear()
        self.shown_box.blockSignals(False)
        self.shown_box.hide()
        self.shown_label.hide()
        if message:
            self._show_nothing(message)

    def _show_nothing(self, message: str) -> None:
        self.torque_plot.clear()
        self.speed_plot.clear()
        self.legend.clear()
        self.canvas.hide()
        self.message.setText(message)
        self.message.show()

    def _set_results(self, results, train) -> None:
        keep = self.shown_box.currentText()
        self.results, self.results_train = results, train
        self.shown_box.blockSignals(True)
        self.shown_box.clear()
        self.shown_box.addItems([e.name for e in results.events])
        i = self.shown_box.findText(keep)
        self.shown_box.setCurrentIndex(max(i, 0))
        self.shown_box.blockSignals(False)
        many = len(results.events) > 1
        self.shown_box.setVisible(many)
        self.shown_label.setVisible(many)
        self._user_ticked = False
        self._show_event()

    def current_event(self):
        if self.results is None or not self.results.events:
            return None
        i = max(self.shown_box.currentIndex(), 0)
        return self.results.events[min(i, len(self.results.events) - 1)]

    def _show_event(self) -> None:
        ev = self.current_event()
        if ev is None:
            return
        train = self.results_train
        before = self.checked_links() if self._user_ticked else None
        self.peak_model.headers = list(transient_headers(self.unit_system))
        self.peak_model.set_rows(transient_rows(ev, train, self.unit_system))
        self.peak_model.headerDataChanged.emit(QtCore.Qt.Horizontal, 0, len(self.peak_model.headers) - 1)
        ids = list(ev.link_ids)
        wanted = [l for l in before if l in ids] if before else default_links(ev)
        self.peak_model.set_checked(wanted)
        fit_peak_columns(self.peak_table)
        checked = [l for l in ev.links if l.passed is not None]
        fails = [l for l in checked if not l.passed]
        if fails:
            self.verdict.setText(f"{ev.name}: {len(fails)} of {len(checked)} links fail — a peak above its "
                                 "permissible value, or fewer events allowed than required.")
            self.verdict.setStyleSheet(theme.verdict_style(False))
        elif checked:
            self.verdict.setText(f"{ev.name}: every peak within its permissible value and every link takes the "
                                 f"events required ({len(checked)} links checked).")
            self.verdict.setStyleSheet(theme.verdict_style(True))
        else:
            self.verdict.setText(f"{ev.name}: no permissible peak or required count is given; the peaks are "
                                 "listed for information.")
            self.verdict.setStyleSheet(theme.verdict_style(None))
        self.canvas.export_title = f"{train.title if train is not None else ''}: transient — {ev.name}"
        self.message.hide()
        self.canvas.show()
        self._draw()

    def checked_links(self) -> list[str]:
        ev = self.current_event()
        if ev is None:
            return []
        return [lid for lid in ev.link_ids if lid in self.peak_model.checked]

    def set_checked_links(self, link_ids) -> None:
        self._user_ticked = True
        self.peak_model.set_checked(link_ids)
        self._draw()

    def _ticked(self) -> None:
        self._user_ticked = True
        self._draw()

    # ------------------------------------------------------------ drawing
    def _arrange_key(self, w: float, h: float) -> None:
        self._key_side = arrange_key(self.canvas, self.legend, w, h, self._key_side, (90.0, 90.0), shape=2.4)

    def _name(self, element_id: str) -> str:
        return R.name_of(self.results_train, element_id)

    def _draw(self) -> None:
        ev = self.current_event()
        tp, sp = self.torque_plot, self.speed_plot
        tp.clear()
        sp.clear()
        self.legend.clear()
        self._samples = []
        if ev is None:
            return
        t = np.asarray(ev.time, float)
        if self.unit_system == "SI":
            scale, unit = 1.0, None
            tp.setLabel("left", "Torque", units="N·m")
        else:
            tu = units.display_unit(units.TORQUE, self.unit_system)
            scale, unit = units.convert(1.0, units.TORQUE, tu), R.pretty(tu)
            tp.setLabel("left", f"Torque, {unit}", siPrefixEnableRanges=())
        ids = list(ev.link_ids)
        self.plotted = []
        chosen = self.checked_links()
        ys = [np.asarray(ev.link_torque[ids.index(lid)], float) * scale for lid in chosen]
        top = max((float(np.nanmax(np.abs(y))) for y in ys), default=0.0)
        # a history lying on an earlier one is drawn dashed on top of it, and the key says so
        under = overlapping(ys, LIES_ON * max(top, 1e-30))
        for n, (lid, y, on) in enumerate(zip(chosen, ys, under)):
            pen = theme.series_pen(n, theme.LINE_WIDTH)
            text = self._name(lid)
            if on is not None:
                pen = theme.pen(theme.series_color(n), theme.LINE_WIDTH, QtCore.Qt.DashLine)
                text += f" (dashed where it lies on {self._name(chosen[on])})"
            item = tp.plot(t, y, pen=pen)
            item.opts["name"] = self._name(lid)
            self.legend.addItem(item, text)
            self.plotted.append((lid, item))
            link = ev.link(lid)
            k = int(np.argmin(np.abs(t - link.peak_time)))
            ring = pg.ScatterPlotItem([t[k]], [y[k]], symbol="o", size=13, brush=theme.brush((0, 0, 0, 0)),
                                      pen=theme.pen(theme.series_color(n), theme.BOLD_WIDTH))
            ring.setToolTip(f"{self._name(lid)}: peak {fmt.seconds(link.peak_time)} s")
            tp.addItem(ring)
            if link.permissible_peak:
                for sign in (1.0, -1.0):
                    tp.addItem(pg.InfiniteLine(sign * link.permissible_peak * scale, angle=0,
                                               pen=theme.pen(theme.series_color(n), theme.THIN_WIDTH,
                                                             QtCore.Qt.DashLine)))
        if any(ev.link(lid).permissible_peak for lid in self.checked_links()):
            sample = pg.PlotDataItem(pen=theme.pen(theme.INK_MUTED, theme.THIN_WIDTH, QtCore.Qt.DashLine))
            self._samples.append(sample)
            self.legend.addItem(sample, "± permissible peak (dashed, the link's colour)")
        # the speed of the reference disc (the motor of a start-up), rpm of its own shaft
        ref = self._reference_disc(ev)
        if ref is not None:
            i = list(ev.disc_ids).index(ref)
            speed = sp.plot(t, np.asarray(ev.disc_speed[i], float) / RPM, pen=theme.pen(theme.INK, theme.LINE_WIDTH))
            speed.setToolTip(f"Speed of {self._name(ref)}")
            sp.setLabel("left", "Speed, rpm")
            sp.setTitle(f"Speed of {self._name(ref)}", color=theme.INK_MUTED, size=f"{theme.SMALL_POINT_SIZE}pt")
        # the excitation passing the natural frequencies (a start-up's 2 s f_line)
        crossings = sorted(ev.crossings, key=lambda c: c.mode_hz)
        for k, c in enumerate(crossings):
            lowest = k == 0
            pen = theme.pen(theme.FAIL if lowest else theme.INK_MUTED, theme.BOLD_WIDTH if lowest else theme.THIN_WIDTH,
                            QtCore.Qt.DashLine)
            text = f"{fmt.hz(c.mode_hz)} Hz crossed at {fmt.seconds(c.time_s)} s"
            for plot in (tp, sp):
                line = pg.InfiniteLine(c.time_s, angle=90, pen=pen)
                line.setToolTip(f"The excitation passes the natural frequency {fmt.hz(c.mode_hz)} Hz at "
                                f"{fmt.seconds(c.time_s)} s (motor at {fmt.rpm(c.motor_speed)} rpm)"
                                + (" — the lowest mode" if lowest else ""))
                plot.addItem(line, ignoreBounds=True)
            label = pg.TextItem(("lowest mode: " if lowest else "") + text,
                                color=theme.qcolor(theme.FAIL if lowest else theme.INK_MUTED),
                                fill=theme.brush((255, 255, 255, 220)), anchor=(0.0, 0.0))
            label.setZValue(40)
            tp.addItem(label, ignoreBounds=True)
        if crossings:
            sample = pg.PlotDataItem(pen=theme.pen(theme.FAIL, theme.BOLD_WIDTH, QtCore.Qt.DashLine))
            self._samples.append(sample)
            self.legend.addItem(sample, "the excitation crosses the lowest natural frequency")
        tp.setXRange(0.0, float(ev.duration), padding=0)
        tp.enableAutoRange(axis="y")
        sp.enableAutoRange(axis="y")
        self._place_crossing_labels(crossings)
        self._arrange_key(float(self.canvas.width()), float(self.canvas.height()))

    def _place_crossing_labels(self, crossings) -> None:
        """Each crossing's label at the top of the torque plot, stepped down so that close
        crossings do not overlap."""
        labels = [i for i in self.torque_plot.items if isinstance(i, pg.TextItem)]
        if not labels:
            return
        tp = self.torque_plot
        tp.vb.updateAutoRange()
        (x0, x1), (y0, y1) = tp.vb.viewRange()
        for k, (label, c) in enumerate(zip(labels, crossings)):
            right = c.time_s > x0 + 0.6 * (x1 - x0)
            label.setAnchor((1.0 if right else 0.0, 0.0))
            label.setPos(c.time_s, y1 - k * 0.09 * (y1 - y0))

    def _reference_disc(self, ev):
        train = self.results_train
        op = getattr(train, "operating", None)
        if op is not None and op.reference in ev.disc_ids:
            return op.reference
        return ev.disc_ids[0] if ev.disc_ids else None

    # ------------------------------------------------------------ exports
    def export_csv(self, path: str) -> None:
        ev = self.current_event()
        if ev is None:
            raise ValueError("no transient has been run")
        title = f"Transient {ev.name}: {self.results_train.title}, units {self.unit_system}"
        write_csv(path, title, transient_headers(self.unit_system, one_line=True), self.peak_model.rows)
