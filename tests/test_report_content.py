"""Review sheet, issue 9 items 4-7, issue 10 item 7 and issue 15 item 4: names over ids,
one unit system, a legible interference diagram, what a reader tripped on, any legal
train laid out, tables linear in the rows.

The PDF is read back with pypdf (an independent reader).  Unit conversions are
checked against the exact definitions of the pound and the foot (NIST SP 811,
appendix B: 1 lb = 0.45359237 kg, 1 ft = 0.3048 m, 1 in = 0.0254 m, 1 lbf =
4.4482216152605 N), not against core.units.
"""
from __future__ import annotations

import copy
import json
import math
import re
from pathlib import Path

import pytest
from pypdf import PdfReader

from app.report import campbell, charts, write_sheet
from app.report.sheet import compute
from app.report.tables import Column, LongTable, wrap_text
from app.schematic_layout import place_document
from core.about import program_line
from core.project import build_train, load_document

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
SAMPLE = {p.stem: p for p in SAMPLES}


def squash(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


def sheet_text(path) -> str:
    return squash("\n".join(p.extract_text() or "" for p in PdfReader(str(path)).pages))


@pytest.fixture(scope="module")
def sample_sheets(tmp_path_factory):
    """Every sample's sheet in SI and in US units, written once for the module."""
    folder = tmp_path_factory.mktemp("sheets")
    out = {}
    for p in SAMPLES:
        for system in ("SI", "US"):
            pdf = folder / f"{p.stem}_{system}.pdf"
            write_sheet(load_document(p), p, pdf, unit_system=system)
            out[p.stem, system] = sheet_text(pdf)
    return out


def named_doc() -> dict:
    """An invented named train: a motor, a named coupling, a named mesh, a pump."""
    return {"format": "twistwise-project", "version": 1, "title": "Named elements",
            "discs": [{"id": "m", "name": "Drive motor rotor", "inertia": "1 kg*m^2"},
                      {"id": "h", "name": "Coupling hub", "inertia": "0.2 kg*m^2"},
                      {"id": "g", "name": "Output gear", "inertia": "0.5 kg*m^2"},
                      {"id": "p", "name": "Feed pump impeller", "inertia": "0.4 kg*m^2", "damping": "3 N*m*s/rad"}],
            "links": [{"id": "s1", "kind": "shaft", "from": "m", "to": "h", "stiffness": "1 MN*m/rad"},
                      {"id": "c1", "name": "Disc-pack coupling", "kind": "coupling", "from": "h", "to": "g",
                       "stiffness": "0.2 MN*m/rad", "dynamic_magnifier": 8, "permissible_torque": "2 kN*m"},
                      {"id": "z1", "name": "Step-up mesh", "kind": "gear_mesh", "from": "g", "to": "p",
                       "speed_ratio": 2.5, "stiffness": "50 MN*m/rad"}],
            "reference": "m", "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "Motor torque ripple", "at": "m",
                             "orders": [{"order": 2, "amplitude": "100 N*m", "phase_deg": 30}]},
                            {"name": "Pump vane pass", "at": "p", "orders": [5]}]}


# ----------------------------------------------------------------- item 4: names
def test_every_table_and_chart_shows_names(tmp_path):
    doc = named_doc()
    out = tmp_path / "named.pdf"
    data = write_sheet(doc, None, out)
    text = sheet_text(out)
    for name in ("Drive motor rotor", "Coupling hub", "Output gear", "Feed pump impeller", "Disc-pack coupling",
                 "Step-up mesh"):
        assert name in text, name
    # the ids stay where the user edits them: the model table
    assert "Disc-pack coupling (c1)" in text
    # the excitation inputs name the disc an excitation acts at
    assert "Feed pump impeller" in text.split("Operating data and excitation inputs")[1].split("Natural")[0]
    # the frequency table names the dominant elements
    m = data.modes
    i = next(k for k in range(len(m)) if m.elastic[k])
    assert data.train.name_of(m.dominant_link(i)) in text.split("Natural frequencies")[1]
    # charts: mode-shape ticks, response titles and the Campbell axis carry names
    pl = place_document(doc)
    d = charts.mode_shape_drawing(m, i, pl, 170, 150, data.train.links, name_of=data.train.name_of)
    texts = [s for *_, s in campbell.label_boxes(d)] + _rotated_texts(d)
    assert "Drive motor rotor" in texts and "m" not in texts
    c = campbell.campbell_drawing(data.screening, 500, 300, campbell.panel_tops(data.screening)[0])
    assert any("'Drive motor rotor'" in t for *_, t in campbell.label_boxes(c))


def _rotated_texts(d) -> list[str]:
    from reportlab.graphics.shapes import Group, String
    out = []
    for c in d.contents:
        if isinstance(c, Group):
            out += [s.text for s in c.contents if isinstance(s, String)]
    return out


# ----------------------------------------------------------------- item 5: units
def test_us_units_everywhere(tmp_path):
    doc = named_doc()
    out = tmp_path / "us.pdf"
    write_sheet(doc, None, out, unit_system="US")
    text = sheet_text(out)
    assert "US customary" in text
    for unit in ("lb·ft²", "lbf·in/rad", "lbf·in·s/rad", "lbf·ft"):
        assert unit in text, unit
    for si in ("kg·m²", "kN·m/rad", "N·m·s/rad", "(kN·m)", "MPa", "(mm)"):
        assert si not in text, si
    # 1 kg*m^2 = 1 / (0.45359237 * 0.3048^2) lb*ft^2 = 23.73 lb*ft^2 (NIST SP 811 definitions)
    assert "23.73" in text
    # 1 MN*m/rad = 1e6 / (4.4482216152605 * 0.0254) lbf*in/rad = 8.851e6 lbf*in/rad
    assert "8851000" in text.replace(" ", "") or "8.851e6" in text
    # the excitation amplitude 100 N*m = 100 / (4.4482216152605 * 0.3048) lbf*ft = 73.76 lbf*ft
    assert "73.76" in text


@pytest.mark.parametrize("stem", sorted(SAMPLE))
def test_us_sheet_of_every_sample_has_no_si_unit(stem, sample_sheets):
    text = sample_sheets[stem, "US"]
    for si in ("kg·m²", "kN·m", "N·m·s/rad", "MPa", "GPa", "(mm)", "kg/m³"):
        assert si not in text, si
    assert "lb·ft²" in text


def test_a_long_sheet_converts_by_column_not_by_cell(tmp_path, monkeypatch):
    from core import units
    calls = []
    real = units.convert
    doc = chain_doc(500)  # 500 discs and links: thousands of cells
    data = compute(doc)
    monkeypatch.setattr(units, "convert", lambda *a, **k: calls.append(a) or real(*a, **k))
    from app.report.sheet import render
    render(data, tmp_path / "c.pdf", unit_system="US")
    assert len(calls) < 40, len(calls)  # one factor per kind, not one conversion per cell


# ----------------------------------------------------------------- item 6: interference diagram
def _boxes_overlap(a, b, slack=0.3) -> bool:
    return not (a[2] <= b[0] + slack or b[2] <= a[0] + slack or a[3] <= b[1] + slack or b[3] <= a[1] + slack)


@pytest.mark.parametrize("stem", sorted(SAMPLE))
def test_campbell_labels_never_overlap_and_legend_is_whole(stem):
    train = build_train(load_document(SAMPLE[stem]))
    from core.study import run_study
    s = run_study(train).screening
    tops = campbell.panel_tops(s)
    for k, top in enumerate(tops):
        for width in (515.0, 560.0):  # A4 and letter frames
            d = campbell.campbell_drawing(s, width, 300, top, title="Detail" if k else None, with_legend=k == 0)
            boxes = campbell.label_boxes(d)
            for i in range(len(boxes)):
                assert boxes[i][0] >= -0.5 and boxes[i][2] <= width + 0.5, boxes[i]
                for j in range(i + 1, len(boxes)):
                    assert not _boxes_overlap(boxes[i], boxes[j]), (boxes[i], boxes[j])
            texts = " ".join(t for *_, t in boxes)
            assert "…" not in texts
            if k == 0:  # every legend entry is printed whole (wrapped, never cut)
                for *_, entry in campbell.legend_items(s, False):
                    assert all(w in texts for w in entry.split()), entry


@pytest.mark.parametrize("stem", sorted(SAMPLE))
def test_no_screened_mode_is_squeezed_against_the_axis(stem):
    from core.study import run_study
    s = run_study(build_train(load_document(SAMPLE[stem]))).screening
    tops = campbell.panel_tops(s)
    assert tops[0] >= s.cap_hz  # the first panel holds the screening limit
    for i in range(len(s.modes)):
        f = float(s.modes.frequency_hz[i])
        if s.modes.elastic[i] and f <= s.cap_hz:
            clear = [top for top in tops if campbell.SQUEEZED * top <= f <= top]
            assert clear or len(tops) == campbell.MAX_PANELS, (i, f, tops)


def test_spread_keeps_order_bounds_and_gaps():
    pos = campbell.spread([0.0, 0.1, 0.2, 5.0, 9.9], [2.0] * 5, 0.0, 10.0)
    assert pos == sorted(pos)
    assert pos[0] >= 1.0 - 1e-9 and pos[-1] <= 9.0 + 1e-9
    assert all(b - a >= 2.0 - 1e-9 for a, b in zip(pos, pos[1:]))
    assert campbell.spread([1.0] * 6, [2.0] * 6, 0.0, 10.0) is None  # 12 points do not fit in 10
    items = [dict(at=float(k), text=str(k + 1), colour=None) for k in range(20)]
    placed = campbell.place_labels(items, 0.0, 20.0, lambda it: 3.0, lambda a, b: f"{a['text']}–{b['text']}")
    assert sum(len(it["members"]) for it in placed) == 20 and len(placed) <= 6


# ----------------------------------------------------------------- item 7: what a reader tripped on
def test_reader_items_on_the_sample_sheets(sample_sheets):
    for (stem, system), text in sample_sheets.items():
        assert "above cap" not in text
        assert "from memory" not in text and "common practice" not in text and "no source" not in text
        assert program_line() in text
        assert "Speed ratio (output / input)" in text
        # the margin band says what it is: around f_n, or around the tolerance band's edges
        assert "f_n/1.1 to f_n/0.9" in text or "f_low/1.1 to f_high/0.9" in text
        # sources as a reader expects them, and the edition to confirm
        assert "Wittrick" in text and "Quarterly Journal of Mechanics and Applied Mathematics" in text
        assert "API Standard 617" in text and "confirm the edition" in text
    twin = sample_sheets["twin_pump_gearbox", "SI"]
    assert "Booster pump A" in twin.split("Coincidences, worst first")[1]  # the disc, by name
    engine = sample_sheets["engine_genset", "SI"]
    # damping as entered (psi) with its loss factor; amplitudes, phases, firing angles and the throws
    assert "psi = 1 (eta = 0.159)" in engine  # entered psi, eta = psi / 2 pi
    assert "Firing angle (deg)" in engine and "600" in engine and "Crank throw 4" in engine
    assert "from the engine data" in engine and "Phase (deg)" in engine  # amplitudes from the engine model
    pump = sample_sheets["pump_set", "SI"]  # its modes 3-6 lie above the screening limit
    assert "Modes above the screening limit" in pump and "no: above the screening limit" in pump
    propulsion = sample_sheets["propulsion_line", "SI"]
    assert "psi = 1.1 (eta = 0.175)" in propulsion and "with speed², given at 200 rpm" in propulsion


def test_dynamic_magnifier_and_loss_factor_shown_as_entered(tmp_path):
    doc = named_doc()
    out = tmp_path / "d.pdf"
    write_sheet(doc, None, out)
    text = sheet_text(out)
    assert "M = 8 (eta = 0.125)" in text  # eta = 1 / M
    doc["links"][1].pop("dynamic_magnifier")
    doc["links"][1]["loss_factor"] = 0.05
    write_sheet(doc, None, out)
    assert "eta = 0.05 (psi = 0.314)" in sheet_text(out)  # psi = 2 pi eta


@pytest.mark.parametrize("stem", sorted(SAMPLE))
def test_mode_shape_labels_stay_inside_their_drawing(stem):
    doc = load_document(SAMPLE[stem])
    data = compute(doc, SAMPLE[stem])
    pl = place_document(doc)
    m = data.modes
    for i in [k for k in range(len(m)) if m.elastic[k]][:6]:
        d = charts.mode_shape_drawing(m, i, pl, 167, 150, data.train.links, name_of=data.train.name_of)
        x0, y0, x1, y1 = d.getBounds()
        assert x0 >= -0.5 and y0 >= -0.5 and x1 <= d.width + 0.5 and y1 <= d.height + 0.5, (stem, i, d.getBounds())
        assert not any("…" in t for t in _rotated_texts(d) if len(t) < 12)


# ----------------------------------------------------------------- issue 10 item 7: any legal train
def chain_doc(n: int) -> dict:
    discs = [{"id": f"d{i}", "inertia": f"{1 + i % 3} kg*m^2"} for i in range(n)]
    links = [{"id": f"s{i}", "kind": "shaft", "from": f"d{i}", "to": f"d{i + 1}", "stiffness": f"{n} MN*m/rad"}
             for i in range(n - 1)]
    return {"title": f"chain {n}", "discs": discs, "links": links, "reference": "d0",
            "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
            "excitations": [{"name": "once per rev", "at": "d0", "orders": [1]}]}


def test_a_shaft_of_10000_segments_is_summarised(tmp_path):
    segs = [{"length": "10 mm", "outer_diameter": f"{100 + i % 5} mm"} for i in range(10_000)]
    doc = {"title": "Long shaft", "discs": [{"id": "a", "inertia": "10 kg*m^2"}, {"id": "b", "inertia": "5 kg*m^2"}],
           "links": [{"id": "long", "kind": "shaft", "from": "a", "to": "b", "material": "carbon_steel",
                      "segments": segs}],
           "reference": "a", "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
           "excitations": [{"name": "1x", "at": "a", "orders": [1]}]}
    out = tmp_path / "seg.pdf"
    write_sheet(doc, None, out)
    text = sheet_text(out)
    assert "10000 segments, 100000 long" in text and "… 9998 more …" in text


def test_a_long_chain_gets_a_summary_and_the_full_tables_in_an_appendix(tmp_path):
    out = tmp_path / "long.pdf"
    write_sheet(chain_doc(400), None, out)
    pages = [squash(p.extract_text() or "") for p in PdfReader(str(out)).pages]
    text = " ".join(pages)
    assert "too many to list here" in text and "Elements that carry the results" in text
    first_appendix = next(k for k, p in enumerate(pages) if "Appendix A" in p)
    appendix = " ".join(pages[first_appendix:])
    tokens = set(appendix.split())
    assert all(f"d{i}" in tokens for i in range(400)) and all(f"s{i}" in tokens for i in range(399))
    # the appendix tables repeat their header on every page they span
    assert sum("Inertia (kg·m²)" in p for p in pages[first_appendix:]) >= 2
    for k, p in enumerate(pages, start=1):
        assert f"page {k} of {len(pages)}" in p


def test_a_huge_branched_train_still_fits(tmp_path):
    discs = [{"id": "hub", "name": "Central gear", "inertia": "50 kg*m^2"}]
    links = []
    for b in range(300):
        prev = "hub"
        for j in range(3):
            d = f"b{b}_{j}"
            discs.append({"id": d, "inertia": "1 kg*m^2"})
            links.append({"id": f"l{b}_{j}", "kind": "shaft", "from": prev, "to": d, "stiffness": "5 MN*m/rad"})
            prev = d
    doc = {"title": "Star", "discs": discs, "links": links, "reference": "hub",
           "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
           "excitations": [{"name": "1x", "at": "hub", "orders": [1]}]}
    out = tmp_path / "star.pdf"
    write_sheet(doc, None, out)
    text = sheet_text(out)
    assert "Overview: 901 discs" in text and "Central gear" in text


# ----------------------------------------------------------------- issue 15 item 4: linear tables
def test_long_table_splits_cover_every_row_once_and_fit_the_frame():
    cols = [Column("Name", 200), Column("Value", 80, "RIGHT", False)]
    rows = [[f"Element {i} " + "long " * (i % 7), str(i)] for i in range(3000)]
    t = LongTable(cols, rows)
    seen, pieces, rest = [], 0, t
    while True:
        rest.wrap(515, 700)
        if rest.height <= 700:
            seen += rest.text_rows()
            break
        first, rest = rest.split(515, 700)
        first.wrap(515, 700)
        assert first.height <= 700 + 1e-6
        seen += first.text_rows()
        pieces += 1
    assert [r[1] for r in seen] == [str(i) for i in range(3000)]
    assert pieces > 20


def test_wrap_text_never_exceeds_its_lines_or_width():
    from app.report.tables import text_width
    text = wrap_text("a " * 500 + "x" * 300, 60.0, max_lines=3)
    lines = text.split("\n")
    assert len(lines) == 3 and lines[-1].endswith("…")
    assert all(text_width(line) <= 60.0 + 1e-6 for line in lines)
    assert wrap_text("short", 60.0) == "short"


def test_model_cells_are_plain_strings_not_paragraphs(tmp_path):
    # one style per column, no Paragraph per number cell (issue 15 item 4)
    from app.report.sections import Ctx, Units, disc_table, link_table
    data = compute(chain_doc(300))
    ctx = Ctx(data, 515.0, 760.0, Units("SI"))
    for t in (disc_table(ctx, data.train.discs), link_table(ctx, data.train.links)):
        assert isinstance(t, LongTable)
        assert all(isinstance(c, str) for r in t.text_rows() for c in r)


def test_sheet_data_keeps_the_command_lines_verdict(tmp_path):
    from app import wording
    data = compute(load_document(SAMPLE["compressor_train"]))
    out = tmp_path / "v.pdf"
    write_sheet(copy.deepcopy(data.doc), None, out)
    assert squash(wording.separation_verdict(data.screening, nbsp="\u00a0")) in sheet_text(out)
    assert not math.isnan(data.screening.cap_hz)
    json.dumps(data.doc)  # the document the sheet hashes is plain JSON


def test_huge_names_and_texts_still_lay_out(tmp_path):
    # names without a length limit are legal: every one is cut or wrapped, none breaks the layout
    doc = named_doc()
    long = "Very long name " * 400
    doc["title"] = long
    doc["description"] = long * 5
    doc["discs"][0]["name"] = long
    doc["links"][1]["name"] = long
    doc["excitations"][0]["name"] = long
    doc["operating_speed"]["name"] = long
    doc["operating_speed"]["min"] = "1400 rpm"  # motor 2x crosses a mode in range: a long verdict
    out = tmp_path / "long_names.pdf"
    write_sheet(doc, None, out)
    assert len(PdfReader(str(out)).pages) >= 3


def test_mode_shape_envelope_keeps_the_extremes():
    import numpy as np
    x = np.linspace(0.0, 160.0, 20_001)
    y = np.sin(x / 7.0) + 0.3 * np.sin(x * 3.1)
    px, py = charts.envelope(x, y)
    assert len(px) < 1000  # thinned to what 160 points of width can show
    assert py.max() == y.max() and py.min() == y.min()
    # every original vertex lies inside the band drawn at its half-point bin
    bins = np.floor(x * 2.0).astype(int)
    for b in (0, 77, 200, 319):
        sel = y[bins == b]
        k = 2 * b
        assert py[k] == sel.min() and py[k + 1] == sel.max()
    short = np.linspace(0.0, 160.0, 50)
    assert charts.envelope(short, np.sin(short))[0] is short


@pytest.mark.parametrize("name", ["fan_drive", "sync_motor_compressor"])
def test_campbell_draws_the_tolerance_bands(name):
    """Each screened mode's tolerance band [f_low, f_high] (core.tolerance: the corner trains'
    frequencies) is a shaded strip of exactly that height; the key names it; none without
    tolerances."""
    from reportlab.graphics.shapes import Rect

    from app.report.styles import register_fonts
    from core.screening import screen
    register_fonts()
    s = screen(build_train(load_document(SAMPLE[name])))
    top = campbell.panel_tops(s)[0]
    d = campbell.campbell_drawing(s, 500, 300, top)
    strips = [r for r in d.contents if isinstance(r, Rect) and r.fillColor == charts.TOLERANCE_FILL
              and r.width > 100]  # not the small sample in the key
    keys = " ".join(item[3] for item in campbell.legend_items(s, False))
    if s.bands is None:
        assert not strips and "tolerance band" not in keys
        return
    assert "tolerance band" in keys
    want = [(lo, min(hi, top)) for (lo, hi), f, e in zip(s.bands, s.modes.frequency_hz, s.modes.elastic)
            if e and 0 < f <= min(s.cap_hz, top) and hi > lo and lo < top]
    assert len(strips) == len(want)  # the samples' bands do not overlap
    # heights in points: the plot maps 0..top Hz onto 300 points
    for r, (lo, hi) in zip(sorted(strips, key=lambda r: r.y), sorted(want)):
        assert r.height == pytest.approx((hi - lo) / top * 300, rel=1e-6)


def test_campbell_marks_weakly_excited_pairs_apart():
    """A weakly excited pair inside the margin is drawn in its own colour and keyed (listed,
    not counted as a failure); the two-disc model: theta_a / theta_b = -J2 / J1 (closed form)."""
    import math

    from reportlab.graphics.shapes import Circle

    from app.report.styles import FAIL_INK, WEAK_INK, register_fonts
    from core.screening import screen
    register_fonts()
    J1, J2, f = 4.0, 1.0, 25.0
    k = (2 * math.pi * f) ** 2 * J1 * J2 / (J1 + J2)
    doc = {"format": "twistwise-project", "version": 1, "title": "weak pair",
           "discs": [{"id": "a", "inertia": J1}, {"id": "b", "inertia": J2}],
           "links": [{"id": "c", "kind": "coupling", "from": "a", "to": "b", "stiffness": k}],
           "reference": "a", "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
           "margin_percent": 10, "weak_excitation_below": "30 %",
           "excitations": [{"name": "drive", "at": "a", "orders": [1]}, {"name": "load", "at": "b", "orders": [1]}]}
    s = screen(build_train(doc))
    d = campbell.campbell_drawing(s, 500, 300, campbell.panel_tops(s)[0])
    fills = {c.fillColor for c in d.contents if isinstance(c, Circle)}
    assert WEAK_INK in fills and FAIL_INK in fills
    assert any("weakly excited" in item[3] for item in campbell.legend_items(s, False))
