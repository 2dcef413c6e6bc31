"""Benchmark: time from an accepted edit to redrawn results in the main window.

Run by hand (not collected by pytest):

    QT_QPA_PLATFORM=offscreen python3 tests/benchmarks/bench_gui_edit.py [--discs 200] [--repeats 15]

On an invented 200-disc chain (seeded random inertias and stiffnesses, a
speed range and six excitation orders, no amplitudes) it changes one
stiffness through the project document -- the same undo command a form edit
pushes -- and waits until the results panel shows the new solve and pending
paint events are flushed.  The debounce (150 ms, waiting for typing to stop)
is set to zero: it is idle time, not work.

Printed side by side, median of the repeats:

* core: build_train + natural modes + screening on the edited document
  (the bare solve, the floor);
* edit -> redrawn: the whole GUI path (undo command, model rebuild, schematic
  and tables refresh, solve, result views);
* its parts: document + views refresh, solve, result views, painting.

Target (issue 4, item 10): edit -> redrawn under 50 ms.
"""
from __future__ import annotations

import argparse
import datetime
import os
import platform
import statistics
import sys
import time
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import numpy as np  # noqa: E402
from PySide6 import QtCore, QtWidgets  # noqa: E402


def chain_document(n: int, seed: int = 7) -> dict:
    rng = np.random.default_rng(seed)
    discs = [{"id": f"d{i}", "name": f"Disc {i}", "inertia": f"{rng.uniform(0.5, 20):.3f} kg*m^2"}
             for i in range(n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}",
              "stiffness": f"{rng.uniform(0.5, 5):.3f} MN*m/rad"} for i in range(n - 1)]
    return {"format": "twistwise-project", "version": 1, "title": f"Benchmark chain, {n} discs",
            "discs": discs, "links": links, "reference": "d0",
            "operating_speed": {"min": "900 rpm", "max": "1800 rpm"}, "margin_percent": 10,
            "excitations": [{"name": "Driver", "at": "d0", "orders": [1, 2, 3]},
                            {"name": "Driven", "at": f"d{n - 1}", "orders": [1, 6, 12]}]}


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--discs", type=int, default=200)
    ap.add_argument("--repeats", type=int, default=15)
    args = ap.parse_args()

    from app.gui import main_window as mw
    from app.gui.compute import compute
    from core.project import build_train

    app = mw.application()
    settings = QtCore.QSettings(str(Path(QtCore.QDir.tempPath()) / "twistwise-bench.ini"),
                                QtCore.QSettings.IniFormat)
    win = mw.MainWindow(settings=settings, autosave=False)
    win.runner.set_debounce(0)
    win.resize(1600, 1000)
    win.show()
    doc = chain_document(args.discs)
    win.load_document(doc)
    deadline = time.perf_counter() + 30
    while win.results is None and time.perf_counter() < deadline:
        app.processEvents()
    win.runner.wait()

    parts = {"views": [], "solve": [], "results": [], "paint": []}
    t_mark = {}
    orig_refresh, orig_show = win.refresh_views, win._show_results

    def timed_refresh():
        t = time.perf_counter()
        orig_refresh()
        parts["views"].append(time.perf_counter() - t)

    def timed_show(res):
        t = time.perf_counter()
        orig_show(res)
        parts["results"].append(time.perf_counter() - t)
        parts["solve"].append(res.solve_time_s)
        t_mark["shown"] = time.perf_counter()

    win.project.documentChanged.disconnect()
    win.project.documentChanged.connect(timed_refresh)
    win.runner.resultsReady.disconnect()
    win.runner.resultsReady.connect(timed_show)

    core_times, gui_times = [], []
    for r in range(args.repeats):
        value = f"{1.0 + 0.1 * (r + 1):.2f} MN*m/rad"
        edited = dict(win.project.doc)
        edited["links"] = [dict(l) for l in edited["links"]]
        edited["links"][args.discs // 2]["stiffness"] = value
        t = time.perf_counter()
        compute(build_train(edited))
        core_times.append(time.perf_counter() - t)

        t_mark.clear()
        loop = QtCore.QEventLoop()
        win.runner.resultsReady.connect(loop.quit)
        QtCore.QTimer.singleShot(30_000, loop.quit)
        t0 = time.perf_counter()
        win.project.set_value(("links", args.discs // 2, "stiffness"), value, "bench edit")
        if "shown" not in t_mark:  # a slow solve went to the worker: wait idle, as the program does
            loop.exec()
        win.runner.resultsReady.disconnect(loop.quit)
        t_paint = time.perf_counter()
        app.processEvents()  # flush the paint events the new results queued
        parts["paint"].append(time.perf_counter() - t_paint)
        gui_times.append(time.perf_counter() - t0)
        assert win.project.train.links[args.discs // 2].stiffness == build_train(edited).links[args.discs // 2].stiffness

    med = lambda xs: 1e3 * statistics.median(xs)  # noqa: E731
    print(f"bench_gui_edit  {datetime.date.today()}  {platform.machine()} {platform.processor() or ''} "
          f"{os.cpu_count()} cpu  Python {platform.python_version()}  Qt platform "
          f"{QtWidgets.QApplication.platformName()}")
    print(f"train: {args.discs} discs, {args.discs - 1} shafts; median of {args.repeats} edits")
    print(f"{'core solve (reference)':<38}{med(core_times):8.1f} ms")
    print(f"{'edit -> redrawn results (GUI)':<38}{med(gui_times):8.1f} ms   "
          f"ratio GUI / core {statistics.median(gui_times) / statistics.median(core_times):.2f}")
    print(f"{'  document rebuild + views':<38}{med(parts['views']):8.1f} ms")
    print(f"{'  solve inside the GUI':<38}{med(parts['solve']):8.1f} ms")
    print(f"{'  result views set_results':<38}{med(parts['results']):8.1f} ms")
    print(f"{'  painting (schematic, tables, plots)':<38}{med(parts['paint']):8.1f} ms")
    target = 50.0
    print(f"target < {target:.0f} ms: {'met' if med(gui_times) < target else 'NOT met'}")
    win.project.undo_stack.setClean()
    win.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
