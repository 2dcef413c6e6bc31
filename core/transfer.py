"""Transfer matrices of the Holzer method, vectorised over frequency.

The state vector is (twist angle theta [rad], torque T [N*m]) at a station.
Sign convention: T is the torque transmitted in the positive direction along
the train, so a massless spring of stiffness k gives T = k (theta_left - theta_right).

References: W. T. Thomson, Theory of Vibration with Applications, ch. "Holzer
method" and "transfer matrices" (from memory); E. C. Pestel and F. A. Leckie,
Matrix Methods in Elastomechanics, 1963 (from memory).  All functions take an
array of circular frequencies ``omega`` [rad/s] and return arrays of shape
``omega.shape + (2, 2)``.
"""
from __future__ import annotations

import numpy as np


def point_matrix(omega, inertia):
    """Disc of polar inertia J: theta unchanged, T_right = T_left + omega^2 J theta.

    The shaft on the left drives the disc with T_left, the one on the right
    takes T_right: J theta'' = T_left - T_right, and theta'' = -omega^2 theta
    (Holzer's table: T_i = sum of omega^2 J theta, Thomson -- from memory).
    """
    w = np.asarray(omega, float)
    P = np.zeros(w.shape + (2, 2))
    P[..., 0, 0] = 1.0
    P[..., 1, 1] = 1.0
    P[..., 1, 0] = w ** 2 * inertia
    return P


def spring_field_matrix(omega, stiffness):
    """Massless shaft: theta_right = theta_left - T / k, T unchanged."""
    w = np.asarray(omega, float)
    F = np.zeros(w.shape + (2, 2))
    F[..., 0, 0] = 1.0
    F[..., 1, 1] = 1.0
    F[..., 0, 1] = -1.0 / stiffness
    return F


def shaft_field_matrix(omega, length, shear_modulus, density, polar_moment):
    """Uniform shaft with distributed inertia: exact solution of the torsional
    wave equation  G Ip theta'' = rho Ip theta_tt,  wave speed c = sqrt(G / rho).

    With beta = omega / c and Z = G Ip beta:
        [theta]        [ cos(bL)      -sin(bL)/Z ] [theta]
        [  T  ]_right = [ Z sin(bL)     cos(bL)  ] [  T  ]_left
    """
    w = np.asarray(omega, float)
    c = np.sqrt(shear_modulus / density)
    bl = w * length / c
    GIp = shear_modulus * polar_moment
    F = np.empty(w.shape + (2, 2))
    cos, sin = np.cos(bl), np.sin(bl)
    F[..., 0, 0] = cos
    F[..., 1, 1] = cos
    # sin(bL)/Z = L/(G Ip) * sinc, finite at omega = 0
    F[..., 0, 1] = -length / GIp * np.sinc(bl / np.pi)
    F[..., 1, 0] = GIp / length * bl * sin
    return F


def gear_matrix(omega, speed_ratio):
    """Rigid gear mesh, speed ratio r = n_out / n_in: theta_out = r theta_in,
    T_out = T_in / r (power is conserved)."""
    w = np.asarray(omega, float)
    G = np.zeros(w.shape + (2, 2))
    G[..., 0, 0] = speed_ratio
    G[..., 1, 1] = 1.0 / speed_ratio
    return G


def dynamic_stiffness_from_transfer(F):
    """Member end stiffness from a field matrix F, (theta_b, T_b) = F (theta_a, T_a).

    The loads applied on the member by its end stations are M_a = T_a and
    M_b = -T_b; then [M_a, M_b] = [[K_aa, K_ab], [K_ab, K_bb]] [theta_a, theta_b]
    (det F = 1 makes it symmetric).  Returns (K_aa, K_ab, K_bb) shaped like omega.
    """
    a, b, d = F[..., 0, 0], F[..., 0, 1], F[..., 1, 1]
    return -a / b, 1.0 / b, -d / b


def holzer_chain(omega, stations):
    """Run a chain of transfer matrices from a free left end (theta=1, T=0).

    ``stations`` is a sequence of callables ``f(omega) -> (..., 2, 2)`` in order
    along the train.  Returns the state (theta, T) at the right end for every
    omega: the right-end torque is the Holzer residual (zero at a natural
    frequency of a free-free chain).
    """
    w = np.atleast_1d(np.asarray(omega, float))
    state = np.zeros(w.shape + (2,))
    state[..., 0] = 1.0
    for f in stations:
        state = np.einsum("...ij,...j->...i", f(w), state)
    return state
