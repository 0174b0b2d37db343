"""Field of uniformly charged straight segments (magnetic line charges).

A straight segment from A to B of length L carrying a uniform magnetic line
charge density lambda [A] (charge per length; for a sheet of thickness t with
magnetisation M it is ``t M . n``) produces, by Coulomb's law for magnetic
charge, ``H(P) = lambda / (4 pi) * int (P - X) / |P - X|^3 dl_X``.  With
``r1 = P - A``, ``r2 = P - B`` the integral is closed-form: its component
perpendicular to the segment is ``(s2/|r2| - s1/|r1|) / d`` and its component
along it ``1/|r2| - 1/|r1|`` (d the distance to the line, s_i the abscissae of
the ends), which sum to the vector

    H = lambda / (4 pi) * L (r1_hat + r2_hat) / (|r1| |r2| + r1 . r2),

directed along the bisector of the angle APB with magnitude
``lambda / (2 pi d) * sin(APB / 2)``.  This form has the same geometry as the
Biot-Savart segment formula and no cancellation off the segment; the
denominator vanishes only on the segment itself, where the field is undefined
(NaN here).

References
----------
E. Durand, *Electrostatique*, vol. I, Masson, 1964 (field of a charged segment);
D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., 2017, eq. 2.8 and
problem 2.25 (the finite line charge).
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from siting.fields._frame import as_points

_INV4PI = 1.0 / (4.0 * np.pi)
#: Relative size of ``|r1||r2| + r1.r2`` below which a point is taken as on the segment.
_ON_SEGMENT = 1e-12


@njit(cache=True, inline="always")
def _unit_kernel(px, py, pz, ax, ay, az, bx, by, bz):  # pragma: no cover - numba
    """H / lambda (3 floats, [1/m]) at P of the unit-charged segment A-B; NaN on it."""
    r1x = px - ax
    r1y = py - ay
    r1z = pz - az
    r2x = px - bx
    r2y = py - by
    r2z = pz - bz
    n1 = np.sqrt(r1x * r1x + r1y * r1y + r1z * r1z)
    n2 = np.sqrt(r2x * r2x + r2y * r2y + r2z * r2z)
    den = n1 * n2 + r1x * r2x + r1y * r2y + r1z * r2z
    if not den > _ON_SEGMENT * n1 * n2:
        return np.nan, np.nan, np.nan
    lx = bx - ax
    ly = by - ay
    lz = bz - az
    f = _INV4PI * np.sqrt(lx * lx + ly * ly + lz * lz) / den
    return (
        f * (r1x / n1 + r2x / n2),
        f * (r1y / n1 + r2y / n2),
        f * (r1z / n1 + r2z / n2),
    )


@njit(parallel=True, cache=True)
def _field_kernel(pts, a, b, lam, out):  # pragma: no cover - numba
    for i in prange(pts.shape[0]):
        hx = 0.0
        hy = 0.0
        hz = 0.0
        px = pts[i, 0]
        py = pts[i, 1]
        pz = pts[i, 2]
        for e in range(a.shape[0]):
            if lam[e] == 0.0:
                continue
            gx, gy, gz = _unit_kernel(
                px, py, pz, a[e, 0], a[e, 1], a[e, 2], b[e, 0], b[e, 1], b[e, 2]
            )
            hx += lam[e] * gx
            hy += lam[e] * gy
            hz += lam[e] * gz
        out[i, 0] = hx
        out[i, 1] = hy
        out[i, 2] = hz


@njit(parallel=True, cache=True)
def _tangential_operator(
    targets, weights, t1, t2, a, b, edge_ptr, inc_col, inc_coef, out
):  # pragma: no cover - numba
    """Fill ``out`` (n_cols, 2 n_targets), the transpose of the operator K.

    Row ``2 q + j`` of K is the component along ``t_j[q]`` of the H field,
    averaged over the points ``targets[q, s]`` with weights ``weights[q, s]``
    (points of weight 0 are skipped), of the edge charges produced by unit
    unknowns; unknown ``c`` charges edge ``e`` with ``inc_coef[k]`` for the
    incidences ``k in edge_ptr[e]:edge_ptr[e+1]`` whose ``inc_col[k] == c``.
    Writing the transpose (C order) gives K in Fortran order without a copy.
    """
    bad = 0
    for q in prange(targets.shape[0]):
        r0 = 2 * q
        for e in range(a.shape[0]):
            gx = 0.0
            gy = 0.0
            gz = 0.0
            for s in range(targets.shape[1]):
                w = weights[q, s]
                if w == 0.0:
                    continue
                hx, hy, hz = _unit_kernel(
                    targets[q, s, 0], targets[q, s, 1], targets[q, s, 2],
                    a[e, 0], a[e, 1], a[e, 2], b[e, 0], b[e, 1], b[e, 2]
                )
                gx += w * hx
                gy += w * hy
                gz += w * hz
            if np.isnan(gx):
                bad += 1
                continue
            g1 = gx * t1[q, 0] + gy * t1[q, 1] + gz * t1[q, 2]
            g2 = gx * t2[q, 0] + gy * t2[q, 1] + gz * t2[q, 2]
            for k in range(edge_ptr[e], edge_ptr[e + 1]):
                c = inc_col[k]
                out[c, r0] += g1 * inc_coef[k]
                out[c, r0 + 1] += g2 * inc_coef[k]
    return bad


def line_charge_field(points, starts, ends, density) -> np.ndarray:
    """H of uniformly charged straight segments, summed.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points.
    starts, ends : array_like, shape (m, 3) [m]
        Segment end points.
    density : array_like, shape (m,) [A]
        Magnetic line charge per unit length (``t M . n`` for a sheet edge).

    Returns
    -------
    ndarray, shape (n, 3) [A/m]
        NaN at points on a charged segment.

    References
    ----------
    E. Durand, *Electrostatique*, vol. I, Masson, 1964; D. J. Griffiths,
    *Introduction to Electrodynamics*, 4th ed., 2017, problem 2.25.
    """
    pts = as_points(points)
    a = as_points(starts)
    b = as_points(ends)
    lam = np.ascontiguousarray(density, dtype=np.float64).reshape(-1)
    if a.shape != b.shape or lam.shape != (a.shape[0],):
        raise ValueError("starts, ends (m, 3) and density (m,) must agree")
    out = np.zeros_like(pts)
    if len(pts) and len(a):
        _field_kernel(pts, a, b, lam, out)
    return out


def tangential_operator(targets, t1, t2, starts, ends, edge_ptr, inc_col, inc_coef, n_cols,
                        weights=None):
    """Dense operator K (2 n_targets, n_cols), Fortran order, from unit unknowns to in-plane H.

    Parameters
    ----------
    targets : ndarray, shape (q, 3) or (q, k, 3) [m]
        Collocation points; with k points per target the field is their
        weighted mean (``weights``).
    t1, t2 : ndarray, shape (q, 3)
        Unit tangent vectors at the targets; row ``2 i + j`` of K is along ``t_j[i]``.
    starts, ends : ndarray, shape (m, 3) [m]
        Edges.
    edge_ptr : ndarray of int64, shape (m + 1,)
        CSR pointer from edges into the incidence arrays.
    inc_col : ndarray of int64, shape (k,)
        Unknown (column) of each incidence.
    inc_coef : ndarray, shape (k,) [m]
        Line charge on the edge per unit of the unknown.
    n_cols : int
        Number of unknowns (2 per panel).
    weights : ndarray, shape (q, k), optional
        Weights of the points of each target (default: equal, ``1 / k``).

    Returns
    -------
    ndarray, shape (2 q, n_cols), Fortran-ordered [1]
    """
    pts = np.asarray(targets, dtype=np.float64)
    if pts.ndim == 2:
        pts = pts[:, None, :]
    if weights is None:
        weights = np.full(pts.shape[:2], 1.0 / pts.shape[1])
    weights = np.ascontiguousarray(weights, dtype=np.float64)
    if pts.ndim != 3 or pts.shape[2] != 3 or weights.shape != pts.shape[:2]:
        raise ValueError("targets (q, 3) or (q, k, 3) and weights (q, k) must agree")
    out = np.zeros((n_cols, 2 * len(pts)))
    bad = _tangential_operator(
        np.ascontiguousarray(pts),
        weights,
        np.ascontiguousarray(t1, dtype=np.float64),
        np.ascontiguousarray(t2, dtype=np.float64),
        np.ascontiguousarray(starts, dtype=np.float64),
        np.ascontiguousarray(ends, dtype=np.float64),
        np.ascontiguousarray(edge_ptr, dtype=np.int64),
        np.ascontiguousarray(inc_col, dtype=np.int64),
        np.ascontiguousarray(inc_coef, dtype=np.float64),
        out,
    )
    if bad:
        raise ValueError(f"{bad} collocation point(s) lie on a panel edge: sheets intersect")
    return out.T
