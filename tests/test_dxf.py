"""CAD exchange: the DXF overlay read back, and rooms imported from a DXF plan."""

from __future__ import annotations

import dataclasses
import tomllib

import ezdxf
import numpy as np
import pytest
from shapely.geometry import LinearRing, Polygon
from test_sheets import MaskedScene, make_site
from typer.testing import CliRunner

from siting.analysis.checks import check_site
from siting.analysis.contours import level_region
from siting.cautions import CAUTION_TEXT
from siting.errors import SiteFileError
from siting.export.dxf_in import read_plan, skeleton_toml
from siting.export.dxf_out import level_layer, overlay_document, write_overlay


@pytest.fixture(scope="module")
def checked():
    site, scene = make_site(), MaskedScene()
    return site, check_site(site, scene, spacing=0.25)


def _rings_on(doc, layer: str) -> list[np.ndarray]:
    out = []
    for e in doc.modelspace().query(f'LWPOLYLINE[layer=="{layer}"]'):
        assert e.closed
        out.append(np.array([(x, y) for x, y, *_ in e.get_points()]))
    return out


def _expected_rings(region) -> list[np.ndarray]:
    rings = []
    for poly in getattr(region, "geoms", [region]):
        rings.append(np.asarray(poly.exterior.coords))
        rings.extend(np.asarray(h.coords) for h in poly.interiors)
    return rings


def _match(got: list[np.ndarray], want: list[np.ndarray], scale: float = 1.0) -> None:
    """Every ring written matches one computed ring within 1 mm (Hausdorff distance)."""
    assert len(got) == len(want)
    free = list(range(len(want)))
    for ring in got:
        dist = [LinearRing(ring * scale).hausdorff_distance(LinearRing(want[j])) for j in free]
        best = int(np.argmin(dist))
        assert dist[best] < 1e-3
        free.pop(best)


def test_overlay_contours_match_the_computed_regions(checked, tmp_path):
    site, result = checked
    path = write_overlay(site, result, tmp_path / "overlay.dxf")
    doc = ezdxf.readfile(path)
    assert doc.header["$INSUNITS"] == 6  # DXF reference, HEADER section: 6 = metres
    compared = 0
    for fid, ff in result.floor_fields.items():
        for level in site.info.levels:
            region = level_region(ff, level)
            rings = _rings_on(doc, level_layer(fid, level, "mT"))
            _match(rings, _expected_rings(region) if not region.is_empty else [])
            compared += len(rings)
    assert compared >= 7


def test_overlay_writes_the_holes_of_a_region(checked):
    from siting.analysis.checks import SiteResult
    from siting.analysis.grid import FloorField, PlanGrid

    site = dataclasses.replace(checked[0], rooms=(), magnets=(), cables=(), equipment=())
    grid = PlanGrid("G", np.arange(-5.0, 5.01, 0.1), np.arange(-5.0, 5.01, 0.1), [0.0])
    xx, yy = np.meshgrid(grid.x, grid.y)
    r = np.hypot(xx, yy)
    bmax = 2e-3 * np.exp(-((r - 2.5) ** 2))  # a ring of field: the 1 mT region is an annulus
    ff = FloorField(grid, bmax, np.zeros(bmax.shape, bool), np.zeros(bmax.shape))
    result = SiteResult(floor_fields={"G": ff})
    region = level_region(ff, 1e-3)
    assert len(region.geoms) == 1 and len(region.geoms[0].interiors) == 1
    doc = overlay_document(site, result)
    rings = _rings_on(doc, "G-FIELD-1.0mT")
    assert len(rings) == 2
    _match(rings, _expected_rings(region))


def test_overlay_layers_for_zones_violations_sources(checked):
    site, result = checked
    doc = overlay_document(site, result)
    names = {layer.dxf.name for layer in doc.layers}
    for name in ("G-ZONE4", "G-ZONE3", "G-ZONE1", "L1-ZONE1", "B1-ZONE1", "G-OVER-LIMIT",
                 "G-MAGNETS", "G-CABLES", "G-EQUIPMENT", "G-LABELS", "NOTES"):
        assert name in names
    over = _rings_on(doc, "G-OVER-LIMIT")
    wait = next(r for r in result.rooms if r.id == "WAIT")
    assert wait.status == "fail"
    area = sum(Polygon(r).area for r in over)
    expected = Polygon(site.rooms[2].outline).intersection(
        level_region(result.floor_fields["G"], 5e-4)).area
    assert area == pytest.approx(expected, rel=1e-9)
    zone4 = _rings_on(doc, "G-ZONE4")
    assert len(zone4) == 1 and Polygon(zone4[0]).area == pytest.approx(7 * 5.5)
    texts = [e.dxf.text for e in doc.modelspace().query('TEXT[layer=="G-LABELS"]')]
    assert "0.50 mT" in texts and any(t.startswith("Waiting area (zone 1)") for t in texts)
    notes = doc.modelspace().query('MTEXT[layer=="NOTES"]')
    assert notes[0].text == CAUTION_TEXT


def test_overlay_in_feet(checked):
    site, result = checked
    site_ft = dataclasses.replace(site, info=dataclasses.replace(site.info, length_unit="ft"))
    doc = overlay_document(site_ft, result)
    assert doc.header["$INSUNITS"] == 2  # 2 = feet
    zone4 = _rings_on(doc, "G-ZONE4")
    # 1 ft = 0.3048 m exactly (international foot, 1959)
    assert Polygon(zone4[0] * 0.3048).area == pytest.approx(38.5, rel=1e-12)
    region = level_region(result.floor_fields["G"], 1e-3)
    _match(_rings_on(doc, "G-FIELD-1.0mT"), _expected_rings(region), scale=0.3048)


def _plan_dxf(path, *, insunits=4):
    """A floor plan in mm: two polyline rooms, one room of lines and an arc, and mistakes."""
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = insunits
    msp = doc.modelspace()
    for name in ("WALLS", "TEXT", "OTHER"):
        doc.layers.add(name)
    walls, text = {"layer": "WALLS"}, {"layer": "TEXT"}
    msp.add_lwpolyline([(0, 0), (7000, 0), (7000, 5500), (0, 5500)], close=True, dxfattribs=walls)
    msp.add_text("Magnet room", height=350, dxfattribs=text).set_placement((2500, 2500))
    msp.add_text("12", height=200, dxfattribs=text).set_placement((2500, 1500))
    msp.add_lwpolyline([(7000, 0), (10000, 0), (10000, 3500), (7000, 3500)], close=True,
                       dxfattribs=walls)
    msp.add_mtext("Control\\Proom", dxfattribs={"insert": (8000, 2500), "char_height": 250,
                                                **text})
    # a room bounded by lines and a half-circle arc of radius 1500 mm on its east side
    for a, b in (((0, 5500), (10000, 5500)), ((10000, 8500), (0, 8500)), ((0, 8500), (0, 5500))):
        msp.add_line(a, b, dxfattribs=walls)
    msp.add_arc((10000, 7000), 1500, -90, 90, dxfattribs=walls)
    msp.add_text("Waiting area", height=350, dxfattribs=text).set_placement((4000, 7000))
    open_pl = msp.add_lwpolyline([(0, -3000), (5000, -3000), (5000, -1000)], dxfattribs=walls)
    stray = msp.add_text("Stair 2", height=350, dxfattribs=text)
    stray.set_placement((30000, 30000))
    nameless = msp.add_lwpolyline([(12000, 0), (14000, 0), (14000, 2000), (12000, 2000)],
                                  close=True, dxfattribs=walls)
    msp.add_lwpolyline([(0, 0), (1, 0), (1, 1)], close=True, dxfattribs={"layer": "OTHER"})
    doc.saveas(path)
    return {"open": open_pl.dxf.handle, "stray": stray.dxf.handle,
            "nameless": nameless.dxf.handle}


def test_import_rooms_from_a_dxf_plan_in_mm(tmp_path):
    handles = _plan_dxf(tmp_path / "plan.dxf")
    plan = read_plan(tmp_path / "plan.dxf", layers=["walls", "TEXT"], floor_id="G")
    assert plan.unit == "mm"
    got = {r.name: Polygon(r.outline).area for r in plan.rooms}
    assert set(got) == {"Magnet room", "Control room", "Waiting area"}
    assert got["Magnet room"] == pytest.approx(38.5, rel=1e-3)
    assert got["Control room"] == pytest.approx(10.5, rel=1e-3)
    assert got["Waiting area"] == pytest.approx(30.0 + np.pi * 1.5**2 / 2, rel=1e-3)
    reasons = {(s.handle, s.reason) for s in plan.skipped}
    assert (handles["open"], "open polyline (not closed)") in reasons
    assert (handles["stray"], "text 'Stair 2' outside every room") in reasons
    assert (handles["nameless"], "room without a name (no text inside)") in reasons
    assert any("'12': a taller text names the room" in s.reason for s in plan.skipped)
    assert len(plan.skipped) == 4  # the OTHER layer was not read


def test_skeleton_is_a_loadable_site_file(tmp_path):
    from siting.site.loader import load_site

    _plan_dxf(tmp_path / "plan.dxf")
    plan = read_plan(tmp_path / "plan.dxf", layers=["WALLS", "TEXT"])
    text = skeleton_toml(plan, site_name='Clinic "East"', floor_id="G")
    doc = tomllib.loads(text)
    assert doc["site"]["name"] == 'Clinic "East"'
    assert [r["zone"] for r in doc["rooms"]] == [1, 1, 1]
    assert "zone = 1  # to be set" in text
    path = tmp_path / "site.toml"
    path.write_text(text)
    site = load_site(path)
    areas = sorted(Polygon(r.outline).area for r in site.rooms)
    # coordinates are written to 0.1 mm
    assert areas == pytest.approx(sorted(Polygon(r.outline).area for r in plan.rooms), rel=1e-5)


def test_units_header_and_override(tmp_path):
    _plan_dxf(tmp_path / "plan.dxf", insunits=0)
    with pytest.raises(SiteFileError, match=r"\$INSUNITS = 0"):
        read_plan(tmp_path / "plan.dxf")
    plan = read_plan(tmp_path / "plan.dxf", units="mm", layers=["WALLS", "TEXT"])
    assert Polygon(plan.rooms[0].outline).area == pytest.approx(38.5)
    inches = read_plan(tmp_path / "plan.dxf", units="in", layers=["WALLS", "TEXT"])
    # 1 in = 25.4 mm exactly: the 7000 x 5500 room is 7000 x 5500 in
    assert Polygon(inches.rooms[0].outline).area == pytest.approx(7000 * 5500 * 0.0254**2)


def test_overlapping_and_enclosing_outlines_are_reported(tmp_path):
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 6
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (4, 0), (4, 4), (0, 4)], close=True)
    msp.add_lwpolyline([(2, 2), (6, 2), (6, 6), (2, 6)], close=True)
    msp.add_lwpolyline([(-1, -1), (9, -1), (9, 9), (-1, 9)], close=True)
    msp.add_text("A", height=0.3).set_placement((1, 1))
    msp.add_text("B", height=0.3).set_placement((5, 5))
    doc.saveas(tmp_path / "o.dxf")
    plan = read_plan(tmp_path / "o.dxf")
    assert [r.name for r in plan.rooms] == ["A"]
    reasons = [s.reason for s in plan.skipped]
    assert any(r.startswith("overlaps the room outline") for r in reasons)
    assert any(r.startswith("encloses other outlines") for r in reasons)


def test_import_command(tmp_path):
    import typer

    from siting.cli import cad

    app = typer.Typer()
    cad.register(app)
    _plan_dxf(tmp_path / "plan.dxf")
    runner = CliRunner()
    res = runner.invoke(app, ["import", str(tmp_path / "plan.dxf"), "-o",
                              str(tmp_path / "s.toml"), "--layer", "WALLS", "--layer", "TEXT"])
    assert res.exit_code == 0, res.output
    assert "3 room(s)" in res.output
    assert tomllib.loads((tmp_path / "s.toml").read_text())["rooms"][2]["name"] == "Waiting area"
    missing = runner.invoke(app, ["import", str(tmp_path / "none.dxf"), "-o",
                                  str(tmp_path / "t.toml")])
    assert missing.exit_code == 2
