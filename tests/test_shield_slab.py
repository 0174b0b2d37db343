"""Infinite-slab estimate: limits, images, position independence, and the plate solver."""

import numpy as np

from siting.fields.dipole import Dipole
from siting.fields.scene import Scene
from siting.shielding.material import ConstantPermeability, default_steel
from siting.shielding.plates import rectangle
from siting.shielding.slab import Slab, reflection, slab_field, slab_saturation, transmission
from siting.shielding.thinsheet import Sheet, solve_sheets

SRC = Dipole([0, 0, 0], [0.3, -0.2, 1.0])


def test_transmission_limits():
    k = np.geomspace(1e-3, 1e3, 50)
    np.testing.assert_allclose(transmission(k, 1.0, 0.01), 1.0, rtol=1e-15)
    np.testing.assert_allclose(transmission(k, 500.0, 0.0), 1.0, rtol=1e-15)
    np.testing.assert_allclose(reflection(k, 1.0, 0.01), 0.0, atol=1e-15)
    # thin high-mu sheet: T -> 1 / (1 + mu k t / 2) (first order in k t; Mager 1970, planar
    # shield; derived again in the module docstring)
    mu, t = 1000.0, 1e-4
    kk = np.array([1.0, 10.0])
    np.testing.assert_allclose(
        transmission(kk, mu, t), 1 / (1 + (mu - 1) ** 2 / mu * kk * t / 2), rtol=2e-3
    )


def test_mu_one_returns_the_incident_field():
    obs = np.array([[0.05, 0.02, 0.3], [-0.1, 0.0, 0.25], [0.0, 0.0, -0.05]])
    got = slab_field(SRC, obs, Slab([0, 0, 0.1], [0, 0, 1], 0.01, 1.0), spacing=0.015)
    np.testing.assert_allclose(got, SRC.field(obs), rtol=2e-3, atol=1e-3 * np.abs(got).max())


def test_thick_slab_reflects_like_the_half_space_image():
    # Permeable half-space: image dipole kappa (-mx, -my, mz) at the mirror point,
    # kappa = (mu - 1)/(mu + 1) -- magnetic analogue of Jackson 3rd ed. eq. 4.45
    mu, d = 50.0, 0.2
    src = Dipole([0, 0, -d], [0.3, -0.2, 1.0])
    kappa = (mu - 1) / (mu + 1)
    image = Dipole([0, 0, d], kappa * np.array([-0.3, 0.2, 1.0]))
    obs = np.array([[0.05, 0.0, -0.1], [0.0, 0.1, -0.15], [-0.1, 0.05, -0.3]])
    got = slab_field(src, obs, Slab([0, 0, 0], [0, 0, 1], 50.0, mu), spacing=0.02)
    ref = src.field(obs) + image.field(obs)
    np.testing.assert_allclose(got, ref, rtol=0, atol=2e-3 * np.abs(ref).max())


def test_transmitted_field_matches_the_image_series():
    # T(k) = 4 mu/(mu+1)^2 sum_n kappa^(2n) e^(-2 n k t): each term is the incident field
    # shifted away by 2 n t (the image series of a permeable plate; from memory: W. R. Smythe,
    # Static and Dynamic Electricity, 3rd ed., 1968, dielectric plate)
    mu, t = 20.0, 0.02
    kappa = (mu - 1) / (mu + 1)
    obs = np.array([[0.0, 0.0, 0.25], [0.05, -0.03, 0.3]])
    got = slab_field(SRC, obs, Slab([0, 0, 0.1], [0, 0, 1], t, mu), spacing=0.01)
    n = np.arange(2000)
    ref = sum(kappa ** (2 * j) * SRC.field(obs + [0, 0, 2 * j * t]) for j in n)
    ref *= 4 * mu / (mu + 1) ** 2
    np.testing.assert_allclose(got, ref, rtol=0, atol=3e-3 * np.abs(ref).max())


def test_transmitted_field_does_not_depend_on_slab_position():
    obs = np.array([[0.0, 0.0, 0.3], [0.04, 0.02, 0.3]])
    a = slab_field(SRC, obs, Slab([0, 0, 0.08], [0, 0, 1], 1e-3, 800.0), spacing=0.008)
    b = slab_field(SRC, obs, Slab([0, 0, 0.16], [0, 0, 1], 1e-3, 800.0), spacing=0.008)
    np.testing.assert_allclose(a, b, rtol=0, atol=2e-3 * np.abs(a).max())


def test_large_plate_matches_infinite_slab_on_centre_line():
    # square plate of side 20 x its distance to a dipole vs the exact slab transmission
    d, t, mu, side = 0.1, 5e-4, 1000.0, 2.0
    src = Dipole([0, 0, 0], [0, 0, 1.0])
    mesh = rectangle(
        [-side / 2, -side / 2, d],
        [1, 0, 0],
        [0, 1, 0],
        side,
        side,
        thickness=t,
        focus=[[0, 0, 0]],
        alpha=0.18,
    )
    assert mesh.n_faces <= 1500
    sol = solve_sheets([Sheet(mesh, t, ConstantPermeability(mu))], src)
    obs = np.array([[0, 0, 0.25], [0, 0, 0.3], [0, 0, 0.35]])
    plate = np.linalg.norm(Scene([src, sol]).field(obs), axis=1)
    slab = np.linalg.norm(
        slab_field(src, obs, Slab([0, 0, d - t / 2], [0, 0, 1], t, mu), spacing=d / 10), axis=1
    )
    assert np.all(np.linalg.norm(src.field(obs), axis=1) / slab > 2.5)  # real shielding
    # measured: +0.1, +1.5, +2.1 % (1156 panels); -3 % at 1 d (0.1 m, near-field of the
    # discrete edge charges) and +3 % at 4 d (finite plate)
    np.testing.assert_allclose(plate, slab, rtol=0.03)


def test_saturation_check_is_consistent_with_the_curve():
    steel = default_steel()
    slab = Slab([0, 0, 0.1], [0, 0, 1], 2e-3, 1000.0)
    weak = slab_saturation(Dipole([0, 0, 0], [0, 0, 10.0]), slab, steel, spacing=0.02)
    strong = slab_saturation(Dipole([0, 0, 0], [0, 0, 1e5]), slab, steel, spacing=0.02)
    for res in (weak, strong):
        np.testing.assert_allclose(steel.mu_r(res["h_peak"]), res["mu_r"], rtol=1e-4)
    assert not weak["saturated"] and strong["saturated"]
    assert strong["mu_r"] < weak["mu_r"]
