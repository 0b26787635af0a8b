"""Validation at stage boundaries: run pandera lazily and turn failures into located problems.

One place runs every schema (`run_schema`) and maps pandera's failure cases
back to file, row, economy, item, price basis and period. Rules across rows
are small functions here returning problems: unique keys (`duplicate_keys`),
contiguous periods (`period_gaps`), identities (`identity_problems`).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pandera.pandas as pa

from valvol.config import Config
from valvol.errors import InputError, Problem, ValvolError, found
from valvol.periods import parse_periods, quarter_index
from valvol.schemas import input as input_schema
from valvol.schemas.checks import key_codes
from valvol.schemas.outputs import identity_residuals

_LOCATE = ["source_file", "source_row", "economy", "item", "period_text", "price_basis"]

#: The cell a rule across columns is about (by the start of its message), shown as written; default the value.
_SHOWN = {"monthly periods": "period_text", "price_basis index": "price_basis"}


class StageError(ValvolError):
    """A derived table broke its schema: a defect or a degenerate input not caught earlier."""

    exit_code = 1


def check_table(name: str, table, carried: tuple[str, ...] = ()) -> None:
    """A published table against its pandera model; `StageError` when it breaks it (or has none).

    ``carried``: text columns carried from the input (``carry_columns``) that the table holds
    besides its model's columns.
    """
    from valvol.schemas.outputs import TABLES as SCHEMAS

    schema = SCHEMAS.get(name)
    if schema is None:
        raise StageError(f"table {name} has no pandera model: not written")
    if carried:
        schema = schema.add_columns({c: pa.Column(str) for c in carried})
    frame = table.to_pandas() if hasattr(table, "to_pandas") else table
    problems = run_schema(schema, frame)
    if problems:
        shown = "\n".join(p.render() for p in problems[:20])
        raise StageError(f"table {name} breaks its schema ({len(problems)} problem(s)):\n{shown}")


def parse_rows(raw: pd.DataFrame) -> pd.DataFrame:
    """Add parsed columns to the raw text rows: period parts and the numeric value."""
    out = raw.rename(columns={"period": "period_text", "value": "value_text"}).copy()
    parts = parse_periods(out["period_text"])
    out["frequency"] = parts["frequency"]
    out["year"] = parts["year"]
    out["quarter"] = parts["quarter"]
    out["month"] = parts["month"]
    out["period"] = parts["period"]
    out["value"] = parse_numbers(out["value_text"])
    return out


def parse_numbers(text: pd.Series) -> pd.Series:
    """Numbers from text, NaN where the text is not a number (located by the row rules later).

    The whole column is parsed by Arrow's C parser at once; a column with any text that is not
    a number is parsed again by pandas, value by value, so each bad cell becomes NaN alone.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    try:
        parsed = pc.cast(pa.array(text), pa.float64())
        return pd.Series(parsed.to_numpy(zero_copy_only=False), index=text.index, dtype="float64")
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        return pd.to_numeric(text, errors="coerce").astype("float64")


def run_schema(schema: pa.DataFrameSchema, df: pd.DataFrame, *, locate: pd.DataFrame | None = None) -> list[Problem]:
    """Validate ``df`` lazily; return one problem per failing row and check (none when valid).

    ``locate`` (default ``df``) supplies the file, row and series columns of
    each failing index.
    """
    try:
        schema.validate(df, lazy=True)
    except pa.errors.SchemaErrors as err:
        return _problems_from_failures(err.failure_cases, df if locate is None else locate)
    return []


def _problems_from_failures(cases: pd.DataFrame, locate: pd.DataFrame) -> list[Problem]:
    problems = []
    cases = cases.drop_duplicates(subset=["index", "check"])
    for case in cases.itertuples(index=False):
        reason = str(case.check)
        column = "" if pd.isna(case.column) else str(case.column)
        if pd.isna(case.index):  # a whole-column failure (missing column, wrong dtype)
            problems.append(Problem(reason=f"{column}: {reason}"))
            continue
        row = locate.loc[case.index]
        if case.schema_context == "DataFrameSchema" or column in ("value", "value_text"):
            # rules about the value: show it as written (rules about another cell: that cell)
            cell = next((c for start, c in _SHOWN.items() if reason.startswith(start)), "value_text")
            shown = row.get(cell, case.failure_case)
        else:
            shown = case.failure_case
        problems.append(_problem(row, f"{reason} (found {found(shown)})"))
    return problems


def _problem(row: pd.Series, reason: str) -> Problem:
    row_no = row.get("source_row")
    return Problem(
        file=str(row.get("source_file", "")),
        row=None if row_no is None or pd.isna(row_no) else int(row_no),
        economy=str(row.get("economy", "")),
        item=str(row.get("item", "")),
        period=str(row.get("period", "") or row.get("period_text", "")),
        price_basis=str(row.get("price_basis", "")),
        reason=reason,
    )


def row_problems(rows: pd.DataFrame, config: Config) -> list[Problem]:
    """Row-level rules of the input contract (pandera schema `valvol.schemas.input`)."""
    schema = input_schema.input_rows(
        config.hierarchy.is_allowed, config.hierarchy.is_sign_changing, frozenset(config.price_indexes)
    )
    return run_schema(schema, rows)


def duplicate_keys(rows: pd.DataFrame) -> list[Problem]:
    """Two rows for one (economy, item, price_basis, period), in one file or across files."""
    key = ["economy", "item", "price_basis", "period"]
    dup = rows[pd.Series(key_codes(rows, key)).duplicated(keep=False).to_numpy()]
    if dup.empty:
        return []
    cols = ["source_file", "source_row"] + (["period_text"] if "period_text" in rows else [])
    first = dup.drop_duplicates(key)[key + cols]
    later = dup[dup.duplicated(key, keep="first")].merge(first, on=key, suffixes=("", "_first"))
    return [
        _problem(r, f"duplicate of {r['source_file_first']}:{r['source_row_first']} (same economy, item, "
                    "price_basis and period" + _written(r) + ")")
        for _, r in later.iterrows()
    ]


def _written(r: pd.Series) -> str:
    """Two spellings of one period (``2020Q1`` and ``2020-Q1``) make one key: say so."""
    if "period_text" not in r or r["period_text"] == r["period_text_first"]:
        return ""
    return f"; the period is written {found(r['period_text_first'])} there and {found(r['period_text'])} here"


def period_gaps(rows: pd.DataFrame) -> list[Problem]:
    """Months, quarters and years of each series must be contiguous; name the missing span."""
    key = ["economy", "item", "price_basis", "frequency"]
    df = rows[key + ["year", "quarter", "month", "source_file"]].copy()
    df["idx"] = np.select(
        [df["frequency"] == "Q", df["frequency"] == "M"],
        [quarter_index(df["year"], df["quarter"].clip(lower=1)), df["year"] * 12 + df["month"] - 1],
        df["year"],
    )
    series = key_codes(df, key)
    idx = df["idx"].to_numpy()
    order = np.lexsort((idx, series))  # by series, then period
    series, idx = series[order], idx[order]
    step = np.r_[0, np.diff(idx)]
    gap = np.flatnonzero((step > 1) & np.r_[False, series[1:] == series[:-1]])
    gaps = df.iloc[order[gap]].assign(prev=idx[gap - 1])
    out = []
    for _, g in gaps.iterrows():
        first, last = int(g["prev"]) + 1, int(g["idx"]) - 1
        if g["frequency"] == "Q":
            span = [f"{i // 4}-Q{i % 4 + 1}" for i in (first, last)]
        elif g["frequency"] == "M":
            span = [f"{i // 12}-{i % 12 + 1:02d}" for i in (first, last)]
        else:
            span = [str(first), str(last)]
        missing = span[0] if first == last else f"{span[0]} to {span[1]}"
        out.append(
            Problem(file=str(g["source_file"]), economy=g["economy"], item=g["item"], price_basis=g["price_basis"],
                    period=missing, reason=f"series is not contiguous: {missing} missing")
        )
    return out


def identity_problems(residuals: pd.DataFrame, what: str) -> list[Problem]:
    """Residual rows beyond tolerance (pandera model ``identity_residuals``), as problems.

    ``what`` says which identity, e.g. "components do not add to the aggregate".
    """
    if not run_schema(identity_residuals, residuals):
        return []
    bad = residuals[residuals["residual"].abs() > residuals["tolerance"]]
    return [
        Problem(economy=r.economy, item=r.item, period=r.period, price_basis=r.price_basis,
                reason=f"{what}: residual {r.residual:.6g} beyond tolerance {r.tolerance:.6g}")
        for r in bad.itertuples(index=False)
    ]


def validate_rows(rows: pd.DataFrame, config: Config, accounts_dir: Path,
                  problems: list[Problem]) -> tuple[pd.DataFrame, pd.DataFrame, dict]:
    """Every input rule over the whole panel: return (accounts rows, price-index rows, staged tables).

    ``problems`` are those already found (reading the files). Row rules, duplicate keys,
    gaps and price indexes of economies without accounts are checked first; if the rows pass,
    the identities (components against aggregates, quarters against years) are checked in
    DuckDB, except those that benchmarking or reconciliation will restore; the tables staged
    for that (`valvol.staging.STAGED_TABLES`) are returned as Arrow tables. Raises
    `InputError` with every problem found.
    """
    from valvol import db, reconcile_stage
    from valvol.staging import stage_accounts, staged_tables

    problems = list(problems)
    row_level = row_problems(rows, config)
    problems += row_level
    bad = pd.DataFrame([(p.file, p.row) for p in row_level], columns=["source_file", "source_row"])
    located = pd.MultiIndex.from_frame(rows[["source_file", "source_row"]])
    ok = rows.loc[~located.isin(pd.MultiIndex.from_frame(bad.astype({"source_row": "int64"})))]
    if rows.empty and not problems:
        problems.append(Problem(file=str(accounts_dir), reason="the accounts files hold no data rows"))
    problems += duplicate_keys(ok)
    dated = rows[rows["frequency"] != ""]  # every row with a valid period counts for contiguity
    problems += period_gaps(dated[~pd.Series(key_codes(dated, ["economy", "item", "price_basis", "period"]))
                                   .duplicated().to_numpy()])
    is_index = ok["price_basis"].isin(["index", "weight"])
    indexes, ok = ok[is_index], ok[~is_index]
    from valvol.methods.price_bridge import input_problems as bridge_problems

    b = config.price_bridge
    problems += bridge_problems(indexes, ok, headline=b.headline, accounts_item=b.accounts,
                                tolerance_abs=config.checks.tolerance_abs, tolerance_rel=config.checks.tolerance_rel)
    for economy in sorted(set(pd.unique(indexes["economy"])) - set(pd.unique(ok["economy"]))):
        first = indexes[indexes["economy"] == economy].iloc[0]
        problems.append(Problem(file=first["source_file"], row=int(first["source_row"]), economy=economy,
                                item=first["item"], price_basis="index",
                                reason="price index of an economy that has no accounts"))
    if problems:
        raise InputError(problems)
    from valvol.methods.index_bases import convert  # volume_index, price_index -> chain_linked (and current)

    ok, problems = convert(ok, config)
    if problems:
        raise InputError(problems)
    moved, rebalanced = reconcile_stage.adjusted_items(config)  # checked again after reconciliation
    bases = set(config.benchmark.price_bases) | set(config.reconcile.price_bases)
    con = db.connect()
    try:
        stage_accounts(con, ok, config)
        staged = staged_tables(con)
    finally:
        con.close()
    ident, annual = staged["identity_residuals"].to_pandas(), staged["annual_vs_quarters"].to_pandas()
    ident = ident[~(ident["item"].isin(rebalanced) & ident["price_basis"].isin(bases))]
    annual = annual[~(annual["item"].isin(moved) & annual["price_basis"].isin(bases))]
    problems += identity_problems(ident, "components do not add to the aggregate")
    problems += identity_problems(
        annual, "quarters do not " + ("average" if config.levels_at_annual_rate else "add") + " to the year")
    if problems:
        raise InputError(problems)
    return ok, indexes, staged


def locate(problems: list[Problem], rows: pd.DataFrame) -> list[Problem]:
    """``problems`` with file and row filled in from the input rows they are about.

    Where exactly one input row has the problem's key (economy, item, price_basis, period;
    without price_basis when the problem names none), the problem gets its file and row;
    otherwise, where every row of the series comes from one file (a value derived from
    them, e.g. a year from its quarters), that file. Problems naming a file stay as they are.
    """
    key = ["economy", "item", "price_basis", "period"]
    if rows.empty or not any(not p.file and p.economy and p.item for p in problems):
        return problems
    rows = rows[key + ["source_file", "source_row"]]
    short = ["economy", "item", "period"]
    exact, exact_short = _lookup(rows, key, one_row=True), _lookup(rows, short, one_row=True)
    files, files_short = _lookup(rows, key[:3], one_row=False), _lookup(rows, key[:2], one_row=False)
    out = []
    for p in problems:
        if not p.file and p.economy and p.item:
            basis = (p.price_basis,) if p.price_basis else ()
            hit = (exact if basis else exact_short).get((p.economy, p.item, *basis, p.period))
            if hit is not None:
                p = Problem(**{**p.as_dict(), "file": str(hit[0]), "row": int(hit[1])})
            elif (series := (files if basis else files_short).get((p.economy, p.item, *basis))) is not None:
                p = Problem(**{**p.as_dict(), "file": str(series[0])})
        out.append(p)
    return out


def _lookup(rows: pd.DataFrame, cols: list[str], *, one_row: bool) -> dict[tuple, tuple[str, int]]:
    """Keys ``cols`` held by exactly one row (``one_row``) or by rows of one file -> (file, row)."""
    if one_row:
        one = rows.drop_duplicates(cols, keep=False)
    else:
        files = rows.groupby(cols, sort=False)["source_file"].transform("nunique")
        one = rows[files == 1].drop_duplicates(cols)
    keys = zip(*(one[c] for c in cols), strict=True)
    return dict(zip(keys, zip(one["source_file"], one["source_row"], strict=True), strict=True))
