"""Review sheet (issue 5): what the PDF says, its structure and its failure modes.

The values checked come from core itself (natural frequencies, crossing
speeds) and from `twistwise check` (the verdict sentence), formatted as they
are on screen; the SHA-256 is checked against Python's hashlib.  The PDF is
read back with pypdf, an independent reader.
"""
from __future__ import annotations

import copy
import hashlib
import json
import re
from pathlib import Path

import pytest
from pypdf import PdfReader

from app import formatting as fmt
from app.cli import CAUTION, main
from app.report import write_review_sheet
from core.project import build_train, dump_document, load_document
from core.screening import screen

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))


def squash(text: str) -> str:
    """Whitespace-normalised text (the sheet wraps long sentences over lines)."""
    return re.sub(r"\s+", " ", text).strip()


def pdf_pages(path) -> list[str]:
    return [p.extract_text() or "" for p in PdfReader(str(path)).pages]


def tokens(text: str) -> set[str]:
    return set(re.split(r"[\s()]+", text))


def run(argv, capsys):
    code = main(argv)
    out = capsys.readouterr()
    return code, out.out, out.err


def long_chain_doc(n: int = 200) -> dict:
    """An invented 200-disc chain with a coupling every tenth link."""
    discs = [{"id": f"d{i:03d}", "name": f"Rotor station {i}", "inertia": f"{1.0 + (i % 7) * 0.6:.2f} kg*m^2"}
             for i in range(n)]
    links = [{"id": f"s{i:03d}", "kind": "coupling" if i % 10 == 0 else "shaft", "from": f"d{i:03d}",
              "to": f"d{i + 1:03d}", "stiffness": "2 MN*m/rad"} for i in range(n - 1)]
    return {"format": "twistwise-project", "version": 1, "title": "Long test chain, 200 discs",
            "discs": discs, "links": links, "reference": "d000",
            "operating_speed": {"min": "1000 rpm", "max": "3000 rpm"}, "margin_percent": 10,
            "excitations": [{"name": "Once and twice per rev", "at": "d000", "orders": [1, 2]}]}


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.stem)
def test_sheet_states_title_verdict_frequencies_crossings_and_caution(sample, tmp_path, capsys):
    out = tmp_path / "sheet.pdf"
    code, stdout, err = run(["report", str(sample), "-o", str(out), "--author", "A. Reviewer",
                             "--revision", "C"], capsys)
    assert out.exists(), err
    train = build_train(load_document(sample))
    s = screen(train)
    from core.study import run_study
    # the exit code follows the review's verdict: separation, or the acceptance argument where
    # some mode cannot clear (issue 12 item 2); a sample whose every mode clears passes
    assert code == (0 if run_study(train).passed else 1)
    if s.passed:
        assert code == 0
    pages = pdf_pages(out)
    text = "\n".join(pages)
    flat = squash(text)
    toks = tokens(text)
    assert squash(train.title) in flat
    assert "A. Reviewer" in flat and "C" in toks
    # the verdict exactly as `twistwise check` words it
    _, check_out, _ = run(["check", str(sample)], capsys)
    verdict = next(l for l in check_out.splitlines() if l.startswith("Verdict: "))
    assert squash(verdict[len("Verdict: "):]) in flat
    # every natural frequency screened and every crossing speed, formatted as on screen
    for i in range(len(s.modes)):
        if s.modes.elastic[i] and s.modes.frequency_hz[i] <= s.cap_hz:
            assert fmt.hz(s.modes.frequency_hz[i]) in toks, fmt.hz(s.modes.frequency_hz[i])
    for c in s.coincidences:
        assert fmt.rpm(c.crossing_speed) in toks
        assert fmt.percent(c.separation) in toks
    # the caution and the page count on every page
    for k, page in enumerate(pages, start=1):
        assert squash(CAUTION) in squash(page), f"page {k} lacks the caution"
        assert f"page {k} of {len(pages)}" in page
    # traceability: SHA-256 of the project file as saved (checked with hashlib)
    assert hashlib.sha256(sample.read_bytes()).hexdigest() in flat
    assert sample.name in flat


def test_sheet_lists_every_mode_of_the_frequency_table(tmp_path):
    # the table shows the same mode set as `twistwise solve`, every row with Hz and cpm
    sample = SAMPLES[0]
    doc = load_document(sample)
    out = tmp_path / "s.pdf"
    write_review_sheet(doc, sample, out)
    from app.report.sheet import compute
    data = compute(doc, sample)
    toks = tokens("\n".join(pdf_pages(out)))
    for f in data.modes.frequency_hz:
        assert fmt.hz(f) in toks and fmt.cpm(f) in toks


def test_200_disc_train_makes_a_multipage_sheet_with_repeated_headers(tmp_path):
    doc = long_chain_doc()
    out = tmp_path / "long.pdf"
    s = write_review_sheet(doc, None, out)
    reader = PdfReader(str(out))
    assert len(reader.pages) >= 6
    pages = [p.extract_text() for p in reader.pages]
    # each long table continues on further pages under its repeated header row
    for header in ("Largest kinetic energy (disc, share)",  # natural frequencies
                   "Geometry: length",                       # model, links
                   "Band inside the"):                       # coincidences
        assert sum(header in squash(p) for p in pages) >= 2, header
    toks = tokens("\n".join(pages))
    for i in range(len(s.modes)):
        if s.modes.elastic[i] and s.modes.frequency_hz[i] <= s.cap_hz:
            assert fmt.hz(s.modes.frequency_hz[i]) in toks
    for c in s.coincidences:
        assert fmt.rpm(c.crossing_speed) in toks
    # every disc id appears (schematic bands and model table)
    assert all(f"d{i:03d}" in toks for i in range(200))
    for k, p in enumerate(pages, start=1):
        assert f"page {k} of {len(pages)}" in p


def test_fonts_are_embedded(tmp_path):
    out = tmp_path / "f.pdf"
    write_review_sheet(load_document(SAMPLES[0]), SAMPLES[0], out)
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


@pytest.mark.parametrize("mutate, field", [
    (lambda d: d["discs"][0].__setitem__("inertia", "heavy kg*m^2"), "inertia"),
    (lambda d: d["links"][0].__setitem__("stiffness", "12 kg"), "stiffness"),
    (lambda d: d["links"][0].__setitem__("to", "nowhere"), "to"),
])
def test_bad_input_exits_2_and_writes_nothing(mutate, field, tmp_path, capsys):
    doc = load_document(SAMPLES[0])
    mutate(doc)
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(doc), encoding="utf-8")
    out = tmp_path / "sheet.pdf"
    code, _, err = run(["report", str(bad), "-o", str(out)], capsys)
    assert code == 2
    assert not out.exists()
    assert list(tmp_path.iterdir()) == [bad]  # no temporary file left behind either
    line = err.strip()
    assert "\n" not in line and f"field '{field}'" in line and "Traceback" not in line


def test_bad_input_keeps_an_existing_sheet(tmp_path, capsys):
    out = tmp_path / "sheet.pdf"
    out.write_bytes(b"previous sheet")
    bad = tmp_path / "bad.json"
    bad.write_text("{ not json", encoding="utf-8")
    code, _, err = run(["report", str(bad), "-o", str(out)], capsys)
    assert code == 2 and "file" in err
    assert out.read_bytes() == b"previous sheet"


def test_missing_output_folder_and_missing_file_exit_2(tmp_path, capsys):
    code, _, err = run(["report", str(SAMPLES[0]), "-o", str(tmp_path / "no" / "such" / "x.pdf")], capsys)
    assert code == 2 and "--output" in err
    code, _, err = run(["report", str(tmp_path / "missing.json"), "-o", str(tmp_path / "x.pdf")], capsys)
    assert code == 2 and "not found" in err
    assert not (tmp_path / "x.pdf").exists()


def test_sheet_never_overwrites_the_project_file(tmp_path, capsys):
    proj = tmp_path / "p.json"
    proj.write_bytes(SAMPLES[0].read_bytes())
    code, _, err = run(["report", str(proj), "-o", str(proj)], capsys)
    assert code == 2
    assert proj.read_bytes() == SAMPLES[0].read_bytes()


def test_unsaved_document_hashes_the_serialized_document(tmp_path):
    doc = load_document(SAMPLES[0])
    out = tmp_path / "u.pdf"
    s = write_review_sheet(doc, None, out)
    assert s is not None and s.verdict in ("pass", "fail")
    flat = squash("\n".join(pdf_pages(out)))
    assert hashlib.sha256(dump_document(doc).encode("utf-8")).hexdigest() in flat
    assert "unsaved" in flat


def test_edited_document_is_not_passed_off_as_the_saved_file(tmp_path):
    doc = load_document(SAMPLES[0])
    edited = copy.deepcopy(doc)
    edited["title"] = "Edited in the program"
    out = tmp_path / "e.pdf"
    write_review_sheet(edited, SAMPLES[0], out)
    flat = squash("\n".join(pdf_pages(out)))
    assert hashlib.sha256(SAMPLES[0].read_bytes()).hexdigest() not in flat
    assert hashlib.sha256(dump_document(edited).encode("utf-8")).hexdigest() in flat
    assert "unsaved changes" in flat


def test_project_without_operating_data_gives_a_frequency_sheet(tmp_path, capsys):
    doc = load_document(SAMPLES[0])
    for key in ("reference", "operating_speed", "excitations", "margin_percent"):
        doc.pop(key, None)
    proj = tmp_path / "modes_only.json"
    proj.write_text(json.dumps(doc), encoding="utf-8")
    out = tmp_path / "m.pdf"
    code, _, _ = run(["report", str(proj), "-o", str(out)], capsys)
    assert code == 0
    flat = squash("\n".join(pdf_pages(out)))
    assert "NOT SCREENED" in flat and "Natural frequencies" in flat
    assert write_review_sheet(doc, proj, out) is None


def test_us_units_and_letter_paper(tmp_path, capsys):
    out = tmp_path / "us.pdf"
    code, _, _ = run(["report", str(SAMPLES[0]), "-o", str(out), "--units", "US", "--paper", "letter"], capsys)
    assert code in (0, 1)
    reader = PdfReader(str(out))
    box = reader.pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (612, 792)  # US letter, 8.5 x 11 in
    flat = squash("\n".join(p.extract_text() for p in reader.pages))
    assert "lb·ft²" in flat and "US customary" in flat


def test_forced_response_section_when_amplitudes_are_given(tmp_path, capsys):
    response = pytest.importorskip("core.response")
    doc = load_document(next(p for p in SAMPLES if p.stem == "engine_genset"))
    doc["excitations"].insert(0, {"name": "Firing, major orders", "at": "crank_1", "orders": [
        {"order": 3, "amplitude": "2.1 kN*m"}, {"order": 6, "amplitude": "0.9 kN*m"}]})
    for link in doc["links"]:
        if link["id"] == "flex_coupling":
            link["permissible_torque"] = "50 kN*m"
    proj = tmp_path / "amp.json"
    proj.write_text(json.dumps(doc), encoding="utf-8")
    out = tmp_path / "r.pdf"
    code, _, err = run(["report", str(proj), "-o", str(out)], capsys)
    assert out.exists(), err
    train = build_train(doc)
    assert response.has_amplitudes(train)
    summary = response.response_summary(response.forced_response(train))
    flat = squash("\n".join(pdf_pages(out)))
    assert "Forced response: peak vibratory torque and stress" in flat
    for peak in summary:
        assert peak.link_id in flat
        assert fmt.rpm(peak.speed_at_peak_torque) in flat
    exceeded = bool(response.exceedances(response.forced_response(train)))
    assert code == (1 if exceeded or not screen(train).passed else 0)


def test_branched_grounded_train_draws_every_disc(tmp_path):
    # an invented geared train: a 40-disc main line, three geared branches, a torsion bar to ground
    discs = [{"id": f"m{i:02d}", "inertia": f"{1 + i % 4} kg*m^2"} for i in range(40)]
    links = [{"id": f"ms{i}", "kind": "shaft", "from": f"m{i:02d}", "to": f"m{i + 1:02d}",
              "stiffness": "3 MN*m/rad"} for i in range(39)]
    links.append({"id": "torsion_bar", "kind": "shaft", "from": "m00", "to": "ground", "stiffness": "0.5 MN*m/rad"})
    for b, at in enumerate((8, 20, 33)):
        ids = [f"b{b}_{j}" for j in range(6)]
        discs += [{"id": i, "inertia": "0.5 kg*m^2"} for i in ids]
        links.append({"id": f"mesh{b}", "kind": "gear_mesh", "from": f"m{at:02d}", "to": ids[0],
                      "speed_ratio": 2.0 + b})
        links += [{"id": f"b{b}s{j}", "kind": "coupling" if j == 2 else "shaft", "from": ids[j],
                   "to": ids[j + 1], "stiffness": "1 MN*m/rad"} for j in range(5)]
    doc = {"format": "twistwise-project", "version": 1, "title": "Geared branches", "discs": discs,
           "links": links, "reference": "m00", "operating_speed": {"min": "1000 rpm", "max": "1500 rpm"},
           "excitations": [{"name": "Once per rev", "at": "m00", "orders": [1]}]}
    out = tmp_path / "b.pdf"
    write_review_sheet(doc, None, out)
    pages = pdf_pages(out)
    schematic = "\n".join(p for p in pages if "Train schematic" in p or "part " in p)
    toks = tokens(schematic)
    assert all(d["id"] in toks for d in discs)
