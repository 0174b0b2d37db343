"""Maximum of |B| over rooms' prisms: starts on the band faces and walls, then one search.

In a current-free region every Cartesian component of B is harmonic, so |B|^2 is
subharmonic and its maximum over a room's prism lies on the prism's boundary
(weak maximum principle; L. C. Evans, *Partial Differential Equations*, 2nd ed.,
2010, sec. 2.2.3, section number from memory).  See :mod:`siting.analysis.checks`
for how the search is laid out; this module finds the starts and
:mod:`siting.analysis.roomsearch` refines them.  The rooms of every floor are
searched together, so each step of the search is one vectorised
``scene.magnitude`` call for the whole site.
"""

from __future__ import annotations

import math

import numba
import numpy as np
import shapely

from siting.analysis.roomsearch import Outlines, search

#: Starts of the local search per room on the band faces and on the walls.
N_FACE_STARTS, N_WALL_STARTS = 2, 2


@numba.njit(cache=True)
def _wall_peaks(vals, room, n_top, out):
    """Indices of the ``n_top`` largest local maxima of ``vals`` along each closed
    outline (samples ordered by ``room``; a maximum is >= both neighbours and
    finite), room by room, largest first (ties: in sample order), into ``out``;
    returns their count."""
    n, k, a = vals.size, 0, 0
    top_v, top_i = np.empty(n_top), np.empty(n_top, dtype=np.int64)
    while a < n:
        b = a
        while b < n and room[b] == room[a]:
            b += 1
        top_v[:], top_i[:] = -np.inf, -1
        for t in range(a, b):
            v = vals[t]
            prev = vals[t - 1] if t > a else vals[b - 1]
            nxt = vals[t + 1] if t < b - 1 else vals[a]
            if not (v > -np.inf and v >= prev and v >= nxt):
                continue
            p = 0
            while p < n_top and not v > top_v[p]:
                p += 1
            for q in range(n_top - 1, p, -1):
                top_v[q], top_i[q] = top_v[q - 1], top_i[q - 1]
            if p < n_top:
                top_v[p], top_i[p] = v, t
        for q in range(n_top):
            if top_i[q] >= 0:
                out[k] = top_i[q]
                k += 1
        a = b
    return k


@numba.njit(cache=True)
def _room_peaks(outl, rooms, box, x, y, bmax, invalid, n_top, top_val, top_i, top_j, nan_seen):
    """For each room q (outline ``rooms[q]``, node box ``box[q]`` = ix0, ix1, iy0,
    iy1): its nodes' local maxima of ``bmax`` (no larger neighbour inside the
    room), the ``n_top`` largest in ``top_*[q]`` (value -inf: none), and
    ``nan_seen[q]`` when a node inside is invalid."""
    for q in range(rooms.size):
        ix0, ix1, iy0, iy1 = box[q, 0], box[q, 1], box[q, 2], box[q, 3]
        loc = np.full((iy1 - iy0 + 2, ix1 - ix0 + 2), -np.inf)
        start, vec, first, last = outl[0], outl[1], outl[3][rooms[q]], outl[4][rooms[q]]
        xc = np.empty(last - first + 1)
        for j in range(iy0, iy1):
            # the even-odd rule along the row: a node is inside when an odd number of
            # the outline's crossings of the row lie to its right (as in _inside)
            m = 0
            for e in range(first, last + 1):
                ay, by = start[e, 1], start[e, 1] + vec[e, 1]
                if (ay > y[j]) != (by > y[j]):
                    xc[m] = start[e, 0] + (y[j] - ay) * vec[e, 0] / vec[e, 1]
                    m += 1
            row = np.sort(xc[:m])
            right = 0  # crossings at or left of the node
            for i in range(ix0, ix1):
                while right < m and row[right] <= x[i]:
                    right += 1
                if (m - right) % 2 == 1:
                    if invalid[j, i]:
                        nan_seen[q] = True
                    if not math.isnan(bmax[j, i]):
                        loc[j - iy0 + 1, i - ix0 + 1] = bmax[j, i]
        for j in range(1, loc.shape[0] - 1):
            for i in range(1, loc.shape[1] - 1):
                v = loc[j, i]
                if v == -np.inf or v <= top_val[q, n_top - 1]:
                    continue  # not above the smallest kept value: cannot enter the list
                peak = True
                for dj in range(-1, 2):
                    for di in range(-1, 2):
                        if loc[j + dj, i + di] > v:
                            peak = False
                if not peak:
                    continue
                k = n_top
                while k > 0 and v > top_val[q, k - 1]:
                    k -= 1
                if k < n_top:  # insert at k, keeping the list sorted, largest first
                    for m in range(n_top - 1, k, -1):
                        top_val[q, m], top_i[q, m], top_j[q, m] = (
                            top_val[q, m - 1], top_i[q, m - 1], top_j[q, m - 1]
                        )
                    top_val[q, k], top_i[q, k], top_j[q, k] = v, i - 1 + ix0, j - 1 + iy0


@numba.njit(cache=True)
def _peak_starts(val, ti, tj, x, y, zmax, z0, z1, node_best, node_at):
    """Face starts from the peaks :func:`_room_peaks` kept: (x, y, nearer band face)
    and room per peak, in room order; each room's largest peak into
    ``node_best`` / ``node_at`` (with the height of its band maximum)."""
    nr, m = val.shape
    n = 0
    for q in range(nr):
        for t in range(m):
            n += val[q, t] > -np.inf
    pts, room = np.empty((n, 3)), np.empty(n, dtype=np.int64)
    k = 0
    for q in range(nr):
        for t in range(m):
            if not val[q, t] > -np.inf:
                continue
            i, j = ti[q, t], tj[q, t]
            z = zmax[j, i]
            pts[k, 0], pts[k, 1], pts[k, 2] = x[i], y[j], z0 if z - z0 <= z1 - z else z1
            room[k] = q
            k += 1
            if t == 0:
                node_best[q] = val[q, 0]
                node_at[q, 0], node_at[q, 1], node_at[q, 2] = x[i], y[j], z
    return pts, room


def _face_starts(geoms, outlines, first, floor_field, nan_seen, node_best, node_at):
    """Starts (x, y, z) and rooms for the face search on one floor: the local
    maxima of the band maximum among each room's nodes, put on the nearer band face.

    ``geoms`` are the floor's rooms, outlines ``first, first + 1, ...`` of
    ``outlines``.  A node is a local maximum when no neighbour inside the same
    room is larger.  ``nan_seen``, ``node_best`` (r,) and ``node_at`` (r, 3) are
    updated in place; the last two receive each room's largest node value and
    its position: with a source inside the prism the maximum need not lie on
    the boundary, and the grid node is then the better estimate.
    """
    g = floor_field.grid
    z0, z1 = g.band
    nr = len(geoms)
    b = shapely.bounds(geoms)
    box = np.column_stack(
        [
            np.searchsorted(g.x, b[:, 0]),
            np.searchsorted(g.x, b[:, 2], side="right"),
            np.searchsorted(g.y, b[:, 1]),
            np.searchsorted(g.y, b[:, 3], side="right"),
        ]
    ).astype(np.int64)
    val = np.full((nr, N_FACE_STARTS), -np.inf)
    ti = np.zeros((nr, N_FACE_STARTS), dtype=np.int64)
    tj = np.zeros((nr, N_FACE_STARTS), dtype=np.int64)
    flag = np.zeros(nr, dtype=np.bool_)
    rooms = np.arange(first, first + nr, dtype=np.int64)
    _room_peaks(outlines.arrays, rooms, box, g.x, g.y, floor_field.bmax, floor_field.invalid,
                N_FACE_STARTS, val, ti, tj, flag)
    nan_seen |= flag
    pts, room = _peak_starts(val, ti, tj, g.x, g.y, floor_field.zmax, z0, z1, node_best, node_at)
    starts, room_of = [pts], [room]
    have = val[:, 0] > -np.inf
    # a room narrower than the grid: start from a point inside, on both faces
    for k in np.flatnonzero(~have):
        q = geoms[k].representative_point()
        starts.append(np.array([(q.x, q.y, z0), (q.x, q.y, z1)]))
        room_of.append(np.array([k, k]))
    return np.concatenate(starts), np.concatenate(room_of)


@numba.njit(cache=True)
def _wall_samples(start, vec, s0, first, last, r0, r1, h):
    """Samples along the outlines of rooms r0..r1-1, at most ``h`` apart on each
    segment, every vertex included: arc lengths from each room's first vertex,
    rooms, and plan points (n, 2), ordered by room."""
    if r1 <= r0:
        return np.empty(0), np.empty(0, dtype=np.int64), np.empty((0, 2))
    n = 0
    for e in range(first[r0], last[r1 - 1] + 1):
        n += max(math.ceil(math.hypot(vec[e, 0], vec[e, 1]) / h), 1)
    s, room, xy = np.empty(n), np.empty(n, dtype=np.int64), np.empty((n, 2))
    k = 0
    for r in range(r0, r1):
        for e in range(first[r], last[r] + 1):
            length = math.hypot(vec[e, 0], vec[e, 1])
            m = max(math.ceil(length / h), 1)
            for t in range(m):
                frac = t / m
                s[k], room[k] = s0[e] + frac * length - s0[first[r]], r
                xy[k, 0], xy[k, 1] = start[e, 0] + frac * vec[e, 0], start[e, 1] + frac * vec[e, 1]
                k += 1
    return s, room, xy


def _wall_starts(scene, walls, groups, first_room, group_of, nan_seen):
    """Starts (arc length, z) and rooms for the wall search on every floor: the best
    local maxima of the interpolated band maximum along each outline (the model
    itself where the interpolation stencil has undefined nodes)."""
    start, vec, s0, first, last, _ = walls.arrays
    parts = []
    for gi, (polys, ff) in enumerate(groups):
        r0 = int(first_room[gi])
        s, room, wxy = _wall_samples(start, vec, s0, first, last, r0, r0 + len(polys),
                                     ff.grid.spacing)
        parts.append((s, room, wxy, *ff.interpolate(wxy)))
    s, room, wxy, vals, wz, near_bad = (np.concatenate(c) for c in zip(*parts, strict=True))
    bad = np.flatnonzero(near_bad)
    if bad.size:
        heights = [groups[gi][1].grid.heights for gi in group_of[room[bad]]]
        k = np.array([h.size for h in heights])
        zq = np.concatenate(heights)
        q = np.column_stack([np.repeat(wxy[bad], k, axis=0), zq])
        mag = np.asarray(scene.magnitude(q), dtype=np.float64)
        row = np.repeat(np.arange(bad.size), k)
        np.logical_or.at(nan_seen, room[bad[row]], np.isnan(mag))
        mag = np.where(np.isnan(mag), -np.inf, mag)
        top = np.full(bad.size, -np.inf)
        np.maximum.at(top, row, mag)
        first = np.cumsum(k) - k
        hit = mag == top[row]
        best = np.minimum.reduceat(np.where(hit, np.arange(zq.size), zq.size), first)
        vals[bad], wz[bad] = top, zq[best]
    vals[np.isnan(vals)] = -np.inf
    sel = np.empty(s.size, dtype=np.int64)
    sel = sel[: _wall_peaks(vals, room, N_WALL_STARTS, sel)]
    return np.column_stack([s[sel], wz[sel]]), room[sel]


@numba.njit(cache=True)
def _search_inputs(fs, ws, rooms, spacing, band):
    """Starts, base steps, bounds and kinds for :func:`siting.analysis.roomsearch.search`:
    face starts ``fs`` (x, y, z) take steps of their floor's grid spacing in x
    and y and stay on their face; wall starts ``ws`` (arc length, z) take the
    grid spacing along the wall and half the band in z, z bounded to the band
    (``spacing``, ``band`` per room)."""
    nf, n = fs.shape[0], fs.shape[0] + ws.shape[0]
    x0, base = np.empty((n, 2)), np.empty((n, 2))
    lo, hi = np.full((n, 2), -np.inf), np.full((n, 2), np.inf)
    face, face_z = np.zeros(n, dtype=np.bool_), np.full(n, np.nan)
    for i in range(n):
        r = rooms[i]
        h = spacing[r]
        if i < nf:
            x0[i, 0], x0[i, 1], face[i], face_z[i] = fs[i, 0], fs[i, 1], True, fs[i, 2]
            base[i, 0], base[i, 1] = h, h
        else:
            x0[i, 0], x0[i, 1] = ws[i - nf, 0], ws[i - nf, 1]
            base[i, 0], base[i, 1] = h, (band[r, 1] - band[r, 0]) / 2
            lo[i, 1], hi[i, 1] = band[r, 0], band[r, 1]
    return x0, base, lo, hi, face, face_z


@numba.njit(cache=True)
def _collect(rooms, fu, xyz, bad, node_best, node_at, best, at, nan_seen):
    """Each room's best search result (and whether a trial was undefined), or its
    best grid node where that is larger (a source inside the prism: the maximum
    need not be on the boundary); NaN where nothing valid was found."""
    for i in range(rooms.size):
        r = rooms[i]
        nan_seen[r] |= bad[i]
        if fu[i] > best[r]:
            best[r] = fu[i]
            at[r, 0], at[r, 1], at[r, 2] = xyz[i, 0], xyz[i, 1], xyz[i, 2]
    for r in range(best.size):
        if node_best[r] > best[r]:
            best[r] = node_best[r]
            at[r, 0], at[r, 1], at[r, 2] = node_at[r, 0], node_at[r, 1], node_at[r, 2]
        if not math.isfinite(best[r]):
            best[r] = np.nan


def room_maxima(scene, groups):
    """Max |B| over the prisms of many rooms, on one or more floors.

    Parameters
    ----------
    scene : object with ``magnitude(points (n, 3) [m]) -> (n,) [T]``
        The field model; each step of the search is one call.
    groups : sequence of (polys, floor_field)
        The rooms' plan outlines (shapely Polygons) on each floor, with the
        floor's band maximum.

    Returns
    -------
    best : ndarray, shape (r,) [T]
        Max |B| per room, rooms in the order of ``groups`` (NaN: none valid).
    at : ndarray, shape (r, 3) [m]
        Absolute position of each maximum.
    nan_seen : ndarray of bool, shape (r,)
        True where a sampled point of the prism was undefined.
    """
    groups = [(list(polys), ff) for polys, ff in groups if len(polys)]
    counts = [len(polys) for polys, _ in groups]
    nr = int(sum(counts))
    best = np.full(nr, -np.inf)
    at = np.full((nr, 3), np.nan)
    nan_seen = np.zeros(nr, dtype=bool)
    if nr == 0:
        return best, at, nan_seen
    geoms = np.array([p for polys, _ in groups for p in polys], dtype=object)
    group_of = np.repeat(np.arange(len(groups)), counts)
    first_room = np.cumsum(counts) - counts

    walls = Outlines.of(geoms)
    # faces: starts (x, y) on the band face of each start, kept inside the outline
    node_best = np.full(nr, -np.inf)
    node_at = np.full((nr, 3), np.nan)
    fs, froom = [np.empty((0, 3))], [np.empty(0, dtype=int)]
    for gi, (_, ff) in enumerate(groups):
        k0 = first_room[gi]
        sl = slice(k0, k0 + counts[gi])
        st, rm = _face_starts(geoms[sl], walls, k0, ff, nan_seen[sl], node_best[sl], node_at[sl])
        fs.append(st)
        froom.append(rm + k0)
    fs, froom = np.concatenate(fs), np.concatenate(froom)

    # walls: starts (arc length, z) at the best local maxima along each outline
    ws, wroom = _wall_starts(scene, walls, groups, first_room, group_of, nan_seen)

    # one search over both kinds and every floor: rows [0, nf) faces, [nf, n) walls
    spacing = np.array([ff.grid.spacing for _, ff in groups])[group_of]
    band = np.array([ff.grid.band for _, ff in groups])[group_of]
    rooms = np.concatenate([froom, wroom]).astype(np.int64)
    x0, base, lo, hi, face, face_z = _search_inputs(fs, ws, rooms, spacing, band)
    _, xyz, fu, bad = search(scene.magnitude, walls, face, rooms, face_z, x0, base, lo, hi)
    _collect(rooms, fu, xyz, bad, node_best, node_at, best, at, nan_seen)
    return best, at, nan_seen
