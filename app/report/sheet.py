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
import math
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.units import mm
from reportlab.pdfgen import canvas as pdfcanvas
from reportlab.platypus import (CondPageBreak, KeepInFrame, KeepTogether, Paragraph,
                                SimpleDocTemplate, Spacer, Table, TableStyle)

from core import units as u
from core.about import CAUTION, program_line
from core.errors import ModelError
from core.project import build_train, dump_document

from .. import formatting as fmt
from .. import wording
from . import charts
from .schematic import legend_drawing, schematic_drawings
from .styles import (BOLD, FAIL_FILL, FAIL_INK, FONT, GREY, HEAD_FILL, INK, NEUTRAL_FILL, PASS_FILL,
                     PASS_INK, RULE, ZEBRA, escape, pretty_unit, register_fonts, styles)

PAPERS = {"a4": A4, "letter": LETTER}
MARGIN = 15 * mm
N_SHAPE_PLOTS = 6


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
def num(value: float, digits: int = 4) -> str:
    """A model value to ``digits`` significant digits, trailing zeros dropped, no exponent in the
    usual range (310000, 0.045, 2738)."""
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return "0"
    rounded = float(f"{value:.{digits}g}")
    if 1e-4 <= abs(rounded) < 1e9:
        return np.format_float_positional(rounded, trim="-")
    m, e = f"{value:.{digits - 1}e}".split("e")
    return f"{m}e{int(e)}"


def qty(value_si: float | None, kind, system: str) -> str:
    if value_si is None:
        return "—"
    return num(u.convert(value_si, kind, u.display_unit(kind, system)))


def unit_of(kind, system: str) -> str:
    return pretty_unit(u.display_unit(kind, system))


def fit_frame(drawing, width, frame_h):
    """The drawing itself, or shrunk to a page when it is taller than one (a huge branched train)."""
    if drawing.height <= frame_h * 0.95:
        return drawing
    return KeepInFrame(width, frame_h * 0.95, [drawing], mode="shrink")


def P(text, style="cell") -> Paragraph:
    return Paragraph(text, styles()[style])


def data_table(header: list[str], rows: list[list], widths: list[float], status_col: int | None = None,
               align_right: tuple = ()) -> Table:
    """A table that repeats its header row on every page it spans."""
    st = styles()
    body = [[Paragraph(h, st["cell_bold"]) for h in header]]
    for r in rows:
        body.append([c if not isinstance(c, str) else Paragraph(c, st["cell"]) for c in r])
    t = Table(body, colWidths=widths, repeatRows=1, hAlign="LEFT")
    cmds = [
        ("FONTNAME", (0, 0), (-1, -1), FONT),
        ("FONTSIZE", (0, 0), (-1, -1), 7),
        ("BACKGROUND", (0, 0), (-1, 0), HEAD_FILL),
        ("LINEBELOW", (0, 0), (-1, 0), 0.6, INK),
        ("LINEBELOW", (0, -1), (-1, -1), 0.6, INK),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("TOPPADDING", (0, 0), (-1, -1), 1.6),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.6),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
    ]
    for i in range(1, len(body)):
        if i % 2 == 0:
            cmds.append(("BACKGROUND", (0, i), (-1, i), ZEBRA))
    if status_col is not None:
        for i, r in enumerate(rows, start=1):
            text = r[status_col] if isinstance(r[status_col], str) else ""
            if "FAIL" in text:
                cmds.append(("BACKGROUND", (status_col, i), (status_col, i), FAIL_FILL))
            elif "PASS" in text:
                cmds.append(("BACKGROUND", (status_col, i), (status_col, i), PASS_FILL))
    t.setStyle(TableStyle(cmds))
    for c in align_right:
        for i in range(len(body)):
            cell = body[i][c]
            if isinstance(cell, Paragraph):
                cell.style = cell.style.clone(cell.style.name + "_r", alignment=2)
    return t


def _status(text: str) -> str:
    colour = FAIL_INK if text == "FAIL" else PASS_INK if text == "PASS" else GREY
    return f'<font name="{BOLD}" color="{colour.hexval()}">{text}</font>'


# ----------------------------------------------------------------- sections
def title_block(data: SheetData, width, author, revision, date_text):
    st = styles()
    doc = data.doc
    out = [Paragraph("TORSIONAL VIBRATION REVIEW SHEET", st["kicker"]),
           Paragraph(escape(data.train.title), st["title"])]
    rows = []
    if doc.get("description"):
        rows.append(("Description", escape(doc["description"])))
    rows += [("Revision", escape(revision) if revision else "—"),
             ("Author", escape(author) if author else "—"),
             ("Date", escape(date_text)),
             ("Project file", escape(data.source_name)),
             ("SHA-256", f'<font size="6.8">{data.sha256}</font><br/>'
                         f'<font color="{GREY.hexval()}" size="6.5">{escape(data.hash_note)}</font>')]
    t = Table([[P(f"<b>{k}</b>"), P(v)] for k, v in rows], colWidths=[70, width - 70], hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("VALIGN", (0, 0), (-1, -1), "TOP"),
                           ("LINEABOVE", (0, 0), (-1, 0), 0.8, INK),
                           ("LINEBELOW", (0, -1), (-1, -1), 0.8, INK),
                           ("TOPPADDING", (0, 0), (-1, -1), 1.5), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
                           ("LEFTPADDING", (0, 0), (-1, -1), 2)]))
    out.append(t)
    return out


def verdict_block(data: SheetData, width):
    st = styles()
    s = data.screening
    train = data.train
    out = [Paragraph("Verdict", st["h1"])]
    lines = []
    if s is None:
        head = "NOT SCREENED — the project has no operating data (reference shaft, operating speed, excitations)."
        fill, ink = NEUTRAL_FILL, INK
        lines.append("Only the natural frequencies and mode shapes are reported.")
    else:
        op = train.operating
        head = "Separation: " + verdict_sentence(s)
        fill, ink = (PASS_FILL, PASS_INK) if s.passed else (FAIL_FILL, FAIL_INK)
        rng = (f"{fmt.rpm(op.speed_min)} rpm" if op.speed_min == op.speed_max
               else f"{fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} rpm")
        trip = f"; trip speed {fmt.rpm(op.trip_speed)} rpm" if op.trip_speed else ""
        lines.append(f"<b>Operating range:</b> {escape(op.range_name)}, {rng} of the reference shaft "
                     f"'{escape(op.reference)}'{trip}.")
        lines.append(f"<b>Required separation margin:</b> {fmt.percent(s.margin)}\u00a0% between every natural "
                     f"frequency and every excitation frequency over the operating range.")
        n_el = sum(1 for i in range(len(s.modes)) if s.modes.elastic[i] and s.modes.frequency_hz[i] <= s.cap_hz)
        n_src = len({l.source for l in s.lines})
        lines.append(f"<b>Modes screened:</b> {n_el} elastic modes up to {fmt.hz(s.cap_hz)} Hz against "
                     f"{len(s.lines)} excitation line{'s' if len(s.lines) != 1 else ''} from {n_src} "
                     f"source{'s' if n_src != 1 else ''}.")
    if data.response is not None:
        n_ex = len(data.response_exceedances)
        checked = [p for p in data.response_summary if p.passed is not None]
        if n_ex:
            worst = sorted(data.response_exceedances, key=lambda e: -e.peak / e.permissible)[0]
            lines.append(f"<b>Forced response:</b> <font color='{FAIL_INK.hexval()}'>FAIL</font> — {n_ex} "
                         f"exceedance{'s' if n_ex > 1 else ''} of a permissible vibratory value (worst: "
                         f"{escape(worst.link_id)}, {worst.quantity} at {100 * worst.peak / worst.permissible:.0f}\u00a0% "
                         f"of permissible).")
        elif checked:
            lines.append(f"<b>Forced response:</b> PASS — the peak vibratory torque and stress stay within "
                         f"the permissible values of all {len(checked)} links that give one.")
        else:
            lines.append("<b>Forced response:</b> computed, but no link gives a permissible vibratory "
                         "torque or stress, so nothing was judged.")
        if s is not None and not s.passed and not n_ex and checked:
            lines.append("The separation margin is not met, but the damped forced response stays within the "
                         "permissible values. Machinery standards generally accept such a response analysis "
                         "in place of the margin (from memory); the reviewing engineer decides.")
    elif data.response_note:
        lines.append(f"<b>Forced response:</b> {escape(data.response_note)}")
    body = [[Paragraph(f'<font color="{ink.hexval()}">{escape(head)}</font>', st["verdict"])]]
    body += [[Paragraph(l, st["body"])] for l in lines]
    body.append([Paragraph(f"<i>{escape(CAUTION)}</i>", st["small"])])
    t = Table(body, colWidths=[width], hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("BACKGROUND", (0, 0), (-1, 0), fill),
                           ("BOX", (0, 0), (-1, -1), 0.8, ink),
                           ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
                           ("LEFTPADDING", (0, 0), (-1, -1), 5)]))
    out.append(t)
    return out


def schematic_block(data: SheetData, width, frame_h):
    st = styles()
    out = [Paragraph("Train schematic", st["h1"])]
    for k, dwg in enumerate(schematic_drawings(data.doc, data.train, width)):
        out.append(fit_frame(dwg, width, frame_h))
    out.append(legend_drawing(width))
    return out


def model_block(data: SheetData, width, system: str):
    st = styles()
    train = data.train
    out = [Paragraph(f"Model ({'SI' if system == 'SI' else 'US customary'} units)", st["h1"])]
    any_damp = any(d.damping > 0 for d in train.discs)
    head = ["Disc", "Name", f"Inertia ({unit_of(u.INERTIA, system)})"]
    w = [0.22, 0.5, 0.28]
    if any_damp:
        head.append(f"Damping to ground ({unit_of(u.DAMPING, system)})")
        w = [0.2, 0.4, 0.2, 0.2]
    rows = []
    for d in train.discs:
        r = [escape(d.id), escape(d.name), qty(d.inertia, u.INERTIA, system)]
        if any_damp:
            r.append(qty(d.damping, u.DAMPING, system) if d.damping else "—")
        rows.append(r)
    right = tuple(range(2, len(head)))
    if len(rows) > 24:
        # a long train: two discs side by side, read across then down, to halve the pages
        n = len(head)
        rows = [rows[k] + (rows[k + 1] if k + 1 < len(rows) else [""] * n) for k in range(0, len(rows), 2)]
        head, w = head * 2, [f / 2 for f in w] * 2
        right = right + tuple(c + n for c in right)
        table = data_table(head, rows, [f * width for f in w], align_right=right)
        table.setStyle(TableStyle([("LINEBEFORE", (n, 0), (n, -1), 0.8, INK), ("LEFTPADDING", (n, 0), (n, -1), 8),
                                   ("RIGHTPADDING", (n - 1, 0), (n - 1, -1), 8)]))
        out.append(table)
    else:
        out.append(data_table(head, rows, [f * width for f in w], align_right=right))
    out.append(Spacer(1, 6))
    L = unit_of(u.LENGTH, system)
    head = ["Link", "Kind", "From / to", f"Stiffness ({unit_of(u.STIFFNESS, system)})",
            f"Geometry: length × outer dia. / bore ({L})", "Material", "Mass model", "Speed ratio",
            "Damping, limits"]
    w = [0.14, 0.075, 0.13, 0.10, 0.15, 0.09, 0.09, 0.06, 0.165]
    rows = []
    kinds = {"shaft": "shaft", "coupling": "coupling", "gear_mesh": "gear mesh"}
    for l in train.links:
        if l.is_rigid:
            k_text = "rigid"
        else:
            k_text = qty(l.total_stiffness, u.STIFFNESS, system)
            if l.stiffness is None:
                k_text += '<br/><font size="6" color="#666666">from geometry</font>'
        geo = "<br/>".join(
            f"{num(u.convert(s.length, u.LENGTH, u.display_unit(u.LENGTH, system)))} × "
            f"{num(u.convert(s.outer_diameter, u.LENGTH, u.display_unit(u.LENGTH, system)))}"
            + (f" / {num(u.convert(s.inner_diameter, u.LENGTH, u.display_unit(u.LENGTH, system)))}"
               if s.inner_diameter > 0 else "")
            for s in l.segments) or "—"
        extras = []
        if l.damping:
            extras.append(f"c = {qty(l.damping, u.DAMPING, system)} {unit_of(u.DAMPING, system)}")
        if l.loss_factor:
            extras.append(f"loss factor eta = {l.loss_factor:.3g}")
        if l.stress_concentration != 1.0:
            extras.append(f"SCF {l.stress_concentration:g}")
        if l.permissible_torque is not None:
            extras.append(f"perm. torque {qty(l.permissible_torque, u.TORQUE, system)} "
                          f"{unit_of(u.TORQUE, system)}")
        if l.permissible_stress is not None:
            extras.append(f"perm. stress {qty(l.permissible_stress, u.STRESS, system)} "
                          f"{unit_of(u.STRESS, system)}")
        rows.append([escape(l.id), kinds[l.kind], f"{escape(l.from_id)}<br/>{escape(l.to_id)}", k_text, geo,
                     escape(l.material.name) if l.material else "—", l.mass if l.kind == "shaft" else "—",
                     f"{l.speed_ratio:g}" if l.kind == "gear_mesh" else "—", "<br/>".join(extras) or "—"])
    out.append(data_table(head, rows, [f * width for f in w], align_right=(3,)))
    mats = {l.material.name: l.material for l in train.links if l.material}
    if mats:
        txt = "; ".join(f"{escape(m.name)}: G = {qty(m.shear_modulus, u.MODULUS, system)} "
                        f"{unit_of(u.MODULUS, system)}, density {qty(m.density, u.DENSITY, system)} "
                        f"{unit_of(u.DENSITY, system)}" for m in mats.values())
        out.append(Paragraph(f"Materials — {txt}.", st["note"]))
    out.append(Paragraph("Speed ratio = speed of the 'to' disc / speed of the 'from' disc. Stiffness and "
                         "inertia are as given for each element on its own shaft (not referred).", st["note"]))
    return out


def frequency_block(data: SheetData, width):
    st = styles()
    m = data.modes
    s = data.screening
    out = [Paragraph("Natural frequencies", st["h1"])]
    head = ["Mode", "Hz", "cpm", "Largest strain energy (link, share)", "Largest kinetic energy (disc, share)"]
    if s is not None:
        head.append("Screened")
    rows = []
    for i in range(len(m)):
        if m.rigid_body[i]:
            dom = "rigid-body mode"
        else:
            li = m.dominant_link(i)
            dom = fmt.share(escape(li), m.strain_share[i].max(), "\u00a0") if li else "—"
        di = m.dominant_disc(i)
        r = [str(int(m.number[i])), fmt.hz(m.frequency_hz[i]), fmt.cpm(m.frequency_hz[i]), dom,
             fmt.share(escape(di), m.kinetic_share[i].max(), "\u00a0")]
        if s is not None:
            r.append("—" if m.rigid_body[i] else ("yes" if m.frequency_hz[i] <= s.cap_hz else "above cap"))
        rows.append(r)
    w = [0.07, 0.11, 0.1, 0.3, 0.3] + ([0.12] if s is not None else [])
    tot = sum(w)
    out.append(data_table(head, rows, [f / tot * width for f in w], align_right=(0, 1, 2)))
    req = escape(m.requested)
    notes = [f"{req[:1].upper() + req[1:]}; dominant element by share of the mode's strain energy."]
    notes += [escape(n) for n in m.notes]
    out.append(Paragraph(" ".join(notes), st["note"]))
    return out


def mode_shape_block(data: SheetData, width):
    st = styles()
    m = data.modes
    from ..schematic_layout import place_document
    pl = place_document(data.doc)
    elastic = [i for i in range(len(m)) if m.elastic[i]][:N_SHAPE_PLOTS]
    if not elastic:
        return []
    per_row = 3
    cw = width / per_row
    cells = [charts.mode_shape_drawing(m, i, pl, cw - 4, 126, data.train.links) for i in elastic]
    grid = [cells[k:k + per_row] for k in range(0, len(cells), per_row)]
    grid[-1] += [""] * (per_row - len(grid[-1]))
    t = Table(grid, colWidths=[cw] * per_row, hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                           ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2)]))
    note = ("Twist angle of each disc, normalised to the largest (+1), against its column in the schematic; "
            "a branch is drawn in its own colour, a geared branch in the angle of its own shaft. "
            "Under each title: the link with the largest share of the mode's strain energy. Angles are shown "
            "at the discs; the inside of a shaft with distributed mass is not drawn.")
    return [KeepTogether([Paragraph(f"Mode shapes (first {len(elastic)} elastic modes)", st["h1"]), t,
                          Paragraph(note, st["note"])])]


def campbell_block(data: SheetData, width, frame_h):
    st = styles()
    s = data.screening
    if s is None:
        return []
    # a detail of the lowest modes when the full chart squeezes them together
    nat = [float(s.modes.frequency_hz[i]) for i in range(len(s.modes))
           if s.modes.elastic[i] and s.modes.frequency_hz[i] <= s.cap_hz]
    y_detail = nat[min(2, len(nat) - 1)] * 1.6 if nat else 0.0
    detail = (len(nat) >= 2 and s.cap_hz > 4 * y_detail
              and sum(c.frequency_hz <= y_detail for c in s.coincidences) >= 2)
    dwg = charts.campbell_drawing(s, width, plot_height=frame_h * (0.3 if detail else 0.44))
    note = ("Excitation lines are labelled with their order at the edge where they leave the chart; "
            "the margin band around each natural frequency holds the excitation frequencies f_e with "
            f"|f_n - f_e| / f_e below {fmt.percent(s.margin)}\u00a0%.")
    out = [KeepTogether([Paragraph("Interference (Campbell) diagram", st["h1"]),
                         fit_frame(dwg, width, frame_h),
                         Paragraph(note, st["note"])])]
    if detail:
        dwg2 = charts.campbell_drawing(s, width, plot_height=frame_h * 0.26, y_max_hz=y_detail,
                                       title=f"Detail up to {y_detail:.0f} Hz (key as above)",
                                       with_legend=False)
        out.append(fit_frame(dwg2, width, frame_h))
    return out


def coincidence_block(data: SheetData, width):
    st = styles()
    s = data.screening
    if s is None:
        return []
    out = [Paragraph("Coincidences, worst first", st["h1"])]
    if not s.coincidences:
        out.append(Paragraph(f"No excitation comes within {fmt.percent(2 * s.margin)}\u00a0% of a natural "
                             "frequency.", st["body"]))
        return out
    head = ["Mode", "Natural Hz", "Excitation source", "Order", "At disc", "Crossing rpm", "Margin %",
            "Band inside the margin (rpm)", "Status"]
    rows = []
    for c in s.coincidences:
        if c.band is None:
            band = "—"
        elif c.line.fixed_hz is not None:
            band = "all speeds"
        else:
            band = f"{fmt.rpm(c.band[0])}–{fmt.rpm(c.band[1])}"
        rows.append([str(c.mode), fmt.hz(c.frequency_hz), escape(c.source), fmt.order(c.order),
                     escape(c.line.at) if c.line.at else "—", fmt.rpm(c.crossing_speed),
                     fmt.percent(c.separation), band, _status(c.status.upper())])
    w = [0.06, 0.09, 0.27, 0.06, 0.11, 0.09, 0.08, 0.15, 0.07]
    out.append(data_table(head, rows, [f * width for f in w], status_col=8, align_right=(0, 1, 3, 5, 6)))
    out.append(Paragraph(
        f"Listed: every pair with a smallest separation below twice the required margin "
        f"({fmt.percent(2 * s.margin)}\u00a0%). Margin = smallest |f_n - f_e| / f_e over the operating range "
        "(0 for a crossing inside it). Crossing rpm: reference speed where the excitation meets the natural "
        "frequency, also when outside the range.", st["note"]))
    return out


def response_block(data: SheetData, width, system: str):
    st = styles()
    if data.response is None:
        if data.response_note:
            return [Paragraph("Forced response", st["h1"]), Paragraph(escape(data.response_note), st["body"])]
        return []
    r = data.response
    out = [Paragraph("Forced response: peak vibratory torque and stress", st["h1"])]
    tu, su = unit_of(u.TORQUE, system), unit_of(u.STRESS, system)
    head = ["Link", "Kind", f"Peak torque ({tu})", "at rpm", f"Permissible ({tu})", f"Peak stress ({su})",
            "at rpm", f"Permissible ({su})", "Status"]
    rows = []
    for p in data.response_summary:
        status = "—" if p.passed is None else ("PASS" if p.passed else "FAIL")
        stress_ok = p.peak_stress is not None and math.isfinite(p.peak_stress)
        rows.append([escape(p.link_id), escape(str(p.kind)).replace("_", " "),
                     qty(p.peak_torque, u.TORQUE, system), fmt.rpm(p.speed_at_peak_torque),
                     qty(p.permissible_torque, u.TORQUE, system),
                     qty(p.peak_stress, u.STRESS, system) if stress_ok else "—",
                     fmt.rpm(p.speed_at_peak_stress) if stress_ok else "—",
                     qty(p.permissible_stress, u.STRESS, system),
                     _status(status) if status != "—" else "no limit"])
    w = [0.17, 0.09, 0.11, 0.08, 0.11, 0.11, 0.08, 0.11, 0.08]
    out.append(data_table(head, rows, [f * width for f in w], status_col=8, align_right=(2, 3, 4, 5, 6, 7)))
    out.append(Paragraph(
        "Peak over the computed speed range of the combined amplitude (sum of the order amplitudes, "
        "conservative); stress = torque × outer radius / polar moment × stress concentration factor, for "
        f"shafts with geometry. Status only where a permissible value is given. Speeds computed: "
        f"{fmt.rpm(float(np.min(r.speed)))}–{fmt.rpm(float(np.max(r.speed)))} rpm of the reference shaft.",
        st["note"]))
    # the plot: the links closest to their limit, else the largest torques
    speed_rpm = np.asarray(r.speed) * 60.0 / fmt.TWO_PI
    ids = list(r.link_ids)
    tq = np.asarray(r.link_torque)
    scale = u.convert(1.0, u.TORQUE, u.display_unit(u.TORQUE, system))

    def utilisation(p):
        if p.permissible_torque:
            return p.peak_torque / p.permissible_torque
        return -1.0
    ranked = sorted(data.response_summary, key=lambda p: (utilisation(p), p.peak_torque or 0.0), reverse=True)
    chosen = [p for p in ranked if p.link_id in ids][:4]
    curves = [(p.link_id, tq[ids.index(p.link_id)] * scale,
               None if p.permissible_torque is None else p.permissible_torque * scale) for p in chosen]
    if curves and len(speed_rpm) > 1:
        op = data.train.operating
        cw = width / 2
        cells = [charts.response_drawing(
            speed_rpm, v, perm, cw - 4, 135, (fmt.rad_s_to_rpm(op.speed_min), fmt.rad_s_to_rpm(op.speed_max)),
            title=f"{lid}: peak {num(float(np.nanmax(v)))} {tu}", y_title=f"torque amplitude ({tu})",
            x_title="reference speed (rpm)", colour=charts.PALETTE[k % len(charts.PALETTE)])
            for k, (lid, v, perm) in enumerate(curves)]
        grid = [cells[k:k + 2] for k in range(0, len(cells), 2)]
        grid[-1] += [""] * (2 - len(grid[-1]))
        t = Table(grid, colWidths=[cw, cw], hAlign="LEFT")
        t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0)]))
        out.append(KeepTogether([t, Paragraph(
            f"Combined vibratory torque amplitude against the speed of the reference shaft '{escape(op.reference)}', "
            "for the links nearest their permissible value (else the largest); operating range shaded, "
            "permissible value dashed.", st["note"])]))
    return out


def method_block(data: SheetData):
    st = styles()
    train = data.train
    masses = {m: [l.id for l in train.links if l.kind == "shaft" and l.mass == m]
              for m in ("none", "lumped", "distributed")}
    mass_txt = []
    if masses["distributed"]:
        mass_txt.append(f"distributed (exact continuous shaft): {', '.join(masses['distributed'])}")
    if masses["lumped"]:
        mass_txt.append(f"lumped (half of the shaft's own inertia added to each end disc): "
                        f"{', '.join(masses['lumped'])}")
    if masses["none"]:
        mass_txt.append(f"massless spring: {len(masses['none'])} shaft{'s' if len(masses['none']) != 1 else ''}")
    paras = [
        "<b>Natural frequencies.</b> Holzer transfer matrices per element: springs for couplings, meshes and "
        "massless shafts, the exact field matrix of a uniform shaft with distributed inertia (cos/sin of "
        "omega L / c) where the shaft's mass is modelled, so no subdivision is needed. Geared branches are "
        "referred to one shaft by the square of the speed ratio. The count of natural frequencies below any "
        "trial frequency comes from the Wittrick–Williams algorithm (W. H. Wittrick and F. W. Williams, "
        "Q. J. Mech. Appl. Math. 24 (1971) 263–284), so no mode is missed or counted twice; each root is "
        "then polished to machine precision.",
        "<b>Mass models used.</b> " + escape("; ".join(mass_txt) if mass_txt else "no shafts") + ".",
    ]
    s = data.screening
    if s is not None:
        paras.append(
            "<b>Separation.</b> For a natural frequency f_n and an excitation f_e = order × speed of its "
            "source shaft (or a fixed frequency), separation = |f_n - f_e| / f_e, the smallest over the "
            f"operating range; a pair fails below the required {fmt.percent(s.margin)}\u00a0%. The 10 % default "
            "follows the API machinery standards for torsional analysis (from memory). Natural frequencies "
            f"are screened up to {fmt.hz(s.cap_hz)} Hz: the highest excitation frequency in range plus twice "
            "the margin and 25 % headroom (common practice, no source).")
    if data.response is not None:
        paras.append(
            "<b>Forced response.</b> Steady-state harmonic response of the damped train, solved directly "
            "with the complex dynamic stiffness at every speed and order (no modal truncation); viscous "
            "damping to ground and between discs, hysteretic loss factors as complex stiffness k (1 + i eta).")
    paras.append(
        "<b>Not modelled.</b> Damping does not enter the natural frequencies (undamped eigenvalues). Couplings "
        "and meshes are linear springs at the stiffness given: the load, temperature and frequency dependence "
        "of elastomeric couplings, gear backlash and other nonlinearities are not represented. Transient "
        "events (motor start-up, short circuit, run-through of a resonance during acceleration) are not "
        "analysed. Lateral and axial coupling, foundations and electrical stiffness of motors are outside "
        "the model.")
    return [KeepTogether([Paragraph("Method and assumptions", st["h1"])] +
                         [Paragraph(p, st["body"]) for p in paras])]


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
    width = doc.width
    frame_h = doc.height
    date_text = date_text or _dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z")
    story = []
    story += title_block(data, width, author, revision, date_text)
    story += verdict_block(data, width)
    story += schematic_block(data, width, frame_h)
    story += model_block(data, width, unit_system)
    story.append(CondPageBreak(120))
    story += frequency_block(data, width)
    story += mode_shape_block(data, width)
    story.append(CondPageBreak(200))
    story += campbell_block(data, width, frame_h)
    story += coincidence_block(data, width)
    story += response_block(data, width, unit_system)
    story.append(CondPageBreak(140))
    story += method_block(data)
    header = f"Twistwise review sheet · {data.train.title}" + (f" · revision {revision}" if revision else "")
    doc.build(story, canvasmaker=_canvas_class(header))
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
