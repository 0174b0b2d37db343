"""Check results as plain data (JSON-ready, SI units, no NaN)."""

from __future__ import annotations

import math

import numpy as np

from siting.cautions import CAUTION_TEXT


def _num(value):
    """A float for JSON: None for NaN/inf/None."""
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _vec(values):
    if values is None:
        return None
    arr = np.asarray(values, dtype=float)
    if not np.all(np.isfinite(arr)):
        return None
    return [float(v) for v in arr]


def room_record(r) -> dict:
    return {
        "id": r.id,
        "floor": r.floor,
        "zone": r.zone,
        "limit_T": _num(r.limit_T),
        "max_T": _num(r.max_T),
        "at_m": _vec(r.at_m),
        "margin_m": _num(r.margin_m),
        "area_over_m2": _num(r.area_over_m2),
        "status": "fail" if r.status == "fail" else "pass",
    }


def equipment_record(e) -> dict:
    return {
        "id": e.id,
        "floor": e.floor,
        "limit_T": _num(e.limit_T),
        "field_T": _num(e.field_T),
        "status": "fail" if e.status == "fail" else "pass",
    }


def access_record(a) -> dict:
    return {
        "floor": a.floor,
        "access_limit_T": _num(a.access_limit_T),
        "contained": bool(a.contained),
        "uncovered_area_m2": _num(a.uncovered_area_m2),
        "uncovered_at_m": _vec(a.uncovered_point) if a.uncovered_point is not None else None,
    }


def plate_record(p) -> dict:
    """One solved plate (a :class:`siting.site.steel.PlateResult`)."""
    return {
        "id": p.id,
        "thickness_m": _num(p.thickness),
        "sized": bool(p.sized),
        "mass_kg": _num(p.mass),
        "peak_b_T": _num(p.peak_b),
        "steel_limit_T": _num(p.steel_limit),
        "saturated": bool(p.saturated),
        "force_N": _vec(p.force),
    }


def candidate_record(c, verified=None, worst=None) -> dict:
    """One stock thickness tried (a :class:`siting.shielding.sizing.Candidate`)."""
    return {
        "thickness_m": _num(c.thickness),
        "targets_max_T": {k: _num(v) for k, v in (worst or {}).items()},
        "meets_targets": bool(c.meets_targets),
        "peak_b_T": _num(c.b_steel_peak),
        "within_steel_limit": bool(c.within_steel_limit),
        "full_check_passed": verified,
        "mass_kg": [_num(m) for m in c.masses],
        "force_N": [_vec(f) for f in c.forces],
        "iterations": int(c.iterations),
    }


def magnet_record(m) -> dict:
    """A magnet's field shift (a :class:`siting.site.steel.MagnetResult`)."""
    return {"id": m.id, "shift_uT": _num(m.shift_ut), "shift_ppm": _num(m.shift_ppm),
            "peak_to_peak_ppm": _num(m.peak_to_peak_ppm), "sphere_diameter_m": _num(m.diameter)}


def shielding_record(report) -> dict:
    """The steel of a site (a :class:`siting.site.steel.ShieldingReport`)."""
    rec = {
        "plates": [plate_record(p) for p in report.plates],
        "magnets": [magnet_record(m) for m in report.magnets],
        "iterations": int(report.iterations),
        "residual": _num(report.residual),
        "converged": bool(report.converged),
        "sized": list(report.sized),
    }
    if report.sizing is not None:
        verified = report.verified or (None,) * len(report.sizing.candidates)
        rec["candidates"] = [
            candidate_record(c, v, report.targets.worst(c.b_targets) if report.targets else None)
            for c, v in zip(report.sizing.candidates, verified, strict=True)]
    return rec


def check_record(site, result, shielding=None) -> dict:
    """The ``siting check --json`` document; ``shielding`` (a ShieldingReport) adds its key."""
    doc = {
        "site": site.info.name,
        "input_sha256": site.content_hash,
        "access_limit_T": site.info.access_limit,
        "rooms": [room_record(r) for r in result.rooms],
        "equipment": [equipment_record(e) for e in result.equipment],
        "access": [access_record(a) for a in result.access],
        "failures": int(result.failures),
        "caution": CAUTION_TEXT,
    }
    if shielding is not None:
        doc.pop("caution")
        doc["shielding"] = shielding_record(shielding)
        doc["caution"] = CAUTION_TEXT  # kept last
    return doc


def _rings(geom) -> list[dict]:
    """Shapely (Multi)Polygon -> [{"exterior": [[x, y], ...], "holes": [...]}]."""
    polys = getattr(geom, "geoms", [geom])
    out = []
    for poly in polys:
        if poly.is_empty:
            continue
        out.append(
            {
                "exterior": np.round(np.asarray(poly.exterior.coords), 4).tolist(),
                "holes": [np.round(np.asarray(h.coords), 4).tolist() for h in poly.interiors],
                "area_m2": round(float(poly.area), 4),
            }
        )
    return out


def contour_record(site, result) -> list[dict]:
    """The plan regions where |B| reaches each level, per floor (metres)."""
    from siting.analysis.contours import level_region

    records = []
    for floor in site.floors:
        ff = result.floor_fields.get(floor.id)
        if ff is None:
            continue
        for level in site.info.levels:
            region = level_region(ff, level)
            records.append({"floor": floor.id, "level_T": level, "polygons": _rings(region)})
    return records
