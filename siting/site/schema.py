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

from typing import Annotated, Literal

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, model_validator

from siting.site.units import format_field, parse_quantity
from siting.site.values import (
    Problem,
    _ambient,
    _axis,
    _central_field,
    _check_heights,
    _current,
    _ident,
    _length,
    _levels,
    _moment,
    _north,
    _outline,
    _path,
    _point,
    _positive_field,
    _positive_length,
    _text_or_date,
    _turns,
    _unit,
    _zone,
)

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
