"""B-H curve and constant-permeability materials."""

import numpy as np
import pytest
from scipy.constants import mu_0

from siting.shielding.material import (
    STOCK_THICKNESSES,
    BHCurve,
    ConstantPermeability,
    default_steel,
)


def test_team13_table_points_are_reproduced():
    steel = default_steel()
    # T. Nakata, K. Fujiwara, COMPEL 11(3), 1992, Table 2 (TEAM problem 13 steel):
    # H = 342 A/m -> 1.0 T, 933 A/m -> 1.5 T, 9423 A/m -> 1.8 T
    np.testing.assert_allclose(steel.b([342.0, 933.0, 9423.0]), [1.0, 1.5, 1.8], atol=1e-12)
    assert "Nakata" in steel.source


def test_team13_above_table2_follows_problem_equation_1():
    # Compumag TEAM problem 13 description, Eq. (1): B = mu0 H + a H^2 + b H + c for
    # 1.8 <= B <= 2.22 T; evaluated between the tabulated points (interpolation error only)
    a, b, c = -2.381e-10, 2.327e-5, 1.590
    h = np.array([13000.0, 19000.0, 30000.0, 45000.0])
    expected = mu_0 * h + a * h**2 + b * h + c
    np.testing.assert_allclose(default_steel().b(h), expected, atol=3e-3)


def test_saturated_extrapolation_has_vacuum_slope():
    steel = default_steel()
    h_last, b_last = steel.h[-1], steel.b_table[-1]
    h = np.array([1e5, 1e6])
    np.testing.assert_allclose(steel.b(h), b_last + mu_0 * (h - h_last), rtol=1e-14)
    # the problem description's law above 2.22 T, B = mu0 H + 2.16 T, to 2 mT
    np.testing.assert_allclose(steel.b(h), mu_0 * h + 2.16, atol=2e-3)


def test_curve_is_monotone_and_secant_is_consistent():
    steel = default_steel()
    h = np.geomspace(1e-2, 1e6, 5000)
    b = steel.b(h)
    assert np.all(np.diff(b) > 0)
    np.testing.assert_allclose(steel.mu_r(h) * mu_0 * h, b, rtol=1e-12)
    assert np.all(steel.chi_diff(h) >= 0)
    # the secant permeability peaks near 2300 (1.0 T at 342 A/m gives mu_r = 2327)
    assert 2300 < steel.chi_ref + 1 < 2500


def test_constant_permeability():
    mat = ConstantPermeability(1000.0)
    np.testing.assert_allclose(mat.b(100.0), mu_0 * 1000.0 * 100.0)
    assert mat.chi_ref == 999.0
    with pytest.raises(ValueError):
        ConstantPermeability(0.5)


def test_bad_tables_are_refused():
    with pytest.raises(ValueError):
        BHCurve([0, 10, 5], [0, 1, 2])
    with pytest.raises(ValueError):
        BHCurve([1, 10, 20], [0, 1, 2])


def test_stock_list():
    # common practice stock thicknesses, mm
    assert [round(t * 1e3, 1) for t in STOCK_THICKNESSES] == [
        1,
        1.5,
        2,
        3,
        4,
        5,
        6,
        8,
        10,
        12,
        15,
        20,
        25,
        30,
    ]
