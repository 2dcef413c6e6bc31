"""Speed bands: where a train runs continuously and where it only passes through.

Acceptance is judged per band, each against its own limits:

* ``operating`` — the operating range [speed_min, speed_max] of the reference
  shaft: continuous running (a fixed-speed machine: the single speed);
* ``transient`` — from standstill (or the lowest computed speed) up to the
  range: passed through on start-up and run-down;
* ``overspeed`` — above the range up to the trip speed: reached only until the
  overspeed trip acts.

Speeds above the range on a train without a trip speed belong to no band (the
train does not run there; the forced response may still show them beside the
range, e.g. within the separation margin).  All speeds are rad/s of the
reference shaft.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import Operating

OPERATING, TRANSIENT, OVERSPEED = "operating", "transient", "overspeed"
BAND_NAMES = (TRANSIENT, OPERATING, OVERSPEED)  # in speed order
CONTINUOUS = "continuous"
PASSING = "transient"


@dataclass(frozen=True)
class SpeedBand:
    name: str  # "transient" | "operating" | "overspeed"
    low: float  # rad/s of the reference shaft
    high: float  # rad/s; low == high for a fixed-speed operating band
    running: str  # "continuous" (operating) | "transient" (start-up, run-down, overspeed)
    title: str  # how a reader names it

    def contains(self, speed) -> np.ndarray:
        """Membership of speed(s), ends included: a band's largest value is its
        supremum, which may sit on the edge it shares with the operating range
        (:func:`band_of` gives a shared edge to the operating range)."""
        s = np.asarray(speed, float)
        return (s >= self.low) & (s <= self.high)


def speed_bands(operating: Operating, lowest: float = 0.0) -> tuple[SpeedBand, ...]:
    """The bands of ``operating`` in speed order; ``lowest`` (rad/s) is where the
    transient band starts (0, or the lowest speed computed)."""
    op = operating
    out = []
    if op.speed_min > lowest:
        out.append(SpeedBand(TRANSIENT, float(lowest), op.speed_min, PASSING, "Start-up and run-down"))
    out.append(SpeedBand(OPERATING, op.speed_min, op.speed_max, CONTINUOUS, op.range_name))
    if op.trip_speed is not None and op.trip_speed > op.speed_max:
        out.append(SpeedBand(OVERSPEED, op.speed_max, op.trip_speed, PASSING, "Overspeed up to trip"))
    return tuple(out)


def band_of(speeds, bands) -> np.ndarray:
    """Name of the band of every speed ('' where a speed lies in no band); the
    operating range owns its ends."""
    s = np.asarray(speeds, float)
    out = np.full(s.shape, "", dtype=object)
    for b in sorted(bands, key=lambda b: b.name != OPERATING):
        out[b.contains(s) & (out == "")] = b.name
    return out


def band_named(bands, name: str) -> SpeedBand | None:
    for b in bands:
        if b.name == name:
            return b
    return None
