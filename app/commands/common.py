"""What every command shares: loading a project, study options from the
command line, JSON output, exit codes."""
from __future__ import annotations

import json
import math
import sys

from core.about import CAUTION
from core.errors import ModelError

EXIT_OK, EXIT_FAIL, EXIT_BAD_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


class InputError(Exception):
    """Bad input found by the command line itself (an option, a path)."""


def load_train(path: str):
    """The SI model of a project file (raises ModelError naming element and field)."""
    from core.project import build_train, load_document
    return build_train(load_document(path))


def finite(v):
    """A float for JSON: the number, or None when it is not finite (JSON has no NaN)."""
    v = float(v)
    return v if math.isfinite(v) else None


def finite_list(a):
    return [finite(v) for v in a]


def _clean(obj):
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return obj


def print_json(obj: dict, stream=None) -> None:
    """One JSON object on stdout; never a NaN or Infinity token.  Indented for a
    terminal, compact when piped (a large train's output stays small)."""
    stream = stream or sys.stdout
    indent = 2 if getattr(stream, "isatty", lambda: False)() else None
    try:
        text = json.dumps(obj, indent=indent, allow_nan=False)
    except ValueError:  # a non-finite number slipped through: write it as null
        text = json.dumps(_clean(obj), indent=indent, allow_nan=False)
    stream.write(text + "\n")


def print_caution() -> None:
    print(CAUTION)


def parse_frequency_option(text: str | None) -> float | None:
    if text is None:
        return None
    from core import units
    value = units.parse(text, units.FREQUENCY, "option", "--max-frequency")
    if value <= 0:
        raise ModelError("must be greater than zero", "option", "--max-frequency")
    return value
