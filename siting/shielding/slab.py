r"""Infinite-slab estimate of a steel plate's shielding, by 2-D spatial Fourier filtering.

Derivation
----------
Take the slab between ``z = 0`` and ``z = t`` (z along the normal, away from the
sources), relative permeability mu, no currents.  H = -grad(phi) and each 2-D
spatial frequency ``(kx, ky)``, ``k = |(kx, ky)|``, of phi separates as
``exp(i (kx x + ky y)) Z(z)`` with ``Z`` a combination of ``exp(+-k z)``:

* below (sources' side): ``a e^{-kz} + r a e^{kz}`` (incident + reflected),
* inside: ``b e^{-kz} + c e^{kz}``,
* beyond: ``tau a e^{-kz}``.

Continuity of H_tangential (of phi) and of B_normal (of ``mu dphi/dz``) at
``z = 0`` and ``z = t`` gives, with ``E = e^{-kt}``,
``b = tau a (mu + 1) / (2 mu)``, ``c = tau a E^2 (mu - 1) / (2 mu)`` and

    T(k) = tau = 4 mu / ((mu + 1)^2 - (mu - 1)^2 e^{-2kt}),
    R(k) = r   = -(mu^2 - 1)(1 - e^{-2kt}) / ((mu + 1)^2 - (mu - 1)^2 e^{-2kt}).

Beyond the slab every component of B is the incident free-space field at the
same point multiplied by T(k), wherever the slab sits between source and
observer.  On the sources' side the reflected field at height ``-s`` is the
incident field on the face propagated by ``e^{-k s}`` and multiplied by R (the
tangential components) and by -R (the normal one).  T = 1 for mu = 1 or
t = 0; for t -> infinity R -> -(mu - 1)/(mu + 1), the image of a source in a
permeable half-space.

Numerics
--------
The incident B is sampled on the source-side face on a square window of
spacing ``spacing``, grown (by 1.5x) until the largest |B| on its border is
below ``decay`` (default 1e-4) times its largest |B|; it is zero-padded to at
least twice its size (next FFT-friendly length) so that the circular convolution of
the FFT does not wrap the propagated field back into the window, filtered,
inverse-transformed and interpolated (cubic B-spline, scipy.ndimage) at the
observation points.

References
----------
J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 4.4 (boundary
conditions, images at a plane dielectric interface, eq. 4.45) and sec. 5.9-5.12;
A. J. Mager, "Magnetic shields", IEEE Trans. Magn. 6(1), 1970, pp. 67-75
(planar and cylindrical magnetostatic shields).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import fft as sfft
from scipy.constants import mu_0
from scipy.ndimage import map_coordinates

from siting.fields._frame import as_points, as_vector, frame, positive_finite


def transmission(k, mu_r: float, thickness: float) -> np.ndarray:
    """T(k) of an infinite slab (see the module docstring); k [1/m], any shape."""
    e2 = np.exp(-2.0 * np.asarray(k, dtype=float) * thickness)
    return 4.0 * mu_r / ((mu_r + 1.0) ** 2 - (mu_r - 1.0) ** 2 * e2)


def reflection(k, mu_r: float, thickness: float) -> np.ndarray:
    """R(k) of the scalar potential reflected by an infinite slab; k [1/m], any shape."""
    e2 = np.exp(-2.0 * np.asarray(k, dtype=float) * thickness)
    return -(mu_r**2 - 1.0) * (1.0 - e2) / ((mu_r + 1.0) ** 2 - (mu_r - 1.0) ** 2 * e2)


@dataclass(frozen=True, eq=False)
class Slab:
    """An infinite slab.

    Parameters
    ----------
    origin : array_like, shape (3,) [m]
        A point on the face toward the sources.
    normal : array_like, shape (3,)
        Unit normal pointing from the sources into the slab.
    thickness : float [m]
    mu_r : float
    """

    origin: np.ndarray
    normal: np.ndarray
    thickness: float
    mu_r: float

    def __post_init__(self):
        object.__setattr__(self, "origin", as_vector(self.origin, "origin"))
        rot = frame(self.normal)
        object.__setattr__(self, "normal", rot[2])
        object.__setattr__(self, "_rot", rot)
        object.__setattr__(self, "thickness", float(self.thickness))
        if not self.thickness >= 0:
            raise ValueError("thickness must be >= 0")
        if not float(self.mu_r) >= 1.0:
            raise ValueError("mu_r must be >= 1")

    def local(self, points) -> np.ndarray:
        """(n, 3) coordinates (u, v, s) in the slab frame; s along the normal from the face."""
        return (as_points(points) - self.origin) @ self._rot.T


@dataclass(frozen=True, eq=False)
class _Spectrum:
    b_hat: np.ndarray  # (3, N, N//2+1) real FFT of the local components (u, v, s) of B_inc
    kk: np.ndarray  # (N, N//2+1) |k|
    u0: float
    v0: float
    h: float
    n: int
    big: int


def _incident_spectrum(source, slab: Slab, spacing, decay, center, max_nodes=2048):
    h = positive_finite(spacing, "spacing")
    c = slab.local(slab.origin if center is None else center)[0]
    half = 16 * h
    while True:
        n = 2 * int(np.ceil(half / h)) + 1
        if n > max_nodes:
            raise ValueError("the incident field does not decay within the largest window; "
                             "increase spacing or decay")
        g = c[0] - (n // 2) * h + h * np.arange(n), c[1] - (n // 2) * h + h * np.arange(n)
        U, V = np.meshgrid(*g, indexing="ij")
        pts = slab.origin + U.reshape(-1, 1) * slab._rot[0] + V.reshape(-1, 1) * slab._rot[1]
        b = (source.field(pts) @ slab._rot.T).reshape(n, n, 3)
        mag = np.linalg.norm(b, axis=2)
        if not np.all(np.isfinite(mag)):
            raise ValueError("the incident field is undefined on the slab face")
        border = max(mag[0].max(), mag[-1].max(), mag[:, 0].max(), mag[:, -1].max())
        if border <= decay * mag.max():
            break
        half *= 1.5
    big = sfft.next_fast_len(2 * n, real=True)
    b_hat = sfft.rfft2(np.moveaxis(b, 2, 0), s=(big, big), workers=-1)
    fu = sfft.fftfreq(big, d=h) * 2 * np.pi
    fv = sfft.rfftfreq(big, d=h) * 2 * np.pi
    kk = np.hypot(fu[:, None], fv[None, :])
    return _Spectrum(b_hat, kk, g[0][0], g[1][0], h, n, big)


def _propagate(spec: _Spectrum, factor: np.ndarray, uv: np.ndarray) -> np.ndarray:
    """Inverse FFT of ``factor * b_hat`` (per component factor (3, N, N)), at uv (m, 2)."""
    field = sfft.irfft2(spec.b_hat * factor, s=(spec.big, spec.big), workers=-1)
    field = field[:, : spec.n, : spec.n]
    idx = np.stack([(uv[:, 0] - spec.u0) / spec.h, (uv[:, 1] - spec.v0) / spec.h])
    if np.any(idx < 0) or np.any(idx > spec.n - 1):
        raise ValueError("observation points lie outside the sampled window; enlarge it")
    out = np.empty((len(uv), 3))
    for j in range(3):  # three field components
        out[:, j] = map_coordinates(field[j], idx, order=3, mode="nearest")
    return out


def slab_field(source, points, slab: Slab, *, spacing: float, decay: float = 1e-4,
               center=None) -> np.ndarray:
    """B with an infinite slab present: transmitted beyond it, incident + reflected before it.

    Parameters
    ----------
    source : object with ``field(points) -> B (n, 3) [T]``
        All of it on the sources' side (s < 0) of the slab.
    points : array_like, shape (n, 3) [m]
        Observation points; inside the slab (0 <= s <= t) the result is NaN.
    slab : Slab
        The infinite slab.
    spacing : float [m]
        Sampling step on the face; a fraction (<= 1/8) of the source's distance.
    decay : float
        Window border |B| relative to its peak (see the module docstring).
    center : array_like, shape (3,), optional
        Window centre (default: the slab origin); put it at the foot of the source.

    Returns
    -------
    ndarray, shape (n, 3) [T]

    References
    ----------
    J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 4.4 and 5.9;
    A. J. Mager, "Magnetic shields", IEEE Trans. Magn. 6(1), 1970.
    """
    pts = as_points(points)
    loc = slab.local(pts)
    out = np.full_like(pts, np.nan)
    spec = _incident_spectrum(source, slab, spacing, decay, center)
    t, mu = slab.thickness, float(slab.mu_r)
    beyond = loc[:, 2] > t
    before = loc[:, 2] < 0
    trans = transmission(spec.kk, mu, t)
    refl = reflection(spec.kk, mu, t)
    sign = np.array([1.0, 1.0, -1.0])[:, None, None]  # reflected B: R tangential, -R normal
    for s in np.unique(np.round(loc[beyond | before, 2], 12)):  # one FFT per height
        sel = np.isclose(loc[:, 2], s, rtol=0, atol=1e-12) & (beyond | before)
        if s > t:
            fac = (trans * np.exp(-spec.kk * s))[None]
            out[sel] = _propagate(spec, fac, loc[sel, :2]) @ slab._rot
        else:
            fac = sign * (refl * np.exp(-spec.kk * abs(s)))[None]
            out[sel] = _propagate(spec, fac, loc[sel, :2]) @ slab._rot
    if before.any():
        out[before] += source.field(pts[before])
    return out


def slab_saturation(source, slab: Slab, material, *, spacing: float, decay: float = 1e-4,
                    center=None, limit: float = 1.5, max_iter: int = 60):
    """Peak |B| inside the slab with its permeability made consistent with the B-H curve.

    The slab is linear with one relative permeability; it is iterated as the
    secant permeability of ``material`` at the peak in-steel field strength
    ``H = B_peak / (mu0 mu)`` (bisection on log mu).  The peak is taken over the
    window on the two faces (where |B| inside is largest).

    Returns
    -------
    dict with ``mu_r`` (consistent secant value), ``b_peak`` [T], ``h_peak`` [A/m],
    ``saturated`` (b_peak > limit).
    """
    spec = _incident_spectrum(source, slab, spacing, decay, center)
    t = slab.thickness
    n = spec.n

    def b_peak(mu):
        tau = transmission(spec.kk, mu, t)
        e2 = np.exp(-2 * spec.kk * t)
        bp = tau * (mu + 1) / (2 * mu)
        cp = tau * e2 * (mu - 1) / (2 * mu)
        peak = 0.0
        for zz in (0.0, t):
            ep, em = np.exp(-spec.kk * zz), np.exp(spec.kk * zz)
            tang = mu * (bp * ep + cp * em)
            norm = mu * (bp * ep - cp * em)
            fac = np.stack([tang, tang, norm])
            f = sfft.irfft2(spec.b_hat * fac, s=(spec.big, spec.big), workers=-1)[:, :n, :n]
            peak = max(peak, float(np.sqrt((f**2).sum(axis=0)).max()))
        return peak

    lo, hi = 1.0, max(float(material.chi_ref) + 1.0, 2.0)

    def g(mu):
        bp = b_peak(mu)
        return float(material.mu_r(bp / (mu_0 * mu))) - mu, bp

    if g(hi)[0] >= 0:
        lo = hi
    for _ in range(max_iter):
        if hi / lo < 1 + 1e-5:
            break
        mid = np.sqrt(lo * hi)
        if g(mid)[0] > 0:
            lo = mid
        else:
            hi = mid
    mu = np.sqrt(lo * hi)
    bp = b_peak(mu)
    return {"mu_r": mu, "b_peak": bp, "h_peak": bp / (mu_0 * mu), "saturated": bp > limit}
