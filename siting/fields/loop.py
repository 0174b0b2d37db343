"""Circular current loop and thin N-turn coil: exact field with elliptic integrals.

For a loop of radius ``a`` in the plane ``z = 0`` of its own frame, carrying
``N I`` ampere-turns, and a point at cylindrical ``(rho, z)``, Simpson et al.
(2001) give, with ``alpha^2 = (a - rho)^2 + z^2``, ``beta^2 = (a + rho)^2 + z^2``,
``m = k^2 = 1 - alpha^2 / beta^2`` and ``C = mu0 N I / pi``,

    B_rho = C z / (2 alpha^2 beta rho) [(a^2 + r^2) E(m) - alpha^2 K(m)],
    B_z   = C   / (2 alpha^2 beta)     [(a^2 - r^2) E(m) + alpha^2 K(m)].

Both brackets cancel badly in places (the radial one near the axis, the axial
one far from the loop), so they are rewritten exactly with the associate
integrals ``B = (E - mc K) / m`` and ``D = (K - E) / m`` (``mc = 1 - m``):

    B_z       = C a [(a - rho) B + (a + rho) mc D] / (alpha^2 beta),
    B_rho/rho = 8 C a^2 z g(m) / (alpha^2 beta^3),
    g(m)      = ((1 - m/2) E - (1 - m) K) / m^2 = (B - mc D) / (2 m),

with ``g`` from its power series for small ``m`` (``g(0) = 3 pi / 32``), so
``B_rho / rho`` is finite on the axis and the field at the centre is exactly
``mu0 N I / (2 a)``.  ``m = 4 a rho / beta^2`` and ``mc = alpha^2 / beta^2``
are formed directly, never as ``1 - `` the other, so no rounding can push ``m``
past 1 near the wire.  Globally ``B = (B_rho/rho) d_perp + B_z w``, where ``w``
is the unit axis and ``d_perp`` the point's offset perpendicular to it: no
in-plane basis is needed.

Points within ``WIRE_TOLERANCE * a`` of the wire (the thin-wire field diverges
like ``1/distance`` there) return NaN in all three components.

References
----------
J. C. Simpson, J. E. Lane, C. D. Immer and R. C. Youngquist, "Simple analytic
expressions for the magnetic field of a circular current loop", NASA Technical
Report, NASA Kennedy Space Center, 2001, eqs. for B_x, B_y, B_z.
R. Bulirsch, Numer. Math. 13 (1969) 305-315 (complete elliptic integrals).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit, prange
from scipy.constants import mu_0

from siting.fields._elliptic import (
    BRACKET_SERIES_MAX_M,
    CEL_TOLERANCE,
    MAX_ITERATIONS,
    bracket_series,
)
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

#: Distance from the wire, relative to the radius, below which the field is NaN.
WIRE_TOLERANCE = 1e-12

_MU0_OVER_PI = mu_0 / math.pi
_HALF_PI = 0.5 * math.pi


#: Points per block: the kernel runs each loop over a block of points in
#: branch-free passes over a (_ROWS, _BLOCK) scratch array, which the compiler
#: turns into SIMD code and which stays in the L1 cache.
_BLOCK = 128
#: The Bulirsch iteration runs until the slowest lane of a block (the smallest
#: ``mc``: the iteration count decreases monotonically with ``mc``) passes
#: the convergence test; converged lanes are unchanged by further steps.
_MAX_ITER = MAX_ITERATIONS
#: ``mc`` used inside the iteration is clamped from below so that lanes on
#: the wire (which return NaN) cannot stall it.
_MC_FLOOR = WIRE_TOLERANCE**2 / 16.0
# rows of the scratch array
_PX, _PY, _PZ, _Z, _RHO, _AL2, _IB2, _BETA, _M, _MC = range(10)
_QC, _E, _EM, _P, _A1, _B1, _A2, _B2, _BX, _BY, _BZ = range(10, 21)
_ROWS = 21


@njit(cache=True, fastmath=False, error_model="numpy", inline="always")
def _loop_block(points, start, size, s, centers, axes, radii, coef, out):
    """Add the ``k`` loops' field at ``points[start:start + size]`` into ``out``.

    ``s`` is the (_ROWS, _BLOCK) scratch array; every pass is an innermost loop
    over the block's lanes with unit-stride rows, so it compiles to SIMD code.
    """
    k = centers.shape[0]
    tol2_rel = WIRE_TOLERANCE * WIRE_TOLERANCE
    for row in (_BX, _BY, _BZ):
        for l in range(size):
            s[row, l] = 0.0
    for l in range(size):  # structure-of-arrays copy: unit-stride rows
        s[_PX, l] = points[start + l, 0]
        s[_PY, l] = points[start + l, 1]
        s[_PZ, l] = points[start + l, 2]
    for j in range(k):
        cx = centers[j, 0]
        cy = centers[j, 1]
        cz = centers[j, 2]
        wx = axes[j, 0]
        wy = axes[j, 1]
        wz = axes[j, 2]
        a = radii[j]
        c = coef[j]
        tol2 = tol2_rel * a * a
        # pass 1: geometry in the loop's frame
        for l in range(size):
            dx = s[_PX, l] - cx
            dy = s[_PY, l] - cy
            dz = s[_PZ, l] - cz
            z = dx * wx + dy * wy + dz * wz
            ux = dx - z * wx
            uy = dy - z * wy
            uz = dz - z * wz
            rho = math.sqrt(ux * ux + uy * uy + uz * uz)
            d_m = a - rho
            d_p = a + rho
            z2 = z * z
            alpha2 = d_m * d_m + z2
            beta2 = d_p * d_p + z2
            inv_b2 = 1.0 / beta2
            mcl = alpha2 * inv_b2
            q0 = math.sqrt(max(mcl, _MC_FLOOR))
            s[_Z, l] = z
            s[_RHO, l] = rho
            s[_AL2, l] = alpha2
            s[_IB2, l] = inv_b2
            s[_BETA, l] = math.sqrt(beta2)
            s[_M, l] = 4.0 * a * rho * inv_b2
            s[_MC, l] = mcl
            s[_QC, l] = q0
            s[_E, l] = q0
            s[_EM, l] = 1.0
            s[_P, l] = 1.0
            s[_A1, l] = 1.0
            s[_B1, l] = 0.0
            s[_A2, l] = 0.0
            s[_B2, l] = 1.0
        worst = 0
        for l in range(1, size):
            if s[_MC, l] < s[_MC, worst]:
                worst = l
        # pass 2: Bulirsch's cel iteration for B and D, all lanes in step
        for _ in range(_MAX_ITER):
            done = abs(s[_EM, worst] - s[_QC, worst]) <= s[_EM, worst] * CEL_TOLERANCE
            for l in range(size):
                inv = 1.0 / s[_P, l]
                g = s[_E, l] * inv
                f1 = s[_A1, l]
                s[_A1, l] = f1 + s[_B1, l] * inv
                s[_B1, l] = 2.0 * (s[_B1, l] + f1 * g)
                f2 = s[_A2, l]
                s[_A2, l] = f2 + s[_B2, l] * inv
                s[_B2, l] = 2.0 * (s[_B2, l] + f2 * g)
                s[_P, l] = g + s[_P, l]
                em_new = s[_QC, l] + s[_EM, l]
                s[_EM, l] = em_new
                q_new = 2.0 * math.sqrt(s[_E, l])
                s[_QC, l] = q_new
                s[_E, l] = q_new * em_new
            if done:
                break
        # pass 3: field components, accumulated over the loops
        for l in range(size):
            e_m = s[_EM, l]
            scale = _HALF_PI / (e_m * (e_m + s[_P, l]))
            bb = (s[_B1, l] + s[_A1, l] * e_m) * scale
            dd = (s[_B2, l] + s[_A2, l] * e_m) * scale
            m = s[_M, l]
            mcl = s[_MC, l]
            al2 = s[_AL2, l]
            rho = s[_RHO, l]
            z = s[_Z, l]
            ca_ab = c * a / (al2 * s[_BETA, l])
            b_ax = ca_ab * ((a - rho) * bb + (a + rho) * mcl * dd)
            g_series = bracket_series(m)
            g_direct = (bb - mcl * dd) / (2.0 * m)
            g = g_series if m < BRACKET_SERIES_MAX_M else g_direct
            b_rad = 8.0 * ca_ab * a * z * g * s[_IB2, l]
            on_wire = al2 <= tol2
            b_rad = math.nan if on_wire else b_rad
            b_ax = math.nan if on_wire else b_ax
            ux = s[_PX, l] - cx - z * wx
            uy = s[_PY, l] - cy - z * wy
            uz = s[_PZ, l] - cz - z * wz
            s[_BX, l] += b_rad * ux + b_ax * wx
            s[_BY, l] += b_rad * uy + b_ax * wy
            s[_BZ, l] += b_rad * uz + b_ax * wz
    for l in range(size):
        out[start + l, 0] = s[_BX, l]
        out[start + l, 1] = s[_BY, l]
        out[start + l, 2] = s[_BZ, l]


#: Blocks per parallel task (one scratch allocation per task).
_GROUP = 8


#: Below this many loop-points a call runs on one thread: starting the thread
#: pool costs more than it saves, and on a busy machine a small parallel call can
#: stall for milliseconds waiting for the second core.
PARALLEL_MIN_WORK = 1 << 15


@njit(cache=True, fastmath=False, error_model="numpy")
def _loops_group(points, ig, s, centers, axes, radii, coef, out):
    n = points.shape[0]
    n_blocks = (n + _BLOCK - 1) // _BLOCK
    for ib in range(ig * _GROUP, min((ig + 1) * _GROUP, n_blocks)):
        start = ib * _BLOCK
        _loop_block(points, start, min(_BLOCK, n - start), s, centers, axes, radii, coef, out)


@njit(parallel=True, cache=True, fastmath=False, error_model="numpy")
def _loops_kernel(points, centers, axes, radii, coef):
    """Sum of ``k`` loop fields at ``n`` points; ``coef`` = mu0 N I / pi per loop [T m]."""
    n = points.shape[0]
    out = np.empty((n, 3))
    n_groups = ((n + _BLOCK - 1) // _BLOCK + _GROUP - 1) // _GROUP
    for ig in prange(n_groups):
        s = np.empty((_ROWS, _BLOCK))
        _loops_group(points, ig, s, centers, axes, radii, coef, out)
    return out


@njit(cache=True, fastmath=False, error_model="numpy")
def _loops_kernel_serial(points, centers, axes, radii, coef):
    """:func:`_loops_kernel` on one thread, for small calls."""
    n = points.shape[0]
    out = np.empty((n, 3))
    n_groups = ((n + _BLOCK - 1) // _BLOCK + _GROUP - 1) // _GROUP
    s = np.empty((_ROWS, _BLOCK))
    for ig in range(n_groups):
        _loops_group(points, ig, s, centers, axes, radii, coef, out)
    return out


def loops_field(points, centers, axes, radii, ampere_turns) -> np.ndarray:
    """Total field of ``k`` circular loops (thin coils) at ``n`` points.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points.
    centers : array_like, shape (k, 3) [m]
        Loop centres.
    axes : array_like, shape (k, 3)
        Loop normals (any non-zero length; normalised here).  The current
        circulates right-handed about its axis.
    radii : array_like, shape (k,) [m]
        Loop radii, > 0.
    ampere_turns : array_like, shape (k,) [A]
        ``N I`` per loop (sign gives the sense of the current).

    Returns
    -------
    numpy.ndarray, shape (n, 3) [T]
        Summed flux density; NaN (all components) at points within
        ``WIRE_TOLERANCE`` radii of any wire.

    References
    ----------
    Simpson, Lane, Immer and Youngquist, NASA technical report (2001), in the
    cancellation-free form described in this module's docstring.
    """
    pts = as_points(points)
    c = as_rows(centers, None, "centers")
    k = c.shape[0]
    w = as_axes(axes, k)
    r = as_values(radii, k, "radii")
    if np.any(r <= 0.0):
        raise ValueError(f"radii must be > 0; got {r[r <= 0.0].tolist()}")
    nit = as_values(ampere_turns, k, "ampere_turns")
    return loops_field_checked(pts, c, w, r, nit)


def loops_field_checked(points, centers, axes, radii, ampere_turns) -> np.ndarray:
    """:func:`loops_field` for arrays already checked: C-contiguous float64, ``points``
    (n, 3), ``centers`` and unit ``axes`` (k, 3), ``radii`` > 0 and ``ampere_turns`` (k,).

    For sources that validate their parameters once, so a hot loop of small calls
    does not pay for the checks again.
    """
    k = centers.shape[0]
    if k == 0 or points.shape[0] == 0:
        return np.zeros_like(points)
    kernel = _loops_kernel if points.shape[0] * k >= PARALLEL_MIN_WORK else _loops_kernel_serial
    return kernel(points, centers, axes, radii, ampere_turns * _MU0_OVER_PI)


def loop_field(points, *, center, axis, radius, current, turns=1) -> np.ndarray:
    """Field of one circular loop of ``turns`` coincident turns.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points.
    center : array_like, shape (3,) [m]
        Loop centre.
    axis : array_like, shape (3,)
        Loop normal; current right-handed about it.
    radius : float [m]
        Loop radius, > 0.
    current : float [A]
        Current per turn.
    turns : float
        Number of turns (ampere-turns = ``turns * current``).

    Returns
    -------
    numpy.ndarray, shape (n, 3) [T]
        NaN at points on the wire (see ``WIRE_TOLERANCE``).  At the centre the
        field is ``mu0 N I / (2 a)`` along the axis.

    References
    ----------
    Simpson, Lane, Immer and Youngquist, NASA technical report (2001).
    """
    loop = Loop(center, axis, radius, current, turns)
    return loop.field(points)


@dataclass(frozen=True, eq=False)
class Loop:
    """A thin circular coil: ``turns`` coincident turns of radius ``radius``.

    Parameters
    ----------
    center : array_like, shape (3,) [m]
    axis : array_like, shape (3,)
        Normal of the loop plane (normalised); current right-handed about it.
    radius : float [m]
    current : float [A]
        Current per turn.
    turns : float
        Number of turns.

    References
    ----------
    Simpson, Lane, Immer and Youngquist, NASA technical report (2001).
    """

    center: np.ndarray
    axis: np.ndarray
    radius: float
    current: float
    turns: float = 1

    def __post_init__(self):
        object.__setattr__(self, "center", as_vector(self.center, "center"))
        object.__setattr__(self, "axis", unit_axis(self.axis, "axis"))
        object.__setattr__(self, "radius", positive_finite(self.radius, "radius"))
        object.__setattr__(self, "current", finite(self.current, "current"))
        object.__setattr__(self, "turns", finite(self.turns, "turns"))

    @property
    def ampere_turns(self) -> float:
        """``turns * current`` [A]."""
        return self.turns * self.current

    @property
    def moment(self) -> np.ndarray:
        """Magnetic dipole moment ``N I pi a^2 w`` (3,) [A m^2]."""
        return self.ampere_turns * math.pi * self.radius**2 * self.axis

    def field(self, points) -> np.ndarray:
        """B (n, 3) [T] at ``points`` (n, 3) [m]; NaN on the wire."""
        return loops_field_checked(
            as_points(points),
            self.center[None, :],
            self.axis[None, :],
            np.array([self.radius]),
            np.array([self.ampere_turns]),
        )
