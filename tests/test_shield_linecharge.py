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
