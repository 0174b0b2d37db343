"""Soft-magnetic materials for passive shielding: B-H curves and constant permeability.

A material maps the magnitude of the field strength H [A/m] inside the steel to
the flux density B [T] (anhysteretic, isotropic).  Two kinds are provided:

* :class:`BHCurve` -- a measured curve, interpolated by a monotone piecewise
  cubic Hermite interpolant (PCHIP; F. N. Fritsch, R. E. Carlson, "Monotone
  piecewise cubic interpolation", SIAM J. Numer. Anal. 17(2), 1980), which keeps
  B(H) monotone and so the secant permeability positive.  Beyond the last point
  the steel is taken as saturated: ``B = B_last + mu0 (H - H_last)``.
* :class:`ConstantPermeability` -- a linear material ``B = mu0 mu_r H``.

Both expose ``b(h)``, ``mu_r(h)`` (secant, ``B / (mu0 H)``), ``chi(h)``
(secant susceptibility ``mu_r - 1``), ``chi_diff(h)`` (differential
susceptibility ``dB/dH / mu0 - 1``) and ``chi_ref`` (the largest secant
susceptibility, used as the reference of the nonlinear solvers).

The shipped default :func:`default_steel` is the steel of the TEAM Workshop
Problem 13 benchmark (see ``siting/data/steel_team13.csv`` for its source).
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources

import numpy as np
from scipy.constants import mu_0
from scipy.interpolate import PchipInterpolator

#: Density of low-carbon steel [kg/m^3] (common practice).
STEEL_DENSITY = 7850.0

#: Stock plate thicknesses [m] (common practice).
STOCK_THICKNESSES = tuple(
    t * 1e-3 for t in (1, 1.5, 2, 3, 4, 5, 6, 8, 10, 12, 15, 20, 25, 30)
)

#: Design limit for the flux density in shielding steel [T] (common practice).
DESIGN_B_LIMIT = 1.5


@dataclass(frozen=True, eq=False)
class ConstantPermeability:
    """A linear, isotropic material ``B = mu0 mu_r H``.

    Parameters
    ----------
    mu_r_value : float
        Relative permeability, >= 1 (the method ``mu_r(h)`` returns it for any H).
    name : str
        Display name.
    """

    mu_r_value: float
    name: str = "constant permeability"

    def __post_init__(self):
        val = float(self.mu_r_value)
        if not np.isfinite(val) or val < 1.0:
            raise ValueError(f"mu_r_value must be finite and >= 1; got {self.mu_r_value!r}")
        object.__setattr__(self, "mu_r_value", val)

    @property
    def linear(self) -> bool:
        return True

    @property
    def chi_ref(self) -> float:
        return self.mu_r_value - 1.0

    def b(self, h) -> np.ndarray:
        """|B| [T] for |H| [A/m] (any shape)."""
        return mu_0 * self.mu_r_value * np.abs(np.asarray(h, dtype=float))

    def mu_r(self, h) -> np.ndarray:
        return np.full(np.shape(h), self.mu_r_value)

    def chi(self, h) -> np.ndarray:
        return np.full(np.shape(h), self.mu_r_value - 1.0)

    def chi_diff(self, h) -> np.ndarray:
        return np.full(np.shape(h), self.mu_r_value - 1.0)


@dataclass(frozen=True, eq=False)
class BHCurve:
    """A monotone B-H curve.

    Parameters
    ----------
    h : array_like, shape (m,) [A/m]
        Strictly increasing field strengths, starting at 0.
    b : array_like, shape (m,) [T]
        Strictly increasing flux densities, ``b[0] == 0``.
    name : str
    source : str
        Where the table comes from.

    References
    ----------
    F. N. Fritsch, R. E. Carlson, "Monotone piecewise cubic interpolation",
    SIAM J. Numer. Anal. 17(2), 1980, pp. 238-246 (the interpolant).
    """

    h: np.ndarray
    b_table: np.ndarray
    name: str = "B-H curve"
    source: str = ""

    def __post_init__(self):
        h = np.asarray(self.h, dtype=float).reshape(-1)
        b = np.asarray(self.b_table, dtype=float).reshape(-1)
        if h.shape != b.shape or len(h) < 3:
            raise ValueError("h and b_table must have the same length >= 3")
        if not (np.all(np.isfinite(h)) and np.all(np.isfinite(b))):
            raise ValueError("h and b_table must be finite")
        if h[0] != 0.0 or b[0] != 0.0:
            raise ValueError("the curve must start at H = 0, B = 0")
        if np.any(np.diff(h) <= 0) or np.any(np.diff(b) <= 0):
            raise ValueError("h and b_table must be strictly increasing")
        if np.any(b > mu_0 * h * 1e7):
            raise ValueError("b_table implies a relative permeability above 1e7")
        if b[-1] < mu_0 * h[-1]:
            raise ValueError("b_table: the last point lies below B = mu0 H")
        object.__setattr__(self, "h", h)
        object.__setattr__(self, "b_table", b)
        interp = PchipInterpolator(h, b, extrapolate=False)
        object.__setattr__(self, "_interp", interp)
        object.__setattr__(self, "_deriv", interp.derivative())
        mu_initial = float(interp.derivative()(0.0)) / mu_0
        object.__setattr__(self, "_mu_initial", mu_initial)
        # largest secant susceptibility, found on a dense log grid of the table range
        hs = np.geomspace(max(h[1] * 1e-3, 1e-6), h[-1], 4000)
        chi_max = float(np.max(self.chi(hs)))
        object.__setattr__(self, "_chi_ref", max(chi_max, mu_initial - 1.0))

    @property
    def linear(self) -> bool:
        return False

    @property
    def chi_ref(self) -> float:
        """Largest secant susceptibility of the curve."""
        return self._chi_ref

    @property
    def mu_initial(self) -> float:
        """Initial relative permeability ``dB/dH (0) / mu0``."""
        return self._mu_initial

    def b(self, h) -> np.ndarray:
        """|B| [T] for |H| [A/m] (any shape); saturated beyond the table."""
        ha = np.abs(np.asarray(h, dtype=float))
        out = np.empty_like(ha)
        inside = ha <= self.h[-1]
        out[inside] = self._interp(ha[inside])
        out[~inside] = self.b_table[-1] + mu_0 * (ha[~inside] - self.h[-1])
        return out

    def mu_r(self, h) -> np.ndarray:
        """Secant relative permeability ``B / (mu0 H)``; the initial one at H = 0."""
        ha = np.abs(np.asarray(h, dtype=float))
        out = np.full(ha.shape, self._mu_initial)
        pos = ha > 0.0
        out[pos] = self.b(ha[pos]) / (mu_0 * ha[pos])
        return out

    def chi(self, h) -> np.ndarray:
        """Secant susceptibility ``mu_r(H) - 1``."""
        return self.mu_r(h) - 1.0

    def chi_diff(self, h) -> np.ndarray:
        """Differential susceptibility ``dB/dH / mu0 - 1`` (>= 0 for a monotone curve)."""
        ha = np.abs(np.asarray(h, dtype=float))
        out = np.zeros(ha.shape)
        inside = ha <= self.h[-1]
        out[inside] = self._deriv(ha[inside]) / mu_0 - 1.0
        return np.maximum(out, 0.0)


def load_bh_csv(path, *, name: str | None = None) -> BHCurve:
    """Read a B-H table: '#' comment lines (the source), one header row, then ``H, B`` rows.

    Parameters
    ----------
    path : str or path-like or importlib Traversable
        Columns ``H [A/m], B [T]``.
    name : str, optional
        Display name (default: the path).
    """
    text = path.read_text() if hasattr(path, "read_text") else open(path).read()
    comments = [ln[1:].strip() for ln in text.splitlines() if ln.startswith("#")]
    rows = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    data = np.array([[float(v) for v in ln.split(",")] for ln in rows[1:]])
    return BHCurve(
        data[:, 0], data[:, 1], name=name or str(path), source="\n".join(comments)
    )


def default_steel() -> BHCurve:
    """The TEAM Workshop Problem 13 steel (``siting/data/steel_team13.csv``).

    References
    ----------
    T. Nakata, K. Fujiwara, "Summary of results for benchmark problem 13 (3-D
    nonlinear magnetostatic model)", COMPEL 11(3), 1992, Table 2.
    """
    return load_bh_csv(
        resources.files("siting") / "data" / "steel_team13.csv", name="TEAM 13 steel"
    )
