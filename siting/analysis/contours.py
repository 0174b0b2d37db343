"""Isogauss regions and lines on a floor's field map.

The region of a level is the plan set where the band maximum of |B| is at or
above the level.  It is built from contourpy's filled contours between the
level and +inf, whose polygons come with their holes, and converted to
shapely geometry.  The field between nodes is contourpy's linear
interpolation along cell edges, so the line's position error falls as the
square of the grid spacing for a smooth field.

Conventions:

* Nodes where the model is undefined (``FloorField.invalid``: inside a
  magnet's envelope, on a conductor) count as above every level.  They are
  given a huge value, so a line between such a node and a valid node below
  the level is drawn at the valid node: the region errs on the large side by
  less than one grid spacing there.
* A region that reaches the edge of the grid is closed along the grid's
  border.  The true line then lies beyond the grid; :func:`reaches_border`
  says when this happened.
"""

from __future__ import annotations

import math
import weakref

import contourpy
import numba
import numpy as np
import shapely
from contourpy import FillType, LineType
from shapely.geometry import MultiPolygon, Polygon

from siting.analysis.depth import depth, overlap, polygonal_part
from siting.analysis.grid import FloorField

#: Position error allowed to a drawn isogauss line by the automatic spacing [m].
LINE_TOL = 0.01
#: Value given to invalid nodes for contouring [T]: above any level in use.
ABOVE_ALL = 1e30


def _check_level(level) -> float:
    lev = float(level)
    if not np.isfinite(lev) or lev <= 0:
        raise ValueError(f"level must be finite and > 0 [T]; got {level!r}")
    return lev


def contour_values(floor_field: FloorField) -> np.ndarray:
    """The (ny, nx) array that is contoured: ``bmax``, invalid nodes -> ``ABOVE_ALL``."""
    z = np.array(floor_field.bmax, dtype=np.float64)
    z[floor_field.invalid | np.isnan(z)] = ABOVE_ALL
    return z


#: Contour generators per field map and crop (contourpy's set-up costs more than
#: a level's contouring on a floor-sized grid), reused for all their levels.
_GENERATORS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _generator(floor_field: FloorField, crop: tuple[int, int, int, int] | None = None):
    """A contour generator for the field map, or for the nodes
    ``[j0:j1, i0:i1]`` of ``crop = (j0, j1, i0, i1)``: one made for a crop that
    contains it is reused (contouring a level over more nodes than it needs
    gives the same lines)."""
    cache = _GENERATORS.setdefault(floor_field, {})
    for key, gen in cache.items():
        if key is None or (crop is not None and _contains(key, crop)):
            return gen
    g = floor_field.grid
    j0, j1, i0, i1 = crop or (0, g.y.size, 0, g.x.size)
    x, y = np.meshgrid(g.x[i0:i1], g.y[j0:j1])
    # contourpy's serial generator made directly (a public class): the values
    # have no NaN and no mask (contour_values), so the checks and masked-array
    # handling of contourpy.contour_generator have nothing to do
    gen = contourpy.SerialContourGenerator(
        x,
        y,
        np.ascontiguousarray(contour_values(floor_field)[j0:j1, i0:i1]),
        None,
        corner_mask=True,
        line_type=LineType.Separate,
        fill_type=FillType.OuterOffset,
        quad_as_tri=False,
        z_interp=contourpy.ZInterp.Linear,
    )
    cache[crop] = gen
    return gen


def _contains(outer, inner) -> bool:
    """Whether crop ``outer`` holds every node of crop ``inner``."""
    (a0, a1, b0, b1), (j0, j1, i0, i1) = outer, inner
    return a0 <= j0 and j1 <= a1 and b0 <= i0 and i1 <= b1


@numba.njit(cache=True)
def _level_crop(bmax, invalid, level):
    """(j0, j1, i0, i1): the nodes at or above ``level`` (or invalid) with one
    more node on every side, clipped to the grid; j0 = -1 when there are none."""
    ny, nx = bmax.shape
    j0, j1, i0, i1 = ny, -1, nx, -1
    for j in range(ny):
        for i in range(nx):
            if invalid[j, i] or bmax[j, i] >= level:
                j0, j1 = min(j0, j), max(j1, j)
                i0, i1 = min(i0, i), max(i1, i)
    if j1 < 0:
        return -1, -1, -1, -1
    return max(j0 - 1, 0), min(j1 + 2, ny), max(i0 - 1, 0), min(i1 + 2, nx)


def _polygons(points, offsets) -> list:
    """Shapely Polygons from contourpy's ``OuterOffset`` output (per polygon, its
    points and the offsets of its rings, the outer one first); rings of fewer
    than 4 points are dropped.  (A loop: a floor's region has few polygons, and
    shapely's vectorised constructors cost more in set-up than they save.)"""
    polys = []
    for pts, off in zip(points, offsets, strict=True):
        rings = [pts[off[i] : off[i + 1]] for i in range(len(off) - 1)]
        rings = [r for r in rings if len(r) >= 4]
        if rings:
            polys.append(Polygon(rings[0], rings[1:]))
    return polys


def level_region(floor_field: FloorField, level: float) -> MultiPolygon:
    """Plan region where the band maximum of |B| is >= ``level``.

    Parameters
    ----------
    floor_field : FloorField
        Band maximum on a floor's grid.
    level : float
        Field level [T], > 0.

    Returns
    -------
    shapely.MultiPolygon
        Polygons with their holes, in plan coordinates [m]; empty when the
        field stays below the level on the whole grid.  Closed along the grid
        border where the region reaches it (module docstring).
    """
    lev = _check_level(level)
    crop = _level_crop(floor_field.bmax, floor_field.invalid, lev)
    if crop[0] < 0:
        return MultiPolygon()  # nothing reaches the level: no contouring needed
    # contoured over the nodes that reach the level and one more all round: every
    # cell the line crosses is inside, and the polygons are those of the full grid
    points, offsets = _generator(floor_field, crop).filled(lev, np.inf)
    polys = _polygons(points, offsets)
    if not len(polys):
        return MultiPolygon()
    region = shapely.multipolygons(polys)
    if not region.is_valid:
        region = polygonal_part(shapely.make_valid(region))
    return region


def level_lines(floor_field: FloorField, level: float) -> list[np.ndarray]:
    """The isogauss lines of ``level`` for drawing.

    Parameters
    ----------
    floor_field : FloorField
        Band maximum on a floor's grid.
    level : float
        Field level [T], > 0.

    Returns
    -------
    list of ndarray, each (m, 2) [m]
        Polylines; a closed line repeats its first point at the end.  Lines
        stop at the grid border (they are not closed along it).
    """
    lev = _check_level(level)
    lines = _generator(floor_field).lines(lev)
    return [np.asarray(line, dtype=np.float64) for line in lines if len(line) >= 2]


def region_area(floor_field: FloorField, level: float) -> float:
    """Area of :func:`level_region` [m^2]."""
    return float(level_region(floor_field, level).area)


def reaches_border(floor_field: FloorField, level: float) -> bool:
    """True when a node on the grid's border is at or above ``level``.

    The region is then closed along the border and the true line lies beyond
    the grid: widen the grid's margin to draw it.
    """
    lev = _check_level(level)
    z = contour_values(floor_field)
    edge = np.concatenate([z[0], z[-1], z[:, 0], z[:, -1]])
    return bool(np.any(edge >= lev))


def clearance(polygon, region, *, tol: float = LINE_TOL) -> float:
    """Signed clearance of a plan polygon from a region [m].

    Parameters
    ----------
    polygon : shapely.Polygon
        E.g. a room's outline.
    region : shapely geometry
        E.g. :func:`level_region` of the room's limit.
    tol : float
        Accuracy of the depth (below) [m].

    Returns
    -------
    float
        ``+inf`` for an empty region; ``distance(polygon, region) >= 0`` when
        they do not overlap in a positive area; otherwise ``-max over q in
        polygon n region of distance(q, boundary of region)``: the depth of
        the polygon's deepest point inside the region, i.e. how far the
        region's line would have to recede for the polygon to be clear, by
        :func:`siting.analysis.depth.depth` (never shallower than the exact
        depth, at most ``tol`` deeper).  Where the region is closed along a
        grid border, that border counts as its line.
    """
    return clearance_and_area(polygon, region, tol=tol)[0]


def clearances_and_areas(polygons, region, *, tol: float = LINE_TOL):
    """:func:`clearance_and_area` of many polygons from one region: arrays (n,)
    of margins [m] and overlap areas [m^2].  Polygons clear of the region (most
    rooms) take their distance in one vectorised call."""
    polygons = np.asarray(polygons, dtype=object)
    n = len(polygons)
    if region.is_empty:
        return np.full(n, math.inf), np.zeros(n)
    margins, areas = np.zeros(n), np.zeros(n)
    hit = shapely.intersects(polygons, region)
    if (~hit).any():
        margins[~hit] = shapely.distance(polygons[~hit], region)
    for i in np.flatnonzero(hit):
        margins[i], areas[i] = clearance_and_area(polygons[i], region, tol=tol)
    return margins, areas


def clearance_and_area(polygon, region, *, tol: float = LINE_TOL) -> tuple[float, float]:
    """:func:`clearance` and the area of ``polygon n region`` [m^2], from one
    intersection."""
    if region.is_empty:
        return math.inf, 0.0
    inter = overlap(polygon, region)
    area = float(inter.area)
    d = depth(polygon, region, tol=tol, inter=inter) if area > 0 else 0.0
    return (-d if d > 0 else float(polygon.distance(region))), area


def line_error(floor_field: FloorField, levels) -> float:
    """Estimated largest position error of the lines of ``levels`` on the grid [m].

    contourpy places a line where the linear interpolant of the node values
    along a cell edge crosses the level.  On an edge of length h the
    interpolant of f is off by at most h^2 max|f''| / 8 (the remainder of
    linear interpolation, f - p1 = f''(xi) (x - x0)(x - x1) / 2; e.g. R. L.
    Burden and J. D. Faires, *Numerical Analysis*, 9th ed., 2011, Theorem
    3.3, theorem number from memory), which moves the line by that much
    divided by |grad f|.  The estimate takes, over every cell whose four valid
    corners straddle a level, ``h_x^2 |f_xx| / (8 |grad f|)`` and the same in
    y, with the derivatives from central differences of ``bmax`` at the
    cell's corners (corners without two valid neighbours are skipped), and
    returns the largest.  It falls as h^2 where the field is smooth; where
    the band maximum has a kink (the height of the maximum jumps) it is an
    order-h error that the estimate reports but a finer grid reduces only
    linearly.  0 when no line crosses a cell.
    """
    g = floor_field.grid
    f = np.where(floor_field.invalid, np.nan, floor_field.bmax)
    if f.shape[0] < 3 or f.shape[1] < 3:
        return 0.0
    lev = np.array(sorted(_check_level(v) for v in levels), dtype=np.float64)
    hx = float(g.x[-1] - g.x[0]) / (g.x.size - 1)  # the mean node spacings
    hy = float(g.y[-1] - g.y[0]) / (g.y.size - 1)
    return float(_line_error(f, hx, hy, lev))


@numba.njit(cache=True, inline="always")
def _node_error(f, hx, hy, j, i):
    """h^2 max(|f_xx|, |f_yy|) / (8 |grad f|) at node (j, i) by central differences
    (NaN at the border or next to an invalid node)."""
    ny, nx = f.shape
    if j < 1 or i < 1 or j > ny - 2 or i > nx - 2:
        return np.nan
    c = f[j, i]
    fxx = f[j, i + 1] - 2 * c + f[j, i - 1]  # times 1 / hx^2; h^2 f_xx is this
    fyy = f[j + 1, i] - 2 * c + f[j - 1, i]
    fx = (f[j, i + 1] - f[j, i - 1]) / (2 * hx)
    fy = (f[j + 1, i] - f[j - 1, i]) / (2 * hy)
    grad = math.hypot(fx, fy)
    return max(abs(fxx), abs(fyy)) / (8 * grad)  # NaN propagates; inf where grad = 0


@numba.njit(cache=True)
def _line_error(f, hx, hy, levels):
    ny, nx = f.shape
    worst = 0.0
    for j in range(ny - 1):
        for i in range(nx - 1):
            a, b, c, d = f[j, i], f[j, i + 1], f[j + 1, i], f[j + 1, i + 1]
            lo, hi = min(a, b, c, d), max(a, b, c, d)
            if math.isnan(a + b + c + d):
                continue
            crossed = False
            for lv in levels:
                if lo < lv <= hi:
                    crossed = True
                    break
            if not crossed:
                continue
            for jj, ii in ((j, i), (j, i + 1), (j + 1, i), (j + 1, i + 1)):
                e = _node_error(f, hx, hy, jj, ii)
                if e > worst and math.isfinite(e):
                    worst = e
    return worst
