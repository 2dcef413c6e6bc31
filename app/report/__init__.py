"""PDF review sheet (issue 5): ``twistwise report`` and the desktop program's File menu.

Exit codes of ``twistwise report``: 0 sheet written and the verdict passes (or
the project has no operating data, so nothing was screened); 1 sheet written
and the verdict fails (a coincidence inside the margin, as ``twistwise check``,
or a forced-response exceedance); 2 bad input: one line on stderr naming the
element and field, and no file written.
"""
from __future__ import annotations

import sys

from core.project import load_document

from .sheet import write_review_sheet, write_sheet

__all__ = ["cmd_report", "write_review_sheet"]


def cmd_report(args) -> int:
    """``twistwise report FILE -o SHEET.pdf [--paper] [--author] [--revision] [--units]``."""
    doc = load_document(args.file)
    data = write_sheet(doc, args.file, args.output, paper=args.paper, author=args.author,
                       revision=args.revision, unit_system=args.units)
    screening = data.screening
    if screening is None:
        verdict = "not screened (no operating data)"
    else:
        verdict = screening.verdict.upper()
    if data.response_exceedances:
        verdict += f"; forced response: {len(data.response_exceedances)} exceedance(s)"
    print(f"Review sheet written to {args.output} — verdict {verdict}", file=sys.stdout)
    return 0 if data.passed else 1
