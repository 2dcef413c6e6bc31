"""The review sheet's "Design options": what to change when a train fails its screening.

Formats the study's design part (:class:`core.design.DesignResult`) for the meeting:

* a lead in words: for each failing mode (and the closest other one) the element that
  holds most of its strain energy, the share the coupling holds, the disc that carries
  most of its kinetic energy, and what the windows offer as a remedy;
* per failing or closest mode, the elements that move it most, by |d ln f / d ln value|
  (:meth:`core.design.Sensitivities.ranked`), with their value and energy share;
* the tolerance bands of the screened modes with the nominal and the band margin of each
  mode's closest excitation (only when a tolerance is given);
* the window of every coupling and of every element the project names under
  ``design_options``: current value, whether it clears, the admissible ranges and the
  nearest admissible value, and a small chart of the natural frequencies against the
  element's value (log scales) with the forbidden frequency strips and the admissible
  ranges.

Nothing here computes: sensitivities, bands and windows are the study's.  Tables are
:class:`~app.report.tables.LongTable` (plain strings, one style per column) and each one
is bounded (a handful of elements per mode; a long list of failing modes puts the rest of
their tables in the appendix), so a long train costs no more here than a short one.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from reportlab.graphics.shapes import Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.styles import ParagraphStyle
from reportlab.platypus import KeepTogether, Paragraph, Spacer, Table, TableStyle

from core import units as u

from .. import formatting as fmt
from .base import Ctx, heading, num, table
from .campbell import draw_legend, legend_layout, place_labels
from .charts import drawing, fit_text, merged_intervals
from .styles import BOLD, FAIL_INK, FONT, GREY, INK, PALETTE, PASS_INK, escape, styles
from .tables import status_styles, text_width

#: elements listed per mode (largest |d ln f / d ln value| first)
TOP_ELEMENTS = 6
#: failing or closest modes with their own table in the body; the rest go to the appendix
BODY_MODES = 6
#: window charts drawn (elements whose current value does not clear first); the table lists all
MAX_CHARTS = 8
#: a train this long draws fewer window charts: each chart solves every mode below the screening
#: limit at 41 values of the element, which grows with the train (the window table lists them all)
LONG_TRAIN_DISCS = 1000
LONG_TRAIN_CHARTS = 4
#: admissible intervals listed per element in the window table
MAX_INTERVALS = 6
KINDS = {"shaft": "shaft", "coupling": "coupling", "gear_mesh": "gear mesh"}
QUANTITIES = {"stiffness": "stiffness", "inertia": "inertia", "diameter": "outer diameters (bores held)"}

ADMISSIBLE_FILL = colors.Color(0.18, 0.55, 0.34, alpha=0.16)
#: natural frequencies within the margin of an excitation: darker than the Campbell band (thin strips)
FORBIDDEN_FILL = colors.Color(0.45, 0.45, 0.45, alpha=0.30)
ADMISSIBLE_INK = colors.HexColor("#1d6b2f")
CURRENT_INK = INK
LABEL_SIZE = 6.0


# ----------------------------------------------------------------- which modes
def focus_modes(study) -> list[tuple[int, str, object]]:
    """(mode number, role, pair) of the modes the section explains: every mode of a
    failing pair, worst first, then the closest other screened mode (role "closest").
    The pair is the mode's worst :class:`core.screening.Coincidence`."""
    s = study.screening
    if s is None:
        return []
    out, seen = [], set()
    for c in s.failures:
        if c.mode not in seen:
            seen.add(c.mode)
            out.append((c.mode, "fails", c))
    for c in s.all_pairs:  # sorted by governing separation
        if c.mode not in seen:
            out.append((c.mode, "weak" if (not c.passed and c.weak) else "closest", c))
            break
    return out


def _mode_row(modes, number: int) -> int | None:
    hits = np.flatnonzero(np.asarray(modes.number) == number)
    return int(hits[0]) if len(hits) else None


def _pct(fraction: float) -> str:
    return f"{fmt.percent(fraction)}\u00a0%"


# ----------------------------------------------------------------- lead
def control_sentence(ctx: Ctx, number: int, role: str, pair, margin: float) -> str:
    """'Mode 1 (30.03 Hz) fails against Motor, order 2 (1.1 % from its tolerance band, 10.0 % required).
    76.6 % of its strain energy is in the coupling 'Coupling' between ...; its kinetic energy is mostly
    in Motor rotor (80.7 %).' (Paragraph markup): the element that controls the mode, the coupling's
    share where the coupling is not that element, and the disc that carries the mode's motion."""
    train = ctx.train
    m = ctx.study.modes
    i = _mode_row(m, number)
    if i is None:
        return ""
    f = float(m.frequency_hz[i])
    head = f"<b>Mode {number} ({fmt.hz(f)}\u00a0Hz)</b>"
    if pair is not None:
        s = ctx.study.screening
        where = " from its tolerance band" if s.tolerances and pair.separation_band is not None else ""
        line = escape(_clip(pair.line.label, 160))
        how = f"({_pct(pair.governing_separation)}{where}, {_pct(margin)} required)"
        head += {"fails": f" fails against {line} {how}",
                 "weak": f" lies inside the margin of {line} but is weakly excited {how}"}.get(
            role, f" comes closest to an excitation: {line} {how}")
    head += ". "
    parts = []
    if train.links and m.strain_share.size:
        share = np.asarray(m.strain_share[i], float)
        j = int(np.argmax(share))
        top = train.links[j]
        parts.append(f"{_pct(float(share[j]))} of its strain energy is in the {KINDS[top.kind]} "
                     f"'{escape(_clip(top.label, 80))}' between {escape(_clip(ctx.name(top.from_id), 60))} and "
                     f"{escape(_clip(ctx.name(top.to_id), 60))}")
        if top.kind != "coupling":
            coup = [k for k, l in enumerate(train.links) if l.kind == "coupling" and l.stiffness]
            if coup:
                k = max(coup, key=lambda k: share[k])
                parts.append(f"the coupling '{escape(_clip(train.links[k].label, 80))}' holds "
                             f"{_pct(float(share[k]))}")
    kin = np.asarray(m.kinetic_share[i], float)
    d = int(np.argmax(kin))
    disc = escape(_clip(ctx.name(train.discs[d].id), 80))
    parts.append(f"its kinetic energy is mostly in {disc} ({_pct(float(kin[d]))})" if kin[d] >= 0.5 else
                 f"the largest share of its kinetic energy is in {disc} ({_pct(float(kin[d]))})")
    text = "; ".join(parts)
    return head + text[:1].upper() + text[1:] + "."


def remedy_sentence(ctx: Ctx, w) -> str:
    """What the window of one element offers, in words (Paragraph markup)."""
    U = ctx.units
    kind = u.STIFFNESS if w.quantity == "stiffness" else u.INERTIA
    name = escape(_clip(ctx.name(w.element), 80))
    what = f"the {w.quantity} of '{name}'"
    if w.current_clears:
        return f"The current {w.quantity} of '{name}' ({U.text(w.current, kind)}) clears every excitation."
    if w.nearest_admissible is None:
        return (f"No value of {what} alone clears every excitation in the range searched "
                f"({U.text(w.range[0], kind)} to {U.text(w.range[1], kind)}).")
    own = " with its own tolerance" if w.tolerance is not None else ""
    ratio = w.nearest_admissible / w.current if w.current > 0 else math.nan
    change = (f" ({'×' if ratio >= 1 else '÷'}\u00a0{num(ratio if ratio >= 1 else 1.0 / ratio, 3)})"
              if math.isfinite(ratio) else "")
    return (f"Changing {what} alone from {U.text(w.current, kind)} to {U.text(w.nearest_admissible, kind)}"
            f"{change}, the nearest admissible value, clears every excitation{own}.")


def lead(ctx: Ctx, focus, design) -> list:
    st = styles()
    s = ctx.study.screening
    out = []
    if s is None:
        out.append(Paragraph(
            "The project gives no operating data, so no mode can fail or come close to an excitation: what "
            "moves the lowest elastic mode is given below.", st["body"]))
        return out
    if not focus:
        out.append(Paragraph("No elastic mode lies below the screening limit: no mode to move.", st["body"]))
    n_fail = sum(1 for _, r, _ in focus if r == "fails")
    if n_fail:
        intro = "What controls the mode that fails" if n_fail == 1 else f"What controls the {n_fail} modes that fail"
        if len(focus) > n_fail:
            intro += " and the one closest to an excitation"
    else:
        intro = "What controls the mode that comes closest to an excitation"
    if focus:
        out.append(Paragraph(intro + (", and what the windows offer:" if design.windows else ":"), st["body"]))
    for n, role, pair in focus[:BODY_MODES]:
        text = control_sentence(ctx, n, role, pair, s.margin)
        if text:
            out.append(bullet(text))
    if len(focus) > BODY_MODES:
        out.append(Paragraph(f"… and {len(focus) - BODY_MODES} more failing modes (their sensitivity tables are "
                             "in the appendix).", st["body"]))
    for w in design.windows[:MAX_CHARTS]:
        out.append(bullet(remedy_sentence(ctx, w)))
    if len(design.windows) > MAX_CHARTS:
        out.append(Paragraph(f"… and {len(design.windows) - MAX_CHARTS} more elements (see the window table).",
                             st["body"]))
    return out


@lru_cache(maxsize=1)
def _bullet_style() -> ParagraphStyle:
    # the bullet in the embedded font (reportlab's default bullet font is a non-embedded Helvetica)
    return ParagraphStyle("design_bullet", parent=styles()["body"], bulletFontName=FONT, leftIndent=9,
                          bulletIndent=0)


def bullet(text: str) -> Paragraph:
    return Paragraph(text, _bullet_style(), bulletText="•")


def _clip(text, n: int) -> str:
    text = str(text)
    return text if len(text) <= n else text[:n - 1] + "…"


# ----------------------------------------------------------------- sensitivities
def _element_value(ctx: Ctx, quantity: str, eid: str, links, discs) -> tuple[str, str]:
    """(kind, value with unit) of one element's quantity in the sheet's units."""
    U = ctx.units
    if quantity == "inertia":
        return "disc", U.text(discs[eid].inertia, u.INERTIA)
    link = links[eid]
    if quantity == "stiffness":
        return KINDS[link.kind], U.text(link.total_stiffness, u.STIFFNESS)
    ds = [s.outer_diameter for s in link.segments]
    if not ds:
        return KINDS[link.kind], "—"
    lo, hi = min(ds), max(ds)
    if U.value(lo, u.LENGTH) == U.value(hi, u.LENGTH):
        return KINDS[link.kind], U.text(lo, u.LENGTH)
    return KINDS[link.kind], f"{U.value(lo, u.LENGTH)}–{U.value(hi, u.LENGTH)}\u00a0{U.unit(u.LENGTH)}"


def sensitivity_text(x: float) -> str:
    """'+0.383', '-0.085'; a value that would print as 0.000 keeps its size: '-2.1e-05'."""
    if x == 0:
        return "0"
    return f"{x:+.3f}" if abs(x) >= 5e-4 else f"{x:+.1e}"


def sensitivity_rows(ctx: Ctx, sens, number: int, links, discs) -> list[list[str]]:
    rows = []
    try:
        ranked = sens.ranked(number, TOP_ELEMENTS)
    except KeyError:
        return rows
    for quantity, eid, x in ranked:
        kind, value = _element_value(ctx, quantity, eid, links, discs)
        if quantity == "stiffness":
            share = f"{fmt.percent(2.0 * x)} % of strain"
        elif quantity == "inertia":
            share = f"{fmt.percent(-2.0 * x)} % of kinetic"
        else:
            share = "—"
        rows.append([ctx.name(eid), kind, QUANTITIES[quantity], value, sensitivity_text(x), share])
    return rows


def sensitivity_spec(ctx: Ctx, with_mode: bool = False) -> list:
    spec = [("Element", 0.27), ("Kind", 0.09), ("Quantity", 0.17), ("Value", 0.17, "RIGHT"),
            ("d ln f / d ln value", 0.12, "RIGHT"), ("Energy share", 0.18, "RIGHT")]
    if with_mode:
        spec.insert(0, ("Mode", 0.12))
    return ctx.cols(*spec)


def sensitivity_note() -> str:
    return ("d ln f / d ln value: the per cent change of the natural frequency per per cent change of the "
            "element's value, to first order (+0.38: 10\u00a0% more stiffness raises the frequency by about "
            "3.8\u00a0%). For a stiffness it is half the element's share of the mode's strain energy, for an "
            "inertia minus half its share of the kinetic energy; scaling a shaft's outer diameters (bores held) "
            "changes both its stiffness and its own inertia. This follows from Rayleigh's quotient "
            "omega² = strain energy / kinetic energy per omega², which is stationary at a natural mode "
            "(Lord Rayleigh, The Theory of Sound, vol. 1; also W. T. Thomson, Theory of Vibration with "
            "Applications, Rayleigh's method): full references under Method and assumptions.")


def sensitivity_block(ctx: Ctx, focus, design, links, discs) -> list:
    st = styles()
    sens = design.sensitivities
    s = ctx.study.screening
    out = heading("Sensitivities: what moves each mode", 2, room=150)
    if s is None:  # no excitations: the lowest elastic mode
        m = ctx.study.modes
        el = np.flatnonzero(m.elastic)
        focus = [(int(m.number[el[0]]), "lowest", None)] if len(el) else []
    if not focus:
        return []
    for n, role, pair in focus[:BODY_MODES]:
        rows = sensitivity_rows(ctx, sens, n, links, discs)
        if not rows:
            continue
        i = _mode_row(ctx.study.modes, n)
        f = float(ctx.study.modes.frequency_hz[i])
        title = f"<b>Mode {n}, {fmt.hz(f)}\u00a0Hz</b>"
        if pair is not None:
            word = {"fails": "fails", "closest": "closest to an excitation",
                    "weak": "inside the margin, weakly excited"}.get(role, role)
            title += f" — {word}: {escape(_clip(pair.line.label, 140))}, margin {_pct(pair.governing_separation)}"
        elif role == "lowest":
            title += " — the lowest elastic mode"
        out.append(KeepTogether([Paragraph(title, st["small"]), table(sensitivity_spec(ctx), rows),
                                 Spacer(1, 4)]))
    out.append(Paragraph(escape(sensitivity_note()), st["note"]))
    rest = focus[BODY_MODES:]
    if rest:
        rows = []
        for n, role, pair in rest:
            i = _mode_row(ctx.study.modes, n)
            if i is None:
                continue
            label = f"{n} ({fmt.hz(float(ctx.study.modes.frequency_hz[i]))} Hz)"
            for k, r in enumerate(sensitivity_rows(ctx, sens, n, links, discs)):
                rows.append([label if k == 0 else ""] + r)
        letter = "B" if ctx.appendix else "A"
        ctx.appendix += heading(f"Appendix {letter} — sensitivities of the further failing modes") + [
            Paragraph(f"The {len(rest)} failing or closest modes beyond the first {BODY_MODES}, the "
                      f"{TOP_ELEMENTS} elements that move each most ({ctx.units.title} units).", st["note"]),
            table(sensitivity_spec(ctx, with_mode=True), rows),
            Paragraph(escape(sensitivity_note()), st["note"])]
        out.append(Paragraph(f"The other {len(rest)} failing modes: Appendix {letter}.", st["note"]))
    return out


# ----------------------------------------------------------------- tolerance bands
def tolerance_text(train, limit: int = 8) -> str:
    items = [f"{l.label} stiffness −{fmt.percent(t[0])}/+{fmt.percent(t[1])}\u00a0%"
             for l in train.links if (t := l.stiffness_tolerance) is not None]
    items += [f"{d.name or d.id} inertia −{fmt.percent(t[0])}/+{fmt.percent(t[1])}\u00a0%"
              for d in train.discs if (t := d.inertia_tolerance) is not None]
    more = len(items) - limit
    return "; ".join(items[:limit]) + (f"; and {more} more" if more > 0 else "")


def band_block(ctx: Ctx, design) -> list:
    st = styles()
    s = ctx.study.screening
    train = ctx.train
    if s is None:
        return []
    if design.bands is None:
        return [Paragraph("Tolerance bands", st["h2"]),
                Paragraph("No stiffness or inertia tolerance is given: the natural frequencies are screened at "
                          "their nominal values, so there are no tolerance bands.", st["body"])]
    modes = s.modes
    closest = {}
    for c in s.all_pairs:  # sorted by governing separation: the first per mode is its closest
        closest.setdefault(c.mode, c)
    bands = np.asarray(design.bands, float)
    rows, cells = [], {}
    for i in range(len(modes)):
        n = int(modes.number[i])
        c = closest.get(n)
        if c is None or not modes.elastic[i]:
            continue
        status = c.status.upper()
        rows.append([str(n), fmt.hz(float(modes.frequency_hz[i])), fmt.hz(float(bands[i, 0])),
                     fmt.hz(float(bands[i, 1])), c.line.label, fmt.percent(c.separation),
                     fmt.percent(c.separation_band) if c.separation_band is not None else "—", status])
        cells[len(rows) - 1] = status_styles(7, status)
    out = heading("Tolerance bands and band margins", 2)
    out.append(Paragraph("Tolerances given: " + escape(tolerance_text(train)) + ".", st["body"]))
    out.append(table(ctx.cols(("Mode", 0.06, "RIGHT"), ("Nominal Hz", 0.09, "RIGHT"), ("Band low Hz", 0.09, "RIGHT"),
                              ("Band high Hz", 0.09, "RIGHT"), ("Closest excitation", 0.34),
                              ("Nominal margin %", 0.1, "RIGHT"), ("Band margin %", 0.1, "RIGHT"),
                              ("Status", 0.08)), rows, cells))
    out.append(Paragraph(
        "Band edges: the natural frequencies of the two corner trains, every stiffness at the low end of its "
        "tolerance and every inertia at the high end, and the reverse. Each natural frequency, counted in order, "
        "rises with every stiffness and falls with every inertia (Rayleigh's monotonicity; the max–min "
        "characterisation of eigenvalues, Courant–Fischer: references under Method and assumptions), so these "
        "corners are the band's exact edges, with no sampling. Nominal margin: smallest |f_n − f_e| / f_e over "
        "the operating range at the nominal frequency; band margin: the same from the band edge nearest the "
        "excitation (0 where an excitation frequency enters the band). The status follows the band margin, "
        f"{_pct(s.margin)} required.", st["note"]))
    return out


# ----------------------------------------------------------------- windows
def _kind_of(w) -> u.Kind:
    return u.STIFFNESS if w.quantity == "stiffness" else u.INERTIA


def interval_text(ctx: Ctx, a: float, b: float, kind) -> str:
    U = ctx.units
    return f"{U.value(a, kind)} – {U.value(b, kind)}"


def blocking_text(w, max_modes: int = 3) -> str:
    """The pairs that fail at the current value, one line per mode: 'mode 1: Motor, order 2
    and 2 more' ('—' when the current value clears)."""
    by_mode: dict[int, list[str]] = {}
    for b in w.blocked:
        if b.low < w.current < b.high:
            by_mode.setdefault(b.mode, []).append(b.line)
    lines = []
    for mode, labels in list(by_mode.items())[:max_modes]:
        labels = list(dict.fromkeys(labels))
        more = f" and {len(labels) - 1} more" if len(labels) > 1 else ""
        lines.append(f"mode {mode}: {_clip(labels[0], 48)}{more}")
    if len(by_mode) > max_modes:
        lines.append(f"and {len(by_mode) - max_modes} more modes")
    return "\n".join(lines) or "—"


def window_rows(ctx: Ctx, windows, links, discs) -> tuple[list, dict]:
    U = ctx.units
    rows, cells = [], {}
    for k, w in enumerate(windows):
        kind = _kind_of(w)
        unit = U.unit(kind)
        what = (KINDS[links[w.element].kind] if w.quantity == "stiffness" else "disc")
        quantity = w.quantity + (f", own tolerance −{fmt.percent(w.tolerance[0])}/+{fmt.percent(w.tolerance[1])}\u00a0%"
                                 if w.tolerance is not None else "")
        ranges = [interval_text(ctx, a, b, kind) for a, b in w.admissible[:MAX_INTERVALS]]
        if len(w.admissible) > MAX_INTERVALS:
            ranges.append(f"… {len(w.admissible) - MAX_INTERVALS} more")
        block_txt = blocking_text(w)
        nearest = ("—" if w.nearest_admissible is None or w.current_clears
                   else U.value(w.nearest_admissible, kind))
        rows.append([f"{ctx.name(w.element)} ({what})", quantity, unit, U.value(w.current, kind),
                     "yes" if w.current_clears else "no",
                     "\n".join(ranges) if ranges else "none in the range", nearest,
                     block_txt])
        cells[k] = status_styles(4, "PASS" if w.current_clears else "FAIL")
    return rows, cells


def window_block(ctx: Ctx, design, links, discs) -> list:
    st = styles()
    s = ctx.study.screening
    out = heading("Windows: the values of one element that clear every excitation", 2,
                  room=200 if s is not None and design.windows else 60)
    if s is None:
        out.append(Paragraph("The windows need excitations: give the operating data (reference shaft, operating "
                             "speed and excitations) to have every coupling windowed.", st["body"]))
        return out
    windows = list(design.windows)
    if not windows:
        out.append(Paragraph("The train has no coupling with a stiffness and the project names no element under "
                             "\"design_options\": no window was computed. Name a disc or link there to have its "
                             "window on this sheet.", st["body"]))
        return out
    rows, cells = window_rows(ctx, windows, links, discs)
    out.append(table(ctx.cols(("Element", 0.16), ("Quantity", 0.14), ("Unit", 0.08),
                              ("Current value", 0.08, "RIGHT"), ("Clears", 0.065),
                              ("Admissible values", 0.16, "RIGHT", False), ("Nearest admissible", 0.105, "RIGHT"),
                              ("Blocked at the current value by", 0.21, "LEFT", True, 5)), rows, cells))
    default = all(w.current > 0 and math.isclose(w.range[0], w.current / 100.0, rel_tol=1e-9)
                  and math.isclose(w.range[1], w.current * 100.0, rel_tol=1e-9) for w in windows)
    searched = "from 1/100 to 100 × its current value" if default else "over the range its chart shows"
    named = [ctx.name(e) for e in ctx.train.design_options]
    which = "Every coupling is windowed"
    if named:
        which += (", and the elements named under design_options (" + ", ".join(named[:8])
                  + (" …" if len(named) > 8 else "") + ")")
    tol = (", with every tolerance band (the element's own tolerance included) in place"
           if ctx.train.has_tolerances else "")
    out.append(Paragraph(escape(
        f"{which}. A window holds every other value as it is and searches the element's value {searched}: an "
        f"admissible value keeps every elastic mode at least {fmt.percent(s.margin)} % from every excitation "
        f"frequency over the whole operating range{tol}. Weakly excited pairs are not exempt here: the window is "
        "the conservative set. Each forbidden interval of natural frequency, f_e (1 − margin) to f_e (1 + margin), "
        "maps to an interval of the element's value per mode; its edges are found from the count of natural "
        "frequencies below a trial frequency (Wittrick–Williams) to 1e-9 relative, with no frequency sampled. "
        "Nearest admissible: the admissible value nearest the current one by ratio."), st["note"]))
    out += window_charts(ctx, windows)
    return out


def window_charts(ctx: Ctx, windows) -> list:
    st = styles()
    limit = MAX_CHARTS if len(ctx.train.discs) <= LONG_TRAIN_DISCS else LONG_TRAIN_CHARTS
    shown = sorted(windows, key=lambda w: w.current_clears)[:limit]  # stable: study order within each
    shown = [w for w in shown if w.chart is not None]
    if not shown:
        return []
    per_row = 2
    cw = ctx.width / per_row
    cells = [window_drawing(w, ctx.name(w.element), ctx.units, cw - 6, 178) for w in shown]
    tolerances = any(w.chart.band_low_hz is not None for w in shown)
    out = []
    for k in range(0, len(cells), per_row):
        row = cells[k:k + per_row]
        row += [""] * (per_row - len(row))
        t = Table([row], colWidths=[cw] * per_row, hAlign="LEFT")
        t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT), ("VALIGN", (0, 0), (-1, -1), "TOP"),
                               ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                               ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2)]))
        out.append(t)
    if len(cells) == 1:  # the legend beside a single chart
        legend = legend_drawing(cw - 10, tolerances)
        t = Table([[cells[0], legend]], colWidths=[cw, cw], hAlign="LEFT")
        t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT), ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                               ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0)]))
        out = [t]
        legend = Spacer(1, 2)
    else:
        legend = legend_drawing(ctx.width, tolerances)
    note = ("Natural frequencies against the element's value, every other value held, both scales logarithmic. "
            "Frequencies in the grey strips lie within the margin of an excitation somewhere in the operating "
            "range; a value is admissible where no curve (nor its tolerance band) enters a strip.")
    if len(windows) > len(shown):
        note += (f" Charts for {len(shown)} of the {len(windows)} elements windowed (those whose current value "
                 "does not clear first); the table above lists every one.")
    out[-1] = KeepTogether([out[-1], legend, Paragraph(escape(note), st["note"])])
    return out


# ----------------------------------------------------------------- the window chart
def log_ticks(lo: float, hi: float) -> tuple[list[float], list[float]]:
    """(labelled, minor) tick values for a log axis over [lo, hi]: the decades, with
    2 and 5 between them when the axis spans less than three decades."""
    e0, e1 = math.floor(math.log10(lo)), math.ceil(math.log10(hi))
    span = math.log10(hi / lo)
    steps = (1.0,) if span >= 3 else (1.0, 2.0, 5.0)
    major, minor = [], []
    for e in range(e0, e1 + 1):
        for m in range(1, 10):
            v = m * 10.0 ** e
            if not (lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9)):
                continue
            (major if m in steps else minor).append(v)
    return major, minor


def tick_text(v: float) -> str:
    """A tick value: '0.5', '20', '10000', '1e6' (no long strings of zeros)."""
    if v >= 1e5 or v < 1e-3:
        m, e = f"{v:.0e}".split("e")
        return f"{m}e{int(e)}"
    return num(v, 3)


class LogLog:
    """A plot box with log scales on both axes (values in display units and Hz)."""

    def __init__(self, d, x0, y0, w, h, x_range, y_range):
        self.d, self.x0, self.y0, self.w, self.h = d, x0, y0, w, h
        self.lx = (math.log10(x_range[0]), math.log10(x_range[1]))
        self.ly = (math.log10(y_range[0]), math.log10(y_range[1]))
        self.x_range, self.y_range = x_range, y_range

    def sx(self, v):
        return self.x0 + self.w * (math.log10(v) - self.lx[0]) / (self.lx[1] - self.lx[0])

    def sy(self, v):
        return self.y0 + self.h * (math.log10(v) - self.ly[0]) / (self.ly[1] - self.ly[0])

    def sy_clamped(self, v):
        return min(max(self.sy(max(v, 1e-300)), self.y0), self.y0 + self.h)

    def axes(self, x_title: str, y_title: str, size: float = 6.0):
        d = self.d
        grid = colors.HexColor("#dddddd")
        xm, xn = log_ticks(*self.x_range)
        ym, yn = log_ticks(*self.y_range)
        for v in xn:  # minor ticks only: a minor grid would hide the strips
            x = self.sx(v)
            d.add(Line(x, self.y0, x, self.y0 - 1.4, strokeColor=INK, strokeWidth=0.4))
        for v in yn:
            y = self.sy(v)
            d.add(Line(self.x0, y, self.x0 - 1.4, y, strokeColor=INK, strokeWidth=0.4))
        last = -1e9
        for v in xm:
            x = self.sx(v)
            d.add(Line(x, self.y0, x, self.y0 + self.h, strokeColor=grid, strokeWidth=0.35))
            d.add(Line(x, self.y0, x, self.y0 - 2.5, strokeColor=INK, strokeWidth=0.6))
            t = tick_text(v)
            tw = text_width(t, FONT, size)
            if x - tw / 2 > last + 2:  # skip a label that would touch its neighbour
                d.add(String(x, self.y0 - 2.5 - size - 0.5, t, fontName=FONT, fontSize=size, fillColor=INK,
                             textAnchor="middle"))
                last = x + tw / 2
        last = -1e9
        for v in ym:
            y = self.sy(v)
            d.add(Line(self.x0, y, self.x0 + self.w, y, strokeColor=grid, strokeWidth=0.35))
            d.add(Line(self.x0, y, self.x0 - 2.5, y, strokeColor=INK, strokeWidth=0.6))
            if y - size / 2 > last + 1:
                d.add(String(self.x0 - 4, y - size * 0.35, tick_text(v), fontName=FONT, fontSize=size,
                             fillColor=INK, textAnchor="end"))
                last = y + size / 2
        d.add(Rect(self.x0, self.y0, self.w, self.h, strokeColor=INK, strokeWidth=0.6, fillColor=None))
        d.add(String(self.x0 + self.w / 2, self.y0 - 2.5 - 2 * size - 3, x_title, fontName=FONT, fontSize=size,
                     fillColor=INK, textAnchor="middle"))
        g = Group(String(0, 0, y_title, fontName=FONT, fontSize=size, fillColor=INK, textAnchor="middle"))
        widest = max((text_width(tick_text(v), FONT, size) for v in ym), default=10.0)
        g.translate(self.x0 - 6 - widest - 2, self.y0 + self.h / 2)
        g.rotate(90)
        d.add(g)

    def hband(self, lo, hi, fill):
        lo, hi = max(lo, self.y_range[0]), min(hi, self.y_range[1])
        if hi > lo:
            self.d.add(Rect(self.x0, self.sy(lo), self.w, self.sy(hi) - self.sy(lo), fillColor=fill,
                            strokeColor=None, strokeWidth=0))

    def vband(self, lo, hi, fill):
        lo, hi = max(lo, self.x_range[0]), min(hi, self.x_range[1])
        if hi > lo:
            x0, x1 = self.sx(lo), self.sx(hi)
            if x1 - x0 < 1.2:
                x0, x1 = 0.5 * (x0 + x1) - 0.6, 0.5 * (x0 + x1) + 0.6
            self.d.add(Rect(x0, self.y0, x1 - x0, self.h, fillColor=fill, strokeColor=None, strokeWidth=0))

    def vline(self, v, colour, width=1.0, dash=None):
        if self.x_range[0] <= v <= self.x_range[1]:
            x = self.sx(v)
            self.d.add(Line(x, self.y0, x, self.y0 + self.h, strokeColor=colour, strokeWidth=width,
                            strokeDashArray=dash))

    def curve_runs(self, xs, ys) -> list[list[tuple[float, float]]]:
        """Pieces of a curve inside the box, in points: each segment clipped to the box's
        frequency range where it crosses the top or bottom (straight in log-log); NaN and
        non-positive values break the curve."""
        lo, hi = self.ly
        runs, cur = [], []
        prev = None
        for x, y in zip(xs, ys):
            if not (math.isfinite(y) and y > 0 and x > 0):
                runs.append(cur)
                cur, prev = [], None
                continue
            lx, ly = math.log10(x), math.log10(y)
            if prev is not None:
                seg = _clip_segment(prev, (lx, ly), lo, hi)
                if seg is None:
                    runs.append(cur)
                    cur = []
                else:
                    a, b = seg
                    if not cur or cur[-1] != a:
                        runs.append(cur)
                        cur = [a]
                    cur.append(b)
            prev = (lx, ly)
        runs.append(cur)
        sx = self.w / (self.lx[1] - self.lx[0])
        sy = self.h / (self.ly[1] - self.ly[0])
        return [[(self.x0 + sx * (a - self.lx[0]), self.y0 + sy * (b - self.ly[0])) for a, b in run]
                for run in runs if len(run) > 1]


def _clip_segment(p, q, lo: float, hi: float):
    """The part of the segment p-q (x, y) with lo <= y <= hi, as its two end points, or None."""
    (px, py), (qx, qy) = p, q
    if py == qy:
        return (p, q) if lo <= py <= hi else None
    t_a, t_b = (lo - py) / (qy - py), (hi - py) / (qy - py)
    t0, t1 = max(0.0, min(t_a, t_b)), min(1.0, max(t_a, t_b))
    if t0 >= t1:
        return None

    def at(t):
        return p if t == 0.0 else q if t == 1.0 else (px + t * (qx - px), py + t * (qy - py))
    return at(t0), at(t1)


def _nice_floor(v: float) -> float:
    e = math.floor(math.log10(v))
    for m in (5.0, 2.0, 1.0):
        if m * 10 ** e <= v:
            return m * 10 ** e
    return 10 ** e


def _nice_ceil(v: float) -> float:
    e = math.floor(math.log10(v))
    for m in (1.0, 2.0, 5.0, 10.0):
        if m * 10 ** e >= v * (1 - 1e-12):
            return m * 10 ** e
    return 10 ** (e + 1)


def window_drawing(w, name: str, units, width: float, height: float):
    """Natural frequencies of the window's chart against the element's value (log x in the sheet's
    unit, log y in Hz): forbidden strips grey, admissible values green, the current value a solid
    line, the nearest admissible value dashed; mode numbers at the right edge."""
    kind = _kind_of(w)
    f = units.factor(kind)
    ch = w.chart
    values = np.asarray(ch.values, float) * f
    x_range = (float(w.range[0] * f), float(w.range[1] * f))
    freq = np.asarray(ch.frequency_hz, float)
    lows = np.asarray(ch.band_low_hz, float) if ch.band_low_hz is not None else None
    highs = np.asarray(ch.band_high_hz, float) if ch.band_high_hz is not None else None
    y_hi = _nice_ceil(max(ch.cap_hz, 1e-6))
    pos = [x for x in (freq, lows) if x is not None]
    finite = np.concatenate([a[np.isfinite(a) & (a > 0)].ravel() for a in pos]) if pos else np.zeros(0)
    forb = [(lo, hi) for _, lo, hi in w.forbidden_hz]
    cands = [float(finite.min())] if finite.size else []
    cands += [lo for lo, _ in forb if lo > 0]
    y_lo = min(cands) / 1.25 if cands else y_hi / 100.0
    y_lo = _nice_floor(max(y_lo, y_hi * 1e-4))
    if y_lo >= y_hi:
        y_lo = y_hi / 10.0
    d = drawing(width, height)
    left, bottom, top = 38.0, 26.0, 22.0
    right = 16.0 + 4.0 * max((len(str(int(n))) for n in ch.mode), default=1)
    p = LogLog(d, left, bottom, width - left - right, height - bottom - top, x_range, (y_lo, y_hi))
    # areas first, under the grid and curves
    for lo, hi in merged_intervals([(max(lo, y_lo), hi) for lo, hi in forb]):
        p.hband(lo, hi, FORBIDDEN_FILL)
    for a, b in w.admissible:
        p.vband(a * f, b * f, ADMISSIBLE_FILL)
    p.axes(fit_text(f"{w.quantity} of '{name}' ({units.unit(kind)})", p.w, 6.0), "natural frequency (Hz)")
    for a, b in w.admissible:  # a strip along the foot: the admissible values at a glance
        a, b = max(a * f, x_range[0]), min(b * f, x_range[1])
        if b > a:
            x0, x1 = p.sx(a), p.sx(b)
            d.add(Rect(x0, p.y0 + 0.3, max(x1 - x0, 1.2), 3.2, fillColor=ADMISSIBLE_INK, strokeColor=None,
                       strokeWidth=0))
    labels = []
    for c in range(freq.shape[1] if freq.ndim == 2 else 0):
        colour = PALETTE[c % len(PALETTE)]
        if lows is not None and highs is not None:
            _band_polygon(p, values, lows[:, c], highs[:, c], colour)
        runs = p.curve_runs(values, freq[:, c])
        for run in runs:
            d.add(PolyLine([v for xy in run for v in xy], strokeColor=colour, strokeWidth=0.9, strokeLineJoin=1))
        if runs:
            x_end, y_end = runs[-1][-1]
            labels.append(dict(at=y_end, x=x_end, text=str(int(ch.mode[c])), colour=colour))
    p.vline(w.current * f, CURRENT_INK, 1.1)
    if not w.current_clears and w.nearest_admissible is not None:
        p.vline(w.nearest_admissible * f, ADMISSIBLE_INK, 1.0, dash=(3, 1.6))
    _curve_labels(d, p, labels)
    verdict = "current value clears" if w.current_clears else "current value does not clear"
    colour = PASS_INK if w.current_clears else FAIL_INK
    title = fit_text(name, width - left - text_width(" — " + verdict, BOLD, 7) - 2, 7, BOLD)
    d.add(String(2, height - 9, title, fontName=BOLD, fontSize=7, fillColor=INK))
    d.add(String(2 + text_width(title, BOLD, 7), height - 9, " — " + verdict, fontName=BOLD, fontSize=7,
                 fillColor=colour))
    cur = f"current {units.value(w.current, kind)}"
    if not w.current_clears and w.nearest_admissible is not None:
        cur += f", nearest admissible {units.value(w.nearest_admissible, kind)}"
    d.add(String(2, height - 18, fit_text(f"{w.quantity}: {cur} {units.unit(kind)}", width - 4, 6),
                 fontName=FONT, fontSize=6, fillColor=GREY))
    return d


def _band_polygon(p: LogLog, xs, lows, highs, colour):
    """The tolerance band of one curve as a light polygon (clamped to the box)."""
    ok = np.isfinite(lows) & np.isfinite(highs) & (lows > 0) & (highs > 0)
    if ok.sum() < 2:
        return
    x = [p.sx(v) for v in np.asarray(xs)[ok]]
    lo = [p.sy_clamped(v) for v in lows[ok]]
    hi = [p.sy_clamped(v) for v in highs[ok]]
    pts = [v for xy in zip(x, lo) for v in xy] + [v for xy in zip(reversed(x), reversed(hi)) for v in xy]
    fill = colors.Color(colour.red, colour.green, colour.blue, alpha=0.16)
    p.d.add(Polygon(pts, fillColor=fill, strokeColor=None, strokeWidth=0))


def _curve_labels(d, p: LogLog, labels):
    """Mode numbers just right of the box, spread apart, a thin leader to where each curve ends."""
    h = LABEL_SIZE + 1.5

    def merge(a, b):
        return f"{a.get('first', a['text'])}–{b.get('last', b['text'])}"
    for it in place_labels(labels, p.y0 + h / 2, p.y0 + p.h - h / 2, lambda it: h, merge):
        x = p.x0 + p.w + 5
        y = it["pos"]
        for at in it["members"]:
            end_x = next((lab["x"] for lab in labels if lab["at"] == at), p.x0 + p.w)
            if abs(at - y) > 0.5 or end_x < p.x0 + p.w - 0.5:
                d.add(Line(end_x, at, x - 1, y, strokeColor=it["colour"], strokeWidth=0.35))
        d.add(String(x, y - LABEL_SIZE * 0.35, it["text"], fontName=FONT, fontSize=LABEL_SIZE,
                     fillColor=it["colour"]))


def legend_drawing(width: float, tolerances: bool):
    items = [("line", PALETTE[0], None, "natural frequency (nominal), mode number at the right")]
    if tolerances:
        items.append(("fill", colors.Color(PALETTE[0].red, PALETTE[0].green, PALETTE[0].blue, alpha=0.16), None,
                      "its tolerance band (corner trains)"))
    items += [("fill", FORBIDDEN_FILL, None, "within the margin of an excitation frequency (forbidden)"),
              ("fill", ADMISSIBLE_FILL, None, "admissible values (also a green strip along the foot)"),
              ("line", CURRENT_INK, None, "current value"),
              ("line", ADMISSIBLE_INK, (3, 1.6), "nearest admissible value")]
    h, placed = legend_layout(items, width, 6.5)
    d = drawing(width, h + 4)
    draw_legend(d, 0, h + 2, placed, 6.5)
    return d


# ----------------------------------------------------------------- the section
def design_block(ctx: Ctx) -> list:
    """The "Design options" section (``[]`` when the study has no design part)."""
    st = styles()
    study = ctx.study
    design = study.design
    if design is None:
        if study.screening_error is not None:
            return [Paragraph("Design options", st["h1"]),
                    Paragraph("Not computed: the screening could not be completed (see the verdict).", st["body"])]
        return []
    train = ctx.train
    links = {l.id: l for l in train.links}
    discs = {d.id: d for d in train.discs}
    focus = focus_modes(study)
    out = heading("Design options", 1, room=220)
    out += lead(ctx, focus, design)
    out += sensitivity_block(ctx, focus, design, links, discs)
    out += band_block(ctx, design)
    out += window_block(ctx, design, links, discs)
    return out
