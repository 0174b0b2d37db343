"""The maximum of |B| over a floor's check-height band, node by node.

Each plan node is first evaluated at every check height (as many heights per
``scene.magnitude`` call as fit in ``BAND_CALL_POINTS`` points; the scene does
its own bounded-memory chunking).  The maximum over the band can lie between
two check heights: beside a magnet whose isocentre is not at a check height,
or, far more, beside a cable that runs through the band, whose field falls as
1 / distance.  So each node's best sampled height is then refined over the
bracket formed by its neighbouring check heights, by a one-dimensional search
for the maximum (a bracketing search as in R. P. Brent, *Algorithms for
Minimization without Derivatives*, 1973, ch. 5; chapter from memory):

* a node whose best height is a band face keeps it when |B| falls from the
  face into the band (one probe ``Z_TOL / 2`` inside);
* otherwise each step tries the vertex of the parabola through the bracket's
  three points, or a golden-section point when the parabola is unusable or the
  previous step shrank the bracket by less than a fifth (Brent's safeguard
  against slow parabolic steps on a sharp peak); no trial is closer than
  ``Z_TOL / 2`` to the best point.

All nodes move together, one field call per step over the nodes not yet
finished; between calls one compiled pass (:func:`_step`) takes each node's
trial value, decides whether it has finished, proposes its next trial and
packs the unfinished nodes with their state, so the bookkeeping reads and
writes memory in order.  A node finishes when its bracket is shorter than ``Z_TOL`` (the
value is then low by at most about (Z_TOL / w)^2 / 2 for a peak of width w:
1e-4 at w = 0.1 m), when the parabola through its bracket promised, and its
vertex gave, a gain below ``RTOL`` of its value (a broad, flat maximum), when
its value and its neighbours' reach the ``ceiling``, or after ``MAX_Z_STEPS``
steps.  The search is local: a second, separate peak within the band away
from the best check height is not looked for.
"""

from __future__ import annotations

import math

import numba
import numpy as np

from siting.analysis.grid import FloorField, PlanGrid

#: Points per field call for the check heights (heights are grouped up to this).
BAND_CALL_POINTS = 2**16
#: A node's search stops when its bracket in z is shorter than this [m] ...
Z_TOL = 0.01
#: ... or when the parabola through its bracket promised, and gave, less than this
#: gain relative to its value.
RTOL = 1e-5
#: Cap on the search's steps (each one field call).
MAX_Z_STEPS = 24
_GOLD = 0.5 * (3.0 - math.sqrt(5.0))  # 0.381966...


@numba.njit(cache=True)
def _brackets(mags, zs, bx, bf, lo, lo_f, hi, hi_f, invalid, valid_any):
    """Best check height per node and its neighbours as the search bracket.

    ``mags`` (k, n); fills ``bx``/``bf`` (best height and value, the lowest
    height winning a tie; ``bf`` -inf where no height is valid), ``lo``/``hi``
    and their values (the neighbouring heights, or the best one itself at a
    band face), and the masks of nodes undefined at some height (``invalid``,
    or-ed into) and of nodes valid at some height.  Row by row, so that every
    pass reads memory in order."""
    k, n = mags.shape
    best = np.zeros(n, dtype=np.int64)
    bf[:] = -np.inf
    for j in range(k):
        row = mags[j]
        for i in range(n):
            v = row[i]
            invalid[i] |= v != v  # NaN: undefined here
            if v > bf[i]:
                bf[i], best[i] = v, j
    for i in range(n):
        valid_any[i] = bf[i] > -np.inf
        jb = best[i]
        jl, jh = max(jb - 1, 0), min(jb + 1, k - 1)
        bx[i] = zs[jb]
        lo[i], lo_f[i] = zs[jl], mags[jl, i]
        hi[i], hi_f[i] = zs[jh], mags[jh, i]


@numba.njit(cache=True, inline="always")
def _propose(xi, fxi, ai, fai, bi, fbi, last, z_tol, rtol):
    """Next trial height inside the bracket (ai, bi) around the best height xi
    (values f..), and whether the parabola through the bracket promises a gain
    below ``rtol`` of the value (converged if the trial confirms it).  ``last``
    is the bracket's length before the previous step: when that step shrank it
    by less than a fifth, a golden-section step replaces the parabola's (unless
    the parabola is flat), the safeguard of Brent's method against slow
    parabolic steps on a sharp peak.  (Scalars in and out: numba passes arrays
    to a compiled callee with reference counting, which costs more than the
    arithmetic here.)"""
    u = np.nan
    flat = False
    ok = False
    if ai < xi < bi:
        # f(x + d) ~ f(x) + c1 d + c2 d^2 through the three points: with
        # da = a - x < 0 < db = b - x and g. = f(.) - f(x), the vertex is at
        # d = (ga db^2 - gb da^2) / den, den = 2 (ga db - gb da), a maximum when
        # den < 0, with gain -c2 d^2 = -den d^2 / (2 |da db (db - da)|)
        da, db = ai - xi, bi - xi
        ga, gb = fai - fxi, fbi - fxi
        den = 2.0 * (ga * db - gb * da)
        if den < 0.0:
            d = (ga * db * db - gb * da * da) / den
            if da < d < db:
                flat = -0.5 * den * d * d <= rtol * fxi * (-da * db * (db - da))
                if flat or bi - ai < 0.8 * last:
                    u, ok = xi + d, True
    if not ok and (xi == ai or xi == bi):
        # best at a band face: probe just inside it; the face holds the maximum
        # when |B| falls from it into the band (a local test)
        u = min(max(xi + 0.5 * z_tol if xi == ai else xi - 0.5 * z_tol, ai), bi)
    else:
        if not ok:  # golden section into the longer side
            u = xi + _GOLD * (bi - xi) if bi - xi >= xi - ai else xi - _GOLD * (xi - ai)
        # keep a trial at least z_tol / 2 from x, on the side the step was going,
        # inside the bracket; a pushed trial cannot confirm a flat parabola
        if abs(u - xi) < 0.5 * z_tol:
            step = 0.5 * z_tol if u >= xi else -0.5 * z_tol
            if not ai < xi + step < bi:  # that side is already shorter: the other
                step = -step
            u = min(max(xi + step, ai), bi)
            flat = False
    return u, flat


@numba.njit(cache=True, inline="always")
def _surrounded(fx, invalid, nx, ceiling, i):
    """Whether node i's eight neighbours (those on the grid) are at or above the
    ceiling or undefined: then no line at or below the ceiling crosses a cell
    with node i in it, and node i's exact value no longer matters."""
    ny = fx.size // nx
    j0, i0 = i // nx, i % nx
    for jj in range(max(j0 - 1, 0), min(j0 + 2, ny)):
        for ii in range(max(i0 - 1, 0), min(i0 + 2, nx)):
            k = jj * nx + ii
            if not invalid[k] and not fx[k] >= ceiling:
                return False  # (node i itself is at or above the ceiling)
    return True


@numba.njit(cache=True)
def _start(
    x, fx, a, fa, b, fb, invalid, valid_any, gx, gy, ceiling, z_tol, rtol, act, state, pts, flat
):
    """The nodes to search and their first trials: ``act``, ``state`` (x, f(x),
    a, f(a), b, f(b), bracket length, plan x, plan y; node i at
    ``gx[i % nx], gy[i // nx]``), ``pts`` and ``flat`` as :func:`_step` leaves
    them; returns their count.  Searched are the nodes valid at every check
    height and not stopped at the ceiling already."""
    nx = gx.size
    k = 0
    for i in range(fx.size):
        if invalid[i] or not valid_any[i]:
            continue
        if fx[i] >= ceiling and _surrounded(fx, invalid, nx, ceiling, i):
            continue
        u, fl = _propose(x[i], fx[i], a[i], fa[i], b[i], fb[i], np.inf, z_tol, rtol)
        px, py = gx[i % nx], gy[i // nx]
        act[k], flat[k] = i, fl
        state[k, 0], state[k, 1], state[k, 2], state[k, 3] = x[i], fx[i], a[i], fa[i]
        state[k, 4], state[k, 5], state[k, 6] = b[i], fb[i], b[i] - a[i]
        state[k, 7], state[k, 8] = px, py
        pts[k, 0], pts[k, 1], pts[k, 2] = px, py, u
        k += 1
    return k


@numba.njit(cache=True)
def _finish(x, fx, valid_any):
    """NaN for the best height and value of nodes with no valid height."""
    for i in range(fx.size):
        if not valid_any[i]:
            x[i], fx[i] = np.nan, np.nan


@numba.njit(cache=True, inline="always")
def _update(u, f, flat, xi, fxi, ai, fai, bi, fbi, rtol, z_tol):
    """The bracket (ai, bi) around xi shrunk with a trial (height u, value f not
    NaN), and whether it has converged: short, or the flat parabola held, or the
    face holds the maximum.  Returns (done, xi, fxi, ai, fai, bi, fbi)."""
    face = xi == ai or xi == bi
    if face and not f > fxi:
        return True, xi, fxi, ai, fai, bi, fbi  # falls from the face into the band
    old = fxi
    if f > old:
        if u < xi:
            bi, fbi = xi, old
        else:
            ai, fai = xi, old
        xi, fxi = u, f
    elif u < xi:
        ai, fai = u, f
    else:
        bi, fbi = u, f
    done = bi - ai <= z_tol * (1 + 1e-9) or (flat and f - old <= rtol * old)
    return done, xi, fxi, ai, fai, bi, fbi


@numba.njit(cache=True)
def _step(n_act, act, state, pts, fu, flat, x, fx, z_tol, rtol, ceiling, invalid, nx):
    """One step of the search over the active nodes ``act[:n_act]`` (their
    state in the rows of ``state``, as :func:`_start` lays it out): each takes
    its trial's value ``fu[m]`` (:func:`_update`; the node's best height and
    value are written through to ``x`` and ``fx``) and finishes when converged,
    undefined at the trial or at the ceiling; the others get their next trial
    (:func:`_propose`) and are packed, in order, into ``act``, ``state``,
    ``pts`` and ``flat``.  Returns their count.
    ``nx`` nodes make a row of the grid.  (The state travels with the packed
    list so that every pass reads and writes it in order.)"""
    k = 0
    for m in range(n_act):
        i = act[m]
        xi, fxi, ai, fai = state[m, 0], state[m, 1], state[m, 2], state[m, 3]
        bi, fbi, last = state[m, 4], state[m, 5], state[m, 6]
        f = fu[m]
        if math.isnan(f):  # the model is undefined inside the band here
            invalid[i] = True
            continue
        done, xi, fxi, ai, fai, bi, fbi = _update(
            pts[m, 2], f, flat[m], xi, fxi, ai, fai, bi, fbi, rtol, z_tol
        )
        x[i], fx[i] = xi, fxi
        if done or (fxi >= ceiling and _surrounded(fx, invalid, nx, ceiling, i)):
            continue
        u, fl = _propose(xi, fxi, ai, fai, bi, fbi, last, z_tol, rtol)
        state[k, 0], state[k, 1], state[k, 2], state[k, 3] = xi, fxi, ai, fai
        state[k, 4], state[k, 5], state[k, 6] = bi, fbi, bi - ai
        px, py = state[m, 7], state[m, 8]
        state[k, 7], state[k, 8] = px, py
        act[k], flat[k] = i, fl
        pts[k, 0], pts[k, 1], pts[k, 2] = px, py, u
        k += 1
    return k


def band_samples(scene, grid: PlanGrid) -> np.ndarray:
    """|B| at every plan node at every check height, shape (k, ny * nx) [T]
    (rows: heights; columns: nodes, y outer, x inner); NaN where undefined."""
    n = grid.shape[0] * grid.shape[1]
    zs = grid.heights
    per_call = max(1, BAND_CALL_POINTS // n)
    mags = np.empty((zs.size, n))
    for k0 in range(0, zs.size, per_call):
        zk = zs[k0 : k0 + per_call]
        mags[k0 : k0 + zk.size] = np.asarray(
            scene.magnitude(grid.points(zk)), dtype=np.float64
        ).reshape(-1, n)
    return mags


def band_max(
    scene,
    grid: PlanGrid,
    *,
    refine: bool = True,
    ceiling: float = np.inf,
    samples: np.ndarray | None = None,
) -> FloorField:
    """Max of |B| over the grid's check band, node by node (method: module docstring).

    Parameters
    ----------
    scene : object with ``magnitude(points (n, 3) [m]) -> (n,) [T]``
        The field model; NaN where undefined.
    grid : PlanGrid
        Plan nodes and check heights.
    refine : bool
        Search between the check heights (default); ``False`` keeps the
        maximum over the check heights alone.
    ceiling : float [T]
        A node's search stops once its value and its eight neighbours' reach
        this (e.g. the highest level to be drawn or checked): values only
        grow, and no line at or below the ceiling crosses the cells around
        such a node, so none moves.
    samples : ndarray, shape (k, ny * nx), optional
        :func:`band_samples` of this scene and grid, if already computed.

    Returns
    -------
    FloorField
        A node where the model is undefined at a check height, or at a height
        the search tried, is ``invalid``.
    """
    ny, nx = grid.shape
    n = ny * nx
    zs = grid.heights
    mags = band_samples(scene, grid) if samples is None else samples
    x, fx = np.empty(n), np.empty(n)
    a, fa, b, fb = np.empty(n), np.empty(n), np.empty(n), np.empty(n)
    invalid, valid_any = np.zeros(n, dtype=bool), np.zeros(n, dtype=bool)
    _brackets(mags, zs, x, fx, a, fa, b, fb, invalid, valid_any)
    if refine and zs.size > 1:
        act, state = np.empty(n, dtype=np.int64), np.empty((n, 9))
        pts, flat = np.empty((n, 3)), np.empty(n, dtype=np.bool_)
        k = _start(x, fx, a, fa, b, fb, invalid, valid_any, grid.x, grid.y, ceiling,
                   Z_TOL, RTOL, act, state, pts, flat)
        for _ in range(MAX_Z_STEPS):
            if k == 0:
                break
            fu = np.asarray(scene.magnitude(pts[:k]), dtype=np.float64)
            k = _step(k, act, state, pts, fu, flat, x, fx, Z_TOL, RTOL, ceiling, invalid, nx)
    _finish(x, fx, valid_any)
    return FloorField(grid, fx.reshape(ny, nx), invalid.reshape(ny, nx), x.reshape(ny, nx))
