"""``twistwise response FILE [--speeds MIN:MAX:COUNT] [--json]``: damped forced response.

Speeds are rpm of the reference shaft.  Exit codes: 0 no permissible value is
exceeded, 1 at least one is, 2 bad input (raised as ModelError, turned into one
line on stderr by :mod:`app.cli`).
"""
from __future__ import annotations

import math

from core.about import CAUTION
from core.errors import ModelError

from .. import formatting as fmt
from .. import wording
from .common import EXIT_FAIL, EXIT_OK, finite, load_train, print_json

RPM = 2.0 * math.pi / 60.0  # rad/s per rpm


def parse_speeds(text: str):
    """'MIN:MAX:COUNT' in rpm -> reference speeds in rad/s (raises ModelError)."""
    where, fld = "option", "--speeds"
    parts = str(text).split(":")
    if len(parts) != 3:
        raise ModelError(f"give MIN:MAX:COUNT in rpm, e.g. 300:1800:400; got '{text}'", where, fld)
    try:
        lo, hi = float(parts[0]), float(parts[1])
    except ValueError:
        raise ModelError(f"MIN and MAX must be numbers in rpm, got '{text}'", where, fld) from None
    try:
        count = int(parts[2])
    except ValueError:
        raise ModelError(f"COUNT must be a whole number, got '{parts[2]}'", where, fld) from None
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise ModelError(f"MIN and MAX must be finite, got '{text}'", where, fld)
    if lo < 0 or hi < 0:
        raise ModelError(f"speeds must not be negative, got '{text}'", where, fld)
    if lo > hi:
        raise ModelError(f"MIN {lo:g} rpm is greater than MAX {hi:g} rpm", where, fld)
    if count < 2:
        raise ModelError(f"COUNT must be at least 2, got {count}", where, fld)
    if count > 200_000:
        raise ModelError(f"COUNT {count} is more than 200000 speeds", where, fld)
    import numpy as np
    return np.linspace(lo, hi, count) * RPM


_num = finite


def _list(a):
    return [finite(v) for v in a]


def _rpm(w: float) -> float:
    """rad/s to rpm, rounded to 10 significant digits so 1500 rpm prints as 1500.0."""
    return float(f"{fmt.rad_s_to_rpm(w):.10g}")


def add_parser(sub):
    r = sub.add_parser("response", help="damped forced response across the speed range")
    r.add_argument("file")
    r.add_argument("--speeds", metavar="MIN:MAX:COUNT", help="reference speeds in rpm")
    r.add_argument("--json", action="store_true", help="one JSON object on stdout")
    return r


def response_to_json(study) -> dict:
    resp, peaks, over = study.response, list(study.response_peaks), list(study.exceedances)
    acc = None
    if study.acceptance is not None:
        from core.acceptance import acceptance_json
        acc = acceptance_json(study.acceptance)
    op = resp.train.operating
    links = {}
    for i, lid in enumerate(resp.link_ids):
        has_stress = any(math.isfinite(v) for v in resp.link_stress[i])
        pk = peaks[i]
        links[lid] = {
            "kind": resp.link_kinds[i],
            "torque_amplitude_nm": _list(resp.link_torque[i]),
            "torque_amplitude_phased_nm": _list(resp.link_torque_phased[i]),
            "stress_amplitude_pa": _list(resp.link_stress[i]) if has_stress else None,
            "stress_amplitude_phased_pa": _list(resp.link_stress_phased[i]) if has_stress else None,
            "dissipated_power_w": _list(resp.link_power[i]),
            "permissible_torque_nm": _num(resp.permissible_torque[i]),
            "permissible_stress_pa": _num(resp.permissible_stress[i]),
            "orders": {label: {"torque_amplitude_nm": _list(resp.order_link_torque[g, i])}
                       for g, label in enumerate(resp.orders)},
            "peak": _peak_json(pk),
        }
        if acc is not None:
            links[lid]["mean_torque_nm"] = acc["mean_torque_nm"].get(lid, {})
    discs = {d: {"angle_amplitude_rad": _list(resp.disc_angle[j]),
                 "dissipated_power_w": _list(resp.disc_power[j])}
             for j, d in enumerate(resp.disc_ids)}
    out = {
        "title": resp.train.title,
        "reference": op.reference,
        "operating_speed_rpm": {"min": fmt.rad_s_to_rpm(op.speed_min), "max": fmt.rad_s_to_rpm(op.speed_max)},
        "combination": "torque_amplitude_nm and stress_amplitude_pa are the sum of the order "
                       "amplitudes (conservative); *_phased_* are the peaks of the summed time signal",
        "speed_rpm": [_rpm(v) for v in resp.speed],
        "orders": [{"label": g.label, "sources": list(g.sources), "order": g.order,
                    "frequency_hz": _list(resp.order_frequency_hz[k]) if g.fixed_omega is None
                    else _num(g.fixed_omega / (2 * math.pi))}
                   for k, g in enumerate(resp.order_groups)],
        "links": links,
        "discs": discs,
        "peaks": [dict(link=p.link_id, **_peak_json(p)) for p in peaks],
        "band_peaks": [{"link": b.link_id, "speed_band": b.band, "quantity": b.quantity,
                        "combination": b.combination, "peak": _num(b.peak), "speed_rpm": _rpm(b.speed)}
                       for b in study.band_peaks],
        "exceedances": [{"link": e.link_id, "quantity": e.quantity,
                         "peak": e.peak, "permissible": e.permissible,
                         "unit": "N*m" if e.quantity == "torque" else "Pa",
                         "ratio": e.ratio, "speed_rpm": _rpm(e.speed),
                         "exceeded_from_rpm": _rpm(e.speed_band[0]),
                         "exceeded_to_rpm": _rpm(e.speed_band[1]), "speed_band": e.band,
                         "limit_basis": e.limit_basis} for e in over],
        "verdict": _verdict(study),
        "notes": list(resp.notes) + ([] if acc is None else acc["notes"]),
        "caution": CAUTION,
    }
    if acc is not None:
        out.update({k: acc[k] for k in ("checks", "barred_speed_ranges", "gear_hammer_ranges", "speed_bands")})
        out["acceptance_passed"] = acc["passed"]
        out["load_cases"] = [lc.name for lc in study.acceptance.load_cases]
    return out


def _verdict(study) -> str:
    peaks = study.response_peaks
    if study.exceedances or study.acceptance_failed:
        return "fail"
    if any(p.passed is not None for p in peaks) or (study.acceptance is not None
                                                     and study.acceptance.checks):
        return "pass"
    return "no permissible values given"


def _peak_json(p) -> dict:
    rpm = _rpm
    return {
        "kind": p.kind,
        "peak_torque_nm": _num(p.peak_torque),
        "peak_torque_phased_nm": _num(p.peak_torque_phased),
        "speed_at_peak_torque_rpm": rpm(p.speed_at_peak_torque),
        "permissible_torque_nm": p.permissible_torque,
        "peak_stress_pa": None if p.peak_stress is None else _num(p.peak_stress),
        "peak_stress_phased_pa": None if p.peak_stress_phased is None else _num(p.peak_stress_phased),
        "speed_at_peak_stress_rpm": None if p.speed_at_peak_stress is None else rpm(p.speed_at_peak_stress),
        "permissible_stress_pa": p.permissible_stress,
        "peak_power_w": _num(p.peak_power),
        "passed": p.passed,
        "speed_band": p.band or None,
    }


def _status(p) -> str:
    return "—" if p.passed is None else ("PASS" if p.passed else "FAIL")


def print_table(study, path: str) -> None:
    resp, peaks, over = study.response, list(study.response_peaks), list(study.exceedances)
    train = resp.train
    op = train.operating
    rpm = resp.speed_rpm
    print(f"{train.title} — {path}")
    print(f"Damped forced response, {len(rpm)} speeds {rpm[0]:.0f}–{rpm[-1]:.0f} rpm of "
          f"'{train.name_of(op.reference)}' (operating range {fmt.rpm(op.speed_min)}–{fmt.rpm(op.speed_max)} "
          f"rpm), {len(resp.orders)} excitation orders with amplitudes")
    print("Vibratory amplitudes are the sum over orders (conservative); 'phased' is the peak of the "
          "summed time signal.  Peaks below are those of the operating range.")
    head = (f"{'link':<20} {'kind':<9} {'torque kN*m':>11} {'phased':>8} {'at rpm':>7} {'perm.':>8}  "
            f"{'stress MPa':>10} {'phased':>7} {'at rpm':>7} {'perm.':>7}  {'power kW':>8}  status")
    print(head)
    lossy = {l.id: bool(l.damping or l.loss_factor) for l in train.links}
    for p in peaks:
        stress = p.peak_stress is not None
        power = fmt.power_kw(p.peak_power) if lossy[p.link_id] else "—"
        print(f"{train.name_of(p.link_id)[:20]:<20} {p.kind:<9} {fmt.torque_knm(p.peak_torque):>11} "
              f"{fmt.torque_knm(p.peak_torque_phased):>8} {fmt.rpm(p.speed_at_peak_torque):>7} "
              f"{fmt.torque_knm(p.permissible_torque):>8}  "
              f"{fmt.stress_mpa(p.peak_stress) if stress else '—':>10} "
              f"{fmt.stress_mpa(p.peak_stress_phased) if stress else '—':>7} "
              f"{fmt.rpm(p.speed_at_peak_stress) if stress else '—':>7} "
              f"{fmt.stress_mpa(p.permissible_stress):>7}  {power:>8}  {_status(p)}")
    for n in resp.notes:
        print(f"Note: {n}")
    acc = study.acceptance
    if acc is not None and acc.checks:
        print()
        cases = ", ".join(lc.name for lc in acc.load_cases) or "no load case (vibratory limits only)"
        print(f"Acceptance checks ({cases}), worst first:")
        w = max(9, min(28, max(len(c.load_case or "—") for c in acc.checks)))
        print(f"{'link':<20} {'criterion':<42} {'load case':<{w}} {'speed band':<19} {'use %':>6} "
              f"{'at rpm':>7}  status")
        for c in acc.worst_first():
            print(f"{train.name_of(c.link)[:20]:<20} {wording.criterion(c.criterion)[:42]:<42} "
                  f"{(c.load_case or '—')[:w]:<{w}} {wording.speed_band(c.speed_band):<19} "
                  f"{fmt.percent(c.utilisation):>6} {fmt.rpm(c.at):>7}  {'PASS' if c.passed else 'FAIL'}")
        for r in acc.barred_ranges:
            print(f"Barred speed range ({train.name_of(r.link)}): {r.low_rpm:.0f}–{r.high_rpm:.0f} rpm")
        for r in acc.hammer_ranges:
            print(f"Gear hammer ({train.name_of(r.link)}, {r.load_case}): vibratory above mean torque "
                  f"{r.low_rpm:.0f}–{r.high_rpm:.0f} rpm")
        for n in acc.notes:
            print(f"Note: {n}")
    failed = [c for c in acc.checks if not c.passed] if acc is not None else []
    if over or failed:
        n = len(over) + len(failed)
        print(f"Verdict: FAIL — {n} limit{'s' if n > 1 else ''} exceeded:")
        for e in over:
            if e.quantity == "torque":
                val, lim, unit = fmt.torque_knm(e.peak), fmt.torque_knm(e.permissible), "kN*m"
            else:
                val, lim, unit = fmt.stress_mpa(e.peak), fmt.stress_mpa(e.permissible), "MPa"
            band = wording.speed_band(e.band) if e.band else "computed speeds"
            print(f"  {train.name_of(e.link_id)}: vibratory {e.quantity} {val} {unit} > permissible {lim} {unit} "
                  f"at {fmt.rpm(e.speed)} rpm ({band}; exceeded {fmt.rpm(e.speed_band[0])}–"
                  f"{fmt.rpm(e.speed_band[1])} rpm)")
        for c in failed:
            print(f"  {train.name_of(c.link)}: {wording.criterion(c.criterion)} at {fmt.percent(c.utilisation)} % of its limit, "
                  f"{fmt.rpm(c.at)} rpm ({wording.speed_band(c.speed_band)})")
    elif any(p.passed is not None for p in peaks) or (acc is not None and acc.checks):
        print("Verdict: PASS — no permissible value is exceeded at the speeds computed.")
    else:
        print("Verdict: none — no link has a permissible vibratory torque or stress.")
    print(CAUTION)


def run(args) -> int:
    from core.study import StudyOptions, run_study
    train = load_train(args.file)
    if train.operating is None:
        raise ModelError("the project has no operating data: give reference, operating_speed and "
                         "excitations", "operating data", "operating_speed")
    speeds = parse_speeds(args.speeds) if getattr(args, "speeds", None) else None
    study = run_study(train, StudyOptions(speeds=None if speeds is None else tuple(speeds),
                                          parts=frozenset({"response", "acceptance"})))
    if study.response_error is not None:
        raise study.response_error
    if study.response is None:
        raise ModelError("no excitation carries an amplitude; give orders as {\"order\": 3, "
                         "\"amplitude\": \"1.2 kN*m\"} for a forced response", "operating data",
                         "excitations")
    if args.json:
        print_json(response_to_json(study))
    else:
        print_table(study, args.file)
    return EXIT_FAIL if (study.exceedances or study.acceptance_failed) else EXIT_OK
