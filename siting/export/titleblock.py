"""Sheet furniture drawn in paper millimetres: frame, title block, text blocks, cautions."""

from __future__ import annotations

from dataclasses import dataclass

from matplotlib.patches import Rectangle

from siting.cautions import ACCESS_NOTE, CAUTION_TEXT, HAZARDS
from siting.export.layout import PT_MM, Rect, SheetFrame, wrap
from siting.export.palette import FAIL

#: The static-field hazards listed under the caution on every sheet.
LINE_H = 1.25  # line height in units of the font size


@dataclass(frozen=True)
class TitleInfo:
    """What the title block shows (all text, already formatted)."""

    site_name: str
    sheet_title: str
    floor: str
    scale: str
    sheet: str
    revision: str
    date: str
    prepared_by: str
    checked_by: str
    input_hash: str  # first 12 hex digits of the input's sha256
    paper: str


def title_info(site, *, sheet_title: str, floor: str, scale: str, number: int, total: int,
               paper_label: str) -> TitleInfo:
    """The title block's fields for one sheet of ``site``."""
    info = site.info
    return TitleInfo(
        site_name=info.name, sheet_title=sheet_title, floor=floor, scale=scale,
        sheet=f"{number:02d} of {total:02d}", revision=info.revision or "-",
        date=info.date or "-", prepared_by=info.prepared_by or "-",
        checked_by=info.checked_by or "-",
        input_hash=(site.content_hash or "")[:12] or "-", paper=paper_label)


def draw_border(pax, frame: SheetFrame) -> None:
    """Sheet frame, trim marks of the paper edge and the column's outline."""
    b = frame.border
    pax.add_patch(Rectangle((b.x, b.y), b.w, b.h, fill=False, linewidth=0.9, edgecolor="black"))
    c = frame.column
    pax.plot([c.x, c.x], [b.y, b.top], color="black", linewidth=0.6)


def _fit(text: str, width_mm: float, size: float) -> str:
    chars = max(int(width_mm / (0.56 * size * PT_MM)), 4)
    return text if len(text) <= chars else text[: chars - 1] + "\u2026"


def _cell(pax, x, y, w, h, caption: str, value: str, size: float, *, bold=False) -> None:
    pax.add_patch(Rectangle((x, y), w, h, fill=False, linewidth=0.5, edgecolor="black"))
    pax.text(x + 1.0, y + h - 0.8, caption, fontsize=size - 2.0, va="top", ha="left",
             color="#444444")
    if bold:  # a long bold title shrinks (down to 75 %) before it is cut
        size = max(0.75 * size, min(size, (w - 2.0) / (0.64 * max(len(value), 1) * PT_MM)))
    text = _fit(value, (w - 2.0) * (0.56 / 0.64 if bold else 1.0), size)
    pax.text(x + 1.0, y + 1.0, text, fontsize=size, va="bottom",
             ha="left", fontweight="bold" if bold else "normal")


def draw_title_block(pax, frame: SheetFrame, t: TitleInfo) -> None:
    """The title block: six rows of captioned cells in ``frame.title``."""
    r, s = frame.title, frame.font
    rows = [11.0, 8.0, 8.0, 8.0, 8.0]
    foot = r.h - sum(rows)
    y = r.top
    y -= rows[0]
    _cell(pax, r.x, y, r.w, rows[0], "site", t.site_name, s + 2.0, bold=True)
    y -= rows[1]
    _cell(pax, r.x, y, r.w, rows[1], "sheet", t.sheet_title, s + 0.5)
    thirds = r.w / 3.0
    y -= rows[2]
    for i, (cap, val) in enumerate((("floor", t.floor), ("scale", t.scale),
                                    ("sheet no.", t.sheet))):
        _cell(pax, r.x + i * thirds, y, thirds, rows[2], cap, val, s)
    y -= rows[3]
    for i, (cap, val) in enumerate((("revision", t.revision), ("date", t.date),
                                    ("input sha256", t.input_hash))):
        _cell(pax, r.x + i * thirds, y, thirds, rows[3], cap, val, s)
    y -= rows[4]
    half = r.w / 2.0
    _cell(pax, r.x, y, half, rows[4], "prepared by", t.prepared_by, s)
    _cell(pax, r.x + half, y, half, rows[4], "checked by", t.checked_by, s)
    pax.add_patch(Rectangle((r.x, r.y), r.w, foot, fill=False, linewidth=0.5))
    note = (f"Planning estimate, not a construction drawing. Paper {t.paper}; "
            "print at 100 % to measure.")
    for i, line in enumerate(wrap(note, r.w - 2.0, s - 1.5)[:2]):
        pax.text(r.x + 1.0, r.y + foot - 1.0 - i * (s - 1.5) * PT_MM * LINE_H, line,
                 fontsize=s - 1.5, va="top", ha="left")


def text_block(pax, x: float, y_top: float, width: float, heading: str | None,
               paragraphs, size: float, *, colour="black", gap: float = 1.0) -> float:
    """Wrapped paragraphs from ``y_top`` down; returns the y [mm] below the block."""
    y = y_top
    step = size * PT_MM * LINE_H
    if heading:
        pax.text(x, y, heading, fontsize=size + 0.5, fontweight="bold", va="top", ha="left",
                 color=colour)
        y -= (size + 0.5) * PT_MM * LINE_H + 0.6
    for para in paragraphs:
        for line in wrap(para, width, size):
            pax.text(x, y, line, fontsize=size, va="top", ha="left", color=colour)
            y -= step
        y -= gap
    return y


def block_height(width: float, heading: str | None, paragraphs, size: float,
                 gap: float = 1.0) -> float:
    """Height [mm] that :func:`text_block` will take."""
    h = (size + 0.5) * PT_MM * LINE_H + 0.6 if heading else 0.0
    step = size * PT_MM * LINE_H
    return h + sum(len(wrap(p, width, size)) * step + gap for p in paragraphs)


def caution_paragraphs(site, access_value: str) -> list[str]:
    """The caution block's paragraphs: the project's caution, the hazards, the access note."""
    return [CAUTION_TEXT, *(f"- {h}" for h in HAZARDS), ACCESS_NOTE.format(value=access_value)]


def draw_caution(pax, rect: Rect, site, access_value: str, size: float) -> float:
    """The caution block at the foot of ``rect``, boxed; returns its top [mm]."""
    pad = 1.5
    paras = caution_paragraphs(site, access_value)
    width = rect.w - 2 * pad
    h = block_height(width, "Cautions", paras, size) + 2 * pad
    top = rect.y + h
    pax.add_patch(Rectangle((rect.x, rect.y), rect.w, h, fill=False, edgecolor=FAIL,
                            linewidth=0.9))
    text_block(pax, rect.x + pad, top - pad, width, "Cautions", paras, size)
    return top
