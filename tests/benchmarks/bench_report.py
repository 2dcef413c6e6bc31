"""Benchmark of ``twistwise report`` (the PDF review sheet), whole process, from one run.

Run by hand (not collected by pytest):

    python3 tests/benchmarks/bench_report.py                    # 200, 2 000 and 20 000 discs
    python3 tests/benchmarks/bench_report.py --sizes 200 2000   # fewer sizes
    python3 tests/benchmarks/bench_report.py --profile 2000     # cProfile of one in-process sheet

The trains are invented chains written as a user writes them, every value a
string with a unit: N discs ("1.25 kg*m^2"), a shaft between neighbours
(stiffness as text; every fifth shaft given by two geometry segments and a
material instead), a coupling every 50th link, a named disc every tenth and
an engine-like excitation of six orders with amplitudes and phases, so the
sheet carries the model tables, the excitation inputs, the Campbell diagram,
the mode shapes and the forced response.  The chain keeps the same physical
machine as N grows (disc inertia ~ 1/N, link stiffness ~ N: a finer
discretisation of one shaft line), so the same handful of modes falls under
the screening limit at every size and the time measured is the sheet's, not
a growing eigenproblem's.

Printed side by side from one run (median of ``--repeats`` runs each):

* ``report``: ``python3 -m app report FILE -o SHEET.pdf``, wall clock and the
  child's CPU time (the machine is shared: CPU time is the steadier number);
* ``check``: ``python3 -m app check FILE`` on the same file (load, solve and
  screen without a sheet), so report - check is what the sheet costs;
* the reference: ``python3 -c "import reportlab"``-style script that imports
  reportlab's platypus and lays out a plain reportlab table of the same rows
  (one row per disc and per link, plain strings, repeated header), i.e. the
  cheapest sheet of that size reportlab can make;
* per-disc cost of each, and report / reference as a ratio.

Targets (issue 15, item 4): under 5 s at 2 000 discs, time growing linearly
to 20 000 discs (the per-disc cost of report - check stays flat).
"""
from __future__ import annotations

import argparse
import datetime
import json
import os
import platform
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

REFERENCE = r'''
import sys
from reportlab.lib.pagesizes import A4
from reportlab.platypus import SimpleDocTemplate, Table, TableStyle
n = int(sys.argv[2])
rows = [["Disc", "Id", "Inertia (kg*m^2)"]] + [[f"Station {i}", f"d{i:05d}", f"{1.25 + i % 7 * 0.1:.4g}"]
                                                for i in range(n)]
rows += [["Link", "Kind", "Stiffness (kN*m/rad)"]] + [[f"s{i:05d}", "shaft", f"{2000 + i % 11:.4g}"]
                                                     for i in range(n - 1)]
doc = SimpleDocTemplate(sys.argv[1], pagesize=A4)
t = Table(rows, repeatRows=1, colWidths=[200, 120, 120])
t.setStyle(TableStyle([("FONTSIZE", (0, 0), (-1, -1), 7), ("ROWBACKGROUNDS", (0, 1), (-1, -1), [None])]))
doc.build([t])
'''


def chain_document(n: int, amplitudes: bool = False) -> dict:
    """An invented n-disc chain written with unit strings (see the module docstring)."""
    scale = n / 200.0
    discs = []
    for i in range(n):
        d = {"id": f"d{i:05d}", "inertia": f"{(1.0 + (i % 7) * 0.15) / scale:.6g} kg*m^2"}
        if i % 10 == 0:
            d["name"] = f"Station {i}"
        if i == n - 1:
            d["inertia"] = "40 kg*m^2"  # a driven machine at the end
            d["name"] = "Driven machine"
        discs.append(d)
    discs[0]["inertia"] = "25 kg*m^2"
    discs[0]["name"] = "Engine flywheel"
    links = []
    for i in range(n - 1):
        link = {"id": f"s{i:05d}", "from": f"d{i:05d}", "to": f"d{i + 1:05d}"}
        if i % 50 == 49:
            link.update(kind="coupling", stiffness=f"{0.8 * scale:.6g} MN*m/rad", relative_damping=0.8,
                        name=f"Coupling {i // 50 + 1}")
        elif i % 5 == 2:
            # two segments whose series stiffness is about 2.5 MN*m/rad * scale in carbon steel
            length = 0.5 / scale
            link.update(kind="shaft", material="carbon_steel", segments=[
                {"length": f"{1000 * length / 2:.6g} mm", "outer_diameter": "150 mm"},
                {"length": f"{1000 * length / 2:.6g} mm", "outer_diameter": "160 mm", "inner_diameter": "40 mm"}])
        else:
            link.update(kind="shaft", stiffness=f"{2.5 * scale:.6g} MN*m/rad", loss_factor=0.01)
        links.append(link)
    orders = [{"order": o, "amplitude": f"{a} N*m", "phase_deg": 15 * k} if amplitudes else o
              for k, (o, a) in enumerate([(0.5, 900), (1, 700), (1.5, 500), (2, 350), (3, 250), (6, 120)])]
    return {"format": "twistwise-project", "version": 1,
            "title": f"Benchmark chain, {n} discs (invented)", "discs": discs, "links": links,
            "reference": "d00000", "operating_speed": {"min": "600 rpm", "max": "1800 rpm"},
            "margin_percent": 10,
            "excitations": [{"name": "Engine gas torque", "at": "d00000", "orders": orders}]}


def timed(cmd: list[str]) -> tuple[float, float, int]:
    """(wall seconds, child CPU seconds, exit code) of one subprocess."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    if proc.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(cmd)} failed ({proc.returncode}):\n{proc.stderr}")
    return wall, cpu, proc.returncode


def median_of(cmd, repeats):
    runs = [timed(cmd) for _ in range(repeats)]
    return statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs)


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--sizes", type=int, nargs="+", default=[200, 2000, 20000])
    p.add_argument("--repeats", type=int, default=3)
    p.add_argument("--profile", type=int, metavar="N", help="profile one in-process sheet of N discs")
    p.add_argument("--with-response", action="store_true", help="orders with amplitudes: forced response too")
    a = p.parse_args(argv)
    tmp = Path(tempfile.mkdtemp(prefix="bench_report."))
    if a.profile:
        import cProfile
        import pstats
        sys.path.insert(0, str(ROOT))
        from app.report import write_sheet
        doc = chain_document(a.profile, a.with_response)
        cProfile.runctx("write_sheet(doc, None, out)", globals(), {"write_sheet": write_sheet, "doc": doc,
                                                                     "out": tmp / "p.pdf"}, str(tmp / "prof"))
        pstats.Stats(str(tmp / "prof")).sort_stats("cumtime").print_stats(30)
        return 0
    py = sys.executable
    (tmp / "reference.py").write_text(REFERENCE, encoding="utf-8")
    rows = []
    for n in a.sizes:
        proj = tmp / f"chain_{n}.json"
        proj.write_text(json.dumps(chain_document(n, a.with_response), indent=1), encoding="utf-8")
        sheet = tmp / f"chain_{n}.pdf"
        rep = median_of([py, "-m", "app", "report", str(proj), "-o", str(sheet)], a.repeats)
        chk = median_of([py, "-m", "app", "check", str(proj)], a.repeats)
        ref = median_of([py, str(tmp / "reference.py"), str(tmp / f"ref_{n}.pdf"), str(n)], a.repeats)
        from pypdf import PdfReader
        pages = len(PdfReader(str(sheet)).pages)
        rows.append((n, rep, chk, ref, pages))
    print(f"review sheet benchmark — {datetime.date.today()}, {platform.processor() or platform.machine()}, "
          f"{os.cpu_count()} CPUs, Python {platform.python_version()}; median of {a.repeats} runs, "
          "whole process" + (", with forced response" if a.with_response else ""))
    print("wall s / CPU s of each whole process; per disc: ms of CPU (the machine is shared, CPU time is the "
          "steadier); sheet = report - check, what the PDF adds")
    print(f"{'discs':>6} {'pages':>5} {'report':>13} {'check':>13} {'reference':>14} "
          f"{'report/disc':>11} {'sheet/disc':>10} {'ref/disc':>8} {'report/ref':>10}")
    for n, rep, chk, ref, pages in rows:
        print(f"{n:>6} {pages:>5} {rep[0]:>6.2f}/{rep[1]:<6.2f} {chk[0]:>6.2f}/{chk[1]:<6.2f} "
              f"{ref[0]:>7.2f}/{ref[1]:<6.2f} {1e3 * rep[1] / n:>11.3f} {1e3 * (rep[1] - chk[1]) / n:>10.3f} "
              f"{1e3 * ref[1] / n:>8.3f} {rep[1] / ref[1]:>10.2f}")
    print("reference: a plain reportlab Table of the same rows (one per disc and per link, plain strings, "
          "header repeated) in a fresh process, including 'import reportlab'; report/ref is the CPU ratio")
    print(f"files kept in {tmp}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
