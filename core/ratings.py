"""Acceptance data of links and the project's load cases, read from the project file.

Keys (all optional, added to the existing link objects; nothing renamed):

Any link
    ``permissible_torque_transient``, ``permissible_stress_transient``: vibratory
    amplitudes permissible while passing through (start-up, run-down, overspeed).
    Without them those bands are judged against ``permissible_torque`` /
    ``permissible_stress`` (conservative).

Couplings (the data sheet's ratings)
    ``nominal_torque`` (T_KN), ``maximum_torque`` (T_Kmax), ``permissible_torque``
    (existing key: the permissible vibratory torque T_KW), ``permissible_power``
    (P_KV, the permissible dissipated power at the coupling's temperature),
    ``permissible_torque_frequency`` (the frequency T_KW holds at, default "10 Hz";
    ``false`` for a flat value), ``temperature_factor`` (S_t >= 1, divides the torque
    ratings; default 1).

Shafts given by segments
    ``fatigue``: {"criterion": "goodman" | "soderberg", "surface": "ground" | "machined"
    | "cold_drawn" | "hot_rolled" | "forged", "reliability_percent": 50 | 90 | 95 | 99
    | ..., "temperature_factor": k_d, "required_safety_factor": 1.5}; every key has
    that default, and a shaft whose material has strengths is checked even without it.
    ``propulsion_shaft``: {"position": "intermediate" | "thrust" | "propeller",
    "design_feature": one of core.shafting.DESIGN_FACTORS or "shaft_design_factor":
    C_K, "tensile_strength": the specified minimum (default the material's)}; a
    segment may carry its own "design_feature" / "shaft_design_factor".
    A custom material may give ``tensile_strength``, ``yield_strength``,
    ``torsional_endurance_limit`` and ``steel`` ("carbon" | "alloy" | "stainless").

:func:`attach_ratings` is called by :func:`core.project.build_train`.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

from . import units as u
from .errors import ModelError
from .loads import parse_load_cases
from .model import Train
from .shafting import CRITERIA, DEFAULT_REQUIRED_SAFETY, DESIGN_FACTORS, POSITIONS, RELIABILITY, \
    SURFACE_FINISH

DEFAULT_COUPLING_REFERENCE_HZ = 10.0  # data sheets give T_KW at 10 Hz (common practice, no source)


@dataclass(frozen=True)
class CouplingRating:
    nominal_torque: float | None = None  # T_KN, N*m
    maximum_torque: float | None = None  # T_Kmax, N*m
    vibratory_torque: float | None = None  # T_KW at reference_hz, N*m (the link's permissible_torque)
    reference_hz: float | None = DEFAULT_COUPLING_REFERENCE_HZ  # None: no frequency correction
    permissible_power: float | None = None  # P_KV, W
    temperature_factor: float = 1.0  # S_t

    @property
    def given(self) -> bool:
        return any(v is not None for v in (self.nominal_torque, self.maximum_torque,
                                           self.vibratory_torque, self.permissible_power))


@dataclass(frozen=True)
class FatigueSpec:
    criterion: str = "goodman"
    surface: str = "machined"
    reliability_percent: float = 50.0
    temperature_factor: float = 1.0  # k_d
    required_safety_factor: float = DEFAULT_REQUIRED_SAFETY


@dataclass(frozen=True)
class PropulsionShaftSpec:
    position: str  # "intermediate" | "thrust" | "propeller"
    design_factors: tuple[float, ...]  # C_K per segment
    features: tuple[str, ...]  # design feature per segment ("" where C_K was given as a number)
    tensile_strength: float | None = None  # specified minimum sigma_B, Pa; None: the material's


@dataclass(frozen=True)
class LinkRatings:
    coupling: CouplingRating | None = None
    fatigue: FatigueSpec | None = None  # given explicitly; defaults apply otherwise
    propulsion: PropulsionShaftSpec | None = None
    permissible_torque_transient: float | None = None
    permissible_stress_transient: float | None = None


def _opt_positive(obj, key, kind, where):
    if obj.get(key) is None:
        return None
    v = u.parse(obj[key], kind, where, key)
    if v <= 0:
        raise ModelError("must be greater than zero", where, key)
    return v


def _coupling(obj, link, where) -> CouplingRating | None:
    keys = ("nominal_torque", "maximum_torque", "permissible_power", "permissible_torque_frequency",
            "temperature_factor")
    if link.kind != "coupling":
        for k in keys:
            if obj.get(k) is not None:
                raise ModelError("only couplings carry coupling ratings", where, k)
        return None
    tkn = _opt_positive(obj, "nominal_torque", u.TORQUE, where)
    tmax = _opt_positive(obj, "maximum_torque", u.TORQUE, where)
    pkv = _opt_positive(obj, "permissible_power", u.POWER, where)
    ref = obj.get("permissible_torque_frequency", DEFAULT_COUPLING_REFERENCE_HZ)
    if ref is False or ref in ("none", "off"):
        ref = None
    elif ref is not None:
        ref = u.parse(ref, u.FREQUENCY, where, "permissible_torque_frequency")
        if ref <= 0:
            raise ModelError("must be greater than zero", where, "permissible_torque_frequency")
    st = u.parse_number(obj.get("temperature_factor", 1.0), where, "temperature_factor")
    if st < 1.0:
        raise ModelError(f"a temperature factor is at least 1, got {st:g}", where, "temperature_factor")
    if tkn is not None and tmax is not None and tmax < tkn:
        raise ModelError("the maximum torque must not be below the nominal torque", where, "maximum_torque")
    rating = CouplingRating(tkn, tmax, link.permissible_torque, ref, pkv, st)
    return rating if rating.given else None


def _fatigue(obj, link, where) -> FatigueSpec | None:
    raw = obj.get("fatigue")
    if raw is None:
        return None
    fw = "fatigue"
    if link.kind != "shaft" or not link.segments:
        raise ModelError("a fatigue check needs a shaft given by segments and a material", where, fw)
    if not isinstance(raw, dict):
        raise ModelError("give {\"criterion\": \"goodman\", \"surface\": \"machined\", ...}", where, fw)
    crit = raw.get("criterion", "goodman")
    if crit not in CRITERIA:
        raise ModelError(f"criterion must be one of {', '.join(CRITERIA)}, got {crit!r}", where,
                         "fatigue.criterion")
    surf = raw.get("surface", "machined")
    if surf not in SURFACE_FINISH:
        raise ModelError(f"surface must be one of {', '.join(SURFACE_FINISH)}, got {surf!r}", where,
                         "fatigue.surface")
    rel = u.parse_percent(raw.get("reliability_percent", 50), where, "fatigue.reliability_percent")
    if float(rel) not in RELIABILITY:
        raise ModelError(f"reliability_percent must be one of {', '.join(f'{k:g}' for k in RELIABILITY)}",
                         where, "fatigue.reliability_percent")
    kd = u.parse_number(raw.get("temperature_factor", 1.0), where, "fatigue.temperature_factor")
    if not 0 < kd <= 1.2:
        raise ModelError(f"must be between 0 and 1.2, got {kd:g}", where, "fatigue.temperature_factor")
    need = u.parse_number(raw.get("required_safety_factor", DEFAULT_REQUIRED_SAFETY), where,
                          "fatigue.required_safety_factor")
    if need < 1.0:
        raise ModelError(f"must be at least 1, got {need:g}", where, "fatigue.required_safety_factor")
    return FatigueSpec(crit, surf, float(rel), kd, need)


def _design_factor(obj, where, prefix) -> tuple[float | None, str]:
    feat, ck = obj.get("design_feature"), obj.get("shaft_design_factor")
    if feat is not None and ck is not None:
        raise ModelError("give either design_feature or shaft_design_factor", where,
                         f"{prefix}shaft_design_factor")
    if feat is not None:
        if feat not in DESIGN_FACTORS:
            raise ModelError(f"design_feature must be one of {', '.join(DESIGN_FACTORS)}, got {feat!r}",
                             where, f"{prefix}design_feature")
        return DESIGN_FACTORS[feat], feat
    if ck is not None:
        v = u.parse_number(ck, where, f"{prefix}shaft_design_factor")
        if not 0 < v <= 1.0:
            raise ModelError(f"C_K must be between 0 and 1, got {v:g}", where, f"{prefix}shaft_design_factor")
        return v, ""
    return None, ""


def _propulsion(obj, link, where) -> PropulsionShaftSpec | None:
    raw = obj.get("propulsion_shaft")
    if raw is None:
        return None
    key = "propulsion_shaft"
    if link.kind != "shaft" or not link.segments:
        raise ModelError("the propulsion shafting rule needs a shaft given by segments", where, key)
    if not isinstance(raw, dict):
        raise ModelError("give {\"position\": \"intermediate\", \"design_feature\": \"integral_flange\"}",
                         where, key)
    pos = raw.get("position")
    if pos not in POSITIONS:
        raise ModelError(f"position must be one of {', '.join(POSITIONS)}, got {pos!r}", where,
                         f"{key}.position")
    if not link.material.steel:
        raise ModelError(f"the rule is for steel shafts; '{link.material.name}' is not a steel", where,
                         "material")
    ck, feat = _design_factor(raw, where, f"{key}.")
    segs = obj.get("segments") or []
    cks, feats = [], []
    for i, s in enumerate(link.segments):
        sobj = segs[i] if i < len(segs) and isinstance(segs[i], dict) else {}
        c, f = _design_factor(sobj, f"{where} segment {i + 1}", "")
        if c is None:
            c, f = ck, feat
        if c is None:
            raise ModelError("give the shaft-design factor: design_feature (e.g. \"integral_flange\") or "
                             "shaft_design_factor (C_K)", where, f"{key}.design_feature")
        cks.append(c)
        feats.append(f)
    sb = None
    if raw.get("tensile_strength") is not None:
        sb = u.parse(raw["tensile_strength"], u.STRESS, where, f"{key}.tensile_strength")
        if sb <= 0:
            raise ModelError("must be greater than zero", where, f"{key}.tensile_strength")
    elif link.material.tensile_strength is None:
        raise ModelError("give the material's tensile strength (or tensile_strength here)", where,
                         f"{key}.tensile_strength")
    return PropulsionShaftSpec(pos, tuple(cks), tuple(feats), sb)


def _material_strengths(obj, link, where):
    """A custom material's strengths (the library's carry their own)."""
    spec = obj.get("material")
    if not isinstance(spec, dict) or link.material is None:
        return link.material
    vals = {}
    for key, attr in (("tensile_strength", "tensile_strength"), ("yield_strength", "yield_strength"),
                      ("torsional_endurance_limit", "torsional_endurance")):
        if spec.get(key) is not None:
            v = u.parse(spec[key], u.STRESS, where, f"material.{key}")
            if v <= 0:
                raise ModelError("must be greater than zero", where, f"material.{key}")
            vals[attr] = v
    steel = spec.get("steel", "")
    if steel not in ("", "carbon", "alloy", "stainless"):
        raise ModelError(f"steel must be 'carbon', 'alloy' or 'stainless', got {steel!r}", where, "material.steel")
    if not vals and not steel:
        return link.material
    if "yield_strength" in vals and "tensile_strength" in vals and vals["yield_strength"] > vals["tensile_strength"]:
        raise ModelError("the yield strength must not exceed the tensile strength", where,
                         "material.yield_strength")
    return replace(link.material, steel=steel, strength_source="given in the project", **vals)


def _link_ratings(obj, link) -> tuple[object, LinkRatings | None]:
    where = f"link '{link.id}'"
    material = _material_strengths(obj, link, where) if link.material else None
    if material is not link.material:
        link = replace(link, material=material)
    pt = _opt_positive(obj, "permissible_torque_transient", u.TORQUE, where)
    ps = _opt_positive(obj, "permissible_stress_transient", u.STRESS, where)
    r = LinkRatings(_coupling(obj, link, where), _fatigue(obj, link, where), _propulsion(obj, link, where),
                    pt, ps)
    if r == LinkRatings():
        return link, None
    return link, r


#: the link keys this module reads (besides a custom material's strengths and a
#: segment's design_feature); a link with none of them carries no ratings
LINK_KEYS = frozenset({"permissible_torque_transient", "permissible_stress_transient", "nominal_torque",
                       "maximum_torque", "permissible_power", "permissible_torque_frequency",
                       "temperature_factor", "fatigue", "propulsion_shaft"})


def _has_ratings(obj) -> bool:
    if not isinstance(obj, dict):
        return False
    if not LINK_KEYS.isdisjoint(obj) or isinstance(obj.get("material"), dict):
        return True
    segs = obj.get("segments")
    return isinstance(segs, list) and any(isinstance(sg, dict) and "design_feature" in sg for sg in segs)


def attach_ratings(doc: dict, train: Train, links_to_read=None) -> Train:
    """``train`` with each link's acceptance data and the project's load cases
    (raises ModelError naming the element and the field).

    ``links_to_read``: the indices (in file order) of the links that may carry acceptance
    data, when the caller knows the others carry none (core.project reads most links of a
    long train by a quick path that accepts no rating keys); None: every link."""
    raw_links = doc.get("links") or []
    if links_to_read is None:
        links_to_read = range(min(len(raw_links), len(train.links)))
    links = None
    for i in links_to_read:
        obj, link = raw_links[i], train.links[i]
        if not _has_ratings(obj):  # the common case: nothing to read (a long train stays fast)
            continue
        new, ratings = _link_ratings(obj, link)
        if ratings is not None:
            new = replace(new, ratings=ratings)
        if new is not link:
            if links is None:
                links = list(train.links)
            links[i] = new
    out = replace(train, links=tuple(links)) if links is not None else train
    cases = parse_load_cases(doc.get("load_cases"), out)
    return replace(out, load_cases=cases) if cases else out


def transient_peak_limits(train: Train) -> dict[str, float]:
    """The permissible peak torque of each link during a transient event (N*m): a coupling's
    maximum torque T_Kmax where given (the rating coupling data sheets state for start-ups
    and short circuits, common practice, no source), else the link's transient permissible
    torque; links with neither keep their permissible torque (core.transient's default)."""
    out = {}
    for link in train.links:
        r = link.ratings
        if r is None:
            continue
        if r.coupling is not None and r.coupling.maximum_torque is not None:
            out[link.id] = r.coupling.maximum_torque
        elif r.permissible_torque_transient is not None:
            out[link.id] = r.permissible_torque_transient
    return out
