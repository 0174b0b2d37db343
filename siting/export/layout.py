"""Paper, sheet frame and true-scale viewports for the review drawings.

A sheet is a matplotlib figure whose size in inches is the paper's size, with
one "paper" axes over the whole figure whose data units are millimetres on
paper (origin at the sheet's lower-left corner).  Frames, the title block,
legends, scale bars and notes are drawn on it.  Drawing views (plans,
sections) are further axes placed at exact millimetre rectangles, with limits
chosen so that 1 m in the model is ``1000 / scale`` mm on the printed sheet.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass

import matplotlib

matplotlib.use("Agg")
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.patches import Polygon, Rectangle  # noqa: E402

MM_PER_INCH = 25.4
#: Paper sizes (long side, short side) [mm]: ISO 216 A series and ANSI/ASME Y14.1.
PAPER_SIZES = {
    "A4": (297.0, 210.0),
    "A3": (420.0, 297.0),
    "A1": (841.0, 594.0),
    "ANSI-B": (431.8, 279.4),
    "ANSI-D": (863.6, 558.8),
}
#: Scales a user may choose (1:n).
STANDARD_SCALES = (50, 100, 200)
#: Further scales used only when nothing standard fits the drawn extent.
FALLBACK_SCALES = (500, 1000)
#: Average glyph advance of the sheet font as a fraction of its size (for wrapping).
EM_ADVANCE = 0.56
PT_MM = MM_PER_INCH / 72.0


@dataclass(frozen=True)
class Paper:
    """A sheet of paper.

    Parameters
    ----------
    name : str
        "A3", "ANSI-B", ...
    width_mm, height_mm : float
        As oriented on the sheet [mm].
    """

    name: str
    width_mm: float
    height_mm: float

    @property
    def inches(self) -> tuple[float, float]:
        return self.width_mm / MM_PER_INCH, self.height_mm / MM_PER_INCH

    @property
    def label(self) -> str:
        orient = "landscape" if self.width_mm >= self.height_mm else "portrait"
        return f"{self.name} {orient}"


def paper(name: str = "A3", *, portrait: bool = False) -> Paper:
    """The named paper size, landscape unless ``portrait``.

    Raises
    ------
    ValueError
        For a name not in :data:`PAPER_SIZES`.
    """
    key = name.strip().upper()
    if key not in PAPER_SIZES:
        raise ValueError(f"paper: unknown size {name!r}; choose one of {', '.join(PAPER_SIZES)}")
    long, short = PAPER_SIZES[key]
    return Paper(key, short, long) if portrait else Paper(key, long, short)


@dataclass(frozen=True)
class Rect:
    """A rectangle on paper [mm]: lower-left corner, width, height."""

    x: float
    y: float
    w: float
    h: float

    @property
    def top(self) -> float:
        return self.y + self.h

    @property
    def right(self) -> float:
        return self.x + self.w


@dataclass(frozen=True)
class SheetFrame:
    """The fixed regions of a sheet [mm].

    ``border`` is the drawing frame (ISO 5457 style margins: 20 mm filing
    margin on the left, 10 mm elsewhere; 7 mm and 5 mm on A4), ``views`` the
    area for drawing views, ``column`` the information column on the right
    (legend, notes) and ``title`` the title block at its foot.
    """

    paper: Paper
    border: Rect
    views: Rect
    column: Rect
    title: Rect
    font: float  # base font size [pt] for this paper


def sheet_frame(p: Paper) -> SheetFrame:
    """Regions of a sheet on paper ``p``."""
    small = min(p.width_mm, p.height_mm) < 250
    left, other = (15.0, 7.0) if small else (20.0, 10.0)
    border = Rect(left, other, p.width_mm - left - other, p.height_mm - 2 * other)
    col_w = min(max(0.24 * border.w, 80.0), 130.0)
    title_h = 52.0 if not small else 46.0
    gap = 4.0
    column = Rect(border.right - col_w, border.y + title_h, col_w, border.h - title_h)
    title = Rect(border.right - col_w, border.y, col_w, title_h)
    views = Rect(border.x + gap, border.y + gap, border.w - col_w - 2 * gap, border.h - 2 * gap)
    font = 6.0 if small else (7.0 if p.width_mm < 600 else 9.0)
    return SheetFrame(p, border, views, column, title, font)


def new_sheet(p: Paper, *, dpi: float = 100.0):
    """A figure of the paper's size and its paper axes (units: mm on paper).

    Returns
    -------
    (Figure, Axes)
    """
    fig = Figure(figsize=p.inches, dpi=dpi)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ax.set_xlim(0.0, p.width_mm)
    ax.set_ylim(0.0, p.height_mm)
    ax.set_axis_off()
    ax.set_zorder(0)
    return fig, ax


def fits(extent_m: tuple[float, float], slot: Rect, scale: int) -> bool:
    """True when a drawn extent (width, height) [m] fits ``slot`` at 1:``scale``."""
    w, h = extent_m
    k = 1000.0 / scale
    return w * k <= slot.w + 1e-9 and h * k <= slot.h + 1e-9


def fit_scale(extents_m, slots) -> int:
    """Largest standard scale (smallest n of 1:n) at which every extent fits its slot.

    Parameters
    ----------
    extents_m : sequence of tuple
        (width, height) of each drawn extent [m].
    slots : sequence of Rect
        The paper rectangle of each extent.

    Returns
    -------
    int
        From :data:`STANDARD_SCALES`, else :data:`FALLBACK_SCALES`; the last
        fallback when nothing fits.
    """
    for n in (*STANDARD_SCALES, *FALLBACK_SCALES):
        if all(fits(e, s, n) for e, s in zip(extents_m, slots, strict=True)):
            return n
    return FALLBACK_SCALES[-1]


@dataclass(frozen=True)
class View:
    """A true-scale view: its axes rectangle on paper and its model limits.

    ``clipped`` is True when the drawn extent did not fit at the scale and the
    view shows its central part only.
    """

    rect: Rect
    xlim: tuple[float, float]
    ylim: tuple[float, float]
    scale: int
    clipped: bool


def true_scale_view(slot: Rect, bounds_m, scale: int, *, anchor: str = "center") -> View:
    """The view of ``bounds_m`` (x0, y0, x1, y1) [m] at 1:``scale`` inside ``slot``.

    The axes rectangle is the extent at scale (clipped to the slot), centred
    in the slot (``anchor="center"``) or at its top (``"top"``); the limits
    are the rectangle's size times ``scale / 1000`` around the extent's centre,
    so 1 m is exactly ``1000 / scale`` mm on paper in both directions.
    """
    x0, y0, x1, y1 = (float(v) for v in bounds_m)
    k = 1000.0 / scale
    w_mm, h_mm = (x1 - x0) * k, (y1 - y0) * k
    clipped = w_mm > slot.w + 1e-9 or h_mm > slot.h + 1e-9
    w_mm, h_mm = min(w_mm, slot.w), min(h_mm, slot.h)
    rx = slot.x + 0.5 * (slot.w - w_mm)
    ry = slot.y + 0.5 * (slot.h - h_mm) if anchor == "center" else slot.top - h_mm
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    half_w, half_h = 0.5 * w_mm / k, 0.5 * h_mm / k
    return View(Rect(rx, ry, w_mm, h_mm), (cx - half_w, cx + half_w), (cy - half_h, cy + half_h),
                scale, clipped)


def add_view_axes(fig, p: Paper, view: View):
    """Axes for ``view``: placed in figure fractions, limits set, equal by construction."""
    r = view.rect
    ax = fig.add_axes((r.x / p.width_mm, r.y / p.height_mm, r.w / p.width_mm, r.h / p.height_mm))
    ax.set_xlim(*view.xlim)
    ax.set_ylim(*view.ylim)
    ax.set_aspect("auto")
    ax.set_autoscale_on(False)
    ax.set_zorder(2)
    return ax


def wrap(text: str, width_mm: float, size_pt: float) -> list[str]:
    """Wrap ``text`` into lines that fit ``width_mm`` at ``size_pt`` (estimated advance)."""
    chars = max(int(width_mm / (EM_ADVANCE * size_pt * PT_MM)), 8)
    return textwrap.wrap(text, chars, break_on_hyphens=False)


def nice_step(length_m: float) -> float:
    """A round bar length (1, 2, 5 x 10^k) at most ``length_m``."""
    exp = math.floor(math.log10(length_m))
    for mult in (5.0, 2.0, 1.0):
        if mult * 10**exp <= length_m:
            return mult * 10**exp
    return 10 ** (exp - 1) * 5.0


def _is_nice(value: float) -> bool:
    """True for 1, 2 or 5 times a power of ten (and 2.5)."""
    mant = value / 10 ** math.floor(math.log10(value) + 1e-12)
    return any(abs(mant - m) < 1e-9 for m in (1.0, 2.0, 2.5, 5.0))


def draw_scale_bar(pax, x_mm: float, y_mm: float, width_mm: float, scale: int, *,
                   unit: str = "m", unit_m: float = 1.0, size: float = 6.0) -> None:
    """A chequered scale bar in ``unit`` (``unit_m`` metres each), at most ``width_mm`` long."""
    k = 1000.0 / scale * unit_m  # mm on paper per display unit
    total = nice_step(width_mm / k)
    steps = next(n for n in (5, 4, 2, 1) if _is_nice(total / n))
    step = total / steps
    for i in range(steps):
        face = "black" if i % 2 == 0 else "white"
        pax.add_patch(Rectangle((x_mm + i * step * k, y_mm), step * k, 1.6, facecolor=face,
                                edgecolor="black", linewidth=0.4))
    for i in range(steps + 1):
        val = i * step
        lab = f"{val:g}" + (f" {unit}" if i == steps else "")
        pax.text(x_mm + i * step * k, y_mm + 2.4, lab, ha="center", va="bottom", fontsize=size)


def draw_north_arrow(pax, x_mm: float, y_mm: float, north_deg: float, *, size_mm: float = 9.0,
                     font: float = 6.0) -> None:
    """North arrow centred at (x, y) mm.

    ``north_deg`` is the rotation of the plan's +y from true north, degrees
    clockwise; north on the sheet is then +y turned counter-clockwise by it.
    """
    t = math.radians(north_deg)
    ux, uy = -math.sin(t), math.cos(t)  # north on paper
    vx, vy = uy, -ux  # to the right of north
    tip = (x_mm + ux * size_mm, y_mm + uy * size_mm)
    tail = (x_mm - ux * size_mm * 0.6, y_mm - uy * size_mm * 0.6)
    half = 0.35 * size_mm
    left = (tail[0] - vx * half, tail[1] - vy * half)
    right = (tail[0] + vx * half, tail[1] + vy * half)
    pax.add_patch(Polygon([tip, right, (x_mm, y_mm)], closed=True,
                                             facecolor="black", edgecolor="black", linewidth=0.5))
    pax.add_patch(Polygon([tip, left, (x_mm, y_mm)], closed=True,
                                             facecolor="white", edgecolor="black", linewidth=0.5))
    pax.text(tip[0] + ux * 3.5, tip[1] + uy * 3.5, "N", ha="center", va="center",
             fontsize=font + 2, fontweight="bold", rotation=north_deg)
