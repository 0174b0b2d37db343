"""Circular loop field and the elliptic-integral kernels behind it."""

from __future__ import annotations

import math

import magpylib as magpy
import mpmath as mp
import numpy as np
import pytest
import scipy.special as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import mu_0
from scipy.spatial.transform import Rotation

from siting.fields._elliptic import bracket_ratio, ellipe_c, ellipk_c
from siting.fields._frame import frame
from siting.fields.loop import WIRE_TOLERANCE, Loop, loop_field, loops_field

RNG = np.random.default_rng(20240611)


def rel_err(b, ref):
    """Per-point error relative to |B_ref| at that point."""
    return np.linalg.norm(b - ref, axis=1) / np.linalg.norm(ref, axis=1)


def to_global(local, center, axis):
    """Map loop-frame coordinates (n, 3) to global ones for a loop at center/axis."""
    return center + local @ frame(axis)


# ---------------------------------------------------------------- references


def simpson_scipy(rho, z, a, nI):
    """B_rho, B_z of a loop from the closed forms of Simpson, Lane, Immer and
    Youngquist, "Simple analytic expressions for the magnetic field of a circular
    current loop", NASA technical report (2001), with scipy's K(m), E(m), m = k^2."""
    r2 = rho**2 + z**2
    alpha2 = a**2 + r2 - 2 * a * rho
    beta2 = a**2 + r2 + 2 * a * rho
    beta = np.sqrt(beta2)
    m = 1 - alpha2 / beta2
    c = mu_0 * nI / np.pi
    kk, ee = sp.ellipk(m), sp.ellipe(m)
    b_rho = c * z / (2 * alpha2 * beta * rho) * ((a**2 + r2) * ee - alpha2 * kk)
    b_z = c / (2 * alpha2 * beta) * ((a**2 - r2) * ee + alpha2 * kk)
    return b_rho, b_z


def simpson_mpmath(rho, z, a, nI, dps=40):
    """The same closed forms (Simpson et al. 2001) at ``dps`` digits with
    mpmath.ellipk / mpmath.ellipe; inputs are taken as exact binary values."""
    with mp.workdps(dps):
        rho, z, a = mp.mpf(rho), mp.mpf(z), mp.mpf(a)
        r2 = rho**2 + z**2
        alpha2 = (a - rho) ** 2 + z**2
        beta2 = (a + rho) ** 2 + z**2
        m = 1 - alpha2 / beta2
        c = mp.mpf(mu_0) * nI / mp.pi
        kk, ee = mp.ellipk(m), mp.ellipe(m)
        b_rho = c * z / (2 * alpha2 * mp.sqrt(beta2) * rho) * ((a**2 + r2) * ee - alpha2 * kk)
        b_z = c / (2 * alpha2 * mp.sqrt(beta2)) * ((a**2 - r2) * ee + alpha2 * kk)
        return float(b_rho), float(b_z)


# --------------------------------------------------------- elliptic kernels


@pytest.mark.parametrize(
    "mc",
    [1e-300, 1e-100, 1e-30, 1e-16, 1e-8, 1e-4, 0.01, 0.1, 0.37, 0.5, 0.9, 0.99, 1 - 1e-8, 1.0, 1.7],
)
def test_k_e_against_mpmath(mc):
    # mpmath.ellipk / ellipe at enough digits to resolve m = 1 - mc exactly
    # (Abramowitz & Stegun 1964, 17.3.1 and 17.3.3 define K(m), E(m)).  Measured: a
    # typical error of 1 ulp, at worst about 5 ulp (rounding over up to 9 iterations).
    with mp.workdps(340):
        m = 1 - mp.mpf(mc)
        k_ref, e_ref = float(mp.ellipk(m)), float(mp.ellipe(m))
    assert abs(ellipk_c(mc) - k_ref) <= 1.2e-15 * k_ref
    assert abs(ellipe_c(mc) - e_ref) <= 1.2e-15 * e_ref


def test_k_logarithmic_limit():
    # K(m) ~ ln(4 / kc) + O(kc^2 ln kc) as kc -> 0 (Abramowitz & Stegun 1964, 17.3.26)
    kc = 1e-120
    assert ellipk_c(kc * kc) == pytest.approx(math.log(4 / kc), rel=1e-15)


@pytest.mark.parametrize(
    "m", [0.0, 1e-300, 1e-12, 1e-5, 0.003, 0.0999, 0.1, 0.1001, 0.3, 0.7, 0.999, 1 - 1e-12]
)
def test_bracket_ratio_against_mpmath(m):
    # g(m) = ((1 - m/2) E - (1 - m) K) / m^2 with mpmath at 60 digits; g(0) = 3 pi / 32
    # from the hypergeometric series (Abramowitz & Stegun 1964, 17.3.11-12).
    mc = 1.0 - m
    with mp.workdps(100):
        mm = 1 - mp.mpf(mc)  # the m the kernel actually sees
        if mm < mp.mpf("1e-30"):
            ref = 3 * mp.pi / 32  # next term is (m / 4) g(0), below double precision
        else:
            ref = ((1 - mm / 2) * mp.ellipe(mm) - (1 - mm) * mp.ellipk(mm)) / mm**2
        ref = float(ref)
    got = bracket_ratio(float(mm), mc)
    assert abs(got - ref) <= 2e-15 * ref


# ------------------------------------------------------------ loop field


def test_centre_field():
    # B at the centre of a loop = mu0 N I / (2 a) (Jackson, Classical Electrodynamics,
    # 3rd ed., 1999, eq. 5.40 evaluated at the origin; from memory of the equation number)
    a, current, turns = 0.37, 12.5, 40
    b = loop_field(
        [0.0, 0.0, 0.0], center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=current, turns=turns
    )
    ref = mu_0 * turns * current / (2 * a)
    assert b[0, 0] == 0.0 and b[0, 1] == 0.0
    assert abs(b[0, 2] - ref) <= 2 * np.spacing(ref)


def test_on_axis_few_ulp():
    # On the axis B_z = mu0 N I a^2 / (2 (a^2 + z^2)^(3/2)) (Jackson 1999, eq. 5.40;
    # Griffiths, Introduction to Electrodynamics, 4th ed., 2013, Example 5.6), evaluated
    # here with mpmath at 30 digits; the kernel must agree to 4 ulp.
    a, nI = 0.8, 3.0
    z = np.concatenate([-np.logspace(-6, 3, 40), [0.0], np.logspace(-6, 3, 40)])
    pts = np.column_stack([np.zeros_like(z), np.zeros_like(z), z])
    b = loop_field(pts, center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=nI)
    with mp.workdps(30):
        ref = np.array(
            [
                float(
                    mp.mpf(mu_0)
                    * nI
                    * mp.mpf(a) ** 2
                    / (2 * (mp.mpf(a) ** 2 + mp.mpf(zi) ** 2) ** 1.5)
                )
                for zi in z
            ]
        )
    assert np.all(b[:, :2] == 0.0)
    ulps = np.abs(b[:, 2] - ref) / np.spacing(ref)
    assert ulps.max() <= 4


def test_on_tilted_axis():
    # Same on-axis law (Jackson 1999, eq. 5.40) for a tilted loop; the point's distance
    # from the axis is then a rounding residue, so allow 1e-14 relative.
    center, axis, a, nI = np.array([1.0, -2.0, 0.5]), np.array([0.3, -0.4, 0.87]), 0.5, 7.0
    w = axis / np.linalg.norm(axis)
    z = np.linspace(-4, 4, 33)
    b = loop_field(center + z[:, None] * w, center=center, axis=axis, radius=a, current=nI)
    ref = mu_0 * nI * a**2 / (2 * (a**2 + z**2) ** 1.5)
    assert np.max(rel_err(b, ref[:, None] * w)) <= 1e-14


def test_against_simpson_closed_forms():
    # Simpson et al. (2001) closed forms with scipy.special.ellipk/ellipe, m = k^2.
    # Their radial bracket cancels like rho^2 near the axis and is then divided by rho,
    # and both brackets lose ~ (r/a)^2 far out, so the textbook form itself is only
    # trusted for rho > 1e-3 a, r < 5 a and distance from the wire > 1e-3 a.
    a, nI = 0.6, 250.0
    loc = RNG.uniform(-3.0, 3.0, size=(4000, 3))
    rho = np.hypot(loc[:, 0], loc[:, 1])
    d_wire = np.hypot(rho - a, loc[:, 2])
    keep = (rho > 1e-3 * a) & (d_wire > 1e-3 * a)
    loc, rho = loc[keep], rho[keep]
    b_rho, b_z = simpson_scipy(rho, loc[:, 2], a, nI)
    ref = np.column_stack([b_rho * loc[:, 0] / rho, b_rho * loc[:, 1] / rho, b_z])
    b = loop_field(loc, center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=nI)
    assert np.max(rel_err(b, ref)) <= 1e-10


def _magpylib_circle(center, axis, radius, current):
    # magpylib 6 (SI units): Circle in its local xy-plane, current in A, diameter in m
    circ = magpy.current.Circle(current=current, diameter=2 * radius, position=center)
    circ.orientation = Rotation.align_vectors([axis / np.linalg.norm(axis)], [[0, 0, 1]])[0]
    return circ


def test_against_magpylib_tilted():
    # Reference library: magpylib.current.Circle (Ortner & Coliado Bandeira, SoftwareX 11,
    # 2020, 100466), an independent implementation of the same exact field.
    k = 6
    centers = RNG.uniform(-1, 1, size=(k, 3))
    axes = RNG.normal(size=(k, 3))
    radii = RNG.uniform(0.1, 1.5, size=k)
    ampere_turns = RNG.uniform(-50, 50, size=k)
    pts = RNG.uniform(-4, 4, size=(3000, 3))
    b = loops_field(pts, centers, axes, radii, ampere_turns)
    ref = sum(
        _magpylib_circle(c, w, r, i).getB(pts)
        for c, w, r, i in zip(centers, axes, radii, ampere_turns, strict=True)
    )
    assert np.max(rel_err(b, ref)) <= 1e-10
    # each loop alone, at points near its own wire and far away (r up to 100 a)
    for c, w, r, i in zip(centers, axes, radii, ampere_turns, strict=True):
        t = RNG.uniform(0, 2 * np.pi, 300)
        d = r * np.exp(RNG.uniform(np.log(1e-4), np.log(100), 300))
        phi = RNG.uniform(0, 2 * np.pi, 300)
        loc = np.column_stack(
            [(r + d * np.cos(phi)) * np.cos(t), (r + d * np.cos(phi)) * np.sin(t), d * np.sin(phi)]
        )
        p = to_global(loc, c, w)
        got = Loop(c, w, r, i).field(p)
        ref = _magpylib_circle(c, w, r, i).getB(p)
        assert np.max(rel_err(got, ref)) <= 1e-10


def test_near_wire_against_mpmath():
    # Points 1e-6 radii from the wire, all around it, against the Simpson et al. (2001)
    # closed forms at 40 digits (mpmath.ellipk/ellipe); required 1e-8 relative.
    a, nI = 1.3, 10.0
    phi = np.linspace(0, 2 * np.pi, 24, endpoint=False)
    for d in (1e-6 * a, 1e-9 * a):
        rho = a + d * np.cos(phi)
        z = d * np.sin(phi)
        pts = np.column_stack([rho, np.zeros_like(rho), z])
        b = loop_field(pts, center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=nI)
        ref = np.array([simpson_mpmath(r, zz, a, nI) for r, zz in zip(rho, z, strict=True)])
        ref = np.column_stack([ref[:, 0], np.zeros(len(phi)), ref[:, 1]])
        assert np.max(rel_err(b, ref)) <= 1e-8
        # and the field is the straight-wire limit mu0 I / (2 pi d) to O(d/a ln(a/d))
        # (Biot-Savart for a line current; Jackson 1999, eq. 5.10); the distance of the
        # rounded point from the wire is used (rho - a is exact in floating point)
        mag = np.linalg.norm(b, axis=1)
        dist = np.hypot(rho - a, z)
        assert np.allclose(mag, mu_0 * nI / (2 * np.pi * dist), rtol=d / a * math.log(8 * a / d))


def test_where_naive_m_rounds_to_one():
    # At rho = a (1 + 1e-9), z = 0 the parameter m = 1 - 2.5e-19 rounds to 1.0 in
    # float64, where scipy's K(1) = inf; computing kc^2 = alpha^2/beta^2 directly keeps
    # the result finite and exact (reference: Simpson et al. 2001 with mpmath, 40 digits).
    a, nI = 0.5, 4.0
    rho = a * (1 + 1e-9)
    assert sp.ellipk(4 * a * rho / (a + rho) ** 2) == np.inf
    b = loop_field([rho, 0.0, 0.0], center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=nI)
    with mp.workdps(40):
        rr, aa = mp.mpf(rho), mp.mpf(a)
        alpha2, beta2 = (aa - rr) ** 2, (aa + rr) ** 2
        m = 1 - alpha2 / beta2
        c = mp.mpf(mu_0) * nI / mp.pi
        ref_z = float(
            c
            / (2 * alpha2 * mp.sqrt(beta2))
            * ((aa**2 - rr**2) * mp.ellipe(m) + alpha2 * mp.ellipk(m))
        )
    assert np.all(np.isfinite(b))
    assert b[0, 0] == 0.0 and b[0, 1] == 0.0  # B_rho is odd in z (mirror symmetry)
    assert abs(b[0, 2] - ref_z) <= 1e-8 * abs(ref_z)


def test_radial_field_near_axis_against_mpmath():
    # Near the axis the textbook radial bracket (a^2 + r^2) E - alpha^2 K cancels like
    # m^2; the kernel's series form must keep B_rho itself (not just |B|) accurate.
    # Reference: Simpson et al. (2001) closed forms with mpmath at 60 digits.
    a, nI = 0.9, 6.0
    rho = np.array([1e-12, 1e-8, 1e-5, 1e-3, 3e-2, 0.2]) * a
    z = np.full_like(rho, 0.37 * a)
    b = loop_field(
        np.column_stack([rho, np.zeros_like(rho), z]),
        center=[0, 0, 0],
        axis=[0, 0, 1],
        radius=a,
        current=nI,
    )
    ref = np.array([simpson_mpmath(r, zz, a, nI, dps=60) for r, zz in zip(rho, z, strict=True)])
    assert np.all(np.abs(b[:, 0] - ref[:, 0]) <= 1e-13 * np.abs(ref[:, 0]))
    assert np.all(np.abs(b[:, 2] - ref[:, 1]) <= 1e-14 * np.abs(ref[:, 1]))
    # div B = 0 about the axis gives B_rho = -(rho / 2) dB_z/dz + O(rho^3) (e.g. Jackson
    # 1999, problem 5.4; from memory of the number), with the on-axis law's derivative
    zz = 0.37 * a
    slope = -1.5 * mu_0 * nI * a**2 * zz / (a**2 + zz**2) ** 2.5
    assert b[1, 0] == pytest.approx(-0.5 * rho[1] * slope, rel=1e-12)
    on_axis = loop_field([0.0, 0.0, zz], center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=nI)
    assert on_axis[0, 0] == 0.0 and np.isfinite(on_axis).all()


def test_far_field_is_dipole():
    # Far away the loop is a dipole m = N I pi a^2 (Jackson 1999, eq. 5.56);
    # relative deviation O((a / r)^2).
    a, nI = 0.2, 9.0
    loop = Loop([0, 0, 0], [0, 0, 1], a, nI)
    dirs = RNG.normal(size=(200, 3))
    dirs /= np.linalg.norm(dirs, axis=1)[:, None]
    r = 1e3
    pts = r * dirs
    mom = loop.moment
    ref = mu_0 / (4 * np.pi) * (3 * (pts @ mom)[:, None] * pts / r**5 - mom / r**3)
    assert np.max(rel_err(loop.field(pts), ref)) <= 2 * (a / r) ** 2


def test_nan_on_wire_and_no_inf_nearby():
    # The thin-wire field diverges on the wire: NaN there (documented), never inf.
    a = 0.75
    t = np.linspace(0, 2 * np.pi, 17)
    on = np.column_stack([a * np.cos(t), a * np.sin(t), np.zeros_like(t)])
    b = loop_field(on, center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=1.0)
    assert np.all(np.isnan(b))
    # a fine grid in the rho-z plane with the wire exactly on a node
    rho, z = np.meshgrid(np.linspace(a - 0.01, a + 0.01, 201), np.linspace(-0.01, 0.01, 201))
    pts = np.column_stack([rho.ravel(), np.zeros(rho.size), z.ravel()])
    b = loop_field(pts, center=[0, 0, 0], axis=[0, 0, 1], radius=a, current=1.0)
    assert not np.any(np.isinf(b))
    d = np.hypot(pts[:, 0] - a, pts[:, 2])
    assert np.all(np.isnan(b[d <= WIRE_TOLERANCE * a]))
    assert np.all(np.isfinite(b[d > WIRE_TOLERANCE * a]))
    assert np.count_nonzero(np.isnan(b[:, 0])) == 1


def test_batched_equals_sum_of_singles():
    # superposition (Jackson 1999, sec. 5.3): the batched kernel is the sum of its loops
    k = 20
    centers = RNG.uniform(-1, 1, (k, 3))
    axes = RNG.normal(size=(k, 3))
    radii = RNG.uniform(0.2, 1, k)
    nI = RNG.uniform(-5, 5, k)
    pts = RNG.uniform(-2, 2, (500, 3))
    total = loops_field(pts, centers, axes, radii, nI)
    parts = sum(
        Loop(c, w, r, i).field(pts) for c, w, r, i in zip(centers, axes, radii, nI, strict=True)
    )
    assert np.allclose(total, parts, rtol=1e-13, atol=1e-13 * np.abs(parts).max())


def test_block_boundaries_and_empty():
    # point counts around the kernel's block size give the same per-point answers
    loop = Loop([0.1, 0, 0], [0, 1, 1], 0.4, 3.0)
    pts = RNG.uniform(-1, 1, (5000, 3))
    full = loop.field(pts)
    for n in (0, 1, 127, 128, 129, 4095, 4097):
        part = loop.field(pts[:n]) if n else loop.field(np.empty((0, 3)))
        assert part.shape == (n, 3)
        assert np.array_equal(part, full[:n])


def test_validation_messages():
    with pytest.raises(ValueError, match="radius"):
        Loop([0, 0, 0], [0, 0, 1], -1.0, 1.0)
    with pytest.raises(ValueError, match="axis"):
        Loop([0, 0, 0], [0, 0, 0], 1.0, 1.0)
    with pytest.raises(ValueError, match="current"):
        Loop([0, 0, 0], [0, 0, 1], 1.0, np.nan)
    with pytest.raises(ValueError, match="points"):
        loop_field(np.zeros((4, 2)), center=[0, 0, 0], axis=[0, 0, 1], radius=1.0, current=1.0)
    with pytest.raises(ValueError, match="radii"):
        loops_field(np.zeros((1, 3)), np.zeros((2, 3)), np.ones((2, 3)), [1.0, 0.0], [1.0, 1.0])
    with pytest.raises(ValueError, match="axes"):
        loops_field(np.zeros((1, 3)), np.zeros((2, 3)), np.ones((3, 3)), [1.0, 1.0], [1.0, 1.0])


# ------------------------------------------------------- property tests

_coord = st.floats(-2.0, 2.0, allow_nan=False)
_vec = st.tuples(_coord, _coord, _coord)


def _axis(v):
    v = np.asarray(v, dtype=float)
    return v if np.linalg.norm(v) > 1e-3 else np.array([0.0, 0.0, 1.0])


def _away_from_wire(pts, center, axis, radius):
    w = axis / np.linalg.norm(axis)
    d = pts - center
    z = d @ w
    rho = np.linalg.norm(d - z[:, None] * w, axis=1)
    return np.hypot(rho - radius, z) > 1e-3 * radius


@settings(max_examples=50, deadline=None)
@given(
    center=_vec,
    axis=_vec,
    radius=st.floats(0.05, 2.0),
    i1=st.floats(-1e3, 1e3),
    i2=st.floats(-1e3, 1e3),
    seed=st.integers(0, 2**32 - 1),
)
def test_linearity_in_current(center, axis, radius, i1, i2, seed):
    # Biot-Savart is linear in the current (Jackson 1999, eq. 5.14)
    pts = np.random.default_rng(seed).uniform(-3, 3, (16, 3))
    ax = _axis(axis)
    b1 = Loop(center, ax, radius, i1).field(pts)
    b2 = Loop(center, ax, radius, i2).field(pts)
    b12 = Loop(center, ax, radius, i1 + i2).field(pts)
    ok = _away_from_wire(pts, np.array(center), ax, radius)
    scale = np.abs(b1[ok]).max(initial=0) + np.abs(b2[ok]).max(initial=0) + 1e-300
    assert np.allclose(b12[ok], (b1 + b2)[ok], rtol=1e-12, atol=1e-12 * scale)


@settings(max_examples=50, deadline=None)
@given(
    center=_vec, axis=_vec, shift=_vec, radius=st.floats(0.05, 2.0), seed=st.integers(0, 2**32 - 1)
)
def test_translation_covariance(center, axis, shift, radius, seed):
    # B(x; source + s) = B(x - s; source) (homogeneity of space)
    pts = np.random.default_rng(seed).uniform(-3, 3, (16, 3))
    ax, c, s = _axis(axis), np.array(center), np.array(shift)
    b = Loop(c + s, ax, radius, 5.0).field(pts + s)
    ref = Loop(c, ax, radius, 5.0).field(pts)
    ok = _away_from_wire(pts, c, ax, radius)
    assert np.max(rel_err(b[ok], ref[ok]), initial=0) <= 1e-11


@settings(max_examples=50, deadline=None)
@given(center=_vec, axis=_vec, radius=st.floats(0.05, 2.0), seed=st.integers(0, 2**32 - 1))
def test_rotation_covariance(center, axis, radius, seed):
    # B is a (pseudo)vector: rotating source and points by R rotates B by R (det R = 1)
    rng = np.random.default_rng(seed)
    rot = Rotation.random(random_state=rng).as_matrix()
    pts = rng.uniform(-3, 3, (16, 3))
    ax, c = _axis(axis), np.array(center)
    b = Loop(rot @ c, rot @ ax, radius, 2.0).field(pts @ rot.T)
    ref = Loop(c, ax, radius, 2.0).field(pts) @ rot.T
    ok = _away_from_wire(pts, c, ax, radius)
    assert np.max(rel_err(b[ok], ref[ok]), initial=0) <= 1e-11


@settings(max_examples=50, deadline=None)
@given(radius=st.floats(0.05, 2.0), seed=st.integers(0, 2**32 - 1))
def test_mirror_symmetry_about_loop_plane(radius, seed):
    # Reflection z -> -z in the loop plane: B_z even, B_rho odd (the loop's current is
    # invariant and B is a pseudovector; Jackson 1999, sec. 6.10)
    loc = np.random.default_rng(seed).uniform(-3, 3, (16, 3))
    mirrored = loc * np.array([1.0, 1.0, -1.0])
    loop = Loop([0, 0, 0], [0, 0, 1], radius, 1.0)
    b, bm = loop.field(loc), loop.field(mirrored)
    ok = _away_from_wire(loc, np.zeros(3), np.array([0, 0, 1.0]), radius)
    assert np.allclose(bm[ok, 2], b[ok, 2], rtol=1e-14, atol=0)
    assert np.allclose(bm[ok, :2], -b[ok, :2], rtol=1e-14, atol=0)


def test_non_finite_points_give_nan():
    # a NaN or inf coordinate has no field; the kernel must return NaN and terminate
    pts = np.array([[np.nan, 0.0, 0.0], [0.1, 0.2, 0.3], [np.inf, 0.0, 0.0], [0.0, -np.inf, 1.0]])
    b = Loop([0, 0, 0], [0, 0, 1], 1.0, 1.0).field(pts)
    assert np.all(np.isnan(b[[0, 2, 3]])) and np.all(np.isfinite(b[1]))
