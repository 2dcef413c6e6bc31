"""Quantities with units at the edges (issue 2, item 4).

Conversion factors: NIST Special Publication 811, appendix B (1 lb = 0.45359237 kg,
1 ft = 0.3048 m, 1 in = 0.0254 m, 1 lbf = 4.4482216152605 N -- exact definitions).
"""
from __future__ import annotations

import math

import pytest

from core import units as u
from core.errors import ModelError

LB, FT, IN, LBF = 0.45359237, 0.3048, 0.0254, 4.4482216152605  # NIST SP 811


@pytest.mark.parametrize("text, kind, si", [
    ("18.5 kg*m^2", u.INERTIA, 18.5),
    ("120 lb*ft^2", u.INERTIA, 120 * LB * FT ** 2),
    ("45 mm", u.LENGTH, 0.045),
    ("2.1 MN*m/rad", u.STIFFNESS, 2.1e6),
    ("5e5 lbf*in/rad", u.STIFFNESS, 5e5 * LBF * IN),
    ("1480 rpm", u.SPEED, 1480 * 2 * math.pi / 60),
    ("25 Hz", u.SPEED, 25 * 2 * math.pi),  # a driveline engineer's Hz is a revolution per second
    ("1500 cpm", u.FREQUENCY, 25.0),
    ("80 GPa", u.MODULUS, 80e9),
    ("7850 kg/m^3", u.DENSITY, 7850.0),
    ("1.2 kN*m", u.TORQUE, 1200.0),
    ("40 MPa", u.STRESS, 40e6),
    (3.5, u.INERTIA, 3.5),  # a bare number is SI
    ("3.5", u.INERTIA, 3.5),
])
def test_parse_to_si(text, kind, si):
    assert u.parse(text, kind, "disc 'x'", "inertia") == pytest.approx(si, rel=1e-12)


def test_rpm_hz_and_rad_per_s_agree():
    assert u.parse("1500 rpm", u.SPEED) == pytest.approx(u.parse("25 Hz", u.SPEED), rel=1e-15)
    assert u.parse("157.07963267948966 rad/s", u.SPEED) == pytest.approx(u.parse("1500 rpm", u.SPEED))


@pytest.mark.parametrize("text, words", [
    ("14 N*m", "wrong kind of unit"),
    ("14 florps", "unknown unit"),
    ("nan kg*m^2", "not a finite number"),
    ("inf kg*m^2", "not a finite number"),
    ("", "empty"),
])
def test_bad_quantities_name_element_and_field(text, words):
    with pytest.raises(ModelError) as e:
        u.parse(text, u.INERTIA, "disc 'motor'", "inertia")
    assert e.value.element == "disc 'motor'" and e.value.field == "inertia"
    assert words in e.value.message
    assert str(e.value).startswith("disc 'motor', field 'inertia': ")


@pytest.mark.parametrize("value", [None, True, [1], {"a": 1}, float("nan"), float("inf")])
def test_bad_json_values(value):
    with pytest.raises(ModelError) as e:
        u.parse(value, u.STIFFNESS, "link 's'", "stiffness")
    assert e.value.field == "stiffness"


def test_check_text_for_gui_fields():
    assert u.check_text("2.1 MN*m/rad", u.STIFFNESS) is None
    assert "wrong kind" in u.check_text("2.1 mm", u.STIFFNESS)


def test_format_quantity_in_display_units():
    assert u.format_quantity(2.1e6, u.STIFFNESS, "kN*m/rad") == "2100 kN*m/rad"
    assert u.convert(u.parse("120 lb*ft^2", u.INERTIA), u.INERTIA, "lb*ft^2") == pytest.approx(120.0)
    for system in u.UNIT_SYSTEMS.values():  # every display unit converts from SI
        for name, unit in system.items():
            u.convert(1.0, u.KINDS[name], unit)


def test_parse_number_for_ratios():
    assert u.parse_number("0.25") == 0.25 and u.parse_number(4) == 4.0
    with pytest.raises(ModelError):
        u.parse_number("fast", "link 'mesh'", "speed_ratio")
