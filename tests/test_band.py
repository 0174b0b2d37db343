"""The maximum of |B| over the check band between check heights (siting.analysis.band)."""

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.optimize import minimize_scalar
from test_checks import LongWire
from test_grid import Counting, PointDipole

from siting.analysis.band import Z_TOL, band_max
from siting.analysis.grid import PlanGrid
from siting.fields.scene import Scene

CURRENT = 400.0  # [A]


def test_cable_between_check_heights_keeps_its_full_field():
    # a long wire along y at x = 0, z = 1.3 m, checked at 0, 1 and 2 m: the band [0, 2] m
    # holds the wire's height, so the band maximum at plan distance rho is the field on
    # the wire's level, mu0 I / (2 pi rho) (Ampere's law; Jackson, Classical
    # Electrodynamics, 3rd ed., 1999, sec. 5.1). The check heights alone miss it
    x = np.linspace(0.05, 3.0, 60)
    grid = PlanGrid("g", x, np.array([-1.0, 0.0, 1.0]), [0.0, 1.0, 2.0])
    scene = Scene([LongWire([0.0, 0.0, 1.3], [0.0, 1.0, 0.0], CURRENT)])
    exact = mu_0 * CURRENT / (2 * np.pi * x)
    ff = band_max(scene, grid)
    # the search stops with its bracket shorter than Z_TOL around the peak, so the value
    # is low by at most about (Z_TOL / rho)^2 / 2 (the peak's curvature); measured 8e-4 at
    # 0.05 m, 1e-4 from 0.1 m on
    bound = 0.5 * (Z_TOL / x) ** 2
    assert np.all(ff.bmax[1] <= exact * (1 + 1e-12))
    assert np.all(exact - ff.bmax[1] <= bound * exact)
    np.testing.assert_allclose(ff.bmax[1, x >= 0.1], exact[x >= 0.1], rtol=2e-4)
    np.testing.assert_allclose(ff.zmax[1], 1.3, atol=Z_TOL)
    sampled = band_max(scene, grid, refine=False)
    assert sampled.bmax[1, 3] < 0.6 * exact[3]  # 0.2 m from the wire: 0.3 m below it
    # the 0.5 mT line of the wire, at rho = mu0 I / (2 pi 0.5 mT) = 0.16 m, is on the map
    # only after the search
    assert ff.bmax[1, 2] > 5e-4 > sampled.bmax[1, 2]


@pytest.mark.parametrize("zc", [0.7, 1.25, 1.95])
def test_magnet_between_check_heights_matches_a_bounded_scalar_search(zc):
    # a horizontal dipole (Jackson eq. 5.56) at height zc, checked at 0, 0.5, ... 2 m:
    # the band maximum at each node against scipy's bounded scalar minimiser of -|B|(z)
    dip = PointDipole([0.0, 0.0, zc], [2e4, 0.0, 0.0], envelope=0.5)
    xs = np.linspace(-4.0, 4.0, 9)
    grid = PlanGrid("g", xs, xs, [0.0, 0.5, 1.0, 1.5, 2.0])
    ff = band_max(Scene([dip]), grid)
    for j, yv in enumerate(xs):
        for i, xv in enumerate(xs):
            if ff.invalid[j, i]:
                continue
            res = minimize_scalar(
                lambda z, xv=xv, yv=yv: -np.linalg.norm(dip.field(np.array([[xv, yv, z]]))[0]),
                bounds=(0.0, 2.0),
                method="bounded",
                options={"xatol": 1e-7},
            )
            assert ff.bmax[j, i] == pytest.approx(-res.fun, rel=2e-4)  # measured <= 1.2e-4


def test_band_face_maximum_costs_one_probe():
    # a dipole below the floor: |B| falls upwards through the band, so its maximum is on
    # the lowest check height, found with one probe call above it
    dip = PointDipole([0.0, 0.0, -1.0], [0.0, 0.0, 1e4])
    xs = np.linspace(-3.0, 3.0, 13)
    grid = PlanGrid("g", xs, xs, [0.0, 1.0, 2.0])
    sc = Counting(Scene([dip]))
    ff = band_max(sc, grid)
    assert sc.calls == 2 and sc.points == 4 * xs.size**2
    np.testing.assert_array_equal(ff.bmax, band_max(Scene([dip]), grid, refine=False).bmax)
    np.testing.assert_array_equal(ff.zmax, 0.0)


def test_undefined_height_inside_the_band_marks_the_node():
    # the wire itself passes through the band between check heights: nodes within its
    # radius of the wire's plan line hit the undefined set during the search
    wire = LongWire([0.0, 0.0, 1.3], [0.0, 1.0, 0.0], CURRENT, radius=0.02)
    grid = PlanGrid("g", np.array([-0.01, 0.5]), np.array([0.0, 1.0]), [0.0, 1.0, 2.0])
    ff = band_max(Scene([wire]), grid)
    assert ff.invalid[:, 0].all() and not ff.invalid[:, 1].any()


def test_ceiling_stops_the_search_without_moving_lines_below_it():
    # nodes that reach the ceiling stop there: their value can only grow, so the
    # region at any level up to the ceiling is the same as with a full search
    from siting.analysis.contours import level_region

    x = np.linspace(-1.5, 1.5, 61)
    grid = PlanGrid("g", x, x, [0.0, 1.0, 2.0])
    scene = Counting(Scene([LongWire([0.0, 0.0, 1.3], [0.0, 1.0, 0.0], CURRENT)]))
    full = band_max(scene, grid)
    calls_full, scene.calls = scene.calls, 0
    capped = band_max(scene, grid, ceiling=5e-4)
    assert scene.calls <= calls_full
    assert np.all(capped.bmax[~capped.invalid] <= full.bmax[~capped.invalid] * (1 + 1e-12))
    for level in (1e-4, 2e-4, 5e-4):
        a, b = level_region(full, level), level_region(capped, level)
        assert a.symmetric_difference(b).area < 1e-9
