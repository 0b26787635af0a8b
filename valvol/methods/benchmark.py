"""Benchmarking quarterly series to annual values: the modified Denton method.

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

from collections.abc import Sequence

import numpy as np
import pandas as pd
import scipy.sparse as sp

from valvol.errors import InputError
from valvol.methods.series_panel import (
    YEAR_FROM_QUARTERS,
    arrange,
    check_choice,
    key_columns,
    key_dicts,
    panel_output,
    series_problem,
    series_scale_of,
)
from valvol.methods.sparse_systems import difference_gram, solve_kkt

__all__ = ["DENTON_METHODS", "ON_NONPOSITIVE", "YEAR_FROM_QUARTERS", "denton"]

DENTON_METHODS = ("proportional", "additive")
ON_NONPOSITIVE = ("error", "additive")


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
    panel = arrange(indicator, benchmarks, by, year_from_quarters)
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
                for k, r in zip(key_dicts(panel.frame, by, rows), rows, strict=True)])
        additive[np.unique(panel.sid[bad])] = True
    series_scale = series_scale_of(x, panel.sid, nseries)
    scale = series_scale[panel.sid]
    elem_add = additive[panel.sid]
    # X = I + g w; g = I (proportional: w = r - 1) or the series scale (additive). The rows
    # are divided by the series scale, so the matrix is well scaled whatever the units.
    g = np.where(elem_add, scale, x)
    cons = panel.agg @ sp.diags(g / scale)
    rhs = (panel.bench["value"].to_numpy() - panel.agg @ x) / series_scale[panel.bench["sid"].to_numpy()]
    w = solve_kkt(difference_gram(panel.lengths), cons, rhs, banded=True)
    return panel_output(panel, x + g * w, method=np.where(elem_add, "additive", "proportional"))
