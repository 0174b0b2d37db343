"""Point magnetic dipole: the far field of any small current distribution.

    B(r) = mu0 / (4 pi) * (3 r_hat (m . r_hat) - m) / |r|^3

(J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, eq. 5.56), with
``r`` from the dipole's centre to the field point and ``m`` the moment
[A m^2].  The contact term (Jackson eq. 5.64, from memory) is a delta
function at the centre and is not represented: the centre itself (and any
point so close that ``|r|^-3`` overflows, below about 1e-103 m) gives NaN in
all three components.

Useful equivalents: a flat coil of N turns, radius R, current I has
``|m| = N I pi R^2`` along its axis (Jackson sec. 5.6).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numba import njit, prange
from scipy.constants import mu_0

from siting.fields._frame import as_points, as_vector

#: Below this many points a call runs on one thread: thread start-up (and, on
#: a busy machine, waiting for a second core) costs more than it saves.
PARALLEL_MIN_POINTS = 1 << 17

#: Points per parallel work item.
_BLOCK = 4096


@njit(cache=True, fastmath=False, error_model="numpy")
def _dipole_rows(pts, center, moment, start, stop, out):  # pragma: no cover - numba
    """out[start:stop] (rows, 3) [T] = field at pts[start:stop] of ``moment`` at ``center``."""
    k = mu_0 / (4.0 * np.pi)
    cx = center[0]
    cy = center[1]
    cz = center[2]
    mx = moment[0]
    my = moment[1]
    mz = moment[2]
    for i in range(start, stop):
        x = pts[i, 0] - cx
        y = pts[i, 1] - cy
        z = pts[i, 2] - cz
        r2 = x * x + y * y + z * z
        ir = 1.0 / np.sqrt(r2)
        ir2 = ir * ir
        ir3 = k * ir * ir2
        if r2 > 0.0 and ir3 < np.inf:
            a = 3.0 * (mx * x + my * y + mz * z) * ir2
            out[i, 0] = (a * x - mx) * ir3
            out[i, 1] = (a * y - my) * ir3
            out[i, 2] = (a * z - mz) * ir3
        else:
            out[i, 0] = np.nan
            out[i, 1] = np.nan
            out[i, 2] = np.nan


@njit(parallel=True, cache=True, fastmath=False, error_model="numpy")
def _dipole_parallel(pts, center, moment, out):  # pragma: no cover - numba
    """All rows, in blocks spread over the threads."""
    n = pts.shape[0]
    for blk in prange((n + _BLOCK - 1) // _BLOCK):
        _dipole_rows(pts, center, moment, blk * _BLOCK, min(n, (blk + 1) * _BLOCK), out)


def dipole_field(points, *, center, moment) -> np.ndarray:
    """Field of a point magnetic dipole.

    Parameters
    ----------
    points : array_like, shape (n, 3) [m]
        Field points (a single (3,) point is accepted).
    center : array_like, shape (3,) [m]
        Position of the dipole.
    moment : array_like, shape (3,) [A m^2]
        Magnetic moment.

    Returns
    -------
    ndarray, shape (n, 3) [T]
        NaN at the centre.

    References
    ----------
    J. D. Jackson, Classical Electrodynamics, 3rd ed., Wiley, 1999, eq. 5.56.
    """
    return _dipole(as_points(points), as_vector(center, "center"), as_vector(moment, "moment"))


def _dipole(pts: np.ndarray, center: np.ndarray, moment: np.ndarray) -> np.ndarray:
    out = np.empty_like(pts)
    n = len(pts)
    if n >= PARALLEL_MIN_POINTS:
        _dipole_parallel(pts, center, moment, out)
    elif n:
        _dipole_rows(pts, center, moment, 0, n, out)
    return out


@dataclass(frozen=True, eq=False)
class Dipole:
    """A point magnetic dipole (a small coil, a magnetised object far away).

    Parameters
    ----------
    center : array_like, shape (3,) [m]
        Position of the dipole.
    moment : array_like, shape (3,) [A m^2]
        Magnetic moment.

    References
    ----------
    J. D. Jackson, Classical Electrodynamics, 3rd ed., Wiley, 1999, eq. 5.56.
    """

    center: np.ndarray
    moment: np.ndarray

    def __post_init__(self):
        object.__setattr__(self, "center", as_vector(self.center, "center"))
        object.__setattr__(self, "moment", as_vector(self.moment, "moment"))

    def field(self, points) -> np.ndarray:
        """B at ``points`` (n, 3) [m] -> (n, 3) [T]; NaN at the centre."""
        return _dipole(as_points(points), self.center, self.moment)
