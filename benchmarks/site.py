"""Time split of `siting check` on each shipped example.

    python benchmarks/site.py [--spacing 0.1] [--repeat 7]

Runs the same analysis as `siting check` on every file in rooms/ and prints, per
example, the share of wall time spent in field evaluation (every call into the
scene, the grid and the optimiser's refinement alike), in contouring (contourpy
and the shapely polygons built from it) and in everything else (the checks
proper), plus grid points per second: medians over several checks, since a
check takes tens of milliseconds and the machine's noise is of that order.
Building the sources (which fits each fringe model to its extents and solves
any steel plates) is timed on its own, before the check.  The field
evaluation should be the bulk of the check.  The allocator is set up as the
command line sets it (:func:`siting.allocator.keep_freed_memory`).
"""

from __future__ import annotations

import argparse
import functools
import time
from pathlib import Path

import numpy as np

import siting.analysis.checks as checks_mod
import siting.analysis.contours as contours_mod
from siting.allocator import keep_freed_memory
from siting.site.build import build_scene, build_sources
from siting.site.loader import load_site

ROOMS = Path(__file__).resolve().parents[1] / "rooms"


class Timed:
    """Accumulates the wall time spent inside wrapped callables."""

    def __init__(self):
        self.seconds = 0.0
        self.points = 0

    def wrap(self, fn, count_points=False):
        @functools.wraps(fn)
        def inner(*args, **kwargs):
            t0 = time.perf_counter()
            try:
                return fn(*args, **kwargs)
            finally:
                self.seconds += time.perf_counter() - t0
                if count_points:
                    self.points += len(args[0])

        return inner


class TimedScene:
    """A scene proxy whose field and magnitude calls are timed."""

    def __init__(self, scene, timer: Timed):
        self._scene = scene
        self.field = timer.wrap(scene.field, count_points=True)
        self.magnitude = timer.wrap(scene.magnitude, count_points=True)

    def __getattr__(self, name):
        return getattr(self._scene, name)


def run(path: Path, spacing: float | None, repeat: int = 1) -> str:
    """One line of results for an example: medians over ``repeat`` checks."""
    site = load_site(path)
    originals = {}
    t0 = time.perf_counter()
    sources = build_sources(site)  # fits fringe models: reported on its own
    build_s = time.perf_counter() - t0
    totals, fields, contours, points = [], [], [], []
    for _ in range(repeat):
        field_t, contour_t = Timed(), Timed()
        for mod in (contours_mod, checks_mod):
            for name in ("level_region", "level_lines"):
                if hasattr(mod, name):
                    originals[(mod, name)] = getattr(mod, name)
                    setattr(mod, name, contour_t.wrap(getattr(mod, name)))
        try:
            t0 = time.perf_counter()
            scene = TimedScene(build_scene(site, sources), field_t)
            result = checks_mod.check_site(site, scene, spacing=spacing)
            totals.append(time.perf_counter() - t0)
        finally:
            for (mod, name), fn in originals.items():
                setattr(mod, name, fn)
        fields.append(field_t.seconds / totals[-1])
        contours.append(contour_t.seconds / totals[-1])
        points.append(field_t.points / field_t.seconds)
    total, field, contour = np.median(totals), np.median(fields), np.median(contours)
    grid_points = sum(ff.bmax.size * len(ff.grid.heights) for ff in result.floor_fields.values())
    spacings = ",".join(f"{ff.grid.spacing:.3f}" for ff in result.floor_fields.values())
    return (
        f"example={path.stem} build_s={build_s:.2f} check_s={total:.3f} "
        f"field={100 * field:.0f}% contours={100 * contour:.0f}% "
        f"checks={100 * (1 - field - contour):.0f}% spacing_m={spacings} "
        f"grid_points={grid_points} field_points_per_s={np.median(points):.3g} "
        f"failures={result.failures}"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--spacing", type=float, default=None, help="plan grid spacing [m]")
    parser.add_argument("--repeat", type=int, default=7, help="checks per example (medians)")
    args = parser.parse_args()
    keep_freed_memory()  # as the command line does
    # warm the compiled kernels (their one-thread and parallel variants) so compile
    # time is not counted
    for path in sorted(ROOMS.glob("*.toml")):
        run(path, 1.0)
        run(path, 0.1)
    for path in sorted(ROOMS.glob("*.toml")):
        repeat = 1 if "shielded" in path.stem else args.repeat  # steel: one slow check
        print(run(path, args.spacing, repeat), flush=True)


if __name__ == "__main__":
    main()
