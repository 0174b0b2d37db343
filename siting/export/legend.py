"""The information column of plan and section sheets: key, scale and north, notes."""

from __future__ import annotations

from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle

from siting.export.labels import field_text
from siting.export.layout import PT_MM, draw_north_arrow, draw_scale_bar
from siting.export.palette import FAIL, LINE, PASS, ROOM_EDGE, band_colours
from siting.export.titleblock import LINE_H, text_block


def _swatch_row(pax, x, y, size, label, *, face=None, hatch=None, edge="black", line=None):
    """One key row: a 7 x 3.2 mm symbol then its label; returns the next row's y."""
    h = max(size * PT_MM * LINE_H, 3.6)
    if line is not None:
        pax.add_line(Line2D([x, x + 7.0], [y - h / 2] * 2, **line))
    elif face is not None or hatch is not None:
        pax.add_patch(Rectangle((x, y - h + 0.4), 7.0, h - 0.8, facecolor=face or "none",
                                edgecolor=edge, hatch=hatch, linewidth=0.5))
    pax.text(x + 9.0, y - h / 2, label, fontsize=size, va="center", ha="left")
    return y - h


def draw_key(pax, x: float, y_top: float, site, *, units: str, size: float, band_note: str,
             plan: bool = True) -> float:
    """The key: field bands (highest first) and the line symbols; returns the y below it."""
    y = text_block(pax, x, y_top, 200.0, "Key", [band_note], size, gap=0.4)
    levels = list(site.info.levels)
    colours = band_colours(len(levels))
    for i in range(len(levels) - 1, -1, -1):
        upper = f" to {field_text(levels[i + 1], units)}" if i + 1 < len(levels) else " and above"
        y = _swatch_row(pax, x, y, size, f"{field_text(levels[i], units)}{upper}",
                        face=colours[i])
    y = _swatch_row(pax, x, y, size, f"below {field_text(levels[0], units)}", face="white")
    access = field_text(site.info.access_limit, units)
    y -= 1.0
    y = _swatch_row(pax, x, y, size, "isogauss line, labelled with its level",
                    line={"color": LINE, "linewidth": 0.7})
    y = _swatch_row(pax, x, y, size, f"{access} line (controlled-access level)",
                    line={"color": LINE, "linewidth": 1.3})
    if plan:
        y = _swatch_row(pax, x, y, size, "room outline (name, zone, limit, max |B|)",
                        line={"color": ROOM_EDGE, "linewidth": 1.0})
        y = _swatch_row(pax, x, y, size, "room over its limit",
                        line={"color": FAIL, "linewidth": 1.6})
        y = _swatch_row(pax, x, y, size, "area over the room's limit", hatch="////", edge=FAIL)
        y = _swatch_row(pax, x, y, size, "section line (see section sheets)",
                        line={"color": "#555555", "linewidth": 0.7,
                              "linestyle": (0, (12, 3, 2, 3))})
        y = _swatch_row(pax, x, y, size, "equipment: pass (open) / FAIL (filled)",
                        line={"color": PASS, "marker": "D", "markersize": 4, "linestyle": "none",
                              "markerfacecolor": "white", "markevery": [0]})
        pax.add_line(Line2D([x + 5.5], [y + 1.8], color=FAIL, marker="D", markersize=4,
                            linestyle="none"))
    else:
        y = _swatch_row(pax, x, y, size, "slab (thickness drawn nominal)", face="#d9d9d9",
                        hatch="...")
        y = _swatch_row(pax, x, y, size, "wall crossed by the cut",
                        line={"color": ROOM_EDGE, "linewidth": 1.0})
        y = _swatch_row(pax, x, y, size, "top of the check band above each floor",
                        line={"color": "#505050", "linewidth": 0.5, "linestyle": (0, (1, 2))})
    y = _swatch_row(pax, x, y, size, "magnet (windings or envelope sphere), + isocentre",
                    face="white")
    return y - 1.5


def draw_scale_and_north(pax, x: float, y_top: float, width: float, *, scale: int,
                         paper_label: str, north: float | None, size: float,
                         length_unit: str) -> float:
    """North arrow (plans only), scale bars and the scale statement; returns y below."""
    top = y_top - (5.0 if north is not None else 0.0)
    bar_x = x
    if north is not None:
        draw_north_arrow(pax, x + 7.0, top - 11.0, north, font=size)
        bar_x = x + 18.0
    bar_w = width - (bar_x - x) - 4.0
    draw_scale_bar(pax, bar_x, top - 8.0, bar_w, scale, unit="m", unit_m=1.0, size=size - 1.0)
    y = top - 13.0
    if length_unit == "ft":
        draw_scale_bar(pax, bar_x, y, bar_w, scale, unit="ft", unit_m=0.3048, size=size - 1.0)
        y -= 5.0
    mm = 1000.0 / scale
    text = f"Scale 1:{scale} on {paper_label}: 1 m = {mm:g} mm on paper."
    y = min(y, top - 22.0) if north is not None else y
    return text_block(pax, x, y - 1.0, width, None, [text], size)
