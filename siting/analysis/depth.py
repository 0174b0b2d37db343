"""How deep a plan polygon reaches into a region: max over q in P n R of dist(q, boundary of R).

The distance to a closed set is 1-Lipschitz, so over a square cell of
half-diagonal r centred at c it is at most d(c) + r.  The depth is found by
branch and bound on square cells (Lipschitz global optimisation: S. A.
Piyavskii, "An algorithm for finding the absolute extremum of a function",
USSR Comput. Math. Math. Phys. 12, 1972; the square-cell form is the one of
V. Agafonkin's "polylabel" pole-of-inaccessibility search, Mapbox, 2016; both
from memory):

* the cells tile the bounding box of P n R; the lower bound is the largest
  d(q) over the points q known to lie in P n R: the corners of P inside R,
  the cell centres inside P n R and, for a centre outside it, the nearest
  point of P n R's boundary;
* a cell is dropped when it misses P n R (its centre outside and its
  circumscribed disc clear of P n R's boundary) or when d(c) + r is not above
  the lower bound by more than ``tol``; the others are split in four.

Every point of P n R lies in a dropped cell that bounds it, so the depth
returned, the largest bound of those cells (at least the lower bound), is
never below the exact depth and at most ``tol`` above the best point found;
cells are split no finer than ``tol / 8``, where a thin sliver of P n R could
otherwise be split without end, and such a cell's bound counts as it is.
Distances are exact point-to-segment distances.  Only the segments of the
boundary that can be nearest to a point of the box are kept: any point q of
the box (or a cell side beyond it, where the first cells may reach) has
d(q) <= d(v) + |q - v| for a point v of P n R, so a segment whose own box lies
farther than that bound from the box is never the nearest.
"""

from __future__ import annotations

import math

import numba
import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon

#: Initial cells per side of the box.
START_CELLS = 4
#: Smallest cell half-diagonal, as a fraction of ``tol``.
MIN_CELL = 1.0 / 8.0


def _segments(geom) -> np.ndarray:
    """The segments of a geometry's boundary rings, (s, 5): x0, y0, dx, dy and
    1 / (dx^2 + dy^2) (0 for a zero-length segment)."""
    rings = shapely.get_rings(shapely.get_parts(geom))
    xy, ring = shapely.get_coordinates(rings, return_index=True)
    same = ring[1:] == ring[:-1]
    a, v = xy[:-1][same], xy[1:][same] - xy[:-1][same]
    ll = np.einsum("ij,ij->i", v, v)
    inv = np.divide(1.0, ll, out=np.zeros_like(ll), where=ll > 0)
    return np.ascontiguousarray(np.column_stack([a, v, inv]))


@numba.njit(cache=True, inline="always")
def _nearest(px, py, seg):
    """Distance from (px, py) to the nearest of the segments ``seg`` (s, 5), and
    the nearest point (x, y)."""
    best, bx, by = np.inf, np.nan, np.nan
    for k in range(seg.shape[0]):
        x0, y0, dx, dy = seg[k, 0], seg[k, 1], seg[k, 2], seg[k, 3]
        t = min(max(((px - x0) * dx + (py - y0) * dy) * seg[k, 4], 0.0), 1.0)
        qx, qy = x0 + t * dx, y0 + t * dy
        d2 = (qx - px) ** 2 + (qy - py) ** 2
        if d2 < best:
            best, bx, by = d2, qx, qy
    return math.sqrt(best), bx, by


@numba.njit(cache=True, inline="always")
def _distance(px, py, seg):
    """Distance from (px, py) to the nearest of the segments ``seg`` (s, 5)."""
    return _nearest(px, py, seg)[0]


@numba.njit(cache=True, inline="always")
def _inside(px, py, seg):
    """Even-odd rule: whether (px, py) is inside the rings made of ``seg``."""
    inside = False
    for k in range(seg.shape[0]):
        ay, by = seg[k, 1], seg[k, 1] + seg[k, 3]
        if (ay > py) != (by > py):
            if px < seg[k, 0] + (py - ay) * seg[k, 2] / seg[k, 3]:
                inside = not inside
    return inside


@numba.njit(cache=True)
def _branch_and_bound(line, rings, verts, x0, y0, side, nx, ny, tol, min_half):
    """Depth of the region bounded by ``rings`` below the segments ``line``
    (module docstring).  Cells start as an nx x ny tiling of side ``side`` from
    (x0, y0).  Returns the upper bound (module docstring)."""
    lower = -np.inf
    for v in range(verts.shape[0]):
        lower = max(lower, _distance(verts[v, 0], verts[v, 1], line))
    upper = lower
    cx = np.empty(nx * ny)
    cy = np.empty(nx * ny)
    for j in range(ny):
        for i in range(nx):
            cx[j * nx + i] = x0 + (i + 0.5) * side
            cy[j * nx + i] = y0 + (j + 0.5) * side
    half = 0.5 * side
    while cx.size:
        r = half * math.sqrt(2.0)
        d = np.empty(cx.size)
        keep = np.zeros(cx.size, dtype=np.bool_)
        for c in range(cx.size):
            d[c] = _distance(cx[c], cy[c], line)
            if _inside(cx[c], cy[c], rings):
                lower = max(lower, d[c])
                keep[c] = True
            else:
                e, qx, qy = _nearest(cx[c], cy[c], rings)
                keep[c] = e <= r  # the disc meets P n R ...
                if keep[c]:  # ... nearest at q, a point of P n R
                    lower = max(lower, _distance(qx, qy, line))
        n_split = 0
        for c in range(cx.size):
            if keep[c]:
                if d[c] + r <= lower + tol or r <= min_half:
                    upper = max(upper, d[c] + r)
                    keep[c] = False
                else:
                    n_split += 1
        nxt_x = np.empty(4 * n_split)
        nxt_y = np.empty(4 * n_split)
        m = 0
        q = 0.5 * half
        for c in range(cx.size):
            if keep[c]:
                for sx in (-q, q):
                    for sy in (-q, q):
                        nxt_x[m], nxt_y[m] = cx[c] + sx, cy[c] + sy
                        m += 1
        cx, cy, half = nxt_x, nxt_y, 0.5 * half
    return max(upper, lower)


def polygonal_part(geom) -> MultiPolygon:
    """Keep only the polygonal part of a geometry, as a MultiPolygon."""
    if geom.is_empty:
        return MultiPolygon()
    if isinstance(geom, Polygon):
        return MultiPolygon([geom])
    if isinstance(geom, MultiPolygon):
        return geom
    polys = [p for p in shapely.get_parts(geom) if isinstance(p, Polygon | MultiPolygon)]
    parts = []
    for p in polys:
        parts.extend(shapely.get_parts(p))
    return MultiPolygon(parts)


def overlap(polygon, region) -> MultiPolygon:
    """The polygonal part of ``polygon n region`` (lines and points dropped)."""
    return polygonal_part(shapely.intersection(polygon, region))


def depth(polygon, region, *, tol: float, inter=None) -> float:
    """Largest distance from the boundary of ``region`` of a point of
    ``polygon`` inside ``region`` [m] (method: module docstring).

    Parameters
    ----------
    polygon, region : shapely geometry
        Plan polygons (a region may be a MultiPolygon with holes).
    tol : float
        Accuracy [m], > 0: the result lies in [exact, exact + tol], except
        where a sliver of the overlap thinner than about ``tol / 8`` is met.
    inter : shapely geometry, optional
        :func:`overlap` of the two, if already computed.

    Returns
    -------
    float
        0 when they do not overlap in a positive area.
    """
    if not tol > 0:
        raise ValueError(f"tol must be > 0; got {tol!r}")
    if inter is None:
        inter = overlap(polygon, region)
    if inter.is_empty or inter.area <= 0.0:
        return 0.0
    rings = _segments(inter)
    # the polygon's own corners inside the region (the overlap's other vertices lie
    # on the region's line, at depth 0)
    corners = shapely.get_coordinates(polygon)
    verts = np.ascontiguousarray(corners[shapely.intersects_xy(inter, *corners.T)])
    line = _segments(region)
    bx0, by0, bx1, by1 = inter.bounds
    side = max(bx1 - bx0, by1 - by0) / START_CELLS
    nx = max(1, math.ceil((bx1 - bx0) / side))
    ny = max(1, math.ceil((by1 - by0) / side))
    # keep the segments that can be nearest to a cell centre (at most a cell's
    # side outside the box)
    reach = math.hypot(bx1 - bx0, by1 - by0) + 2 * side
    v0 = verts[0] if len(verts) else rings[0, :2]
    bound = _distance(v0[0], v0[1], line) + reach
    sx0 = np.minimum(line[:, 0], line[:, 0] + line[:, 2])
    sx1 = np.maximum(line[:, 0], line[:, 0] + line[:, 2])
    sy0 = np.minimum(line[:, 1], line[:, 1] + line[:, 3])
    sy1 = np.maximum(line[:, 1], line[:, 1] + line[:, 3])
    gap = np.hypot(np.maximum(0, np.maximum(sx0 - bx1, bx0 - sx1)),
                   np.maximum(0, np.maximum(sy0 - by1, by0 - sy1)))
    line = np.ascontiguousarray(line[gap <= bound])
    upper = _branch_and_bound(line, rings, verts, bx0, by0, side, nx, ny, float(tol),
                                 MIN_CELL * float(tol))
    return float(upper)
