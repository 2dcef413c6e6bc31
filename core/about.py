"""The program's name, version and the screening caution: one place that the
command line, the desktop program and the review sheet all import."""
from __future__ import annotations

PROGRAM = "Twistwise"
VERSION = "0.2.0"
CAUTION = ("Screening only: these results do not replace review by a licensed engineer "
           "against the applicable machinery standards and local codes.")


def program_line() -> str:
    """'Twistwise 0.2.0' — printed on sheets, exports and `--version`."""
    return f"{PROGRAM} {VERSION}"
