"""Complete elliptic integrals as numba kernels, from the complementary parameter.

Every function here takes the *complementary* modulus ``kc`` (or parameter
``mc = kc**2 = 1 - m``) rather than ``m``.  Field models compute ``mc`` directly
as a ratio of squared distances, so near a conductor (``m -> 1``) no rounding of
``m`` just past 1 can occur and the logarithmic growth of ``K`` is resolved.

The workhorse is Bulirsch's generalised complete elliptic integral

    cel(kc, p, a, b) = int_0^{pi/2} (a cos^2 t + b sin^2 t)
                       / ((cos^2 t + p sin^2 t) sqrt(cos^2 t + kc^2 sin^2 t)) dt,

evaluated by his quadratically convergent Gauss-type iteration; for ``p < 0``
the integral is a Cauchy principal value.  Legendre's integrals follow from the
two *associate* integrals

    B(m) = cel(kc, 1, 1, 0) = int cos^2 t / Delta dt,
    D(m) = cel(kc, 1, 0, 1) = int sin^2 t / Delta dt,

as ``K = B + D`` and ``E = B + mc D`` (sums of positive terms, so no
cancellation anywhere in ``0 <= m < 1``).  Both are computed in one fused
iteration (the iteration's auxiliary sequences depend on ``kc`` and ``p`` only).

References
----------
R. Bulirsch, "Numerical calculation of elliptic integrals and elliptic
functions. III", Numer. Math. 13 (1969) 305-315 (algorithm ``cel``; first
published in Numer. Math. 7 (1965) 78-90).
M. Abramowitz and I. A. Stegun, *Handbook of Mathematical Functions*, 1964,
sec. 17.3 (series 17.3.11-12) and 17.6 (arithmetic-geometric mean).
T. Fukushima, "Precise and fast computation of complete elliptic integrals by
piecewise minimax rational function approximation", J. Comput. Appl. Math. 282
(2015) 71-76 (the associate integrals B and D).
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from numba import njit

#: Bulirsch's ``ca``: stop when the relative difference of the iteration's mean pair is below this;
#: convergence is quadratic, so the next (final) step is accurate to its square.
CEL_TOLERANCE = 1e-9

_HALF_PI = 0.5 * math.pi
#: Iteration cap: convergence takes at most ~10 steps for kc down to 1e-150; the cap
#: only ends the loop for non-finite input (which then yields NaN).
MAX_ITERATIONS = 60


@njit(cache=True, fastmath=False)
def cel(kc: float, p: float, a: float, b: float) -> float:
    """Bulirsch's generalised complete elliptic integral ``cel(kc, p, a, b)``.

    Parameters
    ----------
    kc : float
        Complementary modulus, ``kc != 0`` (only ``|kc|`` matters).
    p : float
        Characteristic; ``p <= 0`` gives the Cauchy principal value.
    a, b : float
        Weights of ``cos^2`` and ``sin^2`` in the numerator.

    Returns
    -------
    float
        The integral; NaN for ``kc == 0`` (logarithmically divergent).

    References
    ----------
    R. Bulirsch, Numer. Math. 13 (1969) 305-315, algorithm ``cel``.
    """
    if kc == 0.0 or not (math.isfinite(kc) and math.isfinite(p)):
        return math.nan
    qc = abs(kc)
    e = qc
    em = 1.0
    if p > 0.0:
        p = math.sqrt(p)
        b = b / p
    else:
        f = qc * qc
        q = 1.0 - f
        g = 1.0 - p
        f = f - p
        q = q * (b - a * p)
        p = math.sqrt(f / g)
        a = (a - b) / g
        b = -q / (g * g * p) + a * p
    for _ in range(MAX_ITERATIONS):
        f = a
        inv = 1.0 / p
        a = a + b * inv
        g = e * inv
        b = 2.0 * (b + f * g)
        p = g + p
        g = em
        em = qc + em
        if abs(g - qc) <= g * CEL_TOLERANCE:
            break
        qc = 2.0 * math.sqrt(e)
        e = qc * em
    return _HALF_PI * (b + a * em) / (em * (em + p))


@njit(cache=True, fastmath=False)
def ellip_bd(mc: float) -> tuple[float, float]:
    """Associate complete elliptic integrals ``B(m)`` and ``D(m)`` from ``mc = 1 - m``.

    Parameters
    ----------
    mc : float
        Complementary parameter ``kc**2`` in ``(0, 1]`` (``mc > 1`` is also valid).

    Returns
    -------
    (float, float)
        ``B = int_0^{pi/2} cos^2 t / Delta dt`` and ``D = int sin^2 t / Delta dt``
        with ``Delta = sqrt(1 - m sin^2 t)``; NaN for ``mc <= 0``.

    References
    ----------
    R. Bulirsch, Numer. Math. 13 (1969) 305-315 (``cel`` with ``p = 1``), fused
    for the two weight pairs ``(1, 0)`` and ``(0, 1)``.
    """
    if not (mc > 0.0 and mc < math.inf):
        return math.nan, math.nan
    qc = math.sqrt(mc)
    e = qc
    em = 1.0
    p = 1.0
    a1, b1 = 1.0, 0.0
    a2, b2 = 0.0, 1.0
    for _ in range(MAX_ITERATIONS):
        inv = 1.0 / p
        g = e * inv
        f1 = a1
        a1 = a1 + b1 * inv
        b1 = 2.0 * (b1 + f1 * g)
        f2 = a2
        a2 = a2 + b2 * inv
        b2 = 2.0 * (b2 + f2 * g)
        p = g + p
        g = em
        em = qc + em
        if abs(g - qc) <= g * CEL_TOLERANCE:
            break
        qc = 2.0 * math.sqrt(e)
        e = qc * em
    scale = _HALF_PI / (em * (em + p))
    return (b1 + a1 * em) * scale, (b2 + a2 * em) * scale


@njit(cache=True, fastmath=False)
def ellipk_c(mc: float) -> float:
    """Complete elliptic integral of the first kind ``K(m)`` from ``mc = 1 - m``.

    Returns ``B + D`` (see module docstring); NaN for ``mc <= 0``.

    References
    ----------
    Abramowitz and Stegun 1964, 17.3.1; Bulirsch 1969, ``cel(kc, 1, 1, 1)``.
    """
    bb, dd = ellip_bd(mc)
    return bb + dd


@njit(cache=True, fastmath=False)
def ellipe_c(mc: float) -> float:
    """Complete elliptic integral of the second kind ``E(m)`` from ``mc = 1 - m``.

    Returns ``B + mc D`` (see module docstring); NaN for ``mc <= 0``, although
    ``E(1) = 1`` is the finite limit.

    References
    ----------
    Abramowitz and Stegun 1964, 17.3.3; Bulirsch 1969, ``cel(kc, 1, 1, mc)``.
    """
    bb, dd = ellip_bd(mc)
    return bb + mc * dd


def _bracket_series(n_terms: int) -> np.ndarray:
    """Taylor coefficients of ``g(m) = ((1 - m/2) E - (1 - m) K) / m**2``.

    From the hypergeometric series ``K = pi/2 sum a_n m^n`` with
    ``a_n = ((1/2)_n / n!)^2`` and ``E = pi/2 sum e_n m^n`` with
    ``e_n = -a_n / (2n - 1)`` (Abramowitz and Stegun 1964, 17.3.11-12).  The
    coefficients of ``m^0`` and ``m^1`` of the numerator vanish exactly; the
    leading term is ``g(0) = 3 pi / 32``.  Exact rationals, then float64.
    """
    n_max = n_terms + 2
    a = [Fraction(1)]
    for n in range(1, n_max + 1):
        a.append(a[-1] * Fraction(2 * n - 1, 2 * n) ** 2)
    e = [-a[n] / (2 * n - 1) for n in range(n_max + 1)]
    num = []
    for n in range(n_max + 1):
        c = e[n] - a[n]
        if n >= 1:
            c += -e[n - 1] / 2 + a[n - 1]
        num.append(c)
    if num[0] != 0 or num[1] != 0:  # pragma: no cover - algebraic identity
        raise RuntimeError("series of the radial bracket must start at m^2")
    return np.array([float(c) * _HALF_PI for c in num[2 : 2 + n_terms]])


#: Below this parameter the radial bracket uses its power series; above it the
#: difference ``B - mc D`` loses at most a factor ``~1.3 / m`` (about 13) to rounding.
BRACKET_SERIES_MAX_M = 0.1
#: Terms kept: the coefficients tend to a constant, so the remainder after
#: ``N`` terms is about ``0.1**N`` relative; 17 terms reach below 1e-17.
BRACKET_COEFFS = _bracket_series(17)


@njit(cache=True, fastmath=False, inline="always", error_model="numpy")
def bracket_series(m: float) -> float:
    """Power series of ``g(m)`` (see ``bracket_ratio``); accurate for ``m < BRACKET_SERIES_MAX_M``.

    References
    ----------
    Abramowitz and Stegun 1964, 17.3.11-12 (hypergeometric series of K and E).
    """
    acc = 0.0
    for i in range(BRACKET_COEFFS.shape[0] - 1, -1, -1):
        acc = acc * m + BRACKET_COEFFS[i]
    return acc


@njit(cache=True, fastmath=False)
def bracket_ratio(m: float, mc: float) -> float:
    """``g(m) = ((1 - m/2) E(m) - (1 - m) K(m)) / m**2``, accurate for all ``0 <= m < 1``.

    The numerator vanishes like ``3 pi m^2 / 32`` on a loop's axis; it is the
    radial-field bracket of a circular loop divided by ``beta^2 m^2``.

    Parameters
    ----------
    m, mc : float
        The parameter and its complement, each computed directly so that
        ``m + mc = 1`` up to rounding.

    Returns
    -------
    float
        ``g(m)``; ``g(0) = 3 pi / 32``.

    References
    ----------
    Power series from Abramowitz and Stegun 1964, 17.3.11-12 for
    ``m < BRACKET_SERIES_MAX_M``; otherwise ``(B - mc D) / (2 m)`` with the
    associate integrals (Bulirsch 1969).
    """
    if m < BRACKET_SERIES_MAX_M:
        return bracket_series(m)
    bb, dd = ellip_bd(mc)
    return (bb - mc * dd) / (2.0 * m)
