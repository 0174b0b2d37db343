"""Units of the site file: one pint registry, parsing to SI and display formatting.

pint's own ``gauss`` is the CGS-Gaussian unit, whose dimension differs from the
tesla's, so it does not convert.  The registry here replaces it with the
trade's gauss, defined exactly as 1 G = 1e-4 T (symbol ``G``; ``kG``, ``mG``
follow from pint's prefixes).  The maxwell, defined in pint as gauss * cm^2,
becomes the SI-consistent 1 Mx = 1e-8 Wb.

Conversions are carried out in decimal arithmetic: the number is taken exactly
as written, the unit's factor to SI is taken to 15 significant figures (which
recovers the exact defining decimals such as 1 ft = 0.3048 m, 1 in = 0.0254 m,
1 G = 1e-4 T) and the product is rounded to a float once.  "8 ft" therefore
gives the float nearest to 2.4384, and "5 G" gives exactly ``5e-4``.
"""

from __future__ import annotations

import decimal
import math
import pathlib
import re
from dataclasses import dataclass
from functools import lru_cache

import pint

__all__ = [
    "DIMENSIONS",
    "Dimension",
    "format_field",
    "format_length",
    "parse_quantity",
    "show_value",
    "si_factor",
    "ureg",
]


def _make_registry() -> pint.UnitRegistry:
    # An empty registry is filled from pint's default definitions and then the
    # gauss is redefined; its caches are still empty at that point, so no stale
    # CGS-Gaussian dimension survives.
    reg = pint.UnitRegistry(None, on_redefinition="ignore")
    reg.load_definitions(pathlib.Path(pint.__file__).parent / "default_en.txt")
    reg.define("gauss = 1e-4 * tesla = G")
    return reg


ureg: pint.UnitRegistry = _make_registry()
"""The project's unit registry (pint), with the trade's gauss 1 G = 1e-4 T."""


@dataclass(frozen=True)
class Dimension:
    """A physical dimension the site file uses.

    Attributes
    ----------
    key : str
        Short name used by :func:`parse_quantity` ("length", "field", ...).
    noun : str
        Phrase for messages, with article ("a length").
    si_unit : str
        The SI unit results are returned in.
    example : str
        Examples for messages, already quoted ("'2.5 m' or '8 ft'").
    """

    key: str
    noun: str
    si_unit: str
    example: str


DIMENSIONS: dict[str, Dimension] = {
    d.key: d
    for d in (
        Dimension("length", "a length", "m", "'2.5 m' or '8 ft'"),
        Dimension("field", "a magnetic flux density", "T", "'0.5 mT' or '5 G'"),
        Dimension("current", "a current", "A", "'400 A' or '1.2 kA'"),
        Dimension("moment", "a magnetic moment", "A * m ** 2", "'25 A m^2'"),
        Dimension("density", "a density", "kg / m ** 3", "'7850 kg/m^3'"),
    )
}

_MAX_TEXT = 200
_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_NONFINITE = r"[+-]?(?:nan|inf|infinity)"
# A unit expression: names joined by spaces, '*' or '/', each with an optional
# small integer power ('^2', '**2', '**-1', '²').  Small powers keep pint's
# arithmetic bounded whatever the input.
_NAME = r"[A-Za-zµμ_]+(?:\s*(?:\^|\*\*)\s*[+-]?\d{1,2}|[²³])?"
_UNIT = rf"{_NAME}(?:\s*[*/]\s*{_NAME}|\s+{_NAME})*"
_QUANTITY_RE = re.compile(rf"\s*(?P<num>{_NUMBER}|{_NONFINITE})\s*(?P<unit>{_UNIT})?\s*", re.I)


def _dimension(dimension: str) -> Dimension:
    try:
        return DIMENSIONS[dimension]
    except KeyError:
        raise ValueError(
            f"unknown dimension {dimension!r}; known: {', '.join(DIMENSIONS)}"
        ) from None


def show_value(value) -> str:
    """A short TOML-like rendering of a value for messages ('3 m', 2.5, true)."""
    if isinstance(value, bool):
        text = "true" if value else "false"
    elif isinstance(value, str):
        text = f"'{value}'"
    elif isinstance(value, dict):
        text = "{" + ", ".join(f"{k} = {show_value(v)}" for k, v in value.items()) + "}"
    elif isinstance(value, (list, tuple)):
        text = "[" + ", ".join(show_value(v) for v in value) + "]"
    else:
        text = str(value)
    return text if len(text) <= 60 else text[:57] + "..."


@lru_cache(maxsize=256)
def _unit_factor(unit: str, si_unit: str) -> decimal.Decimal | None:
    """Decimal factor from ``unit`` to ``si_unit``; None if the dimensions differ.

    Raises ValueError for a unit pint does not know.
    """
    try:
        parsed = ureg.parse_units(unit)
        target = ureg.parse_units(si_unit)
    except Exception as exc:  # pint raises several kinds for unparsable names
        raise ValueError(str(exc)) from None
    if parsed.dimensionality != target.dimensionality:
        return None
    factor = ureg.Quantity(1.0, parsed).to(target).magnitude
    if not math.isfinite(factor) or factor == 0.0:
        raise ValueError(f"unit {unit!r} has no usable factor")
    return decimal.Decimal(f"{factor:.15g}")


def si_factor(unit: str, dimension: str) -> float:
    """Factor that converts a value in ``unit`` to SI, e.g. ``si_factor("ft", "length")``.

    Parameters
    ----------
    unit : str
        A unit expression pint understands ("ft", "mT", "G", "A m^2").
    dimension : str
        One of the keys of :data:`DIMENSIONS`.

    Returns
    -------
    float
        SI value of one ``unit`` (0.3048 for "ft", 1e-4 for "G").

    Raises
    ------
    ValueError
        If the unit is unknown or of another dimension.
    """
    dim = _dimension(dimension)
    factor = _unit_factor(unit, dim.si_unit) if isinstance(unit, str) else None
    if factor is None:
        raise ValueError(f"{unit!r} is not a unit of {dim.noun} (such as {dim.example})")
    return float(factor)


def _to_si(number: decimal.Decimal, factor: decimal.Decimal) -> float:
    with decimal.localcontext() as ctx:
        ctx.prec = 40
        try:
            value = float(number * factor)
        except (decimal.DecimalException, OverflowError):
            value = math.inf
    return value


def parse_quantity(value, dimension: str, *, default_unit: str | None = None,
                   example: str | None = None) -> float:
    """Parse a quantity such as ``"2.5 m"`` or ``"5 G"`` to its SI magnitude.

    Parameters
    ----------
    value : str or int or float
        A string "<number> <unit>", or a bare number (only if ``default_unit``
        is given; it is then read in that unit).
    dimension : str
        "length" (-> m), "field" (-> T), "current" (-> A), "moment" (-> A m^2)
        or "density" (-> kg/m^3).
    default_unit : str, optional
        Unit of bare numbers; without it bare numbers are rejected.
    example : str, optional
        Example(s) quoted in error messages, e.g. ``"'1.5 T'"``; defaults to
        the dimension's examples.

    Returns
    -------
    float
        The finite magnitude in SI units.

    Raises
    ------
    ValueError
        With a message "expected <noun> such as <example>, got <value>" for a
        wrong dimension, unknown unit, missing unit, non-finite or unparsable
        value.
    """
    dim = _dimension(dimension)
    expected = f"expected {dim.noun} such as {example or dim.example}"
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise ValueError(f"{expected}, got {show_value(value)}")
    if not isinstance(value, str):
        if default_unit is None:
            raise ValueError(f"{expected}, got the bare number {value!r} (a unit is required)")
        if isinstance(value, float) and not math.isfinite(value):
            raise ValueError(f"{expected}, got {value!r} (not a finite number)")
        number = decimal.Decimal(value if isinstance(value, int) else repr(value))
        unit = default_unit
    else:
        match = _QUANTITY_RE.fullmatch(value) if len(value) <= _MAX_TEXT else None
        if match is None:
            raise ValueError(f"{expected}, got {show_value(value)}")
        num_text, unit = match.group("num"), match.group("unit")
        if re.fullmatch(_NONFINITE, num_text, re.I):
            raise ValueError(f"{expected}, got {show_value(value)} (not a finite number)")
        number = decimal.Decimal(num_text)
        if unit is None:
            if default_unit is None:
                raise ValueError(f"{expected}, got {show_value(value)} (a unit is required)")
            unit = default_unit
    unit = unit.strip()
    try:
        factor = _unit_factor(unit, dim.si_unit)
    except ValueError:
        raise ValueError(f"{expected}, got {show_value(value)} (unknown unit {unit!r})") from None
    if factor is None:
        raise ValueError(f"{expected}, got {show_value(value)}")
    result = _to_si(number, factor)
    if not math.isfinite(result):
        raise ValueError(f"{expected}, got {show_value(value)} (out of range)")
    return result


def _format_sig(x: float, sig: int, max_decimals: int) -> str:
    """``x`` to ``sig`` significant figures, never rounding away integer digits."""
    if not math.isfinite(x):
        return str(x)
    if x == 0.0:
        return f"{0.0:.{min(sig - 1, max_decimals)}f}"
    if abs(x) >= 10.0 ** (sig - 1):
        return f"{x:.0f}"
    rounded = float(f"{x:.{sig}g}")
    if abs(rounded) >= 10.0 ** (sig - 1):
        return f"{rounded:.0f}"
    decimals = sig - 1 - math.floor(math.log10(abs(rounded)))
    if decimals > max_decimals:
        return f"{x:.{sig - 1}e}"
    return f"{rounded:.{decimals}f}"


def format_field(value_T: float, unit: str, *, digits: int = 2) -> str:
    """Display a flux density: ``format_field(5e-4, "mT") == "0.50 mT"``.

    Parameters
    ----------
    value_T : float
        Flux density [T].
    unit : str
        Display unit ("mT", "G", "uT", "T", ...), printed as given.
    digits : int
        Significant figures (integer digits are never rounded away:
        1.5 T in mT is "1500 mT").

    Returns
    -------
    str
        Number and unit, e.g. "5.0 G", "20 uT".
    """
    factor = si_factor(unit, "field")
    return f"{_format_sig(float(value_T) / factor, digits, 6)} {unit}"


def format_length(value_m: float, unit: str, *, digits: int = 3) -> str:
    """Display a length: ``format_length(12.3, "m") == "12.3 m"``.

    Parameters
    ----------
    value_m : float
        Length [m].
    unit : str
        Display unit ("m", "ft", "mm", ...), printed as given.
    digits : int
        Significant figures, at most three decimals (integer digits are never
        rounded away: 1234.4 m is "1234 m").

    Returns
    -------
    str
        Number and unit, e.g. "40.4 ft", "0.500 m".
    """
    factor = si_factor(unit, "length")
    return f"{_format_sig(float(value_m) / factor, digits, 3)} {unit}"


def format_distance(value_m: float, unit: str, *, decimals: int = 2) -> str:
    """Display a plan distance or coordinate with fixed decimals: "-0.50 m", "0.03 m".

    For margins and positions on a plan, where a fixed resolution (1 cm in metres)
    reads better than significant figures.
    """
    factor = si_factor(unit, "length")
    return f"{float(value_m) / factor:.{decimals}f} {unit}"
