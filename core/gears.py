"""Gear meshes given by their teeth: speed ratio, mesh and hunting-tooth orders,
mesh stiffness from gear-rating data, and which shaft a mesh's values belong to.

* Speed ratio of a pair: n_to / n_from = z_from / z_to.
* Mesh frequency f_z = z_from n_from = z_to n_to (n in rev/s): order z_from on the
  `from` shaft and z_to on the `to` shaft.
* Hunting-tooth frequency: one tooth pair meets again after lcm(z_from, z_to)
  meshes, f_ht = f_z gcd(z_from, z_to) / (z_from z_to) (gcd = number of assembly
  phases).  (Gear-mesh and hunting-tooth frequencies as in machinery-vibration
  practice, e.g. R. B. Randall, Vibration-based Condition Monitoring, ch. 2 —
  from memory.)
* Torsional mesh stiffness referred to a shaft of base radius r_b:
  k = c_gamma b r_b^2, with c_gamma the mesh stiffness per unit face width in the
  transverse plane and b the face width (ISO 6336-1, mesh stiffness c_gamma_alpha;
  about 20 N/(mm um) for steel spur gears — from memory).  A deflection r_b theta
  along the line of action carries a force c_gamma b r_b theta, a torque
  c_gamma b r_b^2 theta.

Convention of the model (:mod:`core.assembly`): a gear mesh's stiffness is
referred to its `from` shaft, and the torque through a mesh is reported on its
`from` shaft.  On the `to` shaft the same stiffness is k / ratio^2 and the same
torque T / ratio (power is conserved).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from . import units as u
from .errors import ModelError


def mesh_torsional_stiffness(c_gamma: float, face_width: float, base_radius: float) -> float:
    """k = c_gamma b r_b^2, N*m/rad (c_gamma in N/m^2, b and r_b in m)."""
    return c_gamma * face_width * base_radius ** 2


def hunting_tooth_order(z_from: int, z_to: int) -> float:
    """Hunting-tooth frequency per revolution of the `from` shaft: gcd / z_to."""
    return math.gcd(z_from, z_to) / z_to


@dataclass(frozen=True)
class MeshInfo:
    link_id: str
    teeth: tuple[int, int] | None
    speed_ratio: float  # n_to / n_from
    mesh_order_from: float | None  # per revolution of the `from` shaft (= z_from)
    mesh_order_to: float | None  # per revolution of the `to` shaft (= z_to)
    hunting_order_from: float | None  # hunting-tooth frequency per revolution of the `from` shaft
    assembly_phases: int | None  # gcd(z_from, z_to)

    def mesh_frequency_hz(self, from_speed):
        """Hz at `from`-shaft speed(s) in rad/s."""
        return None if self.mesh_order_from is None else self.mesh_order_from * from_speed / (2 * math.pi)

    def hunting_frequency_hz(self, from_speed):
        return None if self.hunting_order_from is None else self.hunting_order_from * from_speed / (2 * math.pi)


def mesh_info(link) -> MeshInfo:
    """What the tooth counts of a gear-mesh link give (None fields without teeth)."""
    if link.teeth is None:
        return MeshInfo(link.id, None, link.speed_ratio, None, None, None, None)
    zf, zt = link.teeth
    return MeshInfo(link.id, link.teeth, zf / zt, float(zf), float(zt), hunting_tooth_order(zf, zt),
                    math.gcd(zf, zt))


def mesh_sides(train, link) -> list[str]:
    """Plain words for a screen or sheet: which shaft a mesh's stiffness is referred to and
    on which side its torque is reported, with the values on the other shaft."""
    r = link.speed_ratio
    out = []
    if link.teeth is not None:
        zf, zt = link.teeth
        out.append(f"{zf} teeth on '{link.from_id}', {zt} on '{link.to_id}': speed ratio {zf}/{zt} = {r:.6g}; "
                   f"mesh frequency {zf} per revolution of '{link.from_id}' ({zt} of '{link.to_id}'); "
                   f"hunting-tooth frequency {hunting_tooth_order(zf, zt):.4g} per revolution of "
                   f"'{link.from_id}' ({math.gcd(zf, zt)} assembly phase{'s' if math.gcd(zf, zt) > 1 else ''})")
    if link.stiffness is None:
        out.append(f"Rigid mesh: the gears on '{link.from_id}' and '{link.to_id}' turn together at the speed "
                   "ratio; no mesh stiffness.")
    else:
        out.append(f"Mesh stiffness {link.stiffness:.4g} N·m/rad is referred to the shaft of '{link.from_id}' "
                   f"(the 'from' gear); on the shaft of '{link.to_id}' it is {link.stiffness / r ** 2:.4g} N·m/rad.")
    out.append(f"Torque through the mesh is reported on the shaft of '{link.from_id}'; on the shaft of "
               f"'{link.to_id}' it is {1 / r:.4g} times that.")
    return out


# ----------------------------------------------------------------- project file
def _teeth(obj, where):
    raw = obj.get("teeth")
    if raw is None:
        return None
    if not (isinstance(raw, list) and len(raw) == 2):
        raise ModelError("teeth must be [teeth on 'from', teeth on 'to']", where, "teeth")
    out = []
    for z in raw:
        if isinstance(z, bool) or not isinstance(z, (int, float)) or z != int(z) or z < 1:
            raise ModelError(f"tooth counts are whole numbers above zero, got {z!r}", where, "teeth")
        out.append(int(z))
    return tuple(out)


MIN_GEAR_RATIO = 1e-3  # one stage between 1:1000 and 1000:1 (real stages stay within 1:20)


def gear_mesh_fields(obj: dict, where: str, stiffness: float | None):
    """(speed_ratio, teeth, stiffness) of a gear-mesh link entry.

    ``"teeth": [z_from, z_to]`` gives the ratio (a ``speed_ratio`` beside it must
    agree); ``"mesh_stiffness": {"c_gamma": "20 N/(mm*um)", "face_width": "80 mm",
    "base_radius_from" | "base_radius_to": "180 mm"}`` gives the stiffness referred
    to the `from` shaft (a ``stiffness`` beside it is refused).
    """
    teeth = _teeth(obj, where)
    ratio = None
    if "speed_ratio" in obj:
        ratio = u.parse_number(obj["speed_ratio"], where, "speed_ratio")
        if ratio <= 0:
            raise ModelError(f"speed_ratio must be greater than zero, got {ratio:g}", where, "speed_ratio")
    if teeth is not None:
        by_teeth = teeth[0] / teeth[1]
        if ratio is not None and not math.isclose(ratio, by_teeth, rel_tol=1e-9):
            raise ModelError(f"speed_ratio {ratio:g} conflicts with the teeth {teeth[0]}/{teeth[1]} = "
                             f"{by_teeth:.9g}; give one of them", where, "speed_ratio")
        ratio = by_teeth
    if ratio is None:
        raise ModelError("a gear mesh needs a speed_ratio (speed of 'to' / speed of 'from') or its "
                         "teeth [z_from, z_to]", where, "speed_ratio")
    if not MIN_GEAR_RATIO <= ratio <= 1.0 / MIN_GEAR_RATIO:
        raise ModelError(f"speed_ratio (speed of 'to' / speed of 'from') must lie between "
                         f"{MIN_GEAR_RATIO:g} and {1 / MIN_GEAR_RATIO:g} for one gear stage, "
                         f"got {ratio:g}", where, "speed_ratio")
    ms = obj.get("mesh_stiffness")
    if ms is not None:
        key = "mesh_stiffness"
        if stiffness is not None:
            raise ModelError("give either a stiffness or a mesh_stiffness", where, key)
        if not isinstance(ms, dict):
            raise ModelError("give {\"c_gamma\": ..., \"face_width\": ..., \"base_radius_from\": ...}", where, key)
        vals = {}
        for k in ("c_gamma", "face_width"):
            if ms.get(k) is None:
                raise ModelError(f"missing {k}", where, f"{key}.{k}")
            kind = u.MESH_STIFFNESS if k == "c_gamma" else u.LENGTH
            vals[k] = u.parse(ms[k], kind, where, f"{key}.{k}")
            if vals[k] <= 0:
                raise ModelError("must be greater than zero", where, f"{key}.{k}")
        sides = [k for k in ("base_radius_from", "base_radius_to") if ms.get(k) is not None]
        if len(sides) != 1:
            raise ModelError("give the base radius of one gear: base_radius_from or base_radius_to",
                             where, f"{key}.base_radius_from")
        rb = u.parse(ms[sides[0]], u.LENGTH, where, f"{key}.{sides[0]}")
        if rb <= 0:
            raise ModelError("must be greater than zero", where, f"{key}.{sides[0]}")
        if sides[0] == "base_radius_to":
            rb *= ratio  # r_b,from / r_b,to = z_from / z_to = ratio
        stiffness = mesh_torsional_stiffness(vals["c_gamma"], vals["face_width"], rb)
    return ratio, teeth, stiffness
