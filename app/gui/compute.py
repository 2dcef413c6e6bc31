"""Live results: natural modes, screening and (when amplitudes are given) the
forced response, recomputed after every accepted edit.

Requests are debounced (a burst of edits gives one solve).  A solve that took
less than a frame last time runs at once on the GUI thread (a thread hop would
cost more than it saves); a slower one runs on a QThreadPool worker so the
window never freezes.  Every request carries a generation number and a
result that is not the newest is dropped.

The study comes in two stages: the modes, the screening, the sensitivities and the
forced response first (what every edit changes and every view shows at once), then on
the worker the slower parts — the windows of the design options, the acceptance checks,
the damped modes — added to the same study (:func:`core.study.extend_study`) and shown
when ready (``Results.complete``).  The second stage starts once the first results are
painted and the plots have settled (a worker running Python would slow the redraw
through the interpreter lock), and not at all when a newer edit has come meanwhile (its
own second stage follows).
"""
from __future__ import annotations

import time
from dataclasses import dataclass

from PySide6 import QtCore

FRAME_S = 1.0 / 60.0
DEBOUNCE_MS = 150
#: posted at low priority (AfterPaint): handled after the paint events already posted
_AFTER_PAINT = QtCore.QEvent.Type(QtCore.QEvent.registerEventType())
#: and this much later the work starts: the plots' second layout pass (labels placed for
#: the new ranges) repaints within it (measured 10-30 ms at 200 discs)
SETTLE_MS = 30


class AfterPaint(QtCore.QObject):
    """Calls ``slot`` once the paint events a redraw has posted are handled, and SETTLE_MS
    later: work started on a worker beside the redraw slows it through the interpreter lock.
    Posting again before the call is made calls ``slot`` once more, later."""

    def __init__(self, slot, parent: QtCore.QObject):
        super().__init__(parent)
        self._slot = slot

    def post(self) -> None:
        QtCore.QCoreApplication.postEvent(self, QtCore.QEvent(_AFTER_PAINT), QtCore.Qt.LowEventPriority.value)

    def event(self, event) -> bool:
        if event.type() == _AFTER_PAINT:
            QtCore.QTimer.singleShot(SETTLE_MS, self, self._slot)
            return True
        return super().event(event)


@dataclass
class Results:
    """A study and how long it took; the views read ``study`` only."""

    study: object  # core.study.Study
    solve_time_s: float
    note: str = ""
    complete: bool = True  # False: the slower parts (windows, acceptance, damped modes) follow

    @property
    def train(self):
        return self.study.train

    @property
    def modes(self):
        return self.study.modes

    @property
    def screening(self):
        return self.study.screening

    @property
    def response(self):
        return self.study.response


FIRST_PARTS = frozenset({"screening", "sensitivities", "response"})


def compute(train, first_stage: bool = False) -> Results:
    """The study of ``train`` (:func:`core.study.run_study`): the same modes, screening and
    forced response as the command line and the sheet; with ``first_stage`` only the
    parts every edit shows at once (see the module docstring)."""
    from core.study import LIVE_PARTS, StudyOptions, run_study
    t0 = time.perf_counter()
    parts = FIRST_PARTS & LIVE_PARTS if first_stage else LIVE_PARTS
    study = run_study(train, StudyOptions(parts=parts))
    import numpy as np
    if not np.all(np.isfinite(study.modes.frequency_hz)):
        # the study refuses these itself; this guard keeps a verdict from a non-number off the
        # screen whatever reaches it (the views keep the last valid results, marked)
        from core.errors import ModelError
        raise ModelError("the solve gave natural frequencies that are not finite numbers; check the "
                         "inertias, stiffnesses and speed ratios for extreme values", "train")
    _read_ahead(study)
    return Results(study, time.perf_counter() - t0, _note(study), complete=not first_stage)


def _read_ahead(study) -> None:
    """The study's parts computed on first use that every redraw reads (the verdict's
    acceptance argument, the marks of modes above the screening limit): computed here,
    where the study is made, not on the GUI thread inside the redraw."""
    study.argument  # noqa: B018
    study.above_screening_limit  # noqa: B018


def _note(study) -> str:
    if study.screening_error is not None:
        return f"not screened: {study.screening_error}"
    if study.response_error is not None:
        return f"forced response not computed: {study.response_error}"
    return ""


def complete(first: Results) -> Results:
    """The first-stage results with the slower parts added (run on the worker)."""
    from core.study import LIVE_PARTS, extend_study
    t0 = time.perf_counter()
    study = extend_study(first.study, LIVE_PARTS)
    if study.design is not None:
        for w in study.design.windows:
            w.chart  # noqa: B018 -- computed on first use: here, off the GUI thread
    _read_ahead(study)
    return Results(study, first.solve_time_s + time.perf_counter() - t0, _note(study), complete=True)


def needs_second_stage(study) -> bool:
    """True when the slower parts have anything to add for this study."""
    train = study.train
    op = train.operating
    if study.response is not None:
        return True  # acceptance checks
    if op is not None and op.excitations and any(l.kind == "coupling" and l.stiffness for l in train.links):
        return True  # windows
    if train.design_options:
        return True
    from core.damped import has_damping
    return has_damping(train)


class _Signals(QtCore.QObject):
    done = QtCore.Signal(int, object, object)  # generation, Results or None, error text


class _Job(QtCore.QRunnable):
    """The first stage of a study (``train`` given) or the second (``first`` given)."""

    def __init__(self, generation: int, train, signals: _Signals, first: Results | None = None):
        super().__init__()
        self.generation, self.train, self.signals, self.first = generation, train, signals, first

    def run(self):
        try:
            if self.first is not None:
                res, error = complete(self.first), ""
            else:
                res, error = compute(self.train, first_stage=True), ""
        except Exception as exc:
            res, error = None, f"{type(exc).__name__}: {exc}"
        try:
            self.signals.done.emit(self.generation, res, error)
        except RuntimeError:
            pass  # the window went while this solve ran (quit): nobody waits for the result


class ResultsRunner(QtCore.QObject):
    """``request(train)`` -> later ``resultsReady(Results)`` or ``failed(text)``."""

    resultsReady = QtCore.Signal(object)
    failed = QtCore.Signal(str)
    busyChanged = QtCore.Signal(bool)

    def __init__(self, parent=None, debounce_ms: int = DEBOUNCE_MS):
        super().__init__(parent)
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(debounce_ms)
        self._timer.timeout.connect(self._start)
        self._pool = QtCore.QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._signals = _Signals()
        self._signals.done.connect(self._job_finished, QtCore.Qt.QueuedConnection)
        self._pending = None
        self._second = None  # (generation, first-stage Results) waiting for its second stage
        self._second_after_paint = AfterPaint(self._start_second, self)
        self._generation = 0
        self._running = 0
        self.last_time_s = 0.0

    def set_debounce(self, ms: int) -> None:
        self._timer.setInterval(ms)

    def request(self, train, immediate: bool = False) -> None:
        self._pending = train
        self._generation += 1
        if immediate:
            self._timer.stop()
            self._start()
        else:
            self._timer.start()

    def stop(self) -> None:
        """No more results (the window is closing): a pending request is dropped and a solve
        still running is ignored when it ends."""
        self._timer.stop()
        self._pending = None
        self._generation += 1

    def compute_now(self, train) -> Results:
        """Synchronous solve (screenshots, tests): emits resultsReady too."""
        self._generation += 1
        self._timer.stop()
        res = compute(train)
        self.last_time_s = res.solve_time_s
        self.resultsReady.emit(res)
        return res

    def _start(self) -> None:
        train, gen = self._pending, self._generation
        if train is None:
            return
        self._pending = None
        if self.last_time_s < FRAME_S:
            try:
                res = compute(train, first_stage=True)
            except Exception as exc:
                self._finished(gen, None, f"{type(exc).__name__}: {exc}")
                return
            self._finished(gen, res, "")
            return
        self._running += 1
        self.busyChanged.emit(True)
        self._pool.start(_Job(gen, train, self._signals))

    def _job_finished(self, generation: int, res, error: str) -> None:
        self._running -= 1
        if not self._running:
            self.busyChanged.emit(False)
        self._finished(generation, res, error)

    def _finished(self, generation: int, res, error: str) -> None:
        if res is not None and not res.complete:
            self.last_time_s = res.solve_time_s
        if generation != self._generation:
            return  # a newer edit is on its way: drop the stale result
        if res is None:
            self.failed.emit(error)
            return
        if not res.complete and not needs_second_stage(res.study):
            res.complete = True
        self.resultsReady.emit(res)
        if not res.complete:  # the slower parts follow on the worker, after the views' paint
            self._second = (generation, res)
            self._second_after_paint.post()

    def _start_second(self) -> None:
        queued, self._second = self._second, None
        if queued is None or queued[0] != self._generation:
            return  # nothing queued, or a newer edit is on its way
        self._running += 1
        self.busyChanged.emit(True)
        self._pool.start(_Job(queued[0], None, self._signals, first=queued[1]))

    def wait(self, msecs: int = 10000) -> bool:
        """Until every solve asked for so far has ended (a second stage still queued starts now)."""
        self._start_second()
        return self._pool.waitForDone(msecs)
