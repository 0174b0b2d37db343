"""The site's steel plates as field sources: meshing, sizing, the nonlinear solve, effects.

Rules
-----
* All plates of a site are solved together (they interact) by the nonlinear
  thin-sheet solver :func:`siting.shielding.solve_sheets`, in the field of all
  other sources (magnets, coils, cables, dipoles, ambient: the scene without
  plates).  Each plate becomes a :class:`~siting.site.build.NamedSource` of
  kind "plate" whose field is that of its own edge charges, so the plates'
  sources superpose to the field of the solved set.
* Mesh: a uniform panel size ``panels`` if the plate gives one (the user
  override), else chosen automatically (:func:`mesh_choice`): graded meshes
  toward the sources, the limit points and the rims
  (:func:`siting.shielding.plates.rectangle`) are refined level by level until
  |B| at every limit point changes by at most :data:`MESH_TOL` of its limit
  between two levels (:func:`siting.shielding.refine.converge_meshes`, a
  linear-permeability proxy of the steel at the thickness given, within
  :data:`AUTO_PANELS`).  Without failing limit points the test watches probe
  points :data:`PROBE_OFFSET` off both faces of the steel.  The thin-sheet
  field is approximate within about two panel sizes of the steel and undefined
  on the panels' edges.
* Sizing (``thickness = "auto"``): the auto plates, as one group at one
  common stock thickness (fixed-thickness plates present at theirs), take the
  smallest stock thickness (``[site] stock_thicknesses``) for which every
  limit point is at or below its limit and the peak flux density in the steel
  is within ``[site] steel_limit``.  The limit points
  (:func:`siting.site.steel_targets.limit_points`) are a quick check without
  steel on the auto plates' floors: samples of the rooms over their limit and
  failing equipment.  The limit points are a sample, and the grid
  behind the access check interpolates across walls, so a thickness that meets
  them is then verified by the full check (:func:`siting.analysis.checks.check_site`)
  with the steel: every room, equipment item and access boundary on the group's
  floors (or every named target) must pass, else the next stock thickness is tried.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0

from siting.analysis.checks import check_site
from siting.errors import SitingError
from siting.fields.scene import Scene
from siting.shielding import (
    BHCurve,
    ConstantPermeability,
    Sheet,
    default_steel,
    floor_plate,
    magnet_effect,
    sheet_forces,
    solve_sheets,
    wall_plate,
)
from siting.shielding.linecharge import line_charge_field
from siting.shielding.material import STEEL_DENSITY
from siting.shielding.refine import MeshChoice, choose_meshes, probe_points
from siting.shielding.sizing import Candidate, Sizing
from siting.site import model
from siting.site.build import NamedSource
from siting.site.steel_targets import Targets, limit_points

#: Panel size of a plate meshed uniformly without the convergence test [m].
MAX_PANEL = 0.25
#: Tolerance of the automatic mesh's convergence test (change of |B| / limit).
MESH_TOL = 0.02
#: Panels (all plates) the convergence test may solve.
AUTO_PANELS = 1500
#: Distance of the probe points from the steel when no limit point fails [m].
PROBE_OFFSET = 0.3
#: Panels allowed in one solve (the dense operator needs (2N)^2 doubles).
MAX_PANELS = 3000


@dataclass(frozen=True)
class PlateResult:
    """One solved plate: thickness [m], mass [kg], peak |B| in the steel [T] against the
    design limit [T], net force (3,) [N]; ``sized`` if its thickness was chosen."""

    id: str
    thickness: float
    mass: float
    peak_b: float
    steel_limit: float
    force: np.ndarray
    sized: bool

    @property
    def saturated(self) -> bool:
        """True when the peak flux density in the steel exceeds the design limit."""
        return self.peak_b > self.steel_limit


@dataclass(frozen=True)
class MagnetResult:
    """The plates' effect on a magnet: isocentre shift along the central field [uT] and
    [ppm of the central field], peak-to-peak [ppm] over a sphere of ``diameter`` [m]."""

    id: str
    shift_ut: float
    shift_ppm: float
    peak_to_peak_ppm: float
    diameter: float


@dataclass(frozen=True)
class ShieldingReport:
    """Everything solved about the site's steel."""

    plates: tuple
    magnets: tuple
    iterations: int
    residual: float
    converged: bool
    sizing: Sizing | None = None
    targets: Targets | None = None
    sized: tuple = ()  # ids of the plates sized as a group
    verified: tuple = ()  # per sizing candidate: full check passed (True/False) or not run (None)


@dataclass(frozen=True, eq=False)
class PlateField:
    """Field of one plate's edge charges in a solved set (a source)."""

    solution: object
    index: int
    report: ShieldingReport | None = None

    def field(self, points) -> np.ndarray:
        sol, sel = self.solution, self.solution.edge_sheet == self.index
        return mu_0 * line_charge_field(np.asarray(points, dtype=float).reshape(-1, 3),
                                        sol.starts[sel], sol.ends[sel], sol.charges[sel])


def plate_material(site: model.Site, plate: model.Plate):
    """(material law, density [kg/m^3]) of a plate."""
    for mat in site.materials:
        if mat.id == plate.material:
            if mat.permeability is not None:
                return ConstantPermeability(mat.permeability, name=mat.name), mat.density
            return BHCurve(mat.h, mat.b, name=mat.name, source=mat.source), mat.density
    return default_steel(), STEEL_DENSITY


def plate_mesh(plate: model.Plate, thickness: float, focus, *, observe=None, level=None):
    """The plate's mid-surface panels (see the module docstring).

    ``level`` None: the uniform :data:`MAX_PANEL` mesh; else the graded mesh of
    that level toward the sources ``focus`` and the points ``observe``.  A
    plate's ``panels`` size overrides both.
    """
    if plate.panels is not None and plate.panels < 3 * thickness:
        raise SitingError(f"plate '{plate.id}': panel size {plate.panels:g} m is below 3 x the "
                          f"thickness {thickness:g} m; the thin-sheet model needs panels wider "
                          "than the steel is thick")
    size = plate.panels if plate.panels is not None or level is not None else MAX_PANEL
    grading = dict(size=size, focus=focus, observe=observe, level=level or 0,
                   max_panels=MAX_PANELS)
    if plate.wall:
        return wall_plate(plate.start, plate.end, plate.bottom, plate.top,
                          thickness=thickness, **grading)
    return floor_plate(plate.outline, plate.z, thickness=thickness, **grading)


def mesh_choice(site, base, thickness, targets: Targets | None = None) -> MeshChoice:
    """Choose the automatic plates' mesh level by the convergence test (module docstring).

    ``targets``: the limit points on the plates' floors, if already found.
    """
    if targets is None:
        targets = limit_points(site, base, floors={p.floor for p in site.plates})
    pts, lims = targets.points, targets.limits
    if not len(pts):  # nothing fails without steel: the field a few decimetres off the steel
        pts = probe_points([plate_mesh(p, thickness[p.id], base, level=0) for p in site.plates],
                           PROBE_OFFSET)
        lims = None
    return choose_meshes(
        lambda k, obs: [plate_mesh(p, thickness[p.id], base, observe=obs, level=k)
                        for p in site.plates],
        [thickness[p.id] for p in site.plates], [plate_material(site, p)[0] for p in site.plates],
        base, pts, limits=lims, tol=MESH_TOL, max_panels=AUTO_PANELS)


def _solve(site, base, meshes, thickness):
    sheets = []
    for p in site.plates:
        mat, density = plate_material(site, p)
        sheets.append(Sheet(meshes[p.id], thickness[p.id], mat, name=p.id, density=density))
    n = sum(s.mesh.n_faces for s in sheets)
    if n > MAX_PANELS:
        raise SitingError(f"the plates have {n} panels together, more than {MAX_PANELS}; "
                          "give them a larger 'panels' size")
    return solve_sheets(sheets, base), sheets


def verify(site, base, solution, *, floors=(), names=None) -> bool:
    """Whether the full check with the solved steel passes on ``floors`` (or for ``names``)."""
    plates = tuple(PlateField(solution, i) for i in range(len(solution.sheets)))
    res = check_site(site, Scene(tuple(base.sources) + plates))
    items = [*res.rooms, *res.equipment]
    if names is not None:
        return all(r.status != "fail" for r in items if r.id in names)
    return (all(r.status != "fail" for r in items if r.floor in floors)
            and all(a.contained for a in res.access if a.floor in floors))


def size_group(site, base, meshes, group, targets: Targets, *, stop_at_first=True,
               names=None):
    """Try the stock thicknesses for the plates ``group`` (ids) as one group.

    Parameters
    ----------
    site : Site
        The site (its plates, stock list and steel limit).
    base : source
        The field without plates.
    meshes : dict
        Mesh per plate id (:func:`plate_meshes`).
    group : sequence of str
        Ids of the plates sized together at one common thickness; the others keep theirs.
    targets : Targets
        Limit points (:func:`limit_points`).
    stop_at_first : bool
        Stop at the first thickness chosen (else try the whole stock list).
    names : sequence of str, optional
        Verify only these rooms / equipment (default: everything on the group's floors).

    Returns
    -------
    (Sizing, verified, solution)
        ``Sizing.chosen`` is the first candidate meeting the limit points with the steel
        within ``steel_limit`` and passing the full check (None if none does); ``verified``
        per candidate: the full check's verdict, None where it was not run; ``solution``
        is the chosen SheetSolution (or None).
    """
    floors = {p.floor for p in site.plates if p.id in group}
    verified = []
    index = [i for i, p in enumerate(site.plates) if p.id in group]
    b_src = base.field(targets.points)
    out, chosen, chosen_sol = [], None, None
    for t in site.info.stock_thicknesses:
        thick = {p.id: t if p.id in group else p.thickness for p in site.plates}
        sol, sheets = _solve(site, base, meshes, thick)
        b = np.linalg.norm(b_src + sol.field(targets.points), axis=1)
        peak = max(sol.peak_b(i) for i in index)
        cand = Candidate(t, b, bool(np.all(b <= targets.limits)), peak,
                         peak <= site.info.steel_limit,
                         np.array([sheets[i].mass for i in index]),
                         sheet_forces(sol, base)[index], sol.iterations)
        out.append(cand)
        ok = None
        if chosen is None and cand.meets_targets and cand.within_steel_limit:
            ok = verify(site, base, sol, floors=floors, names=names)
        verified.append(ok)
        if ok:
            chosen, chosen_sol = cand, sol
            if stop_at_first:
                break
    return Sizing(chosen, tuple(out)), tuple(verified), chosen_sol


def plate_meshes(site, base, thickness, targets: Targets | None = None) -> dict:
    """Meshes of all plates; ``thickness`` per id sets the smallest automatic panel.

    Plates with a ``panels`` size keep it; if every plate has one, no convergence
    test is run, else :func:`mesh_choice` chooses the level of the others (with
    ``targets``, the limit points on the plates' floors, if already found).
    """
    if all(p.panels is not None for p in site.plates):
        return {p.id: plate_mesh(p, thickness[p.id], base) for p in site.plates}
    choice = mesh_choice(site, base, thickness, targets)
    return {p.id: m for p, m in zip(site.plates, choice.meshes, strict=True)}


def _no_stock(site, group, sizing, targets) -> SitingError:
    last = sizing.candidates[-1]
    worst = ", ".join(f"{n} {b * 1e3:.3g} mT" for n, b in targets.worst(last.b_targets).items())
    return SitingError(
        f"no stock thickness up to {last.thickness * 1e3:g} mm makes plates "
        f"{', '.join(group)} meet the limits of {', '.join(targets.names) or 'the site'} with "
        f"the steel within {site.info.steel_limit:g} T and pass the full check (at "
        f"{last.thickness * 1e3:g} mm: {worst or 'no limit points'}; peak in the steel "
        f"{last.b_steel_peak:.2f} T)")


def build_shielding(site: model.Site, sources) -> tuple[list[NamedSource], ShieldingReport]:
    """Size the "auto" plates, solve all plates, and report forces and magnet effects.

    Parameters
    ----------
    site : Site
        With at least one plate.
    sources : list of NamedSource
        The site's other sources (plate sources among them are ignored).

    Returns
    -------
    (list of NamedSource, ShieldingReport)
        One source of kind "plate" per plate, in file order.

    Raises
    ------
    SitingError
        If no stock thickness makes the auto plates meet the limits, or the mesh is too large.
    """
    base = Scene(tuple(s.source for s in sources if s.kind != "plate"))
    thick = {p.id: p.thickness for p in site.plates}
    group = tuple(p.id for p in site.plates if p.thickness is None)
    stock_max = max(site.info.stock_thicknesses)
    plate_floors = {p.floor for p in site.plates}
    group_floors = {p.floor for p in site.plates if p.id in group}
    # the limit points serve both the mesh choice and the sizing when their floors agree
    shared = limit_points(site, base, floors=plate_floors) if group_floors == plate_floors else None
    meshes = plate_meshes(site, base, {k: v or stock_max for k, v in thick.items()}, shared)
    sizing = targets = None
    if group:
        targets = shared if shared is not None else limit_points(site, base, floors=group_floors)
        sizing, verified, sol = size_group(site, base, meshes, group, targets)
        if sizing.chosen is None:
            raise _no_stock(site, group, sizing, targets)
        thick.update({k: sizing.chosen.thickness for k in group})
    else:
        verified = ()
        sol, _ = _solve(site, base, meshes, thick)
    forces = sheet_forces(sol, base)
    plates = tuple(
        PlateResult(p.id, thick[p.id], sol.sheets[i].mass, sol.peak_b(i), site.info.steel_limit,
                    forces[i], p.id in group)
        for i, p in enumerate(site.plates))
    report = ShieldingReport(plates, magnet_results(site, sol), sol.iterations, sol.residual,
                             sol.converged, sizing, targets, group, verified)
    named = [NamedSource(p.id, "plate", PlateField(sol, i, report),
                         f"on a panel edge of plate '{p.id}' (the thin-sheet field is "
                         "undefined on the steel's panel edges)")
             for i, p in enumerate(site.plates)]
    return named, report


def magnet_results(site, solution, *, diameter: float = 0.5) -> tuple:
    """Each magnet's isocentre shift and peak-to-peak over a ``diameter`` [m] sphere."""
    out = []
    for m in site.magnets:
        eff = magnet_effect(solution, m.center, m.field, axis=m.axis, diameter=diameter)
        out.append(MagnetResult(m.id, eff.shift_ut, eff.shift_ppm, eff.peak_to_peak_ppm,
                                diameter))
    return tuple(out)


def shielding_report(sources) -> ShieldingReport | None:
    """The report kept on the plate sources of ``build_sources`` (None without plates)."""
    for s in sources:
        if s.kind == "plate":
            return s.source.report
    return None
