"""Electric-drive excitation lines f = a + b N and |a - b N| (core.electric, core.screening)."""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from core.electric import line_band, line_crossings
from core.errors import ModelError
from core.project import build_train
from core.response import crossing_speeds, excitation_harmonics, forced_response
from core.screening import pair_separation, screen

TWO_PI = 2 * math.pi
J1, J2, K = 2.0, 3.0, 4.0e5
# two free discs on a spring: f_n = sqrt(k (1/J1 + 1/J2)) / 2 pi (closed form)
F_N = math.sqrt(K * (1 / J1 + 1 / J2)) / TWO_PI


def two_disc_doc(exc, nmin="300 rpm", nmax="3000 rpm", ratio=None):
    links = [{"id": "spring", "kind": "coupling", "from": "motor", "to": "load", "stiffness": K}]
    discs = [{"id": "motor", "inertia": J1}, {"id": "load", "inertia": J2}]
    if ratio:  # the motor drives the reference shaft through a gear
        discs = [{"id": "ref", "inertia": 1e-3}] + discs
        links.append({"id": "gear", "kind": "gear_mesh", "from": "ref", "to": "motor", "speed_ratio": ratio})
    return {"discs": discs, "links": links, "reference": discs[0]["id"],
            "operating_speed": {"min": nmin, "max": nmax}, "margin_percent": 10, "excitations": exc}


def line_doc(a_hz, b, combination, **kw):
    return two_disc_doc([{"name": "Drive", "at": "motor",
                          "lines": [{"frequency_offset": f"{a_hz} Hz", "order": b, "combination": combination}]}],
                        **kw)


def test_crossings_of_a_difference_line_in_closed_form():
    # |a - b n| = f_n  ->  n = (a - f_n) / b  and  n = (a + f_n) / b  (rev/s), worked by hand
    a, b = 300.0, 12.0
    train = build_train(line_doc(a, b, "difference", nmin="60 rpm", nmax="3000 rpm"))
    s = screen(train)
    line = s.lines[0]
    assert line.kind == "line" and line.order is None
    expect = sorted([(a - F_N) / b * TWO_PI, (a + F_N) / b * TWO_PI])
    assert list(line_crossings(line.offset_hz, line.slope, F_N)) == pytest.approx(expect, rel=1e-14)
    mode1 = [c for c in s.all_pairs if c.mode == 1][0]
    assert mode1.separation == 0.0
    assert mode1.crossing_speed == pytest.approx(expect[0], rel=1e-14)  # the first inside the range
    # frequency(speed) is the line itself, vectorised
    n = np.linspace(0, 3000, 7) * TWO_PI / 60
    assert np.allclose(line.frequency(n), np.abs(a - b * n / TWO_PI), rtol=1e-14)


def test_separation_without_a_crossing_is_read_at_the_nearer_end_of_the_range():
    a, b = 300.0, 12.0
    lo, hi = 600.0, 900.0  # rpm: the line runs from 180 Hz down to 120 Hz, f_n is below
    train = build_train(line_doc(a, b, "difference", nmin=f"{lo} rpm", nmax=f"{hi} rpm"))
    assert F_N < a - b * hi / 60
    line = screen(train).lines[0]
    sep, worst, crossing, band = pair_separation(F_N, line, lo * TWO_PI / 60, hi * TWO_PI / 60, 0.1)
    fe = a - b * hi / 60
    assert sep == pytest.approx((fe - F_N) / fe, rel=1e-13)
    assert worst == pytest.approx(hi * TWO_PI / 60)
    assert crossing == pytest.approx((a - F_N) / b * TWO_PI, rel=1e-13)  # just above the range
    # band: |a - b n| between f_n / 1.1 and f_n / 0.9, the branch holding the worst speed (by hand)
    assert band == pytest.approx(((a - F_N / 0.9) / b * TWO_PI, (a - F_N / 1.1) / b * TWO_PI), rel=1e-13)


def test_bands_of_a_difference_line_lie_on_both_sides_of_its_vertex():
    a, s, f = 300.0, -2.0, 50.0
    bands = line_band(a, s, f, 0.1)
    # sampled independently: speeds where |f - f_e| < 0.1 f_e
    n = np.linspace(0, 400, 400001)
    fe = np.abs(a + s * n)
    inside = np.abs(f - fe) < 0.1 * fe
    edges = n[np.flatnonzero(np.diff(inside.astype(int)))]
    assert len(bands) == 2
    assert np.allclose(np.ravel(bands), edges, atol=2e-3)


def test_sum_line_through_a_gear_and_the_forced_response():
    # f = a + b n_motor; the motor turns 1.5 x the reference shaft
    a, b, ratio = 20.0, 2.0, 1.5
    doc = two_disc_doc([{"name": "Drive", "at": "motor",
                         "lines": [{"frequency_offset": f"{a} Hz", "order": b, "amplitude": "100 N*m"}]}],
                       ratio=ratio)
    train = build_train(doc)
    line = screen(train).lines[0]
    speeds = np.array([300.0, 900.0, 2000.0]) * TWO_PI / 60
    assert np.allclose(line.frequency(speeds), a + b * ratio * speeds / TWO_PI, rtol=1e-14)
    groups, harm = excitation_harmonics(train)
    assert groups[0].omega(speeds) == pytest.approx(TWO_PI * (a + b * ratio * speeds / TWO_PI), rel=1e-14)
    # crossing speeds for the default speed grid: n_ref = (f_n - a) / (b ratio)  (by hand)
    cross = crossing_speeds(train, groups, 1.0, 400.0)
    from core.solver import natural_modes
    fn = natural_modes(train, n_modes=3).frequency_hz[1:]
    expect = [(f - a) / (b * ratio) * TWO_PI for f in fn if 1.0 < (f - a) / (b * ratio) * TWO_PI < 400.0]
    assert list(cross) == pytest.approx(expect, rel=1e-12)
    resp = forced_response(train, speeds)
    assert np.all(np.isfinite(resp.link_torque)) and resp.order_frequency_hz[0] == pytest.approx(
        a + b * ratio * speeds / TWO_PI)


def test_difference_line_amplitude_in_a_one_degree_of_freedom_response():
    # a disc J on a spring k to ground, torque T at omega = 2 pi |a - b n|:
    # spring torque k T / |k - omega^2 J| (closed form)
    doc = {"discs": [{"id": "rotor", "inertia": 0.8}],
           "links": [{"id": "k", "kind": "shaft", "from": "rotor", "to": "ground", "stiffness": 3e5}],
           "reference": "rotor", "operating_speed": {"min": "100 rpm", "max": "3000 rpm"},
           "excitations": [{"name": "Drive", "at": "rotor", "electric_drive": {
               "pole_pairs": 2, "supply_frequency": "50 Hz",
               "interharmonics": [{"supply_harmonic": 6, "output_harmonic": 6, "combination": "difference",
                                   "amplitude": "250 N*m"}]}}]}
    train = build_train(doc)
    speeds = np.array([200.0, 1100.0, 1500.0, 2600.0]) * TWO_PI / 60
    w = TWO_PI * np.abs(300.0 - 12.0 * speeds / TWO_PI)
    resp = forced_response(train, speeds)
    expect = np.where(w > 0, 3e5 * 250 / np.abs(3e5 - w ** 2 * 0.8), 0.0)
    assert np.allclose(resp.link_torque[0], expect, rtol=1e-9)


def test_electric_drive_lines_from_pole_pairs_slip_and_harmonics():
    doc = line_doc(1, 1, "sum")
    doc["excitations"] = [{"name": "Inverter", "at": "motor", "electric_drive": {
        "pole_pairs": 2, "supply_frequency": "50 Hz", "slip": "1 %", "output_harmonics": [6, {"harmonic": 12}],
        "twice_electrical": True,
        "interharmonics": [{"supply_harmonic": 6, "output_harmonic": 6, "combination": "difference"},
                           {"supply_harmonic": 12, "output_harmonic": 6}]}}]
    lines = build_train(doc).operating.excitations[0].lines
    fout = 2 / 0.99  # output frequency per rev/s of the motor: p / (1 - s)
    got = [(l.offset_hz, l.order, l.combination) for l in lines]
    assert got == pytest.approx([(0.0, 6 * fout, "sum"), (0.0, 12 * fout, "sum"), (0.0, 2 * fout, "sum"),
                                 (300.0, 6 * fout, "difference"), (600.0, 6 * fout, "sum")])
    s = screen(build_train(doc))
    assert [l.kind for l in s.lines] == ["order", "order", "order", "line", "line"]
    assert s.lines[0].order == pytest.approx(6 * fout) and s.lines[3].order is None
    assert s.lines[3].source == "Inverter: |6 f_supply − 6 f_out|"
    assert s.cap_hz >= 600.0 + 6 * fout * 50  # the highest line reached at the top speed


@pytest.mark.parametrize("drive, element, field", [
    ({"supply_frequency": "50 Hz", "output_harmonics": [6]}, "excitation 'Inverter'", "electric_drive.pole_pairs"),
    ({"pole_pairs": 1.5, "output_harmonics": [6]}, "excitation 'Inverter'", "electric_drive.pole_pairs"),
    ({"pole_pairs": 2, "interharmonics": [{"supply_harmonic": 6, "output_harmonic": 6}]}, "excitation 'Inverter'",
     "electric_drive.supply_frequency"),
    ({"pole_pairs": 2, "supply_frequency": "50 Hz",
      "interharmonics": [{"supply_harmonic": 6, "output_harmonic": 6, "combination": "minus"}]},
     "excitation 'Inverter' interharmonic 1", "combination"),
    ({"pole_pairs": 2, "output_harmonics": [-6]}, "excitation 'Inverter' output harmonic 1", "harmonic"),
    ({"pole_pairs": 2, "slip": 0.7, "output_harmonics": [6]}, "excitation 'Inverter'", "electric_drive.slip"),
    ({"pole_pairs": 2}, "excitation 'Inverter'", "electric_drive"),
])
def test_bad_electric_drive_input_names_element_and_field(drive, element, field):
    doc = line_doc(1, 1, "sum")
    doc["excitations"] = [{"name": "Inverter", "at": "motor", "electric_drive": drive}]
    with pytest.raises(ModelError) as exc:
        build_train(doc)
    assert (exc.value.element, exc.value.field) == (element, field), str(exc.value)


@pytest.mark.parametrize("line, field", [
    ({"frequency_offset": "300 Hz", "order": -2}, "order"),
    ({"frequency_offset": "300 kg", "order": 2}, "frequency_offset"),
    ({"order": 0}, "order"),
    ({"frequency_offset": "30 Hz", "order": 2, "amplitude": "-4 N*m"}, "amplitude"),
])
def test_bad_line_input_names_the_line_and_field(line, field):
    doc = two_disc_doc([{"name": "Drive", "at": "motor", "lines": [line]}])
    with pytest.raises(ModelError) as exc:
        build_train(doc)
    assert exc.value.element == "excitation 'Drive' line 1" and exc.value.field == field
    doc["excitations"][0]["at"] = "nowhere"
    with pytest.raises(ModelError) as exc:
        build_train(doc)
    assert exc.value.field == "at"


def test_lines_round_trip_through_the_document(tmp_path):
    from core.project import load_document, save_document
    doc = line_doc(300, 12, "difference")
    save_document(tmp_path / "p.json", doc)
    again = load_document(tmp_path / "p.json")
    assert json.loads(json.dumps(again)) == doc
    assert build_train(again).operating.excitations[0].lines == build_train(doc).operating.excitations[0].lines


def test_a_line_without_offset_is_an_order_line():
    train = build_train(two_disc_doc([{"name": "Drive", "at": "motor", "lines": [
        {"frequency_offset": "0 Hz", "order": 12, "combination": "difference", "amplitude": "10 N*m"}]}]))
    line = screen(train).lines[0]
    assert line.kind == "order" and line.order == 12 and line.slope > 0
    groups, _ = excitation_harmonics(train)
    assert groups[0].order == 12 and groups[0].multiplier == 12
