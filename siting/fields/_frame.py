"""Orientation helpers shared by the axisymmetric source models.

A source with a symmetry axis is computed in its own frame, whose third axis is
the source's unit axis vector; the points are rotated into that frame and the
field rotated back.  Rotations are orthonormal (3, 3) matrices whose rows are
the frame's unit vectors in global coordinates.
"""

from __future__ import annotations

import numpy as np


def as_points(points) -> np.ndarray:
    """Return ``points`` as a C-contiguous float64 array of shape (n, 3) [m].

    A single point of shape (3,) is accepted and returned as (1, 3).
    """
    arr = np.ascontiguousarray(points, dtype=np.float64)
    if arr.ndim == 1 and arr.shape[0] == 3:
        arr = arr.reshape(1, 3)
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise ValueError(f"points must have shape (n, 3); got {arr.shape}")
    return arr


def as_vector(value, name: str) -> np.ndarray:
    """Return a finite float64 vector of shape (3,), or raise naming ``name``."""
    vec = np.asarray(value, dtype=np.float64).reshape(-1)
    if vec.shape != (3,):
        raise ValueError(f"{name} must be a 3-vector; got shape {vec.shape}")
    if not np.all(np.isfinite(vec)):
        raise ValueError(f"{name} must be finite; got {vec.tolist()}")
    return vec


def unit_axis(axis, name: str = "axis") -> np.ndarray:
    """Return ``axis`` normalised to unit length; a zero vector is an error."""
    vec = as_vector(axis, name)
    norm = float(np.linalg.norm(vec))
    if norm == 0.0:
        raise ValueError(f"{name} must be a non-zero vector")
    return vec / norm


def frame(axis) -> np.ndarray:
    """Orthonormal frame (3, 3) whose last row is the unit ``axis``.

    The first row is perpendicular to the axis and chosen deterministically
    (Gram-Schmidt against the global axis least aligned with ``axis``).
    """
    w = unit_axis(axis)
    helper = np.zeros(3)
    helper[int(np.argmin(np.abs(w)))] = 1.0
    u = helper - np.dot(helper, w) * w
    u /= np.linalg.norm(u)
    v = np.cross(w, u)
    return np.stack([u, v, w])


def positive_finite(value, name: str) -> float:
    """Return ``value`` as float, or raise unless it is finite and > 0."""
    val = float(value)
    if not np.isfinite(val) or val <= 0.0:
        raise ValueError(f"{name} must be finite and > 0; got {value!r}")
    return val


def finite(value, name: str) -> float:
    """Return ``value`` as float, or raise unless it is finite."""
    val = float(value)
    if not np.isfinite(val):
        raise ValueError(f"{name} must be finite; got {value!r}")
    return val


def as_rows(value, k: int | None, name: str) -> np.ndarray:
    """``value`` as a finite float64 array (k, 3); a single 3-vector is one row."""
    arr = np.ascontiguousarray(value, dtype=np.float64)
    if arr.ndim == 1 and arr.shape[0] == 3 and k in (None, 1):
        arr = arr.reshape(1, 3)
    if arr.ndim != 2 or arr.shape[1] != 3 or (k is not None and arr.shape[0] != k):
        want = "(k, 3)" if k is None else f"({k}, 3)"
        raise ValueError(f"{name} must have shape {want}; got {arr.shape}")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite")
    return arr


def as_axes(axes, k: int) -> np.ndarray:
    """``axes`` (k, 3) normalised row-wise; zero rows are an error."""
    w = as_rows(axes, k, "axes")
    norms = np.linalg.norm(w, axis=1)
    if np.any(norms == 0.0):
        raise ValueError(f"axes must be non-zero vectors; zero rows {np.flatnonzero(norms == 0)}")
    return np.ascontiguousarray(w / norms[:, None])


def as_values(value, k: int, name: str) -> np.ndarray:
    """``value`` as a finite float64 array (k,)."""
    arr = np.ascontiguousarray(value, dtype=np.float64).reshape(-1)
    if arr.shape != (k,):
        raise ValueError(f"{name} must have shape ({k},); got {arr.shape}")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite")
    return arr
