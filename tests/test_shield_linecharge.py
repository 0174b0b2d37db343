"""Field of charged segments and the thin-sheet edge-charge representation."""

import magpylib as magpy
import numpy as np
from scipy.constants import mu_0
from scipy.integrate import quad

from siting.shielding.linecharge import line_charge_field
from siting.shielding.material import ConstantPermeability
from siting.shielding.mesh import SheetMesh
from siting.shielding.operator import layout, row_permutation
from siting.shielding.thinsheet import Sheet


def test_segment_field_matches_coulomb_quadrature():
    # Coulomb's law integrated numerically along the segment (D. J. Griffiths,
    # Introduction to Electrodynamics, 4th ed., 2017, eq. 2.8), scipy quad
    rng = np.random.default_rng(1)
    a = np.array([0.1, -0.2, 0.3])
    b = np.array([0.7, 0.4, -0.1])
    lam = 2.5
    pts = rng.normal(size=(20, 3))
    got = line_charge_field(pts, a[None], b[None], [lam])
    length = np.linalg.norm(b - a)
    for p, g in zip(pts, got, strict=True):
        ref = [
            quad(
                lambda s, j=j, p=p: (
                    (p - a - s * (b - a))[j] / np.linalg.norm(p - a - s * (b - a)) ** 3
                ),
                0,
                1,
                epsabs=0,
                epsrel=1e-12,
            )[0]
            for j in range(3)
        ]
        np.testing.assert_allclose(
            g, lam * length / (4 * np.pi) * np.array(ref), rtol=1e-9, atol=1e-12
        )


def test_on_segment_is_nan_and_on_extension_is_finite():
    a, b = np.zeros((1, 3)), np.array([[1.0, 0, 0]])
    h = line_charge_field([[0.5, 0, 0], [2.0, 0, 0]], a, b, [1.0])
    assert np.all(np.isnan(h[0]))
    # on the extension: H = lambda/(4 pi) (1/(x-1) - 1/x) along x (Griffiths problem 2.25 limit)
    np.testing.assert_allclose(h[1], [(1 / 1.0 - 1 / 2.0) / (4 * np.pi), 0, 0], rtol=1e-13)


def test_thin_panel_edge_charges_match_magpylib_cuboid():
    # A uniformly magnetised thin plate is exactly its side-face charges; thin limit vs the
    # magpylib Cuboid (uniform magnetisation, analytic field; magpylib >= 5, M in A/m)
    t = 1e-3
    m_vec = np.array([1e5, -4e4, 0.0])
    verts = np.array([[-0.1, -0.15, 0], [0.1, -0.15, 0], [0.1, 0.15, 0], [-0.1, 0.15, 0]])
    sheet = Sheet(SheetMesh(verts, [[0, 1, 2, 3]]), t, ConstantPermeability(10.0))
    lay = layout([sheet])
    x = np.array([m_vec @ lay.t1[0], m_vec @ lay.t2[0]])
    lam = lay.charge_map @ x
    rng = np.random.default_rng(2)
    pts = rng.uniform(-0.4, 0.4, size=(50, 3))
    pts[:, 2] = np.where(pts[:, 2] >= 0, 0.05 + pts[:, 2], -0.05 + pts[:, 2])
    ours = mu_0 * line_charge_field(pts, lay.starts, lay.ends, lam)
    cube = magpy.magnet.Cuboid(magnetization=m_vec, dimension=(0.2, 0.3, t))
    ref = cube.getB(pts)
    scale = np.linalg.norm(ref, axis=1).max()
    assert np.abs(ours - ref).max() < 2e-3 * scale


def test_lu_row_permutation_reconstructs_the_matrix():
    # LAPACK getrf convention (A = P L U) as used by scipy.linalg.lu_factor
    from scipy.linalg import lu_factor
    from scipy.linalg.blas import dtrmv

    rng = np.random.default_rng(3)
    a = np.asfortranarray(rng.normal(size=(40, 40)))
    lu, piv = lu_factor(a.copy(order="F"))
    v = rng.normal(size=40)
    y = dtrmv(lu, dtrmv(lu, v, lower=0, diag=0), lower=1, diag=1)
    np.testing.assert_allclose(y[row_permutation(piv)], a @ v, rtol=1e-12, atol=1e-12)


def test_multi_point_operator_is_the_weighted_mean_of_single_points():
    # linearity of the field in the evaluation functional (common practice)
    from siting.shielding.linecharge import tangential_operator
    from siting.shielding.mesh import icosphere

    sheet = Sheet(icosphere([0, 0, 0], 1.0, 2), 0.01, ConstantPermeability(100.0))
    lay = layout([sheet])
    n = len(lay.centroids)
    args = (lay.t1, lay.t2, lay.starts, lay.ends, lay.edge_ptr, lay.inc_col, lay.inc_coef, 2 * n)
    rng = np.random.default_rng(4)
    w = rng.uniform(0.1, 1.0, size=(n, 3))
    w[:, 2] = 0.0  # a zero weight is skipped
    w /= w.sum(axis=1, keepdims=True)
    k = tangential_operator(lay.samples, *args, weights=w)
    ref = sum(w[:, j].repeat(2)[:, None] * tangential_operator(lay.samples[:, j], *args)
              for j in range(2))
    np.testing.assert_allclose(k, ref, rtol=1e-12, atol=1e-14)


def _l1_rayleigh_error(freq, points):
    # Rayleigh quotient of K on the exact l = 1 mode M = grad_s z of a unit sphere, against the
    # eigenvalue -2 t / (3 R) of the thin-sheet operator (single layer R / (2l + 1) times
    # -t l (l + 1) / R^2; J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999, eq. 3.70)
    from siting.shielding.linecharge import tangential_operator
    from siting.shielding.mesh import icosphere

    t = 1.0
    lay = layout([Sheet(icosphere([0, 0, 0], 1.0, freq), t, ConstantPermeability(100.0))])
    n = len(lay.centroids)
    u = lay.centroids / np.linalg.norm(lay.centroids, axis=1)[:, None]
    m = np.array([0.0, 0.0, 1.0]) - u[:, 2:] * u
    x = np.column_stack([np.einsum("ij,ij->i", m, lay.t1),
                         np.einsum("ij,ij->i", m, lay.t2)]).reshape(-1)
    targets, weights = (lay.samples, lay.sample_weights) if points else (lay.centroids, None)
    k = tangential_operator(targets, lay.t1, lay.t2, lay.starts, lay.ends, lay.edge_ptr,
                            lay.inc_col, lay.inc_coef, 2 * n, weights=weights)
    return (x @ k @ x) / (x @ x) / (-2 * t / 3) - 1


def test_triangle_collocation_is_second_order_on_the_uniform_field_mode():
    # measured: centroid only -3.4 % (320 panels), -2.0 % (1280): first order, the cause of the
    # slow shell convergence; three-point rule +0.74 %, +0.16 %: rate 2.2
    c4, c8 = _l1_rayleigh_error(4, False), _l1_rayleigh_error(8, False)
    p4, p8 = _l1_rayleigh_error(4, True), _l1_rayleigh_error(8, True)
    assert c8 < -0.015 and c4 / c8 < 2.0
    assert abs(p8) < 3e-3
    assert np.log(abs(p4 / p8)) / np.log(2.0) > 1.8
