"""Maximum of |B| over rooms' prisms: band faces and walls, refined by compass search.

In a current-free region every Cartesian component of B is harmonic, so |B|^2 is
subharmonic and its maximum over a room's prism lies on the prism's boundary
(weak maximum principle; L. C. Evans, *Partial Differential Equations*, 2nd ed.,
2010, sec. 2.2.3, section number from memory).  See :mod:`siting.analysis.checks`
for how the search is laid out; this module holds the search itself.  The rooms
of every floor are searched together, so each step of the search is one
vectorised ``scene.magnitude`` call for the whole site.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

#: Starts of the local search per room on the band faces and on the walls.
N_FACE_STARTS, N_WALL_STARTS = 2, 2
#: Compass search stops below this step, in grid spacings.
STEP_TOL = 1e-2
#: Step lengths polled at once, as fractions of a start's step, and the factor
#: by which the step shrinks when none improves.
POLL_SCALES, SHRINK = (1.0, 0.5, 0.25), 0.125
#: Factor by which the step grows when the longest polled step improved.
GROW = 2.0
#: The eight neighbours of a plan node, (dy, dx).
_NEIGHBOURS = [(dy, dx) for dy in (-1, 0, 1) for dx in (-1, 0, 1) if dy or dx]


def _compass_search(evaluate, x0, base, lo, hi, clip=None):
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
    clip : callable(x (m, d), trial (m, k, d), start (m,)) -> (m, k, d), optional
        Moves trials back towards ``x`` onto the feasible set where it can
        (after the bounds); trials it leaves infeasible score -inf.

    Returns
    -------
    x : ndarray, shape (n, d)
    f : ndarray, shape (n,)
    nan_seen : ndarray of bool, shape (n,)

    Each iteration polls ``x +- c * step * base`` along every coordinate at
    the scales c in ``POLL_SCALES`` for all active starts in one ``evaluate``
    call (the bounds and ``clip`` move trials back onto the feasible set;
    trials left on ``x`` are skipped).  A start moves to its best improvement
    and keeps its step (doubles it when the longest step improved); without
    improvement its step shrinks by ``SHRINK``, and each coordinate whose two
    shortest polls both came out lower gets the vertex of the parabola
    through the three values as a guess, tried with the next polls (a search
    step, which moves the start but never keeps its step from shrinking).
    It stops when every step is below ``STEP_TOL``.

    This is a generalised pattern search (V. Torczon, "On the convergence of
    pattern search algorithms", SIAM J. Optim. 7, 1997) with the parabolic
    step of R. P. Brent, *Algorithms for Minimization without Derivatives*,
    1973, ch. 5 (chapter from memory).  Polling several scales at once and
    guessing take fewer iterations, which is what costs here (each is one
    call into the field model), most of all when the maximum lies on a
    constraint (a wall) that a single scale can only approach by halving
    and moving in turn.
    """
    x = np.array(x0, dtype=np.float64)
    n, d = x.shape
    unit = np.concatenate([np.eye(d), -np.eye(d)])
    scale = np.repeat(POLL_SCALES, 2 * d)[:, None]
    dirs = np.tile(unit, (len(POLL_SCALES), 1)) * scale
    near = slice(2 * d * (len(POLL_SCALES) - 1), 2 * d * len(POLL_SCALES))  # shortest polls
    f = evaluate(x, np.arange(n)) if n else np.empty(0)
    nan_seen = np.isnan(f)
    f = np.where(nan_seen, -np.inf, f)
    step = np.where(np.isfinite(f), 1.0, 0.0)
    guess = x.copy()  # the parabolic estimate of each start's maximum (x: none)
    for _ in range(200):
        act = np.flatnonzero(step > STEP_TOL)
        if act.size == 0:
            break
        trial = x[act, None, :] + dirs[None] * (step[act, None, None] * base[act, None, :])
        trial = np.concatenate([trial, guess[act, None, :]], axis=1)
        trial = np.clip(trial, lo[act, None, :], hi[act, None, :])
        if clip is not None:
            trial = clip(x[act], trial, act)
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
        # where no poll improved, each coordinate whose shortest polls both came out
        # lower brackets a maximum: the parabola through the three points gives the
        # next guess (tried with the next, shorter polls)
        guess[act] = x[act]
        stay = ~up
        if stay.any():
            t = trial[stay][:, near]
            v = vals[stay][:, near]
            f0, x1 = f[act[stay]], x[act[stay]]
            for i in range(d):
                a, b = x1[:, i] - t[:, d + i, i], t[:, i, i] - x1[:, i]  # >= 0
                fa, fb = v[:, d + i], v[:, i]
                with np.errstate(divide="ignore", invalid="ignore"):
                    num = b * b * (f0 - fa) - a * a * (f0 - fb)
                    den = a * (f0 - fb) + b * (f0 - fa)
                    ok = (a > 0) & (b > 0) & np.isfinite(fa) & np.isfinite(fb) & (den > 0)
                    shift = np.where(ok, 0.5 * num / den, 0.0)
                g = guess[act[stay]]
                g[:, i] += np.clip(shift, -a, b)
                guess[act[stay]] = g
        x[act[up]] = trial[up, best[up]]
        f[act[up]] = bv[up]
        step[act[up & (best < 2 * d)]] *= GROW  # the longest step improved: try longer
        step[act[~up | (best == len(dirs))]] *= SHRINK  # no poll improved (a guess may have)
    return x, f, nan_seen


def _top_per_group(values, group, keep, n):
    """Indices of the ``n`` largest ``values`` of each group where ``keep``, and
    each one's rank (0 = largest) within its group."""
    idx = np.flatnonzero(keep)
    idx = idx[np.lexsort((-values[idx], group[idx]))]
    g = group[idx]
    rank = np.arange(idx.size) - np.searchsorted(g, g, side="left")
    return idx[rank < n], rank[rank < n]


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
        v = self.vec[seg]
        t = (g - self.s0[seg]) / np.hypot(v[:, 0], v[:, 1])
        return self.start[seg] + np.clip(t, 0.0, 1.0)[:, None] * v

    def samples(self, spacing):
        """Arc lengths (N,) and rooms (N,) of samples at most ``spacing[room]``
        apart, every vertex included, ordered by room."""
        length = np.hypot(*self.vec.T)
        seg_room = np.repeat(np.arange(self.first.size), self.last - self.first + 1)
        n = np.maximum(np.ceil(length / spacing[seg_room]).astype(int), 1)
        seg = np.repeat(np.arange(length.size), n)
        frac = (np.arange(seg.size) - np.repeat(np.cumsum(n) - n, n)) / n[seg]
        room = seg_room[seg]
        return self.s0[seg] + frac * length[seg] - self.s0[self.first[room]], room


def _edges(geoms):
    """Edge starts (r, m, 2) and vectors (r, m, 2) of each room's outline,
    padded with zero vectors."""
    rings = [np.asarray(p.exterior.coords) for p in geoms]
    m = max(len(r) - 1 for r in rings)
    start = np.zeros((len(geoms), m, 2))
    vec = np.zeros((len(geoms), m, 2))
    for i, ring in enumerate(rings):
        start[i, : len(ring) - 1] = ring[:-1]
        vec[i, : len(ring) - 1] = np.diff(ring, axis=0)
    return start, vec


def _first_exit(x, d, start, vec):
    """Fraction t in [0, 1] of each move ``x -> x + d`` before it first crosses an edge.

    x (a, 2), d (a, k, 2), start and vec (a, m, 2) -> (a, k).  Crossings at the
    move's own start (t ~ 0: x on the outline) do not count, so a move from a
    wall into the room is free and one out of it is left for the caller to reject.
    """
    cross = lambda u, v: u[..., 0] * v[..., 1] - u[..., 1] * v[..., 0]  # noqa: E731
    rel = (start - x[:, None, :])[:, None, :, :]  # (a, 1, m, 2)
    dd, ee = d[:, :, None, :], vec[:, None, :, :]
    den = cross(dd, ee)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = cross(rel, ee) / den
        u = cross(rel, dd) / den
    hit = (den != 0) & (t > 1e-12) & (t <= 1.0) & (u >= 0.0) & (u <= 1.0)
    return np.where(hit, t, np.inf).min(axis=2, initial=1.0)


def _face_starts(geoms, floor_field, nan_seen, node_best, node_at):
    """Starts (x, y, z) and rooms for the face search on one floor: the local
    maxima of the band maximum among each room's nodes, put on the nearer band face.

    A node is a local maximum when no neighbour inside the same room is larger;
    each room's nodes sit in a box padded with -inf, all boxes in one flat array.
    ``nan_seen``, ``node_best`` (r,) and ``node_at`` (r, 3) are updated in place;
    the last two receive each room's largest node value and its position: with a
    source inside the prism the maximum need not lie on the boundary, and the
    grid node is then the better estimate.
    """
    g = floor_field.grid
    z0, z1 = g.band
    nr = len(geoms)
    b = shapely.bounds(geoms)
    ix0, ix1 = np.searchsorted(g.x, b[:, 0]), np.searchsorted(g.x, b[:, 2], side="right")
    iy0, iy1 = np.searchsorted(g.y, b[:, 1]), np.searchsorted(g.y, b[:, 3], side="right")
    nx, ny = ix1 - ix0, iy1 - iy0
    pw = nx + 2
    size = pw * (ny + 2)
    off = np.cumsum(size) - size
    cnt = nx * ny
    room = np.repeat(np.arange(nr), cnt)
    local = np.arange(room.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    j, i = np.divmod(local, np.maximum(nx, 1)[room])
    gx, gy = ix0[room] + i, iy0[room] + j
    inside = shapely.intersects_xy(geoms[room], g.x[gx], g.y[gy])
    nan_seen |= np.bincount(room, inside & floor_field.invalid[gy, gx], minlength=nr) > 0
    val = floor_field.bmax[gy, gx]
    val = np.where(inside & ~np.isnan(val), val, -np.inf)
    key = off[room] + (j + 1) * pw[room] + (i + 1)
    pad = np.full(int(size.sum()), -np.inf)
    pad[key] = val
    around = np.full(val.size, -np.inf)
    for dy, dx in _NEIGHBOURS:
        np.maximum(around, pad[key + dy * pw[room] + dx], out=around)
    sel, rank = _top_per_group(val, room, (val >= around) & (val > -np.inf), N_FACE_STARTS)
    top = sel[rank == 0]
    node_best[room[top]] = val[top]
    node_at[room[top]] = np.column_stack(
        [g.x[gx[top]], g.y[gy[top]], floor_field.zmax[gy[top], gx[top]]]
    )
    zs = floor_field.zmax[gy[sel], gx[sel]]
    starts = [np.column_stack([g.x[gx[sel]], g.y[gy[sel]], np.where(zs - z0 <= z1 - zs, z0, z1)])]
    rooms = [room[sel]]
    # a room narrower than the grid: start from a point inside, on both faces
    for k in np.setdiff1d(np.arange(nr), room[sel]):
        q = geoms[k].representative_point()
        starts.append(np.array([(q.x, q.y, z0), (q.x, q.y, z1)]))
        rooms.append(np.array([k, k]))
    return np.concatenate(starts), np.concatenate(rooms)


def _wall_starts(scene, walls, groups, group_of, nan_seen):
    """Starts (arc length, z) and rooms for the wall search on every floor: the best
    local maxima of the interpolated band maximum along each outline (the model
    itself where the interpolation stencil has undefined nodes)."""
    spacing = np.array([ff.grid.spacing for _, ff in groups])[group_of]
    s, room = walls.samples(spacing)
    wxy = walls.xy(room, s)
    vals, wz = np.empty(s.size), np.empty(s.size)
    near_bad = np.zeros(s.size, dtype=bool)
    for gi, (_, ff) in enumerate(groups):
        m = group_of[room] == gi
        vals[m], wz[m], near_bad[m] = ff.interpolate(wxy[m])
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
    # neighbours along each closed outline (samples are ordered by room)
    first = np.searchsorted(room, room, side="left")
    last = np.searchsorted(room, room, side="right") - 1
    idx = np.arange(s.size)
    prev = np.where(idx > first, idx - 1, last)
    nxt = np.where(idx < last, idx + 1, first)
    peak = (vals >= vals[prev]) & (vals >= vals[nxt]) & (vals > -np.inf)
    sel, _ = _top_per_group(vals, room, peak, N_WALL_STARTS)
    return np.column_stack([s[sel], wz[sel]]), room[sel]


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
    shapely.prepare(geoms)
    group_of = np.repeat(np.arange(len(groups)), counts)
    first_room = np.cumsum(counts) - counts

    # faces: starts (x, y) on the band face of each start, kept inside the outline
    node_best = np.full(nr, -np.inf)
    node_at = np.full((nr, 3), np.nan)
    fs, froom = [np.empty((0, 3))], [np.empty(0, dtype=int)]
    for gi, (_, ff) in enumerate(groups):
        sl = slice(first_room[gi], first_room[gi] + counts[gi])
        st, rm = _face_starts(geoms[sl], ff, nan_seen[sl], node_best[sl], node_at[sl])
        fs.append(st)
        froom.append(rm + first_room[gi])
    fs, froom = np.concatenate(fs), np.concatenate(froom)

    # walls: starts (arc length, z) at the best local maxima along each outline
    walls = _Walls.of(geoms)
    ws, wroom = _wall_starts(scene, walls, groups, group_of, nan_seen)

    # one compass search over both kinds and every floor: rows [0, nf) faces, [nf, n) walls
    nf = len(fs)
    x0 = np.concatenate([fs[:, :2], ws])
    rooms = np.concatenate([froom, wroom])
    h = np.array([ff.grid.spacing for _, ff in groups])[group_of[rooms]]
    band = np.array([ff.grid.band for _, ff in groups])[group_of[rooms]]
    base = np.column_stack([h, h])
    base[nf:, 1] = (band[nf:, 1] - band[nf:, 0]) / 2
    lo = np.full_like(x0, -np.inf)
    hi = np.full_like(x0, np.inf)
    lo[nf:, 1], hi[nf:, 1] = band[nf:, 0], band[nf:, 1]
    face_z = np.concatenate([fs[:, 2], np.full(len(ws), np.nan)])

    def to_xyz(u, start):
        xyz = np.empty((len(u), 3))
        face = start < nf
        xyz[face, :2] = u[face]
        xyz[face, 2] = face_z[start[face]]
        wall = ~face
        xyz[wall, :2] = walls.xy(rooms[start[wall]], u[wall, 0])
        xyz[wall, 2] = u[wall, 1]
        return xyz

    edge_start, edge_vec = _edges(geoms)

    def clip(x, trial, start):
        # faces: a trial that leaves the outline is moved back along its ray from x
        # to where it first crosses it (a wall, where the maximum often lies)
        face = start < nf
        if not face.any():
            return trial
        r = rooms[start[face]]
        xf, d = x[face], trial[face] - x[face, None, :]
        t = _first_exit(xf, d, edge_start[r], edge_vec[r])
        trial = trial.copy()
        trial[face] = xf[:, None, :] + (t * (1 - 1e-9))[:, :, None] * d
        return trial

    def evaluate(u, start):
        out = np.full(len(u), -np.inf)
        ok = start >= nf
        face = ~ok
        ok[face] = shapely.intersects_xy(geoms[rooms[start[face]]], u[face, 0], u[face, 1])
        if ok.any():
            out[ok] = scene.magnitude(to_xyz(u[ok], start[ok]))
        return out

    u, fu, bad = _compass_search(evaluate, x0, base, lo, hi, clip)
    np.logical_or.at(nan_seen, rooms, bad)
    order = np.argsort(fu)  # ascending: the last write per room is its best
    best[rooms[order]] = fu[order]
    at[rooms[order]] = to_xyz(u, np.arange(len(u)))[order]
    # a source inside the prism (maximum not on the boundary): keep the grid node
    inner = node_best > best
    best[inner], at[inner] = node_best[inner], node_at[inner]
    best[~np.isfinite(best)] = np.nan
    return best, at, nan_seen
