"""``twistwise screenshot FILE -o PNG [--size WxH] [--units SI|US] [--tab VIEW]``: the
main window with the project's results, rendered offscreen (README pictures, visual checks)."""
from __future__ import annotations

import os
import re
from pathlib import Path

from .common import InputError


def add_parser(sub):
    sc = sub.add_parser("screenshot", help="render the main window offscreen to a PNG")
    sc.add_argument("file")
    sc.add_argument("-o", "--output", required=True, metavar="PNG")
    sc.add_argument("--size", default="1600x1000", metavar="WxH")
    sc.add_argument("--units", choices=("SI", "US"), default="SI", help="unit system shown")
    sc.add_argument("--tab", choices=tuple(TABS), default="modes",
                    help="results view shown (default: modes)")
    return sc


# the --tab words and the results panel's keys for its views
TABS = {"modes": "modes", "interference": "campbell", "response": "response",
        "transients": "transients", "design": "design_options"}


def parse_size(text: str) -> tuple[int, int]:
    m = re.fullmatch(r"\s*(\d+)\s*[xX×]\s*(\d+)\s*", text or "")
    if not m:
        raise InputError(f"--size must be WIDTHxHEIGHT in pixels, e.g. 1600x1000, got {text!r}")
    w, h = int(m.group(1)), int(m.group(2))
    if not (320 <= w <= 8000 and 240 <= h <= 8000):
        raise InputError(f"--size {w}x{h} is outside 320x240 ... 8000x8000")
    return w, h


def run(args) -> int:
    from core.project import build_train, load_document
    size = parse_size(args.size)
    out = Path(args.output)
    if out.parent and not out.parent.exists():
        raise InputError(f"output folder {out.parent} does not exist")
    doc = load_document(args.file)  # ProjectFileError -> one line, exit 2 (app.cli)
    build_train(doc)  # a model that does not build is bad input here too
    if not os.environ.get("DISPLAY") and not os.environ.get("WAYLAND_DISPLAY"):
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from ..gui.main_window import render_window
    tab = TABS[getattr(args, "tab", None) or "modes"]
    image = render_window(doc, args.file, size, getattr(args, "units", "SI") or "SI",
                          results_tab=None if tab == "modes" else tab)
    if image.isNull() or not image.save(str(out), "PNG"):
        raise InputError(f"could not write {out}")
    print(f"wrote {out} ({size[0]}x{size[1]})")
    return 0
