"""Fatigue of shafts under transient events: rainflow counting and Miner's rule.

* Cycle counting: the rainflow method of ASTM E1049-85 (2011), section 5.4.4,
  by the ``rainflow`` package (``extract_cycles``); the history is first reduced
  to its turning points with numpy (the same reversals the package finds, found
  faster).
* S-N curve in shear stress amplitude tau_a (fully reversed):
  N(tau_a) = N_knee (tau_e / tau_a)^k above the endurance limit tau_e; below it
  no damage (elementary Miner), or, with ``slope_after_knee`` k2, N_knee
  (tau_e / tau_a)^k2 (Haibach's modification uses k2 = 2k - 1; E. Haibach,
  Betriebsfestigkeit — from memory).
* Damage per event D = sum n_i / N(tau_a,i) (Palmgren-Miner linear damage rule;
  M. A. Miner, J. Appl. Mech. 12 (1945) A159 — from memory); the number of
  events a shaft can take is 1 / D.
* Mean stress is not corrected: a mean torsional shear stress has little effect
  on the torsional fatigue strength of ductile steels while the largest stress
  stays below the torsional yield (G. Sines, 1959; also the FKM guideline's small
  mean-stress sensitivity in shear — from memory).

Library curves (``SN_CURVES``), keyed by :data:`core.materials.LIBRARY` keys:
torsional endurance limit of a polished specimen tau_W = f_tau f_W,sigma R_m with
f_tau = 0.577 (von Mises) and f_W,sigma 0.45 (steels), 0.40 (stainless steel),
0.30 (aluminium wrought alloys), slope k = 8 and knee N_D = 1e6 for shear stress
(FKM guideline "Analytical strength assessment of components", 6th ed., 2012,
tables of material factors and S-N curve constants — from memory); typical
tensile strengths R_m from the material library's handbook sources (from
memory).  Titanium: tau_W from a bending fatigue ratio 0.5 R_m (Ti-6Al-4V
annealed, ASM handbook range — from memory).  These are specimen values: size,
surface and notch factors of a real shaft are NOT applied (the stress
concentration factor of the link is); a project should give its own curve per
link where the shaft's data are known.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import rainflow

from .materials import LIBRARY


@dataclass(frozen=True)
class SNCurve:
    endurance_limit: float  # Pa, shear stress amplitude at the knee
    slope: float  # k, N = N_knee (tau_e / tau_a)^k above the knee
    knee_cycles: float  # N_knee
    slope_after_knee: float | None = None  # None: no damage below the endurance limit
    source: str = ""

    def cycles_to_failure(self, amplitude) -> np.ndarray:
        """N(tau_a) for shear stress amplitudes in Pa (inf below the endurance limit
        without a slope after the knee; inf for a zero amplitude)."""
        a = np.abs(np.asarray(amplitude, float))
        with np.errstate(divide="ignore", over="ignore"):
            ratio = self.endurance_limit / a
            above = self.knee_cycles * ratio ** self.slope
            if self.slope_after_knee is None:
                below = np.full_like(a, np.inf)
            else:
                below = self.knee_cycles * ratio ** self.slope_after_knee
        return np.where(a > self.endurance_limit, above, below)


_FKM = ("FKM guideline, Analytical strength assessment of components (2012): tau_W = 0.577 f_W R_m, "
        "k = 8, N_D = 1e6 for shear (from memory)")


def _fkm(rm: float, f_w: float, note: str = "") -> SNCurve:
    return SNCurve(0.577 * f_w * rm, 8.0, 1.0e6, None, _FKM + note)


# R_m typical (from memory): carbon steel C45 normalised ~600 MPa; alloy steel 42CrMo4
# quenched and tempered ~900 MPa; austenitic stainless ~550 MPa; aluminium 6082-T6 ~300 MPa;
# Ti-6Al-4V annealed ~900 MPa.
SN_CURVES: dict[str, SNCurve] = {
    "carbon_steel": _fkm(600e6, 0.45, "; R_m 600 MPa (C45 normalised)"),
    "alloy_steel": _fkm(900e6, 0.45, "; R_m 900 MPa (42CrMo4 quenched and tempered)"),
    "stainless_steel": _fkm(550e6, 0.40, "; R_m 550 MPa (austenitic)"),
    "aluminium": _fkm(300e6, 0.30, "; R_m 300 MPa (6082-T6)"),
    "titanium": SNCurve(0.577 * 0.5 * 900e6, 8.0, 1.0e6, None,
                        "bending fatigue ratio 0.5 R_m, R_m 900 MPa (Ti-6Al-4V), 0.577 in shear, FKM "
                        "shear slope and knee (from memory)"),
}


def curve_for_material(material) -> SNCurve | None:
    """The library S-N curve of a :class:`~core.materials.Material` (None for a
    material given in the project without a curve)."""
    if material is None:
        return None
    for key, m in LIBRARY.items():
        if m is material or m == material or m.name == getattr(material, "name", None):
            return SN_CURVES.get(key)
    return None


def turning_points(series) -> np.ndarray:
    """The series reduced to its first point, its reversals and its last point
    (plateaus collapsed), as rainflow counting sees it."""
    x = np.asarray(series, float).ravel()
    if x.size < 3:
        return x
    keep = np.r_[True, x[1:] != x[:-1]]
    x = x[keep]
    if x.size < 3:
        return x
    up = np.diff(x) > 0  # no zero steps after collapsing plateaus
    rev = np.flatnonzero(up[:-1] != up[1:]) + 1  # signs, not products: no underflow
    return x[np.r_[0, rev, x.size - 1]]


def rainflow_cycles(series) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Rainflow cycles of a history (ASTM E1049-85, 5.4.4): arrays of range, mean and
    count (1.0 full cycle, 0.5 half cycle)."""
    tp = turning_points(series)
    if tp.size < 2:
        z = np.zeros(0)
        return z, z, z
    if tp.size == 2:  # one half cycle (the package needs three points to see a reversal)
        return np.array([abs(tp[1] - tp[0])]), np.array([0.5 * (tp[0] + tp[1])]), np.array([0.5])
    cyc = np.array([c[:3] for c in rainflow.extract_cycles(tp.tolist())], float).reshape(-1, 3)
    return cyc[:, 0], cyc[:, 1], cyc[:, 2]


def miner_damage(amplitudes, counts, curve: SNCurve) -> float:
    """Palmgren-Miner damage sum, sum n_i / N(tau_a,i)."""
    n = curve.cycles_to_failure(amplitudes)
    c = np.asarray(counts, float)
    return float(np.sum(np.where(np.isfinite(n), c / n, 0.0)))


@dataclass(frozen=True)
class FatigueResult:
    damage: float  # Miner sum for one event
    allowed_events: float  # 1 / damage (inf when no cycle does damage)
    cycles: float  # counted cycles (half cycles as 0.5)
    largest_amplitude: float  # Pa, largest cycle's stress amplitude


def event_fatigue(stress, curve: SNCurve) -> FatigueResult:
    """Rainflow-count a shear stress history (Pa) and sum its damage on ``curve``."""
    s = np.asarray(stress, float)
    if s.size == 0:
        return FatigueResult(0.0, math.inf, 0.0, 0.0)
    half_range = 0.5 * (float(s.max()) - float(s.min()))
    if curve.slope_after_knee is None and half_range <= curve.endurance_limit:
        # no cycle can exceed half the history's range: none does damage (exact shortcut)
        return FatigueResult(0.0, math.inf, math.nan, half_range)
    rng, _, cnt = rainflow_cycles(s)
    amp = 0.5 * rng
    d = miner_damage(amp, cnt, curve)
    return FatigueResult(d, 1.0 / d if d > 0 else math.inf, float(cnt.sum()),
                         float(amp.max()) if amp.size else 0.0)
