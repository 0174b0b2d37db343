"""Coil sets: superposition, batching and the Helmholtz pair."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest
from scipy.constants import mu_0

import siting.fields.coilset as coilset_module
from siting.fields.coilset import CoilSet
from siting.fields.loop import Loop
from siting.fields.scene import Scene
from siting.fields.solenoid import Solenoid
from siting.fields.thick_solenoid import ThickSolenoid

RNG = np.random.default_rng(99)


def helmholtz(radius, current, turns, separation=None, center=(0.0, 0.0, 0.0), axis=(0, 0, 1)):
    sep = radius if separation is None else separation
    w = np.asarray(axis, float) / np.linalg.norm(axis)
    c = np.asarray(center, float)
    return CoilSet(
        (
            Loop(c - 0.5 * sep * w, w, radius, current, turns),
            Loop(c + 0.5 * sep * w, w, radius, current, turns),
        )
    )


def test_helmholtz_centre_field():
    # B0 = (4/5)^(3/2) mu0 N I / R at the centre of a Helmholtz pair (separation = R)
    # (e.g. Jackson, Classical Electrodynamics, 3rd ed., 1999, problem 5.2; Griffiths,
    # Introduction to Electrodynamics, 4th ed., 2013, problem 5.46; from memory of the
    # problem numbers).
    radius, current, turns = 0.35, 2.5, 120
    pair = helmholtz(radius, current, turns, center=(0.3, -0.2, 1.0), axis=(1, 1, 0))
    b = pair.field([0.3, -0.2, 1.0])[0]
    ref = (4 / 5) ** 1.5 * mu_0 * turns * current / radius
    w = np.array([1.0, 1.0, 0.0]) / np.sqrt(2)
    assert np.linalg.norm(b - ref * w) <= 1e-14 * ref


def test_helmholtz_second_derivative_vanishes():
    # Helmholtz condition: d^2 B_z / dz^2 = 0 at the centre when the separation equals
    # the radius (same sources).  First with mpmath on the exact on-axis sum of two
    # loop fields mu0 N I R^2 / (2 (R^2 + z^2)^(3/2)) (Jackson 1999, eq. 5.40) ...
    radius, current, turns = 0.5, 1.0, 10
    with mp.workdps(40):
        r = mp.mpf(radius)

        def on_axis(z, sep):
            def one(u):
                return mp.mpf(mu_0) * turns * current * r**2 / (2 * (r**2 + u**2) ** 1.5)

            return one(z - sep / 2) + one(z + sep / 2)

        assert abs(mp.diff(lambda z: on_axis(z, r), 0, 2)) < mp.mpf(10) ** -25
        d2_generic = float(mp.diff(lambda z: on_axis(z, 1.3 * r), 0, 2))
    # ... then on the coil set's own field by a central second difference, whose error
    # for the Helmholtz pair is the O(h^2) fourth-order term.
    h = 1e-2 * radius

    def d2(pair):
        pts = np.array([[0.0, 0.0, -h], [0.0, 0.0, 0.0], [0.0, 0.0, h]])
        bz = pair.field(pts)[:, 2]
        return (bz[0] - 2 * bz[1] + bz[2]) / h**2

    generic = d2(helmholtz(radius, current, turns, separation=1.3 * radius))
    assert generic == pytest.approx(d2_generic, rel=1e-3)
    assert abs(d2(helmholtz(radius, current, turns))) <= 1e-3 * abs(generic)


def test_sum_of_members_mixed_axes():
    # superposition (Jackson 1999, sec. 5.3): the set's field is the sum of its members'
    coils = []
    for _ in range(5):
        coils.append(
            Loop(
                RNG.uniform(-1, 1, 3),
                RNG.normal(size=3),
                RNG.uniform(0.1, 0.8),
                RNG.uniform(-10, 10),
                turns=int(RNG.integers(1, 50)),
            )
        )
    for _ in range(3):
        coils.append(
            Solenoid(
                RNG.uniform(-1, 1, 3),
                RNG.normal(size=3),
                RNG.uniform(0.1, 0.8),
                RNG.uniform(0.1, 1.0),
                200,
                RNG.uniform(-10, 10),
            )
        )
    for nodes in (6, 8, 8):
        a1 = RNG.uniform(0.1, 0.5)
        coils.append(
            ThickSolenoid(
                RNG.uniform(-1, 1, 3),
                RNG.normal(size=3),
                a1,
                a1 + 0.1,
                0.5,
                300,
                RNG.uniform(-10, 10),
                radial_nodes=nodes,
            )
        )
    rng_order = RNG.permutation(len(coils))
    cs = CoilSet(tuple(coils[i] for i in rng_order))
    pts = RNG.uniform(-3, 3, (400, 3))
    total = cs.field(pts)
    parts = sum(c.field(pts) for c in coils)
    ok = np.all(np.isfinite(parts), axis=1)
    assert np.allclose(total[ok], parts[ok], rtol=1e-13, atol=1e-13 * np.abs(parts[ok]).max())
    # and a Scene of the members gives the same
    assert np.allclose(
        Scene(tuple(coils)).field(pts)[ok],
        total[ok],
        rtol=1e-13,
        atol=1e-13 * np.abs(parts[ok]).max(),
    )


def test_loops_batched_in_one_call(monkeypatch):
    calls = []
    original = coilset_module.loops_field_checked

    def counting(*args, **kwargs):
        calls.append(len(args[1]))
        return original(*args, **kwargs)

    monkeypatch.setattr(coilset_module, "loops_field_checked", counting)
    cs = CoilSet(tuple(Loop([0, 0, 0.1 * i], [0, 0, 1], 0.2 + 0.01 * i, 1.0) for i in range(20)))
    cs.field(RNG.uniform(-1, 1, (10, 3)))
    assert calls == [20]


def test_far_field_of_set_is_its_dipole():
    # Far away every coil is a dipole (Jackson 1999, eq. 5.56), so the set's field tends
    # to that of its total moment; relative deviation O(size / r).
    cs = CoilSet(
        (
            Loop([0, 0, 0.1], [0, 0, 1], 0.3, 5.0, turns=10),
            Solenoid([0, 0, -0.1], [0, 0, 1], 0.2, 0.3, 100, 1.0),
            ThickSolenoid([0, 0, 0], [0, 0, 1], 0.4, 0.5, 0.6, 50, -2.0),
        )
    )
    r = 500.0
    dirs = RNG.normal(size=(50, 3))
    pts = r * dirs / np.linalg.norm(dirs, axis=1)[:, None]
    m = cs.moment
    ref = mu_0 / (4 * np.pi) * (3 * (pts @ m)[:, None] * pts / r**5 - m / r**3)
    err = np.linalg.norm(cs.field(pts) - ref, axis=1) / np.linalg.norm(ref, axis=1)
    assert err.max() <= 5 * 0.5 / r


def test_empty_and_validation():
    assert np.array_equal(CoilSet(()).field(np.ones((4, 3))), np.zeros((4, 3)))
    with pytest.raises(ValueError, match=r"coils\[1\]"):
        CoilSet((Loop([0, 0, 0], [0, 0, 1], 1.0, 1.0), "not a coil"))
