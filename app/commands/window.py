"""``twistwise window FILE (--link ID | --disc ID) [--range LOW:HIGH] [--json]``: the
values of one coupling's (or any link's) stiffness or one disc's inertia for which every
elastic mode clears every excitation by the required margin over the operating range,
every other value held (tolerance bands included where given).

Exit codes: 0 at least one admissible interval in the range, 1 none, 2 bad input.
"""
from __future__ import annotations

from core.about import CAUTION
from core.errors import ModelError

from .. import formatting as fmt
from .common import EXIT_FAIL, EXIT_OK, load_train, print_json


def add_parser(sub):
    w = sub.add_parser("window", help="the stiffness or inertia values that clear every excitation")
    w.add_argument("file")
    g = w.add_mutually_exclusive_group(required=True)
    g.add_argument("--link", metavar="ID", help="a link's stiffness (a coupling, a shaft, a gear mesh)")
    g.add_argument("--disc", metavar="ID", help="a disc's inertia")
    w.add_argument("--range", metavar="LOW:HIGH",
                   help="values to search, with units (default: the current value / 100 to x 100)")
    w.add_argument("--json", action="store_true", help="one JSON object on stdout")
    return w


def parse_range(text: str | None, quantity: str):
    """'LOW:HIGH' with units -> (low, high) SI, or None."""
    if text is None:
        return None
    from core import units
    kind = units.STIFFNESS if quantity == "stiffness" else units.INERTIA
    parts = str(text).split(":")
    if len(parts) != 2:
        raise ModelError(f"give LOW:HIGH with units, e.g. '10 kN*m/rad:1 MN*m/rad'; got '{text}'",
                         "option", "--range")
    lo = units.parse(parts[0].strip(), kind, "option", "--range")
    hi = units.parse(parts[1].strip(), kind, "option", "--range")
    if not 0 < lo < hi:
        raise ModelError(f"LOW must be greater than zero and below HIGH, got '{text}'", "option", "--range")
    return lo, hi


def _value(v: float, quantity: str) -> str:
    from core import units
    kind = units.STIFFNESS if quantity == "stiffness" else units.INERTIA
    unit = units.display_unit(kind, "SI")
    return f"{units.convert(v, kind, unit):.4g} {unit}"


def print_table(study, path: str) -> None:
    w = study.window
    train = study.train
    what = "stiffness" if w.quantity == "stiffness" else "inertia"
    print(f"{train.title} — {path}")
    print(f"Window of the {what} of '{train.name_of(w.element)}': every other value held, every elastic "
          f"mode clear of every excitation by {fmt.percent(w.margin)} % over the operating range"
          + (" (tolerance bands included)" if w.tolerances else ""))
    print(f"Searched {_value(w.range[0], w.quantity)} to {_value(w.range[1], w.quantity)}; "
          f"current value {_value(w.current, w.quantity)} "
          f"{'clears' if w.current_clears else 'does not clear'} every excitation.")
    if w.admissible:
        print("Admissible values:")
        for a, b in w.admissible:
            print(f"  {_value(a, w.quantity):>18}  to  {_value(b, w.quantity)}")
        if not w.current_clears and w.nearest_admissible is not None:
            print(f"Nearest admissible value to the current one: {_value(w.nearest_admissible, w.quantity)}")
    else:
        print("No value in the range clears every excitation: this element alone cannot remove the "
              "coincidence; look at the sensitivities (`twistwise solve`) for what moves the mode.")
    if w.blocked:
        print("What blocks the rest of the range (values, mode, excitation):")
        for b in w.blocked[:12]:
            print(f"  {_value(b.low, w.quantity):>18}  to  {_value(b.high, w.quantity):<18}  mode {b.mode}, {b.line}")
        if len(w.blocked) > 12:
            print(f"  … and {len(w.blocked) - 12} more")
    print(CAUTION)


def run(args) -> int:
    from core.study import StudyOptions, run_study
    train = load_train(args.file)
    if train.operating is None or not train.operating.excitations:
        raise ModelError("the project has no operating data to clear: give reference, operating_speed and "
                         "excitations", "operating data", "excitations")
    quantity = "stiffness" if args.link else "inertia"
    element = args.link or args.disc
    study = run_study(train, StudyOptions(parts=frozenset({"screening"}),
                                          window_of=(element, quantity, parse_range(args.range, quantity))))
    if study.screening_error is not None:
        raise study.screening_error
    w = study.window
    if args.json:
        out = w.as_json()
        out["caution"] = CAUTION
        print_json(out)
    else:
        print_table(study, args.file)
    return EXIT_OK if w.admissible else EXIT_FAIL
