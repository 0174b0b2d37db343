"""Review drawings: pages, text, true scale, determinism, layout helpers."""

from __future__ import annotations

import io
import math

import numpy as np
import pytest
from pypdf import PdfReader

from siting.analysis.checks import check_site
from siting.cautions import CAUTION_TEXT
from siting.export import layout
from siting.export.labels import field_text
from siting.export.plan import floors_to_draw
from siting.export.sheets import DrawingOptions, drawing_set, write_images, write_pdf
from siting.export.summary import level_meaning
from siting.fields.dipole import Dipole as DipoleSource
from siting.fields.scene import Scene
from siting.site import model

LEVELS = (1e-4, 2e-4, 5e-4, 1e-3, 3e-3)
#: The labels format_field gives these levels (two significant figures).
LEVEL_LABELS = ("0.10 mT", "0.20 mT", "0.50 mT", "1.0 mT", "3.0 mT")
ISOCENTRE = np.array([3.5, 3.5, 1.1])


class MaskedScene:
    """A point dipole at the isocentre, undefined inside a 1 m envelope (like a fringe model)."""

    def __init__(self):
        self.scene = Scene((DipoleSource(ISOCENTRE, np.array([1.2e5, 0.0, 0.0])),))

    def field(self, points):
        pts = np.asarray(points, dtype=float)
        b = self.scene.field(pts)
        b[np.linalg.norm(pts - ISOCENTRE, axis=1) < 1.0] = np.nan
        return b

    def magnitude(self, points):
        return np.linalg.norm(self.field(points), axis=1)


def make_site(**info_changes) -> model.Site:
    """A three-floor test site: one magnet, a failing waiting area, a cable, a console."""
    info = dict(name="Test suite site", length_unit="m", field_unit="mT", levels=LEVELS,
                check_heights=(0.0, 1.0, 2.0), access_limit=5e-4, revision="C",
                date="2026-01-15", prepared_by="A. Planner", checked_by="B. Checker", north=30.0)
    info.update(info_changes)
    floors = (model.Floor("B1", "Basement", -4.0, 4.0), model.Floor("G", "Ground floor", 0.0, 4.5),
              model.Floor("L1", "First floor", 4.5, 4.0))

    def room(rid, floor, name, zone, outline):
        return model.Room(rid, floor, name, zone, np.array(outline, dtype=float))

    rect = [[0, 0], [7, 0], [7, 5.5], [0, 5.5]]
    rooms = (room("MR", "G", "Magnet room", 4, rect),
             room("CTRL", "G", "Control room", 3, [[7, 0], [10, 0], [10, 3.5], [7, 3.5]]),
             room("WAIT", "G", "Waiting area", 1, [[0, 5.5], [10, 5.5], [10, 8], [0, 8]]),
             room("OFF", "L1", "Office above", 1, rect),
             room("PLANT", "B1", "Plant room", 1, rect))
    magnet = model.Magnet("M1", "G", "Test magnet", ISOCENTRE, np.array([1.0, 0.0, 0.0]), 1.5,
                          envelope=1.0)
    equipment = (model.Equipment("E1", "G", "Console", np.array([8.5, 1.5, 1.0]), 1e-3),)
    cables = (model.Cable("K1", "G", np.array([[0.0, -1.0, 2.5], [10.0, -1.0, 2.5]]), 100.0),)
    return model.Site(model.SiteInfo(**info), floors, rooms, (magnet,), (), cables, (), equipment,
                      source="test-site.toml", content_hash="0123456789abcdef" * 4)


@pytest.fixture(scope="module")
def checked():
    site, scene = make_site(), MaskedScene()
    return site, scene, check_site(site, scene, spacing=0.25)


OPTIONS = DrawingOptions(section_spacing=0.25)


@pytest.fixture(scope="module")
def rendered(checked):
    site, scene, result = checked
    return (drawing_set(site, result, scene=scene, options=OPTIONS),
            drawing_set(site, result, scene=scene, options=OPTIONS))


@pytest.fixture(scope="module")
def pdf_bytes(checked, rendered, tmp_path_factory):
    site = checked[0]
    out = []
    for i, sheets in enumerate(rendered):
        path = tmp_path_factory.mktemp("pdf") / f"set{i}.pdf"
        write_pdf(sheets, path, site)
        out.append(path.read_bytes())
    return out


def _text(pdf: bytes) -> list[str]:
    return [" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(pdf)).pages]


def test_pdf_has_summary_plans_and_section_on_a3(checked, rendered, pdf_bytes):
    site, _scene, result = checked
    floors = floors_to_draw(site, result)
    assert floors == ["B1", "G", "L1"]  # every floor sees the 0.1 mT level of this magnet
    kinds = [s.kind for s in rendered[0]]
    assert kinds == ["summary", "plan", "plan", "plan", "section"]
    reader = PdfReader(io.BytesIO(pdf_bytes[0]))
    assert len(reader.pages) == 5
    for page in reader.pages:  # ISO 216: A3 is 420 mm x 297 mm; 1 in = 25.4 mm = 72 pt
        w, h = float(page.mediabox.width), float(page.mediabox.height)
        assert w == pytest.approx(420 / 25.4 * 72, abs=0.01)
        assert h == pytest.approx(297 / 25.4 * 72, abs=0.01)


def test_pdf_text_holds_labels_names_title_block_and_cautions(checked, pdf_bytes):
    site = checked[0]
    pages = _text(pdf_bytes[0])
    everything = " ".join(pages)
    for label in LEVEL_LABELS:
        assert label in everything
    plan_g = pages[2]
    for label in LEVEL_LABELS:  # the ground-floor plan labels every level's line
        assert label in plan_g
    for room in site.rooms:
        assert room.name in everything
    for name in ("Magnet room", "Control room", "Waiting area"):
        assert name in plan_g
    for page in pages:
        for field in ("Test suite site", "A. Planner", "B. Checker", "2026-01-15",
                      "0123456789ab"):
            assert field in page
        assert " ".join(CAUTION_TEXT.split()) in page
        assert "pacemakers" in page and "Quench" in page
    assert "05 of 05" in pages[4] and "01 of 05" in pages[0]
    assert "Waiting area: |B| above its 0.50 mT limit" in plan_g
    assert "FAIL" in plan_g
    assert "IEC 60601-2-33" in pages[0] and "ICNIRP" in pages[0] and "ACR" in pages[0]
    assert "common practice" in pages[0]
    assert "0123456789abcdef" * 4 not in everything  # only the first 12 hex digits are shown


def test_pdf_and_svg_renders_are_byte_identical(checked, rendered, pdf_bytes, tmp_path):
    site = checked[0]
    assert pdf_bytes[0] == pdf_bytes[1]
    one = [s for s in rendered[0] if s.kind in ("plan", "section")][-2:]
    two = [s for s in rendered[1] if s.kind in ("plan", "section")][-2:]
    a = write_images(one, tmp_path / "a.svg", site)
    b = write_images(two, tmp_path / "b.svg", site)
    assert [p.name for p in a] == ["a-04.svg", "a-05.svg"]
    for pa, pb in zip(a, b, strict=True):
        assert pa.read_bytes() == pb.read_bytes()
    assert b"<dc:date>" not in a[0].read_bytes()  # no creation date in the file


def _mm_per_m(ax, axis: int) -> float:
    """Paper millimetres per model metre, from the axes' data-to-display transform."""
    p0 = ax.transData.transform((0.0, 0.0))
    step = (1.0, 0.0) if axis == 0 else (0.0, 1.0)
    p1 = ax.transData.transform(step)
    return float(np.hypot(*(p1 - p0))) / ax.figure.dpi * 25.4


def test_views_are_at_true_scale(rendered):
    checked_views = 0
    for sheet in rendered[0]:
        w_in, h_in = sheet.figure.get_size_inches()
        assert (w_in * 25.4, h_in * 25.4) == pytest.approx((420.0, 297.0))
        for ax in sheet.figure.axes[1:]:
            for axis in (0, 1):
                assert _mm_per_m(ax, axis) == pytest.approx(1000.0 / sheet.scale, rel=1e-9)
            checked_views += 1
    assert checked_views == 5  # three plans, two section views
    plan_scales = {s.scale for s in rendered[0] if s.kind == "plan"}
    assert plan_scales == {50}  # the 14 m x 12.5 m grids fit 1:50 on A3


def test_forced_scale_and_paper(checked):
    import dataclasses

    site, scene, result = checked
    site = dataclasses.replace(site, magnets=())  # plans only: no section sheets
    sheets = drawing_set(site, result, scene=scene,
                         options=DrawingOptions(paper="ANSI-B", scale=200))
    plan = next(s for s in sheets if s.kind == "plan")
    w_in, h_in = plan.figure.get_size_inches()
    assert (w_in, h_in) == pytest.approx((17.0, 11.0))  # ANSI/ASME Y14.1 size B: 11 x 17 in
    ax = plan.figure.axes[1]
    assert _mm_per_m(ax, 0) == pytest.approx(5.0, rel=1e-9)  # 1:200 -> 1 m is 5 mm


def test_fit_scale_picks_the_largest_standard_scale_that_fits():
    slot = layout.Rect(0, 0, 290, 260)
    assert layout.fit_scale([(14.0, 12.0)], [slot]) == 50  # 280 x 240 mm
    assert layout.fit_scale([(15.0, 12.0)], [slot]) == 100  # 300 mm wide at 1:50
    assert layout.fit_scale([(40.0, 20.0)], [slot]) == 200
    assert layout.fit_scale([(100.0, 20.0)], [slot]) == 500
    view = layout.true_scale_view(slot, (0, 0, 100, 20), 100)
    assert view.clipped and view.rect.w == 290 and view.xlim == pytest.approx((35.5, 64.5))


def test_north_arrow_points_along_rotated_north():
    from matplotlib.patches import Polygon

    fig, pax = layout.new_sheet(layout.paper("A4"))
    layout.draw_north_arrow(pax, 100.0, 100.0, 90.0, size_mm=10.0)
    tips = [p.get_xy()[0] for p in pax.patches if isinstance(p, Polygon)]
    # plan +y points east (90 deg clockwise from north): north is the plan's -x
    assert tips[0] == pytest.approx((90.0, 100.0))


def test_field_text_in_both_units():
    # 1 G corresponds to 1e-4 T (SI Brochure, 8th ed. 2006, table 9: CGS units)
    assert field_text(5e-4, "both") == "0.50 mT (5.0 G)"
    assert field_text(5e-4, "G") == "5.0 G"
    assert field_text(float("nan"), "mT") == "-"


def test_level_meanings_cite_their_sources():
    meaning, source = level_meaning(5e-4, 5e-4)
    assert "controlled-access" in meaning and "IEC 60601-2-33" in source
    assert level_meaning(9e-4, 5e-4)[1] == "IEC 60601-2-33 4th ed. (2022)"
    assert level_meaning(0.4, 5e-4) == ("exposure limit for the general public", "ICNIRP 2009")
    assert level_meaning(1e-4, 5e-4)[1] == "common practice"


def test_paper_names_are_checked():
    with pytest.raises(ValueError, match="paper"):
        layout.paper("B5")
    with pytest.raises(ValueError, match="scale"):
        DrawingOptions(scale=75)
    assert layout.paper("a4", portrait=True).width_mm == 210.0
    assert math.isclose(layout.paper("A1").width_mm, 841.0)


def test_quick_map_labels_follow_the_sheets_for_a_room_holding_the_magnet():
    # the magnet room's grid maximum next to the cryostat is not a reliable value of the
    # fitted fringe model: the quick map shows "> highest published level", as the sheets do
    from siting.analysis.checks import check_site
    from siting.examples import example
    from siting.export.plan_png import room_label
    from siting.site.build import build_scene
    from siting.site.loader import load_site

    site = load_site(example("hospital_imaging"))
    res = check_site(site, build_scene(site))
    by_id = {r.id: r for r in res.rooms}
    rooms = {r.id: r for r in site.rooms}
    assert "> 5.0 mT (magnet inside)" in room_label(site, rooms["G-MR"], by_id["G-MR"], "mT")
    assert room_label(site, rooms["G-COR"], by_id["G-COR"], "mT").endswith("FAIL")
