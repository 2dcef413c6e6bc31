"""Review sheet: a section per transient event (issue 14, item 6) — inputs, the torque of the
most loaded links against time, the speed of a start-up with the lowest mode's crossing
marked, and the peak and fatigue table.

Outside reference for the crossing: a synchronous motor's pulsating torque runs at
2 s f_line, s = 1 - n / n_sync, so it meets a natural frequency f_n at the motor speed
n = (1 - f_n / (2 f_line)) n_sync (the slip relation of any electrical-machines text, e.g.
Fitzgerald and Kingsley, Electric Machinery — from memory).
"""
from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
from pypdf import PdfReader
from reportlab.graphics.shapes import Line, PolyLine

from app import formatting as fmt
from app.report import campbell, transients, write_sheet
from app.report.base import Ctx, Units, num
from app.report.styles import FAIL_INK
from core import units as u
from core.project import load_document

SAMPLE = Path(__file__).resolve().parent.parent / "sample_projects" / "sync_motor_compressor.json"


def squash(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


@pytest.fixture(scope="module")
def sheet(tmp_path_factory):
    pdf = tmp_path_factory.mktemp("tr") / "sync.pdf"
    data = write_sheet(load_document(SAMPLE), SAMPLE, pdf)
    pages = [squash(p.extract_text() or "") for p in PdfReader(str(pdf)).pages]
    return data, " ".join(pages)


def test_a_section_per_event_with_its_inputs(sheet):
    data, text = sheet
    events = data.study.transients.events
    assert len(events) == 2
    for e in events:
        assert f"Transient event: {e.name}" in text
    start = text.split("Transient event: Start-up")[1].split("Transient event: Two-phase")[0]
    assert "synchronous motor start" in start and "supply voltage factor 0.85" in start
    assert "line frequency 50 Hz, synchronous speed 1500 rpm" in start
    assert "Duration 12 s" in start and "starts from standstill" in start
    assert "required events 5000 for every shaft" in start
    sc = text.split("Transient event: Two-phase terminal short circuit")[1]
    assert "2-phase terminal short circuit" in sc and "subtransient reactance x''_d 0.16" in sc
    assert "T_a 90 ms" in sc and "As decaying sinusoids" in sc
    assert "starts at 1500 rpm of 'Motor rotor' in the steady twist of its torques" in sc


def test_peak_and_fatigue_table(sheet):
    data, text = sheet
    U = Units("SI")
    for e in data.study.transients.events:
        part = text.split(f"Transient event: {e.name}")[1].split("Peak torque and fatigue")[1]
        part = part.split("Transient event:")[0]
        for lt in e.links:
            row = f"{data.train.name_of(lt.link_id)} {lt.kind.replace('_', ' ')} {U.value(lt.peak_torque, u.TORQUE)} " \
                  f"{fmt.seconds(lt.peak_time)}"
            assert row in part, row
            if lt.allowed_events is not None:
                assert ("unlimited" if not math.isfinite(lt.allowed_events) else num(lt.allowed_events, 3)) in part
            assert ("PASS" if lt.passed else "FAIL") in part
        assert f"{e.links[0].required_events:g}" in part


def test_start_up_speed_with_the_lowest_mode_crossing_marked(sheet):
    data, text = sheet
    e = data.study.transients.event("Start-up")
    ev = next(x for x in data.train.transients if x.name == "Start-up")
    low = min(e.crossings, key=lambda c: c.mode_hz)
    # closed form of the slip relation: n = (1 - f_n / (2 f_line)) n_sync
    assert fmt.rad_s_to_rpm(low.motor_speed) == pytest.approx((1 - low.mode_hz / 100.0) * 1500.0, rel=2e-3)
    assert (f"passes the lowest natural frequency, {low.mode_hz:.4g} Hz, at {transients._secs(low.time_s)} "
            f"({fmt.rpm(low.motor_speed)} rpm of the motor)") in text
    ctx = Ctx(data, 515.0, 760.0, Units("SI"))
    assert transients.is_start_up(e, ev)
    d = transients.speed_drawing(ctx, e, ev, 515, 125)
    texts = [t for *_, t in campbell.label_boxes(d)]
    assert any(f"{low.mode_hz:.4g} Hz at {transients._secs(low.time_s)}" in t for t in texts)
    marks = [c for c in d.contents if isinstance(c, Line) and c.strokeColor == FAIL_INK]
    assert len(marks) == 1
    for x0, y0, x1, y1, t in campbell.label_boxes(d):
        assert x0 >= -0.5 and x1 <= d.width + 0.5, t
    # the short circuit is not a start-up: no speed plot
    sc = data.study.transients.event("Two-phase terminal short circuit")
    assert not transients.is_start_up(sc, next(x for x in data.train.transients if x.name == sc.name))


def test_torque_plot_of_the_most_loaded_links(sheet):
    data, _ = sheet
    ctx = Ctx(data, 515.0, 760.0, Units("SI"))
    for e in data.study.transients.events:
        d = transients.torque_drawing(ctx, e, 515, 165)
        curves = [c for c in d.contents if isinstance(c, PolyLine)]
        assert len(curves) == min(4, len(e.links))
        chosen = transients.most_loaded(e)
        texts = " ".join(t for *_, t in campbell.label_boxes(d))
        for lt in chosen:
            assert data.train.name_of(lt.link_id) in texts
        # nearest its limit first
        ratios = [lt.peak_torque / lt.permissible_peak for lt in chosen]
        assert ratios == sorted(ratios, reverse=True)
        x0, y0, x1, y1 = d.getBounds()
        assert x0 >= -0.5 and y0 >= -0.5 and x1 <= d.width + 0.5 and y1 <= d.height + 0.5
        # a thinned trace: no more vertices than a few per point of width
        assert all(len(c.points) <= 8 * 515 for c in curves)


def test_method_cites_the_time_integration_and_fatigue_sources(sheet):
    _, text = sheet
    for source in ("Newmark", "ASTM E1049", "Miner", "Concordia"):
        assert source in text.split("Sources")[-1], source
    assert "are not analysed: the project names none" not in text
    assert "from memory" not in text and "no source" not in text
