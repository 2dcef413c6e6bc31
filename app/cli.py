"""Command line: ``twistwise solve | check | response | report | screenshot``.

``twistwise`` alone opens the desktop program on a bundled sample, ``twistwise FILE``
opens that project.  Exit codes: 0 success (check: pass), 1 a failing verdict
or an exceedance, 2 bad input (one line on stderr naming file, element and
field; never a traceback).
"""
from __future__ import annotations

import argparse
import json
import math
import sys

from core import units
from core.errors import ModelError

from . import formatting as fmt

COMMANDS = ("solve", "check", "response", "report", "screenshot")
CAUTION = ("Screening only: these results do not replace review by a licensed engineer "
           "against the applicable machinery standards and local codes.")

EXIT_OK, EXIT_FAIL, EXIT_BAD_INPUT = 0, 1, 2


class InputError(Exception):
    """Bad input found by the command line itself (an option, a path)."""


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit 2, no usage dump noise
        raise InputError(message)


def _load(path: str):
    from core.project import build_train, load_document
    return build_train(load_document(path))


def _modes_args(args, train):
    from core.solver import natural_modes
    if args.max_frequency is not None:
        cap = units.parse(args.max_frequency, units.FREQUENCY, "option", "--max-frequency")
        if cap <= 0:
            raise ModelError("must be greater than zero", "option", "--max-frequency")
        return natural_modes(train, max_frequency_hz=cap)
    if args.modes is not None:
        if args.modes < 1:
            raise ModelError("must be at least 1", "option", "--modes")
        return natural_modes(train, n_modes=args.modes)
    if train.operating is not None and train.operating.excitations:
        from core.screening import excitation_lines, screening_cap_hz
        op = train.operating
        cap = screening_cap_hz(excitation_lines(train), op.speed_max, op.margin)
        if cap > 0:
            modes = natural_modes(train, max_frequency_hz=cap)
            if int(modes.elastic.sum()) >= 6:
                return modes
    return natural_modes(train, n_modes=6)


def modes_to_json(modes) -> dict:
    out = []
    for i in range(len(modes)):
        out.append({
            "number": int(modes.number[i]),
            "frequency_hz": float(modes.frequency_hz[i]),
            "frequency_cpm": float(modes.frequency_hz[i] * 60.0),
            "rigid_body": bool(modes.rigid_body[i]),
            "shape": modes.shape_dict(i),
            "link_torque_nm": {l: _num(v) for l, v in zip(modes.link_ids, modes.link_torque[i])},
            "kinetic_energy_share": {d: float(v) for d, v in zip(modes.disc_ids, modes.kinetic_share[i])},
            "strain_energy_share": {l: float(v) for l, v in zip(modes.link_ids, modes.strain_share[i])},
            "dominant_link": modes.dominant_link(i),
        })
    return {"title": modes.train.title, "requested": modes.requested,
            "solve_time_s": modes.solve_time_s, "notes": modes.notes, "modes": out}


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None


def cmd_solve(args) -> int:
    train = _load(args.file)
    modes = _modes_args(args, train)
    if args.json:
        print(json.dumps(modes_to_json(modes), indent=2))
        return EXIT_OK
    print(f"{train.title} — {args.file}")
    print(f"Natural frequencies ({modes.requested}; solved in {modes.solve_time_s * 1e3:.1f} ms)")
    print(f"{'mode':>4}  {'Hz':>10}  {'cpm':>9}  {'largest strain energy':<28} {'largest kinetic energy':<24}")
    for i in range(len(modes)):
        if modes.rigid_body[i]:
            dom = "rigid-body mode"
        else:
            li = modes.dominant_link(i)
            dom = fmt.share(li, modes.strain_share[i].max()) if li else "—"
        di = modes.dominant_disc(i)
        print(f"{int(modes.number[i]):>4}  {fmt.hz(modes.frequency_hz[i]):>10}  "
              f"{fmt.cpm(modes.frequency_hz[i]):>9}  {dom:<28} {fmt.share(di, modes.kinetic_share[i].max())}")
    for n in modes.notes:
        print(f"Note: {n}")
    print(CAUTION)
    return EXIT_OK


def screening_to_json(s) -> dict:
    rows = []
    for c in s.coincidences:
        rows.append({
            "mode": c.mode,
            "frequency_hz": c.frequency_hz,
            "source": c.source,
            "order": c.order,
            "excitation_at": c.line.at,
            "crossing_speed_rpm": None if c.crossing_speed is None else fmt.rad_s_to_rpm(c.crossing_speed),
            "margin_percent": 100.0 * c.separation,
            "worst_speed_rpm": fmt.rad_s_to_rpm(c.worst_speed),
            "interference_band_rpm": None if c.band is None else [
                fmt.rad_s_to_rpm(c.band[0]), _num(fmt.rad_s_to_rpm(c.band[1]))],
            "status": c.status,
        })
    op = s.train.operating
    return {
        "title": s.train.title,
        "verdict": s.verdict,
        "margin_percent": 100.0 * s.margin,
        "reference": op.reference,
        "operating_speed_rpm": {"min": fmt.rad_s_to_rpm(s.speed_min), "max": fmt.rad_s_to_rpm(s.speed_max)},
        "modes_cap_hz": s.cap_hz,
        "modes_considered": [{"mode": int(s.modes.number[i]), "frequency_hz": float(s.modes.frequency_hz[i])}
                             for i in range(len(s.modes)) if s.modes.elastic[i]
                             and s.modes.frequency_hz[i] <= s.cap_hz],
        "coincidences": rows,
    }


def cmd_check(args) -> int:
    from core.screening import screen
    train = _load(args.file)
    if train.operating is None:
        raise ModelError("the project has no operating data: give reference, operating_speed and "
                         "excitations", "operating data", "operating_speed")
    margin = None
    if args.margin is not None:
        if not 0 <= args.margin <= 50:
            raise ModelError(f"must be between 0 and 50 %, got {args.margin:g}", "option", "--margin")
        margin = args.margin / 100.0
    s = screen(train, margin=margin)
    if args.json:
        print(json.dumps(screening_to_json(s), indent=2))
        return EXIT_OK if s.passed else EXIT_FAIL
    op = train.operating
    print(f"{train.title} — {args.file}")
    print(f"Operating range {fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} rpm of '{op.reference}', "
          f"required separation margin {fmt.percent(s.margin)} %")
    n_el = sum(1 for i in range(len(s.modes)) if s.modes.elastic[i] and s.modes.frequency_hz[i] <= s.cap_hz)
    print(f"Modes considered: {n_el} elastic modes up to {fmt.hz(s.cap_hz)} Hz "
          f"(cap above the highest excitation frequency in range)")
    if s.coincidences:
        w = max(6, min(60, max(len(c.source) for c in s.coincidences)))
        print(f"{'mode':>4} {'Hz':>9}  {'source':<{w}} {'order':>6} {'crossing rpm':>12} {'margin %':>9}  status")
        for c in s.coincidences:
            print(f"{c.mode:>4} {fmt.hz(c.frequency_hz):>9}  {c.source[:w]:<{w}} {fmt.order(c.order):>6} "
                  f"{fmt.rpm(c.crossing_speed):>12} {fmt.percent(c.separation):>9}  {c.status.upper()}")
    else:
        print(f"No excitation comes within {fmt.percent(2 * s.margin)} % of a natural frequency.")
    n_fail = len(s.failures)
    if s.passed:
        print(f"Verdict: PASS — every coincidence keeps at least {fmt.percent(s.margin)} % separation.")
    else:
        worst = s.failures[0]
        print(f"Verdict: FAIL — {n_fail} coincidence{'s' if n_fail > 1 else ''} inside the "
              f"{fmt.percent(s.margin)} % margin (worst: mode {worst.mode} with {worst.source}, "
              f"{fmt.percent(worst.separation)} %).")
    print(CAUTION)
    return EXIT_OK if s.passed else EXIT_FAIL


def _dispatch_optional(module: str, func: str, args) -> int:
    import importlib
    mod = importlib.import_module(module)
    return getattr(mod, func)(args)


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="twistwise", description="Torsional vibration screening of drive trains.")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)
    s = sub.add_parser("solve", help="natural frequencies and mode shapes")
    s.add_argument("file")
    g = s.add_mutually_exclusive_group()
    g.add_argument("--max-frequency", metavar="QUANTITY", help="every mode up to this frequency, e.g. '300 Hz'")
    g.add_argument("--modes", type=int, metavar="N", help="the N lowest elastic modes")
    s.add_argument("--json", action="store_true", help="one JSON object on stdout")
    c = sub.add_parser("check", help="interference screening against the separation margin")
    c.add_argument("file")
    c.add_argument("--margin", type=float, metavar="PERCENT", help="required separation margin in %%")
    c.add_argument("--json", action="store_true")
    r = sub.add_parser("response", help="damped forced response across the speed range")
    r.add_argument("file")
    r.add_argument("--speeds", metavar="MIN:MAX:COUNT", help="reference speeds in rpm")
    r.add_argument("--json", action="store_true")
    rp = sub.add_parser("report", help="PDF review sheet")
    rp.add_argument("file")
    rp.add_argument("-o", "--output", required=True, metavar="SHEET.pdf")
    rp.add_argument("--paper", choices=("a4", "letter"), default="a4")
    rp.add_argument("--author", default="")
    rp.add_argument("--revision", default="")
    rp.add_argument("--units", choices=("SI", "US"), default="SI", help="unit system of the model table")
    sc = sub.add_parser("screenshot", help="render the main window offscreen to a PNG")
    sc.add_argument("file")
    sc.add_argument("-o", "--output", required=True, metavar="PNG")
    sc.add_argument("--size", default="1600x1000", metavar="WxH")
    return p


HANDLERS = {
    "solve": cmd_solve,
    "check": cmd_check,
    "response": lambda a: _dispatch_optional("app.response_cli", "cmd_response", a),
    "report": lambda a: _dispatch_optional("app.report", "cmd_report", a),
    "screenshot": lambda a: _dispatch_optional("app.gui.main_window", "cmd_screenshot", a),
}


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or argv[0] not in COMMANDS and not argv[0].startswith("-"):
        # the desktop program: no argument, or a project file
        from app.gui.main_window import run_gui
        return run_gui(argv[0] if argv else None)
    file_arg = None
    try:
        args = build_parser().parse_args(argv)
        if args.command is None:
            build_parser().print_help()
            return EXIT_OK
        file_arg = args.file
        return HANDLERS[args.command](args)
    except InputError as exc:
        print(f"twistwise: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except ModelError as exc:
        where = f"{file_arg}: " if file_arg else ""
        print(f"twistwise: {where}{exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        return 130
    except Exception as exc:  # never a traceback in front of a user
        print(f"twistwise: internal error ({type(exc).__name__}: {exc}); please report it with the project file",
              file=sys.stderr)
        return 3
