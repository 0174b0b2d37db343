"""Plan grids per floor and the field map on them.

A floor's field map (:class:`FloorField`) is the maximum of |B| over the band
of heights at which people are checked (``site.info.check_heights`` above the
floor's finished level), node by node on a regular plan grid; it is computed
by :func:`siting.analysis.band.band_max`.

Grid extent and spacing (the defaults of :func:`floor_grid`):

* extent: the bounding box of the floor's room outlines and equipment points,
  grown on every side by ``max(2 m, 10 % of the box's larger side)``.  A floor
  with no rooms uses the plan positions of the site's field sources on that
  floor (all floors if it has none of its own) together with its equipment.
* spacing: the smallest room width / 8 (width = short side of the room's
  minimum rotated rectangle), clipped to [0.05, 0.5] m (0.25 m on a floor
  without rooms), then widened if needed so that the grid holds at most
  ``max_points`` (400 000) plan nodes.  A spacing given by the caller is
  honoured exactly and not capped.

The contour levels enter through :func:`refined`:
:func:`siting.analysis.floormap.map_floor` grids a floor at this spacing
first and, when the isogauss lines there are estimated to be off by more
than ``siting.analysis.contours.LINE_TOL``, again over the same extent at
the spacing that brings them within it (at least 0.05 m, within the cap).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numba
import numpy as np
import shapely

from siting.errors import SitingError
from siting.site.model import Site

#: Default cap on plan nodes per floor (the grid's nx * ny).
MAX_PLAN_POINTS = 400_000
#: Bounds of the automatic spacing [m].
MIN_SPACING, MAX_SPACING = 0.05, 0.5
#: Automatic spacing on a floor that has no rooms [m].
NO_ROOM_SPACING = 0.25
#: Nodes per smallest room width for the automatic spacing.
NODES_PER_ROOM_WIDTH = 8
#: Minimum margin around the floor's extent [m] and its fraction of the extent.
MIN_MARGIN, MARGIN_FRACTION = 2.0, 0.10


def _axis(vector, name: str) -> np.ndarray:
    arr = np.ascontiguousarray(vector, dtype=np.float64).reshape(-1)
    if arr.size < 2:
        raise ValueError(f"{name} must hold at least 2 values; got {arr.size}")
    if not np.all(np.isfinite(arr)) or not np.all(np.diff(arr) > 0):
        raise ValueError(f"{name} must be finite and strictly increasing")
    return arr


@dataclass(frozen=True, eq=False)
class PlanGrid:
    """A regular plan grid on one floor, with the absolute heights to check.

    Parameters
    ----------
    floor : str
        Floor id.
    x : array_like, shape (nx,) [m]
        Node abscissae, strictly increasing.
    y : array_like, shape (ny,) [m]
        Node ordinates, strictly increasing.
    heights : array_like, shape (k,) [m]
        Absolute heights (site datum) of the check planes, ascending.
    """

    floor: str
    x: np.ndarray
    y: np.ndarray
    heights: np.ndarray

    def __post_init__(self):
        object.__setattr__(self, "x", _axis(self.x, "x"))
        object.__setattr__(self, "y", _axis(self.y, "y"))
        h = np.unique(np.asarray(self.heights, dtype=np.float64).reshape(-1))
        if h.size == 0 or not np.all(np.isfinite(h)):
            raise ValueError("heights must hold at least one finite value")
        object.__setattr__(self, "heights", h)

    @classmethod
    def _of_nodes(cls, floor: str, x: np.ndarray, y: np.ndarray, heights: np.ndarray):
        """A grid from axes made by :func:`_nodes` (finite, increasing, contiguous)
        and unique ascending heights: the checks of ``__post_init__`` are skipped."""
        grid = object.__new__(cls)
        for name, value in (("floor", floor), ("x", x), ("y", y), ("heights", heights)):
            object.__setattr__(grid, name, value)
        return grid

    @property
    def shape(self) -> tuple[int, int]:
        """(ny, nx), the shape of every plan array on this grid."""
        return (self.y.size, self.x.size)

    @functools.cached_property
    def spacing(self) -> float:
        """The larger of the two node spacings [m]."""
        return float(max(np.max(np.diff(self.x)), np.max(np.diff(self.y))))

    @property
    def band(self) -> tuple[float, float]:
        """(lowest, highest) absolute check height [m]."""
        return float(self.heights[0]), float(self.heights[-1])

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """(xmin, ymin, xmax, ymax) of the grid [m]."""
        return float(self.x[0]), float(self.y[0]), float(self.x[-1]), float(self.y[-1])

    def points(self, heights=None) -> np.ndarray:
        """All nodes at ``heights`` (default: the grid's own) [m], shape
        (k * ny * nx, 3) [m], height outermost, then y, then x."""
        zs = self.heights if heights is None else np.asarray(heights, dtype=np.float64)
        out = np.empty((zs.size * self.x.size * self.y.size, 3))
        _fill_points(self.x, self.y, zs.reshape(-1), out)
        return out


@numba.njit(cache=True)
def _fill_points(x, y, zs, out):
    """Plan nodes (y outer, x inner) at each height of ``zs`` in turn, into out (k n, 3)."""
    m = 0
    for z in zs:
        for yj in y:
            for xi in x:
                out[m, 0], out[m, 1], out[m, 2] = xi, yj, z
                m += 1


@dataclass(frozen=True, eq=False)
class FloorField:
    """Max of |B| over the check heights on a floor's plan grid.

    Parameters
    ----------
    grid : PlanGrid
    bmax : ndarray, shape (ny, nx) [T]
        Max over the heights of |B| at the valid heights (NaN where none is).
    invalid : ndarray of bool, shape (ny, nx)
        True where the model is undefined at any height (inside a magnet's
        envelope sphere or on a conductor).  Contouring counts these nodes
        as above every level.
    zmax : ndarray, shape (ny, nx) [m]
        Absolute height at which ``bmax`` occurs (NaN where no height is valid).
    """

    grid: PlanGrid
    bmax: np.ndarray
    invalid: np.ndarray
    zmax: np.ndarray

    def __post_init__(self):
        shape = self.grid.shape
        for name, dtype in (("bmax", np.float64), ("invalid", bool), ("zmax", np.float64)):
            arr = np.asarray(getattr(self, name), dtype=dtype)
            if arr.shape != shape:
                raise ValueError(f"{name} must have shape {shape}; got {arr.shape}")
            object.__setattr__(self, name, arr)

    def interpolate(self, xy) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Bilinear interpolation of ``bmax`` at plan points.

        Parameters
        ----------
        xy : array_like, shape (n, 2) [m]
            Plan points; points off the grid take the value of the nearest edge.

        Returns
        -------
        values : ndarray, shape (n,) [T]
            Interpolated band maximum (NaN where a node of the cell has none).
        z : ndarray, shape (n,) [m]
            ``zmax`` of the cell's node nearest to the point.
        undefined : ndarray of bool, shape (n,)
            True where any node of the point's cell is invalid.
        """
        xy = np.ascontiguousarray(xy, dtype=np.float64).reshape(-1, 2)
        n = len(xy)
        val, z, undefined = np.empty(n), np.empty(n), np.empty(n, dtype=np.bool_)
        g = self.grid
        _bilinear(g.x, g.y, self.bmax, self.invalid, self.zmax, xy, val, z, undefined)
        return val, z, undefined


@numba.njit(cache=True)
def _bilinear(x, y, b, bad, zmax, xy, val, z, undefined):
    """:meth:`FloorField.interpolate` point by point, into val, z, undefined."""
    for k in range(xy.shape[0]):
        i = min(max(np.searchsorted(x, xy[k, 0]) - 1, 0), x.size - 2)
        j = min(max(np.searchsorted(y, xy[k, 1]) - 1, 0), y.size - 2)
        tx = min(max((xy[k, 0] - x[i]) / (x[i + 1] - x[i]), 0.0), 1.0)
        ty = min(max((xy[k, 1] - y[j]) / (y[j + 1] - y[j]), 0.0), 1.0)
        v = (1 - ty) * ((1 - tx) * b[j, i] + tx * b[j, i + 1]) + ty * (
            (1 - tx) * b[j + 1, i] + tx * b[j + 1, i + 1]
        )
        val[k] = v
        undefined[k] = (
            bad[j, i] or bad[j, i + 1] or bad[j + 1, i] or bad[j + 1, i + 1] or math.isnan(v)
        )
        z[k] = zmax[j + int(np.rint(ty)), i + int(np.rint(tx))]


def _outline_bounds(pieces) -> np.ndarray:
    """(xmin, ymin, xmax, ymax) of plan points given as (m, 2) arrays."""
    pts = np.concatenate([np.asarray(o, dtype=np.float64).reshape(-1, 2) for o in pieces])
    return np.array([*pts.min(axis=0), *pts.max(axis=0)])


def _source_plan_points(site: Site, floor_id: str | None) -> list[np.ndarray]:
    """Plan positions (m, 2) of the site's sources, on one floor or (None) all."""
    out = []
    for mag in site.magnets:
        if floor_id in (None, mag.floor):
            out.append(np.asarray(mag.center)[None, :2])
    for coil in site.coils:
        if floor_id in (None, coil.floor):
            c = np.asarray(coil.center)[:2]
            out.append(np.array([c - coil.radius, c + coil.radius]))
    for dip in site.dipoles:
        if floor_id in (None, dip.floor):
            out.append(np.asarray(dip.center)[None, :2])
    for cab in site.cables:
        if floor_id in (None, cab.floor):
            out.append(np.asarray(cab.path)[:, :2])
    return out


def room_polygons(outlines) -> np.ndarray:
    """Plan outlines ([[x, y], ...] each, closed or not) as an object array of
    shapely Polygons, built in one vectorised call; no validity repair."""
    if not len(outlines):
        return np.empty(0, dtype=object)
    counts = [len(o) for o in outlines]
    coords = np.array([xy for o in outlines for xy in o], dtype=np.float64).reshape(-1, 2)
    index = np.repeat(np.arange(len(counts)), counts)
    return shapely.polygons(shapely.linearrings(coords, indices=index))


def room_widths(polys) -> np.ndarray:
    """Short sides of the minimum rotated rectangles of room polygons [m] (0 if degenerate)."""
    if not len(polys):
        return np.empty(0)
    rect = shapely.minimum_rotated_rectangle(polys)
    out = np.zeros(len(polys))
    poly = shapely.get_type_id(rect) == 3  # a degenerate outline gives a line or a point
    if poly.any():
        xy = shapely.get_coordinates(shapely.get_exterior_ring(rect[poly])).reshape(-1, 5, 2)
        out[poly] = np.hypot(*np.moveaxis(np.diff(xy, axis=1), 2, 0)).min(axis=1)
    return out


def _fit(h: float, width: float, depth: float, max_points: int) -> float:
    """``h`` widened until a ``width`` x ``depth`` grid holds at most ``max_points``
    nodes (the +1 node per axis makes a closed form inexact)."""
    while (math.ceil(width / h) + 1) * (math.ceil(depth / h) + 1) > max_points:
        h = max(h * 1.01, math.sqrt(width * depth / max_points))
    return h


def refined(grid: PlanGrid, spacing: float, *, max_points: int = MAX_PLAN_POINTS) -> PlanGrid:
    """The same floor, extent and heights at a finer spacing.

    Parameters
    ----------
    grid : PlanGrid
        The grid to refine.
    spacing : float
        Wanted spacing [m]; raised to ``MIN_SPACING`` and widened, if needed,
        until the grid holds at most ``max_points`` plan nodes.
    max_points : int
        Cap on nx * ny.

    Returns
    -------
    PlanGrid
        Nodes centred on ``grid.bounds``; ``grid`` itself when that spacing is
        not finer than its own.
    """
    x0, y0, x1, y1 = grid.bounds
    h = _fit(max(float(spacing), MIN_SPACING), x1 - x0, y1 - y0, max_points)
    if h >= grid.spacing:
        return grid
    return PlanGrid._of_nodes(grid.floor, _nodes(x0, x1, h), _nodes(y0, y1, h), grid.heights)


def _nodes(lo: float, hi: float, spacing: float) -> np.ndarray:
    """Nodes at ``spacing`` covering [lo, hi], centred on it (at least 2)."""
    n = max(int(math.ceil((hi - lo) / spacing - 1e-9)) + 1, 2)
    start = 0.5 * (lo + hi) - 0.5 * (n - 1) * spacing
    return start + spacing * np.arange(n)


def floor_grid(
    site: Site,
    floor_id: str,
    *,
    spacing: float | None = None,
    margin: float | None = None,
    max_points: int = MAX_PLAN_POINTS,
    polygons=None,
    widths=None,
) -> PlanGrid:
    """The plan grid for one floor (extent and spacing rules: module docstring).

    Parameters
    ----------
    site : Site
        The site; its rooms, equipment and sources set the extent.
    floor_id : str
        Id of the floor to grid.
    spacing : float, optional
        Node spacing [m]; honoured exactly when given.
    margin : float, optional
        Growth of the extent on every side [m]; default
        ``max(2 m, 10 % of the larger side)``.
    max_points : int
        Cap on nx * ny for the automatic spacing.
    polygons : array of shapely Polygons, optional
        :func:`room_polygons` of the floor's rooms (in the site's order), if
        already built.
    widths : ndarray, optional
        :func:`room_widths` of those polygons, if already computed.

    Returns
    -------
    PlanGrid
        Heights are ``floor.elevation + site.info.check_heights``.
    """
    floor = site.floor(floor_id)
    if polygons is None:
        polygons = room_polygons([r.outline for r in site.rooms if r.floor == floor_id])
    pieces = [np.asarray(e.at)[None, :2] for e in site.equipment if e.floor == floor_id]
    if len(polygons):
        pieces.append(shapely.total_bounds(polygons).reshape(2, 2))
    else:
        pieces += _source_plan_points(site, floor_id) or _source_plan_points(site, None)
    if not pieces:
        raise SitingError(f"floor {floor_id!r} has no rooms, equipment or sources to grid")
    x0, y0, x1, y1 = _outline_bounds(pieces)
    if margin is None:
        margin = max(MIN_MARGIN, MARGIN_FRACTION * max(x1 - x0, y1 - y0))
    elif not np.isfinite(margin) or margin < 0:
        raise ValueError(f"margin must be finite and >= 0; got {margin!r}")
    x0, y0, x1, y1 = x0 - margin, y0 - margin, x1 + margin, y1 + margin
    if spacing is None:
        widths = room_widths(polygons) if widths is None else np.asarray(widths)
        widths = widths[widths > 0]
        h = widths.min() / NODES_PER_ROOM_WIDTH if widths.size else NO_ROOM_SPACING
        h = _fit(float(np.clip(h, MIN_SPACING, MAX_SPACING)), x1 - x0, y1 - y0, max_points)
    else:
        h = float(spacing)
        if not np.isfinite(h) or h <= 0:
            raise ValueError(f"spacing must be finite and > 0; got {spacing!r}")
    heights = np.unique(floor.elevation + np.asarray(site.info.check_heights, dtype=np.float64))
    if heights.size == 0 or not np.all(np.isfinite(heights)):
        raise ValueError(f"check heights on floor {floor_id!r}: at least one, all finite")
    return PlanGrid._of_nodes(floor_id, _nodes(x0, x1, h), _nodes(y0, y1, h), heights)
