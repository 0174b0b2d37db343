"""Steel plates in site files: loading, the solved plates as sources, sizing, the CLI."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from siting.cli import app
from siting.cli.common import CAUTION
from siting.errors import SitingError
from siting.fields.dipole import Dipole
from siting.shielding import STOCK_THICKNESSES
from siting.shielding.slab import Slab, slab_field
from siting.site.build import base_sources, build_scene, build_sources
from siting.site.loader import load_site, load_site_text
from siting.site.steel import shielding_report

ROOMS = Path(__file__).resolve().parents[1] / "rooms"
runner = CliRunner()

LOADED = """\
[site]
name = "plates"
length_unit = "ft"
stock_thicknesses = ["10 mm", "2 mm", "0.25 in"]
steel_limit = "1.2 T"

[[floors]]
id = "G"
elevation = 0
height = 12

[[floors]]
id = "L1"
elevation = "4 m"
height = "4 m"

[[materials]]
id = "MU"
name = "high-permeability alloy"
permeability = 20000
density = "8700 kg/m^3"

[[materials]]
id = "INL"
bh = [[100, 0.2], [300, 1.0], [2000, 1.6]]

[[materials]]
id = "CSV"
bh_file = "curve.csv"

[[plates]]
id = "W1"
floor = "L1"
material = "MU"
thickness = "3 mm"
from = [0, 0]
to = [10, 0]
bottom = "0.5 m"
top = "2.5 m"
panels = "0.4 m"

[[plates]]
id = "F1"
floor = "L1"
thickness = "auto"
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
z = "-0.1 m"
"""

CSV = "# test curve\nH_A_per_m,B_T\n0,0\n50,0.1\n200,0.9\n1000,1.5\n"


@pytest.fixture(scope="module")
def loaded(tmp_path_factory):
    folder = tmp_path_factory.mktemp("plates")
    (folder / "curve.csv").write_text(CSV)
    path = folder / "site.toml"
    path.write_text(LOADED)
    return load_site(path), folder


def test_plates_and_materials_load_in_si(loaded):
    site, folder = loaded
    # 0.25 in = 6.35 mm exactly (1 in = 25.4 mm, NIST SP 811 App. B.8, from memory); ascending
    assert site.info.stock_thicknesses == pytest.approx((0.002, 0.00635, 0.010), rel=1e-12)
    assert site.info.steel_limit == 1.2
    mu, inl, csv = site.materials
    assert (mu.permeability, mu.density, mu.name, mu.h) == (20000.0, 8700.0,
                                                           "high-permeability alloy", None)
    # a table not starting at the origin gets the row [0, 0] first
    np.testing.assert_array_equal(inl.h, [0, 100, 300, 2000])
    np.testing.assert_array_equal(inl.b, [0, 0.2, 1.0, 1.6])
    assert inl.density == 7850.0 and inl.permeability is None
    np.testing.assert_array_equal(csv.h, [0, 50, 200, 1000])
    assert csv.source == str(folder / "curve.csv")
    w1, f1 = site.plates
    assert w1.wall and not f1.wall
    assert (w1.material, w1.thickness, w1.panels) == ("MU", 0.003, 0.4)
    np.testing.assert_allclose(w1.end, [3.048, 0.0])  # 10 ft
    assert (w1.bottom, w1.top) == (4.5, 6.5)  # absolute: the floor's elevation added
    assert f1.material == "steel" and f1.thickness is None
    assert f1.z == pytest.approx(3.9)
    np.testing.assert_allclose(f1.outline[2], [3.048, 3.048])


def test_default_shielding_keys():
    site = load_site(ROOMS / "hospital_imaging.toml")
    assert site.plates == () and site.materials == ()
    # stock list and 1.5 T steel design limit: siting.shielding.material (common practice)
    assert site.info.stock_thicknesses == STOCK_THICKNESSES
    assert site.info.steel_limit == 1.5


def _dipole_site(plate: str, extra: str = "") -> str:
    return f"""
[site]
name = "dipole and wall"
check_heights = ["4.5 m", "5 m", "5.5 m"]
levels = ["0.1 mT"]
{extra}
[[floors]]
id = "F"
elevation = "0 m"
height = "10 m"

[[materials]]
id = "MU"
permeability = 1000

[[dipoles]]
id = "D"
floor = "F"
center = [0, 0, 5]
moment = [0, 2000, 0]

{plate}
"""


WALL = """[[plates]]
id = "P"
floor = "F"
material = "MU"
thickness = "2 mm"
from = [-2, 0.5]
to = [2, 0.5]
bottom = "3 m"
top = "7 m"
"""


def test_wall_plate_lowers_the_field_behind_it_like_an_infinite_slab():
    site = load_site_text(_dipole_site(WALL))
    sources = build_sources(site)
    assert [s.kind for s in sources] == ["dipole", "plate"]
    pts = np.array([[x, 0.9, 5.0] for x in (0.0, 0.3, 0.6)])  # 0.4 m beyond the plate
    bare = np.linalg.norm(build_scene(site, base_sources(site)).field(pts), axis=1)
    shielded = np.linalg.norm(build_scene(site, sources).field(pts), axis=1)
    # Reference: the infinite slab of the same permeability and thickness, transmission
    # T(k) = 4 mu / ((mu + 1)^2 - (mu - 1)^2 exp(-2 k t)) per spatial frequency (derived in
    # siting/shielding/slab.py after J. D. Jackson, Classical Electrodynamics, 3rd ed., 1999,
    # sec. 4.4 and 5.9-5.12, and A. J. Mager, "Magnetic shields", IEEE Trans. Magn. 6(1), 1970).
    slab = Slab([0, 0.5 - 0.001, 5], [0, 1, 0], 0.002, 1000.0)
    ref = np.linalg.norm(slab_field(Dipole([0, 0, 5], [0, 2000, 0]), pts, slab, spacing=0.02,
                                    center=[0, 0.499, 5]), axis=1)
    assert np.all(shielded < 0.4 * bare)  # a strong effect, in the direction physics says
    # 10 %: the plate is finite (4 m at 0.5 m from the source) and meshed coarsely
    # (panels up to 0.25 m, 0.4 m from the points)
    np.testing.assert_allclose(shielded, ref, rtol=0.10)
    report = shielding_report(sources)
    (plate,) = report.plates
    # mass = density x area x thickness (common practice), 7850 kg/m^3 default
    assert plate.mass == pytest.approx(7850 * 16 * 0.002, rel=1e-9)
    assert plate.force[1] < 0  # the wall is pulled toward the dipole (-y)
    assert not plate.saturated and report.converged


def test_auto_plate_without_a_sufficient_stock_thickness_is_an_error():
    room = """[[rooms]]
id = "R"
floor = "F"
zone = 1
outline = [[-1, 0.6], [1, 0.6], [1, 2], [-1, 2]]
"""
    site = load_site_text(_dipole_site(WALL.replace('"2 mm"', '"auto"') + room,
                                       'stock_thicknesses = ["0.1 mm", "0.2 mm"]'))
    with pytest.raises(SitingError, match="no stock thickness up to 0.2 mm makes plates P"):
        build_sources(site)


def _check_json(name):
    res = runner.invoke(app, ["check", str(ROOMS / name), "--json"])
    return res, json.loads(res.output)


def test_example_fails_without_steel_and_passes_with_it():
    res, bare = _check_json("hospital_imaging.toml")
    assert res.exit_code == 1
    cor = {r["id"]: r for r in bare["rooms"]}["G-COR"]
    assert cor["status"] == "fail" and "shielding" not in bare
    res, doc = _check_json("hospital_shielded.toml")
    assert res.exit_code == 0, res.output
    assert doc["failures"] == 0 and doc["caution"] == CAUTION
    cor_after = {r["id"]: r for r in doc["rooms"]}["G-COR"]
    assert cor_after["status"] == "pass" and cor_after["max_T"] < 0.5e-3 < cor["max_T"]
    (plate,) = doc["shielding"]["plates"]
    assert plate["sized"] and plate["thickness_m"] in [0.005, 0.010, 0.015, 0.020, 0.025, 0.030]
    assert plate["mass_kg"] == pytest.approx(7850 * 5.1 * 3.0 * plate["thickness_m"])
    assert not plate["saturated"] and plate["force_N"][0] > 0  # pulled toward the magnet (+x)
    (magnet,) = doc["shielding"]["magnets"]
    assert magnet["shift_ppm"] == pytest.approx(magnet["shift_uT"] / 1.5)  # ppm of 1.5 T
    cands = doc["shielding"]["candidates"]
    assert cands[-1]["thickness_m"] == plate["thickness_m"] and cands[-1]["full_check_passed"]


def test_check_text_shows_the_steel_table():
    res = runner.invoke(app, ["check", str(ROOMS / "hospital_shielded.toml")])
    assert res.exit_code == 0, res.output
    assert "Steel plates" in res.output and "(sized)" in res.output
    assert "isocentre shift" in res.output and "ppm" in res.output
    assert CAUTION in res.output


def test_shield_command_lists_candidates_and_exits_0():
    res = runner.invoke(app, ["shield", str(ROOMS / "hospital_shielded.toml")])
    assert res.exit_code == 0, res.output
    assert "Stock thicknesses tried" in res.output and "G-COR" in res.output
    assert "chosen thickness:" in res.output and "isocentre shift" in res.output
    assert "5 mm" in res.output  # the first candidate of the example's stock list
    assert CAUTION in res.output


def test_shield_command_exit_statuses(tmp_path):
    path = tmp_path / "site.toml"
    path.write_text(_dipole_site(WALL.replace('"2 mm"', '"auto"') + """[[rooms]]
id = "R"
floor = "F"
zone = 1
outline = [[-1, 0.6], [1, 0.6], [1, 2], [-1, 2]]
""", 'stock_thicknesses = ["0.1 mm", "0.2 mm"]'))
    res = runner.invoke(app, ["shield", str(path), "--json"])
    assert res.exit_code == 1, res.output
    doc = json.loads(res.output)
    assert doc["chosen_thickness_m"] is None and len(doc["candidates"]) == 2
    assert doc["caution"] == CAUTION
    res = runner.invoke(app, ["shield", str(path), "--plate", "NOPE"])
    assert res.exit_code == 2 and "unknown plate 'NOPE'" in res.output
    res = runner.invoke(app, ["shield", str(path), "--target", "NOPE"])
    assert res.exit_code == 2 and "'NOPE' is no room or equipment" in res.output


def test_drawing_set_shows_the_steel(tmp_path):
    from pypdf import PdfReader

    out = tmp_path / "steel.pdf"
    res = runner.invoke(app, ["draw", str(ROOMS / "hospital_shielded.toml"), "-o", str(out)])
    assert res.exit_code == 0, res.output
    text = "\n".join(page.extract_text() for page in PdfReader(out).pages)
    assert "Steel plates" in text and "PL-W" in text
    assert "isocentre" in text and "ppm" in text
    assert "MR physicist" in text
