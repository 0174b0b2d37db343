"""Thin and thick finite solenoids, and Bulirsch's cel behind them."""

from __future__ import annotations

import magpylib as magpy
import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import mu_0
from scipy.integrate import quad
from scipy.spatial.transform import Rotation

from siting.fields._elliptic import cel
from siting.fields._frame import frame
from siting.fields.loop import loops_field
from siting.fields.solenoid import (
    SHEET_TOLERANCE,
    Solenoid,
    solenoid_field,
    solenoids_field,
)
from siting.fields.thick_solenoid import ThickSolenoid

RNG = np.random.default_rng(7)


def rel_err(b, ref):
    return np.linalg.norm(b - ref, axis=1) / np.linalg.norm(ref, axis=1)


def sheet_distance(loc, a, half):
    """Distance of local-frame points from a sheet of radius a, |z| <= half."""
    rho = np.hypot(loc[:, 0], loc[:, 1])
    dz = np.maximum(np.abs(loc[:, 2]) - half, 0.0)
    return np.hypot(rho - a, dz)


# ------------------------------------------------------------------ cel


@pytest.mark.parametrize("kc", [1e-8, 0.3, 1.0, 2.5])
@pytest.mark.parametrize("p", [1e-6, 0.2, 3.7])
@pytest.mark.parametrize("ab", [(1.0, -1.0), (0.3, 2.0), (-1.5, 0.25)])
def test_cel_positive_p_against_quadrature(kc, p, ab):
    # Definition of cel (Bulirsch, Numer. Math. 7, 1965, 78-90) integrated by
    # mpmath.quad at 30 digits.
    a, b = ab
    with mp.workdps(30):

        def f(t):
            c2, s2 = mp.cos(t) ** 2, mp.sin(t) ** 2
            return (a * c2 + b * s2) / ((c2 + p * s2) * mp.sqrt(c2 + kc**2 * s2))

        ref = float(mp.quad(f, [0, mp.pi / 4, mp.pi / 2]))
        scale = float(mp.quad(lambda t: abs(f(t)), [0, mp.pi / 2]))
    assert abs(cel(kc, p, a, b) - ref) <= 1e-14 * scale


@pytest.mark.parametrize("kc", [0.1, 0.4, 0.9, 1.0])
@pytest.mark.parametrize("p", [-0.05, -0.5, -3.0])
@pytest.mark.parametrize("ab", [(1.0, 1.0), (0.7, -0.2)])
def test_cel_negative_p_principal_value(kc, p, ab):
    # For p < 0 cel is a Cauchy principal value.  With n = 1 - p > 1 and m = 1 - kc^2,
    # cel(kc, p, a, b) = a K(m) + (b - a p) (Pi(n|m) - K(m)) / (1 - p)
    # (split a cos^2 + b sin^2 = a (cos^2 + p sin^2) + (b - a p) sin^2; Bulirsch 1965),
    # and the principal value Pi(n|m) = K(m) - Pi(m/n|m) for n > 1 (Abramowitz &
    # Stegun 1964, 17.7.7 in its complete form), with mpmath.ellipk / ellippi.
    a, b = ab
    with mp.workdps(30):
        m = 1 - mp.mpf(kc) ** 2
        n = 1 - mp.mpf(p)
        kk = mp.ellipk(m)
        pi3 = kk - mp.ellippi(m / n, m)
        ref = float(a * kk + (b - a * p) * (pi3 - kk) / (1 - p))
    assert abs(cel(kc, p, a, b) - ref) <= 1e-13 * max(1.0, abs(ref))


@pytest.mark.parametrize("kc", [1e-6, 0.1, 0.6, 1.0])
def test_cel_zero_p(kc):
    # p = 0 (the solenoid's gamma = 0 at rho = a) is finite only for b = 0, where
    # cel(kc, 0, a, 0) = a K(m) (the definition; Bulirsch 1965)
    with mp.workdps(30):
        ref = float(mp.ellipk(1 - mp.mpf(kc) ** 2))
    assert cel(kc, 0.0, 1.3, 0.0) == pytest.approx(1.3 * ref, rel=1e-15)


def test_cel_special_values():
    # cel(kc, 1, 1, 1) = K, cel(kc, 1, 1, kc^2) = E (Bulirsch 1965); cel(1, 1, 1, 1) = pi/2
    assert cel(1.0, 1.0, 1.0, 1.0) == pytest.approx(np.pi / 2, rel=1e-16)
    with mp.workdps(30):
        kc = 0.25
        assert cel(kc, 1, 1, 1) == pytest.approx(float(mp.ellipk(1 - kc**2)), rel=2e-16)
        assert cel(kc, 1, 1, kc**2) == pytest.approx(float(mp.ellipe(1 - kc**2)), rel=2e-16)
    assert np.isnan(cel(0.0, 1.0, 1.0, 1.0))


# ----------------------------------------------------------- thin solenoid


def _magpylib_cylinder(center, axis, radius, length, ampere_turns):
    # A cylinder magnetised along its axis with polarization J = mu0 N I / L has the
    # same B everywhere as the solenoid (Amperian surface current K = M x n = N I / L;
    # Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 5.8).
    # magpylib 6, SI units: dimension = (diameter, height) [m], polarization [T].
    cyl = magpy.magnet.Cylinder(
        polarization=(0, 0, mu_0 * ampere_turns / length),
        dimension=(2 * radius, length),
        position=center,
    )
    cyl.orientation = Rotation.align_vectors([axis / np.linalg.norm(axis)], [[0, 0, 1]])[0]
    return cyl


def test_against_magpylib_cylinder_tilted():
    for _ in range(4):
        center = RNG.uniform(-1, 1, 3)
        axis = RNG.normal(size=3)
        a, length, nI = RNG.uniform(0.1, 1.0), RNG.uniform(0.05, 3.0), RNG.uniform(-1e4, 1e4)
        loc = RNG.uniform(-2.5, 2.5, (2000, 3)) * np.array([a, a, length])
        loc = loc[sheet_distance(loc, a, length / 2) > 1e-6 * a]
        pts = center + loc @ frame(axis)
        b = Solenoid(center, axis, a, length, 1.0, nI).field(pts)
        ref = _magpylib_cylinder(center, axis, a, length, nI).getB(pts)
        assert np.max(rel_err(b, ref)) <= 1e-10


def rim_distance(loc, a, half):
    """Distance of local-frame points from the nearer end rim of the sheet."""
    rho = np.hypot(loc[:, 0], loc[:, 1])
    return np.minimum(np.hypot(rho - a, loc[:, 2] - half), np.hypot(rho - a, loc[:, 2] + half))


def test_against_stack_of_loops():
    # A sheet is the limit of a stack of loops.  The midpoint rule with N = 2000 loops
    # (spacing h = L / N) has, by the Euler-Maclaurin formula, the end correction
    # (h^2 / 24) [dB/dz']_{-b}^{b}; the loop field varies on the scale of the distance
    # d_rim to the end rims, so the stack itself is wrong by ~ (h / d_rim)^2 / 24 times
    # a geometry factor of a few (measured: at most 0.22 (h / d_rim)^2; median 6e-8).
    a, length, nI, n_loops = 0.5, 2.0, 3000.0, 2000
    h = length / n_loops
    loc = RNG.uniform(-2, 2, (1500, 3))
    loc = loc[sheet_distance(loc, a, length / 2) > 0.02]
    zs = ((np.arange(n_loops) + 0.5) / n_loops - 0.5) * length
    stack = loops_field(
        loc,
        np.column_stack([np.zeros(n_loops), np.zeros(n_loops), zs]),
        np.tile([0.0, 0.0, 1.0], (n_loops, 1)),
        np.full(n_loops, a),
        np.full(n_loops, nI / n_loops),
    )
    b = solenoid_field(
        loc, center=[0, 0, 0], axis=[0, 0, 1], radius=a, length=length, turns=1.0, current=nI
    )
    bound = 0.5 * (h / rim_distance(loc, a, length / 2)) ** 2 + 1e-12
    assert np.all(rel_err(b, stack) <= bound)
    assert np.median(rel_err(b, stack)) <= 1e-6


def test_on_axis_closed_form():
    # On the axis B_z = mu0 n I / 2 [(z + b)/sqrt((z + b)^2 + a^2) - (z - b)/sqrt(...)]
    # (integral of the loop's on-axis field; e.g. Griffiths, Introduction to
    # Electrodynamics, 4th ed., 2013, Problem 5.11, from memory of the number).
    a, length, turns, current = 0.3, 1.1, 500, 2.0
    half = length / 2
    z = np.linspace(-3, 3, 61)
    pts = np.column_stack([np.zeros_like(z), np.zeros_like(z), z])
    b = solenoid_field(
        pts, center=[0, 0, 0], axis=[0, 0, 1], radius=a, length=length, turns=turns, current=current
    )
    n_i = turns * current / length
    ref = mu_0 * n_i / 2 * ((z + half) / np.hypot(z + half, a) - (z - half) / np.hypot(z - half, a))
    assert np.all(b[:, :2] == 0.0)
    # far out both this form and the kernel's difference of end terms cancel
    # (~ log10(|z| / L) digits), hence 1e-12 rather than a few ulp
    assert np.max(np.abs(b[:, 2] - ref) / np.abs(ref)) <= 1e-12


def test_long_solenoid_interior_and_end_face():
    # Ideal long solenoid: B = mu0 N I / L inside (Griffiths 2013, Example 5.9; from
    # memory of the number), and on the end face half of that (by superposition two
    # semi-infinite solenoids make an infinite one; Jackson 1999, sec. 5.8 / common
    # textbook result).  Corrections are O((a / L)^2) ~ 1e-6 for L = 1000 a.
    a, length, turns, current = 0.01, 10.0, 1e5, 1.5
    sol = Solenoid([0, 0, 0], [0, 0, 1], a, length, turns, current)
    b_inf = mu_0 * turns * current / length
    rho = np.array([0.0, 0.3, 0.6, 0.9]) * a
    mid = sol.field(np.column_stack([rho, np.zeros(4), np.zeros(4)]))
    face = sol.field(np.column_stack([rho, np.zeros(4), np.full(4, length / 2)]))
    assert np.allclose(mid[:, 2], b_inf, rtol=1e-5)
    assert np.allclose(face[:, 2], 0.5 * b_inf, rtol=2e-3)  # off-axis end-face: O(a/L)
    assert face[0, 2] == pytest.approx(0.5 * mid[0, 2], rel=2e-6)


def test_sheet_nan_and_no_inf():
    # Points on the current sheet (where B_z jumps by mu0 n I) are NaN; nothing is inf
    # on a fine grid across the sheet and its rim, and rho = a beyond the ends (where
    # cel's p = gamma^2 = 0 branch is used) agrees with magpylib.
    a, length, nI = 0.4, 0.8, 100.0
    sol = Solenoid([0, 0, 0], [0, 0, 1], a, length, 1.0, nI)
    rho, z = np.meshgrid(np.linspace(a - 0.02, a + 0.02, 161), np.linspace(0.38, 0.42, 161))
    pts = np.column_stack([rho.ravel(), np.zeros(rho.size), z.ravel()])
    b = sol.field(pts)
    assert not np.any(np.isinf(b))
    on = (np.abs(pts[:, 0] - a) <= SHEET_TOLERANCE * a) & (np.abs(pts[:, 2]) <= length / 2)
    assert on.sum() > 0
    assert np.all(np.isnan(b[on])) and np.all(np.isfinite(b[~on]))
    beyond = np.column_stack([np.full(5, a), np.zeros(5), np.linspace(0.41, 2.0, 5)])
    ref = _magpylib_cylinder(np.zeros(3), np.array([0, 0, 1.0]), a, length, nI).getB(beyond)
    assert np.max(rel_err(sol.field(beyond), ref)) <= 1e-10


def test_validation_messages():
    with pytest.raises(ValueError, match="length"):
        Solenoid([0, 0, 0], [0, 0, 1], 1.0, 0.0, 10, 1.0)
    with pytest.raises(ValueError, match="lengths"):
        solenoids_field(np.zeros((1, 3)), np.zeros((1, 3)), [[0, 0, 1]], [1.0], [-1.0], [1.0])
    with pytest.raises(ValueError, match="outer_radius"):
        ThickSolenoid([0, 0, 0], [0, 0, 1], 0.5, 0.4, 1.0, 10, 1.0)
    with pytest.raises(ValueError, match="radial_nodes"):
        ThickSolenoid([0, 0, 0], [0, 0, 1], 0.4, 0.5, 1.0, 10, 1.0, radial_nodes=0)


@settings(max_examples=30, deadline=None)
@given(
    radius=st.floats(0.05, 1.0),
    length=st.floats(0.05, 2.0),
    seed=st.integers(0, 2**32 - 1),
)
def test_rotation_covariance_and_mirror(radius, length, seed):
    # B rotates as a vector with the source (det R = 1), and the mid-plane reflection
    # z -> -z keeps B_z and flips B_rho (pseudovector; Jackson 1999, sec. 6.10).
    rng = np.random.default_rng(seed)
    rot = Rotation.random(random_state=rng).as_matrix()
    center, axis = rng.uniform(-1, 1, 3), rng.normal(size=3)
    loc = rng.uniform(-2, 2, (12, 3))
    loc = loc[sheet_distance(loc, radius, length / 2) > 1e-3]
    pts = center + loc @ frame(axis)
    sol = Solenoid(center, axis, radius, length, 100, 1.0)
    rsol = Solenoid(rot @ center, rot @ axis, radius, length, 100, 1.0)
    assert np.max(rel_err(rsol.field(pts @ rot.T), sol.field(pts) @ rot.T), initial=0) <= 1e-11
    local = Solenoid([0, 0, 0], [0, 0, 1], radius, length, 100, 1.0)
    b, bm = local.field(loc), local.field(loc * [1, 1, -1])
    assert np.allclose(bm, b * [-1, -1, 1], rtol=1e-13, atol=1e-13 * np.abs(b).max(initial=0))


# ---------------------------------------------------------- thick winding


def test_thick_centre_field_montgomery():
    # B0 = mu0 J a1 beta ln((alpha + sqrt(alpha^2 + beta^2)) / (1 + sqrt(1 + beta^2))),
    # alpha = a2/a1, beta = (L/2)/a1, J = N I / (L (a2 - a1))  (D. B. Montgomery,
    # Solenoid Magnet Design, Wiley, 1969).
    # The third winding is 9 x thicker than the centre's distance to it, so the
    # radial integrand has a near singularity and needs more nodes (module docstring).
    for a1, a2, length, nodes in [(0.4, 0.6, 1.2, 8), (0.3, 0.31, 2.0, 8), (0.05, 0.5, 0.1, 40)]:
        coil = ThickSolenoid([0, 0, 0], [0, 0, 1], a1, a2, length, 2000, 5.0, radial_nodes=nodes)
        al, be = a2 / a1, length / 2 / a1
        ref = (
            mu_0
            * coil.current_density
            * a1
            * be
            * np.log((al + np.hypot(al, be)) / (1 + np.hypot(1, be)))
        )
        b = coil.field([0.0, 0.0, 0.0])
        assert b[0, 2] == pytest.approx(ref, rel=1e-13)


def test_thick_on_axis_closed_form():
    # Off-centre on the axis: B_z = mu0 J / 2 [F(z + b) - F(z - b)],
    # F(u) = u ln((a2 + sqrt(a2^2 + u^2)) / (a1 + sqrt(a1^2 + u^2)))
    # (Montgomery 1969; the radial integral of the thin-sheet on-axis field).
    a1, a2, length = 0.4, 0.7, 0.9
    coil = ThickSolenoid([0, 0, 0], [0, 0, 1], a1, a2, length, 1000, 2.0, radial_nodes=10)
    z = np.linspace(-2.5, 2.5, 41)
    f = lambda u: u * np.log((a2 + np.hypot(a2, u)) / (a1 + np.hypot(a1, u)))  # noqa: E731
    ref = mu_0 * coil.current_density / 2 * (f(z + length / 2) - f(z - length / 2))
    b = coil.field(np.column_stack([np.zeros_like(z), np.zeros_like(z), z]))
    assert np.max(np.abs(b[:, 2] - ref) / np.abs(ref)) <= 1e-12


def _thick_reference(pt, a1, a2, length, nI):
    """Radial integral of thin sheets by scipy.integrate.quad (adaptive, split at the
    point's radius where the integrand jumps), as an independent quadrature."""
    rho = float(np.hypot(pt[0], pt[1]))
    brk = [rho] if a1 < rho < a2 else None
    dens = nI / (a2 - a1)

    def comp(i):
        def g(r):
            return solenoid_field(
                pt,
                center=[0, 0, 0],
                axis=[0, 0, 1],
                radius=r,
                length=length,
                turns=1.0,
                current=dens,
            )[0, i]

        return quad(g, a1, a2, points=brk, epsabs=0, epsrel=1e-13, limit=200)[0]

    return np.array([comp(0), comp(1), comp(2)])


def test_thick_convergence_outside_and_inside():
    # Gauss-Legendre converges exponentially for an integrand analytic on the interval
    # (Trefethen, Approximation Theory and Approximation Practice, 2013, Thm. 19.3).
    # Inside the winding the interval is split at the point's radius, where B_z of a
    # sheet jumps, so the convergence is exponential there too; within 1 % of the
    # thickness from an end face it is slower (near rim singularities).
    a1, a2, length, nI = 0.4, 0.6, 1.2, 1e4
    t = a2 - a1
    pts = {
        "bore": [0.2, 0.0, 0.3],
        "outside": [1.2, 0.1, 0.3],
        "beyond end": [0.3, 0.4, 0.9],
        "just outside": [a2 + 0.01 * t, 0.0, 0.2],
        "in winding": [0.47, 0.0, 0.2],
        "in winding near end": [0.0, 0.53, 0.55],
        "near end face": [0.5, 0.0, 0.6 + 0.01 * t],
    }
    errs = {}
    for name, pt in pts.items():
        pt = np.array(pt)
        ref = _thick_reference(pt, a1, a2, length, nI)
        row = []
        for nodes in (2, 4, 8, 32):
            coil = ThickSolenoid([0, 0, 0], [0, 0, 1], a1, a2, length, nI, 1.0, radial_nodes=nodes)
            row.append(np.linalg.norm(coil.field(pt)[0] - ref) / np.linalg.norm(ref))
        errs[name] = row
    for name in ("bore", "outside", "beyond end", "just outside", "in winding"):
        e2, e4, e8, e32 = errs[name]
        assert e8 <= 1e-12 and e4 < e2, name
    e2, e4, e8, e32 = errs["in winding near end"]
    assert e4 < e2 and e8 < 1e-6 and e32 < 1e-12
    e2, e4, e8, e32 = errs["near end face"]
    assert e8 < e4 < e2 and e8 < 3e-3 and e32 < 1e-7


def test_thick_against_stacked_thin_sheets():
    # Thin-sheet limit: a very thin winding equals one sheet at its mean radius up to
    # O((t / a)^2) (midpoint rule over the radius).
    a, t, length, nI = 0.5, 1e-4, 1.0, 500.0
    pts = RNG.uniform(-2, 2, (300, 3))
    thick = ThickSolenoid([0, 0, 0], [0, 0, 1], a - t / 2, a + t / 2, length, nI, 1.0)
    thin = Solenoid([0, 0, 0], [0, 0, 1], a, length, nI, 1.0)
    loc_d = sheet_distance(pts, a, length / 2)
    ok = loc_d > 0.05
    assert np.max(rel_err(thick.field(pts[ok]), thin.field(pts[ok]))) <= 1e-6


def test_non_finite_points_give_nan():
    # a NaN or inf coordinate has no field; cel's iteration must stop and give NaN
    assert np.isnan(cel(np.nan, 1.0, 1.0, 1.0)) and np.isnan(cel(0.5, np.inf, 1.0, 1.0))
    pts = np.array([[np.nan, 0.0, 0.0], [0.1, 0.2, 0.3], [np.inf, 0.0, 0.0]])
    for coil in (
        Solenoid([0, 0, 0], [0, 0, 1], 1.0, 1.0, 10, 1.0),
        ThickSolenoid([0, 0, 0], [0, 0, 1], 1.0, 1.5, 1.0, 10, 1.0),
    ):
        b = coil.field(pts)
        assert np.all(np.isnan(b[[0, 2]])) and np.all(np.isfinite(b[1]))
