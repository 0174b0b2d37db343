"""The drawing commands: draw (review sheets or the DXF overlay) and import (DXF rooms)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from siting.cli.common import (
    CAUTION,
    EXIT_FAIL,
    EXIT_INVALID,
    EXIT_PASS,
    err,
    fail_invalid,
    load,
    out,
    progress_bar,
)
from siting.errors import SitingError

SiteArg = Annotated[Path, typer.Argument(help="Site file (TOML).", dir_okay=False)]


def draw(
    site_file: SiteArg,
    output: Annotated[Path, typer.Option(
        "-o", "--output",
        help="Output: .pdf (all sheets), .svg or .png (one file per sheet: NAME-01.svg, ...) "
             "or .dxf (CAD overlay).")],
    paper: Annotated[str, typer.Option("--paper", help="A3, A4, A1, ANSI-B or ANSI-D.")] = "A3",
    portrait: Annotated[bool, typer.Option("--portrait", help="Portrait sheets.")] = False,
    scale: Annotated[int | None, typer.Option(
        "--scale", help="Drawing scale 1:N with N = 50, 100 or 200 (default: the largest "
                        "that fits each view).")] = None,
    units: Annotated[str | None, typer.Option(
        "--units", help="Field unit of the labels: mT, G, uT or both (default: the site's).")
    ] = None,
    spacing: Annotated[float | None, typer.Option(
        "--spacing", help="Plan grid spacing in metres (default: chosen per floor).")] = None,
) -> None:
    """Draw the review sheets (plans, sections, summary) or the DXF overlay."""
    from siting.analysis.checks import check_site
    from siting.export.shapes import drawn_plates
    from siting.export.sheets import DrawingOptions, write_drawings
    from siting.site.build import build_scene
    from siting.site.steel import shielding_report

    suffix = output.suffix.lower()
    if suffix not in (".pdf", ".svg", ".png", ".dxf"):
        err.print(f"error: -o: expected a .pdf, .svg, .png or .dxf file; got '{output}'",
                  markup=False)
        raise typer.Exit(EXIT_INVALID)
    try:
        options = DrawingOptions(paper=paper, portrait=portrait, scale=scale, units=units)
    except ValueError as exc:
        err.print(f"error: {exc}", markup=False)
        raise typer.Exit(EXIT_INVALID) from None
    site, sources = load(site_file)
    try:
        scene = build_scene(site, sources)
        with progress_bar() as report:
            result = check_site(site, scene, spacing=spacing, progress=report)
        output.parent.mkdir(parents=True, exist_ok=True)
        plates = drawn_plates(site, shielding_report(sources))
        written = write_drawings(site, result, output, scene=scene, sources=sources,
                                 options=options, plates=plates)
    except SitingError as exc:
        raise fail_invalid(exc) from None
    except ValueError as exc:
        raise fail_invalid(SitingError(str(exc))) from None
    for path in written:
        out.print(f"wrote {path}")
    if result.failures:
        out.print(f"{result.failures} failure(s): see the summary sheet and the hatched areas.")
    out.print(CAUTION)
    raise typer.Exit(EXIT_FAIL if result.failures else EXIT_PASS)


def import_plan(
    plan_file: Annotated[Path, typer.Argument(help="Floor plan (DXF).", dir_okay=False)],
    output: Annotated[Path, typer.Option("-o", "--output", help="Site file to write (TOML).")],
    layer: Annotated[list[str] | None, typer.Option(
        "--layer", help="Layer to read rooms and room names from (repeatable; default all).")
    ] = None,
    units: Annotated[str | None, typer.Option(
        "--units", help="Drawing unit m, mm, cm, ft or in (default: the drawing's $INSUNITS).")
    ] = None,
    floor_id: Annotated[str, typer.Option("--floor-id", help="Id of the floor.")] = "G",
    name: Annotated[str | None, typer.Option("--name", help="Site name.")] = None,
) -> None:
    """Turn the rooms of a DXF floor plan into a site-file skeleton to complete."""
    from siting.export.dxf_in import read_plan, skeleton_toml

    if not plan_file.is_file():
        err.print(f"error: {plan_file}: no such file", markup=False)
        raise typer.Exit(EXIT_INVALID)
    try:
        plan = read_plan(plan_file, layers=layer or None, units=units, floor_id=floor_id)
    except SitingError as exc:
        raise fail_invalid(exc) from None
    for item in plan.skipped:
        where = f" {item.handle}" if item.handle else ""
        err.print(f"skipped {item.what}{where} on layer '{item.layer}': {item.reason}",
                  markup=False)
    if not plan.rooms:
        err.print(f"error: {plan_file}: no closed, named room outline found", markup=False)
        raise typer.Exit(EXIT_INVALID)
    text = skeleton_toml(plan, site_name=name or plan_file.stem, floor_id=floor_id)
    output.parent.mkdir(parents=True, exist_ok=True)
    output.write_text(text, encoding="utf-8")
    out.print(f"wrote {output}: {len(plan.rooms)} room(s) from {plan_file} "
              f"(drawing unit {plan.unit}); {len(plan.skipped)} item(s) skipped.")
    out.print("Set each room's zone and the floor's elevation, then add the magnets and "
              "equipment.")
    out.print(CAUTION)
    raise typer.Exit(EXIT_PASS)


def register(app: typer.Typer) -> None:
    app.command("draw")(draw)
    app.command("import")(import_plan)
