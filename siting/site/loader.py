"""Read a site file (TOML) and validate it into a :class:`siting.site.model.Site`.

Every problem found is collected, and all of them are raised together as one
:class:`siting.errors.SiteFileError` whose ``problems`` are lines
``"<file>: rooms[3].outline: <what was expected, what was found>"``; array
indices are 0-based positions within the file's array of that section.

Cross-table rules checked here:

* there is a ``[site]`` table and at least one ``[[floors]]`` table;
* ids are unique across all tables (floors, rooms, magnets, coils, cables,
  dipoles, equipment, materials, plates), since items are addressed by id alone;
* every plate's ``material`` names a ``[[materials]]`` entry or ``"steel"``;
* every ``floor`` names a floor of the file;
* heights: every z in the file is above the item's finished floor; the model
  stores the absolute z = floor elevation + z.
"""

from __future__ import annotations

import hashlib
import os
import tomllib
import typing

import numpy as np
from pydantic import BaseModel, ValidationError

from siting.errors import SiteFileError
from siting.site import model as m
from siting.site.schema import (
    CableItem,
    CoilItem,
    DipoleItem,
    EquipmentItem,
    FloorItem,
    MagnetItem,
    Problem,
    RoomItem,
)
from siting.site.schema_plates import (
    DEFAULT_STEEL_ID,
    MaterialItem,
    PlateItem,
    ShieldedSiteSection,
)
from siting.site.units import show_value

__all__ = ["SECTIONS", "load_site", "load_site_text"]

SECTIONS: dict[str, type[BaseModel]] = {
    "floors": FloorItem,
    "rooms": RoomItem,
    "magnets": MagnetItem,
    "coils": CoilItem,
    "cables": CableItem,
    "dipoles": DipoleItem,
    "equipment": EquipmentItem,
    "materials": MaterialItem,
    "plates": PlateItem,
}
"""The site file's arrays of tables and the model validating each table."""


def load_site(path: str | os.PathLike) -> m.Site:
    """Read and validate a site file.

    Parameters
    ----------
    path : str or os.PathLike
        The TOML file; kept as given in ``Site.source``.

    Returns
    -------
    Site
        The validated site in SI units with absolute heights;
        ``content_hash`` is the sha256 of the file's bytes.

    Raises
    ------
    SiteFileError
        If the file cannot be read, is not TOML, or breaks any rule; its
        ``problems`` list every problem found, one line each.
    """
    source = os.fspath(path) if isinstance(path, os.PathLike) else str(path)
    try:
        with open(path, "rb") as handle:
            data = handle.read()
    except OSError as exc:
        raise SiteFileError([f"{source}: cannot read the file ({exc.strerror or exc})"]) from None
    return _load(data, source)


def load_site_text(text: str, *, name: str = "<text>") -> m.Site:
    """Validate site-file text; ``name`` stands for the file in messages.

    Parameters
    ----------
    text : str
        TOML text of a site file.
    name : str
        Name used as ``Site.source`` and at the start of problem lines.

    Returns
    -------
    Site
        As :func:`load_site`; ``content_hash`` is the sha256 of the UTF-8 text.

    Raises
    ------
    SiteFileError
        As :func:`load_site`.
    """
    try:
        data = text.encode("utf-8")
    except UnicodeError as exc:
        raise SiteFileError([f"{name}: the text is not valid Unicode ({exc.reason})"]) from None
    return _load(data, name)


def _load(data: bytes, source: str) -> m.Site:
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise SiteFileError(
            [f"{source}: not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start})"]
        ) from None
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SiteFileError([f"{source}: TOML syntax error: {exc}"]) from None
    except (ValueError, RecursionError) as exc:  # e.g. an integer with too many digits
        raise SiteFileError([f"{source}: TOML value that cannot be read: {exc}"]) from None
    problems: list[tuple[str, str]] = []
    base_dir = os.path.dirname(os.path.abspath(source))  # B-H files are relative to it
    site = _validate_site(document, problems, base_dir)
    items = _validate_items(document, site, problems, base_dir)
    if problems:
        raise SiteFileError([f"{source}: {path}: {message}" for path, message in problems])
    return _build(site, items, source, hashlib.sha256(data).hexdigest())


def _validate_site(document: dict, problems: list, base_dir: str) -> ShieldedSiteSection | None:
    for key in document:
        if key != "site" and key not in SECTIONS:
            problems.append((key, f"unknown section '{key}'; sections are: site, "
                                  + ", ".join(SECTIONS)))
    raw = document.get("site")
    if raw is None:
        problems.append(("site", "missing required table [site] (with name = '...')"))
        return None
    if not isinstance(raw, dict):
        problems.append(("site", f"expected a table [site], got {show_value(raw)}"))
        return None
    return _validate(ShieldedSiteSection, raw, "site", _context(document, base_dir), problems)


def _context(document: dict, base_dir: str = ".") -> dict:
    raw = document.get("site")
    raw = raw if isinstance(raw, dict) else {}
    length_unit = raw.get("length_unit", "m")
    field_unit = raw.get("field_unit", "mT")
    return {
        "length_unit": length_unit if length_unit in ("m", "ft") else "m",
        "field_unit": field_unit if field_unit in ("mT", "G", "uT") else "mT",
        "base_dir": base_dir,  # for files named in the site file (B-H tables)
    }


def _tables(document: dict, section: str, problems: list) -> list[tuple[str, dict]]:
    raw = document.get(section, [])
    if not isinstance(raw, list):
        problems.append((section, f"expected an array of tables [[{section}]], "
                                  f"got {show_value(raw)}"))
        return []
    tables = []
    for i, entry in enumerate(raw):
        if isinstance(entry, dict):
            tables.append((f"{section}[{i}]", entry))
        else:
            problems.append((f"{section}[{i}]", f"expected a table, got {show_value(entry)}"))
    return tables


def _validate_items(document: dict, site, problems: list, base_dir: str) -> dict[str, list]:
    context = _context(document, base_dir)
    tables = {section: _tables(document, section, problems) for section in SECTIONS}
    floor_ids = list(dict.fromkeys(
        t["id"] for _, t in tables["floors"] if isinstance(t.get("id"), str)))
    if not tables["floors"] and "floors" not in {p for p, _ in problems}:
        problems.append(("floors", "expected at least one [[floors]] table"))
    owners: dict[str, str] = {}
    items: dict[str, list] = {}
    for section, model_cls in SECTIONS.items():
        items[section] = []
        for path, table in tables[section]:
            item = _validate(model_cls, table, path, context, problems)
            ident = table.get("id")
            if isinstance(ident, str):
                if ident in owners:
                    problems.append((f"{path}.id",
                                     f"duplicate id '{ident}' (already used by {owners[ident]})"))
                owners.setdefault(ident, path)
            ref = table.get("floor")
            if section != "floors" and isinstance(ref, str) and ref not in floor_ids:
                known = ", ".join(floor_ids) if floor_ids else "none are defined"
                problems.append((f"{path}.floor", f"unknown floor '{ref}'; floors are: {known}"))
            items[section].append(item)
    material_ids = [t["id"] for _, t in tables["materials"] if isinstance(t.get("id"), str)]
    for path, table in tables["plates"]:
        ref = table.get("material", DEFAULT_STEEL_ID)
        if isinstance(ref, str) and ref != DEFAULT_STEEL_ID and ref not in material_ids:
            known = ", ".join([DEFAULT_STEEL_ID, *material_ids])
            problems.append((f"{path}.material",
                             f"unknown material '{ref}'; materials are: {known}"))
    return items


def _validate(model_cls, raw: dict, prefix: str, context: dict, problems: list):
    try:
        return model_cls.model_validate(raw, context=context)
    except ValidationError as exc:
        for error in exc.errors(include_url=False):
            problems.extend(_describe(error, model_cls, prefix))
        return None


def _key_path(prefix: str, loc: tuple) -> str:
    return prefix + "".join(f"[{s}]" if isinstance(s, int) else f".{s}" for s in loc)


def _model_at(model_cls, loc: tuple):
    """The pydantic model that validates the table at ``loc`` (None if not a table)."""
    for step in loc:
        if isinstance(step, int):
            continue
        field = model_cls.model_fields.get(step) if model_cls else None
        model_cls = _find_model(field.annotation) if field else None
    return model_cls


def _find_model(annotation):
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _find_model(arg)
        if found is not None:
            return found
    return None


def _describe(error: dict, model_cls, prefix: str) -> list[tuple[str, str]]:
    """Translate one pydantic error into (key path, message) pairs."""
    loc, kind = tuple(error["loc"]), error["type"]
    path, got = _key_path(prefix, loc), show_value(error.get("input"))
    ctx = error.get("ctx") or {}
    if kind == "value_error":
        exc = ctx.get("error")
        if isinstance(exc, Problem):
            return [(path + sub, message) for sub, message in exc.items]
        return [(path, str(exc))]
    owner = _model_at(model_cls, loc[:-1]) if loc else None
    key = loc[-1] if loc else None
    field = owner.model_fields.get(key) if owner is not None and isinstance(key, str) else None
    description = field.description if field is not None else None
    if kind == "extra_forbidden":
        allowed = ", ".join(f.alias or name for name, f in owner.model_fields.items()
                            ) if owner is not None else ""
        return [(path, f"unknown key '{key}'; allowed keys are: {allowed}")]
    if kind == "missing":
        detail = f" ({description})" if description else ""
        return [(path, f"missing required key '{key}'{detail}")]
    if kind == "literal_error":
        return [(path, f"expected {ctx.get('expected')}, got {got}")]
    if kind == "string_type":
        detail = f" ({description})" if description else ""
        return [(path, f"expected a string{detail}, got {got}")]
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        return [(path, f"expected a table {{ key = value, ... }}, got {got}")]
    if kind in ("list_type", "tuple_type"):
        return [(path, f"expected a list [...], got {got}")]
    return [(path, f"{error['msg']}, got {got}")]


def _vec(values, floor: m.Floor | None = None) -> np.ndarray:
    arr = np.array(values, dtype=np.float64)
    if floor is not None:
        arr[..., 2] += floor.elevation
    return arr


def _build(site: ShieldedSiteSection, items: dict[str, list], source: str, digest: str) -> m.Site:
    info = m.SiteInfo(
        name=site.name, length_unit=site.length_unit, field_unit=site.field_unit,
        levels=site.levels, check_heights=site.check_heights, access_limit=site.access_limit,
        ambient=site.ambient, revision=site.revision, date=site.date,
        prepared_by=site.prepared_by, checked_by=site.checked_by, north=site.north,
        stock_thicknesses=site.stock_thicknesses, steel_limit=site.steel_limit,
    )
    floors = tuple(m.Floor(id=f.id, name=f.name or f.id, elevation=f.elevation, height=f.height)
                   for f in items["floors"])
    by_id = {f.id: f for f in floors}
    rooms = tuple(
        m.Room(id=r.id, floor=r.floor, name=r.name or r.id, zone=r.zone,
               outline=_vec(r.outline), limit=r.limit)
        for r in items["rooms"])
    magnets = tuple(
        m.Magnet(
            id=g.id, floor=g.floor, name=g.name or g.id, center=_vec(g.center, by_id[g.floor]),
            axis=_vec(g.axis), field=g.field, envelope=g.envelope,
            extents=tuple(m.Extent(level=e.level, axial=e.axial, radial=e.radial)
                          for e in g.extents),
            coils=tuple(m.MagnetCoil(radius=c.radius, offset=c.offset, turns=c.turns,
                                     current=c.current, length=c.length) for c in g.coils),
        )
        for g in items["magnets"])
    coils = tuple(
        m.Coil(id=c.id, floor=c.floor, kind=c.kind, center=_vec(c.center, by_id[c.floor]),
               axis=_vec(c.axis), radius=c.radius, turns=c.turns, current=c.current,
               length=c.length)
        for c in items["coils"])
    cables = tuple(m.Cable(id=c.id, floor=c.floor, path=_vec(c.path, by_id[c.floor]),
                           current=c.current) for c in items["cables"])
    dipoles = tuple(m.Dipole(id=d.id, floor=d.floor, center=_vec(d.center, by_id[d.floor]),
                             moment=_vec(d.moment)) for d in items["dipoles"])
    equipment = tuple(
        m.Equipment(id=e.id, floor=e.floor, name=e.name or e.id,
                    at=_vec(e.at, by_id[e.floor]), limit=e.limit)
        for e in items["equipment"])
    return m.Site(info=info, floors=floors, rooms=rooms, magnets=magnets, coils=coils,
                  cables=cables, dipoles=dipoles, equipment=equipment,
                  materials=tuple(_material(x) for x in items["materials"]),
                  plates=tuple(_plate(p, by_id[p.floor]) for p in items["plates"]),
                  source=source, content_hash=digest)


def _material(x: MaterialItem) -> m.Material:
    h, b = x._table if x._table is not None else (None, None)
    return m.Material(id=x.id, name=x.name or x.id, permeability=x.permeability, h=h, b=b,
                      density=x.density, source=x._source)


def _plate(p: PlateItem, floor: m.Floor) -> m.Plate:
    common = dict(id=p.id, floor=p.floor, name=p.name or p.id, material=p.material,
                  thickness=p.thickness, panels=p.panels)
    if p.start is not None:
        return m.Plate(**common, start=_vec(p.start), end=_vec(p.to),
                       bottom=floor.elevation + p.bottom, top=floor.elevation + p.top)
    return m.Plate(**common, outline=_vec(p.outline), z=floor.elevation + p.z)
