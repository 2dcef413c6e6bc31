"""Benchmark of the result views (app.gui.results) on large trains, from one run.

Run by hand (not collected by pytest):

    QT_QPA_PLATFORM=offscreen python3 tests/benchmarks/bench_gui_results.py
    QT_QPA_PLATFORM=offscreen python3 tests/benchmarks/bench_gui_results.py --discs 50 200 1000

For invented lumped chains of N discs with an operating range and twelve
excitation orders, it prints side by side, per N:

* solve: the study the desktop program computes first after an edit
  (``core.study.run_study`` with the first-stage parts of ``app.gui.compute``:
  modes, screening, sensitivities; what core costs for the same edit, the
  reference of this run);
* views: ``ResultsPanel.set_study`` with that study, including the redraw of
  the visible tab (``grab()`` forces the paint offscreen);
* paint: ``grab()`` alone, the part of "views" that is Qt painting;
* cursor: one speed-cursor move (read-out from ``nearest_at_speed``);
* mode: selecting another mode (shape, torque bars, diagram highlight).

Each figure is the best of a few repeats; the ratio views/solve says how the
views' cost compares with core's on this machine.  The study follows the one
rule of :func:`core.study.choose_modes`: where more natural frequencies lie
under the screening limit than one solve returns (the 1000-disc chain has
about 640, one solve returns 400), the lowest ones are shown and the train is
not screened; the "screened" column says so and the Interference tab is then
disabled, so only the Modes tab is timed.  Budget (issue 4, item 10):
an accepted edit to redrawn results on a 200-disc train under 50 ms, solve
and views together.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6 import QtWidgets  # noqa: E402

from app.gui.compute import FIRST_PARTS  # noqa: E402
from app.gui.results import ResultsPanel  # noqa: E402
from core.project import build_train  # noqa: E402
from core.study import LIVE_PARTS, StudyOptions, run_study  # noqa: E402


def chain_document(n: int, seed: int = 3) -> dict:
    """An invented n-disc chain with operating data (project-document form)."""
    rng = np.random.default_rng(seed)
    discs = [{"id": f"d{i}", "name": f"Disc {i}", "inertia": f"{rng.uniform(0.5, 5.0):.3f} kg*m^2"}
             for i in range(n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}",
              "stiffness": f"{rng.uniform(2.0, 20.0):.3f} MN*m/rad"} for i in range(n - 1)]
    return {"format": "twistwise-project", "version": 1, "title": f"Bench chain, {n} discs",
            "discs": discs, "links": links, "reference": "d0",
            "operating_speed": {"min": "900 rpm", "max": "1800 rpm", "trip": "1980 rpm"},
            "margin_percent": 10,
            "excitations": [{"name": "Driver", "at": "d0", "orders": list(range(1, 13))},
                            {"name": "Line frequency", "frequency": "100 Hz"}]}


def best(func, repeats: int = 5) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        func()
        times.append(time.perf_counter() - t0)
    return min(times)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--discs", type=int, nargs="+", default=[20, 200, 1000])
    args = ap.parse_args(argv)
    app = QtWidgets.QApplication.instance() or QtWidgets.QApplication([])
    panel = ResultsPanel()
    panel.resize(1200, 800)
    panel.show()
    app.processEvents()
    print(f"{'discs':>6} {'modes':>6} {'screened':>8} {'solve ms':>9} {'views ms':>9} {'paint ms':>9} "
          f"{'views/solve':>11} {'cursor ms':>10} {'mode ms':>8}")
    options = StudyOptions(parts=FIRST_PARTS & LIVE_PARTS)
    for n in args.discs:
        train = build_train(chain_document(n))
        state = {}

        def solve():
            state["s"] = run_study(train, options)

        t_solve = best(solve)
        study = state["s"]
        screened = study.screening is not None
        t_views, t_paints = [], []
        for tab in (0, 1) if screened else (0,):
            panel.tabs.setCurrentIndex(tab)

            def views():
                panel.set_study(study, t_solve)
                panel.grab()

            t_views.append(best(views))
            t_paints.append(best(panel.grab))
        t_cursor = float("nan")
        if screened:
            cv = panel.campbell_view
            speeds = iter(np.linspace(1000.0, 1700.0, 50))
            t_cursor = best(lambda: cv.set_cursor_rpm(next(speeds)))
        panel.tabs.setCurrentIndex(0)
        picks = iter([1, 2] * 10)
        t_mode = best(lambda: (panel.select_mode(next(picks)), panel.grab()))
        k = int(np.argmax(t_views))
        t_view, t_paint = t_views[k], t_paints[k]
        print(f"{n:>6} {len(study.modes):>6} {'yes' if screened else 'no':>8} {1e3 * t_solve:>9.1f} "
              f"{1e3 * t_view:>9.1f} {1e3 * t_paint:>9.1f} {t_view / t_solve:>11.2f} {1e3 * t_cursor:>10.2f} "
              f"{1e3 * t_mode:>8.1f}")
        if not screened:
            print(f"{'':>6} not screened: {study.screening_error.message}")
    print("views: set_study + paint, worst of the Modes and Interference tabs (Modes only when not "
          "screened); paint: grab() alone (offscreen software paint of the whole panel).")
    panel.shutdown()
    panel.close()
    panel.deleteLater()
    app.processEvents()
    return 0


if __name__ == "__main__":
    sys.exit(main())
