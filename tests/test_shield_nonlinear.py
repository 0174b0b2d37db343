"""Nonlinear thin-sheet solve with the TEAM 13 B-H curve."""

import numpy as np
import pytest
from scipy.constants import mu_0

from siting.errors import SolverError
from siting.fields.dipole import Dipole
from siting.shielding.material import ConstantPermeability, default_steel
from siting.shielding.plates import rectangle
from siting.shielding.thinsheet import Sheet, solve_sheets

STEEL = default_steel()
MESH = rectangle(
    [-0.5, -0.5, 0.1], [1, 0, 0], [0, 1, 0], 1.0, 1.0, thickness=2e-3, focus=[[0, 0, 0]], alpha=0.3
)


def test_saturated_plate_follows_the_bh_curve_at_every_panel():
    src = Dipole([0, 0, 0], [0, 0, 2e3])
    sol = solve_sheets([Sheet(MESH, 2e-3, STEEL)], src, tol=1e-8)
    assert sol.converged and sol.iterations >= 2
    h = np.linalg.norm(sol.h_inplane, axis=1)
    b_t = mu_0 * np.linalg.norm(sol.h_inplane + sol.magnetisation, axis=1)
    # the TEAM 13 curve (Nakata & Fujiwara 1992, Table 2) at each panel's own |H|
    np.testing.assert_allclose(b_t, STEEL.b(h), rtol=1e-6, atol=1e-9)
    assert sol.peak_b() > 1.6  # well into saturation
    assert h.max() > 3e3


def test_weak_source_recovers_the_initial_permeability_solution():
    src = Dipole([0, 0, 0], [0, 0, 1e-3])
    nonlin = solve_sheets([Sheet(MESH, 2e-3, STEEL)], src, tol=1e-10)
    lin = solve_sheets([Sheet(MESH, 2e-3, ConstantPermeability(STEEL.mu_initial))], src)
    assert lin.iterations == 0
    scale = np.abs(lin.magnetisation).max()
    assert np.abs(nonlin.magnetisation - lin.magnetisation).max() < 1e-2 * scale


def test_non_convergence_raises_solver_error():
    with pytest.raises(SolverError):
        solve_sheets(
            [Sheet(MESH, 2e-3, STEEL)], Dipole([0, 0, 0], [0, 0, 2e3]), tol=1e-12, max_iter=1
        )
