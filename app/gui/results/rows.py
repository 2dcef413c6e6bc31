"""Table rows of the result views, as plain text (Qt-free).

The same rows fill the on-screen tables and the CSV exports, and every number
goes through :mod:`app.formatting`, so the screen, the CSV, the command line
and the review sheet print the same digits.  Nothing is computed here that
core already computes: separations, crossings and bands come from
:mod:`core.screening`, energy shares from :mod:`core.solver`.
"""
from __future__ import annotations

import math
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
COINCIDENCE_HEADERS = ("Mode", "Natural Hz", "Excitation", "Order", "Margin %", "Status",
                       "Crossing rpm", "Band rpm")
CURSOR_HEADERS = ("Excitation", "Order", "Excitation Hz", "Nearest mode", "Natural Hz",
                  "Separation %")


@dataclass
class Row:
    """One table row: display texts, plus what the views need beside the text."""

    cells: list
    tooltip: str = ""
    status: str | None = None  # "pass" | "fail" | "muted" | None: colours the row
    key: object = None  # e.g. the mode index this row selects
    extra: dict = field(default_factory=dict)


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
    if link_ids:
        strain = np.asarray(modes.strain_share)
        top_link, top_strain = np.argmax(strain, axis=1), strain.max(axis=1)
    if disc_ids:
        kinetic = np.asarray(modes.kinetic_share)
        top_disc, top_kinetic = np.argmax(kinetic, axis=1), kinetic.max(axis=1)
    for i in range(n):
        f = float(modes.frequency_hz[i])
        rigid = bool(modes.rigid_body[i])
        if rigid or not link_ids:
            strain_text = "—"
        else:
            strain_text = fmt.share(train.name_of(link_ids[int(top_link[i])]), float(top_strain[i]))
        di = disc_ids[int(top_disc[i])] if disc_ids else None
        kinetic_text = fmt.share(train.name_of(di), float(top_kinetic[i])) if disc_ids else "—"
        above = bool(above_limit[i]) and not rigid
        tip = ("Rigid-body mode: the whole train turns as one; not screened." if rigid else
               f"Mode {int(modes.number[i])}: {fmt.hz(f)} Hz = {fmt.cpm(f)} cycles per minute.")
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
        rows.append(Row([mode_label(modes, i), fmt.hz(f), fmt.cpm(f), "yes" if rigid else "",
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


def coincidence_rows(screening, modes=None) -> list[Row]:
    """Coincidences in core's order (worst first)."""
    modes = modes if modes is not None else screening.modes
    rows = []
    index = {}  # mode number -> first index, as mode_index gives
    for i, number in enumerate(np.asarray(modes.number).tolist()):
        index.setdefault(int(number), i)
    for c in screening.coincidences:
        idx = index.get(int(c.mode))
        where = ("fixed frequency" if c.order is None else
                 f"order {fmt.order(c.order)} of {name_of(screening.train, c.line.at)}")
        tip = (f"Mode {c.mode} ({fmt.hz(c.frequency_hz)} Hz) against {c.source}, {where}: "
               f"smallest separation {fmt.percent(c.separation)} % over the operating range "
               f"(required {fmt.percent(screening.margin)} %) at {fmt.rpm(c.worst_speed)} rpm. "
               "Click to show this mode.")
        rows.append(Row([str(c.mode), fmt.hz(c.frequency_hz), c.source, fmt.order(c.order),
                         fmt.percent(c.separation), c.status.upper(), fmt.rpm(c.crossing_speed),
                         band_text(c.band)], tip, c.status, idx, {"coincidence": c}))
    return rows


def cursor_rows(nearest: list[dict], margin: float) -> list[Row]:
    """Speed-cursor read-out from :func:`core.screening.nearest_at_speed`."""
    rows = []
    for r in nearest:
        line = r["line"]
        sep = r["separation"]
        status = None if sep is None else ("fail" if sep < margin else "pass")
        rows.append(Row([line.source, fmt.order(line.order), fmt.hz(r["excitation_hz"]),
                         "—" if r["mode"] is None else str(r["mode"]),
                         "—" if r["natural_hz"] is None else fmt.hz(r["natural_hz"]),
                         "—" if sep is None else fmt.percent(sep)],
                        "", status, r["mode"], {"nearest": r}))
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
