"""The review sheet: one PDF that states what was modelled, what was found and
whether the train clears its margins (issue 5, forced response: issue 6).

Built with reportlab's platypus: text stays selectable, plots are vector
drawings, long tables repeat their header on each page, the Vera fonts are
embedded, and every page carries the screening caution with "page N of M".
The file is written to a temporary file beside the target and then moved into
place, so a failed run never leaves a partial sheet.
"""
from __future__ import annotations

import datetime as _dt
import hashlib
import json
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.units import mm
from reportlab.pdfgen import canvas as pdfcanvas
from reportlab import rl_config
from reportlab.platypus import Paragraph, SimpleDocTemplate

from core import units as u
from core.about import CAUTION, program_line
from core.errors import ModelError
from core.project import build_train, dump_document

from .. import wording
from .sections import SECTIONS, Ctx, Units, build_story, clip, num
from .styles import FONT, GREY, INK, RULE, escape, register_fonts, styles

PAPERS = {"a4": A4, "letter": LETTER}
MARGIN = 15 * mm
__all__ = ["SheetData", "SECTIONS", "compute", "render", "write_review_sheet", "write_sheet", "num", "qty",
           "verdict_sentence"]


# ----------------------------------------------------------------- results
@dataclass
class SheetData:
    """The study the sheet shows, with the document it came from and its hash."""

    doc: dict
    study: object  # core.study.Study
    source_name: str = ""
    sha256: str = ""
    hash_note: str = ""

    @property
    def train(self):
        return self.study.train

    @property
    def modes(self):
        return self.study.modes

    @property
    def screening(self):
        return self.study.screening

    @property
    def response(self):
        return self.study.response

    @property
    def response_summary(self) -> list:
        return list(self.study.response_peaks)

    @property
    def response_exceedances(self) -> list:
        return list(self.study.exceedances)

    @property
    def response_note(self) -> str | None:
        return None

    @property
    def response_failed(self) -> bool:
        return self.study.response_failed

    @property
    def passed(self) -> bool:
        return self.study.passed


def verdict_sentence(s) -> str:
    """The verdict in words, exactly as ``twistwise check`` words it."""
    return wording.separation_verdict(s, nbsp="\u00a0")


def project_hash(doc: dict, project_path) -> tuple[str, str, str]:
    """(file name, SHA-256 hex, note) for the title block.

    The hash is of the saved file's bytes when the document is what that file
    holds; otherwise (unsaved project or unsaved changes) of the document as it
    would be saved, and the note says so.
    """
    text = dump_document(doc).encode("utf-8")
    if project_path is None:
        return ("(not saved)", hashlib.sha256(text).hexdigest(),
                "unsaved project: SHA-256 of the document as it would be saved")
    p = Path(project_path)
    try:
        raw = p.read_bytes()
        same = json.loads(raw.decode("utf-8")) == doc
    except (OSError, UnicodeDecodeError, ValueError):
        raw, same = b"", False
    if same:
        return p.name, hashlib.sha256(raw).hexdigest(), "SHA-256 of the project file as saved"
    return (p.name, hashlib.sha256(text).hexdigest(),
            "the project has unsaved changes: SHA-256 of the document as it would be saved")


def compute(doc: dict, project_path=None) -> SheetData:
    """Validate the document and run the study the sheet shows (raises ModelError)."""
    from core.study import run_study
    study = run_study(build_train(doc))
    for error in (study.screening_error, study.response_error):
        if error is not None:
            raise error
    name, digest, note = project_hash(doc, project_path)
    return SheetData(doc, study, source_name=name, sha256=digest, hash_note=note)


# ----------------------------------------------------------------- helpers
def qty(value_si: float | None, kind, system: str) -> str:
    """One value in the display unit of ``system`` (tables use :meth:`Units.column` instead)."""
    return Units(system).value(value_si, kind)


# ----------------------------------------------------------------- page furniture
class _NumberedCanvas(pdfcanvas.Canvas):
    """Defers page output so that each footer can say 'page N of M'."""

    header_text = ""

    def __init__(self, *args, **kw):
        register_fonts()
        # else every page opens with the non-embedded Helvetica (the template passes None)
        kw["initialFontName"] = kw.get("initialFontName") or FONT
        kw["initialFontSize"] = kw.get("initialFontSize") or 8.5
        super().__init__(*args, **kw)
        self._pages = []

    def showPage(self):
        self._pages.append(dict(self.__dict__))
        self._startPage()

    def save(self):
        total = len(self._pages)
        for state in self._pages:
            self.__dict__.update(state)
            self._furniture(total)
            super().showPage()
        super().save()

    def _furniture(self, total: int):
        w, h = self._pagesize
        self.saveState()
        self.setStrokeColor(RULE)
        self.setLineWidth(0.5)
        # running header
        self.setFont(FONT, 6.5)
        self.setFillColor(GREY)
        self.drawString(MARGIN, h - MARGIN + 8, self.header_text)
        self.line(MARGIN, h - MARGIN + 5, w - MARGIN, h - MARGIN + 5)
        # footer: the caution on every page, with the page count
        self.line(MARGIN, MARGIN + 2, w - MARGIN, MARGIN + 2)
        para = Paragraph(f"<b>{escape(CAUTION)}</b>", styles()["note"])
        pw, ph = para.wrap(w - 2 * MARGIN - 70, MARGIN)
        para.drawOn(self, MARGIN, MARGIN - 2 - ph)
        self.setFont(FONT, 7)
        self.setFillColor(INK)
        self.drawRightString(w - MARGIN, MARGIN - 10, f"page {self._pageNumber} of {total}")
        self.restoreState()


def _canvas_class(header: str):
    return type("SheetCanvas", (_NumberedCanvas,), {"header_text": header})


# ----------------------------------------------------------------- entry points
def render(data: SheetData, out_path, paper: str = "a4", author: str = "", revision: str = "",
           unit_system: str = "SI", date_text: str | None = None) -> int:
    """Write the sheet for computed ``data`` to ``out_path``; returns the page count."""
    register_fonts()
    pagesize = PAPERS[paper]
    doc = SimpleDocTemplate(str(out_path), pagesize=pagesize, leftMargin=MARGIN, rightMargin=MARGIN,
                            topMargin=MARGIN + 4, bottomMargin=MARGIN + 10,
                            title=f"Review sheet — {data.train.title}", author=author or "",
                            subject="Torsional vibration screening", creator=program_line())
    date_text = date_text or _dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z")
    ctx = Ctx(data, doc.width, doc.height, Units(unit_system), author=author, revision=revision,
              date_text=date_text)
    story = build_story(ctx)
    header = (f"{program_line()} review sheet · {clip(data.train.title, 120)}"
              + (f" · revision {clip(revision, 40)}" if revision else ""))
    useA85 = rl_config.useA85
    rl_config.useA85 = 0  # binary page streams: reportlab's ASCII85 runs in Python and costs a fifth of a sheet
    try:
        doc.build(story, canvasmaker=_canvas_class(header))
    finally:
        rl_config.useA85 = useA85
    return doc.page if hasattr(doc, "page") else 0


def _check_options(paper, unit_system):
    if paper not in PAPERS:
        raise ModelError(f"paper must be one of {', '.join(PAPERS)}, got {paper!r}", "option", "--paper")
    if unit_system not in u.UNIT_SYSTEMS:
        raise ModelError(f"units must be one of {', '.join(u.UNIT_SYSTEMS)}, got {unit_system!r}",
                         "option", "--units")


def write_review_sheet(doc: dict, project_path, out_pdf, paper: str = "a4", author: str = "",
                       revision: str = "", unit_system: str = "SI"):
    """Compute and write the review sheet of the project document ``doc``.

    ``project_path``: the file the document came from (None when unsaved; the
    sheet then hashes the serialized document and says so).  Returns the
    :class:`~core.screening.Screening` (None when the project has no operating
    data).  Raises :class:`~core.errors.ModelError` for bad input; nothing is
    written then, and an existing sheet at ``out_pdf`` is left as it was.
    """
    return write_sheet(doc, project_path, out_pdf, paper, author, revision, unit_system).screening


def write_sheet(doc: dict, project_path, out_pdf, paper: str = "a4", author: str = "",
                revision: str = "", unit_system: str = "SI") -> SheetData:
    """As :func:`write_review_sheet`, returning everything computed for the sheet."""
    _check_options(paper, unit_system)
    out = Path(out_pdf)
    if project_path is not None and out.resolve() == Path(project_path).resolve():
        raise ModelError("the sheet would overwrite the project file; choose another name", "option",
                         "--output")
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise ModelError(f"folder '{folder}' does not exist", "option", "--output")
    data = compute(doc, project_path)
    fd, tmp = tempfile.mkstemp(prefix=out.name + ".", suffix=".tmp", dir=folder)
    os.close(fd)
    try:
        render(data, tmp, paper, author, revision, unit_system)
        os.replace(tmp, out)
    except OSError as exc:
        raise ModelError(f"cannot write the sheet ({exc.strerror or exc})", "option", "--output") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return data
