"""Panels of quarterly series with their annual benchmarks, shared by the benchmarking methods.

A long indicator frame (key columns ``by``, ``year``, ``quarter``, ``value``) and a long
benchmarks frame (key columns, ``year``, ``value``) are arranged once into a `SeriesPanel`:
series codes, consecutive quarters checked, the sparse aggregation matrix J of quarter weights
(``year_from_quarters``) for every benchmark year. `valvol.methods.benchmark`,
`valvol.methods.chow_lin` and `valvol.methods.reconcile` use it; problems in the data raise
`valvol.errors.InputError` naming series and period.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp

from valvol.errors import ConfigError, InputError, Problem
from valvol.frames import period_label

#: Weight of each quarter (1..4) in the annual value, by aggregation type.
YEAR_FROM_QUARTERS: dict[str, tuple[float, float, float, float]] = {
    "total": (1.0, 1.0, 1.0, 1.0),
    "mean": (0.25, 0.25, 0.25, 0.25),
    "q4": (0.0, 0.0, 0.0, 1.0),
    "q1": (1.0, 0.0, 0.0, 0.0),
}


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



@dataclass(frozen=True)
class SeriesPanel:
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


def key_dicts(frame: pd.DataFrame, by: list[str], rows: np.ndarray) -> list[dict]:
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
                     for k, r in zip(key_dicts(out, key, rows), rows, strict=True)]
    if problems:
        raise InputError(problems)
    return out, sid, year, quarter, t, new, step


def arrange(indicator: pd.DataFrame, benchmarks: pd.DataFrame, by: list[str], year_from_quarters: str) -> SeriesPanel:
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
        problems += [series_problem(k, str(y[r]), reason) for k, r in zip(key_dicts(bm, by, rows), rows, strict=True)]
    unbenchmarked = np.setdiff1d(np.arange(len(keys)), s[~orphan])
    problems += [series_problem(k, "", "no benchmark for this series")
                 for k in key_dicts(keys, by, unbenchmarked)]
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
    return SeriesPanel(ind, by, keys, sid, lengths, bm, agg, benchmarked)


def series_scale_of(values: np.ndarray, sid: np.ndarray, nseries: int) -> np.ndarray:
    """Mean absolute value of each series (1 where the series is all zero)."""
    scale = np.bincount(sid, weights=np.abs(values), minlength=nseries) / np.bincount(sid, minlength=nseries)
    return np.where(scale > 0, scale, 1.0)


def panel_output(panel: SeriesPanel, value: np.ndarray, **extra: np.ndarray) -> pd.DataFrame:
    out = panel.frame.rename(columns={"value": "indicator"})
    out["value"] = value
    for name, col in extra.items():
        out[name] = col
    out["benchmarked"] = panel.benchmarked
    return out


