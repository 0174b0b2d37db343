"""What the steel does: forces on the sheets, the magnet's field shift and homogeneity,
and the pull on small ferrous objects.

* Force on a sheet: its magnetic charges in the external field,
  ``F = mu0 sum_e lambda_e int_e H_ext dl`` (the total force on a magnetised body
  equals the force on its equivalent charges in the field of everything else;
  the body's own field exerts no net force).  H_ext is the source field plus the
  other sheets' field; the edge integrals use Gauss-Legendre quadrature.
* Magnet: the sheets' field at the isocentre (uT, and ppm of the central field)
  and the peak-to-peak variation of the axial component over a sphere (default
  diameter 0.5 m), in ppm of the central field.
* Small ferrous sphere: induced moment ``m = 4 pi a^3 (mu - 1)/(mu + 2) B / mu0``
  (unsaturated) and force ``F = (m . grad) B``.

References
----------
J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.9 (charges of
magnetisation), sec. 5.11 (sphere in a uniform field, eq. 5.115), sec. 5.7
(force on a dipole, eq. 5.69).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0

from siting.fields._frame import as_points, as_vector, positive_finite, unit_axis
from siting.shielding.thinsheet import SheetSolution


def sheet_forces(solution: SheetSolution, source, *, order: int = 4) -> np.ndarray:
    """Net force on each sheet (n_sheets, 3) [N].

    Parameters
    ----------
    solution : SheetSolution
        The solved sheets.
    source : object with ``field(points) -> B (n, 3) [T]``
        The applied field the sheets were solved in.
    order : int
        Gauss-Legendre points per edge.

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.9.
    """
    x, w = np.polynomial.legendre.leggauss(int(order))
    s = 0.5 * (x + 1.0)
    a, b = solution.starts, solution.ends
    length = np.linalg.norm(b - a, axis=1)
    pts = (a[:, None, :] + s[None, :, None] * (b - a)[:, None, :]).reshape(-1, 3)
    b_src = source.field(pts).reshape(len(a), len(s), 3)
    n_sheets = len(solution.sheets)
    out = np.zeros((n_sheets, 3))
    for i in range(n_sheets):  # loop over sheets, not panels
        sel = solution.edge_sheet == i
        b_ext = b_src[sel]
        if n_sheets > 1:
            b_ext = b_ext + solution.field(pts.reshape(len(a), len(s), 3)[sel].reshape(-1, 3),
                                           exclude=i).reshape(-1, len(s), 3)
        line = 0.5 * length[sel, None] * np.einsum("q,eqj->ej", w, b_ext)  # int B dl
        out[i] = solution.charges[sel] @ line  # mu0 lambda int H dl = lambda int B dl
    return out


@dataclass(frozen=True)
class MagnetEffect:
    """Field shift and homogeneity change caused by the steel at a magnet.

    Attributes
    ----------
    shift : ndarray, shape (3,) [T]
        Sheets' field at the isocentre.
    shift_ut : float
        Its component along the central field [uT].
    shift_ppm : float
        The same in ppm of the central field.
    peak_to_peak_ppm : float
        Peak-to-peak of the along-field component of the sheets' field over the
        sphere, in ppm of the central field.
    """

    shift: np.ndarray
    shift_ut: float
    shift_ppm: float
    peak_to_peak_ppm: float


def sphere_points(center, diameter: float, n: int = 400) -> np.ndarray:
    """Quasi-uniform points (n, 3) [m] on a sphere (Fibonacci lattice)."""
    c = as_vector(center, "center")
    i = np.arange(n) + 0.5
    z = 1 - 2 * i / n
    phi = np.pi * (1 + 5**0.5) * i
    r = np.sqrt(1 - z * z)
    return c + 0.5 * diameter * np.column_stack([r * np.cos(phi), r * np.sin(phi), z])


def magnet_effect(solution, center, central_field, *, axis=(0, 0, 1), diameter: float = 0.5,
                  n: int = 400) -> MagnetEffect:
    """Shift at the isocentre and peak-to-peak over a sphere of the sheets' field.

    Parameters
    ----------
    solution : SheetSolution (or any source)
        The sheets whose field disturbs the magnet.
    center : array_like, shape (3,) [m]
        Isocentre.
    central_field : float [T]
        The magnet's central field (the ppm reference).
    axis : array_like, shape (3,)
        Direction of the central field.
    diameter : float [m]
        Diameter of the homogeneity sphere (default 0.5 m).
    n : int
        Points on the sphere's surface (a harmonic field takes its extremes there).
    """
    b0 = positive_finite(central_field, "central_field")
    ax = unit_axis(axis)
    shift = solution.field(as_points(center))[0]
    along = solution.field(sphere_points(center, diameter, n)) @ ax
    return MagnetEffect(shift, float(shift @ ax) * 1e6, float(shift @ ax) / b0 * 1e6,
                        float(along.max() - along.min()) / b0 * 1e6)


def sphere_moment(radius: float, mu_r: float, b) -> np.ndarray:
    """Induced moment (n, 3) [A m^2] of a small unsaturated sphere in field b (n, 3) [T].

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.11, eq. 5.115
    (M = 3 (mu - 1)/(mu + 2) H0 inside).
    """
    a = positive_finite(radius, "radius")
    return 4 * np.pi * a**3 * (mu_r - 1) / (mu_r + 2) * np.atleast_2d(b) / mu_0


def field_gradient(source, points, *, step: float = 1e-4) -> np.ndarray:
    """Gradient tensor (n, 3, 3) [T/m], ``g[:, i, j] = dB_i / dx_j``, central differences."""
    pts = as_points(points)
    g = np.empty((len(pts), 3, 3))
    for j in range(3):  # three axes
        d = np.zeros(3)
        d[j] = step
        g[:, :, j] = (source.field(pts + d) - source.field(pts - d)) / (2 * step)
    return g


def sphere_force(source, centers, radius: float, mu_r: float, *, step: float = 1e-4):
    """Force (n, 3) [N] on small unsaturated ferrous spheres: ``F = (m . grad) B``.

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, eq. 5.69 and eq. 5.115.
    """
    pts = as_points(centers)
    m = sphere_moment(radius, mu_r, source.field(pts))
    return np.einsum("nij,nj->ni", field_gradient(source, pts, step=step), m)
