"""Gear meshes by tooth counts and mesh stiffness (core.gears)."""
from __future__ import annotations

import math

import pytest

from core.errors import ModelError
from core.gears import mesh_info, mesh_sides
from core.project import build_train, load_train
from core.solver import natural_modes

TWO_PI = 2 * math.pi


def geared_doc(mesh):
    link = {"id": "mesh", "kind": "gear_mesh", "from": "wheel", "to": "pinion"}
    link.update(mesh)
    return {"discs": [{"id": "wheel", "inertia": "2.0 kg*m^2"}, {"id": "pinion", "inertia": "0.05 kg*m^2"}],
            "links": [link]}


def test_tooth_counts_give_ratio_mesh_and_hunting_tooth_frequencies():
    # by hand: 98 / 40 teeth -> ratio 2.45; at 1490 rpm of the wheel the mesh frequency is
    # 98 x 1490 / 60 = 2433.67 Hz (= 40 x 3650.5 / 60 on the pinion); gcd(98, 40) = 2, so a
    # tooth pair meets again every lcm = 1960 meshes: 2433.67 / 1960 = 1.24167 Hz.
    train = build_train(geared_doc({"teeth": [98, 40], "stiffness": "3.1e8 N*m/rad"}))
    link = train.links[0]
    assert link.speed_ratio == 2.45 and link.teeth == (98, 40)
    info = mesh_info(link)
    n = 1490 * TWO_PI / 60
    assert info.mesh_order_from == 98 and info.mesh_order_to == 40 and info.assembly_phases == 2
    assert info.mesh_frequency_hz(n) == pytest.approx(2433.6667, rel=1e-6)
    assert 40 * (n * 2.45) / TWO_PI == pytest.approx(info.mesh_frequency_hz(n), rel=1e-12)
    assert info.hunting_frequency_hz(n) == pytest.approx(2433.6667 / 1960, rel=1e-6)
    assert train.relative_speed("pinion", "wheel") == pytest.approx(2.45)


def test_sample_twin_pump_mesh_by_teeth_keeps_its_ratio():
    train = load_train("sample_projects/twin_pump_gearbox.json")
    mesh = next(l for l in train.links if l.id == "mesh_a")
    assert mesh.teeth == (98, 40) and mesh.speed_ratio == pytest.approx(2.45, rel=1e-15)


def test_a_speed_ratio_beside_the_teeth_must_agree():
    assert build_train(geared_doc({"teeth": [98, 40], "speed_ratio": 2.45})).links[0].speed_ratio == 2.45
    with pytest.raises(ModelError) as exc:
        build_train(geared_doc({"teeth": [98, 40], "speed_ratio": 2.5}))
    assert (exc.value.element, exc.value.field) == ("link 'mesh'", "speed_ratio")
    assert "98/40" in exc.value.message


@pytest.mark.parametrize("mesh, field", [
    ({"teeth": [98.5, 40]}, "teeth"),
    ({"teeth": [98]}, "teeth"),
    ({"teeth": [0, 40]}, "teeth"),
    ({}, "speed_ratio"),
    ({"teeth": [98, 40], "stiffness": "1e8 N*m/rad",
      "mesh_stiffness": {"c_gamma": "20 N/(mm*um)", "face_width": "80 mm", "base_radius_from": "184 mm"}},
     "mesh_stiffness"),
    ({"teeth": [98, 40], "mesh_stiffness": {"c_gamma": "20 N/(mm*um)", "face_width": "80 mm"}},
     "mesh_stiffness.base_radius_from"),
    ({"teeth": [98, 40], "mesh_stiffness": {"c_gamma": "20 bar*s", "face_width": "80 mm",
                                            "base_radius_to": "75 mm"}}, "mesh_stiffness.c_gamma"),
])
def test_bad_gear_input_names_the_link_and_field(mesh, field):
    with pytest.raises(ModelError) as exc:
        build_train(geared_doc(mesh))
    assert (exc.value.element, exc.value.field) == ("link 'mesh'", field), str(exc.value)


def test_mesh_stiffness_from_the_gear_rating_data_and_its_shaft():
    # k = c_gamma b r_b^2 (ISO 6336-1 mesh stiffness per face width, from memory), by hand:
    # 20 N/(mm um) = 2e10 N/m^2; 2e10 x 0.080 x 0.184^2 = 5.41696e7 N*m/rad on the wheel's shaft
    mesh = {"teeth": [98, 40], "mesh_stiffness": {"c_gamma": "20 N/(mm*um)", "face_width": "80 mm",
                                                 "base_radius_from": "184 mm"}}
    k = build_train(geared_doc(mesh)).links[0].stiffness
    assert k == pytest.approx(5.41696e7, rel=1e-12)
    # the pinion's base radius is 40/98 of the wheel's: the same stiffness
    mesh["mesh_stiffness"] = {"c_gamma": "20 N/(mm*um)", "face_width": "80 mm",
                              "base_radius_to": f"{184 * 40 / 98} mm"}
    assert build_train(geared_doc(mesh)).links[0].stiffness == pytest.approx(k, rel=1e-12)


def test_a_mesh_stiffness_is_referred_to_the_from_shaft_as_the_sheet_says():
    # two gears on a mesh spring: referred to the wheel's shaft the pinion's inertia is
    # J_p r^2, so omega^2 = k (1/J_w + 1/(J_p r^2)) with k on the wheel's shaft (closed form)
    k, r, Jw, Jp = 3.1e8, 2.45, 2.0, 0.05
    train = build_train(geared_doc({"teeth": [98, 40], "stiffness": k}))
    f = natural_modes(train, n_modes=1).frequency_hz[-1]
    assert f == pytest.approx(math.sqrt(k * (1 / Jw + 1 / (Jp * r * r))) / TWO_PI, rel=1e-12)
    words = " ".join(mesh_sides(train, train.links[0]))
    assert "referred to the shaft of 'wheel'" in words
    assert f"{k / r ** 2:.4g} N·m/rad" in words  # the same stiffness seen on the pinion's shaft
    assert "reported on the shaft of 'wheel'" in words
    assert "hunting-tooth" in words
