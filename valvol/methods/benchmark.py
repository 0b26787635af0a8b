"""Benchmarking quarterly series to annual values, and Chow-Lin temporal disaggregation.

Three methods, each vectorised over a whole panel of series (one sparse solve per call, the
series stacked block-diagonally):

* `denton` with ``method="proportional"``: the proportional first-difference Denton method,
  modified as Cholette proposed (no initial condition): it keeps the indicator's proportional
  quarter-to-quarter movements as closely as the annual values allow;
* `denton` with ``method="additive"``: the additive first-difference variant, which keeps the
  indicator's absolute movements (for series that can be zero or negative);
* `chow_lin`: regression of the quarterly series on the indicator (and a constant) with AR(1)
  errors, estimated from the annual values; rho by maximum likelihood or fixed.

Input frames are long: the indicator has the key columns ``by`` (default ``series``), ``year``,
``quarter`` (1..4) and ``value``; the benchmarks the key columns, ``year`` and ``value``. Each
series' quarters must be consecutive; a benchmark year must have in the indicator every quarter
its aggregation uses. ``year_from_quarters`` says how quarters aggregate to the annual value:
``total`` (flows), ``mean`` (indices, average stocks), ``q4`` / ``q1`` (end- / start-of-period
stocks).

Errors in the data raise `valvol.errors.InputError`; each problem names the series (``economy``,
``item`` and ``price_basis`` key columns fill those fields; any other key columns are joined with
``/`` into ``item``) and the period.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from valvol.errors import ConfigError, InputError, Problem
from valvol.frames import period_label

#: Weight of each quarter (1..4) in the annual value, by aggregation type.
YEAR_FROM_QUARTERS: dict[str, tuple[float, float, float, float]] = {
    "total": (1.0, 1.0, 1.0, 1.0),
    "mean": (0.25, 0.25, 0.25, 0.25),
    "q4": (0.0, 0.0, 0.0, 1.0),
    "q1": (1.0, 0.0, 0.0, 0.0),
}
DENTON_METHODS = ("proportional", "additive")
ON_NONPOSITIVE = ("error", "additive")
PARAM_COLUMNS = ["rho", "rho_at_bound", "rho_estimated", "beta_constant", "beta_indicator", "loglik",
                 "n_years"]


# ----------------------------------------------------------------------------- shared helpers
def key_columns(by: str | Sequence[str]) -> list[str]:
    """The series key columns as a list."""
    return [by] if isinstance(by, str) else list(by)


def series_problem(key: dict, period: str, reason: str) -> Problem:
    """A `Problem` locating ``key`` (a dict of key column -> value) in ``period``."""
    rest = [str(v) for k, v in key.items() if k not in ("economy", "price_basis")]
    return Problem(economy=str(key.get("economy", "")), item="/".join(rest),
                   price_basis=str(key.get("price_basis", "")), period=period, reason=reason)


def require_columns(df: pd.DataFrame, columns: Sequence[str], what: str) -> None:
    missing = [c for c in columns if c not in df.columns]
    if missing:
        raise InputError([Problem(reason=f"{what} frame lacks column(s) {', '.join(missing)}")])


def check_choice(name: str, value: object, allowed: Sequence[object]) -> None:
    if value not in allowed:
        raise ConfigError(f"{name} must be one of {', '.join(map(str, allowed))}, not {value!r}")


def _tridiagonal(diag: np.ndarray, off: np.ndarray) -> sp.csr_matrix:
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
    return _tridiagonal(diag, off)


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
    return _tridiagonal(diag, off)


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


@dataclass(frozen=True)
class _Panel:
    """An indicator panel stacked series after series, with its annual constraint matrix."""

    frame: pd.DataFrame  # indicator rows sorted by series and period, ``period`` added if lacking
    by: list[str]
    keys: pd.DataFrame  # one row per series (key columns)
    sid: np.ndarray  # series number of each row
    lengths: np.ndarray  # quarters per series
    bench: pd.DataFrame  # benchmark rows sorted by (sid, year): key columns, year, value, sid
    agg: sp.csr_matrix  # benchmark x quarter aggregation matrix
    benchmarked: np.ndarray  # whether each quarter's year has a benchmark

    @property
    def values(self) -> np.ndarray:
        return self.frame["value"].to_numpy(dtype="float64")


def _key_dicts(frame: pd.DataFrame, by: list[str], rows: np.ndarray) -> list[dict]:
    return frame.iloc[rows][by].to_dict("records") if len(rows) else []


def series_codes(frame: pd.DataFrame, by: list[str]) -> np.ndarray:
    """Integer code of each row's series, in sorted key order."""
    if len(by) == 1:
        return pd.factorize(frame[by[0]], sort=True)[0]
    return frame.groupby(by, sort=True).ngroup().to_numpy()


def sorted_quarters(frame: pd.DataFrame, key: list[str], label: str, owner: str):
    """Quarterly rows sorted by series and period, checked, with the arrays the solvers index by.

    Raises `InputError` naming series and quarter for a quarter outside 1..4, a missing
    value (``label`` names the values, e.g. "indicator"), a quarter given twice or a gap
    (``owner`` says whose quarters, e.g. "the indicator's"). Returns ``(frame, sid, year,
    quarter, t, new, step)``: the sorted frame (float values), its series codes, years,
    quarters, running quarter numbers ``t = 4 year + quarter - 1``, the first row of each
    series (``new``) and the step in ``t`` from the row before.
    """
    code = series_codes(frame, key)
    year = frame["year"].to_numpy(dtype="int64")
    quarter = frame["quarter"].to_numpy(dtype="int64")
    order = np.lexsort((quarter, year, code))
    out = frame.take(order).reset_index(drop=True)
    sid, year, quarter = code[order], year[order], quarter[order]
    out["year"], out["quarter"] = year, quarter
    out["value"] = out["value"].astype("float64")
    t = year * 4 + quarter - 1
    n = len(out)
    new = np.r_[True, sid[1:] != sid[:-1]] if n else np.zeros(0, bool)
    step = np.r_[1, np.diff(t)] if n else np.zeros(0, "int64")
    problems: list[Problem] = []
    for mask, reason in (
        ((quarter < 1) | (quarter > 4), "quarter must be 1..4"),
        (~np.isfinite(out["value"].to_numpy()), f"{label} value is missing or not finite"),
        (~new & (step == 0), "quarter given twice"),
        (~new & (step > 1), f"gap before this quarter: {owner} quarters must be consecutive"),
    ):
        rows = np.flatnonzero(mask)
        problems += [series_problem(k, f"{year[r]}-Q{quarter[r]}", reason)
                     for k, r in zip(_key_dicts(out, key, rows), rows, strict=True)]
    if problems:
        raise InputError(problems)
    return out, sid, year, quarter, t, new, step


def _arrange(indicator: pd.DataFrame, benchmarks: pd.DataFrame, by: list[str], year_from_quarters: str) -> _Panel:
    """Validate the inputs and stack them (every problem found is raised at once)."""
    check_choice("year_from_quarters", year_from_quarters, tuple(YEAR_FROM_QUARTERS))
    require_columns(indicator, by + ["year", "quarter", "value"], "indicator")
    require_columns(benchmarks, by + ["year", "value"], "benchmarks")
    if indicator[by].isna().any(axis=None) or benchmarks[by].isna().any(axis=None):
        raise InputError([Problem(reason=f"missing values in the key column(s) {', '.join(by)}")])
    ind, sid, year, quarter, t, new, step = sorted_quarters(indicator, by, "indicator", "the indicator's")
    n = len(ind)
    problems: list[Problem] = []
    if "period" not in ind.columns:
        ind["period"] = period_label(year, quarter).to_numpy()
    starts = np.flatnonzero(new)
    lengths = np.diff(np.r_[starts, n])
    keys = ind.loc[starts, by].reset_index(drop=True)
    t0, t1 = t[starts], t[starts + lengths - 1]

    bm = benchmarks[by + ["year", "value"]].reset_index(drop=True)
    bm["year"] = bm["year"].astype("int64")
    bm["value"] = bm["value"].astype("float64")
    found = pd.MultiIndex.from_frame(keys).get_indexer(pd.MultiIndex.from_frame(bm[by]))
    w = np.asarray(YEAR_FROM_QUARTERS[year_from_quarters])
    nz = np.flatnonzero(w)
    orphan = found < 0
    s = np.where(orphan, 0, found)
    y = bm["year"].to_numpy()
    covered = ~orphan & (4 * y + nz[0] >= t0[s]) & (4 * y + nz[-1] <= t1[s])
    twice = pd.DataFrame({"s": found, "y": y}).duplicated().to_numpy() & ~orphan
    for mask, reason in (
        (orphan, "benchmark for a series that has no indicator rows"),
        (~orphan & ~covered, f"benchmark year lacks quarters in the indicator ({year_from_quarters} of quarters)"),
        (twice, "benchmark given twice"),
        (~np.isfinite(bm["value"].to_numpy()), "benchmark value is missing or not finite"),
    ):
        rows = np.flatnonzero(mask)
        problems += [series_problem(k, str(y[r]), reason) for k, r in zip(_key_dicts(bm, by, rows), rows, strict=True)]
    unbenchmarked = np.setdiff1d(np.arange(len(keys)), s[~orphan])
    problems += [series_problem(k, "", "no benchmark for this series")
                 for k in _key_dicts(keys, by, unbenchmarked)]
    if problems:
        raise InputError(problems)
    bm = bm.take(np.lexsort((y, s))).reset_index(drop=True)
    bm["sid"] = np.sort(s, kind="stable") if len(s) else s
    bs, yb = bm["sid"].to_numpy(), bm["year"].to_numpy()
    base = starts[bs] + 4 * yb - t0[bs]  # position of the year's first quarter (may lie outside)
    rows = np.repeat(np.arange(len(bm)), len(nz))
    cols = (base[:, None] + nz[None, :]).ravel()
    agg = sp.csr_matrix((np.tile(w[nz], len(bm)), (rows, cols)), shape=(len(bm), n))
    benchmarked = np.zeros(n, bool)
    for k in range(4):  # mark the quarters of every benchmark year that the series has
        pos = base + k
        inside = (4 * yb + k >= t0[bs]) & (4 * yb + k <= t1[bs])
        benchmarked[pos[inside]] = True
    return _Panel(ind, by, keys, sid, lengths, bm, agg, benchmarked)


def _series_scale(values: np.ndarray, sid: np.ndarray, nseries: int) -> np.ndarray:
    """Mean absolute value of each series (1 where the series is all zero)."""
    scale = np.bincount(sid, weights=np.abs(values), minlength=nseries) / np.bincount(sid, minlength=nseries)
    return np.where(scale > 0, scale, 1.0)


def _output(panel: _Panel, value: np.ndarray, **extra: np.ndarray) -> pd.DataFrame:
    out = panel.frame.rename(columns={"value": "indicator"})
    out["value"] = value
    for name, col in extra.items():
        out[name] = col
    out["benchmarked"] = panel.benchmarked
    return out


# ----------------------------------------------------------------------------- Denton
def denton(indicator: pd.DataFrame, benchmarks: pd.DataFrame, *, method: str = "proportional",
           year_from_quarters: str = "total", on_nonpositive: str = "error",
           by: str | Sequence[str] = "series") -> pd.DataFrame:
    """Benchmark quarterly indicator series to annual values by the modified Denton method.

    Parameters
    ----------
    indicator
        Long frame: key columns ``by``, ``year``, ``quarter`` (1..4), ``value``; other columns
        are carried to the output. Each series' quarters consecutive.
    benchmarks
        Long frame: key columns ``by``, ``year``, ``value`` (the annual value). Years may be
        missing in the middle or at either end of a series; every series needs at least one.
    method
        ``"proportional"`` (first differences of the benchmarked-to-indicator ratio) or
        ``"additive"`` (first differences of benchmarked minus indicator).
    year_from_quarters
        How quarters aggregate to the annual value: ``"total"``, ``"mean"``, ``"q4"``,
        ``"q1"``.
    on_nonpositive
        Proportional method only, for a series with a zero or negative indicator value:
        ``"error"`` raises `InputError` naming each such series and period; ``"additive"``
        benchmarks those series (whole series) by the additive method.
    by
        The column(s) that identify a series.

    Returns
    -------
    DataFrame
        The indicator rows sorted by series and period, with ``indicator`` (the input value),
        ``value`` (benchmarked), ``method`` (method used for the series), ``benchmarked``
        (whether the quarter's year has a benchmark; False: extrapolated or interpolated),
        and ``period`` (``YYYY-Qn``) if the input lacked it.

    Raises
    ------
    InputError
        Missing or duplicated quarters and benchmarks, gaps, non-finite values, a benchmark year
        not covered by the indicator, a series with no benchmark, a non-positive indicator value
        under the proportional method with ``on_nonpositive="error"``.
    ConfigError
        An unknown ``method``, ``year_from_quarters`` or ``on_nonpositive``.

    Notes
    -----
    Proportional (PFD), with I the indicator, X the result and r = X / I the
    benchmark-to-indicator (BI) ratio::

        min_X  sum_{t=2..T} (X_t / I_t - X_{t-1} / I_{t-1})^2   s.t.  sum_q w_q X_{q,y} = A_y

    for every benchmark year y (w from ``year_from_quarters``). Additive (AFD): the same objective in
    X - I. Denton's original form fixes X_0 = I_0, which causes a start-up transient; the
    Cholette modification drops that condition, so the objective starts at t = 2. The KKT
    system [[D'D, M'], [M, 0]] [w; l] = [0; A - J I] (D the first-difference matrix, J the
    aggregation matrix, M = J diag(I) for PFD, M = J for AFD, X = I + I w resp. I + w) is
    solved with one sparse LU factorisation for the whole panel, block-diagonal over series.

    Extrapolation: the optimum keeps r (PFD) or X - I (AFD) flat after the last benchmark year
    at its value in the last benchmarked quarter, and before the first benchmark year at its
    value in the first benchmarked quarter (the unconstrained ends add nothing to the
    objective only when flat). A benchmark year missing in the middle is bridged linearly in
    r (resp. X - I). Properties: the annual constraints hold exactly; an indicator
    proportional to the benchmarks is returned pro rata; scaling the indicator changes nothing.

    References
    ----------
    Denton, F.T. (1971), "Adjustment of monthly or quarterly series to annual totals: an
    approach based on quadratic minimization", JASA 66(333). Cholette, P.A. (1984), "Adjusting
    sub-annual series to yearly benchmarks", Survey Methodology 10. IMF, Quarterly National
    Accounts Manual, 2017 Edition, ch. 6 "Benchmarking and Reconciliation". Marini, M. and
    Di Fonzo, T. (2012), IMF WP/12/169. Project notes: docs/methods.md section 7.1.
    """
    check_choice("method", method, DENTON_METHODS)
    check_choice("on_nonpositive", on_nonpositive, ON_NONPOSITIVE)
    by = key_columns(by)
    panel = _arrange(indicator, benchmarks, by, year_from_quarters)
    x = panel.values
    nseries = len(panel.keys)
    additive = np.full(nseries, method == "additive")
    if method == "proportional":
        bad = x <= 0
        if bad.any() and on_nonpositive == "error":
            rows = np.flatnonzero(bad)
            periods = panel.frame["period"].to_numpy()
            raise InputError([
                series_problem(k, str(periods[r]), f"indicator value {x[r]:g} is zero or negative: the "
                               "proportional method needs positive values (or on_nonpositive='additive')")
                for k, r in zip(_key_dicts(panel.frame, by, rows), rows, strict=True)])
        additive[np.unique(panel.sid[bad])] = True
    series_scale = _series_scale(x, panel.sid, nseries)
    scale = series_scale[panel.sid]
    elem_add = additive[panel.sid]
    # X = I + g w; g = I (proportional: w = r - 1) or the series scale (additive). The rows
    # are divided by the series scale, so the matrix is well scaled whatever the units.
    g = np.where(elem_add, scale, x)
    cons = panel.agg @ sp.diags(g / scale)
    rhs = (panel.bench["value"].to_numpy() - panel.agg @ x) / series_scale[panel.bench["sid"].to_numpy()]
    w = solve_kkt(difference_gram(panel.lengths), cons, rhs, banded=True)
    return _output(panel, x + g * w, method=np.where(elem_add, "additive", "proportional"))


# ----------------------------------------------------------------------------- Chow-Lin
@dataclass(frozen=True)
class _AnnualLayout:
    """Benchmark years of every series, padded to a common width (fixed during the rho search).

    ``index`` maps each cell of the (S, n, n) annual covariance to a slot of a per-series
    table: slot d = 0..dmax holds the covariance of two benchmarks d years apart, slot
    dmax + 1 a one and dmax + 2 a zero (the identity given to padding slots).
    """

    index: np.ndarray  # (S, n, n) flat index into the (S, dmax + 3) table
    dmax: int
    w: np.ndarray  # quarter weights
    xa: np.ndarray  # (S, n, k) annual regressors
    ya: np.ndarray  # (S, n) annual values
    nobs: np.ndarray  # (S,) benchmarks per series

    @classmethod
    def build(cls, years, valid, w, xa, ya, nobs) -> _AnnualLayout:
        pair = valid[:, :, None] & valid[:, None, :]
        gap = np.where(pair, np.abs(years[:, :, None] - years[:, None, :]), 0).astype("int64")
        dmax = int(gap.max())
        eye = np.eye(years.shape[1], dtype=bool)[None]
        slot = np.where(pair, gap, np.where(eye, dmax + 1, dmax + 2))
        index = slot + (dmax + 3) * np.arange(len(nobs))[:, None, None]
        return cls(index, dmax, w, xa, ya, nobs)


def _annual_cov(rho: np.ndarray, lay: _AnnualLayout) -> np.ndarray:
    """Covariances of the annual aggregates of a unit AR(1), one matrix per series.

    For benchmark years a < b (d = b - a >= 1) and quarter offsets i, j in 0..3 the lag is
    4d + j - i, so cov = rho^(4d-3) (sum_i w_i rho^(3-i)) (sum_j w_j rho^j) / (1 - rho^2);
    the variance is sum_ij w_i w_j rho^|i-j| / (1 - rho^2).
    """
    w, i = lay.w, np.arange(4)
    lag = np.abs(i[:, None] - i[None, :])
    var = (np.outer(w, w)[None] * rho[:, None, None] ** lag[None]).sum(axis=(1, 2))
    g = (w * rho[:, None] ** (3 - i)).sum(1) * (w * rho[:, None] ** i).sum(1)
    table = np.empty((len(rho), lay.dmax + 3))
    table[:, : lay.dmax + 1] = g[:, None] * rho[:, None] ** np.maximum(4 * np.arange(lay.dmax + 1) - 3, 0)
    table[:, 0] = var
    table[:, : lay.dmax + 1] /= (1.0 - rho**2)[:, None]
    table[:, lay.dmax + 1], table[:, lay.dmax + 2] = 1.0, 0.0
    return table.ravel()[lay.index]


def _profile(rho: np.ndarray, lay: _AnnualLayout) -> tuple[np.ndarray, np.ndarray]:
    """Concentrated log-likelihood and GLS beta of each series at its rho."""
    cov = _annual_cov(rho, lay)
    k = lay.xa.shape[2]
    b = np.concatenate([lay.xa, lay.ya[:, :, None]], axis=2)
    gram = np.einsum("snk,snl->skl", b, np.linalg.solve(cov, b))
    beta = np.linalg.solve(gram[:, :k, :k], gram[:, :k, k:])[:, :, 0]
    ssr = np.maximum(gram[:, k, k] - np.einsum("sk,sk->s", gram[:, k, :k], beta), 1e-300)
    logdet = 2.0 * np.log(np.diagonal(np.linalg.cholesky(cov), axis1=1, axis2=2)).sum(axis=1)
    n = lay.nobs
    return -0.5 * n * (np.log(2 * np.pi) + 1.0 + np.log(ssr / n)) - 0.5 * logdet, beta


def _estimate_rho(lay: _AnnualLayout, lo: float, hi: float, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Maximum-likelihood rho of every series: a common grid, then golden sections, all at once."""
    nseries = len(lay.nobs)
    grid = np.unique(np.r_[np.arange(lo, hi, step), hi])
    ll_grid = np.stack([_profile(np.full(nseries, g), lay)[0] for g in grid])
    best = np.argmax(ll_grid, axis=0)
    a, b = grid[np.maximum(best - 1, 0)], grid[np.minimum(best + 1, len(grid) - 1)]
    phi = (np.sqrt(5.0) - 1.0) / 2.0
    c, d = b - phi * (b - a), a + phi * (b - a)
    fc, fd = _profile(c, lay)[0], _profile(d, lay)[0]
    for _ in range(32):  # bracket width 2 step phi^32, about 1e-7 step
        left = fc >= fd
        a, b = np.where(left, a, c), np.where(left, d, b)
        c_new, d_new = b - phi * (b - a), a + phi * (b - a)
        fp = _profile(np.where(left, c_new, d_new), lay)[0]
        c, d = np.where(left, c_new, d), np.where(left, c, d_new)
        fc, fd = np.where(left, fp, fd), np.where(left, fc, fp)
    refined = (a + b) / 2.0
    better = _profile(refined, lay)[0] >= ll_grid[best, np.arange(nseries)]
    rhos = np.where(better, refined, grid[best])
    return rhos, (rhos - lo <= 1e-6) | (hi - rhos <= 1e-6)


def chow_lin(indicator: pd.DataFrame, benchmarks: pd.DataFrame, *, rho: float | None = None,
             year_from_quarters: str = "total", constant: bool = True, by: str | Sequence[str] = "series",
             rho_bounds: tuple[float, float] = (-0.99, 0.99), grid_step: float = 0.05,
             held: pd.DataFrame | None = None) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Chow-Lin temporal disaggregation: regression on the indicator with AR(1) errors.

    Parameters
    ----------
    indicator, benchmarks, year_from_quarters, by
        As for `denton`; the indicator's ``value`` is the regressor.
    rho
        Fixed autoregressive coefficient (-1 < rho < 1) for every series, or None to estimate
        each series' rho by maximum likelihood within ``rho_bounds``.
    constant
        Whether the regression has a constant.
    rho_bounds
        Search interval for rho (common practice: a little inside (-1, 1)).
    grid_step
        Step of the grid that brackets the maximum before a golden-section refinement.
    held
        Optional annual values (columns as ``benchmarks``, other years) that the result must
        also meet but that are not observations of the regression: beta and rho come from
        ``benchmarks`` alone. The pipeline passes the years before the first benchmark that
        keep the total of their own quarters (the join to quarters that do not move); taking
        them as observations would regress the benchmarks on the indicator's own sums.

    Returns
    -------
    (DataFrame, DataFrame)
        The disaggregated panel (columns as `denton`, with ``regression`` = X beta instead of
        ``method``), and one row per series with the key columns, ``rho``, ``rho_at_bound``
        (the estimate sits on a bound of ``rho_bounds``), ``rho_estimated``, ``beta_constant``
        (NaN without a constant), ``beta_indicator``, ``loglik`` (at the reported rho) and
        ``n_years`` (benchmarks used).

    Raises
    ------
    InputError
        As `denton` (``held`` rows checked as benchmarks, a year in both refused as given
        twice); too few benchmarks for the regression (estimating rho needs more years than
        coefficients); regressors collinear over the benchmark years.
    ConfigError
        ``rho`` or ``rho_bounds`` outside (-1, 1), or an unknown ``year_from_quarters``.

    Notes
    -----
    Quarterly model y = X beta + u, u AR(1) with Sigma_ij = rho^|i-j| / (1 - rho^2); annual
    y_a = C y, V_a = C Sigma C'. GLS: beta = (X'C'V_a^-1 C X)^-1 X'C'V_a^-1 y_a and
    y_hat = X beta + Sigma C' V_a^-1 (y_a - C X beta). The second term is computed as the
    solution of min u'Sigma^-1 u s.t. C u = y_a - C X beta, with Sigma^-1 tridiagonal, in one
    sparse solve for the whole panel. The annual constraints hold exactly. Concentrated
    log-likelihood maximised over rho: -(N/2)(ln 2 pi + 1 + ln(u_a'V_a^-1 u_a / N))
    - (1/2) ln|V_a|, N the number of benchmark years. Quarters outside the benchmark years
    get X beta plus the residual carried by the AR(1) correlation (decaying as rho^k). At
    rho = 0 (flows), y_hat is the OLS fit on annual data plus each year's residual spread
    evenly over its quarters. Past the last constrained quarter T the residual is
    u_{T+k} = rho^k u_T (each column of Sigma C' there is rho^k times its row T), so the
    result is X beta plus a residual decaying geometrically. With ``held`` years, C stacks
    the benchmark and the held rows in the residual solve (u then also meets the held
    totals), while beta and the likelihood use the benchmark rows only.

    References
    ----------
    Chow, G.C. and Lin, A. (1971), "Best linear unbiased interpolation, distribution and
    extrapolation of time series by related series", REStat 53(4). IMF, Quarterly National
    Accounts Manual, 2017 Edition, ch. 6. ESS guidelines on temporal disaggregation,
    benchmarking and reconciliation (2018). Project notes: docs/methods.md section 7.2.
    """
    lo, hi = (float(b) for b in rho_bounds)
    if not -1.0 < lo < hi < 1.0:
        raise ConfigError(f"rho_bounds must satisfy -1 < low < high < 1, not {rho_bounds!r}")
    if rho is not None and not -1.0 < float(rho) < 1.0:
        raise ConfigError(f"rho must lie strictly between -1 and 1, not {rho!r}")
    by = key_columns(by)
    if held is not None:
        require_columns(held, by + ["year", "value"], "held")
    both = benchmarks if held is None or held.empty else pd.concat(
        [benchmarks[by + ["year", "value"]], held[by + ["year", "value"]]], ignore_index=True)
    panel = _arrange(indicator, both, by, year_from_quarters)
    x = panel.values
    nseries = len(panel.keys)
    regressors = np.column_stack([np.ones_like(x), x]) if constant else x[:, None]
    k = regressors.shape[1]
    agg_x_all = panel.agg @ regressors  # constraint rows x k
    obs = np.ones(len(panel.bench), bool)  # rows that are observations of the regression
    if both is not benchmarks:
        held_key = pd.MultiIndex.from_frame(held[by].assign(year=held["year"].astype("int64")))
        obs = ~pd.MultiIndex.from_frame(panel.bench[by + ["year"]]).isin(held_key)
    bsid_all = panel.bench["sid"].to_numpy()
    bsid, agg_x = bsid_all[obs], agg_x_all[obs]
    nobs = np.bincount(bsid, minlength=nseries)
    need = k + (1 if rho is None else 0)
    problems = [series_problem(kd, "", f"{n} benchmark year(s): Chow-Lin needs at least {need}")
                for kd, n in zip(panel.keys.to_dict("records"), nobs, strict=True) if n < need]
    if problems:
        raise InputError(problems)
    slot = np.arange(len(bsid)) - np.searchsorted(bsid, bsid)  # rank of the benchmark within its series
    width = int(nobs.max())
    valid = np.zeros((nseries, width), bool)
    valid[bsid, slot] = True
    years = np.zeros((nseries, width))
    years[bsid, slot] = panel.bench["year"].to_numpy()[obs]
    ya = np.zeros((nseries, width))
    ya[bsid, slot] = panel.bench["value"].to_numpy()[obs]
    xa = np.zeros((nseries, width, k))
    xa[bsid, slot] = agg_x
    rank = np.linalg.matrix_rank(xa)
    problems = [series_problem(kd, "", "regressors collinear over the benchmark years (an indicator "
                               "constant in annual terms with constant=True?)")
                for kd, r in zip(panel.keys.to_dict("records"), rank, strict=True) if r < k]
    if problems:
        raise InputError(problems)
    lay = _AnnualLayout.build(years, valid, np.asarray(YEAR_FROM_QUARTERS[year_from_quarters]), xa, ya, nobs)
    if rho is None:
        rhos, at_bound = _estimate_rho(lay, lo, hi, grid_step)
    else:
        rhos, at_bound = np.full(nseries, float(rho)), np.zeros(nseries, bool)
    loglik, beta = _profile(rhos, lay)
    fit = (regressors * beta[panel.sid]).sum(axis=1)
    resid_a = panel.bench["value"].to_numpy() - (agg_x_all * beta[bsid_all]).sum(axis=1)
    u = solve_kkt(ar1_precision(panel.lengths, rhos[panel.sid]), panel.agg, resid_a, banded=True)
    out = _output(panel, fit + u, regression=fit)
    params = panel.keys.copy()
    params["rho"] = rhos
    params["rho_at_bound"] = at_bound
    params["rho_estimated"] = rho is None
    params["beta_constant"] = beta[:, 0] if constant else np.nan
    params["beta_indicator"] = beta[:, -1]
    params["loglik"] = loglik
    params["n_years"] = nobs
    return out, params
