"""The review drawing set: summary, one plan per floor with field, sections; PDF/SVG/PNG.

Sheets are real paper sizes at true scale (see :mod:`siting.export.layout`).
Output is deterministic: fixed SVG hash salt, no creation dates, fonts
embedded as TrueType so the PDF's text can be searched and extracted.
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
from matplotlib.backends.backend_pdf import PdfPages  # noqa: E402

from siting import __version__  # noqa: E402
from siting.export import legend, plan, section, summary  # noqa: E402
from siting.export.labels import display_units, field_text  # noqa: E402
from siting.export.layout import (  # noqa: E402
    STANDARD_SCALES,
    Rect,
    add_view_axes,
    fit_scale,
    new_sheet,
    paper,
    sheet_frame,
    true_scale_view,
)
from siting.export.titleblock import (  # noqa: E402
    draw_border,
    draw_caution,
    draw_title_block,
    text_block,
    title_info,
)

STYLE = {
    "svg.hashsalt": "siting-sheets",
    "svg.fonttype": "path",
    "pdf.fonttype": 42,
    "font.family": "DejaVu Sans",
    "hatch.linewidth": 0.5,
    "path.simplify": False,
}


@contextlib.contextmanager
def sheet_style():
    """The rcParams every sheet is drawn and saved with."""
    with matplotlib.rc_context(STYLE):
        yield


@dataclass(frozen=True)
class DrawingOptions:
    """Choices for a drawing set.

    Parameters
    ----------
    paper : str
        "A3" (default), "A4", "A1", "ANSI-B" or "ANSI-D".
    portrait : bool
        Portrait instead of landscape.
    scale : int, optional
        1:50, 1:100 or 1:200 for every view; default per view, the largest
        standard scale at which the view fits.
    units : str, optional
        "mT", "G", "uT" or "both"; default the site's field unit.
    section_spacing : float
        Grid spacing of the section planes [m].
    dpi : float
        Resolution of PNG output.
    """

    paper: str = "A3"
    portrait: bool = False
    scale: int | None = None
    units: str | None = None
    section_spacing: float = 0.1
    dpi: float = 150.0

    def __post_init__(self):
        paper(self.paper, portrait=self.portrait)  # validates the name
        if self.scale is not None and self.scale not in STANDARD_SCALES:
            raise ValueError(f"scale: expected one of {STANDARD_SCALES}; got {self.scale!r}")
        if not self.section_spacing > 0:
            raise ValueError("section_spacing must be > 0")


@dataclass(frozen=True, eq=False)
class Sheet:
    """One rendered sheet of a drawing set."""

    number: int
    kind: str  # "summary", "plan" or "section"
    title: str
    floor: str | None
    scale: int | None
    figure: object


def _column_body(pax, fr, site, units, *, scale, north, band_note, plan_sheet, notes):
    col = fr.column
    x, w = col.x + 3.0, col.w - 6.0
    y = legend.draw_key(pax, x, col.top - 3.0, site, units=units, size=fr.font - 0.5,
                        band_note=band_note, plan=plan_sheet)
    y = legend.draw_scale_and_north(pax, x, y - 1.0, w, scale=scale, paper_label=fr.paper.label,
                                    north=north, size=fr.font - 0.5,
                                    length_unit=site.info.length_unit)
    if notes:
        text_block(pax, x, y - 1.0, w, "Notes", notes, fr.font - 1.0)
    draw_caution(pax, Rect(col.x + 2.0, col.y + 2.0, col.w - 4.0, 0.0), site,
                 field_text(site.info.access_limit, units), fr.font - 1.5)


def _band_note(site) -> str:
    lo, hi = min(site.info.check_heights), max(site.info.check_heights)
    return f"Field bands: max |B| over {lo:g} to {hi:g} m above the floor."


def plan_sheet(site, result, floor_id, fr, *, scale, units, sources, plates, dpi):
    """Figure of one floor's plan; returns (figure, scale used, title)."""
    fig, pax = new_sheet(fr.paper, dpi=dpi)
    bounds = plan.plan_bounds(result, floor_id)
    extent = (bounds[2] - bounds[0], bounds[3] - bounds[1])
    n = scale or fit_scale([extent], [fr.views])
    view = true_scale_view(fr.views, bounds, n)
    ax = add_view_axes(fig, fr.paper, view)
    drawn = plan.draw_plan(ax, site, result, floor_id, units=units, font=fr.font,
                           sources=sources, plates=plates)
    floor = site.floor(floor_id)
    notes = ["The field is computed inside the plan frame only; beyond it nothing is shown."]
    if view.clipped:
        notes.append(f"The floor does not fit at 1:{n}: the plan shows its central part.")
    if drawn["violations"]:
        notes.append(f"{len(drawn['violations'])} room(s) exceed their limit (hatched).")
    _column_body(pax, fr, site, units, scale=n, north=site.info.north, band_note=_band_note(site),
                 plan_sheet=True, notes=notes)
    draw_border(pax, fr)
    return fig, n, f"Plan {floor.name} ({floor_id}): static field"


def _section_figure(site, magnet, fr, secs, slots, n, *, units, sources, dpi, part=""):
    fig, pax = new_sheet(fr.paper, dpi=dpi)
    for sec, slot in zip(secs, slots, strict=True):
        view = true_scale_view(slot, sec.bounds, n, anchor="top")
        ax = add_view_axes(fig, fr.paper, view)
        section.draw_section(ax, site, sec, units=units, font=fr.font, sources=sources)
        dx, dy = sec.direction + 0.0
        pax.text(view.rect.x, view.rect.top + 5.0,
                 f"Section {sec.letter}-{sec.letter}: {sec.how} the bore of {magnet.id}, "
                 "through the isocentre", fontsize=fr.font + 0.5, fontweight="bold",
                 va="bottom")
        pax.text(view.rect.x, view.rect.top + 1.2,
                 f"s [m] from the isocentre along ({dx:+.2f}, {dy:+.2f}) in plan; height [m] "
                 "above the site datum", fontsize=fr.font - 1.0, va="bottom")
    floor = site.floor(magnet.floor)
    notes = ["Slabs are drawn 0.25 m thick for orientation; the structure is not part of "
             "the field model.", "s = 0 at the isocentre; section letters as on the plan of "
             f"{floor.name} ({floor.id})."]
    _column_body(pax, fr, site, units, scale=n, north=None,
                 band_note="Field bands: |B| in the plane of the cut.", plan_sheet=False,
                 notes=notes)
    draw_border(pax, fr)
    letters = "/".join(f"{s.letter}-{s.letter}" for s in secs)
    return fig, n, f"Section{'s' if len(secs) > 1 else ''} {letters} through {magnet.id}{part}"


def section_sheets(site, magnet, fr, *, scene, scale, units, sources, spacing, dpi):
    """The sections along and across ``magnet``'s bore: [(figure, scale, title), ...].

    Both cuts share a sheet (stacked or side by side) unless each on a sheet of
    its own can be drawn at a larger scale.
    """
    cuts = [c for c in plan.section_cuts(site, magnet.floor) if c[1] is magnet]
    header = 10.0
    v = fr.views
    secs = []
    for letter, mag, d, how in cuts:
        b = section.section_bounds(site, mag, d)
        secs.append(section.section_field(scene, mag, d, b, letter=letter, how=how,
                                          spacing=spacing))
    extents = [(s.bounds[2] - s.bounds[0], s.bounds[3] - s.bounds[1]) for s in secs]
    slot_h = (v.h - 2 * header - 4.0) / 2
    stacked = [Rect(v.x, v.top - header - slot_h, v.w, slot_h), Rect(v.x, v.y, v.w, slot_h)]
    half = (v.w - 6.0) / 2
    side = [Rect(v.x, v.y, half, v.h - header), Rect(v.x + half + 6.0, v.y, half, v.h - header)]
    single = Rect(v.x, v.y, v.w, v.h - header)
    kw = {"units": units, "sources": sources, "dpi": dpi}
    if scale:
        fitting = [lay for lay in (stacked, side) if fit_scale(extents, lay) <= scale]
        if fitting or not all(fit_scale([e], [single]) <= scale for e in extents):
            return [_section_figure(site, magnet, fr, secs, (fitting or [stacked])[0], scale,
                                    **kw)]
        return [_section_figure(site, magnet, fr, [s], [single], scale, **kw) for s in secs]
    best = min((stacked, side), key=lambda lay: fit_scale(extents, lay))
    n_two = fit_scale(extents, best)
    n_one = fit_scale(extents, [single] * len(secs))
    if n_one < n_two:
        return [_section_figure(site, magnet, fr, [s], [single], n_one, **kw) for s in secs]
    return [_section_figure(site, magnet, fr, secs, best, n_two, **kw)]


def summary_sheets(site, result, fr, *, units, dpi, shielding=None):
    """Figures of the summary (one or more sheets)."""
    blocks = summary.summary_blocks(site, result, units, shielding=shielding)
    size = fr.font - 0.5
    pages = summary.flow(blocks, fr.views, size)
    figs = []
    for page in pages:
        fig, pax = new_sheet(fr.paper, dpi=dpi)
        summary.draw_summary_page(pax, fr.views, page, size)
        col = fr.column
        draw_caution(pax, Rect(col.x + 2.0, col.y + 2.0, col.w - 4.0, 0.0), site,
                     field_text(site.info.access_limit, units), fr.font - 0.5)
        text_block(pax, col.x + 3.0, col.top - 3.0, col.w - 6.0, "About this set", [
            "Sheets: this summary, one plan per floor where the field reaches the lowest "
            "level drawn, and the sections through each magnet.",
            f"Input: {Path(site.source).name}, sha256 {site.content_hash[:12] or '-'}... (in "
            "the title block of every sheet).",
            f"Made with siting {__version__}."], fr.font - 0.5)
        draw_border(pax, fr)
        figs.append(fig)
    return figs


def drawing_set(site, result, *, scene=None, sources=None, options: DrawingOptions | None = None,
                plates=()) -> list[Sheet]:
    """Render every sheet of the review set.

    Parameters
    ----------
    site : Site
        The validated site.
    result : SiteResult
        From :func:`siting.analysis.checks.check_site`.
    scene : object with ``magnitude(points)``, optional
        For the sections; default ``build_scene(site, sources)``.
    sources : list of NamedSource, optional
        For magnets whose envelope comes from their fringe model.
    options : DrawingOptions, optional
        Paper, scale, units; default :class:`DrawingOptions()`.
    plates : sequence
        Shielding plates to draw on the plans (may be empty).

    Returns
    -------
    list of Sheet
        Summary sheet(s) first, then the plans (site floor order), then the
        sections (site magnet order), numbered from 1.
    """
    opt = options or DrawingOptions()
    units = display_units(site, opt.units)
    fr = sheet_frame(paper(opt.paper, portrait=opt.portrait))
    if site.magnets and scene is None:
        from siting.site.build import build_scene

        scene = build_scene(site, sources)
    out = []
    with sheet_style():
        from siting.site.steel import shielding_report

        report = shielding_report(sources) if sources else None
        for fig in summary_sheets(site, result, fr, units=units, dpi=100.0, shielding=report):
            out.append(("summary", "Summary of checks, levels and sources", None, None, fig))
        for floor_id in plan.floors_to_draw(site, result):
            fig, n, title = plan_sheet(site, result, floor_id, fr, scale=opt.scale, units=units,
                                       sources=sources, plates=plates, dpi=100.0)
            out.append(("plan", title, floor_id, n, fig))
        for mag in site.magnets:
            for fig, n, title in section_sheets(site, mag, fr, scene=scene, scale=opt.scale,
                                                units=units, sources=sources,
                                                spacing=opt.section_spacing, dpi=100.0):
                out.append(("section", title, mag.floor, n, fig))
        total = len(out)
        sheets = []
        for i, (kind, title, floor_id, n, fig) in enumerate(out, start=1):
            floor = "all" if floor_id is None else floor_id
            if kind == "section":
                floor = f"{floor_id} and adjacent"
            info = title_info(site, sheet_title=title, floor=floor,
                              scale=f"1:{n}" if n else "-", number=i, total=total,
                              paper_label=fr.paper.label)
            draw_title_block(fig.axes[0], fr, info)
            sheets.append(Sheet(i, kind, title, floor_id, n, fig))
    return sheets


def _pdf_metadata(site) -> dict:
    return {"Title": f"{site.info.name}: static field review drawings",
            "Author": site.info.prepared_by or None,
            "Subject": "Planning estimate of static magnetic stray fields",
            "Keywords": f"input sha256 {site.content_hash}",
            "Creator": f"siting {__version__}", "CreationDate": None, "ModDate": None}


def write_pdf(sheets, path, site) -> Path:
    """All sheets into one PDF (deterministic bytes)."""
    path = Path(path)
    with sheet_style(), PdfPages(path, metadata=_pdf_metadata(site)) as pdf:
        for sheet in sheets:
            pdf.savefig(sheet.figure)
    return path


def write_images(sheets, path, site, *, dpi: float = 150.0) -> list[Path]:
    """One SVG or PNG per sheet: ``<stem>-01.svg``, ... (format from the suffix)."""
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    written = []
    with sheet_style():
        for sheet in sheets:
            target = path.with_name(f"{path.stem}-{sheet.number:02d}{path.suffix}")
            if fmt == "svg":
                meta = {"Title": f"{site.info.name}: {sheet.title}", "Date": None,
                        "Creator": f"siting {__version__}",
                        "Description": f"input sha256 {site.content_hash}"}
                sheet.figure.savefig(target, format="svg", metadata=meta)
            else:
                sheet.figure.savefig(target, format="png", dpi=dpi,
                                     metadata={"Software": None, "Title": sheet.title})
            written.append(target)
    return written


def write_drawings(site, result, path, *, scene=None, sources=None,
                   options: DrawingOptions | None = None, plates=()) -> list[Path]:
    """Write the drawing set to ``path`` by its suffix: .pdf, .svg, .png or .dxf."""
    path = Path(path)
    fmt = path.suffix.lower()
    if fmt == ".dxf":
        from siting.export.dxf_out import write_overlay

        units = options.units if options is not None else None
        return [write_overlay(site, result, path, units=units, plates=plates, sources=sources)]
    if fmt not in (".pdf", ".svg", ".png"):
        raise ValueError(f"output: unknown format {path.suffix!r}; use .pdf, .svg, .png or .dxf")
    opt = options or DrawingOptions()
    sheets = drawing_set(site, result, scene=scene, sources=sources, options=opt, plates=plates)
    if fmt == ".pdf":
        return [write_pdf(sheets, path, site)]
    return write_images(sheets, path, site, dpi=opt.dpi)
