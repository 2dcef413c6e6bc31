"""The transient section of the review sheet (issue 14, item 6): one part per event in
``study.transients`` — what the event applies (torques, tables, presets, duration, step,
resolved frequency), the torque against time of the most loaded links, the speed against
time of a start-up with the crossing of the lowest mode marked, and the table of peaks
and fatigue (peak torque, time, limit, damage, allowed and required events, pass/fail).
"""
from __future__ import annotations

import math

import numpy as np
from reportlab.graphics.shapes import Line, PolyLine, String
from reportlab.platypus import KeepTogether, Paragraph, Spacer

from core import units as u

from .. import formatting as fmt
from .. import wording
from .base import Ctx, clip, heading, num, table
from .charts import PALETTE, Plot, drawing, envelope, fit_text
from .styles import BOLD, FAIL_INK, FONT, GREY, INK, escape, styles
from .tables import status_styles

N_CURVES = 4
LIST_ROWS = 8  # rows of an input table printed in full


def transient_block(ctx: Ctx) -> list:
    tr = ctx.study.transients
    if tr is None or not tr.events:
        return []
    events = {e.name: e for e in ctx.train.transients}
    out = []
    for res in tr.events:
        out += event_section(ctx, res, events.get(res.name))
    return out


# ----------------------------------------------------------------- inputs
def _secs(t: float) -> str:
    """A time as a reader writes it: '50 ms', '1.2 s'."""
    if t != 0 and abs(t) < 1.0:
        return f"{num(t * 1e3, 3)} ms"
    return f"{num(t, 4)} s"


def _raw_torques(ctx: Ctx, name: str) -> list:
    for ev in ctx.doc.get("transients") or []:
        if isinstance(ev, dict) and ev.get("name", "").strip() == name:
            return [t if isinstance(t, dict) else {} for t in ev.get("torques") or []]
    return []


def _points(rows, fx, fy) -> str:
    text = "; ".join(f"{fx(a)} {fy(b)}" for a, b in rows[:LIST_ROWS])
    return text + (f"; … {len(rows) - LIST_ROWS} more rows" if len(rows) > LIST_ROWS else "")


def torque_text(ctx: Ctx, src, raw: dict) -> tuple[str, str]:
    """(given as, the data in the sheet's units) of one applied torque."""
    U = ctx.units

    def tq(v):
        return U.text(v, u.TORQUE, 4)
    if src.motor is not None:
        m = src.motor
        return ("synchronous motor start (damper winding)",
                f"line frequency {m.line_frequency:g} Hz, synchronous speed {fmt.rpm(m.synchronous_speed)} rpm, "
                f"supply voltage factor {m.voltage_factor:g} (torque × its square). Average torque against the "
                f"motor's speed: {_points(list(zip(m.speeds, m.average)), lambda w: f'{fmt.rpm(w)} rpm', tq)}. "
                f"Pulsating torque amplitude: "
                f"{_points(list(zip(m.pulsating_speeds, m.pulsating)), lambda w: f'{fmt.rpm(w)} rpm', tq)}; "
                "it pulsates at 2 s f_line, the slip s following the motor's simulated speed")
    if src.speed_table is not None:
        st = src.speed_table
        if st.load_case is not None:
            return ("load case", f"the load curve of load case '{st.load_case}' at this disc")
        return ("torque against speed",
                f"{_points(list(zip(st.speeds, st.torques)), lambda w: f'{fmt.rpm(w)} rpm', tq)} (speed of this "
                "disc's shaft; linear between rows, held beyond)")
    if src.sinusoids:
        terms = "; ".join(
            f"{tq(s.amplitude)} at {s.frequency:g} Hz" + (f", decaying with {_secs(s.decay)}" if s.decay else "")
            + (f", phase {s.phase_deg:g} deg" if s.phase_deg else "") + (f", from {_secs(s.start)}" if s.start else "")
            for s in src.sinusoids[:LIST_ROWS])
        sc = raw.get("short_circuit")
        if isinstance(sc, dict):
            try:
                parts = [f"{int(u.parse_number(sc.get('phases', 3), '', '')):d}-phase terminal short circuit"]
                parts.append(f"rated torque {tq(u.parse(sc['rated_torque'], u.TORQUE, '', ''))}")
                if sc.get("power_factor") is not None:
                    parts.append(f"power factor {u.parse_number(sc['power_factor'], '', ''):g}")
                parts.append(f"subtransient reactance x''_d {u.parse_number(sc['subtransient_reactance'], '', ''):g}")
                if sc.get("transient_reactance") is not None:
                    parts.append(f"transient reactance x'_d {u.parse_number(sc['transient_reactance'], '', ''):g}")
                from core.events import TIME
                if sc.get("subtransient_time_constant") is not None:
                    parts.append(f"T''_d {_secs(u.parse(sc['subtransient_time_constant'], TIME, '', ''))}")
                parts.append(f"T_a {_secs(u.parse(sc['armature_time_constant'], TIME, '', ''))}")
                parts.append(f"line frequency {u.parse(sc['line_frequency'], u.FREQUENCY, '', ''):g} Hz")
                if sc.get("start") is not None:
                    parts.append(f"at {_secs(u.parse(sc['start'], TIME, '', ''))}")
            except Exception:  # validated by the model build; the terms below say it all
                parts = ["terminal short circuit"]
            return ("short circuit (preset)", "; ".join(parts) + f". As decaying sinusoids: {terms}")
        return ("decaying sinusoids", "A exp(−(t − t0) / tau) sin(2π f (t − t0) + phase): " + terms)
    if src.table is not None:
        tb = src.table
        kind = "ramp" if isinstance(raw.get("ramp"), dict) else ("CSV file" if raw.get("csv") else "table")
        what = {"ramp": "step or ramp", "CSV file": f"table from {raw.get('csv')}", "table": "torque against time"}[kind]
        return (what, f"{_points(list(zip(tb.times, tb.torques)), _secs, tq)} (linear between rows, held after the "
                      "last)")
    return ("—", "—")


def inputs_text(ctx: Ctx, res, ev) -> str:
    """One paragraph: duration, step, resolved frequency, start, damping, required events."""
    parts = [f"Duration {_secs(res.duration)}, time step {_secs(res.step)} (20 steps per period of the highest "
             f"frequency resolved, {res.resolved_hz:.4g} Hz), {res.elements} degrees of freedom integrated"]
    if ev is not None:
        op = ctx.train.operating
        ref = op.reference if op is not None else ctx.train.disc_ids[0]
        if ev.initial_speed:
            start = (f"starts at {fmt.rpm(ev.initial_speed)} rpm of '{ctx.name(ref)}'"
                     + (" in the steady twist of its torques" if ev.initial_state == "equilibrium" else " untwisted"))
        else:
            start = "starts from standstill"
        parts.append(start)
        if ev.required_events is not None:
            parts.append(f"required events {num(ev.required_events, 6)} for every shaft")
        for lid, n in ev.required_per_link:
            parts.append(f"'{ctx.name(lid)}' must take {num(n, 6)} events")
    if res.damping_frequency_hz:
        parts.append(f"loss factors as viscous damping matched at {res.damping_frequency_hz:.4g} Hz")
    return "; ".join(parts) + "."


# ----------------------------------------------------------------- plots
def most_loaded(res, n: int = N_CURVES) -> list:
    """The links to plot: nearest their peak limit first, then the largest peaks."""
    def key(lt):
        ratio = lt.peak_torque / lt.permissible_peak if lt.permissible_peak else -1.0
        return (ratio, lt.peak_torque)
    return sorted(res.links, key=key, reverse=True)[:n]


def _time_axis_plot(d, left, bottom, w, h, t_end, y_lo, y_hi, y_title, x_title="time (s)"):
    return Plot(d, left, bottom, w, h, (0.0, t_end), (y_lo, y_hi), x_title=x_title, y_title=y_title, font_size=6)


def _trace(p: Plot, t, y, colour, width=0.8):
    """A long time history as one polyline, mapped to the plot in one array operation and
    thinned to what print can show (charts.envelope keeps every extreme)."""
    (xa, xb), (ya, yb) = p.x_range, p.y_range
    px = p.x0 + (np.asarray(t, float) - xa) / (xb - xa) * p.w
    py = p.y0 + (np.clip(np.asarray(y, float), ya, yb) - ya) / (yb - ya) * p.h
    ex, ey = envelope(px, py)
    pts = np.column_stack([ex, ey]).ravel().tolist()
    if len(pts) >= 4:
        p.d.add(PolyLine(pts, strokeColor=colour, strokeWidth=width, strokeLineJoin=1))


def torque_drawing(ctx: Ctx, res, width: float, height: float):
    """Torque against time of the most loaded links, one colour each, with a key."""
    U = ctx.units
    f = U.factor(u.TORQUE)
    chosen = most_loaded(res)
    idx = {lid: k for k, lid in enumerate(res.link_ids)}
    t = np.asarray(res.time, float)
    curves = [(lt, np.asarray(res.link_torque[idx[lt.link_id]], float) * f) for lt in chosen]
    lo = min(float(np.min(c)) for _, c in curves)
    hi = max(float(np.max(c)) for _, c in curves)
    span = max(hi - lo, abs(hi), abs(lo), 1e-12)
    lo, hi = min(lo - 0.06 * span, 0.0), max(hi + 0.06 * span, 0.0)
    key_rows = len(curves)
    key_h = 10.0 * key_rows + 4
    d = drawing(width, height + key_h)
    left, right, bottom, top = 44, 8, 26 + key_h, 14
    p = _time_axis_plot(d, left, bottom, width - left - right, height - 26 - top, float(t[-1]), lo, hi,
                        f"torque ({U.unit(u.TORQUE)})")
    p.draw_axes()
    p.hline(0.0, GREY, 0.4)
    for k, (lt, c) in enumerate(curves):
        _trace(p, t, c, PALETTE[k % len(PALETTE)])
    for k, (lt, c) in enumerate(curves):
        colour = PALETTE[k % len(PALETTE)]
        y = key_h - 9 - 10 * k
        d.add(Line(left, y + 2.5, left + 16, y + 2.5, strokeColor=colour, strokeWidth=1.2))
        limit = f", peak limit {U.text(lt.permissible_peak, u.TORQUE)}" if lt.permissible_peak else ""
        text = (f"{ctx.name(lt.link_id)}: peak {U.text(lt.peak_torque, u.TORQUE)} at {_secs(lt.peak_time)}{limit}")
        d.add(String(left + 21, y, fit_text(text, width - left - 24, 6.5), fontName=FONT, fontSize=6.5,
                     fillColor=INK))
    d.add(String(left, height + key_h - 9, fit_text(f"Torque in the most loaded links, '{res.name}'",
                                                   width - left, 7, BOLD),
                 fontName=BOLD, fontSize=7, fillColor=INK))
    return d


def speed_disc(ctx: Ctx, ev) -> str:
    """The disc whose speed a start-up shows: the motor's, else the reference disc."""
    if ev is not None:
        for src in ev.torques:
            if src.motor is not None:
                return src.at
    op = ctx.train.operating
    return op.reference if op is not None else ctx.train.disc_ids[0]


def is_start_up(res, ev) -> bool:
    """A start-up: a motor starts the train, or the speed changes by more than a tenth."""
    if ev is not None and any(src.motor is not None for src in ev.torques):
        return True
    sp = np.abs(np.asarray(res.disc_speed, float))
    top = float(sp.max()) if sp.size else 0.0
    return top > 0 and float(np.ptp(sp[0])) > 0.1 * top


def speed_drawing(ctx: Ctx, res, ev, width: float, height: float):
    """Speed against time of the motor (or reference) disc, each natural-frequency crossing
    marked; the lowest mode's crossing in red."""
    disc = speed_disc(ctx, ev)
    k = res.disc_ids.index(disc)
    t = np.asarray(res.time, float)
    rpm = np.asarray(res.disc_speed[k], float) * 60.0 / fmt.TWO_PI
    d = drawing(width, height)
    left, right, bottom, top = 44, 8, 26, 14
    hi = max(float(rpm.max()) * 1.08, 1.0)
    lo = min(float(rpm.min()) * 1.08, 0.0)
    p = _time_axis_plot(d, left, bottom, width - left - right, height - bottom - top, float(t[-1]), lo, hi,
                        f"speed of '{fit_text(ctx.name(disc), 90, 6)}' (rpm)")
    p.draw_axes()
    _trace(p, t, rpm, PALETTE[0], 1.0)
    crossings = sorted(res.crossings, key=lambda c: c.mode_hz)
    lowest = min((c.mode_hz for c in crossings), default=None)
    labels = []
    for c in crossings:
        x = p.sx(c.time_s)
        colour = FAIL_INK if c.mode_hz == lowest else GREY
        d.add(Line(x, p.y0, x, p.y0 + p.h, strokeColor=colour, strokeWidth=0.7 if c.mode_hz == lowest else 0.5,
                   strokeDashArray=(2, 1.5)))
        labels.append((x, colour, f"{c.mode_hz:.4g} Hz at {_secs(c.time_s)}"))
    # labels along the top inside the plot, spread so that none overlaps
    from .campbell import place_labels
    from .tables import text_width
    items = [dict(at=x, text=s, colour=c) for x, c, s in labels]
    placed = place_labels(items, p.x0 + 2, p.x0 + p.w - 2, lambda it: text_width(it["text"], FONT, 5.5) + 6,
                          lambda a, b: f"{a['text']}; {b['text']}")
    for it in placed:
        d.add(String(it["pos"], p.y0 + p.h - 8, it["text"], fontName=FONT, fontSize=5.5, fillColor=it["colour"],
                     textAnchor="middle"))
    title = "Speed against time" + ("; natural frequencies passed" if crossings else "")
    d.add(String(left, height - 9, fit_text(title, width - left, 7, BOLD),
                 fontName=BOLD, fontSize=7, fillColor=INK))
    return d


# ----------------------------------------------------------------- the table
def peak_rows(ctx: Ctx, res) -> tuple[list, dict]:
    U = ctx.units
    rows, cells = [], {}
    for k, lt in enumerate(res.links):
        status = "no limit" if lt.passed is None else ("PASS" if lt.passed else "FAIL")
        if lt.damage is None:
            dmg, allowed = "—", "—"
        else:
            dmg = "0" if lt.damage == 0 else num(lt.damage, 3)
            allowed = "unlimited" if lt.allowed_events is None or not math.isfinite(lt.allowed_events) \
                else num(lt.allowed_events, 3)
        rows.append([ctx.name(lt.link_id), lt.kind.replace("_", " "), U.value(lt.peak_torque, u.TORQUE),
                     fmt.seconds(lt.peak_time),
                     U.value(lt.permissible_peak, u.TORQUE) if lt.permissible_peak is not None else "—",
                     U.value(lt.peak_stress, u.STRESS) if lt.peak_stress is not None else "—", dmg, allowed,
                     num(lt.required_events, 6) if lt.required_events is not None else "—", status])
        cells[k] = status_styles(9, status)
        if lt.passed is False:
            cells[k] = cells[k] + [("TEXTCOLOR", 0, FAIL_INK), ("FONTNAME", 0, BOLD)]
    return rows, cells


def sn_text(curve, source: str, U) -> str:
    """An S–N curve in the sheet's units, with its source as a reader is shown it (the library's
    sources carry SI numbers after a colon: the curve's own numbers stand for them here)."""
    src = wording.for_reader(source)
    if curve is None:
        return src
    if src.startswith("FKM"):
        src = src.split(":")[0]
    knee = f"{num(curve.knee_cycles, 3)} cycles"
    after = (f", slope {curve.slope_after_knee:g} below it" if curve.slope_after_knee is not None
             else ", no damage below it")
    return (f"endurance limit {U.text(curve.endurance_limit, u.STRESS, 3)} in shear at {knee}, slope {curve.slope:g}"
            f"{after} ({src})")


def event_section(ctx: Ctx, res, ev) -> list:
    st = styles()
    U = ctx.units
    out = heading(f"Transient event: {escape(clip(res.name, 200))}", 1, 260)
    out.append(Paragraph(escape(inputs_text(ctx, res, ev)), st["body"]))
    if ev is not None:
        raws = _raw_torques(ctx, res.name)
        rows = []
        for j, src in enumerate(ev.torques):
            given, data = torque_text(ctx, src, raws[j] if j < len(raws) else {})
            rows.append([ctx.name(src.at), src.label, given, data])
        out.append(table(ctx.cols(("Acts at", 0.15), ("Torque", 0.2, "LEFT", True, 3), ("Given as", 0.14),
                                  ("Data (positive in the direction of rotation)", 0.51, "LEFT", True, 10)), rows))
    out.append(Spacer(1, 4))
    plots = [torque_drawing(ctx, res, ctx.width, 165)]
    start = is_start_up(res, ev)
    if start:
        plots.append(Spacer(1, 4))
        plots.append(speed_drawing(ctx, res, ev, ctx.width, 125))
    out.append(KeepTogether(plots))
    rows, cells = peak_rows(ctx, res)
    tu, su = U.unit(u.TORQUE), U.unit(u.STRESS)
    out += heading("Peak torque and fatigue", 2, 80)
    out.append(table(ctx.cols(("Link", 0.17), ("Kind", 0.08), (f"Peak torque ({tu})", 0.1, "RIGHT", True),
                              ("at s", 0.07, "RIGHT"), (f"Peak limit ({tu})", 0.1, "RIGHT", True),
                              (f"Peak stress ({su})", 0.1, "RIGHT", True), ("Damage per event", 0.1, "RIGHT", True),
                              ("Allowed events", 0.1, "RIGHT", True), ("Required events", 0.1, "RIGHT", True),
                              ("Status", 0.08)), rows, cells))
    sources = {}
    given = dict(getattr(ctx.train, "sn_curves", ()) or ())
    from core.fatigue import curve_for_material
    links = {l.id: l for l in ctx.train.links}
    for lt in res.links:
        if not lt.sn_source:
            continue
        curve = given.get(lt.link_id) or curve_for_material(links[lt.link_id].material)
        sources.setdefault(sn_text(curve, lt.sn_source, U), []).append(ctx.name(lt.link_id))
    note = ("Peak: the largest torque on the link's own shaft during the event (an element of a distributed shaft: "
            "the most loaded one). Damage: Miner's sum of the rainflow-counted cycles of the shaft's shear stress "
            "(stress concentration included) on its S–N curve; allowed events = 1 / damage. A link passes when its "
            "peak stays within its limit and it takes the events required.")
    if start and res.crossings:
        low = min(res.crossings, key=lambda c: c.mode_hz)
        note += (f" The motor's pulsating torque (2 s f_line) passes the lowest natural frequency, {low.mode_hz:.4g} Hz, "
                 f"at {_secs(low.time_s)} ({fmt.rpm(low.motor_speed)} rpm of the motor); marked red above.")
    out.append(Paragraph(escape(note), st["note"]))
    if sources:
        out.append(Paragraph(escape("S–N curves: " + "; ".join(f"{', '.join(v)}: {s}" for s, v in sources.items())
                                    + "."), st["note"]))
    for n in res.notes:
        out.append(Paragraph(escape(wording.for_reader(n[:1].upper() + n[1:])) + ".", st["note"]))
    return out
