"""Benchmark of quantity reading (core.units), from one run.

Run by hand (not collected by pytest):

    python3 tests/benchmarks/bench_units.py              # 20 000 values
    python3 tests/benchmarks/bench_units.py --values 100000

Texts are invented values ("18.52 kg*m^2", "1480 rpm", "2.1 MN*m/rad" ...) over the
unit texts a project carries.  Printed side by side, in microseconds per value:

* cached: :func:`core.units.parse` once every unit text has been read (the number read
  by ``float()``, the factor looked up per unit text) -- target under 5 us (issue 15, item 2);
* split+float: the floor, ``float(text.partition(" ")[0]) * factor`` from a dict, with no
  checks at all;
* first reading of a unit text: the full grammar, the built-in table (no pint), then
  for names outside it pint (imported and built on first need), per unit text;
* pint: ``ureg.Quantity(text).to(si_unit)`` per value, pint's own reading (what the old
  reader did on every distinct text), with the ratio pint / ours.

Also the import times (fresh interpreters): ``import core.units`` (must not load pint)
against ``import pint`` plus building its registry.  Each timing is the best of a few
repeats; ratios > 1 mean ours is faster.
"""
from __future__ import annotations

import argparse
import platform
import random
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from core import units as u  # noqa: E402

UNITS = [  # (kind, unit text, a typical magnitude)
    (u.INERTIA, "kg*m^2", 20.0), (u.STIFFNESS, "MN*m/rad", 2.0), (u.STIFFNESS, "kN*m/rad", 900.0),
    (u.SPEED, "rpm", 1500.0), (u.FREQUENCY, "Hz", 50.0), (u.LENGTH, "mm", 80.0),
    (u.TORQUE, "kN*m", 12.0), (u.DAMPING, "N*m*s/rad", 40.0), (u.STRESS, "MPa", 60.0),
    (u.DENSITY, "kg/m^3", 7850.0), (u.MODULUS, "GPa", 80.0), (u.INERTIA, "lb*ft^2", 300.0),
    (u.STIFFNESS, "lbf*in/rad", 5e5),
]
OUTSIDE_TABLE = [(u.STIFFNESS, "kip*ft/rad"), (u.LENGTH, "micron"), (u.TORQUE, "kgf*m"),
                 (u.INERTIA, "slug*ft^2"), (u.SPEED, "degree/minute")]


def best(fn, repeats: int = 5) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def fresh_import(code: str, repeats: int = 5) -> float:
    """Best time of ``code`` inside a fresh interpreter (seconds, start-up excluded)."""
    timed = f"import time\nt0 = time.perf_counter()\n{code}\nprint(time.perf_counter() - t0)"
    return min(float(subprocess.run([sys.executable, "-c", timed], cwd=ROOT, check=True,
                                    capture_output=True, text=True).stdout) for _ in range(repeats))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--values", type=int, default=20_000)
    args = ap.parse_args()
    rng = random.Random(1)
    items = []
    for _ in range(args.values):
        kind, unit, size = rng.choice(UNITS)
        items.append((f"{size * rng.uniform(0.2, 5.0):.4g} {unit}", kind))
    n = len(items)
    print(f"core.units reading, {n} values over {len(UNITS)} unit texts "
          f"(Python {platform.python_version()}, {platform.machine()})")

    # first reading of each unit text (cold caches): the first one also builds the table
    firsts = []
    for kind, unit, size in UNITS:
        t0 = time.perf_counter()
        u.parse(f"1 {unit}", kind)
        firsts.append(time.perf_counter() - t0)
    first_build, first_table = firsts[0], sorted(firsts[1:])[len(firsts[1:]) // 2]
    pint_loaded = "pint" in sys.modules
    t0 = time.perf_counter()
    u.registry()
    registry_s = time.perf_counter() - t0
    pints = []
    for kind, unit in OUTSIDE_TABLE:
        t0 = time.perf_counter()
        u.parse(f"1 {unit}", kind)
        pints.append(time.perf_counter() - t0)
    first_pint = sorted(pints)[len(pints) // 2]

    ours = best(lambda: [u.parse(text, kind, "disc 'd'", "inertia") for text, kind in items]) / n
    factors = {unit: u.parse(f"1 {unit}", kind) for kind, unit, _ in UNITS}
    floor = best(lambda: [float(t.partition(" ")[0]) * factors[t.partition(" ")[2]]
                          for t, _k in items]) / n
    ureg = u.registry()
    sample = items[: min(n, 2000)]
    pint_each = best(lambda: [ureg.Quantity(t).to(k.si_unit).magnitude for t, k in sample], 3) / len(sample)

    us = 1e6
    print(f"  {'per value':40s} {'us':>9s}")
    print(f"  {'ours, cached unit texts':40s} {ours * us:9.2f}   target < 5 us")
    print(f"  {'split+float floor (no checks)':40s} {floor * us:9.2f}   ours / floor = {ours / floor:.1f}")
    print(f"  {'pint Quantity(text).to(si)':40s} {pint_each * us:9.2f}   pint / ours = {pint_each / ours:.0f}")
    print(f"  {'first unit text (builds the table)':40s} {first_build * us:9.1f}")
    print(f"  {'first reading, built-in table':40s} {first_table * us:9.1f}   median per unit text "
          f"(pint loaded: {'yes' if pint_loaded else 'no'})")
    print(f"  {'first reading, pint name':40s} {first_pint * us:9.1f}   median per unit text, after "
          f"pint load ({registry_s:.2f} s once)")

    print("import inside a fresh interpreter (best of 5)")
    mine = fresh_import("import core.units")
    pint_s = fresh_import("import core.units as u; u.registry()")
    print(f"  import core.units                   {mine * 1e3:7.1f} ms   (pint not loaded)")
    print(f"  ... then pint and its registry      {pint_s * 1e3:7.1f} ms   ratio {pint_s / mine:.0f}")


if __name__ == "__main__":
    main()
