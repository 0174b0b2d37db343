"""Turn a validated site model into field sources.

This is the one place where site items become physics objects: magnets become
fringe models (from published isogauss extents) or coil sets (from their
windings), coils become loops or thin solenoids, cables polylines, dipoles
point dipoles, the optional ambient field a uniform source, and steel plates
thin sheets solved in the field of all the other sources (see
:mod:`siting.site.steel`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.fields.coilset import CoilSet
from siting.fields.dipole import Dipole
from siting.fields.fringe import FringeModel
from siting.fields.loop import Loop
from siting.fields.scene import Scene, Uniform
from siting.fields.segment import Polyline
from siting.fields.solenoid import Solenoid
from siting.site import model


@dataclass(frozen=True, eq=False)
class NamedSource:
    """A field source with the site item it came from.

    ``kind`` is one of "magnet", "coil", "cable", "dipole", "ambient", "plate";
    ``undefined`` says in words where the source returns NaN.
    """

    id: str
    kind: str
    source: object
    undefined: str

    def field(self, points: np.ndarray) -> np.ndarray:
        return self.source.field(points)


def magnet_source(magnet: model.Magnet):
    """Fringe model fitted to the extents, or the coil set of its windings."""
    if magnet.coils:
        coils = []
        for c in magnet.coils:
            center = magnet.center + c.offset * magnet.axis
            if c.length is None:
                coils.append(Loop(center, magnet.axis, c.radius, c.current, turns=c.turns))
            else:
                coils.append(
                    Solenoid(center, magnet.axis, c.radius, c.length, c.turns, c.current)
                )
        return CoilSet(tuple(coils))
    return FringeModel.fit(
        magnet.extents,
        center=magnet.center,
        axis=magnet.axis,
        central_field=magnet.field,
        envelope=magnet.envelope,
    )


def coil_source(coil: model.Coil):
    if coil.kind == "loop":
        return Loop(coil.center, coil.axis, coil.radius, coil.current, turns=coil.turns)
    return Solenoid(coil.center, coil.axis, coil.radius, coil.length, coil.turns, coil.current)


def build_sources(site: model.Site) -> list[NamedSource]:
    """Every field source of the site, in file order, magnets first, plates last.

    Plates (if any) are sized and solved in the field of all other sources by
    :func:`siting.site.steel.build_shielding`; the report is kept on the plate
    sources (:func:`siting.site.steel.shielding_report`).
    """
    out = base_sources(site)
    if site.plates:
        from siting.site.steel import build_shielding

        plates, _report = build_shielding(site, out)
        out.extend(plates)
    return out


def base_sources(site: model.Site) -> list[NamedSource]:
    """The site's sources without the steel plates (the field the steel is solved in)."""
    out: list[NamedSource] = []
    for m in site.magnets:
        src = magnet_source(m)
        what = (
            f"on a winding of magnet '{m.id}'"
            if m.coils
            else f"inside the envelope sphere of magnet '{m.id}' "
            f"(r < {src.envelope:.2f} m from its isocentre), where the fringe model is not valid"
        )
        out.append(NamedSource(m.id, "magnet", src, what))
    for c in site.coils:
        out.append(NamedSource(c.id, "coil", coil_source(c), f"on the winding of coil '{c.id}'"))
    for c in site.cables:
        what = f"on the conductor of cable '{c.id}'"
        out.append(NamedSource(c.id, "cable", Polyline(c.path, c.current), what))
    for d in site.dipoles:
        what = f"at the centre of dipole '{d.id}'"
        out.append(NamedSource(d.id, "dipole", Dipole(d.center, d.moment), what))
    if site.info.ambient is not None:
        out.append(NamedSource("ambient", "ambient", Uniform(np.array(site.info.ambient)), ""))
    return out


def build_scene(site: model.Site, sources: list[NamedSource] | None = None) -> Scene:
    """The superposition of all of the site's sources."""
    if sources is None:
        sources = build_sources(site)
    return Scene(tuple(s.source for s in sources))


def why_undefined(sources: list[NamedSource], point: np.ndarray) -> str:
    """Words for why the field at ``point`` (3,) is NaN ("" if it is defined)."""
    pt = np.asarray(point, dtype=float).reshape(1, 3)
    reasons = [s.undefined for s in sources if np.isnan(s.field(pt)).any()]
    return "; ".join(reasons)
