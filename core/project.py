"""Project files: JSON text with units in, an SI :class:`~core.model.Train` out.

The document (a plain dict, exactly as read) is what the program edits and
saves, so every value keeps the unit the user typed and unknown keys survive a
save.  :func:`build_train` validates the document and makes the SI model.
"""
from __future__ import annotations

import gc
import json
import math
import os
import shutil
import stat
import tempfile
from contextlib import contextmanager
from pathlib import Path

from . import units as u
from .errors import ModelError
from .electric import parse_electric_drive, parse_lines
from .engine import parse_engine
from .gears import gear_mesh_fields
from .materials import LIBRARY, Material
from .ratings import attach_ratings
from .model import (LINK_KINDS, MASS_MODELS, Disc, Excitation, Link, Operating,
                    Order, Segment, Train, check_topology, plain_disc, plain_link)

FORMAT = "twistwise-project"
VERSION = 1


class ProjectFileError(ModelError):
    """The file itself cannot be read as a project."""


# ---------------------------------------------------------------- file level
MAX_SPEED_FACTOR = 1e6  # any shaft's speed against the first disc's, over all stages
MAX_FILE_BYTES = 256 * 1024 * 1024  # far above any real train (a 100 000-disc chain is ~15 MB)
MAX_NESTING = 32  # a project nests a few levels deep; hostile files nest thousands


def _nesting_depth(obj) -> int:
    """Deepest nesting of lists and objects (``obj`` itself at depth 1), without recursion:
    one level at a time, so a long train's discs and links cost one type test per value."""
    depth, level = 0, [obj] if isinstance(obj, (dict, list)) else []
    while level:
        depth += 1
        if depth > MAX_NESTING:
            return depth
        inner = []
        add = inner.append
        for o in level:
            for v in (o.values() if isinstance(o, dict) else o):
                if isinstance(v, (dict, list)):
                    add(v)
        level = inner
    return depth


class ProjectDocument(dict):
    """The document dict as read from a file, remembering the file's folder (``base_dir``),
    against which relative paths inside it (an engine's pressure-curve CSV) are read.
    It is a plain dict to everything else; ``copy.deepcopy`` keeps the folder."""

    base_dir: str | None = None


def parse_document(text: str) -> dict:
    if len(text) > MAX_FILE_BYTES:
        raise ProjectFileError(f"the file is larger than {MAX_FILE_BYTES // 2 ** 20} MB; not a project",
                               "file")
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise ProjectFileError(f"not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})",
                               "file") from None
    except RecursionError:
        raise ProjectFileError(f"lists or objects nested more than {MAX_NESTING} deep; not a project",
                               "file") from None
    except ValueError:  # an integer of thousands of digits
        raise ProjectFileError("holds a number with thousands of digits; not a project", "file") from None
    if not isinstance(doc, dict):
        raise ProjectFileError("a project file must hold one JSON object", "file")
    if _nesting_depth(doc) > MAX_NESTING:
        raise ProjectFileError(f"lists or objects nested more than {MAX_NESTING} deep; not a project",
                               "file")
    fmt = doc.get("format", FORMAT)
    if fmt != FORMAT:
        raise ProjectFileError(f"not a Twistwise project (format is {fmt!r})", "file", "format")
    version = doc.get("version", VERSION)
    if not isinstance(version, int) or isinstance(version, bool):
        raise ProjectFileError(f"version must be a whole number, got {version!r}", "file", "version")
    if version > VERSION:
        raise ProjectFileError(f"file format version {version} is newer than this program "
                               f"reads (up to {VERSION}); update Twistwise", "file", "version")
    return doc


def load_document(path: str | os.PathLike) -> dict:
    path = Path(path)
    try:
        if path.stat().st_size > MAX_FILE_BYTES:
            raise ProjectFileError(f"the file is larger than {MAX_FILE_BYTES // 2 ** 20} MB; not a project",
                                   "file")
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ProjectFileError("file not found", "file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ProjectFileError(f"cannot read the file ({exc})", "file") from None
    doc = ProjectDocument(parse_document(text))
    doc.base_dir = str(path.resolve().parent)
    return doc


def dump_document(doc: dict) -> str:
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


#: numbered backups kept beside a saved file: NAME.json.bak1 (the version just replaced) ... bak3
BACKUPS = 3


def backup_paths(path: str | os.PathLike) -> list[Path]:
    """``NAME.json.bak1`` (newest) ... ``NAME.json.bak3`` (oldest) beside ``path``."""
    path = Path(path)
    return [path.with_name(f"{path.name}.bak{i}") for i in range(1, BACKUPS + 1)]


def _new_file_mode() -> int:
    """The mode an ordinary new file gets: 0666 less the process umask."""
    mask = os.umask(0o022)  # os.umask only reads by setting; put the old value straight back
    os.umask(mask)
    return 0o666 & ~mask


def save_document(path: str | os.PathLike, doc: dict, backup: bool = True) -> None:
    """Write ``doc`` to ``path`` atomically and keep the versions it replaces.

    * atomic: the text goes to a temporary file in the same folder, is flushed to
      disk, then renamed over ``path`` (a reader sees the old file or the new one,
      never a part);
    * backups (``backup=True``): the file being replaced becomes ``NAME.json.bak1``,
      the former ``bak1`` becomes ``bak2`` and ``bak2`` becomes ``bak3``; the former
      ``bak3`` is dropped.  ``path`` itself exists at every moment (``bak1`` is a
      copy of it).  A ``NAME.json.bak`` left by earlier versions is not touched;
    * permissions: a replaced file's permission bits carry over to the new one; a
      new file gets the ordinary default (0666 less the umask), not the 0600 of a
      temporary file.
    """
    path = Path(path)
    text = dump_document(doc)
    folder = path.parent if str(path.parent) else Path(".")
    try:
        mode = stat.S_IMODE(os.stat(path).st_mode)
        existed = True
    except FileNotFoundError:
        mode, existed = _new_file_mode(), False
    fd, tmp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        if backup and existed:
            _rotate_backups(path)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    _sync_folder(folder)


def _rotate_backups(path: Path) -> None:
    """bak2 -> bak3, bak1 -> bak2, the current file -> bak1 (the current file stays in place)."""
    baks = backup_paths(path)
    for older, newer in zip(reversed(baks), reversed(baks[:-1])):
        if newer.exists():
            os.replace(newer, older)
    # a copy, not a second name: a program that rewrites NAME.json in place must not
    # change the backup too
    part = baks[0].with_name(baks[0].name + ".tmp")
    shutil.copy2(path, part)
    os.replace(part, baks[0])


def _sync_folder(folder: Path) -> None:
    """Flush the folder entry (the rename) to disk where the system allows it."""
    if not hasattr(os, "O_DIRECTORY"):
        return
    try:
        fd = os.open(folder, os.O_RDONLY | os.O_DIRECTORY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def load_train(path: str | os.PathLike) -> Train:
    return build_train(load_document(path), base_dir=Path(path).parent)


# ---------------------------------------------------------------- model level
def _opt(obj: dict, key: str, kind, where: str):
    value = obj.get(key)
    return None if value is None else u.parse(value, kind, where, key)


def _positive(value: float, where: str, key: str, allow_zero: bool = False, unit: str = "") -> float:
    if value < 0 or (value == 0 and not allow_zero):
        got = f"{value:g} {unit}".strip()
        raise ModelError(f"must be {'zero or ' if allow_zero else ''}greater than zero, got {got}",
                         where, key)
    return value


def _material(spec, where: str) -> Material:
    if isinstance(spec, str):
        if spec not in LIBRARY:
            raise ModelError(f"unknown material '{spec}' (library: {', '.join(LIBRARY)})",
                             where, "material")
        return LIBRARY[spec]
    if isinstance(spec, dict):
        G = _positive(u.parse(spec.get("shear_modulus"), u.MODULUS, where, "material.shear_modulus"),
                      where, "material.shear_modulus", unit="Pa")
        rho = _positive(u.parse(spec.get("density"), u.DENSITY, where, "material.density"),
                        where, "material.density", unit="kg/m^3")
        return Material(str(spec.get("name", "custom")), G, rho, "given in the project")
    raise ModelError("give a library name or {\"shear_modulus\": ..., \"density\": ...}",
                     where, "material")


def _fraction(value, where: str, key: str) -> float:
    """A fraction given as a bare number (0.2) or as percent text ("20 %", "+25 %", "-10 %")."""
    try:
        return u.parse_fraction(value, where, key)
    except ModelError as exc:
        raise ModelError(f"{exc.message}; give a percentage such as '20 %' or a fraction such as 0.2",
                         where, key) from None


def _tolerance(obj: dict, key: str, where: str) -> tuple[float, float] | None:
    """``"20 %"`` / ``0.2`` (symmetric) or ``["-10 %", "+25 %"]`` (minus first) as (minus, plus)
    fractions, both >= 0 and the minus side below 100 %; None when the key is absent."""
    raw = obj.get(key)
    if raw is None:
        return None
    if isinstance(raw, list):
        if len(raw) != 2:
            raise ModelError(f"give one value ('20 %') or a pair ['-10 %', '+25 %'], got a list of "
                             f"{len(raw)}", where, key)
        minus, plus = _fraction(raw[0], where, key), _fraction(raw[1], where, key)
        if minus > 0:
            raise ModelError(f"the first value of the pair is the minus side (such as '-10 %'), got "
                             f"{raw[0]!r}", where, key)
        if plus < 0:
            raise ModelError(f"the second value of the pair is the plus side (such as '+25 %'), got "
                             f"{raw[1]!r}", where, key)
        minus = -minus
    else:
        minus = plus = _fraction(raw, where, key)
        if minus < 0:
            raise ModelError(f"a symmetric tolerance must not be negative, got {raw!r}", where, key)
    if minus >= 1.0:
        raise ModelError(f"the minus side must be below 100 %, got {minus * 100:g} %", where, key)
    return (minus, plus)


def _element_id(obj, index: int, what: str) -> tuple[str, str]:
    """The id of the index-th disc or link, and how messages name it."""
    if not isinstance(obj, dict):
        raise ModelError(f"each {what} must be a JSON object", f"{what} #{index + 1}")
    eid = obj.get("id")
    if not isinstance(eid, str) or not eid.strip():
        raise ModelError("missing or empty id", f"{what} #{index + 1}", "id")
    return eid, f"{what} '{eid}'"


def _disc(obj, index: int) -> Disc:
    did, where = _element_id(obj, index, "disc")
    if "inertia" not in obj:
        raise ModelError("missing inertia", where, "inertia")
    J = u.parse(obj["inertia"], u.INERTIA, where, "inertia")
    if J < 0:
        raise ModelError(f"inertia must not be negative, got {J:g} kg*m^2", where, "inertia")
    c = _opt(obj, "damping", u.DAMPING, where) or 0.0
    _positive(c, where, "damping", allow_zero=True)
    return Disc(did, str(obj.get("name", did)), J, c, _tolerance(obj, "inertia_tolerance", where))


_LOSS_KEYS = ("loss_factor", "relative_damping", "dynamic_magnifier")


def _loss_factor(obj, where: str) -> float:
    if obj.get("loss_factor") is None and obj.get("relative_damping") is None \
            and obj.get("dynamic_magnifier") is None:
        return 0.0  # the common case, without a list per link
    keys = [k for k in _LOSS_KEYS if obj.get(k) is not None]
    if len(keys) > 1:
        raise ModelError("give only one of loss_factor, relative_damping, dynamic_magnifier", where, keys[1])
    if not keys:
        return 0.0
    key = keys[0]
    value = u.parse_number(obj[key], where, key)
    if key == "loss_factor":
        return _positive(value, where, key, allow_zero=True)
    if key == "relative_damping":  # psi = 2 pi eta (coupling catalogues)
        return _positive(value, where, key, allow_zero=True) / (2 * math.pi)
    return 1.0 / _positive(value, where, key)  # dynamic magnifier M = 1 / eta


def _link(obj, index: int) -> Link:
    lid, where = _element_id(obj, index, "link")
    kind = obj.get("kind")
    if kind not in LINK_KINDS:
        raise ModelError(f"kind must be one of {', '.join(LINK_KINDS)}, got {kind!r}", where, "kind")
    ends = []
    for key in ("from", "to"):
        v = obj.get(key)
        if not isinstance(v, str) or not v:
            raise ModelError("missing disc id", where, key)
        ends.append(v)
    k = _opt(obj, "stiffness", u.STIFFNESS, where)
    if k is not None:  # zero: a coupling of damping alone (a viscous damper's ring)
        _positive(k, where, "stiffness", unit="N*m/rad", allow_zero=kind == "coupling")
    segments: tuple[Segment, ...] = ()
    material = None
    mass = obj.get("mass")
    ratio = 1.0
    teeth = None
    if kind == "shaft":
        raw = obj.get("segments")
        if raw is not None:
            if k is not None:
                raise ModelError("give either a stiffness or segments, not both", where, "segments")
            if not isinstance(raw, list) or not raw:
                raise ModelError("segments must be a non-empty list", where, "segments")
            segs = []
            for i, s in enumerate(raw):
                sw = f"{where} segment {i + 1}"
                if not isinstance(s, dict):
                    raise ModelError("each segment must be a JSON object", sw)
                L = _positive(u.parse(s.get("length"), u.LENGTH, sw, "length"), sw, "length", unit="m")
                D = _positive(u.parse(s.get("outer_diameter"), u.LENGTH, sw, "outer_diameter"), sw,
                              "outer_diameter", unit="m")
                d = _opt(s, "inner_diameter", u.LENGTH, sw) or 0.0
                _positive(d, sw, "inner_diameter", allow_zero=True, unit="m")
                if d >= D:
                    raise ModelError(f"bore {d * 1e3:g} mm must be smaller than the outer diameter "
                                     f"{D * 1e3:g} mm", sw, "inner_diameter")
                segs.append(Segment(L, D, d))
            segments = tuple(segs)
            if "material" not in obj:
                raise ModelError("a shaft given by segments needs a material", where, "material")
            material = _material(obj["material"], where)
        elif k is None:
            raise ModelError("a shaft needs a stiffness or segments", where, "stiffness")
        if mass is None:
            mass = "none"
        if mass not in MASS_MODELS:
            raise ModelError(f"mass must be one of {', '.join(MASS_MODELS)}, got {mass!r}", where, "mass")
        if mass != "none" and not segments:
            raise ModelError(f"mass '{mass}' needs the shaft's geometry (segments and material)",
                             where, "mass")
    else:
        if mass not in (None, "none"):
            raise ModelError("only shafts carry a mass model", where, "mass")
        mass = "none"
        if kind == "coupling" and k is None:
            if obj.get("damping") is None:
                raise ModelError("a coupling needs a stiffness (or, for a viscous damper's ring, "
                                 "a damping alone)", where, "stiffness")
            k = 0.0
        if kind == "gear_mesh":
            ratio, teeth, k = gear_mesh_fields(obj, where, k)
    c = _opt(obj, "damping", u.DAMPING, where) or 0.0
    _positive(c, where, "damping", allow_zero=True)
    eta = _loss_factor(obj, where)
    if k == 0.0:  # a damper's ring: damping only
        if c <= 0:
            raise ModelError("a coupling without stiffness needs a damping above zero", where, "damping")
        if eta:
            raise ModelError("a loss factor needs a stiffness; a damper's ring takes a viscous damping",
                             where, next(f for f in _LOSS_KEYS if obj.get(f) is not None))
    scf = u.parse_number(obj["stress_concentration"], where, "stress_concentration") \
        if "stress_concentration" in obj else 1.0
    if scf < 1.0:
        raise ModelError(f"a stress concentration factor is at least 1, got {scf:g}", where,
                         "stress_concentration")
    pt = _opt(obj, "permissible_torque", u.TORQUE, where)
    if pt is not None:
        _positive(pt, where, "permissible_torque")
    ps = _opt(obj, "permissible_stress", u.STRESS, where)
    if ps is not None:
        _positive(ps, where, "permissible_stress")
    tol = _tolerance(obj, "stiffness_tolerance", where)
    if tol is not None and kind == "gear_mesh" and k is None:
        raise ModelError("a rigid gear mesh has no stiffness to vary; give it a stiffness or drop "
                         "the tolerance", where, "stiffness_tolerance")
    name = obj.get("name")
    return Link(lid, kind, ends[0], ends[1], k, segments, material, mass, ratio, c,
                eta, scf, pt, ps, str(name) if name else "", teeth=teeth, stiffness_tolerance=tol)


# Reading a long train: the plain elements (only the keys below, values in their common
# forms) are built in one loop with a handful of dict lookups each; every other element,
# and every element the quick reading does not accept, is read by _disc / _link, which
# also give every refusal its message.  The quick reading accepts only what the full one
# would build identically (tests/test_project_fast.py compares the two).
_PLAIN_DISC_KEYS = frozenset({"id", "name", "inertia", "damping"})
_PLAIN_LINK_KEYS = frozenset({"id", "name", "kind", "from", "to", "stiffness", "damping"})


def _read_discs(raw_discs: list) -> tuple[Disc, ...]:
    """The discs, in file order."""
    inertia, damping = u.quick_reader(u.INERTIA), u.quick_reader(u.DAMPING)
    plain_keys, make = _PLAIN_DISC_KEYS, plain_disc
    discs = []
    append = discs.append
    for i, obj in enumerate(raw_discs):
        if type(obj) is dict and plain_keys.issuperset(obj):
            did = obj.get("id")
            J = inertia(obj.get("inertia"))
            c = obj.get("damping")
            c = 0.0 if c is None else damping(c) or -1.0  # zero, or not read quickly: in full
            if type(did) is str and did.strip() and J is not None and J >= 0.0 and c >= 0.0:
                name = obj.get("name", did)
                append(make(did, name if type(name) is str else str(name), J, c))
                continue
        append(_disc(obj, i))
    return tuple(discs)


def _read_links(raw_links: list) -> tuple[tuple[Link, ...], list[int]]:
    """The links, and the indices of those read in full (only they may carry ratings)."""
    stiffness, damping = u.quick_reader(u.STIFFNESS), u.quick_reader(u.DAMPING)
    plain_keys, make = _PLAIN_LINK_KEYS, plain_link
    links, full = [], []
    append = links.append
    for i, obj in enumerate(raw_links):
        if type(obj) is dict and plain_keys.issuperset(obj):
            lid, kind, a, b = obj.get("id"), obj.get("kind"), obj.get("from"), obj.get("to")
            k = stiffness(obj.get("stiffness"))
            c = obj.get("damping")
            c = 0.0 if c is None else damping(c) or -1.0  # zero, or not read quickly: in full
            # (a kind compared, not looked up: a list there is refused in full, not hashed)
            if type(lid) is str and lid.strip() and (kind == "shaft" or kind == "coupling") \
                    and type(a) is str and a \
                    and type(b) is str and b and k is not None and k > 0.0 and c >= 0.0:
                name = obj.get("name")
                append(make(lid, kind, a, b, k, c, str(name) if name else ""))
                continue
        append(_link(obj, i))
        full.append(i)
    return tuple(links), full


def _order(obj, where: str, index: int) -> Order:
    ow = f"{where} order {index + 1}"
    if isinstance(obj, dict):
        n = u.parse_number(obj.get("order"), ow, "order")
        amp = _opt(obj, "amplitude", u.TORQUE, ow)
        phase = u.parse_number(obj.get("phase_deg", 0.0), ow, "phase_deg")
        scaling = obj.get("scaling", "constant")
        if scaling not in ("constant", "speed_squared"):
            raise ModelError(f"scaling must be 'constant' or 'speed_squared', got {scaling!r}", ow,
                             "scaling")
        at_speed = _opt(obj, "at_speed", u.SPEED, ow)
        if scaling == "speed_squared":
            if at_speed is None or at_speed <= 0:
                raise ModelError("speed_squared scaling needs a positive at_speed", ow, "at_speed")
        if amp is not None and amp < 0:
            raise ModelError("amplitude must not be negative", ow, "amplitude")
    else:
        n = u.parse_number(obj, ow, "order")
        amp, phase, scaling, at_speed = None, 0.0, "constant", None
    if n <= 0:
        raise ModelError(f"an order must be greater than zero, got {n:g}", ow, "order")
    return Order(n, amp, phase, scaling, at_speed)


def _cylinders(raw, where: str, disc_ids) -> tuple[tuple[str, float], ...]:
    """Optional ``"cylinders": [{"at": "crank_1", "firing_deg": 0}, ...]`` of an engine
    excitation (forced response): one entry per throw, firing angle in degrees of
    crank rotation after the first cylinder."""
    if raw is None:
        return ()
    if not isinstance(raw, list) or not raw:
        raise ModelError("cylinders must be a non-empty list of {\"at\": disc, \"firing_deg\": angle}",
                         where, "cylinders")
    out = []
    for i, c in enumerate(raw):
        cw = f"{where} cylinder {i + 1}"
        if not isinstance(c, dict):
            raise ModelError("each cylinder must be a JSON object with 'at' and 'firing_deg'", cw)
        at = c.get("at")
        if at not in disc_ids:
            raise ModelError(f"unknown disc '{at}'", cw, "at")
        out.append((at, u.parse_number(c.get("firing_deg", 0.0), cw, "firing_deg")))
    return tuple(out)


def _operating(doc: dict, disc_ids, base_dir=None) -> Operating | None:
    """The operating data; ``disc_ids`` answers ``in`` for every disc id (a set or a dict's keys)."""
    if "operating_speed" not in doc and "excitations" not in doc and "reference" not in doc:
        return None
    where = "operating data"
    ref = doc.get("reference")
    if not isinstance(ref, str) or ref not in disc_ids:
        raise ModelError(f"reference must name a disc of the train, got {ref!r}", where, "reference")
    sp = doc.get("operating_speed")
    if not isinstance(sp, dict):
        raise ModelError("give {\"min\": ..., \"max\": ...}", where, "operating_speed")
    nmin = u.parse(sp.get("min"), u.SPEED, where, "operating_speed.min")
    nmax = u.parse(sp.get("max", sp.get("min")), u.SPEED, where, "operating_speed.max")
    if nmin < 0 or nmax < 0:
        raise ModelError("speeds must not be negative", where, "operating_speed")
    if nmax <= 0:
        raise ModelError("the maximum speed must be greater than zero", where, "operating_speed.max")
    if nmin > nmax:
        raise ModelError("min is greater than max", where, "operating_speed.min")
    trip = _opt(sp, "trip", u.SPEED, where)
    if trip is not None and trip < nmax:
        raise ModelError("the trip speed must not be below the maximum operating speed", where,
                         "operating_speed.trip")
    margin_pct = u.parse_percent(doc.get("margin_percent", 10), where, "margin_percent")
    if not 0 <= margin_pct <= 50:
        raise ModelError(f"must be between 0 and 50 %, got {margin_pct:g}", where, "margin_percent")
    exc_list = doc.get("excitations", [])
    if not isinstance(exc_list, list):
        raise ModelError("must be a list", where, "excitations")
    excitations = []
    for i, e in enumerate(exc_list):
        if not isinstance(e, dict):
            raise ModelError("each excitation must be a JSON object", f"excitation #{i + 1}")
        name = str(e.get("name") or f"Excitation {i + 1}")
        ew = f"excitation '{name}'"
        if e.get("frequency") is not None:
            if e.get("orders"):
                raise ModelError("a fixed-frequency source has no orders", ew, "frequency")
            f = u.parse(e["frequency"], u.FREQUENCY, ew, "frequency")
            if f <= 0:
                raise ModelError("frequency must be greater than zero", ew, "frequency")
            amp = _opt(e, "amplitude", u.TORQUE, ew)
            if amp is not None and amp < 0:
                raise ModelError("amplitude must not be negative", ew, "amplitude")
            # 'at' and the older 'applied_at' name one idea: the disc the torque acts on
            at, applied_at = e.get("at"), e.get("applied_at")
            if at is not None and applied_at is not None and at != applied_at:
                raise ModelError(f"'at' ({at!r}) and 'applied_at' ({applied_at!r}) name different discs; "
                                 "give one ('at')", ew, "applied_at")
            key = "at" if at is not None else "applied_at"
            applied_at = at if at is not None else applied_at
            if applied_at is not None and applied_at not in disc_ids:
                raise ModelError(f"unknown disc '{applied_at}'", ew, key)
            excitations.append(Excitation(name, None, (), f, amp,
                                          u.parse_number(e.get("phase_deg", 0.0), ew, "phase_deg"),
                                          applied_at))
            continue
        if e.get("engine") is not None:
            excitations.append(_engine_excitation(e, name, ew, disc_ids, base_dir))
            continue
        if e.get("lines") is not None or e.get("electric_drive") is not None:
            excitations.append(_line_excitation(e, name, ew, disc_ids))
            continue
        cylinders = _cylinders(e.get("cylinders"), ew, disc_ids)
        at = e.get("at")
        if at is None and cylinders:
            at = cylinders[0][0]
        if at not in disc_ids:
            raise ModelError(f"unknown disc '{at}'", ew, "at")
        orders = e.get("orders")
        if not isinstance(orders, list) or not orders:
            raise ModelError("give a non-empty list of orders (or a fixed frequency)", ew, "orders")
        excitations.append(Excitation(name, at, tuple(_order(o, ew, j) for j, o in enumerate(orders)),
                                      cylinders=cylinders))
    weak = None
    if doc.get("weak_excitation_below") is not None:
        weak = _fraction(doc["weak_excitation_below"], where, "weak_excitation_below")
        if not 0.0 <= weak <= 1.0:
            raise ModelError(f"a participation threshold lies between 0 and 100 %, got {weak * 100:g} %",
                             where, "weak_excitation_below")
    return Operating(ref, nmin, nmax, margin_pct / 100.0, tuple(excitations), trip,
                     str(sp.get("name", "Operating range")), weak)


def _engine_excitation(e: dict, name: str, ew: str, disc_ids, base_dir) -> Excitation:
    """An excitation entry with ``"engine": {...}`` (core.engine): its orders up to the cap."""
    for key in ("orders", "cylinders", "at"):
        if e.get(key) is not None:
            raise ModelError(f"an engine excitation takes its {key} from the engine data", ew, key)
    spec = parse_engine(e["engine"], name, ew, disc_ids, base_dir)
    return Excitation(name, spec.cylinders[0].disc, tuple(Order(n) for n in spec.orders), engine=spec)


def _line_excitation(e: dict, name: str, ew: str, disc_ids) -> Excitation:
    """An excitation entry with ``"lines"`` and/or ``"electric_drive"`` (core.electric)."""
    at = e.get("at")
    if at not in disc_ids:
        raise ModelError(f"unknown disc '{at}' (the shaft whose speed N the lines follow)", ew, "at")
    lines = ()
    if e.get("electric_drive") is not None:
        lines += parse_electric_drive(e["electric_drive"], ew)
    if e.get("lines") is not None:
        lines += parse_lines(e["lines"], ew)
    orders = e.get("orders")
    parsed = tuple(_order(o, ew, j) for j, o in enumerate(orders)) if isinstance(orders, list) else ()
    if orders is not None and not isinstance(orders, list):
        raise ModelError("orders must be a list", ew, "orders")
    return Excitation(name, at, parsed, lines=lines)


@contextmanager
def _collector_paused():
    """Python's cyclic garbage collector paused while a train's elements are built.

    Hundreds of thousands of new discs and links (no reference cycles among them) set off
    collector passes that cost about a quarter of reading a long train; reference counting
    still frees everything at once.  A collector paused by someone else stays paused."""
    if not gc.isenabled():
        yield
        return
    gc.disable()
    try:
        yield
    finally:
        gc.enable()


def build_train(doc: dict, base_dir=None) -> Train:
    """Validate a project document and return the SI model (raises ModelError).

    ``base_dir``: the project file's folder, against which relative file paths in
    the document (an engine's pressure-curve CSV) are read; by default the folder a
    :class:`ProjectDocument` was loaded from."""
    if base_dir is None:
        base_dir = getattr(doc, "base_dir", None)
    if not isinstance(doc, dict):
        raise ProjectFileError("a project must be a JSON object", "file")
    raw_discs = doc.get("discs")
    if not isinstance(raw_discs, list) or not raw_discs:
        raise ModelError("the train is empty: add at least one disc", "train", "discs")
    raw_links = doc.get("links", [])
    if not isinstance(raw_links, list):
        raise ModelError("links must be a list", "train", "links")
    with _collector_paused():
        discs = _read_discs(raw_discs)
        links, full = _read_links(raw_links)
        speed = check_topology(discs, links)
    factors = speed.values()
    if not 1.0 / MAX_SPEED_FACTOR <= min(factors) <= max(factors) <= MAX_SPEED_FACTOR:
        extreme = [d for d, f in speed.items() if not 1.0 / MAX_SPEED_FACTOR <= f <= MAX_SPEED_FACTOR]
        raise ModelError(f"turns {speed[extreme[0]]:.3g} times as fast as '{discs[0].id}' through the gear "
                         f"stages; more than {MAX_SPEED_FACTOR:g}:1 across a train leaves the model "
                         "numerically meaningless", f"disc '{extreme[0]}'", "links")
    # A disc without inertia is only allowed where something gives its node mass.
    massless = [d for d in discs if d.inertia == 0]
    if massless:
        ids = {d.id for d in massless}
        touching = {}  # massless disc id -> links at it (one pass over the links)
        for l in links:
            if l.from_id in ids:
                touching.setdefault(l.from_id, []).append(l)
            if l.to_id in ids and l.to_id != l.from_id:
                touching.setdefault(l.to_id, []).append(l)
    for d in massless:
        if not any(l.mass != "none" or l.is_rigid for l in touching.get(d.id, ())):
            raise ModelError("zero inertia makes the model singular; give the disc an inertia "
                             "(or model an adjoining shaft's mass)", f"disc '{d.id}'", "inertia")
    # every inertia is >= 0, so the total is above zero as soon as one is
    if not any(d.inertia > 0 for d in discs) \
            and not any(l.own_inertia > 0 for l in links if l.mass != "none"):
        raise ModelError("the train has no inertia", "train", "discs")
    operating = _operating(doc, speed.keys(), base_dir)
    for e in operating.excitations if operating else ():
        for i, (cid, _) in enumerate(e.cylinders):
            if not math.isclose(speed[cid], speed[e.at], rel_tol=1e-9):
                raise ModelError(f"disc '{cid}' turns at a different speed from '{e.at}'; all cylinders "
                                 "of one excitation must be on the same shaft",
                                 f"excitation '{e.name}' cylinder {i + 1}", "at")
        for i, c in enumerate(e.engine.cylinders if e.engine is not None else ()):
            if not math.isclose(speed[c.disc], speed[e.at], rel_tol=1e-9):
                raise ModelError(f"disc '{c.disc}' turns at a different speed from '{e.at}'; all cylinders "
                                 "of one engine must be on the same shaft",
                                 f"excitation '{e.name}' engine cylinder {i + 1}", "at")
    title = doc.get("title")
    transients, sn_curves = _transients(doc, speed, links, base_dir)
    train = Train(str(title) if title else "Untitled train", discs, links, operating, speed,
                  transients=transients, sn_curves=sn_curves,
                  design_options=_design_options(doc, discs, links))
    # acceptance data and load cases (core.ratings); a plain link carries none
    return attach_ratings(doc, train, links_to_read=full)


def _transients(doc: dict, disc_ids, links, base_dir):
    """The ``"transients"`` events and ``"sn_curves"`` (see :mod:`core.events`)."""
    if doc.get("transients") is None and doc.get("sn_curves") is None:
        return (), ()
    from .events import parse_sn_curves, parse_transients
    link_ids = {l.id for l in links}
    return (parse_transients(doc, set(disc_ids), link_ids, base_dir),
            parse_sn_curves(doc, link_ids))


def _design_options(doc: dict, discs, links) -> tuple[str, ...]:
    """Optional top-level ``"design_options": [ID, ...]``: discs or links (not rigid meshes)
    whose window the design options show besides every coupling's."""
    raw = doc.get("design_options")
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise ModelError("design_options must be a list of disc or link ids", "train", "design_options")
    disc_ids = {d.id for d in discs}
    rigid = {l.id for l in links if l.is_rigid}
    link_ids = {l.id for l in links}
    out = []
    for i, eid in enumerate(raw):
        if not isinstance(eid, str) or not (eid in disc_ids or eid in link_ids):
            raise ModelError(f"entry {i + 1} ({eid!r}) is not a disc or link id", "train", "design_options")
        if eid in rigid and eid not in disc_ids:
            raise ModelError(f"'{eid}' is a rigid gear mesh: it has no stiffness to choose", "train",
                             "design_options")
        if eid not in out:
            out.append(eid)
    return tuple(out)
