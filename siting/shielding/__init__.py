"""Passive steel shielding: thin-sheet integral solver, infinite-slab estimate, effects, sizing.

Modules: ``material`` (B-H curves, stock list), ``mesh`` / ``plates`` (panel meshes),
``linecharge`` (field of charged segments), ``thinsheet`` (nonlinear solver),
``slab`` (infinite-slab Fourier estimate), ``effects`` (forces, magnet homogeneity,
small ferrous objects), ``sizing`` (stock thickness choice).
"""

from siting.shielding.effects import magnet_effect, sheet_forces, sphere_force, sphere_moment
from siting.shielding.material import (
    DESIGN_B_LIMIT,
    STEEL_DENSITY,
    STOCK_THICKNESSES,
    BHCurve,
    ConstantPermeability,
    default_steel,
)
from siting.shielding.mesh import SheetMesh, cylinder, icosphere, merge
from siting.shielding.plates import floor_plate, focus_points, rectangle, wall_plate
from siting.shielding.sizing import size_plates
from siting.shielding.slab import Slab, reflection, slab_field, slab_saturation, transmission
from siting.shielding.thinsheet import Sheet, SheetSolution, solve_sheets

__all__ = [
    "BHCurve", "ConstantPermeability", "DESIGN_B_LIMIT", "STEEL_DENSITY", "STOCK_THICKNESSES",
    "Sheet", "SheetMesh", "SheetSolution", "Slab", "cylinder", "default_steel", "floor_plate",
    "focus_points", "icosphere", "magnet_effect", "merge", "rectangle", "reflection",
    "sheet_forces", "size_plates", "slab_field", "slab_saturation", "solve_sheets",
    "sphere_force", "sphere_moment", "transmission", "wall_plate",
]
