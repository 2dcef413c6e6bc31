"""Sentences every view prints the same way (command line, desktop program, sheet):
verdicts and the words for a study's results.  Formatting only: nothing here computes."""
from __future__ import annotations

import re

from . import formatting as fmt


def separation_verdict(s, nbsp: str = " ") -> str:
    """The screening verdict in words; ``nbsp`` keeps a number with its % sign on the sheet."""
    if s.passed:
        return f"PASS — every coincidence keeps at least {fmt.percent(s.margin)}{nbsp}% separation."
    n_fail = len(s.failures)
    worst = s.failures[0]
    return (f"FAIL — {n_fail} coincidence{'s' if n_fail > 1 else ''} inside the "
            f"{fmt.percent(s.margin)}{nbsp}% margin (worst: mode {worst.mode} with {worst.line.label}, "
            f"{fmt.percent(worst.governing_separation)}{nbsp}%"
            + (" from its tolerance band" if s.tolerances else "") + ").")


#: each acceptance criterion (core.acceptance.Check.criterion) in words
CRITERIA = {
    "permissible_torque": "vibratory torque ≤ permissible",
    "permissible_stress": "vibratory stress ≤ permissible",
    "coupling_nominal_torque": "coupling: mean torque ≤ nominal",
    "coupling_maximum_torque": "coupling: peak torque ≤ maximum",
    "coupling_vibratory_torque": "coupling: vibratory torque ≤ permissible",
    "coupling_dissipated_power": "coupling: dissipated power ≤ permissible",
    "shaft_fatigue": "shaft fatigue (mean + vibratory)",
    "shaft_yield": "shaft: peak stress below yield",
    "shafting_continuous": "propulsion shafting, continuous",
    "shafting_transient": "propulsion shafting, transient",
    "shafting_barred_range": "propulsion shafting, barred range",
    "gear_hammer": "gear mesh: vibratory ≤ mean torque",
}

#: the speed bands (core.bands) in words
SPEED_BANDS = {"operating": "operating range", "transient": "start-up / run-down",
               "overspeed": "overspeed to trip"}


def criterion(code: str) -> str:
    return CRITERIA.get(code, code.replace("_", " "))


def speed_band(code: str) -> str:
    return SPEED_BANDS.get(code, code)


def _modes(ms) -> str:
    nums = [str(m.mode) for m in ms]
    return ("mode " if len(nums) == 1 else "modes ") + ", ".join(nums)


def headline(study, nbsp: str = " ") -> tuple[str, bool | None]:
    """The verdict the review states, and its colour (True pass, False fail, None open).

    Where every mode clears the margin it is the separation verdict.  Where some cannot —
    a variable-speed drive crossing its modes, the crowded half orders of an engine — it
    is the acceptance argument of the trade: separation for the modes kept clear, the
    forced response against the limits for the rest, each named (core.acceptance)."""
    if getattr(study, "screening_error", None) is not None:
        return f"No verdict — {study.screening_error.message}", None
    s = study.screening
    if s is None:
        return "Not screened — the project has no operating data.", None
    arg = study.argument
    pct = f"{fmt.percent(s.margin)}{nbsp}%"
    if s.passed or arg is None:
        text = separation_verdict(s, nbsp)
        if s.passed and study.acceptance_failed:
            worst = study.acceptance.failures[0]
            text += (f" The forced response fails: {study.train.name_of(worst.link)} {criterion(worst.criterion)} at "
                     f"{fmt.percent(worst.utilisation)}{nbsp}% of its limit.")
            return "FAIL — " + text.split("— ", 1)[1], False
        return text, s.passed
    clear, accepted = arg.separation, arg.forced_response
    failed = [m for m in arg.modes if m.basis == "fail"]
    open_ = [m for m in arg.modes if m.basis == "open"]
    parts = []
    def are(ms, one, many):
        return f"{_modes(ms)} {one if len(ms) == 1 else many}"
    if clear:
        parts.append(f"{are(clear, 'clears', 'clear')} the {pct} margin")
    if accepted:
        parts.append(f"{are(accepted, 'lies', 'lie')} within it ({accepted[0].reason}) and "
                     f"{'is' if len(accepted) == 1 else 'are'} accepted on the forced response: every "
                     "limit of the operating range holds")
    if failed:
        first = failed[0]
        worst = first.checks[0] if first.checks else None
        what = (f" ({study.train.name_of(worst.link)}: {criterion(worst.criterion)} at "
                f"{fmt.percent(worst.utilisation)}{nbsp}% of its limit)") if worst is not None else ""
        parts.append(f"{are(failed, 'lies', 'lie')} within it and the forced response exceeds a limit{what}")
    if open_:
        parts.append(f"{are(open_, 'lies', 'lie')} within it and {'is' if len(open_) == 1 else 'are'} not "
                     f"yet accepted: {open_[0].reason}")
    if arg.verdict == "pass":
        return "PASS — " + "; ".join(parts) + ".", True
    if arg.verdict == "fail":
        return "FAIL — " + "; ".join(parts) + ".", False
    return "OPEN — " + "; ".join(parts) + ".", None


_RECALLED = r"(?:from memory|common practice, no source|no source)"


def for_reader(text: str) -> str:
    """A source as a reader is shown it: without the notes kept for developers ('from memory',
    'common practice, no source'), which belong in code comments and tests, not on a sheet or
    screen.  'AISI 1045, Shigley table A-20 (from memory)' -> 'AISI 1045, Shigley table A-20'."""
    out = re.sub(r"\s*\(\s*" + _RECALLED + r"\s*\)", "", str(text), flags=re.IGNORECASE)
    out = re.sub(r"\s*[,;\u2014\u2013-]\s*" + _RECALLED, "", out, flags=re.IGNORECASE)
    out = re.sub(_RECALLED, "", out, flags=re.IGNORECASE)
    return re.sub(r"\s{2,}", " ", out).strip(" ;,")
