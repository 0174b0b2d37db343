"""The plan view of one floor: field bands, isogauss lines, rooms, sources, labels.

Everything is drawn in plan coordinates [m] on a true-scale axes (see
:mod:`siting.export.layout`).  Bands are the regions of
:func:`siting.analysis.contours.level_region` stacked from the lowest level
up, so the drawing shows exactly the polygons the checks and the DXF use.
"""

from __future__ import annotations

import numpy as np
from matplotlib import patheffects
from matplotlib.patches import PathPatch
from matplotlib.patches import Polygon as MplPolygon
from shapely.geometry import Polygon

from siting.analysis.contours import contour_values, level_lines, level_region
from siting.export import shapes
from siting.export.labels import (
    Candidate,
    LabelPlacer,
    field_text,
    ring_offsets,
    room_max_text,
    zone_text,
)
from siting.export.palette import FAIL, LINE, PASS, ROOM_EDGE, band_colours

HALO = [patheffects.withStroke(linewidth=2.2, foreground="white")]
LABEL_BOX = {"facecolor": "white", "edgecolor": "none", "pad": 0.6, "alpha": 0.9}
SECTION_LETTERS = "ABCDEFGHJKLMNPQRSTUVWXYZ"


def floors_to_draw(site, result) -> list[str]:
    """Floors (site order) whose field reaches the lowest level anywhere on the grid."""
    lowest = min(site.info.levels)
    out = []
    for floor in site.floors:
        ff = result.floor_fields.get(floor.id)
        if ff is not None and np.any(contour_values(ff) >= lowest):
            out.append(floor.id)
    return out


def plan_bounds(result, floor_id: str) -> tuple[float, float, float, float]:
    """The drawn extent of a floor: its calculation grid [m]."""
    return result.floor_fields[floor_id].grid.bounds


def regions(site, result, floor_id: str) -> dict[float, object]:
    """level [T] -> level_region on this floor, for every site level and room limit."""
    ff = result.floor_fields[floor_id]
    wanted = set(site.info.levels)
    for room in site.rooms:
        lim = site.room_limit(room)
        if room.floor == floor_id and lim is not None:
            wanted.add(lim)
    return {lv: level_region(ff, lv) for lv in sorted(wanted)}


def violations(site, result, floor_id: str, regs=None) -> list[tuple[object, object, float]]:
    """(room, area over its limit (shapely), limit [T]) for rooms of the floor that exceed it."""
    regs = regions(site, result, floor_id) if regs is None else regs
    out = []
    for room in site.rooms:
        lim = site.room_limit(room)
        if room.floor != floor_id or lim is None:
            continue
        over = Polygon(room.outline).intersection(regs[lim])
        if over.area > 1e-6:
            out.append((room, over, lim))
    return out


def section_cuts(site, floor_id: str) -> list[tuple[str, object, np.ndarray, str]]:
    """(letter, magnet, horizontal unit direction, "along"/"across") for magnets on the floor."""
    cuts = []
    k = 0
    for mag in site.magnets:
        along, across = cut_directions(mag)
        for d, how in ((along, "along"), (across, "across")):
            if mag.floor == floor_id:
                cuts.append((SECTION_LETTERS[k % len(SECTION_LETTERS)], mag, d, how))
            k += 1
    return cuts


def cut_directions(magnet) -> tuple[np.ndarray, np.ndarray]:
    """Horizontal unit directions along and across the bore (x and y for a vertical bore)."""
    h = np.asarray(magnet.axis[:2], dtype=float)
    n = np.linalg.norm(h)
    along = np.array([1.0, 0.0]) if n < 1e-6 else h / n
    return along, np.array([-along[1], along[0]])


def draw_bands(ax, site, regs) -> None:
    colours = band_colours(len(site.info.levels))
    for colour, level in zip(colours, site.info.levels, strict=True):
        path = shapes.region_path(regs[level])
        if path is not None:
            ax.add_patch(PathPatch(path, facecolor=colour, edgecolor="none", zorder=1))


def draw_lines(ax, site, result, floor_id, placer, units, font) -> None:
    ff = result.floor_fields[floor_id]
    span = ax.get_xlim()[1] - ax.get_xlim()[0]
    mm_per_m = ax.get_window_extent().width / ax.figure.dpi * 25.4 / span
    access = site.info.access_limit
    for i, level in enumerate(site.info.levels):
        width = 1.3 if np.isclose(level, access) else 0.7
        shift = (0.13 * i) % 1.0  # stagger the labels of nested lines
        for line in level_lines(ff, level):
            ax.plot(line[:, 0], line[:, 1], color=LINE, linewidth=width, zorder=4,
                    path_effects=HALO, solid_joinstyle="round")
            length_mm = shapes.polyline_length(line) * mm_per_m
            if length_mm < 25.0:
                continue
            fracs = [(f + shift) % 1.0 for f in (0.5, 0.3, 0.7, 0.15, 0.85, 0.4, 0.6, 0.05, 0.95)]
            if not np.allclose(line[0], line[-1]):
                fracs = [0.5 + 0.9 * (f - 0.5) for f in fracs]  # keep off open ends
            cands = [Candidate(*p) for p in shapes.positions_along(line, fracs)]
            placer.place(field_text(level, units), cands, fontsize=font - 1.0, bbox=LABEL_BOX,
                         color=LINE)


def draw_rooms(ax, site, result, floor_id, placer, units, font, fail_ids) -> None:
    by_id = {r.id: r for r in result.rooms}
    rooms = [r for r in site.rooms if r.floor == floor_id]
    for room in rooms:
        failing = room.id in fail_ids
        ax.add_patch(MplPolygon(room.outline, closed=True, fill=False, zorder=5,
                                edgecolor=FAIL if failing else ROOM_EDGE,
                                linewidth=1.6 if failing else 1.0, joinstyle="miter"))
    for room in rooms:
        res = by_id.get(room.id)
        lim = site.room_limit(room)
        lines = [room.name, zone_text(room.zone) + (
            f", limit {field_text(lim, units)}" if lim is not None else ", no limit")]
        if res is not None:
            state = {"fail": " FAIL", "pass": " pass"}.get(res.status, "")
            lines.append(f"max {room_max_text(site, res, units)}" + state)
        p = shapes.label_point(Polygon(room.outline))
        cands = [Candidate(p[0], p[1], dx, dy) for dx, dy in
                 ((0, 0), (0, 5), (0, -5), (6, 0), (-6, 0), (0, 9), (0, -9))]
        placer.place("\n".join(lines), cands, fontsize=font - 0.5, linespacing=1.15,
                     color=FAIL if room.id in fail_ids else ROOM_EDGE, bbox=LABEL_BOX,
                     multialignment="center")


def draw_magnets(ax, site, floor_id, placer, sources, font, cuts) -> None:
    for mag in site.magnets:
        if mag.floor != floor_id:
            continue
        outline, what = shapes.magnet_outline(mag, shapes.PLAN_BASIS, sources)
        c = np.asarray(mag.center[:2])
        if outline is not None:
            ax.add_patch(MplPolygon(outline, closed=True, facecolor="white", edgecolor="black",
                                    linewidth=1.2, zorder=6))
        ax.plot(*c, marker="+", markersize=9, color="black", zorder=7, markeredgewidth=1.0)
        axis = np.asarray(mag.axis, dtype=float)
        if np.linalg.norm(axis[:2]) > 1e-6:
            ext = 1.2 * (np.ptp(outline, axis=0).max() if outline is not None else 2.0)
            d = axis[:2] / np.linalg.norm(axis[:2])
            seg = np.array([c - 0.6 * ext * d, c + 0.6 * ext * d])
            ax.plot(seg[:, 0], seg[:, 1], color="black", linewidth=0.6, zorder=7,
                    linestyle=(0, (8, 2, 1.5, 2)))
            bore = "bore axis"
        else:
            ax.plot(*c, marker="o", markersize=5, markerfacecolor="none", color="black", zorder=7)
            bore = "bore axis vertical"
        text = f"{mag.id}: {mag.field:g} T\nisocentre, {bore}\n({what})"
        cands = [Candidate(c[0], c[1], dx, dy, ha, va) for dx, dy, ha, va in ring_offsets(14)]
        placer.place(text, cands, leader=True, fontsize=font - 1.0, bbox=LABEL_BOX)
    for letter, mag, d, _how in cuts:
        c = np.asarray(mag.center[:2])
        x0, x1 = ax.get_xlim()
        y0, y1 = ax.get_ylim()
        reach = 0.5 * min(x1 - x0, y1 - y0) * 0.92
        ends = [c - reach * d, c + reach * d]
        ax.plot([ends[0][0], ends[1][0]], [ends[0][1], ends[1][1]], color="#555555",
                linewidth=0.7, linestyle=(0, (12, 3, 2, 3)), zorder=3)
        for end in ends:
            art = ax.text(*end, letter, ha="center", va="center", fontsize=font, fontweight="bold",
                    zorder=8, bbox={"boxstyle": "circle,pad=0.25", "facecolor": "white",
                                    "edgecolor": "#555555", "linewidth": 0.6})
            placer.block_text(art)


def draw_other_sources(ax, site, floor_id, placer, font) -> None:
    for coil in site.coils:
        if coil.floor != floor_id:
            continue
        outline = shapes.coil_outline(coil, shapes.PLAN_BASIS)
        if outline is not None:
            ax.add_patch(MplPolygon(outline, closed=True, fill=False, edgecolor="black",
                                    linewidth=0.9, linestyle="--", zorder=6))
        c = coil.center[:2]
        cands = [Candidate(c[0], c[1], dx, dy, ha, va) for dx, dy, ha, va in ring_offsets(9)]
        placer.place(f"coil {coil.id}\n{coil.turns:g} x {coil.current:g} A", cands, leader=True,
                     fontsize=font - 1.5, bbox=LABEL_BOX)
    for cab in site.cables:
        if cab.floor != floor_id:
            continue
        xy = cab.path[:, :2]
        ax.plot(xy[:, 0], xy[:, 1], color="#303030", linewidth=1.1, zorder=6,
                linestyle=(0, (6, 1.5, 1, 1.5, 1, 1.5)))
        mid = shapes.positions_along(xy, (0.5,))[0] if len(xy) > 1 else xy[0]
        cands = [Candidate(mid[0], mid[1], dx, dy, ha, va) for dx, dy, ha, va in ring_offsets(5)]
        placer.place(f"cable {cab.id} {cab.current:g} A", cands, fontsize=font - 1.5,
                     bbox=LABEL_BOX)
    for dip in site.dipoles:
        if dip.floor == floor_id:
            ax.plot(*dip.center[:2], marker="o", markersize=5, color="black", zorder=7,
                    markerfacecolor="white")
            c = dip.center[:2]
            cands = [Candidate(c[0], c[1], dx, dy, ha, va) for dx, dy, ha, va in ring_offsets(4)]
            placer.place(f"dipole {dip.id}", cands, fontsize=font - 1.5, bbox=LABEL_BOX)


def draw_plates(ax, plates, floor_id) -> None:
    for plate in plates:
        outline = getattr(plate, "outline", None)
        if outline is None or getattr(plate, "floor", floor_id) != floor_id:
            continue
        ax.add_patch(MplPolygon(np.asarray(outline)[:, :2], closed=True, facecolor="#6b6b6b",
                                edgecolor="black", hatch="xxx", linewidth=0.8, zorder=5))



def draw_plate_labels(plates, floor_id, placer, font) -> None:
    """Each plate's label ("id: thickness, mass") placed clear of other texts."""
    for plate in plates:
        label = getattr(plate, "label", None)
        if not label or getattr(plate, "floor", floor_id) != floor_id:
            continue
        c = np.asarray(plate.outline)[:, :2].mean(axis=0)
        cands = [Candidate(c[0], c[1], dx, dy, ha, va)
                 for r in (6, 12, 20) for dx, dy, ha, va in ring_offsets(r)]
        placer.place(label, cands, fontsize=font - 1.0, bbox=LABEL_BOX)


def draw_equipment(ax, site, result, floor_id, placer, units, font) -> None:
    by_id = {e.id: e for e in result.equipment}
    for item in site.equipment:
        if item.floor != floor_id:
            continue
        res = by_id.get(item.id)
        failing = res is not None and res.status == "fail"
        colour = FAIL if failing else PASS
        ax.plot(*item.at[:2], marker="D", markersize=5, zorder=8, color=colour,
                markerfacecolor=colour if failing else "white", markeredgewidth=1.0)
        value = field_text(res.field_T, units) if res is not None else "-"
        text = (f"{item.name}\n{value}, limit {field_text(item.limit, units)}, "
                + ("FAIL" if failing else "pass"))
        c = item.at[:2]
        cands = [Candidate(c[0], c[1], dx, dy, ha, va) for dx, dy, ha, va in ring_offsets(4)]
        cands += [Candidate(c[0], c[1], dx, dy, ha, va) for dx, dy, ha, va in ring_offsets(12)]
        placer.place(text, cands, leader=True, fontsize=font - 1.0, color=colour, bbox=LABEL_BOX)


def draw_violation_areas(ax, viols) -> None:
    for _room, over, _lim in viols:
        path = shapes.region_path(over)
        if path is not None:
            ax.add_patch(PathPatch(path, facecolor="none", edgecolor=FAIL, hatch="////",
                                   linewidth=0.8, zorder=4.5))


def draw_callouts(ax, viols, placer, units, font) -> None:
    for room, over, lim in viols:
        biggest = max(shapes.polygons(over), key=lambda p: p.area)
        p = shapes.label_point(biggest)
        text = (f"{room.name}: |B| above its {field_text(lim, units)} limit\n"
                f"over {over.area:.1f} m\u00b2 (hatched)")
        cands = [Candidate(p[0], p[1], dx, dy, ha, va) for r in (16, 26, 36)
                 for dx, dy, ha, va in ring_offsets(r)]
        placer.place(text, cands, leader=True, fontsize=font - 0.5, color=FAIL,
                     bbox={**LABEL_BOX, "edgecolor": FAIL, "linewidth": 0.6, "pad": 1.2})


def draw_plan(ax, site, result, floor_id: str, *, units: str, font: float, sources=None,
              plates=()) -> dict:
    """Draw the plan of ``floor_id`` on a true-scale axes.

    Parameters
    ----------
    ax : Axes
        Limits already set (:func:`siting.export.layout.add_view_axes`).
    site : Site
        The validated site.
    result : SiteResult
        Its check results.
    floor_id : str
        The floor to draw.
    units : str
        "mT", "G", "uT" or "both".
    font : float
        Base font size [pt].
    sources : list of NamedSource, optional
        For magnets whose envelope comes from their fringe model.
    plates : sequence
        Shielding plates with ``outline`` (m, 2) and ``floor``; may be empty.

    Returns
    -------
    dict
        ``violations`` (list of (room, region, limit)) and ``cuts`` (section cuts drawn).
    """
    regs = regions(site, result, floor_id)
    viols = violations(site, result, floor_id, regs)
    cuts = section_cuts(site, floor_id)
    fail_ids = {r.id for r in result.rooms if r.status == "fail"}
    ax.set_facecolor("white")
    draw_bands(ax, site, regs)
    draw_plates(ax, plates, floor_id)
    draw_violation_areas(ax, viols)
    placer = LabelPlacer(ax)
    for item in site.equipment:
        if item.floor == floor_id:
            placer.block_point(*item.at[:2])
    draw_magnets(ax, site, floor_id, placer, sources, font, cuts)
    draw_rooms(ax, site, result, floor_id, placer, units, font, fail_ids)
    draw_equipment(ax, site, result, floor_id, placer, units, font)
    draw_other_sources(ax, site, floor_id, placer, font)
    draw_plate_labels(plates, floor_id, placer, font)
    draw_lines(ax, site, result, floor_id, placer, units, font)
    draw_callouts(ax, viols, placer, units, font)
    style_axes(ax, site, font)
    return {"violations": viols, "cuts": cuts}


def style_axes(ax, site, font) -> None:
    """Coordinate ticks in the site's length unit, thin frame."""
    from matplotlib.ticker import FuncFormatter, MultipleLocator

    from siting.site.units import si_factor

    unit = site.info.length_unit
    f = si_factor(unit, "length")
    span = (ax.get_xlim()[1] - ax.get_xlim()[0]) / f
    step = 1.0 if span <= 25 else (5.0 if span <= 120 else 10.0)
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_locator(MultipleLocator(step * f))
        axis.set_major_formatter(FuncFormatter(lambda v, _p: f"{v / f:g}"))
    ax.tick_params(direction="in", labelsize=font - 2.0, length=2.0, width=0.4, pad=1.5,
                   top=True, right=True)
    for spine in ax.spines.values():
        spine.set_linewidth(0.5)
    ax.set_xlabel(f"x [{unit}]", fontsize=font - 2.0, labelpad=1.0)
    ax.set_ylabel(f"y [{unit}]", fontsize=font - 2.0, labelpad=1.0)
