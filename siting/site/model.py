"""The validated site model: frozen dataclasses in SI units.

Everything downstream of the loader (sources, grids, checks, drawings) reads
these classes and nothing else.  Lengths are metres, fields tesla, currents
amperes.  Plan coordinates x, y are as in the site file (converted to metres);
every 3-D position is *absolute*: z is the height above the site datum, i.e.
the floor's elevation plus the height above that floor given in the file.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from siting.shielding.material import DESIGN_B_LIMIT, STEEL_DENSITY, STOCK_THICKNESSES


@dataclass(frozen=True)
class SiteInfo:
    name: str
    length_unit: str  # "m" or "ft": for display and for bare numbers in the file
    field_unit: str  # "mT", "G" or "uT": for display only
    levels: tuple[float, ...]  # contour levels [T], ascending
    check_heights: tuple[float, ...]  # heights above a floor at which people are checked [m]
    access_limit: float  # controlled-access level [T] (default 0.5 mT)
    ambient: tuple[float, float, float] | None = None  # uniform background field [T]
    # title-block fields for drawings (all optional)
    revision: str = ""
    date: str = ""  # as written in the file (ISO 8601 recommended)
    prepared_by: str = ""
    checked_by: str = ""
    north: float = 0.0  # rotation of the plan's +y axis from true north, degrees clockwise
    # shielding steel: candidate plate thicknesses [m], ascending, and the design
    # limit of the peak flux density in the steel [T] (both common practice)
    stock_thicknesses: tuple[float, ...] = STOCK_THICKNESSES
    steel_limit: float = DESIGN_B_LIMIT


@dataclass(frozen=True)
class Floor:
    id: str
    name: str
    elevation: float  # finished floor level above site datum [m]
    height: float  # floor to floor [m]


@dataclass(frozen=True, eq=False)
class Room:
    id: str
    floor: str
    name: str
    zone: int  # 1-4, the four-zone MR safety scheme
    outline: np.ndarray  # (m, 2) [m], plan polygon, not closed (first != last)
    limit: float | None = None  # explicit override [T]; None: the default rule


@dataclass(frozen=True)
class Extent:
    level: float  # [T]
    axial: float  # distance from the isocentre along the bore axis [m]
    radial: float  # distance from the isocentre across the bore [m]


@dataclass(frozen=True, eq=False)
class MagnetCoil:
    """One winding of a magnet, in the magnet's own frame."""

    radius: float  # [m] (mean radius of a thin winding)
    offset: float  # centre of the winding along the bore axis from the isocentre [m]
    turns: float
    current: float  # [A]; negative for a counter-wound shield coil
    length: float | None = None  # [m]; None: a thin loop, else a thin solenoid


@dataclass(frozen=True, eq=False)
class Magnet:
    id: str
    floor: str
    name: str
    center: np.ndarray  # isocentre, absolute (3,) [m]
    axis: np.ndarray  # unit bore direction (3,)
    field: float  # central field [T]
    extents: tuple[Extent, ...] = ()
    envelope: float | None = None  # radius of the sphere enclosing the cryostat [m]
    coils: tuple[MagnetCoil, ...] = ()


@dataclass(frozen=True, eq=False)
class Coil:
    id: str
    floor: str
    kind: str  # "loop" or "solenoid"
    center: np.ndarray  # absolute (3,) [m]
    axis: np.ndarray  # unit (3,)
    radius: float  # [m]
    turns: float
    current: float  # [A]
    length: float | None = None  # [m], solenoids only


@dataclass(frozen=True, eq=False)
class Cable:
    id: str
    floor: str
    path: np.ndarray  # (m, 3) absolute [m]; current flows from path[0] to path[-1]
    current: float  # [A]


@dataclass(frozen=True, eq=False)
class Dipole:
    id: str
    floor: str
    center: np.ndarray  # absolute (3,) [m]
    moment: np.ndarray  # (3,) [A m^2]


@dataclass(frozen=True, eq=False)
class Equipment:
    id: str
    floor: str
    name: str
    at: np.ndarray  # absolute (3,) [m]
    limit: float  # [T]


@dataclass(frozen=True, eq=False)
class Material:
    """A shielding material: a constant permeability or a B-H table (H [A/m], B [T])."""

    id: str
    name: str
    permeability: float | None = None  # constant relative permeability (> 1)
    h: np.ndarray | None = None  # (m,) [A/m], strictly increasing from 0
    b: np.ndarray | None = None  # (m,) [T], strictly increasing from 0
    density: float = STEEL_DENSITY  # [kg/m^3]
    source: str = ""  # where the table came from ("inline" or the CSV path)


@dataclass(frozen=True, eq=False)
class Plate:
    """A flat steel plate: a wall plate (``start``, ``end``, ``bottom``, ``top``) or a
    horizontal plate (``outline``, ``z``); heights absolute."""

    id: str
    floor: str
    name: str
    material: str  # id of a Material, or "steel" (the shipped TEAM 13 steel)
    thickness: float | None  # [m]; None: "auto" (sized from the stock list)
    start: np.ndarray | None = None  # (2,) plan [m], wall plates
    end: np.ndarray | None = None  # (2,) plan [m]
    bottom: float | None = None  # absolute [m]
    top: float | None = None  # absolute [m]
    outline: np.ndarray | None = None  # (m, 2) plan [m], horizontal plates
    z: float | None = None  # absolute [m]
    panels: float | None = None  # uniform target panel size [m]; None: graded

    @property
    def wall(self) -> bool:
        """True for a vertical (wall) plate."""
        return self.start is not None


@dataclass(frozen=True, eq=False)
class Site:
    info: SiteInfo
    floors: tuple[Floor, ...]
    rooms: tuple[Room, ...] = ()
    magnets: tuple[Magnet, ...] = ()
    coils: tuple[Coil, ...] = ()
    cables: tuple[Cable, ...] = ()
    dipoles: tuple[Dipole, ...] = ()
    equipment: tuple[Equipment, ...] = ()
    materials: tuple[Material, ...] = ()
    plates: tuple[Plate, ...] = ()
    source: str = "<memory>"  # path of the file it came from
    content_hash: str = ""  # sha256 of the file's bytes
    extra: dict = field(default_factory=dict)

    def floor(self, floor_id: str) -> Floor:
        for fl in self.floors:
            if fl.id == floor_id:
                return fl
        raise KeyError(floor_id)

    def room_limit(self, room: Room) -> float | None:
        """The limit a room must stay below [T]: its own, else the access limit
        for zones 1 and 2, else None (zones 3 and 4 have no default limit)."""
        if room.limit is not None:
            return room.limit
        if room.zone in (1, 2):
            return self.info.access_limit
        return None
