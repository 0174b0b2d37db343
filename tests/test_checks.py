"""Room, equipment and access checks (siting.analysis.checks)."""

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import mu_0
from scipy.integrate import quad
from shapely.geometry import Point, Polygon
from test_grid import Counting, PointDipole

from siting.analysis.band import band_max
from siting.analysis.checks import access_boundary, check_equipment, check_room, check_site
from siting.analysis.grid import floor_grid
from siting.fields.scene import Scene
from siting.site.model import Equipment, Floor, Room, Site, SiteInfo

M = 1.0e4  # [A m^2]
ACCESS = 5e-4  # 0.5 mT
# Jackson, Classical Electrodynamics, 3rd ed. (1999), eq. 5.56 on the dipole's equator:
# |B| = mu0 m / (4 pi r^3), so the 0.5 mT line there is the circle of radius R0
R0 = (mu_0 * M / (4 * np.pi * ACCESS)) ** (1 / 3)
FLOOR = (Floor("g", "ground", 0.0, 4.0),)


class LongWire:
    """Infinite straight wire: |B| = mu0 I / (2 pi d) around it (Biot-Savart / Ampere;
    Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 5.1; eq. 5.7 from memory)."""

    def __init__(self, point, direction, current, radius=1e-3):
        self.p = np.asarray(point, float)
        self.u = np.asarray(direction, float) / np.linalg.norm(direction)
        self.i, self.a = current, radius

    def field(self, points):
        r = np.asarray(points, float) - self.p
        rho = r - np.outer(r @ self.u, self.u)
        d = np.linalg.norm(rho, axis=1)
        out = np.full(r.shape, np.nan)
        ok = d > self.a
        out[ok] = mu_0 * self.i / (2 * np.pi) * np.cross(self.u, rho[ok]) / d[ok, None] ** 2
        return out


def make_site(rooms, heights=(0.5, 1.0, 1.5), equipment=()):
    info = SiteInfo("t", "m", "mT", (ACCESS,), heights, ACCESS)
    return Site(info, FLOOR, rooms=tuple(rooms), equipment=tuple(equipment))


def room(rid, outline, zone=1, limit=None):
    return Room(rid, "g", rid, zone, np.asarray(outline, float), limit)


def rect(x0, y0, x1, y1):
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def brute_max(scene, outline, z0, z1, h):
    """Dense sample of the prism: plan nodes at h inside, walls at h / 4, 9 planes."""
    poly = Polygon(outline)
    x0, y0, x1, y1 = poly.bounds
    xx, yy = np.meshgrid(np.arange(x0, x1 + h, h), np.arange(y0, y1 + h, h))
    keep = shapely.intersects_xy(poly, xx, yy)
    plan = [np.column_stack([xx[keep], yy[keep]])]
    ring = poly.exterior
    s = np.arange(0.0, ring.length, h / 4)
    plan.append(shapely.get_coordinates(shapely.line_interpolate_point(ring, s)))
    plan = np.concatenate(plan)
    zs = np.linspace(z0, z1, 9)
    pts = np.column_stack([np.tile(plan, (zs.size, 1)), np.repeat(zs, len(plan))])
    return float(np.nanmax(scene.magnitude(pts)))


def test_room_max_beside_a_long_wire_is_exact():
    # wire along y at x = -0.37 m, z = 2.1 m, just outside a 4.1 m x 3 m room whose band is
    # z in [0.5, 1.5] m: the nearest prism point is the edge x = 0, z = 1.5, at distance
    # d = hypot(0.37, 0.6) from the wire, so max |B| = mu0 I / (2 pi d)  (Ampere's law)
    current = 400.0
    scene = Scene([LongWire([-0.37, 0.0, 2.1], [0.0, 1.0, 0.0], current)])
    r = room("a", rect(0, 0, 4.1, 3))
    site = make_site([r])
    exact = mu_0 * current / (2 * np.pi * np.hypot(0.37, 0.6))
    for spacing in (0.5, 0.1):  # coarse and fine: the refined maximum does not care
        ff = band_max(scene, floor_grid(site, "g", spacing=spacing))
        res = check_room(site, scene, r, ff)
        assert res.max_T == pytest.approx(exact, rel=1e-4)
        assert res.at_m[0] == pytest.approx(0.0, abs=1e-6)
        assert res.at_m[2] == pytest.approx(1.5, abs=1e-9)
        assert not res.inside_envelope
    # the coarse grid alone misses the maximum by more than 1 %: the nodes lie off the wall
    ff = band_max(scene, floor_grid(site, "g", spacing=0.5))
    g = ff.grid
    X, Y = np.meshgrid(g.x, g.y)
    inside = shapely.intersects_xy(Polygon(r.outline), X, Y)
    assert ff.bmax[inside].max() < 0.99 * exact
    assert brute_max(scene, r.outline, 0.5, 1.5, 0.025) <= res.max_T * (1 + 1e-9)


def test_room_max_near_dipole_matches_dense_sampling():
    # an L-shaped room beside a tilted dipole below the floor; no closed form for the
    # maximum: compare with a dense sample of the prism (16x finer on the walls)
    scene = Scene([PointDipole([5.3, 1.2, -0.4], [2e3, 0.0, 6e3])])
    outline = [(0, 0), (4.5, 0), (4.5, 2.0), (2.0, 2.0), (2.0, 4.0), (0, 4.0)]
    r = room("l", outline, limit=1e-3)
    site = make_site([r])
    ff = band_max(scene, floor_grid(site, "g", spacing=0.25))
    res = check_room(site, scene, r, ff)
    ref = brute_max(scene, outline, 0.5, 1.5, 0.0625)
    assert ref <= res.max_T * (1 + 1e-9)  # the search found at least the sampled maximum
    assert res.max_T == pytest.approx(ref, rel=0.01)
    assert Polygon(outline).buffer(1e-9).contains(Point(res.at_m[:2]))
    assert 0.5 - 1e-12 <= res.at_m[2] <= 1.5 + 1e-12
    assert scene.magnitude(res.at_m)[0] == pytest.approx(res.max_T, rel=1e-12)


def equator_site(rooms):
    """One check height at the dipole's equatorial plane z = 0."""
    return make_site(rooms, heights=(0.0,))


EQ_SCENE = Scene([PointDipole([0.0, 0.0, 0.0], [0.0, 0.0, M], envelope=0.3)])


def disc_rect_area(r0, x0, y0, x1, y1):
    """Area of the disc |q| <= r0 inside a rectangle, by quadrature (scipy.integrate.quad)."""

    def chord(x):
        if abs(x) >= r0:
            return 0.0
        c = np.sqrt(r0**2 - x**2)
        return max(0.0, min(y1, c) - max(y0, -c))

    return quad(chord, max(x0, -r0), min(x1, r0), limit=200)[0]


def test_room_straddling_the_line_reports_area_depth_and_max():
    r = room("s", rect(0.5, -0.4, 3.0, 1.6))
    site = equator_site([r])
    ff = band_max(EQ_SCENE, floor_grid(site, "g", spacing=0.1))
    res = check_room(site, EQ_SCENE, r, ff)
    assert res.status == "fail" and res.limit_T == ACCESS and not res.inside_envelope
    assert res.area_over_m2 == pytest.approx(disc_rect_area(R0, 0.5, -0.4, 3.0, 1.6), rel=0.02)
    # deepest room point inside the disc: the nearest point (0.5, 0) at depth R0 - 0.5
    assert res.margin_m == pytest.approx(-(R0 - 0.5), abs=0.05)
    # maximum at that point: mu0 m / (4 pi 0.5^3) (Jackson eq. 5.56, equator)
    assert res.max_T == pytest.approx(mu_0 * M / (4 * np.pi * 0.5**3), rel=1e-6)
    np.testing.assert_allclose(res.at_m, [0.5, 0.0, 0.0], atol=1e-3)


def test_room_clear_of_the_line_reports_the_gap():
    r = room("c", rect(2.0, -1.0, 4.0, 1.0), zone=2)
    site = equator_site([r])
    ff = band_max(EQ_SCENE, floor_grid(site, "g", spacing=0.1))
    res = check_room(site, EQ_SCENE, r, ff)
    assert res.status == "pass" and res.area_over_m2 == 0.0
    # distance from a disc of radius R0 to the rectangle: 2 - R0 (elementary geometry)
    assert res.margin_m == pytest.approx(2.0 - R0, abs=0.01)
    assert res.max_T == pytest.approx(mu_0 * M / (4 * np.pi * 2.0**3), rel=1e-6)


def test_room_over_the_magnet_is_flagged():
    a = room("over", rect(-0.8, -0.8, 0.8, 0.8), zone=2)
    b = room("magnet", rect(-0.8, -0.8, 0.8, 0.8), zone=4)
    site = equator_site([a, b])
    ff = band_max(EQ_SCENE, floor_grid(site, "g", spacing=0.1))
    ra, rb = (check_room(site, EQ_SCENE, x, ff) for x in (a, b))
    assert ra.inside_envelope and ra.status == "fail" and ra.margin_m < 0
    assert ra.area_over_m2 == pytest.approx(2.56, rel=1e-9)  # the room is inside the disc
    assert rb.inside_envelope and rb.status == "info" and rb.margin_m is None
    # the maximum over the valid points lies on the envelope sphere r = 0.3 m or just
    # outside it: at most the equatorial value there
    assert 0.9 * mu_0 * M / (4 * np.pi * 0.3**3) < ra.max_T
    assert ra.max_T <= mu_0 * M / (4 * np.pi * 0.3**3) * (1 + 1e-9)


def test_room_holding_a_small_source_fails_on_the_grid_value():
    # A weak dipole inside a room's prism: the field is unbounded at the source, so
    # the boundary search alone would miss it; the nearest grid node in the dipole's
    # equatorial plane (the band holds z = 1 m) lies within h / sqrt(2) in plan, where
    # |B| >= mu0 m / (4 pi (h / sqrt(2))^3) (Jackson 1999, eq. 5.56).
    from siting.fields.dipole import Dipole

    m, h = 1.0, 0.1
    scene = Scene((Dipole([0.03, 0.02, 1.0], [0, 0, m]),))
    r = room("tx", rect(-1, -1, 1, 1), zone=1)
    site = make_site([r], heights=(0.0, 1.0, 2.0))
    ff = band_max(scene, floor_grid(site, "g", spacing=h))
    res = check_room(site, scene, r, ff)
    assert res.status == "fail" and res.margin_m < 0
    assert res.max_T >= mu_0 * m / (4 * np.pi * (h / np.sqrt(2)) ** 3)
    assert res.max_T == pytest.approx(ff.bmax.max())


def test_equipment_against_the_dipole_formula():
    p = np.array([1.2, -0.7, 0.9])
    r = np.linalg.norm(p)
    # Jackson eq. 5.56 in spherical form: |B| = mu0 m / (4 pi r^3) sqrt(1 + 3 cos^2 theta)
    exact = mu_0 * M / (4 * np.pi * r**3) * np.sqrt(1 + 3 * (p[2] / r) ** 2)
    ok = Equipment("ct", "g", "CT", p, exact * 1.01)
    bad = Equipment("pm", "g", "pacemaker test", p, exact * 0.99)
    site = equator_site([])
    res = check_equipment(site, EQ_SCENE, ok)
    assert res.field_T == pytest.approx(exact, rel=1e-12) and res.status == "pass"
    assert check_equipment(site, EQ_SCENE, bad).status == "fail"
    inside = Equipment("in", "g", "in the cryostat", np.array([0.1, 0.0, 0.0]), 1.0)
    res = check_equipment(site, EQ_SCENE, inside)
    assert np.isnan(res.field_T) and res.status == "fail"


def test_access_region_containment():
    big = room("mr", rect(-2.0, -2.0, 2.0, 2.0), zone=4)
    site = equator_site([big])
    ff = band_max(EQ_SCENE, floor_grid(site, "g", spacing=0.1))
    res = access_boundary(site, ff)
    assert res.contained and res.uncovered_area_m2 < 1e-6 and res.uncovered_point is None
    # a zone 3 and a zone 4 room together cover the disc: the union counts
    halves = [room("w", rect(-2, -2, 0, 2), zone=3), room("e", rect(0, -2, 2, 2), zone=4)]
    assert access_boundary(equator_site(halves), ff).contained
    # a zone 4 square 1.2 m x 1.2 m inside the disc leaves pi R0^2 - 1.44 uncovered
    small = room("mr", rect(-0.6, -0.6, 0.6, 0.6), zone=4)
    res = access_boundary(equator_site([small]), ff)
    assert not res.contained
    assert res.uncovered_area_m2 == pytest.approx(np.pi * R0**2 - 1.44, rel=0.02)
    q = res.uncovered_point
    assert np.hypot(*q) < R0 and not Polygon(small.outline).contains(Point(q))
    # a zone 1 room covering the disc does not count
    assert not access_boundary(equator_site([room("x", big.outline, zone=1)]), ff).contained


def test_check_site_on_a_floor_of_100_rooms():
    # 10 x 10 rooms of 3 m x 3 m, dipole under the middle; zones 4 in the centre
    rooms = []
    for i in range(10):
        for j in range(10):
            zone = 4 if (i, j) in ((4, 4), (4, 5), (5, 4), (5, 5)) else 1
            rooms.append(room(f"r{i}{j}", rect(3 * i, 3 * j, 3 * i + 3, 3 * j + 3), zone=zone))
    scene = Counting(Scene([PointDipole([15.0, 15.0, -0.5], [0.0, 0.0, 2e5])]))
    eq = (Equipment("e", "g", "console", np.array([25.0, 25.0, 1.0]), 1e-4),)
    site = make_site(rooms, equipment=eq)
    steps = []
    res = check_site(site, scene, progress=lambda s, i, n: steps.append((s, i, n)))
    assert steps == [("field", 1, 1), ("rooms", 1, 1), ("equipment", 1, 1)]
    ff = res.floor_fields["g"]
    first = floor_grid(site, "g")  # the first pass, before the lines asked for a finer grid
    assert ff.grid.spacing < first.spacing
    maps = Counting(scene.scene)  # what the two field maps cost on their own
    band_max(maps, first, refine=False)  # the first pass is not searched between heights
    band_max(maps, ff.grid, ceiling=ACCESS)
    check_points = scene.points - maps.points
    # measured: 3 scene calls and 108 427 points for the two field maps (97 x 97, then
    # 142 x 142 nodes at 3 heights, plus one probe above the lowest face for each node of
    # the second not surrounded by the access level), and 8 765 points in 10 calls for
    # the 100 room checks and the equipment; 5 936 at a 0.1 m spacing (517 927 for the
    # map): the searches do not grow with the grid
    assert check_points < 0.1 * maps.points
    assert scene.calls - maps.calls <= 11
    fails = [r for r in res.rooms if r.status == "fail"]
    assert res.failures == len(fails) + sum(not a.contained for a in res.access) + sum(
        e.status == "fail" for e in res.equipment
    )
    # every failing room has a point above 0.5 mT; every passing one stays below
    for r in res.rooms:
        if r.status != "info":
            assert (r.max_T >= ACCESS) == (r.status == "fail")
    assert {r.status for r in res.rooms} == {"pass", "fail", "info"}


def test_room_on_the_floor_above_a_dipole():
    from siting.site.model import Dipole

    # dipole m along z at the origin; an upper floor at 3 m with a band [3.5, 4.5] m.
    # On the axis, |B| = mu0 2 m / (4 pi z^3) (Jackson eq. 5.56, cos theta = 1), the
    # largest value in the prism, at its lowest point above the dipole
    floors = (Floor("g", "ground", 0.0, 3.0), Floor("u", "upper", 3.0, 3.0))
    info = SiteInfo("t", "m", "mT", (ACCESS,), (0.5, 1.0, 1.5), ACCESS)
    up = Room("up", "u", "office", 2, np.asarray(rect(-1.3, -0.7, 2.0, 1.9), float))
    dip = Dipole("d", "g", np.zeros(3), np.array([0.0, 0.0, M]))
    site = Site(info, floors, rooms=(up,), dipoles=(dip,))
    scene = Scene([PointDipole([0.0, 0.0, 0.0], [0.0, 0.0, M])])
    steps = []
    res = check_site(site, scene, progress=lambda s, i, n: steps.append((s, i, n)))
    assert set(res.floor_fields) == {"g", "u"}  # the ground floor is gridded from the dipole
    assert steps[-1] == ("equipment", 1, 1) and ("rooms", 2, 2) in steps
    (r,) = res.rooms
    exact = mu_0 * 2 * M / (4 * np.pi * 3.5**3)
    assert r.max_T == pytest.approx(exact, rel=1e-5)
    np.testing.assert_allclose(r.at_m, [0.0, 0.0, 3.5], atol=0.01)
    assert r.status == "pass"  # 47 uT < 0.5 mT
    np.testing.assert_allclose(res.floor_fields["u"].grid.heights, [3.5, 4.0, 4.5])


def test_rooms_of_all_floors_are_searched_together():
    # three floors around a dipole: one search for the whole site gives each room the
    # same maximum (to rounding: arc lengths along the outlines are counted site-wide)
    # as checking the room on its own floor, in fewer scene calls than one search per floor
    from siting.site.model import Dipole

    floors = (Floor("b", "basement", -3.0, 3.0), *FLOOR, Floor("u", "upper", 4.0, 3.0))
    info = SiteInfo("t", "m", "mT", (ACCESS,), (0.5, 1.0, 1.5), ACCESS)
    rooms = tuple(
        Room(f"{f}{k}", f, "r", 2, np.asarray(rect(x, -1.0, x + 2.5, 1.5), float))
        for f in ("b", "g", "u")
        for k, x in enumerate((-4.0, 0.4, 3.1))
    )
    site = Site(info, floors, rooms=rooms, dipoles=(Dipole("d", "g", np.zeros(3), np.zeros(3)),))
    scene = Counting(Scene([PointDipole([0.2, 0.1, 1.0], [0.0, 0.3 * M, M])]))
    res = check_site(site, scene, spacing=0.25)
    together = scene.calls
    scene.calls = 0
    by_id = {r.id: r for r in rooms}
    alone_calls = []
    for r in res.rooms:
        scene.calls = 0
        alone = check_room(site, scene, by_id[r.id], res.floor_fields[r.floor])
        alone_calls.append(scene.calls)
        assert alone.max_T == pytest.approx(r.max_T, rel=1e-12)
        np.testing.assert_allclose(alone.at_m, r.at_m, rtol=0, atol=1e-9)
    # the calls of the three field maps, then as many calls as the longest search
    from siting.analysis.floormap import line_levels

    maps = Counting(scene.scene)
    for fid, ff in res.floor_fields.items():
        band_max(maps, ff.grid, ceiling=line_levels(site, fid)[-1])
    assert together - maps.calls == max(alone_calls)
    assert {r.status for r in res.rooms} == {"pass", "fail"}


@settings(max_examples=15, deadline=None, derandomize=True)
@given(
    angle=st.floats(0.0, np.pi),
    w=st.floats(0.8, 4.0),
    d=st.floats(0.8, 4.0),
    src=st.tuples(st.floats(-4.0, 4.0), st.floats(-4.0, 4.0), st.sampled_from([-0.6, 2.4])),
    moment=st.tuples(st.floats(-1.0, 1.0), st.floats(-1.0, 1.0), st.floats(0.2, 1.0)),
)
def test_room_max_dominates_random_samples(angle, w, d, src, moment):
    # any rotated rectangle, a dipole (Jackson eq. 5.56) above or below the band: the
    # reported maximum is the model's value at a point of the prism and is at least the
    # largest of 4000 random points of the prism (uniform in plan and height)
    c, s = np.cos(angle), np.sin(angle)
    corners = np.array([(0, 0), (w, 0), (w, d), (0, d)]) @ np.array([[c, s], [-s, c]])
    scene = Scene([PointDipole(src, 3e3 * np.asarray(moment))])
    r = room("h", corners, limit=1e-3)
    site = make_site([r])
    res = check_room(site, scene, r, band_max(scene, floor_grid(site, "g")))
    rng = np.random.default_rng(7)
    poly = Polygon(corners)
    x0, y0, x1, y1 = poly.bounds
    q = rng.uniform([x0, y0, 0.5], [x1, y1, 1.5], size=(8000, 3))
    q = q[shapely.intersects_xy(poly, q[:, 0], q[:, 1])][:4000]
    assert scene.magnitude(q).max() <= res.max_T * (1 + 1e-9)
    assert scene.magnitude(res.at_m)[0] == pytest.approx(res.max_T, rel=1e-12)
    assert poly.buffer(1e-9).contains(Point(res.at_m[:2])) and 0.5 <= res.at_m[2] <= 1.5


def test_automatic_spacing_keeps_the_drawn_line_within_its_tolerance():
    # a dipole 1 m above the floor, checked at that one height: its 0.5 mT line is the
    # equatorial circle of radius R0 (Jackson, Classical Electrodynamics, 3rd ed., 1999,
    # eq. 5.56).  Rooms 10 m wide give a first grid of 0.5 m, where the line is off by
    # ~0.1 m; the floor is gridded again finer until the estimate is LINE_TOL
    from siting.analysis.contours import LINE_TOL, level_lines
    from siting.analysis.floormap import map_floor

    c = np.array([0.1, 0.05, 1.0])
    scene = Scene([PointDipole(c, [0.0, 0.0, M], envelope=0.3)])
    site = make_site([room("a", rect(-10, -10, 0, 10)), room("b", rect(0, -10, 10, 10))],
                     heights=(1.0,))
    first = floor_grid(site, "g")
    assert first.spacing == 0.5
    for spacing, tol in ((None, LINE_TOL), (0.5, None)):
        ff = map_floor(site, scene, "g", spacing=spacing)
        pts = np.concatenate(level_lines(ff, ACCESS))
        miss = np.max(np.abs(np.hypot(pts[:, 0] - c[0], pts[:, 1] - c[1]) - R0))
        if tol is None:  # a spacing given is honoured, however coarse
            assert ff.grid.spacing == 0.5 and miss > 5 * LINE_TOL
        else:  # measured: 0.152 m, line off by at most 8.8 mm (0.095 m at 0.5 m)
            assert ff.grid.spacing < 0.3 and miss <= tol


def test_self_intersecting_outlines_searched_by_hull_covered_by_their_pieces():
    # a bow-tie zone 4 room whose two triangles cover the disc where |y| < |x|: its
    # valid pieces cover half of the 0.5 mT disc, its convex hull all of it
    tie = room("mr", [(-2, -2), (2, 2), (2, -2), (-2, 2)], zone=4)
    # a zone 1 bow-tie beside it: triangles above and below (2, 0), convex hull the
    # rectangle 1.5 <= x <= 2.5, |y| <= 1, whose point nearest the dipole is (1.5, 0)
    side = room("w", [(1.5, -1), (2.5, -1), (1.5, 1), (2.5, 1)], zone=1)
    site = equator_site([tie, side])
    res = check_site(site, EQ_SCENE, spacing=0.05)
    (acc,) = res.access
    # the uncovered part is the two wedges |y| > |x| of the disc: half its area
    assert acc.uncovered_area_m2 == pytest.approx(np.pi * R0**2 / 2, rel=0.02)
    # the search covers the hull (an upper bound, on the safe side): on the equator
    # |B| = mu0 m / (4 pi r^3) (Jackson, Classical Electrodynamics, 3rd ed., 1999,
    # eq. 5.56) at r = 1.5 m
    w = next(r for r in res.rooms if r.id == "w")
    assert w.max_T == pytest.approx(mu_0 * M / (4 * np.pi * 1.5**3), rel=1e-3)
