"""Fill-reducing orderings and sparse factorisations for the direct path (issue 12, item 1).

Measures, on the real quadratic-element systems (stress function: free nodes plus
one unknown per hole; warping function: all nodes but the pinned node 0), the CPU
time of ordering + factorisation + one solve and the fill, for

* ``mmd``: today's path, SuperLU in symmetric mode with its minimum degree on A + A^T
  (``linsolve._direct``: relax 1, panels of 4, no pivoting);
* ``metis``: METIS nested dissection (pymetis) of the matrix graph, applied
  symmetrically, then SuperLU with the natural order (same settings);
* ``coord``: a nested dissection of our own from the node coordinates (recursive
  bisection at the median of the longer extent, vertex separator = the nodes of the
  smaller side that touch the other), then SuperLU natural;
* ``mesh1``: ``coord`` computed once on the whole P2 node set and restricted to each
  system's unknowns (one ordering per mesh for both fields), then SuperLU natural;
* ``p1nd`` / ``p1metis``: a nested dissection of the P1 vertex graph (ours from the
  coordinates / METIS), carried to the P2 nodes (a mid-node after its earlier corner),
  once per mesh for both fields, then SuperLU natural;
* ``mmd-num``: SuperLU's numeric work alone (MMD's order given): what reusing an
  ordering could save;
* ``qdldl``: LDL^T with its own AMD ordering (qdldl), and ``qdldl-re``: its
  numeric refactorisation on the same pattern (``update``: the symbolic part reused).

``--end-to-end``: ``analyse(..., tol=1e-4)`` and ``solve_torsion_p2`` on the adaptive
meshes of the mixer drawing and the keyed shafts, SuperLU against qdldl against qdldl
with both fields on one symbolic factorisation (``linsolve.solve_pinned_pair``).

The systems: the keyed-shaft drawing ``shapes/mixer-paddle-shaft.dxf --layer OUTLINE``
along its adaptive run at tol 1e-4; the 40 mm keyed shaft of bench_core /
bench_solver_choice (a 1024-point circle less a 12 x 5 keyway) and a 40 mm round
with a bore and four 6 mm holes, meshed to about 5 k, 20 k, 60 k, 150 k and 400 k
P2 unknowns (the smallest held at about 10 k by the boundary points).  CPU time
(``time.process_time``), BLAS held to one thread as the
solver runs it, median and min-max of ``--runs`` (3).  Optional packages missing
are skipped.

    python tests/bench/bench_ordering.py [--runs 3] [--sizes 5000,20000,...] [--cases mixer,keyed,holes]
        [--only mmd,qdldl,...]
    python tests/bench/bench_ordering.py --end-to-end [--runs 5]

pymetis is not a dependency (no Windows wheel): install it by hand to measure METIS.
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from shapely.geometry import Point, Polygon, box

from soapfilm import Profile, mesh_profile
from soapfilm.fem import linsolve, p2
from soapfilm.fem.linsolve import SUPERLU_PANEL, SUPERLU_RELAX, one_blas_thread

ROOT = Path(__file__).resolve().parents[2]


# ---------------------------------------------------------------- systems

def _systems_of(mesh):
    """The two direct-path systems of a mesh with their unknowns' coordinates."""
    nodes = p2.p2_nodes(mesh)
    got = []

    def capture(a, b, method="auto", **kw):
        got.append((sp.csr_matrix(a), np.asarray(b, dtype=np.float64)))
        return np.zeros(a.shape[0])

    orig = p2.solve_spd
    p2.solve_spd = capture
    try:
        with np.errstate(all="ignore"):
            p2.solve_torsion_p2(mesh, method="direct", nodes=nodes, outline="straight")
    finally:
        p2.solve_spd = orig
    (ks, bs), (kw_, bw) = got
    xy = nodes.p6.T
    marker = nodes.boundary_marker
    free = np.flatnonzero(marker == 0)
    nh = ks.shape[0] - len(free)
    hole_xy = np.array([xy[marker == k + 2].mean(axis=0) for k in range(nh)]).reshape(nh, 2)
    # unknown -> P2 node (-1 for a hole's unknown), for the one-per-mesh ordering
    s_nodes = np.concatenate([free, -np.ones(nh, dtype=np.int64)])
    w_nodes = np.arange(1, nodes.nnodes)
    return [("phi", ks, bs, np.vstack([xy[free], hole_xy]), s_nodes, xy, (mesh, nodes)),
            ("w", kw_, bw, xy[1:], w_nodes, xy, (mesh, nodes))]


def keyed_profile():
    th = np.linspace(0, 2 * np.pi, 1024, endpoint=False)
    return Profile.from_polygon(
        Polygon(np.column_stack([20 * np.cos(th), 20 * np.sin(th)])).difference(box(-6, 15, 6, 25)))


def holed_profile():
    outer = Point(0, 0).buffer(20, 256)
    holes = [Point(0, 0).buffer(5, 64)] + [Point(12 * np.cos(a), 12 * np.sin(a)).buffer(3, 64)
                                          for a in np.arange(4) * np.pi / 2 + np.pi / 4]
    for h in holes:
        outer = outer.difference(h)
    return Profile.from_polygon(outer)


def sized_meshes(profile, sizes):
    for n in sizes:
        # about 2 P2 unknowns per element; Triangle's elements come out at about
        # 0.6 of the area limit (calibrated on the keyed shaft at 80 k unknowns; the
        # small sizes are held up by the boundary points)
        n_el = n / 2.0
        h = np.sqrt(4 / np.sqrt(3) * profile.area * 1.6 / n_el)
        yield mesh_profile(profile, h)


def mixer_profile():
    from soapfilm.readers import read_section

    return read_section(ROOT / "shapes" / "mixer-paddle-shaft.dxf", None, layers=["OUTLINE"])


def adaptive_meshes(prof):
    """The meshes an adaptive run to tol 1e-4 solves on."""
    from soapfilm import analyse

    meshes = []
    orig = p2.solve_torsion_p2

    def record(mesh, *a, **kw):
        meshes.append(mesh)
        return orig(mesh, *a, **kw)

    p2.solve_torsion_p2 = record
    try:
        analyse(prof, tol=1e-4)
    finally:
        p2.solve_torsion_p2 = orig
    return meshes


# ---------------------------------------------------------------- orderings

def _rows_touching(indptr, indices, rows, mark):
    """Which of ``rows`` have a neighbour with ``mark`` set (vectorised CSR walk)."""
    starts, ends = indptr[rows], indptr[rows + 1]
    lens = ends - starts
    if lens.sum() == 0:
        return np.zeros(len(rows), dtype=bool)
    offs = np.repeat(starts - np.concatenate([[0], np.cumsum(lens)[:-1]]), lens)
    nb = indices[np.arange(lens.sum()) + offs]
    hit = mark[nb]
    owner = np.repeat(np.arange(len(rows)), lens)
    return np.bincount(owner[hit], minlength=len(rows)) > 0


def coordinate_dissection(a, xy, leaf=48, last=()):
    """Nested dissection from coordinates: returns the elimination order (new -> old).

    Each block of unknowns is split at the median of its longer extent; the nodes of
    the smaller of the two sides that touch the other side form the separator,
    ordered after both halves, which are dissected in turn down to ``leaf``.
    ``last``: unknowns ordered after everything (a hole's unknown touches its whole
    loop).
    """
    a = sp.csr_matrix(a)
    n = a.shape[0]
    indptr, indices = a.indptr, a.indices
    last = np.asarray(last, dtype=np.int64)
    keep = np.ones(n, dtype=bool)
    keep[last] = False
    order = np.empty(n, dtype=np.int64)
    order[n - len(last):] = last
    mark = np.zeros(n, dtype=bool)
    stack = [(np.flatnonzero(keep), 0)]
    while stack:
        idx, start = stack.pop()
        m = len(idx)
        if m <= leaf:
            order[start:start + m] = idx
            continue
        pts = xy[idx]
        axis = int(np.argmax(np.ptp(pts, axis=0)))
        k = m // 2
        part = np.argpartition(pts[:, axis], k)
        left, right = idx[part[:k]], idx[part[k:]]
        mark[right] = True
        sep_l = _rows_touching(indptr, indices, left, mark)
        mark[right] = False
        mark[left] = True
        sep_r = _rows_touching(indptr, indices, right, mark)
        mark[left] = False
        if sep_l.sum() <= sep_r.sum():
            sep, left = left[sep_l], left[~sep_l]
        else:
            sep, right = right[sep_r], right[~sep_r]
        order[start + m - len(sep):start + m] = sep
        stack.append((left, start))
        stack.append((right, start + len(left)))
    return order


def metis_order(a):
    import pymetis

    g = sp.csr_matrix(a).copy()
    g.setdiag(0)
    g.eliminate_zeros()
    perm, _ = pymetis.nested_dissection(pymetis.CSRAdjacency(g.indptr, g.indices))
    return np.asarray(perm, dtype=np.int64)


def superlu(a, ordering="MMD_AT_PLUS_A"):
    return spla.splu(sp.csc_matrix(a), permc_spec=ordering, diag_pivot_thresh=0.0,
                     relax=SUPERLU_RELAX, panel_size=SUPERLU_PANEL,
                     options={"SymmetricMode": True})


def permuted_superlu(a, perm):
    ap = sp.csr_matrix(a)[perm][:, perm]
    return superlu(ap, "NATURAL")


# one run of each candidate: (x, fill, seconds of ordering) -------------------------

def run_mmd(a, b, **_):
    lu = superlu(a)
    return lu.solve(b), lu.L.nnz + lu.U.nnz


def _run_perm(a, b, perm):
    lu = permuted_superlu(a, perm)
    x = np.empty_like(b)
    x[perm] = lu.solve(b[perm])
    return x, lu.L.nnz + lu.U.nnz


def run_metis(a, b, **_):
    return _run_perm(a, b, metis_order(a))


def run_coord(a, b, xy, unk, **_):
    return _run_perm(a, b, coordinate_dissection(a, xy, last=np.flatnonzero(unk < 0)))


def mesh_order_rank(xy_all, k_all):
    """Rank of every P2 node in one dissection of the whole node set."""
    order = coordinate_dissection(k_all, xy_all)
    rank = np.empty(len(order), dtype=np.int64)
    rank[order] = np.arange(len(order))
    return rank


def run_mesh1(a, b, unk, rank, **_):
    # the mesh's order restricted to this system's unknowns; holes last
    key = np.where(unk >= 0, rank[np.maximum(unk, 0)], len(rank) + np.arange(len(unk)))
    return _run_perm(a, b, np.argsort(key, kind="stable"))


def p1_dissection_key(mesh, nodes, leaf=16, metis=False):
    """Elimination key of every P2 node from a nested dissection of the P1 vertices.

    Vertex v: ``2 rank(v)``; the mid-node of edge (u, v): ``2 min(rank) + 1``, just
    after its earlier corner.  A mid-node between a part and a separator vertex goes
    with the part (its elements hold only that part's and the separator's nodes), so
    the P2 separators are the P1 ones plus the mid-nodes of their own edges.
    """
    n = mesh.nnodes
    e = nodes.edges.astype(np.int64)
    g = sp.coo_matrix((np.ones(e.shape[1]), (e[0], e[1])), shape=(n, n))
    g = (g + g.T).tocsr()
    if metis:
        import pymetis

        order, _ = pymetis.nested_dissection(pymetis.CSRAdjacency(g.indptr, g.indices))
        order = np.asarray(order, dtype=np.int64)
    else:
        order = coordinate_dissection(g, mesh.p.T, leaf=leaf)
    rank = np.empty(n, dtype=np.int64)
    rank[order] = np.arange(n)
    return np.concatenate([2 * rank, 2 * np.minimum(rank[e[0]], rank[e[1]]) + 1])


def run_keyed(a, b, unk, key, **_):
    # the mesh's key restricted to this system's unknowns; holes last
    k = np.where(unk >= 0, key[np.maximum(unk, 0)], key.max() + 1 + np.arange(len(unk)))
    return _run_perm(a, b, np.argsort(k, kind="stable"))


def run_qdldl(a, b, **_):
    import qdldl

    s = qdldl.Solver(sp.csc_matrix(a))
    L = s.factors()[0]
    return s.solve(b), 2 * L.nnz + a.shape[0]


def run_qdldl_re(a, b, prepared, **_):
    """qdldl's numeric refactorisation on the pattern of a first factorisation."""
    prepared.update(sp.csc_matrix(a))
    return prepared.solve(b), 2 * prepared.factors()[0].nnz + a.shape[0]


def run_mmd_num(a, b, prepared, **_):
    """SuperLU's numeric work alone: MMD's column order given, natural order inside."""
    return _run_perm(a, b, prepared)


def prepare(name, a):
    """What a candidate that reuses a set-up gets, made outside the timing."""
    if name == "qdldl-re":
        import qdldl

        return qdldl.Solver(sp.csc_matrix(a))
    if name in ("p1nd", "p1metis"):
        return None
    if name == "mmd-num":
        return np.argsort(superlu(a).perm_c)
    return None


def available():
    cands = {"mmd": run_mmd, "mmd-num": run_mmd_num, "coord": run_coord, "mesh1": run_mesh1,
             "p1nd": run_keyed}
    try:
        import pymetis  # noqa: F401

        cands["metis"] = run_metis
        cands["p1metis"] = run_keyed
    except ImportError:
        print("pymetis not installed: metis skipped")
    try:
        import qdldl  # noqa: F401

        cands["qdldl"] = run_qdldl
        cands["qdldl-re"] = run_qdldl_re
    except ImportError:
        print("qdldl not installed: qdldl skipped")
    return cands


def measure(label, systems, cands, runs):
    rank_time, rank = [], None
    xy_all = systems[0][5]
    # the P2 node graph for the one-per-mesh ordering: the warping matrix plus node 0
    kw = systems[1][1]
    n_all = kw.shape[0] + 1
    k_all = sp.bmat([[sp.csr_matrix((1, 1)), None], [None, kw]]).tocsr()
    k_all.resize((n_all, n_all))
    for _ in range(runs if "mesh1" in cands else 0):
        t0 = time.process_time()
        rank = mesh_order_rank(xy_all, k_all)
        rank_time.append(time.process_time() - t0)
    mesh, nodes = systems[0][6]
    keys, key_time = {}, {}
    for name in ("p1nd", "p1metis"):
        if name in cands:
            ts = []
            for _ in range(runs):
                t0 = time.process_time()
                keys[name] = p1_dissection_key(mesh, nodes, metis=name == "p1metis")
                ts.append(time.process_time() - t0)
            key_time[name] = statistics.median(ts)
    for what, a, b, xy, unk, _, _ in systems:
        ref = None
        for name, fn in cands.items():
            ts, fill, err = [], None, None
            prepared = prepare(name, a)
            for _ in range(runs):
                t0 = time.process_time()
                x, fill = fn(a, b, xy=xy, unk=unk, rank=rank, prepared=prepared, key=keys.get(name))
                ts.append(time.process_time() - t0)
            if ref is None:
                ref = x
            err = float(np.abs(x - ref).max() / np.abs(ref).max())
            med = statistics.median(ts)
            extra = f" (+ mesh order {statistics.median(rank_time):.3f})" if name == "mesh1" else ""
            if name in key_time:
                extra = f" (+ mesh order {key_time[name]:.3f})"
            print(f"{label:>14s} {what:>3s} {a.shape[0]:8d} {name:>8s} {med:8.3f} "
                  f"[{min(ts):.3f}-{max(ts):.3f}] s  fill {fill / 1e6:7.2f} M  "
                  f"dx {err:.1e}{extra}", flush=True)


def end_to_end(runs):
    """The adaptive runs to tol 1e-4 and their meshes' solves: SuperLU, qdldl, qdldl + pair.

    "qdldl+pair": a section without holes solves both fields with one symbolic
    factorisation (``linsolve.solve_pinned_pair``); the other two paths replace it by
    two separate factorisations of the reduced systems.

    CPU of ``analyse(..., tol=1e-4)`` and of ``solve_torsion_p2`` summed over the
    run's meshes, median [min-max] of ``runs``, the two paths alternating; the
    results' J bounds and peaks compared.
    """
    import sys

    from soapfilm import analyse

    sys.path.insert(0, str(Path(__file__).parent))
    from bench_adaptive import keyed_section

    paths = (("superlu", 0), ("qdldl", 10**9), ("qdldl+pair", 10**9))
    keep, pair = linsolve.LDL_LIMIT, linsolve.solve_pinned_pair

    def separate(k, fixed_a, b_a, fixed_b, b_b):
        """The pair as two separate factorisations of the reduced systems."""
        out = []
        for fixed, b in ((fixed_a, b_a), (fixed_b, b_b)):
            free = np.setdiff1d(np.arange(k.shape[0]), fixed)
            x = np.zeros(k.shape[0])
            x[free] = linsolve.solve_spd(sp.csr_matrix(k)[free][:, free], b[free], method="direct")
            out.append(x)
        return out
    try:
        from soapfilm.shapes.shafts import keyed_shaft

        for name, prof in (("mixer", mixer_profile()),
                           ("keyed 40 arcs", keyed_shaft(40.0, 12.0, 5.0, 0.4)),
                           ("keyed 40 polygon", keyed_section())):
            meshes = adaptive_meshes(prof)
            t_run = {k: [] for k, _ in paths}
            t_fem = {k: [] for k, _ in paths}
            res = {}
            for _ in range(runs):
                for path, limit in paths:
                    linsolve.LDL_LIMIT = limit
                    linsolve.solve_pinned_pair = pair if path.endswith("pair") else separate
                    t0 = time.process_time()
                    r = analyse(prof, tol=1e-4)
                    t_run[path].append(time.process_time() - t0)
                    res[path] = r
                    t0 = time.process_time()
                    for mesh in meshes:
                        p2.solve_torsion_p2(mesh)
                    t_fem[path].append(time.process_time() - t0)
            sizes = ", ".join(str(p2.p2_nodes(m).nnodes) for m in meshes)
            print(f"{name}: {len(meshes)} meshes, P2 nodes {sizes}")
            for path, _ in paths:
                a, f = t_run[path], t_fem[path]
                print(f"  {path:>8s}: analyse {statistics.median(a):.3f} [{min(a):.3f}-{max(a):.3f}] s"
                      f"  solve_torsion_p2 summed {statistics.median(f):.3f} "
                      f"[{min(f):.3f}-{max(f):.3f}] s")
            ra = res["superlu"]
            va = [*ra.torsion_constant_bounds, ra.max_shear_per_torque, ra.max_shear_per_torque_warping]
            print(f"  J_lo, J_hi, peak, peak (warping): superlu {va}")
            for path in ("qdldl", "qdldl+pair"):
                rb = res[path]
                vb = [*rb.torsion_constant_bounds, rb.max_shear_per_torque,
                      rb.max_shear_per_torque_warping]
                rel = np.abs(np.subtract(vb, va)) / np.abs(va)
                print(f"  {path}: relative change {', '.join(f'{x:.1e}' for x in rel)}; elements "
                      f"{ra.mesh.nelements} / {rb.mesh.nelements}", flush=True)
    finally:
        linsolve.LDL_LIMIT, linsolve.solve_pinned_pair = keep, pair


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--sizes", default="5000,20000,60000,150000,400000")
    ap.add_argument("--cases", default="mixer,keyed,holes")
    ap.add_argument("--only", default="", help="comma-separated candidates")
    ap.add_argument("--end-to-end", action="store_true",
                    help="adaptive runs and solve_torsion_p2, SuperLU against qdldl")
    args = ap.parse_args(argv)
    if args.end_to_end:
        with one_blas_thread():
            end_to_end(args.runs)
        return
    cands = available()
    if args.only:
        cands = {k: v for k, v in cands.items() if k in args.only.split(",")}
    sizes = [int(s) for s in args.sizes.split(",")]
    print(f"{'case':>14s} {'sys':>3s} {'unknowns':>8s} {'method':>8s} {'median':>8s} "
          "[min-max] CPU")
    with one_blas_thread():
        cases = args.cases.split(",")
        if "mixer" in cases:
            for i, mesh in enumerate(adaptive_meshes(mixer_profile())):
                measure(f"mixer step {i}", _systems_of(mesh), cands, args.runs)
        for name, prof in (("keyed", keyed_profile), ("holes", holed_profile)):
            if name in cases:
                for mesh in sized_meshes(prof(), sizes):
                    measure(name, _systems_of(mesh), cands, args.runs)


if __name__ == "__main__":
    main()
