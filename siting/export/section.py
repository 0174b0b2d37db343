"""Vertical sections through a magnet's isocentre, along and across its bore.

The scene is evaluated on a regular grid in the vertical plane through the
isocentre; |B| there is contoured at the site's levels.  The view reaches the
floor below and the floor above the magnet's floor, with their finished floor
levels, nominal slabs and the walls the cut crosses, so the field through the
slabs is seen at a glance.
"""

from __future__ import annotations

from dataclasses import dataclass

import contourpy
import numpy as np
from contourpy import FillType, LineType
from matplotlib.patches import PathPatch, Rectangle
from matplotlib.patches import Polygon as MplPolygon
from matplotlib.path import Path as MplPath
from shapely.geometry import LineString, Polygon

from siting.analysis.contours import ABOVE_ALL
from siting.export import shapes
from siting.export.labels import Candidate, LabelPlacer, field_text
from siting.export.palette import LINE, ROOM_EDGE, band_colours
from siting.export.plan import HALO, LABEL_BOX

#: Slab thickness drawn for orientation only [m] (the structure is not modelled).
SLAB_DRAWN = 0.25
#: Horizontal reach beyond the rooms the cut crosses, and vertical margin [m].
SIDE_MARGIN, TOP_MARGIN = 1.5, 0.6


@dataclass(frozen=True, eq=False)
class SectionField:
    """|B| on a vertical grid through a magnet's isocentre.

    Parameters
    ----------
    letter : str
        The cut's letter on the plan.
    magnet_id : str
    how : str
        "along" or "across" the bore.
    origin : ndarray (3,)
        The isocentre [m]; s = 0 there.
    direction : ndarray (2,)
        Horizontal unit direction of +s.
    s : ndarray (ns,) [m]
    z : ndarray (nz,) absolute [m]
    magnitude : ndarray (nz, ns) [T], NaN where the model is undefined.
    """

    letter: str
    magnet_id: str
    how: str
    origin: np.ndarray
    direction: np.ndarray
    s: np.ndarray
    z: np.ndarray
    magnitude: np.ndarray

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        return float(self.s[0]), float(self.z[0]), float(self.s[-1]), float(self.z[-1])

    def points(self) -> np.ndarray:
        """The grid's 3-D points, (nz * ns, 3), z outer."""
        ss, zz = np.meshgrid(self.s, self.z)
        xy = self.origin[:2] + ss.ravel()[:, None] * self.direction
        return np.column_stack([xy, zz.ravel()])


def neighbour_floors(site, floor_id: str):
    """(below, floor, above) by elevation; None where there is none."""
    order = sorted(site.floors, key=lambda f: f.elevation)
    i = next(k for k, f in enumerate(order) if f.id == floor_id)
    return (order[i - 1] if i > 0 else None, order[i],
            order[i + 1] if i + 1 < len(order) else None)


def section_bounds(site, magnet, direction) -> tuple[float, float, float, float]:
    """(s0, z0, s1, z1) [m]: rooms crossed by the cut on the three floors, and those floors."""
    below, floor, above = neighbour_floors(site, magnet.floor)
    ids = {f.id for f in (below, floor, above) if f is not None}
    c = np.asarray(magnet.center[:2])
    reach = [4.0]
    for ext in magnet.extents:
        reach.append(max(ext.axial, ext.radial) * 1.3)
    s_vals = [-max(reach), max(reach)]
    d = np.asarray(direction, dtype=float)
    cut = LineString([c - 1e4 * d, c + 1e4 * d])
    for room in site.rooms:
        if room.floor in ids:
            crossed = cut.intersection(Polygon(room.outline))
            for piece in getattr(crossed, "geoms", [crossed]):
                if not piece.is_empty:
                    s_vals.extend(((np.asarray(piece.coords) - c) @ d).tolist())
    s0, s1 = min(s_vals) - SIDE_MARGIN, max(s_vals) + SIDE_MARGIN
    z0 = (below.elevation if below else floor.elevation - 3.0) - SLAB_DRAWN - TOP_MARGIN
    top = above if above else floor
    z1 = top.elevation + top.height + TOP_MARGIN
    return s0, z0, s1, z1


def section_field(scene, magnet, direction, bounds, *, letter: str, how: str,
                  spacing: float = 0.1) -> SectionField:
    """Evaluate |B| of ``scene`` on the vertical grid of ``bounds`` at ``spacing`` [m]."""
    s0, z0, s1, z1 = bounds
    s = np.linspace(s0, s1, max(int(np.ceil((s1 - s0) / spacing)) + 1, 2))
    z = np.linspace(z0, z1, max(int(np.ceil((z1 - z0) / spacing)) + 1, 2))
    d = np.asarray(direction, dtype=float)
    probe = SectionField(letter, magnet.id, how, np.asarray(magnet.center, dtype=float), d, s, z,
                         np.empty((z.size, s.size)))
    mag = np.asarray(scene.magnitude(probe.points()), dtype=float).reshape(z.size, s.size)
    return SectionField(letter, magnet.id, how, probe.origin, d, s, z, mag)


def _generator(sec: SectionField, fill: bool):
    values = np.where(np.isnan(sec.magnitude), ABOVE_ALL, sec.magnitude)
    return contourpy.contour_generator(
        sec.s, sec.z, values, name="serial",
        fill_type=FillType.OuterCode if fill else None,
        line_type=LineType.Separate if not fill else None)


def draw_section(ax, site, sec: SectionField, *, units: str, font: float, sources=None) -> None:
    """Bands, isogauss lines, floors, walls and the magnet on a true-scale section axes."""
    levels = list(site.info.levels)
    gen = _generator(sec, True)
    for colour, level in zip(band_colours(len(levels)), levels, strict=True):
        pts, codes = gen.filled(level, np.inf)
        for p, c in zip(pts, codes, strict=True):
            ax.add_patch(PathPatch(MplPath(p, c), facecolor=colour, edgecolor="none", zorder=1))
    placer = LabelPlacer(ax)
    _draw_floors(ax, site, sec, font, placer)
    _draw_walls(ax, site, sec, placer, font)
    mag = next(m for m in site.magnets if m.id == sec.magnet_id)
    basis = (np.array([sec.origin[0], sec.origin[1], 0.0]),
             np.array([*sec.direction, 0.0]), np.array([0.0, 0.0, 1.0]))
    outline, _what = shapes.magnet_outline(mag, basis, sources)
    if outline is not None:
        ax.add_patch(MplPolygon(outline, closed=True, facecolor="white", edgecolor="black",
                                linewidth=1.2, zorder=6))
    ax.plot(0.0, sec.origin[2], marker="+", markersize=9, color="black", zorder=7)
    lines_gen = _generator(sec, False)
    mm_per_m = ax.get_window_extent().width / ax.figure.dpi * 25.4 / (sec.s[-1] - sec.s[0])
    for i, level in enumerate(levels):
        width = 1.3 if np.isclose(level, site.info.access_limit) else 0.7
        shift = (0.11 * i) % 1.0
        for line in lines_gen.lines(level):
            if len(line) < 2:
                continue
            ax.plot(line[:, 0], line[:, 1], color=LINE, linewidth=width, zorder=4,
                    path_effects=HALO)
            if shapes.polyline_length(line) * mm_per_m < 25.0:
                continue
            fracs = [(f + shift) % 1.0 for f in (0.5, 0.25, 0.75, 0.4, 0.6, 0.1, 0.9)]
            cands = [Candidate(*p) for p in shapes.positions_along(line, fracs)]
            placer.place(field_text(level, units), cands, fontsize=font - 1.0, bbox=LABEL_BOX)
    ax.tick_params(direction="in", labelsize=font - 2.0, length=2.0, width=0.4, pad=1.5,
                   top=True, right=True)
    for spine in ax.spines.values():
        spine.set_linewidth(0.5)


def _draw_floors(ax, site, sec: SectionField, font: float, placer) -> None:
    s0, z0, s1, z1 = sec.bounds
    top_check = max(site.info.check_heights)
    for fl in site.floors:
        if not (z0 <= fl.elevation <= z1):
            continue
        ax.add_patch(Rectangle((s0, fl.elevation - SLAB_DRAWN), s1 - s0, SLAB_DRAWN,
                               facecolor="#d9d9d9", edgecolor="black", hatch="...",
                               linewidth=0.6, zorder=3))
        art = ax.text(s0 + 0.2, fl.elevation + 0.12, f"{fl.id} {fl.name}: floor level "
                      f"{fl.elevation:+.2f} m", fontsize=font - 1.0, va="bottom", ha="left",
                      zorder=8, bbox=LABEL_BOX)
        placer.block_text(art)
        band_top = fl.elevation + top_check
        if band_top <= z1:
            ax.plot([s0, s1], [band_top, band_top], color="#505050", linewidth=0.5,
                    linestyle=(0, (1, 2)), zorder=3)


def _draw_walls(ax, site, sec: SectionField, placer, font: float) -> None:
    """Walls the cut crosses, and the names of the rooms it passes through."""
    s0, z0, s1, z1 = sec.bounds
    c, d = sec.origin[:2], sec.direction
    cut = LineString([c + s0 * d, c + s1 * d])
    for room in site.rooms:
        fl = site.floor(room.floor)
        if not (z0 <= fl.elevation <= z1):
            continue
        poly = Polygon(room.outline)
        inside = cut.intersection(poly)
        pieces = [g for g in getattr(inside, "geoms", [inside]) if g.geom_type == "LineString"
                  and not g.is_empty]
        if not pieces:
            continue
        top = min(fl.elevation + fl.height - SLAB_DRAWN, z1)
        for piece in pieces:
            for end in piece.coords:
                s = float((np.asarray(end) - c) @ d)
                if s0 + 1e-6 < s < s1 - 1e-6:
                    ax.plot([s, s], [fl.elevation, top], color=ROOM_EDGE, linewidth=1.0,
                            zorder=5)
        longest = max(pieces, key=lambda g: g.length)
        mid = np.asarray(longest.interpolate(0.5, normalized=True).coords[0])
        s_mid = float((mid - c) @ d)
        y = fl.elevation + 0.8 * (top - fl.elevation)
        cands = [Candidate(s_mid, y, 0, dy) for dy in (0, -3, 3, -6)]
        placer.place(room.name, cands, fontsize=font - 1.0, color=ROOM_EDGE, bbox=LABEL_BOX)
