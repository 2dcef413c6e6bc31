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


def _downstream_links(doc: dict, disc: str) -> list[int]:
    """Indices of the links leaving ``disc`` along its own row of the schematic to the next
    disc (several when links run in parallel; empty at a line end)."""
    placement = place_document(doc)
    col, row = placement.column.get(disc), placement.row.get(disc)
    out, nxt = [], None
    for i, l in enumerate(doc.get("links", [])):
        if not isinstance(l, dict) or disc not in (l.get("from"), l.get("to")):
            continue
        other = l.get("to") if l.get("from") == disc else l.get("from")
        if other == GROUND or other == disc or nxt not in (None, other):
            continue
        if placement.column.get(other) == (col or 0) + 1 and placement.row.get(other) == row:
            out.append(i)
            nxt = other
    return out


def _parallel_to(links: list, link: dict) -> list[dict]:
    """The other links between the same two discs as ``link`` (links in parallel)."""
    ends = {link.get("from"), link.get("to")}
    return [l for l in links if isinstance(l, dict) and l is not link and GROUND not in ends
            and {l.get("from"), l.get("to")} == ends]


def insert_after(doc: dict, selection: tuple[str, str] | None, kind: str) -> tuple[dict, tuple[str, str]]:
    """Insert a new disc joined by a new link of ``kind`` after the selection.

    ``selection`` is ("disc", id), ("link", id) or None (append after the last
    disc).  After a disc in the middle of a line, the line's next link is moved
    to start at the new disc; after a link A->B, the link is split:
    the new link A->new comes first, then the selected link runs new->B.  Links in
    parallel with the one moved (between the same two discs) move with it, so the
    train stays a tree.  Returns (new document, selection of the new disc).
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
        for other in _parallel_to(links, old):  # links in parallel follow: they now end on the new disc
            other["from" if other.get("from") == a else "to"] = d_id
        old["from"] = d_id  # the selected link now runs new disc -> b
        disc_index = ids.index(a) + 1 if a in ids else len(discs)
        discs.insert(disc_index, {"id": d_id, "name": "New disc", "inertia": template})
        links.insert(li, {"id": l_id, "kind": kind, "from": a, "to": d_id, **NEW_LINK_DEFAULTS[kind]})
        return new, ("disc", d_id)
    anchor = sel_id if sel_id in ids else (ids[-1] if ids else None)
    if anchor is None:
        discs.append({"id": d_id, "name": "New disc", "inertia": NEW_DISC_INERTIA})
        return new, ("disc", d_id)
    nxt = _downstream_links(new, anchor)
    discs.insert(ids.index(anchor) + 1, {"id": d_id, "name": "New disc",
                                         "inertia": _disc_template(new, anchor)})
    link = {"id": l_id, "kind": kind, "from": anchor, "to": d_id, **NEW_LINK_DEFAULTS[kind]}
    if not nxt:
        links.append(link)
    else:
        for i in nxt:  # the next link (and any in parallel with it) now starts at the new disc
            moved = links[i]
            end = "from" if moved.get("from") == anchor else "to"
            moved[end] = d_id
        links.insert(nxt[0], link)
    return new, ("disc", d_id)


def insert_parallel(doc: dict, selection: tuple[str, str] | None, kind: str | None = None
                    ) -> tuple[dict, tuple[str, str]]:
    """Add a link between the same two discs as the selected link (in parallel with it:
    a second shaft, a damper beside a coupling).  ``kind``: the new link's kind, by
    default the selected link's; a gear mesh beside a mesh takes its speed ratio or teeth.
    Returns (new document, selection of the new link); the document is returned
    unchanged when no link is selected."""
    new = copy.deepcopy(doc)
    links = new.setdefault("links", [])
    if not selection or selection[0] != "link" or selection[1] not in link_ids(new):
        return new, selection
    old = links[link_ids(new).index(selection[1])]
    kind = kind or old.get("kind")
    if kind not in NEW_LINK_DEFAULTS:
        kind = "coupling"
    l_id = unique_id(kind, link_ids(new))
    link = {"id": l_id, "kind": kind, "from": old.get("from"), "to": old.get("to"), **NEW_LINK_DEFAULTS[kind]}
    if kind == "gear_mesh" and old.get("kind") == "gear_mesh":
        link.pop("speed_ratio")
        for key in ("speed_ratio", "teeth"):
            if key in old:
                link[key] = copy.deepcopy(old[key])
        link["stiffness"] = copy.deepcopy(old.get("stiffness", "1 GN*m/rad"))
    elif kind == "gear_mesh":
        link["speed_ratio"] = 1.0  # beside a shaft or coupling both ends turn at one speed
    links.insert(link_ids(new).index(selection[1]) + 1, link)
    return new, ("link", l_id)


def _disc_template(doc: dict, disc: str | None) -> str:
    for d in doc.get("discs", []):
        if isinstance(d, dict) and d.get("id") == disc and isinstance(d.get("inertia"), (str, int, float)):
            return d["inertia"]
    return NEW_DISC_INERTIA


def delete(doc: dict, selection: tuple[str, str]) -> dict:
    """Delete the selected disc or link (the new document of :func:`delete_report`)."""
    return delete_report(doc, selection)[0]


def delete_report(doc: dict, selection: tuple[str, str]) -> tuple[dict, list[str]]:
    """Delete the selected disc or link; return the new document and what changed, in words.

    A disc in the middle of a line (exactly two links) is taken out and its
    neighbours joined by the link beyond it (the first of its links in file
    order goes), so deleting a disc just inserted restores the train; any
    other disc goes with all its links.  Everything else that names the disc
    goes in the same step (:func:`_fix_references`): the reference disc moves to
    the first disc left, an engine cylinder at it is dropped, and an excitation
    acting at it is removed (or, for an engine excitation with cylinders left,
    acts at its first remaining cylinder).  A deleted link leaves its discs in
    place (the model then reports the unconnected disc until the user links it
    again or undoes).
    """
    kind, ident = selection
    new = copy.deepcopy(doc)
    links = new.get("links", [])
    if kind == "link":
        new["links"] = [l for l in links if not (isinstance(l, dict) and l.get("id") == ident)]
        return new, _fix_link_references(new, ident)
    names = _disc_names(doc)
    new["discs"] = [d for d in new.get("discs", []) if not (isinstance(d, dict) and d.get("id") == ident)]
    touching = [l for l in links if isinstance(l, dict) and ident in (l.get("from"), l.get("to"))]
    changes: list[str] = []
    ends = [l.get("from") if l.get("to") == ident else l.get("to") for l in touching]
    if len(touching) == 2 and ends[0] != ends[1]:  # not two links in parallel to one disc
        first, beyond = touching
        near = first.get("from") if first.get("to") == ident else first.get("to")
        end = "from" if beyond.get("from") == ident else "to"
        if near != GROUND or beyond.get("kind") != "gear_mesh":
            beyond[end] = near
            new["links"] = [l for l in links if l is not first]
            changes.append(f"removed link '{first.get('id')}'; link '{beyond.get('id')}' now runs "
                           f"{'from' if end == 'from' else 'to'} {names.get(near, repr(near))}")
            changes += _fix_references(new, ident, names)
            return new, changes
    new["links"] = [l for l in links if not any(l is t for t in touching)]
    if touching:
        changes.append("removed link" + ("s " if len(touching) > 1 else " ")
                       + ", ".join(f"'{l.get('id')}'" for l in touching))
    changes += _fix_references(new, ident, names)
    return new, changes


def _disc_names(doc: dict) -> dict:
    """disc id -> how a message names it: 'Name' (id) or 'id'."""
    out = {}
    for d in doc.get("discs", []) or []:
        if isinstance(d, dict) and isinstance(d.get("id"), str):
            name = d.get("name")
            out[d["id"]] = f"'{name}' ({d['id']})" if name and name != d["id"] else f"'{d['id']}'"
    return out


def excitation_disc(e: dict):
    """The disc an excitation acts at: ``at``, or the older ``applied_at`` (both are read)."""
    return e.get("at") if e.get("at") is not None else e.get("applied_at")


def _dicts(value):
    return [x for x in value if isinstance(x, dict)] if isinstance(value, list) else []


def _load_case_sites(doc: dict):
    """(list, item, key, label) of every load-case entry that names a disc."""
    for lc in _dicts(doc.get("load_cases")):
        label = f"load case '{lc.get('name') or '(no name)'}'"
        for part in ("driving", "driven"):
            for item in _dicts(lc.get(part)):
                yield lc, part, item, "at", label
        mis = lc.get("misfire")
        for item in _dicts(mis if isinstance(mis, list) else [mis]):
            yield lc, "misfire", item, "cylinder", label


def _rescale_shares(items: list) -> None:
    """Shares of the entries left, scaled back to 100 % (written as percentages)."""
    from core import units as u
    try:
        vals = [u.parse_fraction(i["share"]) for i in items if "share" in i]
    except Exception:
        return
    if len(vals) != len(items) or not sum(vals) > 0:
        return
    total = sum(vals)
    for i, v in zip(items, vals):
        i["share"] = f"{100.0 * v / total:.6g} %"


def _drop_engine_cylinder(engine: dict, gone: str) -> bool:
    """Remove the engine cylinder at disc ``gone``, keeping every other cylinder's firing angle
    (an even firing order becomes explicit angles).  False where that cannot be done (crank
    throw angles, a V engine, the last cylinder): the caller removes the excitation."""
    cyl = [c for c in engine.get("cylinders") if isinstance(c, dict)]
    left = [c for c in cyl if c.get("at") != gone]
    if not left or any("throw_deg" in c for c in cyl) or engine.get("layout", "in-line") != "in-line":
        return False
    order = engine.get("firing_order")
    if order is not None:
        if not isinstance(order, list) or any("firing_deg" in c for c in cyl):
            return False
        cycle = 720.0 if engine.get("strokes", 4) in (4, "4") else 360.0
        step = cycle / len(cyl)
        names = [str(c.get("name", i + 1)) for i, c in enumerate(cyl)]
        angle = {str(n): j * step for j, n in enumerate(order)}
        for c, n in zip(cyl, names):
            if n not in angle:
                return False
            c["firing_deg"] = angle[n]
        engine.pop("firing_order")
    engine["cylinders"] = left
    mis = engine.get("misfire")
    if isinstance(mis, dict) and all(str(c.get("name")) != str(mis.get("cylinder")) for c in left):
        engine.pop("misfire")
    return True


def _fix_references(doc: dict, gone: str, names: dict | None = None) -> list[str]:
    """Everything that named the deleted disc ``gone``; returns what changed, in words.

    Every place of the file that names a disc is visited here (and in :func:`rename_disc`):
    the reference disc, excitations (``at``/``applied_at``, cylinders, an engine's cylinders
    and misfire), load cases (driving, driven, misfire), transient events' torques and the
    ``design_options`` list.  A new key that names a disc belongs in both functions."""
    names = names or {}
    who = names.get(gone, repr(gone))
    changes = []
    ids = disc_ids(doc)
    if doc.get("reference") == gone:
        if ids:
            doc["reference"] = ids[0]
            changes.append(f"the reference disc is now {_disc_names(doc).get(ids[0], ids[0])}")
        else:
            doc.pop("reference")
            changes.append("no reference disc is left")
    excs = doc.get("excitations")
    if isinstance(excs, list):
        kept = []
        for e in excs:
            if not isinstance(e, dict):
                kept.append(e)
                continue
            label = f"excitation '{e.get('name') or '(no name)'}'"
            cyl = e.get("cylinders")
            if isinstance(cyl, list):
                left = [c for c in cyl if not (isinstance(c, dict) and c.get("at") == gone)]
                if len(left) != len(cyl):
                    changes.append(f"removed the cylinder at {who} from {label}")
                    if left:
                        e["cylinders"] = left
                    else:
                        e.pop("cylinders")
            engine = e.get("engine")
            if isinstance(engine, dict):
                ecyl = engine.get("cylinders")
                if isinstance(ecyl, list) and any(isinstance(c, dict) and c.get("at") == gone for c in ecyl):
                    if not _drop_engine_cylinder(engine, gone):
                        changes.append(f"removed {label} (its engine has a cylinder at {who})")
                        continue
                    changes.append(f"removed the cylinder at {who} from {label}; the others keep their "
                                   "firing angles")
            if gone in (e.get("at"), e.get("applied_at")):
                cyl = e.get("cylinders")
                first = next((c.get("at") for c in cyl or [] if isinstance(c, dict) and c.get("at") in ids),
                             None)
                if e.get("frequency") is None and first is not None:
                    e["at"] = first
                    e.pop("applied_at", None)
                    changes.append(f"{label} now acts at {_disc_names(doc).get(first, repr(first))}, "
                                   "its first remaining cylinder")
                else:
                    changes.append(f"removed {label} (it acted at {who})")
                    continue
            kept.append(e)
        doc["excitations"] = kept
    # load cases: an entry at the disc goes; explicit shares of what is left return to 100 %
    for lc, part, item, key, label in list(_load_case_sites(doc)):
        if item.get(key) != gone:
            continue
        if part == "misfire":
            mis = lc.get("misfire")
            if isinstance(mis, list):
                lc["misfire"] = [m for m in mis if m is not item]
                if not lc["misfire"]:
                    lc.pop("misfire")
            else:
                lc.pop("misfire")
            changes.append(f"removed the misfire at {who} from {label}")
            continue
        left = [i for i in lc.get(part) if i is not item]
        if left:
            lc[part] = left
            _rescale_shares(left)
            changes.append(f"{label} no longer {'takes power in' if part == 'driving' else 'delivers power'} "
                           f"at {who}" + ("; the other shares now add to 100 %" if "share" in left[0] else ""))
        else:
            lc.pop(part)
            changes.append(f"{label} has no {part} disc left")
    events = doc.get("transients")
    if isinstance(events, list):
        kept = []
        for ev in events:
            torques = ev.get("torques") if isinstance(ev, dict) else None
            if isinstance(torques, list) and any(isinstance(t, dict) and t.get("at") == gone for t in torques):
                left = [t for t in torques if not (isinstance(t, dict) and t.get("at") == gone)]
                label = f"transient event '{ev.get('name') or '(no name)'}'"
                if not left:
                    changes.append(f"removed {label} (its only torque acted at {who})")
                    continue
                ev["torques"] = left
                changes.append(f"removed the torque at {who} from {label}")
            kept.append(ev)
        doc["transients"] = kept
    options = doc.get("design_options")
    if isinstance(options, list) and gone in options:
        doc["design_options"] = [x for x in options if x != gone]
        changes.append(f"{who} is no longer among the design options")
    return changes


def _fix_link_references(doc: dict, gone: str) -> list[str]:
    """Everything that named the deleted link ``gone``; returns what changed, in words.

    The places of the file that name a link: its S-N curve (``sn_curves``), the
    ``design_options`` list and a transient event's ``required_events`` per link
    (and :func:`rename_link` for a new id).  A new key that names a link belongs here too."""
    changes = []
    curves = doc.get("sn_curves")
    if isinstance(curves, dict) and gone in curves:
        curves.pop(gone)
        changes.append(f"removed the S-N curve of link '{gone}'")
        if not curves:
            doc.pop("sn_curves")
    options = doc.get("design_options")
    if isinstance(options, list) and gone in options:
        doc["design_options"] = [x for x in options if x != gone]
        changes.append(f"link '{gone}' is no longer among the design options")
    for ev in _dicts(doc.get("transients")):
        req = ev.get("required_events")
        if isinstance(req, dict) and gone in req:
            req.pop(gone)
            changes.append(f"transient event '{ev.get('name') or '(no name)'}' no longer requires a count "
                           f"of link '{gone}'")
            if not req:
                ev.pop("required_events")
    return changes


def _rename_key(mapping: dict, old, new) -> dict:
    """``mapping`` with key ``old`` renamed ``new``, in the same place."""
    return {(new if k == old else k): v for k, v in mapping.items()}


def rename_link(doc: dict, old: str, new_id: str) -> dict:
    """Rename a link id everywhere it is referred to (the places :func:`_fix_link_references`
    visits)."""
    new = copy.deepcopy(doc)
    for l in new.get("links", []):
        if isinstance(l, dict) and l.get("id") == old:
            l["id"] = new_id
    if isinstance(new.get("sn_curves"), dict):
        new["sn_curves"] = _rename_key(new["sn_curves"], old, new_id)
    if isinstance(new.get("design_options"), list):
        new["design_options"] = [new_id if x == old else x for x in new["design_options"]]
    for ev in _dicts(new.get("transients")):
        if isinstance(ev.get("required_events"), dict):
            ev["required_events"] = _rename_key(ev["required_events"], old, new_id)
    return new


def rename_excitation(doc: dict, i: int, name) -> dict:
    """Set excitation ``i``'s name (None removes it) and carry the old name through the load
    cases that scale it (``excitation_scale`` by name) or name it for a misfire."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    old = e.get("name")
    if name is None:
        e.pop("name", None)
    else:
        e["name"] = name
    if old is None or name is None or old == name:
        return new
    for lc in _dicts(new.get("load_cases")):
        if isinstance(lc.get("excitation_scale"), dict):
            lc["excitation_scale"] = _rename_key(lc["excitation_scale"], old, name)
        mis = lc.get("misfire")
        for m in _dicts(mis if isinstance(mis, list) else [mis]):
            if m.get("excitation") == old:
                m["excitation"] = name
    return new


def rename_load_case(doc: dict, i: int, name) -> dict:
    """Set load case ``i``'s name and carry it to the transient torques that name it."""
    new = copy.deepcopy(doc)
    lc = new["load_cases"][i]
    old = lc.get("name")
    if name is None:
        lc.pop("name", None)
    else:
        lc["name"] = name
    if old is not None and name is not None and old != name:
        for ev in _dicts(new.get("transients")):
            for t in _dicts(ev.get("torques")):
                if t.get("load_case") == old:
                    t["load_case"] = name
    return new


def rename_disc(doc: dict, old: str, new_id: str) -> dict:
    """Rename a disc id everywhere it is referred to (the places :func:`_fix_references` visits)."""
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
    for e in _dicts(new.get("excitations")):
        for key in ("at", "applied_at"):
            if e.get(key) == old:
                e[key] = new_id
        engine = e.get("engine") if isinstance(e.get("engine"), dict) else {}
        mis = engine.get("misfire")
        for c in _dicts(e.get("cylinders")) + _dicts(engine.get("cylinders")):
            if c.get("at") == old:
                c["at"] = new_id
        if isinstance(mis, dict) and mis.get("cylinder") == old:
            mis["cylinder"] = new_id
    for _lc, _part, item, key, _label in _load_case_sites(new):
        if item.get(key) == old:
            item[key] = new_id
    for ev in _dicts(new.get("transients")):
        for t in _dicts(ev.get("torques")):
            if t.get("at") == old:
                t["at"] = new_id
    if isinstance(new.get("design_options"), list):
        new["design_options"] = [new_id if x == old else x for x in new["design_options"]]
    return new


# ----------------------------------------------------------------- excitations
# Every function takes the document and the excitation's index in doc["excitations"]
# and returns a new document; the keys it does not concern are carried over as they are.

SCALINGS = ("constant", "speed_squared")


def _excitation(new: dict, i: int) -> dict:
    excs = new.get("excitations")
    if not isinstance(excs, list) or not 0 <= i < len(excs) or not isinstance(excs[i], dict):
        raise IndexError(f"no excitation #{i + 1}")
    return excs[i]


def add_excitation(doc: dict) -> tuple[dict, int]:
    """Append a once-per-revolution excitation at the reference disc (or the first disc)."""
    new = copy.deepcopy(doc)
    excs = new.get("excitations")
    if not isinstance(excs, list):
        excs = new["excitations"] = []
    ids = disc_ids(new)
    at = new.get("reference") if new.get("reference") in ids else (ids[0] if ids else None)
    taken = {e.get("name") for e in excs if isinstance(e, dict)}
    n = len(excs) + 1
    while f"Excitation {n}" in taken:
        n += 1
    e = {"name": f"Excitation {n}", "orders": [1]}
    if at is not None:
        e = {"name": e["name"], "at": at, "orders": [1]}
    excs.append(e)
    return new, len(excs) - 1


def remove_excitation(doc: dict, i: int) -> dict:
    """Remove excitation ``i``; a load case's scale of it and a misfire naming it go too."""
    new = copy.deepcopy(doc)
    name = _excitation(new, i).get("name")
    del new["excitations"][i]
    if name is None:
        return new
    for lc in _dicts(new.get("load_cases")):
        scale = lc.get("excitation_scale")
        if isinstance(scale, dict) and name in scale:
            scale.pop(name)
            if not scale:
                lc.pop("excitation_scale")
        mis = lc.get("misfire")
        for m in _dicts(mis if isinstance(mis, list) else [mis]):
            if m.get("excitation") == name:
                m.pop("excitation")
    return new


def set_excitation_disc(doc: dict, i: int, disc) -> dict:
    """The disc the excitation acts at, written as ``at`` (the older ``applied_at`` goes);
    None removes both (a fixed-frequency source used for screening only)."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    e.pop("applied_at", None)
    if disc is None:
        e.pop("at", None)
    else:
        e["at"] = disc
    return new


def set_excitation_source(doc: dict, i: int, source: str, frequency_text: str = "100 Hz") -> dict:
    """``source`` 'orders' (orders of its shaft's speed) or 'fixed' (one frequency)."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    if source == "fixed":
        if e.get("frequency") is not None:
            return new
        for key in ("orders", "cylinders"):
            e.pop(key, None)
        e["frequency"] = frequency_text
    elif source == "orders":
        if e.get("frequency") is None:
            return new
        for key in ("frequency", "amplitude", "phase_deg"):
            e.pop(key, None)
        if excitation_disc(e) is None:
            ids = disc_ids(new)
            ref = new.get("reference")
            e["at"] = ref if ref in ids else (ids[0] if ids else None)
        e["orders"] = [1]
    else:
        raise ValueError(source)
    return new


def order_value(order, key: str):
    """A key of one order: an order is a plain number or {"order": n, "amplitude": ...}."""
    if isinstance(order, dict):
        return order.get(key)
    return order if key == "order" else None


def set_order_value(doc: dict, i: int, j: int, key: str, value) -> dict:
    """Set (None: remove) ``key`` of order ``j`` of excitation ``i``.  A plain-number
    order becomes {"order": n, key: value}; an order left with nothing but its
    number is written as the plain number again (the file stays as a person writes it).
    'scaling' "constant" is the default and is removed."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    orders = e.get("orders")
    if not isinstance(orders, list) or not 0 <= j < len(orders):
        raise IndexError(f"no order #{j + 1}")
    o = orders[j]
    if key == "scaling" and value == "constant":
        value = None
    d = dict(o) if isinstance(o, dict) else {"order": o}
    if value is None:
        d.pop(key, None)
    else:
        d[key] = value
    orders[j] = d["order"] if set(d) == {"order"} else d
    return new


def add_order(doc: dict, i: int) -> dict:
    """Append the next whole order after the largest one given (an amplitude is copied
    only as a key to fill in: none is made up)."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    orders = e.get("orders")
    if not isinstance(orders, list):
        orders = e["orders"] = []
    numbers = [order_value(o, "order") for o in orders]
    numbers = [x for x in numbers if isinstance(x, (int, float)) and not isinstance(x, bool)]
    orders.append(int(max(numbers)) + 1 if numbers else 1)
    return new


def remove_order(doc: dict, i: int, j: int) -> dict:
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    del e["orders"][j]
    return new


def add_cylinder(doc: dict, i: int) -> dict:
    """Append an engine cylinder: the disc after the last cylinder's, firing angle 0."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    cyl = e.get("cylinders")
    if not isinstance(cyl, list):
        cyl = e["cylinders"] = []
    ids = disc_ids(new)
    last = cyl[-1].get("at") if cyl and isinstance(cyl[-1], dict) else None
    if last in ids and ids.index(last) + 1 < len(ids):
        at = ids[ids.index(last) + 1]
    else:
        at = excitation_disc(e) if excitation_disc(e) in ids else (ids[0] if ids else None)
    cyl.append({"at": at, "firing_deg": 0})
    return new


def remove_cylinder(doc: dict, i: int, k: int) -> dict:
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    del e["cylinders"][k]
    if not e["cylinders"]:
        e.pop("cylinders")
    return new


# ----------------------------------------------------------------- a link's material damping
#: the keys that each give a link's hysteretic damping; a link carries at most one
DAMPING_KEYS = ("loss_factor", "relative_damping", "dynamic_magnifier")


def damping_key(link: dict):
    """The damping key a link carries (the first, if a hand-written file has several)."""
    return next((k for k in DAMPING_KEYS if link.get(k) is not None), None)


def loss_factor_of(key: str, value: float) -> float | None:
    """eta from any of the three: eta = psi / (2 pi) = 1 / M (common practice, from memory)."""
    import math
    if key == "loss_factor":
        return value
    if key == "relative_damping":
        return value / (2 * math.pi)
    if key == "dynamic_magnifier":
        return 1.0 / value if value > 0 else None
    raise ValueError(key)


def from_loss_factor(key: str, eta: float) -> float | None:
    import math
    if key == "loss_factor":
        return eta
    if key == "relative_damping":
        return 2 * math.pi * eta
    if key == "dynamic_magnifier":
        return 1.0 / eta if eta > 0 else None
    raise ValueError(key)


def set_damping_key(doc: dict, li: int, key) -> dict:
    """Give link ``li``'s damping by ``key`` (one of DAMPING_KEYS, None: no damping),
    converting the value it has (4 significant digits); a value that does not read
    or convert is dropped rather than guessed."""
    from core import units as u
    new = copy.deepcopy(doc)
    link = new["links"][li]
    old = damping_key(link)
    if old == key:
        return new
    value = None
    if old is not None and key is not None:
        try:
            eta = loss_factor_of(old, u.parse_number(link[old]))
        except Exception:
            eta = None
        converted = None if eta is None else from_loss_factor(key, eta)
        if converted is not None:
            value = float(f"{converted:.4g}")
            if value.is_integer():
                value = int(value)
    for k in DAMPING_KEYS:
        link.pop(k, None)
    if value is not None:
        link[key] = value
    return new


def set_cylinder_value(doc: dict, i: int, k: int, key: str, value) -> dict:
    """Set (None: remove) ``key`` ('at' or 'firing_deg') of cylinder ``k`` of excitation ``i``."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    cyl = e.get("cylinders")
    if not isinstance(cyl, list) or not 0 <= k < len(cyl):
        raise IndexError(f"no cylinder #{k + 1}")
    c = cyl[k] if isinstance(cyl[k], dict) else {}
    if value is None:
        c.pop(key, None)
    else:
        c[key] = value
    cyl[k] = c
    return new


# ----------------------------------------------------------------- generic list and object edits
# The newer key families (engine data, electric lines, load cases, transient events) edit
# lists of objects inside objects; these take a path (keys and list indices, as the
# document's) and return a new document, so every edit is one undo step.

def _container(new: dict, path: tuple, create: bool):
    obj = new
    for key in path:
        if isinstance(obj, dict):
            if key not in obj or obj[key] is None:
                if not create:
                    return None
                obj[key] = {}
            obj = obj[key]
        elif isinstance(obj, list) and isinstance(key, int) and 0 <= key < len(obj):
            obj = obj[key]
        else:
            return None
    return obj


def set_at(doc: dict, path: tuple, value) -> dict:
    """A new document with ``value`` at ``path`` (None: the key removed)."""
    new = copy.deepcopy(doc)
    parent = _container(new, tuple(path[:-1]), value is not None)
    if parent is None:
        return new
    if value is None:
        if isinstance(parent, dict):
            parent.pop(path[-1], None)
    else:
        parent[path[-1]] = copy.deepcopy(value)
    return new


def list_append(doc: dict, path: tuple, item) -> dict:
    """A new document with ``item`` appended to the list at ``path`` (made when absent)."""
    new = copy.deepcopy(doc)
    parent = _container(new, tuple(path[:-1]), True)
    lst = parent.get(path[-1]) if isinstance(parent, dict) else None
    if not isinstance(lst, list):
        lst = [] if not isinstance(lst, dict) else [lst]  # one object where a list may stand
        parent[path[-1]] = lst
    lst.append(copy.deepcopy(item))
    return new


def list_remove(doc: dict, path: tuple, index: int, drop_empty: bool = True) -> dict:
    """A new document without item ``index`` of the list at ``path`` (the key goes with its
    last item when ``drop_empty``).  A single object where a list may stand is item 0."""
    new = copy.deepcopy(doc)
    parent = _container(new, tuple(path[:-1]), False)
    if not isinstance(parent, dict):
        return new
    lst = parent.get(path[-1])
    if isinstance(lst, dict) and index == 0:
        parent.pop(path[-1])
        return new
    if not isinstance(lst, list) or not 0 <= index < len(lst):
        return new
    del lst[index]
    if not lst and drop_empty:
        parent.pop(path[-1])
    return new


def next_name(taken, base: str) -> str:
    """'base 1', 'base 2' ... the first not in ``taken``."""
    taken = set(taken)
    n = 1
    while f"{base} {n}" in taken:
        n += 1
    return f"{base} {n}"


# ----------------------------------------------------------------- excitation kinds
#: what an excitation entry is, by the keys it holds
EXCITATION_SOURCES = ("orders", "fixed", "engine", "lines")


def excitation_source(e: dict) -> str:
    if e.get("frequency") is not None:
        return "fixed"
    if e.get("engine") is not None:
        return "engine"
    if e.get("lines") is not None or e.get("electric_drive") is not None:
        return "lines"
    return "orders"


def new_engine(doc: dict, at=None) -> dict:
    """A starting engine for an excitation turned into one: one cylinder at ``at`` (the first
    disc), four-stroke, a plain set of data-sheet values an engineer then overwrites, and
    tangential-pressure coefficients to fill in."""
    ids = disc_ids(doc)
    at = at if at in ids else (ids[0] if ids else None)
    return {"strokes": 4, "bore": "150 mm", "stroke": "180 mm", "connecting_rod": "360 mm",
            "reciprocating_mass": "5 kg",
            "tangential_pressure": {"mean_indicated_pressure": "20 bar",
                                    "orders": [{"order": 0.5, "sin": "1 bar", "cos": "0 bar"}]},
            "cylinders": [{"name": "1", "at": at, "firing_deg": 0}]}


def set_excitation_kind(doc: dict, i: int, source: str, frequency_text: str = "100 Hz") -> dict:
    """Make excitation ``i`` one of EXCITATION_SOURCES, keeping its name, its disc where the
    new kind has one, and keys the program does not know."""
    if source in ("orders", "fixed"):
        e = _excitation(copy.deepcopy(doc), i)
        if source == "orders" and excitation_source(e) in ("engine", "lines"):
            new = copy.deepcopy(doc)
            e = _excitation(new, i)
            at = e.get("at")
            if at is None and isinstance(e.get("engine"), dict):
                at = next((c.get("at") for c in _dicts(e["engine"].get("cylinders"))), None)
            for key in ("engine", "lines", "electric_drive"):
                e.pop(key, None)
            ids = disc_ids(new)
            e["at"] = at if at in ids else (new.get("reference") if new.get("reference") in ids
                                           else (ids[0] if ids else None))
            if not isinstance(e.get("orders"), list) or not e["orders"]:
                e["orders"] = [1]
            return new
        if source == "fixed" and excitation_source(e) in ("engine", "lines"):
            doc = set_excitation_kind(doc, i, "orders")
        return set_excitation_source(doc, i, source, frequency_text)
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    current = excitation_source(e)
    if current == source:
        return new
    at = excitation_disc(e)
    for key in ("frequency", "amplitude", "phase_deg", "orders", "cylinders", "at", "applied_at",
                "engine", "lines", "electric_drive"):
        e.pop(key, None)
    if source == "engine":
        e["engine"] = new_engine(new, at)
    elif source == "lines":
        ids = disc_ids(new)
        e["at"] = at if at in ids else (new.get("reference") if new.get("reference") in ids
                                       else (ids[0] if ids else None))
        e["lines"] = [{"frequency_offset": "300 Hz", "order": 6, "combination": "difference"}]
    else:
        raise ValueError(source)
    return new


def add_engine_cylinder(doc: dict, i: int) -> dict:
    """Append an engine cylinder at the disc after the last cylinder's, named by its number;
    given firing angles or throw angles get a 0 to overwrite."""
    new = copy.deepcopy(doc)
    engine = _excitation(new, i).get("engine")
    cyl = engine.get("cylinders") if isinstance(engine.get("cylinders"), list) else []
    engine["cylinders"] = cyl
    ids = disc_ids(new)
    last = cyl[-1].get("at") if cyl and isinstance(cyl[-1], dict) else None
    at = ids[ids.index(last) + 1] if last in ids and ids.index(last) + 1 < len(ids) else (
        last if last is not None else (ids[0] if ids else None))
    names = {str(c.get("name", k + 1)) for k, c in enumerate(cyl) if isinstance(c, dict)}
    n = len(cyl) + 1
    while str(n) in names:
        n += 1
    c = {"name": str(n), "at": at}
    if any(isinstance(x, dict) and "firing_deg" in x for x in cyl):
        c["firing_deg"] = 0
    elif any(isinstance(x, dict) and "throw_deg" in x for x in cyl):
        c["throw_deg"] = 0
    cyl.append(c)
    if isinstance(engine.get("firing_order"), list):
        engine["firing_order"] = engine["firing_order"] + [str(n)]
    return new


def remove_engine_cylinder(doc: dict, i: int, k: int) -> dict:
    """Remove engine cylinder ``k``; it leaves the firing order and a misfire naming it goes."""
    new = copy.deepcopy(doc)
    engine = _excitation(new, i).get("engine")
    cyl = engine.get("cylinders")
    gone = cyl.pop(k)
    name = str(gone.get("name", k + 1)) if isinstance(gone, dict) else None
    if isinstance(engine.get("firing_order"), list):
        engine["firing_order"] = [x for x in engine["firing_order"] if str(x) != name]
    mis = engine.get("misfire")
    if isinstance(mis, dict) and str(mis.get("cylinder")) == name:
        engine.pop("misfire")
    return new


def set_engine_gas_source(doc: dict, i: int, source: str) -> dict:
    """'pressure_curve' or 'tangential_pressure': the engine's gas torque given one way; the
    other's data go (undo brings them back)."""
    new = copy.deepcopy(doc)
    engine = _excitation(new, i).get("engine")
    if source in engine:
        return new
    engine.pop("pressure_curve", None)
    engine.pop("tangential_pressure", None)
    if source == "pressure_curve":
        engine["pressure_curve"] = {"unit": "bar", "points": []}
    elif source == "tangential_pressure":
        engine["tangential_pressure"] = {"mean_indicated_pressure": "20 bar",
                                         "orders": [{"order": 0.5, "sin": "1 bar", "cos": "0 bar"}]}
    else:
        raise ValueError(source)
    return new


def set_curve_given_by(doc: dict, i: int, how: str) -> dict:
    """A pressure curve's points in the file ('points') or read from a CSV file ('file')."""
    new = copy.deepcopy(doc)
    curve = _excitation(new, i)["engine"]["pressure_curve"]
    if how in curve:
        return new
    curve.pop("points" if how == "file" else "file", None)
    curve[how] = "pressure_curve.csv" if how == "file" else []
    return new


def set_electric_drive(doc: dict, i: int, on: bool) -> dict:
    """Give excitation ``i`` an inverter-fed drive's lines (pole pairs, supply frequency,
    the output frequency's sixth harmonic) or take them off."""
    new = copy.deepcopy(doc)
    e = _excitation(new, i)
    if on and not isinstance(e.get("electric_drive"), dict):
        e["electric_drive"] = {"pole_pairs": 2, "supply_frequency": "50 Hz", "output_harmonics": [6]}
    elif not on:
        e.pop("electric_drive", None)
        if e.get("lines") is None:
            e["lines"] = [{"frequency_offset": "300 Hz", "order": 6, "combination": "difference"}]
    return new


def set_twice_electrical(doc: dict, i: int, on: bool) -> dict:
    new = copy.deepcopy(doc)
    drive = _excitation(new, i)["electric_drive"]
    if on:
        if not drive.get("twice_electrical"):
            drive["twice_electrical"] = True
    else:
        drive.pop("twice_electrical", None)
    return new


def harmonic_value(h, key: str):
    """A key of one output harmonic: a plain number or {"harmonic": n, "amplitude": ...}."""
    if isinstance(h, dict):
        return h.get(key)
    return h if key == "harmonic" else None


def set_harmonic_value(doc: dict, i: int, j: int, key: str, value) -> dict:
    """Like :func:`set_order_value` for an electric drive's output harmonic ``j``."""
    new = copy.deepcopy(doc)
    hs = _excitation(new, i)["electric_drive"]["output_harmonics"]
    h = hs[j]
    d = dict(h) if isinstance(h, dict) else {"harmonic": h}
    if value is None:
        d.pop(key, None)
    else:
        d[key] = value
    hs[j] = d.get("harmonic") if set(d) == {"harmonic"} else d
    return new


def set_twice_electrical_value(doc: dict, i: int, key: str, value) -> dict:
    """Amplitude or phase of the twice-electrical line (``true`` becomes an object and back)."""
    new = copy.deepcopy(doc)
    drive = _excitation(new, i)["electric_drive"]
    te = drive.get("twice_electrical")
    d = dict(te) if isinstance(te, dict) else {}
    if value is None:
        d.pop(key, None)
    else:
        d[key] = value
    drive["twice_electrical"] = d or True
    return new


# ----------------------------------------------------------------- gears
def set_gear_teeth(doc: dict, li: int, side: int, value) -> dict:
    """Tooth count ``side`` (0 'from', 1 'to') of gear mesh ``li``.  With both counts the teeth
    give the speed ratio (a ``speed_ratio`` beside them goes); clearing a count of a complete
    pair removes the teeth and writes the ratio they gave, so the mesh keeps its ratio."""
    new = copy.deepcopy(doc)
    link = new["links"][li]
    teeth = link.get("teeth")
    pair = list(teeth) if isinstance(teeth, list) and len(teeth) == 2 else [None, None]

    def whole(z):
        return isinstance(z, (int, float)) and not isinstance(z, bool) and z > 0
    if value is None and all(whole(z) for z in pair):
        link.pop("teeth")
        link.setdefault("speed_ratio", float(f"{pair[0] / pair[1]:.12g}"))
        return new
    pair[side] = value
    if all(z is None for z in pair):
        link.pop("teeth", None)
    elif all(whole(z) for z in pair):
        link["teeth"] = [int(z) if float(z).is_integer() else z for z in pair]
        link.pop("speed_ratio", None)
    else:
        link["teeth"] = pair  # half given: the model names the missing count
    return new


MESH_DEFINITIONS = ("rigid", "stiffness", "tooth_data")


def mesh_definition(link: dict) -> str:
    if isinstance(link.get("mesh_stiffness"), dict):
        return "tooth_data"
    return "stiffness" if link.get("stiffness") is not None else "rigid"


def set_mesh_definition(doc: dict, li: int, how: str) -> dict:
    """A gear mesh rigid, with a torsional stiffness, or with its stiffness from the mesh
    stiffness per face width, the face width and a base radius."""
    new = copy.deepcopy(doc)
    link = new["links"][li]
    if mesh_definition(link) == how:
        return new
    link.pop("stiffness", None)
    link.pop("mesh_stiffness", None)
    if how == "stiffness":
        link["stiffness"] = "300 MN*m/rad"
    elif how == "tooth_data":
        link["mesh_stiffness"] = {"c_gamma": "20 N/(mm*um)", "face_width": "80 mm", "base_radius_from": "100 mm"}
    elif how != "rigid":
        raise ValueError(how)
    return new


def set_either(doc: dict, path: tuple, key: str, other: str) -> dict:
    """Give an object's value as ``key`` instead of ``other`` (stroke or crank radius, base radius
    of either gear ...): the value moves across unchanged; the caller converts if needed."""
    new = copy.deepcopy(doc)
    obj = _container(new, tuple(path), False)
    if isinstance(obj, dict) and other in obj and key not in obj:
        value = obj.pop(other)
        obj[key] = value
    return new
