"""Panel meshes of thin steel sheets: flat triangles and planar quadrilaterals in 3-D.

A :class:`SheetMesh` holds vertices and faces (triangles, or planar quads) of
the sheet's mid-surface; it may be folded or curved (a shell).  On
construction it derives what the thin-sheet solver needs:

* per face: centroid, unit normal, area and an orthonormal tangent basis
  ``(t1, t2)`` with ``t1 x t2 = normal``;
* the unique edges (vertex pairs) and, for every face-edge incidence, the
  face's *outward in-plane* unit normal to that edge (in the face's plane,
  perpendicular to the edge, pointing away from the face).  An edge with one
  face is a rim; a fold carries two (or more, at a T-junction) incidences
  whose normals are not opposite;
* per face, the collocation points and weights at which the solver tests the
  constitutive law (:data:`TRIANGLE_SAMPLE`).

Collocation rule
----------------
A quadrilateral (a parallelogram in the plates and tubes here) is symmetric
under a half turn about its centroid, so the in-plane field of the edge
charges of a piecewise-uniform M at the centroid is consistent to second order
in the panel size h: the lumping errors cancel in opposite pairs.  A triangle
has no such symmetry.  At its centroid the in-plane field of the uniform-field
(l = 1) mode of a closed shell, whose charge gradient is ``g ~ sigma / R``, is
off by about ``0.06 g h``: a first-order error of the shielding factor (3.4 %
of the operator at 320 panels on a sphere, 2.0 % at 1280).  Triangles are
therefore tested with the mean in-plane field at the three points
``c + s (v_k - c)`` (centroid c, vertices v_k).  The first-order error of the
l = 1 mode changes sign with s and vanishes at ``s ~ 0.40`` (measured on
geodesic spheres, see ``tests/test_shield_linecharge.py``), the value used;
it also lowers the errors of higher harmonics (l = 2...4 on a 2880-panel
sphere: 1.0-2.2 % instead of 1.7-2.8 %), which remain first order, and of
triangulated flat plates.  A second-order scheme for every mode would need a
piecewise-linear magnetisation (charges spread over the panels).

Generators here: :func:`icosphere` (geodesic sphere), :func:`cylinder`
(closed tube with planar quads and end caps), :func:`merge`.  Plates are in
:mod:`siting.shielding.plates`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.fields._frame import as_vector, frame, positive_finite

#: Allowed out-of-plane warp of a quad, relative to its diagonal.
_WARP_TOL = 1e-6
#: Fraction of the way from a triangle's centroid to its vertices of its three
#: collocation points (see "Collocation rule" above).
TRIANGLE_SAMPLE = 0.40


@dataclass(frozen=True, eq=False)
class SheetMesh:
    """Mid-surface mesh of a thin sheet.

    Parameters
    ----------
    vertices : array_like, shape (nv, 3) [m]
    faces : array_like of int, shape (nf, 3) or (nf, 4)
        Vertex indices; in a (nf, 4) array a triangle has ``-1`` as its 4th entry.
        Quads must be planar (warp below ``1e-6`` of their diagonal).

    Attributes (derived)
    --------------------
    centroids (nf, 3) [m], normals (nf, 3), areas (nf,) [m^2], t1, t2 (nf, 3),
    edges (ne, 2) vertex indices, inc_edge (k,), inc_face (k,), inc_normal (k, 3),
    samples (nf, 3, 3) [m] collocation points and sample_weights (nf, 3) (rows sum
    to 1; a quad has its centroid with weight 1 and two unused points of weight 0).
    """

    vertices: np.ndarray
    faces: np.ndarray

    def __post_init__(self):
        v = np.ascontiguousarray(self.vertices, dtype=np.float64)
        f = np.asarray(self.faces, dtype=np.int64)
        if v.ndim != 2 or v.shape[1] != 3 or not np.all(np.isfinite(v)):
            raise ValueError("vertices must be a finite (nv, 3) array")
        if f.ndim != 2 or f.shape[1] not in (3, 4) or len(f) == 0:
            raise ValueError("faces must be a non-empty (nf, 3) or (nf, 4) integer array")
        if f.shape[1] == 3:
            f = np.hstack([f, -np.ones((len(f), 1), dtype=np.int64)])
        if f[:, :3].min() < 0 or f.max() >= len(v):
            raise ValueError("faces refer to missing vertices")
        object.__setattr__(self, "vertices", v)
        object.__setattr__(self, "faces", f)
        self._derive()

    def _derive(self):
        v, f = self.vertices, self.faces
        quad = f[:, 3] >= 0
        p0, p1, p2 = v[f[:, 0]], v[f[:, 1]], v[f[:, 2]]
        p3 = np.where(quad[:, None], v[np.where(quad, f[:, 3], 0)], p0)
        # quad = triangles (0,1,2) + (0,2,3); a triangle has a zero second part
        c1 = np.cross(p1 - p0, p2 - p0)
        c2 = np.cross(p2 - p0, p3 - p0)
        a1 = 0.5 * np.linalg.norm(c1, axis=1)
        a2 = 0.5 * np.linalg.norm(c2, axis=1)
        area = a1 + a2
        if np.any(area <= 0):
            raise ValueError("faces: degenerate (zero-area) face")
        nrm = c1 + c2
        nrm /= np.linalg.norm(nrm, axis=1)[:, None]
        diag = np.linalg.norm(p2 - p0, axis=1)
        warp = np.abs(np.einsum("ij,ij->i", p3 - p0, nrm))
        if np.any(warp > _WARP_TOL * diag):
            raise ValueError("faces: a quad is not planar; split it into triangles")
        cen = (a1[:, None] * (p0 + p1 + p2) + a2[:, None] * (p0 + p2 + p3)) / (3 * area[:, None])
        t1 = p1 - p0
        t1 -= np.einsum("ij,ij->i", t1, nrm)[:, None] * nrm
        t1 /= np.linalg.norm(t1, axis=1)[:, None]
        t2 = np.cross(nrm, t1)
        # face-edge incidences
        nf = len(f)
        nv_face = np.where(quad, 4, 3)
        rows = np.repeat(np.arange(nf), nv_face)
        pos = _positions(nv_face)
        nxt = np.where(pos + 1 < nv_face[rows], pos + 1, 0)
        va = f[rows, pos]
        vb = f[rows, nxt]
        key = np.stack([np.minimum(va, vb), np.maximum(va, vb)], axis=1)
        edges, inc_edge = np.unique(key, axis=0, return_inverse=True)
        inc_edge = inc_edge.reshape(-1)
        evec = v[vb] - v[va]
        en = np.cross(evec, nrm[rows])
        en /= np.linalg.norm(en, axis=1)[:, None]
        mid = 0.5 * (v[va] + v[vb])
        sign = np.sign(np.einsum("ij,ij->i", mid - cen[rows], en))
        en *= np.where(sign == 0, 1.0, sign)[:, None]
        # collocation points: triangles c + s (v_k - c), equal weights; quads the centroid
        corners = np.stack([p0, p1, p2], axis=1)
        samples = np.where(quad[:, None, None], cen[:, None, :],
                           cen[:, None, :] + TRIANGLE_SAMPLE * (corners - cen[:, None, :]))
        weights = np.where(quad[:, None], [1.0, 0.0, 0.0], 1.0 / 3.0)
        for name, val in (
            ("samples", samples), ("sample_weights", weights),
            ("centroids", cen), ("normals", nrm), ("areas", area), ("t1", t1), ("t2", t2),
            ("edges", edges), ("inc_edge", inc_edge), ("inc_face", rows), ("inc_normal", en),
        ):
            object.__setattr__(self, name, val)

    @property
    def n_faces(self) -> int:
        return len(self.faces)

    @property
    def area(self) -> float:
        """Total mid-surface area [m^2]."""
        return float(self.areas.sum())

    def panel_size(self) -> np.ndarray:
        """Square root of each face's area (nf,) [m]."""
        return np.sqrt(self.areas)


def _positions(counts: np.ndarray) -> np.ndarray:
    """``concatenate([arange(k) for k in counts])`` without a Python loop."""
    starts = np.cumsum(counts) - counts
    return np.arange(int(counts.sum())) - np.repeat(starts, counts)


def merge(meshes, *, tol: float = 1e-9) -> SheetMesh:
    """One mesh from several, fusing vertices closer than ``tol`` [m] (so folds join).

    Parameters
    ----------
    meshes : sequence of SheetMesh
        Meshes to join.
    tol : float [m]
        Vertices closer than this are fused.
    """
    verts = np.concatenate([m.vertices for m in meshes])
    offs = np.cumsum([0] + [len(m.vertices) for m in meshes[:-1]])
    faces = np.concatenate(
        [np.where(m.faces >= 0, m.faces + o, -1) for m, o in zip(meshes, offs, strict=True)]
    )
    return weld(verts, faces, tol=tol)


def weld(vertices, faces, *, tol: float = 1e-9) -> SheetMesh:
    """Fuse vertices closer than ``tol`` [m] (on a grid of cell ``tol``) and build the mesh."""
    verts = np.asarray(vertices, dtype=np.float64)
    faces = np.asarray(faces, dtype=np.int64)
    key = np.round(verts / tol).astype(np.int64)
    _, first, inv = np.unique(key, axis=0, return_index=True, return_inverse=True)
    inv = inv.reshape(-1)
    new_faces = np.where(faces >= 0, inv[np.maximum(faces, 0)], -1)
    return SheetMesh(verts[first], new_faces)


def icosphere(center, radius, frequency: int) -> SheetMesh:
    """Geodesic sphere: each icosahedron face split into ``frequency**2`` triangles.

    Parameters
    ----------
    center : array_like, shape (3,) [m]
        Centre of the sphere.
    radius : float [m]
        Vertices lie on the sphere (the panels are inscribed chords).
    frequency : int >= 1
        ``20 frequency**2`` faces.
    """
    c = as_vector(center, "center")
    r = positive_finite(radius, "radius")
    n = int(frequency)
    if n < 1:
        raise ValueError("frequency must be >= 1")
    g = (1 + 5**0.5) / 2
    ico = np.array(
        [[-1, g, 0], [1, g, 0], [-1, -g, 0], [1, -g, 0], [0, -1, g], [0, 1, g],
         [0, -1, -g], [0, 1, -g], [g, 0, -1], [g, 0, 1], [-g, 0, -1], [-g, 0, 1]], float)
    tri = np.array(
        [[0, 11, 5], [0, 5, 1], [0, 1, 7], [0, 7, 10], [0, 10, 11], [1, 5, 9], [5, 11, 4],
         [11, 10, 2], [10, 7, 6], [7, 1, 8], [3, 9, 4], [3, 4, 2], [3, 2, 6], [3, 6, 8],
         [3, 8, 9], [4, 9, 5], [2, 4, 11], [6, 2, 10], [8, 6, 7], [9, 8, 1]])
    # barycentric lattice (i, j) with i + j <= n on each face
    ii, jj = np.meshgrid(np.arange(n + 1), np.arange(n + 1), indexing="ij")
    keep = ii + jj <= n
    ii, jj = ii[keep], jj[keep]
    lid = -np.ones((n + 1, n + 1), dtype=np.int64)
    lid[ii, jj] = np.arange(len(ii))
    a, b, cc = ico[tri[:, 0]], ico[tri[:, 1]], ico[tri[:, 2]]
    w1 = (ii / n)[None, :, None]
    w2 = (jj / n)[None, :, None]
    pts = a[:, None] + w1 * (b - a)[:, None] + w2 * (cc - a)[:, None]
    pts = pts.reshape(-1, 3)
    pts /= np.linalg.norm(pts, axis=1)[:, None]
    # small triangles in lattice indices
    up_i, up_j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    m_up = up_i + up_j <= n - 1
    ui, uj = up_i[m_up], up_j[m_up]
    up = np.stack([lid[ui, uj], lid[ui + 1, uj], lid[ui, uj + 1]], axis=1)
    m_dn = up_i + up_j <= n - 2
    di, dj = up_i[m_dn], up_j[m_dn]
    dn = np.stack([lid[di + 1, dj], lid[di + 1, dj + 1], lid[di, dj + 1]], axis=1)
    local = np.concatenate([up, dn])
    faces = (local[None, :, :] + (np.arange(20) * len(ii))[:, None, None]).reshape(-1, 3)
    mesh = weld(c + r * pts, faces, tol=r * 1e-9)
    return _orient_outward(mesh, c)


def _orient_outward(mesh: SheetMesh, center: np.ndarray) -> SheetMesh:
    """Reverse faces whose normal points towards ``center`` (cosmetic: the solver is
    insensitive to orientation)."""
    inward = np.einsum("ij,ij->i", mesh.normals, mesh.centroids - center) < 0
    if not inward.any():
        return mesh
    f = mesh.faces.copy()
    tri = f[:, 3] < 0
    f[inward & tri, :3] = f[inward & tri, 2::-1]
    f[inward & ~tri] = f[inward & ~tri, ::-1]
    return SheetMesh(mesh.vertices, f)


def cylinder(center, axis, radius, z_nodes, *, n_around: int, caps: bool = True,
             cap_rings: int | None = None) -> SheetMesh:
    """Circular tube (planar quads between generators) with optional flat end caps.

    Parameters
    ----------
    center : array_like, shape (3,) [m]
        Centre of the tube's axis.
    axis : array_like, shape (3,)
        Tube direction.
    radius : float [m]
        Vertices lie on the circle (the panels are inscribed chords).
    z_nodes : array_like, shape (k,) [m]
        Increasing axial positions of the rings, relative to ``center``.
    n_around : int >= 3
        Panels around the circumference.
    caps : bool
        Close both ends with discs of concentric quad rings and a central triangle fan.
    cap_rings : int, optional
        Rings per cap; default ``max(2, n_around // 6)``.
    """
    c = as_vector(center, "center")
    rot = frame(axis)
    r = positive_finite(radius, "radius")
    z = np.asarray(z_nodes, dtype=float)
    if z.ndim != 1 or len(z) < 2 or np.any(np.diff(z) <= 0):
        raise ValueError("z_nodes must be increasing, at least 2")
    n = int(n_around)
    if n < 3:
        raise ValueError("n_around must be >= 3")
    phi = 2 * np.pi * np.arange(n) / n
    ring = np.stack([np.cos(phi), np.sin(phi)], axis=1) * r
    verts = [np.column_stack([np.tile(ring, (len(z), 1)), np.repeat(z, n)])]
    k = np.arange(n)
    j = np.arange(len(z) - 1)[:, None]
    faces = [np.stack([j * n + k, j * n + (k + 1) % n, (j + 1) * n + (k + 1) % n,
                       (j + 1) * n + k], axis=-1).reshape(-1, 4)]
    base = len(z) * n
    if caps:
        nr = int(cap_rings or max(2, n // 6))
        rr = r * np.arange(nr, 0, -1) / nr  # outer ring first (r), inner last
        for zc in (z[0], z[-1]):
            pts = np.column_stack([np.concatenate([ring * (q / r) for q in rr]),
                                   np.full(nr * n, zc)])
            pts = np.vstack([pts, [0.0, 0.0, zc]])
            ridx = base + np.arange(nr * n).reshape(nr, n)
            quads = np.stack([ridx[:-1, k], ridx[:-1, (k + 1) % n], ridx[1:, (k + 1) % n],
                              ridx[1:, k]], axis=-1).reshape(-1, 4)
            ctr = base + nr * n
            tris = np.stack([ridx[-1, k], ridx[-1, (k + 1) % n], np.full(n, ctr),
                             -np.ones(n, dtype=np.int64)], axis=1)
            verts.append(pts)
            faces += [quads, tris]
            base += nr * n + 1
    local = np.vstack(verts)
    mesh = weld(c + local @ rot, np.vstack(faces), tol=r * 1e-9)
    return mesh
