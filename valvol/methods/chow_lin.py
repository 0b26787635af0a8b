"""Chow-Lin temporal disaggregation: regression on an indicator with AR(1) errors.

Vectorised over a whole panel of series: the quarterly series is the indicator's fitted
regression (on the indicator and a constant) plus AR(1) errors distributed so that the annual
values are met exactly; rho is estimated by maximum likelihood on the annual values (one grid
search for every series at once, then a bounded refinement) or fixed. Input frames as in
`valvol.methods.benchmark`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from valvol.errors import ConfigError, InputError
from valvol.methods.series_panel import (
    YEAR_FROM_QUARTERS,
    arrange,
    key_columns,
    panel_output,
    require_columns,
    series_problem,
)
from valvol.methods.sparse_systems import ar1_precision, solve_kkt

PARAM_COLUMNS = ["rho", "rho_at_bound", "rho_estimated", "beta_constant", "beta_indicator", "loglik",
                 "n_years"]


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
    panel = arrange(indicator, both, by, year_from_quarters)
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
    out = panel_output(panel, fit + u, regression=fit)
    params = panel.keys.copy()
    params["rho"] = rhos
    params["rho_at_bound"] = at_bound
    params["rho_estimated"] = rho is None
    params["beta_constant"] = beta[:, 0] if constant else np.nan
    params["beta_indicator"] = beta[:, -1]
    params["loglik"] = loglik
    params["n_years"] = nobs
    return out, params
