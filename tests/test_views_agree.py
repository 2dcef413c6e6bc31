"""The three views of one study agree (the issue's "done when": the command line's JSON,
the desktop's tables and the sheet's tables show the same frequencies, margins and verdict
for every sample).

For every bundled sample the study is built once (core.study.run_study, every part, as the
sheet builds it) and shown by the desktop program's results panel and by the review sheet;
the command line runs in-process on the same file (``check --json``, ``solve --json``,
``check``, ``report``) as a user would run it.  Every natural frequency of an elastic mode,
every coincidence's margin (nominal and, where tolerance bands are given, the band margin
the verdict follows), its status, crossing speed and interference band, and the verdict
words are compared at the precision each view prints (app.formatting).

What the values should be is checked elsewhere against outside references
(tests/test_solver_references.py, tests/test_screening.py); here the reference is the
study itself, and the check is that no view re-computes, re-rounds, re-orders or re-words
what it holds.  The sheet is read as its reader sees it: the PDF's text (pdftotext -layout).
"""
from __future__ import annotations

import contextlib
import io
import json
import math
import re
import shutil
import subprocess
from dataclasses import dataclass
from pathlib import Path

import pytest

pytest.importorskip("pytestqt")

from app import formatting as fmt  # noqa: E402
from app import wording  # noqa: E402
from app.cli import main  # noqa: E402
from app.gui.results import ResultsPanel  # noqa: E402
from app.gui.results import rows as R  # noqa: E402
from app.report.sheet import SheetData, project_hash, render  # noqa: E402
from core.project import build_train, load_document  # noqa: E402
from core.study import run_study  # noqa: E402

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
IDS = [p.stem for p in SAMPLES]
WORDS = ("PASS", "FAIL", "OPEN")
pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs pdftotext (poppler-utils)")


# ----------------------------------------------------------------- running the views
def _cli(*argv) -> tuple[int, str, str]:
    """The command line in-process: exit code, stdout, stderr."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main([str(a) for a in argv])
    return code, out.getvalue(), err.getvalue()


def _squash(text: str) -> str:
    return " ".join(text.replace("\u00a0", " ").split())


@dataclass
class Desktop:
    frequency_rows: list  # [{header: text shown}]
    coincidence_rows: list
    coincidence_title: str
    coincidence_tips: list  # the table rows' tooltips, per coincidence
    ring_tips: list  # the interference diagram's ring tooltips, per coincidence
    band_margin_hidden: bool
    verdict: str
    summary: str


@dataclass
class Views:
    study: object
    check_code: int
    check_json: dict
    check_text: str
    solve_json: dict
    report_code: int
    report_line: str
    report_sheet_text: str
    desktop: Desktop
    sheet_text: str


def _model_rows(model, headers) -> list[dict]:
    """Every cell as the table shows it (the model's display role), keyed by the
    one-line column header (app.gui.results.rows)."""
    return [{headers[c]: model.data(model.index(r, c)) for c in range(model.columnCount())}
            for r in range(model.rowCount())]


def _desktop(study) -> Desktop:
    panel = ResultsPanel()
    try:
        panel.resize(1366, 768)
        panel.set_study(study)
        cv = panel.campbell_view
        col = R.COINCIDENCE_HEADERS.index("Margin with tolerances %")
        return Desktop(_model_rows(panel.modes_view.table_model, R.FREQUENCY_HEADERS),
                       _model_rows(cv.coincidence_model, R.COINCIDENCE_HEADERS),
                       cv.coincidence_title.text(), [r.tooltip for r in cv.coincidence_model.rows],
                       [cv._ring_tip(n) for n in range(len(study.screening.coincidences if study.screening else ()))],
                       cv.coincidence_table.isColumnHidden(col),
                       panel.verdict.text(), panel.verdict_summary()[0])
    finally:
        panel.shutdown()
        panel.deleteLater()


def _sheet(doc, path, study, pdf: Path) -> str:
    """The sheet of the shared study, as its reader sees it (the PDF's text)."""
    assert study.screening_error is None and study.response_error is None  # as sheet.compute refuses
    name, digest, note = project_hash(doc, path)
    render(SheetData(doc, study, name, digest, note), pdf, date_text="2000-01-01 00:00")
    return _pdf_text(pdf)


def _pdf_text(pdf: Path) -> str:
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True,
                          text=True, timeout=60).stdout
    return text.replace("\u00a0", " ")


@pytest.fixture(scope="module")
def views(qapp, tmp_path_factory):
    """One study per sample, built on first use and shown by every view."""
    cache = {}
    folder = tmp_path_factory.mktemp("views")

    def get(path: Path) -> Views:
        if path not in cache:
            doc = load_document(path)
            study = run_study(build_train(doc))
            check_code, check_out, err = _cli("check", path, "--json")
            assert err == ""
            text_code, check_text, _ = _cli("check", path)
            assert text_code == check_code
            solve_code, solve_out, err = _cli("solve", path, "--json")
            assert (solve_code, err) == (0, "")
            report_pdf = folder / f"{path.stem}_cli.pdf"
            report_code, report_line, err = _cli("report", path, "-o", report_pdf)
            assert err == ""
            cache[path] = Views(study, check_code, json.loads(check_out), check_text, json.loads(solve_out),
                                report_code, report_line, _pdf_text(report_pdf), _desktop(study),
                                _sheet(doc, path, study, folder / f"{path.stem}.pdf"))
        return cache[path]
    return get


# ----------------------------------------------------------------- reading the sheet
_ROW = re.compile(r"^\s+(\d+)\s+(\d+\.\d\d)\s+(.*)$")


def _section(text: str, heading: str, end: str) -> list[str]:
    """The lines of the sheet from the line that is ``heading`` to the first line that starts
    with ``end`` (page headers and footers in between do not look like table rows)."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.strip() == heading)
    out = []
    for line in lines[start + 1:]:
        if line.strip().startswith(end):
            return out
        out.append(line)
    raise AssertionError(f"the sheet's '{heading}' section does not end with '{end}'")


def _frequency_section(text: str) -> list[str]:
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.strip() == "Natural frequencies")
    out = []
    for line in lines[start + 1:]:
        if "dominant element by share" in line:
            return out
        out.append(line)
    raise AssertionError("the sheet's natural-frequency table has no note under it")


def sheet_frequencies(text: str) -> list[dict]:
    rows = []
    for line in _frequency_section(text):
        m = _ROW.match(line)
        if m:
            cpm, rest = m.group(3).split(None, 1)
            rows.append({"mode": m.group(1), "hz": m.group(2), "cpm": cpm, "rest": rest.rstrip()})
    return rows


def sheet_coincidences(text: str, tolerances: bool) -> list[dict]:
    """Rows of the sheet's coincidence table, read from the right of each row's first line:
    status, interference band (rpm), [margin with tolerances], margin, crossing rpm."""
    rows = []
    for line in _section(text, "Coincidences, worst first", "Listed:"):
        m = _ROW.match(line)
        if not m or not re.search(r"(PASS|FAIL|WEAK)\s*$", line):
            continue
        tok = line.split()
        row = {"mode": tok[0], "hz": tok[1], "status": tok.pop()}
        row["band"] = " ".join(tok[-2:]) if tok[-2:] == ["all", "speeds"] else tok[-1]
        del tok[-(2 if row["band"] == "all speeds" else 1):]
        row["band_margin"] = tok.pop() if tolerances else "—"
        row["margin"] = tok.pop()
        row["crossing"] = tok.pop()
        rows.append(row)
    return rows


def check_text_coincidences(text: str, tolerances: bool) -> list[dict]:
    """Rows of ``twistwise check``'s table, read from the right: status, twist at the source
    ('xx.x %'), [band margin], margin, crossing rpm."""
    rows = []
    for line in text.splitlines():
        if not _ROW.match(line) or not re.search(r"(PASS|FAIL|WEAK)$", line):
            continue
        tok = line.split()
        row = {"mode": tok[0], "hz": tok[1], "status": tok[-1]}
        del tok[-3:]
        row["band_margin"] = tok.pop() if tolerances else "—"
        row["margin"] = tok.pop()
        row["crossing"] = tok.pop()
        rows.append(row)
    return rows


def without_date(sheet_text: str) -> str:
    return re.sub(r"(?m)^\s*Date\s.*$", "", sheet_text)


def sheet_verdict(text: str) -> tuple[str, str]:
    """(the headline as printed, squashed; the separation screening's word)."""
    box = _squash("\n".join(_section(text, "Verdict", "Separation screening:")))
    sep = re.search(r"Separation screening:\s+(PASS|FAIL)\b", text)
    assert sep, "the sheet states no separation screening"
    return box, sep.group(1)


# ----------------------------------------------------------------- what the study holds, as printed
def band_words(lo_rpm, hi_rpm) -> str:
    """An interference band (reference speeds in rpm; None for an open end) as every table prints it:
    'all speeds' for a fixed frequency's band, else 'low–high' in whole rpm."""
    if lo_rpm <= 0 and hi_rpm is None:
        return "all speeds"
    return f"{lo_rpm:.0f}–" + ("—" if hi_rpm is None else f"{hi_rpm:.0f}")


def band_text(c) -> str:
    if c.band is None:
        return "—"
    lo, hi = (fmt.rad_s_to_rpm(b) for b in c.band)
    return band_words(lo, hi if math.isfinite(hi) else None)


def expected_frequencies(study) -> list[tuple[str, str, str]]:
    m = study.modes
    return [(str(int(m.number[i])), fmt.hz(m.frequency_hz[i]), fmt.cpm(m.frequency_hz[i]))
            for i in range(len(m)) if m.elastic[i]]


def expected_coincidences(study) -> list[dict]:
    s = study.screening
    return [{"mode": str(c.mode), "hz": fmt.hz(c.frequency_hz), "margin": fmt.percent(c.separation),
             "band_margin": "—" if c.separation_band is None else fmt.percent(c.separation_band),
             "status": c.status.upper(), "crossing": fmt.rpm(c.crossing_speed), "band": band_text(c)}
            for c in s.coincidences]


def _json_band(band) -> str:
    """check --json's interference band [low rpm, high rpm or null] as the tables print it."""
    return "—" if band is None else band_words(*band)


# ----------------------------------------------------------------- the checks
@pytest.mark.parametrize("path", SAMPLES, ids=IDS)
def test_natural_frequencies_agree(views, path):
    v = views(path)
    study = v.study
    want = expected_frequencies(study)
    assert want, "every sample has elastic modes"
    # command line: solve --json (every mode, full precision) and the modes check screened
    solved = [m for m in v.solve_json["modes"] if not m["rigid_body"]]
    assert [(str(m["number"]), fmt.hz(m["frequency_hz"]), fmt.cpm(m["frequency_hz"])) for m in solved] == want
    elastic = study.modes.frequency_hz[study.modes.elastic]
    assert [m["frequency_hz"] for m in solved] == pytest.approx(list(elastic), rel=1e-9)
    assert [m["above_screening_limit"] for m in solved] == list(study.above_screening_limit[study.modes.elastic])
    considered = [(str(m["mode"]), fmt.hz(m["frequency_hz"])) for m in v.check_json["modes_considered"]]
    assert considered == [(n, hz) for (n, hz, _), above in
                          zip(want, study.above_screening_limit[study.modes.elastic]) if not above]
    # desktop: the natural-frequency table as shown
    shown = [r for r in v.desktop.frequency_rows if r["Rigid body"] != "yes"]
    assert [(r["Mode"], r["Hz"], r["cpm"]) for r in shown] == want
    assert [r["Screening"] == R.ABOVE_LIMIT for r in shown] == [m["above_screening_limit"] for m in solved]
    # sheet: the natural-frequency table as printed
    printed = [r for r in sheet_frequencies(v.sheet_text) if "rigid-body mode" not in r["rest"]]
    assert [(r["mode"], r["hz"], r["cpm"]) for r in printed] == want
    assert [("no:" in r["rest"]) for r in printed] == [m["above_screening_limit"] for m in solved]


@pytest.mark.parametrize("path", SAMPLES, ids=IDS)
def test_coincidence_margins_agree(views, path):
    v = views(path)
    s = v.study.screening
    want = expected_coincidences(v.study)
    # command line: check --json, full precision, worst first
    rows = v.check_json["coincidences"]
    assert v.check_json["tolerance_bands"] is s.tolerances
    assert [(str(r["mode"]), r["source"], r["status"]) for r in rows] == \
        [(str(c.mode), c.source, c.status) for c in s.coincidences]
    assert [r["margin_percent"] for r in rows] == pytest.approx([100 * c.separation for c in s.coincidences],
                                                                 abs=1e-9)
    if s.tolerances:
        assert [r["margin_percent_band"] for r in rows] == pytest.approx(
            [100 * c.separation_band for c in s.coincidences], abs=1e-9)
    else:
        assert all("margin_percent_band" not in r for r in rows)
    printed = [{"mode": str(r["mode"]), "hz": fmt.hz(r["frequency_hz"]),
                "margin": fmt.percent(r["margin_percent"] / 100),
                "band_margin": fmt.percent(r["margin_percent_band"] / 100) if s.tolerances else "—",
                "status": r["status"].upper(),
                "crossing": "—" if r["crossing_speed_rpm"] is None else f"{r['crossing_speed_rpm']:.0f}",
                "band": _json_band(r["interference_band_rpm"])} for r in rows]
    assert printed == want
    # command line: check's table as printed
    keys = ("mode", "hz", "margin", "band_margin", "status", "crossing")
    assert check_text_coincidences(v.check_text, s.tolerances) == [{k: r[k] for k in keys} for r in want]
    # desktop: the coincidence table as shown, the margin with tolerances in view where there are any
    d = v.desktop
    shown = [{"mode": r["Mode"], "hz": r["Natural Hz"], "margin": r["Margin %"],
              "band_margin": r["Margin with tolerances %"], "status": r["Status"], "crossing": r["Crossing rpm"],
              "band": r["Band rpm"]} for r in d.coincidence_rows]
    assert shown == want
    assert [r["Excitation"] for r in d.coincidence_rows] == [c.source for c in s.coincidences]
    assert d.band_margin_hidden is not s.tolerances
    # sheet: the coincidence table as printed; `twistwise report` prints the same sheet
    assert sheet_coincidences(v.sheet_text, s.tolerances) == want
    assert without_date(v.report_sheet_text) == without_date(v.sheet_text)


@pytest.mark.parametrize("path", SAMPLES, ids=IDS)
def test_verdicts_agree(views, path):
    v = views(path)
    study, s = v.study, v.study.screening
    head, ok = wording.headline(study)
    word = head.split(" — ", 1)[0]
    assert word in WORDS and word == study.verdict.upper()
    # the separation screening: check's JSON, its exit code and sentence, the desktop's table and
    # title, the sheet's line (the verdict follows the band margin where tolerances are given)
    sep = s.verdict.upper()
    n_fail = len(s.failures)
    assert v.check_json["verdict"].upper() == sep
    assert v.check_code == (0 if s.passed else 1)
    assert "Verdict: " + wording.separation_verdict(s) in v.check_text
    assert sum(r["status"] == "fail" for r in v.check_json["coincidences"]) == n_fail
    assert sum(r["Status"] == "FAIL" for r in v.desktop.coincidence_rows) == n_fail
    assert (f", {n_fail} inside the" in v.desktop.coincidence_title) is (n_fail > 0)
    box, sheet_sep = sheet_verdict(v.sheet_text)
    assert sheet_sep == sep
    assert _squash(wording.separation_verdict(s)) in _squash(v.sheet_text)
    # the headline: the desktop's verdict line and status bar, the sheet's verdict box, report's line
    # and exit code
    assert v.desktop.verdict == head
    assert v.desktop.summary.split(" ", 1)[0] == word
    assert box.startswith(_squash(head))
    assert re.search(rf"— verdict {word}\b", v.report_line), v.report_line
    assert v.report_code == (0 if study.passed else 1)


def test_a_pair_inside_the_margin_only_with_tolerances_is_shown_with_its_band_margin(views):
    """Where tolerances are given the status follows the margin from the band's edge: every view
    that shows a pair's margin shows that one beside the nominal, never the nominal alone.  The
    twin-pump gearbox (invented demo data) has such pairs: mode 3 against pump B's first order
    and against twice line frequency clear the margin nominally and not with the tolerances."""
    v = views(next(p for p in SAMPLES if p.stem == "twin_pump_gearbox"))
    s = v.study.screening
    hits = [(k, c) for k, c in enumerate(s.coincidences) if c.separation >= s.margin > c.separation_band]
    assert hits, "the sample has a pair whose nominal margin clears but whose band margin does not"
    for k, c in hits:
        assert c.status == "fail"
        nominal, band = fmt.percent(c.separation), fmt.percent(c.separation_band)
        row = v.desktop.coincidence_rows[k]
        assert (row["Margin %"], row["Margin with tolerances %"], row["Status"]) == (nominal, band, "FAIL")
        assert f"{band} % from the nearest edge of the mode's tolerance band, which the status follows" \
            in v.desktop.coincidence_tips[k]
        assert f"margin {nominal} %, {band} % with tolerances (the status follows this)" in v.desktop.ring_tips[k]
        j = v.check_json["coincidences"][k]
        assert (fmt.percent(j["margin_percent"] / 100), fmt.percent(j["margin_percent_band"] / 100)) == (nominal, band)
    assert not v.desktop.band_margin_hidden
    text = _squash(v.sheet_text)
    assert "the status and the order of the rows follow it" in text
    assert "A pair then fails when its margin with tolerances, measured from the band's edge nearest the " \
        "excitation, is below the required" in text
    assert "the verdict follows the band margin" in v.check_text


def test_the_desktop_states_no_verdict_before_the_acceptance_checks_it_rests_on(qtbot, views):
    """The desktop shows a study in two stages (app.gui.compute): the forced response first, its
    acceptance checks later on a worker.  Seen: between the two the twin-pump gearbox read
    'OPEN — ... not yet accepted: ... give their amplitudes' (they are given) where the sheet
    says PASS; a separation PASS could likewise show before a failing check.  Until the checks
    come the verdict line says they are being made, in grey; then it is the sheet's."""
    from app.gui.compute import FIRST_PARTS, complete, compute
    path = next(p for p in SAMPLES if p.stem == "twin_pump_gearbox")
    v = views(path)
    first = compute(build_train(load_document(path)), first_stage=True)
    assert first.study.response is not None and first.study.acceptance is None
    assert wording.headline(first.study)[0].startswith("OPEN")  # what the line said before
    panel = ResultsPanel()
    qtbot.addWidget(panel)
    panel.set_study(first.study)
    assert panel.verdict_text() == ("Checking the forced response against its limits… (separation screening: "
                                    f"{v.study.screening.verdict.upper()})", None)
    assert panel.verdict_summary() == ("checking the forced response…", None)
    shown = panel.verdict.text()
    assert shown.split()[0] not in WORDS and "PASS" not in shown and "OPEN" not in shown
    assert FIRST_PARTS >= {"response"} and "acceptance" not in first.study.options.parts
    done = complete(first)
    panel.set_study(done.study)
    head, ok = wording.headline(v.study)
    assert panel.verdict_text() == (head, ok) and head.startswith("PASS")
    box, _ = sheet_verdict(v.sheet_text)
    assert box.startswith(_squash(panel.verdict.text()))
