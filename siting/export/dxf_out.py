"""The CAD overlay: contour regions, zones, violations and sources as DXF layers.

Coordinates are the site's plan coordinates in its length unit ($INSUNITS
set to match), so the overlay drops onto the architect's plan.  Every floor's
layers are prefixed with its id; per floor there is one layer per contour
level (closed LWPOLYLINEs of every ring of
:func:`siting.analysis.contours.level_region`, holes included), one per MR
safety zone with the room outlines, one for areas over a room's limit, and
layers for magnets, coils, cables, equipment and labels.
"""

from __future__ import annotations

import re
from pathlib import Path

import ezdxf
import numpy as np
from ezdxf.enums import TextEntityAlignment
from shapely.geometry import Polygon

from siting.analysis.contours import level_lines
from siting.cautions import CAUTION_TEXT
from siting.export import shapes
from siting.export.labels import field_text
from siting.export.plan import regions, violations

#: $INSUNITS codes of the length units a site file may use (DXF reference, HEADER section).
INSUNITS = {"m": 6, "ft": 2, "mm": 4, "cm": 5, "in": 1}
#: ACI colours per layer kind (drawing conventions of this project).
COLOURS = {"field": 8, "zone": 5, "violation": 1, "magnet": 7, "coil": 7, "cable": 6,
           "equipment": 3, "label": 7, "note": 7}
_BAD = re.compile(r'[<>/\\":;?*|=`,\s]+')


def layer_name(floor_id: str, *parts: str) -> str:
    """``<floor>-<PART>-...`` with characters DXF layer names forbid replaced by '_'."""
    return "-".join(_BAD.sub("_", p) for p in (floor_id, *parts))


def level_layer(floor_id: str, level: float, units: str) -> str:
    """Layer of one contour level, e.g. ``G-FIELD-0.50mT``."""
    return layer_name(floor_id, "FIELD", field_text(level, units).replace(" ", ""))


def _unit_factor(unit: str) -> float:
    from siting.site.units import si_factor

    return si_factor(unit, "length")


def _layer(doc, name: str, kind: str) -> str:
    if name not in doc.layers:
        doc.layers.add(name, color=COLOURS[kind])
    return name


def _ring(msp, xy, layer: str, k: float) -> None:
    pts = np.asarray(xy, dtype=float)
    if len(pts) > 1 and np.allclose(pts[0], pts[-1]):
        pts = pts[:-1]
    msp.add_lwpolyline((pts / k).tolist(), close=True, dxfattribs={"layer": layer})


def _text(msp, text: str, at, layer: str, height: float, k: float) -> None:
    msp.add_text(text, height=height / k, dxfattribs={"layer": layer}).set_placement(
        (float(at[0]) / k, float(at[1]) / k), align=TextEntityAlignment.MIDDLE_CENTER)


def overlay_document(site, result, *, units: str | None = None, plates=(), sources=None,
                     text_height: float = 0.2):
    """The overlay as an ezdxf document (see the module docstring).

    Parameters
    ----------
    site : Site
        The validated site.
    result : SiteResult
        Its check results.
    units : str, optional
        Field unit of the level labels and layer names; default the site's.
    plates : sequence
        Shielding plates with ``outline`` and ``floor`` (may be empty).
    sources : list of NamedSource, optional
        For magnets whose envelope comes from their fringe model.
    text_height : float
        Label height [m].
    """
    fu = units or site.info.field_unit
    if fu == "both":
        fu = "mT"
    lu = site.info.length_unit
    if lu not in INSUNITS:
        raise ValueError(f"length unit {lu!r} has no DXF unit code")
    k = _unit_factor(lu)
    doc = ezdxf.new("R2010", setup=True)
    doc.header["$INSUNITS"] = INSUNITS[lu]
    doc.header["$MEASUREMENT"] = 0 if lu in ("ft", "in") else 1
    msp = doc.modelspace()
    by_room = {r.id: r for r in result.rooms}
    for floor in site.floors:
        fid = floor.id
        if fid not in result.floor_fields:
            continue
        regs = regions(site, result, fid)
        for level in site.info.levels:
            lay = _layer(doc, level_layer(fid, level, fu), "field")
            for poly in shapes.polygons(regs[level]):
                _ring(msp, poly.exterior.coords, lay, k)
                for hole in poly.interiors:
                    _ring(msp, hole.coords, lay, k)
        lab = _layer(doc, layer_name(fid, "LABELS"), "label")
        ff = result.floor_fields[fid]
        for level in site.info.levels:
            for line in level_lines(ff, level):
                if shapes.polyline_length(line) > 2.0:
                    at = shapes.positions_along(line, (0.5,))[0]
                    _text(msp, field_text(level, fu), at, lab, text_height, k)
        for room in site.rooms:
            if room.floor != fid:
                continue
            lay = _layer(doc, layer_name(fid, f"ZONE{room.zone}"), "zone")
            _ring(msp, room.outline, lay, k)
            res = by_room.get(room.id)
            p = shapes.label_point(Polygon(room.outline))
            label = f"{room.name} (zone {room.zone})"
            if res is not None:
                label += f" max {field_text(res.max_T, fu)}"
            _text(msp, label, p, lab, text_height, k)
        vl = _layer(doc, layer_name(fid, "OVER-LIMIT"), "violation")
        for room, over, lim in violations(site, result, fid, regs):
            for poly in shapes.polygons(over):
                _ring(msp, poly.exterior.coords, vl, k)
                for hole in poly.interiors:
                    _ring(msp, hole.coords, vl, k)
                _text(msp, f"{room.name}: over {field_text(lim, fu)}", shapes.label_point(poly),
                      vl, text_height, k)
        _sources(doc, msp, site, fid, k, text_height, fu, result, plates, sources)
    notes = _layer(doc, "NOTES", "note")
    msp.add_mtext(CAUTION_TEXT, dxfattribs={"layer": notes, "char_height": text_height / k})
    doc.header["$PROJECTNAME"] = site.info.name[:255]
    return doc


def _sources(doc, msp, site, fid, k, h, fu, result, plates, sources) -> None:
    for mag in site.magnets:
        if mag.floor != fid:
            continue
        lay = _layer(doc, layer_name(fid, "MAGNETS"), "magnet")
        outline, _what = shapes.magnet_outline(mag, shapes.PLAN_BASIS, sources)
        if outline is not None:
            _ring(msp, outline, lay, k)
        c = np.asarray(mag.center[:2]) / k
        msp.add_point(c.tolist(), dxfattribs={"layer": lay})
        a = np.asarray(mag.axis[:2], dtype=float)
        if np.linalg.norm(a) > 1e-6:
            a = a / np.linalg.norm(a) * 1.0 / k
            msp.add_line((c - a).tolist(), (c + a).tolist(), dxfattribs={"layer": lay})
        _text(msp, f"{mag.id} isocentre", mag.center[:2] + np.array([0.0, -0.4]), lay, h, k)
    for coil in site.coils:
        if coil.floor == fid:
            lay = _layer(doc, layer_name(fid, "COILS"), "coil")
            outline = shapes.coil_outline(coil, shapes.PLAN_BASIS)
            if outline is not None:
                _ring(msp, outline, lay, k)
    for cab in site.cables:
        if cab.floor == fid:
            lay = _layer(doc, layer_name(fid, "CABLES"), "cable")
            msp.add_lwpolyline((cab.path[:, :2] / k).tolist(), dxfattribs={"layer": lay})
    by_eq = {e.id: e for e in result.equipment}
    for item in site.equipment:
        if item.floor == fid:
            lay = _layer(doc, layer_name(fid, "EQUIPMENT"), "equipment")
            msp.add_point((item.at[:2] / k).tolist(), dxfattribs={"layer": lay})
            res = by_eq.get(item.id)
            state = "" if res is None else f" {field_text(res.field_T, fu)} {res.status.upper()}"
            _text(msp, f"{item.name}{state}", item.at[:2] + np.array([0.0, 0.3]), lay, h, k)
    for plate in plates:
        if getattr(plate, "floor", fid) == fid and getattr(plate, "outline", None) is not None:
            lay = _layer(doc, layer_name(fid, "PLATES"), "magnet")
            _ring(msp, np.asarray(plate.outline)[:, :2], lay, k)
            if getattr(plate, "label", None):
                _text(msp, plate.label, np.asarray(plate.outline)[:, :2].mean(axis=0), lay, h, k)


def write_overlay(site, result, path, *, units: str | None = None, plates=(),
                  sources=None) -> Path:
    """Write :func:`overlay_document` to ``path``; return the path."""
    path = Path(path)
    overlay_document(site, result, units=units, plates=plates, sources=sources).saveas(path)
    return path
