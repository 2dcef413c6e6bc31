"""Shaft strength: fatigue by Goodman or Soderberg, first-cycle yield, and the
classification societies' permissible torsional vibration stresses for propulsion shafts.

Fatigue (mean plus vibratory shear; Shigley's Mechanical Engineering Design, 9th ed.,
ch. 6 — from memory):

* torsional endurance limit of the part S_se = k_a k_b k_d k_e S'_se, with the
  material's torsional endurance limit of a polished specimen S'_se and the Marin
  factors for surface k_a = a S_ut^b (eq. 6-19, table 6-2), size k_b (eq. 6-20:
  1.24 d^-0.107 for 2.79 <= d <= 51 mm, 1.51 d^-0.157 for 51 < d <= 254 mm; beyond
  254 mm the same power law is carried on, a value below 0.63 — common practice, no
  source), temperature k_d (given) and reliability k_e (table 6-5).  The stress
  concentration factor is applied once, to the stresses (not as a Marin factor);
* ultimate shear strength S_su = 0.67 S_ut (eq. 6-54), yield shear strength
  S_sy = 0.577 S_y (distortion energy);
* Goodman 1/n = tau_a / S_se + tau_m / S_su; Soderberg 1/n = tau_a / S_se + tau_m / S_sy
  (eqs. 6-41 and 6-40 with the shear strengths);
* first-cycle yield n_y = S_sy / (tau_a + |tau_m|) (Langer line, eq. 6-44).

Propulsion shafting: IACS Unified Requirement M68, "Dimensions of propulsion shafts and
their permissible torsional vibration stresses" (every coefficient here from memory;
the sheet asks the user to confirm the edition that applies):

* continuous operation tau_C = (sigma_B + 160) / 18 * C_K * C_D * (3 - 2 lambda^2) N/mm^2
  for lambda < 0.9, and * 1.38 for 0.9 <= lambda <= 1.05 (the two agree at 0.9);
* transient operation (passing through a barred speed range, lambda <= 0.8)
  tau_T = 1.7 tau_C / sqrt(C_K);
* size factor C_D = 0.35 + 0.93 d^-0.2 (d in mm), shaft-design factor C_K per
  design feature (:data:`DESIGN_FACTORS`), lambda = n / n_0 the speed ratio to the
  rated speed;
* sigma_B the specified minimum tensile strength, taken at most 760 N/mm^2 for
  carbon and carbon-manganese steel intermediate and thrust shafts, 800 N/mm^2 for
  alloy steel ones and 600 N/mm^2 for propeller shafts (:data:`TENSILE_CAPS`);
* the permissible stresses are for the nominal stress T r / Ip: the notch effect is
  in C_K, so no stress concentration factor is applied on top;
* barred speed ranges are not permitted above lambda = 0.8.

Units: SI (Pa, m) in and out; the formulas' N/mm^2 and mm are converted inside.
"""
from __future__ import annotations

import math

import numpy as np

MPA = 1e6

# ------------------------------------------------------------------ fatigue
# surface factor k_a = a S_ut[MPa]^b (Shigley, table 6-2 — from memory)
SURFACE_FINISH = {
    "ground": (1.58, -0.085),
    "machined": (4.51, -0.265),
    "cold_drawn": (4.51, -0.265),
    "hot_rolled": (57.7, -0.718),
    "forged": (272.0, -0.995),
}
# reliability factor k_e (Shigley, table 6-5 — from memory), keys in percent
RELIABILITY = {50.0: 1.000, 90.0: 0.897, 95.0: 0.868, 99.0: 0.814, 99.9: 0.753, 99.99: 0.702,
               99.999: 0.659, 99.9999: 0.620}
CRITERIA = ("goodman", "soderberg")
ULTIMATE_SHEAR_RATIO = 0.67  # S_su / S_ut (Shigley eq. 6-54, from memory)
YIELD_SHEAR_RATIO = 0.577  # S_sy / S_y, distortion energy (1 / sqrt 3)
DEFAULT_REQUIRED_SAFETY = 1.5  # fatigue safety factor asked for (common practice, no source)


def surface_factor(finish: str, tensile_strength: float) -> float:
    """Marin surface factor k_a = a S_ut^b, S_ut in MPa, at most 1."""
    a, b = SURFACE_FINISH[finish]
    return min(1.0, a * (tensile_strength / MPA) ** b)


def size_factor(diameter: float) -> float:
    """Marin size factor k_b for torsion of a round shaft of diameter ``diameter`` (m)."""
    d = diameter * 1e3
    if d <= 2.79:
        return 1.0
    if d <= 51.0:
        return 1.24 * d ** -0.107
    return 1.51 * d ** -0.157  # 51-254 mm; carried on beyond 254 mm


def reliability_factor(percent: float) -> float:
    return RELIABILITY[float(percent)]


def endurance_limit(torsional_endurance: float, tensile_strength: float, diameter: float,
                    finish: str = "machined", reliability_percent: float = 50.0,
                    temperature_factor: float = 1.0) -> float:
    """Torsional endurance limit of the part S_se = k_a k_b k_d k_e S'_se, Pa."""
    return (surface_factor(finish, tensile_strength) * size_factor(diameter) * temperature_factor
            * reliability_factor(reliability_percent) * torsional_endurance)


def fatigue_safety(tau_a, tau_m, S_se: float, S_su: float, S_sy: float, criterion: str = "goodman"):
    """Safety factor against fatigue for shear amplitude ``tau_a`` and mean ``tau_m``
    (Pa, arrays): Goodman 1/n = tau_a/S_se + |tau_m|/S_su, Soderberg with S_sy."""
    if criterion not in CRITERIA:
        raise ValueError(criterion)
    mean_strength = S_su if criterion == "goodman" else S_sy
    inv = np.asarray(tau_a, float) / S_se + np.abs(np.asarray(tau_m, float)) / mean_strength
    with np.errstate(divide="ignore"):
        return np.where(inv > 0, 1.0 / np.where(inv > 0, inv, 1.0), np.inf)


def yield_safety(tau_a, tau_m, S_sy: float):
    """First-cycle yield safety factor S_sy / (tau_a + |tau_m|) (Langer line)."""
    peak = np.asarray(tau_a, float) + np.abs(np.asarray(tau_m, float))
    with np.errstate(divide="ignore"):
        return np.where(peak > 0, S_sy / np.where(peak > 0, peak, 1.0), np.inf)


def shear_stress_factor(outer_diameter: float, inner_diameter: float = 0.0) -> float:
    """r / Ip of a round (hollow) section, 1/m^3: tau = T r / Ip."""
    ip = math.pi * (outer_diameter ** 4 - inner_diameter ** 4) / 32.0
    return 0.5 * outer_diameter / ip


# ------------------------------------------------------------------ UR M68
# shaft-design factor C_K per design feature (IACS UR M68 — from memory)
DESIGN_FACTORS = {
    "integral_flange": 1.0,  # intermediate shaft with integral coupling flanges, straight parts
    "shrink_fit_coupling": 1.0,
    "keyway_tapered": 0.60,
    "keyway_cylindrical": 0.45,
    "radial_hole": 0.50,
    "longitudinal_slot": 0.30,
    "thrust_collar": 0.85,  # thrust shaft, both sides of the collar
    "roller_thrust_bearing": 0.85,  # thrust shaft in way of a roller thrust bearing
    "propeller_flange": 0.55,  # propeller shaft, flange-mounted propeller
    "propeller_keyless": 0.55,  # keyless taper-fitted propeller
    "propeller_keyed": 0.55,  # key-fitted propeller
    "stern_tube": 0.80,  # from the aftmost bearing's forward end to the forward stern tube seal
}
POSITIONS = ("intermediate", "thrust", "propeller")
# upper limits on sigma_B for the calculation, Pa (IACS UR M68 — from memory)
TENSILE_CAPS = {("intermediate", "carbon"): 760 * MPA, ("thrust", "carbon"): 760 * MPA,
                ("intermediate", "alloy"): 800 * MPA, ("thrust", "alloy"): 800 * MPA,
                ("propeller", "carbon"): 600 * MPA, ("propeller", "alloy"): 600 * MPA}
TRANSIENT_LAMBDA_MAX = 0.8  # transient limit and barred ranges only up to here
RULE_NAME = "IACS UR M68 (propulsion shafts: permissible torsional vibration stresses)"


def rule_steel(steel: str) -> str:
    """The UR M68 strength class of a steel family (stainless steels capped as alloy)."""
    return "alloy" if steel in ("alloy", "stainless") else "carbon"


def rule_tensile_strength(tensile_strength: float, position: str, steel: str) -> float:
    """sigma_B used in the formulas: the specified minimum, capped by position and steel."""
    return min(tensile_strength, TENSILE_CAPS[(position, rule_steel(steel))])


def size_factor_rule(diameter: float) -> float:
    """C_D = 0.35 + 0.93 d^-0.2, d in mm (UR M68 — from memory)."""
    return 0.35 + 0.93 * (diameter * 1e3) ** -0.2


def continuous_limit(sigma_b: float, design_factor: float, diameter: float, speed_ratio) -> np.ndarray:
    """tau_C (Pa) for continuous operation at speed ratio(s) lambda = n / n_0.

    (sigma_B + 160) / 18 C_K C_D (3 - 2 lambda^2) below lambda = 0.9, the constant
    1.38 above it (stated up to lambda = 1.05; carried on up to the trip speed —
    common practice, no source).
    """
    lam = np.asarray(speed_ratio, float)
    base = (sigma_b / MPA + 160.0) / 18.0 * design_factor * size_factor_rule(diameter)
    return base * np.where(lam < 0.9, 3.0 - 2.0 * lam ** 2, 1.38) * MPA


def transient_limit(sigma_b: float, design_factor: float, diameter: float, speed_ratio) -> np.ndarray:
    """tau_T = 1.7 tau_C / sqrt(C_K) (Pa) for passing through a barred speed range,
    lambda <= 0.8; NaN above (no transient limit: tau_C applies)."""
    lam = np.asarray(speed_ratio, float)
    tt = 1.7 * continuous_limit(sigma_b, design_factor, diameter, lam) / math.sqrt(design_factor)
    return np.where(lam <= TRANSIENT_LAMBDA_MAX, tt, np.nan)
