"""The ``shield`` command (stock thickness of steel plates) and the shielding table of ``check``."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import numpy as np
import typer
from rich.table import Table

from siting.cli.common import CAUTION, EXIT_FAIL, EXIT_INVALID, EXIT_PASS, err, fail_invalid, out
from siting.errors import SitingError

SiteArg = Annotated[Path, typer.Argument(help="Site file (TOML).", dir_okay=False)]


def _force_text(f) -> str:
    f = np.asarray(f, dtype=float)
    return f"{np.linalg.norm(f):.3g} N ({', '.join(f'{v:.2f}' for v in f)})"


def _effects_text(magnets) -> list[str]:
    return [f"magnet {m.id}: isocentre shift {m.shift_ut:.3g} uT = {m.shift_ppm:.3g} ppm of its "
            f"central field; peak-to-peak {m.peak_to_peak_ppm:.3g} ppm over a "
            f"{m.diameter:g} m sphere" for m in magnets]


def print_shielding(site, report) -> None:
    """The short shielding table of ``siting check``."""
    table = Table(title="Steel plates", title_justify="left")
    for col in ("plate", "thickness", "mass", "peak |B| in steel", "force (x, y, z)", "status"):
        table.add_column(col)
    for p in report.plates:
        table.add_row(p.id, f"{p.thickness * 1e3:g} mm" + (" (sized)" if p.sized else ""),
                      f"{p.mass:.0f} kg", f"{p.peak_b:.3g} T / limit {p.steel_limit:g} T",
                      _force_text(p.force), "SATURATED" if p.saturated else "ok")
    out.print(table)
    for line in _effects_text(report.magnets):
        out.print(line)
    note = "" if report.converged else " (NOT converged)"
    out.print(f"thin-sheet solve: {report.iterations} Newton iteration(s), relative residual "
              f"{report.residual:.1e}{note}; the field within about two panel sizes of a plate "
              "is approximate.")


def _candidate_table(site, sizing, verified, targets) -> Table:
    table = Table(title="Stock thicknesses tried", title_justify="left")
    for col in ("thickness", *(f"max |B| {n}" for n in targets.names), "peak |B| in steel",
                "mass", "force", "limit points", "full check"):
        table.add_column(col)
    lim = {n: float(targets.limits[targets.labels.index(n)]) for n in targets.names}
    for c, v in zip(sizing.candidates, verified, strict=True):
        worst = targets.worst(c.b_targets)
        cells = [f"{worst[n] * 1e3:.3g} mT / {lim[n] * 1e3:.3g} mT" for n in targets.names]
        table.add_row(
            f"{c.thickness * 1e3:g} mm", *cells,
            f"{c.b_steel_peak:.3g} T / {site.info.steel_limit:g} T"
            + ("" if c.within_steel_limit else " OVER"),
            f"{c.masses.sum():.0f} kg", "; ".join(_force_text(f) for f in c.forces),
            "met" if c.meets_targets else "not met",
            {True: "pass", False: "FAIL", None: "-"}[v])
    return table


def shield(
    site_file: SiteArg,
    plate: Annotated[list[str] | None, typer.Option(
        "--plate", help="Plate to size (repeatable; default all). Sized as a group.")] = None,
    target: Annotated[list[str] | None, typer.Option(
        "--target", help="Room or equipment that must pass (repeatable; default: those on the "
                         "plates' floors that fail without steel).")] = None,
    as_json: Annotated[bool, typer.Option("--json", help="Print JSON (SI units).")] = False,
) -> None:
    """Smallest stock plate thickness that makes the targets pass."""
    from siting.export.results import candidate_record, magnet_record
    from siting.fields.scene import Scene
    from siting.shielding import sheet_forces
    from siting.site.build import base_sources
    from siting.site.loader import load_site
    from siting.site.steel import magnet_results, plate_meshes, size_group
    from siting.site.steel_targets import limit_points

    try:
        site = load_site(site_file)
        base = Scene(tuple(s.source for s in base_sources(site)))
    except SitingError as exc:
        raise fail_invalid(exc) from None
    ids = [p.id for p in site.plates]
    if not ids:
        err.print(f"error: {site_file}: the site has no [[plates]]", markup=False)
        raise typer.Exit(EXIT_INVALID)
    unknown = [p for p in plate or () if p not in ids]
    if unknown:
        err.print(f"error: --plate: unknown plate '{unknown[0]}'; plates are: {', '.join(ids)}",
                  markup=False)
        raise typer.Exit(EXIT_INVALID)
    chosen = set(plate or ids)
    joined = [p.id for p in site.plates if p.id not in chosen and p.thickness is None]
    group = tuple(i for i in ids if i in chosen or i in joined)
    stock_max = max(site.info.stock_thicknesses)
    try:
        floors = {p.floor for p in site.plates if p.id in group}
        targets = limit_points(site, base, floors=floors, names=target or None)
        thick = {p.id: stock_max if p.id in group else p.thickness for p in site.plates}
        meshes = plate_meshes(site, base, thick)
        sizing, verified, sol = size_group(site, base, meshes, group, targets,
                                           names=target or None)
    except SitingError as exc:
        raise fail_invalid(exc) from None
    effects = magnet_results(site, sol) if sol is not None else ()
    if as_json:
        doc = {
            "site": site.info.name, "plates": list(group), "targets": list(targets.names),
            "candidates": [candidate_record(c, v, targets.worst(c.b_targets))
                           for c, v in zip(sizing.candidates, verified, strict=True)],
            "chosen_thickness_m": sizing.chosen.thickness if sizing.chosen else None,
            "forces_N": ([f.tolist() for f in sheet_forces(sol, base)] if sol is not None
                         else None),
            "magnets": [magnet_record(m) for m in effects],
            "caution": CAUTION,
        }
        out.print_json(json.dumps(doc))
        raise typer.Exit(EXIT_PASS if sizing.chosen else EXIT_FAIL)
    out.print(f"plates sized as a group: {', '.join(group)}"
              + (f" (the 'auto' plate(s) {', '.join(joined)} join the group)" if joined else ""))
    if targets.names:
        out.print(f"targets: {', '.join(targets.names)} ({len(targets.labels)} limit point(s))")
    else:
        out.print("nothing on the plates' floors fails without steel; the thinnest stock "
                  "thickness that passes the full check is reported.")
    out.print(_candidate_table(site, sizing, verified, targets))
    out.print("limit points: the sampled target points meet their limits; full check: "
              "`siting check` with this steel passes every room, equipment item and access "
              "boundary on the plates' floors (or the named targets).")
    if sizing.chosen is None:
        out.print(f"no stock thickness up to {stock_max * 1e3:g} mm suffices: change the plate "
                  "geometry (larger, closer to the magnet, more layers) or the stock list.")
        out.print(CAUTION)
        raise typer.Exit(EXIT_FAIL)
    c = sizing.chosen
    out.print(f"chosen thickness: {c.thickness * 1e3:g} mm; mass {c.masses.sum():.0f} kg; "
              f"peak |B| in the steel {c.b_steel_peak:.3g} T (limit {site.info.steel_limit:g} T)")
    for line in _effects_text(effects):
        out.print(line)
    out.print(CAUTION)
    raise typer.Exit(EXIT_PASS)


def register(app: typer.Typer) -> None:
    app.command("shield")(shield)
