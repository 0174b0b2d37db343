"""Fringe field of a shielded magnet, fitted to its published isogauss extents.

A supplier publishes, for a few levels, how far the isogauss line reaches from
the isocentre along the bore axis ("axial") and across it ("radial").  The
model here is an *equivalent winding*: a few coaxial circular loops in
mid-plane-symmetric pairs whose radii, offsets and currents are fitted to those
extents (see :mod:`siting.fields.fringe_fit`).  Outside the sphere enclosing
the loops its field is exactly an axisymmetric scalar-potential multipole
series with odd orders only,
``Phi = sum_n A_n P_n(cos theta) / r^(n+1)``, ``B = -mu0 grad Phi``
(J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 3.3 and 5.9);
:meth:`FringeModel.multipole_coefficients` returns those A_n.

Why a winding rather than a direct fit of the A_n: with only the two measured
rays (axis and mid-plane) a direct multipole fit is ill-conditioned; in trials
on exact loop magnets, orders 1-7 left up to 6 % error in contour distance off
the axes and orders 1-9 either 1 % or 19 % depending on the magnet, with local
minima, while two fitted loop pairs stayed within 0.3 % (development trials;
the winding's own accuracy is what tests/test_fringe.py checks).

Envelope rule: if not given, the envelope is the sphere enclosing every fitted
loop, enlarged by ``ENVELOPE_MARGIN``; loops are fitted within
``LOOP_FRACTION`` (0.9) of the smallest given extent, so the derived envelope
(at most 0.945 of it) always lies inside the smallest extent.  A given envelope
must be smaller than the smallest extent; the loops are then kept within 0.9 of
it.  The field is NaN inside the envelope, where the model says nothing.

The central field, if given, fixes only the sign of the model: the fitted
winding's field at the isocentre is made parallel to ``central_field * axis``.
Its magnitude is not fitted (the equivalent winding reproduces the exterior
field, not the bore field; adding it as a datum cost accuracy outside).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import lpmv

from siting.errors import FitError
from siting.fields._frame import as_points, as_vector, finite, frame, unit_axis
from siting.fields.fringe_fit import (
    MU0,
    fit_winding,
    multipole_field,
    pair_field_rz,
    parse_extents,
)
from siting.fields.loop import loops_field_checked
from siting.site.model import Extent

__all__ = ["ENVELOPE_MARGIN", "ExtentResidual", "FringeModel", "multipole_field"]

#: Derived envelope = this factor x the radius of the sphere enclosing the loops.
ENVELOPE_MARGIN = 1.05
#: Radial grid points per direction when scanning for the outermost crossing.
_SCAN_POINTS = 256
_BISECTIONS = 52


@dataclass(frozen=True)
class ExtentResidual:
    """How well the model honours one given extent.

    ``distance_error`` is (model distance / given distance - 1) along the ray;
    ``field_error`` is (model |B| at the given point / level - 1).
    """

    level: float  # [T]
    direction: str  # "axial" or "radial"
    distance: float  # given [m]
    model_distance: float  # [m]
    distance_error: float
    field_error: float


@dataclass(frozen=True, eq=False)
class FringeModel:
    """Mid-plane-symmetric equivalent winding of a shielded magnet.

    Parameters
    ----------
    center : array_like, shape (3,) [m]
        Isocentre.
    axis : array_like, shape (3,)
        Bore axis (normalised here); any direction.
    radius, offset, current : array_like, shape (k,)
        Loop pairs: radius [m], offset along the axis [m] (loops at +/- offset),
        ampere-turns of each loop [A].
    envelope : float [m]
        Radius of the sphere inside which the field is NaN; must enclose the loops.
    extents : tuple of Extent
        The data the model was fitted to (may be empty).
    central_field : float or None [T]
        As given to :meth:`fit`.

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 3.3, 5.5, 5.9.
    """

    center: np.ndarray
    axis: np.ndarray
    radius: np.ndarray
    offset: np.ndarray
    current: np.ndarray
    envelope: float
    extents: tuple = ()
    central_field: float | None = None

    def __post_init__(self):
        object.__setattr__(self, "center", as_vector(self.center, "center"))
        object.__setattr__(self, "axis", unit_axis(self.axis, "axis"))
        arrays = {}
        for name in ("radius", "offset", "current"):
            arr = np.atleast_1d(np.asarray(getattr(self, name), dtype=np.float64))
            if arr.ndim != 1 or not np.all(np.isfinite(arr)):
                raise ValueError(f"{name} must be a finite 1-D array; got {arr!r}")
            arrays[name] = arr
        if len({len(v) for v in arrays.values()}) != 1:
            raise ValueError("radius, offset and current must have the same length")
        if np.any(arrays["radius"] <= 0.0):
            raise ValueError(f"radius must be > 0; got {arrays['radius'].tolist()}")
        for name, arr in arrays.items():
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)
        env = finite(self.envelope, "envelope")
        reach = float(np.max(np.hypot(arrays["radius"], arrays["offset"])))
        if env <= reach:
            raise ValueError(
                f"envelope must enclose the loops (> {reach!r} m); got {self.envelope!r}"
            )
        object.__setattr__(self, "envelope", env)
        object.__setattr__(self, "extents", tuple(self.extents))

    # ------------------------------------------------------------------ fit
    @classmethod
    def fit(
        cls,
        extents,
        *,
        center,
        axis,
        central_field: float | None = None,
        envelope: float | None = None,
        pairs: int | None = None,
        tolerance: float | None = 0.05,
    ) -> FringeModel:
        """Fit the equivalent winding to published isogauss extents.

        Parameters
        ----------
        extents : sequence of Extent or (level [T], axial [m], radial [m])
            Published isogauss extents, in any order.
        center : array_like, shape (3,) [m]
            Isocentre.
        axis : array_like, shape (3,)
            Bore axis, any direction (normalised here).
        central_field : float, optional [T]
            Sets the sign of the model only (see the module docstring).
        envelope : float, optional [m]
            Radius of the sphere enclosing the cryostat; else derived.
        pairs : int, optional
            Loop pairs to fit (3 unknowns each); default 2 when there are at
            least 3 levels, else 1.
        tolerance : float or None
            Largest relative distance residual accepted at any given extent;
            a worse fit raises FitError rather than return a misleading
            model.  None accepts any fit.

        Returns
        -------
        FringeModel

        Raises
        ------
        FitError
            Bad extents (non-positive, non-finite, duplicate levels, not
            shrinking as the level rises), fewer data than unknowns, an
            envelope not smaller than the smallest extent, or a fit that misses
            an extent by more than ``tolerance``.
        """
        level, axial, radial = parse_extents(extents)
        smallest = float(min(axial.min(), radial.min()))
        if envelope is not None:
            try:
                env = float(envelope)
            except (TypeError, ValueError):
                env = float("nan")
            if not np.isfinite(env) or env <= 0.0:
                raise FitError(f"envelope must be finite and > 0; got {envelope!r}")
            if env >= smallest:
                raise FitError(
                    f"envelope must be smaller than the smallest extent ({smallest!r} m); "
                    f"got {env!r} m"
                )
        if central_field is not None:
            central_field = finite(central_field, "central_field")
            if central_field == 0.0:
                raise FitError("central_field must be non-zero (its sign orients the model)")
        if pairs is None:
            pairs = 2 if len(level) >= 3 else 1
        if int(pairs) != pairs or pairs < 1:
            raise FitError(f"pairs must be a positive integer; got {pairs!r}")
        r_allow = env if envelope is not None else smallest
        a, z0, cur = fit_winding(level, axial, radial, pairs=int(pairs), r_allow=r_allow)
        _, b_iso = pair_field_rz(a, z0, cur, np.zeros(1), np.zeros(1))
        want = 1.0 if central_field is None else np.sign(central_field)
        if np.sign(b_iso[0]) != want:
            cur = -cur
        if envelope is None:
            env = ENVELOPE_MARGIN * float(np.max(np.hypot(a, z0)))
        data = tuple(
            Extent(float(lv), float(ax), float(rd))
            for lv, ax, rd in zip(level, axial, radial, strict=True)
        )
        model = cls(center, axis, a, z0, cur, env, data, central_field)
        if tolerance is not None:
            worst = max(
                model.residuals,
                key=lambda r: abs(r.distance_error) if np.isfinite(r.distance_error) else np.inf,
            )
            miss = abs(worst.distance_error)
            if not miss <= tolerance:
                raise FitError(
                    f"{pairs} loop pair(s) cannot honour the extents within tolerance="
                    f"{tolerance!r}: the {worst.direction} extent at {worst.level!r} T is "
                    f"{worst.distance!r} m but the fit gives {worst.model_distance!r} m; give "
                    f"more levels (3 or more allow 2 pairs) or check the data"
                )
        return model

    # ---------------------------------------------------------------- field
    def _local(self, pts: np.ndarray):
        """Frame rotation and cylindrical coordinates (rho, z) of global points."""
        rot = frame(self.axis)
        loc = (pts - self.center) @ rot.T
        return rot, loc, np.hypot(loc[:, 0], loc[:, 1]), loc[:, 2]

    def field(self, points) -> np.ndarray:
        """B at ``points`` (n, 3) [m] -> (n, 3) [T]; NaN inside the envelope.

        The fitted loops are evaluated with the exact loop kernel
        :func:`siting.fields.loop.loops_field`.

        References
        ----------
        W. R. Smythe, *Static and Dynamic Electricity*, 3rd ed., 1968, sec. 7.10.
        """
        pts = as_points(points)
        k = len(self.radius)
        offsets = np.concatenate([self.offset, -self.offset])
        centers = self.center[None, :] + offsets[:, None] * self.axis[None, :]
        axes = np.tile(self.axis, (2 * k, 1))
        out = loops_field_checked(
            pts,
            centers,
            axes,
            np.concatenate([self.radius, self.radius]),
            np.concatenate([self.current, self.current]),
        )
        rel = pts - self.center
        out[np.einsum("ij,ij->i", rel, rel) < self.envelope**2] = np.nan
        return out

    def magnitude(self, points) -> np.ndarray:
        """|B| at ``points`` (n, 3) [m] -> (n,) [T]; NaN inside the envelope."""
        b = self.field(points)
        return np.sqrt(np.einsum("ij,ij->i", b, b))

    def _magnitude_polar(self, r: np.ndarray, angle: np.ndarray) -> np.ndarray:
        b_rho, b_z = pair_field_rz(
            self.radius, self.offset, self.current, r * np.abs(np.sin(angle)), r * np.cos(angle)
        )
        return np.hypot(b_rho, b_z)

    # ------------------------------------------------------------- contours
    def contour_distance(self, level: float, angle_rad) -> np.ndarray:
        """Distance from the isocentre at which |B| falls through ``level``.

        Along each direction at ``angle_rad`` from the bore axis, the outermost
        radius beyond which |B| stays below ``level`` (the conservative reading
        where a contour folds): found by scanning a geometric radial grid from
        the envelope out to a radius where a Biot-Savart bound guarantees
        |B| < level, then bisecting the last bracket to machine precision.

        Parameters
        ----------
        level : float [T]
            The isogauss level, > 0.
        angle_rad : array_like, shape (...)
            Angles from the bore axis [rad]; 0 is the axis, pi/2 the mid-plane.

        Returns
        -------
        ndarray, shape like ``angle_rad`` [m]
            NaN where the contour lies inside the envelope.

        References
        ----------
        Bound: |B| <= mu0 |I| a / (2 d^2) for a loop of radius a at distance
        >= d (Biot-Savart law; Jackson 1999, eq. 5.14).
        """
        lv = finite(level, "level")
        if lv <= 0.0:
            raise ValueError(f"level must be > 0; got {level!r}")
        ang = np.asarray(angle_rad, dtype=np.float64)
        shape = ang.shape
        ang = ang.reshape(-1)
        if not np.all(np.isfinite(ang)):
            raise ValueError("angle_rad must be finite")
        reach = float(np.max(np.hypot(self.radius, self.offset)))
        strength = float(np.sum(MU0 * np.abs(self.current) * self.radius))  # both loops
        r_far = reach + np.sqrt(strength / lv) * 1.01
        r_near = self.envelope
        if r_far <= r_near:
            return np.full(shape, np.nan)
        grid = np.geomspace(r_near, r_far, _SCAN_POINTS)
        b = self._magnitude_polar(np.tile(grid, len(ang)), np.repeat(ang, len(grid)))
        above = b.reshape(len(ang), len(grid)) >= lv
        found = above.any(axis=1)
        last = len(grid) - 1 - np.argmax(above[:, ::-1], axis=1)
        last = np.minimum(last, len(grid) - 2)
        lo, hi = grid[last], grid[last + 1]
        for _ in range(_BISECTIONS):
            mid = 0.5 * (lo + hi)
            inside = self._magnitude_polar(mid, ang) >= lv
            lo = np.where(inside, mid, lo)
            hi = np.where(inside, hi, mid)
        out = np.where(found, 0.5 * (lo + hi), np.nan)
        return out.reshape(shape)

    # ------------------------------------------------------------ residuals
    @property
    def residuals(self) -> tuple[ExtentResidual, ...]:
        """Per given extent (axial then radial, by rising level): fit residuals."""
        out = []
        for ext in self.extents:
            d_ax, d_rad = self.contour_distance(ext.level, np.array([0.0, np.pi / 2]))
            b = self._magnitude_polar(np.array([ext.axial, ext.radial]), np.array([0.0, np.pi / 2]))
            for name, given, model, bb in (
                ("axial", ext.axial, d_ax, b[0]),
                ("radial", ext.radial, d_rad, b[1]),
            ):
                out.append(
                    ExtentResidual(
                        ext.level,
                        name,
                        given,
                        float(model),
                        float(model / given - 1.0),
                        float(bb / ext.level - 1.0),
                    )
                )
        return tuple(out)

    # ----------------------------------------------------------- multipoles
    def multipole_coefficients(self, max_order: int) -> tuple[np.ndarray, np.ndarray]:
        """Odd-order exterior multipole coefficients of the winding.

        ``Phi = sum_n A_n P_n(cos theta) / r^(n+1)`` with ``B = -mu0 grad Phi``,
        valid for r beyond every loop.  Matching the on-axis series of a loop
        of radius a at distance rho_k = |(a, z0)| and polar angle alpha gives
        ``A_n = I a^2 rho_k^(n-1) P_n'(cos alpha) / (2 (n + 1))``; a mirrored
        pair doubles the odd orders and cancels the even ones.

        Parameters
        ----------
        max_order : int
            Highest order returned (odd orders up to it).

        Returns
        -------
        orders : ndarray of int, shape (m,)
            1, 3, ..., up to ``max_order``.
        coefficients : ndarray, shape (m,) [A m^(n+1)]

        References
        ----------
        Jackson 1999, sec. 3.3 (axisymmetric potential from its axis values)
        and eq. 5.37 (on-axis field of a loop); generating function of the
        Gegenbauer polynomials C_n^(3/2) = P'_(n+1) (M. Abramowitz, I. Stegun,
        *Handbook of Mathematical Functions*, 1964, eq. 22.9.3 and 22.5.37).
        """
        if int(max_order) != max_order or max_order < 1:
            raise ValueError(f"max_order must be a positive integer; got {max_order!r}")
        orders = np.arange(1, int(max_order) + 1, 2)
        dist = np.hypot(self.radius, self.offset)
        cosa = self.offset / dist
        # P_n'(x) = -P_n^1(x) / sqrt(1 - x^2) with Condon-Shortley phase in lpmv.
        sina = self.radius / dist
        dp = -lpmv(1, orders[:, None], cosa[None, :]) / sina[None, :]
        terms = self.current * self.radius**2 * dist ** (orders[:, None] - 1) * dp
        return orders, (terms / (orders[:, None] + 1.0)).sum(axis=1)
