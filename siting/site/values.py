"""Value parsers of the site file: one function per kind of value.

Each takes the raw TOML value and pydantic's validation info (for the site's
length unit), returns SI, and raises :class:`Problem` naming what was expected.
The table models in :mod:`siting.site.schema` attach them to their fields.
"""

from __future__ import annotations

import datetime
import math
import re

from shapely.geometry import Polygon
from shapely.validation import explain_validity

from siting.site.units import parse_quantity, show_value, si_factor


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
