"""The command line's contract: exit statuses, JSON shapes, messages, cautions."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy.constants import mu_0
from typer.testing import CliRunner

from siting.cli import app

ROOMS = Path(__file__).resolve().parents[1] / "rooms"
runner = CliRunner()

DIPOLE_SITE = """
[site]
name = "dipole test"
levels = ["0.5 mT", "1 mT"]
check_heights = ["1 m"]

[[floors]]
id = "F"
name = "floor"
elevation = "0 m"
height = "3 m"

[[rooms]]
id = "NEAR"
floor = "F"
name = "near room"
zone = 1
outline = [[0.4, -0.5], [1.4, -0.5], [1.4, 0.5], [0.4, 0.5]]

[[rooms]]
id = "FAR"
floor = "F"
name = "far room"
zone = 2
outline = [[3, -1], [5, -1], [5, 1], [3, 1]]

[[dipoles]]
id = "D"
floor = "F"
center = [0, 0, 1]
moment = [0, 0, 5000]

[[equipment]]
id = "EQ"
floor = "F"
name = "sensor"
at = [2, 0, 1]
limit = "50 uT"
"""


@pytest.fixture()
def dipole_site(tmp_path):
    path = tmp_path / "dipole.toml"
    path.write_text(DIPOLE_SITE)
    return path


def test_check_json_contract(dipole_site):
    res = runner.invoke(app, ["check", str(dipole_site), "--json"])
    assert res.exit_code == 1, res.output  # NEAR lies inside the 0.5 mT line
    doc = json.loads(res.output)
    assert set(doc) >= {"rooms", "equipment", "failures"}
    room_keys = {"id", "floor", "zone", "limit_T", "max_T", "at_m", "margin_m", "status"}
    for room in doc["rooms"]:
        assert room_keys <= set(room)
        assert room["status"] in ("pass", "fail")
    rooms = {r["id"]: r for r in doc["rooms"]}
    assert rooms["NEAR"]["status"] == "fail" and rooms["FAR"]["status"] == "pass"
    assert rooms["NEAR"]["limit_T"] == pytest.approx(0.5e-3)
    # Equatorial field of a point dipole, Jackson, Classical Electrodynamics 3rd ed. (1999),
    # eq. 5.56 with m . r = 0: |B| = mu0 m / (4 pi r^3); the NEAR room's nearest edge is r = 0.4 m.
    assert rooms["NEAR"]["max_T"] == pytest.approx(mu_0 * 5000 / (4 * np.pi * 0.4**3), rel=1e-3)
    eq = doc["equipment"][0]
    assert set(eq) >= {"id", "floor", "limit_T", "field_T", "status"}
    assert eq["field_T"] == pytest.approx(mu_0 * 5000 / (4 * np.pi * 2.0**3), rel=1e-9)
    # NEAR; the sensor (62.5 uT against its 50 uT limit); and the 0.5 mT line, which no
    # zone 3/4 room encloses
    assert doc["failures"] == 3
    assert doc["access"][0]["contained"] is False


def test_check_exit_zero_when_all_pass(tmp_path):
    text = DIPOLE_SITE.replace("moment = [0, 0, 5000]", "moment = [0, 0, 50]") + """
[[rooms]]
id = "SRC"
floor = "F"
name = "source room"
zone = 4
outline = [[-0.35, -0.35], [0.35, -0.35], [0.35, 0.35], [-0.35, 0.35]]
"""
    path = tmp_path / "weak.toml"
    path.write_text(text.replace('limit = "50 uT"', 'limit = "0.1 mT"'))
    res = runner.invoke(app, ["check", str(path), "--json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["failures"] == 0


def test_check_table_says_limit_and_caution(dipole_site):
    res = runner.invoke(app, ["check", str(dipole_site)])
    assert res.exit_code == 1
    assert "FAIL" in res.output
    assert "0.5 mT" in res.output or "0.50 mT" in res.output
    assert "MR physicist" in res.output and "planning estimate" in res.output


def test_invalid_site_exits_2_with_key(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(DIPOLE_SITE.replace('zone = 2', 'zone = 7'))
    res = runner.invoke(app, ["check", str(path)])
    assert res.exit_code == 2
    assert "rooms[1].zone" in res.output and str(path) in res.output
    assert "Traceback" not in res.output


def test_missing_file_exits_2(tmp_path):
    res = runner.invoke(app, ["check", str(tmp_path / "nope.toml")])
    assert res.exit_code == 2
    assert "nope.toml" in res.output


def test_probe_json_absolute_and_floor_relative(dipole_site):
    res = runner.invoke(app, ["probe", str(dipole_site), "--at", "2,0,1", "--json"])
    assert res.exit_code == 0, res.output
    pt = json.loads(res.output)["points"][0]
    assert pt["at_m"] == [2.0, 0.0, 1.0]
    # Jackson eq. 5.56 on the equator: B = -mu0 m / (4 pi r^3) z_hat
    assert pt["b_T"][2] == pytest.approx(-mu_0 * 5000 / (4 * np.pi * 8.0), rel=1e-9)
    assert pt["magnitude_T"] == pytest.approx(abs(pt["b_T"][2]))
    res = runner.invoke(app, ["probe", str(dipole_site), "--at", "2,0,1", "--floor", "F", "--json"])
    assert json.loads(res.output)["points"][0]["at_m"] == [2.0, 0.0, 1.0]


def test_probe_null_with_note_where_undefined(dipole_site):
    res = runner.invoke(app, ["probe", str(dipole_site), "--at", "0,0,1", "--json"])
    assert res.exit_code == 0
    pt = json.loads(res.output)["points"][0]
    assert pt["b_T"] is None and pt["magnitude_T"] is None
    assert "dipole 'D'" in pt["note"]


def test_probe_bad_point_and_floor(dipole_site):
    assert runner.invoke(app, ["probe", str(dipole_site), "--at", "1,2"]).exit_code == 2
    res = runner.invoke(app, ["probe", str(dipole_site), "--at", "1,2,3", "--floor", "Q"])
    assert res.exit_code == 2 and "unknown floor 'Q'" in res.output


def test_map_writes_png_and_results(dipole_site, tmp_path):
    out = tmp_path / "out"
    res = runner.invoke(app, ["map", str(dipole_site), "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert (out / "floor-F.png").stat().st_size > 10_000
    doc = json.loads((out / "results.json").read_text())
    assert doc["failures"] == 3
    circles = [c for c in doc["contours"] if c["level_T"] == pytest.approx(0.5e-3)]
    # the 0.5 mT line in the dipole's equatorial plane is a circle of radius
    # (mu0 m / (4 pi 0.5 mT))^(1/3) (Jackson eq. 5.56)
    r0 = (mu_0 * 5000 / (4 * np.pi * 0.5e-3)) ** (1 / 3)
    area = sum(p["area_m2"] for p in circles[0]["polygons"])
    assert area == pytest.approx(np.pi * r0**2, rel=0.02)


def test_demo_runs_and_exits_zero(tmp_path):
    res = runner.invoke(app, ["demo", "--out", str(tmp_path / "demo")])
    assert res.exit_code == 0, res.output
    assert "FAIL" in res.output
    assert (tmp_path / "demo" / "results.json").exists()
    assert (tmp_path / "demo" / "floor-G.png").exists()
