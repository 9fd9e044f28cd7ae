"""Benchmark: certified accuracy on a keyed shaft, adaptive versus uniform refinement.

Section: 40 mm shaft, one 12 x 5 mm keyway with 0.4 mm floor fillets (invented;
DIN 6885-1 proportions for 38-44 mm).  Target: J bracket (J_hi - J_lo)/J <= 1e-4
and tau_max within 0.5 % of a converged reference, in <= 3 s wall.

Run:  python tests/bench/bench_adaptive.py [--repeat 3]

The reference: an adaptive quadratic solve to a 2e-5 bracket and 2e-4 peak
tolerance, whose mesh is then split uniformly twice (every triangle into four)
and solved again with quadratic elements.  Uniform refinement: the adaptive
loop's starting mesh split uniformly (each triangle into four) until both
targets are met; the solve on the first mesh that meets them is timed alone
(its best case: no search).
"""

from __future__ import annotations

import argparse
import platform
import statistics
import time

import numpy as np
from shapely.geometry import Polygon, box

from soapfilm import Profile, analyse, mesh_profile, result_from_mesh
from soapfilm.fem.p2 import uniformly_refined
from soapfilm.mesh import default_mesh_size


def keyed_section() -> Profile:
    th = np.linspace(0, 2 * np.pi, 2048, endpoint=False)
    circ = Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)]))
    slot = box(-6, 15, 6, 30).buffer(-0.4, quad_segs=16).buffer(0.4, quad_segs=16)
    return Profile.from_polygon(circ.difference(slot), name="keyed 40, 12x5, r0.4")


def timed(fn, repeat):
    ts, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        ts.append(time.perf_counter() - t0)
    return statistics.median(ts), out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    prof = keyed_section()
    t0 = time.perf_counter()
    ref0 = analyse(prof, tol=2e-5, peak_tol=2e-4, order=2, max_elements=3_000_000,
                   memory="16 GB")
    mesh = uniformly_refined(uniformly_refined(ref0.mesh))
    ref = result_from_mesh(prof, mesh, order=2)
    t_ref = time.perf_counter() - t0
    j_ref, tau_ref = ref.torsion_constant, ref.max_shear_per_torque
    print(f"machine: {platform.machine()}, python {platform.python_version()}")
    print(f"reference (P2 adaptive, tol 2e-5): J = {j_ref:.7g} mm^4 "
          f"[{ref.torsion_constant_bounds[0]:.7g}, {ref.torsion_constant_bounds[1]:.7g}], "
          f"tau/T = {tau_ref:.7g} /mm^3, {ref.mesh.nelements} elements, {t_ref:.1f} s")
    print(f"{'run':34s} {'time s':>7s} {'elements':>9s} {'bracket':>9s} {'tau err':>8s}")

    def report(name, t, r):
        lo, hi = r.torsion_constant_bounds
        err = r.max_shear_per_torque / tau_ref - 1
        ok = (hi - lo) / r.torsion_constant <= 1e-4 and abs(err) <= 5e-3
        print(f"{name:34s} {t:7.2f} {r.mesh.nelements:9d} {(hi - lo) / r.torsion_constant:9.1e} "
              f"{err:+8.1e} {'meets target' if ok else 'MISSES target'}")
        return ok

    for order in (1, 2):
        t, r = timed(lambda order=order: analyse(prof, tol=1e-4, order=order), a.repeat)
        report(f"adaptive P{order}, tol 1e-4 (median)", t, r)
    for order in (1, 2):
        # uniform refinement: split every triangle into four, from the adaptive loop's start
        mesh = mesh_profile(prof, 2.5 * default_mesh_size(prof))
        while True:
            t0 = time.perf_counter()
            r = result_from_mesh(prof, mesh, order=order)
            t = time.perf_counter() - t0
            lo, hi = r.torsion_constant_bounds
            if (hi - lo) / r.torsion_constant <= 1e-4 and abs(r.max_shear_per_torque / tau_ref - 1) <= 5e-3:
                t, r = timed(lambda order=order, mesh=mesh: result_from_mesh(prof, mesh, order=order),
                             a.repeat)
                report(f"uniform P{order}, {r.mesh.nelements} elements (median)", t, r)
                break
            if mesh.nelements > 1_500_000:
                report(f"uniform P{order}: gave up at", t, r)
                break
            mesh = uniformly_refined(mesh)


if __name__ == "__main__":
    main()
