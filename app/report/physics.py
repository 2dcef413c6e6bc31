"""Sections of the review sheet for the excitation physics (issue 13): engines from their
cylinder data, electric-drive lines, gear meshes by their teeth, damped natural
frequencies and viscous dampers.

Every value goes through :class:`~app.report.base.Units` (SI or US customary) and
every element is named as the user named it; nothing here computes a result the
study does not hold, except the damper suggestion the sheet asks
:func:`core.damped.damper_suggestion` for.
"""
from __future__ import annotations

import math
from itertools import zip_longest

import numpy as np
from reportlab.platypus import CondPageBreak, KeepTogether, Paragraph, Spacer, Table, TableStyle

from core import units as u
from core.errors import ModelError

from .. import formatting as fmt
from .base import TWO_PI, Ctx, num, table
from .charts import PALETTE, Plot, drawing, fit_text
from .styles import BOLD, FONT, INK, escape, styles
from .tables import Column

ENGINE_PLOT_H = 150.0


# ----------------------------------------------------------------- electric drives
def electric_rows(ctx: Ctx, e, ratio: float) -> list[list[str]]:
    """Rows of the excitation table for an electric drive's lines (one per line)."""
    U = ctx.units
    rows = []
    for k, fl in enumerate(e.lines):
        named = fl.name != f"f = {fl.formula}"  # a line given without a name is named by its formula
        if fl.offset_hz == 0.0:
            what = f"order {fmt.order(fl.order)}" + (f": {fl.name}" if named else "")
        else:
            what = f"f = {fl.formula}" + (f": {fl.name}" if named else "")
        rows.append([e.name if k == 0 else "", ctx.name(e.at) if k == 0 else "", f"{ratio:.4g}" if k == 0 else "",
                     what, U.value(fl.amplitude, u.TORQUE) if fl.amplitude is not None else "—",
                     f"{fl.phase_deg:g}" if fl.amplitude is not None else "—", "constant"])
    return rows


def _raw_excitation(ctx: Ctx, name: str) -> dict:
    for e in ctx.doc.get("excitations", []) or []:
        if isinstance(e, dict) and e.get("name") == name:
            return e
    return {}


def electric_notes(ctx: Ctx) -> list:
    """What each electric drive's lines rest on: pole pairs, supply frequency, slip."""
    st = styles()
    out = []
    op = ctx.train.operating
    for e in op.excitations:
        if not getattr(e, "lines", ()):
            continue
        raw = _raw_excitation(ctx, e.name).get("electric_drive")
        parts = []
        if isinstance(raw, dict):
            try:
                p = u.parse_number(raw.get("pole_pairs"), "", "")
                slip = u.parse_fraction(raw.get("slip", 0.0), "", "")
                parts.append(f"{p:g} pole pair{'s' if p != 1 else ''}, slip {100 * slip:g}\u00a0%: output "
                             f"frequency f_out = p·N / (1 − s) = {p / (1 - slip):.4g}·N")
                if raw.get("supply_frequency") is not None:
                    fs = u.parse(raw["supply_frequency"], u.FREQUENCY, "", "")
                    parts.append(f"supply frequency f_supply {fs:g}\u00a0Hz")
            except ModelError:
                parts = []
        from core.electric import fmt_line
        lines = "; ".join(escape(fmt_line(fl)) for fl in e.lines)
        head = f"<b>{escape(e.name)}</b> at '{escape(ctx.name(e.at))}'"
        if parts:
            head += " — " + "; ".join(parts)
        out.append(Paragraph(f"{head}. Lines: {lines}. N is the speed of '{escape(ctx.name(e.at))}' in rev/s; a "
                             "line |a − b·N| falls to zero where b·N = a and rises again beyond.", st["note"]))
    return out


# ----------------------------------------------------------------- engines
def _pressure_points(ctx: Ctx, e):
    """(crank angle deg, pressure Pa) of an engine's cylinder pressure curve as the project
    gives it, or None (tangential-pressure coefficients, or a file the sheet cannot reach)."""
    spec = (_raw_excitation(ctx, e.name).get("engine") or {}).get("pressure_curve")
    if not isinstance(spec, dict):
        return None
    from core.engine import _pressure_curve  # the parser the model was built with
    try:
        a, p, _ = _pressure_curve(spec, f"excitation '{e.name}'", getattr(ctx.doc, "base_dir", None),
                                  e.engine.strokes)
    except ModelError:
        return None
    return np.asarray(a, float), np.asarray(p, float)


def pressure_drawing(angle_deg, pressure_pa, units, width: float, height: float, title: str):
    """The cylinder pressure against crank angle (one working cycle)."""
    d = drawing(width, height)
    f = units.factor(u.PRESSURE)
    y = pressure_pa * f
    left, right, bottom, top = 40, 8, 26, 14
    y_top = float(np.max(y)) * 1.08 if np.max(y) > 0 else 1.0
    p = Plot(d, left, bottom, width - left - right, height - bottom - top,
             (float(angle_deg[0]), float(angle_deg[0]) + 180.0 * round((angle_deg[-1] - angle_deg[0]) / 180.0)),
             (0.0, y_top), x_title="crank angle after firing top dead centre (deg)",
             y_title=f"cylinder pressure ({units.unit(u.PRESSURE)})", font_size=6)
    p.xa.valueStep = 180.0
    p.xa.configure([(p.x_range[0], 0.0), (p.x_range[1], y_top)])
    p.draw_axes()
    p.polyline(angle_deg, y, PALETTE[0], 0.9)
    d.add(_title(title, left, height - 9, width - left))
    return d


def _title(text, x, y, width):
    from reportlab.graphics.shapes import String
    return String(x, y, fit_text(text, width, 7, BOLD), fontName=BOLD, fontSize=7, fillColor=INK)


def engine_block(ctx: Ctx):
    """Per engine excitation: its inputs, the pressure curve, firing angles and the
    harmonics the forced response uses (issue 13, item 1)."""
    op = ctx.train.operating
    if op is None:
        return []
    out = []
    for e in op.excitations:
        if getattr(e, "engine", None) is not None:
            out += _engine(ctx, e)
    return out


def _engine(ctx: Ctx, e) -> list:
    st = styles()
    U = ctx.units
    sp = e.engine
    train = ctx.train
    op = train.operating
    z = len(sp.cylinders)
    bank = f", bank angle {sp.bank_angle_deg:g} deg" if sp.bank_angle_deg is not None else ""
    major = ", ".join(fmt.order(n) for n in sp.major_orders) or "none"
    crank_speed = op.speed_max * train.relative_speed(sp.cylinders[0].disc, op.reference)
    gas_src = {"pressure curve": "cylinder pressure curve (crank angle against pressure)",
               "tangential pressure coefficients": "harmonic coefficients of the tangential pressure per order"}
    rows = [
        ["Engine", f"{z}-cylinder {sp.layout} {sp.strokes}-stroke{bank}"],
        ["Bore, stroke", f"{U.text(sp.bore, u.LENGTH)}, {U.text(2 * sp.crank_radius, u.LENGTH)}"],
        ["Connecting rod (between centres)", f"{U.text(sp.rod_length, u.LENGTH)}; crank radius / rod length "
                                              f"{sp.rod_ratio:.3f}"],
        ["Reciprocating mass per cylinder", U.text(sp.reciprocating_mass, u.MASS)],
        ["Gas torque from", gas_src.get(sp.gas_source, sp.gas_source)],
        ["Indicated mean pressure", f"{U.text(sp.indicated_mean_pressure, u.PRESSURE)} at full load; engine at "
                                    f"{100 * sp.load_fraction:g}\u00a0% load, mean indicated torque "
                                    f"{U.text(sp.mean_torque, u.TORQUE)}"],
        ["Orders", f"{fmt.order(sp.orders[0])} to {fmt.order(sp.orders[-1])} ({len(sp.orders)} orders, "
                   f"{'half orders' if sp.strokes == 4 else 'whole orders'}); major orders {major}"],
    ]
    off = [f"cylinder {c.name} at {100 * sp.gas_fraction[i]:g}\u00a0% gas torque" for i, c in enumerate(sp.cylinders)
           if sp.gas_fraction and sp.gas_fraction[i] < 1.0]
    if off:
        rows.append(["Misfiring", ", ".join(off)])
    for n in sp.notes:
        rows.append(["Note", n])
    out = [CondPageBreak(200), Paragraph(f"Engine: {escape(e.name)}", st["h2"]),
           table(ctx.cols(("Input", 0.3), ("Value", 0.7)), rows), Spacer(1, 4)]
    # firing angles and the pressure curve side by side
    banks = sp.layout != "in-line"
    cyl = [[c.name, ctx.name(c.disc)] + ([c.bank] if banks else []) +
           [f"{c.firing_deg:g}", f"{100 * sp.cylinder_gas_scale(i):g}"] for i, c in enumerate(sp.cylinders)]
    curve = _pressure_points(ctx, e)
    half = ctx.width * 0.5
    cyl_cols = ([("Cylinder", 0.16), ("Crank throw (disc)", 0.36)] + ([("Bank", 0.1)] if banks else []) +
                [("Firing angle (deg)", 0.22, "RIGHT", True), ("Gas torque (%)", 0.2, "RIGHT", True)])
    if curve is not None:
        total = sum(c[1] for c in cyl_cols)
        cols = [Column(c[0], c[1] / total * (half - 6), c[2] if len(c) > 2 else "LEFT",
                       c[3] if len(c) > 3 else (len(c) < 3)) for c in cyl_cols]
        dwg = pressure_drawing(curve[0], curve[1], U, half - 4, ENGINE_PLOT_H,
                               "Cylinder pressure over one working cycle")
        t = Table([[table(cols, cyl), dwg]], colWidths=[half, half], hAlign="LEFT")
        t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT), ("VALIGN", (0, 0), (-1, -1), "TOP"),
                               ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0)]))
        out.append(t)
    else:
        out.append(table(ctx.cols(*cyl_cols), cyl))
    # the harmonics the forced response uses
    tu, pu = U.unit(u.TORQUE), U.unit(u.PRESSURE)
    area_r = sp.piston_area * sp.crank_radius
    phased = np.abs(sp.phased_sum(crank_speed))
    phased[phased < 1e-9 * max(float(phased.max(initial=0.0)), 1e-300)] = 0.0  # cancelled orders: rounding only
    g = np.abs(np.asarray(sp.gas, complex))
    m = np.abs(np.asarray(sp.inertia, complex)) * crank_speed ** 2
    major_set = set(sp.major_orders)
    rows = []
    pt = U.column(g / area_r, u.PRESSURE, 3)
    gt = U.column(g * sp.load_fraction, u.TORQUE, 3)
    it = U.column(m, u.TORQUE, 3)
    st_ = U.column(phased, u.TORQUE, 3)
    for k, n in enumerate(sp.orders):
        rows.append([fmt.order(n), pt[k], gt[k], it[k] if m[k] > 0 else "—", st_[k], "major" if n in major_set else ""])
    rpm = fmt.rpm(crank_speed)
    out.append(Spacer(1, 4))
    out.append(table(ctx.cols(("Order", 0.08, "RIGHT"), (f"Tangential gas pressure ({pu})", 0.18, "RIGHT", True),
                              (f"Gas torque per cylinder ({tu})", 0.18, "RIGHT", True),
                              (f"Inertia torque per cylinder at {rpm} rpm ({tu})", 0.2, "RIGHT", True),
                              (f"All cylinders, vector sum at {rpm} rpm ({tu})", 0.22, "RIGHT", True),
                              ("", 0.14)), rows))
    out.append(Paragraph(
        "Amplitudes per order of one cylinder: the tangential gas pressure (gas torque / (piston area × crank "
        "radius)) and its torque at the engine's load, and the inertia torque of the reciprocating mass from the "
        "exact crank–slider motion (it grows with the square of the speed; shown at the top of the operating "
        f"range, {rpm} rpm of the crankshaft). The vector sum adds every cylinder's gas and inertia torque of an "
        "order with its firing angle as if on one throw: it is largest at the major orders, where every cylinder "
        "acts in phase. The forced response applies each cylinder's torque at its own crank throw.", st["note"]))
    return out


# ----------------------------------------------------------------- gear meshes
def gear_block(ctx: Ctx):
    """Every gear mesh: teeth, speed ratio, mesh and hunting-tooth frequencies, and which
    shaft its stiffness is referred to and its torque reported on (issue 13, item 3)."""
    from core.gears import mesh_info
    st = styles()
    U = ctx.units
    train = ctx.train
    meshes = [l for l in train.links if l.kind == "gear_mesh"]
    if not meshes:
        return []
    op = train.operating
    rows = []
    for l in meshes:
        info = mesh_info(l)
        a, b = ctx.name(l.from_id), ctx.name(l.to_id)
        r = l.speed_ratio
        if info.teeth is not None:
            zf, zt = info.teeth
            teeth = f"{zf} on '{a}', {zt} on '{b}': ratio {zf}/{zt} = {r:.6g}"
        else:
            teeth = f"not given; speed ratio {r:.6g}"
        freq = "—"
        if info.teeth is not None:
            freq = (f"mesh: {info.mesh_order_from:g} per revolution of '{a}' ({info.mesh_order_to:g} of '{b}'); "
                    f"hunting tooth: {info.hunting_order_from:.4g} per revolution of '{a}' "
                    f"({info.assembly_phases} assembly phase{'s' if info.assembly_phases != 1 else ''})")
            if op is not None:
                n = train.relative_speed(l.from_id, op.reference)
                lo, hi = info.mesh_frequency_hz(op.speed_min * n), info.mesh_frequency_hz(op.speed_max * n)
                hlo, hhi = info.hunting_frequency_hz(op.speed_min * n), info.hunting_frequency_hz(op.speed_max * n)
                rng = (lambda x, y: f"{x:.4g} Hz" if math.isclose(x, y) else f"{x:.4g}–{y:.4g} Hz")
                freq += f". Over the operating range: mesh {rng(lo, hi)}, hunting tooth {rng(hlo, hhi)}"
        if l.stiffness is None:
            stiff = f"rigid: the gears on '{a}' and '{b}' turn together at the speed ratio"
        else:
            stiff = (f"{U.text(l.stiffness, u.STIFFNESS)} referred to the shaft of '{a}' (the 'from' gear); "
                     f"{U.text(l.stiffness / r ** 2, u.STIFFNESS)} on the shaft of '{b}'")
        torque = f"on the shaft of '{a}'; on the shaft of '{b}' it is {1 / r:.4g} times that"
        rows.append([f"{l.name} ({l.id})" if l.name and l.name != l.id else l.id, teeth, freq, stiff, torque])
    return [Paragraph("Gear meshes", st["h2"]),
            table(ctx.cols(("Mesh", 0.13), ("Teeth and speed ratio (output / input)", 0.19, "LEFT", True, 4),
                           ("Mesh and hunting-tooth frequency", 0.28, "LEFT", True, 6),
                           ("Mesh stiffness", 0.22, "LEFT", True, 5), ("Torque reported", 0.18, "LEFT", True, 5)), rows),
            Paragraph("Mesh frequency = teeth × speed of that gear's shaft; hunting-tooth frequency = mesh frequency × "
                      "gcd / (z_from × z_to), gcd = number of assembly phases. The model refers a mesh's stiffness to "
                      "its 'from' shaft and reports the torque through it there; on the 'to' shaft the same stiffness "
                      "is divided by the square of the speed ratio and the torque by the ratio.", st["note"])]


# ----------------------------------------------------------------- damped modes and dampers
def damped_block(ctx: Ctx):
    """Damped natural frequencies and damping ratios (from the study), the damper-free and
    damper-locked bounds, and the classical damper optimum (issue 13, item 4)."""
    st = styles()
    study = ctx.study
    dm = getattr(study, "damped", None)
    bounds = getattr(study, "damper", None)
    if dm is None and bounds is None:
        return []
    suggest = damper_links_for_suggestion(ctx.train)
    title = "Damped natural frequencies" + (" and dampers" if bounds is not None or suggest else "")
    out = [CondPageBreak(120), Paragraph(title, st["h1"])]
    m = study.modes
    el = [(int(m.number[i]), float(m.frequency_hz[i])) for i in range(len(m)) if m.elastic[i]]
    if dm is not None and dm.modes:
        rows = []
        for k, d in enumerate(dm.modes, start=1):
            near = min(el, key=lambda x: abs(x[1] - d.natural_frequency_hz)) if el else None
            rows.append([str(k), fmt.hz(d.frequency_hz), fmt.hz(d.natural_frequency_hz),
                         fmt.percent(d.damping_ratio), f"{near[0]} ({fmt.hz(near[1])} Hz)" if near else "—"])
        out.append(table(ctx.cols(("Damped mode", 0.12, "RIGHT"), ("Damped natural frequency (Hz)", 0.2, "RIGHT"),
                                  ("Undamped-equivalent (Hz)", 0.2, "RIGHT"), ("Damping ratio (%)", 0.16, "RIGHT"),
                                  ("Nearest undamped mode (table above)", 0.32)), rows))
        note = ("From the complex eigenvalues lambda of the damped train in state-space form: damped natural "
                "frequency Im(lambda) / 2π, undamped-equivalent |lambda| / 2π, damping ratio −Re(lambda) / "
                "|lambda|. Up to the screening limit or the highest mode shown.")
        if dm.hysteretic:
            note += " Loss factors enter as an equivalent viscous damping eta k / omega at each mode's own frequency."
        if dm.overdamped_rates:
            rates = ", ".join(f"{num(r, 3)}" for r in dm.overdamped_rates[:8])
            note += (f" {len(dm.overdamped_rates)} overdamped motion{'s' if len(dm.overdamped_rates) != 1 else ''} "
                     f"(no oscillation; decay rates {rates} 1/s)" +
                     (", such as a damper ring creeping against its housing." if bounds is not None else "."))
        out.append(Paragraph(escape(note), st["note"]))
    notes = [n for n in (dm.notes if dm is not None else []) if "equivalent viscous" not in n]
    if notes:
        out.append(Paragraph(escape(" ".join(notes)), st["note"]))
    if bounds is not None:
        out.append(Paragraph(escape(bounds.statement), st["body"]))
        rows = [[str(k), fmt.hz(a) if a is not None else "—", fmt.hz(b) if b is not None else "—"]
                for k, (a, b) in enumerate(zip_longest(bounds.free_hz, bounds.locked_hz), start=1)]
        names = ", ".join(f"'{ctx.name(l)}'" for l in bounds.links)
        out.append(KeepTogether([table(ctx.cols(("Elastic mode", 0.2, "RIGHT"),
                                                ("Damper free (Hz)", 0.4, "RIGHT"),
                                                ("Damper locked (Hz)", 0.4, "RIGHT")), rows),
                                 Paragraph(escape(f"Dampers of damping alone: {names}."), st["note"])]))
    out += damper_suggestions(ctx)
    return out


def damper_links_for_suggestion(train) -> list:
    """Links the sheet suggests a damper optimum for: every coupling of damping alone (a viscous
    damper's ring) and every coupling named as a damper with a ring at one end (a tuned damper)."""
    out = []
    for l in train.links:
        if l.kind != "coupling" or l.grounded:
            continue
        named = "damper" in f"{l.id} {l.name or ''}".lower()
        if l.damping_only or (named and (l.damping > 0 or l.loss_factor > 0)):
            out.append(l)
    return out


def damper_suggestions(ctx: Ctx) -> list:
    from core.damped import DEN_HARTOG, damper_suggestion
    st = styles()
    U = ctx.units
    out = []
    for l in damper_links_for_suggestion(ctx.train):
        try:
            s = damper_suggestion(ctx.train, l.id)
        except ModelError:
            continue
        head = (f"<b>Damper '{escape(ctx.name(l.id))}'</b> (ring '{escape(ctx.name(s.ring))}' on "
                f"'{escape(ctx.name(s.housing))}') against mode {s.mode} of the train without the ring "
                f"({fmt.hz(s.mode_frequency_hz)}\u00a0Hz): inertia ratio mu = {s.mass_ratio:.3g} (ring "
                f"{U.text(s.ring_inertia, u.INERTIA)} / effective {U.text(s.effective_inertia, u.INERTIA)} at the "
                "housing).")
        modelled = f"modelled {U.text(s.damping, u.DAMPING)}"
        if not s.damping and l.loss_factor:  # a rubber damper's loss factor, as a viscous damping at the mode
            modelled = (f"modelled as loss factor eta = {l.loss_factor:g}, i.e. "
                        f"{U.text(l.loss_factor * s.stiffness / (TWO_PI * s.mode_frequency_hz), u.DAMPING)} at "
                        "this mode's frequency")
        if s.kind == "tuned":
            body = (f"Classical optimum of a tuned damper (two-mass model, Den Hartog; damping after Brock): "
                    f"tuning 1 / (1 + mu), stiffness {U.text(s.optimum_stiffness, u.STIFFNESS)} (modelled "
                    f"{U.text(s.stiffness, u.STIFFNESS)}), damping {U.text(s.optimum_damping, u.DAMPING)} ({modelled}), "
                    f"peak magnifier sqrt(1 + 2 / mu) = {s.optimum_magnifier:.3g}.")
        else:
            body = (f"Classical optimum of an untuned viscous damper (two-mass model, Den Hartog): damping "
                    f"{U.text(s.optimum_damping, u.DAMPING)} ({modelled}), peak magnifier "
                    f"1 + 2 / mu = {s.optimum_magnifier:.3g}.")
        out.append(Paragraph(f"{head} {body} A starting point for selecting the damper, not its rating "
                             f"({escape(DEN_HARTOG.split(',')[0])}; see Sources).", st["body"]))
    return out
