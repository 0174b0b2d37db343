"""Fitting an equivalent winding to published isogauss extents.

A shielded magnet symmetric about its mid-plane is represented, outside the
sphere that encloses its cryostat, by a few coaxial circular loops placed in
mid-plane-symmetric pairs (a loop at ``+z`` and its mirror at ``-z`` carrying
the same current).  The exterior field of such a winding is an axisymmetric
scalar-potential multipole series with odd orders only (J. D. Jackson,
*Classical Electrodynamics*, 3rd ed., 1999, sec. 3.3 and 5.5), so the model
has the symmetry the data imply, while its few parameters (radius, offset and
current of each pair) keep the field physical between the two measured
directions: it is the field of real currents, with no spurious zeros or
oscillations between the bore axis and the mid-plane.

On the bore axis and in the mid-plane the field of a mid-plane-symmetric
winding is purely axial, so with fixed loop positions and an assumed sign on
each of the two rays the fit is *linear* in the currents.  The fit uses this
to seed a non-linear least-squares polish (:func:`scipy.optimize.least_squares`)
from the best of a grid of loop positions.  The residual of each extent is
``ln|B| - ln(level)``, divided by the local logarithmic fall-off rate of the
data (``|d ln B / d ln r|``, estimated from neighbouring levels on the same
ray), which turns it to first order into the relative error in distance.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
from scipy.optimize import least_squares
from scipy.special import ellipe, ellipk, lpmv

from siting.errors import FitError, SolverError
from siting.fields._frame import as_points, as_vector, frame

MU0 = 4e-7 * np.pi  # vacuum permeability [T m / A] (pre-2019 SI value, within 1e-9)

#: Fitted loops are kept inside this fraction of the allowed sphere radius
#: (the envelope if given, else the smallest extent), off the points where the
#: model is evaluated.
LOOP_FRACTION = 0.9
#: Seed grid: loop distances from the isocentre (fractions of the allowed
#: radius) and polar angles of the loop from the bore axis [rad].
_SEED_DIST = (0.3, 0.45, 0.6, 0.75, 0.9)
_SEED_POLAR = np.radians((15.0, 35.0, 55.0, 75.0, 90.0))
#: How many of the best linear seeds are polished non-linearly.
_N_POLISH = 6
#: Below this value of the elliptic parameter m the radial field uses its
#: small-rho series (the closed form cancels catastrophically there).
_M_SERIES = 1e-8


def loop_columns_rz(radius, offset, rho, z):
    """Field of coaxial circular loops at unit current, one row per loop.

    Parameters
    ----------
    radius, offset : ndarray, shape (k,)
        Loop radii [m] and axial positions [m].
    rho, z : ndarray, shape (m,)
        Cylindrical coordinates of the points in the loops' frame [m].

    Returns
    -------
    b_rho, b_z : ndarray, shape (k, m)
        Field components per ampere [T/A].  Points on a loop give inf or NaN.

    References
    ----------
    W. R. Smythe, *Static and Dynamic Electricity*, 3rd ed., 1968, sec. 7.10;
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.5
    (complete elliptic integrals K(m), E(m) with parameter m = k^2).
    """
    a = np.asarray(radius, dtype=np.float64)[:, None]
    z0 = np.asarray(offset, dtype=np.float64)[:, None]
    rho = np.asarray(rho, dtype=np.float64)[None, :]
    zeta = np.asarray(z, dtype=np.float64)[None, :] - z0
    s2 = (a + rho) ** 2 + zeta**2
    d2 = (a - rho) ** 2 + zeta**2
    m = 4.0 * a * rho / s2
    kk = ellipk(m)
    ee = ellipe(m)
    pre = MU0 / (2.0 * np.pi * np.sqrt(s2))
    with np.errstate(divide="ignore", invalid="ignore"):
        b_z = pre * (kk + (a * a - rho * rho - zeta * zeta) / d2 * ee)
        b_rho = pre * zeta / rho * (-kk + (a * a + rho * rho + zeta * zeta) / d2 * ee)
    # Near the axis: B_rho = 3 mu0 I a^2 zeta rho / (4 (a^2 + zeta^2)^(5/2)) + O(rho^3)
    # (first term of the off-axis expansion; Smythe 1968, sec. 7.10).
    series = 3.0 * MU0 * a * a * zeta * rho / (4.0 * (a * a + zeta * zeta) ** 2.5)
    b_rho = np.where(m < _M_SERIES, series, b_rho)
    return b_rho, b_z


def loop_field_rz(radius, offset, current, rho, z):
    """Summed field of coaxial circular loops in cylindrical components.

    Parameters
    ----------
    radius, offset, current : ndarray, shape (k,)
        Loop radii [m], axial positions [m] and currents (ampere-turns) [A].
    rho, z : ndarray, shape (m,)
        Cylindrical coordinates of the points in the loops' frame [m].

    Returns
    -------
    b_rho, b_z : ndarray, shape (m,) [T]

    References
    ----------
    W. R. Smythe, *Static and Dynamic Electricity*, 3rd ed., 1968, sec. 7.10.
    """
    cur = np.asarray(current, dtype=np.float64)
    b_rho, b_z = loop_columns_rz(radius, offset, rho, z)
    return cur @ b_rho, cur @ b_z


def pair_field_rz(radius, offset, current, rho, z):
    """Field of mid-plane-symmetric loop pairs (loops at +offset and -offset).

    Same arguments and returns as :func:`loop_field_rz`, one entry per pair;
    each loop of a pair carries ``current``.

    References
    ----------
    W. R. Smythe, *Static and Dynamic Electricity*, 3rd ed., 1968, sec. 7.10.
    """
    radius = np.asarray(radius, dtype=np.float64)
    offset = np.asarray(offset, dtype=np.float64)
    current = np.asarray(current, dtype=np.float64)
    return loop_field_rz(
        np.concatenate([radius, radius]),
        np.concatenate([offset, -offset]),
        np.concatenate([current, current]),
        rho,
        z,
    )


def parse_extents(extents) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Validate published extents and return them sorted by rising level.

    Parameters
    ----------
    extents : sequence of Extent or (level, axial, radial)
        Levels [T] and their distances from the isocentre along the bore axis
        and across it [m].

    Returns
    -------
    level, axial, radial : ndarray, shape (n,)
        Sorted so that ``level`` rises strictly.

    Raises
    ------
    FitError
        For non-positive or non-finite numbers, duplicate levels, or extents
        that do not shrink strictly as the level rises on each axis.
    """
    rows = []
    for i, item in enumerate(extents):
        if all(hasattr(item, name) for name in ("level", "axial", "radial")):
            values = (item.level, item.axial, item.radial)
        else:
            try:
                values = tuple(item)
            except TypeError:
                values = ()
            if len(values) != 3:
                raise FitError(
                    f"extents[{i}] must be an Extent or a (level, axial, radial) "
                    f"triple; got {item!r}"
                )
        row = []
        for name, value in zip(("level", "axial", "radial"), values, strict=True):
            try:
                val = float(value)
            except (TypeError, ValueError):
                val = float("nan")
            if not np.isfinite(val) or val <= 0.0:
                raise FitError(f"extents[{i}].{name} must be finite and > 0; got {value!r}")
            row.append(val)
        rows.append(row)
    if not rows:
        raise FitError("extents must hold at least one (level, axial, radial); got none")
    data = np.array(rows)
    data = data[np.argsort(data[:, 0], kind="stable")]
    level, axial, radial = data.T
    same = np.flatnonzero(np.diff(level) == 0.0)
    if same.size:
        raise FitError(f"extents hold the level {level[same[0]]!r} T more than once")
    for name, dist in (("axial", axial), ("radial", radial)):
        bad = np.flatnonzero(np.diff(dist) >= 0.0)
        if bad.size:
            j = bad[0]
            raise FitError(
                f"{name} extents must shrink strictly as the level rises; got "
                f"{dist[j]!r} m at {level[j]!r} T but {dist[j + 1]!r} m at "
                f"{level[j + 1]!r} T"
            )
    return level, axial, radial


def falloff_rates(level: np.ndarray, dist: np.ndarray) -> np.ndarray:
    """Local rate ``|d ln B / d ln r|`` at each extent of one ray, from the data.

    The mean of the rates of the adjacent intervals (one-sided at the ends);
    3 (a dipole's) when only one level is given.
    """
    if len(level) == 1:
        return np.array([3.0])
    seg = np.log(level[1:] / level[:-1]) / np.log(dist[:-1] / dist[1:])
    left = np.concatenate([seg[:1], seg])
    right = np.concatenate([seg, seg[-1:]])
    return 0.5 * (left + right)


def _pair_columns(radius, offset, rho_d, z_d) -> np.ndarray:
    """Axial field per ampere of each pair at the data points, shape (k, m) [T/A].

    On the axis and in the mid-plane a mid-plane-symmetric pair's field is
    purely axial, so this is the whole field there.
    """
    k = len(radius)
    _, b_z = loop_columns_rz(
        np.concatenate([radius, radius]), np.concatenate([offset, -offset]), rho_d, z_d
    )
    return b_z[:k] + b_z[k:]


def _projected(columns, scale, weight):
    """Least-squares currents for fixed loops and the weighted residual left.

    Minimises ``sum_i (weight_i * (B_i / scale_i - 1))^2`` over the currents,
    where ``scale_i`` is the signed level at data point ``i``.  ``columns``
    has shape (..., k, m); returns currents (..., k) and residuals (..., m).
    """
    mat = np.swapaxes(columns, -1, -2) * (weight / scale)[:, None]  # (..., m, k)
    gram = np.swapaxes(mat, -1, -2) @ mat
    ridge = 1e-13 * np.trace(gram, axis1=-2, axis2=-1)[..., None, None]
    gram = gram + ridge * np.eye(gram.shape[-1])
    cur = np.linalg.solve(gram, np.swapaxes(mat, -1, -2) @ weight[:, None])[..., 0]
    return cur, (mat @ cur[..., None])[..., 0] - weight


def fit_winding(level, axial, radial, *, pairs: int, r_allow: float):
    """Fit ``pairs`` mid-plane-symmetric loop pairs to sorted, validated extents.

    Three stages: (1) every combination of ``pairs`` loop positions from a
    grid, with the currents solved linearly for each sign pattern (field
    along +axis on the axis, either sign in the mid-plane); (2) a variable
    projection polish of the best few: loop positions non-linear, currents
    re-solved linearly at each step; (3) a final least-squares polish of all
    parameters on the logarithmic residual ``(ln|B| - ln level) / rate``.

    Parameters
    ----------
    level, axial, radial : ndarray, shape (n,)
        Output of :func:`parse_extents` [T], [m], [m].
    pairs : int
        Number of loop pairs; 3 unknowns each (distance, polar angle, current).
    r_allow : float
        Loops are kept within ``LOOP_FRACTION * r_allow`` of the isocentre [m].

    Returns
    -------
    radius, offset, current : ndarray, shape (pairs,)
        Loop radii [m], offsets along the axis [m] (each pair at +/- offset)
        and ampere-turns of each loop [A].

    References
    ----------
    G. H. Golub, V. Pereyra, "The differentiation of pseudo-inverses and
    nonlinear least squares problems whose variables separate", SIAM J. Numer.
    Anal. 10, 1973, 413-432 (variable projection); trust-region reflective
    least squares of :func:`scipy.optimize.least_squares` (M. A. Branch,
    T. F. Coleman, Y. Li, SIAM J. Sci. Comput. 21, 1999, 1-23).
    """
    n = len(level)
    if 2 * n < 3 * pairs:
        raise FitError(
            f"extents give {2 * n} data ({n} levels x axial and radial) but {pairs} "
            f"loop pair(s) need {3 * pairs} unknowns (radius, offset, current each); "
            f"give at least {int(np.ceil(1.5 * pairs))} levels or fewer pairs"
        )
    r_max = LOOP_FRACTION * r_allow
    rho_d = np.concatenate([np.zeros(n), radial])
    z_d = np.concatenate([axial, np.zeros(n)])
    target = np.concatenate([level, level])
    weight = 1.0 / np.concatenate([falloff_rates(level, axial), falloff_rates(level, radial)])
    on_mid = rho_d > 0.0

    # (1) grid of loop positions, currents solved linearly
    dist, polar = np.meshgrid(np.array(_SEED_DIST), _SEED_POLAR, indexing="ij")
    dist, polar = dist.ravel(), polar.ravel()
    cols = _pair_columns(r_max * dist * np.sin(polar), r_max * dist * np.cos(polar), rho_d, z_d)
    combos = np.array(list(combinations(range(len(dist)), pairs)))
    seeds = []
    for sign in (1.0, -1.0):
        scale = target * np.where(on_mid, sign, 1.0)
        _, res = _projected(cols[combos], scale, weight)
        cost = np.sum(res**2, axis=1)
        cost = np.where(np.isfinite(cost), cost, np.inf)
        seeds += [(cost[c], combos[c], scale) for c in np.argsort(cost)[:_N_POLISH]]
    seeds.sort(key=lambda item: item[0])

    def geometry(x):
        d, p = x[:pairs] * r_max, x[pairs : 2 * pairs]
        return d * np.sin(p), d * np.cos(p)

    lower = np.concatenate([np.full(pairs, 0.02), np.zeros(pairs)])
    upper = np.concatenate([np.ones(pairs), np.full(pairs, np.pi / 2)])

    # (2) variable projection on the loop positions
    best = None
    for _, combo, scale in seeds[:_N_POLISH]:

        def projected(x, scale=scale):
            _, res = _projected(_pair_columns(*geometry(x), rho_d, z_d), scale, weight)
            return np.where(np.isfinite(res), res, 1e3)

        x0 = np.clip(np.concatenate([dist[combo], polar[combo]]), lower, upper)
        sol = least_squares(projected, x0, bounds=(lower, upper), max_nfev=200 * pairs)
        if np.isfinite(sol.cost) and (best is None or sol.cost < best[0].cost):
            best = (sol, scale)
    if best is None:
        raise SolverError("the equivalent-winding fit found no finite solution")
    sol, scale = best
    cur, _ = _projected(_pair_columns(*geometry(sol.x), rho_d, z_d), scale, weight)

    # (3) all parameters on the logarithmic residual
    log_target = np.log(target)

    def log_residual(x):
        b_z = x[2 * pairs :] @ _pair_columns(*geometry(x), rho_d, z_d)
        with np.errstate(divide="ignore"):
            res = (np.log(np.abs(b_z)) - log_target) * weight
        return np.where(np.isfinite(res), res, 1e3)

    x1 = np.concatenate([sol.x, cur])
    low = np.concatenate([lower, np.full(pairs, -np.inf)])
    high = np.concatenate([upper, np.full(pairs, np.inf)])
    final = least_squares(log_residual, x1, bounds=(low, high), x_scale="jac", max_nfev=100 * pairs)
    x = final.x if final.cost <= 0.5 * np.sum(log_residual(x1) ** 2) else x1
    a, z0 = geometry(x)
    return a, z0, x[2 * pairs :]


def multipole_field(points, orders, coefficients, *, center, axis) -> np.ndarray:
    """Field of an axisymmetric exterior multipole series.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Evaluation points (beyond the sources for the series to hold).
    orders : array_like of int, shape (m,)
        Multipole orders n.
    coefficients : array_like, shape (m,) [A m^(n+1)]
        A_n in ``Phi = sum_n A_n P_n(cos theta) / r^(n+1)``, ``B = -mu0 grad Phi``.
    center : array_like, shape (3,) [m]
        Origin of the expansion.
    axis : array_like, shape (3,)
        Symmetry axis (theta = 0).

    Returns
    -------
    ndarray, shape (n, 3) [T]

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 3.3, 5.9:
    ``B_r = mu0 sum (n+1) A_n P_n / r^(n+2)``,
    ``B_theta = mu0 sum A_n P_n^1 / r^(n+2)`` with ``P_n^1 = sin(theta) P_n'``.
    """
    pts = as_points(points)
    orders = np.asarray(orders, dtype=int)
    coef = np.asarray(coefficients, dtype=np.float64)
    if orders.shape != coef.shape:
        raise ValueError("orders and coefficients must have the same shape")
    rot = frame(axis)
    loc = (pts - as_vector(center, "center")) @ rot.T
    r = np.linalg.norm(loc, axis=1)
    rho = np.hypot(loc[:, 0], loc[:, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        ct, st = loc[:, 2] / r, rho / r
        q = r[None, :] ** -(orders[:, None] + 2.0)
        p = lpmv(0, orders[:, None], ct[None, :])
        p1 = -lpmv(1, orders[:, None], ct[None, :])  # sin(theta) P_n'(cos theta)
        b_r = MU0 * np.sum(coef[:, None] * (orders[:, None] + 1) * p * q, axis=0)
        b_t = MU0 * np.sum(coef[:, None] * p1 * q, axis=0)
        b_rho = b_r * st + b_t * ct
        b_z = b_r * ct - b_t * st
        scale = np.where(rho > 0.0, b_rho / rho, 0.0)
    b_loc = np.stack([scale * loc[:, 0], scale * loc[:, 1], b_z], axis=1)
    return b_loc @ rot
