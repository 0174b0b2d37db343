"""Working memory of a scene evaluated on 1e7 points.

    python benchmarks/memory.py [--n 10000000]

Builds the points (n, 3) and a scene of a 20-loop coil set, a 50-vertex cable
and a dipole, then evaluates ``Scene.magnitude`` and reports the growth of the
process's peak resident memory beyond the input points and the (n,) result.
The scene works in chunks, so that growth stays far below the size of an
(n, 3) field array.
"""

from __future__ import annotations

import argparse
import resource
import time

import numpy as np

from siting.fields.coilset import CoilSet
from siting.fields.dipole import Dipole
from siting.fields.loop import Loop
from siting.fields.scene import Scene
from siting.fields.segment import Polyline


def peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # Linux: kB


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=10_000_000)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    loops = tuple(
        Loop(rng.uniform(-1, 1, 3), rng.normal(size=3), 0.3 + 0.1 * i, 100.0) for i in range(20)
    )
    path = np.column_stack([np.linspace(-5, 5, 50), np.full(50, 3.0), np.full(50, 2.5)])
    scene = Scene((CoilSet(loops), Polyline(path, 400.0), Dipole([4.0, 0, 0], [0, 0, 50.0])))
    scene.magnitude(rng.uniform(-8, 8, size=(1000, 3)))  # compile / warm up
    points = rng.uniform(-8, 8, size=(args.n, 3))
    result = np.empty(args.n)
    result[:] = 0.0  # touch the result pages so they count in the baseline
    base = peak_mb()
    t0 = time.perf_counter()
    result[:] = scene.magnitude(points)
    seconds = time.perf_counter() - t0
    grown = peak_mb() - base
    print(
        f"case=scene-memory n={args.n} points_mb={points.nbytes / 2**20:.0f} "
        f"result_mb={result.nbytes / 2**20:.0f} peak_growth_mb={grown:.0f} seconds={seconds:.1f}"
    )


if __name__ == "__main__":
    main()
