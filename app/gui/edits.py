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
        return new, []
    names = _disc_names(doc)
    new["discs"] = [d for d in new.get("discs", []) if not (isinstance(d, dict) and d.get("id") == ident)]
    touching = [l for l in links if isinstance(l, dict) and ident in (l.get("from"), l.get("to"))]
    changes: list[str] = []
    if len(touching) == 2:
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
    new = copy.deepcopy(doc)
    _excitation(new, i)
    del new["excitations"][i]
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
