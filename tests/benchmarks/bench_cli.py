"""Whole-process timings of the command line against plain scripts, from one run.

Run by hand (not collected by pytest):

    python3 tests/benchmarks/bench_cli.py                 # every row
    python3 tests/benchmarks/bench_cli.py --quick         # fewer repeats, no 100 000-disc row

Printed side by side (median of the repeats, wall clock and the child's CPU time;
the machine may be shared, CPU time is the steadier number), each with its ratio
and the issue 15 target:

* ``twistwise --help`` against ``python3 -c "import json"`` (target: within 3x);
* ``twistwise check`` on chains of 2 000 and 20 000 discs written with unit strings
  against a plain script that reads the same JSON, splits number from unit, and calls
  ``scipy.linalg.eigh_tridiagonal`` for the lowest 20 modes with vectors (targets:
  1.3x at 2 000 discs, 1.5x at 20 000);
* ``twistwise solve --json --modes 20`` on 100 000 discs against the same plain
  script, with the child's peak memory (targets: 3x, under 1 GiB).

The chains model one physical machine at every size (disc inertia ~ 1/N, link
stiffness ~ N), so the same few modes fall under the screening limit and the time
measured is reading, solving and writing, not a growing eigenproblem.
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

PLAIN = r'''
import json, sys
import numpy as np
from scipy.linalg import eigh_tridiagonal
SI = {"kg*m^2": 1.0, "MN*m/rad": 1e6, "kN*m/rad": 1e3, "N*m/rad": 1.0}
doc = json.load(open(sys.argv[1]))
def si(text):
    number, unit = text.split(" ", 1)
    return float(number) * SI[unit]
J = np.array([si(d["inertia"]) for d in doc["discs"]])
k = np.array([si(l["stiffness"]) for l in doc["links"]])
# free-free chain: K - w^2 J in the symmetric form J^-1/2 K J^-1/2
d = np.r_[k, 0.0] + np.r_[0.0, k]
s = 1.0 / np.sqrt(J)
w2, v = eigh_tridiagonal(d * s * s, -k * s[:-1] * s[1:], select="i", select_range=(0, 20))
print(len(w2))
'''


def chain(n: int) -> dict:
    """One machine cut into n stations: total inertia 400 kg*m^2, end-to-end stiffness
    0.5 MN*m/rad, a motor-like excitation with two orders at 1000-1500 rpm."""
    J = 400.0 / n
    k = 0.5e6 * (n - 1)
    discs = [{"id": f"d{i}", "inertia": f"{J * (1 + 0.1 * (i % 3)):.6g} kg*m^2"} for i in range(n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}",
              "stiffness": f"{k / 1e6 * (1 + 0.05 * (i % 5)):.6g} MN*m/rad"} for i in range(n - 1)]
    return {"format": "twistwise-project", "version": 1, "title": f"chain of {n} discs",
            "discs": discs, "links": links, "reference": "d0",
            "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "Motor", "at": "d0", "orders": [1, 2]}]}


# children run as an installed program does: compiled modules cached on disk
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def timed(cmd: list[str], repeats: int) -> tuple[float, float, float]:
    """Median wall and CPU seconds of ``cmd`` and its largest peak memory (MiB), after
    one warm-up run (which also writes the bytecode cache)."""
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=ROOT, env=ENV, check=False)
    walls, cpus, peak = [], [], 0.0
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=ROOT, env=ENV, check=False)
        walls.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append((after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime))
        peak = max(peak, after.ru_maxrss / 1024.0)
    return statistics.median(walls), statistics.median(cpus), peak


def row(label, ours, ref, target):
    print(f"{label:<44} {ours[0]:7.2f} s {ours[1]:7.2f} s   {ref[0]:7.2f} s {ref[1]:7.2f} s   "
          f"{ours[0] / ref[0]:5.2f}x {ours[1] / ref[1]:5.2f}x   target {target}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()
    reps = 2 if args.quick else args.repeats
    py = sys.executable
    print(f"{'':<44} {'ours wall':>9} {'CPU':>9}   {'plain wall':>9} {'CPU':>9}   {'ratio':>6} {'CPU':>6}")
    row("twistwise --help | python -c 'import json'", timed([py, "-m", "app", "--help"], reps),
        timed([py, "-c", "import json"], reps), "3x")
    with tempfile.TemporaryDirectory() as tmp:
        plain = Path(tmp) / "plain.py"
        plain.write_text(PLAIN)
        sizes = [(2000, "1.3x"), (20000, "1.5x")]
        for n, target in sizes:
            path = Path(tmp) / f"chain{n}.json"
            path.write_text(json.dumps(chain(n)))
            row(f"check, {n} discs", timed([py, "-m", "app", "check", str(path)], reps),
                timed([py, str(plain), str(path)], reps), target)
        if not args.quick:
            n = 100_000
            path = Path(tmp) / f"chain{n}.json"
            path.write_text(json.dumps(chain(n)))
            ours = timed([py, "-m", "app", "solve", str(path), "--json", "--modes", "20"], max(1, reps // 2))
            ref = timed([py, str(plain), str(path)], max(1, reps // 2))
            row(f"solve --json --modes 20, {n} discs", ours, ref, "3x")
            print(f"{'':<44} peak memory {ours[2]:.0f} MiB (target under 1024 MiB)")
    print(f"(python {sys.version.split()[0]}, {os.cpu_count()} CPUs, load average "
          f"{os.getloadavg()[0]:.1f}; medians of {reps} runs)")


if __name__ == "__main__":
    main()
