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

A thick winding (uniform current density between radii ``a1`` and ``a2``) is
the radial integral of thin sheets, evaluated by Gauss-Legendre quadrature with
``radial_nodes`` nodes.  For a point whose radius lies inside ``(a1, a2)`` the
interval is split at that radius, where the sheet field jumps (inside the
winding) or has its rim singularities nearby (beyond the end faces); each piece
then has an integrand analytic on the open interval.  The error falls
exponentially with the node count, at a rate set by the distance of the nearest
complex singularity (Bernstein ellipse; Trefethen 2013, ch. 19): with the
default 8 nodes it is ~1e-14 at points a winding thickness or more from the
winding's surface, inside the bore and inside the winding away from its end
faces; within 1 % of the thickness from an end face it is ~1e-3 at 8 nodes,
~1e-8 at 32 and ~1e-14 at 64.

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


@njit(parallel=True, cache=True, fastmath=False, error_model="numpy")
def _solenoids_kernel(points, centers, axes, radii, half_lengths, b0):
    """Sum of ``k`` thin-solenoid fields at ``n`` points."""
    n = points.shape[0]
    k = centers.shape[0]
    out = np.empty((n, 3))
    for i in prange(n):
        bx = 0.0
        by = 0.0
        bz = 0.0
        for j in range(k):
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
    return out


@njit(parallel=True, cache=True, fastmath=False, error_model="numpy")
def _thick_kernel(points, centers, axes, inner, outer, half_lengths, b0_density, xg, wg):
    """Sum of ``k`` thick-winding fields; ``b0_density = mu0 J / pi`` [T/m] per winding.

    Gauss-Legendre nodes ``xg`` and weights ``wg`` on [-1, 1]; for a point with
    ``a1 < rho < a2`` the radial interval is split at the point's radius.
    """
    n = points.shape[0]
    k = centers.shape[0]
    q = xg.shape[0]
    out = np.empty((n, 3))
    for i in prange(n):
        bx = 0.0
        by = 0.0
        bz = 0.0
        for j in range(k):
            wx, wy, wz = axes[j, 0], axes[j, 1], axes[j, 2]
            z, ux, uy, uz, rho = _cylindrical(points, i, centers, axes, j)
            a1 = inner[j]
            a2 = outer[j]
            hb = half_lengths[j]
            b_rho = 0.0
            b_ax = 0.0
            if a1 < rho < a2:
                lo0, hi0, lo1, hi1 = a1, rho, rho, a2
                n_int = 2
            else:
                lo0, hi0, lo1, hi1 = a1, a2, a2, a2
                n_int = 1
            for part in range(n_int):
                lo = lo0 if part == 0 else lo1
                hi = hi0 if part == 0 else hi1
                half = 0.5 * (hi - lo)
                if half <= SHEET_TOLERANCE * a2:
                    continue  # a sliver next to the point: contribution below rounding
                mid = 0.5 * (hi + lo)
                for t in range(q):
                    r = mid + half * xg[t]
                    br, bzz = _sheet_local(rho, z, r, hb, b0_density[j] * half * wg[t])
                    b_rho += br
                    b_ax += bzz
            s = b_rho / rho if rho > 0.0 else 0.0 * b_rho
            bx += s * ux + b_ax * wx
            by += s * uy + b_ax * wy
            bz += s * uz + b_ax * wz
        out[i, 0] = bx
        out[i, 1] = by
        out[i, 2] = bz
    return out


def thick_solenoids_field(
    points, centers, axes, inner_radii, outer_radii, lengths, ampere_turns, *, radial_nodes=8
) -> np.ndarray:
    """Total field of ``k`` thick windings (uniform current density) at ``n`` points.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points.
    centers : array_like, shape (k, 3) [m]
        Winding mid-points.
    axes : array_like, shape (k, 3)
        Winding axes (normalised here).
    inner_radii, outer_radii : array_like, shape (k,) [m]
        ``0 < inner < outer``.
    lengths : array_like, shape (k,) [m]
        Winding lengths, > 0.
    ampere_turns : array_like, shape (k,) [A]
        Total ``N I`` per winding.
    radial_nodes : int
        Gauss-Legendre nodes per radial interval.

    Returns
    -------
    numpy.ndarray, shape (n, 3) [T]

    References
    ----------
    Derby and Olbert (2010) for each sheet; Gauss-Legendre quadrature over the
    radius (Golub and Welsch, Math. Comp. 23, 1969, 221-230).
    """
    pts = as_points(points)
    c = as_rows(centers, None, "centers")
    k = c.shape[0]
    w = as_axes(axes, k)
    a1 = as_values(inner_radii, k, "inner_radii")
    a2 = as_values(outer_radii, k, "outer_radii")
    if np.any(a1 <= 0.0) or np.any(a2 <= a1):
        raise ValueError(
            f"radii must satisfy 0 < inner_radii < outer_radii; got {a1.tolist()}, {a2.tolist()}"
        )
    ln = as_values(lengths, k, "lengths")
    if np.any(ln <= 0.0):
        raise ValueError(f"lengths must be > 0; got {ln[ln <= 0.0].tolist()}")
    nit = as_values(ampere_turns, k, "ampere_turns")
    nodes = _check_nodes(radial_nodes)
    if k == 0 or pts.shape[0] == 0:
        return np.zeros_like(pts)
    xg, wg = np.polynomial.legendre.leggauss(nodes)
    b0_density = mu_0 * nit / (ln * (a2 - a1)) / math.pi
    return _thick_kernel(pts, c, w, a1, a2, 0.5 * ln, b0_density, xg, wg)


def _check_nodes(nodes) -> int:
    if isinstance(nodes, bool) or int(nodes) != nodes or int(nodes) < 1:
        raise ValueError(f"radial_nodes must be an integer >= 1; got {nodes!r}")
    return int(nodes)


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
    return _solenoids_kernel(pts, c, w, r, 0.5 * ln, b0)


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


@dataclass(frozen=True, eq=False)
class ThickSolenoid:
    """Multi-layer winding of uniform current density between two radii.

    Modelled as the radial integral of thin sheets by Gauss-Legendre quadrature
    with ``radial_nodes`` nodes per interval (split at the point's radius when it
    lies between the winding radii; see module docstring for the accuracy).

    Parameters
    ----------
    center : array_like, shape (3,) [m]
    axis : array_like, shape (3,)
    inner_radius, outer_radius : float [m]
        ``0 < inner_radius < outer_radius``.
    length : float [m]
    turns : float
        Total turns of the winding.
    current : float [A]
        Current per turn.
    radial_nodes : int
        Gauss-Legendre nodes over the radius, >= 1.

    References
    ----------
    G. H. Golub and J. H. Welsch, "Calculation of Gauss quadrature rules",
    Math. Comp. 23 (1969) 221-230 (nodes via ``numpy.polynomial.legendre.leggauss``).
    """

    center: np.ndarray
    axis: np.ndarray
    inner_radius: float
    outer_radius: float
    length: float
    turns: float
    current: float
    radial_nodes: int = 8

    def __post_init__(self):
        object.__setattr__(self, "center", as_vector(self.center, "center"))
        object.__setattr__(self, "axis", unit_axis(self.axis, "axis"))
        a1 = positive_finite(self.inner_radius, "inner_radius")
        a2 = positive_finite(self.outer_radius, "outer_radius")
        if not a2 > a1:
            raise ValueError(
                f"outer_radius must be > inner_radius; got inner_radius={a1!r}, outer_radius={a2!r}"
            )
        object.__setattr__(self, "inner_radius", a1)
        object.__setattr__(self, "outer_radius", a2)
        object.__setattr__(self, "length", positive_finite(self.length, "length"))
        object.__setattr__(self, "turns", finite(self.turns, "turns"))
        object.__setattr__(self, "current", finite(self.current, "current"))
        object.__setattr__(self, "radial_nodes", _check_nodes(self.radial_nodes))

    @property
    def current_density(self) -> float:
        """Winding-averaged current density ``N I / (L (a2 - a1))`` [A/m^2]."""
        return self.turns * self.current / (self.length * (self.outer_radius - self.inner_radius))

    def field(self, points) -> np.ndarray:
        """B (n, 3) [T] at ``points`` (n, 3) [m]."""
        return thick_solenoids_field(
            points,
            self.center[None, :],
            self.axis[None, :],
            np.array([self.inner_radius]),
            np.array([self.outer_radius]),
            np.array([self.length]),
            np.array([self.turns * self.current]),
            radial_nodes=self.radial_nodes,
        )
