"""Structural edits of a project document (Qt-free, pure functions).

Each function takes the JSON document dict and returns a *new* dict (the
caller wraps it in an undo command), so the user's text, units and unknown
keys are carried over untouched.  The functions work on documents that do not
yet build (the user may be half-way through an edit).
"""
from __future__ import annotations

import copy

from core.model import GROUND

from ..schematic_layout import place_document

# What a newly inserted link starts with: a value an engineer would then overwrite.
NEW_LINK_DEFAULTS = {
    "shaft": {"stiffness": "1 MN*m/rad"},
    "coupling": {"stiffness": "100 kN*m/rad"},
    "gear_mesh": {"speed_ratio": 2.0},
}
NEW_DISC_INERTIA = "1 kg*m^2"


def disc_ids(doc: dict) -> list[str]:
    return [d.get("id") for d in doc.get("discs", []) if isinstance(d, dict)]


def link_ids(doc: dict) -> list[str]:
    return [l.get("id") for l in doc.get("links", []) if isinstance(l, dict)]


def unique_id(base: str, taken) -> str:
    """``base_1``, ``base_2`` ... the first not in ``taken``."""
    taken = set(taken)
    n = 1
    while f"{base}_{n}" in taken:
        n += 1
    return f"{base}_{n}"


def blank_document() -> dict:
    """A small starting train: two discs on a shaft, one speed and two orders."""
    return {
        "format": "twistwise-project", "version": 1, "title": "New train",
        "discs": [{"id": "driver", "name": "Driver", "inertia": "10 kg*m^2"},
                  {"id": "driven", "name": "Driven machine", "inertia": "5 kg*m^2"}],
        "links": [{"id": "shaft_1", "kind": "shaft", "from": "driver", "to": "driven",
                   "stiffness": "1 MN*m/rad"}],
        "reference": "driver",
        "operating_speed": {"min": "1500 rpm", "max": "1500 rpm"},
        "margin_percent": 10,
        "excitations": [{"name": "Driver once and twice per rev", "at": "driver", "orders": [1, 2]}],
    }


def _downstream_link(doc: dict, disc: str) -> int | None:
    """Index of the link leaving ``disc`` along its own row of the schematic (None at a line end)."""
    placement = place_document(doc)
    col, row = placement.column.get(disc), placement.row.get(disc)
    for i, l in enumerate(doc.get("links", [])):
        if not isinstance(l, dict) or disc not in (l.get("from"), l.get("to")):
            continue
        other = l.get("to") if l.get("from") == disc else l.get("from")
        if other == GROUND:
            continue
        if placement.column.get(other) == (col or 0) + 1 and placement.row.get(other) == row:
            return i
    return None


def insert_after(doc: dict, selection: tuple[str, str] | None, kind: str) -> tuple[dict, tuple[str, str]]:
    """Insert a new disc joined by a new link of ``kind`` after the selection.

    ``selection`` is ("disc", id), ("link", id) or None (append after the last
    disc).  After a disc in the middle of a line, the line's next link is moved
    to start at the new disc; after a link A->B, the link is split:
    the new link A->new comes first, then the selected link runs new->B.  Returns (new document, selection of the new disc).
    """
    if kind not in NEW_LINK_DEFAULTS:
        raise ValueError(kind)
    new = copy.deepcopy(doc)
    discs = new.setdefault("discs", [])
    links = new.setdefault("links", [])
    d_id = unique_id("disc", disc_ids(new))
    l_id = unique_id(kind, link_ids(new))
    sel_kind, sel_id = selection if selection else ("disc", None)
    ids = disc_ids(new)
    if sel_kind == "link" and sel_id in link_ids(new):
        li = link_ids(new).index(sel_id)
        old = links[li]
        a, b = old.get("from"), old.get("to")
        template = _disc_template(new, a if a != GROUND else b)
        old["from"] = d_id  # the selected link now runs new disc -> b
        disc_index = ids.index(a) + 1 if a in ids else len(discs)
        discs.insert(disc_index, {"id": d_id, "name": "New disc", "inertia": template})
        links.insert(li, {"id": l_id, "kind": kind, "from": a, "to": d_id, **NEW_LINK_DEFAULTS[kind]})
        return new, ("disc", d_id)
    anchor = sel_id if sel_id in ids else (ids[-1] if ids else None)
    if anchor is None:
        discs.append({"id": d_id, "name": "New disc", "inertia": NEW_DISC_INERTIA})
        return new, ("disc", d_id)
    nxt = _downstream_link(new, anchor)
    discs.insert(ids.index(anchor) + 1, {"id": d_id, "name": "New disc",
                                         "inertia": _disc_template(new, anchor)})
    link = {"id": l_id, "kind": kind, "from": anchor, "to": d_id, **NEW_LINK_DEFAULTS[kind]}
    if nxt is None:
        links.append(link)
    else:
        moved = links[nxt]
        end = "from" if moved.get("from") == anchor else "to"
        moved[end] = d_id
        links.insert(nxt, link)
    return new, ("disc", d_id)


def _disc_template(doc: dict, disc: str | None) -> str:
    for d in doc.get("discs", []):
        if isinstance(d, dict) and d.get("id") == disc and isinstance(d.get("inertia"), (str, int, float)):
            return d["inertia"]
    return NEW_DISC_INERTIA


def delete(doc: dict, selection: tuple[str, str]) -> dict:
    """Delete the selected disc or link.

    A disc in the middle of a line (exactly two links) is taken out and its
    neighbours joined by the link beyond it (the first of its links in file
    order goes), so deleting a disc just inserted restores the train; any
    other disc goes with all its links.  A deleted link leaves its discs in place (the model then reports
    the unconnected disc until the user links it again or undoes).
    """
    kind, ident = selection
    new = copy.deepcopy(doc)
    links = new.get("links", [])
    if kind == "link":
        new["links"] = [l for l in links if not (isinstance(l, dict) and l.get("id") == ident)]
        return new
    new["discs"] = [d for d in new.get("discs", []) if not (isinstance(d, dict) and d.get("id") == ident)]
    touching = [l for l in links if isinstance(l, dict) and ident in (l.get("from"), l.get("to"))]
    if len(touching) == 2:
        first, beyond = touching
        near = first.get("from") if first.get("to") == ident else first.get("to")
        end = "from" if beyond.get("from") == ident else "to"
        if near != GROUND or beyond.get("kind") != "gear_mesh":
            beyond[end] = near
            new["links"] = [l for l in links if l is not first]
            _fix_references(new, ident)
            return new
    new["links"] = [l for l in links if not any(l is t for t in touching)]
    _fix_references(new, ident)
    return new


def _fix_references(doc: dict, gone: str) -> None:
    """A deleted disc must not stay the reference disc (the first disc takes over)."""
    if doc.get("reference") == gone:
        ids = disc_ids(doc)
        if ids:
            doc["reference"] = ids[0]


def rename_disc(doc: dict, old: str, new_id: str) -> dict:
    """Rename a disc id everywhere it is referred to (links, reference, excitations)."""
    new = copy.deepcopy(doc)
    for d in new.get("discs", []):
        if isinstance(d, dict) and d.get("id") == old:
            d["id"] = new_id
    for l in new.get("links", []):
        if isinstance(l, dict):
            for end in ("from", "to"):
                if l.get(end) == old:
                    l[end] = new_id
    if new.get("reference") == old:
        new["reference"] = new_id
    for e in new.get("excitations", []) or []:
        if isinstance(e, dict) and e.get("at") == old:
            e["at"] = new_id
    return new
