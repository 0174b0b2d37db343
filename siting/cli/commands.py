"""The commands: check, probe, map, demo.  Each parses, calls the library, prints."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import numpy as np
import typer
from rich.table import Table

from siting.cli.common import (
    ACCESS_NOTE,
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

SiteArg = Annotated[
    Path, typer.Argument(help="Site file (TOML).", exists=False, dir_okay=False)
]
SpacingOpt = Annotated[
    float | None,
    typer.Option("--spacing", help="Plan grid spacing in metres (default: chosen per floor)."),
]


def _analyse(site, sources, spacing, progress=True):
    from siting.analysis.checks import check_site
    from siting.site.build import build_scene

    scene = build_scene(site, sources)
    with progress_bar(progress) as report:
        return check_site(site, scene, spacing=spacing, progress=report)


def _margin_text(margin, unit) -> str:
    from siting.site.units import format_distance

    if margin is None:
        return "-"
    if not np.isfinite(margin):
        return "clear (no line)"
    return format_distance(margin, unit)


def _print_tables(site, result, shielding=None) -> None:
    from siting.export.labels import room_max_text
    from siting.site.units import format_field, si_factor

    fu, lu = site.info.field_unit, site.info.length_unit
    scale = si_factor(lu, "length")
    rooms = Table(title=f"Rooms - {site.info.name}", title_justify="left")
    for col in ("room", "floor", "zone", "limit", "max |B|", f"at x, y, z above floor [{lu}]",
                "margin", "area over", "status"):
        rooms.add_column(col)
    for r in result.rooms:
        floor = site.floor(r.floor)
        at = "-"
        if r.at_m is not None and np.all(np.isfinite(r.at_m)):
            x, y, z = r.at_m
            at = ", ".join(f"{v / scale:.2f}" for v in (x, y, z - floor.elevation))
        rooms.add_row(
            r.id,
            r.floor,
            str(r.zone),
            format_field(r.limit_T, fu) if r.limit_T is not None else "none",
            room_max_text(site, r, fu),
            at,
            _margin_text(r.margin_m, lu),
            f"{r.area_over_m2:.2f} m2" if r.area_over_m2 else "-",
            {"fail": "FAIL", "pass": "pass"}.get(r.status, "report"),
        )
    out.print(rooms)
    if result.equipment:
        eq = Table(title="Equipment", title_justify="left")
        for col in ("item", "floor", "limit", "|B|", "status"):
            eq.add_column(col)
        for e in result.equipment:
            eq.add_row(e.id, e.floor, format_field(e.limit_T, fu), format_field(e.field_T, fu),
                       "FAIL" if e.status == "fail" else "pass")
        out.print(eq)
    for a in result.access:
        if a.line_area_m2 == 0:
            out.print(f"floor {a.floor}: no {format_field(a.access_limit_T, fu)} line on this "
                      "floor.")
        elif a.contained:
            out.print(f"floor {a.floor}: the {format_field(a.access_limit_T, fu)} line lies within "
                      "zone 3/4 rooms.")
        else:
            x, y = np.asarray(a.uncovered_point[:2]) / scale
            out.print(f"floor {a.floor}: FAIL - the {format_field(a.access_limit_T, fu)} line "
                      f"leaves the zone 3/4 rooms over {a.uncovered_area_m2:.2f} m2, e.g. near "
                      f"({x:.2f}, {y:.2f}) {lu}.")
    if shielding is not None:
        from siting.cli.shield import print_shielding

        print_shielding(site, shielding)
    out.print(ACCESS_NOTE.format(value=format_field(site.info.access_limit, fu)))
    out.print(f"{result.failures} failure(s).")
    out.print(CAUTION)


def check(
    site_file: SiteArg,
    as_json: Annotated[bool, typer.Option("--json", help="Print JSON (SI units).")] = False,
    spacing: SpacingOpt = None,
) -> None:
    """Check every room and piece of equipment against its limit."""
    from siting.export.results import check_record
    from siting.site.steel import shielding_report

    site, sources = load(site_file)
    try:
        result = _analyse(site, sources, spacing, progress=not as_json)
    except SitingError as exc:
        raise fail_invalid(exc) from None
    report = shielding_report(sources)
    if as_json:
        out.print_json(json.dumps(check_record(site, result, report)))
    else:
        _print_tables(site, result, report)
    raise typer.Exit(EXIT_FAIL if result.failures else EXIT_PASS)


def _parse_point(text: str) -> np.ndarray:
    try:
        vals = [float(v) for v in text.split(",")]
    except ValueError:
        vals = []
    if len(vals) != 3 or not np.all(np.isfinite(vals)):
        err.print(f"error: --at: expected three numbers X,Y,Z, got '{text}'", markup=False)
        raise typer.Exit(EXIT_INVALID)
    return np.array(vals)


def probe(
    site_file: SiteArg,
    at: Annotated[list[str], typer.Option("--at", help="Point X,Y,Z in the site's length unit.")],
    floor: Annotated[
        str | None, typer.Option("--floor", help="Take z above this floor's finished floor.")
    ] = None,
    as_json: Annotated[bool, typer.Option("--json", help="Print JSON (SI units).")] = False,
) -> None:
    """Field at given points (z above the site datum, or above --floor)."""
    from siting.site.build import build_scene, why_undefined
    from siting.site.units import format_field, format_length, si_factor

    site, sources = load(site_file)
    scale = si_factor(site.info.length_unit, "length")
    pts = np.array([_parse_point(t) for t in at]) * scale
    if floor is not None:
        try:
            pts[:, 2] += site.floor(floor).elevation
        except KeyError:
            ids = ", ".join(f.id for f in site.floors)
            err.print(f"error: --floor: unknown floor '{floor}'; floors are: {ids}", markup=False)
            raise typer.Exit(EXIT_INVALID) from None
    b = build_scene(site, sources).field(pts)
    records = []
    for p, bv in zip(pts, b, strict=True):
        rec = {"at_m": [float(v) for v in p]}
        if np.all(np.isfinite(bv)):
            rec["b_T"] = [float(v) for v in bv]
            rec["magnitude_T"] = float(np.linalg.norm(bv))
        else:
            rec.update(b_T=None, magnitude_T=None, note="no valid model here: "
                       + why_undefined(sources, p))
        records.append(rec)
    if as_json:
        out.print_json(json.dumps({"points": records, "caution": CAUTION}))
        return
    fu, lu = site.info.field_unit, site.info.length_unit
    table = Table(title=f"Field - {site.info.name}", title_justify="left")
    for col in ("x", "y", "z (datum)", "Bx", "By", "Bz", "|B|"):
        table.add_column(col)
    for rec in records:
        xyz = [format_length(v, lu) for v in rec["at_m"]]
        if rec["b_T"] is None:
            table.add_row(*xyz, "-", "-", "-", rec["note"])
        else:
            table.add_row(*xyz, *(format_field(v, fu) for v in rec["b_T"]),
                          format_field(rec["magnitude_T"], fu))
    out.print(table)
    out.print(CAUTION)


def map_(
    site_file: SiteArg,
    out_dir: Annotated[Path, typer.Option("--out", help="Folder for the PNGs and results.json.")],
    spacing: SpacingOpt = None,
) -> None:
    """Draw a PNG per floor with rooms and field lines, plus results.json."""
    site, sources = load(site_file)
    try:
        result = _analyse(site, sources, spacing)
    except SitingError as exc:
        raise fail_invalid(exc) from None
    written = _write_map(site, result, out_dir, sources)
    for path in written:
        out.print(f"wrote {path}")
    out.print(CAUTION)


def _write_map(site, result, out_dir: Path, sources=()) -> list[Path]:
    from siting.export.plan_png import write_floor_pngs
    from siting.export.results import check_record, contour_record
    from siting.site.steel import shielding_report

    out_dir.mkdir(parents=True, exist_ok=True)
    written = write_floor_pngs(site, result, out_dir)
    doc = check_record(site, result, shielding_report(sources))
    doc["contours"] = contour_record(site, result)
    path = out_dir / "results.json"
    path.write_text(json.dumps(doc, indent=1) + "\n")
    return [*written, path]


def demo(
    out_dir: Annotated[Path, typer.Option("--out", help="Folder for the demo results.")] = Path(
        "siting-demo"
    ),
) -> None:
    """Run check and map on the shipped hospital example and say where the results are."""
    from siting.examples import example

    path = example("hospital_imaging")
    out.print(f"example site file: {path}")
    site, sources = load(path)
    result = _analyse(site, sources, None)
    _print_tables(site, result)
    written = _write_map(site, result, out_dir, sources)
    out.print(f"results written to {out_dir.resolve()}:")
    for path in written:
        out.print(f"  {path}")
    out.print("The example is meant to show a failing room; the demo itself succeeded.")


def register(app: typer.Typer) -> None:
    app.command("check")(check)
    app.command("probe")(probe)
    app.command("map")(map_)
    app.command("demo")(demo)
