"""``twistwise solve FILE [--max-frequency Q | --modes N] [--json]``: natural
frequencies, mode shapes, modal torques and energy shares."""
from __future__ import annotations

import io
import json
import sys

from core.about import CAUTION

from .. import formatting as fmt
from .common import EXIT_OK, load_train, parse_frequency_option


def add_parser(sub):
    s = sub.add_parser("solve", help="natural frequencies and mode shapes")
    s.add_argument("file")
    g = s.add_mutually_exclusive_group()
    g.add_argument("--max-frequency", metavar="QUANTITY", help="every mode up to this frequency, e.g. '300 Hz'")
    g.add_argument("--modes", type=int, metavar="N", help="the N lowest elastic modes")
    s.add_argument("--json", action="store_true", help="one JSON object on stdout")
    return s


def _mode_chunks(study):
    """Each mode as JSON, in pieces to be written one after the other: text, and the
    bytes of each per-element object (a view that the next object of the same id list
    overwrites, so each piece is written before the next is made; the whole output never
    sits in memory)."""
    from .jsonarrays import KeyedFloats  # numpy: not needed for --help
    modes = study.modes
    above = study.above_screening_limit
    discs, links = KeyedFloats(modes.disc_ids), KeyedFloats(modes.link_ids)
    design = study.design
    sens = design.sensitivities if design is not None else None
    if sens is not None:
        s_links = links if tuple(sens.link_ids) == tuple(modes.link_ids) else KeyedFloats(sens.link_ids)
        s_discs = discs if tuple(sens.disc_ids) == tuple(modes.disc_ids) else KeyedFloats(sens.disc_ids)
        s_shafts = KeyedFloats(sens.shaft_ids) if sens.shaft_ids else None
    bands = design.bands if design is not None else None
    for i in range(len(modes)):
        number = int(modes.number[i])
        head = {
            "number": number,
            "frequency_hz": float(modes.frequency_hz[i]),
            "frequency_cpm": float(modes.frequency_hz[i] * 60.0),
            "rigid_body": bool(modes.rigid_body[i]),
            "above_screening_limit": bool(above[i]),
            "dominant_link": modes.dominant_link(i),
        }
        if bands is not None:
            head["frequency_band_hz"] = [float(bands[i, 0]), float(bands[i, 1])]
        yield (",\n" if i else "\n") + json.dumps(head)[:-1] + ', "shape": '
        yield discs.encode(modes.shape[i])
        yield ', "link_torque_nm": '
        yield links.encode(modes.link_torque[i])
        yield ', "kinetic_energy_share": '
        yield discs.encode(modes.kinetic_share[i])
        yield ', "strain_energy_share": '
        yield links.encode(modes.strain_share[i])
        if sens is not None and not modes.rigid_body[i]:
            r = sens.row(number)
            yield ', "sensitivity": {"stiffness": '
            yield s_links.encode(sens.stiffness[r])
            yield ', "inertia": '
            yield s_discs.encode(sens.inertia[r])
            if s_shafts:
                yield ', "diameter": '
                yield s_shafts.encode(sens.diameter[r])
            yield "}"
        yield "}"


_ASCII = "".join(map(chr, range(32, 127))) + "\n"


def _writer(stream):
    """A function writing text or ASCII bytes to stream: straight to its binary buffer
    where it has one with an ASCII-compatible encoding (stdout; no decoding of hundreds
    of megabytes), else as text (io.StringIO)."""
    binary = getattr(stream, "buffer", None)
    try:
        compatible = _ASCII.encode(stream.encoding) == _ASCII.encode("ascii")
    except (AttributeError, TypeError, LookupError):
        compatible = False
    if binary is None or not compatible:
        return lambda chunk: stream.write(chunk if isinstance(chunk, str) else str(chunk, "ascii"))
    stream.flush()  # what was written as text goes first

    def write(chunk):
        binary.write(chunk.encode("ascii") if isinstance(chunk, str) else chunk)
    return write


def write_modes_json(study, stream=None) -> None:
    """``solve --json``: one JSON object, written mode by mode (keys as documented in
    the README; per-element values with 12 significant digits in fixed-width fields,
    values that are not finite as null)."""
    stream = stream or sys.stdout
    modes = study.modes
    head = {"title": modes.train.title, "requested": modes.requested,
            "screening_limit_hz": study.screening_limit_hz,
            "solve_time_s": modes.solve_time_s, "notes": list(study.notes), "caution": CAUTION}
    if study.damped is not None:  # the train has damping: damped frequencies and ratios (issue 13)
        head["damped"] = study.damped.to_json()
        head["notes"] += [n for n in study.damped.notes if n not in head["notes"]]
    if study.damper is not None:
        head["damper"] = {"free_hz": [float(f) for f in study.damper.free_hz],
                          "locked_hz": [float(f) for f in study.damper.locked_hz],
                          "statement": study.damper.statement}
    text = json.dumps(head, allow_nan=False)
    write = _writer(stream)
    write(text[:-1] + ', "modes": [')
    for chunk in _mode_chunks(study):
        write(chunk)
    write("\n]}\n")


def modes_to_json(study) -> dict:
    """The same object as a dict (tests, small trains)."""
    buf = io.StringIO()
    write_modes_json(study, buf)
    return json.loads(buf.getvalue())


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
    if study.damped is not None and study.damped.modes:
        print("Damped natural frequencies (complex eigenvalues with the train's damping):")
        print(f"{'':>4}  {'Hz':>10}  {'damping ratio':>13}")
        for m in study.damped.modes:
            print(f"{'':>4}  {fmt.hz(m.frequency_hz):>10}  {m.damping_ratio:>13.4f}")
    if study.damper is not None:
        print(study.damper.statement)
        print("  ring free:   " + ", ".join(fmt.hz(f) for f in study.damper.free_hz) + " Hz")
        print("  ring locked: " + ", ".join(fmt.hz(f) for f in study.damper.locked_hz) + " Hz")
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
                           n_modes=args.modes, parts=frozenset({"screening", "sensitivities", "damped"}))
    study = run_study(train, options)
    if args.json:
        write_modes_json(study)
    else:
        print_table(study, args.file)
    return EXIT_OK
