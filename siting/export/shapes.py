"""Geometry for the drawings: magnet and coil outlines, regions as matplotlib paths.

Outlines are drawn in any plane given by two orthonormal in-plane vectors
(plan: x and y; a section: its horizontal direction and z), so the same
functions serve plans and sections.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from matplotlib.path import Path as MplPath
from shapely.geometry import MultiPoint, Polygon
from shapely.geometry.polygon import orient

PLAN_BASIS = (np.array([0.0, 0.0, 0.0]), np.array([1.0, 0.0, 0.0]), np.array([0.0, 1.0, 0.0]))


def perpendiculars(axis) -> tuple[np.ndarray, np.ndarray]:
    """Two unit vectors u, v with (u, v, axis) right-handed and orthonormal."""
    a = np.asarray(axis, dtype=float)
    a = a / np.linalg.norm(a)
    helper = np.array([1.0, 0.0, 0.0]) if abs(a[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    u = np.cross(a, helper)
    u /= np.linalg.norm(u)
    return u, np.cross(a, u)


def project(points, basis) -> np.ndarray:
    """Points (n, 3) -> (n, 2) coordinates in the plane ``basis`` = (origin, e1, e2)."""
    origin, e1, e2 = basis
    d = np.asarray(points, dtype=float) - origin
    return np.column_stack([d @ e1, d @ e2])


def cylinder_outline(center, axis, radius: float, t0: float, t1: float, basis, *, n: int = 96):
    """Outline (k, 2) of a cylinder's projection (a circle's for t0 == t1) onto ``basis``.

    The cylinder has its axis through ``center`` along ``axis`` and spans
    ``t0 <= t <= t1`` along it; the outline is the convex hull of its two end
    circles projected onto the plane.
    """
    a = np.asarray(axis, dtype=float)
    a = a / np.linalg.norm(a)
    u, v = perpendiculars(a)
    phi = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    ring = radius * (np.cos(phi)[:, None] * u + np.sin(phi)[:, None] * v)
    ends = sorted({float(t0), float(t1)})
    pts = np.concatenate([np.asarray(center) + t * a + ring for t in ends])
    hull = MultiPoint(project(pts, basis)).convex_hull
    if hull.geom_type != "Polygon":
        return None
    return np.asarray(hull.exterior.coords)[:-1]


def sphere_outline(center, radius: float, basis, *, n: int = 96) -> np.ndarray:
    """Outline of a sphere's projection (a circle) onto ``basis``."""
    c = project(np.asarray(center, dtype=float)[None], basis)[0]
    phi = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    return c + radius * np.column_stack([np.cos(phi), np.sin(phi)])


def magnet_envelope(magnet, sources=None) -> float | None:
    """The magnet's envelope radius [m]: the site file's, else its fringe model's."""
    if magnet.envelope is not None:
        return float(magnet.envelope)
    for src in sources or ():
        if getattr(src, "id", None) == magnet.id and getattr(src, "kind", "") == "magnet":
            env = getattr(src.source, "envelope", None)
            if env is not None:
                return float(env)
    return None


def magnet_outline(magnet, basis, sources=None) -> tuple[np.ndarray | None, str]:
    """Outline of a magnet in the plane ``basis`` and what it shows.

    A magnet given by windings is drawn as the cylinder that holds them; a
    magnet given by isogauss extents as its envelope sphere (the region where
    the fringe model is not used).
    """
    if magnet.coils:
        radius = max(c.radius for c in magnet.coils)
        t0 = min(c.offset - 0.5 * (c.length or 0.0) for c in magnet.coils)
        t1 = max(c.offset + 0.5 * (c.length or 0.0) for c in magnet.coils)
        return cylinder_outline(magnet.center, magnet.axis, radius, t0, t1, basis), "windings"
    env = magnet_envelope(magnet, sources)
    if env is None:
        return None, "isocentre only"
    return sphere_outline(magnet.center, env, basis), "envelope sphere"


def coil_outline(coil, basis) -> np.ndarray | None:
    """Projection of a loop or thin solenoid onto ``basis``."""
    half = 0.5 * (coil.length or 0.0)
    return cylinder_outline(coil.center, coil.axis, coil.radius, -half, half, basis)


def polygons(geom) -> list[Polygon]:
    """The non-empty polygons of a (Multi)Polygon or collection."""
    if geom is None or geom.is_empty:
        return []
    return [p for p in shapely.get_parts(geom) if p.geom_type == "Polygon" and not p.is_empty]


def region_path(geom) -> MplPath | None:
    """A compound matplotlib path of a (Multi)Polygon, holes wound the other way."""
    parts = []
    for poly in polygons(geom):
        poly = orient(poly, 1.0)
        for ring in (poly.exterior, *poly.interiors):
            xy = np.asarray(ring.coords)
            codes = np.full(len(xy), MplPath.LINETO, dtype=MplPath.code_type)
            codes[0], codes[-1] = MplPath.MOVETO, MplPath.CLOSEPOLY
            parts.append(MplPath(xy, codes))
    return MplPath.make_compound_path(*parts) if parts else None


def label_point(poly: Polygon) -> np.ndarray:
    """A point well inside a polygon (pole of inaccessibility)."""
    from shapely.ops import polylabel

    pt = polylabel(poly, tolerance=max(poly.length * 1e-3, 1e-3))
    return np.array([pt.x, pt.y])


def positions_along(line: np.ndarray, fractions) -> list[np.ndarray]:
    """Points at the given fractions of a polyline's length."""
    seg = np.hypot(*np.diff(line, axis=0).T)
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    total = cum[-1]
    out = []
    for f in fractions:
        s = f * total
        i = int(np.clip(np.searchsorted(cum, s) - 1, 0, len(seg) - 1))
        t = 0.0 if seg[i] == 0 else (s - cum[i]) / seg[i]
        out.append(line[i] + t * (line[i + 1] - line[i]))
    return out


def polyline_length(line: np.ndarray) -> float:
    return float(np.hypot(*np.diff(line, axis=0).T).sum())


@dataclass(frozen=True, eq=False)
class DrawnPlate:
    """A steel plate as drawn in plan: ``outline`` (m, 2) [m] and a label."""

    id: str
    floor: str
    outline: np.ndarray
    label: str


#: Drawn width of a wall plate in plan [m]: its thickness, widened so it shows at 1:200.
MIN_WALL_WIDTH = 0.06


def drawn_plates(site, report=None) -> list[DrawnPlate]:
    """Plan outlines and labels ("P1: 15 mm, 1802 kg") of the site's plates.

    A wall plate is drawn as the rectangle of its run widened to its thickness
    (at least ``MIN_WALL_WIDTH``); a horizontal plate as its outline.  Thickness
    and mass come from the solved shielding report when there is one.
    """
    solved = {p.id: p for p in (report.plates if report is not None else ())}
    out = []
    for plate in getattr(site, "plates", ()):
        res = solved.get(plate.id)
        thickness = res.thickness if res is not None else plate.thickness
        if plate.wall:
            a, b = np.asarray(plate.start, float), np.asarray(plate.end, float)
            d = (b - a) / np.linalg.norm(b - a)
            n = np.array([-d[1], d[0]]) * max(thickness or 0.0, MIN_WALL_WIDTH) / 2
            outline = np.array([a - n, b - n, b + n, a + n])
        else:
            outline = np.asarray(plate.outline, float)[:, :2]
        label = plate.id
        if thickness:
            label += f": {thickness * 1e3:.0f} mm"
        if res is not None:
            label += f", {res.mass:.0f} kg"
        out.append(DrawnPlate(plate.id, plate.floor, outline, label))
    return out
