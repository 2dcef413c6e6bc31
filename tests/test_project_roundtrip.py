"""Project files: saving and reopening keeps every value, unit and unknown key (issue 2, item 6)."""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from core.errors import ModelError
from core.project import (build_train, dump_document, load_document, parse_document, save_document)

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = sorted((ROOT / "sample_projects").glob("*.json"))


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_save_and_reopen_keeps_everything(tmp_path, path):
    doc = load_document(path)
    doc["custom_note"] = {"by": "reviewer", "tags": ["a", "b"]}  # unknown keys at every level
    doc["discs"][0]["vendor_part"] = "RX-14"
    doc["links"][0]["x_extra"] = [1, "two", None]
    out = tmp_path / path.name
    save_document(out, doc)
    again = load_document(out)
    assert again == doc  # every value as typed, unit text included
    assert json.loads(out.read_text()) == doc
    # the model built from the reopened file is the same
    a, b = build_train(doc), build_train(again)
    assert a.discs == b.discs and a.links == b.links and a.operating == b.operating


def test_units_are_kept_as_typed(tmp_path):
    doc = {"format": "twistwise-project", "version": 1, "title": "units",
           "discs": [{"id": "a", "inertia": "120 lb*ft^2"}, {"id": "b", "inertia": 3.5}],
           "links": [{"id": "s", "kind": "shaft", "from": "a", "to": "b", "stiffness": "5e5 lbf*in/rad"}]}
    p = tmp_path / "u.json"
    save_document(p, doc)
    text = p.read_text()
    assert '"120 lb*ft^2"' in text and '"5e5 lbf*in/rad"' in text and "3.5" in text
    train = build_train(load_document(p))
    assert train.discs[0].inertia == pytest.approx(120 * 0.45359237 * 0.3048 ** 2, rel=1e-12)  # lb*ft^2 (NIST)
    assert train.links[0].stiffness == pytest.approx(5e5 * 4.4482216152605 * 0.0254, rel=1e-12)  # lbf*in (NIST)


def test_second_save_keeps_a_backup_and_writes_atomically(tmp_path):
    p = tmp_path / "p.json"
    doc = json.loads(SAMPLES[0].read_text())
    save_document(p, doc)
    first = p.read_text()
    doc["title"] = "changed"
    save_document(p, doc)
    assert (tmp_path / "p.json.bak").read_text() == first
    assert load_document(p)["title"] == "changed"
    assert sorted(x.name for x in tmp_path.iterdir()) == ["p.json", "p.json.bak"]  # no temp file left


def test_dump_is_readable_utf8():
    doc = {"format": "twistwise-project", "version": 1, "title": "Kühlwasserpumpe — Satz 2",
           "discs": [{"id": "a", "inertia": 1}], "links": []}
    text = dump_document(doc)
    assert "Kühlwasserpumpe" in text and text.endswith("\n")
    assert parse_document(text) == doc


def test_sample_projects_are_valid():
    for path in SAMPLES:
        train = build_train(load_document(path))
        assert train.discs and train.title


@pytest.mark.parametrize("text, field", [("{", None), ("[]", None), ('{"version": 2}', "version"),
                                         ('{"version": "1"}', "version"), ('{"format": "other"}', "format")])
def test_file_level_errors_name_the_file(text, field):
    with pytest.raises(ModelError) as e:
        parse_document(text)
    assert e.value.element == "file"
    assert e.value.field == field
