"""Pydantic models of the site file's tables, one per kind of item.

The models check one table at a time and convert every value to SI (m, T, A,
A m^2); heights (z) are still relative to the item's floor here.  Checks that
span tables (unique ids, floor references, absolute z) are the loader's.

Value rules (the public contract of the site file):

* coordinates (``outline``, ``center``, ``path``, ``at``) and scalar lengths
  (``elevation``, ``height``, ``radius``, ``length``, ``envelope``, ``offset``,
  extents' ``axial`` and ``radial``, ``check_heights``) are quantity strings
  ("2.5 m", "8 ft") or bare numbers in the site's ``length_unit``;
* flux densities (``field``, ``levels``, ``limit``, ``access_limit``,
  ``ambient``, extents' ``level``) and currents need a unit ("0.5 mT", "400 A");
* ``moment`` elements are bare numbers in A m^2 or quantity strings;
* ``axis`` elements and ``turns`` are plain numbers; ``north`` is degrees;
* ids are letters, digits, '-', '_' and '.'; names default to the id;
* room outlines: a closing corner equal to the first and repeated consecutive
  corners are dropped; at least 3 distinct corners, not collinear, not
  crossing itself (shapely's validity test);
* ``levels`` and ``check_heights`` must not repeat a value (after conversion,
  so "1 mT" and "10 G" are the same); they are stored ascending.

Validators raise :class:`Problem`, which carries key sub-paths below the field
so that the loader can point at e.g. ``outline[2][1]``.
"""

from __future__ import annotations

import datetime
import math
import re
from typing import Annotated, Literal

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, model_validator
from shapely.geometry import Polygon
from shapely.validation import explain_validity

from siting.site.units import format_field, parse_quantity, show_value, si_factor

__all__ = [
    "DEFAULT_CHECK_HEIGHTS",
    "DEFAULT_LEVELS",
    "CableItem",
    "CoilItem",
    "DipoleItem",
    "EquipmentItem",
    "ExtentItem",
    "FloorItem",
    "MagnetCoilItem",
    "MagnetItem",
    "Problem",
    "RoomItem",
    "SiteSection",
]


class Problem(ValueError):
    """Problems found in one field: ``items`` are (sub-path, message) pairs.

    A sub-path such as ``"[2][1]"`` or ``".extents[0].level"`` is appended to
    the field's own key path; ``""`` means the field itself.
    """

    def __init__(self, *items: tuple[str, str]):
        self.items = tuple(items)
        super().__init__("; ".join(message for _, message in self.items))


def _unit(info, key: str, default: str) -> str:
    context = getattr(info, "context", None) or {}
    return context.get(key, default)


def _finite_number(value) -> bool:
    """True for an int or float (not a bool) that is finite as a float."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(value)
    except OverflowError:  # an integer beyond the float range
        return False


def _length(value, info) -> float:
    return parse_quantity(value, "length", default_unit=_unit(info, "length_unit", "m"))


def _positive_length(value, info) -> float:
    x = _length(value, info)
    if x <= 0.0:
        raise ValueError(f"expected a length > 0 such as '0.5 m', got {show_value(value)}")
    return x


def _field(value, info) -> float:
    return parse_quantity(value, "field")


def _positive_field(value, info) -> float:
    x = parse_quantity(value, "field")
    if x <= 0.0:
        raise ValueError(
            f"expected a magnetic flux density > 0 such as '0.5 mT', got {show_value(value)}"
        )
    return x


def _central_field(value, info) -> float:
    x = parse_quantity(value, "field", example="'1.5 T'")
    if x <= 0.0:
        raise ValueError(f"expected a central field > 0 such as '1.5 T', got {show_value(value)}")
    return x


def _current(value, info) -> float:
    return parse_quantity(value, "current")


def _turns(value, info) -> float:
    if not _finite_number(value) or value <= 0:
        raise ValueError(f"expected a number of turns > 0 such as 200, got {show_value(value)}")
    return float(value)


def _north(value, info) -> float:
    if not _finite_number(value):
        raise ValueError(f"expected a number of degrees such as 15, got {show_value(value)}")
    return float(value)


def _zone(value, info) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= 4:
        raise ValueError(f"expected a zone number 1, 2, 3 or 4, got {show_value(value)}")
    return value


_ID_RE = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.\-]{0,63}")


def _ident(value, info) -> str:
    if not isinstance(value, str) or not _ID_RE.fullmatch(value):
        raise ValueError(
            "expected an id such as 'MR1' (letters, digits, '-', '_', '.'; "
            f"at most 64), got {show_value(value)}"
        )
    return value


def _text_or_date(value, info) -> str:
    if isinstance(value, (datetime.date, datetime.time)):  # datetime is a date
        return value.isoformat()
    if not isinstance(value, str):
        raise ValueError(f"expected a string such as '2026-05-01', got {show_value(value)}")
    return value


def _elements(value, parse, n: int | None, what: str, *, min_n: int = 0) -> list:
    """Apply ``parse`` to each element of a list, collecting element problems."""
    if not isinstance(value, list) or (n is not None and len(value) != n) or len(value) < min_n:
        raise Problem(("", f"expected {what}, got {show_value(value)}"))
    out, problems = [], []
    for i, element in enumerate(value):
        try:
            out.append(parse(element))
        except Problem as exc:
            problems.extend((f"[{i}]{sub}", msg) for sub, msg in exc.items)
        except ValueError as exc:
            problems.append((f"[{i}]", str(exc)))
    if problems:
        raise Problem(*problems)
    return out


def _point(n: int):
    what = "a point [x, y]" if n == 2 else "a point [x, y, z] (z above the floor)"

    def parse(value, info) -> tuple[float, ...]:
        unit = _unit(info, "length_unit", "m")
        return tuple(
            _elements(value, lambda v: parse_quantity(v, "length", default_unit=unit), n, what)
        )

    return parse


def _axis(value, info) -> tuple[float, float, float]:
    def number(v):
        if not _finite_number(v):
            raise ValueError(f"expected a finite number, got {show_value(v)}")
        return float(v)

    vec = _elements(value, number, 3, "a direction [ax, ay, az] of plain numbers")
    scale = max(abs(c) for c in vec)
    if scale == 0.0:
        raise ValueError(
            f"expected a non-zero direction such as [0, 0, 1], got {show_value(value)}"
        )
    vec = [c / scale for c in vec]  # scaled first: no overflow for huge components
    norm = math.sqrt(sum(c * c for c in vec))
    return tuple(c / norm for c in vec)


def _moment(value, info) -> tuple[float, float, float]:
    return tuple(
        _elements(
            value,
            lambda v: parse_quantity(v, "moment", default_unit="A*m**2"),
            3,
            "a moment [mx, my, mz] in A m^2",
        )
    )


def _ambient(value, info) -> tuple[float, float, float]:
    return tuple(
        _elements(value, lambda v: parse_quantity(v, "field"), 3, "a field [bx, by, bz]")
    )


def _distinct_sorted(values: list[float], raw: list, what: str, key: str) -> tuple[float, ...]:
    seen: dict[float, int] = {}
    problems = []
    for i, x in enumerate(values):
        if x in seen:
            first = seen[x]
            problems.append((f"[{i}]", f"duplicate {what} {show_value(raw[i])} "
                                       f"(the same as {key}[{first}], {show_value(raw[first])})"))
        seen.setdefault(x, i)
    if problems:
        raise Problem(*problems)
    return tuple(sorted(values))


def _levels(value, info) -> tuple[float, ...]:
    what = "a list of field levels such as ['0.5 mT', '1 mT']"
    values = _elements(value, lambda v: _positive_field(v, info), None, what, min_n=1)
    return _distinct_sorted(values, value, "level", "levels")


def _check_heights(value, info) -> tuple[float, ...]:
    def height(v):
        x = _length(v, info)
        if x < 0.0:
            raise ValueError(f"expected a height >= 0 above the floor, got {show_value(v)}")
        return x

    what = "a list of heights above the floor such as ['0 m', '1 m', '2 m']"
    values = _elements(value, height, None, what, min_n=1)
    return _distinct_sorted(values, value, "height", "check_heights")


def _coordinate(x: float, unit: str) -> str:
    text = f"{x / si_factor(unit, 'length'):.3f}".rstrip("0")
    return text + "0" if text.endswith(".") else text


def _collinear(corners: list[tuple[float, float]]) -> bool:
    """True if all corners lie on one line (to 1e-9 of the span, squared)."""
    x0, y0 = corners[0]
    far = max(corners, key=lambda c: (c[0] - x0) * (c[0] - x0) + (c[1] - y0) * (c[1] - y0))
    dx, dy = far[0] - x0, far[1] - y0
    span2 = dx * dx + dy * dy
    return all(abs(dx * (y - y0) - dy * (x - x0)) <= 1e-9 * span2 for x, y in corners)


def _outline(value, info) -> tuple[tuple[float, float], ...]:
    unit = _unit(info, "length_unit", "m")
    what = "a polygon [[x, y], ...] with at least 3 corners"
    corners = _elements(value, lambda v: _point(2)(v, info), None, what)
    if len(corners) > 1 and corners[-1] == corners[0]:
        corners.pop()  # a closing corner is optional
    corners = [c for i, c in enumerate(corners) if i == 0 or c != corners[i - 1]]
    if len(set(corners)) < 3:
        raise ValueError(f"expected {what}, got {len(set(corners))} distinct corner(s)")
    if _collinear(corners):
        raise ValueError("polygon has zero area (its corners are collinear)")
    poly = Polygon(corners)
    if not poly.is_valid:
        reason = explain_validity(poly)
        where = re.search(r"\[\s*(\S+)\s+(\S+)\s*\]", reason)
        near = ""
        if where:
            x, y = (_coordinate(float(where[k]), unit) for k in (1, 2))
            near = f" near ({x}, {y})"
        if "self-intersection" in reason.lower():
            raise ValueError(f"polygon crosses itself{near}")
        raise ValueError(f"polygon is not valid ({reason.split('[')[0]}){near}")
    return tuple(corners)


def _path(value, info) -> tuple[tuple[float, float, float], ...]:
    what = "a path [[x, y, z], ...] of at least 2 points"
    points = _elements(value, lambda v: _point(3)(v, info), None, what, min_n=2)
    for i in range(1, len(points)):
        if points[i] == points[i - 1]:
            raise Problem((f"[{i}]", "point repeats the previous one (a segment needs two ends)"))
    return tuple(points)


def _v(func, tp=float):
    return Annotated[tp, BeforeValidator(func)]


Length = _v(_length)
PositiveLength = _v(_positive_length)
OptionalPositiveLength = _v(_positive_length, float | None)
PositiveField = _v(_positive_field)
OptionalPositiveField = _v(_positive_field, float | None)
Current = _v(_current)
Turns = _v(_turns)
Ident = _v(_ident, str)
Point3 = _v(_point(3), tuple[float, float, float])
Axis = _v(_axis, tuple[float, float, float])


def _default(func, *texts):
    return tuple(sorted(func(t, None) for t in texts))


DEFAULT_LEVELS = _default(_positive_field, "0.1 mT", "0.2 mT", "0.5 mT", "1 mT", "3 mT",
                          "5 mT", "20 mT")
DEFAULT_CHECK_HEIGHTS = _default(_length, "0 m", "0.5 m", "1.0 m", "1.5 m", "2.0 m")
# IEC 60601-2-33 3rd edition controlled-access level; the 4th edition (2022)
# uses 0.9 mT: the site file chooses.
DEFAULT_ACCESS_LIMIT = parse_quantity("0.5 mT", "field")


class _Table(BaseModel):
    """A TOML table: unknown keys are errors."""

    model_config = ConfigDict(extra="forbid")


class SiteSection(_Table):
    """The ``[site]`` table: names, units, levels and title-block fields."""

    name: str = Field(description="the site's name")
    length_unit: Literal["m", "ft"] = "m"
    field_unit: Literal["mT", "G", "uT"] = "mT"
    levels: _v(_levels, tuple[float, ...]) = DEFAULT_LEVELS
    check_heights: _v(_check_heights, tuple[float, ...]) = DEFAULT_CHECK_HEIGHTS
    access_limit: PositiveField = DEFAULT_ACCESS_LIMIT
    ambient: _v(_ambient, tuple[float, float, float] | None) = None
    revision: str = ""
    date: _v(_text_or_date, str) = ""
    prepared_by: str = ""
    checked_by: str = ""
    north: _v(_north) = 0.0


class FloorItem(_Table):
    """One ``[[floors]]`` table."""

    id: Ident = Field(description="an id such as 'G'")
    name: str = ""
    elevation: Length = Field(description="the finished floor level above the datum, e.g. '0 m'")
    height: PositiveLength = Field(description="the floor-to-floor height, e.g. '4 m'")


class RoomItem(_Table):
    """One ``[[rooms]]`` table; the outline is checked to be a simple polygon."""

    id: Ident = Field(description="an id such as 'MR'")
    floor: str = Field(description="the id of a floor")
    name: str = ""
    zone: _v(_zone, int) = Field(description="a zone number 1, 2, 3 or 4")
    outline: _v(_outline, tuple[tuple[float, float], ...]) = Field(
        description="a polygon [[x, y], ...] with at least 3 corners")
    limit: OptionalPositiveField = None


class ExtentItem(_Table):
    """One isogauss extent of a magnet: a level and its axial and radial reach."""

    level: PositiveField = Field(description="a field level such as '0.5 mT'")
    axial: PositiveLength = Field(description="the distance along the bore, e.g. '4 m'")
    radial: PositiveLength = Field(description="the distance across the bore, e.g. '2.5 m'")


class MagnetCoilItem(_Table):
    """One winding of a magnet, in the magnet's frame."""

    radius: PositiveLength = Field(description="the winding's mean radius, e.g. '0.5 m'")
    offset: Length = 0.0
    turns: Turns = Field(description="a number of turns > 0")
    current: Current = Field(description="a current such as '100 A'")
    length: OptionalPositiveLength = None


class MagnetItem(_Table):
    """One ``[[magnets]]`` table: extents or windings, exactly one of them."""

    id: Ident = Field(description="an id such as 'MR1'")
    floor: str = Field(description="the id of a floor")
    name: str = ""
    center: Point3 = Field(description="the isocentre [x, y, z] (z above the floor)")
    axis: Axis = Field(description="the bore direction [ax, ay, az]")
    field: _v(_central_field) = Field(description="the central field such as '1.5 T'")
    extents: tuple[ExtentItem, ...] = ()
    envelope: OptionalPositiveLength = None
    coils: tuple[MagnetCoilItem, ...] = ()

    @model_validator(mode="after")
    def _one_description(self, info):
        if bool(self.extents) == bool(self.coils):
            which = "both were given" if self.extents else "neither was given"
            raise Problem(("", "expected exactly one of 'extents' (isogauss distances) or "
                               f"'coils' (windings); {which}"))
        unit = _unit(info, "field_unit", "mT")
        problems, seen = [], {}
        for i, ext in enumerate(self.extents):
            if ext.level >= self.field:
                problems.append((f".extents[{i}].level",
                                 f"expected a level below the central field "
                                 f"{format_field(self.field, 'T')}, got "
                                 f"{format_field(ext.level, 'T')}"))
            if ext.level in seen:
                problems.append((f".extents[{i}].level",
                                 f"duplicate level {format_field(ext.level, unit)} "
                                 f"(the same as extents[{seen[ext.level]}])"))
            seen.setdefault(ext.level, i)
        if problems:
            raise Problem(*problems)
        return self


class CoilItem(_Table):
    """One ``[[coils]]`` table; a solenoid needs a length, a loop has none."""

    id: Ident = Field(description="an id such as 'C1'")
    floor: str = Field(description="the id of a floor")
    kind: Literal["loop", "solenoid"] = Field(description="'loop' or 'solenoid'")
    center: Point3 = Field(description="the centre [x, y, z] (z above the floor)")
    axis: Axis = Field(description="the coil axis [ax, ay, az]")
    radius: PositiveLength = Field(description="the radius, e.g. '0.5 m'")
    length: OptionalPositiveLength = None
    turns: Turns = Field(description="a number of turns > 0")
    current: Current = Field(description="a current such as '10 A'")

    @model_validator(mode="after")
    def _length_for_solenoids(self):
        if self.kind == "solenoid" and self.length is None:
            raise Problem((".length", "missing required key 'length' "
                                      "(a solenoid needs its length, e.g. '0.5 m')"))
        if self.kind == "loop" and self.length is not None:
            raise Problem((".length", "unexpected key 'length': a loop has no length "
                                      "(use kind = 'solenoid')"))
        return self


class CableItem(_Table):
    """One ``[[cables]]`` table; current flows from the first point to the last."""

    id: Ident = Field(description="an id such as 'FEED1'")
    floor: str = Field(description="the id of a floor")
    path: _v(_path, tuple[tuple[float, float, float], ...]) = Field(
        description="a path [[x, y, z], ...] of at least 2 points")
    current: Current = Field(description="a current such as '400 A'")


class DipoleItem(_Table):
    """One ``[[dipoles]]`` table."""

    id: Ident = Field(description="an id such as 'TX1'")
    floor: str = Field(description="the id of a floor")
    center: Point3 = Field(description="the centre [x, y, z] (z above the floor)")
    moment: _v(_moment, tuple[float, float, float]) = Field(
        description="a moment [mx, my, mz] in A m^2")


class EquipmentItem(_Table):
    """One ``[[equipment]]`` table: a sensitive device and the field it tolerates."""

    id: Ident = Field(description="an id such as 'CT1'")
    floor: str = Field(description="the id of a floor")
    name: str = ""
    at: Point3 = Field(description="the position [x, y, z] (z above the floor)")
    limit: PositiveField = Field(description="the field the equipment tolerates, e.g. '0.1 mT'")
