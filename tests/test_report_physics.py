"""Review sheet: excitation physics (issue 13) — engine inputs and harmonics, electric-drive
lines drawn and listed as the lines they are, gear meshes by their teeth, damped natural
frequencies and dampers.

Outside references: the crank–slider piston travel x = r (1 - cos t) + l (1 - sqrt(1 -
(r/l)^2 sin^2 t)) and the indicated work as the loop integral of p dV (any engine text, e.g.
Heywood, Internal Combustion Engine Fundamentals, ch. 2 — from memory); the phase sum of an
evenly firing in-line six (|sum exp(-i n phi)| = 6 at multiples of 3, 0 otherwise, by
counting); mesh and hunting-tooth frequencies by hand; the damped two-disc closed form
(Thomson, Theory of Vibration with Applications, damped free vibration — from memory);
Den Hartog's untuned viscous damper optimum (Mechanical Vibrations, ch. 3 — from memory).
"""
from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pytest
from pypdf import PdfReader
from reportlab.graphics.shapes import Circle, Rect

from app import formatting as fmt
from app.report import campbell, charts, physics, write_sheet
from app.report.base import Ctx, Units
from app.report.sheet import compute
from app.report.tables import LongTable
from core import units as u
from core.project import load_document

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))
SAMPLE = {p.stem: p for p in SAMPLES}
TWO_PI = 2 * math.pi


def squash(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


def sheet_text(path) -> str:
    return squash("\n".join(p.extract_text() or "" for p in PdfReader(str(path)).pages))


@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    folder = tmp_path_factory.mktemp("phys_sheets")
    out = {}
    for stem in ("engine_genset", "compressor_train", "twin_pump_gearbox"):
        pdf = folder / f"{stem}.pdf"
        data = write_sheet(load_document(SAMPLE[stem]), SAMPLE[stem], pdf)
        out[stem] = (data, sheet_text(pdf))
    return out


def ctx_for(data, system="SI") -> Ctx:
    return Ctx(data, 515.0, 760.0, Units(system))


# ----------------------------------------------------------------- engines
def test_engine_inputs_and_indicated_pressure(sheets):
    data, text = sheets["engine_genset"]
    part = text.split("Engine: Engine gas and inertia torque")[1].split("Natural frequencies")[0]
    assert "6-cylinder in-line 4-stroke" in part
    assert "160 mm, 190 mm" in part and "380 mm" in part and "6 kg" in part
    assert "cylinder pressure curve" in part
    assert "major orders 3, 6, 9, 12" in part  # an in-line six four-stroke: multiples of z / 2 = 3
    # firing angles per cylinder, firing order 1-5-3-6-2-4 every 120 deg over 720 deg (by counting)
    firing = {"1": 0, "5": 120, "3": 240, "6": 360, "2": 480, "4": 600}
    for cyl, deg in firing.items():
        assert f"{cyl} Crank throw {cyl} {deg}" in part, cyl
    # indicated mean pressure = loop integral of p dV / swept volume, from the project's own points
    eng = load_document(SAMPLE["engine_genset"])["excitations"][0]["engine"]
    pts = np.array(eng["pressure_curve"]["points"], float)
    r, l, bore = 0.095, 0.380, 0.160
    theta = np.radians(pts[:, 0])
    x = r * (1 - np.cos(theta)) + l * (1 - np.sqrt(1 - (r / l * np.sin(theta)) ** 2))
    area = math.pi * bore ** 2 / 4
    p = pts[:, 1] * 1e5  # bar
    p_c, x_c = np.r_[p, p[0]], np.r_[x, x[0]]  # closed loop
    work = np.sum(0.5 * (p_c[1:] + p_c[:-1]) * np.diff(x_c)) * area
    imep_bar = work / (area * 2 * r) / 1e5
    shown = float(re.search(r"Indicated mean pressure ([\d.]+) bar", part).group(1))
    assert shown == pytest.approx(imep_bar, rel=5e-3)  # trapezoid on the points against the resampled curve


def test_engine_harmonics_vector_sum(sheets):
    data, _ = sheets["engine_genset"]
    flow = physics.engine_block(ctx_for(data))
    t = [f for f in flow if isinstance(f, LongTable)][-1]
    sp = data.train.operating.excitations[0].engine
    op = data.train.operating
    w = op.speed_max * data.train.relative_speed(sp.cylinders[0].disc, op.reference)
    U = Units("SI")
    for row, n, g, m in zip(t.text_rows(), sp.orders, sp.gas, sp.inertia):
        assert row[0] == fmt.order(n)
        if n % 3 == 0:  # every cylinder in phase: six times one cylinder's gas plus inertia torque
            assert row[4] == U.value(6 * abs(g * sp.load_fraction + m * w ** 2), u.TORQUE, 3)
            assert row[5] == "major"
        else:  # the other orders cancel over an evenly firing six
            assert row[4] == "0"
    # the pressure plot reaches the highest pressure of the curve
    plots = [c for f in flow if hasattr(f, "_cellvalues") for c in f._cellvalues[0]]
    dwg = next(c for c in plots if hasattr(c, "contents"))
    eng = load_document(SAMPLE["engine_genset"])["excitations"][0]["engine"]
    top = max(p for _, p in eng["pressure_curve"]["points"])  # bar
    axis = next(c for c in dwg.contents if c.__class__.__name__ == "YValueAxis")
    assert axis.valueMax >= top
    x0, y0, x1, y1 = dwg.getBounds()
    assert x0 >= -0.5 and y0 >= -0.5 and x1 <= dwg.width + 0.5 and y1 <= dwg.height + 0.5


# ----------------------------------------------------------------- electric drives
def test_line_segments_follow_the_formula():
    s = compute(load_document(SAMPLE["compressor_train"]), SAMPLE["compressor_train"]).screening
    v_lines = [l for l in s.lines if l.kind == "line"]
    assert v_lines
    for line in v_lines:
        segs = charts.line_segments(line, 2200.0, 500.0)
        for xa, ya, xb, yb in segs:
            for x, y in ((xa, ya), (xb, yb)):
                # f = |a - b N| with N in rev/s of the motor (the reference shaft here): by hand
                assert y == pytest.approx(abs(line.offset_hz + line.slope * x * TWO_PI / 60.0), abs=1e-9)
                assert 0.0 <= y <= 500.0 + 1e-9 and 0.0 <= x <= 2200.0 + 1e-9
        # the V's vertex, where a = b N, is a knot
        vertex = -line.offset_hz / (line.slope * TWO_PI / 60.0)
        assert any(abs(xb - vertex) < 1e-6 for _, _, xb, _ in segs)


def test_lines_drawn_labelled_and_listed(sheets):
    data, text = sheets["compressor_train"]
    s = data.screening
    for line in (l for l in s.lines if l.kind == "line"):
        assert squash(line.formula) in text  # the coincidence table and the legend name the line by its formula
    assert "N = speed of 'Motor rotor' in rev/s" in text
    tops = campbell.panel_tops(s)
    d = campbell.campbell_drawing(s, 515, 250, tops[-1], title="Detail", with_legend=False)
    labels = [t for *_, t in campbell.label_boxes(d)]
    assert "|300 Hz − 12.0968·N|" in labels and "|600 Hz − 24.1935·N|" in labels
    # both crossings of the V-shaped line |300 Hz - 12.0968 N| with mode 1 are marked, at the
    # reference speeds N = (a -+ f_n) / b, rev/s -> rpm (closed form)
    frame = next(c for c in d.contents if isinstance(c, Rect) and c.fillColor is None and c.strokeWidth == 0.6)
    op = data.train.operating
    x_max = fmt.rad_s_to_rpm(max(op.speed_max, op.trip_speed or 0.0)) * 1.12
    line = next(l for l in s.lines if l.kind == "line" and l.offset_hz == 300.0)
    b = -line.slope * TWO_PI / 60.0  # Hz per rpm
    f1 = float(s.modes.frequency_hz[1])
    circles = [c for c in d.contents if isinstance(c, Circle)]
    for rpm in ((300.0 - f1) / b, (300.0 + f1) / b):
        x = frame.x + frame.width * rpm / x_max
        assert any(abs(c.cx - x) < 0.05 for c in circles), rpm


# ----------------------------------------------------------------- gears
def test_gear_meshes_by_their_teeth(sheets):
    data, text = sheets["twin_pump_gearbox"]
    part = text.split("Gear meshes")[1].split("Natural frequencies")[0]
    assert "98 on 'Bull gear', 40 on 'Pinion A': ratio 98/40 = 2.45" in part
    # gcd(98, 40) = 2 assembly phases; hunting tooth 2 / 40 = 0.05 per revolution of the bull gear
    assert "0.05 per revolution of 'Bull gear' (2 assembly phases)" in part
    # at 1490 rpm of the motor (the bull gear turns with it): mesh 98 x 1490 / 60 = 2434 Hz, hunting 1.242 Hz
    assert "mesh 2434 Hz" in part and "hunting tooth 1.242 Hz" in part
    # stiffness referred to the 'from' shaft; on the pinion's shaft k / 2.45^2 = 3.1e8 / 6.0025 N*m/rad
    assert "310000 kN·m/rad referred to the shaft of 'Bull gear'" in part
    assert "51650 kN·m/rad on the shaft of 'Pinion A'" in part and 3.1e8 / 2.45 ** 2 / 1e3 == pytest.approx(51645, abs=1)
    assert "on the shaft of 'Pinion A' it is 0.4082 times that" in part  # 1 / 2.45
    assert "rigid: the gears on 'Bull gear' and 'Pinion B'" in part


# ----------------------------------------------------------------- damped modes and dampers
def two_disc(c: float) -> dict:
    return {"title": "Two discs, viscous coupling",
            "discs": [{"id": "a", "name": "Drive", "inertia": "2 kg*m^2"}, {"id": "b", "name": "Load", "inertia": "1 kg*m^2"}],
            "links": [{"id": "k", "kind": "coupling", "from": "a", "to": "b", "stiffness": "100 kN*m/rad",
                       "damping": f"{c} N*m*s/rad"}]}


def test_damped_frequency_and_ratio_of_two_discs(tmp_path):
    out = tmp_path / "d.pdf"
    write_sheet(two_disc(20.0), None, out)
    text = sheet_text(out)
    # closed form: J = J1 J2 / (J1 + J2), w_n = sqrt(k / J), zeta = c / (2 J w_n), f_d = w_n sqrt(1 - zeta^2) / 2 pi
    J = 2.0 / 3.0
    wn = math.sqrt(1e5 / J)
    zeta = 20.0 / (2 * J * wn)
    row = f"1 {fmt.hz(wn * math.sqrt(1 - zeta ** 2) / TWO_PI)} {fmt.hz(wn / TWO_PI)} {fmt.percent(zeta)}"
    assert "Damped natural frequencies" in text and row in text


def ring_doc() -> dict:
    return {"title": "Housing and ring",
            "discs": [{"id": "housing", "name": "Damper housing", "inertia": "0.5 kg*m^2"},
                      {"id": "ring", "name": "Inertia ring", "inertia": "0.1 kg*m^2"}],
            "links": [{"id": "shaft", "kind": "shaft", "from": "housing", "to": "ground", "stiffness": "200 kN*m/rad"},
                      {"id": "fluid", "name": "Silicone film", "kind": "coupling", "from": "housing", "to": "ring",
                       "damping": "30 N*m*s/rad"}]}


def test_damper_free_locked_and_den_hartog_optimum(tmp_path):
    out = tmp_path / "ring.pdf"
    write_sheet(ring_doc(), None, out)
    text = sheet_text(out)
    from core.damped import DAMPER_STATEMENT
    assert squash(DAMPER_STATEMENT) in text
    # free: the housing alone sqrt(k / J_h); locked: sqrt(k / (J_h + J_r)) (closed forms)
    free, locked = math.sqrt(2e5 / 0.5) / TWO_PI, math.sqrt(2e5 / 0.6) / TWO_PI
    assert f"1 {fmt.hz(free)} {fmt.hz(locked)}" in text
    # untuned viscous damper: mu = J_r / J_h = 0.2, (c/c_c)^2 = 1 / (2 (1 + mu)(2 + mu)), c_c = 2 J_r w_n,
    # peak magnifier 1 + 2 / mu = 11 (Den Hartog)
    mu, wn = 0.2, math.sqrt(2e5 / 0.5)
    c_opt = 2 * 0.1 * wn / math.sqrt(2 * (1 + mu) * (2 + mu))
    assert "Damper 'Silicone film' (ring 'Inertia ring' on 'Damper housing')" in text
    assert squash(f"damping {Units('SI').text(c_opt, u.DAMPING)} (modelled 30 N·m·s/rad)") in text
    assert "1 + 2 / mu = 11" in text and "inertia ratio mu = 0.2" in text
    assert "Den Hartog" in text and "confirm the edition" in text


def test_us_units_in_the_physics_sections(tmp_path):
    out = tmp_path / "us.pdf"
    write_sheet(load_document(SAMPLE["engine_genset"]), SAMPLE["engine_genset"], out, unit_system="US")
    text = sheet_text(out)
    part = text.split("Engine: Engine gas and inertia torque")[1].split("Mode shapes")[0]
    for si in ("mm", "bar", "kN·m", "kg·m²", "N·m·s/rad", " kg"):
        assert si not in part, si
    # bore 160 mm = 160 / 25.4 in = 6.299 in (exact inch)
    assert "6.299 in" in part and "psi" in part and "lbf·ft" in part
