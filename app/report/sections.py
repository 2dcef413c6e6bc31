"""The sections of the review sheet, each a function ``section(ctx) -> list of flowables``.

:data:`SECTIONS` lists them in the order they print.  A section reads the
study (``ctx.study``) and the document as the user wrote it (``ctx.doc``),
formats numbers only through :mod:`app.formatting` and :class:`Units`, and
returns ``[]`` when it has nothing to say (no operating data, no forced
response, a study part that was not run).  Sections may add flowables to
``ctx.appendix`` (printed at the end, after the method), which is how long
trains keep a summary in the body and the full tables at the back.

Adding a section for a new study part: write ``def design_block(ctx)`` that
returns ``[]`` when ``ctx.study.design is None``, lay its tables out with
:func:`table` (linear in the rows, header repeated; a heading over a long table
with :func:`~app.report.base.heading`) and its plots as drawings, then put its
name in :data:`SECTIONS` where it should print.  Nothing else changes.  The
sections of the later analyses live in their own modules: excitation physics
(engines, electric lines, gear meshes, damped modes) in :mod:`.physics`, the
acceptance checks in :mod:`.acceptance`, transient events in :mod:`.transients`, the design
options (sensitivities, tolerance bands, windows) in :mod:`.design_section`;
the shared helpers (:class:`Units`, :class:`Ctx`, :func:`num`) in :mod:`.base`.
"""
from __future__ import annotations

import math

import numpy as np
from reportlab.platypus import (CondPageBreak, KeepTogether, PageBreak, Paragraph, Spacer, Table,
                                TableStyle)

from core import units as u
from core.about import CAUTION, program_line

from .. import formatting as fmt
from .. import wording
from . import acceptance, campbell, charts, design_section, physics, transients
from .schematic import legend_drawing, schematic_drawings
from .styles import FAIL_FILL, FAIL_INK, FONT, GREY, INK, NEUTRAL_FILL, OPEN_FILL, OPEN_INK, PASS_FILL, \
    PASS_INK, escape, styles
from .base import TWO_PI, Ctx, P, Units, clip, entered_number, fit_frame, heading, num, table  # noqa: F401
from .tables import LongTable, marked_styles, status_styles

#: a train with more discs or links than this gets a summary in the body, the full tables in Appendix A
BODY_ROWS = 60
N_SHAPE_PLOTS = 6
KINDS = {"shaft": "shaft", "coupling": "coupling", "gear_mesh": "gear mesh"}


def damping_as_entered(raw: dict, link, units: Units) -> list[str]:
    """The link's damping in the user's own terms (psi = relative damping, M = dynamic
    magnifier, eta = loss factor), with its loss-factor or psi equivalent."""
    out = []
    eta = link.loss_factor
    if raw.get("relative_damping") is not None:
        psi = entered_number(raw["relative_damping"], eta * TWO_PI)
        out.append(f"psi = {psi:g} (eta = {eta:.3g})")
    elif raw.get("dynamic_magnifier") is not None:
        mag = entered_number(raw["dynamic_magnifier"], 1.0 / eta if eta else math.inf)
        out.append(f"M = {mag:g} (eta = {eta:.3g})")
    elif raw.get("loss_factor") is not None and eta:
        out.append(f"eta = {entered_number(raw['loss_factor'], eta):g} (psi = {eta * TWO_PI:.3g})")
    if link.damping:
        out.append(f"c = {units.text(link.damping, u.DAMPING)}")
    return out


# ----------------------------------------------------------------- title and verdict
def title_block(ctx: Ctx):
    st = styles()
    data = ctx.data
    doc = ctx.doc
    out = [Paragraph("TORSIONAL VIBRATION REVIEW SHEET", st["kicker"]),
           Paragraph(escape(clip(ctx.train.title, 200)), st["title"])]
    rows = []
    if doc.get("description"):
        rows.append(("Description", escape(clip(doc["description"]))))
    rows += [("Revision", escape(ctx.revision) if ctx.revision else "—"),
             ("Author", escape(ctx.author) if ctx.author else "—"),
             ("Date", escape(ctx.date_text)),
             ("Program", escape(program_line())),
             ("Units", f"{ctx.units.title} (speeds in rpm of the shaft named, frequencies in Hz)"),
             ("Project file", escape(data.source_name)),
             ("SHA-256", f'<font size="6.8">{data.sha256}</font><br/>'
                         f'<font color="{GREY.hexval()}" size="6.5">{escape(data.hash_note)}</font>')]
    t = Table([[P(f"<b>{k}</b>", "cell"), P(v, "cell")] for k, v in rows], colWidths=[70, ctx.width - 70],
              hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("VALIGN", (0, 0), (-1, -1), "TOP"),
                           ("LINEABOVE", (0, 0), (-1, 0), 0.8, INK),
                           ("LINEBELOW", (0, -1), (-1, -1), 0.8, INK),
                           ("TOPPADDING", (0, 0), (-1, -1), 1.5), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
                           ("LEFTPADDING", (0, 0), (-1, -1), 2)]))
    out.append(t)
    return out


def above_limit_text(ctx: Ctx, limit: int = 12) -> str:
    """'7 (3595.71 Hz), 8 (5893.79 Hz)' for the modes above the screening limit ('' when none)."""
    m = ctx.study.modes
    idx = np.flatnonzero(ctx.study.above_screening_limit)
    parts = [f"{int(m.number[i])} ({fmt.hz(float(m.frequency_hz[i]))}\u00a0Hz)" for i in idx[:limit]]
    if len(idx) > limit:
        parts.append(f"and {len(idx) - limit} more")
    return ", ".join(parts)


def verdict_block(ctx: Ctx):
    """The headline verdict (:func:`app.wording.headline`: separation where every mode clears, the
    acceptance argument where some cannot), the separation screening beside it exactly as
    ``twistwise check`` words it, and one line per analysis that judged something."""
    st = styles()
    data = ctx.data
    study = ctx.study
    s = data.screening
    train = ctx.train
    out = [Paragraph("Verdict", st["h1"])]
    lines = []
    if s is None:
        head = "NOT SCREENED — the project has no operating data (reference shaft, operating speed, excitations)."
        fill, ink = NEUTRAL_FILL, INK
        lines.append("Only the natural frequencies and mode shapes are reported.")
    else:
        op = train.operating
        head, ok = wording.headline(study, nbsp="\u00a0")
        head = clip(head, 900)
        fill, ink = {True: (PASS_FILL, PASS_INK), False: (FAIL_FILL, FAIL_INK)}.get(ok, (OPEN_FILL, OPEN_INK))
        sep = wording.separation_verdict(s, nbsp="\u00a0")
        colour = (PASS_INK if s.passed else FAIL_INK).hexval()
        word, rest = sep.split(" — ", 1)
        lines.append(f"<b>Separation screening:</b> <font color='{colour}'>{word}</font> — {escape(clip(rest, 600))}")
        rng = (f"{fmt.rpm(op.speed_min)} rpm" if op.speed_min == op.speed_max
               else f"{fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} rpm")
        trip = f"; trip speed {fmt.rpm(op.trip_speed)} rpm" if op.trip_speed else ""
        lines.append(f"<b>Operating range:</b> {escape(clip(op.range_name, 200))}, {rng} of the reference shaft "
                     f"'{escape(clip(ctx.name(op.reference), 200))}'{trip}.")
        lines.append(f"<b>Required separation margin:</b> {fmt.percent(s.margin)}\u00a0% between every natural "
                     f"frequency and every excitation frequency over the operating range.")
        n_el = int(np.sum(s.modes.elastic & (s.modes.frequency_hz <= s.cap_hz)))
        n_src = len({l.source for l in s.lines})
        lines.append(f"<b>Modes screened:</b> {n_el} elastic modes up to the screening limit of "
                     f"{fmt.hz(s.cap_hz)}\u00a0Hz against {len(s.lines)} excitation line"
                     f"{'s' if len(s.lines) != 1 else ''} from {n_src} source{'s' if n_src != 1 else ''}.")
        above = above_limit_text(ctx)
        if above:
            lines.append(f"<b>Modes above the screening limit</b> (listed and marked, not screened): {above}.")
    if data.response is not None:
        n_ex = len(data.response_exceedances)
        checked = [p for p in data.response_summary if p.passed is not None]
        if n_ex:
            worst = data.response_exceedances[0]
            lines.append(f"<b>Forced response:</b> <font color='{FAIL_INK.hexval()}'>FAIL</font> — {n_ex} "
                         f"exceedance{'s' if n_ex > 1 else ''} of a permissible vibratory value (worst: "
                         f"{escape(clip(ctx.name(worst.link_id), 200))}, {worst.quantity} at "
                         f"{100 * worst.peak / worst.permissible:.0f}\u00a0% of permissible).")
        elif checked:
            lines.append(f"<b>Forced response:</b> PASS — the peak vibratory torque and stress stay within "
                         f"the permissible values of all {len(checked)} links that give one.")
        else:
            lines.append("<b>Forced response:</b> computed, but no link gives a permissible vibratory "
                         "torque or stress, so nothing was judged.")
    lines += acceptance_lines(ctx)
    lines += transient_lines(ctx)
    arg = study.argument
    if s is not None and not s.passed and arg is not None and arg.forced_response:
        lines.append("Modes within the margin are accepted on the damped forced response: API Standard 617 "
                     "accepts a torsional response analysis showing that such a resonance does no harm "
                     "(confirm the clause in the edition that applies); the reviewing engineer decides.")
    style = st["verdict"] if len(head) <= 260 else st["verdict_long"]
    body = [[Paragraph(f'<font color="{ink.hexval()}">{escape(head)}</font>', style)]]
    body += [[Paragraph(l, st["body"])] for l in lines]
    body.append([Paragraph(f"<i>{escape(CAUTION)}</i>", st["small"])])
    t = Table(body, colWidths=[ctx.width], hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("BACKGROUND", (0, 0), (-1, 0), fill),
                           ("BOX", (0, 0), (-1, -1), 0.8, ink),
                           ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
                           ("LEFTPADDING", (0, 0), (-1, -1), 5)]))
    out.append(t)
    return out


def acceptance_lines(ctx: Ctx) -> list[str]:
    """One verdict line for the acceptance checks (None when no check was made)."""
    acc = ctx.study.acceptance
    if acc is None or not acc.checks:
        return []
    n = len(acc.checks)
    cases = [lc.name for lc in acc.load_cases]
    where = (f"load case{'s' if len(cases) != 1 else ''} " + ", ".join(f"'{escape(clip(c, 120))}'" for c in cases)
             if cases else "no load case (vibratory limits only)")
    fails = acc.failures
    if fails:
        w = fails[0]
        text = (f"<b>Acceptance checks:</b> <font color='{FAIL_INK.hexval()}'>FAIL</font> — {len(fails)} of {n} "
                f"checks over {where} fail (worst: {escape(clip(ctx.name(w.link), 200))}, "
                f"{escape(wording.criterion(w.criterion))} at {fmt.percent(w.utilisation)}\u00a0% of its limit, "
                f"{fmt.rpm(w.at)} rpm, {wording.speed_band(w.speed_band)}).")
    else:
        w = acc.worst_first()[0]
        text = (f"<b>Acceptance checks:</b> PASS — all {n} checks over {where} hold (highest: "
                f"{escape(clip(ctx.name(w.link), 200))}, {escape(wording.criterion(w.criterion))} at "
                f"{fmt.percent(w.utilisation)}\u00a0% of its limit).")
    extra = []
    if acc.barred_ranges:
        extra.append(f"{len(acc.barred_ranges)} barred speed range{'s' if len(acc.barred_ranges) != 1 else ''}")
    if acc.hammer_ranges:
        extra.append(f"{len(acc.hammer_ranges)} speed range{'s' if len(acc.hammer_ranges) != 1 else ''} of gear "
                     "hammer")
    if extra:
        text += " " + " and ".join(extra).capitalize() + " (listed under Acceptance)."
    return [text]


def transient_lines(ctx: Ctx) -> list[str]:
    """One verdict line for the transient events (none when the project has none)."""
    tr = ctx.study.transients
    if tr is None or not tr.events:
        return []
    names = ", ".join(f"'{escape(clip(e.name, 120))}'" for e in tr.events)
    n = len(tr.events)
    failing = [(e, l) for e in tr.events for l in e.links if l.passed is False]
    if failing:
        e, l = failing[0]
        return [f"<b>Transient events</b> ({names}): <font color='{FAIL_INK.hexval()}'>FAIL</font> — "
                f"{len(failing)} link{'s' if len(failing) != 1 else ''} exceed a peak limit or take fewer events "
                f"than required (first: {escape(clip(ctx.name(l.link_id), 200))} in '{escape(clip(e.name, 120))}')."]
    if tr.passed:
        return [f"<b>Transient events</b> ({names}): PASS — every peak torque within its limit and every shaft "
                f"with a fatigue curve takes the events required."]
    return [f"<b>Transient event{'s' if n != 1 else ''}</b> ({names}): computed; no link gives a peak limit or a "
            "required number of events, so nothing was judged."]


# ----------------------------------------------------------------- schematic and model
def schematic_block(ctx: Ctx):
    st = styles()
    out = [Paragraph("Train schematic", st["h1"])]
    dwgs, note = schematic_drawings(ctx.doc, ctx.train, ctx.width, ctx.frame_h, ctx.placement)
    for dwg in dwgs:
        out.append(fit_frame(dwg, ctx.width, ctx.frame_h))
    out.append(legend_drawing(ctx.width))
    if note:
        out.append(Paragraph(escape(note), st["note"]))
    return out


def segments_text(link, units: Units, max_listed: int = 4) -> str:
    """Segment geometry 'length × outer dia. / bore', one per line; a long list summarised."""
    segs = link.segments
    if not segs:
        return "—"
    f = units.factor(u.LENGTH)

    def one(s):
        t = f"{num(s.length * f)} × {num(s.outer_diameter * f)}"
        return t + (f" / {num(s.inner_diameter * f)}" if s.inner_diameter > 0 else "")
    if len(segs) <= max_listed:
        return "\n".join(one(s) for s in segs)
    total = sum(s.length for s in segs)
    return "\n".join([one(segs[0]), f"… {len(segs) - 2} more …", one(segs[-1]),
                      f"{len(segs)} segments, {num(total * f)} long"])


def disc_table(ctx: Ctx, discs) -> LongTable:
    U = ctx.units
    any_damp = any(d.damping > 0 for d in ctx.train.discs)
    spec = [("Disc", 0.40), ("Id", 0.22, "LEFT", True), (f"Inertia ({U.unit(u.INERTIA)})", 0.18, "RIGHT")]
    if any_damp:
        spec.append((f"Damping to ground ({U.unit(u.DAMPING)})", 0.20, "RIGHT"))
    inertia = U.column([d.inertia for d in discs], u.INERTIA)
    damp = U.column([d.damping for d in discs], u.DAMPING) if any_damp else None
    rows = []
    for k, d in enumerate(discs):
        r = [d.name or d.id, d.id, inertia[k]]
        if any_damp:
            r.append(damp[k] if d.damping else "—")
        rows.append(r)
    return table(ctx.cols(*spec), rows)


def link_table(ctx: Ctx, links) -> LongTable:
    U = ctx.units
    raw = {l.get("id"): l for l in ctx.doc.get("links", []) if isinstance(l, dict)}
    spec = [("Link (id)", 0.14), ("Kind", 0.085), ("From / to", 0.145),
            (f"Stiffness ({U.unit(u.STIFFNESS)})", 0.10, "RIGHT", True),
            (f"Geometry: length × outer dia. / bore ({U.unit(u.LENGTH)})", 0.15, "LEFT", True, 6),
            ("Material, mass model", 0.095), ("Speed ratio (output / input)", 0.07, "RIGHT"),
            ("Damping as entered, limits", 0.21, "LEFT", True, 8)]
    finite = [l.total_stiffness if not l.is_rigid else 0.0 for l in links]
    k_col = U.column(finite, u.STIFFNESS)
    rows = []
    for n, l in enumerate(links):
        if l.is_rigid:
            k_text = "rigid"
        else:
            k_text = k_col[n] + ("\n(geometry)" if l.stiffness is None else "")
        extras = damping_as_entered(raw.get(l.id, {}), l, U)
        if l.stress_concentration != 1.0:
            extras.append(f"SCF {l.stress_concentration:g}")
        if l.permissible_torque is not None:
            extras.append(f"perm. torque {U.text(l.permissible_torque, u.TORQUE)}")
        if l.permissible_stress is not None:
            extras.append(f"perm. stress {U.text(l.permissible_stress, u.STRESS)}")
        label = f"{l.name} ({l.id})" if l.name and l.name != l.id else l.id
        material = ", ".join(x for x in ((l.material.name if l.material else ""),
                                         (l.mass if l.kind == "shaft" and l.has_geometry else "")) if x) or "—"
        rows.append([label, KINDS[l.kind], f"{ctx.name(l.from_id)} to {ctx.name(l.to_id)}", k_text,
                     segments_text(l, U), material, f"{l.speed_ratio:g}" if l.kind == "gear_mesh" else "—",
                     "\n".join(extras) or "—"])
    return table(ctx.cols(*spec), rows)


def model_notes(ctx: Ctx) -> list:
    st = styles()
    U = ctx.units
    out = []
    mats = {l.material.name: l.material for l in ctx.train.links if l.material}
    if mats:
        txt = "; ".join(f"{escape(m.name)}: G = {U.text(m.shear_modulus, u.MODULUS)}, density "
                        f"{U.text(m.density, u.DENSITY)}" for m in mats.values())
        out.append(Paragraph(f"Materials — {txt}.", st["note"]))
    out.append(Paragraph(
        "Speed ratio (output / input) = speed of the 'to' disc (output) / speed of the 'from' disc (input) of a "
        "gear mesh. SCF = stress concentration factor; perm. = permissible vibratory amplitude. Stiffness and inertia are as given for each element on its own shaft (not referred). "
        "Damping as entered: psi = relative damping (coupling catalogues), M = dynamic magnifier, eta = loss "
        "factor, with the equivalent in brackets (eta = psi / 2π = 1 / M); c = viscous damping. Mass model of a "
        "shaft with geometry: none (massless spring), lumped or distributed.", st["note"]))
    return out


def model_block(ctx: Ctx):
    st = styles()
    train = ctx.train
    out = [Paragraph(f"Model ({ctx.units.title} units)", st["h1"])]
    n_d, n_l = len(train.discs), len(train.links)
    if n_d <= BODY_ROWS and n_l <= BODY_ROWS:
        out.append(disc_table(ctx, train.discs))
        out.append(Spacer(1, 6))
        if train.links:
            out.append(link_table(ctx, train.links))
        out += model_notes(ctx)
        return out
    out += model_summary(ctx)
    ctx.appendix += [Paragraph("Appendix A — the full model", st["h1"]),
                     Paragraph(f"Every disc ({n_d}) and every link ({n_l}) of the project, in file order "
                               f"({ctx.units.title} units).", st["note"]),
                     disc_table(ctx, train.discs), Spacer(1, 6)]
    if train.links:
        ctx.appendix.append(link_table(ctx, train.links))
    ctx.appendix += model_notes(ctx)
    return out


def model_summary(ctx: Ctx) -> list:
    """A long train in the body: counts and ranges per element kind, and the elements that matter."""
    st = styles()
    U = ctx.units
    train = ctx.train
    discs, links = train.discs, train.links
    J = np.array([d.inertia for d in discs])
    rows = [["Discs", str(len(discs)),
             f"inertia {U.value(float(J.min()), u.INERTIA)} to {U.value(float(J.max()), u.INERTIA)} "
             f"{U.unit(u.INERTIA)}", f"total {U.text(float(J.sum()), u.INERTIA)}; "
             f"{sum(d.damping > 0 for d in discs)} with damping to ground"]]
    for kind in ("shaft", "coupling", "gear_mesh"):
        mine = [l for l in links if l.kind == kind]
        if not mine:
            continue
        if kind == "gear_mesh":
            ratios = [l.speed_ratio for l in mine]
            rng = f"speed ratio (output / input) {min(ratios):g} to {max(ratios):g}"
        else:
            k = [l.total_stiffness for l in mine if not l.is_rigid]
            rng = (f"stiffness {U.value(min(k), u.STIFFNESS)} to {U.value(max(k), u.STIFFNESS)} "
                   f"{U.unit(u.STIFFNESS)}") if k else "—"
        extra = []
        if kind == "shaft":
            n_seg = sum(len(l.segments) for l in mine)
            masses = {m: sum(1 for l in mine if l.mass == m) for m in ("none", "lumped", "distributed")}
            extra.append(f"{n_seg} geometry segments; mass model: " +
                         ", ".join(f"{v} {k}" for k, v in masses.items() if v))
        grounded = sum(1 for l in mine if l.grounded)
        if grounded:
            extra.append(f"{grounded} to ground")
        damped = sum(1 for l in mine if l.damping or l.loss_factor)
        if damped:
            extra.append(f"{damped} damped")
        rows.append([KINDS[kind].capitalize() + ("s" if len(mine) != 1 else ""), str(len(mine)), rng,
                     "; ".join(extra) or "—"])
    out = [Paragraph(f"The train has {len(discs)} discs and {len(links)} links: too many to list here. "
                     "The elements are summarised below; every one is listed in Appendix A at the end "
                     "of this sheet.", st["body"]),
           table(ctx.cols(("Elements", 0.14), ("Count", 0.08, "RIGHT"), ("Range", 0.38), ("Notes", 0.40)),
                 rows), Spacer(1, 6)]
    # the elements a reviewer looks for first
    why: dict[str, list[str]] = {}
    op = train.operating
    if op is not None:
        why.setdefault(op.reference, []).append("reference shaft")
        for e in op.excitations:
            for at in [e.at or e.applied_at] + [c for c, _ in e.cylinders]:
                if at:
                    why.setdefault(at, []).append(f"excitation '{e.name}'")
    for k in np.argsort(-J)[:5]:
        why.setdefault(discs[int(k)].id, []).append("among the 5 largest inertias")
    special = [l for l in links if l.kind != "shaft" or l.grounded]
    for l in special[:30]:
        why.setdefault(l.id, []).append("coupling" if l.kind == "coupling" else
                                        "gear mesh" if l.kind == "gear_mesh" else "link to ground")
    m = ctx.study.modes
    if links:
        link_ids = train.link_ids
        for i in np.flatnonzero(m.elastic)[:12]:
            dom = link_ids[int(np.argmax(m.strain_share[i]))]
            why.setdefault(dom, []).append(f"largest strain energy of mode {int(m.number[i])}")
    disc_by_id = {d.id: d for d in discs}
    link_by_id = {l.id: l for l in links}
    rows = []
    for eid, reasons in why.items():
        if eid in disc_by_id:
            d = disc_by_id[eid]
            rows.append([d.name or d.id, d.id, "disc", U.text(d.inertia, u.INERTIA), "; ".join(dict.fromkeys(reasons))])
        elif eid in link_by_id:
            l = link_by_id[eid]
            value = "rigid" if l.is_rigid else U.text(l.total_stiffness, u.STIFFNESS)
            if l.kind == "gear_mesh":
                value += f", speed ratio (output / input) {l.speed_ratio:g}"
            rows.append([l.label, l.id, KINDS[l.kind], value, "; ".join(dict.fromkeys(reasons))])
    if rows:
        out.append(Paragraph("Elements that carry the results", st["h2"]))
        out.append(table(ctx.cols(("Name", 0.26), ("Id", 0.14), ("Kind", 0.08), ("Inertia or stiffness", 0.2),
                                  ("Listed because", 0.32)), rows))
    return out


# ----------------------------------------------------------------- operating data and excitations
def excitation_block(ctx: Ctx):
    st = styles()
    train = ctx.train
    op = train.operating
    if op is None:
        return []
    U = ctx.units
    out = [Paragraph("Operating data and excitation inputs", st["h1"])]
    rng = (f"{fmt.rpm(op.speed_min)} rpm" if op.speed_min == op.speed_max
           else f"{fmt.rpm(op.speed_min)} to {fmt.rpm(op.speed_max)} rpm")
    trip = f", trip speed {fmt.rpm(op.trip_speed)} rpm" if op.trip_speed else ""
    out.append(Paragraph(
        f"Reference shaft: '{escape(ctx.name(op.reference))}' (disc {escape(op.reference)}). "
        f"{escape(op.range_name)}: {rng}{trip}. Required separation margin {fmt.percent(op.margin)}\u00a0%.",
        st["body"]))
    if not op.excitations:
        out.append(Paragraph("No excitation is given.", st["body"]))
        return out
    tu = U.unit(u.TORQUE)
    rows = []
    for e in op.excitations:
        if e.frequency is not None:
            at = e.applied_at
            rows.append([e.name, ctx.name(at) if at else "— (screening only)", "—",
                         f"{e.frequency:g} Hz fixed", U.value(e.amplitude, u.TORQUE) if e.amplitude else "—",
                         f"{e.phase_deg:g}" if e.amplitude else "—", "constant"])
            continue
        ratio = train.relative_speed(e.at, op.reference)
        engine = getattr(e, "engine", None)
        if engine is not None:  # amplitudes come from the engine data, per cylinder and speed
            orders = [o.order for o in e.orders]
            rows.append([e.name, f"{len(engine.cylinders)} crank throws (see the engine below)", f"{ratio:.4g}",
                         f"orders {fmt.order(min(orders))}–{fmt.order(max(orders))}",
                         "from the engine data", "per cylinder", "gas with load, inertia with speed²"])
            continue
        if getattr(e, "lines", ()):
            rows += physics.electric_rows(ctx, e, ratio)
            continue
        for k, o in enumerate(e.orders):
            scaling = "constant"
            if o.scaling == "speed_squared":
                scaling = f"with speed², given at {fmt.rpm(o.at_speed)} rpm"
            rows.append([e.name if k == 0 else "", ctx.name(e.at) if k == 0 else "",
                         f"{ratio:.4g}" if k == 0 else "", f"order {fmt.order(o.order)}",
                         U.value(o.amplitude, u.TORQUE) if o.amplitude is not None else "—",
                         f"{o.phase_deg:g}" if o.amplitude is not None else "—", scaling])
    out.append(table(ctx.cols(("Excitation", 0.2), ("Acts at", 0.17), ("Its shaft's speed / reference", 0.1, "RIGHT"),
                              ("Order, frequency or line", 0.18, "LEFT", True, 4),
                              (f"Amplitude ({tu})", 0.1, "RIGHT", True),
                              ("Phase (deg)", 0.08, "RIGHT", True), ("Amplitude scaling", 0.17)), rows))
    out += physics.electric_notes(ctx)
    cyl_rows = []
    for e in op.excitations:
        if getattr(e, "engine", None) is not None:
            continue  # listed with the engine's own inputs
        for k, (disc, firing) in enumerate(e.cylinders):
            cyl_rows.append([e.name if k == 0 else "", str(k + 1), ctx.name(disc), f"{firing:g}"])
    if cyl_rows:
        out.append(Spacer(1, 4))
        out.append(table(ctx.cols(("Excitation with cylinders", 0.34), ("Cylinder", 0.1, "RIGHT"),
                                  ("Crank throw (disc)", 0.36), ("Firing angle (deg)", 0.2, "RIGHT")), cyl_rows))
    out.append(Paragraph(
        "An order's excitation frequency is the order × the speed of the shaft it acts on; its phase is in "
        "degrees of that shaft. Where cylinders are given, each order's amplitude acts at every crank throw "
        "with the phase minus order × firing angle (vector sum). Amplitudes enter the forced response only; "
        "the screening uses the frequencies.", st["note"]))
    return out


# ----------------------------------------------------------------- results
def frequency_block(ctx: Ctx):
    st = styles()
    m = ctx.study.modes
    s = ctx.data.screening
    above = ctx.study.above_screening_limit
    out = heading("Natural frequencies")
    spec = [("Mode", 0.07, "RIGHT"), ("Hz", 0.11, "RIGHT"), ("cpm", 0.1, "RIGHT"),
            ("Largest strain energy (link, share)", 0.28), ("Largest kinetic energy (disc, share)", 0.28)]
    if s is not None:
        spec.append(("Screened", 0.21))
    rows, cells = [], {}
    # dominant elements by one argmax per table (Modes.dominant_* rebuild the id lists per call)
    link_ids, disc_ids = ctx.train.link_ids, ctx.train.disc_ids
    has_links = bool(m.strain_share.size)
    strain_arg = m.strain_share.argmax(axis=1) if has_links else np.zeros(len(m), int)
    strain_max = m.strain_share.max(axis=1) if has_links else np.zeros(len(m))
    kin_arg = m.kinetic_share.argmax(axis=1)
    kin_max = m.kinetic_share.max(axis=1)
    for i in range(len(m)):
        f = float(m.frequency_hz[i])
        if m.rigid_body[i]:
            dom = "rigid-body mode"
        else:
            dom = fmt.share(ctx.name(link_ids[strain_arg[i]]), float(strain_max[i])) if has_links else "—"
        r = [str(int(m.number[i])), fmt.hz(f), fmt.cpm(f), dom,
             fmt.share(ctx.name(disc_ids[kin_arg[i]]), float(kin_max[i]))]
        if s is not None:
            if m.rigid_body[i]:
                r.append("—")
            elif above[i]:
                r.append("no: above the screening limit")
                cells[i] = marked_styles(len(r) - 1)
            else:
                r.append("yes")
        rows.append(r)
    out.append(table(ctx.cols(*spec), rows, cells))
    req = m.requested
    notes = [f"{req[:1].upper() + req[1:]}; dominant element by share of the mode's strain energy."]
    if s is not None:
        notes.append(f"Screening limit {fmt.hz(s.cap_hz)} Hz.")
        above_txt = above_limit_text(ctx)
        if above_txt:
            notes.append(f"Modes above the screening limit, shown for completeness and not screened: {above_txt}.")
    notes += list(m.notes)
    out.append(Paragraph(escape(" ".join(notes)), st["note"]))
    return out


def mode_shape_block(ctx: Ctx):
    st = styles()
    m = ctx.study.modes
    pl = ctx.placement
    elastic = [i for i in range(len(m)) if m.elastic[i]][:N_SHAPE_PLOTS]
    if not elastic:
        return []
    per_row = 3
    cw = ctx.width / per_row
    cells = [charts.mode_shape_drawing(m, i, pl, cw - 4, 150, ctx.train.links, name_of=ctx.name)
             for i in elastic]
    grid = [cells[k:k + per_row] for k in range(0, len(cells), per_row)]
    grid[-1] += [""] * (per_row - len(grid[-1]))
    t = Table(grid, colWidths=[cw] * per_row, hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                           ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                           ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2)]))
    note = ("Twist angle of each disc, normalised to the largest (+1), against its column in the schematic; "
            "a branch is drawn in its own colour, a geared branch in the angle of its own shaft. "
            "Under each title: the link with the largest share of the mode's strain energy. Angles are shown "
            "at the discs; the inside of a shaft with distributed mass is not drawn.")
    if pl.n_columns > 14:
        note += " Disc names are left out on trains of more than 14 columns (the schematic names them)."
    return [CondPageBreak(330),
            KeepTogether([Paragraph(f"Mode shapes (first {len(elastic)} elastic modes)", st["h1"]), t,
                          Paragraph(note, st["note"])])]


def campbell_block(ctx: Ctx):
    st = styles()
    s = ctx.data.screening
    if s is None:
        return []
    tops = campbell.panel_tops(s)
    n = len(tops)
    first_h = ctx.frame_h * (0.46 if n == 1 else 0.36)
    acc = ctx.study.acceptance
    dwg = campbell.campbell_drawing(s, ctx.width, first_h, tops[0], acceptance=acc)
    note = ("Order labels stand where each excitation line leaves the chart, mode numbers at the left edge "
            "(a thin leader where a label had to move; neighbouring labels merged as '3–5' only where there "
            "is no room).")
    if any(l.kind == "line" for l in s.lines):
        note += (" Lines of an electric drive that do not pass through the origin, f = |a + b·N|, are drawn "
                 "dash-dotted as the lines they are and labelled with their formula.")
    note += (" The strip along the foot marks the speed bands the acceptance judges apart: start-up / run-down, "
             "the operating range and overspeed to trip.")
    if n > 1:
        note += (" The detail panels below repeat the chart over lower frequency ranges, so that no "
                 "natural frequency is squeezed against the axis.")
    out = [CondPageBreak(first_h + 150),
           KeepTogether([Paragraph("Interference (Campbell) diagram", st["h1"]),
                         fit_frame(dwg, ctx.width, ctx.frame_h), Paragraph(note, st["note"])])]
    for k, top in enumerate(tops[1:], start=2):
        d = campbell.campbell_drawing(s, ctx.width, ctx.frame_h * 0.27, top,
                                      title=f"Detail {k - 1}: 0 to {num(top, 3)} Hz (key as above)",
                                      with_legend=False, acceptance=acc)
        out.append(fit_frame(d, ctx.width, ctx.frame_h))
    return out


def coincidence_block(ctx: Ctx):
    st = styles()
    s = ctx.data.screening
    if s is None:
        return []
    out = heading("Coincidences, worst first")
    if not s.coincidences:
        out.append(Paragraph(f"No excitation comes within {fmt.percent(2 * s.margin)}\u00a0% of a natural "
                             "frequency.", st["body"]))
        return out
    rows, cells = [], {}
    for k, c in enumerate(s.coincidences):
        if c.band is None:
            band = "—"
        elif c.line.fixed_hz is not None:
            band = "all speeds"
        else:
            band = f"{fmt.rpm(c.band[0])}–{fmt.rpm(c.band[1])}"
        status = c.status.upper()
        # with tolerances the status follows the margin from the tolerance band's edge: printed beside the nominal
        tol = [fmt.percent(c.separation_band)] if s.tolerances else []
        rows.append([str(c.mode), fmt.hz(c.frequency_hz), c.source, order_or_line(c.line),
                     ctx.name(c.line.at) if c.line.at else "—", fmt.rpm(c.crossing_speed),
                     fmt.percent(c.separation), *tol, band, status])
        cells[k] = status_styles(len(rows[-1]) - 1, status)
    any_line = any(c.line.kind == "line" for c in s.coincidences)
    narrow = s.tolerances  # room for the margin with tolerances
    spec = [("Mode", 0.06, "RIGHT"), ("Natural Hz", 0.09, "RIGHT"), ("Excitation source", 0.17 if narrow else 0.21),
            ("Order or line" if any_line else "Order", 0.11 if any_line else 0.06, "RIGHT", True),
            ("Acts at", 0.11 if narrow and any_line else 0.13), ("Crossing rpm", 0.09, "RIGHT"),
            ("Margin %", 0.08, "RIGHT")]
    if s.tolerances:
        spec.append(("Margin with tolerances %", 0.1, "RIGHT", True))
    spec += [("Band inside the margin (rpm)", 0.11 if narrow else 0.14), ("Status", 0.07)]
    out.append(table(ctx.cols(*spec), rows, cells))
    text = (f"Listed: every pair with a smallest separation below twice the required margin "
            f"({fmt.percent(2 * s.margin)}\u00a0%). Margin = smallest |f_n - f_e| / f_e over the operating range "
            "(0 for a crossing inside it). Crossing rpm: reference speed where the excitation meets the natural "
            "frequency, also when outside the range.")
    if s.tolerances:
        text += (" With the stiffness and inertia tolerances each natural frequency is a band: the margin with "
                 "tolerances is measured from the band's edge nearest the excitation (0 when the excitation enters "
                 "the band); the status and the order of the rows follow it.")
    if any_line:
        text += (" A line that does not pass through the origin is listed by its formula f = |a + b·N| "
                 "(a in Hz, N the speed of the shaft it acts at in rev/s); a V-shaped line |a − b·N| may cross "
                 "a natural frequency twice, the first crossing is listed.")
    out.append(Paragraph(text, st["note"]))
    return out


def order_or_line(line) -> str:
    """The coincidence table's words for an excitation line: its order, 'fixed', or its formula."""
    if line.kind == "line":
        return line.formula or "line"
    return fmt.order(line.order)


def response_block(ctx: Ctx):
    st = styles()
    data = ctx.data
    U = ctx.units
    if data.response is None:
        if data.study.response_error is not None:
            return [Paragraph("Forced response", st["h1"]),
                    Paragraph(escape(data.study.response_error.message), st["body"])]
        return []
    r = data.response
    out = heading("Forced response: peak vibratory torque and stress")
    tu, su = U.unit(u.TORQUE), U.unit(u.STRESS)
    peaks = data.response_summary
    tq = U.column([p.peak_torque for p in peaks], u.TORQUE)
    tq_perm = U.column([math.nan if p.permissible_torque is None else p.permissible_torque for p in peaks], u.TORQUE)
    ss = U.column([math.nan if p.peak_stress is None else p.peak_stress for p in peaks], u.STRESS)
    ss_perm = U.column([math.nan if p.permissible_stress is None else p.permissible_stress for p in peaks], u.STRESS)
    rows, cells = [], {}
    for k, p in enumerate(peaks):
        status = "no limit" if p.passed is None else ("PASS" if p.passed else "FAIL")
        stress_ok = p.peak_stress is not None and math.isfinite(p.peak_stress)
        rows.append([ctx.name(p.link_id), str(p.kind).replace("_", " "), tq[k], fmt.rpm(p.speed_at_peak_torque),
                     tq_perm[k], ss[k] if stress_ok else "—",
                     fmt.rpm(p.speed_at_peak_stress) if stress_ok else "—", ss_perm[k], status])
        cells[k] = status_styles(8, status)
    spec = [("Link", 0.17), ("Kind", 0.09), (f"Peak torque ({tu})", 0.11, "RIGHT"), ("at rpm", 0.08, "RIGHT"),
            (f"Permissible ({tu})", 0.11, "RIGHT"), (f"Peak stress ({su})", 0.11, "RIGHT"),
            ("at rpm", 0.08, "RIGHT"), (f"Permissible ({su})", 0.11, "RIGHT"), ("Status", 0.08)]
    out.append(table(ctx.cols(*spec), rows, cells))
    band = peaks[0].band if peaks else ""
    where = (f"over the {wording.speed_band(band)}" if band else "over the computed speed range")
    out.append(Paragraph(
        f"Peak {where} of the combined amplitude (sum of the order amplitudes, "
        "conservative); stress = torque × outer radius / polar moment × stress concentration factor, for "
        f"shafts with geometry. Status only where a permissible value is given. Speeds computed: "
        f"{fmt.rpm(float(np.min(r.speed)))}–{fmt.rpm(float(np.max(r.speed)))} rpm of the reference shaft.",
        st["note"]))
    out += acceptance.band_peaks_block(ctx)
    speed_rpm = np.asarray(r.speed) * 60.0 / TWO_PI
    index = {lid: k for k, lid in enumerate(r.link_ids)}
    link_torque = np.asarray(r.link_torque)
    scale = U.factor(u.TORQUE)

    def utilisation(p):
        return p.peak_torque / p.permissible_torque if p.permissible_torque else -1.0
    ranked = sorted(peaks, key=lambda p: (utilisation(p), p.peak_torque or 0.0), reverse=True)
    chosen = [p for p in ranked if p.link_id in index][:4]
    curves = [(ctx.name(p.link_id), link_torque[index[p.link_id]] * scale,
               None if p.permissible_torque is None else p.permissible_torque * scale, p.link_id) for p in chosen]
    if curves and len(speed_rpm) > 1:
        op = ctx.train.operating
        cw = ctx.width / 2
        acc = ctx.study.acceptance
        from core.bands import speed_bands
        bands = speed_bands(op, lowest=min(float(speed_rpm.min()) * TWO_PI / 60.0, op.speed_min))
        barred = campbell.barred_ranges(acc)
        trip = fmt.rad_s_to_rpm(op.trip_speed) if op.trip_speed else None

        def hammer(link_id):
            return [h for h in (acc.hammer_ranges if acc is not None else ()) if h.link == link_id]
        cells_ = [charts.response_drawing(
            speed_rpm, v, perm, cw - 4, 135, (fmt.rad_s_to_rpm(op.speed_min), fmt.rad_s_to_rpm(op.speed_max)),
            title=f"{name}: peak {num(float(np.nanmax(v)))} {tu}", y_title=f"torque amplitude ({tu})",
            x_title="reference speed (rpm)", colour=charts.PALETTE[k % len(charts.PALETTE)], bands=bands,
            barred=barred, trip_rpm=trip, hammer=hammer(lid))
            for k, (name, v, perm, lid) in enumerate(curves)]
        grid = [cells_[k:k + 2] for k in range(0, len(cells_), 2)]
        grid[-1] += [""] * (2 - len(grid[-1]))
        t = Table(grid, colWidths=[cw, cw], hAlign="LEFT")
        t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT),
                               ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0)]))
        out.append(KeepTogether([t, Paragraph(
            f"Combined vibratory torque amplitude against the speed of the reference shaft "
            f"'{escape(ctx.name(op.reference))}', for the links nearest their permissible value (else the "
            "largest); operating range shaded, permissible value dashed"
            + (", trip speed dotted" if trip is not None else "")
            + (", barred speed ranges red" if barred else "")
            + (", gear-hammer ranges grey" if any(hammer(c[3]) for c in curves) else "")
            + ". " + escape(charts.bands_text(bands)[:1].upper() + charts.bands_text(bands)[1:]) + ".",
            st["note"])]))
    return out


# ----------------------------------------------------------------- method and sources
SOURCES = {
    "holzer": "H. Holzer, Die Berechnung der Drehschwingungen, Springer, Berlin, 1921",
    "pestel": "E. C. Pestel and F. A. Leckie, Matrix Methods in Elastomechanics, McGraw-Hill, New York, 1963",
    "ww": ("W. H. Wittrick and F. W. Williams, A general algorithm for computing natural frequencies of "
           "elastic structures, Quarterly Journal of Mechanics and Applied Mathematics 24 (1971) 263–284"),
    "api617": ("American Petroleum Institute, API Standard 617, Axial and Centrifugal Compressors and "
               "Expander-compressors, API, Washington DC (torsional analysis and separation margin)"),
    "api684": ("American Petroleum Institute, API Standard Paragraphs Rotordynamic Tutorial (API RP 684), "
               "API, Washington DC"),
    "nestorides": ("E. J. Nestorides (ed.), A Handbook on Torsional Vibration, B.I.C.E.R.A., Cambridge "
                   "University Press, 1958"),
    "din740": ("DIN 740-2, Flexible shaft couplings: parameters and design principles, Beuth, Berlin "
               "(relative damping psi of couplings)"),
    "roark": "W. C. Young and R. G. Budynas, Roark's Formulas for Stress and Strain, 7th ed., McGraw-Hill, 2002",
    "shigley": ("R. G. Budynas and J. K. Nisbett, Shigley's Mechanical Engineering Design, 9th ed., McGraw-Hill, "
                "New York, 2011 (ch. 6, fatigue failure resulting from variable loading)"),
    "iacs_m68": ("International Association of Classification Societies, Unified Requirement M68, Dimensions of "
                 "propulsion shafts and their permissible torsional vibration stresses, IACS, London"),
    "taylor": ("C. F. Taylor, The Internal-Combustion Engine in Theory and Practice, vol. 2, MIT Press, "
               "Cambridge MA (engine balance and torque)"),
    "iso6336": ("ISO 6336-1, Calculation of load capacity of spur and helical gears — Part 1: Basic principles, "
                "introduction and general influence factors, ISO, Geneva (mesh stiffness)"),
    "inman": "D. J. Inman, Engineering Vibration, Prentice Hall (state-space form of damped free vibration)",
    "denhartog": ("J. P. Den Hartog, Mechanical Vibrations, 4th ed., McGraw-Hill, New York, 1956 (ch. 3, the "
                  "damped vibration absorber)"),
    "newmark": ("N. M. Newmark, A method of computation for structural dynamics, Journal of the Engineering "
                "Mechanics Division, ASCE 85 (1959) 67–94"),
    "astm1049": ("ASTM E1049, Standard Practices for Cycle Counting in Fatigue Analysis, ASTM International, "
                 "West Conshohocken PA (rainflow counting)"),
    "miner": "M. A. Miner, Cumulative damage in fatigue, Journal of Applied Mechanics 12 (1945) A159–A164",
    "fkm": ("FKM guideline, Analytical Strength Assessment of Components, VDMA Verlag, Frankfurt am Main "
            "(S–N curves in shear)"),
    "rayleigh": ("J. W. Strutt, Baron Rayleigh, The Theory of Sound, 2nd ed., vol. 1, Macmillan, London, 1894 "
                 "(reprinted Dover, New York, 1945): the stationary quotient of strain and kinetic energy"),
    "thomson": ("W. T. Thomson and M. D. Dahleh, Theory of Vibration with Applications, 5th ed., Prentice Hall, "
                "Upper Saddle River NJ, 1998 (Rayleigh's method)"),
    "foxkapoor": ("R. L. Fox and M. P. Kapoor, Rates of change of eigenvalues and eigenvectors, AIAA Journal 6 "
                  "(1968) 2426–2429"),
    "courant": ("R. Courant and D. Hilbert, Methods of Mathematical Physics, vol. 1, Interscience, New York, 1953 "
                "(ch. VI, the maximum–minimum property of eigenvalues)"),
    "concordia": ("C. Concordia, Synchronous Machines: Theory and Performance, Wiley, New York, 1951 "
                  "(short-circuit torque)"),
}


def method_block(ctx: Ctx):
    st = styles()
    train = ctx.train
    study = ctx.study
    masses = {m: [l.label for l in train.links if l.kind == "shaft" and l.mass == m]
              for m in ("none", "lumped", "distributed")}
    refs: list[str] = []

    def cite(*keys) -> str:
        """'[4, 5]': the numbers of the sources, in the order they are first cited."""
        for k in keys:
            if k not in refs:
                refs.append(k)
        return "[" + ", ".join(str(refs.index(k) + 1) for k in keys) + "]"

    def listed(names):
        return ", ".join(names[:12]) + (f" and {len(names) - 12} more" if len(names) > 12 else "")
    mass_txt = []
    if masses["distributed"]:
        mass_txt.append(f"distributed (exact continuous shaft): {listed(masses['distributed'])}")
    if masses["lumped"]:
        mass_txt.append(f"lumped (half of the shaft's own inertia added to each end disc): "
                        f"{listed(masses['lumped'])}")
    if masses["none"]:
        mass_txt.append(f"massless spring: {len(masses['none'])} shaft{'s' if len(masses['none']) != 1 else ''}")
    paras = [
        f"<b>Natural frequencies.</b> Transfer matrices per element in the manner of Holzer {cite('holzer')}: "
        "springs for couplings, meshes and massless shafts, the exact field matrix of a uniform shaft with "
        "distributed inertia (cos/sin of omega L / c) where the shaft's mass is modelled, so no subdivision is "
        f"needed {cite('pestel')}. Geared branches are referred to one shaft by the square of the speed ratio. The "
        "count of natural frequencies below any trial frequency comes from the Wittrick–Williams algorithm "
        f"{cite('ww')}, so no mode is missed or counted twice; each root is then polished to machine precision.",
        "<b>Mass models used.</b> " + escape("; ".join(mass_txt) if mass_txt else "no shafts") + ".",
    ]
    s = ctx.data.screening
    if s is not None:
        paras.append(
            "<b>Separation.</b> For a natural frequency f_n and an excitation f_e = order × speed of its "
            "source shaft (or a fixed frequency), separation = |f_n - f_e| / f_e, the smallest over the "
            f"operating range; a pair fails below the required {fmt.percent(s.margin)}\u00a0%. The 10\u00a0% "
            f"default is the separation margin of the API machinery standards for torsional analysis "
            f"{cite('api617', 'api684')}. "
            f"Natural frequencies are screened up to the screening limit of {fmt.hz(s.cap_hz)}\u00a0Hz: the "
            "highest excitation frequency reached in the operating range, raised by twice the margin and a "
            "further 25\u00a0%. This limit is a setting of this program, not a requirement of a standard; modes "
            "above it are listed and marked, not screened.")
        if s.tolerances:  # the verdict is judged on the band, not on the nominal frequency
            paras.append(
                "<b>Tolerance bands.</b> With the stiffness and inertia tolerances given, each natural frequency "
                "is a band: from its value with every stiffness at the low end and every inertia at the high end "
                "of its tolerance to its value at the opposite corner, exact because each natural frequency rises with every stiffness and falls "
                "with every inertia (Rayleigh's monotonicity). A pair then fails when its margin with tolerances, "
                "measured from the band's edge nearest the excitation, is below the required "
                f"{fmt.percent(s.margin)}\u00a0%; the nominal margin is printed beside it.")
        if any(l.kind == "line" for l in s.lines):
            paras.append(
                "<b>Electric-drive lines.</b> An inverter-fed motor excites at multiples of its output frequency "
                "f_out = p N / (1 − s) and at interharmonics |m f_supply − n f_out|, lines f = |a + b N| that do not "
                f"pass through the origin {cite('api684')}. They are screened with the same margin; the speeds where "
                "such a line meets a natural frequency are solved in closed form.")
    engines = [e for e in (train.operating.excitations if train.operating else ()) if getattr(e, "engine", None)]
    if engines:
        paras.append(
            "<b>Engine excitation.</b> Per cylinder, the tangential gas torque from the cylinder pressure curve (or the "
            "tangential-pressure harmonics given) times piston area and crank radius through the exact crank–slider "
            "kinematics, and the inertia torque of the reciprocating mass from the same exact motion "
            f"{cite('taylor')}; both as numeric Fourier series over the working cycle (no truncated series in the "
            "crank-to-rod ratio). Each order acts at every crank throw with its firing angle (vector sum "
            f"{cite('nestorides')}).")
    mesh_stiffness = any(isinstance(l, dict) and l.get("mesh_stiffness") for l in ctx.doc.get("links", []) or [])
    if any(l.kind == "gear_mesh" and l.teeth is not None for l in train.links) or mesh_stiffness:
        text = ("<b>Gear meshes.</b> Tooth counts give the speed ratio z_from / z_to, the mesh order on either "
                "shaft and the hunting-tooth frequency (mesh frequency × gcd / (z_from z_to)).")
        if mesh_stiffness:
            text += (" A mesh stiffness from gear data is k = c_gamma × face width × base radius² on the shaft of "
                     f"that base radius {cite('iso6336')}.")
        paras.append(text)
    if ctx.data.response is not None:
        paras.append(
            "<b>Forced response.</b> Steady-state harmonic response of the damped train, solved directly "
            "with the complex dynamic stiffness at every speed and order (no modal truncation); viscous "
            "damping to ground and between discs, hysteretic damping as a complex stiffness k (1 + i eta). "
            "A coupling's relative damping psi and a dynamic magnifier M enter as eta = psi / 2π = 1 / M "
            f"{cite('nestorides', 'din740')}; engine orders with cylinders are summed as vectors over the crank "
            f"throws {cite('nestorides')}. Shaft stress = torque × outer radius / polar moment of area "
            f"{cite('roark')}.")
    acc = study.acceptance
    if acc is not None:
        text = ("<b>Acceptance.</b> The forced response is judged per speed band — continuous running in the "
                "operating range, passing through below it and up to trip — against the limits each gives, with "
                "the mean torque of every load case through every link (power balance, lossless gears); the worst "
                "point of each band is refined between the computed speeds.")
        if any(si.endurance_limit is not None for si in acc.shaft_inputs):
            text += (" Shaft fatigue by the Goodman or Soderberg relation with the Marin factors, first-cycle yield "
                     f"by the Langer line {cite('shigley')}.")
        if any(si.design_factor is not None for si in acc.shaft_inputs):
            text += (" Propulsion shafts against the permissible torsional vibration stresses of the classification "
                     f"societies' unified requirement {cite('iacs_m68')}, and the barred speed ranges that follow.")
        if any(getattr(l, "ratings", None) is not None and l.ratings.coupling is not None for l in train.links):
            text += f" Flexible couplings against their data-sheet ratings {cite('din740')}."
        if acc.hammer_ranges or any(c.criterion == "gear_hammer" for c in acc.checks):
            text += " Gear meshes: the teeth separate where the vibratory torque exceeds the mean torque."
        paras.append(text)
    if study.damped is not None or study.damper is not None:
        text = ("<b>Damped natural frequencies.</b> From the complex eigenvalues of the lumped train in first-order "
                f"(state-space) form {cite('inman')}; loss factors as an equivalent viscous damping at each mode's "
                "frequency.")
        if study.damper is not None:
            text += (" A viscous damper's ring (a coupling of damping alone) is free in the undamped natural "
                     "frequencies; the frequencies with the ring locked to its housing are given beside them.")
        if physics.damper_links_for_suggestion(train):
            text += (" The damper optimum is the classical two-mass result for a tuned or an untuned viscous damper "
                     f"{cite('denhartog')}, a starting point for the damper's selection.")
        paras.append(text)
    tr = study.transients
    if tr is not None and tr.events:
        text = ("<b>Transient events.</b> The whole train referred to one shaft, distributed shafts cut into at least "
                "20 elements per wavelength at the highest frequency resolved, integrated in time by the trapezoidal "
                f"rule (Newmark's average-acceleration method) {cite('newmark')} with 20 steps per period of the "
                "highest resolved frequency; speed-dependent torques (a motor's air-gap torque, load curves) are "
                "solved together with the motion at every step. Loss factors act as viscous damping matched at one "
                "frequency per event. Shaft stress cycles are counted by rainflow "
                f"{cite('astm1049')} and their damage summed by Miner's rule {cite('miner')} on the shaft's S–N "
                "curve")
        text += (f" (the material's library curve after {cite('fkm')} where none is given)." if any(
            l.sn_source and "FKM" in l.sn_source for e in tr.events for l in e.links) else ".")
        if any(isinstance(t, dict) and t.get("short_circuit") for ev in (ctx.doc.get("transients") or [])
               if isinstance(ev, dict) for t in (ev.get("torques") or [])):
            text += (" Terminal short circuits as decaying sinusoids from the machine's subtransient reactance and "
                     f"time constants {cite('concordia')}.")
        paras.append(text)
    design = study.design
    if design is not None:
        text = ("<b>Design options.</b> Sensitivities d ln f / d ln value of every elastic mode from Rayleigh's "
                f"quotient {cite('rayleigh', 'thomson')}, stationary at a mode, so that a small change of one element "
                "moves omega² by the change of its energy with the mode shape held (the same first-order result as "
                f"the eigenvalue derivative {cite('foxkapoor')}): half the strain-energy share for a stiffness, minus "
                "half the kinetic-energy share for an inertia.")
        if design.bands is not None and study.screening is not None:
            text += (" Tolerance bands from the two corner trains: each natural frequency, counted in order, rises "
                     "with every stiffness and falls with every inertia (max–min characterisation of eigenvalues "
                     f"{cite('courant')}), so the corners give the band edges exactly.")
        if design.windows:
            text += (" Windows: the edges of the admissible values of one element, every other value held, found "
                     f"from the Wittrick–Williams count {cite('ww')} to 1e-9 relative.")
        paras.append(text)
    not_modelled = ("<b>Not modelled.</b> Damping does not enter the natural frequencies (undamped eigenvalues). "
                    "Couplings and meshes are linear springs at the stiffness given: the load, temperature and "
                    "frequency dependence of elastomeric couplings, gear backlash and other nonlinearities are not "
                    "represented. ")
    if tr is None or not tr.events:
        not_modelled += ("Transient events (motor start-up, short circuit, run-through of a resonance during "
                         "acceleration) are not analysed: the project names none. ")
    paras.append(not_modelled + "Lateral and axial coupling, foundations and electrical stiffness of motors are "
                                "outside the model.")
    ref_lines = [f"[{k}] {escape(SOURCES[key])}." for k, key in enumerate(refs, start=1)]
    return [CondPageBreak(160),
            Paragraph("Method and assumptions", st["h1"])] + [Paragraph(p, st["body"]) for p in paras] + [
            KeepTogether([Paragraph("Sources", st["h2"]),
                          Paragraph("The editions named are those the method was written against; standards "
                                    "are revised, so confirm the edition and clause that apply to your project "
                                    "and contract.", st["note"])] +
                         [Paragraph(r, st["small"]) for r in ref_lines])]


def appendix_block(ctx: Ctx):
    """Whatever the sections above deferred to the back of the sheet."""
    if not ctx.appendix:
        return []
    return [PageBreak()] + ctx.appendix


#: the sections in print order; a new section goes in here (see the module docstring)
SECTIONS = (title_block, verdict_block, schematic_block, model_block, excitation_block, physics.engine_block,
            physics.gear_block, frequency_block, physics.damped_block, mode_shape_block, campbell_block, coincidence_block,
            design_section.design_block, response_block, acceptance.acceptance_block,
            transients.transient_block, method_block, appendix_block)


def build_story(ctx: Ctx) -> list:
    story = []
    for section in SECTIONS:
        story += section(ctx)
    return story


