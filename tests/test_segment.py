"""Straight-filament fields (siting.fields.segment) against outside references."""

from __future__ import annotations

import magpylib as magpy
import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import mu_0
from scipy.spatial.transform import Rotation

from siting.fields import segment
from siting.fields.scene import Scene
from siting.fields.segment import (
    ON_SEGMENT_TOL,
    Polyline,
    polyline_field,
    two_core_cable,
)

RNG = np.random.default_rng(20240611)


def _random_polyline(rng, m=10, scale=1.0):
    return np.cumsum(rng.normal(scale=scale, size=(m, 3)), axis=0)


def _distance_to_polyline(points, verts):
    """Smallest distance (n,) from each point to the polyline's segments."""
    a, b = verts[:-1], verts[1:]
    ab = b - a
    ap = points[:, None, :] - a[None]
    t = np.clip(np.einsum("nsk,sk->ns", ap, ab) / np.einsum("sk,sk->s", ab, ab), 0.0, 1.0)
    closest = a[None] + t[..., None] * ab[None]
    return np.linalg.norm(points[:, None, :] - closest, axis=2).min(axis=1)


# --- reference library ---------------------------------------------------------


@pytest.mark.parametrize("min_work", [0, 1 << 62], ids=["parallel", "serial"])
def test_matches_magpylib_polyline_at_random_points(monkeypatch, min_work):
    monkeypatch.setattr(segment, "PARALLEL_MIN_WORK", min_work)
    # Reference: magpylib 6 (Ortner and Coliado Bandeira, SoftwareX 11, 100466,
    # 2020), magpylib.current.Polyline, SI units, same scipy mu_0.
    verts = _random_polyline(RNG, m=12)
    pts = RNG.normal(scale=3.0, size=(3000, 3))
    pts = pts[_distance_to_polyline(pts, verts) > 1e-3]
    current = 437.0
    ours = polyline_field(pts, vertices=verts, current=current)
    ref = magpy.current.Polyline(current=current, vertices=verts).getB(pts)
    rel = np.linalg.norm(ours - ref, axis=1) / np.linalg.norm(ref, axis=1)
    assert rel.max() <= 1e-10


def test_near_wire_matches_high_precision_evaluation():
    # Reference: the Hanson-Hirshman segment formula (Phys. Plasmas 9, 4410,
    # 2002) evaluated with mpmath at 50 digits on the same float inputs.
    # Down to 1e-8 L from the wire the kernel keeps ~1e-9 relative accuracy,
    # where the naive (Ri + Rf)^2 - L^2 would have lost all digits.
    mpmath.mp.dps = 50
    length, current = 3.7, 1000.0
    e = np.array([0.6, 0.8, 0.0])
    perp = np.array([0.8, -0.6, 0.0])
    verts = np.array([[0.3, -0.2, 0.1], [0.3, -0.2, 0.1] + length * e])
    for frac in (0.5, 0.01, 1e-4):
        for d in (1e-5, 1e-6, 1e-7, 1e-8):
            p = verts[0] + frac * length * e + d * length * perp
            got = polyline_field(p, vertices=verts, current=current)[0]
            pm = [mpmath.mpf(float(x)) for x in p]
            ri = [pm[k] - mpmath.mpf(float(verts[0, k])) for k in range(3)]
            rf = [pm[k] - mpmath.mpf(float(verts[1, k])) for k in range(3)]
            ni = mpmath.sqrt(sum(x * x for x in ri))
            nf = mpmath.sqrt(sum(x * x for x in rf))
            cross = [
                ri[1] * rf[2] - ri[2] * rf[1],
                ri[2] * rf[0] - ri[0] * rf[2],
                ri[0] * rf[1] - ri[1] * rf[0],
            ]
            dd = ni * nf + sum(ri[k] * rf[k] for k in range(3))
            scale = mpmath.mpf(mu_0) * current / (4 * mpmath.pi) * (ni + nf) / (ni * nf * dd)
            ref = np.array([float(scale * c) for c in cross])
            assert np.linalg.norm(got - ref) <= 1e-8 * np.linalg.norm(ref), (frac, d)


# --- published closed forms ------------------------------------------------------


def test_long_segment_tends_to_infinite_wire():
    # Reference: finite straight wire, B = mu0 I / (4 pi s) (sin t2 - sin t1)
    # (D. J. Griffiths, Introduction to Electrodynamics, 4th ed., 2017,
    # Example 5.5, eqs. 5.37-5.38, numbers from memory); for s << half-length
    # h this is Ampere's law mu0 I / (2 pi s) with relative deficit
    # 1 - h / sqrt(h^2 + s^2) ~ s^2 / (2 h^2).
    h, current = 1000.0, 250.0
    verts = np.array([[0.0, 0.0, -h], [0.0, 0.0, h]])  # current along +z
    s = np.array([0.05, 0.3, 1.0, 4.0])
    pts = np.stack([s, np.zeros_like(s), np.zeros_like(s)], axis=1)
    b = polyline_field(pts, vertices=verts, current=current)
    finite_wire = mu_0 * current / (4 * np.pi * s) * 2 * h / np.sqrt(h**2 + s**2)
    infinite = mu_0 * current / (2 * np.pi * s)
    np.testing.assert_allclose(b[:, 1], finite_wire, rtol=1e-13)  # right-hand rule: +y
    np.testing.assert_allclose(b[:, [0, 2]], 0.0, atol=1e-12 * infinite.max())
    deficit = 1 - b[:, 1] / infinite
    np.testing.assert_allclose(deficit, s**2 / (2 * h**2), rtol=1e-3)
    assert np.all(deficit <= 1e-5)  # tolerance from the finite length: (4/1000)^2 / 2


def test_square_loop_centre():
    # Reference: centre of a square loop of side a, B = 2 sqrt(2) mu0 I / (pi a)
    # (Griffiths, Introduction to Electrodynamics, 4th ed., 2017, Problem 5.8,
    # B = sqrt(2) mu0 I / (pi R) with R = a / 2).
    a, current = 0.8, 12.5
    c = np.array([1.0, -2.0, 0.5])
    corners = c + 0.5 * a * np.array(
        [[-1, -1, 0], [1, -1, 0], [1, 1, 0], [-1, 1, 0], [-1, -1, 0]], dtype=float
    )
    b = Polyline(corners, current).field(c)[0]  # counter-clockwise seen from +z
    expected = 2 * np.sqrt(2) * mu_0 * current / (np.pi * a)
    np.testing.assert_allclose(b, [0.0, 0.0, expected], rtol=1e-14, atol=1e-14 * expected)


def test_go_return_pair_is_a_line_dipole_far_away():
    # Reference: two antiparallel infinite wires (superposition of Ampere's law,
    # Griffiths 2017, eq. 5.38 from memory) form a 2-D line dipole, |B| = mu0 I d / (2 pi r^2) for
    # r >> d, with relative corrections of order (d / r)^2 (exactly
    # d / (r^2 - d^2/4) in the plane of the wires, d / (r^2 + d^2/4) across it).
    current, d, h = 400.0, 0.02, 2000.0
    path = np.array([[-h, 0.0, 0.0], [h, 0.0, 0.0]])
    cable = two_core_cable(path, current=current, spacing=d)
    r = np.geomspace(0.3, 6.0, 9)
    for direction in ([0.0, 1.0, 0.0], [0.0, 0.0, 1.0], [0.0, 0.6, 0.8]):
        pts = r[:, None] * np.array(direction)
        mag = np.linalg.norm(cable.field(pts), axis=1)
        slope = np.polyfit(np.log(r), np.log(mag), 1)[0]
        assert abs(slope + 2.0) < 1e-3
        line_dipole = mu_0 * current * d / (2 * np.pi * r**2)
        rel = np.abs(mag / line_dipole - 1)
        assert np.all(rel <= (d / r) ** 2 + 1e-5)  # + finite-length (r / h)^2 effect
    # in the plane of the wires the exact two-wire value
    pts = r[:, None] * np.array([0.0, 1.0, 0.0])
    exact = mu_0 * current / (2 * np.pi) * d / (r**2 - d**2 / 4)
    np.testing.assert_allclose(np.linalg.norm(cable.field(pts), axis=1), exact, rtol=1e-5)


def test_field_on_the_axis_extension_is_zero():
    # Reference: Biot-Savart, dl x R = 0 for R parallel to the segment
    # (Jackson, Classical Electrodynamics, 3rd ed., 1999, eq. 5.4).
    verts = np.array([[0.0, 0.0, 0.0], [2.0, 0.0, 0.0]])
    pts = np.array([[3.0, 0.0, 0.0], [-1e-3, 0.0, 0.0], [50.0, 0.0, 0.0]])
    b = polyline_field(pts, vertices=verts, current=10.0)
    assert np.array_equal(b, np.zeros_like(b))


# --- conductor points --------------------------------------------------------------


def test_nan_on_the_conductor_and_never_inf():
    verts = np.array([[0.0, 0.0, 0.0], [2.0, 0.0, 0.0], [2.0, 3.0, 1.0]])
    length0 = 2.0
    half_width = np.sqrt(ON_SEGMENT_TOL) * length0 / 2  # semi-minor axis at the midpoint
    on = np.array(
        [
            [1.0, 0.0, 0.0],  # interior
            [0.0, 0.0, 0.0],  # vertices
            [2.0, 0.0, 0.0],
            [2.0, 3.0, 1.0],
            [1.0, 0.3 * half_width, 0.0],  # inside the tolerance spheroid
            [2.0, 1.5, 0.5],
        ]
    )
    b = polyline_field(on, vertices=verts, current=1e4)
    assert np.isnan(b).all()
    near = np.array([[1.0, 3 * half_width, 0.0], [1.0, 0.0, 1e-6]])
    bn = polyline_field(near, vertices=verts, current=1e4)
    assert np.isfinite(bn).all()
    pts = RNG.normal(size=(2000, 3)) * 2
    pts[::7] = verts[1] + RNG.uniform(size=(len(pts[::7]), 1)) * (verts[2] - verts[1])
    out = polyline_field(pts, vertices=verts, current=1e4)
    assert not np.isinf(out).any()
    rows_nan = np.isnan(out)
    assert np.array_equal(rows_nan.any(axis=1), rows_nan.all(axis=1))


# --- Maxwell's equations -----------------------------------------------------------


def _jacobian(field, pts, h):
    """Central-difference Jacobian (n, 3, 3): J[:, i, j] = dB_i / dx_j."""
    jac = np.empty((len(pts), 3, 3))
    for j in range(3):
        step = np.zeros(3)
        step[j] = h
        jac[:, :, j] = (field(pts + step) - field(pts - step)) / (2 * h)
    return jac


def test_divergence_and_curl_vanish_away_from_the_wire():
    # Reference: div B = 0 and, where J = 0, curl B = 0 (Jackson, Classical
    # Electrodynamics, 3rd ed., 1999, sec. 5.3, eqs. 5.22-5.23, from memory).  curl B = 0 needs a
    # closed circuit (div J = 0, Jackson sec. 5.3): the Biot-Savart field of an
    # open path is not curl-free, so the polyline is closed here.  Central
    # differences with h = 1e-4 m at >= 0.2 m from the wire: truncation
    # ~ (h / r)^2 ~ 1e-6, round-off ~ 1e-16 / h ~ 1e-12 of the Jacobian's norm.
    verts = _random_polyline(RNG, m=6)
    verts = np.vstack([verts, verts[:1]])
    pts = RNG.normal(scale=2.0, size=(400, 3))
    pts = pts[_distance_to_polyline(pts, verts) > 0.2]
    jac = _jacobian(lambda p: polyline_field(p, vertices=verts, current=100.0), pts, 1e-4)
    scale = np.linalg.norm(jac, axis=(1, 2))
    div = np.trace(jac, axis1=1, axis2=2)
    curl = np.stack(
        [jac[:, 2, 1] - jac[:, 1, 2], jac[:, 0, 2] - jac[:, 2, 0], jac[:, 1, 0] - jac[:, 0, 1]],
        axis=1,
    )
    assert np.max(np.abs(div) / scale) < 1e-5
    assert np.max(np.linalg.norm(curl, axis=1) / scale) < 1e-5
    # and the test can fail: an open path has a curl of order the field gradient
    open_jac = _jacobian(lambda p: polyline_field(p, vertices=verts[:-1], current=100.0), pts, 1e-4)
    open_curl = open_jac[:, 2, 1] - open_jac[:, 1, 2]
    assert np.max(np.abs(open_curl) / np.linalg.norm(open_jac, axis=(1, 2))) > 1e-2


# --- symmetry properties (hypothesis) ----------------------------------------------

coords = st.floats(-3.0, 3.0, allow_nan=False)
vec3 = st.tuples(coords, coords, coords).map(np.array)
currents = st.floats(-1e4, 1e4, allow_nan=False).filter(lambda x: abs(x) > 1e-3)
seeds = st.integers(0, 2**32 - 1)


def _case(seed):
    rng = np.random.default_rng(seed)
    verts = _random_polyline(rng, m=int(rng.integers(2, 7)))
    pts = rng.normal(scale=2.0, size=(30, 3))
    return verts, pts[_distance_to_polyline(pts, verts) > 1e-2]


def _close(a, b, rtol=1e-11):
    assert np.allclose(a, b, rtol=rtol, atol=rtol * np.abs(b).max())


@settings(max_examples=50, deadline=None)
@given(seeds, currents, currents)
def test_linear_in_current(seed, i1, i2):
    # Reference: Biot-Savart is linear in the current (Jackson 1999, eq. 5.4).
    verts, pts = _case(seed)
    total = polyline_field(pts, vertices=verts, current=i1 + i2)
    parts = polyline_field(pts, vertices=verts, current=i1) + polyline_field(
        pts, vertices=verts, current=i2
    )
    _close(total, parts)
    _close(polyline_field(pts, vertices=verts[::-1], current=i1),
           -polyline_field(pts, vertices=verts, current=i1))  # fmt: skip


@settings(max_examples=50, deadline=None)
@given(seeds, vec3)
def test_translation_and_rotation_covariance(seed, shift):
    # Reference: B is an axial vector field; under a proper rotation R and a
    # translation t, B'(R x + t) = R B(x) (Jackson 1999, sec. 6.10).
    verts, pts = _case(seed)
    rot = Rotation.random(random_state=seed % (2**31)).as_matrix()
    base = polyline_field(pts, vertices=verts, current=3.0)
    moved = polyline_field(pts @ rot.T + shift, vertices=verts @ rot.T + shift, current=3.0)
    _close(moved, base @ rot.T, rtol=1e-9)


@settings(max_examples=50, deadline=None)
@given(seeds, vec3.filter(lambda v: np.linalg.norm(v) > 1e-2))
def test_mirror_symmetry(seed, normal):
    # Reference: under a reflection M (det M = -1) B is a pseudovector,
    # B'(M x) = -M B(x) (Jackson 1999, sec. 6.10, Table 6.1).
    verts, pts = _case(seed)
    n = normal / np.linalg.norm(normal)
    mirror = np.eye(3) - 2 * np.outer(n, n)
    base = polyline_field(pts, vertices=verts, current=-7.0)
    mirrored = polyline_field(pts @ mirror.T, vertices=verts @ mirror.T, current=-7.0)
    _close(mirrored, -(base @ mirror.T), rtol=1e-9)


# --- two-core cable geometry ------------------------------------------------------


def _offset(cable: Scene):
    go, ret = cable.sources
    return go, ret


def test_cable_offsets_straight_and_bent_runs():
    d = 0.05
    path = np.array([[0.0, 0.0, 1.0], [4.0, 0.0, 1.0], [4.0, 3.0, 1.0], [4.0, 3.0, 5.0]])
    go, ret = _offset(two_core_cable(path, current=80.0, spacing=d))
    assert go.current == 80.0 and ret.current == -80.0
    np.testing.assert_allclose(0.5 * (go.vertices + ret.vertices), path, atol=1e-15)
    # first run along +x: left of travel is +y
    np.testing.assert_allclose(go.vertices[0] - path[0], [0.0, d / 2, 0.0], atol=1e-15)
    # each core segment is parallel to the route at d/2 from it (in-plane miter)
    for core in (go, ret):
        for k in range(len(path) - 1):
            t = path[k + 1] - path[k]
            tc = core.vertices[k + 1] - core.vertices[k]
            assert np.linalg.norm(np.cross(t, tc)) < 1e-12 * np.linalg.norm(t) ** 2
            off = core.vertices[k] - path[k]
            perp = off - np.dot(off, t) / np.dot(t, t) * t
            np.testing.assert_allclose(np.linalg.norm(perp), d / 2, rtol=1e-12)
    # the riser keeps the horizontal offset of the run before it (left of +y is -x)
    np.testing.assert_allclose(go.vertices[3] - path[3], [-d / 2, 0.0, 0.0], atol=1e-15)


def test_cable_offset_rules_for_vertical_and_given_normal():
    riser = np.array([[1.0, 1.0, 0.0], [1.0, 1.0, 3.0]])
    go, _ = _offset(two_core_cable(riser, current=1.0, spacing=0.1))
    np.testing.assert_allclose(go.vertices - riser, [[0.05, 0, 0]] * 2, atol=1e-15)
    path = np.array([[0.0, 0.0, 0.0], [3.0, 0.0, 0.0]])
    go, _ = _offset(two_core_cable(path, current=1.0, spacing=0.1, normal=[1.0, 0.0, 2.0]))
    np.testing.assert_allclose(go.vertices - path, [[0, 0, 0.05]] * 2, atol=1e-15)
    with pytest.raises(ValueError, match="normal"):
        two_core_cable(path, current=1.0, spacing=0.1, normal=[2.0, 0.0, 0.0])
    hairpin = np.array([[0.0, 0.0, 0.0], [3.0, 0.0, 0.0], [0.0, 0.0, 0.0]])
    with pytest.raises(ValueError, match="turns by 180.0 degrees at vertex 1"):
        two_core_cable(hairpin, current=1.0, spacing=0.1)
    sharp = np.array([[0.0, 0.0, 0.0], [3.0, 0.0, 0.0], [0.0, 0.5, 0.0]])  # 170.5 deg
    with pytest.raises(ValueError, match="path must not turn"):
        two_core_cable(sharp, current=1.0, spacing=0.1)
    u_turn = np.array([[0.0, 0.0, 0.0], [3.0, 0.0, 0.0], [3.0, 0.5, 0.0], [0.0, 0.5, 0.0]])
    two_core_cable(u_turn, current=1.0, spacing=0.1)  # two 90-degree bends are fine
    with pytest.raises(ValueError, match="spacing"):
        two_core_cable(path, current=1.0, spacing=0.0)


def test_validation_messages():
    with pytest.raises(ValueError, match="at least 2"):
        Polyline([[0.0, 0.0, 0.0]], 1.0)
    with pytest.raises(ValueError, match=r"\(m, 3\)"):
        Polyline([[0.0, 0.0], [1.0, 1.0]], 1.0)
    with pytest.raises(ValueError, match="finite"):
        Polyline([[0.0, 0.0, 0.0], [np.nan, 1.0, 0.0]], 1.0)
    with pytest.raises(ValueError, match="zero-length"):
        Polyline([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 0.0, 0.0]], 1.0)
    with pytest.raises(ValueError, match="current"):
        polyline_field([0.0, 0.0, 1.0], vertices=[[0, 0, 0], [1, 0, 0]], current=np.inf)
    assert polyline_field(np.empty((0, 3)), vertices=[[0, 0, 0], [1, 0, 0]], current=1).shape == (
        0,
        3,
    )


def test_cable_on_a_random_route_keeps_the_route_as_mid_line():
    rng = np.random.default_rng(3)
    path = np.cumsum(rng.normal(size=(8, 3)) + [2.0, 0.0, 0.0], axis=0)  # a winding run
    d = 0.03
    go, ret = _offset(two_core_cable(path, current=5.0, spacing=d))
    np.testing.assert_allclose(0.5 * (go.vertices + ret.vertices), path, atol=1e-14)
    off = np.linalg.norm(go.vertices - path, axis=1)
    assert np.all(off >= d / 2 * (1 - 1e-12))
