"""``twistwise solve FILE [--max-frequency Q | --modes N] [--json]``: natural
frequencies, mode shapes, modal torques and energy shares."""
from __future__ import annotations

from core.about import CAUTION

from .. import formatting as fmt
from .common import EXIT_OK, finite, load_train, parse_frequency_option, print_json


def add_parser(sub):
    s = sub.add_parser("solve", help="natural frequencies and mode shapes")
    s.add_argument("file")
    g = s.add_mutually_exclusive_group()
    g.add_argument("--max-frequency", metavar="QUANTITY", help="every mode up to this frequency, e.g. '300 Hz'")
    g.add_argument("--modes", type=int, metavar="N", help="the N lowest elastic modes")
    s.add_argument("--json", action="store_true", help="one JSON object on stdout")
    return s


def modes_to_json(study) -> dict:
    modes = study.modes
    above = study.above_screening_limit
    out = []
    for i in range(len(modes)):
        out.append({
            "number": int(modes.number[i]),
            "frequency_hz": float(modes.frequency_hz[i]),
            "frequency_cpm": float(modes.frequency_hz[i] * 60.0),
            "rigid_body": bool(modes.rigid_body[i]),
            "above_screening_limit": bool(above[i]),
            "shape": modes.shape_dict(i),
            "link_torque_nm": {l: finite(v) for l, v in zip(modes.link_ids, modes.link_torque[i])},
            "kinetic_energy_share": {d: float(v) for d, v in zip(modes.disc_ids, modes.kinetic_share[i])},
            "strain_energy_share": {l: float(v) for l, v in zip(modes.link_ids, modes.strain_share[i])},
            "dominant_link": modes.dominant_link(i),
        })
    return {"title": modes.train.title, "requested": modes.requested,
            "screening_limit_hz": study.screening_limit_hz,
            "solve_time_s": modes.solve_time_s, "notes": list(study.notes), "modes": out,
            "caution": CAUTION}


def print_table(study, path: str) -> None:
    modes = study.modes
    train = study.train
    above = study.above_screening_limit
    print(f"{train.title} — {path}")
    print(f"Natural frequencies ({modes.requested}; solved in {modes.solve_time_s * 1e3:.1f} ms)")
    print(f"{'mode':>4}  {'Hz':>10}  {'cpm':>9}  {'largest strain energy':<28} {'largest kinetic energy':<24}")
    for i in range(len(modes)):
        if modes.rigid_body[i]:
            dom = "rigid-body mode"
        else:
            li = modes.dominant_link(i)
            dom = fmt.share(train.name_of(li), modes.strain_share[i].max()) if li else "—"
        di = modes.dominant_disc(i)
        mark = "  (above the screening limit)" if above[i] else ""
        print(f"{int(modes.number[i]):>4}  {fmt.hz(modes.frequency_hz[i]):>10}  "
              f"{fmt.cpm(modes.frequency_hz[i]):>9}  {dom:<28} "
              f"{fmt.share(train.name_of(di), modes.kinetic_share[i].max())}{mark}")
    if above.any():
        print(f"Modes above the screening limit ({fmt.hz(study.screening_limit_hz)} Hz) are shown "
              "but not screened: no excitation in the operating range comes near them.")
    for n in study.notes:
        print(f"Note: {n}")
    print(CAUTION)


def run(args) -> int:
    from core.study import StudyOptions, run_study
    train = load_train(args.file)
    options = StudyOptions(max_frequency_hz=parse_frequency_option(args.max_frequency),
                           n_modes=args.modes, parts=frozenset({"screening", "design", "damped"}))
    study = run_study(train, options)
    if args.json:
        print_json(modes_to_json(study))
    else:
        print_table(study, args.file)
    return EXIT_OK
