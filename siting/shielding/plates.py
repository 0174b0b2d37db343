"""Flat steel plates as panel meshes, graded toward the sources and the rims.

Mesh density rule (automatic unless ``size`` is given)
-----------------------------------------------------
Along each in-plane axis s of a plate the target panel size is

    h(s) = clip(min(h_f(s),  h_rim(s)),  h_min,  q^level * h_max),
    h_f(s) = q^level * min over foci f of w_f * sqrt((s - s_f)^2 + D_f^2),
    h_rim(s) = rim * h_f(rim) + 0.5 * (distance of s to the nearer rim),

where s_f is a focus point's abscissa and D_f its distance to the plate line
(the perpendicular distance to the plate's plane combined with the offset
outside the plate along the other axis).  Foci are the sources (weight
``w_f = alpha``, default 0.25: the applied field, hence the magnetisation,
varies on the scale of the distance to its source) and, optionally, the
observation points where the field matters (weight ``beta``, default 1.0: the
field of the panels' edge charges at a distance z from the steel is smooth
once the panels are not wider than about z).  The panels are finer by the
factor ``rim`` (default 0.5) at the plate's edges, where the magnetisation
drops to zero, never below ``h_min`` (default 3 x thickness: the thin-sheet
line charges need panels wider than the steel is thick) and never above
``h_max`` (default a quarter of the plate's extent).  ``level`` (default 0)
refines the whole rule by ``q = 1 / sqrt(2)`` per step (about twice the panels
per level; h_min still holds); :mod:`siting.shielding.refine` chooses it by a
convergence test.  Nodes are placed at equal steps of ``N(s) = int ds / h(s)``.
If the tensor grid has more than ``max_panels`` panels, the weights are
increased until it fits.  ``size`` overrides everything with a uniform size.
Source foci are the sources' centres (``center`` attributes, recursively
through ``Scene.sources``) or polyline vertices.
"""

from __future__ import annotations

import numpy as np
import shapely

from siting.fields._frame import as_points, positive_finite, unit_axis
from siting.shielding.mesh import SheetMesh, weld


def focus_points(source) -> np.ndarray:
    """Source locations (k, 3) [m] found on ``source``: centres, vertices, nested scenes."""
    pts = []
    stack = [source]
    while stack:
        s = stack.pop()
        if hasattr(s, "sources"):
            stack.extend(s.sources)
        for name in ("center", "vertices", "path"):
            val = getattr(s, name, None)
            if val is not None:
                pts.append(np.asarray(val, dtype=float).reshape(-1, 3))
    return np.vstack(pts) if pts else np.zeros((0, 3))


def graded_nodes(a: float, b: float, size_fn, *, n_min: int = 2) -> np.ndarray:
    """Nodes on [a, b] at equal steps of ``int ds / size_fn(s)`` (vectorised)."""
    s = np.linspace(a, b, 2001)
    h = size_fn(s)
    inv = 1.0 / h
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(s))])
    n = max(n_min, int(np.ceil(cum[-1])))
    nodes = np.interp(np.linspace(0, cum[-1], n + 1), cum, s)
    nodes[0], nodes[-1] = a, b
    return nodes


#: Refinement factor of the panel size per mesh level.
LEVEL_FACTOR = 2 ** -0.5


def _axis_nodes(a, b, s_f, d_f, w_f, *, rim, h_min, h_max, size):
    if size is not None:
        return np.linspace(a, b, max(2, int(np.ceil((b - a) / size))) + 1)

    def h_focus(s):
        if len(s_f) == 0:
            return np.full(np.shape(s), h_max)
        d = np.sqrt((np.asarray(s)[..., None] - s_f) ** 2 + d_f**2)
        return (w_f * d).min(axis=-1)

    def fn(s):
        edge = np.minimum(s - a, b - s)
        h_r = np.where(s - a < b - s, h_focus(np.array([a]))[0], h_focus(np.array([b]))[0])
        return np.clip(np.minimum(h_focus(s), rim * h_r + 0.5 * edge), h_min, h_max)

    return graded_nodes(a, b, fn)


def _points(p):
    if p is not None and hasattr(p, "field"):
        p = focus_points(p)
    return np.zeros((0, 3)) if p is None or len(p) == 0 else as_points(p)


def rectangle(origin, u_dir, v_dir, u_len, v_len, *, thickness, focus=None, size=None,
              alpha=0.25, rim=0.5, h_min=None, h_max=None, max_panels=4000, observe=None,
              beta=1.0, level=0) -> SheetMesh:
    """Rectangular plate ``origin + s u + r v``, s in [0, u_len], r in [0, v_len] (quads).

    Parameters
    ----------
    origin : array_like, shape (3,) [m]
        Corner of the plate.
    u_dir, v_dir : array_like, shape (3,)
        Perpendicular in-plane directions.
    u_len, v_len : float [m]
        Side lengths.
    thickness : float [m]
        Only used for the default ``h_min = 3 thickness``.
    focus : array_like, shape (k, 3) [m], or a source, optional
        Points to grade toward (see the module docstring); a source object
        (anything with ``field``) is replaced by its :func:`focus_points`.
    size : float [m], optional
        Uniform panel size; overrides the grading.
    alpha, rim, h_min, h_max : float
        Grading rule parameters (module docstring); h_min, h_max in m.
    max_panels : int
        Upper bound on the panel count (alpha and beta grow until it holds).
    observe : array_like, shape (m, 3) [m], optional
        Observation points to grade toward with the weight ``beta``.
    beta : float
        Weight of the observation points (module docstring).
    level : int
        Refinement level (module docstring): panel sizes times ``LEVEL_FACTOR ** level``.

    Returns
    -------
    SheetMesh
        Quads on a tensor-product grid.
    """
    o = as_points(origin)[0]
    u = unit_axis(u_dir, "u_dir")
    v = unit_axis(v_dir, "v_dir")
    if abs(np.dot(u, v)) > 1e-9:
        raise ValueError("u_dir and v_dir must be perpendicular")
    lu, lv = positive_finite(u_len, "u_len"), positive_finite(v_len, "v_len")
    h_min = 3 * positive_finite(thickness, "thickness") if h_min is None else h_min
    h_max = max(lu, lv) / 4 if h_max is None else h_max
    scale = LEVEL_FACTOR ** int(level)
    f_src, f_obs = _points(focus), _points(observe)
    f = np.vstack([f_src, f_obs])
    w = np.concatenate([np.full(len(f_src), alpha), np.full(len(f_obs), beta)]) * scale
    h_max = h_max * scale
    n_vec = np.cross(u, v)
    rel = f - o
    fs, fr, fw = rel @ u, rel @ v, rel @ n_vec
    out_r = np.maximum(0, np.maximum(-fr, fr - lv))
    out_s = np.maximum(0, np.maximum(-fs, fs - lu))
    while True:
        su = _axis_nodes(0, lu, fs, np.hypot(fw, out_r), w, rim=rim,
                         h_min=min(h_min, h_max), h_max=h_max, size=size)
        sv = _axis_nodes(0, lv, fr, np.hypot(fw, out_s), w, rim=rim,
                         h_min=min(h_min, h_max), h_max=h_max, size=size)
        if (len(su) - 1) * (len(sv) - 1) <= max_panels or size is not None:
            break
        w = w * 1.25
        h_min *= 1.25
    return grid_mesh(o, u, v, su, sv)


def grid_mesh(origin, u, v, su, sv) -> SheetMesh:
    """Tensor-product quad mesh on nodes ``su`` x ``sv`` of the plane ``origin + s u + r v``."""
    S, R = np.meshgrid(su, sv, indexing="ij")
    verts = origin + S.reshape(-1, 1) * u + R.reshape(-1, 1) * v
    nv = len(sv)
    i, j = np.meshgrid(np.arange(len(su) - 1), np.arange(nv - 1), indexing="ij")
    i, j = i.ravel(), j.ravel()
    faces = np.stack([i * nv + j, (i + 1) * nv + j, (i + 1) * nv + j + 1, i * nv + j + 1], 1)
    return SheetMesh(verts, faces)


def wall_plate(start, end, bottom, top, *, thickness, **grading) -> SheetMesh:
    """Vertical plate on the plan line ``start -> end`` (x, y [m]), ``bottom`` to ``top`` (z [m]).

    ``grading``: keyword arguments of :func:`rectangle` (focus, size, alpha, ...).
    """
    p0 = np.asarray(start, dtype=float).reshape(2)
    p1 = np.asarray(end, dtype=float).reshape(2)
    if not top > bottom:
        raise ValueError("top must be above bottom")
    d = np.append(p1 - p0, 0.0)
    length = positive_finite(np.linalg.norm(d), "end - start")
    return rectangle([p0[0], p0[1], bottom], d / length, [0, 0, 1], length, top - bottom,
                     thickness=thickness, **grading)


def floor_plate(outline, z, *, thickness, focus=None, size=None, alpha=0.25, rim=0.5,
                h_min=None, h_max=None, max_panels=4000, observe=None, beta=1.0,
                level=0) -> SheetMesh:
    """Horizontal plate at height ``z`` [m] covering the plan polygon ``outline`` (m, 2) [m].

    A graded grid over the bounding box (same rule as :func:`rectangle`) is
    clipped to the polygon with shapely; cells inside stay quads, cut cells
    become their clipped polygon, triangulated (constrained Delaunay).  Slivers
    below 1e-4 of a cell are dropped.  Keyword arguments as for :func:`rectangle`.
    """
    poly = shapely.Polygon(np.asarray(outline, dtype=float))
    if not poly.is_valid or poly.area <= 0:
        raise ValueError("outline must be a valid polygon with positive area")
    x0, y0, x1, y1 = poly.bounds
    box = rectangle([x0, y0, z], [1, 0, 0], [0, 1, 0], x1 - x0, y1 - y0, thickness=thickness,
                    focus=focus, size=size, alpha=alpha, rim=rim, h_min=h_min, h_max=h_max,
                    max_panels=max_panels, observe=observe, beta=beta, level=level)
    quads = box.vertices[box.faces]  # (n, 4, 3)
    cells = shapely.polygons(quads[:, :, :2])
    inside = shapely.contains_properly(poly, cells) | shapely.equals(
        shapely.intersection(cells, poly), cells)
    verts = [quads[inside].reshape(-1, 3)]
    faces = [np.arange(4 * inside.sum()).reshape(-1, 4)]
    base = 4 * int(inside.sum())
    cut = shapely.intersection(cells[~inside], poly)
    areas = shapely.area(cells[~inside])
    keep = shapely.area(cut) > 1e-4 * areas
    parts = shapely.get_parts(cut[keep])
    parts = parts[shapely.get_type_id(parts) == 3]
    tris = shapely.get_parts(shapely.constrained_delaunay_triangles(parts))
    tris = tris[shapely.area(tris) > 1e-9 * float(np.median(areas) if len(areas) else 1.0)]
    xy = shapely.get_coordinates(shapely.get_exterior_ring(tris)).reshape(len(tris), 4, 2)[:, :3]
    pts = np.concatenate([xy, np.full(xy.shape[:2] + (1,), z)], axis=2).reshape(-1, 3)
    verts.append(pts)
    faces.append(np.column_stack([base + np.arange(len(pts)).reshape(-1, 3),
                                  -np.ones(len(tris), dtype=np.int64)]))
    return weld(np.vstack(verts), np.vstack(faces), tol=1e-9)
