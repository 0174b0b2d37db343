"""Timing and memory of the thin-sheet shielding solver at about 2,000 and 8,000 panels.

A 5 m x 4 m steel wall (TEAM 13 steel, 5 mm) at 1.2 m from a dipole standing for a
magnet's stray field (moment 2e5 A m^2, a few mT at the wall: the steel partly
saturates).  For each mesh: the assembly of the dense operator, one LU factorisation,
and the full nonlinear solve (which re-assembles and factorises up to three times
when the steel saturates), side by side; peak resident memory from getrusage.

Usage: python benchmarks/shielding.py [--quick]   (--quick: 2,000 panels only)
"""

from __future__ import annotations

import argparse
import resource
import time

import numpy as np

from siting.fields.dipole import Dipole
from siting.shielding.material import default_steel
from siting.shielding.operator import factorise, layout
from siting.shielding.plates import rectangle
from siting.shielding.thinsheet import Sheet, _reference_tensors, solve_sheets


def peak_rss_gb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024**2  # kB -> GB (Linux)


def run(size: float) -> dict:
    steel = default_steel()
    src = Dipole([0.0, 0.0, 0.0], [0.0, 2e5, 0.0])
    mesh = rectangle([-2.5, 1.2, -2.0], [1, 0, 0], [0, 0, 1], 5.0, 4.0, thickness=5e-3,
                     size=size)
    sheet = Sheet(mesh, 5e-3, steel)
    lay = layout([sheet])
    t0 = time.perf_counter()
    fac, tim = factorise(lay, _reference_tensors([sheet], lay))
    one = time.perf_counter() - t0
    del fac
    sol = solve_sheets([sheet], src, tol=1e-6)
    return {
        "panels": mesh.n_faces, "unknowns": 2 * mesh.n_faces,
        "assembly_s": tim["assembly"], "factorisation_s": tim["factorisation"],
        "assembly_plus_lu_s": one, "nonlinear_total_s": sol.timings["total"],
        "nonlinear_factorisations": sol.timings["factorisations"],
        "newton": sol.iterations, "gmres": sol.gmres_iterations,
        "residual": sol.residual, "peak_b_T": sol.peak_b(),
        "solve_over_one_lu": sol.timings["total"] / tim["factorisation"],
        "peak_rss_GB": peak_rss_gb(),
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="2,000 panels only")
    args = ap.parse_args()
    sizes = [0.1] if args.quick else [0.1, 0.05]  # 50 x 40 and 100 x 80 panels
    rows = [run(s) for s in sizes]
    keys = list(rows[0])
    print(f"{'':26s}" + "".join(f"{r['panels']:>14d}" for r in rows))
    for k in keys[1:]:
        print(f"{k:26s}" + "".join(
            f"{r[k]:>14.4g}" if isinstance(r[k], float) else f"{r[k]:>14}" for r in rows))
    print(f"numpy {np.__version__}; peak RSS is the process maximum so far")


if __name__ == "__main__":
    main()
