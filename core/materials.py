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

    @property
    def wave_speed(self) -> float:
        """Torsional wave speed c = sqrt(G / rho) in m/s."""
        return (self.shear_modulus / self.density) ** 0.5


_SHIGLEY = "Shigley's Mechanical Engineering Design, physical constants table (from memory)"

LIBRARY: dict[str, Material] = {
    "carbon_steel": Material("Carbon steel", 79.3e9, 7850.0, _SHIGLEY),
    "alloy_steel": Material("Alloy steel", 79.3e9, 7850.0, _SHIGLEY),
    "stainless_steel": Material("Stainless steel (austenitic 18-8)", 73.1e9, 7750.0, _SHIGLEY),
    "titanium": Material("Titanium alloy (Ti-6Al-4V)", 42.4e9, 4430.0, _SHIGLEY),
    "aluminium": Material("Aluminium alloy", 26.9e9, 2710.0, _SHIGLEY),
}
