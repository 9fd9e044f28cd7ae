"""Known-answer sections: J bracket and peak shear against closed forms, with the estimates.

For each section and setting: does the reported J bracket contain the exact J,
the actual relative peak-shear error, the reported estimate, whether the
estimate covers the error, elements and wall time.  Sections are built with
exact curves (Circle, Ellipse) or as polygons where the section is one.

References (tests/reference.py): Timoshenko & Goodier, Theory of Elasticity,
3rd ed., sec. 104 (circle, tube), 105 (ellipse), 109 (rectangle series);
Roark, 7th ed., Table 10.1 (equilateral triangle).

    python tests/bench/bench_known_answers.py [--order 2] [--tols 1e-3,1e-4]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from shapely.geometry import Point  # noqa: E402

import reference as ref  # noqa: E402
from soapfilm import analyse  # noqa: E402
from soapfilm.geometry import Circle, Ellipse  # noqa: E402
from soapfilm.profile import Profile  # noqa: E402
from soapfilm.shapes._geom import circle as flat_circle  # noqa: E402


def sections():
    r = 20.0
    yield "circle D40", Profile.from_polygon(flat_circle(r, 2e-4), curves=[Circle(0, 0, r)]), \
        ref.circle(2 * r)
    tube = flat_circle(r, 2e-4).difference(flat_circle(15.0, 2e-4))
    yield "tube 40/30", Profile.from_polygon(tube, curves=[Circle(0, 0, r), Circle(0, 0, 15.0)]), \
        ref.hollow_circle(40.0, 30.0)
    ell = Profile.from_loops([ref.ellipse_points(20.0, 8.0, 4000)],
                             edge_curves=[[0] * 4000], curves=[Ellipse(0, 0, 20.0, 8.0)])
    yield "ellipse 40x16", ell, ref.ellipse(20.0, 8.0)
    yield "rectangle 2:1", Profile.from_loops([ref.rectangle_points(20.0, 10.0)]), \
        ref.rectangle_series(20.0, 10.0)
    yield "rectangle 10:1", Profile.from_loops([ref.rectangle_points(50.0, 5.0)]), \
        ref.rectangle_series(50.0, 5.0)
    yield "triangle a=30", Profile.from_loops([ref.triangle_points(30.0)]), \
        ref.equilateral_triangle(30.0)
    _ = Point  # keep the import list honest


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--order", type=int, default=1)
    ap.add_argument("--tols", default="1e-3,1e-4")
    a = ap.parse_args(argv)
    tols = [float(x) for x in a.tols.split(",")]
    print(f"{'section':16} {'tol':>7} {'J in':>5} {'J err':>9} {'bracket':>9} {'tau err':>9} "
          f"{'estimate':>9} {'covers':>6} {'elements':>9} {'time s':>7}")
    for name, prof, (j_ex, tau_ex) in sections():
        for tol in tols:
            t0 = time.perf_counter()
            res = analyse(prof, tol=tol, order=a.order)
            dt = time.perf_counter() - t0
            lo, hi = res.torsion_constant_bounds
            j = 0.5 * (lo + hi)
            terr = res.max_shear_per_torque / tau_ex - 1
            est = res.estimated_relative_error["max_shear"]
            print(f"{name:16} {tol:7.0e} {str(lo <= j_ex <= hi):>5} {j / j_ex - 1:9.2e} "
                  f"{(hi - lo) / j:9.2e} {terr:9.2e} {est:9.2e} {str(abs(terr) <= est):>6} "
                  f"{res.mesh.nelements:9d} {dt:7.2f}")


if __name__ == "__main__":
    main()
