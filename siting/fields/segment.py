"""Straight current filaments: polylines (cables, busbars) and go/return pairs.

Each straight segment from vertex ``a`` to vertex ``b`` carrying current ``I``
has the closed-form Biot-Savart field (J. D. Jackson, *Classical
Electrodynamics*, 3rd ed., 1999, eq. 5.4 integrated along a line; in the
compact form of J. L. Hanson and S. P. Hirshman, "Compact expressions for the
Biot-Savart fields of a filamentary segment", *Phys. Plasmas* 9, 4410, 2002,
their compact segment expression)::

    B = mu0 I / (4 pi) * 2 L (Ri + Rf) / (Ri Rf ((Ri + Rf)^2 - L^2)) * (e x Ri)

with ``Ri = p - a``, ``Rf = p - b``, ``L = |b - a|`` and ``e = (b - a) / L``.
Using ``L (e x Ri) = Ri x Rf`` and ``(Ri + Rf)^2 - L^2 = 2 D``,
``D = Ri Rf + Ri . Rf``, this is ``B = mu0 I / (4 pi) (Ri + Rf) (Ri x Rf) /
(Ri Rf D)``.  ``D`` loses all its digits to cancellation near the segment
(where ``Ri . Rf -> -Ri Rf``); there the kernel uses the exact identity
``D = |Ri x Rf|^2 / (Ri Rf - Ri . Rf)`` (Lagrange's identity), which keeps a
relative error of order ``eps * L / d`` at distance ``d`` from the wire
instead of ``eps * (L / d)^2``.

Points on a conductor
---------------------
A point is *on* a segment when ``(Ri + Rf)^2 - L^2 <= ON_SEGMENT_TOL * L^2``,
i.e. inside the thin prolate spheroid with the segment's ends as foci and
semi-minor axis ``sqrt(ON_SEGMENT_TOL) * L / 2`` (5e-9 L).  Such points (and
the vertices themselves) get NaN in all three components, never inf.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numba import njit, prange
from scipy.constants import mu_0

from siting.fields._frame import as_points, finite, positive_finite, unit_axis
from siting.fields.scene import Scene

#: Relative threshold on ``((Ri + Rf)^2 - L^2) / L^2`` below which a point is
#: taken to lie on the segment (about the double-precision epsilon: the
#: direct difference carries no information below it).
ON_SEGMENT_TOL = 1e-16

#: Points handled together by one thread; the inner loop over a block is
#: branch-free so that it vectorises (SIMD over points).
_BLOCK = 256


#: Below this many segment-points a call runs on one thread: thread start-up
#: (and, on a busy machine, waiting for a second core) costs more than it saves.
PARALLEL_MIN_WORK = 1 << 19


@njit(cache=True, fastmath=False, error_model="numpy")
def _polyline_block(pts, verts, len2, scale, tol, s0, out):  # pragma: no cover - numba
    """Field of the polyline ``verts`` at points ``s0 .. s0 + _BLOCK`` into ``out``.

    pts (n, 3), verts (m, 3), len2 (m - 1,) squared segment lengths,
    scale = mu0 I / (4 pi); those rows of out (n, 3) are overwritten.
    """
    m = verts.shape[0]
    k = min(_BLOCK, pts.shape[0] - s0)
    # structure-of-arrays block: the points, |R| of the previous vertex,
    # the field accumulators and the on-conductor flag
    work = np.zeros((8, _BLOCK))
    px = work[0]
    py = work[1]
    pz = work[2]
    rn = work[3]
    bx = work[4]
    by = work[5]
    bz = work[6]
    bad = work[7]
    vx = verts[0, 0]
    vy = verts[0, 1]
    vz = verts[0, 2]
    for j in range(k):
        px[j] = pts[s0 + j, 0]
        py[j] = pts[s0 + j, 1]
        pz[j] = pts[s0 + j, 2]
        ax = px[j] - vx
        ay = py[j] - vy
        az = pz[j] - vz
        rn[j] = np.sqrt(ax * ax + ay * ay + az * az)
    for q in range(1, m):
        wx = verts[q, 0]
        wy = verts[q, 1]
        wz = verts[q, 2]
        tl2 = tol * len2[q - 1]
        # branch-free over the block (selects, not jumps), so it vectorises;
        # |Ri| is the previous segment's |Rf|
        for j in range(k):
            ax = px[j] - vx
            ay = py[j] - vy
            az = pz[j] - vz
            an = rn[j]
            cx = px[j] - wx
            cy = py[j] - wy
            cz = pz[j] - wz
            cn = np.sqrt(cx * cx + cy * cy + cz * cz)
            ux = ay * cz - az * cy  # Ri x Rf
            uy = az * cx - ax * cz
            uz = ax * cy - ay * cx
            u2 = ux * ux + uy * uy + uz * uz
            dot = ax * cx + ay * cy + az * cz
            rr = an * cn
            neg = dot < 0.0
            # D = num_d / num with no cancellation in either branch
            num = rr - dot if neg else 1.0
            dd = u2 if neg else rr + dot
            on = 2.0 * dd <= tl2 * num
            den = 1.0 if on else rr * dd
            num = 0.0 if on else num
            f = (an + cn) * num / den
            bx[j] += f * ux
            by[j] += f * uy
            bz[j] += f * uz
            bad[j] = 1.0 if on else bad[j]
            rn[j] = cn
        vx = wx
        vy = wy
        vz = wz
    for j in range(k):
        if bad[j] != 0.0:
            out[s0 + j, 0] = np.nan
            out[s0 + j, 1] = np.nan
            out[s0 + j, 2] = np.nan
        else:
            out[s0 + j, 0] = scale * bx[j]
            out[s0 + j, 1] = scale * by[j]
            out[s0 + j, 2] = scale * bz[j]


@njit(parallel=True, cache=True, fastmath=False, error_model="numpy")
def _polyline_parallel(pts, verts, len2, scale, tol, out):  # pragma: no cover - numba
    """All blocks of ``pts``, spread over the threads."""
    nblk = (pts.shape[0] + _BLOCK - 1) // _BLOCK
    for blk in prange(nblk):
        _polyline_block(pts, verts, len2, scale, tol, blk * _BLOCK, out)


@njit(cache=True, fastmath=False, error_model="numpy")
def _polyline_serial(pts, verts, len2, scale, tol, out):  # pragma: no cover - numba
    """All blocks of ``pts`` on the calling thread."""
    nblk = (pts.shape[0] + _BLOCK - 1) // _BLOCK
    for blk in range(nblk):
        _polyline_block(pts, verts, len2, scale, tol, blk * _BLOCK, out)


def _as_vertices(vertices, name: str = "vertices") -> np.ndarray:
    """Validate a vertex list: (m, 3), m >= 2, finite, no zero-length segment."""
    arr = np.ascontiguousarray(vertices, dtype=np.float64)
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise ValueError(f"{name} must have shape (m, 3); got {arr.shape}")
    if arr.shape[0] < 2:
        raise ValueError(f"{name} must have at least 2 vertices; got {arr.shape[0]}")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite; got non-finite coordinates")
    seg = np.linalg.norm(np.diff(arr, axis=0), axis=1)
    zero = np.flatnonzero(seg == 0.0)
    if zero.size:
        raise ValueError(
            f"{name} must not repeat a vertex (zero-length segment); "
            f"segment {int(zero[0])} from vertex {int(zero[0])} to {int(zero[0]) + 1} "
            "has length 0"
        )
    return arr


def polyline_field(points, *, vertices, current) -> np.ndarray:
    """Field of a filamentary polyline carrying ``current``.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points (a single (3,) point is accepted).
    vertices : array_like, shape (m, 3) [m]
        Current flows from ``vertices[0]`` to ``vertices[-1]``; m >= 2.
    current : float [A]
        Current in the conductor.

    Returns
    -------
    ndarray, shape (n, 3) [T]
        NaN on the conductor (see the module docstring for the tolerance).

    References
    ----------
    J. L. Hanson and S. P. Hirshman, "Compact expressions for the Biot-Savart
    fields of a filamentary segment", Phys. Plasmas 9, 4410 (2002).
    """
    pts = as_points(points)
    verts = _as_vertices(vertices)
    cur = finite(current, "current")
    return _polyline(pts, verts, cur)


def _polyline(pts: np.ndarray, verts: np.ndarray, current: float) -> np.ndarray:
    len2 = np.einsum("ij,ij->i", np.diff(verts, axis=0), np.diff(verts, axis=0))
    out = np.empty_like(pts)
    if len(pts):
        kernel = (
            _polyline_parallel if len(pts) * len(len2) >= PARALLEL_MIN_WORK else _polyline_serial
        )
        kernel(pts, verts, len2, mu_0 * current / (4.0 * np.pi), ON_SEGMENT_TOL, out)
    return out


@dataclass(frozen=True, eq=False)
class Polyline:
    """A filamentary polyline conductor (a cable core or a busbar centre line).

    Parameters
    ----------
    vertices : array_like, shape (m, 3) [m]
        m >= 2, finite, consecutive vertices distinct; current flows from
        ``vertices[0]`` to ``vertices[-1]``.
    current : float [A]
        Current in the conductor.

    References
    ----------
    J. L. Hanson and S. P. Hirshman, Phys. Plasmas 9, 4410 (2002).
    """

    vertices: np.ndarray
    current: float

    def __post_init__(self):
        object.__setattr__(self, "vertices", _as_vertices(self.vertices))
        object.__setattr__(self, "current", finite(self.current, "current"))

    @property
    def length(self) -> float:
        """Total conductor length [m]."""
        return float(np.linalg.norm(np.diff(self.vertices, axis=0), axis=1).sum())

    def field(self, points) -> np.ndarray:
        """B at ``points`` (n, 3) [m] -> (n, 3) [T]; NaN on the conductor."""
        return _polyline(as_points(points), self.vertices, self.current)


# --- go/return pairs ---------------------------------------------------------

#: A segment whose horizontal direction component is below this (relative to
#: its length) counts as vertical for the default offset rule.
_VERTICAL_TOL = 1e-9


def _segment_normals(path: np.ndarray, normal) -> np.ndarray:
    """Unit offset direction (m - 1, 3) perpendicular to each segment of ``path``."""
    t = np.diff(path, axis=0)
    t /= np.linalg.norm(t, axis=1, keepdims=True)
    if normal is not None:
        nv = unit_axis(normal, "normal")
        n = nv - (t @ nv)[:, None] * t
        norm = np.linalg.norm(n, axis=1)
        bad = np.flatnonzero(norm < 1e-9)
        if bad.size:
            raise ValueError(
                f"normal must not be parallel to a segment of path; it is parallel "
                f"to segment {int(bad[0])} (direction {t[bad[0]].tolist()})"
            )
        return n / norm[:, None]
    # Default: horizontal and to the left of the run, n = z x t, normalised.
    n = np.stack([-t[:, 1], t[:, 0], np.zeros(len(t))], axis=1)
    norm = np.linalg.norm(n, axis=1)
    level = norm >= _VERTICAL_TOL
    if not np.any(level):
        # An all-vertical route: offset along +x.
        return np.tile([1.0, 0.0, 0.0], (len(t), 1))
    n[level] /= norm[level, None]
    # A vertical segment takes the normal of the nearest preceding non-vertical
    # segment (else of the first following one): horizontal, and continuous
    # through a riser.
    idx = np.where(level, np.arange(len(t)), -1)
    idx = np.maximum.accumulate(idx)
    first = int(np.argmax(level))
    idx[idx < 0] = first
    return n[idx]


#: Largest turn of the offset direction at one vertex [degrees]; the miter
#: offset grows as 1 / cos(turn / 2) (5.8 times spacing / 2 at 160 degrees).
MAX_OFFSET_TURN_DEG = 160.0
_MIN_NORMAL_COS = float(np.cos(np.radians(MAX_OFFSET_TURN_DEG)))


def _corner_offsets(n: np.ndarray, half: float) -> np.ndarray:
    """Offsets (m, 3) of the vertices for per-segment unit normals ``n`` (m - 1, 3).

    End vertices move by ``half * n``.  A corner between normals n1, n2 moves
    by ``half (n1 + n2) / (1 + n1 . n2)``: the shortest vector whose projection
    on both normals is ``half`` (for a bend in the plane of the cable this is
    the miter point along the bisector, where the two offset segments meet).
    """
    off = np.empty((len(n) + 1, 3))
    off[0] = half * n[0]
    off[-1] = half * n[-1]
    if len(n) > 1:
        n1, n2 = n[:-1], n[1:]
        c = np.einsum("ij,ij->i", n1, n2)
        bad = np.flatnonzero(c < _MIN_NORMAL_COS)
        if bad.size:
            k = int(bad[0])
            turn = float(np.degrees(np.arccos(np.clip(c[k], -1.0, 1.0))))
            raise ValueError(
                f"path must not turn the cable's offset direction by more than "
                f"{MAX_OFFSET_TURN_DEG:g} degrees at one vertex; it turns by {turn:.1f} "
                f"degrees at vertex {k + 1} (split the turn into two bends)"
            )
        off[1:-1] = half * (n1 + n2) / (1.0 + c)[:, None]
    return off


def two_core_cable(path, *, current, spacing, normal=None) -> Scene:
    """A go/return pair of conductors along ``path``.

    Parameters
    ----------
    path : array_like, shape (m, 3) [m]
        Centre line of the cable; the go core carries ``current`` from
        ``path[0]`` to ``path[-1]``, the return core carries it back.
    current : float [A]
        Current in each core.
    spacing : float [m]
        Centre-to-centre distance of the cores (> 0).
    normal : array_like, shape (3,), optional
        Direction from the return core to the go core.  Each segment uses the
        part of ``normal`` perpendicular to it (it must not be parallel to any
        segment).  If omitted: horizontal and to the left of the direction of
        travel (``z x t``) on every non-vertical segment; a vertical segment
        takes the normal of the nearest preceding non-vertical segment (else the
        first following one); an all-vertical route uses +x.

    Returns
    -------
    Scene
        Two :class:`Polyline` sources: the go core at ``path + o`` carrying
        ``current`` and the return core at ``path - o`` carrying ``-current``.
        At an end ``o = spacing / 2 * n``; at a corner ``o`` is the miter
        offset ``spacing / 2 * (n1 + n2) / (1 + n1 . n2)`` (see
        ``_corner_offsets``), so the path stays the exact mid-line.  A vertex
        where the offset direction turns by more than ``MAX_OFFSET_TURN_DEG``
        (a hairpin) is rejected: split it into two bends.

    References
    ----------
    J. L. Hanson and S. P. Hirshman, Phys. Plasmas 9, 4410 (2002) (each core).
    """
    pts = _as_vertices(path, "path")
    cur = finite(current, "current")
    half = 0.5 * positive_finite(spacing, "spacing")
    off = _corner_offsets(_segment_normals(pts, normal), half)
    return Scene((Polyline(pts + off, cur), Polyline(pts - off, -cur)))
