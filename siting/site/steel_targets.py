"""Limit points for sizing a site's steel: where, without steel, the field is over a limit.

A quick check without steel, used to size plates and to choose their meshes
(:mod:`siting.site.steel`): the rooms with a limit on the floors asked (or the
rooms and equipment named) are sampled, interior nodes at
:data:`SAMPLE_SPACING` and their outline, at every check height; a room fails
when a sample exceeds its limit, and its samples above half the limit (at most
:data:`MAX_TARGETS` per room, the largest kept) become limit points; equipment
that fails adds its point.  The points are a sample; the sizing verifies a
thickness that meets them by the full check.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from siting.errors import SitingError

#: Spacing of the quick check's room samples [m].
SAMPLE_SPACING = 0.25
#: Limit points kept per room.
MAX_TARGETS = 300


@dataclass(frozen=True)
class Targets:
    """Limit points: ``labels`` (n,) room or equipment id, ``points`` (n, 3) [m],
    ``limits`` (n,) [T], ``bare`` (n,) |B| without steel [T]."""

    labels: tuple
    points: np.ndarray
    limits: np.ndarray
    bare: np.ndarray

    @property
    def names(self) -> tuple:
        return tuple(dict.fromkeys(self.labels))

    def worst(self, b) -> dict:
        """Largest |B| per name for |B| ``b`` (n,) at the points."""
        lab = np.array(self.labels, dtype=object)
        return {n: float(np.max(np.asarray(b)[lab == n])) for n in self.names}


def _room_samples(site, room, spacing):
    poly = shapely.Polygon(room.outline)
    x0, y0, x1, y1 = poly.bounds
    gx, gy = np.meshgrid(np.arange(x0, x1 + 1e-9, spacing), np.arange(y0, y1 + 1e-9, spacing))
    xy = np.column_stack([gx.ravel(), gy.ravel()])
    xy = xy[shapely.covers(poly, shapely.points(xy))]
    ring = poly.exterior
    along = np.linspace(0, ring.length, max(8, int(np.ceil(ring.length / spacing))) + 1)
    xy = np.vstack([xy, shapely.get_coordinates(ring.interpolate(along))])
    elev = site.floor(room.floor).elevation
    z = elev + np.asarray(site.info.check_heights)
    return np.column_stack([np.repeat(xy, len(z), axis=0), np.tile(z, len(xy))])


def limit_points(site, base, *, floors=None, names=None, spacing=SAMPLE_SPACING) -> Targets:
    """Limit points of the rooms and equipment named, or failing without steel on ``floors``.

    Raises
    ------
    SitingError
        For a name that is no room or equipment, or a room without a limit.
    """
    rooms = {r.id: r for r in site.rooms}
    equip = {e.id: e for e in site.equipment}
    if names is not None:
        for n in names:
            if n not in rooms and n not in equip:
                raise SitingError(f"--target: '{n}' is no room or equipment of the site")
            if n in rooms and site.room_limit(rooms[n]) is None:
                raise SitingError(f"--target: room '{n}' (zone {rooms[n].zone}) has no limit")
    labels, pts, lims, bare = [], [], [], []
    for r in site.rooms:
        lim = site.room_limit(r)
        if lim is None or (names is not None and r.id not in names) or (
                names is None and r.floor not in floors):
            continue
        p = _room_samples(site, r, spacing)
        b = np.linalg.norm(base.field(p), axis=1)
        ok = np.isfinite(b)
        p, b = p[ok], b[ok]
        if not len(b) or (names is None and b.max() <= lim):
            continue
        keep = np.argsort(b)[::-1][:MAX_TARGETS]
        keep = keep[(b[keep] > 0.5 * lim) | (keep == keep[0])]
        labels += [r.id] * len(keep)
        pts.append(p[keep])
        lims.append(np.full(len(keep), lim))
        bare.append(b[keep])
    for e in site.equipment:
        if (names is not None and e.id not in names) or (names is None and e.floor not in floors):
            continue
        b = float(np.linalg.norm(base.field(e.at[None])[0]))
        if names is None and not b > e.limit:
            continue
        labels.append(e.id)
        pts.append(e.at[None])
        lims.append([e.limit])
        bare.append([b])
    def cat(arrays, shape):
        return np.concatenate(arrays) if arrays else np.zeros((0, *shape))

    return Targets(tuple(labels), cat(pts, (3,)), cat(lims, ()), cat(bare, ()))
