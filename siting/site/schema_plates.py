"""Pydantic models of the site file's shielding tables: ``[[materials]]`` and ``[[plates]]``,
and the shielding keys of ``[site]``.

Value rules (the public contract of the site file):

* ``[site] stock_thicknesses``: a list of lengths, the candidate plate
  thicknesses for ``thickness = "auto"`` (default: the shipped stock list,
  1 mm to 30 mm, common practice); ``[site] steel_limit``: the design limit of
  the peak flux density in the steel (default "1.5 T", common practice).
* ``[[materials]]``: ``id``, ``name``, exactly one of ``permeability`` (a plain
  number > 1, the constant relative permeability), ``bh`` (an inline table
  ``[[H, B], ...]`` of plain numbers, H in A/m, B in T) or ``bh_file`` (a CSV
  file, path relative to the site file: '#' comment lines, one header row,
  then ``H, B`` rows); ``density`` (default "7850 kg/m^3", common practice).
  A B-H table must increase strictly in both columns; a first row ``[0, 0]``
  is added when the table does not start there.  The id ``steel`` is reserved
  for the shipped TEAM 13 steel.
* ``[[plates]]``: ``id``, ``floor``, ``name``, ``material`` (default
  ``"steel"``), ``thickness`` (a length > 0 or ``"auto"``), then either a wall
  plate (``from = [x, y]``, ``to = [x, y]`` in plan, ``bottom`` and ``top``
  heights above the floor, top above bottom) or a horizontal plate
  (``outline = [[x, y], ...]`` and its height ``z`` above the floor), never
  both; optional ``panels`` (a uniform target panel size, a length).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated

import numpy as np
from pydantic import BeforeValidator, Field, PrivateAttr, model_validator

from siting.shielding.material import DESIGN_B_LIMIT, STEEL_DENSITY, STOCK_THICKNESSES, BHCurve
from siting.site.schema import (
    Ident,
    OptionalPositiveLength,
    PositiveField,
    SiteSection,
    _Table,
)
from siting.site.units import parse_quantity, show_value
from siting.site.values import (
    Problem,
    _distinct_sorted,
    _elements,
    _finite_number,
    _outline,
    _point,
    _positive_length,
    _unit,
)

__all__ = ["DEFAULT_STEEL_ID", "MaterialItem", "PlateItem", "ShieldedSiteSection"]

#: Material id of the shipped default steel (TEAM 13 low-carbon steel).
DEFAULT_STEEL_ID = "steel"


def _stock(value, info) -> tuple[float, ...]:
    what = "a list of plate thicknesses such as ['5 mm', '10 mm']"
    values = _elements(value, lambda v: _positive_length(v, info), None, what, min_n=1)
    return _distinct_sorted(values, value, "thickness", "stock_thicknesses")


def _thickness(value, info) -> float | None:
    if value == "auto":
        return None
    try:
        return _positive_length(value, info)
    except ValueError:
        raise ValueError(f"expected a thickness > 0 such as '10 mm', or 'auto', "
                         f"got {show_value(value)}") from None


def _permeability(value, info) -> float:
    if not _finite_number(value) or value <= 1:
        raise ValueError(f"expected a relative permeability > 1 (a plain number such as 1000), "
                         f"got {show_value(value)}")
    return float(value)


def _density(value, info) -> float:
    x = parse_quantity(value, "density", default_unit="kg/m**3")
    if x <= 0.0:
        raise ValueError(f"expected a density > 0 such as '7850 kg/m^3', got {show_value(value)}")
    return x


def _pair(value) -> tuple[float, float]:
    if (not isinstance(value, list) or len(value) != 2
            or not all(_finite_number(v) for v in value)):
        raise ValueError("expected a pair [H in A/m, B in T] of plain finite numbers, "
                         f"got {show_value(value)}")
    return float(value[0]), float(value[1])


def bh_table(rows: list[tuple[float, float]], row_name=lambda i: f"[{i}]"):
    """Check a B-H table (rows of H [A/m], B [T]) and return ``(h, b)`` arrays.

    Raises :class:`Problem` naming the offending row (``row_name(i)``).
    """
    if rows and rows[0] != (0.0, 0.0):
        if rows[0][0] <= 0.0 or rows[0][1] <= 0.0:
            raise Problem((row_name(0), "expected the table to start at H = 0, B = 0 or at "
                                        f"H > 0, B > 0, got [{rows[0][0]:g}, {rows[0][1]:g}]"))
        rows = [(0.0, 0.0), *rows]
        shift = 1
    else:
        shift = 0
    if len(rows) < 3:
        raise Problem(("", f"expected a B-H table of at least 3 rows (with [0, 0]), "
                           f"got {len(rows)}"))
    for i in range(1, len(rows)):
        (h0, b0), (h1, b1) = rows[i - 1], rows[i]
        if not (h1 > h0 and b1 > b0):
            raise Problem((row_name(i - shift), f"expected H and B to increase strictly down "
                                                f"the table (non-monotone): [{h1:g}, {b1:g}] "
                                                f"follows [{h0:g}, {b0:g}]"))
    h, b = np.array(rows).T
    try:
        BHCurve(h, b)
    except ValueError as exc:
        raise Problem(("", f"not a usable B-H curve: {exc}")) from None
    return h, b


def _bh(value, info) -> tuple[tuple[float, float], ...]:
    return tuple(_elements(value, _pair, None, "a B-H table [[H, B], ...] of plain numbers"))


def read_bh_csv(path: Path):
    """Rows of a B-H CSV file; ValueError with the line number for a bad row."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeError) as exc:
        reason = getattr(exc, "strerror", None) or str(exc)
        raise ValueError(f"cannot read the B-H file '{path}' ({reason})") from None
    rows, header = [], False
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        if not header:
            header = True
            continue
        parts = [p.strip() for p in line.split(",")]
        try:
            pair = tuple(float(p) for p in parts)
        except ValueError:
            pair = ()
        if len(pair) != 2 or not all(math.isfinite(v) for v in pair):
            raise ValueError(f"'{path}' line {number}: expected two numbers 'H, B', "
                             f"got {show_value(line)}")
        rows.append(pair)
    return rows


class ShieldedSiteSection(SiteSection):
    """The ``[site]`` table with the shielding keys."""

    stock_thicknesses: Annotated[tuple[float, ...], BeforeValidator(_stock)] = STOCK_THICKNESSES
    steel_limit: PositiveField = DESIGN_B_LIMIT


class MaterialItem(_Table):
    """One ``[[materials]]`` table: exactly one of permeability, bh or bh_file."""

    id: Ident = Field(description="an id such as 'MU1'")
    name: str = ""
    permeability: Annotated[float | None, BeforeValidator(_permeability)] = None
    bh: Annotated[tuple[tuple[float, float], ...] | None, BeforeValidator(_bh)] = None
    bh_file: str | None = None
    density: Annotated[float, BeforeValidator(_density)] = STEEL_DENSITY
    _table: tuple | None = PrivateAttr(default=None)
    _source: str = PrivateAttr(default="")

    @model_validator(mode="after")
    def _one_law(self, info):
        given = [k for k in ("permeability", "bh", "bh_file") if getattr(self, k) is not None]
        if len(given) != 1:
            which = ", ".join(given) + " were given" if given else "none was given"
            raise Problem(("", "expected exactly one of 'permeability', 'bh' or 'bh_file'; "
                               + which))
        if self.id == DEFAULT_STEEL_ID:
            raise Problem((".id", f"the id '{DEFAULT_STEEL_ID}' is reserved for the shipped "
                                  "TEAM 13 steel; choose another id"))
        if self.bh is not None:
            self._table = bh_table(list(self.bh), lambda i: f".bh[{i}]")
            self._source = "inline table"
        elif self.bh_file is not None:
            path = Path(self.bh_file)
            if not path.is_absolute():
                path = Path(_unit(info, "base_dir", ".")) / path
            try:
                rows = read_bh_csv(path)
            except ValueError as exc:
                raise Problem((".bh_file", str(exc))) from None
            try:
                self._table = bh_table(rows, lambda i: f"data row {i + 1}")
            except Problem as exc:
                raise Problem(*((".bh_file", f"in '{path}'{' ' + sub if sub else ''}: {msg}")
                                for sub, msg in exc.items)) from None
            self._source = str(path)
        return self


def _plan_point(value, info):
    return _point(2)(value, info)


Point2 = Annotated[tuple[float, float] | None, BeforeValidator(_plan_point)]
OptionalLength = Annotated[float | None, BeforeValidator(
    lambda v, info: None if v is None else parse_quantity(
        v, "length", default_unit=_unit(info, "length_unit", "m")))]

_WALL = ("from", "to", "bottom", "top")
_HORIZONTAL = ("outline", "z")


class PlateItem(_Table):
    """One ``[[plates]]`` table: a wall plate or a horizontal plate, exactly one."""

    id: Ident = Field(description="an id such as 'P1'")
    floor: str = Field(description="the id of a floor")
    name: str = ""
    material: str = DEFAULT_STEEL_ID
    thickness: Annotated[float | None, BeforeValidator(_thickness)] = Field(
        description="a thickness such as '10 mm', or 'auto'")
    start: Point2 = Field(None, alias="from")
    to: Point2 = None
    bottom: OptionalLength = None
    top: OptionalLength = None
    outline: Annotated[tuple[tuple[float, float], ...] | None,
                       BeforeValidator(_outline)] = None
    z: OptionalLength = None
    panels: OptionalPositiveLength = None

    def _given(self, keys):
        return [k for k in keys if getattr(self, "start" if k == "from" else k) is not None]

    @model_validator(mode="after")
    def _one_geometry(self):
        wall, horizontal = self._given(_WALL), self._given(_HORIZONTAL)
        if wall and horizontal:
            raise Problem(("", "expected either a wall plate (from, to, bottom, top) or a "
                               "horizontal plate (outline, z), not both; got "
                               + ", ".join(wall + horizontal)))
        if not wall and not horizontal:
            raise Problem(("", "expected a wall plate (from, to, bottom, top) or a horizontal "
                               "plate (outline, z); neither was given"))
        keys, kind = (_WALL, "wall") if wall else (_HORIZONTAL, "horizontal")
        missing = [k for k in keys if k not in (wall or horizontal)]
        if missing:
            raise Problem(*((f".{k}", f"missing required key '{k}' (a {kind} plate needs "
                                      + ", ".join(keys) + ")") for k in missing))
        if wall:
            if self.start == self.to:
                raise Problem((".to", "expected a wall of length > 0: 'to' equals 'from'"))
            if not self.top > self.bottom:
                raise Problem((".top", f"expected top above bottom ({self.bottom:g} m), "
                                       f"got {self.top:g} m"))
        return self
