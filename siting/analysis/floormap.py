"""Field maps of floors: the band maximum on a grid fine enough for the lines drawn and checked.

:func:`map_floor` grids a floor (:func:`siting.analysis.grid.floor_grid`),
evaluates |B| at the check heights (:func:`siting.analysis.band.band_samples`)
and, unless the caller fixed the spacing, estimates how far the lines of
:func:`line_levels` are off there (:func:`siting.analysis.contours.line_error`,
the remainder of linear interpolation); when more than ``LINE_TOL`` (1 cm), the
floor is gridded again at the spacing that brings them within it (the error
falls as h^2).  The kept grid's band maximum is then searched between the
check heights (:func:`siting.analysis.band.band_max`) up to the highest level,
above which no line is drawn or checked.
"""

from __future__ import annotations

import math

from siting.analysis.band import band_max, band_samples
from siting.analysis.contours import LINE_TOL, line_error
from siting.analysis.grid import FloorField, floor_grid, refined
from siting.site.model import Site


def line_levels(site: Site, floor_id: str) -> tuple[float, ...]:
    """The levels whose lines matter on a floor [T]: the site's drawn levels, the
    access limit and the limits of the floor's rooms, ascending."""
    limits = (site.room_limit(r) for r in site.rooms if r.floor == floor_id)
    levels = {*site.info.levels, site.info.access_limit, *(v for v in limits if v is not None)}
    return tuple(sorted(float(v) for v in levels))


def map_floor(
    site: Site, scene, floor_id: str, *, spacing: float | None = None, polygons=None
) -> FloorField:
    """The band maximum on a floor's grid (:func:`siting.analysis.band.band_max`,
    searched between the check heights up to the highest of :func:`line_levels`).

    With ``spacing`` given, on :func:`floor_grid` at that spacing.  Without,
    :func:`floor_grid`'s automatic spacing is a first pass: when
    :func:`siting.analysis.contours.line_error` says a line of
    :func:`line_levels` is off by more than ``LINE_TOL`` there, the floor is
    gridded again at ``h sqrt(LINE_TOL / error)`` (the error falls as h^2) by
    :func:`siting.analysis.grid.refined`, and the finer map is returned.
    ``polygons``: :func:`siting.analysis.grid.room_polygons` of the floor's rooms, if already built.
    Raises SitingError for a floor with nothing to grid.
    """
    grid = floor_grid(site, floor_id, spacing=spacing, polygons=polygons)
    return map_grids(site, scene, {floor_id: grid}, spacing)[floor_id]


def map_grids(site: Site, scene, grids: dict, spacing: float | None, done=None) -> dict:
    """:func:`map_floor` for the floors of ``grids`` (id -> first grid), each
    stage for every floor before the next, so that the plan work between the
    field calls runs in one go; ``done(floor id)`` is called as each map is
    finished."""
    levels = {fid: line_levels(site, fid) for fid in grids}
    samples = {fid: band_samples(scene, g) for fid, g in grids.items()}
    kept = dict(grids)
    if spacing is None:
        # the spacing is judged on the check heights alone; a grid that is replaced
        # is not searched between them
        for fid, grid in grids.items():
            err = line_error(band_max(scene, grid, refine=False, samples=samples[fid]), levels[fid])
            if err > LINE_TOL:
                kept[fid] = refined(grid, grid.spacing * math.sqrt(LINE_TOL / err))
    out = {}
    for fid, g in kept.items():
        first = samples[fid] if g is grids[fid] else None
        out[fid] = band_max(scene, g, ceiling=levels[fid][-1], samples=first)
        if done is not None:
            done(fid)
    return out
