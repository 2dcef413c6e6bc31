"""``twistwise report FILE -o SHEET.pdf [--paper] [--author] [--revision] [--units]``.

The line printed names the sheet's headline verdict (:func:`app.wording.headline`)
and, where it differs, the separation screening.  Exit codes follow
``Study.passed``: 0 sheet written and the separation and every limit pass (or the
project has no operating data, so nothing was screened); 1 sheet written and a
coincidence lies inside the margin (as ``twistwise check``), a forced-response
value or an acceptance check is exceeded; 2 bad input: one line on stderr naming the element and field, and
no file written.
"""
from __future__ import annotations


def add_parser(sub):
    rp = sub.add_parser("report", help="PDF review sheet")
    rp.add_argument("file")
    rp.add_argument("-o", "--output", required=True, metavar="SHEET.pdf")
    rp.add_argument("--paper", choices=("a4", "letter"), default="a4")
    rp.add_argument("--author", default="")
    rp.add_argument("--revision", default="")
    rp.add_argument("--units", choices=("SI", "US"), default="SI", help="unit system of the sheet")
    return rp


def run(args) -> int:
    from core.project import load_document

    from ..report import write_sheet
    from .common import EXIT_FAIL, EXIT_OK
    doc = load_document(args.file)
    data = write_sheet(doc, args.file, args.output, paper=args.paper, author=args.author,
                       revision=args.revision, unit_system=args.units)
    from .. import wording
    screening = data.screening
    if screening is None:
        verdict = "not screened (no operating data)"
    else:
        head, _ = wording.headline(data.study)
        verdict = head.split(" — ", 1)[0]
        if head != wording.separation_verdict(screening):
            verdict += f" (separation screening {screening.verdict.upper()})"
    if data.study.transients is not None and data.study.transients.passed is False:
        verdict += "; a transient event fails its limits"
    print(f"Review sheet written to {args.output} — verdict {verdict}")
    return EXIT_OK if data.passed else EXIT_FAIL
