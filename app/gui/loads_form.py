"""The load-cases tab: the project's ``load_cases`` (core.loads.parse_load_cases), each
with its load law, where the power goes in and is taken off, how it scales the
excitations and a misfiring cylinder.  Built on :class:`app.gui.list_form.ListDetailForm`.
"""
from __future__ import annotations

from core import units as u
from core.loads import LAWS

from . import edits
from .editors import CHOICE, FRACTION, TEXT, TIPS, Spec, disc_choices, with_default
from .list_form import ListDetailForm

LAW_LABELS = {"constant_torque": "constant torque", "constant_power": "constant power",
              "propeller": "propeller law (power ∝ speed³)", "table": "table against speed"}

TIPS.update({
    "lc.name": "Name of the load case (the results and the sheet name it; a transient may name it as its "
               "load).",
    "lc.law": "How the transmitted load changes with the reference shaft's speed: constant torque, "
              "constant power, the propeller law through the given point, or a table.",
    "lc.power": "Transmitted power at the given speed (kW, hp); or give the torque.",
    "lc.torque": "Load torque referred to the reference shaft at the given speed; or give the power.",
    "lc.speed": "Reference shaft's speed at which the power or torque holds.",
    "lc.table_quantity": "What the table's second column is: torque or power (read from its units "
                         "when they say).",
    "lc.table": "Reference shaft's speed against the torque or power; linear between points, constant "
                "beyond the ends.",
    "share.at": "Disc where the power is put in (driving) or taken off (driven).",
    "share.share": "Its share of the power ('50 %' or 0.5); empty everywhere: equal shares.",
    "lc.scale_all": "Factor on every excitation amplitude in this load case ('60 %' or 0.6; empty: 1).",
    "lc.scale": "Factor on this excitation's amplitudes (on top of the factor for all).",
    "mis.cylinder": "Crank throw (disc) of the misfiring cylinder of an excitation given with cylinders.",
    "mis.gas_torque_fraction": "Excitation left in the misfiring cylinder (0: none).",
    "mis.excitation": "The excitation whose cylinder misfires (empty: every one with a cylinder there).",
})

HEAD_SPECS = [
    Spec("name", "Name", TEXT, "lc.name", optional=False),
    Spec("law", "Load law", CHOICE, "lc.law", choices=lambda doc: [(k, LAW_LABELS[k]) for k in LAWS]),
]
POINT_SPECS = [
    Spec("power", "Power", u.POWER, "lc.power", enabled=lambda o: o.get("torque") is None),
    Spec("torque", "or torque", u.TORQUE, "lc.torque", enabled=lambda o: o.get("power") is None),
    Spec("speed", "At speed", u.SPEED, "lc.speed"),
]
QUANTITY_SPEC = Spec("table_quantity", "Table gives", CHOICE, "lc.table_quantity",
                     choices=lambda doc: with_default([("torque", "torque"), ("power", "power")],
                                                      "(from the units)"))
SHARE_SPECS = [
    Spec("at", "Disc", CHOICE, "share.at", choices=lambda doc: disc_choices(doc), width=120),
    Spec("share", "Share", FRACTION, "share.share", placeholder="equal", width=60),
]
SCALE_ALL = Spec("excitation_scale", "All excitations", FRACTION, "lc.scale_all", placeholder="1")
SCALE_STAR = Spec("*", "All excitations", FRACTION, "lc.scale_all", placeholder="1")
SCALE_VALUE = Spec("", "Factor", FRACTION, "lc.scale", placeholder="1")


def _excitation_names(doc: dict) -> list[str]:
    return [str(e.get("name") or f"Excitation {i + 1}") for i, e in enumerate(doc.get("excitations") or [])
            if isinstance(e, dict)]


MISFIRE_SPECS = [
    Spec("cylinder", "Misfiring throw", CHOICE, "mis.cylinder", choices=lambda doc: disc_choices(doc), width=100),
    Spec("gas_torque_fraction", "Left", FRACTION, "mis.gas_torque_fraction", placeholder="0", width=44),
    Spec("excitation", "Of excitation", CHOICE, "mis.excitation", width=100,
         choices=lambda doc: with_default([(n, n) for n in _excitation_names(doc)], "(any there)")),
]


def table_kind(lc: dict):
    """The unit kind of a load table's second column: its table_quantity, else what its texts
    read as (a power table says kW), else torque."""
    q = lc.get("table_quantity")
    if q == "power":
        return u.POWER
    if q == "torque":
        return u.TORQUE
    for row in lc.get("table") or []:
        if isinstance(row, list) and len(row) == 2 and isinstance(row[1], str):
            if u.check_text(row[1], u.POWER) is None:
                return u.POWER
            if u.check_text(row[1], u.TORQUE) is None:
                return u.TORQUE
    return u.TORQUE


def table_columns(kind) -> list:
    return [Spec("", "Speed", u.SPEED, "lc.table"),
            Spec("", "Power" if kind is u.POWER else "Torque", kind, "lc.table")]


class LoadCasesForm(ListDetailForm):
    list_key = "load_cases"
    what = "load case"
    empty_text = ("No load cases yet. A load case gives the mean torque the train transmits against "
                  "speed (for the acceptance checks) and may scale the excitations; add one.")
    add_tip = "Add a load case: constant power at the top of the operating range, taken off at the last disc"

    def element(self, doc, i):
        lc = doc["load_cases"][i]
        name = lc.get("name") if isinstance(lc, dict) else None
        return f"load case '{name}'" if isinstance(name, str) and name.strip() else f"load case #{i + 1}"

    def summary(self, doc, lc):
        law = LAW_LABELS.get(lc.get("law"), str(lc.get("law")))
        what = lc.get("power") or lc.get("torque")
        at = f" at {lc.get('speed')}" if lc.get("speed") else ""
        driven = ", ".join(str(x.get("at")) for x in lc.get("driven") or [] if isinstance(x, dict))
        return f"{law}" + (f", {what}{at}" if what else "") + (f"; taken off at {driven}" if driven else "")

    def new_entry(self, doc):
        ids = edits.disc_ids(doc)
        top = (doc.get("operating_speed") or {}).get("max") if isinstance(doc.get("operating_speed"), dict) else None
        taken = [lc.get("name") for lc in doc.get("load_cases") or [] if isinstance(lc, dict)]
        entry = {"name": edits.next_name(taken, "Load case"), "law": "constant_power", "power": "100 kW",
                 "speed": top or "1500 rpm"}
        if ids:
            entry["driven"] = [{"at": ids[-1], "share": "100 %"}]
        return entry

    def _structure(self, i, lc):
        scale = lc.get("excitation_scale")
        mis = lc.get("misfire")
        return (i, self.system, lc.get("law") == "table", isinstance(scale, dict),
                tuple(scale) if isinstance(scale, dict) else None, isinstance(mis, dict),
                len(mis) if isinstance(mis, list) else None, table_kind(lc).name)

    def _build(self, i, lc):
        lay = self._body.layout()
        base = ("load_cases", i)
        form = self.form_in(lay)
        self.specs_in(form, HEAD_SPECS, base, lc, self.leaf_problem)
        lay.addWidget(self.detail_problem)
        if lc.get("law") == "table":
            self.specs_in(form, [QUANTITY_SPEC], base, lc, self.leaf_problem)
            self.heading_label(lay, "Load against the reference shaft's speed", TIPS["lc.table"])
            self.table_in(lay, table_columns(table_kind(lc)), "point", lambda i: ("load_cases", i, "table"),
                          "table", columns_of=lambda doc, obj: table_columns(table_kind(obj)), label="load point")
        else:
            self.grid_in(lay, POINT_SPECS, base, lc, problem_of=self.leaf_problem)
        self.heading_label(lay, "Power put in (driving)", "Where the power enters; none listed: the "
                           "reference disc takes it all in.")
        self.driving_note = self.note_label(lay, "None listed: the reference disc drives (100 %).")
        self._updaters.append(lambda doc, obj, el, f: self.driving_note.setVisible(not obj.get("driving")))
        self._shares(lay, "driving")
        self.heading_label(lay, "Power taken off (driven)", "Where the load is taken off and how it divides "
                           "between the driven machines.")
        self._shares(lay, "driven")
        self.heading_label(lay, "Excitations in this load case", "Factors on the excitation amplitudes "
                           "(part load), for all and per excitation.")
        self._scales(lay, i, lc)
        self.heading_label(lay, "Misfire", "One cylinder of an excitation given with cylinders fires "
                           "weakly or not at all in this load case.")
        self.rows_in(lay, MISFIRE_SPECS, "Add misfire", "misfire", lambda i: ("load_cases", i, "misfire"),
                     lambda el, r, single, key: self.problem(el if single else f"{el} misfire {r + 1}",
                                                             f"misfire.{key}"),
                     lambda doc: edits.list_append(doc, ("load_cases", self.current, "misfire"),
                                                   {"cylinder": _first_cylinder(doc), "gas_torque_fraction": 0}),
                     lambda doc, r: edits.list_remove(doc, ("load_cases", self.current, "misfire"), r))

    def _shares(self, lay, part):
        self.rows_in(lay, SHARE_SPECS, "Add disc", "disc", lambda i: ("load_cases", i, part),
                     lambda el, r, single, key: self.problem(f"{el} {part} {r + 1}", key),
                     lambda doc: edits.list_append(doc, ("load_cases", self.current, part),
                                                   {"at": _free_disc(doc, self.current)}),
                     lambda doc, r: edits.list_remove(doc, ("load_cases", self.current, part), r))

    def _scales(self, lay, i, lc):
        base = ("load_cases", i)
        scale = lc.get("excitation_scale")
        form = self.form_in(lay)
        if isinstance(scale, dict):
            self.specs_in(form, [SCALE_STAR], base + ("excitation_scale",), scale, self.nested_problem)
        else:
            self.specs_in(form, [SCALE_ALL], base, lc, self.leaf_problem)
        self.map_in(lay, SCALE_VALUE, "Excitation", "Add a factor for one excitation", "excitation factor",
                    lambda i: ("load_cases", i, "excitation_scale"),
                    lambda doc: [(n, n) for n in _excitation_names(doc)],
                    lambda el, key: self.problem(el, f"excitation_scale.{key}"),
                    lambda doc: add_scale(doc, self.current), lambda doc, old, new: rename_scale(
                        doc, self.current, old, new), lambda doc, key: remove_scale(doc, self.current, key),
                    exclude=("*",))

    def _commit(self, path, value):
        if tuple(path[2:]) == ("name",) and len(path) == 3:  # transients naming it follow
            self._replace(edits.rename_load_case(self._doc, self.current, value), "Name")
            return
        super()._commit(path, value)


def _free_disc(doc, i):
    lc = doc["load_cases"][i]
    taken = {x.get("at") for part in ("driving", "driven") for x in lc.get(part) or [] if isinstance(x, dict)}
    free = [d for d in edits.disc_ids(doc) if d not in taken]
    return free[-1] if free else None


def _first_cylinder(doc):
    for e in doc.get("excitations") or []:
        if isinstance(e, dict):
            for c in e.get("cylinders") or []:
                if isinstance(c, dict) and c.get("at") is not None:
                    return c["at"]
    ids = edits.disc_ids(doc)
    return ids[0] if ids else None


def _scale_map(doc, i):
    import copy
    new = copy.deepcopy(doc)
    lc = new["load_cases"][i]
    scale = lc.get("excitation_scale")
    if not isinstance(scale, dict):
        scale = {} if scale is None else {"*": scale}
        lc["excitation_scale"] = scale
    return new, lc, scale


def add_scale(doc, i):
    """A factor for the first excitation without one (a factor for all becomes the '*' entry)."""
    new, lc, scale = _scale_map(doc, i)
    free = [n for n in _excitation_names(doc) if n not in scale]
    if free:
        scale[free[0]] = 1
    return new


def rename_scale(doc, i, old, new_key):
    new, lc, scale = _scale_map(doc, i)
    if new_key is None or new_key in scale:
        return new
    lc["excitation_scale"] = {(new_key if k == old else k): v for k, v in scale.items()}
    return new


def remove_scale(doc, i, key):
    new, lc, scale = _scale_map(doc, i)
    scale.pop(key, None)
    if not scale:
        lc.pop("excitation_scale")
    elif set(scale) == {"*"}:
        lc["excitation_scale"] = scale["*"]  # the factor for all, written as one value again
    return new
