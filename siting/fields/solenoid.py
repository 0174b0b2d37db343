"""Finite solenoids: a thin current sheet in closed form, and a thick winding.

Thin solenoid of radius ``a``, length ``L = 2 b``, ``N`` turns of current ``I``
(surface current ``n I = N I / L``).  In its frame, with ``z_pm = z pm b``,
``B0 = mu0 n I / pi``, ``gamma = (a - rho) / (a + rho)``,
``alpha_pm = a / sqrt(z_pm^2 + (rho + a)^2)``, ``beta_pm = z_pm / sqrt(z_pm^2 + (rho + a)^2)``
and the complementary moduli ``k_pm^2 = (z_pm^2 + (a - rho)^2) / (z_pm^2 + (a + rho)^2)``,
Derby and Olbert (2010) give

    B_rho = B0 [alpha_+ cel(k_+, 1, 1, -1) - alpha_- cel(k_-, 1, 1, -1)],
    B_z   = B0 a / (a + rho) [beta_+ cel(k_+, gamma^2, 1, gamma)
                              - beta_- cel(k_-, gamma^2, 1, gamma)],

with Bulirsch's ``cel``.  ``cel(k, 1, 1, -1) = B(m) - D(m)`` uses the fused
associate integrals; ``gamma = 0`` (``rho = a``, beyond the ends) takes the
``p <= 0`` branch of ``cel``.  Points on the current sheet itself
(``|rho - a| <= SHEET_TOLERANCE * a`` and ``|z| <= b``), where ``B_z`` jumps by
``mu0 n I``, return NaN.  The two end terms cancel at large distance (the field
there is a dipole's, ``~ 1/r^3``, while each term is ``~ 1/r^2``), so far
from the coil about ``log10(r / L)`` digits are lost.

A thick winding is in :mod:`siting.fields.thick_solenoid`.

References
----------
N. Derby and S. Olbert, "Cylindrical magnets and ideal solenoids", Am. J. Phys.
78 (2010) 229-235, eqs. for B_rho and B_z of a finite solenoid.
R. Bulirsch, Numer. Math. 13 (1969) 305-315 (``cel``).
D. B. Montgomery, *Solenoid Magnet Design*, Wiley, 1969 (thick-winding centre
field).
L. N. Trefethen, *Approximation Theory and Approximation Practice*, SIAM, 2013,
ch. 19 (convergence of Gauss quadrature).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit, prange
from scipy.constants import mu_0

from siting.fields._elliptic import cel, ellip_bd
from siting.fields._frame import (
    as_axes,
    as_points,
    as_rows,
    as_values,
    as_vector,
    finite,
    positive_finite,
    unit_axis,
)

#: Relative distance from the current sheet (in radii) treated as on the sheet.
SHEET_TOLERANCE = 1e-12


@njit(cache=True, fastmath=False, error_model="numpy")
def _sheet_local(rho, z, a, b, b0):
    """``(B_rho, B_z)`` of a thin solenoid in its frame; ``b0 = mu0 n I / pi`` [T]."""
    if abs(rho - a) <= SHEET_TOLERANCE * a and abs(z) <= b:
        return math.nan, math.nan
    ap = a + rho
    am = a - rho
    gamma = am / ap
    g2 = gamma * gamma
    ap2 = ap * ap
    am2 = am * am
    b_rho = 0.0
    b_z = 0.0
    for sign in (1.0, -1.0):
        zs = z + sign * b
        zs2 = zs * zs
        den2 = zs2 + ap2
        inv_den = 1.0 / math.sqrt(den2)
        mc = (zs2 + am2) / den2
        kc = math.sqrt(mc)
        bb, dd = ellip_bd(mc)
        b_rho += sign * a * inv_den * (bb - dd)
        b_z += sign * zs * inv_den * cel(kc, g2, 1.0, gamma)
    return b0 * b_rho, b0 * a / ap * b_z


@njit(inline="always", cache=True)
def _cylindrical(points, i, centers, axes, j):
    """Axial coordinate, radial vector and its length of point ``i`` about source ``j``."""
    dx = points[i, 0] - centers[j, 0]
    dy = points[i, 1] - centers[j, 1]
    dz = points[i, 2] - centers[j, 2]
    z = dx * axes[j, 0] + dy * axes[j, 1] + dz * axes[j, 2]
    ux = dx - z * axes[j, 0]
    uy = dy - z * axes[j, 1]
    uz = dz - z * axes[j, 2]
    return z, ux, uy, uz, math.sqrt(ux * ux + uy * uy + uz * uz)


@njit(inline="always", cache=True)
def _solenoids_at(points, i, centers, axes, radii, half_lengths, b0, out):
    """Sum of the ``k`` sheets' fields at point ``i``, written to ``out[i]``."""
    bx = 0.0
    by = 0.0
    bz = 0.0
    for j in range(centers.shape[0]):
        wx, wy, wz = axes[j, 0], axes[j, 1], axes[j, 2]
        z, ux, uy, uz, rho = _cylindrical(points, i, centers, axes, j)
        b_rho, b_ax = _sheet_local(rho, z, radii[j], half_lengths[j], b0[j])
        s = b_rho / rho if rho > 0.0 else 0.0 * b_rho
        bx += s * ux + b_ax * wx
        by += s * uy + b_ax * wy
        bz += s * uz + b_ax * wz
    out[i, 0] = bx
    out[i, 1] = by
    out[i, 2] = bz


@njit(parallel=True, cache=True, fastmath=False, error_model="numpy")
def _solenoids_kernel(points, centers, axes, radii, half_lengths, b0):
    """Sum of ``k`` thin-solenoid fields at ``n`` points."""
    out = np.empty((points.shape[0], 3))
    for i in prange(points.shape[0]):
        _solenoids_at(points, i, centers, axes, radii, half_lengths, b0, out)
    return out


@njit(cache=True, fastmath=False, error_model="numpy")
def _solenoids_kernel_serial(points, centers, axes, radii, half_lengths, b0):
    """:func:`_solenoids_kernel` on one thread, for small calls."""
    out = np.empty((points.shape[0], 3))
    for i in range(points.shape[0]):
        _solenoids_at(points, i, centers, axes, radii, half_lengths, b0, out)
    return out


#: Below this many solenoid-points a call runs on one thread (see loop.py).
PARALLEL_MIN_WORK = 1 << 13


def solenoids_field(points, centers, axes, radii, lengths, ampere_turns) -> np.ndarray:
    """Total field of ``k`` thin finite solenoids at ``n`` points.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points.
    centers : array_like, shape (k, 3) [m]
        Solenoid mid-points.
    axes : array_like, shape (k, 3)
        Solenoid axes (normalised here); current right-handed about them.
    radii : array_like, shape (k,) [m]
        Sheet radii, > 0.
    lengths : array_like, shape (k,) [m]
        Winding lengths, > 0.
    ampere_turns : array_like, shape (k,) [A]
        Total ``N I`` per solenoid.

    Returns
    -------
    numpy.ndarray, shape (n, 3) [T]
        NaN at points on any current sheet.

    References
    ----------
    Derby and Olbert, Am. J. Phys. 78 (2010) 229-235.
    """
    pts = as_points(points)
    c = as_rows(centers, None, "centers")
    k = c.shape[0]
    w = as_axes(axes, k)
    r = as_values(radii, k, "radii")
    if np.any(r <= 0.0):
        raise ValueError(f"radii must be > 0; got {r[r <= 0.0].tolist()}")
    ln = as_values(lengths, k, "lengths")
    if np.any(ln <= 0.0):
        raise ValueError(f"lengths must be > 0; got {ln[ln <= 0.0].tolist()}")
    nit = as_values(ampere_turns, k, "ampere_turns")
    if k == 0 or pts.shape[0] == 0:
        return np.zeros_like(pts)
    b0 = mu_0 * nit / ln / math.pi
    serial = pts.shape[0] * k < PARALLEL_MIN_WORK
    kernel = _solenoids_kernel_serial if serial else _solenoids_kernel
    return kernel(pts, c, w, r, 0.5 * ln, b0)


def solenoid_field(points, *, center, axis, radius, length, turns, current) -> np.ndarray:
    """Field of one thin finite solenoid (a uniform azimuthal current sheet).

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points.
    center : array_like, shape (3,) [m]
        Mid-point of the winding.
    axis : array_like, shape (3,)
        Axis direction; current right-handed about it.
    radius : float [m]
        Winding radius, > 0.
    length : float [m]
        Winding length, > 0.
    turns : float
        Number of turns.
    current : float [A]
        Current per turn.

    Returns
    -------
    numpy.ndarray, shape (n, 3) [T]
        NaN on the current sheet.

    References
    ----------
    Derby and Olbert, Am. J. Phys. 78 (2010) 229-235.
    """
    return Solenoid(center, axis, radius, length, turns, current).field(points)


@dataclass(frozen=True, eq=False)
class Solenoid:
    """Thin finite solenoid: ``turns`` turns spread uniformly over ``length``.

    Parameters
    ----------
    center : array_like, shape (3,) [m]
    axis : array_like, shape (3,)
    radius : float [m]
    length : float [m]
    turns : float
    current : float [A]

    References
    ----------
    Derby and Olbert, Am. J. Phys. 78 (2010) 229-235.
    """

    center: np.ndarray
    axis: np.ndarray
    radius: float
    length: float
    turns: float
    current: float

    def __post_init__(self):
        object.__setattr__(self, "center", as_vector(self.center, "center"))
        object.__setattr__(self, "axis", unit_axis(self.axis, "axis"))
        object.__setattr__(self, "radius", positive_finite(self.radius, "radius"))
        object.__setattr__(self, "length", positive_finite(self.length, "length"))
        object.__setattr__(self, "turns", finite(self.turns, "turns"))
        object.__setattr__(self, "current", finite(self.current, "current"))

    def sheets(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """``(centers, axes, radii, lengths, ampere_turns)`` for ``solenoids_field``."""
        return (
            self.center[None, :],
            self.axis[None, :],
            np.array([self.radius]),
            np.array([self.length]),
            np.array([self.turns * self.current]),
        )

    def field(self, points) -> np.ndarray:
        """B (n, 3) [T] at ``points`` (n, 3) [m]; NaN on the sheet."""
        return solenoids_field(points, *self.sheets())
