"""Summary statistics of revisions: mean, mean absolute, relative and root-mean-square revision,
and the test of a zero mean revision (bias).

For each (economy, item, measure) the revisions R_t = L_t - E_t (later minus earlier) over n
periods give MR = (1/n) sum R_t, MAR = (1/n) sum |R_t|, RMAR = sum |R_t| / sum |E_t|,
RMSR = sqrt((1/n) sum R_t^2), the standard deviation and t = MR / (s / sqrt(n)), with
Student's t (n - 1 degrees of freedom) or, with autocorrelated revisions, a
heteroskedasticity-and-autocorrelation-consistent standard error (Newey-West) and the normal
distribution. Sources in docs/methods.md section 8.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from scipy import stats

from valvol.errors import ConfigError, InputError, Problem

#: Output columns of `revision_summary` (after the grouping keys).
SUMMARY_COLUMNS = ["n", "mr", "mar", "rmar", "rmsr", "sd", "t_stat", "critical_value", "significant",
                   "test_convention"]
#: Measures whose values depend on the reference year of the chain-linked volumes.


def revision_summary(revs: pd.DataFrame, *, test: str = "student_t", hac_lags: int | None = None,
                     alpha: float = 0.05, by: Sequence[str] = ()) -> pd.DataFrame:
    """Summary statistics and bias test of revisions, per series.

    Parameters
    ----------
    revs
        A `revisions` table (at least economy, frequency, item, measure, period, later,
        revision).
    test
        ``"student_t"`` (critical value of Student's t with n - 1 degrees of freedom) or
        ``"normal"``.
    hac_lags
        None for the plain t-test; an integer L >= 0 for the HAC (Newey-West) variance with
        Bartlett weights and L lags (L = 1 is the project's default choice; L = 0 gives the
        plain test).
    alpha
        Size of the two-tailed test.
    by
        Further grouping columns of ``revs`` (e.g. a revision horizon or vintage pair).

    Returns
    -------
    DataFrame
        One row per economy, frequency, item, measure (and ``by``): n, mr, mar, rmar, rmsr,
        sd (s_R, or sqrt(s^2_HAC) with ``hac_lags``), t_stat, critical_value, significant
        (nullable boolean), test_convention.
        With n < 2 the test columns (sd, t_stat, critical_value, significant) are missing;
        mr, mar, rmar and rmsr are defined for n >= 1. rmar is NaN when sum |L| = 0.

    Raises
    ------
    ConfigError
        Unknown ``test``, ``alpha`` outside (0, 1), negative ``hac_lags``.
    InputError
        Columns missing.

    Notes
    -----
    MR = sum R_t / n; MAR = sum |R_t| / n; RMAR = sum |R_t| / sum |L_t|; RMSR = sqrt(sum R_t^2 / n).
    Bias test: t = MR / (s_R / sqrt n), s_R^2 = sum (R_t - MR)^2 / (n - 1), two-tailed,
    significant when |t| > critical value. HAC: e_t = R_t - MR,
    s^2_HAC = [sum e_t^2 + 2 sum_{l=1..L} (1 - l/(L+1)) sum_t e_t e_{t-l}] / (n - 1),
    t = MR / sqrt(s^2_HAC / n); lags run over consecutive rows in period order. With s = 0,
    t = 0 when MR = 0 and +-inf otherwise (every revision equal and non-zero).

    References
    ----------
    OECD/Eurostat, *Guidelines on Revisions Policy and Analysis* (MR, MAR, RMAR, RMSR, bias
    test); ONS, *GDP revisions in Blue Book 2020* (2023), Table 1 (two-tailed 5% test);
    Newey & West (1987), Econometrica 55(3) (Bartlett-weighted HAC variance); docs/methods.md section 8.
    """
    if test not in ("student_t", "normal"):
        raise ConfigError(f"revision test must be 'student_t' or 'normal', not {test!r}")
    if not 0.0 < float(alpha) < 1.0:
        raise ConfigError(f"alpha must lie strictly between 0 and 1, not {alpha!r}")
    if hac_lags is not None and (int(hac_lags) != hac_lags or hac_lags < 0):
        raise ConfigError(f"hac_lags must be a non-negative integer or None, not {hac_lags!r}")
    keys = ["economy", "frequency", "item", "measure", *by]
    missing = [c for c in [*keys, "period", "later", "revision"] if c not in revs.columns]
    if missing:
        raise InputError([Problem(file="revisions", reason=f"table lacks column(s) {', '.join(missing)}")])
    d = revs.loc[revs["revision"].notna(), [*keys, "period", "later", "revision"]]
    d = d.sort_values([*keys, "period"], kind="mergesort", ignore_index=True)
    r = d["revision"].astype("float64")
    d = d.assign(r=r, abs_r=r.abs(), abs_l=d["later"].astype("float64").abs(), sq_r=r * r)
    g = d.groupby(keys, sort=True)
    a = g.agg(n=("r", "size"), sum_r=("r", "sum"), sum_abs=("abs_r", "sum"), sum_abs_l=("abs_l", "sum"),
              sum_sq=("sq_r", "sum"))
    n = a["n"].astype("float64")
    mr = a["sum_r"] / n
    d["e"] = d["r"] - g["r"].transform("mean")
    d["ee"] = d["e"] * d["e"]
    ss = d.groupby(keys, sort=True)["ee"].sum()
    lags = 0 if hac_lags is None else int(hac_lags)
    for lag in range(1, lags + 1):  # over lags, each vectorised over the panel
        lagged = d.groupby(keys, sort=True)["e"].shift(lag)
        cross = (d["e"] * lagged).groupby([d[k] for k in keys], sort=True).sum()
        ss = ss + 2.0 * (1.0 - lag / (lags + 1.0)) * cross
    enough = n >= 2
    s2 = (ss / (n - 1.0)).where(enough).clip(lower=0.0)
    sd = np.sqrt(s2)
    se = sd / np.sqrt(n)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(se > 0, mr / se, np.where(mr == 0, 0.0, np.sign(mr) * np.inf))
    t = pd.Series(t, index=a.index).where(enough)
    q = 1.0 - float(alpha) / 2.0
    if test == "student_t":
        crit = pd.Series(stats.t.ppf(q, np.where(enough, n - 1.0, np.nan)), index=a.index)
    else:
        crit = pd.Series(stats.norm.ppf(q), index=a.index).where(enough)
    sig = pd.Series((t.abs() > crit).to_numpy(), index=a.index, dtype="boolean").where(enough, pd.NA)
    rmar = (a["sum_abs"] / a["sum_abs_l"]).where(a["sum_abs_l"] > 0)
    out = pd.DataFrame({"n": a["n"].astype("int64"), "mr": mr, "mar": a["sum_abs"] / n, "rmar": rmar,
                        "rmsr": np.sqrt(a["sum_sq"] / n), "sd": sd.where(enough), "t_stat": t,
                        "critical_value": crit, "significant": sig,
                        "test_convention": _convention(test, hac_lags, float(alpha))})
    out = out.reset_index()
    return out[[*keys, *SUMMARY_COLUMNS]]


def _convention(test: str, hac_lags: int | None, alpha: float) -> str:
    dist = "Student-t(n-1)" if test == "student_t" else "normal"
    size = f"two-tailed {100 * alpha:g}%"
    if hac_lags is None:
        return f"t = MR/(s/sqrt n), s with n-1, {dist}, {size}"
    return (f"t = MR/sqrt(s2_HAC/n), s2_HAC Newey-West Bartlett L={int(hac_lags)} with n-1, "
            f"{dist}, {size}")
