"""Multivariate reconciliation of quarterly components with annual benchmarks and a quarterly total.

A *system* is a set of quarterly component series x_i with signs s_i (+1, or -1 for imports), an
annual benchmark A_{i,y} for each component and year, and a quarterly aggregate T_q (for example
GDP at current prices), optionally with a fixed statistical discrepancy d_q. Reconciliation
moves the components as little as possible, in the sense of the chosen objective, so that

* every component matches its annual benchmarks (temporal constraints), and
* every quarter, sum_i s_i x_{i,q} + d_q = T_q (the quarterly identity, contemporaneous
  constraints).

Series listed in ``fixed`` do not move. Several independent systems (one per economy and price
basis, say) are solved in one sparse system when ``by`` names the columns that identify a
system. Input frames are long:

* ``components``: ``by``, ``series``, ``year``, ``quarter``, ``value``; every series of a system
  covers the same consecutive quarters;
* ``total`` and ``discrepancy``: ``by``, ``year``, ``quarter``, ``value``; quarters without a
  total get no identity constraint;
* ``annual``: ``by``, ``series``, ``year``, ``value``; years without a benchmark (the latest
  quarters, typically) are extrapolated by the objective.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp

from valvol.errors import ConfigError, InputError, Problem
from valvol.frames import period_label
from valvol.methods.benchmark import ON_NONPOSITIVE
from valvol.methods.series_panel import (
    YEAR_FROM_QUARTERS,
    check_choice,
    key_columns,
    require_columns,
    series_codes,
    series_problem,
    sorted_quarters,
)
from valvol.methods.sparse_systems import difference_gram, solve_kkt

RECONCILE_METHODS = ("proportional_denton", "wls")
REPORT_COLUMNS = ["series", "period", "year", "quarter", "before", "after", "adjustment", "adjustment_pct",
                  "adjustment_annual", "adjustment_identity", "constraint", "growth_before_pct",
                  "growth_after_pct"]
RESIDUAL_COLUMNS = ["period", "year", "quarter", "total", "discrepancy", "sum_before", "sum_after",
                    "residual_before", "residual_after"]
ANNUAL_COLUMNS = ["series", "year", "benchmark", "fixed", "sum_before", "sum_after", "residual_before",
                  "residual_after"]


@dataclass(frozen=True)
class ReconcileResult:
    """Outcome of `reconcile` (``by`` columns lead every frame).

    Attributes
    ----------
    components
        The component rows, sorted by system, series and period, ``value`` reconciled (other
        input columns kept, ``period`` added if lacking): the input format, ready to use again.
    report
        One row per component and quarter: `REPORT_COLUMNS`.
    residuals
        One row per quarter with a total: `RESIDUAL_COLUMNS`; residual = total - (signed sum
        of the components + discrepancy), before and after.
    annual_residuals
        One row per annual benchmark: `ANNUAL_COLUMNS`; residual = benchmark - aggregate of
        the quarters, before and after.
    """

    components: pd.DataFrame
    report: pd.DataFrame
    residuals: pd.DataFrame
    annual_residuals: pd.DataFrame


@dataclass(frozen=True)
class _Layout:
    frame: pd.DataFrame  # component rows sorted by (system, series, year, quarter)
    sid: np.ndarray  # series of each element
    qid: np.ndarray  # global quarter of each element
    series: pd.DataFrame  # by + series, sys, start, t0 (one row per series)
    systems: pd.DataFrame  # by (one row per system)
    quarters: pd.DataFrame  # by + year, quarter, period, sys (one row per global quarter)
    t0: np.ndarray  # first quarter (year * 4 + quarter - 1) of each system
    qoff: np.ndarray  # first global quarter of each system
    nq: np.ndarray  # quarters per system


def _arrange(components: pd.DataFrame, by: list[str]) -> _Layout:
    key = by + ["series"]
    frame, sid, year, quarter, t, new, step = sorted_quarters(components, key, "component", "a component's")
    n = len(frame)
    if "period" not in frame.columns:
        frame["period"] = period_label(year, quarter).to_numpy()
    starts = np.flatnonzero(new)
    ends = np.r_[starts[1:], n] - 1
    series = frame.loc[starts, key].reset_index(drop=True)
    sys_s = series_codes(series, by) if by else np.zeros(len(series), "int64")
    nsys = int(sys_s.max()) + 1
    t0 = np.full(nsys, np.iinfo("int64").max)
    t1 = np.full(nsys, np.iinfo("int64").min)
    np.minimum.at(t0, sys_s, t[starts])
    np.maximum.at(t1, sys_s, t[ends])
    odd = np.flatnonzero((t[starts] != t0[sys_s]) | (t[ends] != t1[sys_s]))
    if len(odd):
        raise InputError([
            series_problem(k, "", f"covers {t[starts[s]] // 4}-Q{t[starts[s]] % 4 + 1}.."
                           f"{t[ends[s]] // 4}-Q{t[ends[s]] % 4 + 1}, not the system's "
                           f"{t0[sys_s[s]] // 4}-Q{t0[sys_s[s]] % 4 + 1}..{t1[sys_s[s]] // 4}-Q{t1[sys_s[s]] % 4 + 1}")
            for k, s in zip(series.iloc[odd].to_dict("records"), odd, strict=True)])
    series["sys"], series["start"], series["t0"] = sys_s, starts, t[starts]
    first_of_sys = np.unique(sys_s, return_index=True)[1]
    systems = series.loc[first_of_sys, by].reset_index(drop=True)
    nq = t1 - t0 + 1
    qoff = np.r_[0, np.cumsum(nq)[:-1]]
    sys_q = np.repeat(np.arange(nsys), nq)
    tq = t0[sys_q] + np.arange(int(nq.sum())) - qoff[sys_q]
    quarters = systems.take(sys_q).reset_index(drop=True)
    quarters["year"], quarters["quarter"] = tq // 4, tq % 4 + 1
    quarters["period"] = period_label(tq // 4, tq % 4 + 1).to_numpy()
    quarters["sys"] = sys_q
    sys_e = sys_s[sid]
    return _Layout(frame, sid, qoff[sys_e] + t - t0[sys_e], series, systems, quarters, t0, qoff, nq)


def _system_index(lay: _Layout, df: pd.DataFrame, by: list[str]) -> np.ndarray:
    if not by:
        return np.zeros(len(df), "int64")
    return pd.MultiIndex.from_frame(lay.systems).get_indexer(pd.MultiIndex.from_frame(df[by]))


def _on_quarters(lay: _Layout, df: pd.DataFrame, by: list[str], what: str) -> tuple[np.ndarray, np.ndarray]:
    """Global quarter and value of each row of a quarterly frame (total or discrepancy)."""
    require_columns(df, by + ["year", "quarter", "value"], what)
    s = _system_index(lay, df, by)
    y, q = df["year"].to_numpy(dtype="int64"), df["quarter"].to_numpy(dtype="int64")
    v = df["value"].to_numpy(dtype="float64")
    ss = np.where(s < 0, 0, s)
    qi = y * 4 + q - 1 - lay.t0[ss]
    inside = (s >= 0) & (q >= 1) & (q <= 4) & (qi >= 0) & (qi < lay.nq[ss])
    qid = np.where(inside, lay.qoff[ss] + qi, -1)
    twice = pd.Series(qid).duplicated().to_numpy() & inside
    problems = []
    for mask, reason in ((~inside, f"{what} for a quarter outside the components' quarters"),
                         (twice, f"{what} given twice"),
                         (~np.isfinite(v), f"{what} value is missing or not finite")):
        for r in np.flatnonzero(mask):
            k = {c: df[c].iloc[r] for c in by} | {"series": what}
            problems.append(series_problem(k, f"{y[r]}-Q{q[r]}", reason))
    if problems:
        raise InputError(problems)
    return qid, v


def _nonpositive_error(lay: _Layout, z: np.ndarray, bad: np.ndarray) -> InputError:
    rows = np.flatnonzero(bad)
    keys = lay.frame.iloc[rows][list(lay.systems.columns) + ["series"]].to_dict("records")
    periods = lay.frame["period"].to_numpy()
    return InputError([
        series_problem(k, str(periods[r]), f"value {z[r]:g} is zero or negative: proportional "
                       "reconciliation needs positive values (or on_nonpositive='additive')")
        for k, r in zip(keys, rows, strict=True)])


def reconcile(components: pd.DataFrame, signs: Mapping[str, int], total: pd.DataFrame, annual: pd.DataFrame,
              *, fixed: Iterable[str] = (), discrepancy: pd.DataFrame | None = None,
              method: str = "proportional_denton", year_from_quarters: str = "total", on_nonpositive: str = "additive",
              tolerance: float = 1e-6, by: str | Sequence[str] = (), total_item: str = "total",
              additive: Iterable[str] = ()) -> ReconcileResult:
    """Make quarterly components match their annual benchmarks and add up to the total each quarter.

    Parameters
    ----------
    components, total, annual, discrepancy
        Long frames as described in the module docstring. ``discrepancy`` (optional) is a
        fixed series added to the signed sum; it must cover every quarter with a total.
    signs
        Component series -> +1 or -1 in the identity.
    fixed
        Component series that must not move; their quarters move into the right-hand side (a
        benchmark given for one must already be met).
    method
        ``"proportional_denton"`` (multivariate proportional first-difference Denton) or
        ``"wls"`` (weighted least squares, V = diag(x^2)).
    year_from_quarters
        How quarters aggregate to the annual benchmarks and to the annual total: ``"total"``,
        ``"mean"``, ``"q4"``, ``"q1"`` (as in `valvol.methods.benchmark.denton`).
    additive
        Component series whose first differences are preserved instead of their movements in
        proportion (proportional Denton only), whatever their sign: items that change sign,
        such as inventories and valuables, whose proportional changes are meaningless
        (docs/methods.md §2.4); other series switch to it when ``on_nonpositive`` says so.
    on_nonpositive
        Proportional Denton only, for a movable component with a zero or negative value
        (inventories, valuables): ``"additive"`` (default) preserves its first differences
        instead, measured relative to its mean absolute value; ``"error"`` raises.
    tolerance
        Relative tolerance of the consistency checks: a year's gap may be at most
        ``tolerance * max(1, aggregate of |T_q| over the year)``; a benchmark of a fixed series,
        or an identity with no movable component, ``tolerance * max(1, |value|)``.
    by
        Columns identifying independent systems (present in every frame); () for one system.
    total_item
        Name of the total in messages (e.g. ``"B1GQ"``).

    Returns
    -------
    ReconcileResult
        Reconciled components, the change report, the identity residuals per quarter and the
        annual residuals per benchmark.

    Raises
    ------
    InputError
        Inconsistent constraints (per system and year, the signed annual benchmarks plus the
        fixed series and the discrepancy differ from the aggregated total: the problem names
        the year and gives both sides and the gap); a fixed series off its benchmark; an
        identity with no movable component that does not hold; components with missing,
        duplicated or non-consecutive quarters, or not covering the system's quarters;
        benchmarks or totals outside the components' quarters; non-positive values under
        ``on_nonpositive="error"``; a singular system.
    ConfigError
        A component without a sign, a sign other than +-1, an unknown fixed series, an unknown
        option.

    Notes
    -----
    With z the components before and x after, H stacking the temporal rows (aggregation of
    each movable series' quarters in each benchmark year) and the contemporaneous rows (signed
    sum of the movable components in each quarter), and h the benchmarks and the totals net of
    the fixed series and the discrepancy, the methods solve::

        proportional_denton:  min sum_i sum_t (x_it / z_it - x_i,t-1 / z_i,t-1)^2  s.t. H x = h
        wls:                  min sum_i sum_t ((x_it - z_it) / z_it)^2            s.t. H x = h

    the latter being x = z + V H'(H V H')^-1 (h - H z) with V = diag(z^2) (a zero value does
    not move). Both are solved as one sparse KKT system in w, x = z + c w (c = z; for additive
    components c is the component's mean absolute value).

    Consistency and the redundant row: when every movable series of a system has a benchmark
    in year y and the total covers that year, sum_i s_i (temporal row i, y) equals the
    aggregated identity rows of the year, so the rows are dependent and the right-hand sides
    must agree: sum_i s_i A_iy + (fixed series and discrepancy, aggregated) =
    aggregate of T_q over y. This is checked first; an inconsistent system is refused. Then
    one row per such year is dropped: the benchmark of the movable series with the largest
    |A_iy|. The quarterly identities therefore hold to rounding; a gap within the tolerance
    shows up in that series' annual residual (``annual_residuals``). A year in which some
    movable series has no benchmark (past the last one, typically) is not fully benchmarked:
    nothing is checked or dropped for it, the series adds no temporal row for it, and its
    quarters are bound only by the quarterly identities, the objective carrying each
    series' movement on from its benchmarked quarters (when each series benchmarked on its
    own already meets the identities, that is the result, so a proportional series keeps its
    last benchmark-to-indicator ratio). Pass only
    the years actually given: the sums of a year's own quarters as its benchmarks would hold
    the extrapolated quarters to the indicator's level (and, with a total, usually make the
    year inconsistent).

    Attribution (``constraint`` column): the adjustment splits exactly into
    ``adjustment_annual`` = (each movable series benchmarked on its own, same objective,
    annual rows only) - before, and ``adjustment_identity`` = after - that; the second sums
    to zero over every benchmark year, so it only redistributes within the year to meet the
    identities. ``constraint`` names the larger part in absolute value: ``"annual benchmark
    YYYY"`` (or ``"annual benchmarks (extrapolated)"`` in a year without a benchmark), else
    ``"quarterly identity YYYY-Qn"``; ``"fixed"`` for fixed series, ``"none"`` when nothing
    moved (below 1e-12 of the system's mean absolute value). Growth columns are
    quarter-on-quarter percent changes, NaN where the previous quarter is not positive.

    References
    ----------
    Stone, R., Champernowne, D.G. and Meade, J.E. (1942), "The precision of national income
    estimates", Review of Economic Studies 9(2). IMF, Quarterly National Accounts Manual, 2017
    Edition, ch. 6, §6.5.A (multivariate Denton) and §6.5.B (two-step). Di Fonzo, T. and
    Marini, M. (2011), JRSS-C. Daalmans, J. (2019), Tilburg University thesis. Project notes:
    docs/methods.md sections 7.1 and 7.3.
    """
    check_choice("method", method, RECONCILE_METHODS)
    check_choice("on_nonpositive", on_nonpositive, ON_NONPOSITIVE)
    check_choice("year_from_quarters", year_from_quarters, tuple(YEAR_FROM_QUARTERS))
    by = key_columns(by)
    key = by + ["series"]
    require_columns(components, key + ["year", "quarter", "value"], "components")
    require_columns(annual, key + ["year", "value"], "annual")
    lay = _arrange(components, by)
    ser, frame = lay.series, lay.frame
    names = ser["series"].astype(str)
    fixed = {fixed} if isinstance(fixed, str) else {str(f) for f in fixed}
    if missing := sorted(set(names) - {str(k) for k in signs}):
        raise ConfigError(f"no sign given for component(s) {', '.join(missing)}")
    if bad := sorted(str(k) for k, v in signs.items() if v not in (1, -1)):
        raise ConfigError(f"signs must be +1 or -1 (component(s) {', '.join(bad)})")
    if unknown := sorted(fixed - set(names)):
        raise ConfigError(f"fixed series {', '.join(unknown)} not among the components")
    sid, qid = lay.sid, lay.qid
    sys_e = ser["sys"].to_numpy()[sid]
    z = frame["value"].to_numpy(dtype="float64")
    n, nq, nsys = len(z), len(lay.quarters), len(lay.systems)
    sign_e = names.map({str(k): float(v) for k, v in signs.items()}).to_numpy()[sid]
    fixed_s = names.isin(fixed).to_numpy()
    free_e = ~fixed_s[sid]
    w = np.asarray(YEAR_FROM_QUARTERS[year_from_quarters])
    nz = np.flatnonzero(w)

    # quarterly total and discrepancy
    tq, tv = _on_quarters(lay, total, by, total_item)
    tot = np.full(nq, np.nan)
    tot[tq] = tv
    has_total = np.isfinite(tot)
    disc = np.zeros(nq)
    if discrepancy is not None:
        dq, dv = _on_quarters(lay, discrepancy, by, "discrepancy")
        disc[dq] = dv
        lacking = np.flatnonzero(has_total & ~np.isin(np.arange(nq), dq))
        if len(lacking):
            raise InputError([series_problem(lay.quarters.iloc[q][by].to_dict() | {"series": "discrepancy"},
                                             lay.quarters["period"].iloc[q], "no discrepancy for a quarter "
                                             "with a total") for q in lacking])

    # annual benchmarks
    a_sid = pd.MultiIndex.from_frame(ser[key]).get_indexer(pd.MultiIndex.from_frame(annual[key]))
    ay = annual["year"].to_numpy(dtype="int64")
    av = annual["value"].to_numpy(dtype="float64")
    ss = np.where(a_sid < 0, 0, a_sid)
    t0s = ser["t0"].to_numpy()[ss]
    t1s = t0s + lay.nq[ser["sys"].to_numpy()[ss]] - 1
    covered = (a_sid >= 0) & (4 * ay + nz[0] >= t0s) & (4 * ay + nz[-1] <= t1s)
    twice = pd.DataFrame({"s": a_sid, "y": ay}).duplicated().to_numpy() & (a_sid >= 0)
    problems = []
    for mask, reason in ((a_sid < 0, "annual benchmark for a series that is not a component"),
                         ((a_sid >= 0) & ~covered, "benchmark year lacks quarters in the components"),
                         (twice, "annual benchmark given twice"),
                         (~np.isfinite(av), "annual benchmark is missing or not finite")):
        problems += [series_problem(annual.iloc[r][key].to_dict(), str(ay[r]), reason) for r in np.flatnonzero(mask)]
    if problems:
        raise InputError(problems)
    order = np.lexsort((ay, a_sid))
    a_sid, ay, av = a_sid[order], ay[order], av[order]
    t0s_sorted = ser["t0"].to_numpy()[a_sid]
    base = ser["start"].to_numpy()[a_sid] + 4 * ay - t0s_sorted
    a_elems = base[:, None] + nz[None, :]  # (rows, quarters used)
    a_before = z[a_elems] @ w[nz]
    a_fixed = fixed_s[a_sid]
    off = np.abs(a_before - av) > tolerance * np.maximum(1.0, np.abs(av))
    if np.any(a_fixed & off):
        raise InputError([series_problem(ser.iloc[s][key].to_dict(), str(y), f"fixed series aggregates to "
                                         f"{b:.10g}, not its benchmark {a:.10g}: it cannot be held fixed")
                          for s, y, b, a in zip(a_sid[a_fixed & off], ay[a_fixed & off], a_before[a_fixed & off],
                                                av[a_fixed & off], strict=True)])

    # weights: x = z + c w on the movable elements (c scaled by the system's mean |z|)
    always = names.isin(set(additive)).to_numpy()
    nonpos = np.zeros(len(ser), bool)
    np.logical_or.at(nonpos, sid, (z <= 0) & free_e & ~always[sid])
    if method == "proportional_denton" and nonpos.any() and on_nonpositive == "error":
        raise _nonpositive_error(lay, z, (z <= 0) & free_e & ~always[sid])
    additive_e = (nonpos | always)[sid] if method == "proportional_denton" else np.zeros(n, bool)
    count = np.bincount(sid, minlength=len(ser))
    series_mean = np.bincount(sid, weights=np.abs(z), minlength=len(ser)) / count
    sys_scale = np.bincount(sys_e, weights=np.abs(z) * free_e, minlength=nsys) / np.maximum(
        np.bincount(sys_e, weights=free_e.astype(float), minlength=nsys), 1.0)
    sys_scale = np.where(sys_scale > 0, sys_scale, 1.0)
    series_mean = np.where(series_mean > 0, series_mean, sys_scale[ser["sys"].to_numpy()])
    c = np.where(additive_e, series_mean[sid], z) / sys_scale[sys_e]
    var = np.cumsum(free_e) - 1
    nv = int(free_e.sum())

    # temporal rows (movable series), then identity rows (quarters with a total)
    fr = np.flatnonzero(~a_fixed)
    t_cols = var[a_elems[fr]]
    t_vals = c[a_elems[fr]] * w[nz]
    t_rhs = av[fr] - a_before[fr]
    id_row = np.cumsum(has_total) - 1
    sum_before = np.bincount(qid, weights=sign_e * z, minlength=nq)
    id_rhs = (tot - disc - sum_before)[has_total]
    e_id = np.flatnonzero(free_e & has_total[qid])
    rows = np.r_[np.repeat(np.arange(len(fr)), len(nz)), len(fr) + id_row[qid[e_id]]]
    cols = np.r_[t_cols.ravel(), var[e_id]]
    vals = np.r_[t_vals.ravel(), sign_e[e_id] * c[e_id]]
    nrows = len(fr) + int(has_total.sum())
    cons = sp.csr_matrix((vals, (rows, cols)), shape=(nrows, nv))
    rhs = np.r_[t_rhs, id_rhs]
    row_scale = np.r_[np.maximum(1.0, np.abs(av[fr])), np.maximum(1.0, np.abs(tot[has_total]))]

    # rows without a movable coefficient must already hold
    empty = np.asarray(abs(cons).sum(axis=1)).ravel() == 0
    broken = empty & (np.abs(rhs) > tolerance * row_scale)
    if broken.any():
        qrow = np.flatnonzero(has_total)
        probs = []
        for r in np.flatnonzero(broken):
            if r < len(fr):
                s = a_sid[fr[r]]
                probs.append(series_problem(ser.iloc[s][key].to_dict(), str(ay[fr[r]]),
                                            "all quarters are zero: a proportional adjustment cannot reach "
                                            f"the benchmark (gap {rhs[r]:+.6g})"))
            else:
                q = qrow[r - len(fr)]
                probs.append(series_problem(lay.quarters.iloc[q][by].to_dict() | {"series": total_item},
                                            lay.quarters["period"].iloc[q], "no movable component: the fixed "
                                            f"components miss the total by {rhs[r]:+.6g}"))
        raise InputError(probs)

    # consistency per (system, year) and the redundant row
    ysys_t = ser["sys"].to_numpy()[a_sid[fr]]
    qyear = lay.quarters["year"].to_numpy()
    ymin = int(min(qyear.min(), ay.min() if len(ay) else qyear.min()))
    span = int(qyear.max()) - ymin + 1
    ky_t = ysys_t * span + ay[fr] - ymin
    qsys = lay.quarters["sys"].to_numpy()
    wq = w[lay.quarters["quarter"].to_numpy() - 1]
    ky_q = qsys * span + qyear - ymin
    nkey = nsys * span
    n_free = np.bincount(ser["sys"].to_numpy(), weights=~fixed_s, minlength=nsys)
    full = (np.bincount(ky_t, minlength=nkey) == n_free.repeat(span)) & (
        np.bincount(ky_q, weights=(wq != 0) & has_total, minlength=nkey) == len(nz)) & (n_free.repeat(span) > 0)
    s_t = sign_e[a_elems[fr, 0]]
    id_rhs_all = np.where(has_total, tot - disc - sum_before, 0.0)
    gap = (np.bincount(ky_t, weights=s_t * t_rhs, minlength=nkey)
           - np.bincount(ky_q, weights=wq * id_rhs_all, minlength=nkey))
    agg_total = np.bincount(ky_q, weights=wq * np.nan_to_num(tot), minlength=nkey)
    scale_y = np.maximum(1.0, np.bincount(ky_q, weights=wq * np.abs(np.nan_to_num(tot)), minlength=nkey))
    bad_keys = np.flatnonzero(full & (np.abs(gap) > tolerance * scale_y))
    if len(bad_keys):
        raise InputError([
            series_problem(lay.systems.iloc[k // span].to_dict() | {"series": total_item}, str(ymin + k % span),
                           f"inconsistent constraints: the signed annual benchmarks (with fixed series and "
                           f"discrepancy) come to {agg_total[k] + gap[k]:.10g} but the {year_from_quarters} of the "
                           f"quarterly {total_item} is {agg_total[k]:.10g}: gap {gap[k]:+.6g} "
                           f"({100 * gap[k] / scale_y[k]:+.4g}% of the total)")
            for k in bad_keys])
    drop = np.zeros(nrows, bool)
    cand = np.flatnonzero(full[ky_t] & ~empty[: len(fr)])
    if len(cand):
        pick = pd.DataFrame({"k": ky_t[cand], "a": -np.abs(av[fr][cand]), "r": cand}).sort_values(
            ["k", "a", "r"], kind="mergesort").drop_duplicates("k")["r"].to_numpy()
        drop[pick] = True
    keep = ~drop & ~empty

    gram = difference_gram(np.bincount(sid[free_e], minlength=len(ser))[~fixed_s]) \
        if method == "proportional_denton" else sp.identity(nv, format="csr")
    x = z.copy()
    if nv:
        x[free_e] += c[free_e] * solve_kkt(gram, cons[keep], rhs[keep])
    # the same objective with the annual rows only, for the attribution (a series without any
    # benchmark is pinned, so it stays put)
    xu = z.copy()
    if nv:
        t_keep = np.flatnonzero(~empty[: len(fr)])
        free_sids = np.flatnonzero(~fixed_s)
        pinned = np.setdiff1d(free_sids, a_sid[fr[t_keep]])
        pin = sp.csr_matrix((np.ones(len(pinned)), (np.arange(len(pinned)), var[ser["start"].to_numpy()[pinned]])),
                            shape=(len(pinned), nv))
        xu[free_e] += c[free_e] * solve_kkt(gram, sp.vstack([cons[t_keep], pin]).tocsr(),
                                            np.r_[rhs[t_keep], np.zeros(len(pinned))])

    # outputs
    sum_after = np.bincount(qid, weights=sign_e * x, minlength=nq)
    a_after = x[a_elems] @ w[nz]
    res_after = np.where(has_total, tot - disc - sum_after, np.nan)
    if np.any(np.abs(res_after[has_total]) > max(tolerance, 1e-9) * np.maximum(1.0, np.abs(tot[has_total]))) or \
            np.any(np.abs(a_after - av)[~a_fixed] > max(tolerance, 1e-9) * np.maximum(1.0, np.abs(av[~a_fixed]))):
        raise InputError([Problem(reason="the reconciliation constraints could not all be met (singular system?)")])
    out = frame.copy()
    out["value"] = x
    adj, adj_a = x - z, xu - z
    adj_i = adj - adj_a
    bench_e = np.zeros(n, bool)
    in_year = 4 * ay[:, None] + np.arange(4) - t0s_sorted[:, None]  # offset of each quarter in the series
    inside = (in_year >= 0) & (in_year < lay.nq[ser["sys"].to_numpy()[a_sid]][:, None])
    bench_e[(ser["start"].to_numpy()[a_sid][:, None] + in_year)[inside]] = True
    year_s = frame["year"].astype(str).to_numpy(dtype=object)
    constraint = np.select(
        [~free_e, np.abs(adj) <= 1e-12 * sys_scale[sys_e], (np.abs(adj_a) >= np.abs(adj_i)) & bench_e,
         np.abs(adj_a) >= np.abs(adj_i)],
        ["fixed", "none", "annual benchmark " + year_s, "annual benchmarks (extrapolated)"],
        default="quarterly identity " + frame["period"].astype(str).to_numpy(dtype=object))
    same = np.r_[False, sid[1:] == sid[:-1]]
    report = frame[key + ["period", "year", "quarter"]].copy()
    report["before"], report["after"], report["adjustment"] = z, x, adj
    with np.errstate(divide="ignore", invalid="ignore"):
        report["adjustment_pct"] = np.where(z != 0, 100.0 * adj / np.abs(z), np.nan)
        for col, v in (("growth_before_pct", z), ("growth_after_pct", x)):
            prev = np.where(same, np.r_[np.nan, v[:-1]], np.nan)
            report[col] = np.where(prev > 0, 100.0 * (v / prev - 1.0), np.nan)
    report["adjustment_annual"], report["adjustment_identity"] = adj_a, adj_i
    report["constraint"] = constraint.astype(str)
    quarters = lay.quarters.loc[has_total].reset_index(drop=True)
    residuals = quarters[by + ["period", "year", "quarter"]].copy()
    residuals["total"], residuals["discrepancy"] = tot[has_total], disc[has_total]
    residuals["sum_before"], residuals["sum_after"] = sum_before[has_total], sum_after[has_total]
    residuals["residual_before"] = (tot - disc - sum_before)[has_total]
    residuals["residual_after"] = res_after[has_total]
    ann = ser.iloc[a_sid][key].reset_index(drop=True)
    ann["year"], ann["benchmark"], ann["fixed"] = ay, av, a_fixed
    ann["sum_before"], ann["sum_after"] = a_before, a_after
    ann["residual_before"], ann["residual_after"] = av - a_before, av - a_after
    return ReconcileResult(out, report[by + REPORT_COLUMNS], residuals[by + RESIDUAL_COLUMNS],
                           ann[by + ANNUAL_COLUMNS])
