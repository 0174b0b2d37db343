"""Nonlinear thin-sheet integral solver for passive steel shielding.

Model
-----
A steel sheet of thickness t, thin against its panels and its distance to
the sources, carries a magnetisation M tangential to its mid-surface
(the normal magnetisation of a thin high-permeability sheet is O(1/mu) and is
neglected).  Each flat panel p carries a uniform in-plane M_p (two unknowns in
its tangent basis).  The magnetic volume charge ``-div M`` is then zero inside
the panels and concentrated on their edges: a straight edge e carries the line
charge ``lambda_e = sum_p t_p M_p . n_pe`` over its panels, with ``n_pe`` the
panel's outward in-plane normal to the edge (rims have one panel; folds and
shells are handled by the same sum).  The sheets' field is the Coulomb field
of these line charges (:mod:`siting.shielding.linecharge`), and outside the
steel ``B = mu0 (H_sources + H_sheets)``.

Collocating the constitutive law of the steel at the panels (at the centroid of
a quad, as the mean over three interior points of a triangle, see
:mod:`siting.shielding.mesh`),
``M = chi(|H_t|) H_t`` with ``H_t`` the in-plane total field, gives the
nonlinear system ``F(M) = M - chi(|H_t|) H_t = 0``, ``H_t = H_src,t + K M``,
with K the dense (2N, 2N) operator from the panels' magnetisation to the
in-plane field at the collocation points.

Solution
--------
1. Assemble ``A = I - chi_ref K`` (numba, parallel over targets, no
   Python loop over pairs) and factorise it once (LAPACK getrf through
   :func:`scipy.linalg.lu_factor`, in place; memory ``(2N)^2`` doubles).
   ``chi_ref`` is the material's largest secant susceptibility.  K itself is
   not stored: ``K v = D_ref^-1 (v - A v)`` with ``A v`` from the LU factors
   (two triangular BLAS products and the row permutation).
2. The linear solution with ``chi_ref`` is the starting point (exact for a
   constant-permeability material).
3. Newton iterations: ``J d = -F`` with ``J = I - D K`` (D the 2x2 differential
   susceptibility tensor of each panel) solved by GMRES preconditioned with the
   reused LU of A (an inexact Newton-Krylov method), with a backtracking line
   search on ``|F|``.  Each iteration costs O(N^2), not a new factorisation.
   When the steel saturates, the reference permeability no longer resembles
   the panels' and GMRES slows down; then (at most ``max_factorisations - 1``
   times) A is rebuilt as ``I - D_ref K`` with D_ref each panel's current
   2x2 Jacobian tensor (secant across H, differential along it) and
   factorised again, which makes it a nearly exact Newton matrix.

References
----------
J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.9 (magnetic
scalar potential, charge density ``-div M``) and sec. 5.12 (shielding).
C. T. Kelley, *Solving Nonlinear Equations with Newton's Method*, SIAM, 2003,
ch. 3 (Newton-GMRES with preconditioning and line search).
Y. Saad, M. H. Schultz, "GMRES", SIAM J. Sci. Stat. Comput. 7(3), 1986.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import mu_0
from scipy.sparse.linalg import LinearOperator, gmres

from siting.errors import SolverError
from siting.fields._frame import as_points, positive_finite
from siting.shielding.linecharge import line_charge_field
from siting.shielding.material import STEEL_DENSITY, BHCurve, ConstantPermeability
from siting.shielding.mesh import SheetMesh
from siting.shielding.operator import factorise, jacobian_tensor, layout


@dataclass(frozen=True, eq=False)
class Sheet:
    """A steel sheet: mid-surface mesh, thickness and material.

    Parameters
    ----------
    mesh : SheetMesh
    thickness : float [m]
    material : BHCurve or ConstantPermeability
    name : str
    density : float [kg/m^3]
    """

    mesh: SheetMesh
    thickness: float
    material: BHCurve | ConstantPermeability
    name: str = ""
    density: float = STEEL_DENSITY

    def __post_init__(self):
        if not isinstance(self.mesh, SheetMesh):
            raise TypeError("mesh must be a SheetMesh")
        object.__setattr__(self, "thickness", positive_finite(self.thickness, "thickness"))
        object.__setattr__(self, "density", positive_finite(self.density, "density"))

    @property
    def mass(self) -> float:
        """Mass [kg] = density x mid-surface area x thickness."""
        return self.density * self.mesh.area * self.thickness


@dataclass(frozen=True, eq=False)
class SheetSolution:
    """Solved magnetisation of one or more sheets; itself a field source.

    Attributes
    ----------
    sheets : tuple of Sheet
    magnetisation : ndarray, shape (N, 3) [A/m]
        In-plane M of each panel (all sheets' panels concatenated).
    h_inplane : ndarray, shape (N, 3) [A/m]
        In-plane total H at the collocation points (a triangle: the mean of its three).
    b_steel : ndarray, shape (N, 3) [T]
        Flux density in the steel at the centroids: in-plane ``mu0 (H_t + M)``
        plus the normal component ``mu0 H . n`` (continuous across the faces).
    charges : ndarray, shape (E,) [A]
        Edge line charges; ``starts``, ``ends`` (E, 3) [m] the edges.
    iterations, residual, converged, gmres_iterations, timings
        Newton iterations, final relative residual ``|F| / |M|``, whether
        ``residual <= tol``, total inner GMRES iterations, seconds per stage.
    """

    sheets: tuple
    centroids: np.ndarray
    normals: np.ndarray
    panel_sheet: np.ndarray
    magnetisation: np.ndarray
    h_inplane: np.ndarray
    b_steel: np.ndarray
    starts: np.ndarray
    ends: np.ndarray
    charges: np.ndarray
    edge_sheet: np.ndarray
    iterations: int
    residual: float
    converged: bool
    gmres_iterations: int = 0
    timings: dict = field(default_factory=dict)

    def field(self, points, *, exclude: int | None = None) -> np.ndarray:
        """B (n, 3) [T] of the sheets' edge charges at points (n, 3) [m] outside the steel.

        ``exclude`` leaves out sheet number ``exclude`` (for the force on it).
        """
        lam = self.charges
        if exclude is not None:
            lam = np.where(self.edge_sheet == exclude, 0.0, lam)
        return mu_0 * line_charge_field(as_points(points), self.starts, self.ends, lam)

    def peak_b(self, sheet: int | None = None) -> float:
        """Largest |B| in the steel [T] (over all sheets, or sheet number ``sheet``)."""
        b = np.linalg.norm(self.b_steel, axis=1)
        if sheet is not None:
            b = b[self.panel_sheet == sheet]
        return float(b.max())


def _sampled_source(source, lay, h_centroid):
    """Source H (N, 3) [A/m] averaged over each panel's collocation points."""
    w = lay.sample_weights
    used = (w > 0) & ~((w == 1.0) & (np.arange(w.shape[1]) == 0))  # beyond a lone centroid
    if not used.any():
        return h_centroid
    out = np.where((w[:, 0] == 1.0)[:, None], h_centroid, 0.0)
    rows, cols = np.nonzero(used)
    h = source.field(lay.samples[rows, cols]) / mu_0
    np.add.at(out, rows, w[rows, cols, None] * h)
    return out


def _reference_tensors(sheets, lay):
    """Each panel's initial reference tensor: the material's largest secant susceptibility."""
    chi_ref = np.array([sh.material.chi_ref for sh in sheets])[lay.panel_sheet]
    return chi_ref[:, None, None] * np.eye(2)[None]


def _constitutive(sheets, lay, h2):
    """Secant and differential susceptibilities (N,) at in-plane |H| of h2 (N, 2)."""
    hn = np.linalg.norm(h2, axis=1)
    chis = np.empty(len(hn))
    chid = np.empty(len(hn))
    for i, sh in enumerate(sheets):  # loop over sheets (materials), not panels
        sel = lay.panel_sheet == i
        chis[sel] = sh.material.chi(hn[sel])
        chid[sel] = sh.material.chi_diff(hn[sel])
    return hn, chis, chid


def solve_sheets(sheets, source, *, tol: float = 1e-6, max_iter: int = 40,
                 gmres_restart: int = 60, refactor_after: int = 15,
                 max_factorisations: int = 3) -> SheetSolution:
    """Solve the sheets' magnetisation in the field of ``source``.

    Parameters
    ----------
    sheets : sequence of Sheet
        Solved together (they interact).
    source : object with ``field(points (n, 3)) -> B (n, 3) [T]``
        The applied field (magnets, coils, cables, ambient; not the sheets).
    tol : float
        Required relative residual ``|M - chi(|H_t|) H_t| / |M|``.
    max_iter : int
        Newton iterations allowed.
    gmres_restart : int
        Krylov subspace size between GMRES restarts.
    refactor_after : int
        If a Newton step needs more GMRES iterations than this (the steel has
        left the reference permeability, e.g. in saturation), A is re-assembled
        and re-factorised with each panel's current secant susceptibility as its
        reference, which makes the preconditioner nearly exact.
    max_factorisations : int
        Upper bound on factorisations (the first included).

    Returns
    -------
    SheetSolution

    Raises
    ------
    SolverError
        If the Newton iteration does not reach ``tol`` in ``max_iter`` steps.

    References
    ----------
    C. T. Kelley, *Solving Nonlinear Equations with Newton's Method*, SIAM,
    2003, ch. 3; J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999,
    sec. 5.9.
    """
    sheets = tuple(sheets)
    if not sheets:
        raise ValueError("sheets must not be empty")
    t_start = time.perf_counter()
    lay = layout(sheets)
    n = len(lay.centroids)
    h_src = source.field(lay.centroids) / mu_0
    h_col = _sampled_source(source, lay, h_src)
    if not (np.all(np.isfinite(h_src)) and np.all(np.isfinite(h_col))):
        raise ValueError("source field is undefined (NaN) at a panel centroid")
    hs = np.column_stack([np.einsum("ij,ij->i", h_col, lay.t1),
                          np.einsum("ij,ij->i", h_col, lay.t2)]).reshape(-1)
    d_ref = _reference_tensors(sheets, lay)
    fac, timings = factorise(lay, d_ref)
    t_iter = time.perf_counter()
    m = fac.solve(np.einsum("nij,nj->ni", d_ref, hs.reshape(n, 2)).reshape(-1))
    linear = all(sh.material.linear for sh in sheets)

    def residual_at(mv):
        h = hs + fac.k_dot(mv)
        h2 = h.reshape(n, 2)
        hn, chis, chid = _constitutive(sheets, lay, h2)
        f = mv - (chis[:, None] * h2).reshape(-1)
        return f, h2, hn, chis, chid

    f, h2, hn, chis, chid = residual_at(m)
    scale = max(np.linalg.norm(chis[:, None] * h2), np.finfo(float).tiny)
    res = np.linalg.norm(f) / scale
    it = 0
    n_gmres = 0
    n_fact = 1
    while res > tol and not linear:
        if it >= max_iter:
            raise SolverError(
                f"thin-sheet Newton iteration did not converge: residual {res:.3e} "
                f"after {it} iterations (tol {tol:.1e})")
        it += 1
        with np.errstate(invalid="ignore", divide="ignore"):
            u = np.where(hn[:, None] > 0, h2 / hn[:, None], 0.0)
        dd = (chid - chis)

        def jac(v, chis=chis, u=u, dd=dd, fac=fac):
            kv = fac.k_dot(v).reshape(n, 2)
            dk = chis[:, None] * kv + (dd * np.einsum("ij,ij->i", u, kv))[:, None] * u
            return v - dk.reshape(-1)

        counter = [0]

        def count(_, counter=counter):
            counter[0] += 1

        jop = LinearOperator((2 * n, 2 * n), matvec=jac, dtype=float)
        pop = LinearOperator((2 * n, 2 * n), matvec=fac.solve, dtype=float)
        step, _info = gmres(jop, -f, M=pop, rtol=min(0.05, np.sqrt(res)), atol=0.0,
                            restart=gmres_restart, maxiter=20, callback=count,
                            callback_type="pr_norm")
        n_gmres += counter[0]
        refactor = counter[0] > refactor_after and n_fact < max_factorisations
        lam = 1.0
        f0 = np.linalg.norm(f)
        for _ in range(12):
            trial = residual_at(m + lam * step)
            if np.linalg.norm(trial[0]) < (1 - 1e-4 * lam) * f0:
                break
            lam *= 0.5
        else:
            raise SolverError(
                f"thin-sheet Newton line search failed at iteration {it}: residual {res:.3e}")
        m = m + lam * step
        f, h2, hn, chis, chid = trial
        if refactor:
            # free the old factors first (drop every reference): one dense matrix at a time
            jop = pop = jac = fac = None
            with np.errstate(invalid="ignore", divide="ignore"):
                un = np.where(hn[:, None] > 0, h2 / hn[:, None], [1.0, 0.0])
            fac, more = factorise(lay, jacobian_tensor(np.maximum(chis, 1.0), chid, un,
                                               np.maximum(0.05 * chis, 0.5)))
            n_fact += 1
            timings["assembly"] += more["assembly"]
            timings["factorisation"] += more["factorisation"]
        scale = max(np.linalg.norm(chis[:, None] * h2), np.finfo(float).tiny)
        res = np.linalg.norm(f) / scale
    t_done = time.perf_counter()
    # in-plane M, H and the flux density in the steel
    m2 = m.reshape(n, 2)
    mag = m2[:, :1] * lay.t1 + m2[:, 1:] * lay.t2
    h_t = h2[:, :1] * lay.t1 + h2[:, 1:] * lay.t2
    lam_e = lay.charge_map @ m
    h_full = h_src + line_charge_field(lay.centroids, lay.starts, lay.ends, lam_e)
    h_n = np.einsum("ij,ij->i", h_full, lay.normals)
    b_steel = mu_0 * (h_t + mag + h_n[:, None] * lay.normals)
    timings.update(iterations=t_done - t_iter, total=time.perf_counter() - t_start,
                   factorisations=n_fact)
    return SheetSolution(
        sheets, lay.centroids, lay.normals, lay.panel_sheet, mag, h_t, b_steel,
        lay.starts, lay.ends, lam_e, lay.edge_sheet, it, float(res), bool(res <= tol),
        n_gmres, timings,
    )
