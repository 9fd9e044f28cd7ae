"""Solver for the symmetric positive definite systems of both problems.

Small systems go to a sparse direct factorisation (SuperLU through scipy);
large ones to conjugate gradients preconditioned with smoothed-aggregation
algebraic multigrid (pyamg).  The switch-over size comes from the benchmark
in ``tests/bench/bench_core.py``; DEVELOPERS.md records the figures.
"""

from __future__ import annotations

import contextlib
import logging

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..errors import SolveError

__all__ = ["solve_spd", "DIRECT_LIMIT", "one_blas_thread", "fixed_random_state", "AMG_SEED"]

log = logging.getLogger(__name__)

#: Unknowns above which AMG-preconditioned CG is used instead of SuperLU.
DIRECT_LIMIT = 20_000

#: Seed of the random start vector pyamg draws (from numpy's global generator) to
#: estimate the spectral radius for its Jacobi-smoothed prolongation: fixed, so that
#: the same matrix gives the same preconditioner and the same bits on every run.
AMG_SEED = 20_240_611


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


def one_blas_thread():
    """Context holding BLAS to one thread: reductions then sum in one fixed order.

    A multithreaded dot product splits its sum by thread count, so the last
    digits would depend on the number of cores, on ``OPENBLAS_NUM_THREADS``
    and on whether a batch runs in worker processes (one thread each) or in
    this one (measured: up to 2e-14 apart).  The solves already ran on one
    thread for speed (see :func:`solve_spd`); the whole analysis now does
    (``soapfilm.solve.analyse`` and ``result_from_mesh``).
    """
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def solve_spd(a: sp.spmatrix, b: np.ndarray, method: str = "auto", rtol: float = 1e-8):
    """Solve ``a x = b`` for a sparse SPD matrix (see :func:`_solve_spd`).

    BLAS is held to one thread meanwhile: the solvers' dense work is on
    vectors, where OpenBLAS threads only add overhead, and on a busy 2-core
    machine that overhead made AMG-CG ten times slower (measured: 2.2 s
    against 0.18 s for 17k unknowns).
    """
    with one_blas_thread():
        return _solve_spd(a, b, method, rtol)


def _solve_spd(a: sp.spmatrix, b: np.ndarray, method: str, rtol: float):
    """Solve ``a x = b`` for a sparse SPD matrix.

    Parameters
    ----------
    a : sparse matrix, SPD
    b : ndarray (n,) or (n, k)
    method : {"auto", "direct", "amg"}
    rtol : float
        Relative residual for the iterative path.  J enters through energy
        functionals that are stationary at the solution, so its algebraic error
        is of the order of rtol squared; the bounds are evaluated with formulas
        that stay bounds for any approximate field (see ``fem.torsion``).
    """
    a = sp.csr_matrix(a)
    n = a.shape[0]
    if method == "auto":
        method = "direct" if n <= DIRECT_LIMIT else "amg"
    if method == "direct":
        # symmetric mode: a minimum-degree ordering of A + A^T and no pivoting, right for SPD
        # matrices and 1.5-2x faster than the general default here
        lu = spla.splu(a.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                       options={"SymmetricMode": True})
        return lu.solve(np.asarray(b, dtype=np.float64))
    if method != "amg":
        raise ValueError(f"unknown method {method!r}")
    import pyamg

    # Jacobi-smoothed prolongation without candidate improvement: the cheapest set-up
    # that kept the iteration count (21 at 1e-8 on a million elements, bench_core.py)
    with fixed_random_state():
        ml = pyamg.smoothed_aggregation_solver(
            a, symmetry="hermitian", max_coarse=500, improve_candidates=None,
            smooth=("jacobi", {"omega": 4.0 / 3.0}),
        )
    cols = b.reshape(n, -1)
    out = np.empty_like(cols, dtype=np.float64)
    for j in range(cols.shape[1]):
        res: list[float] = []
        bn = np.linalg.norm(cols[:, j])
        if bn == 0:
            out[:, j] = 0
            continue
        out[:, j] = ml.solve(cols[:, j], tol=rtol, accel="cg", maxiter=400, residuals=res)
        if res[-1] > 100 * rtol * bn:
            raise SolveError(
                f"the iterative solver stopped at relative residual {res[-1] / bn:.2e}"
            )
        log.debug("AMG-CG: %d iterations", len(res) - 1)
    return out.reshape(b.shape)
