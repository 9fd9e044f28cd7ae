"""Solver for the symmetric positive definite systems of both problems.

Small systems go to a sparse direct factorisation (qdldl's LDL^T up to
``LDL_LIMIT`` unknowns, SuperLU through scipy above);
large ones to conjugate gradients preconditioned with smoothed-aggregation
algebraic multigrid (pyamg).  The switch-over size comes from the benchmark
in ``tests/bench/bench_core.py``; DEVELOPERS.md records the figures.
"""

from __future__ import annotations

import contextlib
import logging
import math
import threading
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..errors import SolveError

__all__ = ["solve_spd", "DIRECT_LIMIT", "one_blas_thread", "fixed_random_state", "AMG_SEED", "pcg",
           "PCGResult", "ENERGY_TOL", "FALLBACK_DIRECT_LIMIT", "cg_or_direct", "amg_hierarchy",
           "LDL_LIMIT", "solve_pinned_pair"]

log = logging.getLogger(__name__)

#: Unknowns above which AMG-preconditioned CG is used instead of SuperLU.
DIRECT_LIMIT = 20_000

#: Seed of the random start vector pyamg draws (from numpy's global generator) to
#: estimate the spectral radius for its Jacobi-smoothed prolongation: fixed, so that
#: the same matrix gives the same preconditioner and the same bits on every run.
AMG_SEED = 20_240_611


#: Stopping rule of the iterative solves for J (with the residual rule for the peak,
#: see :func:`_solve_spd`): the estimated energy norm of the algebraic error, squared,
#: at most this times J.  Both bounds are energy functionals
#: stationary at the discrete solution, so the algebraic error moves each of them by
#: exactly that square (J_hi = E(w) = E(w_h) + a(e, e); J_lo likewise): J within
#: 1e-13 of the tight solve.
ENERGY_TOL = 1e-13

#: Unknowns up to which a solve whose CG stalls is finished by the direct solver
#: (SuperLU at 346 k quadratic unknowns: about 1.1 GB and 20 s on the 2-core sandbox).
FALLBACK_DIRECT_LIMIT = 400_000


@dataclass(frozen=True)
class PCGResult:
    """What a preconditioned CG solve reached.

    ``energy_error`` estimates ``a(e, e)`` of the returned field (the
    Hestenes-Stiefel terms still to come, as a geometric tail at the observed rate);
    ``stop`` is "converged", "maxiter" or "breakdown".
    """

    x: np.ndarray
    iterations: int
    residual: float  # true relative residual ||b - A x|| / ||b||
    energy_error: float
    stop: str


def pcg(a, b, precond, x0=None, rtol: float = 1e-12, energy_tol: float | str | None = None,
        maxiter: int = 400, delay: int = 5) -> PCGResult:
    """Preconditioned conjugate gradients with an estimate of the energy error.

    In exact arithmetic ``||x - x_k||_A^2 = sum_{j >= k} alpha_j (r_j . z_j)``
    (M. R. Hestenes and E. Stiefel, J. Res. NBS 49 (1952) 409-436; that the sum
    stays a good estimate in finite precision: Z. Strakos and P. Tichy, ETNA 13
    (2002) 56-80 - both from memory): the error of the iterate just made is the
    sum of the terms still to come, extrapolated geometrically from the last one
    at the slowest single-step rate of the last ``delay`` steps
    (``tests/test_linsolve.py`` checks it against the true error).  Stops when
    the relative residual is at most ``rtol`` and the estimated ``a(e, e)`` at
    most ``energy_tol``: a number, or "bx" for :data:`ENERGY_TOL` times ``b . x``
    (the stress function's J estimate).
    """
    b = np.asarray(b, dtype=np.float64)
    bn = float(np.linalg.norm(b))
    x = np.zeros_like(b) if x0 is None else np.array(x0, dtype=np.float64)
    r = b - a @ x if x0 is not None else b.copy()
    if bn == 0.0:
        return PCGResult(np.zeros_like(b), 0, 0.0, 0.0, "converged")
    z = precond(r)
    p = z.copy()
    rz = float(r @ z)
    terms: list[float] = []
    est = math.inf
    stop = "maxiter"
    k = 0
    while k < maxiter:
        k += 1
        ap = a @ p
        pap = float(p @ ap)
        if not pap > 0.0:
            stop = "breakdown"
            break
        alpha = rz / pap
        x += alpha * p
        r -= alpha * ap
        terms.append(alpha * rz)
        if len(terms) > delay:
            # the iterate just made has error sum_{j > k} t_j: the tail after the
            # last term at the slowest single-step rate of the last `delay` steps
            last = np.asarray(terms[-delay - 1:])
            with np.errstate(divide="ignore", invalid="ignore"):
                rate = float(np.max(last[1:] / last[:-1])) if np.all(last[:-1] > 0) else 1.0
            rate = min(rate, 0.999)
            est = terms[-1] * rate / (1.0 - rate)
        # both rules: the energy one for J, the residual one for the peak (read from
        # boundary fluxes and nodal differences, which see the error over h)
        if float(np.linalg.norm(r)) <= rtol * bn and (
                energy_tol is None or est <= (ENERGY_TOL * abs(float(b @ x))
                                              if energy_tol == "bx" else energy_tol)):
            stop = "converged"
            break
        z = precond(r)
        rz_new = float(r @ z)
        p = z + (rz_new / rz) * p
        rz = rz_new
    res = float(np.linalg.norm(b - a @ x)) / bn
    return PCGResult(x, k, res, est, stop)


#: CG steps after which a solve counts as stalled: three times the usual count
#: (21 for linear, 34-38 for quadratic elements at a million elements).
STALL_STEPS = 120


def cg_or_direct(a, b, precond, energy_tol: float | str | None, x0=None,
                 what: str = "AMG-CG", rtol: float = 1e-8) -> np.ndarray:
    """CG to the energy rule; a stalled solve finished by SuperLU where memory allows.

    Both bounds stay bounds for a stalled field, but its J moves by ``a(e, e)``
    (1.2e-6 of J on a 1:500 section with slit holes after 400 steps, against a
    stopping rule of 1e-13) and its peak linearly, so a solve that has not met
    the rule after :data:`STALL_STEPS` is finished by SuperLU up to
    :data:`FALLBACK_DIRECT_LIMIT` unknowns (the correction ``A d = b - A x``;
    that section: 1.4 s direct against 10.5 s of AMG-CG).  Above that CG goes on
    to 400 steps and the field is kept if its estimated energy error is within
    ten times the rule; otherwise SolveError.
    """
    n = a.shape[0]
    res = pcg(a, b, precond, x0=x0, rtol=rtol, energy_tol=energy_tol, maxiter=STALL_STEPS)
    if res.stop != "converged":
        if n <= FALLBACK_DIRECT_LIMIT:
            log.debug("%s: CG not converged after %d steps (relative residual %.1e, energy "
                      "error %.1e); finished by SuperLU", what, res.iterations, res.residual,
                      res.energy_error)
            return res.x + _direct(sp.csr_matrix(a), b - a @ res.x)
        res = pcg(a, b, precond, x0=res.x, rtol=rtol, energy_tol=energy_tol,
                  maxiter=400 - STALL_STEPS)
    log.debug("%s: %d iterations, stop on %s, relative residual %.1e, energy error %.1e",
              what, res.iterations, res.stop, res.residual, res.energy_error)
    if res.stop == "converged":
        return res.x
    tol = ENERGY_TOL * abs(float(b @ res.x)) if energy_tol == "bx" else energy_tol
    if tol is not None and res.energy_error <= 10.0 * tol:
        log.debug("%s: stalled; field kept (energy error %.1e)", what, res.energy_error)
        return res.x
    raise SolveError(
        f"the iterative solver stopped at relative residual {res.residual:.2e}"
    )


#: SuperLU's supernode settings: no relaxed supernodes (``relax`` 1) and panels of 4
#: columns.  On the keyed shaft's quadratic systems (CPU time, min of 5) they factorise
#: 6 k unknowns in 19-27 ms against 26-33 ms with scipy's defaults, 14 k in 64-93 ms
#: against 111-114 ms, 35 k in 0.30-0.37 s against 0.35-0.73 s and 139 k (the size of
#: a stalled CG's fallback) in 2.1 s against 18.3 s; the same ordering, so the same fill
#: (DEVELOPERS.md, "Core").
SUPERLU_RELAX, SUPERLU_PANEL = 1, 4


#: Unknowns up to which the direct solves factorise with qdldl's LDL^T (its own AMD
#: ordering) instead of SuperLU: 1.3-1.8x faster on the quadratic systems of 6 k to 60 k
#: unknowns, the same fill (``tests/bench/bench_ordering.py``; DEVELOPERS.md, "Core").
LDL_LIMIT = 60_000


def _direct(a: sp.csr_matrix, b: np.ndarray, ordering: str = "MMD_AT_PLUS_A") -> np.ndarray:
    """Sparse direct solve of an SPD system.

    Up to :data:`LDL_LIMIT` unknowns qdldl's LDL^T with an approximate minimum degree
    ordering (no pivoting: the matrix is SPD, so D stays positive); above it, or
    without qdldl, SuperLU in symmetric mode (no pivoting, a minimum-degree ordering
    of A + A^T).
    """
    b = np.asarray(b, dtype=np.float64)
    if a.shape[0] == 0:  # no unknowns (every node held: a P1 mesh one element thick)
        return np.zeros(0)  # (qdldl refuses an empty matrix)
    if a.shape[0] <= LDL_LIMIT:
        try:
            import qdldl
        except ImportError:  # a declared dependency; SuperLU gives the same field
            qdldl = None
        if qdldl is not None:
            return qdldl.Solver(sp.csc_matrix(a)).solve(b)
    lu = spla.splu(a.tocsc(), permc_spec=ordering, diag_pivot_thresh=0.0,
                   relax=SUPERLU_RELAX, panel_size=SUPERLU_PANEL,
                   options={"SymmetricMode": True})
    return lu.solve(b)


def _pinned(k: sp.csc_matrix, fixed: np.ndarray) -> sp.csc_matrix:
    """``k`` with the rows and columns of ``fixed`` turned into the identity, pattern kept.

    The entries are zeroed, not removed, so every such matrix of one ``k`` has the same
    pattern (the condition for :func:`solve_pinned_pair`'s refactorisation).
    """
    k = k.copy()
    mask = np.zeros(k.shape[0], dtype=bool)
    mask[fixed] = True
    col = np.repeat(np.arange(k.shape[0]), np.diff(k.indptr))
    row = k.indices
    k.data[mask[row] | mask[col]] = 0.0
    k.data[(row == col) & mask[row]] = 1.0
    return k


def solve_pinned_pair(k, fixed_a, b_a, fixed_b, b_b) -> tuple[np.ndarray, np.ndarray]:
    """Two SPD solves with one matrix and different nodes held at zero, one symbolic set-up.

    Solves ``k x = b`` on the nodes not in ``fixed`` with ``x = 0`` on ``fixed``, for
    ``(fixed_a, b_a)`` and ``(fixed_b, b_b)``: the stress function (boundary held) and
    the warping function (one node pinned) of a section without holes.  Both systems
    are ``k`` with their fixed rows and columns replaced by the identity and the
    pattern kept (:func:`_pinned`), so qdldl's ordering and symbolic factorisation of
    the first serve the second, whose factorisation is numeric only (``update``):
    20-25 % less time for the pair than two separate factorisations on the mixer
    drawing's systems (DEVELOPERS.md, "Core").  ``k`` must hold every diagonal entry.
    Returns the two full vectors (zero at the fixed nodes).  BLAS on one thread.
    """
    import qdldl

    k = sp.csc_matrix(k)
    k.sum_duplicates()
    k.sort_indices()
    out = []
    with one_blas_thread():
        solver = None
        for fixed, b in ((fixed_a, b_a), (fixed_b, b_b)):
            a = _pinned(k, fixed)
            rhs = np.array(b, dtype=np.float64)
            rhs[fixed] = 0.0
            if solver is None:
                solver = qdldl.Solver(a)
            else:
                solver.update(a)
            x = solver.solve(rhs)
            x[fixed] = 0.0
            out.append(x)
    return out[0], out[1]


@contextlib.contextmanager
def fixed_random_state(seed: int = AMG_SEED):
    """Seed numpy's global generator for a block, then give the caller's state back.

    pyamg's set-up draws from ``np.random`` without a seed
    (``pyamg.util.linalg.approximate_spectral_radius``): without this, two runs
    of the same section differ in the last digits once AMG is used.
    """
    state = np.random.get_state()
    np.random.seed(seed)
    try:
        yield
    finally:
        np.random.set_state(state)


_blas_lock = threading.Lock()
_blas_depth = 0
_blas_limiter = None


@contextlib.contextmanager
def one_blas_thread():
    """Context holding BLAS to one thread: reductions then sum in one fixed order.

    A multithreaded dot product splits its sum by thread count, so the last
    digits would depend on the number of cores, on ``OPENBLAS_NUM_THREADS``
    and on whether a batch runs in worker processes (one thread each) or in
    this one (measured: up to 2e-14 apart).  The solves already ran on one
    thread for speed (see :func:`solve_spd`); the whole analysis now does
    (``soapfilm.solve.analyse`` and ``result_from_mesh``).

    Nested uses (an analysis, its solves) share the outermost limit: setting it
    scans the loaded libraries, which took 4 % of a batch job when every solve
    did it anew (DEVELOPERS.md, "Batch throughput"); the limit is lifted when
    the outermost use ends, in whichever thread.
    """
    global _blas_depth, _blas_limiter
    with _blas_lock:
        if _blas_depth == 0:
            from threadpoolctl import threadpool_limits

            _blas_limiter = threadpool_limits(limits=1, user_api="blas")
        _blas_depth += 1
    try:
        yield
    finally:
        with _blas_lock:
            _blas_depth -= 1
            if _blas_depth == 0:
                _blas_limiter.restore_original_limits()
                _blas_limiter = None


def solve_spd(a: sp.spmatrix, b: np.ndarray, method: str = "auto", rtol: float = 1e-8,
              energy_tol: float | str | None = "bx", x0: np.ndarray | None = None):
    """Solve ``a x = b`` for a sparse SPD matrix (see :func:`_solve_spd`).

    BLAS is held to one thread meanwhile: the solvers' dense work is on
    vectors, where OpenBLAS threads only add overhead, and on a busy 2-core
    machine that overhead made AMG-CG ten times slower (measured: 2.2 s
    against 0.18 s for 17k unknowns).
    """
    with one_blas_thread():
        return _solve_spd(a, b, method, rtol, energy_tol, x0)


def amg_hierarchy(a: sp.csr_matrix, cheap: bool = True, csr: bool = False):
    """Smoothed-aggregation hierarchy of ``a`` (seeded, coarse levels in CSR).

    ``cheap``: Jacobi-smoothed prolongation without candidate improvement, the
    cheapest set-up that kept the iteration count of the linear problems
    (bench_core.py); else pyamg's defaults (the quadratic elements' split-mesh
    preconditioner).  pyamg keeps the coarse operators in BSR; ``csr`` converts
    them, which measured no faster (bench_amg_rules.py at 543 k unknowns, BSR
    against CSR: set-up 1.57 / 1.66 s, 13 CG steps 1.65 / 1.76 s), so it is off.
    """
    import pyamg

    opts = dict(improve_candidates=None, smooth=("jacobi", {"omega": 4.0 / 3.0})) if cheap else {}
    with fixed_random_state():
        ml = pyamg.smoothed_aggregation_solver(a, symmetry="hermitian", max_coarse=500, **opts)
    for lev in ml.levels if csr else ():
        for name in ("A", "P", "R"):
            m = getattr(lev, name, None)
            if m is not None and sp.isspmatrix_bsr(m):
                setattr(lev, name, m.tocsr())
    return ml


def _solve_spd(a: sp.spmatrix, b: np.ndarray, method: str, rtol: float,
               energy_tol: float | str | None, x0: np.ndarray | None):
    """Solve ``a x = b`` for a sparse SPD matrix.

    Parameters
    ----------
    a : sparse matrix, SPD
    b : ndarray (n,)
    method : {"auto", "direct", "amg"}
    rtol : float
        Relative residual the iterative path must also reach: the peak is read
        from boundary fluxes and nodal differences, which see the algebraic error
        divided by the element size, not its energy (with the energy rule alone
        the linear-element peak estimate on a 2:1 rectangle at tol 1e-4 rose
        from 9.2e-5 to 1.7e-4 and the loop did not converge).
    energy_tol : float or "bx", optional
        The iterative path's stopping rule (:func:`pcg`): the estimated
        ``a(e, e)`` of the algebraic error at most this.  J enters through
        energy functionals that are stationary at the solution, so the
        algebraic error moves each bound by exactly ``a(e, e)``; the bounds are
        evaluated with formulas that stay bounds for any approximate field (see
        ``fem.torsion``).
    x0 : ndarray, optional
        Starting field of the iterative path (a warm start).
    """
    a = sp.csr_matrix(a)
    n = a.shape[0]
    if method == "auto":
        method = "direct" if n <= DIRECT_LIMIT else "amg"
    if method == "direct":
        # no pivoting and a minimum-degree ordering (LDL^T, or SuperLU in symmetric
        # mode): right for SPD matrices and 1.5-2x faster than SuperLU's general default
        return _direct(a, b)
    if method != "amg":
        raise ValueError(f"unknown method {method!r}")
    b = np.asarray(b, dtype=np.float64)
    if not np.any(b):
        return np.zeros_like(b)
    ml = amg_hierarchy(a)
    return cg_or_direct(a, b, ml.aspreconditioner(cycle="V").matvec, energy_tol, x0=x0, rtol=rtol)
