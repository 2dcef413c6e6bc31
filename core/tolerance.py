"""Tolerance bands of natural frequencies, exact from two corner trains.

A link may give ``stiffness_tolerance`` and a disc ``inertia_tolerance`` as
(minus, plus) fractions.  Every natural frequency, counted in order, is a
non-decreasing function of every stiffness and a non-increasing function of
every inertia: the i-th eigenvalue of K - omega^2 M is the min-max of the
Rayleigh quotient x'Kx / x'Mx over i-dimensional subspaces (Courant-Fischer),
and that quotient grows with each stiffness and falls with each inertia for
every x (Rayleigh's monotonicity; e.g. Courant & Hilbert, Methods of
Mathematical Physics, vol. 1, ch. VI -- from memory).  A shaft with distributed
mass obeys the same theorem with the integrals of G Ip theta'^2 and rho Ip
theta^2.  So over the whole tolerance box, the i-th frequency is lowest in the
*low corner* (every stiffness at its minus side, every inertia at its plus
side) and highest in the *high corner* (the reverse): the band edges are the
i-th frequencies of these two trains, exactly, with no sampling.

A shaft given by geometry varies its shear modulus: its stiffness (and, for a
distributed shaft, its wave speed) moves by the tolerance while its own inertia
is held, since the tolerance stands for the material and fit, not the mass.

Units: fractions; frequencies in Hz.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from .materials import Material
from .model import Disc, Link, Train
from .solver import DynamicSystem, Modes, _find_roots, _upper_bound, zero_roots

TWO_PI = 2.0 * np.pi


def scaled_link(link: Link, factor: float) -> Link:
    """``link`` with its stiffness times ``factor`` (a geometric shaft: its shear
    modulus times ``factor``, so every segment's k = G Ip / L scales and rho is held)."""
    if link.stiffness is not None:
        return replace(link, stiffness=link.stiffness * factor)
    if link.segments:
        m = link.material
        return replace(link, material=Material(m.name, m.shear_modulus * factor, m.density, m.source))
    raise ValueError(f"link '{link.id}' is a rigid gear mesh: it has no stiffness to scale")


def scaled_disc(disc: Disc, factor: float) -> Disc:
    return replace(disc, inertia=disc.inertia * factor)


def corner_trains(train: Train, skip: str | None = None) -> tuple[Train, Train]:
    """(low corner, high corner) of the tolerance box.

    Low: every toleranced stiffness at k (1 - minus) and inertia at J (1 + plus);
    high: k (1 + plus), J (1 - minus).  ``skip``: an element id ("link:ID" or
    "disc:ID") left at its nominal value (the window varies it itself).
    """
    links_lo, links_hi, discs_lo, discs_hi = [], [], [], []
    for l in train.links:
        t = None if skip == f"link:{l.id}" else l.stiffness_tolerance
        links_lo.append(l if t is None else scaled_link(l, 1.0 - t[0]))
        links_hi.append(l if t is None else scaled_link(l, 1.0 + t[1]))
    for d in train.discs:
        t = None if skip == f"disc:{d.id}" else d.inertia_tolerance
        discs_lo.append(d if t is None else scaled_disc(d, 1.0 + t[1]))
        discs_hi.append(d if t is None else scaled_disc(d, 1.0 - t[0]))
    return (replace(train, discs=tuple(discs_lo), links=tuple(links_lo)),
            replace(train, discs=tuple(discs_hi), links=tuple(links_hi)))


def lowest_frequencies_hz(train: Train, n_elastic: int) -> np.ndarray:
    """The lowest ``n_elastic`` elastic natural frequencies (Hz), counted in order by
    the Wittrick-Williams count (no shapes); fewer when a lumped model has fewer."""
    system = DynamicSystem(train)
    rb = zero_roots(system.asm)  # rigid-body mode and free damper rings
    want = n_elastic + rb
    finite = system.asm.n_finite_modes
    if finite is not None:
        want = min(want, finite)
    if want <= rb:
        return np.zeros(0)
    hi, total = _upper_bound(system, want)
    omega, _ = _find_roots(system, np.arange(rb, want), hi, total)
    return omega / TWO_PI


def frequency_bands(train: Train, modes: Modes) -> np.ndarray:
    """[f_low, f_high] in Hz for every mode of ``modes`` (rows as in ``modes``).

    The corner trains are solved for exactly as many elastic modes as ``modes``
    holds, so every nominal mode has both edges (count-matched: the i-th
    frequency of each corner).  Rigid-body rows are [0, 0].  Without any
    tolerance both edges are the nominal frequency.
    """
    f = np.asarray(modes.frequency_hz, float)
    bands = np.column_stack([f, f])
    if not train.has_tolerances:
        return bands
    elastic = np.flatnonzero(modes.elastic)
    n = len(elastic)
    if n == 0:
        return bands
    low, high = corner_trains(train)
    f_lo, f_hi = lowest_frequencies_hz(low, n), lowest_frequencies_hz(high, n)
    if len(f_lo) < n or len(f_hi) < n:  # cannot happen: the corners keep the node pattern
        raise RuntimeError("a corner train has fewer modes than the nominal train")
    bands[elastic, 0] = f_lo
    bands[elastic, 1] = f_hi
    return bands
