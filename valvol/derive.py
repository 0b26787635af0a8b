"""The derive stage of one chunk of economies: volumes, deflators, growth, contributions, price gaps, checks.

Plain relational arithmetic runs in DuckDB (``sql/int_*.sql``); the methods
that need more than that (chain-linking, contributions, deflator
decompositions, price gaps) are pure functions of `valvol.methods`, each called
once on the chunk's whole levels panel. Order of the steps:

1. volumes: given chain-linked volumes are kept as published (re-referenced
   only when another ``reference_year`` is asked for); where an economy gives
   previous-year prices, every other series is chain-linked; where both are
   given, the difference is reported as a check; the non-additivity residual
   of each aggregate becomes item ``<AGGREGATE>_RESIDUAL``;
2. deflators and growth rates (SQL);
3. checks: identities, years against quarters, deflator jumps (SQL);
4. contributions to volume and deflator growth, price gaps (methods).
"""

from __future__ import annotations

import logging

import duckdb
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from valvol import db
from valvol.config import Config
from valvol.errors import InputError, Problem
from valvol.frames import CHECK_COLUMNS, KEY, LEVEL_COLUMNS, empty_levels

log = logging.getLogger("valvol")

#: Relative difference (percent) beyond which computed and given volumes earn a warning.
CHAIN_DIFF_WARN_PCT = 0.1


#: Tables derived per chunk of economies, in the order they are written.
TABLES = (
    "levels",
    "deflators",
    "growth",
    "checks",
    "volume_contributions",
    "deflator_contributions",
    "income_contributions",
    "price_gaps",
    "price_bridge",
    "price_bridge_items",
)


def _levels(con: duckdb.DuckDBPyConnection) -> pd.DataFrame:
    return db.query_df(con, "int_levels_read")


def _insert_levels(con: duckdb.DuckDBPyConnection, rows: pd.DataFrame, origin: str) -> None:
    if rows.empty:
        return
    db.register(con, "method_rows", rows[LEVEL_COLUMNS].assign(origin=origin))
    db.run_sql(con, "int_levels_insert")
    con.unregister("method_rows")


def _insert_checks(con: duckdb.DuckDBPyConnection, rows: pd.DataFrame | None) -> None:
    if rows is None or rows.empty:
        return
    db.register(con, "check_rows", rows[CHECK_COLUMNS])
    db.run_sql(con, "int_checks_insert")
    con.unregister("check_rows")


def derive_chunk(
    rows: pd.DataFrame,
    config: Config,
    *,
    staged: dict[str, pa.Table] | None = None,
    indexes: pd.DataFrame | None = None,
    extra_checks: pd.DataFrame | None = None,
) -> dict[str, pa.Table]:
    """Every derived table of a chunk of economies (see the module docstring), as Arrow tables.

    ``rows`` are the validated accounts rows of the chunk's economies, ``indexes`` their
    price-index rows (a consumer price index), compared with the household consumption
    deflator in the price gaps; ``extra_checks`` are checks of earlier stages
    (reconciliation before/after residuals). ``staged``: the chunk's rows of the tables the
    validate stage staged (`valvol.staging.STAGED_TABLES`), used instead of staging ``rows``
    again when the rows have not changed since. The chunk works in its own in-memory database;
    each table is ordered by its full key and checked against its pandera model.
    """
    from valvol.staging import load_staged, stage_accounts
    from valvol.validate import check_table

    con = db.connect(threads=1)
    try:
        if staged is None:
            stage_accounts(con, rows, config)
        else:
            load_staged(con, staged, config)
        db.run_sql(con, "int_checks_init")
        _insert_checks(con, extra_checks)
        panel = derive_volumes(con, config)
        check_levels(panel)
        sign_changing = config.hierarchy.sign_changing_among(pd.unique(panel["item"]))
        db.run_sql(con, "int_deflators", sign_changing=sign_changing)
        db.run_sql(con, "int_growth", sign_changing=sign_changing)
        db.run_sql(con, "int_checks_identity")
        db.run_sql(con, "int_checks_annual")
        db.run_sql(con, "int_checks_deflator_jump", jump_pct=config.checks.deflator_jump_pct)
        panel = panel[~panel["item"].str.endswith("_RESIDUAL")]
        derive_contributions(con, config, panel)
        derive_price_gaps(con, config, panel, indexes)
        derive_price_bridge(con, config, panel, indexes)
        tables = {name: db.query_arrow(con, f"out_{name}") for name in TABLES}
    finally:
        con.close()
    carried = tuple(config.carry_columns)
    if carried:
        tables["levels"] = with_carried_columns(tables["levels"], rows, carried)
    for name, table in tables.items():
        check_table(name, table, carried if name == "levels" else ())
    return tables


def with_carried_columns(levels: pa.Table, rows: pd.DataFrame, carried: tuple[str, ...]) -> pa.Table:
    """The published levels with the input's carried columns (``carry_columns``), by key.

    A value as given (or converted from an index) keeps its row's flags; a derived value
    (annual sums, aggregates, volumes) gets empty text.
    """
    key = ["economy", "period", "item", "price_basis"]
    lv = levels.to_pandas()
    flags = rows[key + list(carried)].astype({c: "str" for c in carried})
    out = lv.merge(flags, on=key, how="left", validate="one_to_one")
    out[list(carried)] = out[list(carried)].fillna("")
    return pa.Table.from_pandas(out, preserve_index=False)


def failed_check_problems(checks: pa.Table) -> list[Problem]:
    """Checks that fail, as located problems (an identity broken by an adjustment gets a hint)."""
    df = checks.filter(pc.equal(checks["status"], "fail")).to_pandas()
    return [
        Problem(economy=r.economy, item=r.item, period=r.period,
                reason=f"check {r.rule} fails: value {r.value:.6g} beyond tolerance {r.tolerance:.6g}"
                + (" (after benchmarking or reconciliation: adjust the aggregate's other components "
                   "too, or let valvol derive the aggregate)" if r.rule.startswith("identity_") else ""))
        for r in df.itertuples(index=False)
    ]


def check_levels(panel: pd.DataFrame) -> None:
    """Stage boundary: the complete levels panel against its pandera model."""
    from valvol.schemas.levels import levels as levels_model
    from valvol.validate import StageError, run_schema

    problems = run_schema(levels_model, panel)
    if problems:
        shown = "\n".join(p.render() for p in problems[:20])
        raise StageError(f"the levels panel breaks its schema ({len(problems)} problem(s)):\n{shown}")


def derive_volumes(con: duckdb.DuckDBPyConnection, config: Config) -> pd.DataFrame:
    """Chain-link, re-reference and compare volumes; add non-additivity residuals.

    Writes the new rows into the database's levels table and returns the complete levels
    panel (the staged levels with them), read from the database once.
    """
    from valvol.methods import chainlink
    from valvol.methods.panel import levels_wide, raise_nonpositive
    from valvol.methods.reference_year import reference_year_of

    levels = _levels(con)
    # deflators and growth rates are ratios: a positive series must be positive at every basis
    bases = {"current": "current", "previous_year": "previous_year", "chain_linked": "chain_linked"}
    raise_nonpositive(levels_wide(levels, bases), bases, config.hierarchy)
    added = []
    h = config.hierarchy
    given = levels[levels["price_basis"] == "chain_linked"]
    current = levels[levels["price_basis"] == "current"]
    if config.reference_year is not None and not given.empty:
        moved = _rereference_given(given, current, config)
        if not moved.empty:
            db.register(con, "method_rows", moved[LEVEL_COLUMNS])
            db.run_sql(con, "int_levels_replace")
            con.unregister("method_rows")
            _insert_levels(con, moved, "rereferenced")
            given = pd.concat([given[~given["economy"].isin(moved["economy"].unique())], moved])
            replaced = levels.merge(moved[KEY], on=KEY, how="left", indicator=True)["_merge"].eq("both")
            levels = levels[~replaced.to_numpy()]
            added.append(moved[LEVEL_COLUMNS])
    pyp_economies = levels.loc[levels["price_basis"] == "previous_year", "economy"].unique()
    computed = empty_levels()
    if config.volumes.index == "fisher":
        _require_given_volumes(current, given, h)
        pyp_economies = []  # Fisher chains need both years' prices: only given volumes are used
    if len(pyp_economies):
        base = levels[levels["economy"].isin(pyp_economies) & levels["price_basis"].isin(["current", "previous_year"])]
        computed = chainlink.chain_link(
            base,
            hierarchy=h,
            method=config.volumes.method,
            reference_year=config.reference_year if config.reference_year is not None
            else reference_year_of(pd.concat([given, current], ignore_index=True)),
            annual_rate=config.levels_at_annual_rate,
        )
        if config.volumes.method != "annual_overlap" and config.volumes.benchmark_to_years:
            computed = chainlink.benchmark_to_years(computed, hierarchy=h, annual_rate=config.levels_at_annual_rate)
        key = ["economy", "item", "frequency", "year", "quarter"]
        have = given[key].drop_duplicates()
        fresh = computed.merge(have, on=key, how="left", indicator=True)
        fresh = fresh[fresh["_merge"] == "left_only"].drop(columns="_merge")
        _insert_levels(con, fresh, "chain_linked")
        added.append(fresh[LEVEL_COLUMNS])
        both = computed.merge(have, on=key, how="inner")
        if not both.empty:
            cmp = chainlink.compare_chain_linked(given, both)
            _insert_checks(con, _chain_comparison_checks(cmp))
    volumes = pd.concat([given, computed]).drop_duplicates(["economy", "item", "frequency", "year", "quarter"])
    residual = chainlink.nonadditivity_residual(volumes, h, reported=levels[["economy", "item"]].drop_duplicates())
    _insert_levels(con, residual, "residual")
    _insert_checks(
        con,
        residual.assign(rule="nonadditivity_chain_linked", tolerance=float("nan"), status="info")[
            CHECK_COLUMNS
        ],
    )
    log.debug("volumes: %d given, %d chain-linked here, %d residual rows", len(given), len(computed), len(residual))
    return pd.concat([levels, *added, residual[LEVEL_COLUMNS]], ignore_index=True)


def _require_given_volumes(current: pd.DataFrame, given: pd.DataFrame, h) -> None:
    """Under ``[volumes] index = "fisher"`` every positive series of the expenditure hierarchy (or
    a breakdown of one) needs its given chain-linked volume; income items (D1, B2A3G, ...) have
    none."""
    key = ["economy", "item"]
    have = given[key].drop_duplicates()
    need = current[key].drop_duplicates()
    chained = {i for i in pd.unique(need["item"]) if h.anchor(i) is not None and not h.is_sign_changing(i)}
    need = need[need["item"].isin(chained)]
    missing = need.merge(have, on=key, how="left", indicator=True).query("_merge == 'left_only'")
    if len(missing):
        raise InputError([
            Problem(economy=r.economy, item=r.item, price_basis="chain_linked",
                    reason='[volumes] index = "fisher": chain-linked volumes must be given (a Fisher chain '
                           "cannot be built from previous-year prices alone)")
            for r in missing.itertuples(index=False)
        ])


def _rereference_given(given: pd.DataFrame, current: pd.DataFrame, config: Config) -> pd.DataFrame:
    """Given volumes of economies not already referenced to ``reference_year``, re-referenced."""
    from valvol.methods.reference_year import reference_year_of, rereference

    r = config.reference_year
    found = reference_year_of(pd.concat([given, current], ignore_index=True))
    needs = [e for e in pd.unique(given["economy"]) if found.get(e) != r]
    if not needs:
        return pd.DataFrame(columns=LEVEL_COLUMNS)
    return rereference(given[given["economy"].isin(needs)], current[current["economy"].isin(needs)], r,
                       hierarchy=config.hierarchy)


def _chain_comparison_checks(cmp: pd.DataFrame) -> pd.DataFrame:
    status = (cmp["pct_diff"].abs() <= CHAIN_DIFF_WARN_PCT).map({True: "pass", False: "warn"})
    return pd.DataFrame(
        {
            "economy": cmp["economy"],
            "period": cmp["period"],
            "rule": "chain_linked_given_vs_computed_pct",
            "item": cmp["item"],
            "value": cmp["pct_diff"],
            "tolerance": CHAIN_DIFF_WARN_PCT,
            "status": status,
        }
    )


def derive_contributions(con: duckdb.DuckDBPyConnection, config: Config, levels: pd.DataFrame) -> None:
    """Contributions to volume growth and to deflator growth of every declared aggregate.

    ``annual_overlap_exact`` needs previous-year prices and ``prior_year_weights`` and ``fisher`` need
    chain-linked volumes: without them an economy gets no contributions (and a log line),
    never figures built from current prices alone.
    """
    from valvol.methods import contributions, deflator_contributions
    from valvol.methods.panel import zero_fill_components

    levels = zero_fill_components(levels, config.hierarchy)
    convention = config.contributions.convention
    # the UK agency's weighting is a volume convention; prices then follow the exact two-step links
    price_convention = "fisher" if convention == "fisher" else "annual_overlap_exact"
    need = {"annual_overlap_exact": "previous_year", "prior_year_weights": "chain_linked", "fisher": "chain_linked"}
    tables = {
        "int_volume_contributions": (need[convention], lambda lv: contributions.volume_contributions(
            lv, hierarchy=config.hierarchy, convention=convention, annual_rate=config.levels_at_annual_rate)),
        "int_deflator_contributions": (need[price_convention], lambda lv: deflator_contributions.deflator_contributions(
            lv, hierarchy=config.hierarchy, convention=price_convention)),
        "int_income_contributions": ("chain_linked", deflator_contributions.income_side_contributions),
    }
    for statement, (basis, method) in tables.items():
        usable = levels[levels["economy"].isin(pd.unique(levels.loc[levels["price_basis"] == basis, "economy"]))]
        if usable.empty:
            log.debug("%s: no %s values, none computed", statement.removeprefix("int_"), basis)
            rows = pd.DataFrame({c: pd.Series(dtype="float64" if c in _FLOAT else "int64" if c in ("year", "quarter")
                                              else "str") for c in CONTRIBUTION_COLUMNS})
        else:
            rows = method(usable)
        db.register(con, "contribution_rows", rows)
        db.run_sql(con, statement)
        con.unregister("contribution_rows")


CONTRIBUTION_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "aggregate", "item", "horizon",
                        "contribution_pp", "aggregate_growth_pct", "residual_pp"]
_FLOAT = ("contribution_pp", "aggregate_growth_pct", "residual_pp")


def derive_price_gaps(con: duckdb.DuckDBPyConnection, config: Config, levels: pd.DataFrame,
                      indexes: pd.DataFrame | None = None) -> None:
    """Terms of trade, trading gain, real GDI, deflator gaps and the CPI against household prices."""
    from valvol.methods import price_gaps

    cpi = None
    if indexes is not None and indexes["item"].eq("CPI").any():
        cpi = indexes[indexes["item"] == "CPI"][["economy", "item", "price_basis", "frequency", "year", "quarter",
                                                  "month", "value"]]
    gaps = price_gaps.price_gaps(levels, hierarchy=config.hierarchy, numeraire=config.price_gaps.numeraire,
                                 cpi=cpi, reference_year=config.reference_year)
    db.register(con, "gap_rows", gaps)
    db.run_sql(con, "int_price_gaps")
    con.unregister("gap_rows")


def derive_price_bridge(con: duckdb.DuckDBPyConnection, config: Config, levels: pd.DataFrame,
                        indexes: pd.DataFrame | None = None) -> None:
    """The CPI-to-household-deflator bridge and its item contributions (`valvol.methods.price_bridge`)."""
    from valvol.methods import price_bridge
    from valvol.methods.price_gaps import index_levels

    b = config.price_bridge
    bridge, items = price_bridge._empty(price_bridge.BRIDGE_COLUMNS), price_bridge._empty(price_bridge.ITEM_COLUMNS)
    if indexes is not None and len(indexes):
        subs = price_bridge.breakdown_code(indexes["item"], b.headline).notna()
        values = indexes[(indexes["item"].eq(b.headline) | subs) & indexes["price_basis"].eq("index")]
        weights = indexes[subs & indexes["price_basis"].eq(price_bridge.WEIGHT_BASIS)]
        if len(weights):
            cols = ["economy", "item", "price_basis", "frequency", "year", "quarter", "month", "value"]
            means = index_levels(values[cols], tuple(pd.unique(values["item"])), label=b.headline)
            bridge, items = price_bridge.price_bridge(
                means, weights[["economy", "item", "year", "value"]], levels, headline=b.headline,
                accounts=b.accounts, pairs=config.price_bridge.pair_tuples())
    for name, rows in (("bridge_rows", bridge), ("bridge_item_rows", items)):
        db.register(con, name, rows.astype({"year": "int64", "quarter": "int64"}))
    db.run_sql(con, "int_price_bridge")
    db.run_sql(con, "int_price_bridge_items")
    con.unregister("bridge_rows")
    con.unregister("bridge_item_rows")
