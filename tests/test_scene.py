"""Scene: superposition, chunking and bounded memory."""

from __future__ import annotations

import tracemalloc
from dataclasses import dataclass

import numpy as np
import pytest
from scipy.constants import mu_0

from siting.fields.scene import Scene, Uniform


@dataclass(frozen=True)
class Wire:
    """Infinite straight wire along z through (x0, y0): B = mu0 I / (2 pi r) phi_hat
    (Ampere's law; Jackson, Classical Electrodynamics 3rd ed. 1999, eq. 5.10)."""

    x0: float
    y0: float
    current: float

    def field(self, points):
        dx = points[:, 0] - self.x0
        dy = points[:, 1] - self.y0
        r2 = dx * dx + dy * dy
        k = mu_0 * self.current / (2 * np.pi * r2)
        return np.stack([-k * dy, k * dx, np.zeros_like(dx)], axis=1)


def test_superposition_of_opposed_wires_and_ambient():
    ambient = Uniform([0.0, 20e-6, -45e-6])
    scene = Scene((Wire(-0.5, 0, 100.0), Wire(0.5, 0, -100.0), ambient))
    pts = np.array([[0.0, 0.0, 0.0], [0.0, 3.0, 1.0]])
    b = scene.field(pts)
    # midway between opposite currents the two wires add: B_y = +2 mu0 I / (2 pi d/2)
    # (Jackson eq. 5.10 for each wire), plus the ambient field
    assert b[0, 1] == pytest.approx(2 * mu_0 * 100 / (2 * np.pi * 0.5) + 20e-6, rel=1e-12)
    assert b[0, 2] == pytest.approx(-45e-6, rel=1e-12)
    assert scene.magnitude(pts) == pytest.approx(np.linalg.norm(b, axis=1), rel=1e-14)


def test_chunking_does_not_change_the_result():
    rng = np.random.default_rng(1)
    pts = rng.uniform(-5, 5, size=(10_001, 3))
    sources = (Wire(0.1, 0.2, 50.0), Uniform([1e-6, 0, 0]))
    whole = Scene(sources, chunk=1 << 20).field(pts)
    small = Scene(sources, chunk=97).field(pts)
    np.testing.assert_array_equal(whole, small)
    np.testing.assert_array_equal(
        Scene(sources, chunk=97).magnitude(pts), np.linalg.norm(whole, axis=1)
    )


def test_magnitude_memory_is_bounded_by_the_chunk():
    n = 1_000_000
    pts = np.zeros((n, 3))
    pts[:, 0] = np.linspace(1, 10, n)
    scene = Scene((Wire(0, 0, 10.0),), chunk=1 << 14)
    tracemalloc.start()
    mag = scene.magnitude(pts)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert mag.shape == (n,)
    # the (n,) result is 8 MB; everything else is a few (chunk, 3) temporaries
    assert peak < mag.nbytes + 40 * (1 << 14) * 3 * 8


def test_scene_rejects_non_sources():
    with pytest.raises(TypeError, match="sources\\[1\\]"):
        Scene((Uniform([0, 0, 0]), object()))
    with pytest.raises(ValueError, match="b must be finite"):
        Uniform([0, np.nan, 0])
