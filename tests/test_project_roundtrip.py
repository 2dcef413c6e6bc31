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


def test_saves_keep_three_numbered_backups_and_write_atomically(tmp_path):
    """NAME.json.bak1 is the version just replaced, bak3 the oldest kept (issue 10, item 3)."""
    p = tmp_path / "p.json"
    doc = json.loads(SAMPLES[0].read_text())
    versions = []
    for i in range(5):
        doc["title"] = f"version {i}"
        save_document(p, doc)
        versions.append(p.read_text())
    assert load_document(p)["title"] == "version 4"
    for n, back in ((1, 3), (2, 2), (3, 1)):
        assert (tmp_path / f"p.json.bak{n}").read_text() == versions[back]
    # no temporary file left, no fourth backup
    assert sorted(x.name for x in tmp_path.iterdir()) == ["p.json", "p.json.bak1", "p.json.bak2", "p.json.bak3"]


def test_an_old_single_backup_is_left_alone(tmp_path):
    p = tmp_path / "p.json"
    (tmp_path / "p.json.bak").write_text("kept by an earlier version")
    save_document(p, {"title": "a"})
    save_document(p, {"title": "b"})
    assert (tmp_path / "p.json.bak").read_text() == "kept by an earlier version"


@pytest.mark.skipif(not hasattr(__import__("os"), "getuid"), reason="POSIX permission bits")
def test_a_saved_file_keeps_the_permissions_of_the_file_it_replaces(tmp_path):
    import os
    import stat
    p = tmp_path / "shared.json"
    save_document(p, {"title": "a"})
    os.chmod(p, 0o664)
    save_document(p, {"title": "b"})
    assert stat.S_IMODE(os.stat(p).st_mode) == 0o664  # was 0600 whatever the file had
    os.chmod(p, 0o640)
    save_document(p, {"title": "c"})
    assert stat.S_IMODE(os.stat(p).st_mode) == 0o640


@pytest.mark.skipif(not hasattr(__import__("os"), "getuid"), reason="POSIX permission bits")
def test_a_new_file_gets_the_ordinary_default_mode(tmp_path):
    import os
    import stat
    old = os.umask(0o027)
    try:
        save_document(tmp_path / "new.json", {"title": "a"})
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(tmp_path / "new.json").st_mode) == 0o640  # 0666 less the umask


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
