"""Benchmark: linear (P1) vs quadratic (P2) triangles on uniform meshes.

Run::

    python tests/bench/bench_p2.py [--quick]

Cases
-----
* rectangle 2 x 1 (smooth away from its convex corners); reference: the
  Saint-Venant series (Timoshenko & Goodier, Theory of Elasticity, 3rd ed.,
  sec. 109) for J and tau_max.
* keyed shaft: 40 mm diameter, 12 x 5 mm keyway (floor 5 mm below the top of
  the shaft), 0.4 mm floor fillets; reference: P2 on the h = 1 mm mesh
  split uniformly twice (its own bracket is printed).
  The P2 peak skips nodes near re-entrant polygon vertices (the flattened concave
  fillets; see ``boundary_peak_p2``); P1 uses the core's patch recovery.

For each mesh size the wall time of the solve (both problems, indicators and
the boundary peak; meshing excluded) is the median of
3 runs.  Not a test: nothing is asserted.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from soapfilm.fem.p2 import boundary_peak_p2, p2_nodes, solve_torsion_p2, uniformly_refined
from soapfilm.fem.torsion import solve_torsion
from soapfilm.mesh import mesh_profile
from soapfilm.profile import Profile
from soapfilm.solve import boundary_peak


def rectangle_reference(b: float, t: float, terms: int = 200) -> tuple[float, float]:
    """J and tau_max per unit G*theta (Timoshenko & Goodier 3rd ed. sec. 109)."""
    n = np.arange(1, 2 * terms, 2, dtype=float)
    z = n * np.pi * b / (2 * t)
    j = b * t**3 / 3.0 * (1.0 - 192.0 / np.pi**5 * (t / b) * np.sum(np.tanh(z) / n**5))
    sech = 2.0 * np.exp(-z) / (1.0 + np.exp(-2.0 * z))
    tau = t * (1.0 - 8.0 / np.pi**2 * np.sum(sech / n**2))
    return float(j), float(tau)


def keyed_shaft(d=40.0, width=12.0, depth=5.0, fillet=0.4, chord_deg=1.0, fillet_pts=24):
    """Outer loop (counter-clockwise) of a shaft with one keyway at the top.

    The keyway walls are at x = +-width/2, the floor at y = d/2 - depth, the
    two floor corners rounded with radius ``fillet``.  The shaft arc is
    flattened with chords of ``chord_deg`` degrees, each fillet with
    ``fillet_pts`` chords.
    """
    r = d / 2.0
    hw = width / 2.0
    yf = r - depth
    a0 = np.arctan2(np.sqrt(r * r - hw * hw), -hw)  # left wall meets the circle
    a1 = np.arctan2(np.sqrt(r * r - hw * hw), hw) + 2 * np.pi  # right wall, after a full turn
    nseg = int(np.ceil(np.degrees(a1 - a0) / chord_deg))
    s = np.linspace(a0, a1, nseg + 1)
    arc = np.column_stack([r * np.cos(s), r * np.sin(s)])  # left top -> around -> right top
    s_r = np.linspace(0.0, -0.5 * np.pi, fillet_pts + 1)  # right fillet, centre (hw-f, yf+f)
    cx, cy = hw - fillet, yf + fillet
    right = np.column_stack([cx + fillet * np.cos(s_r), cy + fillet * np.sin(s_r)])
    s_l = np.linspace(-0.5 * np.pi, -np.pi, fillet_pts + 1)  # left fillet, centre (-hw+f, yf+f)
    left = np.column_stack([-cx + fillet * np.cos(s_l), cy + fillet * np.sin(s_l)])
    return np.concatenate([arc, right, left])


def timed(fn, repeats):
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def run_p1(mesh):
    f = solve_torsion(mesh)
    peak, _, _ = boundary_peak(mesh, f)
    return f.j_lo, f.j_hi, peak


def run_p2(mesh):
    f = solve_torsion_p2(mesh)
    return f.j_lo, f.j_hi, boundary_peak_p2(f, skip_reentrant=True).value


def sweep(name, profile, sizes, j_ref, tau_ref, repeats, split_from=None):
    """One table block; with ``split_from`` the meshes are the mesh of that
    size split uniformly ``h`` times (``sizes`` then holds split levels)."""
    rows = []
    for order, run in (("P1", run_p1), ("P2", run_p2)):
        for h in sizes[order]:
            if split_from is None:
                mesh = mesh_profile(profile, h)
            else:
                mesh = mesh_profile(profile, split_from)
                for _ in range(h):
                    mesh = uniformly_refined(mesh)
            sec, (lo, hi, tau) = timed(lambda m=mesh, r=run: r(m), repeats)
            jm = 0.5 * (lo + hi)
            rows.append(
                dict(case=name, order=order, h=h, elements=mesh.nelements,
                     dofs=mesh.nnodes if order == "P1" else p2_nodes(mesh).nnodes, time=sec,
                     width=(hi - lo) / jm, jerr=(jm - j_ref) / j_ref,
                     tauerr=(tau - tau_ref) / tau_ref)
            )
            r = rows[-1]
            print(
                f"| {name} | {order} | {h:g} | {r['elements']} | {r['dofs']} | {sec:.3f}"
                f" | {r['width']:.2e}"
                f" | {r['jerr']:+.2e} | {r['tauerr']:+.2e} |",
                flush=True,
            )
    return rows


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="fewer sizes, one run")
    args = ap.parse_args(argv)
    repeats = 1 if args.quick else 3
    header = (
        "| case | order | h | elements | nodes | solve s (median) | (J_hi-J_lo)/J | J err"
        " | tau_max err |\n|---|---|---|---|---|---|---|---|---|"
    )

    b, t = 2.0, 1.0
    rect = Profile.from_loops([[(0, 0), (b, 0), (b, t), (0, t)]])
    j_ref, tau_ref = rectangle_reference(b, t)
    rect_sizes = {
        "P1": [0.1, 0.05, 0.025, 0.0125, 0.00625],
        "P2": [0.2, 0.1, 0.05, 0.025],
    }
    if args.quick:
        rect_sizes = {"P1": [0.1, 0.025], "P2": [0.2, 0.05]}
    print(f"rectangle {b} x {t}: J = {j_ref:.10g}, tau_max = {tau_ref:.10g} (series)")
    print(header)
    sweep("rect 2x1", rect, rect_sizes, j_ref, tau_ref, repeats)

    shaft = Profile.from_loops([keyed_shaft()], units="mm")
    shaft_sizes = {"P1": [2.0, 1.0, 0.5, 0.25, 0.125], "P2": [4.0, 2.0, 1.0, 0.5]}
    if args.quick:
        shaft_sizes = {"P1": [2.0, 0.5], "P2": [4.0, 1.0]}
    ref_mesh = uniformly_refined(uniformly_refined(mesh_profile(shaft, 1.0)))
    t0 = time.perf_counter()
    fr = solve_torsion_p2(ref_mesh, method="direct")
    pr = boundary_peak_p2(fr, skip_reentrant=True)
    j_ref = 0.5 * (fr.j_lo + fr.j_hi)
    width = (fr.j_hi - fr.j_lo) / j_ref
    print(
        f"\nkeyed shaft reference: P2, {ref_mesh.nelements} elements, "
        f"J in [{fr.j_lo:.10g}, {fr.j_hi:.10g}] mm^4 (rel. width {width:.1e}),"
        f" tau_max = {pr.value:.6g} (warping {pr.warping_value:.6g}) mm per unit G*theta"
        f" at ({pr.xy[0]:.3f}, {pr.xy[1]:.3f}), {time.perf_counter() - t0:.1f} s"
    )
    print(header)
    sweep("keyed shaft", shaft, shaft_sizes, j_ref, pr.value, repeats)
    # the fillet elements are set by the fillet chords, not by h: split uniformly instead
    levels = {"P1": [0, 1, 2, 3], "P2": [0, 1, 2]}
    if args.quick:
        levels = {"P1": [0, 1], "P2": [0, 1]}
    print("\nkeyed shaft, h = 2 mm mesh split uniformly (column h = number of splits)")
    print(header)
    sweep("keyed shaft split", shaft, levels, j_ref, pr.value, repeats, split_from=2.0)


if __name__ == "__main__":
    main()
