"""A set of coils (loops, thin and thick solenoids) with any positions and axes.

The field is the vector sum of the members' fields (superposition; J. D.
Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.3).  Members of
one kind are evaluated together: all loops in one call of the batched loop
kernel, all thin solenoids in one call, and thick windings in one call per
distinct ``radial_nodes``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.fields._frame import as_points
from siting.fields.loop import Loop, loops_field_checked
from siting.fields.solenoid import Solenoid, solenoids_field
from siting.fields.thick_solenoid import ThickSolenoid, thick_solenoids_field

_KINDS = (Loop, Solenoid, ThickSolenoid)


@dataclass(frozen=True, eq=False)
class CoilSet:
    """Superposition of circular coils.

    Parameters
    ----------
    coils : sequence of Loop, Solenoid or ThickSolenoid
        Any number of coils, each with its own centre and axis.

    References
    ----------
    Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 5.3 (superposition).
    """

    coils: tuple = ()

    def __post_init__(self):
        coils = tuple(self.coils)
        for i, coil in enumerate(coils):
            if not isinstance(coil, _KINDS):
                raise ValueError(
                    f"coils[{i}] must be a Loop, Solenoid or ThickSolenoid; "
                    f"got {type(coil).__name__}"
                )
        object.__setattr__(self, "coils", coils)
        loops = [c for c in coils if isinstance(c, Loop)]
        thin = [c for c in coils if isinstance(c, Solenoid)]
        thick = [c for c in coils if isinstance(c, ThickSolenoid)]
        object.__setattr__(self, "_loops", _loop_arrays(loops))
        object.__setattr__(self, "_thin", _thin_arrays(thin))
        groups = {}
        for c in thick:
            groups.setdefault(c.radial_nodes, []).append(c)
        object.__setattr__(
            self, "_thick", tuple((n, _thick_arrays(g)) for n, g in sorted(groups.items()))
        )

    def field(self, points) -> np.ndarray:
        """B (n, 3) [T] at ``points`` (n, 3) [m]; NaN on any conductor."""
        pts = as_points(points)
        out = np.zeros_like(pts)
        if self._loops is not None:
            out += loops_field_checked(pts, *self._loops)
        if self._thin is not None:
            out += solenoids_field(pts, *self._thin)
        for nodes, arrays in self._thick:
            out += thick_solenoids_field(pts, *arrays, radial_nodes=nodes)
        return out

    @property
    def moment(self) -> np.ndarray:
        """Total magnetic dipole moment (3,) [A m^2] (thin-coil moments ``N I pi a^2``).

        A thin solenoid's moment is ``N I pi a^2`` and a thick winding's is
        ``N I pi (a1^2 + a1 a2 + a2^2) / 3`` (the radial mean of ``pi r^2``).
        """
        total = np.zeros(3)
        for c in self.coils:
            if isinstance(c, Loop):
                total += c.moment
            elif isinstance(c, Solenoid):
                total += c.turns * c.current * np.pi * c.radius**2 * c.axis
            else:
                a1, a2 = c.inner_radius, c.outer_radius
                area = np.pi * (a1 * a1 + a1 * a2 + a2 * a2) / 3.0
                total += c.turns * c.current * area * c.axis
        return total


def _loop_arrays(loops):
    if not loops:
        return None
    return (
        np.array([c.center for c in loops]),
        np.array([c.axis for c in loops]),
        np.array([c.radius for c in loops]),
        np.array([c.ampere_turns for c in loops]),
    )


def _thin_arrays(sols):
    if not sols:
        return None
    return (
        np.array([c.center for c in sols]),
        np.array([c.axis for c in sols]),
        np.array([c.radius for c in sols]),
        np.array([c.length for c in sols]),
        np.array([c.turns * c.current for c in sols]),
    )


def _thick_arrays(sols):
    return (
        np.array([c.center for c in sols]),
        np.array([c.axis for c in sols]),
        np.array([c.inner_radius for c in sols]),
        np.array([c.outer_radius for c in sols]),
        np.array([c.length for c in sols]),
        np.array([c.turns * c.current for c in sols]),
    )
