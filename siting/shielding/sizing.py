"""Choose the stock thickness of shielding plates.

For a group of plates (solved together, all at the same candidate thickness)
:func:`size_plates` walks the stock list upward and stops at the first
thickness for which |B| at every target point is at or below its limit.  For
each candidate it reports the field at the targets, the peak flux density in
the steel against the design limit (default 1.5 T, common practice), the mass
and the net force on each plate.  To size plates one at a time, call it with
a single plate.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.fields._frame import as_points
from siting.shielding.effects import sheet_forces
from siting.shielding.material import DESIGN_B_LIMIT, STEEL_DENSITY, STOCK_THICKNESSES
from siting.shielding.mesh import SheetMesh
from siting.shielding.thinsheet import Sheet, solve_sheets


@dataclass(frozen=True)
class Candidate:
    """One stock thickness tried.

    Attributes
    ----------
    thickness : float [m]
    b_targets : ndarray, shape (n,) [T]
        |B| at the targets with the plates.
    meets_targets : bool
    b_steel_peak : float [T]
    within_steel_limit : bool
    masses : ndarray, shape (n_plates,) [kg]
    forces : ndarray, shape (n_plates, 3) [N]
    iterations : int
    """

    thickness: float
    b_targets: np.ndarray
    meets_targets: bool
    b_steel_peak: float
    within_steel_limit: bool
    masses: np.ndarray
    forces: np.ndarray
    iterations: int


@dataclass(frozen=True)
class Sizing:
    """Result of :func:`size_plates`: ``chosen`` is None when no stock thickness suffices."""

    chosen: Candidate | None
    candidates: tuple


def size_plates(meshes, material, source, targets, limits, *, stock=STOCK_THICKNESSES,
                b_limit: float = DESIGN_B_LIMIT, density: float = STEEL_DENSITY,
                tol: float = 1e-6, stop_at_first: bool = True) -> Sizing:
    """Smallest stock thickness of a group of plates that meets the field limits.

    Parameters
    ----------
    meshes : sequence of SheetMesh
        The plates' mid-surfaces (their meshes are kept for every thickness).
    material : BHCurve or ConstantPermeability
        Steel of all plates.
    source : object with ``field(points) -> B (n, 3) [T]``
        The applied field.
    targets : array_like, shape (n, 3) [m]
        Points whose |B| must stay within the limits.
    limits : float or array_like, shape (n,) [T]
        Limit per target.
    stock : sequence of float [m]
        Candidate thicknesses, tried in increasing order.
    b_limit : float [T]
        Design limit of the flux density in the steel.
    density : float [kg/m^3]
        Steel density for the masses.
    tol : float
        Relative residual of each nonlinear solve.
    stop_at_first : bool
        Stop at the first thickness meeting the targets (else try all).
    """
    meshes = tuple(meshes)
    if not meshes or not all(isinstance(m, SheetMesh) for m in meshes):
        raise TypeError("meshes must be a non-empty sequence of SheetMesh")
    pts = as_points(targets)
    lim = np.broadcast_to(np.asarray(limits, dtype=float), (len(pts),))
    b_src = source.field(pts)
    out = []
    chosen = None
    for t in sorted(float(x) for x in stock):
        sheets = [Sheet(m, t, material, name=f"plate {i}", density=density)
                  for i, m in enumerate(meshes)]
        sol = solve_sheets(sheets, source, tol=tol)
        b = np.linalg.norm(b_src + sol.field(pts), axis=1)
        peak = sol.peak_b()
        cand = Candidate(t, b, bool(np.all(b <= lim)), peak, peak <= b_limit,
                         np.array([s.mass for s in sheets]), sheet_forces(sol, source),
                         sol.iterations)
        out.append(cand)
        if cand.meets_targets and chosen is None:
            chosen = cand
            if stop_at_first:
                break
    return Sizing(chosen, tuple(out))
