"""``twistwise transient FILE [--event NAME] [--json] [--csv DIR]``: start-ups,
electrical faults and load steps in the time domain — peak torque, fatigue damage
and the number of events each shaft can take.

Exit codes: 0 every peak within its limit and every allowed-event count at least
the count the project requires; 1 otherwise; 2 bad input.
"""
from __future__ import annotations

import re
from pathlib import Path

from core.about import CAUTION
from core.errors import ModelError

from .. import formatting as fmt
from .common import EXIT_FAIL, EXIT_OK, InputError, load_train, print_json


def add_parser(sub):
    t = sub.add_parser("transient", help="start-ups, faults and load steps in the time domain")
    t.add_argument("file")
    t.add_argument("--event", action="append", metavar="NAME",
                   help="only this event (may be given more than once); default every event")
    t.add_argument("--json", action="store_true", help="one JSON object on stdout")
    t.add_argument("--csv", metavar="DIR", help="write each event's time histories to DIR/EVENT.csv")
    return t


def _file_name(name: str) -> str:
    return re.sub(r"[^\w.-]+", "_", name).strip("_") or "event"


def write_csv(results, folder: Path) -> list[Path]:
    """One CSV per event: time, every disc's speed, every link's torque and stress (SI),
    with the caution as a comment line."""
    import numpy as np
    written = []
    for ev in results.events:
        names, table = ev.history_table()
        path = folder / f"{_file_name(ev.name)}.csv"
        with open(path, "w", encoding="utf-8", newline="") as fh:
            fh.write(f"# {CAUTION}\n")
            fh.write(f"# event: {ev.name}; SI units (s, rad/s, N*m, Pa)\n")
            fh.write(",".join(names) + "\n")
            np.savetxt(fh, table, delimiter=",", fmt="%.9g")
        written.append(path)
    return written


def _allowed(v) -> str:
    if v is None:
        return "—"
    if v == float("inf") or v > 1e12:
        return "unlimited"
    return f"{v:.3g}"


def print_table(study, path: str) -> None:
    train = study.train
    res = study.transients
    print(f"{train.title} — {path}")
    print("Transient events in the time domain (peak torque on each link's own shaft, Miner damage of "
          "one event from rainflow-counted shear stress)")
    for ev in res.events:
        print()
        print(f"Event '{ev.name}': {fmt.seconds(ev.duration)} s, step {ev.step * 1e3:.3g} ms, resolved to "
              f"{ev.resolved_hz:.0f} Hz; solved in {ev.solve_time_s:.2f} s")
        for c in ev.crossings:
            print(f"  passes the {c.mode_hz:.2f} Hz mode at {c.time_s:.2f} s "
                  f"({fmt.rpm(c.motor_speed)} rpm of the motor)")
        print(f"  {'link':<22} {'peak kN*m':>10} {'at s':>7} {'limit':>8} {'damage':>10} "
              f"{'allowed events':>15} {'required':>9}  status")
        for l in ev.links:
            status = "—" if l.passed is None else ("PASS" if l.passed else "FAIL")
            damage = "—" if l.damage is None else f"{l.damage:.3g}"
            req = "—" if l.required_events is None else f"{l.required_events:g}"
            print(f"  {train.name_of(l.link_id)[:22]:<22} {fmt.torque_knm(l.peak_torque):>10} "
                  f"{l.peak_time:>7.3f} {fmt.torque_knm(l.permissible_peak):>8} {damage:>10} "
                  f"{_allowed(l.allowed_events):>15} {req:>9}  {status}")
        for n in ev.notes:
            print(f"  Note: {n}")
    verdict = res.passed
    if verdict is None:
        print("Verdict: none — no link has a permissible peak torque or a required number of events.")
    elif verdict:
        print("Verdict: PASS — every peak within its limit and every shaft takes the events required.")
    else:
        print("Verdict: FAIL — a peak exceeds its limit or a shaft takes fewer events than required.")
    print(CAUTION)


def run(args) -> int:
    from core.study import StudyOptions, run_study
    folder = None
    if args.csv:
        folder = Path(args.csv)
        if not folder.is_dir():
            raise InputError(f"--csv folder {folder} does not exist")
    train = load_train(args.file)
    if not train.transients:
        raise ModelError("the project has no transient events: add a \"transients\" list", "transients",
                         "transients")
    study = run_study(train, StudyOptions(parts=frozenset({"transients"}),
                                          events=tuple(args.event) if args.event else None))
    res = study.transients
    if folder is not None:
        written = write_csv(res, folder)
    if args.json:
        out = res.to_json()
        out["title"] = train.title
        out["passed"] = res.passed
        out["caution"] = CAUTION
        print_json(out)
    else:
        print_table(study, args.file)
        if folder is not None:
            print(f"Time histories written: {', '.join(str(p) for p in written)}")
    return EXIT_FAIL if res.passed is False else EXIT_OK
