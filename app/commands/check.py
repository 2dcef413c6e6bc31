"""``twistwise check FILE [--margin PERCENT] [--json]``: interference screening
against the separation margin, worst first, and the verdict."""
from __future__ import annotations

from core.about import CAUTION
from core.errors import ModelError

from .. import formatting as fmt
from .. import wording
from .common import EXIT_FAIL, EXIT_OK, finite, load_train, print_json


def add_parser(sub):
    c = sub.add_parser("check", help="interference screening against the separation margin")
    c.add_argument("file")
    c.add_argument("--margin", type=float, metavar="PERCENT", help="required separation margin in %%")
    c.add_argument("--json", action="store_true", help="one JSON object on stdout")
    return c


def screening_to_json(study) -> dict:
    s = study.screening
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
                fmt.rad_s_to_rpm(c.band[0]), finite(fmt.rad_s_to_rpm(c.band[1]))],
            "status": c.status,
            "participation": None if c.participation is None else float(c.participation),
        })
        if s.tolerances:
            rows[-1]["margin_percent_band"] = 100.0 * c.separation_band
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
        "tolerance_bands": s.tolerances,
        "weak_excitation_below_percent": None if s.weak_below is None else 100.0 * s.weak_below,
        "caution": CAUTION,
    }


def _order(c) -> str:
    """The order column: the order, 'fixed', or the formula of a line f = |a + b N|."""
    if c.line.kind == "line":
        return "line"
    return fmt.order(c.order)


def print_table(study, path: str) -> None:
    s = study.screening
    train = study.train
    op = train.operating
    print(f"{train.title} — {path}")
    print(f"Operating range {fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} rpm of "
          f"'{train.name_of(op.reference)}', required separation margin {fmt.percent(s.margin)} %")
    n_el = sum(1 for i in range(len(s.modes)) if s.modes.elastic[i] and s.modes.frequency_hz[i] <= s.cap_hz)
    print(f"Modes considered: {n_el} elastic modes up to {fmt.hz(s.cap_hz)} Hz "
          f"(the screening limit, above the highest excitation frequency in range)")
    if s.coincidences:
        w = max(6, min(50, max(len(c.source) for c in s.coincidences)))
        band = " band %" if s.tolerances else ""
        print(f"{'mode':>4} {'Hz':>9}  {'source':<{w}} {'order':>6} {'crossing rpm':>12} {'margin %':>9}"
              f"{band:>8} {'twist at source':>15}  status")
        for c in s.coincidences:
            part = "—" if c.participation is None else fmt.percent(c.participation)
            extra = f"{fmt.percent(c.separation_band):>8}" if s.tolerances else ""
            print(f"{c.mode:>4} {fmt.hz(c.frequency_hz):>9}  {c.source[:w]:<{w}} {_order(c):>6} "
                  f"{fmt.rpm(c.crossing_speed):>12} {fmt.percent(c.separation):>9}{extra} {part + ' %':>15}  "
                  f"{c.status.upper()}")
        if s.tolerances:
            print("With the stiffness and inertia tolerances each natural frequency is a band; the verdict "
                  "follows the band margin (from the band edge nearest the excitation).")
        if s.weak_below is not None:
            print(f"Pairs whose mode twists at the excitation point by less than {fmt.percent(s.weak_below)} % "
                  "of its largest twist are weakly excited (WEAK): listed, not counted as failures.")
    else:
        print(f"No excitation comes within {fmt.percent(2 * s.margin)} % of a natural frequency.")
    print("Verdict: " + wording.separation_verdict(s))
    print(CAUTION)


def run(args) -> int:
    from core.study import StudyOptions, run_study
    train = load_train(args.file)
    if train.operating is None:
        raise ModelError("the project has no operating data: give reference, operating_speed and "
                         "excitations", "operating data", "operating_speed")
    margin = None
    if args.margin is not None:
        if not 0 <= args.margin <= 50:
            raise ModelError(f"must be between 0 and 50 %, got {args.margin:g}", "option", "--margin")
        margin = args.margin / 100.0
    if not train.operating.excitations:
        raise ModelError("the project names no excitations to screen against", "operating data",
                         "excitations")
    study = run_study(train, StudyOptions(margin=margin, parts=frozenset({"screening"})))
    if study.screening_error is not None:
        raise study.screening_error
    if args.json:
        print_json(screening_to_json(study))
    else:
        print_table(study, args.file)
    return EXIT_OK if study.screening.passed else EXIT_FAIL
