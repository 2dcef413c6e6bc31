"""Benchmark: time from an accepted edit to redrawn results in the main window.

Run by hand (not collected by pytest):

    QT_QPA_PLATFORM=offscreen python3 tests/benchmarks/bench_gui_edit.py
        [--discs 200] [--repeats 15] [--train chain|propulsion|both]
        [--tab modes|interference|response|transients|design|all]

Two invented 200-disc trains: the seeded random chain of the first version of
this benchmark (kept for comparison; its stiffnesses put nearly every one of
its ~200 modes under the screening cap, which no real train does), and a
realistic propulsion line (V16 engine, flexible coupling, gearbox, 55 m line
shaft in stations, propeller; a dozen modes under the cap, see
:func:`propulsion_document`).  Each run changes one stiffness through the
project document -- the same undo command a form edit pushes -- from an idle
program (the previous edit's second stage and any view's own worker have
finished, as when a user types the next value; ``--back-to-back`` starts each
edit at once instead, so it overlaps that background work) with one results tab
showing (every tab in turn: Modes, Interference diagram, Forced
response, Transients, Design options; a tab with nothing to show for a train
is disabled and listed as such), and waits until the results panel shows the
new solve and the pending paint events are flushed.  The debounce
(150 ms, waiting for typing to stop) is set to zero: it is idle time, not work.

Printed side by side, median of the repeats, with date and machine:

* core: build_train + natural modes + screening on the edited document
  (the bare solve, the reference);
* GUI: the whole path from the accepted edit (undo command, model rebuild,
  schematic and forms refresh, solve, result views, painting) and GUI / core;
* its parts: views refresh, solve, result views set_results, painting.

Target (issue 4, item 10): edit -> redrawn under 50 ms.
"""
from __future__ import annotations

import argparse
import copy
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


def propulsion_document(n: int = 200) -> dict:
    """An invented n-disc marine propulsion line, modelled as a practising engineer
    would for a long line: a V16 four-stroke medium-speed engine (damper, eight
    crank throws, flywheel), a highly flexible coupling, a single-reduction
    gearbox (4:1), then a 55 m steel line shaft of 420 mm diameter lumped into
    n - 14 stations, and a five-blade propeller.  Station values from the
    textbook lumping of a uniform shaft (Ker Wilson, Practical Solution of
    Torsional Vibration Problems, vol. 1 -- from memory): k = G*J/L and
    I = rho*J*L per station, G = 79.3 GPa, rho = 7850 kg/m^3; engine, coupling
    and propeller figures are invented but of the usual size.  Excitations: the
    engine's firing orders 0.5 ... 12 and the propeller's blade orders 5 and 10
    and once per revolution, with a 250-600 rpm engine speed range.  The
    natural frequencies under the screening cap are a dozen or so, as on a real
    line (the seeded chain above has nearly every mode under its cap)."""
    import math
    G, rho, D, length = 79.3e9, 7850.0, 0.42, 55.0
    stations = n - 14
    J = math.pi * D ** 4 / 32.0
    L = length / (stations - 1)
    k_line, i_line = G * J / L, rho * J * L
    discs = [{"id": "damper", "name": "Torsional damper", "inertia": "90 kg*m^2"}]
    discs += [{"id": f"throw{c}", "name": f"Crank throw {c}", "inertia": "180 kg*m^2"} for c in range(1, 9)]
    discs += [{"id": "flywheel", "name": "Flywheel", "inertia": "2500 kg*m^2"},
              {"id": "coupling_out", "name": "Coupling secondary", "inertia": "120 kg*m^2"},
              {"id": "pinion", "name": "Gearbox pinion", "inertia": "40 kg*m^2"},
              {"id": "wheel", "name": "Gearbox wheel", "inertia": "1400 kg*m^2"}]
    discs += [{"id": f"st{j}", "name": f"Line shaft station {j}", "inertia": f"{i_line:.4g} kg*m^2"}
              for j in range(stations)]
    discs += [{"id": "propeller", "name": "Propeller (with entrained water)", "inertia": "45000 kg*m^2"}]
    ids = [d["id"] for d in discs]
    links = [{"id": "damper_crank", "kind": "shaft", "from": "damper", "to": "throw1", "stiffness": "80 MN*m/rad"}]
    links += [{"id": f"crank{c}", "kind": "shaft", "from": f"throw{c}", "to": f"throw{c + 1}",
               "stiffness": "120 MN*m/rad"} for c in range(1, 8)]
    links += [{"id": "crank_flywheel", "kind": "shaft", "from": "throw8", "to": "flywheel", "stiffness": "150 MN*m/rad"},
              {"id": "flex_coupling", "kind": "coupling", "from": "flywheel", "to": "coupling_out",
               "stiffness": "1.2 MN*m/rad"},
              {"id": "input_shaft", "kind": "shaft", "from": "coupling_out", "to": "pinion", "stiffness": "60 MN*m/rad"},
              {"id": "mesh", "kind": "gear_mesh", "from": "pinion", "to": "wheel", "speed_ratio": 0.25},
              {"id": "output_shaft", "kind": "shaft", "from": "wheel", "to": "st0", "stiffness": "400 MN*m/rad"}]
    links += [{"id": f"line{j}", "kind": "shaft", "from": f"st{j}", "to": f"st{j + 1}",
               "stiffness": f"{k_line / 1e6:.4g} MN*m/rad"} for j in range(stations - 1)]
    links += [{"id": "propeller_shaft", "kind": "shaft", "from": f"st{stations - 1}", "to": "propeller",
               "stiffness": f"{k_line / 1e6:.4g} MN*m/rad"}]
    assert len(ids) == n and len(links) == n - 1
    return {"format": "twistwise-project", "version": 1, "title": f"Propulsion line, {n} discs",
            "discs": discs, "links": links, "reference": "throw1",
            "operating_speed": {"min": "250 rpm", "max": "600 rpm"}, "margin_percent": 10,
            "excitations": [
                {"name": "Engine firing (16 cylinders, four-stroke)", "at": "throw4",
                 "orders": [0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4, 4.5, 5, 6, 8, 12]},
                {"name": "Propeller blade rate (5 blades)", "at": "propeller", "orders": [5, 10]},
                {"name": "Propeller once per rev", "at": "propeller", "orders": [1]}]}


TRAINS = {"chain": (chain_document, "links", None),  # edit: the middle shaft's stiffness
          "propulsion": (propulsion_document, "links", "flex_coupling")}  # edit: a softer or stiffer coupling


def settle(app, win) -> None:
    """Until the program is idle: the runner's and the result views' workers done, events handled."""
    for _ in range(3):
        win.runner.wait()
        for tab in win.results_panel.result_tabs:
            if hasattr(tab.view, "wait"):
                tab.view.wait()
        app.processEvents()


def measure(app, win, doc, edit_path, values, tab_key: str, back_to_back: bool = False) -> dict | None:
    """Median times (s) of edits through the project document, each followed
    until the visible results are redrawn and the paint events are flushed;
    None when the tab is disabled for this train (nothing to show)."""
    from app.gui.compute import compute
    from core.project import build_train

    win.load_document(doc)
    deadline = time.perf_counter() + 30
    while win.results is None and time.perf_counter() < deadline:
        app.processEvents()
    win.runner.wait()
    app.processEvents()
    panel = win.results_panel
    tab = panel.tab_index(tab_key)
    if tab < 0 or not panel.tabs.isTabEnabled(tab):
        return None
    panel.tabs.setCurrentIndex(tab)
    app.processEvents()

    parts = {"views": [], "solve": [], "results": [], "paint": [], "core": [], "gui": []}
    t_mark = {}
    orig_refresh, orig_show = win.refresh_views, win._show_results

    def timed_refresh():
        t = time.perf_counter()
        orig_refresh()
        parts["views"].append(time.perf_counter() - t)

    def timed_show(res):
        t = time.perf_counter()
        orig_show(res)
        if "shown" in t_mark or "armed" not in t_mark:
            return  # the second stage of an edit: not on the way to the first redraw
        parts["results"].append(time.perf_counter() - t)
        parts["solve"].append(res.solve_time_s)
        t_mark["shown"] = time.perf_counter()

    win.project.documentChanged.disconnect()
    win.project.documentChanged.connect(timed_refresh)
    win.runner.resultsReady.disconnect()
    win.runner.resultsReady.connect(timed_show)
    try:
        for value in values:
            if not back_to_back:
                settle(app, win)
            edited = copy.deepcopy(win.project.doc)
            edited[edit_path[0]][edit_path[1]][edit_path[2]] = value
            t = time.perf_counter()
            compute(build_train(edited))
            parts["core"].append(time.perf_counter() - t)

            t_mark.clear()
            if not back_to_back:
                settle(app, win)
            t_mark["armed"] = True
            loop = QtCore.QEventLoop()
            win.runner.resultsReady.connect(loop.quit)
            QtCore.QTimer.singleShot(30_000, loop.quit)
            t0 = time.perf_counter()
            win.project.set_value(edit_path, value, "bench edit")
            if "shown" not in t_mark:  # the solve went to the timer or the worker: wait idle, as the program does
                loop.exec()
            win.runner.resultsReady.disconnect(loop.quit)
            t_paint = time.perf_counter()
            app.processEvents()  # flush the paint events the new results queued
            parts["paint"].append(time.perf_counter() - t_paint)
            parts["gui"].append(time.perf_counter() - t0)
            k = edit_path[1]
            assert win.results.train.links[k].stiffness == build_train(edited).links[k].stiffness
    finally:
        win.project.documentChanged.disconnect()
        win.project.documentChanged.connect(orig_refresh)
        win.runner.resultsReady.disconnect()
        win.runner.resultsReady.connect(orig_show)
    out = {k: statistics.median(v) for k, v in parts.items()}
    out["modes"] = len(win.results.modes)
    return out


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--discs", type=int, default=200)
    ap.add_argument("--repeats", type=int, default=15)
    ap.add_argument("--train", choices=["chain", "propulsion", "both"], default="both")
    ap.add_argument("--back-to-back", action="store_true",
                    help="start each edit at once, over the previous edit's background work")
    ap.add_argument("--tab", choices=["modes", "interference", "response", "transients", "design", "all", "both"],
                    default="all", help="results tab showing while editing (only the visible tab is redrawn); "
                    "'both': modes and interference")
    args = ap.parse_args()

    from app.gui import main_window as mw

    app = mw.application()
    settings = QtCore.QSettings(str(Path(QtCore.QDir.tempPath()) / "twistwise-bench.ini"),
                                QtCore.QSettings.IniFormat)
    win = mw.MainWindow(settings=settings, autosave=False)
    win.runner.set_debounce(0)  # the 150 ms wait for typing to stop is idle time, not work
    win.resize(1600, 1000)
    win.show()

    trains = ["chain", "propulsion"] if args.train == "both" else [args.train]
    tabs = {"modes": "modes", "interference": "campbell", "response": "response", "transients": "transients",
            "design": "design_options"}  # name -> the results panel's key
    tab_names = (list(tabs) if args.tab == "all" else ["modes", "interference"] if args.tab == "both"
                 else [args.tab])
    rows = []
    for name in trains:
        make, table, link_id = TRAINS[name]
        doc = make(args.discs)
        k = args.discs // 2 if link_id is None else [l["id"] for l in doc["links"]].index(link_id)
        for tab in tab_names:
            values = [f"{(1.0 if name == 'chain' else 0.6) + 0.1 * (r + 1):.2f} MN*m/rad"
                      for r in range(args.repeats)]
            rows.append((name, tab, measure(app, win, doc, (table, k, "stiffness"), values, tabs[tab],
                                            args.back_to_back)))

    ms = lambda x: f"{1e3 * x:7.1f}"  # noqa: E731
    print(f"bench_gui_edit  {datetime.datetime.now():%Y-%m-%d %H:%M}  {platform.machine()} "
          f"{platform.processor() or ''} {os.cpu_count()} cpu  Python {platform.python_version()}  "
          f"Qt platform {QtWidgets.QApplication.platformName()}  window 1600x1000")
    print(f"{args.discs} discs; one stiffness edit, median of {args.repeats}; times in ms; "
          + ("edits back to back" if args.back_to_back else "each edit from an idle program"))
    print("chain: seeded random chain (nearly every mode under the cap); "
          "propulsion: engine + coupling + gearbox + 55 m line shaft + propeller")
    head = (f"{'train':<11}{'tab':<13}{'modes':>5} {'core':>7} {'GUI':>7} {'GUI/core':>8}   "
            f"{'views':>7}{'solve':>7}{'results':>8}{'paint':>7}  target < 50")
    print(head)
    for name, tab, r in rows:
        if r is None:
            print(f"{name:<11}{tab:<13}  tab disabled for this train (nothing to show), not timed")
            continue
        print(f"{name:<11}{tab:<13}{r['modes']:>5} {ms(r['core'])} {ms(r['gui'])} {r['gui'] / r['core']:>8.2f}   "
              f"{ms(r['views'])}{ms(r['solve'])}{ms(r['results']):>8}{ms(r['paint'])}  "
              f"{'met' if r['gui'] < 0.050 else 'NOT met'}")
    print("core: build_train + modes + screening (+ forced response with amplitudes) of the edited "
          "document, bare (the reference).  GUI: from the accepted edit to the visible results "
          "redrawn and painted.  Its parts: views = schematic, tables and forms refresh; solve = "
          "the same core work inside the GUI; results = result views set_results; paint = the "
          "paint events flushed afterwards.")
    win.project.undo_stack.setClean()
    win.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
