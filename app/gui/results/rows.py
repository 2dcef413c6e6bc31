"""Table rows of the result views, as plain text (Qt-free).

The same rows fill the on-screen tables and the CSV exports, and every number
goes through :mod:`app.formatting`, so the screen, the CSV, the command line
and the review sheet print the same digits.  Nothing is computed here that
core already computes: separations, crossings and bands come from
:mod:`core.screening`, energy shares from :mod:`core.solver`.
"""
from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass, field

import numpy as np

from app import formatting as fmt
from core import units

FREQUENCY_HEADERS = ("Mode", "Hz", "cpm", "Rigid body", "Largest strain energy",
                     "Largest kinetic energy", "Screening")
#: the same on screen, on two lines where that lets seven columns fit a 1366-pixel screen
FREQUENCY_HEADERS_SHOWN = ("Mode", "Hz", "cpm", "Rigid\nbody", "Largest strain\nenergy",
                           "Largest kinetic\nenergy", "Screening")
SCREENED, ABOVE_LIMIT, NOT_SCREENED_RIGID = "screened", "above the screening limit", "not screened"
#: "Margin %" is the nominal separation; "Margin with tolerances %" the separation from the edge of the
#: mode's tolerance band, which the status follows when tolerances are given ('—' without them)
COINCIDENCE_HEADERS = ("Mode", "Natural Hz", "Excitation", "Order / line", "Margin %", "Margin with tolerances %",
                       "Status", "Crossing rpm", "Band rpm")
#: the same on screen, on two lines, so that a line's formula fits beside the excitation's name
COINCIDENCE_HEADERS_SHOWN = ("Mode", "Natural\nHz", "Excitation", "Order /\nline", "Margin\n%",
                             "Margin with\ntolerances %", "Status", "Crossing\nrpm", "Band\nrpm")
#: the column of the margin with tolerances (hidden on screen when the train gives none)
BAND_MARGIN_COLUMN = COINCIDENCE_HEADERS.index("Margin with tolerances %")
CURSOR_HEADERS = ("Excitation", "Order / line", "Excitation Hz", "Nearest mode", "Natural Hz",
                  "Separation %")


class LazyText:
    """A text written when it is first read (``write(*inputs)``), equal to another made by the
    same function from equal inputs: a long train's hundreds of coincidence rows are made
    again on every live edit, and their tooltips are read only on hovering one."""

    __slots__ = ("write", "inputs", "_text")

    def __init__(self, write, *inputs):
        self.write, self.inputs, self._text = write, inputs, None

    def text(self) -> str:
        if self._text is None:
            self._text = self.write(*self.inputs)
        return self._text

    def __eq__(self, other) -> bool:
        if isinstance(other, LazyText):
            return self.write is other.write and self.inputs == other.inputs
        return isinstance(other, str) and self.text() == other

    __hash__ = None


@dataclass
class Row:
    """One table row: display texts, plus what the views need beside the text."""

    cells: list
    tip: object = ""  # the tooltip: a str, or a LazyText written when first read
    status: str | None = None  # "pass" | "fail" | "muted" | None: colours the row
    key: object = None  # e.g. the mode index this row selects
    extra: dict = field(default_factory=dict)

    @property
    def tooltip(self) -> str:
        tip = self.tip
        return tip.text() if isinstance(tip, LazyText) else tip


def name_of(train, element_id: str | None) -> str:
    """The name people see for a disc or link (its id where it has none; '—' for None)."""
    if element_id is None:
        return "—"
    return train.name_of(element_id) if train is not None else element_id


def mode_label(modes, i: int) -> str:
    """'2' for elastic mode number 2; rigid-body modes show their number too."""
    return f"{int(modes.number[i])}"


def frequency_rows(modes, above_limit=None, screened: bool = False) -> list[Row]:
    """One row per mode: number, Hz, cpm, rigid-body mark, dominant link and disc
    by name (the same picks as ``Modes.dominant_link`` / ``dominant_disc``, taken
    for all modes at once: a 200-disc train has as many rows as modes), and
    whether the mode was screened.

    ``above_limit``: per mode, True where it lies above the screening limit
    (``Study.above_screening_limit``): listed and marked, not screened.
    ``screened``: whether there was a screening at all (operating data)."""
    rows = []
    train = modes.train
    disc_ids, link_ids = list(modes.disc_ids), list(modes.link_ids)
    n = len(modes)
    above_limit = np.zeros(n, bool) if above_limit is None else np.asarray(above_limit, bool)
    # plain lists: a numpy scalar read per row and column costs more than the row's text
    if link_ids:
        strain = np.asarray(modes.strain_share)
        top_link, top_strain = np.argmax(strain, axis=1).tolist(), strain.max(axis=1).tolist()
    if disc_ids:
        kinetic = np.asarray(modes.kinetic_share)
        top_disc, top_kinetic = np.argmax(kinetic, axis=1).tolist(), kinetic.max(axis=1).tolist()
    freqs = np.asarray(modes.frequency_hz, float).tolist()
    rigids = np.asarray(modes.rigid_body, bool).tolist()
    numbers = np.asarray(modes.number).tolist()
    above_limit = above_limit.tolist()
    for i in range(n):
        f = freqs[i]
        rigid = rigids[i]
        if rigid or not link_ids:
            strain_text = "—"
        else:
            strain_text = fmt.share(train.name_of(link_ids[top_link[i]]), float(top_strain[i]))
        di = disc_ids[top_disc[i]] if disc_ids else None
        kinetic_text = fmt.share(train.name_of(di), float(top_kinetic[i])) if disc_ids else "—"
        above = bool(above_limit[i]) and not rigid
        tip = ("Rigid-body mode: the whole train turns as one; not screened." if rigid else
               f"Mode {int(numbers[i])}: {fmt.hz(f)} Hz = {fmt.cpm(f)} cycles per minute.")
        if disc_ids:
            tip += f" Largest kinetic energy in {train.name_of(di)}."
        if above:
            tip += (" Above the screening limit (no excitation in the operating range comes near it): "
                    "listed, not screened.")
        if not screened:
            screening = "—"
        elif rigid:
            screening = NOT_SCREENED_RIGID
        else:
            screening = ABOVE_LIMIT if above else SCREENED
        rows.append(Row([f"{int(numbers[i])}", fmt.hz(f), fmt.cpm(f), "yes" if rigid else "",  # mode_label
                         strain_text, kinetic_text, screening], tip,
                        "muted" if (rigid or above) else None, i))
    return rows


def mode_index(modes, number: int) -> int | None:
    """Index into ``modes`` of solve mode number ``number`` (None if not solved)."""
    hit = np.flatnonzero(np.asarray(modes.number) == number)
    return int(hit[0]) if hit.size else None


def band_text(band) -> str:
    if band is None:
        return "—"
    lo, hi = band
    if lo <= 0 and not math.isfinite(hi):
        return "all speeds"
    return f"{fmt.rpm(lo)}–{fmt.rpm(hi)}"


_DECIMAL = re.compile(r"\d+\.\d{4,}")


def _short_numbers(text: str) -> str:
    """Numbers in a formula to four significant digits ('12.0968' -> '12.1', '24.1935' ->
    '24.19'): a table cell or a plot label stays short; the tooltip gives the full text."""
    if "." not in text:
        return text
    return _DECIMAL.sub(lambda m: f"{float(m.group()):.4g}", text)


@functools.lru_cache(maxsize=4096)
def line_order_text(line) -> str:
    """What an excitation line is, in a table's "Order / line" column: "fixed" for a
    fixed frequency, the order ("2", "0.5") for an order line, and the formula
    ("|300 Hz − 12.1·N|") for a line f = |a + b·N| (an inverter or interharmonic line)."""
    kind = line.kind
    if kind == "fixed":
        return "fixed"
    if kind == "order":
        return _short_numbers(fmt.order(line.order if line.order is not None else line.slope))
    text = line.formula or line.label
    return _short_numbers(text[4:] if text.startswith("f = ") else text)


def line_words(line, train=None) -> str:
    """The line in words for a tooltip: a fixed frequency, an order of a named shaft, or
    a line by its formula with what N is."""
    kind = line.kind
    if kind == "fixed":
        return f"the fixed frequency {line.fixed_hz:g} Hz"
    shaft = name_of(train, line.at)
    if kind == "order":
        return f"order {line_order_text(line)} of {shaft}" + (" (a major order)" if line.major else "")
    formula = line.formula or line_order_text(line)
    return f"the line {formula} (N: speed of {shaft} in rev/s)"


def coincidence_rows(screening, modes=None) -> list[Row]:
    """Coincidences in core's order (worst first)."""
    modes = modes if modes is not None else screening.modes
    rows = []
    index = {}  # mode number -> first index, as mode_index gives
    for i, number in enumerate(np.asarray(modes.number).tolist()):
        index.setdefault(int(number), i)
    words = {}  # per line: a 200-disc train lists hundreds of pairs over a few lines
    for c in screening.coincidences:
        idx = index.get(int(c.mode))
        where = words.get(id(c.line))
        if where is None:
            where = words[id(c.line)] = line_words(c.line, screening.train)
        band_margin = None if c.separation_band is None else fmt.percent(c.separation_band)
        rows.append(Row([str(c.mode), fmt.hz(c.frequency_hz), c.source, line_order_text(c.line),
                         fmt.percent(c.separation), band_margin or "—", c.status.upper(),
                         fmt.rpm(c.crossing_speed), band_text(c.band)],
                        LazyText(_coincidence_tip, c.mode, c.frequency_hz, c.source, where, c.separation,
                                 c.worst_speed, band_margin, screening.margin),
                        c.status, idx, {"coincidence": c}))
    return rows


def _coincidence_tip(mode, frequency_hz, source, where: str, separation, worst_speed,
                     band_margin: str | None, margin: float) -> str:
    return (f"Mode {mode} ({fmt.hz(frequency_hz)} Hz) against {source}, {where}: "
            f"smallest separation {fmt.percent(separation)} % over the operating range "
            f"at {fmt.rpm(worst_speed)} rpm"
            + (f"; {band_margin} % from the nearest edge of the mode's tolerance band, which the "
               "status follows" if band_margin is not None else "")
            + f" (required {fmt.percent(margin)} %). Click to show this mode.")


def cursor_rows(nearest: list[dict], margin: float, train=None) -> list[Row]:
    """Speed-cursor read-out from :func:`core.screening.nearest_at_speed`."""
    rows = []
    for r in nearest:
        line = r["line"]
        sep = r["separation"]
        status = None if sep is None else ("fail" if sep < margin else "pass")
        tip = f"{line.source}: {line_words(line, train)}"
        rows.append(Row([line.source, line_order_text(line), fmt.hz(r["excitation_hz"]),
                         "—" if r["mode"] is None else str(r["mode"]),
                         "—" if r["natural_hz"] is None else fmt.hz(r["natural_hz"]),
                         "—" if sep is None else fmt.percent(sep)],
                        tip, status, r["mode"], {"nearest": r}))
    return rows


def torque_stress_formats(unit_system: str = "SI"):
    """(torque text, stress text, torque unit, stress unit) of the forced-response tables.

    SI shows kN*m and MPa through :mod:`app.formatting` (the digits of the
    command line and the sheet); US customary converts with :mod:`core.units`."""
    if unit_system == "SI":
        return fmt.torque_knm, fmt.stress_mpa, "kN·m", "MPa"
    tu = units.display_unit(units.TORQUE, unit_system)
    su = units.display_unit(units.STRESS, unit_system)
    return (lambda v: _converted(v, units.TORQUE, tu), lambda v: _converted(v, units.STRESS, su),
            pretty(tu), pretty(su))


def pretty(unit: str) -> str:
    """'lbf*ft' -> 'lbf·ft' for text that is read, not edited."""
    return unit.replace("*", "·").replace("^2", "²").replace("^3", "³")


def response_rows(summary, unit_system: str = "SI", train=None) -> list[Row]:
    """Peak vibratory torque and stress per link from ``core.response.response_summary``,
    the link by name (``key``: its id), values in the display unit system."""
    torque, stress, tu, su = torque_stress_formats(unit_system)
    rows = []
    for p in summary:
        status = None if p.passed is None else ("pass" if p.passed else "fail")
        name = name_of(train, p.link_id)
        rows.append(Row([name, p.kind, torque(p.peak_torque), fmt.rpm(p.speed_at_peak_torque),
                         torque(p.permissible_torque), stress(p.peak_stress), fmt.rpm(p.speed_at_peak_stress),
                         stress(p.permissible_stress), "—" if status is None else status.upper()],
                        f"{name}: peak of the combined (sum over orders) amplitude across the computed "
                        f"speeds, torque in {tu}, stress in {su}.",
                        status, p.link_id))
    return rows


def response_headers(unit_system: str = "SI", one_line: bool = False) -> tuple:
    """Column headers of the peak table.  On screen on up to three short lines,
    so that the nine columns fit a 1366-pixel screen with room for the links'
    names; ``one_line`` for a CSV file ('Peak torque, kN·m')."""
    _t, _s, tu, su = torque_stress_formats(unit_system)
    if one_line:
        return ("Link", "Kind", f"Peak torque, {tu}", "at rpm", f"Permissible torque, {tu}",
                f"Peak stress, {su}", "at rpm", f"Permissible stress, {su}", "Status")
    return ("Link", "Kind", f"Peak\ntorque\n{tu}", "at\nrpm", f"Permissible\ntorque\n{tu}",
            f"Peak\nstress\n{su}", "at\nrpm", f"Permissible\nstress\n{su}", "Status")


def _converted(value, kind, unit: str) -> str:
    """Three significant digits in ``unit``, never in exponent form ('2250', '104', '0.946'),
    as app.formatting prints kN*m and MPa."""
    if value is None or not math.isfinite(value):
        return "—"
    v = units.convert(value, kind, unit)
    if v == 0:
        return "0"
    if abs(v) >= 1000:
        return f"{v:.0f}"
    digits = max(0, 2 - math.floor(math.log10(abs(v))))
    return f"{round(v, digits):.{digits}f}".rstrip("0").rstrip(".") if digits else f"{v:.0f}"


# ------------------------------------------------------------ acceptance (issue 12)
ACCEPTANCE_HEADERS = ("Link", "Criterion", "Load case", "Speed band", "Utilisation", "Found / limit", "at rpm",
                      "Status")
#: the same on screen, short enough for a 1366-pixel screen
ACCEPTANCE_HEADERS_SHOWN = ("Link", "Criterion", "Load case", "Band", "Utilisation", "Found / limit", "at\nrpm",
                            "Status")
#: a speed band in a table cell (app.wording.speed_band in the row's tooltip)
SHORT_BANDS = {"operating": "operating", "transient": "start-up", "overspeed": "overspeed"}


def check_quantity(check) -> str:
    """Which curve of the forced response shows a check: 'torque' or 'stress'
    (a safety factor rests on the stress, a dissipated power on the torque)."""
    return "stress" if check.unit in ("Pa", "1") else "torque"


def check_value_text(value: float, unit: str, unit_system: str = "SI", limit: bool = False) -> str:
    """A check's value (or limit) with its unit in the display unit system: a torque,
    a stress, a power, or a safety factor (the limit of a safety factor is the factor
    asked for: '≥ 1.5')."""
    if value is None or not math.isfinite(value):
        return "—"
    torque, stress, tu, su = torque_stress_formats(unit_system)
    if unit == "N*m":
        return f"{torque(value)} {tu}"
    if unit == "Pa":
        return f"{stress(value)} {su}"
    if unit == "W":
        if unit_system == "SI":
            return f"{fmt.power_kw(value)} kW"
        pu = units.display_unit(units.POWER, unit_system)
        return f"{_converted(value, units.POWER, pu)} {pretty(pu)}"
    text = f"{value:.3g}"
    return f"≥ {text}" if limit else f"safety factor {text}"


def acceptance_rows(acceptance, train=None, unit_system: str = "SI", load_case: str | None = None) -> list[Row]:
    """Acceptance checks (:attr:`core.acceptance.Acceptance.checks`), worst utilisation
    first — all, or those of one ``load_case``: the link by name (and its segment), the
    criterion in words (:func:`app.wording.criterion`), load case, speed band,
    utilisation (drawn as a bar on screen), what was found against its limit, the speed of
    the worst point, and pass or fail.  ``key``: the check;
    ``extra['utilisation']``: the fraction."""
    from app import wording
    rows = []
    for c in acceptance.worst_first():
        if load_case is not None and c.load_case != load_case:
            continue
        link = name_of(train, c.link) + (f", segment {c.segment + 1}" if c.segment is not None else "")
        status = "pass" if c.passed else "fail"
        crit = wording.criterion(c.criterion)
        band = wording.speed_band(c.speed_band)
        u = float(c.utilisation)
        found = check_value_text(c.value, c.unit, unit_system)
        limit = check_value_text(c.limit, c.unit, unit_system, limit=True)
        if c.unit in ("N*m", "Pa", "W"):  # one unit for both: '17.5 / 5 kN·m'
            unit = found.rsplit(" ", 1)[-1]
            pair = f"{found.rsplit(' ', 1)[0]} / {limit.rsplit(' ', 1)[0]} {unit}"
        else:  # a safety factor found against the one asked for
            pair = f"{float(c.value):.3g} / {limit}" if math.isfinite(c.value) else f"— / {limit}"
        tip = (f"{link}: {crit} — {fmt.percent(u)} % of its limit ({found} against {limit}) at "
               f"{fmt.rpm(c.at)} rpm, {band}" + (f", load case {c.load_case}" if c.load_case else "")
               + (f". {c.note[0].upper()}{c.note[1:]}" if c.note else "")
               + f". {status.upper()}. Click to show this link's curve at this speed.")
        rows.append(Row([link, crit, c.load_case or "—", SHORT_BANDS.get(c.speed_band, band),
                         f"{fmt.percent(u)} %", pair, fmt.rpm(c.at), status.upper()],
                        tip, status, c, {"utilisation": u, "check": c}))
    return rows


def band_peak_rows(band_peaks, band: str, train=None, unit_system: str = "SI", acceptance=None,
                   link_ids=None) -> list[Row]:
    """Per link, the peaks of one speed band (:attr:`core.study.Study.band_peaks`: polished
    between computed speeds), the columns of :func:`response_headers`: peak torque and
    stress (sum of order amplitudes) with their speeds, the permissible values the
    acceptance judged this band against (transient values outside the operating
    range where given), and the acceptance's verdict on them (``key``: the link id)."""
    torque, stress, tu, su = torque_stress_formats(unit_system)
    peaks = {}
    for p in band_peaks:
        if p.band == band and p.combination == "sum" and p.quantity in ("torque", "stress"):
            peaks[(p.link_id, p.quantity)] = p
    limits, verdict = {}, {}
    if acceptance is not None:
        for c in acceptance.checks:
            if c.speed_band != band or c.criterion not in ("permissible_torque", "permissible_stress"):
                continue
            q = "torque" if c.criterion == "permissible_torque" else "stress"
            limits[(c.link, q)] = c.limit
            verdict.setdefault(c.link, []).append(bool(c.passed))
    ids = link_ids if link_ids is not None else list(dict.fromkeys(p.link_id for p in band_peaks))
    rows = []
    from app import wording
    for lid in ids:
        t, s = peaks.get((lid, "torque")), peaks.get((lid, "stress"))
        if t is None and s is None:
            continue
        checks = verdict.get(lid)
        status = None if not checks else ("pass" if all(checks) else "fail")
        name = name_of(train, lid)
        kind = (t or s).kind
        polished = any(p is not None and p.refined for p in (t, s))
        rows.append(Row([name, kind, torque(t.peak if t else None), fmt.rpm(t.speed if t else None),
                         torque(limits.get((lid, "torque"))), stress(s.peak if s else None),
                         fmt.rpm(s.speed if s else None), stress(limits.get((lid, "stress"))),
                         "—" if status is None else status.upper()],
                        f"{name}: peaks in the {wording.speed_band(band)} (sum of order amplitudes"
                        + (", polished between the computed speeds" if polished else "")
                        + f"), torque in {tu}, stress in {su}.", status, lid))
    return rows



# ------------------------------------------------------------ damped modes (issue 13 item 4)
DAMPED_HEADERS = ("#", "Damped\nHz", "Damping\nratio ζ, %", "Undamped-\nequivalent Hz")
DAMPER_HEADERS = ("Mode", "Damper\nfree Hz", "Damper\nlocked Hz")


def damped_rows(damped) -> list[Row]:
    """One row per oscillating damped mode (:class:`core.damped.DampedModes`), lowest first:
    damped natural frequency Im(lambda) / 2 pi, modal damping ratio -Re(lambda) / |lambda|
    and the undamped-equivalent |lambda| / 2 pi."""
    rows = []
    for k, d in enumerate(damped.modes, start=1):
        zeta = float(d.damping_ratio)
        rows.append(Row([str(k), fmt.hz(d.frequency_hz), fmt.percent(zeta), fmt.hz(d.natural_frequency_hz)],
                        f"Damped mode {k}: {fmt.hz(d.frequency_hz)} Hz, damping ratio ζ = {zeta:.4g} "
                        f"({fmt.percent(zeta)} % of critical); undamped-equivalent {fmt.hz(d.natural_frequency_hz)} Hz.",
                        None, k))
    return rows


def damped_note(damped) -> str:
    """What the damped table rests on: overdamped motions, the damping model's notes."""
    parts = []
    rates = list(getattr(damped, "overdamped_rates", ()) or ())
    if rates:
        parts.append(f"{len(rates)} overdamped motion{'s' if len(rates) != 1 else ''} (decay rate"
                     f"{'s' if len(rates) != 1 else ''} {', '.join(f'{r:.3g}' for r in rates)} 1/s), e.g. a "
                     "damper ring creeping against its housing")
    parts += [str(n) for n in getattr(damped, "notes", ()) or ()]
    if not damped.modes and not parts:
        parts.append("no oscillating damped mode")
    text = "; ".join(parts)
    return text[:1].upper() + text[1:] + ("." if text and not text.endswith(".") else "")


def damper_rows(bounds) -> list[Row]:
    """Elastic natural frequencies with the viscous damper's ring free and locked
    (:class:`core.damped.DamperBounds`), mode by mode."""
    n = max(len(bounds.free_hz), len(bounds.locked_hz))
    rows = []
    for k in range(n):
        free = bounds.free_hz[k] if k < len(bounds.free_hz) else None
        locked = bounds.locked_hz[k] if k < len(bounds.locked_hz) else None
        rows.append(Row([str(k + 1), "—" if free is None else fmt.hz(free), "—" if locked is None else fmt.hz(locked)],
                        "", None, k))
    return rows
