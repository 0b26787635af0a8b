"""The reconciliation stage: benchmark quarters to years and balance components to their total.

Runs between validation and derivation when ``valvol.toml`` has a ``[benchmark]`` or a
``[reconcile]`` section, on the validated rows of every economy at once (one sparse solve
per method, `valvol.methods.benchmark` and `valvol.methods.reconcile`):

1. ``[benchmark]``: each listed item's quarters (at each listed price basis) are benchmarked
   to its annual values by proportional or additive Denton, or Chow-Lin;
2. ``[reconcile]``: the aggregate's components are adjusted jointly so that each matches its
   annual values and, each quarter, the signed components (plus a fixed discrepancy) add to
   the aggregate's quarterly value, which does not move. Sign-changing components
   (inventories, valuables) keep their first differences rather than their proportional
   movements.

Benchmarks: only the years given, in the accounts' annual rows or in the ``benchmarks`` file
(a CSV or parquet file in the input format, in a sub-folder of the accounts folder so that it
is not read as accounts), never years summed from the quarters being benchmarked. Only the
quarters from ``first_year`` on may move (default: the year before the first given annual
value); the complete years from there up to a series' first given year keep the total of
their own quarters, so that the adjustment of the first benchmark year is spread smoothly
into the year before it without changing that year's total (earlier quarters stay as they
are). A year between two benchmarks is bridged and the quarters past the last benchmark are
extrapolated by the method (Denton 1971, Cholette 1984, IMF QNA 2017 ch. 6): the
benchmark-to-indicator ratio stays flat at its last benchmarked quarter's value
(proportional Denton), so does X - I (additive Denton), the fitted relation goes on (Chow-Lin:
X beta plus the AR(1)-carried residual); in ``[reconcile]`` such quarters are bound only by
the quarterly identity. A ``[benchmark]`` series with no given year in the window stays as
it is.

Outputs: the adjusted rows (same shape as the validated rows), the ``reconciliation`` report
(economy, period, item, price_basis, step, before, after, adjustment, adjustment_pct,
constraint, growth_before_pct, growth_after_pct) and before/after checks.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from valvol.config import Config
from valvol.errors import ConfigError, InputError, Problem
from valvol.frames import CHECK_COLUMNS

REPORT_COLUMNS = ["economy", "period", "item", "price_basis", "step", "before", "after", "adjustment",
                  "adjustment_pct", "adjustment_annual", "adjustment_identity", "constraint",
                  "growth_before_pct", "growth_after_pct"]
_BY = ["economy", "price_basis"]


def enabled(config: Config) -> bool:
    """True when the configuration asks for benchmarking or reconciliation."""
    return bool(config.benchmark.items) or bool(config.reconcile.aggregate)


def adjusted_items(config: Config) -> tuple[set[str], set[str]]:
    """(items whose quarters may move, aggregates whose identity is checked only afterwards)."""
    moved = set(config.benchmark.items) | set(reconcile_components(config))
    h = config.hierarchy
    containing = {a for a in h.order() if _contains(h, a, moved)}
    if config.reconcile.aggregate:
        containing.add(config.reconcile.aggregate)
    return moved, containing


def _contains(h, aggregate: str, items: set[str]) -> bool:
    comps = {c.item for c in h.aggregates.get(aggregate, ())}
    return bool(comps & items) or any(_contains(h, c, items) for c in comps if c in h.aggregates)


def reconcile_components(config: Config) -> dict[str, int]:
    """Signed components of the reconciled aggregate (the ``components`` option, else the hierarchy)."""
    r = config.reconcile
    if not r.aggregate:
        return {}
    if r.components:
        return {c.lstrip("+-"): -1 if c.startswith("-") else 1 for c in r.components}
    if r.aggregate not in config.hierarchy.aggregates:
        raise ConfigError(f"[reconcile] aggregate {r.aggregate} is not declared in [aggregates]; "
                          "declare it or list its components")
    comps = {c.item: c.sign for c in config.hierarchy.aggregates[r.aggregate]}
    comps.pop(r.discrepancy, None)
    return comps


def _annual_targets(rows: pd.DataFrame, items: set[str], bases: tuple[str, ...], year_from_quarters: str,
                    given: pd.DataFrame | None) -> pd.DataFrame:
    """Annual constraints of each series: its given years, then the join years before them.

    Given years (``given`` = True): the ``benchmarks`` file, else the annual rows of the
    accounts; these are the only benchmarks. Join years (``given`` = False): each complete
    year before the series' first given year keeps the aggregate of its own quarters,
    sum_q w_q I_q (w from ``year_from_quarters``), so that, once the window starts at
    ``first_year``, the move into the first benchmark is spread within those years without
    changing their totals. No other year gets a constraint: a year between two benchmarks is
    bridged and the quarters past the last benchmark are extrapolated by the method (flat
    benchmark-to-indicator ratio for proportional Denton, flat X - I for additive Denton, the
    fitted relation for Chow-Lin; Denton 1971, Cholette 1984, IMF QNA 2017 ch. 6). Holding
    them to their own sums instead would be a circular benchmark that drags them to the
    indicator's scale. A series with no given year gets no row at all.
    """
    from valvol.methods.benchmark import YEAR_FROM_QUARTERS

    key = ["economy", "price_basis", "item", "year"]
    sel = rows[rows["item"].isin(items) & rows["price_basis"].isin(bases)]
    annual = sel[sel["frequency"] == "A"] if given is None else given
    annual = annual[annual["item"].isin(items) & annual["price_basis"].isin(bases)][key + ["value"]]
    first = annual.groupby(key[:-1], as_index=False)["year"].min().rename(columns={"year": "first"})
    q = sel[sel["frequency"] == "Q"]
    w = np.asarray(YEAR_FROM_QUARTERS[year_from_quarters])
    q = q.assign(value=q["value"].to_numpy(dtype="float64") * w[q["quarter"].to_numpy(dtype="int64") - 1])
    own = q.groupby(key)["value"].agg(["sum", "size"]).reset_index().merge(first, on=key[:-1])
    own = own[(own["size"] == 4) & (own["year"] < own["first"])].rename(columns={"sum": "value"})
    out = pd.concat([annual.assign(given=True), own[key + ["value"]].assign(given=False)], ignore_index=True)
    return out.astype({"given": bool}).rename(columns={"item": "series"})


def _window(frames: list[pd.DataFrame | None], first_year: int) -> list[pd.DataFrame | None]:
    return [f if f is None else f[f["year"] >= first_year] for f in frames]


def _first_year(option: int, rows: pd.DataFrame, items, bases, given: pd.DataFrame | None) -> int:
    if option:
        return option
    annual = rows[rows["frequency"] == "A"] if given is None else given
    annual = annual[annual["item"].isin(list(items)) & annual["price_basis"].isin(bases)]
    return int(annual["year"].min()) - 1 if len(annual) else 0


def _growth(df: pd.DataFrame, col: str) -> pd.Series:
    prev = df.groupby(["economy", "price_basis", "item"])[col].shift()
    return (100 * (df[col] / prev - 1)).where(prev > 0)


def run(rows: pd.DataFrame, config: Config, accounts_dir: Path) -> tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]:
    """Benchmark and reconcile ``rows`` (validated accounts rows); return (rows, report, checks)."""
    from valvol.methods import reconcile as rc
    from valvol.methods.benchmark import denton
    from valvol.methods.chow_lin import chow_lin

    given = _benchmark_file(accounts_dir, config)
    annual_rate = config.levels_at_annual_rate
    year_from_quarters = "mean" if annual_rate else "total"
    rows = rows.copy()
    reports, checks = [], []
    b = config.benchmark
    if b.items:
        ind = rows[(rows["frequency"] == "Q") & rows["item"].isin(b.items) & rows["price_basis"].isin(b.price_bases)]
        ind = ind.rename(columns={"item": "series"})[_BY + ["series", "year", "quarter", "value"]]
        sf = b.year_from_quarters or year_from_quarters
        targets = _annual_targets(rows, set(b.items), b.price_bases, sf, given)
        ind, targets = _window([ind, targets], _first_year(b.first_year, rows, b.items, b.price_bases, given))
        by = _BY + ["series"]
        # a series with no given year in the window has nothing to be benchmarked to: it stays as it is
        ind = ind.merge(targets.loc[targets["given"], by].drop_duplicates(), on=by)
        if len(ind):
            if b.method == "chow_lin":
                out, _ = chow_lin(ind, targets[targets["given"]], rho=b.rho, year_from_quarters=sf, by=by,
                                     held=targets[~targets["given"]])
            else:
                out = denton(ind, targets, method="proportional" if b.method == "proportional_denton" else "additive",
                                year_from_quarters=sf, on_nonpositive=b.on_nonpositive, by=by)
            out = _snap(out.rename(columns={"series": "item", "indicator": "before", "value": "after"}))
            out["constraint"] = np.where(out["benchmarked"], "annual benchmark " + out["year"].astype(str),
                                         "annual benchmarks (extrapolated)")
            reports.append(_report(out, "benchmark"))
            rows = _apply(rows, out)
            checks.append(_annual_checks(out, targets, "benchmark_annual", sf))
    r = config.reconcile
    if r.aggregate:
        signs = reconcile_components(config)
        q = rows[(rows["frequency"] == "Q") & rows["price_basis"].isin(r.price_bases)]
        comps = q[q["item"].isin(signs)].rename(columns={"item": "series"})[_BY + ["series", "year", "quarter",
                                                                               "value"]]
        total = q[q["item"] == r.aggregate][_BY + ["year", "quarter", "value"]]
        disc = q[q["item"] == r.discrepancy][_BY + ["year", "quarter", "value"]] if r.discrepancy else None
        if total.empty:
            raise InputError([Problem(item=r.aggregate, reason="[reconcile] the aggregate has no quarterly values "
                                      "at the price bases asked for")])
        targets = _annual_targets(rows, set(signs), r.price_bases, year_from_quarters, given).drop(columns="given")
        first = _first_year(r.first_year, rows, signs, r.price_bases, given)
        comps, total, disc, targets = _window([comps, total, disc, targets], first)
        systems = total[_BY].drop_duplicates()  # economies with quarterly totals (not annual-only ones)
        comps, targets = comps.merge(systems, on=_BY), targets.merge(systems, on=_BY)
        disc = None if disc is None else disc.merge(systems, on=_BY)
        res = rc.reconcile(comps, signs, total, targets, fixed=r.fixed, discrepancy=disc, method=r.method,
                           year_from_quarters=year_from_quarters, tolerance=r.tolerance, by=_BY, total_item=r.aggregate,
                           additive=[c for c in signs if config.hierarchy.is_sign_changing(c)])
        rep = _snap(res.report.rename(columns={"series": "item"}))
        rep["adjustment"] = rep["after"] - rep["before"]
        reports.append(_report(rep, "reconcile", keep_growth=True))
        rows = _apply(rows, rep)
        checks.append(_identity_checks(res.residuals, r.aggregate))
    report = pd.concat(reports, ignore_index=True) if reports else pd.DataFrame(columns=REPORT_COLUMNS)
    check = pd.concat(checks, ignore_index=True) if checks else pd.DataFrame(columns=CHECK_COLUMNS)
    return rows, report[REPORT_COLUMNS], check[CHECK_COLUMNS]


def _report(out: pd.DataFrame, step: str, keep_growth: bool = False) -> pd.DataFrame:
    df = out.copy()
    df["step"] = step
    df["period"] = df["year"].astype(str) + "-Q" + df["quarter"].astype(str)
    df["adjustment"] = df["after"] - df["before"]
    df["adjustment_pct"] = (100 * df["adjustment"] / df["before"].abs()).where(df["before"] != 0)
    df = df.sort_values(["economy", "price_basis", "item", "year", "quarter"], kind="mergesort")
    if "adjustment_annual" not in df:  # benchmarking serves the annual constraints only
        df["adjustment_annual"], df["adjustment_identity"] = df["adjustment"], 0.0
    if not keep_growth:
        df["growth_before_pct"] = _growth(df, "before")
        df["growth_after_pct"] = _growth(df, "after")
    return df


def _snap(out: pd.DataFrame) -> pd.DataFrame:
    """Adjustments below floating-point noise (1e-9 relative) are no adjustment."""
    out = out.copy()
    tiny = (out["after"] - out["before"]).abs() <= 1e-9 * out["before"].abs().clip(lower=1.0)
    out.loc[tiny, "after"] = out.loc[tiny, "before"]
    return out


def _apply(rows: pd.DataFrame, out: pd.DataFrame) -> pd.DataFrame:
    key = ["economy", "price_basis", "item", "year", "quarter"]
    new = out[key + ["after"]]
    merged = rows.merge(new, on=key, how="left", validate="many_to_one")
    hit = merged["after"].notna() & (merged["frequency"] == "Q")
    rows = rows.copy()
    rows.loc[hit.to_numpy(), "value"] = merged.loc[hit, "after"].to_numpy()
    return rows


def _annual_checks(out: pd.DataFrame, targets: pd.DataFrame, name: str, year_from_quarters: str) -> pd.DataFrame:
    """Each annual constraint against the aggregate sum_q w_q X_q of its year's quarters, before and after."""
    from valvol.methods.benchmark import YEAR_FROM_QUARTERS

    w = np.asarray(YEAR_FROM_QUARTERS[year_from_quarters])[out["quarter"].to_numpy(dtype="int64") - 1]
    weighted = out.assign(before=out["before"] * w, after=out["after"] * w)
    agg = weighted.groupby(["economy", "price_basis", "item", "year"])[["before", "after"]].agg(["sum", "size"])
    agg.columns = ["before", "n", "after", "n2"]
    agg = agg[agg["n"] == 4].reset_index()
    t = targets.rename(columns={"series": "item", "value": "benchmark"})
    m = agg.merge(t, on=["economy", "price_basis", "item", "year"])
    rows = []
    for when in ("before", "after"):
        resid = m[when] - m["benchmark"]
        tol = 1e-6 * m["benchmark"].abs().clip(lower=1)
        rows.append(pd.DataFrame({
            "economy": m["economy"], "period": m["year"].astype(str), "rule": f"{name}_{when}_" + m["price_basis"],
            "item": m["item"], "value": resid, "tolerance": tol,
            "status": np.where(resid.abs() <= tol, "pass", "warn" if when == "before" else "fail"),
        }))
    return pd.concat(rows, ignore_index=True)


def _identity_checks(resid: pd.DataFrame, aggregate: str) -> pd.DataFrame:
    rows = []
    for when in ("before", "after"):
        value = resid[f"residual_{when}"]
        tol = 1e-9 * resid["total"].abs().clip(lower=1)
        rows.append(pd.DataFrame({
            "economy": resid["economy"], "period": resid["period"],
            "rule": f"reconcile_identity_{when}_" + resid["price_basis"], "item": aggregate, "value": value,
            "tolerance": tol, "status": np.where(value.abs() <= tol, "pass", "warn" if when == "before" else "fail"),
        }))
    return pd.concat(rows, ignore_index=True)


def _benchmark_file(accounts_dir: Path, config: Config) -> pd.DataFrame | None:
    """Annual benchmarks from the configured file (input format, years only), or None."""
    from valvol.io.readers import READERS, read_file
    from valvol.validate import parse_rows, row_problems

    name = config.benchmark.benchmarks or config.reconcile.benchmarks
    if not name:
        return None
    key = "[benchmark] benchmarks" if config.benchmark.benchmarks else "[reconcile] benchmarks"
    path = Path(accounts_dir) / name
    if not path.is_file() or path.suffix.lower() not in READERS:
        raise ConfigError(f"{key}: file {name} not found (a .csv or .parquet file, relative to the accounts "
                          "folder)", file=config.source)
    if path.parent.resolve() == Path(accounts_dir).resolve():
        raise ConfigError(f"{key}: file {name} must sit in a sub-folder: every file of the accounts folder "
                          "is read as accounts", file=config.source)
    raw, problems = read_file(path, name, config.carry_columns, sdmx=config.sdmx, wide=config.wide)
    if raw is None:
        raise InputError(problems)
    rows = parse_rows(raw)
    problems += row_problems(rows, config)
    problems += [Problem(file=name, row=int(r.source_row), economy=r.economy, item=r.item, period=r.period,
                         reason="benchmarks must be years (YYYY)") for r in rows[rows["frequency"] != "A"].itertuples()]
    if problems:
        raise InputError(problems)
    return rows


def typed_report(report: pd.DataFrame) -> pd.DataFrame:
    """The report with its published column types (floats and text), also when empty."""
    floats = ["before", "after", "adjustment", "adjustment_pct", "adjustment_annual", "adjustment_identity",
              "growth_before_pct", "growth_after_pct"]
    text = [c for c in REPORT_COLUMNS if c not in floats]
    return report.astype({**{c: "float64" for c in floats}, **{c: "str" for c in text}})


def export_accounts(rows: pd.DataFrame, report: pd.DataFrame, config: Config, accounts_dir: Path,
                    to_dir: Path) -> None:
    """Write reconciled rows in the input format: ``accounts.csv``, the config, the report, benchmarks files."""
    import shutil

    from valvol.config import CONFIG_FILE

    rows = rows.sort_values(["source_file", "source_row"], kind="mergesort")
    out = rows[["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]].copy()
    out["value"] = out["value"].map(repr)
    to_dir.mkdir(parents=True, exist_ok=True)
    (to_dir / "reconciliation").mkdir(exist_ok=True)
    out.to_csv(to_dir / "accounts.csv", index=False)
    report.to_csv(to_dir / "reconciliation" / "report.csv", index=False)
    if (accounts_dir / CONFIG_FILE).exists():
        shutil.copyfile(accounts_dir / CONFIG_FILE, to_dir / CONFIG_FILE)
    for name in {config.benchmark.benchmarks, config.reconcile.benchmarks} - {""}:  # files the config names
        (to_dir / name).parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(accounts_dir / name, to_dir / name)
