"""Review sheet: a train that uses every input the wave-2 sections show (a V engine from
tangential-pressure coefficients, a tuned rubber damper, a gear mesh from its teeth and gear
data, an electric line a + b N, a table load case, transient torques of four kinds) lays
out in both unit systems and on both papers, names what it shows and states no SI unit on a
US sheet."""
from __future__ import annotations

import re

import pytest
from pypdf import PdfReader

from app.report import write_sheet


def squash(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


def variety_doc() -> dict:
    """An invented V-four engine driving a generator through a geared stage, with a tuned rubber
    damper, an electric line, a table load case and three kinds of transient torque."""
    eng = {"strokes": 4, "layout": "V", "bank_angle_deg": 90, "bore": "120 mm", "stroke": "140 mm",
           "connecting_rod": "260 mm", "reciprocating_mass": "2.5 kg",
           "tangential_pressure": {"mean_indicated_pressure": "18 bar",
                                   "orders": [{"order": 0.5, "sin": "2 bar", "cos": "1 bar"},
                                              {"order": 1, "sin": "3 bar"}, {"order": 2, "sin": "2.5 bar"},
                                              {"order": 4, "cos": "1.2 bar"}]},
           "cylinders": [{"name": "A1", "at": "c1", "throw_deg": 0},
                         {"name": "B1", "at": "c1", "throw_deg": 0, "bank": "B"},
                         {"name": "A2", "at": "c2", "throw_deg": 180},
                         {"name": "B2", "at": "c2", "throw_deg": 180, "bank": "B"}],
           "firing_order": ["A1", "B1", "A2", "B2"]}
    return {"format": "twistwise-project", "version": 1, "title": "Variety test train",
            "discs": [{"id": "ring", "name": "Damper ring", "inertia": "0.08 kg*m^2"},
                      {"id": "c1", "name": "Throw 1", "inertia": "0.3 kg*m^2"},
                      {"id": "c2", "name": "Throw 2", "inertia": "0.3 kg*m^2"},
                      {"id": "fw", "name": "Flywheel", "inertia": "2 kg*m^2"},
                      {"id": "g1", "name": "Wheel", "inertia": "0.4 kg*m^2"},
                      {"id": "g2", "name": "Pinion", "inertia": "0.05 kg*m^2"},
                      {"id": "gen", "name": "Generator", "inertia": "1.5 kg*m^2"}],
            "links": [{"id": "tuned_damper", "name": "Tuned rubber damper", "kind": "coupling", "from": "c1",
                       "to": "ring", "stiffness": "40 kN*m/rad", "loss_factor": 0.3},
                      {"id": "k12", "kind": "shaft", "from": "c1", "to": "c2", "stiffness": "1.2 MN*m/rad"},
                      {"id": "k2f", "kind": "shaft", "from": "c2", "to": "fw", "stiffness": "1.5 MN*m/rad"},
                      {"id": "cpl", "name": "Flexible coupling", "kind": "coupling", "from": "fw", "to": "g1",
                       "stiffness": "60 kN*m/rad", "relative_damping": 0.8, "nominal_torque": "1.5 kN*m",
                       "maximum_torque": "4 kN*m", "permissible_torque": "0.6 kN*m"},
                      {"id": "mesh", "name": "Step-up mesh", "kind": "gear_mesh", "from": "g1", "to": "g2",
                       "teeth": [75, 29], "mesh_stiffness": {"c_gamma": "20 N/(mm*um)", "face_width": "40 mm",
                                                             "base_radius_from": "90 mm"}},
                      {"id": "gs", "name": "Generator shaft", "kind": "shaft", "from": "g2", "to": "gen",
                       "stiffness": "0.4 MN*m/rad", "permissible_torque": "0.8 kN*m"}],
            "reference": "fw", "operating_speed": {"min": "1200 rpm", "max": "1800 rpm", "trip": "1980 rpm"},
            "excitations": [{"name": "Engine", "engine": eng},
                            {"name": "Generator ripple", "at": "gen",
                             "lines": [{"frequency_offset": "50 Hz", "order": 2, "combination": "sum",
                                        "amplitude": "20 N*m"}]}],
            "load_cases": [{"name": "Rated", "law": "table", "table": [["0 rpm", "0.2 kN*m"], ["1200 rpm", "0.8 kN*m"],
                                                                       ["1800 rpm", "1.1 kN*m"]],
                            "driving": [{"at": "c1"}, {"at": "c2"}], "driven": [{"at": "gen"}]}],
            "transients": [{"name": "Load step", "duration": "0.6 s", "initial_speed": "1500 rpm",
                            "initial_state": "equilibrium",
                            "torques": [{"at": "c1", "label": "Engine torque", "table": [[0, "0.4 kN*m"]]},
                                        {"at": "gen", "label": "Rated load", "load_case": "Rated"},
                                        {"at": "gen", "label": "Sudden load", "ramp": {"start": "0.1 s", "rise": "20 ms",
                                                                                      "to": "-0.3 kN*m"}},
                                        {"at": "gen", "label": "Grid disturbance",
                                         "sinusoids": [{"amplitude": "0.2 kN*m", "frequency": "50 Hz",
                                                        "decay": "80 ms", "start": "0.3 s"}]}]}]}


@pytest.mark.parametrize("system, paper", [("SI", "a4"), ("US", "letter")])
def test_every_section_lays_out(system, paper, tmp_path):
    out = tmp_path / "v.pdf"
    data = write_sheet(variety_doc(), None, out, unit_system=system, paper=paper)
    pages = [squash(p.extract_text() or "") for p in PdfReader(str(out)).pages]
    text = " ".join(pages)
    for head in ("Engine: Engine", "Gear meshes", "Damped natural frequencies and dampers", "Peaks per speed band",
                 "Acceptance: load cases, limits and checks", "Checks, load case 'Rated'",
                 "Gear hammer: speed ranges where the teeth separate", "Transient event: Load step",
                 "Peak torque and fatigue", "Damper 'Tuned rubber damper'"):
        assert head in text, head
    assert "4-cylinder V 4-stroke, bank angle 90 deg" in text
    assert "f = 50 Hz + 2·N" in text and "f = 50 Hz + 2·N: f = 50 Hz + 2·N" not in text
    assert "step or ramp" in text and "decaying sinusoids" in text and "the load curve of load case 'Rated'" in text
    assert "modelled as loss factor eta = 0.3" in text
    for k, p in enumerate(pages, start=1):
        assert f"page {k} of {len(pages)}" in p
    if system == "US":
        text = text.replace("the bar reaches", "")
        for si in ("kg·m²", "kN·m", "N·m·s/rad", "MPa", "(mm)", " bar)", " bar ", "kW"):
            assert si not in text, si
    assert data.study.transients is not None and data.study.acceptance is not None


def test_every_font_of_the_new_sections_is_embedded(tmp_path):
    out = tmp_path / "f.pdf"
    write_sheet(variety_doc(), None, out)
    seen = 0
    for page in PdfReader(str(out)).pages:
        for name, ref in page["/Resources"]["/Font"].items():
            font = ref.get_object()
            if font["/Subtype"] == "/Type0":
                desc = font["/DescendantFonts"][0].get_object()["/FontDescriptor"].get_object()
            else:
                desc = font.get("/FontDescriptor", {})
            assert "/FontFile2" in desc, f"{name} ({font.get('/BaseFont')}) is not embedded"
            seen += 1
    assert seen
