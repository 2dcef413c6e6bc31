"""Review sheet: the headline verdict and the acceptance section (issue 12, items 2 and 10).

The PDF is read back with pypdf (an independent reader).  Values the sheet states are
checked against hand-worked closed forms where the sheet states a formula (UR M68's size
factor, the propeller law), and against the study for what the study computed (the sheet
must print what the study holds, not compute its own).
"""
from __future__ import annotations

import copy
import re
from pathlib import Path

import numpy as np
import pytest
from pypdf import PdfReader
from reportlab.graphics.shapes import Line, Rect

from app import formatting as fmt
from app import wording
from app.cli import main
from app.report import acceptance as acc_sheet
from app.report import campbell, charts, write_sheet
from app.report.base import Ctx, Units
from app.report.sheet import compute
from app.report.tables import LongTable
from core.project import load_document

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
SAMPLE = {p.stem: p for p in SAMPLES}


def squash(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


def sheet_text(path) -> str:
    return squash("\n".join(p.extract_text() or "" for p in PdfReader(str(path)).pages))


@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    """Every sample's sheet (SI) with its SheetData, written once for the module."""
    folder = tmp_path_factory.mktemp("acc_sheets")
    out = {}
    for p in SAMPLES:
        pdf = folder / f"{p.stem}.pdf"
        data = write_sheet(load_document(p), p, pdf)
        out[p.stem] = (data, sheet_text(pdf))
    return out


def ctx_for(data, system="SI") -> Ctx:
    return Ctx(data, 515.0, 760.0, Units(system))


def long_tables(flowables) -> list[LongTable]:
    return [f for f in flowables if isinstance(f, LongTable)]


# ----------------------------------------------------------------- item 2: the headline
@pytest.mark.parametrize("stem", sorted(SAMPLE))
def test_headline_is_the_acceptance_argument_beside_the_separation_verdict(stem, sheets):
    data, text = sheets[stem]
    head, _ = wording.headline(data.study, nbsp="\u00a0")
    assert squash(head) in text
    if data.screening is not None:
        sep = squash(wording.separation_verdict(data.screening, nbsp="\u00a0"))
        word, rest = sep.split(" — ", 1)
        assert f"Separation screening: {word} — {rest}" in text
        # the headline comes first, the screening result beside it
        assert text.index(squash(head)) < text.index("Separation screening:")


def test_report_exit_code_follows_the_study_and_names_both_verdicts(tmp_path, capsys):
    # the propulsion line: accepted on the forced response (headline PASS) although separation fails:
    # the sheet's verdict is the acceptance argument, and the exit code follows it (issue 12 item 2)
    out = tmp_path / "p.pdf"
    code = main(["report", str(SAMPLE["propulsion_line"]), "-o", str(out)])
    printed = capsys.readouterr().out
    data = compute(load_document(SAMPLE["propulsion_line"]), SAMPLE["propulsion_line"])
    assert code == (0 if data.study.passed else 1) == 0
    assert "verdict PASS (separation screening FAIL)" in printed
    code = main(["report", str(SAMPLE["pump_set"]), "-o", str(out)])
    assert code == 0 and "verdict PASS" in capsys.readouterr().out


# ----------------------------------------------------------------- item 10: acceptance tables
def test_checks_per_load_case_worst_first_with_bars(sheets):
    data, text = sheets["propulsion_line"]
    acc = data.study.acceptance
    flow = acc_sheet._checks(ctx_for(data), acc)
    tables = long_tables(flow)
    assert len(tables) == len(acc.load_cases) == 2
    for lc, t in zip(acc.load_cases, tables):
        mine = [c for c in acc.checks if c.load_case == lc.name]
        rows = t.text_rows()
        assert len(rows) == len(mine)
        use = [float(r[5]) for r in rows]
        assert use == sorted(use, reverse=True)  # worst first
        # every row carries a bar of its utilisation
        bars = [v for k in range(len(rows)) for cmd, col, v in t._s["cells"][k] if cmd == "BAR"]
        assert len(bars) == len(rows)
        assert [round(100 * b[0], 1) for b in bars] == use
        assert f"Checks, load case '{lc.name}': {len(mine)} checks" in text
    for c in acc.checks:
        assert fmt.percent(c.utilisation) in text
    for code in {c.criterion for c in acc.checks}:
        assert wording.criterion(code) in text


def test_failing_checks_are_marked(sheets):
    data, text = sheets["engine_genset"]
    acc = data.study.acceptance
    assert acc.failures
    t = long_tables(acc_sheet._checks(ctx_for(data), acc))[0]
    rows = t.text_rows()
    for k, r in enumerate(rows):
        styles_ = t._s["cells"][k]
        if r[-1] == "FAIL":
            assert ("BACKGROUND", 0, acc_sheet.FAIL_FILL) in styles_
            assert any(cmd == "BAR" and v[1] == acc_sheet.BAR_FAIL for cmd, col, v in styles_)
    assert sum(r[-1] == "FAIL" for r in rows) == len(acc.failures)
    worst = acc.failures[0]
    assert f"{fmt.percent(worst.utilisation)}\u00a0%" in text or f"{fmt.percent(worst.utilisation)} %" in text


def test_the_inputs_the_checks_rest_on(sheets):
    data, text = sheets["propulsion_line"]
    # load cases: law, power and speed, where the load goes
    for lc in data.train.load_cases:
        assert lc.name in text
    assert "propeller law (power rising with speed³), 1200 kW at 750 rpm" in text
    assert "'Propeller (with entrained water)' 100.0 %" in text
    # propeller law: T = P / n at the rated point, 1200 kW / (750 rpm) = 15.28 kN*m (hand-worked)
    assert "15.28 kN·m" in text
    # speed bands in words
    assert "start-up / run-down 0–350 rpm" in text and "overspeed to trip 750–810 rpm" in text
    # the propulsion-shafting requirement by name, its edition to confirm, and its inputs
    assert "IACS Unified Requirement M68" in text and "confirm the edition" in text
    # C_D = 0.35 + 0.93 d^-0.2, d in mm, as the sheet states the formula: d = 230 mm -> 0.663
    assert f"{0.35 + 0.93 * 230 ** -0.2:.3f}" == "0.663" and "0.663" in text
    for ck in ("0.85", "0.8", "0.55"):  # thrust collar, stern tube, keyless propeller (the sample's features)
        assert ck in text.split("Inputs: propulsion shafting requirement")[1]
    # strengths with their source, without the developers' notes
    assert "AISI 1045" in text and "Shigley" in text
    assert "from memory" not in text
    # coupling ratings
    assert "Nominal torque T_KN" in text and "62.5 kN·m" in text and "2.5 kW" in text


def test_hammer_ranges_and_peaks_per_band(sheets):
    data, text = sheets["twin_pump_gearbox"]
    acc = data.study.acceptance
    assert acc.hammer_ranges
    part = text.split("Gear hammer: speed ranges where the teeth separate")[1]
    for r in acc.hammer_ranges:
        assert f"{r.low_rpm:.0f}–{r.high_rpm:.0f}" in part
    data, text = sheets["propulsion_line"]
    part = text.split("Peaks per speed band")[1]
    U = Units("SI")
    from core import units as u
    for b in data.study.band_peaks:
        if b.quantity == "torque" and b.combination == "sum":
            assert U.value(b.peak, u.TORQUE) in part, (b.link_id, b.band)


# ----------------------------------------------------------------- charts: bands and barred ranges
def barred_doc() -> dict:
    """The propulsion sample with its order 8 raised until the propeller shaft needs a barred range."""
    doc = copy.deepcopy(load_document(SAMPLE["propulsion_line"]))
    for e in doc["excitations"]:
        if e["name"].startswith("Engine"):
            e["orders"][1]["amplitude"] = "88 kN*m"
    return doc


def _rects(d, fill):
    return [c for c in d.contents if isinstance(c, Rect) and c.fillColor == fill]


def test_barred_range_listed_drawn_and_keyed(tmp_path):
    doc = barred_doc()
    out = tmp_path / "barred.pdf"
    data = write_sheet(doc, None, out)
    acc = data.study.acceptance
    assert acc.barred_ranges
    text = sheet_text(out)
    part = text.split("Barred speed ranges")[1]
    for r in acc.barred_ranges:
        digits = 1 if r.high_rpm - r.low_rpm < 5 else 0
        assert f"{r.low_rpm:.{digits}f}–{r.high_rpm:.{digits}f}" in part
    s = data.screening
    d = campbell.campbell_drawing(s, 515, 300, campbell.panel_tops(s)[0], acceptance=acc)
    texts = [t for *_, t in campbell.label_boxes(d)]
    assert "barred" in texts
    spans = campbell.barred_ranges(acc)
    assert len(spans) == 1  # overlapping ranges of three shafts and two load cases: one span
    key = campbell.barred_text(data.train, spans[0])
    assert all(w in " ".join(texts) for w in key.split())
    # drawn: a red band, or for a span narrower than a point a red line
    assert _rects(d, charts.BARRED_FILL) or any(isinstance(c, Line) and c.strokeColor == charts.BARRED_EDGE
                                                for c in d.contents)
    # and on the response plots
    r = charts.response_drawing(np.linspace(0, 900, 50), np.linspace(0, 1, 50), None, 250, 135, (350, 750), "t",
                                "y", "x", barred=spans)
    assert _rects(r, charts.BARRED_FILL) or any(isinstance(c, Line) and c.strokeColor == charts.BARRED_EDGE
                                                for c in r.contents)


def test_speed_bands_run_along_the_foot_of_the_charts(sheets):
    data, _ = sheets["propulsion_line"]
    s = data.screening
    d = campbell.campbell_drawing(s, 515, 300, campbell.panel_tops(s)[0], acceptance=data.study.acceptance)
    strips = [c for c in d.contents if isinstance(c, Rect) and c.fillColor in charts.BAND_COLOURS.values()
              and c.height == charts.STRIP_H]  # (the key's swatch has the same colours, smaller)
    assert [c.fillColor for c in sorted(strips, key=lambda c: c.x)] == list(charts.BAND_COLOURS.values())
    xs = sorted((c.x, c.x + c.width) for c in strips)
    assert all(abs(a[1] - b[0]) < 0.5 for a, b in zip(xs, xs[1:]))  # contiguous: 0-350, 350-750, 750-810 rpm
    # the key names the bands with their speeds
    texts = " ".join(t for *_, t in campbell.label_boxes(d))
    assert "0–350" in texts and "350–750" in texts and "750–810" in texts


def test_load_curve_and_new_drawings_stay_inside_their_bounds(sheets):
    data, _ = sheets["twin_pump_gearbox"]
    d = acc_sheet.load_curve_drawing(ctx_for(data), 320, 130)
    x0, y0, x1, y1 = d.getBounds()
    assert x0 >= -0.5 and y0 >= -0.5 and x1 <= d.width + 0.5 and y1 <= d.height + 0.5
    for *_, t in campbell.label_boxes(d):
        assert "…" not in t


def test_for_reader_drops_the_developers_notes():
    assert wording.for_reader("AISI 1045, Shigley table A-20 (from memory); limit 0.59 S_ut (Shigley, from memory)") \
        == "AISI 1045, Shigley table A-20; limit 0.59 S_ut (Shigley)"
    assert wording.for_reader("rule of thumb (common practice, no source)") == "rule of thumb"
    assert wording.for_reader("maker's data sheet (invented)") == "maker's data sheet (invented)"


def test_us_sheet_of_the_acceptance_section_has_no_si_unit(sheets, tmp_path):
    out = tmp_path / "us.pdf"
    write_sheet(load_document(SAMPLE["propulsion_line"]), SAMPLE["propulsion_line"], out, unit_system="US")
    text = sheet_text(out)
    part = text.split("Acceptance: load cases, limits and checks")[1]
    for lc in load_document(SAMPLE["propulsion_line"])["load_cases"]:
        part = part.replace(squash(lc["name"]), "")  # the user's own words may name SI units
    for si in ("kN·m", "MPa", "kW", "(mm)"):
        assert si not in part, si
    # 1200 kW = 1200 / 0.745699872 hp = 1609 hp (NIST SP 811: 1 hp = 745.699 872 W)
    assert "1609 hp" in part
