"""The transients tab: the project's ``transients`` events (core.events.parse_transients),
each with its duration, starting state and resolution, the counts of events each link
must take, and its torques at discs, one source each: a table against time, a CSV file,
a step or ramp, decaying sinusoids, a terminal short circuit, a table against speed, a
load case, or a synchronous motor's start-up.  Built on
:class:`app.gui.list_form.ListDetailForm`.
"""
from __future__ import annotations

import copy

from PySide6 import QtCore, QtWidgets

from core import units as u
from core.events import SOURCE_KEYS

from . import edits
from .editors import CHOICE, NUMBER, TEXT, TIPS, Spec, disc_choices, with_default
from .list_form import ListDetailForm

SOURCE_LABELS = {"table": "torque against time (table)", "csv": "torque against time (CSV file)",
                 "ramp": "step or ramp", "sinusoids": "decaying sinusoids",
                 "short_circuit": "terminal short circuit", "speed_table": "torque against speed (table)",
                 "load_case": "a load case's load", "synchronous_start": "synchronous motor start-up"}

#: what a torque given a new source starts with (values an engineer then overwrites)
SOURCE_DEFAULTS = {
    "table": [["0 s", "0 N*m"], ["10 ms", "1 kN*m"]],
    "csv": "torque.csv",
    "ramp": {"start": "0 s", "rise": "20 ms", "from": "0 N*m", "to": "1 kN*m"},
    "sinusoids": [{"amplitude": "1 kN*m", "frequency": "50 Hz", "decay": "0.1 s"}],
    "short_circuit": {"phases": 3, "rated_torque": "10 kN*m", "subtransient_reactance": 0.15,
                      "armature_time_constant": "0.1 s", "line_frequency": "50 Hz"},
    "speed_table": [["0 rpm", "0 N*m"], ["1500 rpm", "-1 kN*m"]],
    "load_case": "",
    "synchronous_start": {"line_frequency": "50 Hz", "synchronous_speed": "1500 rpm",
                          "average_torque": [["0 rpm", "10 kN*m"], ["1500 rpm", "0 kN*m"]],
                          "pulsating_torque": [["0 rpm", "10 kN*m"], ["1500 rpm", "2 kN*m"]]},
}

TIPS.update({
    "ev.name": "Name of the event (start-up, short circuit ...).",
    "ev.duration": "Time simulated (s, ms).",
    "ev.initial_speed": "Reference shaft's speed at the start (0: from standstill).",
    "ev.initial_state": "Shafts untwisted at the start, or twisted by the torques acting at time zero "
                        "(a train running steadily when the event begins).",
    "ev.resolve_up_to": "Highest frequency the integration resolves (empty: the program's rule from the "
                        "torques).",
    "ev.time_step": "Integration time step (empty: from the resolved frequency).",
    "ev.damping_frequency": "Frequency at which hysteretic damping is turned into viscous damping (empty: "
                            "the lowest mode).",
    "ev.required_all": "Number of such events every link must take (fatigue); empty: no count asked.",
    "ev.required": "Number of such events this link must take.",
    "tq.at": "Disc the torque acts on (positive in the direction of rotation, on the disc's own shaft).",
    "tq.label": "What the torque is (shown in the results).",
    "tq.source": "How the torque is given.",
    "tq.time": "Time (s, ms).",
    "tq.torque": "Torque (N*m, kN*m, lbf*ft); positive drives, negative brakes.",
    "tq.speed": "Speed of the disc's own shaft.",
    "tq.csv": "CSV file with time and torque columns (a header row is skipped); a path relative to the "
              "project file's folder.",
    "tq.time_unit": "Unit of bare times in the file (default s).",
    "tq.torque_unit": "Unit of bare torques in the file (default N*m).",
    "ramp.start": "Time the change starts.", "ramp.rise": "Rise time (0 or empty: a step).",
    "ramp.from": "Torque before the change (empty: 0).", "ramp.to": "Torque after the change.",
    "sin.amplitude": "Amplitude A of A·exp(−(t − t0)/τ)·sin(2π f (t − t0) + φ).",
    "sin.frequency": "Frequency f (0 with phase 90°: a decaying one-way torque).",
    "sin.decay": "Decay time constant τ (empty: no decay).",
    "sin.phase_deg": "Phase φ, degrees.", "sin.start": "Start time t0.",
    "sc.phases": "Two-phase (line to line) or three-phase terminal short circuit.",
    "sc.rated_torque": "Machine's rated torque.",
    "sc.power_factor": "Rated power factor (the base torque is the rated torque over it); empty: 1.",
    "sc.subtransient_reactance": "Subtransient reactance x''_d, per unit.",
    "sc.transient_reactance": "Transient reactance x'_d, per unit (two-phase: with T''_d, the decay of "
                              "the double-frequency term).",
    "sc.subtransient_time_constant": "Subtransient time constant T''_d.",
    "sc.armature_time_constant": "Armature time constant T_a.",
    "sc.line_frequency": "Line frequency.", "sc.start": "Time of the fault.",
    "ss.line_frequency": "Line frequency.",
    "ss.synchronous_speed": "Synchronous speed of the motor shaft.",
    "ss.voltage_factor": "Supply voltage over rated voltage during the start (torque ∝ voltage²); empty: 1.",
    "ss.phase_deg": "Phase of the pulsating torque at switch-on, degrees.",
    "ss.average_torque": "Average air-gap torque against the motor's speed at rated voltage (motor maker's "
                         "curve).",
    "ss.pulsating_torque": "Pulsating-torque amplitude against the motor's speed at rated voltage.",
    "tq.load_case": "A load case of the project, applied as a load torque against speed.",
})

EVENT_SPECS = [
    Spec("duration", "Duration", u.TIME, "ev.duration", optional=False),
    Spec("initial_speed", "Initial speed", u.SPEED, "ev.initial_speed", placeholder="0"),
    Spec("initial_state", "Initial state", CHOICE, "ev.initial_state",
         choices=lambda doc: [("untwisted", "untwisted"), ("equilibrium", "in equilibrium")],
         default="untwisted"),
    Spec("resolve_up_to", "Resolve up to", u.FREQUENCY, "ev.resolve_up_to", placeholder="auto"),
    Spec("time_step", "Time step", u.TIME, "ev.time_step", placeholder="auto"),
    Spec("damping_frequency", "Damping at", u.FREQUENCY, "ev.damping_frequency", placeholder="lowest mode"),
]
NAME_SPEC = Spec("name", "Name", TEXT, "ev.name", optional=False)
REQUIRED_ALL = Spec("required_events", "Required events,\nevery link", NUMBER, "ev.required_all",
                    placeholder="none")
REQUIRED_ONE = Spec("", "Events", NUMBER, "ev.required")
TORQUE_HEAD = [
    Spec("at", "Acts at", CHOICE, "tq.at", choices=lambda doc: disc_choices(doc)),
    Spec("label", "Label", TEXT, "tq.label"),
]
CSV_SPECS = [
    Spec("csv", "File", TEXT, "tq.csv", optional=False),
    Spec("time_unit", "Bare times in", TEXT, "tq.time_unit", placeholder="s"),
    Spec("torque_unit", "Bare torques in", TEXT, "tq.torque_unit", placeholder="N*m"),
]
RAMP_SPECS = [
    Spec("start", "Start", u.TIME, "ramp.start", placeholder="0"),
    Spec("rise", "Rise time", u.TIME, "ramp.rise", placeholder="0 (step)"),
    Spec("from", "From", u.TORQUE, "ramp.from", placeholder="0"),
    Spec("to", "To", u.TORQUE, "ramp.to", optional=False),
]
SINUSOID_SPECS = [
    Spec("amplitude", "Amplitude", u.TORQUE, "sin.amplitude", optional=False, width=60),
    Spec("frequency", "Frequency", u.FREQUENCY, "sin.frequency", width=50),
    Spec("decay", "Decay τ", u.TIME, "sin.decay", placeholder="none", width=50),
    Spec("phase_deg", "Phase, °", NUMBER, "sin.phase_deg", placeholder="0", width=36),
    Spec("start", "Start", u.TIME, "sin.start", placeholder="0", width=44),
]
SHORT_CIRCUIT_SPECS = [
    Spec("phases", "Phases", CHOICE, "sc.phases",
         choices=lambda doc: [(3, "three-phase"), (2, "two-phase")], default=3),
    Spec("rated_torque", "Rated torque", u.TORQUE, "sc.rated_torque", optional=False),
    Spec("power_factor", "Power factor", NUMBER, "sc.power_factor", placeholder="1"),
    Spec("subtransient_reactance", "x''_d, p.u.", NUMBER, "sc.subtransient_reactance", optional=False),
    Spec("transient_reactance", "x'_d, p.u.", NUMBER, "sc.transient_reactance"),
    Spec("subtransient_time_constant", "T''_d", u.TIME, "sc.subtransient_time_constant"),
    Spec("armature_time_constant", "T_a", u.TIME, "sc.armature_time_constant", optional=False),
    Spec("line_frequency", "Line frequency", u.FREQUENCY, "sc.line_frequency", optional=False),
    Spec("start", "Fault at", u.TIME, "sc.start", placeholder="0"),
]
START_SPECS = [
    Spec("line_frequency", "Line frequency", u.FREQUENCY, "ss.line_frequency", optional=False),
    Spec("synchronous_speed", "Synchronous speed", u.SPEED, "ss.synchronous_speed", optional=False),
    Spec("voltage_factor", "Voltage factor", NUMBER, "ss.voltage_factor", placeholder="1"),
    Spec("phase_deg", "Phase, °", NUMBER, "ss.phase_deg", placeholder="0"),
]
TIME_COLUMNS = [Spec("", "Time", u.TIME, "tq.time"), Spec("", "Torque", u.TORQUE, "tq.torque")]
SPEED_COLUMNS = [Spec("", "Speed", u.SPEED, "tq.speed"), Spec("", "Torque", u.TORQUE, "tq.torque")]


def torque_source(t) -> str | None:
    """The source key a torque entry gives (the first, if a hand-written one gives several)."""
    if not isinstance(t, dict):
        return None
    return next((k for k in SOURCE_KEYS if t.get(k) is not None), None)


def set_torque_source(doc: dict, e: int, k: int, source: str) -> dict:
    """Torque ``k`` of event ``e`` given by ``source`` (its former source's data go; undo brings
    them back)."""
    new = copy.deepcopy(doc)
    t = new["transients"][e]["torques"][k]
    if torque_source(t) == source:
        return new
    for key in SOURCE_KEYS + ("time_unit", "torque_unit"):
        t.pop(key, None)
    value = copy.deepcopy(SOURCE_DEFAULTS[source])
    if source == "load_case":
        names = [lc.get("name") for lc in doc.get("load_cases") or [] if isinstance(lc, dict)]
        value = names[0] if names else ""
    t[source] = value
    return new


class TransientsForm(ListDetailForm):
    list_key = "transients"
    what = "transient event"
    empty_text = ("No transient events yet. An event applies torques at discs over time (a start-up, a "
                  "short circuit, a load step); the time-domain run gives peak torques and the fatigue "
                  "each event spends. Add one.")
    add_tip = "Add a transient event: a load step at the last disc"

    def element(self, doc, i):
        ev = doc["transients"][i]
        name = ev.get("name") if isinstance(ev, dict) else None
        return f"transient '{name}'" if isinstance(name, str) and name.strip() else f"transient #{i + 1}"

    def summary(self, doc, ev):
        torques = [t for t in ev.get("torques") or [] if isinstance(t, dict)]
        return (f"{ev.get('duration', '?')}; " + "; ".join(
            f"{SOURCE_LABELS.get(torque_source(t), '?')} at {t.get('at')}" for t in torques))

    def new_entry(self, doc):
        ids = edits.disc_ids(doc)
        taken = [ev.get("name") for ev in doc.get("transients") or [] if isinstance(ev, dict)]
        return {"name": edits.next_name(taken, "Event"), "duration": "1 s",
                "torques": [{"at": ids[-1] if ids else None, "label": "Load step",
                             "ramp": {"start": "0.1 s", "rise": "10 ms", "to": "-1 kN*m"}}]}

    def _structure(self, i, ev):
        torques = ev.get("torques") if isinstance(ev.get("torques"), list) else []
        req = ev.get("required_events")
        return (i, self.system, tuple(torque_source(t) for t in torques),
                tuple(len(t.get("sinusoids")) if isinstance(t, dict) and isinstance(t.get("sinusoids"), list)
                      else None for t in torques),
                type(req).__name__, tuple(req) if isinstance(req, dict) else None)

    def _build(self, i, ev):
        lay = self._body.layout()
        base = ("transients", i)
        form = self.form_in(lay)
        self.specs_in(form, [NAME_SPEC], base, ev, self.leaf_problem)
        lay.addWidget(self.detail_problem)
        self.grid_in(lay, EVENT_SPECS, base, ev, problem_of=self.leaf_problem)
        self._required(lay, i, ev)
        torques = ev.get("torques") if isinstance(ev.get("torques"), list) else []
        for k, t in enumerate(torques):
            self._torque(lay, i, k, t)
        add = QtWidgets.QPushButton("Add torque")
        add.setToolTip("Another torque acting in this event (a step at the last disc to start with)")
        add.clicked.connect(lambda: self._replace(edits.list_append(
            self._doc, ("transients", self.current, "torques"), self.new_entry(self._doc)["torques"][0]),
            "Add torque"))
        lay.addWidget(add, 0, QtCore.Qt.AlignLeft)

    def _required(self, lay, i, ev):
        req = ev.get("required_events")
        self.heading_label(lay, "Events each link must take", "A fatigue count: the run says how many such "
                           "events each link can take; fewer than required fails.")
        if not isinstance(req, dict):
            form = self.form_in(lay)
            self.specs_in(form, [REQUIRED_ALL], ("transients", i), ev, self.leaf_problem)
        if isinstance(req, dict) or req is None:
            self.map_in(lay, REQUIRED_ONE, "Link", "Add a count for one link", "link count",
                        lambda i: ("transients", i, "required_events"),
                        lambda doc: [(l.get("id"), str(l.get("name") or l.get("id")))
                                     for l in doc.get("links") or [] if isinstance(l, dict)],
                        self._required_problem,
                        lambda doc: _add_required(doc, self.current),
                        lambda doc, old, new: _rename_required(doc, self.current, old, new),
                        lambda doc, key: _remove_required(doc, self.current, key))

    def _required_problem(self, element, key):
        """core names a per-link count 'required_events.ID', an unknown link in the message."""
        own = self.problem(element, f"required_events.{key}")
        if own:
            return own
        general = self.problem(element, "required_events")
        return general if general and repr(key) in general else None

    def _torque(self, lay, i, k, t):
        """One torque: where it acts, its label and its source with the source's own editor."""
        tbase = ("transients", i, "torques", k)
        t = t if isinstance(t, dict) else {}
        box = QtWidgets.QGroupBox(f"Torque {k + 1}")
        box.setStyleSheet("QGroupBox { font-weight: bold; } QGroupBox * { font-weight: normal; }")
        inner = QtWidgets.QVBoxLayout(box)
        inner.setContentsMargins(6, 4, 6, 4)
        lay.addWidget(box)
        form = self.form_in(inner)

        def torque_problem(el, path, k=k):
            return self.leaf_problem(f"{el} torque {k + 1}", path)
        self.specs_in(form, TORQUE_HEAD, tbase, t, torque_problem)
        source = torque_source(t)
        self.choice_box(form, "Given as", [(s, SOURCE_LABELS[s]) for s in SOURCE_KEYS], source, TIPS["tq.source"],
                        lambda v, k=k: self._replace(set_torque_source(self._doc, self.current, k, v),
                                                     f"Torque {k + 1} source"))
        el_of = (lambda el, k=k: f"{el} torque {k + 1}")
        if source == "table":
            self.table_in(inner, TIME_COLUMNS, "row", lambda i, k=k: ("transients", i, "torques", k, "table"),
                          "table", el_of, label="torque point")
        elif source == "speed_table":
            self.table_in(inner, SPEED_COLUMNS, "row",
                          lambda i, k=k: ("transients", i, "torques", k, "speed_table"), "speed_table", el_of,
                          label="torque point")
        elif source == "csv":
            self.specs_in(form, CSV_SPECS, tbase, t, torque_problem)
            browse = QtWidgets.QPushButton("Choose file…")
            browse.setToolTip("Pick the CSV file; a file in the project's folder is written by its name alone")
            browse.clicked.connect(lambda _=False, p=tbase + ("csv",): self._browse(p))
            form.addRow("", browse)
        elif source == "ramp":
            self.grid_in(inner, RAMP_SPECS, tbase + ("ramp",), t.get("ramp") or {}, 4, torque_problem)
        elif source == "sinusoids":
            self.rows_in(inner, SINUSOID_SPECS, "Add sinusoid", "sinusoid",
                         lambda i, k=k: ("transients", i, "torques", k, "sinusoids"),
                         lambda el, r, single, key, k=k: self.problem(f"{el} torque {k + 1} sinusoid {r + 1}", key),
                         lambda doc, k=k: edits.list_append(doc, ("transients", self.current, "torques", k,
                                                                  "sinusoids"), SOURCE_DEFAULTS["sinusoids"][0]),
                         lambda doc, r, k=k: edits.list_remove(doc, ("transients", self.current, "torques", k,
                                                                     "sinusoids"), r, drop_empty=False),
                         min_rows=1)
        elif source == "short_circuit":
            self.grid_in(inner, SHORT_CIRCUIT_SPECS, tbase + ("short_circuit",), t.get("short_circuit") or {},
                         3, torque_problem)
            self.note_label(inner, "The air-gap torque of a terminal short circuit from no load at rated "
                            "voltage, as decaying sinusoids (the published forms for two- and three-phase "
                            "faults).")
        elif source == "load_case":
            spec = Spec("load_case", "Load case", CHOICE, "tq.load_case", choices=lambda doc: [
                (lc.get("name"), lc.get("name")) for lc in doc.get("load_cases") or []
                if isinstance(lc, dict) and lc.get("name")])
            self.specs_in(form, [spec], tbase, t, torque_problem)
        elif source == "synchronous_start":
            sbase = tbase + ("synchronous_start",)
            self.grid_in(inner, START_SPECS, sbase, t.get("synchronous_start") or {}, 2, torque_problem)
            for key, head in (("average_torque", "Average air-gap torque"),
                              ("pulsating_torque", "Pulsating-torque amplitude")):
                self.heading_label(inner, head, TIPS[f"ss.{key}"])
                self.table_in(inner, SPEED_COLUMNS, "row",
                              lambda i, k=k, key=key: ("transients", i, "torques", k, "synchronous_start", key),
                              key, el_of, label="torque point")
        remove = QtWidgets.QPushButton(f"Remove torque {k + 1}")
        remove.setEnabled(len(self.entries()[i].get("torques") or []) > 1)
        remove.clicked.connect(lambda _=False, k=k: self._replace(edits.list_remove(
            self._doc, ("transients", self.current, "torques"), k, drop_empty=False), f"Remove torque {k + 1}"))
        inner.addWidget(remove, 0, QtCore.Qt.AlignLeft)

    def _browse(self, path):
        from pathlib import Path

        from .excitations_form import relative_to
        folder = getattr(self._project, "base_dir", None)
        name, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Torque against time", str(folder or Path.home()),
                                                        "CSV (*.csv *.txt);;All files (*)")
        if name:
            self.editRequested.emit(tuple(path), relative_to(name, folder), "Torque file")


def _add_required(doc, i):
    new = copy.deepcopy(doc)
    ev = new["transients"][i]
    req = ev.get("required_events")
    req = req if isinstance(req, dict) else {}
    free = [l.get("id") for l in new.get("links") or [] if isinstance(l, dict) and l.get("id") not in req]
    if free:
        req[free[0]] = 1000
        ev["required_events"] = req
    return new


def _rename_required(doc, i, old, new_key):
    new = copy.deepcopy(doc)
    ev = new["transients"][i]
    req = ev.get("required_events")
    if isinstance(req, dict) and new_key is not None and new_key not in req:
        ev["required_events"] = {(new_key if k == old else k): v for k, v in req.items()}
    return new


def _remove_required(doc, i, key):
    new = copy.deepcopy(doc)
    ev = new["transients"][i]
    req = ev.get("required_events")
    if isinstance(req, dict):
        req.pop(key, None)
        if not req:
            ev.pop("required_events")
    return new

