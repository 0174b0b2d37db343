"""Maximum of |B| over rooms' prisms: band faces and walls, refined by compass search.

In a current-free region every Cartesian component of B is harmonic, so |B|^2 is
subharmonic and its maximum over a room's prism lies on the prism's boundary
(weak maximum principle; L. C. Evans, *Partial Differential Equations*, 2nd ed.,
2010, sec. 2.2.3, section number from memory).  See :mod:`siting.analysis.checks`
for how the search is laid out; this module holds the search itself.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from scipy.ndimage import maximum_filter

from siting.analysis.grid import FloorField

#: Starts of the local search per room on the band faces and on the walls.
N_FACE_STARTS, N_WALL_STARTS = 2, 2
#: Compass search stops below this step, in grid spacings.
STEP_TOL = 1e-2


def _compass_search(evaluate, x0, base, lo, hi):
    """Maximise ``evaluate`` from many starts at once by compass search.

    Parameters
    ----------
    evaluate : callable(X (N, d), start (N,)) -> (N,)
        Gets the index of the start each row belongs to; returns -inf outside
        the feasible set and NaN where the model is undefined.
    x0 : ndarray, shape (n, d)
        The starts.
    base, lo, hi : ndarray, shape (n, d)
        Initial step and bounds per start and coordinate.

    Returns
    -------
    x : ndarray, shape (n, d)
    f : ndarray, shape (n,)
    nan_seen : ndarray of bool, shape (n,)

    Each iteration tries ``x +- step * base`` along every coordinate for all
    active starts in one ``evaluate`` call (trials that the bounds clip back
    onto ``x`` are skipped), moves each start to its best improvement or
    halves its step, until every step is below ``STEP_TOL``.
    """
    x = np.array(x0, dtype=np.float64)
    n, d = x.shape
    dirs = np.concatenate([np.eye(d), -np.eye(d)])
    f = evaluate(x, np.arange(n)) if n else np.empty(0)
    nan_seen = np.isnan(f)
    f = np.where(nan_seen, -np.inf, f)
    step = np.where(np.isfinite(f), 1.0, 0.0)
    for _ in range(200):
        act = np.flatnonzero(step > STEP_TOL)
        if act.size == 0:
            break
        trial = x[act, None, :] + dirs[None] * (step[act, None, None] * base[act, None, :])
        trial = np.clip(trial, lo[act, None, :], hi[act, None, :])
        todo = np.any(trial != x[act, None, :], axis=2)
        vals = np.full(todo.shape, -np.inf)
        owner = np.broadcast_to(act[:, None], todo.shape)
        vals[todo] = evaluate(trial[todo], owner[todo])
        bad = np.isnan(vals)
        nan_seen[act] |= bad.any(axis=1)
        vals[bad] = -np.inf
        best = np.argmax(vals, axis=1)
        bv = vals[np.arange(act.size), best]
        up = bv > f[act]
        x[act[up]] = trial[up, best[up]]
        f[act[up]] = bv[up]
        step[act[~up]] *= 0.5
    return x, f, nan_seen


@dataclass(frozen=True, eq=False)
class _Walls:
    """The outlines of many rooms as one set of segments, by arc length."""

    start: np.ndarray  # (s, 2) segment start points
    vec: np.ndarray  # (s, 2) segment vectors
    s0: np.ndarray  # (s,) global arc length at segment start
    first: np.ndarray  # (r,) first segment of each room
    last: np.ndarray  # (r,) last segment of each room
    perimeter: np.ndarray  # (r,)

    @classmethod
    def of(cls, polys):
        starts, vecs, first, last = [], [], [], []
        n = 0
        for p in polys:
            ring = np.asarray(p.exterior.coords)
            v = np.diff(ring, axis=0)
            keep = np.hypot(*v.T) > 0
            starts.append(ring[:-1][keep])
            vecs.append(v[keep])
            first.append(n)
            n += int(keep.sum())
            last.append(n - 1)
        start, vec = np.concatenate(starts), np.concatenate(vecs)
        length = np.hypot(*vec.T)
        s0 = np.concatenate([[0.0], np.cumsum(length)[:-1]])
        first, last = np.array(first), np.array(last)
        perim = s0[last] + length[last] - s0[first]
        return cls(start, vec, s0, first, last, perim)

    def xy(self, room, s):
        """Plan points (N, 2) at arc length ``s`` (N,) along the outline of ``room`` (N,)."""
        g = self.s0[self.first[room]] + np.mod(s, self.perimeter[room])
        seg = np.searchsorted(self.s0, g, side="right") - 1
        seg = np.clip(seg, self.first[room], self.last[room])
        t = (g - self.s0[seg]) / np.hypot(*self.vec[seg].T)
        return self.start[seg] + np.clip(t, 0.0, 1.0)[:, None] * self.vec[seg]

    def samples(self, spacing):
        """Arc lengths (N,) and rooms (N,) of samples at most ``spacing`` apart,
        every vertex included."""
        length = np.hypot(*self.vec.T)
        n = np.maximum(np.ceil(length / spacing).astype(int), 1)
        seg = np.repeat(np.arange(length.size), n)
        frac = (np.arange(seg.size) - np.repeat(np.cumsum(n) - n, n)) / n[seg]
        room = np.searchsorted(self.first, seg, side="right") - 1
        return self.s0[seg] + frac * length[seg] - self.s0[self.first[room]], room


def _top(values, keep, n):
    """Flat indices of the ``n`` largest ``values`` where ``keep``."""
    idx = np.flatnonzero(keep)
    return idx[np.argsort(values[idx])[::-1][:n]]


def _face_starts(polys, floor_field, nan_seen, node_best, node_at):
    """Starts (x, y, z) and rooms for the face search: the local maxima of the
    band maximum among each room's nodes, put on the nearer band face.

    ``node_best`` (r,) and ``node_at`` (r, 3) receive each room's largest node
    value at its own height: with a source inside the prism the maximum need
    not lie on the boundary, and the grid node is then the better estimate.
    """
    g = floor_field.grid
    z0, z1 = g.band
    starts, rooms = [], []
    for i, p in enumerate(polys):
        x0, y0, x1, y1 = p.bounds
        ix = slice(np.searchsorted(g.x, x0), np.searchsorted(g.x, x1, side="right"))
        iy = slice(np.searchsorted(g.y, y0), np.searchsorted(g.y, y1, side="right"))
        xx, yy = np.meshgrid(g.x[ix], g.y[iy])
        inside = shapely.intersects_xy(p, xx, yy)
        nan_seen[i] |= bool(np.any(floor_field.invalid[iy, ix] & inside))
        vals = np.where(inside, floor_field.bmax[iy, ix], -np.inf)
        vals[np.isnan(vals)] = -np.inf
        peak = vals == maximum_filter(vals, size=3, mode="constant", cval=-np.inf)
        sel = _top(vals.ravel(), peak.ravel() & (vals.ravel() > -np.inf), N_FACE_STARTS)
        if sel.size == 0:  # a room narrower than the grid: start from a point inside
            q = p.representative_point()
            starts += [(q.x, q.y, z0), (q.x, q.y, z1)]
            rooms += [i, i]
            continue
        zs = floor_field.zmax[iy, ix].ravel()[sel]
        top = sel[np.argmax(vals.ravel()[sel])]
        node_best[i] = vals.ravel()[top]
        node_at[i] = (xx.ravel()[top], yy.ravel()[top], floor_field.zmax[iy, ix].ravel()[top])
        zs = np.where(zs - z0 <= z1 - zs, z0, z1)
        starts += list(zip(xx.ravel()[sel], yy.ravel()[sel], zs, strict=True))
        rooms += [i] * sel.size
    return np.array(starts, dtype=np.float64).reshape(-1, 3), np.array(rooms, dtype=int)


def room_maxima(scene, polys, floor_field: FloorField):
    """Max |B| over each room's prism: values (r,), positions (r, 3), NaN met (r,)."""
    g = floor_field.grid
    h = g.spacing
    z0, z1 = g.band
    nr = len(polys)
    best = np.full(nr, -np.inf)
    at = np.full((nr, 3), np.nan)
    nan_seen = np.zeros(nr, dtype=bool)
    for p in polys:
        shapely.prepare(p)
    geoms = np.array(polys, dtype=object)

    # faces: starts (x, y) on the band face of each start, kept inside the outline
    node_best = np.full(nr, -np.inf)
    node_at = np.full((nr, 3), np.nan)
    fs, froom = _face_starts(polys, floor_field, nan_seen, node_best, node_at)

    # walls: samples at the grid spacing, valued by interpolating the band maximum
    # (the model itself where the stencil has undefined nodes); starts (arc length,
    # z) at the best local maxima along each outline
    walls = _Walls.of(polys)
    s, room = walls.samples(h)
    wxy = walls.xy(room, s)
    vals, wz, near_bad = floor_field.interpolate(wxy)
    if near_bad.any():
        q = np.repeat(wxy[near_bad], g.heights.size, axis=0)
        zq = np.tile(g.heights, int(near_bad.sum()))
        mag = np.asarray(scene.magnitude(np.column_stack([q, zq]))).reshape(-1, g.heights.size)
        np.logical_or.at(nan_seen, room[near_bad], np.isnan(mag).any(axis=1))
        mag = np.where(np.isnan(mag), -np.inf, mag)
        vals[near_bad] = mag.max(axis=1)
        wz[near_bad] = g.heights[np.argmax(mag, axis=1)]
    vals[np.isnan(vals)] = -np.inf
    ws, wroom = [], []
    for i in range(nr):
        cols = np.flatnonzero(room == i)
        v = vals[cols]
        peak = (v >= np.roll(v, 1)) & (v >= np.roll(v, -1)) & (v > -np.inf)
        j = cols[_top(v, peak, N_WALL_STARTS)]
        ws += list(zip(s[j], wz[j], strict=True))
        wroom += [i] * j.size
    ws = np.array(ws, dtype=np.float64).reshape(-1, 2)

    # one compass search over both kinds: rows [0, nf) faces, [nf, n) walls
    nf = len(fs)
    x0 = np.concatenate([fs[:, :2], ws])
    rooms = np.concatenate([froom, np.array(wroom, dtype=int)])
    base = np.tile([h, h], (len(x0), 1))
    base[nf:, 1] = (z1 - z0) / 2
    lo = np.full_like(x0, -np.inf)
    hi = np.full_like(x0, np.inf)
    lo[nf:, 1], hi[nf:, 1] = z0, z1

    def to_xyz(u, start):
        xyz = np.empty((len(u), 3))
        face = start < nf
        xyz[face, :2] = u[face]
        xyz[face, 2] = fs[start[face], 2]
        wall = ~face
        xyz[wall, :2] = walls.xy(rooms[start[wall]], u[wall, 0])
        xyz[wall, 2] = u[wall, 1]
        return xyz

    def evaluate(u, start):
        out = np.full(len(u), -np.inf)
        ok = (start >= nf) | shapely.intersects_xy(geoms[rooms[start]], u[:, 0], u[:, 1])
        if ok.any():
            out[ok] = scene.magnitude(to_xyz(u[ok], start[ok]))
        return out

    u, fu, bad = _compass_search(evaluate, x0, base, lo, hi)
    np.logical_or.at(nan_seen, rooms, bad)
    order = np.argsort(fu)  # ascending: the last write per room is its best
    best[rooms[order]] = fu[order]
    at[rooms[order]] = to_xyz(u, np.arange(len(u)))[order]
    # a source inside the prism (maximum not on the boundary): keep the grid node
    inner = node_best > best
    best[inner], at[inner] = node_best[inner], node_at[inner]
    best[~np.isfinite(best)] = np.nan
    return best, at, nan_seen
