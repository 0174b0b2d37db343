"""Rooms from an architect's DXF floor plan, and a site-file skeleton from them.

Room outlines are closed LWPOLYLINEs and POLYLINEs (bulges flattened), and
closed chains of LINEs and ARCs (arcs flattened, chains found with
:func:`shapely.ops.polygonize`).  A room's name is the TEXT or MTEXT whose
insertion point lies inside it (the tallest if several).  Lengths follow the
drawing's $INSUNITS unless a unit is given, and come out in metres.  What
cannot be used is reported, never guessed: open polylines, loose lines,
self-intersecting, overlapping or enclosing outlines, text outside every room
and rooms without a name.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import ezdxf
import numpy as np
from ezdxf import path as dxfpath
from shapely.geometry import LineString, Point, Polygon
from shapely.ops import polygonize_full, unary_union

from siting.errors import SiteFileError

#: $INSUNITS code -> (unit name, metres per unit) for the units accepted.
INSUNITS_M = {1: ("in", 0.0254), 2: ("ft", 0.3048), 4: ("mm", 0.001), 5: ("cm", 0.01),
              6: ("m", 1.0)}
UNIT_M = {name: f for name, f in INSUNITS_M.values()}
#: Flattening tolerance of arcs and bulges, in metres on the plan.
FLATTEN_M = 0.005
#: Relative overlap area above which two outlines count as overlapping.
OVERLAP_FRACTION = 1e-3


@dataclass(frozen=True, eq=False)
class ImportedRoom:
    """A room found in the drawing: outline (m, 2) [m], not closed."""

    id: str
    name: str
    outline: np.ndarray
    layer: str
    handle: str


@dataclass(frozen=True)
class Skipped:
    """An entity (or outline) that was not used, and why."""

    what: str  # "LWPOLYLINE", "TEXT", "outline", ...
    layer: str
    handle: str
    reason: str


@dataclass(frozen=True, eq=False)
class PlanImport:
    rooms: tuple[ImportedRoom, ...]
    skipped: tuple[Skipped, ...]
    unit: str  # the drawing's unit as used
    source: str


def _unit(doc, units: str | None, source: str) -> tuple[str, float]:
    if units is not None:
        if units not in UNIT_M:
            raise SiteFileError([f"{source}: --units: expected one of {', '.join(UNIT_M)}; "
                                 f"got {units!r}"])
        return units, UNIT_M[units]
    code = int(doc.header.get("$INSUNITS", 0))
    if code not in INSUNITS_M:
        raise SiteFileError([f"{source}: header $INSUNITS = {code} does not name a length unit "
                             f"this importer accepts; give the unit ({', '.join(UNIT_M)})"])
    return INSUNITS_M[code]


def _on(entity, layers) -> bool:
    return layers is None or entity.dxf.layer.lower() in layers


def _flat(entity, k: float) -> np.ndarray:
    p = dxfpath.make_path(entity)
    pts = np.array([(v.x, v.y) for v in p.flattening(FLATTEN_M / k, segments=8)], dtype=float)
    return pts * k


def _text_of(entity) -> tuple[str, np.ndarray, float]:
    if entity.dxftype() == "MTEXT":
        text = entity.plain_text().strip()
        at, h = entity.dxf.insert, entity.dxf.get("char_height", 1.0)
    else:
        text = entity.plain_text().strip()
        use_align = (entity.dxf.get("halign", 0) or entity.dxf.get("valign", 0)) and \
            entity.dxf.hasattr("align_point")
        at = entity.dxf.align_point if use_align else entity.dxf.insert
        h = entity.dxf.get("height", 1.0)
    return " ".join(text.split()), np.array([at.x, at.y], dtype=float), float(h)


def read_plan(path, *, layers=None, units: str | None = None, floor_id: str = "G") -> PlanImport:
    """Read the rooms of a DXF floor plan.

    Parameters
    ----------
    path : path-like
        The DXF file.
    layers : sequence of str, optional
        Layers to read outlines and texts from (case-insensitive); all if None.
    units : str, optional
        "m", "mm", "cm", "ft" or "in"; overrides the drawing's $INSUNITS.
    floor_id : str
        Prefix of the room ids ("G-R01", ...).

    Returns
    -------
    PlanImport
        Rooms in drawing order, outlines in metres.

    Raises
    ------
    SiteFileError
        For an unreadable file or a drawing without a usable unit.
    """
    source = str(path)
    try:
        doc = ezdxf.readfile(path)
    except (OSError, ezdxf.DXFStructureError) as exc:
        raise SiteFileError([f"{source}: cannot read the DXF file: {exc}"]) from None
    unit, k = _unit(doc, units, source)
    wanted = None if not layers else {name.lower() for name in layers}
    skipped: list[Skipped] = []
    outlines: list[tuple[Polygon, str, str, str]] = []  # polygon, layer, handle, kind
    segments: list[tuple[LineString, str, str, str]] = []
    texts = []
    for e in doc.modelspace():
        if not _on(e, wanted):
            continue
        kind, layer, handle = e.dxftype(), e.dxf.layer, e.dxf.handle
        if kind in ("LWPOLYLINE", "POLYLINE"):
            if kind == "POLYLINE" and not (e.is_2d_polyline or e.is_3d_polyline):
                skipped.append(Skipped(kind, layer, handle, "mesh or face polyline, not a room"))
                continue
            pts = _flat(e, k)
            closed = e.closed or (len(pts) > 2 and np.allclose(pts[0], pts[-1], atol=1e-6))
            if not closed:
                skipped.append(Skipped(kind, layer, handle, "open polyline (not closed)"))
                continue
            outlines.append((Polygon(pts), layer, handle, kind))
        elif kind in ("LINE", "ARC"):
            segments.append((LineString(_flat(e, k)), layer, handle, kind))
        elif kind in ("TEXT", "MTEXT"):
            text, at, height = _text_of(e)
            texts.append((text, at * k, height, layer, handle, kind))
    if segments:
        noded = unary_union([_snap(s[0]) for s in segments])
        faces = polygonize_full(noded)[0]
        used = unary_union(list(faces.geoms)).boundary if len(faces.geoms) else None
        for face in faces.geoms:
            edge = face.boundary.buffer(1e-5)
            layer = next((s[1] for s in segments if _snap(s[0]).within(edge)), segments[0][1])
            outlines.append((face, layer, "", "LINE/ARC chain"))
        for seg, layer, handle, kind in segments:
            if used is None or not seg.buffer(1e-6).within(used.buffer(1e-5)):
                skipped.append(Skipped(kind, layer, handle, "not part of a closed chain of "
                                       "lines and arcs"))
    rooms_poly: list[tuple[Polygon, str, str]] = []
    for poly, layer, handle, kind in outlines:
        if not poly.is_valid:
            skipped.append(Skipped(kind, layer, handle, "self-intersecting outline"))
        elif poly.area <= 1e-6:
            skipped.append(Skipped(kind, layer, handle, "outline without area"))
        else:
            rooms_poly.append((poly, layer, handle, kind))
    keep = _resolve_overlaps(rooms_poly, skipped)
    return _name_rooms(keep, texts, skipped, floor_id, unit, source)


def _snap(line: LineString) -> LineString:
    """Coordinates rounded to 1 um so that chain ends meet exactly."""
    return LineString(np.round(np.asarray(line.coords), 6))


def _resolve_overlaps(cands, skipped):
    """Drop outlines that enclose others, then later ones that overlap kept ones."""
    enclosing = set()
    for i, (a, *_r) in enumerate(cands):
        for j, (b, *_s) in enumerate(cands):
            if i != j and a.area > b.area * (1 + 1e-9) and b.buffer(-1e-6).within(a):
                enclosing.add(i)
    keep = []
    for i, (poly, layer, handle, kind) in enumerate(cands):
        if i in enclosing:
            skipped.append(Skipped(kind, layer, handle, "encloses other outlines (a building "
                                   "or zone outline?)"))
            continue
        clash = next((other for other in keep if poly.intersection(other[0]).area
                      > OVERLAP_FRACTION * min(poly.area, other[0].area)), None)
        if clash is not None:
            taken = f"entity {clash[2]}" if clash[2] else "a chain of lines"
            skipped.append(Skipped(kind, layer, handle, f"overlaps the room outline of {taken} "
                                   "taken before it"))
            continue
        keep.append((poly, layer, handle, kind))
    return keep


def _name_rooms(keep, texts, skipped, floor_id, unit, source) -> PlanImport:
    names: dict[int, list] = {i: [] for i in range(len(keep))}
    for text, at, h, layer, handle, kind in texts:
        if not text:
            continue
        pt = Point(at)
        owner = next((i for i, (poly, *_r) in enumerate(keep) if poly.covers(pt)), None)
        if owner is None:
            skipped.append(Skipped(kind, layer, handle, f"text {text!r} outside every room"))
        else:
            names[owner].append((h, text, layer, handle, kind))
    rooms = []
    for i, (poly, layer, handle, kind) in enumerate(keep):
        found = sorted(names[i], key=lambda t: -t[0])
        if not found:
            skipped.append(Skipped(kind, layer, handle, "room without a name (no text inside)"))
            continue
        for _h, text, tl, th, tk in found[1:]:
            skipped.append(Skipped(tk, tl, th, f"text {text!r}: a taller text names the room"))
        ring = np.asarray(poly.exterior.coords)[:-1]
        rooms.append(ImportedRoom(f"{floor_id}-R{len(rooms) + 1:02d}", found[0][1], ring,
                                  layer, handle))
    return PlanImport(tuple(rooms), tuple(skipped), unit, source)


def _q(text: str) -> str:
    """A TOML basic string (JSON string escapes are valid TOML escapes)."""
    return json.dumps(text, ensure_ascii=False)


def _num(v: float) -> str:
    text = f"{float(v):.4f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def skeleton_toml(plan: PlanImport, *, site_name: str, floor_id: str = "G",
                  floor_name: str = "Ground floor") -> str:
    """A site file in the project's format with the imported rooms, to be completed."""
    lines = [
        f"# Site-file skeleton imported from {Path(plan.source).name} (lengths in metres;",
        f"# the drawing's unit was {plan.unit}).  Complete it: set each room's zone, the",
        "# floor's elevation and height, and add magnets, coils, cables and equipment.",
        "# Results are planning estimates: confirm them with the site's qualified MR",
        "# physicist / MR safety expert, the magnet supplier's site data and local codes.",
        "",
        "[site]",
        f"name = {_q(site_name)}",
        'length_unit = "m"',
        'field_unit = "mT"',
        'levels = ["0.1 mT", "0.2 mT", "0.5 mT", "1 mT", "3 mT"]',
        'check_heights = ["0 m", "0.5 m", "1.0 m", "1.5 m", "2.0 m"]',
        'access_limit = "0.5 mT"',
        "",
        "[[floors]]",
        f"id = {_q(floor_id)}",
        f"name = {_q(floor_name)}",
        'elevation = "0 m"  # to be set',
        'height = "4 m"  # to be set',
    ]
    for room in plan.rooms:
        ring = ", ".join(f"[{_num(x)}, {_num(y)}]" for x, y in room.outline)
        lines += ["", "[[rooms]]", f"id = {_q(room.id)}", f"floor = {_q(floor_id)}",
                  f"name = {_q(room.name)}", "zone = 1  # to be set (1-4)",
                  f"outline = [{ring}]"]
    return "\n".join(lines) + "\n"
