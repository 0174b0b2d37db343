"""Quick plan maps (one PNG per floor): rooms, field bands, isogauss lines, labels.

The full review drawings (scaled sheets, title block, sections) are a separate
module; these maps are for a fast look and for the demo.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.patches import Polygon as MplPolygon  # noqa: E402

from siting.cautions import CAUTION_TEXT  # noqa: E402
from siting.export.labels import room_max_text  # noqa: E402
from siting.export.palette import FAIL, LINE, PASS, ROOM_EDGE, band_colours  # noqa: E402
from siting.site.units import format_field  # noqa: E402


def room_label(site, room, res, units: str) -> str:
    """A room's text on the quick map: name, zone, maximum (as on the sheets), FAIL."""
    label = f"{room.name}\nzone {room.zone}\nmax {room_max_text(site, res, units)}"
    return label + "\nFAIL" if res.status == "fail" else label

def _floor_figure(site, result, floor_id):
    ff = result.floor_fields[floor_id]
    grid = ff.grid
    fu = site.info.field_unit
    levels = list(site.info.levels)
    fig, ax = plt.subplots(figsize=(11.7, 8.3), dpi=110)  # A4 landscape in inches
    bmax = np.where(ff.invalid, np.inf, ff.bmax)
    bounds = [*levels, np.inf]
    colours = band_colours(len(levels))
    ax.contourf(grid.x, grid.y, bmax, levels=bounds, colors=colours, extend="neither")
    cs = ax.contour(grid.x, grid.y, bmax, levels=levels, colors=LINE, linewidths=0.8)
    ax.clabel(cs, fmt={lv: format_field(lv, fu) for lv in levels}, fontsize=7, inline=True)
    for room in site.rooms:
        if room.floor != floor_id:
            continue
        res = next(r for r in result.rooms if r.id == room.id)
        edge = FAIL if res.status == "fail" else ROOM_EDGE
        ax.add_patch(MplPolygon(room.outline, closed=True, fill=False, edgecolor=edge,
                                linewidth=2.0 if res.status == "fail" else 1.2))
        cx, cy = room.outline.mean(axis=0)
        label = room_label(site, room, res, fu)
        ax.text(cx, cy, label, ha="center", va="center", fontsize=7, color=edge,
                bbox={"facecolor": "white", "alpha": 0.75, "edgecolor": "none", "pad": 1.5})
    for mag in site.magnets:
        if mag.floor == floor_id:
            ax.plot(*mag.center[:2], marker="+", color="black", markersize=12)
            ax.annotate(mag.id, mag.center[:2], xytext=(6, 6), textcoords="offset points",
                        fontsize=8)
    for eq in result.equipment:
        item = next(e for e in site.equipment if e.id == eq.id)
        if item.floor == floor_id:
            colour = FAIL if eq.status == "fail" else PASS
            ax.plot(*item.at[:2], marker="D", color=colour, markersize=6)
            ax.annotate(f"{item.name}\n{format_field(eq.field_T, fu)}", item.at[:2],
                        xytext=(6, -14), textcoords="offset points", fontsize=7, color=colour)
    floor = site.floor(floor_id)
    ax.set_title(f"{site.info.name} - {floor.name} ({floor_id}): max |B| over "
                 f"{min(site.info.check_heights):.1f}-{max(site.info.check_heights):.1f} m "
                 "above floor", fontsize=10)
    ax.set_aspect("equal")
    ax.set_xlabel("x [m]")
    ax.set_ylabel("y [m]")
    fig.text(0.01, 0.01, CAUTION_TEXT, fontsize=6.5, wrap=True, va="bottom")
    fig.subplots_adjust(bottom=0.14)
    return fig


def write_floor_pngs(site, result, out_dir: Path) -> list[Path]:
    """Write ``<floor>.png`` for each floor into ``out_dir``; return the paths."""
    paths = []
    for floor in site.floors:
        if floor.id not in result.floor_fields:
            continue
        fig = _floor_figure(site, result, floor.id)
        path = Path(out_dir) / f"floor-{floor.id}.png"
        fig.savefig(path, metadata={"Software": None})
        plt.close(fig)
        paths.append(path)
    return paths
