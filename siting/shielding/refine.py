"""Automatic choice of the plates' mesh density by a convergence test.

Rule
----
The graded meshes of :mod:`siting.shielding.plates` form a sequence of
levels, each with panels about ``1 / sqrt(2)`` the size of the previous one
(about twice the panels).  Starting at ``start``, the sheets are solved at
two consecutive levels and |B| (sources plus steel) is compared at the
observation points; the finer level is accepted when

    max over points of |B_k - B_(k-1)| / max(|B_k|, floor * max |B_k|)  <=  tol,

i.e. when the error of the finer level, estimated from the changes as the
tail of a geometric series (:func:`error_estimate`), is within ``tol``
(default 2 %).  The thin-sheet field converges quickly with the
panel size near the steel (the ripple of the panels' edge charges at a
distance z decays about exponentially in z / h), so the accepted, finer level
is usually well within ``tol`` of the converged field; the change is an error
estimate of the coarser level, not a bound.  The test stops at the last level
within ``max_panels`` (all sheets together) and then reports
``converged = False``.

The test solves a linear proxy of each sheet's material: constant permeability
``1 + chi_ref`` (the material's largest secant susceptibility, the
solver's own reference), one factorisation per level and no Newton
iterations.  The mesh error of the thin-sheet model is set by the geometry
(panel size against the distances to sources, observation points and rims);
the nonlinear law changes the magnetisation's level more than its shape.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.fields._frame import as_points
from siting.shielding.material import ConstantPermeability
from siting.shielding.thinsheet import Sheet, solve_sheets

#: Default tolerance of the convergence test (relative change of |B|).
TOLERANCE = 0.02


@dataclass(frozen=True)
class MeshChoice:
    """Outcome of :func:`converge_meshes`.

    Attributes
    ----------
    meshes : tuple of SheetMesh
        The accepted meshes, one per sheet.
    level : int
        Their level.
    levels, panels : tuple of int
        The levels solved and their total panel counts.
    changes : tuple of float
        Per level solved, the relative change of |B| against the previous one
        (NaN for the first).
    converged : bool
        Whether the error estimate of the last level is within ``tol``.
    tol : float
    """

    meshes: tuple
    level: int
    levels: tuple
    panels: tuple
    changes: tuple
    converged: bool
    tol: float


def relative_change(b_new, b_old, *, floor: float | None = 0.1) -> float:
    """``max |b_new - b_old| / max(|b_new|, floor * max |b_new|)`` over the points (0 if none).

    ``floor`` None: the plain ``max |b_new - b_old|`` (for values already scaled,
    e.g. |B| divided by each point's limit).
    """
    b_new, b_old = np.asarray(b_new, dtype=float), np.asarray(b_old, dtype=float)
    if b_new.size == 0:
        return 0.0
    if floor is None:
        return float(np.max(np.abs(b_new - b_old)))
    den = np.maximum(np.abs(b_new), floor * np.max(np.abs(b_new)))
    den = np.where(den > 0, den, 1.0)
    return float(np.max(np.abs(b_new - b_old) / den))


def error_estimate(changes) -> float:
    """Error of the last level from its changes: ``c_k rho / (1 - rho)``, ``rho = c_k / c_(k-1)``.

    The geometric-series (Richardson-type) tail of the changes still to come;
    with one change only (or ``rho`` below 1/2) ``rho = 1/2``, i.e. ``c_k``;
    ``inf`` when the changes do not decrease.
    """
    c = [x for x in changes if np.isfinite(x)]
    if not c:
        return float("inf")
    rho = 0.5 if len(c) < 2 or c[-2] <= 0 else max(0.5, c[-1] / c[-2])
    return float("inf") if rho >= 1 else c[-1] * rho / (1 - rho)


def proxy_field(meshes, thicknesses, materials, source, points) -> np.ndarray:
    """|B| (n,) [T] at ``points`` with each sheet's linear proxy material (module docstring)."""
    sheets = [Sheet(m, t, ConstantPermeability(1.0 + mat.chi_ref))
              for m, t, mat in zip(meshes, thicknesses, materials, strict=True)]
    pts = as_points(points)
    sol = solve_sheets(sheets, source)
    return np.linalg.norm(source.field(pts) + sol.field(pts), axis=1)


def converge_meshes(build, evaluate, *, tol: float = TOLERANCE, max_panels: int = 3000,
                    start: int = 0, max_levels: int = 8, floor: float | None = 0.1) -> MeshChoice:
    """Refine level by level until the field at the observation points settles.

    Parameters
    ----------
    build : callable
        ``build(level) -> sequence of SheetMesh`` (all sheets at that level).
    evaluate : callable
        ``evaluate(meshes) -> |B| (n,)`` at the observation points.
    tol : float
        Accepted relative change between two consecutive levels.
    max_panels : int
        Largest total panel count solved.
    start : int
        First level.
    max_levels : int
        Levels tried at most.
    floor : float or None
        Relative floor of the denominator, None for absolute changes
        (see :func:`relative_change`).

    Returns
    -------
    MeshChoice

    Raises
    ------
    ValueError
        If the first level already has more than ``max_panels`` panels.
    """
    level = start
    meshes = tuple(build(level))
    n = sum(m.n_faces for m in meshes)
    if n > max_panels:
        raise ValueError(f"the coarsest mesh has {n} panels, more than {max_panels}")
    b = evaluate(meshes)
    levels, panels, changes = [level], [n], [float("nan")]
    converged = False
    for nxt in range(start + 1, start + max_levels):
        finer = tuple(build(nxt))
        n_f = sum(m.n_faces for m in finer)
        if n_f > max_panels:
            break
        if n_f == panels[-1]:  # clipped at h_min: the same mesh
            continue
        b_f = evaluate(finer)
        change = relative_change(b_f, b, floor=floor)
        levels.append(nxt)
        panels.append(n_f)
        changes.append(change)
        meshes, b, level = finer, b_f, nxt
        if error_estimate(changes) <= tol:
            converged = True
            break
    return MeshChoice(meshes, level, tuple(levels), tuple(panels), tuple(changes), converged,
                      tol)


def probe_points(meshes, offset: float, *, count: int = 60) -> np.ndarray:
    """Up to ``count`` points per mesh at ``offset`` [m] on both sides of its panels' centroids."""
    out = []
    for m in meshes:
        idx = np.unique(np.linspace(0, m.n_faces - 1, min(count // 2, m.n_faces)).astype(int))
        c, nrm = m.centroids[idx], m.normals[idx]
        out += [c + offset * nrm, c - offset * nrm]
    return np.vstack(out) if out else np.zeros((0, 3))


def choose_meshes(build, thicknesses, materials, source, points, *, limits=None,
                  tol: float = TOLERANCE, max_panels: int = 3000) -> MeshChoice:
    """Convergence test of sheets' meshes on the linear proxy (module docstring).

    Parameters
    ----------
    build : callable
        ``build(level, points) -> sequence of SheetMesh`` graded toward ``points``.
    thicknesses, materials : sequence
        Per sheet: thickness [m] and material law.
    source : object with ``field``
        The applied field.
    points : array_like, shape (n, 3) [m]
        Observation points.
    limits : array_like, shape (n,) [T], optional
        The change is measured as ``max |dB| / limit``; without limits as
        :func:`relative_change` with floor 0.1.
    tol, max_panels
        As for :func:`converge_meshes`.
    """
    pts = as_points(points)
    lim = None if limits is None else np.asarray(limits, dtype=float)

    def evaluate(meshes):
        b = proxy_field(meshes, thicknesses, materials, source, pts)
        return b if lim is None else b / lim

    return converge_meshes(lambda k: build(k, pts), evaluate, tol=tol, max_panels=max_panels,
                           floor=0.1 if lim is None else None)
