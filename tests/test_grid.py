"""Plan grids and the band maximum of |B| (siting.analysis.grid)."""

import numpy as np
import pytest
from scipy.constants import mu_0

from siting.analysis.band import band_max
from siting.analysis.grid import MAX_PLAN_POINTS, FloorField, PlanGrid, floor_grid
from siting.errors import SitingError
from siting.fields.scene import Scene
from siting.site.model import Dipole, Equipment, Floor, Room, Site, SiteInfo


class PointDipole:
    """Point dipole, Jackson, Classical Electrodynamics, 3rd ed. (1999), eq. 5.56:
    B = mu0/(4 pi) (3 n (n.m) - m) / r^3; NaN inside an envelope sphere."""

    def __init__(self, center, moment, envelope=0.0):
        self.c = np.asarray(center, float)
        self.m = np.asarray(moment, float)
        self.a = envelope

    def field(self, points):
        r = np.asarray(points, float) - self.c
        rn = np.linalg.norm(r, axis=1)
        ok = rn > self.a
        out = np.full(r.shape, np.nan)
        n = r[ok] / rn[ok, None]
        out[ok] = mu_0 / (4 * np.pi) * (3 * n * (n @ self.m)[:, None] - self.m) / rn[ok, None] ** 3
        return out


class Counting:
    """Wraps a scene and counts magnitude calls and points."""

    def __init__(self, scene):
        self.scene, self.calls, self.points = scene, 0, 0

    def magnitude(self, pts):
        self.calls += 1
        self.points += len(pts)
        return self.scene.magnitude(pts)


def info(heights=(0.5, 1.0, 1.5)):
    return SiteInfo("t", "m", "mT", (5e-4,), heights, 5e-4)


def room(rid, outline, floor="g", zone=1):
    return Room(rid, floor, rid, zone, np.asarray(outline, float))


def rect(x0, y0, x1, y1):
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


FLOORS = (Floor("g", "ground", 0.0, 4.0), Floor("u", "upper", 4.0, 4.0))


def test_extent_margin_and_spacing_rule():
    # rooms 0..10 x 0..6; smallest room width 1.6 m -> spacing 0.2 m (width / 8)
    site = Site(info(), FLOORS, rooms=(room("a", rect(0, 0, 10, 6)), room("b", rect(2, 1, 3.6, 5))))
    g = floor_grid(site, "g")
    assert g.spacing == pytest.approx(0.2)
    # margin max(2 m, 10 % of 10 m) = 2 m on every side, grid centred on the extent
    assert g.x[0] <= -2.0 + 1e-12 and g.x[-1] >= 12.0 - 1e-12
    assert g.y[0] <= -2.0 + 1e-12 and g.y[-1] >= 8.0 - 1e-12
    assert g.x[-1] - g.x[0] < 14.0 + 0.2 and (g.x[0] + g.x[-1]) / 2 == pytest.approx(5.0)
    np.testing.assert_allclose(g.heights, [0.5, 1.0, 1.5])
    with pytest.raises(SitingError):  # no rooms upstairs and no sources: nothing to grid
        floor_grid(site, "u")


def test_large_floor_uses_ten_percent_margin_and_point_cap():
    rooms = (room("a", rect(0, 0, 400, 300)), room("b", rect(0, 0, 0.4, 5)))
    site = Site(info(), FLOORS, rooms=rooms)
    g = floor_grid(site, "g")
    assert g.x[0] <= -40.0 + 1e-9 and g.y[-1] >= 340.0 - 1e-9  # 10 % of 400 m
    assert g.x.size * g.y.size <= MAX_PLAN_POINTS
    assert g.x.size * g.y.size > 0.9 * MAX_PLAN_POINTS  # the cap widens no more than needed
    # a small room asks for 0.05 m; the lower clip holds
    small = Site(info(), FLOORS, rooms=(room("s", rect(0, 0, 0.2, 0.2)),))
    assert floor_grid(small, "g").spacing == pytest.approx(0.05)


def test_user_spacing_and_floor_without_rooms():
    dip = Dipole("d", "g", np.array([3.0, 4.0, 1.0]), np.array([0, 0, 1.0]))
    eq = Equipment("e", "u", "ct", np.array([5.0, 4.0, 5.0]), 1e-3)
    site = Site(info(), FLOORS, dipoles=(dip,), equipment=(eq,))
    g = floor_grid(site, "u", spacing=0.3, margin=1.0)
    assert np.allclose(np.diff(g.x), 0.3) and np.allclose(np.diff(g.y), 0.3)
    assert g.x[0] <= 2.0 and g.x[-1] >= 6.0  # dipole (3, 4) and equipment (5, 4), +-1 m
    assert g.y[0] <= 3.0 and g.y[-1] >= 5.0
    np.testing.assert_allclose(g.heights, 4.0 + np.array([0.5, 1.0, 1.5]))
    with pytest.raises(SitingError):
        floor_grid(Site(info(), FLOORS), "g")
    with pytest.raises(ValueError):
        floor_grid(site, "u", spacing=-1.0)


def test_band_max_matches_closed_form():
    m = 2.0e3  # A m^2
    src = PointDipole([0.0, 0.0, 0.0], [0.0, 0.0, m])
    grid = PlanGrid("g", np.linspace(-3, 3, 13), np.linspace(-2, 2, 9), [0.5, 1.5, 1.0])
    sc = Counting(Scene([src]))
    ff = band_max(sc, grid, refine=False)  # the check heights alone
    assert sc.calls == 1 and sc.points == 3 * 13 * 9  # the three heights in one call
    assert ff.bmax.shape == (9, 13) and not ff.invalid.any()
    # independent evaluation of Jackson eq. 5.56 in spherical form:
    # |B| = mu0 m / (4 pi r^3) sqrt(1 + 3 cos^2 theta)
    X, Y = np.meshgrid(grid.x, grid.y)
    vals = []
    for z in (0.5, 1.0, 1.5):
        r = np.sqrt(X**2 + Y**2 + z**2)
        vals.append(mu_0 * m / (4 * np.pi * r**3) * np.sqrt(1 + 3 * (z / r) ** 2))
    vals = np.array(vals)
    np.testing.assert_allclose(ff.bmax, vals.max(axis=0), rtol=1e-12)
    np.testing.assert_allclose(ff.zmax, np.array([0.5, 1.0, 1.5])[vals.argmax(axis=0)])
    # on the axis above the dipole the lowest plane wins: B = mu0 2m / (4 pi z^3)
    assert ff.bmax[4, 6] == pytest.approx(mu_0 * 2 * m / (4 * np.pi * 0.5**3), rel=1e-12)


def test_band_max_calls_per_height_on_a_large_grid():
    from siting.analysis.band import BAND_CALL_POINTS

    src = PointDipole([0.0, 0.0, 0.0], [0.0, 0.0, 1e3])
    x = np.linspace(-3, 3, 300)  # 90 000 plan nodes > BAND_CALL_POINTS
    grid = PlanGrid("g", x, x, [0.5, 1.5, 1.0])
    sc = Counting(Scene([src]))
    ff = band_max(sc, grid, refine=False)
    assert 300 * 300 > BAND_CALL_POINTS and sc.calls == 3
    small = band_max(Scene([src]), PlanGrid("g", x[::10], x[::10], [0.5, 1.5, 1.0]), refine=False)
    np.testing.assert_array_equal(ff.bmax[::10, ::10], small.bmax)  # same nodes, same values


def test_band_max_invalid_mask():
    # envelope 1.2 m: nodes within 1.2 m of the dipole at any height are undefined
    src = PointDipole([0.0, 0.0, 0.0], [0.0, 0.0, 1e3], envelope=1.2)
    grid = PlanGrid("g", np.linspace(-3, 3, 25), np.linspace(-3, 3, 25), [0.5, 1.0])
    ff = band_max(Scene([src]), grid)
    X, Y = np.meshgrid(grid.x, grid.y)
    expect = X**2 + Y**2 + 0.5**2 <= 1.2**2  # the lowest plane is the nearest
    np.testing.assert_array_equal(ff.invalid, expect)
    # where only the lower plane is undefined, bmax is the upper plane's value
    part = expect & (X**2 + Y**2 + 1.0**2 > 1.2**2)
    assert part.any() and np.all(np.isfinite(ff.bmax[part]))
    assert np.all(np.isnan(ff.bmax[X**2 + Y**2 + 1.0 <= 1.2**2]))


def test_floor_field_validates_shapes():
    grid = PlanGrid("g", [0.0, 1.0, 2.0], [0.0, 1.0], [1.0])
    with pytest.raises(ValueError, match="bmax"):
        FloorField(grid, np.zeros((3, 2)), np.zeros((2, 3), bool), np.zeros((2, 3)))
    with pytest.raises(ValueError, match="x"):
        PlanGrid("g", [0.0, 0.0], [0.0, 1.0], [1.0])


def test_interpolate_is_exact_for_a_bilinear_field():
    # bilinear interpolation reproduces a + b x + c y + d x y exactly (definition)
    grid = PlanGrid("g", np.linspace(0.0, 4.0, 9), np.linspace(-1.0, 2.0, 7), [0.5, 1.5])
    X, Y = np.meshgrid(grid.x, grid.y)
    f = lambda x, y: 1e-3 + 2e-4 * x - 3e-4 * y + 5e-5 * x * y  # noqa: E731
    zmax = np.where(X < 2.0, 0.5, 1.5)
    invalid = np.zeros(X.shape, bool)
    invalid[0, 0] = True
    ff = FloorField(grid, f(X, Y), invalid, zmax)
    q = np.array([[0.3, 1.7], [3.9, -0.6], [1.26, 0.01], [2.9, 1.1]])
    val, z, bad = ff.interpolate(q)
    np.testing.assert_allclose(val, f(q[:, 0], q[:, 1]), rtol=1e-13)
    np.testing.assert_allclose(z, [0.5, 1.5, 0.5, 1.5])
    assert not bad.any()
    assert ff.interpolate([[0.1, -0.9]])[2][0]  # the cell of the invalid node


def test_refined_keeps_extent_and_heights_and_honours_the_bounds():
    from siting.analysis.grid import MIN_SPACING, refined

    grid = PlanGrid("g", np.linspace(-3, 5, 17), np.linspace(0, 4, 9), [0.5, 1.5])  # 0.5 m
    fine = refined(grid, 0.2)
    assert fine.spacing == pytest.approx(0.2)
    assert fine.x[0] <= grid.x[0] + 1e-12 and fine.x[-1] >= grid.x[-1] - 1e-12
    assert fine.y[0] <= grid.y[0] + 1e-12 and fine.y[-1] >= grid.y[-1] - 1e-12
    np.testing.assert_array_equal(fine.heights, grid.heights)
    assert refined(grid, 0.001).spacing == pytest.approx(MIN_SPACING)
    capped = refined(grid, 0.05, max_points=2000)
    assert capped.x.size * capped.y.size <= 2000 and capped.spacing < grid.spacing
    assert refined(grid, 0.7) is grid and refined(grid, 0.5) is grid
