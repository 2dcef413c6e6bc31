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
            f"{fmt.percent(s.margin)}{nbsp}% margin (worst: mode {worst.mode} with {worst.source}, "
            f"{fmt.percent(worst.separation)}{nbsp}%).")
