"""Room, equipment and controlled-access checks on a site's stray field.

Room maximum.  A room is the prism of its plan outline times the check band
``[floor elevation + min(check_heights), floor elevation + max(check_heights)]``.
In a current-free region every Cartesian component B_i of B is harmonic, so
Laplacian(|B|^2) = 2 sum_i |grad B_i|^2 >= 0: |B|^2 is subharmonic and its
maximum over the prism lies on the prism's boundary (weak maximum principle,
e.g. L. C. Evans, *Partial Differential Equations*, 2nd ed., 2010, sec. 2.2.3;
section number from memory).  The boundary is the two band faces and the
walls, so the search covers

* the faces: starts at the local maxima of the band maximum among the grid
  nodes inside the room, put on the nearer band face, refined by a pattern
  search in (x, y) whose trials that leave the outline stop where they first
  cross it;
* the walls: samples along the outline at the grid spacing, valued by
  interpolating the band maximum (the model itself next to undefined nodes),
  refined from the best local maxima by a pattern search in (arc length
  along the outline, z), z bounded to the band.

The pattern search (:mod:`siting.analysis.roomsearch`) is a derivative-free
local optimiser run for all starts of all rooms of every floor at once, so
each iteration is one vectorised ``scene.magnitude`` call; it stops when its
step falls below 1e-2 grid spacings, so the reported maximum (always a value
the model gave at a point of the prism) does not depend on the grid spacing.

Undefined model (NaN: inside a magnet's envelope or on a conductor).  The
maximum is taken over the valid points only; a room in which any sampled
point is undefined gets ``inside_envelope=True`` (the room overlaps the magnet
or conductor itself) and fails when it has a limit.

Margin.  ``margin_m`` is :func:`siting.analysis.contours.clearance` of the
room's outline from R, the plan region where the band maximum is >= the
room's limit: the gap between the line and the room when positive (``+inf``
when R is empty on the grid), minus the depth of the room's deepest point
inside R when negative (how far the line would have to recede).
``area_over_m2`` is the area of the outline inside R.

Because R comes from the grid while ``max_T`` is refined, the margin's sign is
clamped to agree with the status: 0 when they disagree.  A conductor or magnet
inside the prism breaks the maximum principle (|B| is unbounded near a wire);
such rooms are recognised only when a sample lands in the undefined set.  With
a source inside the prism the largest grid-node value of the band maximum is
kept when it exceeds the boundary search: the field is unbounded at such a
source, so that value depends on the grid spacing and only says "over".
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon

from siting.analysis.contours import clearances_and_areas, level_region
from siting.analysis.floormap import map_grids
from siting.analysis.grid import FloorField, floor_grid, room_polygons, room_widths
from siting.analysis.roommax import room_maxima
from siting.errors import SitingError
from siting.site.model import Equipment, Room, Site

#: Uncovered area below which the access region counts as contained [m^2].
CONTAINED_TOL = 1e-6


@dataclass(frozen=True, eq=False)
class RoomResult:
    """Outcome of one room's check (see the module docstring)."""

    id: str
    floor: str
    zone: int
    limit_T: float | None
    max_T: float  # max |B| over the valid points of the prism [T]
    at_m: np.ndarray  # (3,) absolute position of max_T [m]
    margin_m: float | None  # None without a limit
    area_over_m2: float  # plan area of the room inside its limit line; 0 without a limit
    status: str  # "pass", "fail" or "info" (no limit)
    inside_envelope: bool


@dataclass(frozen=True, eq=False)
class EquipmentResult:
    """|B| at an item of equipment; NaN (and "fail") where the model is undefined."""

    id: str
    floor: str
    limit_T: float
    field_T: float
    status: str  # "pass" or "fail"


@dataclass(frozen=True, eq=False)
class AccessResult:
    """Whether the zone 3 and 4 rooms of a floor contain its access-limit region."""

    floor: str
    access_limit_T: float
    contained: bool
    uncovered: MultiPolygon  # part of the region outside every zone 3/4 room
    uncovered_area_m2: float
    uncovered_point: np.ndarray | None  # (2,) a point inside the largest uncovered piece
    line_area_m2: float = 0.0  # area of the access-limit region on the floor (0: no line)


@dataclass(frozen=True, eq=False)
class SiteResult:
    """Everything :func:`check_site` computed."""

    floor_fields: dict = field(default_factory=dict)  # floor id -> FloorField
    rooms: tuple = ()
    equipment: tuple = ()
    access: tuple = ()
    failures: int = 0


def _room_result(site, room, mx, at, nan_seen, margin, area):
    """The result of a room from its search (mx, at, nan_seen) and, with a limit,
    its :func:`~siting.analysis.contours.clearance_and_area` from its region."""
    limit = site.room_limit(room)
    if limit is None:
        status, margin, area = "info", None, 0.0
    else:
        status = "fail" if (nan_seen or not mx < limit) else "pass"
        margin, area = float(margin), float(area) if margin < 0 else 0.0
        if (status == "fail") != (margin < 0):
            margin = 0.0
    return RoomResult(
        room.id,
        room.floor,
        room.zone,
        limit,
        float(mx),
        np.asarray(at, dtype=np.float64),
        margin,
        area,
        status,
        bool(nan_seen),
    )


def _outlines(rooms, polys=None, bad=None):
    """The rooms' polygons for the room search (``polys``: :func:`room_polygons`
    of them, if already built; ``bad``: their invalid ones, if known),
    self-intersecting ones replaced (below)."""
    polys = room_polygons([r.outline for r in rooms]) if polys is None else polys.copy()
    bad = ~shapely.is_valid(polys) if bad is None else bad
    # a self-intersecting outline is checked over its convex hull, which contains
    # it: the maximum found is then an upper bound (on the safe side)
    for i in np.flatnonzero(bad):
        p = shapely.make_valid(polys[i])
        polys[i] = p if isinstance(p, Polygon) else p.convex_hull
    return polys


def _made_valid(polys, bad=None):
    """``polys`` with each invalid one replaced by ``shapely.make_valid`` of it
    (for covering: the repaired area, not more)."""
    bad = ~shapely.is_valid(polys) if bad is None else bad
    if not bad.any():
        return polys
    polys = polys.copy()
    polys[bad] = shapely.make_valid(polys[bad])
    return polys


def _search_rooms(scene, floors):
    """The maxima of the rooms of ``floors``, a sequence of (rooms, floor_field,
    polygons), ``polygons`` the rooms' :func:`_outlines` or None: one search
    (:func:`room_maxima`) for every floor.  Returns (max, at, nan_seen) per room
    and the polygons used per floor."""
    polys = [_outlines(rooms) if p is None else p for rooms, _, p in floors]
    found = room_maxima(scene, [(p, ff) for (_, ff, _), p in zip(floors, polys, strict=True)])
    return found, polys


def _room_results(site, floors, found):
    """Room results from :func:`_search_rooms`'s ``found`` for ``floors``: a
    sequence of (rooms, floor_field, regions, polygons), ``regions`` a dict
    level -> :func:`level_region`, filled as needed."""
    mx, at, nan_seen = found
    out, k = [], 0
    for rooms, ff, regions, polys in floors:
        limits = [site.room_limit(r) for r in rooms]
        margin, area = np.zeros(len(rooms)), np.zeros(len(rooms))
        for limit in {v for v in limits if v is not None}:
            if limit not in regions:
                regions[limit] = level_region(ff, limit)
            mine = np.array([v == limit for v in limits], dtype=bool)
            margin[mine], area[mine] = clearances_and_areas(polys[mine], regions[limit])
        for j, room in enumerate(rooms):
            out.append(_room_result(site, room, mx[k], at[k], nan_seen[k], margin[j], area[j]))
            k += 1
    return out


def check_room(site: Site, scene, room: Room, floor_field: FloorField) -> RoomResult:
    """Check one room against its limit (method: module docstring).

    Parameters
    ----------
    site : Site
        Gives the room's limit (``Site.room_limit``).
    scene : object with ``magnitude(points (n, 3) [m]) -> (n,) [T]``
        The field model, evaluated in a few vectorised calls.
    room : Room
        The room to check.
    floor_field : FloorField
        The band maximum on the room's floor.

    Returns
    -------
    RoomResult
    """
    if room.floor != floor_field.grid.floor:
        raise ValueError(
            f"room {room.id!r} is on floor {room.floor!r}, "
            f"the field map on {floor_field.grid.floor!r}"
        )
    found, (polys,) = _search_rooms(scene, [([room], floor_field, None)])
    return _room_results(site, [([room], floor_field, {}, polys)], found)[0]


def _check_equipment_all(scene, items):
    if not items:
        return []
    b = np.asarray(scene.magnitude(np.array([e.at for e in items], dtype=np.float64)))
    return [
        EquipmentResult(e.id, e.floor, float(e.limit), float(v), "pass" if v < e.limit else "fail")
        for e, v in zip(items, b, strict=True)
    ]


def check_equipment(site: Site, scene, equipment: Equipment) -> EquipmentResult:
    """|B| at an item of equipment against its limit; NaN there fails."""
    site.floor(equipment.floor)  # KeyError for an unknown floor
    return _check_equipment_all(scene, [equipment])[0]


def access_boundary(
    site: Site, floor_field: FloorField, *, region=None, polygons=None
) -> AccessResult:
    """Whether the zone 3 and 4 rooms of the floor contain the access-limit region.

    Parameters
    ----------
    site : Site
        Gives the access limit and the zone 3 and 4 rooms.
    floor_field : FloorField
        Band maximum on the floor to check.
    region : shapely geometry, optional
        :func:`level_region` at ``site.info.access_limit``, if already computed.
    polygons : array of shapely Polygons, optional
        :func:`room_polygons` of the floor's rooms (in the site's order), if
        already built, with any invalid one made valid (``shapely.make_valid``).

    Returns
    -------
    AccessResult
        ``contained`` when the uncovered area is below ``CONTAINED_TOL``.
    """
    fid = floor_field.grid.floor
    limit = float(site.info.access_limit)
    if region is None:
        region = level_region(floor_field, limit)
    floor_rooms = [r for r in site.rooms if r.floor == fid]
    if polygons is None:
        polygons = _made_valid(room_polygons([r.outline for r in floor_rooms]))
    parts, areas = np.empty(0, dtype=object), np.zeros(0)
    if not region.is_empty:  # (no line on the floor: nothing to contain)
        rooms = polygons[np.array([r.zone in (3, 4) for r in floor_rooms], dtype=bool)]
        rest = region.difference(shapely.union_all(rooms)) if len(rooms) else region
        parts = shapely.get_parts(rest)
        areas = shapely.area(parts)
        keep = (shapely.get_type_id(parts) == 3) & (areas > 0)
        parts, areas = parts[keep], areas[keep]
    uncovered = shapely.multipolygons(parts)
    area = float(areas.sum())
    point = None
    if len(parts):
        q = parts[np.argmax(areas)].representative_point()
        point = np.array([q.x, q.y])
    return AccessResult(
        fid, limit, area < CONTAINED_TOL, uncovered, area, point, float(region.area)
    )


def check_site(
    site: Site,
    scene,
    *,
    spacing: float | None = None,
    progress: Callable[[str, int, int], None] | None = None,
) -> SiteResult:
    """Field maps, room, equipment and access checks for every floor.

    Parameters
    ----------
    site : Site
        The site to check.
    scene : object with ``magnitude(points (n, 3) [m]) -> (n,) [T]``
        The site's field model (e.g. ``siting.site.build.build_scene(site)``).
    spacing : float, optional
        Grid spacing [m] for every floor (default: chosen per floor by
        :func:`siting.analysis.floormap.map_floor` from the rooms and the accuracy of the lines).
    progress : callable(step, i, n), optional
        Called after each step: ``("field", i, n)`` and ``("rooms", i, n)``
        per floor (i = 1..n floors), then ``("equipment", 1, 1)``.
        Floors with nothing to grid (no rooms, equipment or sources) are skipped.

    Returns
    -------
    SiteResult
        ``failures`` counts failed rooms and equipment and floors whose access
        region is not contained.
    """
    report = progress or (lambda step, i, n: None)
    access_limit = float(site.info.access_limit)
    n = len(site.floors)
    number = {fl.id: i for i, fl in enumerate(site.floors, start=1)}
    every = room_polygons([r.outline for r in site.rooms])  # once for all floors
    widths = room_widths(every)
    bad = ~shapely.is_valid(every)
    searched, covering = _outlines(site.rooms, every, bad), _made_valid(every, bad)
    grids, here = {}, {}
    for fl in site.floors:
        on = here[fl.id] = np.array([r.floor == fl.id for r in site.rooms], dtype=bool)
        try:
            grids[fl.id] = floor_grid(
                site, fl.id, spacing=spacing, polygons=every[on], widths=widths[on]
            )
        except SitingError:
            continue  # nothing to grid on this floor
    fields = map_grids(site, scene, grids, spacing, lambda fid: report("field", number[fid], n))
    floors = [
        (fid, [r for r in site.rooms if r.floor == fid], ff, {}) for fid, ff in fields.items()
    ]
    # every field call first (the maps above, the room search, the equipment),
    # then the plan geometry of every floor in one run: the caches the field
    # evaluation leaves cold warm up once, not once per floor or per stage
    found, polys = _search_rooms(scene, [(r, ff, searched[here[fid]]) for fid, r, ff, _ in floors])
    equipment = _check_equipment_all(scene, list(site.equipment))
    access = []
    for fid, floor_rooms, ff, regions in floors:
        limits = {site.room_limit(r) for r in floor_rooms} - {None}
        # lowest level first: its contour generator serves the higher ones
        regions.update((lev, level_region(ff, lev)) for lev in sorted({access_limit, *limits}))
        cover = covering[here[fid]]
        access.append(access_boundary(site, ff, region=regions[access_limit], polygons=cover))
    by_floor = [(r, ff, reg, p) for (_, r, ff, reg), p in zip(floors, polys, strict=True)]
    results = iter(_room_results(site, by_floor, found))
    rooms = []
    for fid, floor_rooms, *_ in floors:
        rooms += [next(results) for _ in floor_rooms]
        report("rooms", number[fid], n)
    report("equipment", 1, 1)
    failures = (
        sum(r.status == "fail" for r in rooms)
        + sum(e.status == "fail" for e in equipment)
        + sum(not a.contained for a in access)
    )
    return SiteResult(fields, tuple(rooms), tuple(equipment), tuple(access), int(failures))
