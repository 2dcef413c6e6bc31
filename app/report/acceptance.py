"""The acceptance section of the review sheet (issue 12, item 10): per load case the
checks that sign off a coincidence, worst first with a utilisation bar; the barred
speed ranges and the gear-hammer ranges; and the inputs they rest on — load cases,
speed bands, material strengths and fatigue factors, the propulsion-shafting
requirement's inputs, coupling ratings and permissible values.

Everything shown is held by ``study.acceptance`` (:mod:`core.acceptance`) or is an
input of the model; values go through :class:`~app.report.base.Units`.
"""
from __future__ import annotations

import numpy as np
from reportlab.platypus import Paragraph, Spacer

from core import units as u

from .. import formatting as fmt
from .. import wording
from .base import Ctx, clip, heading, num, table
from .charts import PALETTE, Plot, drawing, fit_text
from .styles import BOLD, FAIL_FILL, FAIL_INK, FONT, INK, PASS_INK, escape, styles
from .tables import status_styles

BAR_PASS = PASS_INK
BAR_FAIL = FAIL_INK
UNIT_KINDS = {"N*m": u.TORQUE, "Pa": u.STRESS, "W": u.POWER}
LAW_WORDS = {"constant_torque": "constant torque", "constant_power": "constant power",
             "propeller": "propeller law (power rising with speed³)", "table": "table"}
POSITIONS = {"intermediate": "intermediate shaft", "thrust": "thrust shaft", "propeller": "propeller shaft"}
SURFACES = {"ground": "ground", "machined": "machined", "cold_drawn": "cold drawn", "hot_rolled": "hot rolled",
            "forged": "as forged"}


def value_text(value: float, unit: str, units) -> str:
    """A check's value or limit with its unit ('8.52 kN·m', '2.35' for a safety factor)."""
    kind = UNIT_KINDS.get(unit)
    if kind is None:
        return num(value, 3)
    return units.text(value, kind, 3)


def link_text(ctx: Ctx, check_or_range) -> str:
    name = ctx.name(check_or_range.link)
    seg = getattr(check_or_range, "segment", None)
    n_seg = len(next((l.segments for l in ctx.train.links if l.id == check_or_range.link), ()))
    return name + (f", segment {seg + 1}" if seg is not None and n_seg > 1 else "")


def band_words(bands) -> str:
    parts = []
    for b in bands:
        rng = f"{fmt.rpm(b.low)} rpm" if b.low == b.high else f"{fmt.rpm(b.low)}–{fmt.rpm(b.high)} rpm"
        how = "continuous running" if b.running == "continuous" else "passed through"
        parts.append(f"{wording.speed_band(b.name)} {rng} ({how})")
    return "; ".join(parts)


# ----------------------------------------------------------------- load cases
def load_case_text(lc, U, op) -> str:
    """The law and its point in the sheet's units (core.loads.describe words it in SI)."""
    law = LAW_WORDS.get(lc.law, lc.law.replace("_", " "))
    if lc.law == "table":
        kind = u.POWER if lc.table_quantity == "power" else u.TORQUE
        pts = "; ".join(f"{fmt.rpm(w)} rpm {U.text(v, kind, 3)}" for w, v in lc.table[:8])
        more = f"; … {len(lc.table) - 8} more" if len(lc.table) > 8 else ""
        return f"table of {lc.table_quantity} against speed: {pts}{more}"
    what = U.text(lc.power, u.POWER) if lc.power is not None else U.text(lc.torque, u.TORQUE)
    at = f" at {fmt.rpm(lc.speed)} rpm" if lc.speed else ""
    text = f"{law}, {what}{at}"
    if lc.power is not None and op is not None and lc.law != "constant_torque":
        from core.loads import reference_torque
        t = float(reference_torque(lc, np.array([op.speed_max]), op)[0])
        text += f" (torque on the reference shaft at {fmt.rpm(op.speed_max)} rpm: {U.text(t, u.TORQUE)})"
    return text


def shares_text(ctx: Ctx, shares) -> str:
    if len(shares) > 2 and len({round(s.share, 9) for s in shares}) == 1:  # six crank throws, equal shares
        return (", ".join(f"'{ctx.name(s.at)}'" for s in shares)
                + f": {fmt.percent(shares[0].share)}\u00a0% each")
    return ", ".join(f"'{ctx.name(s.at)}' {fmt.percent(s.share)}\u00a0%" for s in shares) or "—"


def excitation_change_text(ctx: Ctx, lc) -> str:
    parts = []
    if lc.excitation_scale != 1.0:
        parts.append(f"every excitation amplitude × {lc.excitation_scale:g}")
    for name, f in lc.excitation_scales:
        if f != 1.0:
            parts.append(f"'{name}' × {f:g}")
    for m in lc.misfire:
        parts.append(f"cylinder at '{ctx.name(m.cylinder)}' misfiring ({100 * m.gas_torque_fraction:g}\u00a0% gas torque"
                     + (f", '{m.excitation}'" if m.excitation else "") + ")")
    return "; ".join(parts) or "as given"


def load_curve_drawing(ctx: Ctx, width: float, height: float):
    """Load torque on the reference shaft against its speed, one curve per load case."""
    from core.loads import reference_torque
    train = ctx.train
    op = train.operating
    cases = train.load_cases
    top = max(op.trip_speed or 0.0, op.speed_max) * 1.05
    w = np.linspace(0.0, top, 241)
    U = ctx.units
    f = U.factor(u.TORQUE)
    curves = [(lc.name, reference_torque(lc, w, op) * f) for lc in cases]
    y_top = max(float(np.nanmax(c)) for _, c in curves) * 1.12 if curves else 1.0
    y_top = y_top if y_top > 0 else 1.0
    legend_h = 10.0 * len(curves) + 4
    d = drawing(width, height + legend_h)
    left, right, bottom, top_pad = 42, 8, 26 + legend_h, 14
    p = Plot(d, left, bottom, width - left - right, height - 26 - top_pad, (0.0, fmt.rad_s_to_rpm(top)),
             (0.0, y_top), x_title=f"speed of the reference shaft, '{fit_text(ctx.name(op.reference), 150, 6)}' (rpm)",
             y_title=f"load torque ({U.unit(u.TORQUE)})", font_size=6)
    from .charts import RANGE_EDGE, RANGE_FILL
    p.vband(fmt.rad_s_to_rpm(op.speed_min), fmt.rad_s_to_rpm(op.speed_max), RANGE_FILL, RANGE_EDGE)
    p.draw_axes()
    rpm = w * 60.0 / fmt.TWO_PI
    from reportlab.graphics.shapes import Line, String
    for k, (name, c) in enumerate(curves):
        colour = PALETTE[k % len(PALETTE)]
        p.polyline(rpm, c, colour, 1.0)
        y = legend_h - 9 - 10 * k
        d.add(Line(left, y + 2.5, left + 16, y + 2.5, strokeColor=colour, strokeWidth=1.1))
        d.add(String(left + 21, y, fit_text(name, width - left - 30, 6.5), fontName=FONT, fontSize=6.5,
                     fillColor=INK))
    d.add(String(left, height + legend_h - 9, "Load torque on the reference shaft per load case", fontName=BOLD,
                 fontSize=7, fillColor=INK))
    return d


# ----------------------------------------------------------------- the section
def acceptance_block(ctx: Ctx):
    st = styles()
    acc = ctx.study.acceptance
    if acc is None:
        return []
    U = ctx.units
    train = ctx.train
    op = train.operating
    out = heading("Acceptance: load cases, limits and checks", 1, 160) + [
           Paragraph(
               "Where a coincidence cannot be avoided, the train is accepted on the damped forced response together "
               "with the mean torque each load case transmits, judged per speed band against the limits below. "
               f"Speed bands: {escape(band_words(acc.bands))}. Vibratory amplitudes combine the orders as "
               + ("the sum of their amplitudes (conservative)." if acc.combination == "sum"
                  else "the peak of the summed time signal."), st["body"])]
    # load cases
    if acc.load_cases:
        rows = [[lc.name, load_case_text(lc, U, op), shares_text(ctx, lc.driving), shares_text(ctx, lc.driven),
                 excitation_change_text(ctx, lc)] for lc in acc.load_cases]
        out += heading("Load cases", 2)
        out.append(table(ctx.cols(("Load case", 0.18), ("Load against speed", 0.34, "LEFT", True, 6),
                                  ("Driving (power in)", 0.15, "LEFT", True, 12),
                                  ("Driven (power out)", 0.15, "LEFT", True, 12),
                                  ("Excitations", 0.18, "LEFT", True, 6)), rows))
        out.append(Spacer(1, 3))
        out.append(load_curve_drawing(ctx, ctx.width * 0.62, 130))
        out.append(Paragraph("Mean torque in every link from the power each driven disc takes off, over the speed "
                             "of the link's own shaft (gear meshes lossless: torque × speed ratio through every "
                             "stage, branches by their shares). Constant power holds the torque of the bottom of the "
                             "operating range below it.", st["note"]))
    for note in acc.notes:
        out.append(Paragraph(escape(note[:1].upper() + note[1:]) + ".", st["note"]))
    out += _checks(ctx, acc)
    out += _ranges(ctx, acc)
    out += inputs_block(ctx, acc)
    return out


def _checks(ctx: Ctx, acc) -> list:
    st = styles()
    U = ctx.units
    out = []
    groups = [lc.name for lc in acc.load_cases] or [None]
    if any(c.load_case is None for c in acc.checks) and None not in groups:
        groups.append(None)
    for name in groups:
        mine = [c for c in acc.worst_first() if c.load_case == name]
        if not mine:
            continue
        title = (f"Checks, load case '{escape(clip(name, 200))}'" if name is not None
                 else "Checks of the vibratory limits (no load case)")
        n_fail = sum(not c.passed for c in mine)
        rows, cells = [], {}
        for k, c in enumerate(mine):
            status = "PASS" if c.passed else "FAIL"
            note = short_note(c)
            crit = wording.criterion(c.criterion) + (f"\n{note}" if note else "")
            rows.append([link_text(ctx, c), crit, wording.speed_band(c.speed_band), value_text(c.value, c.unit, U),
                         value_text(c.limit, c.unit, U) + (" required" if c.unit == "1" else ""),
                         fmt.percent(c.utilisation), "", fmt.rpm(c.at), status])
            style = status_styles(8, status) + [("BAR", 6, (c.utilisation, BAR_PASS if c.passed else BAR_FAIL))]
            if not c.passed:
                style += [("BACKGROUND", 0, FAIL_FILL), ("BACKGROUND", 5, FAIL_FILL), ("FONTNAME", 0, BOLD),
                          ("TEXTCOLOR", 0, FAIL_INK)]
            cells[k] = style
        out += heading(f"{title}: {len(mine)} checks, "
                       + (f"<font color='{FAIL_INK.hexval()}'>{n_fail} fail</font>" if n_fail else "all pass")
                       + ", worst first", 2)
        out.append(table(ctx.cols(("Link", 0.15), ("Criterion", 0.28, "LEFT", True, 3), ("Speed band", 0.12),
                                  ("Value", 0.09, "RIGHT"), ("Limit", 0.1, "RIGHT", True, 2),
                                  ("Use (%)", 0.06, "RIGHT"), ("", 0.07), ("at rpm", 0.065, "RIGHT"),
                                  ("Status", 0.065)), rows, cells))
    if acc.checks:
        out.append(Paragraph(
            "Use = value / limit (for a safety factor: the factor required / the factor achieved); the bar reaches the "
            "tick at 100\u00a0%. Value and speed are the worst in the band, found between the computed speeds by "
            "re-solving the response. Failing rows are marked.", st["note"]))
    return out


def short_note(check) -> str:
    """A check's note as the table prints it: the requirement by its short name, nothing that
    repeats the criterion."""
    from core.shafting import RULE_NAME
    note = check.note or ""
    if check.criterion == "gear_hammer":
        return ""
    note = note.replace(RULE_NAME, "UR M68")
    note = note.replace("vibratory torque against T_KW", "against T_KW")
    note = note.replace("power dissipated in the coupling (forced response) against P_KV", "against P_KV")
    return {"transient permissible value": "the start-up and overspeed value",
            "no transient value given: judged against the continuous one":
                "the operating range's value (none given for start-up and overspeed)"}.get(note, note)


def _ranges(ctx: Ctx, acc) -> list:
    st = styles()
    out = []
    prop = [si for si in acc.shaft_inputs if si.design_factor is not None]
    if acc.barred_ranges:
        rows, cells = [], {}
        for k, r in enumerate(acc.barred_ranges):
            digits = 1 if r.high_rpm - r.low_rpm < 5 else 0
            edges = (f"{r.low_rpm:.{digits}f}{'' if r.low_exact else ' (band end)'}–"
                     f"{r.high_rpm:.{digits}f}{'' if r.high_exact else ' (band end)'}")
            ok = "yes" if r.permitted else "no"
            rows.append([ctx.name(r.link), r.load_case or "—", edges,
                         f"{num(r.worst, 3)} at {fmt.rad_s_to_rpm(r.worst_at):.0f} rpm",
                         ok, r.note])
            cells[k] = status_styles(4, "PASS" if r.permitted else "FAIL")
        out += heading("Barred speed ranges", 2) + [
                table(ctx.cols(("Shaft", 0.18), ("Load case", 0.18), ("Range (rpm)", 0.14),
                               ("Largest tau / tau_C", 0.14), ("Permitted", 0.12), ("Note", 0.24, "LEFT", True, 3)),
                      rows, cells),
                Paragraph("A barred speed range is where the nominal vibratory stress of a propulsion shaft exceeds "
                          "tau_C for continuous operation; it is permitted below 0.8 of the rated speed when the "
                          "stress inside stays within tau_T, and must be passed quickly. Edges solved to where "
                          "tau = tau_C. Drawn on the interference diagram and the response plots.", st["note"])]
    elif prop:
        out += [Paragraph("Barred speed ranges", st["h2"]),
                Paragraph("None: the nominal vibratory stress of every propulsion shaft stays within tau_C over the "
                          "operating range in every load case.", st["body"])]
    if acc.hammer_ranges:
        rows = []
        for r in acc.hammer_ranges:
            rows.append([ctx.name(r.link), r.load_case or "—", f"{r.low_rpm:.0f}–{r.high_rpm:.0f}",
                         ", ".join(wording.speed_band(b) for b in r.bands) or "—",
                         f"{num(r.worst, 3)} at {fmt.rad_s_to_rpm(r.worst_at):.0f} rpm"])
        out += heading("Gear hammer: speed ranges where the teeth separate", 2) + [
                table(ctx.cols(("Mesh", 0.2), ("Load case", 0.26), ("Range (rpm)", 0.14), ("Speed band", 0.18),
                               ("Largest vibratory / mean torque", 0.22)), rows),
                Paragraph("Where the vibratory torque through a mesh exceeds its mean torque, the teeth lose contact "
                          "and hammer. Judged in the operating range (the check above); ranges passed through while "
                          "starting or stopping are listed for the reader.", st["note"])]
    return out


# ----------------------------------------------------------------- inputs
def inputs_block(ctx: Ctx, acc) -> list:
    st = styles()
    U = ctx.units
    train = ctx.train
    out = []
    judged = {c.criterion for c in acc.checks}
    # strengths and fatigue factors where a check rests on them (without a load case there is none)
    si = [s for s in acc.shaft_inputs if {"shaft_fatigue", "shaft_yield"} & judged
          or (s.design_factor is not None and any(c.startswith("shafting_") for c in judged))]
    mats = {}
    for s in si:
        if s.tensile_strength is not None:
            mats.setdefault(s.material, s)
    if mats:
        rows = [[m, U.text(s.tensile_strength, u.STRESS), U.text(s.yield_strength, u.STRESS),
                 U.text(s.torsional_endurance, u.STRESS) if s.torsional_endurance else "—",
                 wording.for_reader(s.strength_source) or "—"]
                for m, s in mats.items()]
        out += heading("Inputs: material strengths", 2) + [
                table(ctx.cols(("Material", 0.18), ("Tensile strength", 0.13, "RIGHT"), ("Yield strength", 0.13, "RIGHT"),
                               ("Torsional endurance limit (polished specimen)", 0.16, "RIGHT", True),
                               ("Source", 0.4, "LEFT", True, 4)), rows)]
    fat = [s for s in si if s.endurance_limit is not None and {"shaft_fatigue", "shaft_yield"} & judged]
    if fat:
        rows = []
        for s in fat:
            dia = U.value(s.outer_diameter, u.LENGTH) + (f" / {U.value(s.inner_diameter, u.LENGTH)}"
                                                         if s.inner_diameter > 0 else "")
            rows.append([link_text(ctx, _Seg(s)), dia, f"{s.stress_concentration:g}", s.criterion.capitalize(),
                         f"{SURFACES.get(s.surface, s.surface)}, {s.surface_factor:.3f}", f"{s.size_factor:.3f}",
                         f"{s.temperature_factor:g}", f"{s.reliability_factor:.3f}",
                         U.value(s.endurance_limit, u.STRESS, 3), U.value(s.ultimate_shear, u.STRESS, 3),
                         U.value(s.yield_shear, u.STRESS, 3), f"{s.required_safety_factor:g}"])
        su = U.unit(u.STRESS)
        out += heading("Inputs: shaft fatigue", 2) + [
                table(ctx.cols(("Shaft", 0.14), (f"Outer / bore dia. ({U.unit(u.LENGTH)})", 0.1, "RIGHT", True),
                               ("SCF", 0.05, "RIGHT"), ("Relation", 0.08), ("Surface, k_a", 0.1, "LEFT", True),
                               ("k_b size", 0.06, "RIGHT", True), ("k_d temp.", 0.06, "RIGHT", True),
                               ("k_e reliab.", 0.07, "RIGHT", True), (f"S_se ({su})", 0.08, "RIGHT", True),
                               (f"S_su ({su})", 0.08, "RIGHT", True), (f"S_sy ({su})", 0.08, "RIGHT", True),
                               ("n required", 0.08, "RIGHT", True)), rows),
                Paragraph("Endurance limit of the part S_se = k_a k_b k_d k_e × the material's torsional endurance "
                          "limit (Marin factors for surface, size, temperature and reliability); ultimate shear "
                          "strength S_su = 0.67 × tensile strength, yield shear strength S_sy = 0.577 × yield "
                          "strength. Goodman: 1/n = tau_a / S_se + tau_m / S_su; Soderberg: 1/n = tau_a / S_se + "
                          "tau_m / S_sy; first-cycle yield n = S_sy / (tau_a + |tau_m|); n required: the fatigue safety "
                          "factor asked for. The stress concentration factor (SCF) multiplies the stresses once.", st["note"])]
    rule = [s for s in si if s.design_factor is not None]
    if rule:
        rows = [[link_text(ctx, _Seg(s)), POSITIONS.get(s.rule_position, s.rule_position or "—"),
                 U.value(s.outer_diameter, u.LENGTH), U.text(s.rule_tensile_strength, u.STRESS),
                 (s.design_feature or "given as a number").replace("_", " "), f"{s.design_factor:g}",
                 f"{s.rule_size_factor:.3f}"] for s in rule]
        n0 = acc.rated_speed
        out += heading("Inputs: propulsion shafting requirement", 2) + [
                Paragraph(
                    "Permissible torsional vibration stresses after IACS Unified Requirement M68 (Dimensions of "
                    "propulsion shafts and their permissible torsional vibration stresses); please confirm the "
                    "edition that applies to the vessel and its class society's rules. Continuous operation: tau_C = "
                    "(sigma_B + 160) / 18 × C_K × C_D × (3 − 2 lambda²) below lambda = 0.9 and × 1.38 from 0.9 to "
                    "1.05 (sigma_B in N/mm², the result in N/mm²); transient operation (passing a barred range, "
                    "lambda ≤ 0.8): tau_T = 1.7 tau_C / sqrt(C_K); size factor C_D = 0.35 + 0.93 d^−0.2 (d in mm); "
                    f"lambda = speed / rated speed, rated speed n_0 = {fmt.rpm(n0)} rpm (the top of the operating "
                    "range). The nominal stress T r / I_p is judged: the notch effect is in C_K.", st["body"]),
                table(ctx.cols(("Shaft", 0.2), ("Position", 0.14), (f"Diameter ({U.unit(u.LENGTH)})", 0.1, "RIGHT", True),
                               ("Tensile strength sigma_B used", 0.16, "RIGHT", True), ("Design feature", 0.2),
                               ("C_K", 0.08, "RIGHT"), ("C_D", 0.12, "RIGHT")), rows),
                Paragraph("sigma_B is the specified minimum tensile strength, capped for the calculation as the "
                          "requirement states for the shaft's position and steel.", st["note"])]
    # coupling ratings
    rows = []
    for l in train.links:
        rating = getattr(l, "ratings", None)
        c = rating.coupling if rating is not None else None
        if c is None or not c.given:
            continue
        kw = "—"
        if c.vibratory_torque is not None:
            kw = U.text(c.vibratory_torque, u.TORQUE) + (f" at {c.reference_hz:g} Hz, × sqrt({c.reference_hz:g} Hz / f) "
                                                         "above" if c.reference_hz is not None else "")
        rows.append([ctx.name(l.id), U.text(c.nominal_torque, u.TORQUE) if c.nominal_torque is not None else "—",
                     U.text(c.maximum_torque, u.TORQUE) if c.maximum_torque is not None else "—", kw,
                     U.text(c.permissible_power, u.POWER) if c.permissible_power is not None else "—",
                     f"{c.temperature_factor:g}",
                     U.text(rating.permissible_torque_transient, u.TORQUE)
                     if rating.permissible_torque_transient is not None else "—"])
    if rows:
        out += heading("Inputs: coupling ratings", 2) + [
                table(ctx.cols(("Coupling", 0.17), ("Nominal torque T_KN", 0.12, "RIGHT", True),
                               ("Maximum torque T_Kmax", 0.12, "RIGHT", True),
                               ("Permissible vibratory torque T_KW", 0.21, "LEFT", True),
                               ("Permissible dissipated power P_KV", 0.13, "RIGHT", True),
                               ("Temp. factor S_t", 0.1, "RIGHT", True),
                               ("Permissible vibratory torque, transient", 0.15, "RIGHT", True)), rows),
                Paragraph("From the coupling's data sheet: the mean torque is judged against T_KN in the operating "
                          "range, mean plus vibratory against T_Kmax in every band, the vibratory torque against "
                          "T_KW reduced above its reference frequency (several orders as the sum of T_i / T_KW(f_i)), "
                          "the power the forced response dissipates in the coupling against P_KV; the torque ratings "
                          "are divided by the temperature factor.", st["note"])]
    # permissible values of the other links
    rows = []
    for l in train.links:
        rating = getattr(l, "ratings", None)
        tt = rating.permissible_torque_transient if rating is not None else None
        ss = rating.permissible_stress_transient if rating is not None else None
        coupled = rating is not None and rating.coupling is not None and rating.coupling.given
        if l.permissible_torque is None and l.permissible_stress is None and tt is None and ss is None:
            continue
        if coupled and l.permissible_stress is None and ss is None:
            continue  # listed with the coupling ratings
        rows.append([ctx.name(l.id), U.text(l.permissible_torque, u.TORQUE) if l.permissible_torque is not None else "—",
                     U.text(tt, u.TORQUE) if tt is not None else "—",
                     U.text(l.permissible_stress, u.STRESS) if l.permissible_stress is not None else "—",
                     U.text(ss, u.STRESS) if ss is not None else "—"])
    if rows:
        out += heading("Inputs: permissible vibratory values", 2) + [
                table(ctx.cols(("Link", 0.28), ("Torque, operating range", 0.18, "RIGHT", True),
                               ("Torque, start-up and overspeed", 0.18, "RIGHT", True),
                               ("Stress, operating range", 0.18, "RIGHT", True),
                               ("Stress, start-up and overspeed", 0.18, "RIGHT", True)), rows),
                Paragraph("Vibratory amplitudes; where no value is given for start-up and overspeed, the operating "
                          "range's value applies there too.", st["note"])]
    return out


class _Seg:
    """A shaft input seen as something with a link and a segment (for :func:`link_text`)."""

    def __init__(self, s):
        self.link = s.link
        self.segment = s.segment


# ----------------------------------------------------------------- peaks per band
def band_peaks_block(ctx: Ctx) -> list:
    """Peak vibratory torque, stress and dissipated power of every link in every speed band."""
    st = styles()
    peaks = ctx.study.band_peaks
    if not peaks:
        return []
    U = ctx.units
    order = {"transient": 0, "operating": 1, "overspeed": 2}
    table_ = {}
    for b in peaks:
        if b.combination not in ("sum", "mean"):
            continue
        table_.setdefault((b.link_id, b.band), {})[b.quantity] = b
    links = {lid: k for k, lid in enumerate(ctx.train.link_ids)}
    keys = sorted(table_, key=lambda k: (links.get(k[0], 0), order.get(k[1], 9)))
    lossy = {l.id: bool(l.damping or l.loss_factor) for l in ctx.train.links}
    rows = []
    prev = None
    for lid, band in keys:
        q = table_[(lid, band)]
        t, s, p = q.get("torque"), q.get("stress"), q.get("power")
        stress_ok = s is not None and np.isfinite(s.peak)
        rows.append([ctx.name(lid) if lid != prev else "", wording.speed_band(band),
                     U.value(t.peak, u.TORQUE) if t else "—", fmt.rpm(t.speed) if t else "—",
                     U.value(s.peak, u.STRESS) if stress_ok else "—", fmt.rpm(s.speed) if stress_ok else "—",
                     U.value(p.peak, u.POWER, 3) if p is not None and lossy.get(lid) else "—",
                     fmt.rpm(p.speed) if p is not None and lossy.get(lid) else "—"])
        prev = lid
    tu, su, pu = U.unit(u.TORQUE), U.unit(u.STRESS), U.unit(u.POWER)
    return heading("Peaks per speed band", 2) + [
            table(ctx.cols(("Link", 0.2), ("Speed band", 0.15), (f"Torque ({tu})", 0.11, "RIGHT", True),
                           ("at rpm", 0.08, "RIGHT"), (f"Stress ({su})", 0.11, "RIGHT", True), ("at rpm", 0.08, "RIGHT"),
                           (f"Dissipated power ({pu})", 0.17, "RIGHT", True), ("at rpm", 0.1, "RIGHT")), rows),
            Paragraph("Largest vibratory amplitude (sum of the order amplitudes) of each link inside each speed band, "
                      "found between the computed speeds by re-solving the response; power dissipated in links with "
                      "damping. The permissible values of the operating range apply to continuous running, those of "
                      "start-up and overspeed to speeds passed through.", st["note"])]
