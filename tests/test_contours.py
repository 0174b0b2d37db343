"""Isogauss regions and lines (siting.analysis.contours)."""

import numpy as np
import pytest
import shapely
import shapely.affinity
from scipy.constants import mu_0
from scipy.optimize import brentq
from shapely.geometry import Point, Polygon, box
from test_grid import PointDipole

from siting.analysis.band import band_max
from siting.analysis.contours import (
    level_lines,
    level_region,
    line_error,
    reaches_border,
    region_area,
)
from siting.analysis.grid import FloorField, PlanGrid
from siting.fields.scene import Scene

M = 1.0e4  # dipole moment [A m^2]
LEVEL = 5e-4  # 0.5 mT
# Jackson, Classical Electrodynamics, 3rd ed. (1999), eq. 5.56: on the equator of a
# dipole m (cos theta = 0), |B| = mu0 m / (4 pi r^3), so the 0.5 mT line is the circle
R0 = (mu_0 * M / (4 * np.pi * LEVEL)) ** (1 / 3)
C = np.array([0.1, 0.05, 0.0])  # off the grid's nodes on purpose


def equator_field(h, *, envelope=0.5):
    x = np.arange(-4.0, 4.0 + h / 2, h)
    grid = PlanGrid("g", x, x, [0.0])  # one check plane: the dipole's equator
    return band_max(Scene([PointDipole(C, [0.0, 0.0, M], envelope=envelope)]), grid)


def synthetic(f, h=0.05, half=4.0):
    """A FloorField whose band maximum is f(x, y), given directly."""
    x = np.arange(-half, half + h / 2, h)
    grid = PlanGrid("g", x, x, [1.0])
    X, Y = np.meshgrid(x, x)
    b = f(X, Y)
    return FloorField(grid, b, np.zeros(b.shape, bool), np.ones(b.shape))


def test_dipole_region_is_the_equatorial_circle():
    ff = equator_field(0.1)
    region = level_region(ff, LEVEL)
    assert len(region.geoms) == 1
    # the envelope (NaN) at the centre counts as above the level: no hole there
    assert len(region.geoms[0].interiors) == 0
    assert region.area == pytest.approx(np.pi * R0**2, rel=0.01)
    assert np.sqrt(region.area / np.pi) == pytest.approx(R0, rel=0.01)
    q = region.centroid
    assert np.hypot(q.x - C[0], q.y - C[1]) < 0.01 * R0
    assert region_area(ff, LEVEL) == pytest.approx(region.area)
    lines = level_lines(ff, LEVEL)
    assert len(lines) == 1 and np.allclose(lines[0][0], lines[0][-1])  # one closed line
    r = np.hypot(lines[0][:, 0] - C[0], lines[0][:, 1] - C[1])
    np.testing.assert_allclose(r, R0, rtol=0.01)
    assert not reaches_border(ff, LEVEL)


def test_dipole_region_converges_at_second_order():
    spacings = np.array([0.4, 0.2, 0.1, 0.05])
    err = np.array(
        [abs(region_area(equator_field(h), LEVEL) / (np.pi * R0**2) - 1) for h in spacings]
    )
    # measured: 2.5e-2, 7.7e-3, 1.8e-3, 4.5e-4 -> slope about 1.9 (linear interpolation
    # of a smooth field along cell edges is second order in the spacing)
    slope = np.polyfit(np.log(spacings), np.log(err), 1)[0]
    assert 1.7 < slope < 2.3
    assert np.all(np.diff(err) < 0)


def ring(x, y, rc=2.0, w=0.8):
    return 1e-3 * np.exp(-(((np.hypot(x, y) - rc) / w) ** 2))


def test_annulus_has_a_hole_of_the_right_area():
    ff = synthetic(ring)
    region = level_region(ff, LEVEL)
    # 1e-3 exp(-((r - 2)/0.8)^2) >= 5e-4  <=>  |r - 2| <= 0.8 sqrt(ln 2)
    d = 0.8 * np.sqrt(np.log(2.0))
    r_in, r_out = 2.0 - d, 2.0 + d
    assert len(region.geoms) == 1
    poly = region.geoms[0]
    assert len(poly.interiors) == 1
    hole = np.pi * r_in**2  # area of a disc (elementary geometry)
    assert Polygon(poly.interiors[0]).area == pytest.approx(hole, rel=0.01)
    assert Polygon(poly.exterior).area == pytest.approx(np.pi * r_out**2, rel=0.01)
    assert region.area == pytest.approx(np.pi * (r_out**2 - r_in**2), rel=0.01)
    assert not region.contains(region.centroid)  # the centre is in the hole
    assert len(level_lines(ff, LEVEL)) == 2


def test_island_inside_a_hole_is_a_separate_polygon():
    # a central bump of radius sqrt(ln 2) * 0.5 at the level, inside the ring's hole
    ff = synthetic(lambda x, y: ring(x, y) + 1e-3 * np.exp(-((np.hypot(x, y) / 0.5) ** 2)))
    region = level_region(ff, LEVEL)
    assert region.is_valid and len(region.geoms) == 2
    holes = sorted(len(p.interiors) for p in region.geoms)
    assert holes == [0, 1]
    island = min(region.geoms, key=lambda p: p.area)
    # the island's edge is the root of the radial profile at the level (brentq)
    r_isl = brentq(lambda r: ring(r, 0.0) + 1e-3 * np.exp(-((r / 0.5) ** 2)) - LEVEL, 0.1, 1.2)
    assert island.area == pytest.approx(np.pi * r_isl**2, rel=0.01)


def test_region_touching_the_border_is_closed_along_it():
    # bmax = 1e-3 * (x + 4) / 8 is linear, so linear interpolation is exact: the region
    # bmax >= 0.5 mT is the half of the grid with x >= 0, a rectangle 4 m x 8 m
    ff = synthetic(lambda x, y: 1e-3 * (x + 4.0) / 8.0)
    region = level_region(ff, LEVEL)
    assert region.area == pytest.approx(32.0, rel=1e-9)
    assert region.bounds == pytest.approx((0.0, -4.0, 4.0, 4.0), abs=1e-9)
    assert reaches_border(ff, LEVEL)
    (line,) = level_lines(ff, LEVEL)  # the open line x = 0, not closed along the border
    np.testing.assert_allclose(line[:, 0], 0.0, atol=1e-12)


def test_invalid_nodes_count_as_above():
    x = np.linspace(0.0, 10.0, 11)  # 1 m cells
    grid = PlanGrid("g", x, x, [1.0])
    invalid = np.zeros((11, 11), bool)
    invalid[4:7, 4:7] = True  # nodes 4..6: a 2 m x 2 m square
    b = np.where(invalid, np.nan, 1e-6)
    region = level_region(FloorField(grid, b, invalid, np.ones((11, 11))), LEVEL)
    # the line lies at the last valid node: the 4 m x 4 m square of nodes 3..7, less
    # the corner cells' halves cut by the diagonal (marching squares): 16 - 4 * 0.5
    assert region.area == pytest.approx(14.0, abs=1e-6)
    assert region.contains(box(4.0, 4.0, 6.0, 6.0))


def test_empty_region_and_bad_level():
    ff = synthetic(ring)
    assert level_region(ff, 2e-3).is_empty and region_area(ff, 2e-3) == 0.0
    assert level_lines(ff, 2e-3) == []
    with pytest.raises(ValueError, match="level"):
        level_region(ff, 0.0)
    with pytest.raises(ValueError, match="level"):
        level_lines(ff, np.nan)


def test_region_contoured_on_its_crop_is_the_whole_grids():
    import contourpy

    from siting.analysis.contours import contour_values

    # reference: contourpy's filled contours of the whole grid, as shapely polygons
    ring = synthetic(lambda x, y: 1.0 + 0.5 * np.cos(np.hypot(x - 0.3, y) * 2.0))
    for ff in (equator_field(0.1), ring):
        g = ff.grid
        gen = contourpy.contour_generator(g.x, g.y, contour_values(ff), fill_type="OuterOffset")
        for level in (LEVEL, 4 * LEVEL, 1.2, 1.45):
            pts, offs = gen.filled(level, np.inf)
            polys = []
            for p, o in zip(pts, offs, strict=True):
                rings = [p[a:b] for a, b in zip(o[:-1], o[1:], strict=True)]
                polys.append(Polygon(rings[0], rings[1:]))
            ref = shapely.union_all(polys)
            got = level_region(ff, level)
            assert got.area == pytest.approx(ref.area, rel=1e-12, abs=1e-12)
            assert got.symmetric_difference(ref).area <= 1e-9 * max(ref.area, 1.0)


def test_clearance_of_rectangles_from_a_disc():
    from siting.analysis.contours import clearance

    tol = 0.01
    disc = Point(0.0, 0.0).buffer(1.0, quad_segs=256)
    # distance from a unit disc to a rectangle: distance to its centre minus 1
    assert clearance(box(2.0, -1.0, 3.0, 1.0), disc) == pytest.approx(1.0, abs=1e-4)
    # overlap: the deepest rectangle point in the disc is its point nearest the
    # centre, (0.4, 0), at depth 1 - 0.4 (the polygonal disc is inside the circle by
    # at most 1 - cos(pi / 1024) ~ 5e-6); never shallower, at most tol deeper
    depth = -clearance(box(0.4, -0.2, 3.0, 0.2), disc, tol=tol)
    assert 0.6 - 1e-5 <= depth <= 0.6 + tol
    # a rectangle covering the disc: depth = the disc's radius (its centre is inside)
    depth = -clearance(box(-2, -2, 2, 2), disc, tol=tol)
    assert 1.0 - 1e-5 <= depth <= 1.0 + tol
    assert clearance(box(0, 0, 1, 1), Polygon(), tol=tol) == np.inf
    # many rooms at once: the same margins, and the overlap area of the covering
    # rectangle is the disc's (pi r^2 for the 1024-gon up to 6e-6 relative)
    from siting.analysis.contours import clearances_and_areas

    rooms = [box(2.0, -1.0, 3.0, 1.0), box(0.4, -0.2, 3.0, 0.2), box(-2, -2, 2, 2)]
    margins, areas = clearances_and_areas(rooms, disc, tol=tol)
    assert margins[0] == pytest.approx(1.0, abs=1e-4) and areas[0] == 0.0
    assert -0.6 - tol <= margins[1] <= -0.6 + 1e-5
    assert -1.0 - tol <= margins[2] <= -1.0 + 1e-5
    assert areas[2] == pytest.approx(np.pi, rel=1e-5)


def test_depth_bounds_a_dense_sampling_of_random_overlaps():
    from siting.analysis.depth import depth

    # reference: shapely's (GEOS) point-to-boundary distance over a dense lattice of
    # points in the overlap, whose maximum is within step / sqrt(2) of the exact
    # depth (the distance is 1-Lipschitz)
    rng = np.random.default_rng(7)
    tol, step = 0.01, 0.01
    for _ in range(6):
        blob = Point(rng.uniform(-0.5, 0.5, 2)).buffer(rng.uniform(1.0, 2.0), quad_segs=12)
        region = blob.difference(Point(rng.uniform(-0.3, 0.3, 2)).buffer(0.3))  # with a hole
        room = shapely.affinity.rotate(box(0, 0, *rng.uniform(0.5, 2.5, 2)), rng.uniform(0, 90))
        room = shapely.affinity.translate(room, *rng.uniform(-1.5, 0.5, 2))
        inter = room.intersection(region)
        if inter.area < 1e-3:
            continue
        x0, y0, x1, y1 = inter.bounds
        xx, yy = np.meshgrid(np.arange(x0, x1, step), np.arange(y0, y1, step))
        keep = shapely.contains_xy(inter, xx, yy)
        ref = shapely.distance(region.boundary, shapely.points(xx[keep], yy[keep])).max()
        got = depth(room, region, tol=tol)
        assert ref - 1e-9 <= got <= ref + step / np.sqrt(2) + tol


def _line_miss(ff, level, radius):
    """Largest distance of the drawn line's vertices from the exact circle [m]."""
    pts = np.concatenate(level_lines(ff, level))
    return float(np.max(np.abs(np.hypot(pts[:, 0] - C[0], pts[:, 1] - C[1]) - radius)))


@pytest.mark.parametrize("level", [LEVEL, 4 * LEVEL])
def test_line_error_estimate_bounds_the_dipole_line_and_falls_as_h_squared(level):
    # exact line: the circle of Jackson, Classical Electrodynamics, 3rd ed. (1999),
    # eq. 5.56 on the dipole's equator, r = (mu0 m / (4 pi B))^(1/3)
    radius = (mu_0 * M / (4 * np.pi * level)) ** (1 / 3)
    spacings = (0.4, 0.2, 0.1, 0.05)
    est = np.array([line_error(equator_field(h, envelope=0.3), [level]) for h in spacings])
    miss = np.array([_line_miss(equator_field(h, envelope=0.3), level, radius) for h in spacings])
    # the remainder of linear interpolation is h^2 f'' / 8 (Burden & Faires, Numerical
    # Analysis, 9th ed., 2011, Theorem 3.3, from memory): once h is below ~r / 4 the
    # estimate falls 4x per halving (measured 4.3-4.5 and 4.2-4.3)
    np.testing.assert_allclose(est[1:-1] / est[2:], 4.0, rtol=0.15)
    # measured ratios miss / estimate 0.78-0.96: an upper bound, and a tight one
    assert np.all(miss <= est) and np.all(miss >= 0.7 * est)


def test_line_error_is_zero_without_a_line():
    ff = equator_field(0.2)
    assert line_error(ff, [1e3]) == 0.0  # no cell straddles 1 kT
    assert line_error(ff, [1e-12]) == 0.0  # every node is above: no line on the grid
