"""Sentences every view prints the same way (command line, desktop program, sheet):
verdicts and the words for a study's results.  Formatting only: nothing here computes."""
from __future__ import annotations

from . import formatting as fmt


def separation_verdict(s, nbsp: str = " ") -> str:
    """The screening verdict in words; ``nbsp`` keeps a number with its % sign on the sheet."""
    if s.passed:
        return f"PASS — every coincidence keeps at least {fmt.percent(s.margin)}{nbsp}% separation."
    n_fail = len(s.failures)
    worst = s.failures[0]
    return (f"FAIL — {n_fail} coincidence{'s' if n_fail > 1 else ''} inside the "
            f"{fmt.percent(s.margin)}{nbsp}% margin (worst: mode {worst.mode} with {worst.line.label}, "
            f"{fmt.percent(worst.separation)}{nbsp}%).")


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
