"""Sparse constrained least squares shared by benchmarking and reconciliation.

Denton benchmarking, Chow-Lin disaggregation and multivariate reconciliation all minimise a
quadratic form of the adjustments subject to linear aggregation constraints, with the series of
a whole panel stacked block-diagonally: the first-difference Gram matrix D'D (Denton), the AR(1)
precision matrix (Chow-Lin's error process, the limit of which as rho -> 1 is D'D) and one sparse
solve of the KKT system [[G, C'], [C, 0]] [w; l] = [0; rhs].

References
----------
Denton, F. T. (1971), "Adjustment of monthly or quarterly series to annual totals: an approach
based on quadratic minimization", *Journal of the American Statistical Association* 66(333).
International Monetary Fund, *Quarterly National Accounts Manual, 2017 Edition*, chapter 6.
"""

from __future__ import annotations

import warnings

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from valvol.errors import InputError, Problem


def tridiagonal(diag: np.ndarray, off: np.ndarray) -> sp.csr_matrix:
    n = len(diag)
    i = np.arange(n - 1) if n else np.zeros(0, "int64")
    rows = np.r_[np.arange(n), i, i + 1]
    cols = np.r_[np.arange(n), i + 1, i]
    return sp.csr_matrix((np.r_[diag, off, off], (rows, cols)), shape=(n, n))


def difference_gram(lengths: np.ndarray) -> sp.csr_matrix:
    """Block-diagonal D'D of the first-difference operator, one block per series length."""
    n = int(np.sum(lengths))
    ends = np.cumsum(lengths)
    starts = ends - lengths
    diag = np.full(n, 2.0)
    diag[starts] -= 1.0
    diag[ends - 1] -= 1.0
    off = -np.ones(max(n - 1, 0))
    off[ends[:-1] - 1] = 0.0  # no difference across two series
    return tridiagonal(diag, off)


def ar1_precision(lengths: np.ndarray, rho: np.ndarray) -> sp.csr_matrix:
    """Block-diagonal inverse of the AR(1) covariance matrix rho^|i-j| / (1 - rho^2).

    ``rho`` holds one value per element (the series' rho repeated).
    """
    ends = np.cumsum(lengths)
    starts = ends - lengths
    diag = 1.0 + rho**2
    diag[starts] = 1.0
    diag[ends - 1] = 1.0
    single = starts[lengths == 1]
    diag[single] = 1.0 - rho[single] ** 2  # a series of one quarter
    off = -rho[1:].copy()
    off[ends[:-1] - 1] = 0.0
    return tridiagonal(diag, off)


def solve_kkt(gram: sp.spmatrix, cons: sp.spmatrix, rhs: np.ndarray, *, banded: bool = False) -> np.ndarray:
    """Solve min w'Gw s.t. Cw = rhs through the sparse system [[G, C'], [C, 0]] [w; l] = [0; rhs].

    With ``banded`` (G banded and every constraint row on a few neighbouring columns, rows
    ordered by their last column, as in temporal benchmarking), each multiplier is placed right
    after the last column of its row, which keeps the factorisation within a narrow band;
    otherwise the sparse LU chooses its own column ordering.
    """
    n, m = gram.shape[0], cons.shape[0]
    g, c = gram.tocoo(), cons.tocoo()
    if banded:
        last = np.full(m, -1, dtype="int64")
        np.maximum.at(last, c.row, c.col)
        banded = bool(np.all(np.diff(last) > 0)) and (m == 0 or last[0] >= 0)
    if banded:
        lam = last + np.arange(m) + 1
        var = np.arange(n) + np.searchsorted(last, np.arange(n), side="left")
    else:
        lam, var = n + np.arange(m), np.arange(n)
    rows = np.concatenate([var[g.row], lam[c.row], var[c.col]])
    cols = np.concatenate([var[g.col], var[c.col], lam[c.row]])
    vals = np.concatenate([g.data, c.data, c.data])
    kkt = sp.csc_matrix((vals, (rows, cols)), shape=(n + m, n + m))
    b = np.zeros(n + m)
    b[lam] = rhs
    with warnings.catch_warnings():
        warnings.simplefilter("error", spla.MatrixRankWarning)
        try:
            sol = spla.spsolve(kkt, b, permc_spec="NATURAL" if banded else "COLAMD")
        except (spla.MatrixRankWarning, RuntimeError) as exc:
            raise InputError([Problem(reason=f"the constraint system is singular ({exc})")]) from None
    if not np.all(np.isfinite(sol)):
        raise InputError([Problem(reason="the constraint system is singular (non-finite solution)")])
    return sol[var]

