"""Tests of siting.site.loader: valid files to SI, and every kind of bad input."""

from __future__ import annotations

import datetime
import hashlib
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from siting.errors import SiteFileError
from siting.site.loader import load_site, load_site_text
from siting.site.model import Site

HERE = Path(__file__).parent
ROOT = HERE.parent
# 1 ft = 0.3048 m exactly: International Yard and Pound Agreement (1959), as
# tabulated in NIST SP 811 (2008) App. B.8 (from memory).  1 G = 1e-4 T: NIST
# SP 811 App. B.8 (from memory).
FOOT = 0.3048

FULL = """\
[site]
name = "Full test site"
length_unit = "ft"
field_unit = "G"
levels = ["5 mT", "5 G", "1 mT", "2 G"]
check_heights = [0, "3 ft", 6]
access_limit = "9 G"
ambient = ["0 uT", "20 uT", "-45 uT"]
revision = "C"
date = 2026-05-01
prepared_by = "A. Planner"
checked_by = "B. Checker"
north = 12.5

[[floors]]
id = "G"
name = "Ground"
elevation = 0
height = "15 ft"

[[floors]]
id = "L1"
name = "Level 1"
elevation = "15 ft"
height = 14

[[rooms]]
id = "MR"
floor = "G"
name = "Magnet room"
zone = 4
outline = [[0, 0], [20, 0], [20, "18 ft"], [0, 18], [0, 0]]

[[rooms]]
id = "OFF"
floor = "L1"
zone = 1
outline = [[0, 0], [10, 0], [10, 10]]
limit = "2 G"

[[magnets]]
id = "MR1"
floor = "G"
name = "Whole-body magnet"
center = [10, 9, 4]
axis = [1, 1, 0]
field = "1.5 T"
envelope = "3 ft"
extents = [
  { level = "5 G", axial = 13, radial = "8 ft" },
  { level = "3 mT", axial = 8, radial = 5 },
]

[[magnets]]
id = "NMR"
floor = "L1"
center = [5, 5, "1 m"]
axis = [0, 0, -3]
field = "9.4 T"
coils = [
  { radius = "0.15 m", offset = 0, length = "0.5 m", turns = 1870, current = "2000 A" },
  { radius = "0.3 m", offset = "-1 ft", turns = 10, current = "-1 kA" },
]

[[coils]]
id = "HH"
floor = "L1"
kind = "loop"
center = [2, 2, 3]
axis = [0, 0, 1]
radius = "0.5 m"
turns = 200
current = "10 A"

[[coils]]
id = "SOL"
floor = "G"
kind = "solenoid"
center = [1, 1, 1]
axis = [0, 1, 0]
radius = 1
length = 2
turns = 100
current = "5 A"

[[cables]]
id = "FEED"
floor = "L1"
path = [[0, 0, 9], [30, 0, 9], [30, 20, "9 ft"]]
current = "400 A"

[[dipoles]]
id = "TX"
floor = "G"
center = [25, 2, 2]
moment = [0, "10 A m^2", 400]

[[equipment]]
id = "CT"
floor = "L1"
name = "CT gantry"
at = [12, 3, 3]
limit = "1 G"
"""


@pytest.fixture(scope="module")
def full(tmp_path_factory) -> tuple[Site, Path]:
    path = tmp_path_factory.mktemp("sites") / "full.toml"
    path.write_text(FULL, encoding="utf-8")
    return load_site(path), path


def test_full_site_info(full):
    site, path = full
    info = site.info
    assert info.name == "Full test site"
    assert (info.length_unit, info.field_unit) == ("ft", "G")
    assert info.levels == (2e-4, 5e-4, 1e-3, 5e-3)  # 1 G = 1e-4 T, ascending
    assert info.check_heights == (0.0, 0.9144, 1.8288)  # 3 ft, 6 ft
    assert info.access_limit == 9e-4
    assert info.ambient == (0.0, 2e-5, -4.5e-5)
    assert (info.revision, info.date, info.prepared_by, info.checked_by) == (
        "C", "2026-05-01", "A. Planner", "B. Checker")
    assert info.north == 12.5
    assert site.source == str(path)
    assert site.content_hash == hashlib.sha256(path.read_bytes()).hexdigest()
    assert site.extra == {}


def test_full_site_floors_and_rooms(full):
    site, _ = full
    assert [(f.id, f.name, f.elevation, f.height) for f in site.floors] == [
        ("G", "Ground", 0.0, 15 * FOOT), ("L1", "Level 1", 4.572, 4.2672)]
    mr, off = site.rooms
    # The closing corner is dropped; 20 ft = 6.096 m, 18 ft = 5.4864 m.
    np.testing.assert_array_equal(mr.outline, [[0, 0], [6.096, 0], [6.096, 5.4864], [0, 5.4864]])
    assert mr.outline.shape == (4, 2) and mr.zone == 4 and mr.limit is None
    assert off.name == "OFF" and off.limit == 2e-4
    assert site.room_limit(mr) is None and site.room_limit(off) == 2e-4


def test_full_site_magnets_absolute_heights(full):
    site, _ = full
    mr1, nmr = site.magnets
    # Absolute z = floor elevation + z above the floor (model.py contract).
    np.testing.assert_array_equal(mr1.center, [3.048, 2.7432, 0.0 + 1.2192])
    np.testing.assert_allclose(mr1.axis, [math.sqrt(0.5), math.sqrt(0.5), 0.0], rtol=1e-15)
    assert mr1.field == 1.5 and mr1.envelope == 0.9144 and mr1.coils == ()
    assert [(e.level, e.axial, e.radial) for e in mr1.extents] == [
        (5e-4, 3.9624, 2.4384), (3e-3, 2.4384, 1.524)]
    np.testing.assert_array_equal(nmr.center, [1.524, 1.524, 4.572 + 1.0])
    np.testing.assert_array_equal(nmr.axis, [0.0, 0.0, -1.0])
    assert nmr.extents == () and nmr.envelope is None
    c0, c1 = nmr.coils
    assert (c0.radius, c0.offset, c0.length, c0.turns, c0.current) == (0.15, 0.0, 0.5, 1870, 2000)
    assert (c1.radius, c1.offset, c1.length, c1.turns, c1.current) == (0.3, -FOOT, None, 10, -1000)


def test_full_site_coils_cables_dipoles_equipment(full):
    site, _ = full
    hh, sol = site.coils
    assert (hh.kind, hh.radius, hh.turns, hh.current, hh.length) == ("loop", 0.5, 200, 10, None)
    np.testing.assert_array_equal(hh.center, [0.6096, 0.6096, 4.572 + 0.9144])
    assert (sol.kind, sol.radius, sol.length) == ("solenoid", FOOT, 0.6096)
    np.testing.assert_array_equal(sol.axis, [0, 1, 0])
    (feed,) = site.cables
    z = 4.572 + 2.7432
    np.testing.assert_array_equal(feed.path, [[0, 0, z], [9.144, 0, z], [9.144, 6.096, z]])
    assert feed.current == 400
    (tx,) = site.dipoles
    np.testing.assert_array_equal(tx.center, [7.62, 0.6096, 0.6096])
    np.testing.assert_array_equal(tx.moment, [0, 10, 400])
    (ct,) = site.equipment
    np.testing.assert_array_equal(ct.at, [3.6576, 0.9144, 4.572 + 0.9144])
    assert ct.limit == 1e-4 and ct.name == "CT gantry"


def test_minimal_site_gets_defaults():
    site = load_site(HERE / "valid_sites" / "minimal.toml")
    info = site.info
    assert (info.length_unit, info.field_unit) == ("m", "mT")
    assert info.levels == (1e-4, 2e-4, 5e-4, 1e-3, 3e-3, 5e-3, 2e-2)
    assert info.check_heights == (0.0, 0.5, 1.0, 1.5, 2.0)
    # 0.5 mT: the controlled-access level of IEC 60601-2-33 3rd ed. (from memory).
    assert info.access_limit == 5e-4
    assert info.ambient is None and info.north == 0.0 and info.revision == ""
    assert site.floors[0].name == "G"  # a name defaults to the id
    assert site.rooms == site.magnets == site.equipment == ()


@pytest.mark.parametrize("name", ["hospital_imaging", "lab_coils", "research_nmr"])
def test_demo_sites_load(name):
    site = load_site(ROOT / "rooms" / f"{name}.toml")
    assert site.floors and site.rooms


def test_bom_and_crlf_are_accepted():
    text = "\ufeff" + (HERE / "valid_sites" / "minimal.toml").read_text().replace("\n", "\r\n")
    assert load_site_text(text).info.name == "Minimal site"


# ---------------------------------------------------------------- bad input

def _doc(site: str = "", body: str = "") -> str:
    return (f'[site]\nname = "Case"\n{site}\n'
            '[[floors]]\nid = "G"\nelevation = "0 m"\nheight = "4 m"\n'
            '[[floors]]\nid = "L1"\nelevation = "4 m"\nheight = "4 m"\n' + body)


ROOM = '[[rooms]]\nid = "R"\nfloor = "G"\nzone = 1\n'
MAGNET = '[[magnets]]\nid = "M"\nfloor = "G"\ncenter = [0, 0, 1]\naxis = [1, 0, 0]\n'
COIL = '[[coils]]\nid = "C"\nfloor = "G"\ncenter = [0, 0, 1]\nturns = 10\ncurrent = "1 A"\n'
EXT = 'extents = [{ level = "0.5 mT", axial = 4, radial = 2.5 }]\n'
SQUARE = "outline = [[0, 0], [4, 0], [4, 4], [0, 4]]\n"
PLATE = '[[plates]]\nid = "P"\nfloor = "G"\nmaterial = "steel"\nthickness = "auto"\n'
WALL_PLATE = "from = [0, 0]\nto = [5, 0]\nbottom = 0\ntop = 3\n"
MATERIAL = '[[materials]]\nid = "MU"\n'

# (case, text, key path, fragment of the message)
INVALID = [
    ("unknown key", _doc(body=ROOM + SQUARE + 'colour = "red"\n'),
     "rooms[0].colour", "unknown key 'colour'; allowed keys are: id, floor"),
    ("unknown section", _doc(body='[[walls]]\nid = "W"\n'), "walls", "unknown section 'walls'"),
    ("field with a length unit",
     _doc(body=MAGNET + 'field = "1.5 m"\n' + EXT),
     "magnets[0].field", "expected a magnetic flux density such as '1.5 T', got '1.5 m'"),
    ("current with a field unit",
     _doc(body='[[cables]]\nid = "K"\nfloor = "G"\npath = [[0, 0, 0], [1, 0, 0]]\n'
               'current = "400 T"\n'),
     "cables[0].current", "expected a current such as '400 A'"),
    ("unknown floor", _doc(body=ROOM.replace('"G"', '"L9"') + SQUARE),
     "rooms[0].floor", "unknown floor 'L9'; floors are: G, L1"),
    ("self-intersecting outline",
     _doc(body=ROOM + "outline = [[0, 0], [4, 0], [0, 4], [4, 4]]\n"),
     "rooms[0].outline", "polygon crosses itself near (2.0, 2.0)"),
    ("self-intersecting outline in feet",
     _doc(site='length_unit = "ft"', body=ROOM + "outline = [[0, 0], [4, 0], [0, 4], [4, 4]]\n"),
     "rooms[0].outline", "polygon crosses itself near (2.0, 2.0)"),
    ("collinear outline", _doc(body=ROOM + "outline = [[0, 0], [1, 1], [3, 3]]\n"),
     "rooms[0].outline", "zero area"),
    ("two-corner outline", _doc(body=ROOM + "outline = [[0, 0], [4, 0], [0, 0]]\n"),
     "rooms[0].outline", "expected a polygon [[x, y], ...] with at least 3 corners"),
    ("outline corner with 3 values", _doc(body=ROOM + "outline = [[0, 0], [4, 0, 1], [0, 4]]\n"),
     "rooms[0].outline[1]", "expected a point [x, y]"),
    ("duplicate id across kinds",
     _doc(body=ROOM + SQUARE + '[[equipment]]\nid = "R"\nfloor = "G"\nat = [1, 1, 1]\n'
               'limit = "0.1 mT"\n'),
     "equipment[0].id", "duplicate id 'R' (already used by rooms[0])"),
    ("duplicate floor id",
     _doc(body='[[floors]]\nid = "G"\nelevation = 8\nheight = 4\n'),
     "floors[2].id", "duplicate id 'G' (already used by floors[0])"),
    ("zero radius", _doc(body=COIL + 'kind = "loop"\naxis = [0, 0, 1]\nradius = "0 m"\n'),
     "coils[0].radius", "expected a length > 0"),
    ("negative height",
     _doc(body='[[floors]]\nid = "B1"\nelevation = -4\nheight = "-4 m"\n'),
     "floors[2].height", "expected a length > 0"),
    ("nan coordinate", _doc(body=MAGNET.replace("[0, 0, 1]", "[0, 0, nan]")
                                 + 'field = "1.5 T"\n' + EXT),
     "magnets[0].center[2]", "not a finite number"),
    ("inf axis component", _doc(body=MAGNET.replace("[1, 0, 0]", "[inf, 0, 0]")
                                     + 'field = "1.5 T"\n' + EXT),
     "magnets[0].axis[0]", "expected a finite number, got inf"),
    ("zone 5", _doc(body=ROOM.replace("zone = 1", "zone = 5") + SQUARE),
     "rooms[0].zone", "expected a zone number 1, 2, 3 or 4, got 5"),
    ("zone as text", _doc(body=ROOM.replace("zone = 1", 'zone = "2"') + SQUARE),
     "rooms[0].zone", "expected a zone number 1, 2, 3 or 4, got '2'"),
    ("missing outline", _doc(body=ROOM), "rooms[0].outline", "missing required key 'outline'"),
    ("missing site name", "[site]\n" + _doc().split("\n", 2)[2],
     "site.name", "missing required key 'name'"),
    ("both extents and coils",
     _doc(body=MAGNET + 'field = "1.5 T"\n' + EXT
               + 'coils = [{ radius = 0.5, turns = 10, current = "1 A" }]\n'),
     "magnets[0]", "expected exactly one of 'extents' (isogauss distances) or 'coils'"),
    ("neither extents nor coils", _doc(body=MAGNET + 'field = "1.5 T"\n'),
     "magnets[0]", "neither was given"),
    ("solenoid without length",
     _doc(body=COIL + 'kind = "solenoid"\naxis = [0, 0, 1]\nradius = 0.5\n'),
     "coils[0].length", "missing required key 'length'"),
    ("loop with length",
     _doc(body=COIL + 'kind = "loop"\naxis = [0, 0, 1]\nradius = 0.5\nlength = 1\n'),
     "coils[0].length", "a loop has no length"),
    ("cable with one point",
     _doc(body='[[cables]]\nid = "K"\nfloor = "G"\npath = [[0, 0, 0]]\ncurrent = "1 A"\n'),
     "cables[0].path", "expected a path [[x, y, z], ...] of at least 2 points"),
    ("cable with a repeated point",
     _doc(body='[[cables]]\nid = "K"\nfloor = "G"\npath = [[0, 0, 0], [0, 0, 0], [1, 0, 0]]\n'
               'current = "1 A"\n'),
     "cables[0].path[1]", "repeats the previous one"),
    ("zero axis", _doc(body=COIL + 'kind = "loop"\naxis = [0, 0, 0]\nradius = 0.5\n'),
     "coils[0].axis", "expected a non-zero direction"),
    ("bad length_unit", _doc(site='length_unit = "yd"'),
     "site.length_unit", "expected 'm' or 'ft', got 'yd'"),
    ("bad field_unit", _doc(site='field_unit = "T"'),
     "site.field_unit", "expected 'mT', 'G' or 'uT', got 'T'"),
    ("duplicate levels", _doc(site='levels = ["1 mT", "0.5 mT", "10 G"]'),
     "site.levels[2]", "duplicate level '10 G' (the same as levels[0], '1 mT')"),
    ("level without a unit", _doc(site="access_limit = 0.5"),
     "site.access_limit", "got the bare number 0.5 (a unit is required)"),
    ("negative check height", _doc(site='check_heights = ["-1 m", "1 m"]'),
     "site.check_heights[0]", "expected a height >= 0"),
    ("ambient with two values", _doc(site='ambient = ["0 uT", "20 uT"]'),
     "site.ambient", "expected a field [bx, by, bz]"),
    ("north as text", _doc(site='north = "15 deg"'),
     "site.north", "expected a number of degrees"),
    ("extent missing radial",
     _doc(body=MAGNET + 'field = "1.5 T"\nextents = [{ level = "0.5 mT", axial = 4 }]\n'),
     "magnets[0].extents[0].radial", "missing required key 'radial'"),
    ("extent above the central field",
     _doc(body=MAGNET + 'field = "1.5 T"\nextents = [{ level = "3 T", axial = 4, radial = 2 }]\n'),
     "magnets[0].extents[0].level", "expected a level below the central field 1.5 T"),
    ("unknown key in a winding",
     _doc(body=MAGNET + 'field = "1.5 T"\n'
               'coils = [{ radius = 0.5, turns = 10, current = "1 A", wire = "Nb-Ti" }]\n'),
     "magnets[0].coils[0].wire", "unknown key 'wire'; allowed keys are: radius, offset"),
    ("zero turns", _doc(body=COIL.replace("turns = 10", "turns = 0")
                             + 'kind = "loop"\naxis = [0, 0, 1]\nradius = 0.5\n'),
     "coils[0].turns", "expected a number of turns > 0"),
    ("moment with a field unit",
     _doc(body='[[dipoles]]\nid = "D"\nfloor = "G"\ncenter = [0, 0, 1]\n'
               'moment = [0, "5 T", 1]\n'),
     "dipoles[0].moment[1]", "expected a magnetic moment such as '25 A m^2', got '5 T'"),
    ("negative equipment limit",
     _doc(body='[[equipment]]\nid = "E"\nfloor = "G"\nat = [1, 1, 1]\nlimit = "-1 mT"\n'),
     "equipment[0].limit", "expected a magnetic flux density > 0"),
    ("unknown unit", _doc(body=ROOM + "outline = [[0, 0], ['4 furlongz', 0], [4, 4]]\n"),
     "rooms[0].outline[1][0]", "unknown unit 'furlongz'"),
    ("bad id", _doc(body=ROOM.replace('id = "R"', 'id = "R 1"') + SQUARE),
     "rooms[0].id", "expected an id such as 'MR1'"),
    ("floor given as a number", _doc(body=ROOM.replace('floor = "G"', "floor = 1") + SQUARE),
     "rooms[0].floor", "expected a string (the id of a floor), got 1"),
    ("rooms as a single table", _doc(body='[rooms]\nid = "R"\n'),
     "rooms", "expected an array of tables [[rooms]]"),
    ("no floors", '[site]\nname = "Case"\n', "floors", "expected at least one [[floors]] table"),
    ("no site table", '[[floors]]\nid = "G"\nelevation = 0\nheight = 4\n',
     "site", "missing required table [site]"),
    ("plate with wall and horizontal keys",
     _doc(body=PLATE + WALL_PLATE + "z = 1\n"),
     "plates[0]", "not both; got from, to, bottom, top, z"),
    ("plate with neither geometry", _doc(body=PLATE), "plates[0]", "neither was given"),
    ("wall plate without 'to'",
     _doc(body=PLATE + "from = [0, 0]\nbottom = 0\ntop = 3\n"),
     "plates[0].to", "missing required key 'to' (a wall plate needs from, to, bottom, top)"),
    ("wall plate top below bottom",
     _doc(body=PLATE + WALL_PLATE.replace("top = 3", "top = 0")),
     "plates[0].top", "expected top above bottom"),
    ("zero-length wall plate",
     _doc(body=PLATE + WALL_PLATE.replace("to = [5, 0]", "to = [0, 0]")),
     "plates[0].to", "expected a wall of length > 0"),
    ("unknown plate material",
     _doc(body=PLATE.replace('"steel"', '"MU9"') + WALL_PLATE),
     "plates[0].material", "unknown material 'MU9'; materials are: steel"),
    ("bad plate thickness",
     _doc(body=PLATE.replace('"auto"', '"thin"') + WALL_PLATE),
     "plates[0].thickness", "expected a thickness > 0 such as '10 mm', or 'auto'"),
    ("unknown plate key lists 'from'",
     _doc(body=PLATE + WALL_PLATE + 'start = [0, 0]\n'),
     "plates[0].start", "allowed keys are: id, floor, name, material, thickness, from, to"),
    ("non-monotone B-H table",
     _doc(body=MATERIAL + "bh = [[0, 0], [100, 0.5], [200, 0.4], [400, 1.2]]\n"),
     "materials[0].bh[2]", "increase strictly down the table (non-monotone)"),
    ("B-H row that is not a pair",
     _doc(body=MATERIAL + "bh = [[0, 0], [100], [400, 1.2]]\n"),
     "materials[0].bh[1]", "expected a pair [H in A/m, B in T]"),
    ("material with two laws",
     _doc(body=MATERIAL + "permeability = 500\nbh = [[100, 0.5], [400, 1.2]]\n"),
     "materials[0]", "expected exactly one of 'permeability', 'bh' or 'bh_file'"),
    ("permeability not above 1", _doc(body=MATERIAL + "permeability = 0.5\n"),
     "materials[0].permeability", "expected a relative permeability > 1"),
    ("missing B-H file", _doc(body=MATERIAL + 'bh_file = "no-such-curve.csv"\n'),
     "materials[0].bh_file", "cannot read the B-H file"),
    ("reserved material id", _doc(body=MATERIAL.replace('"MU"', '"steel"')
                                       + "permeability = 500\n"),
     "materials[0].id", "the id 'steel' is reserved"),
    ("negative stock thickness", _doc(site='stock_thicknesses = ["5 mm", "-1 mm"]'),
     "site.stock_thicknesses[1]", "expected a length > 0"),
    ("steel limit without a unit", _doc(site="steel_limit = 1.5"),
     "site.steel_limit", "a unit is required"),
]


@pytest.mark.parametrize(("case", "text", "path", "fragment"), INVALID,
                         ids=[case[0] for case in INVALID])
def test_invalid_site(case, text, path, fragment):
    name = "case.toml"
    with pytest.raises(SiteFileError) as info:
        load_site_text(text, name=name)
    problems = info.value.problems
    assert any(p.startswith(f"{name}: {path}: ") and fragment in p for p in problems), problems
    assert all(p.startswith(f"{name}: ") for p in problems)


def test_enough_invalid_cases():
    assert len(INVALID) >= 25


def test_toml_syntax_error_gives_line_and_column():
    with pytest.raises(SiteFileError) as info:
        load_site_text('[site]\nname = "x"\nlevels = [1 mT]\n', name="bad.toml")
    (problem,) = info.value.problems
    assert problem.startswith("bad.toml: TOML syntax error: ")
    assert "line 3, column" in problem


def test_three_problems_are_all_reported():
    text = _doc(body=ROOM.replace('"G"', '"L9"') + SQUARE + 'colour = "red"\n'
                + MAGNET + 'field = "1.5 m"\n' + EXT)
    with pytest.raises(SiteFileError) as info:
        load_site_text(text, name="three.toml")
    assert info.value.problems == [
        "three.toml: rooms[0].colour: unknown key 'colour'; allowed keys are: "
        "id, floor, name, zone, outline, limit",
        "three.toml: rooms[0].floor: unknown floor 'L9'; floors are: G, L1",
        "three.toml: magnets[0].field: expected a magnetic flux density such as '1.5 T', "
        "got '1.5 m'",
    ]


def test_unreadable_files(tmp_path):
    with pytest.raises(SiteFileError, match="cannot read the file"):
        load_site(tmp_path / "missing.toml")
    with pytest.raises(SiteFileError, match="cannot read the file"):
        load_site(tmp_path)
    binary = tmp_path / "binary.toml"
    binary.write_bytes(b"[site]\nname = '\xff\xfe'\n")
    with pytest.raises(SiteFileError, match=r"binary.toml: not UTF-8 text \(byte 0xff"):
        load_site(binary)


def test_overlong_integer_and_deep_nesting_are_site_file_errors():
    with pytest.raises(SiteFileError, match="cannot be read"):
        load_site_text("x = 1" + "0" * 5000)
    with pytest.raises(SiteFileError):
        load_site_text("x = " + "[" * 3000 + "]" * 3000)


# ------------------------------------------------------ property-based tests

def _toml_str(text: str) -> str:
    out = []
    for ch in text:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str):
        return _toml_str(value)
    if isinstance(value, datetime.date):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return "{" + ", ".join(f"{_toml_str(k)} = {_toml_value(v)}" for k, v in value.items()) + "}"


def _toml(document: dict) -> str:
    """A document as one inline key = value line per top-level key."""
    return "\n".join(f"{_toml_str(k)} = {_toml_value(v)}" for k, v in document.items()) + "\n"


_IDS = st.from_regex(r"[A-Za-z0-9][A-Za-z0-9_.\-]{0,5}", fullmatch=True)
_CENTI = st.integers(-3000, 3000).map(lambda k: k / 100)


@st.composite
def _valid_sites(draw):
    """A random valid document and the SI values it must load as."""
    unit = draw(st.sampled_from(["m", "ft"]))
    factor = {"m": 1.0, "ft": FOOT}

    def length(value, how=None):  # render a length one of three ways; return (toml, SI)
        how = how or draw(st.sampled_from(["bare", "m", "ft"]))
        if how == "bare":
            return value, value * factor[unit]
        return f"{value!r} {how}", value * factor[how]

    n_floors, n_rooms = draw(st.integers(1, 3)), draw(st.integers(0, 4))
    ids = draw(st.lists(_IDS, min_size=2 * n_floors + n_rooms, max_size=2 * n_floors + n_rooms,
                        unique=True))
    floors, expected_floors, equipment, expected_at = [], [], [], []
    for i in range(n_floors):
        (elev, elev_si), (height, height_si) = length(draw(_CENTI)), length(
            draw(st.integers(1, 900).map(lambda k: k / 100)))
        floors.append({"id": ids[i], "elevation": elev, "height": height})
        expected_floors.append((ids[i], elev_si, height_si))
        z, z_si = length(draw(_CENTI))
        equipment.append({"id": ids[n_floors + i], "floor": ids[i], "at": [0, 0, z],
                          "limit": "0.1 mT"})
        expected_at.append(elev_si + z_si)
    rooms, expected_rooms = [], []
    for j in range(n_rooms):
        x0, y0 = draw(_CENTI), draw(_CENTI)
        w, h = (draw(st.integers(10, 2000)) / 100 for _ in range(2))
        corners = [(x0, y0), (x0 + w, y0), (x0 + w, y0 + h), (x0, y0 + h)]
        zone = draw(st.integers(1, 4))
        how = draw(st.sampled_from(["bare", "m", "ft"]))  # one way per room: a rectangle
        rendered = [[length(x, how), length(y, how)] for x, y in corners]
        rooms.append({"id": ids[2 * n_floors + j], "floor": ids[j % n_floors], "zone": zone,
                      "outline": [[p[0][0], p[1][0]] for p in rendered]})
        expected_rooms.append((zone, [[p[0][1], p[1][1]] for p in rendered]))
    document = {"site": {"name": draw(st.text(max_size=20)), "length_unit": unit},
                "floors": floors, "equipment": equipment}
    if rooms:
        document["rooms"] = rooms
    return document, expected_floors, expected_rooms, expected_at


@settings(max_examples=40, deadline=None, database=None)
@given(_valid_sites())
def test_random_valid_sites_round_trip(case):
    document, expected_floors, expected_rooms, expected_at = case
    text = _toml(document)
    site = load_site_text(text)
    assert site.content_hash == hashlib.sha256(text.encode()).hexdigest()
    assert site.info.name == document["site"]["name"]
    for floor, (fid, elev, height) in zip(site.floors, expected_floors, strict=True):
        assert floor.id == fid
        assert floor.elevation == pytest.approx(elev, rel=1e-15, abs=1e-15)
        assert floor.height == pytest.approx(height, rel=1e-15)
    for room, (zone, outline) in zip(site.rooms, expected_rooms, strict=True):
        assert room.zone == zone
        np.testing.assert_allclose(room.outline, outline, rtol=1e-15, atol=1e-14)
    for item, z in zip(site.equipment, expected_at, strict=True):
        assert item.at[2] == pytest.approx(z, rel=1e-15, abs=1e-14)


_QUANTITIES = st.sampled_from(["1 m", "0 T", "-3 ft", "5 G", "nan A", "1e999 m", "2 A m^2",
                               "G", "loop", "solenoid", "m", "ft", "mT"])
_SCALARS = (st.booleans() | st.integers(-(2**63), 2**63 - 1) | st.floats()
            | st.text(max_size=8) | st.dates() | _QUANTITIES)
_VALUES = st.recursive(_SCALARS, lambda inner: st.lists(inner, max_size=4)
                       | st.dictionaries(st.text(max_size=6), inner, max_size=3), max_leaves=8)


def _base() -> dict:
    return {
        "site": {"name": "Junk", "levels": ["1 mT"]},
        "floors": [{"id": "G", "elevation": 0, "height": 4}],
        "rooms": [{"id": "R", "floor": "G", "zone": 1, "outline": [[0, 0], [4, 0], [4, 4]]}],
        "magnets": [{"id": "M", "floor": "G", "center": [1, 1, 1], "axis": [0, 0, 1],
                     "field": "1.5 T", "extents": [{"level": "1 mT", "axial": 3, "radial": 2}]}],
        "coils": [{"id": "C", "floor": "G", "kind": "loop", "center": [0, 0, 1],
                   "axis": [0, 0, 1], "radius": 1, "turns": 1, "current": "1 A"}],
        "cables": [{"id": "K", "floor": "G", "path": [[0, 0, 0], [1, 0, 0]], "current": "1 A"}],
        "dipoles": [{"id": "D", "floor": "G", "center": [0, 0, 0], "moment": [0, 0, 1]}],
        "equipment": [{"id": "E", "floor": "G", "at": [0, 0, 0], "limit": "1 mT"}],
    }


@settings(max_examples=100, deadline=None, database=None)
@given(st.data())
def test_random_values_in_random_keys_give_site_file_errors(data):
    document = _base()
    for _ in range(data.draw(st.integers(1, 3))):
        section = data.draw(st.sampled_from(sorted(document) + ["extra"]))
        value = data.draw(_VALUES)
        table = document.get(section)
        if isinstance(table, list) and table and isinstance(table[0], dict):
            table = table[0]
        if not isinstance(table, dict) or data.draw(st.booleans()):
            document[section] = value
            continue
        key = data.draw(st.sampled_from(sorted(table) + ["colour"]))
        table[key] = value
    try:
        site = load_site_text(_toml(document), name="junk.toml")
    except SiteFileError as exc:
        assert exc.problems and all(p.startswith("junk.toml: ") for p in exc.problems)
    else:
        assert isinstance(site, Site)


@settings(max_examples=100, deadline=None, database=None)
@given(st.text(max_size=200))
def test_random_text_gives_site_file_error(text):
    with pytest.raises(SiteFileError):
        load_site_text(text)
