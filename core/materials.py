"""Library of common shaft materials (SI: Pa, kg/m^3).

Values are typical room-temperature properties.  Source: Shigley's Mechanical
Engineering Design, table of physical constants of materials (from memory);
checked for plausibility against the ASM Metals Handbook ranges (from memory).
A project may instead give its own ``{"shear_modulus": ..., "density": ...}``.
"""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Material:
    name: str
    shear_modulus: float  # Pa
    density: float  # kg/m^3
    source: str = ""
    # strengths for the acceptance checks (core.shafting); None where not known
    tensile_strength: float | None = None  # Pa, ultimate S_ut
    yield_strength: float | None = None  # Pa, S_y
    torsional_endurance: float | None = None  # Pa, fully reversed shear, polished specimen
    strength_source: str = ""
    steel: str = ""  # "carbon" | "alloy" | "stainless" | "" (not a steel): shafting rule caps

    @property
    def has_strengths(self) -> bool:
        return None not in (self.tensile_strength, self.yield_strength, self.torsional_endurance)

    @property
    def wave_speed(self) -> float:
        """Torsional wave speed c = sqrt(G / rho) in m/s."""
        return (self.shear_modulus / self.density) ** 0.5


_SHIGLEY = "Shigley's Mechanical Engineering Design, physical constants table (from memory)"

# Torsional endurance limit of a polished specimen estimated as 0.59 x 0.5 S_ut: the
# rotating-beam endurance limit S'e = 0.5 S_ut (S_ut <= 1400 MPa) times the load factor
# for torsion k_c = 0.59 (Shigley's Mechanical Engineering Design, 9th ed., eqs. 6-8 and
# 6-26 — from memory).  Tensile and yield strengths: the tables named beside each (from memory).
TORSION_FROM_TENSILE = 0.59 * 0.5


def _steel(name, source, s_ut, s_y, steel, G=79.3e9, rho=7850.0):
    return Material(name, G, rho, _SHIGLEY, s_ut, s_y, TORSION_FROM_TENSILE * s_ut,
                    f"{source}; torsional endurance limit 0.59 x 0.5 S_ut (Shigley, from memory)", steel)


LIBRARY: dict[str, Material] = {
    # AISI 1045 hot-rolled: S_ut 570 MPa, S_y 310 MPa (Shigley, table A-20 — from memory)
    "carbon_steel": _steel("Carbon steel", "AISI 1045 hot-rolled, Shigley table A-20 (from memory)",
                           570e6, 310e6, "carbon"),
    # AISI 4140 quenched and tempered at 540 C: S_ut 951 MPa, S_y 834 MPa (Shigley, table A-21
    # — from memory)
    "alloy_steel": _steel("Alloy steel", "AISI 4140 Q&T 540 C, Shigley table A-21 (from memory)",
                          951e6, 834e6, "alloy"),
    # AISI 304 annealed: S_ut 586 MPa, S_y 241 MPa (Shigley, table A-22 — from memory)
    "stainless_steel": _steel("Stainless steel (austenitic 18-8)",
                              "AISI 304 annealed, Shigley table A-22 (from memory)", 586e6, 241e6,
                              "stainless", 73.1e9, 7750.0),
    # Ti-6Al-4V annealed: S_ut 900 MPa, S_y 830 MPa (ASM Handbook vol. 2 — from memory)
    "titanium": Material("Titanium alloy (Ti-6Al-4V)", 42.4e9, 4430.0, _SHIGLEY, 900e6, 830e6,
                         TORSION_FROM_TENSILE * 900e6,
                         "Ti-6Al-4V annealed, ASM Handbook vol. 2 (from memory); torsional "
                         "endurance 0.59 x 0.5 S_ut, a steel estimate (from memory)"),
    # 6061-T6: S_ut 310 MPa, S_y 276 MPa, fatigue strength 96.5 MPa at 5e8 cycles in bending
    # (ASM Handbook vol. 2 — from memory); aluminium has no endurance limit: the value is that
    # fatigue strength times 0.59 for torsion
    "aluminium": Material("Aluminium alloy", 26.9e9, 2710.0, _SHIGLEY, 310e6, 276e6, 0.59 * 96.5e6,
                          "6061-T6, ASM Handbook vol. 2 (from memory); torsional value is 0.59 x the "
                          "fatigue strength at 5e8 cycles (no endurance limit)"),
}
