"""Plate meshes, magnet field shift / homogeneity and stock-thickness sizing."""

import numpy as np
import shapely

from siting.fields.dipole import Dipole
from siting.fields.scene import Uniform
from siting.shielding.effects import magnet_effect
from siting.shielding.material import STEEL_DENSITY, ConstantPermeability
from siting.shielding.plates import floor_plate, focus_points, wall_plate
from siting.shielding.sizing import size_plates
from siting.shielding.slab import Slab, slab_field


def test_floor_plate_covers_the_outline_exactly():
    outline = np.array([[0, 0], [3, 0], [3, 1], [1.2, 1], [1.2, 2.5], [0, 2.5]])  # L-shape
    mesh = floor_plate(outline, 0.4, thickness=5e-3, focus=[[0.5, 0.5, 0.6]])
    np.testing.assert_allclose(mesh.area, shapely.Polygon(outline).area, rtol=1e-9)
    np.testing.assert_allclose(mesh.centroids[:, 2], 0.4)
    # graded: panels near the focus are smaller than far ones
    sizes = mesh.panel_size()
    dist = np.linalg.norm(mesh.centroids[:, :2] - [0.5, 0.5], axis=1)
    assert sizes[dist < 0.2].mean() < 0.5 * sizes[(dist > 1.5) & (dist < 2.0)].mean()


def test_wall_plate_geometry_and_focus():
    mesh = wall_plate([0, 0], [4, 3], 0.0, 2.5, thickness=3e-3, focus=[[2, 0, 1]])
    np.testing.assert_allclose(mesh.area, 5.0 * 2.5, rtol=1e-12)
    np.testing.assert_allclose(np.abs(mesh.normals @ [3, -4, 0]) / 5, 1, atol=1e-12)
    pts = focus_points(Dipole([1, 2, 3], [0, 0, 1]))
    np.testing.assert_allclose(pts, [[1, 2, 3]])


def test_magnet_effect_units():
    eff = magnet_effect(Uniform([0, 0, 3e-6]), [0, 0, 0], 1.5)
    assert np.isclose(eff.shift_ut, 3.0) and np.isclose(eff.shift_ppm, 2.0)
    assert eff.peak_to_peak_ppm < 1e-9
    # a linear field B_z = g z (curl-free with B_x = -g x / 2, B_y = -g y / 2) varies by g D
    # over a sphere of diameter D

    class Gradient:
        def field(self, p):
            p = np.atleast_2d(p)
            return 1e-6 * np.column_stack([-p[:, 0] / 2, -p[:, 1] / 2, p[:, 2]])

    eff = magnet_effect(Gradient(), [0, 0, 0], 1.0, diameter=0.5)
    np.testing.assert_allclose(eff.peak_to_peak_ppm, 0.5, rtol=1e-2)


def test_sizing_picks_the_first_stock_that_meets_the_limit():
    d = 0.15
    src = Dipole([0, 0, 0], [0, 0, 1.0])
    mesh = wall_plate([-1.5, d], [1.5, d], -1.5, 1.5, thickness=1e-3, focus=[[0, 0, 0]], alpha=0.3)
    mat = ConstantPermeability(1000.0)
    target = np.array([[0, 0.4, 0.0]])
    stock = (0.5e-3, 1e-3, 2e-3, 4e-3)
    # limit: halfway between the infinite-slab estimates for 1 mm and 2 mm
    slab = [
        np.linalg.norm(
            slab_field(src, target, Slab([0, d - t / 2, 0], [0, 1, 0], t, 1000.0), spacing=0.02)
        )
        for t in (1e-3, 2e-3)
    ]
    limit = 0.5 * (slab[0] + slab[1])
    res = size_plates([mesh], mat, src, target, limit, stock=stock, stop_at_first=False)
    b = [c.b_targets[0] for c in res.candidates]
    assert np.all(np.diff(b) < 0)  # thicker steel shields more
    assert res.chosen is not None and res.chosen.thickness == 2e-3
    for c in res.candidates:
        np.testing.assert_allclose(c.masses[0], STEEL_DENSITY * 9.0 * c.thickness)
        assert c.within_steel_limit
        # the wall is attracted toward the dipole (-y)
        assert c.forces[0, 1] < 0
