"""Point-dipole field (siting.fields.dipole) against outside references."""

from __future__ import annotations

import magpylib as magpy
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import mu_0
from scipy.spatial.transform import Rotation

from siting.fields import dipole
from siting.fields.dipole import Dipole, dipole_field
from siting.fields.loop import loop_field

RNG = np.random.default_rng(7)


def _unit(v):
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


@pytest.mark.parametrize("min_points", [0, 1 << 62], ids=["parallel", "serial"])
def test_matches_magpylib_dipole(monkeypatch, min_points):
    monkeypatch.setattr(dipole, "PARALLEL_MIN_POINTS", min_points)
    # Reference: magpylib 6 (Ortner and Coliado Bandeira, SoftwareX 11, 100466,
    # 2020), magpylib.misc.Dipole, SI units, same scipy mu_0.
    center = np.array([0.3, -1.2, 2.0])
    moment = np.array([120.0, -45.0, 300.0])
    pts = center + RNG.normal(scale=2.0, size=(5000, 3))
    ours = Dipole(center, moment).field(pts)
    ref = magpy.misc.Dipole(position=center, moment=moment).getB(pts)
    rel = np.linalg.norm(ours - ref, axis=1) / np.linalg.norm(ref, axis=1)
    assert rel.max() <= 1e-12


def test_axial_and_equatorial_values():
    # Reference: Jackson, Classical Electrodynamics, 3rd ed., 1999, eq. 5.56:
    # on the axis B = mu0 2 m / (4 pi r^3), in the equatorial plane
    # B = -mu0 m / (4 pi r^3).
    m = 2.5
    r = np.array([0.1, 1.0, 7.0])
    zero = np.zeros_like(r)
    axial = dipole_field(np.stack([zero, zero, r], 1), center=[0, 0, 0], moment=[0, 0, m])
    equator = dipole_field(np.stack([r, zero, zero], 1), center=[0, 0, 0], moment=[0, 0, m])
    k = mu_0 / (4 * np.pi)
    np.testing.assert_allclose(axial[:, 2], 2 * k * m / r**3, rtol=1e-14)
    np.testing.assert_allclose(equator[:, 2], -k * m / r**3, rtol=1e-14)
    assert np.all(axial[:, :2] == 0) and np.all(equator[:, :2] == 0)


def test_on_axis_ratio_to_exact_loop():
    # Reference: on the axis of a loop of radius R, B = mu0 N I R^2 /
    # (2 (R^2 + z^2)^(3/2)) (Griffiths, Introduction to Electrodynamics, 4th ed.,
    # 2017, Example 5.6, eq. 5.41 from memory), so B_dipole / B_loop = (1 + R^2/z^2)^(3/2)
    # exactly, with m = N I pi R^2 (Jackson 1999, sec. 5.6).
    radius, turns, current = 0.05, 20, 3.0
    z = np.geomspace(0.2, 10.0, 6)
    pts = np.stack([np.zeros_like(z), np.zeros_like(z), z], 1)
    m = turns * current * np.pi * radius**2
    b = dipole_field(pts, center=[0, 0, 0], moment=[0, 0, m])[:, 2]
    exact = mu_0 * turns * current * radius**2 / (2 * (radius**2 + z**2) ** 1.5)
    np.testing.assert_allclose(b / exact, (1 + radius**2 / z**2) ** 1.5, rtol=1e-13)


def _siting_loop(pts, center, axis, radius, ampere_turns):
    return loop_field(pts, center=center, axis=axis, radius=radius, current=ampere_turns)


def _magpylib_loop(pts, center, axis, radius, ampere_turns):
    # magpylib.current.Circle lies in its local xy plane; rotate z onto axis.
    rot, _ = Rotation.align_vectors([axis], [[0.0, 0.0, 1.0]])
    src = magpy.current.Circle(
        position=center, orientation=rot, diameter=2 * radius, current=ampere_turns
    )
    return src.getB(pts)


@pytest.mark.parametrize("exact_loop", [_siting_loop, _magpylib_loop], ids=["siting", "magpylib"])
def test_far_field_of_a_small_loop(exact_loop):
    # Reference: the multipole expansion of a plane circular loop has no
    # quadrupole term; the first correction to the dipole field (Jackson 1999,
    # eq. 5.56 with m = N I pi R^2, sec. 5.6) is relatively O((R / r)^2)
    # (Jackson 1999, sec. 5.5, the loop's expansion in Legendre polynomials).
    # Exact loop: siting.fields.loop (Simpson et al., NASA 2001) and magpylib's
    # Circle as an independent second reference.
    radius, ampere_turns = 0.05, 60.0
    center = np.array([1.0, 2.0, -0.5])
    axis = _unit(np.array([0.3, -0.4, 0.866]))
    moment = ampere_turns * np.pi * radius**2 * axis
    dirs = _unit(RNG.normal(size=(200, 3)))
    ratio = np.geomspace(1 / 8, 1 / 200, 8)  # R / r
    worst = []
    for q in ratio:
        pts = center + (radius / q) * dirs
        exact = exact_loop(pts, center, axis, radius, ampere_turns)
        dip = dipole_field(pts, center=center, moment=moment)
        worst.append(np.max(np.linalg.norm(dip - exact, axis=1) / np.linalg.norm(exact, axis=1)))
    worst = np.array(worst)
    slope = np.polyfit(np.log(ratio), np.log(worst), 1)[0]
    assert abs(slope - 2.0) < 0.05
    assert np.all(worst <= 3 * ratio**2)  # the axial coefficient is 3/2


def test_nan_at_centre_never_inf():
    center = np.array([0.1, 0.2, 0.3])
    pts = np.array([center, center + [1e-200, 0, 0], center + [1e-3, 0, 0]])
    b = dipole_field(pts, center=center, moment=[1.0, 2.0, 3.0])
    assert np.isnan(b[:2]).all()
    assert np.isfinite(b[2]).all()


def test_divergence_and_curl_vanish():
    # Reference: div B = 0, curl B = 0 outside the source (Jackson 1999,
    # sec. 5.3, eqs. 5.22-5.23, equation numbers from memory).  Central
    # differences, h = 1e-4 m at r >= 0.3 m: truncation ~ (h / r)^2 ~ 1e-7 of
    # the Jacobian's norm.
    center, moment = np.zeros(3), np.array([1.0, -2.0, 0.5])
    dirs = _unit(RNG.normal(size=(300, 3)))
    pts = dirs * RNG.uniform(0.3, 3.0, size=(300, 1))
    h = 1e-4
    jac = np.empty((len(pts), 3, 3))
    for j in range(3):
        step = np.zeros(3)
        step[j] = h
        plus = dipole_field(pts + step, center=center, moment=moment)
        minus = dipole_field(pts - step, center=center, moment=moment)
        jac[:, :, j] = (plus - minus) / (2 * h)
    scale = np.linalg.norm(jac, axis=(1, 2))
    div = np.trace(jac, axis1=1, axis2=2)
    curl = np.stack(
        [jac[:, 2, 1] - jac[:, 1, 2], jac[:, 0, 2] - jac[:, 2, 0], jac[:, 1, 0] - jac[:, 0, 1]],
        axis=1,
    )
    assert np.max(np.abs(div) / scale) < 1e-6
    assert np.max(np.linalg.norm(curl, axis=1) / scale) < 1e-6


def test_validation():
    with pytest.raises(ValueError, match="moment"):
        Dipole([0, 0, 0], [1.0, np.nan, 0.0])
    with pytest.raises(ValueError, match="center"):
        dipole_field([1, 1, 1], center=[0, 0], moment=[0, 0, 1])
    with pytest.raises(ValueError, match="points"):
        dipole_field(np.zeros((4, 2)), center=[0, 0, 0], moment=[0, 0, 1])


# --- symmetry properties (hypothesis) ----------------------------------------------

coords = st.floats(-5.0, 5.0, allow_nan=False)
vec3 = st.tuples(coords, coords, coords).map(np.array)
seeds = st.integers(0, 2**31 - 1)


def _case(seed):
    rng = np.random.default_rng(seed)
    center = rng.normal(size=3)
    pts = center + _unit(rng.normal(size=(40, 3))) * rng.uniform(0.05, 5.0, size=(40, 1))
    return center, pts


def _close(a, b, rtol=1e-12):
    assert np.allclose(a, b, rtol=rtol, atol=rtol * np.abs(b).max())


@settings(max_examples=50, deadline=None)
@given(seeds, vec3, vec3, st.floats(-1e3, 1e3, allow_nan=False))
def test_linear_in_moment(seed, m1, m2, c):
    # Reference: eq. 5.56 of Jackson (1999) is linear in m.
    center, pts = _case(seed)
    total = dipole_field(pts, center=center, moment=c * m1 + m2)
    parts = c * dipole_field(pts, center=center, moment=m1) + dipole_field(
        pts, center=center, moment=m2
    )
    assert np.allclose(total, parts, rtol=1e-12, atol=1e-12 * (np.abs(parts).max() + 1e-300))


@settings(max_examples=50, deadline=None)
@given(seeds, vec3, vec3.filter(lambda v: np.linalg.norm(v) > 1e-3))
def test_translation_and_rotation_covariance(seed, shift, moment):
    # Reference: B'(R x + t) = R B(x) for a proper rotation R of the source
    # (m -> R m); Jackson 1999, sec. 6.10.
    center, pts = _case(seed)
    rot = Rotation.random(random_state=seed).as_matrix()
    base = dipole_field(pts, center=center, moment=moment)
    moved = dipole_field(pts @ rot.T + shift, center=rot @ center + shift, moment=rot @ moment)
    _close(moved, base @ rot.T, rtol=1e-10)


@settings(max_examples=50, deadline=None)
@given(seeds, vec3.filter(lambda v: np.linalg.norm(v) > 1e-2), vec3)
def test_mirror_symmetry(seed, normal, moment):
    # Reference: m and B are pseudovectors: under a reflection M (det M = -1)
    # m -> -M m and B'(M x) = -M B(x) (Jackson 1999, sec. 6.10, Table 6.1).
    center, pts = _case(seed)
    n = normal / np.linalg.norm(normal)
    mirror = np.eye(3) - 2 * np.outer(n, n)
    base = dipole_field(pts, center=center, moment=moment)
    mirrored = dipole_field(pts @ mirror.T, center=mirror @ center, moment=-(mirror @ moment))
    if np.abs(base).max() == 0.0:
        assert np.abs(mirrored).max() == 0.0
    else:
        _close(mirrored, -(base @ mirror.T), rtol=1e-10)
