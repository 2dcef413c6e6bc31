"""Random sequences of document edits through the commands the desktop program uses
(issue 10 item 10, first bullet): insert, delete, rename, value edits with valid and
invalid text, excitation and damping edits, undo, redo, save and reopen.

They never raise, undoing everything returns the original document exactly, and a
saved file reopens to the document that was saved.  A fixed small example budget.
"""
from __future__ import annotations

import copy
import os
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from app.gui import edits  # noqa: E402
from app.gui.document import Project  # noqa: E402
from app.gui.editors import NUMBER, TOLERANCE, stored_value  # noqa: E402
from core import units as u  # noqa: E402
from core.project import build_train, load_document, save_document  # noqa: E402

SAMPLES = sorted((Path(__file__).resolve().parent.parent / "sample_projects").glob("*.json"))

# text a user types into a field: good values, a bare number (read in the unit shown), and
# text that does not read (wrong unit, a word, empty -> the key removed, a decimal comma)
TEXTS = st.sampled_from(["12 kg*m^2", "3.5", "1 MN*m/rad", "80 kN*m/rad", "0", "-4", "2 kg", "abc", "",
                         "1,5 MN*m/rad", "1e308", "nan", "250 N*m"])
FIELDS = st.sampled_from([("discs", "inertia", u.INERTIA), ("discs", "damping", u.DAMPING),
                          ("discs", "name", "text"), ("links", "stiffness", u.STIFFNESS),
                          ("links", "speed_ratio", NUMBER), ("links", "name", "text"),
                          ("links", "permissible_torque", u.TORQUE), ("links", "stress_concentration", NUMBER),
                          ("operating_speed", "max", u.SPEED), ("margin_percent", None, NUMBER)])

steps = st.one_of(
    st.tuples(st.just("insert"), st.sampled_from(["shaft", "coupling", "gear_mesh"]), st.integers(0, 30)),
    st.tuples(st.just("delete"), st.integers(0, 30)),
    st.tuples(st.just("rename"), st.integers(0, 30), st.sampled_from(["a", "b", "motor", "ground", "x y"])),
    st.tuples(st.just("value"), FIELDS, st.integers(0, 30), TEXTS, st.sampled_from(["SI", "US"])),
    st.tuples(st.just("order"), st.integers(0, 5), st.integers(0, 5),
              st.sampled_from(["amplitude", "phase_deg", "scaling", "at_speed", "order"]), TEXTS),
    st.tuples(st.just("excitation"), st.sampled_from(["add", "remove", "fixed", "orders", "cylinder", "disc"]),
              st.integers(0, 5)),
    st.tuples(st.just("damping"), st.integers(0, 30),
              st.sampled_from([None, "loss_factor", "relative_damping", "dynamic_magnifier"])),
    st.tuples(st.just("undo")), st.tuples(st.just("redo")),
    st.tuples(st.just("save")),
    # the newer key families (tolerances, nested objects, excitation kinds, load cases, transients)
    st.tuples(st.just("tolerance"), st.sampled_from(["links", "discs"]), st.integers(0, 30),
              st.sampled_from(["20 %", "0.2", "-10 %, +25 %", "10 %, 25 %", "", "abc"])),
    st.tuples(st.just("nested"), st.integers(0, 30),
              st.sampled_from([("fatigue", "criterion"), ("fatigue", "temperature_factor"),
                               ("propulsion_shaft", "position"), ("mesh_stiffness", "c_gamma")]),
              st.sampled_from(["soderberg", "0.9", "intermediate", "20 N/(mm*um)", ""])),
    st.tuples(st.just("kind"), st.integers(0, 5), st.sampled_from(edits.EXCITATION_SOURCES)),
    st.tuples(st.just("list"), st.sampled_from(["load_cases", "transients", "design_options"]),
              st.sampled_from(["add", "remove"]), st.integers(0, 5)),
    st.tuples(st.just("rename_link"), st.integers(0, 30), st.sampled_from(["l1", "shaft_x", "coupling"])),
    st.tuples(st.just("teeth"), st.integers(0, 30), st.integers(0, 1), st.sampled_from([None, 40, 97, 12.5])),
)


def _pick(seq, i):
    return seq[i % len(seq)] if seq else None


def apply(project: Project, step, tmp: Path):
    doc = project.doc
    kind = step[0]
    if kind == "insert":
        ids = edits.disc_ids(doc) + edits.link_ids(doc)
        sel = _pick(ids, step[2])
        selection = None if sel is None else (("disc" if sel in edits.disc_ids(doc) else "link"), sel)
        new, _ = edits.insert_after(doc, selection, step[1])
        project.replace(new, "insert")
    elif kind == "delete":
        ids = [("disc", i) for i in edits.disc_ids(doc)] + [("link", i) for i in edits.link_ids(doc)]
        sel = _pick(ids, step[1])
        if sel is not None:
            new, changes = edits.delete_report(doc, sel)
            assert all(isinstance(c, str) and c for c in changes)
            project.replace(new, "delete")
    elif kind == "rename":
        old = _pick(edits.disc_ids(doc), step[1])
        new_id = step[2]
        if old is not None and new_id not in edits.disc_ids(doc) and new_id != "ground":
            project.replace(edits.rename_disc(doc, old, new_id), "rename")
    elif kind == "value":
        (where, key, vkind), i, text, system = step[1:]
        if where in ("discs", "links"):
            if not doc.get(where):
                return
            path = (where, i % len(doc[where]), key)
        elif where == "operating_speed":
            path = ("operating_speed", key)
        else:
            path = (where,)
        project.set_value(path, stored_value(text, vkind, system), "value")
    elif kind == "order":
        excs = [k for k, e in enumerate(doc.get("excitations") or []) if isinstance(e, dict)
                and isinstance(e.get("orders"), list) and e["orders"]]
        if excs:
            k = _pick(excs, step[1])
            j = step[2] % len(doc["excitations"][k]["orders"])
            key, text = step[3], step[4]
            value = ("speed_squared" if text else "constant") if key == "scaling" else stored_value(
                text, {"amplitude": u.TORQUE, "at_speed": u.SPEED}.get(key, NUMBER), "SI")
            project.replace(edits.set_order_value(doc, k, j, key, value), "order")
    elif kind == "excitation":
        what, i = step[1], step[2]
        excs = [k for k, e in enumerate(doc.get("excitations") or []) if isinstance(e, dict)]
        if what == "add":
            project.replace(edits.add_excitation(doc)[0], "add")
        elif excs:
            k = _pick(excs, i)
            new = {"remove": lambda: edits.remove_excitation(doc, k),
                   "fixed": lambda: edits.set_excitation_source(doc, k, "fixed"),
                   "orders": lambda: edits.set_excitation_source(doc, k, "orders"),
                   "cylinder": lambda: edits.add_cylinder(doc, k),
                   "disc": lambda: edits.set_excitation_disc(doc, k, _pick(edits.disc_ids(doc), i))}[what]()
            project.replace(new, what)
    elif kind == "damping":
        if doc.get("links"):
            li = step[1] % len(doc["links"])
            project.replace(edits.set_damping_key(doc, li, step[2]), "damping")
    elif kind == "tolerance":
        where, i, text = step[1:]
        if doc.get(where):
            key = "stiffness_tolerance" if where == "links" else "inertia_tolerance"
            project.set_value((where, i % len(doc[where]), key), stored_value(text, TOLERANCE, "SI"), "tolerance")
    elif kind == "nested":
        i, (outer, key), text = step[1:]
        if doc.get("links") and isinstance(doc["links"][i % len(doc["links"])], dict):
            li = i % len(doc["links"])
            if outer not in doc["links"][li] or isinstance(doc["links"][li][outer], dict):
                project.set_value(("links", li, outer, key), text or None, "nested")
    elif kind == "kind":
        excs = [k for k, e in enumerate(doc.get("excitations") or []) if isinstance(e, dict)]
        if excs:
            project.replace(edits.set_excitation_kind(doc, _pick(excs, step[1]), step[2]), "kind")
    elif kind == "list":
        key, what, i = step[1:]
        items = doc.get(key) if isinstance(doc.get(key), list) else []
        if what == "remove" and items:
            project.replace(edits.list_remove(doc, (key,), i % len(items)), "remove")
        elif what == "add":
            if key == "load_cases":
                from app.gui.loads_form import LoadCasesForm
                item = LoadCasesForm.new_entry(None, doc)
            elif key == "transients":
                from app.gui.transients_form import TransientsForm
                item = TransientsForm.new_entry(None, doc)
            else:
                item = _pick(edits.link_ids(doc) + edits.disc_ids(doc), i)
            if item is not None:
                project.replace(edits.list_append(doc, (key,), item), "add")
    elif kind == "rename_link":
        old = _pick(edits.link_ids(doc), step[1])
        if old is not None and step[2] not in edits.link_ids(doc):
            project.replace(edits.rename_link(doc, old, step[2]), "rename link")
    elif kind == "teeth":
        meshes = [k for k, l in enumerate(doc.get("links") or []) if isinstance(l, dict)
                  and l.get("kind") == "gear_mesh"]
        if meshes:
            project.replace(edits.set_gear_teeth(doc, _pick(meshes, step[1]), step[2], step[3]), "teeth")
    elif kind == "undo":
        project.undo_stack.undo()
    elif kind == "redo":
        project.undo_stack.redo()
    elif kind == "save":
        path = tmp / "saved.json"
        save_document(path, project.doc)
        again = load_document(path)
        assert again == project.doc  # a saved file reopens to the same document
        reopened = Project()
        reopened.set_document(again, path)
        assert reopened.doc == project.doc and (reopened.error is None) == (project.error is None)


@pytest.mark.parametrize("sample", [p for p in SAMPLES if p.stem in ("pump_set", "engine_genset",
                                                                     "sync_motor_compressor")],
                         ids=lambda p: p.stem)
@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(sequence=st.lists(steps, min_size=1, max_size=14))
def test_random_edit_sequences_never_raise_and_undo_all_restores_the_file(qapp, tmp_path, sample, sequence):
    original = load_document(sample)
    project = Project()
    project.set_document(copy.deepcopy(original), sample)
    for step in sequence:
        apply(project, step, tmp_path)
        # the project's state is consistent: either a model error or the model of this document
        if project.error is None:
            assert project.train is not None
            assert build_train(project.doc).discs == project.train.discs
    while project.undo_stack.canUndo():
        project.undo_stack.undo()
    assert project.doc == original
    while project.undo_stack.canRedo():
        project.undo_stack.redo()
