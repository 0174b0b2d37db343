"""Field-engine benchmark: siting's kernels against magpylib on the same work.

    python benchmarks/fields.py [--quick]

Cases: one circular loop (``loop``), 20 loops in one CoilSet (``loop-x20``), a
50-vertex polyline (``polyline-50``) and a point dipole (``dipole``), each at
1e5 and 1e6 random points (1e4 and 1e5 with ``--quick``).  Before timing, the
two libraries' fields are compared on the same points and the largest relative
difference printed.  For magpylib every practical calling form is tried on the
smaller size (object ``getB``, a list of sources with ``sumup=True``, a
``Collection``, and the vectorised ``magpylib.func`` functions) and the fastest
is used for the case; forms that tile points x sources are fed in blocks of at
most ``MAGPY_BLOCK`` rows, which is also faster than one huge call.

Output lines:
``load_average_1min ...`` (other work on the machine skews the timings);
``compile <kernel> <seconds>``: first call of each numba kernel (compilation
or cache load), kept out of the timings;
``agree case=... n=... max_rel_diff=...``;
``magpylib_form case=... form=...``;
``case=... n=... siting_s=... magpylib_s=... ratio=...`` (medians; ratio is
magpylib time / siting time);
``ns_per_source_point case=... n=... siting_ns=...`` (sources: loops, straight
segments or dipoles).
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import magpylib as magpy  # noqa: E402
import magpylib.func as magpy_func  # noqa: E402
from scipy.spatial.transform import Rotation  # noqa: E402

from siting.fields.coilset import CoilSet  # noqa: E402
from siting.fields.dipole import Dipole  # noqa: E402
from siting.fields.loop import Loop  # noqa: E402
from siting.fields.segment import Polyline  # noqa: E402

#: Rows (points x sources) per call for the magpylib forms that tile.
MAGPY_BLOCK = 1_000_000


# --- the work (demo geometry) ------------------------------------------------------


def _twenty_loops(rng):
    """Twenty loops: 16 coaxial (two counter-wound groups) and 4 tilted ones."""
    loops = []
    for k in range(16):
        radius = 0.45 if k < 12 else 0.9
        offset = -0.6 + 1.2 * (k % 12) / 11 if k < 12 else (-0.4 + 0.8 * (k - 12) / 3)
        current = 2.0e5 if k < 12 else -1.2e5
        loops.append(Loop([0.0, 0.0, offset], [0.0, 0.0, 1.0], radius, current))
    for _ in range(4):
        axis = rng.normal(size=3)
        loops.append(Loop(rng.uniform(-1.5, 1.5, 3), axis, rng.uniform(0.1, 0.4), 500.0))
    return loops


def _magpy_circle(loop):
    rot, _ = Rotation.align_vectors([loop.axis], [[0.0, 0.0, 1.0]])
    return magpy.current.Circle(
        position=loop.center,
        orientation=rot,
        diameter=2 * loop.radius,
        current=loop.ampere_turns,
    )


def _blocks(n, per_point):
    step = max(1, MAGPY_BLOCK // per_point)
    for start in range(0, n, step):
        yield slice(start, min(start + step, n))


def _func_circles(loops):
    rots = [Rotation.align_vectors([lp.axis], [[0.0, 0.0, 1.0]])[0] for lp in loops]
    quats = np.array([r.as_quat() for r in rots])
    cen = np.array([lp.center for lp in loops])
    dia = np.array([2 * lp.radius for lp in loops])
    cur = np.array([lp.ampere_turns for lp in loops])
    k = len(loops)

    def run(pts):
        out = np.empty_like(pts)
        for sl in _blocks(len(pts), k):
            c = sl.stop - sl.start
            b = magpy_func.circle_field(
                "B",
                np.repeat(pts[sl], k, axis=0),
                np.tile(dia, c),
                np.tile(cur, c),
                positions=np.tile(cen, (c, 1)),
                orientations=Rotation.from_quat(np.tile(quats, (c, 1))),
                squeeze=False,
            )
            out[sl] = b.reshape(c, k, 3).sum(axis=1)
        return out

    return run


def _func_polyline(verts, current):
    start, end = verts[:-1], verts[1:]
    k = len(start)

    def run(pts):
        out = np.empty_like(pts)
        for sl in _blocks(len(pts), k):
            c = sl.stop - sl.start
            b = magpy_func.polyline_field(
                "B",
                np.repeat(pts[sl], k, axis=0),
                np.tile(start, (c, 1)),
                np.tile(end, (c, 1)),
                current,
                squeeze=False,
            )
            out[sl] = b.reshape(c, k, 3).sum(axis=1)
        return out

    return run


def _blocked(fn, k):
    def run(pts):
        out = np.empty_like(pts)
        for sl in _blocks(len(pts), k):
            out[sl] = fn(pts[sl])
        return out

    return run


def build_cases(rng):
    """(name, siting source, sources count, {magpylib form: callable})."""
    cases = []
    one = Loop([0.1, -0.2, 0.3], [0.2, 0.1, 1.0], 0.5, 1.0e4)
    circ = _magpy_circle(one)
    cases.append(
        (
            "loop",
            one,
            1,
            {
                "getB": lambda p, s=circ: s.getB(p),
                "func.circle_field": _func_circles([one]),
            },
        )
    )
    loops = _twenty_loops(rng)
    circles = [_magpy_circle(lp) for lp in loops]
    coll = magpy.Collection(*circles)
    cases.append(
        (
            "loop-x20",
            CoilSet(loops),
            20,
            {
                "getB(list, sumup=True)": _blocked(
                    lambda p: magpy.getB(circles, p, sumup=True), 20
                ),
                "Collection.getB": _blocked(lambda p: coll.getB(p), 20),
                "func.circle_field": _func_circles(loops),
            },
        )
    )
    verts = np.cumsum(rng.normal(scale=0.3, size=(50, 3)), axis=0)
    verts -= verts.mean(axis=0)
    line = Polyline(verts, 630.0)
    mline = magpy.current.Polyline(current=630.0, vertices=verts)
    cases.append(
        (
            "polyline-50",
            line,
            49,
            {
                "getB": _blocked(lambda p: mline.getB(p), 49),
                "func.polyline_field": _func_polyline(verts, 630.0),
            },
        )
    )
    dip = Dipole([0.2, 0.1, -0.3], [30.0, -10.0, 250.0])
    mdip = magpy.misc.Dipole(position=dip.center, moment=dip.moment)
    cases.append(
        (
            "dipole",
            dip,
            1,
            {
                "getB": lambda p: mdip.getB(p),
                "func.dipole_field": lambda p: magpy_func.dipole_field(
                    "B", p, dip.moment, positions=dip.center
                ),
            },
        )
    )
    return cases


# --- timing ------------------------------------------------------------------------


def _time(fn, pts, runs):
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        fn(pts)
        times.append(time.perf_counter() - t0)
    return statistics.median(times), times[0]


def _magpy_runs(first_seconds, max_runs):
    if first_seconds > 5.0:
        return 1
    if first_seconds > 1.0:
        return min(3, max_runs)
    return max_runs


def _max_rel_diff(a, b):
    ok = np.all(np.isfinite(a), axis=1) & np.all(np.isfinite(b), axis=1)
    nb = np.linalg.norm(b[ok], axis=1)
    ok2 = nb > 0
    return float(np.max(np.linalg.norm(a[ok] - b[ok], axis=1)[ok2] / nb[ok2]))


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="1e4 and 1e5 points, fewer runs")
    args = parser.parse_args(argv)
    print(f"load_average_1min {os.getloadavg()[0]:.2f} cpus={os.cpu_count()}")
    sizes = (10_000, 100_000) if args.quick else (100_000, 1_000_000)
    runs = 3 if args.quick else 5
    rng = np.random.default_rng(1)
    cases = build_cases(rng)
    box = 3.0
    all_pts = {n: rng.uniform(-box, box, size=(n, 3)) for n in sizes}

    warm = rng.uniform(-1, 1, size=(64, 3))
    for name, src, _, forms in cases:
        t0 = time.perf_counter()
        src.field(warm)
        print(f"compile {name} {time.perf_counter() - t0:.2f}", flush=True)
        for fn in forms.values():  # magpylib's own one-time setup
            fn(warm)

    for name, src, count, forms in cases:
        small = all_pts[sizes[0]]
        ours = src.field(small)
        best, best_t = None, np.inf
        for form, fn in forms.items():
            ref = fn(small)
            diff = _max_rel_diff(ours, ref)
            print(f"agree case={name} n={len(small)} form={form} max_rel_diff={diff:.1e}")
            t0 = time.perf_counter()
            fn(small)
            dt = time.perf_counter() - t0
            if dt < best_t:
                best, best_t = form, dt
        print(f"magpylib_form case={name} form={best}", flush=True)
        for n in sizes:
            pts = all_pts[n]
            s_med, _ = _time(src.field, pts, runs)
            first, _ = _time(forms[best], pts, 1)
            more = _magpy_runs(first, runs) - 1
            extra = [_time(forms[best], pts, 1)[0] for _ in range(more)]
            m_med = statistics.median([first, *extra])
            print(
                f"case={name} n={n} siting_s={s_med:.3g} magpylib_s={m_med:.3g} "
                f"ratio={m_med / s_med:.3g}"
            )
            per = s_med / (n * count) * 1e9
            print(f"ns_per_source_point case={name} n={n} siting_ns={per:.3g}")
            sys.stdout.flush()


if __name__ == "__main__":
    main()
