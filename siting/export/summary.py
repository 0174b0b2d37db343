"""The summary sheets: room and equipment tables, the levels drawn and their sources.

Content is a list of blocks (tables and paragraphs) flowed down the sheet's
view area; a table that does not fit continues on the next sheet with its
header repeated.  The caution block sits in the information column of every
summary sheet.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib.patches import Rectangle

from siting.export.labels import field_text, room_max_text, status_text, zone_text
from siting.export.layout import EM_ADVANCE, PT_MM, Rect
from siting.export.palette import FAIL
from siting.export.titleblock import LINE_H, block_height, text_block

TOL = 1e-12

#: Sources cited on the summary sheet.
SOURCES = (
    "IEC 60601-2-33, Medical electrical equipment - Part 2-33: Particular requirements for the "
    "basic safety and essential performance of magnetic resonance equipment for medical "
    "diagnosis: 3rd ed. (2010, with amendments) draws the controlled-access boundary at 0.5 mT; "
    "4th ed. (2022) at 0.9 mT.",
    "ICNIRP (2009), Guidelines on limits of exposure to static magnetic fields, Health Physics "
    "96(4): 504-514: general public 400 mT; occupational 2 T (head and trunk) and 8 T (limbs); "
    "people with implanted medical devices may need protection at far lower fields (0.5 mT "
    "is the usual boundary).",
    "American College of Radiology, ACR Manual on MR Safety: the four-zone scheme (zones I-IV).",
    "Levels marked \"common practice\" are rules of thumb used in planning, not from a standard; "
    "confirm each with the equipment maker's data.",
)

ZONES = (
    "Zones follow the four-zone MR safety scheme (ACR Manual on MR Safety): zone 1 (I) freely "
    "accessible to the public; zone 2 (II) the supervised interface where patients are "
    "screened; zone 3 (III) restricted to screened people under the control of MR personnel; "
    "zone 4 (IV) the magnet room itself. Zone 1 and 2 rooms are checked against the "
    "controlled-access level unless the site file gives them a limit; zones 3 and 4 have no "
    "default limit."
)


def level_meaning(level: float, access: float) -> tuple[str, str]:
    """(what a level means, its source) for the summary sheet."""
    known = {
        5e-4: ("controlled-access boundary (3rd ed.); usual boundary for people with active "
               "implants such as pacemakers", "IEC 60601-2-33 3rd ed.; ICNIRP 2009"),
        9e-4: ("controlled-access boundary (4th ed.)", "IEC 60601-2-33 4th ed. (2022)"),
        0.4: ("exposure limit for the general public", "ICNIRP 2009"),
        2.0: ("occupational exposure limit, head and trunk", "ICNIRP 2009"),
        8.0: ("occupational exposure limit, limbs (controlled environment)", "ICNIRP 2009"),
        3e-3: ("projectile warning line: loose ferromagnetic objects start to be pulled",
               "common practice"),
    }
    for value, (meaning, source) in known.items():
        if abs(level - value) <= TOL:
            if abs(level - access) <= TOL:
                return f"controlled-access boundary used for this site; {meaning}", source
            return meaning, source
    if abs(level - access) <= TOL:
        return ("controlled-access boundary used for this site", "IEC 60601-2-33 (site choice)")
    if level < 0.5e-3:
        return ("rule of thumb for field-sensitive equipment (e.g. CT, PET, gamma cameras, "
                "image intensifiers, electron microscopes at lower fields)", "common practice")
    return ("level chosen in the site file", "site file")


@dataclass(frozen=True)
class Table:
    title: str
    headers: tuple[str, ...]
    widths: tuple[float, ...]  # fractions of the table width
    rows: tuple[tuple[str, ...], ...]
    fail_rows: frozenset = frozenset()


@dataclass(frozen=True)
class Paragraphs:
    heading: str
    paragraphs: tuple[str, ...]


def room_table(site, result, units: str) -> Table:
    lu = site.info.length_unit
    from siting.site.units import format_distance

    names = {r.id: r.name for r in site.rooms}
    rows, fails = [], set()
    for i, r in enumerate(result.rooms):
        floor = site.floor(r.floor)
        at = "-"
        if r.at_m is not None and np.all(np.isfinite(r.at_m)):
            x, y, z = r.at_m
            at = ", ".join(format_distance(v, lu) for v in (x, y, z - floor.elevation))
        rows.append((
            r.id, names.get(r.id, ""), r.floor, zone_text(r.zone),
            field_text(r.limit_T, units) if r.limit_T is not None else "none",
            room_max_text(site, r, units),
            at,
            format_distance(r.margin_m, lu)
            if r.margin_m is not None and np.isfinite(r.margin_m) else "-",
            f"{r.area_over_m2:.2f} m\u00b2" if r.area_over_m2 else "-",
            status_text(r.status)))
        if r.status == "fail":
            fails.add(i)
    return Table("Rooms", ("room", "name", "floor", "zone", "limit", "max |B|",
                           "at x, y, h above floor", "margin", "area over", "status"),
                 (0.08, 0.2, 0.05, 0.09, 0.08, 0.15, 0.14, 0.07, 0.08, 0.06), tuple(rows),
                 frozenset(fails))


def equipment_table(site, result, units: str) -> Table:
    names = {e.id: e.name for e in site.equipment}
    rows, fails = [], set()
    for i, e in enumerate(result.equipment):
        rows.append((e.id, names.get(e.id, ""), e.floor, field_text(e.limit_T, units),
                     field_text(e.field_T, units), status_text(e.status)))
        if e.status == "fail":
            fails.add(i)
    return Table("Equipment", ("item", "name", "floor", "limit", "|B|", "status"),
                 (0.1, 0.38, 0.08, 0.16, 0.16, 0.12), tuple(rows), frozenset(fails))


def shielding_blocks(site, report, units: str) -> list:
    """The steel plates (thickness, mass, peak |B| in the steel, force) and what the
    steel does to each magnet (isocentre shift, peak-to-peak over a sphere)."""
    names = {p.id: p.name for p in site.plates}
    rows = []
    for p in report.plates:
        force = float(np.linalg.norm(p.force))
        rows.append((p.id, names.get(p.id, ""), f"{p.thickness * 1e3:.1f} mm"
                     + (" (sized)" if p.sized else ""), f"{p.mass:.0f} kg",
                     f"{p.peak_b:.3g} T / {p.steel_limit:.3g} T"
                     + (" SATURATED" if p.saturated else ""), f"{force:.3g} N"))
    table = Table("Steel plates", ("plate", "name", "thickness", "mass",
                                   "peak |B| in steel / limit", "net force"),
                  (0.1, 0.3, 0.14, 0.1, 0.22, 0.14), tuple(rows),
                  frozenset(i for i, p in enumerate(report.plates) if p.saturated))
    text = [f"Magnet {m.id}: the steel shifts the field at the isocentre by {m.shift_ut:.3g} uT "
            f"({m.shift_ppm:.3g} ppm of the central field); peak-to-peak {m.peak_to_peak_ppm:.3g}"
            f" ppm over a {m.diameter:g} m sphere." for m in report.magnets]
    text.append(f"Nonlinear thin-sheet solution: {report.iterations} iterations, residual "
                f"{report.residual:.2g}, {'converged' if report.converged else 'NOT converged'}. "
                "The thin-sheet model neglects magnetisation normal to a plate and is approximate "
                "within about two panel sizes of a plate.")
    return [table, Paragraphs("What the steel does", tuple(text))]


def summary_blocks(site, result, units: str, *, shielding=None) -> list:
    """The summary's content, in reading order."""
    blocks: list = [room_table(site, result, units)]
    if result.equipment:
        blocks.append(equipment_table(site, result, units))
    if shielding is not None:
        blocks.extend(shielding_blocks(site, shielding, units))
    access = []
    for a in result.access:
        lim = field_text(a.access_limit_T, units)
        if a.line_area_m2 == 0:
            access.append(f"Floor {a.floor}: no {lim} line on this floor.")
        elif a.contained:
            access.append(f"Floor {a.floor}: the {lim} line lies within zone 3 and 4 rooms.")
        else:
            access.append(f"Floor {a.floor}: the {lim} line leaves the zone 3 and 4 rooms over "
                          f"{a.uncovered_area_m2:.2f} m\u00b2; the controlled-access area must be "
                          "extended or the field reduced.")
    access.append(f"{result.failures} failure(s) in rooms and equipment.")
    blocks.append(Paragraphs("Controlled-access area", tuple(access)))
    lv = []
    for level in site.info.levels:
        meaning, source = level_meaning(level, site.info.access_limit)
        lv.append(f"{field_text(level, units)}: {meaning} [{source}].")
    heights = ", ".join(f"{h:g}" for h in site.info.check_heights)
    lo, hi = min(site.info.check_heights), max(site.info.check_heights)
    lv.append(f"Plans show the maximum of |B| over {lo:g} to {hi:g} m above each floor (the "
              f"check heights {heights} m, searched between them); sections show |B| in the "
              "vertical plane of the cut.")
    blocks.append(Paragraphs("Levels drawn", tuple(lv)))
    blocks.append(Paragraphs("MR safety zones", (ZONES,)))
    blocks.append(Paragraphs("Sources", SOURCES))
    return blocks


def _row_h(size: float) -> float:
    return size * PT_MM * LINE_H + 1.2


def _fit_cell(text: str, width: float, size: float) -> str:
    chars = max(int(width / (EM_ADVANCE * size * PT_MM)), 3)
    return text if len(text) <= chars else text[: chars - 1] + "\u2026"


def draw_table(pax, x, y_top, width, table: Table, rows, first_index: int, size: float,
               *, continued: bool) -> float:
    """Draw a table's heading, header row and ``rows``; returns the y below."""
    y = y_top
    title = table.title + (" (continued)" if continued else "")
    pax.text(x, y, title, fontsize=size + 0.5, fontweight="bold", va="top")
    y -= (size + 0.5) * PT_MM * LINE_H + 0.8
    rh = _row_h(size)
    cols = [w * width for w in table.widths]
    for kind, cells, idx in [("head", table.headers, -1)] + [
            ("row", r, first_index + k) for k, r in enumerate(rows)]:
        failing = idx in table.fail_rows
        if kind == "head":
            pax.add_patch(Rectangle((x, y - rh), width, rh, facecolor="#e6e6e6",
                                    edgecolor="none"))
        cx = x
        for cell, w in zip(cells, cols, strict=True):
            pax.text(cx + 0.8, y - rh / 2, _fit_cell(str(cell), w - 1.6, size), fontsize=size,
                     va="center", ha="left", color=FAIL if failing else "black",
                     fontweight="bold" if (failing or kind == "head") else "normal")
            cx += w
        pax.plot([x, x + width], [y - rh, y - rh], color="#808080", linewidth=0.3)
        y -= rh
    return y - 3.0


def flow(blocks, area: Rect, size: float) -> list[list[tuple]]:
    """Split blocks into pages: each page a list of (block, rows slice start, stop)."""
    pages: list[list[tuple]] = [[]]
    y = area.top
    rh = _row_h(size)
    head = (size + 0.5) * PT_MM * LINE_H + 0.8 + rh + 3.0
    for block in blocks:
        if isinstance(block, Table):
            start = 0
            n = len(block.rows)
            while True:
                room = int((y - area.y - head) // rh)
                if room < 1 or (room < n - start and room < 3 and pages[-1]):
                    pages.append([])
                    y = area.top
                    continue
                stop = min(n, start + room)
                pages[-1].append((block, start, stop))
                y -= head + (stop - start) * rh
                start = stop
                if start >= n:
                    break
                pages.append([])
                y = area.top
        else:
            h = block_height(area.w, block.heading, block.paragraphs, size) + 2.0
            if h > y - area.y and pages[-1]:
                pages.append([])
                y = area.top
            pages[-1].append((block, 0, 0))
            y -= h
    return pages


def draw_summary_page(pax, area: Rect, page, size: float) -> None:
    """Draw one page of flowed blocks into ``area``."""
    y = area.top
    for block, start, stop in page:
        if isinstance(block, Table):
            y = draw_table(pax, area.x, y, area.w, block, block.rows[start:stop], start, size,
                           continued=start > 0)
        else:
            y = text_block(pax, area.x, y, area.w, block.heading, block.paragraphs, size) - 2.0
