"""Local maximisation of |B| over rooms' band faces and walls: a pattern search.

Every start of every room is refined at once; each iteration is one vectorised
call into the field model, and the bookkeeping around it (trial points, the
room geometry, the moves) is compiled with numba, so that the iterations cost
little besides the field itself.

A start is either on a *face* (coordinates (x, y) on a horizontal band face at
a fixed height, kept inside the room's outline) or on a *wall* (coordinates
(arc length along the outline, z), z bounded to the band).  Each iteration
polls ``x +- c * step * base`` along both coordinates at the scales c in
``POLL_SCALES``.  A face trial that leaves the outline is moved back along its
ray from x to where it first crosses the outline (a wall, where the maximum
often lies by the maximum principle); the box bounds clip the rest.  A start
moves to its best improvement and keeps its step (doubles it when the longest
step improved); without improvement its step shrinks by ``SHRINK``, and each
coordinate whose two shortest polls both came out lower gets the vertex of the
parabola through the three values as a guess, tried with the next polls (a
search step: it may move the start but never keeps its step from shrinking).
A start stops when its step is below ``STEP_TOL``.

This is a generalised pattern search (V. Torczon, "On the convergence of
pattern search algorithms", SIAM J. Optim. 7, 1997) with the parabolic step
of R. P. Brent, *Algorithms for Minimization without Derivatives*, 1973,
ch. 5 (chapter from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numba
import numpy as np
import shapely

#: A start stops when its step falls below this, in units of its base step.
STEP_TOL = 1e-2
#: Step lengths polled at once, as fractions of a start's step, and the factor
#: by which the step shrinks when none improves.
POLL_SCALES, SHRINK = (1.0, 0.5, 0.25), 0.125
#: Factor by which the step grows when the longest polled step improved.
GROW = 2.0
#: Iteration cap (reached only if the model misbehaves).
MAX_ITER = 200

_D = 2  # coordinates per start
_DIRS = np.concatenate(
    [np.concatenate([np.eye(_D), -np.eye(_D)]) * c for c in POLL_SCALES]
)  # (12, 2): for each scale, +x, +y, -x, -y
_NEAR = 2 * _D * (len(POLL_SCALES) - 1)  # first of the shortest polls


@dataclass(frozen=True, eq=False)
class Outlines:
    """The outlines of many rooms as one set of segments, by arc length."""

    start: np.ndarray  # (s, 2) segment start points
    vec: np.ndarray  # (s, 2) segment vectors
    s0: np.ndarray  # (s,) site-wide arc length at segment start
    first: np.ndarray  # (r,) first segment of each room
    last: np.ndarray  # (r,) last segment of each room
    perimeter: np.ndarray  # (r,)

    @classmethod
    def of(cls, polys):
        """From shapely Polygons (their exteriors; zero-length segments dropped)."""
        polys = np.asarray(polys, dtype=object)
        ring, room = shapely.get_coordinates(shapely.get_exterior_ring(polys), return_index=True)
        v = ring[1:] - ring[:-1]
        keep = (room[1:] == room[:-1]) & (np.hypot(v[:, 0], v[:, 1]) > 0)
        start, vec, seg_room = ring[:-1][keep], v[keep], room[:-1][keep]
        first = np.searchsorted(seg_room, np.arange(len(polys)), side="left").astype(np.int64)
        last = np.searchsorted(seg_room, np.arange(len(polys)), side="right").astype(np.int64) - 1
        length = np.hypot(*vec.T)
        s0 = np.concatenate([[0.0], np.cumsum(length)[:-1]])
        perim = s0[last] + length[last] - s0[first]
        return cls(start, vec, s0, first, last, perim)

    @property
    def arrays(self):
        return self.start, self.vec, self.s0, self.first, self.last, self.perimeter


@numba.njit(cache=True, inline="always")
def _outline_point(start, vec, s0, first, last, perim, r, s):
    g = s - perim[r] * math.floor(s / perim[r]) + s0[first[r]]
    lo, hi = first[r], last[r]
    while lo < hi:  # the last segment of the room starting at or before g
        mid = (lo + hi + 1) // 2
        if s0[mid] <= g:
            lo = mid
        else:
            hi = mid - 1
    t = (g - s0[lo]) / math.hypot(vec[lo, 0], vec[lo, 1])
    t = min(max(t, 0.0), 1.0)
    return start[lo, 0] + t * vec[lo, 0], start[lo, 1] + t * vec[lo, 1]


@numba.njit(cache=True, inline="always")
def _inside(start, vec, first, last, r, px, py):
    """Even-odd crossing test of (px, py) against room r's outline."""
    c = False
    for e in range(first[r], last[r] + 1):
        ay, by = start[e, 1], start[e, 1] + vec[e, 1]
        if (ay > py) != (by > py):
            xc = start[e, 0] + (py - ay) * vec[e, 0] / vec[e, 1]
            if px < xc:
                c = not c
    return c


@numba.njit(cache=True, inline="always")
def _first_exit(start, vec, first, last, r, x, y, dx, dy):
    """Fraction of the move (x, y) -> (x + dx, y + dy) before it first crosses
    room r's outline; crossings at the move's own start (x on the outline) do
    not count, so a move from a wall into the room is free."""
    tmin = 1.0
    for e in range(first[r], last[r] + 1):
        ex, ey = vec[e, 0], vec[e, 1]
        den = dx * ey - dy * ex
        if den == 0.0:
            continue
        rx, ry = start[e, 0] - x, start[e, 1] - y
        t = (rx * ey - ry * ex) / den
        u = (rx * dy - ry * dx) / den
        if 1e-12 < t < tmin and 0.0 <= u <= 1.0:
            tmin = t
    return tmin


@numba.njit(cache=True, inline="always")
def _place(outl, is_face, r, z_face, u0, u1):
    """Absolute point (x, y, z) of a start of room r at coordinates (u0, u1), and
    its feasibility (a face point must lie inside the outline)."""
    start, vec, s0, first, last, perim = outl
    if is_face:
        return _inside(start, vec, first, last, r, u0, u1), u0, u1, z_face
    px, py = _outline_point(start, vec, s0, first, last, perim, r, u0)
    return True, px, py, u1


@numba.njit(cache=True)
def _points(outl, face, room, face_z, u, xyz, ok):
    for i in range(u.shape[0]):
        ok[i], xyz[i, 0], xyz[i, 1], xyz[i, 2] = _place(
            outl, face[i], room[i], face_z[i], u[i, 0], u[i, 1]
        )


@numba.njit(cache=True)
def _poll(
    outl, face, room, face_z, x, step, base, lo, hi, guess, act, n_act, dirs, trial, pts, slot
):
    """The trials of the starts ``act[:n_act]``: ``trial[a, j]`` their
    coordinates, and the absolute points of those that moved and are feasible
    packed into ``pts``, ``slot[a, j]`` their row there (-1: not evaluated).
    Returns the number of points."""
    start, vec, _, first, last, _ = outl
    k = dirs.shape[0] + 1
    cnt = 0
    for a in range(n_act):
        i = act[a]
        for j in range(k):
            if j < k - 1:
                t0 = x[i, 0] + dirs[j, 0] * step[i] * base[i, 0]
                t1 = x[i, 1] + dirs[j, 1] * step[i] * base[i, 1]
            else:
                t0, t1 = guess[i, 0], guess[i, 1]
            t0 = min(max(t0, lo[i, 0]), hi[i, 0])
            t1 = min(max(t1, lo[i, 1]), hi[i, 1])
            if face[i]:
                dx, dy = t0 - x[i, 0], t1 - x[i, 1]
                f = _first_exit(start, vec, first, last, room[i], x[i, 0], x[i, 1], dx, dy)
                if f < 1.0:
                    f *= 1.0 - 1e-9
                    t0, t1 = x[i, 0] + f * dx, x[i, 1] + f * dy
            trial[a, j, 0], trial[a, j, 1] = t0, t1
            moved = t0 != x[i, 0] or t1 != x[i, 1]
            ok, px, py, pz = _place(outl, face[i], room[i], face_z[i], t0, t1)
            if moved and ok:
                pts[cnt, 0], pts[cnt, 1], pts[cnt, 2] = px, py, pz
                slot[a, j] = cnt
                cnt += 1
            else:
                slot[a, j] = -1
    return cnt


@numba.njit(cache=True)
def _advance(outl, face, room, face_z, x, f, step, base, lo, hi, guess, act, n_act, dirs,
             trial, pts, slot, v, vals, nan_seen, step_tol, near, n_long, grow, shrink):
    """One iteration after the field call: the values ``v`` of the packed
    points back to their starts (NaN: ``nan_seen``, and counted as -inf), the
    moves (:func:`_update`), the starts still active packed into ``act``, and
    their next trials (:func:`_poll`).  Returns (starts active, points)."""
    k = dirs.shape[0] + 1
    for a in range(n_act):
        i = act[a]
        for j in range(k):
            s = slot[a, j]
            val = -np.inf
            if s >= 0:
                val = v[s]
                if math.isnan(val):
                    nan_seen[i] = True
                    val = -np.inf
            vals[a, j] = val
    _update(x, f, step, guess, act[:n_act], trial, vals, near, n_long, grow, shrink)
    m = 0
    for a in range(n_act):
        if step[act[a]] > step_tol:
            act[m] = act[a]
            m += 1
    cnt = _poll(outl, face, room, face_z, x, step, base, lo, hi, guess, act, m, dirs,
                trial, pts, slot)
    return m, cnt


@numba.njit(cache=True)
def _update(x, f, step, guess, act, trial, vals, near, n_long, grow, shrink):
    k = vals.shape[1]
    for a in range(act.size):
        i = act[a]
        best = 0
        for j in range(1, k):
            if vals[a, j] > vals[a, best]:
                best = j
        bv = vals[a, best]
        guess[i, 0], guess[i, 1] = x[i, 0], x[i, 1]
        if bv > f[i]:
            x[i, 0], x[i, 1] = trial[a, best, 0], trial[a, best, 1]
            f[i] = bv
            if best < n_long:
                step[i] *= grow
            elif best == k - 1:  # the guess: a search step, the poll failed
                step[i] *= shrink
            continue
        step[i] *= shrink
        for c in range(2):  # the parabola through the two shortest polls and x
            jp, jm = near + c, near + 2 + c
            da, db = x[i, c] - trial[a, jm, c], trial[a, jp, c] - x[i, c]
            fa, fb = vals[a, jm], vals[a, jp]
            if da > 0 and db > 0 and math.isfinite(fa) and math.isfinite(fb):
                den = da * (f[i] - fb) + db * (f[i] - fa)
                if den > 0:
                    shift = 0.5 * (db * db * (f[i] - fa) - da * da * (f[i] - fb)) / den
                    guess[i, c] += min(max(shift, -da), db)


def search(magnitude, outlines: Outlines, face, room, face_z, x0, base, lo, hi):
    """Maximise |B| from many starts at once (method: module docstring).

    Parameters
    ----------
    magnitude : callable(points (N, 3) [m]) -> (N,) [T]
        The field model; NaN where undefined.
    outlines : Outlines
        Every room's outline.
    face : ndarray of bool, shape (n,)
        True for a face start, False for a wall start.
    room : ndarray of int, shape (n,)
        Each start's room (index into ``outlines``).
    face_z : ndarray, shape (n,) [m]
        Height of a face start's band face (ignored for walls).
    x0, base, lo, hi : ndarray, shape (n, 2)
        Starts, initial steps and bounds, in the starts' own coordinates.

    Returns
    -------
    u : ndarray, shape (n, 2)
        Final coordinates.
    xyz : ndarray, shape (n, 3) [m]
        Their absolute points.
    f : ndarray, shape (n,) [T]
        |B| there (-inf where the start never had a valid value).
    nan_seen : ndarray of bool, shape (n,)
        True where a trial of the start hit an undefined value.
    """
    outl = outlines.arrays
    face = np.ascontiguousarray(face, dtype=np.bool_)
    room = np.ascontiguousarray(room, dtype=np.int64)
    face_z = np.ascontiguousarray(face_z, dtype=np.float64)
    x = np.array(x0, dtype=np.float64).reshape(-1, 2)
    base, lo, hi = (np.ascontiguousarray(v, dtype=np.float64) for v in (base, lo, hi))
    n = len(x)
    xyz = np.empty((n, 3))
    ok = np.empty(n, dtype=np.bool_)
    _points(outl, face, room, face_z, x, xyz, ok)
    f = np.full(n, -np.inf)
    if ok.any():
        f[ok] = magnitude(xyz[ok])
    nan_seen = np.isnan(f)
    f[nan_seen] = -np.inf
    step = np.where(np.isfinite(f), 1.0, 0.0)
    guess = x.copy()
    k = len(_DIRS) + 1
    act = np.flatnonzero(step > STEP_TOL)
    n_act = act.size
    trial, slot = np.empty((n_act, k, 2)), np.empty((n_act, k), dtype=np.int64)
    pts, vals = np.empty((n_act * k, 3)), np.empty((n_act, k))
    cnt = _poll(outl, face, room, face_z, x, step, base, lo, hi, guess, act, n_act, _DIRS,
                trial, pts, slot)
    for _ in range(MAX_ITER):
        if n_act == 0:
            break
        v = np.asarray(magnitude(pts[:cnt]), dtype=np.float64)
        n_act, cnt = _advance(outl, face, room, face_z, x, f, step, base, lo, hi, guess, act,
                              n_act, _DIRS, trial, pts, slot, v, vals, nan_seen, STEP_TOL,
                              _NEAR, 2 * _D, GROW, SHRINK)
    _points(outl, face, room, face_z, x, xyz, ok)
    return x, xyz, f, nan_seen
