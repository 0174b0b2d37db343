"""Display texts for the drawings and a greedy, deterministic label placer.

Labels are placed one at a time; each tries its candidate positions in order
and takes the first whose box (as rendered) overlaps no box placed before and
stays inside the view.  When every candidate collides, the one with the least
overlap is kept, so a label is never dropped silently.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib.transforms import Bbox

from siting.site.units import format_field

#: Display choices for field values on the drawings.
FIELD_UNITS = ("mT", "G", "uT", "both")


def field_text(value_t: float | None, units: str) -> str:
    """A field value for a drawing: "0.50 mT", "5.0 G" or "0.50 mT (5.0 G)"."""
    if value_t is None or not np.isfinite(value_t):
        return "-"
    if units == "both":
        return f"{format_field(value_t, 'mT')} ({format_field(value_t, 'G')})"
    return format_field(value_t, units)


def room_max_text(site, room_result, units: str) -> str:
    """A room's maximum field for display.

    When the room holds a magnet whose fringe model was fitted to published
    extents, values above the highest published level are shown as "> level":
    close to the cryostat such a model is not reliable, only its lines at and
    below the published levels are.
    """
    if not room_result.inside_envelope:
        return field_text(room_result.max_T, units)
    top = [e.level for m in site.magnets if m.floor == room_result.floor for e in m.extents]
    if top and room_result.max_T > max(top):
        return f"> {field_text(max(top), units)} (magnet inside)"
    return f"{field_text(room_result.max_T, units)} (magnet inside)"


def display_units(site, units: str | None) -> str:
    """The unit choice for a drawing: ``units``, else the site's field unit.

    Raises
    ------
    ValueError
        For a unit outside :data:`FIELD_UNITS`.
    """
    choice = site.info.field_unit if units is None else units
    if choice not in FIELD_UNITS:
        raise ValueError(f"units: expected one of {', '.join(FIELD_UNITS)}; got {choice!r}")
    return choice


def zone_text(zone: int) -> str:
    """"zone 3 (III)": the site file's number and the four-zone scheme's numeral."""
    roman = {1: "I", 2: "II", 3: "III", 4: "IV"}.get(int(zone), "?")
    return f"zone {zone} ({roman})"


def status_text(status: str) -> str:
    return {"fail": "FAIL", "pass": "pass"}.get(status, "no limit")


@dataclass(frozen=True)
class Candidate:
    """A label position: anchor point (data coordinates) and offset on paper [mm]."""

    x: float
    y: float
    dx_mm: float = 0.0
    dy_mm: float = 0.0
    ha: str = "center"
    va: str = "center"


def ring_offsets(radius_mm: float) -> list[tuple[float, float, str, str]]:
    """Eight offsets around an anchor, right first then anticlockwise, with alignments."""
    r = radius_mm
    d = r * 0.7071
    return [
        (r, 0.0, "left", "center"), (d, d, "left", "bottom"), (0.0, r, "center", "bottom"),
        (-d, d, "right", "bottom"), (-r, 0.0, "right", "center"), (-d, -d, "right", "top"),
        (0.0, -r, "center", "top"), (d, -d, "left", "top"),
    ]


class LabelPlacer:
    """Places texts on one axes without overlaps (greedy, in call order).

    Parameters
    ----------
    ax : Axes
        The view; its figure must have a fixed size and dpi.
    pad_px : float
        Clearance kept around every placed box [px].
    """

    def __init__(self, ax, *, pad_px: float = 1.5):
        self.ax = ax
        self.fig = ax.figure
        self.renderer = self.fig.canvas.get_renderer()
        self.pad = pad_px
        self.boxes: list[Bbox] = []
        self.frame = ax.get_window_extent(self.renderer)

    def block(self, bbox: Bbox) -> None:
        """Mark a display-space box as occupied."""
        self.boxes.append(bbox)

    def block_point(self, x: float, y: float, radius_px: float = 6.0) -> None:
        """Mark a marker at data point (x, y) as occupied."""
        px, py = self.ax.transData.transform((x, y))
        self.boxes.append(Bbox.from_extents(px - radius_px, py - radius_px, px + radius_px,
                                            py + radius_px))

    def block_text(self, text) -> Bbox:
        box = text.get_window_extent(self.renderer)
        self.boxes.append(box)
        return box

    def _overlap(self, box: Bbox) -> float:
        grown = box.expanded(1.0, 1.0).padded(self.pad)
        total = 0.0
        for other in self.boxes:
            if grown.overlaps(other):
                w = min(grown.x1, other.x1) - max(grown.x0, other.x0)
                h = min(grown.y1, other.y1) - max(grown.y0, other.y0)
                total += max(w, 0.0) * max(h, 0.0)
        f = self.frame
        outside = (max(f.x0 - box.x0, 0) + max(box.x1 - f.x1, 0)) * box.height + (
            max(f.y0 - box.y0, 0) + max(box.y1 - f.y1, 0)) * box.width
        return total + 4.0 * outside

    def place(self, text: str, candidates: list[Candidate], *, leader: bool = False, **kw):
        """Draw ``text`` at the first free candidate; return the Text artist.

        ``leader`` draws a thin line from the anchor to the label when the
        chosen candidate has an offset.
        """
        best, best_cost = None, np.inf
        for cand in candidates:
            art = self._make(text, cand, **kw)
            box = art.get_window_extent(self.renderer)
            cost = self._overlap(box)
            if cost < best_cost:
                if best is not None:
                    best[0].remove()
                best, best_cost = (art, cand, box), cost
                if cost == 0.0:
                    break
            else:
                art.remove()
        art, cand, box = best
        self.boxes.append(box)
        if leader and (cand.dx_mm or cand.dy_mm):
            self._leader(art, cand, kw.get("color", "black"))
        return art

    def _make(self, text: str, cand: Candidate, **kw):
        props = {"fontsize": 6.0, "zorder": 8}
        props.update(kw)
        return self.ax.annotate(
            text, (cand.x, cand.y), xytext=(cand.dx_mm / 25.4 * 72, cand.dy_mm / 25.4 * 72),
            textcoords="offset points", ha=cand.ha, va=cand.va, annotation_clip=False, **props)

    def _leader(self, art, cand: Candidate, colour) -> None:
        self.ax.annotate(
            "", (cand.x, cand.y), xytext=(cand.dx_mm / 25.4 * 72, cand.dy_mm / 25.4 * 72),
            textcoords="offset points",
            arrowprops={"arrowstyle": "-|>,head_length=0.35,head_width=0.15", "color": colour,
                        "linewidth": 0.5, "shrinkA": 0.0, "shrinkB": 0.0}, zorder=7)
