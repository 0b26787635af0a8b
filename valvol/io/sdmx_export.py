"""SDMX-CSV out: any published table of a vintage as an SDMX-CSV file (``valvol export``).

The file follows SDMX-CSV of SDMX 3.0: ``STRUCTURE`` (``dataflow``), ``STRUCTURE_ID``
(``VALVOL:<TABLE>(1.0)``, our own agency and one dataflow per table) and ``ACTION`` (``I``,
information), then the dimensions, ``TIME_PERIOD``, ``OBS_VALUE`` and the attributes. Columns
of a table become:

=====================  ==============================================================
table column           SDMX-CSV column
=====================  ==============================================================
``frequency``          ``FREQ`` (``Q``, ``A``; from the period where a table has none)
``economy``            ``REF_AREA``
``item``               ``STO`` and ``REF_SECTOR``: ``P31_S14`` -> ``P31`` + ``S14``; an
                       item without a sector suffix gets ``S1`` (total economy)
``price_basis``        ``PRICES``: ``current`` V, ``previous_year`` Y, ``chain_linked`` L
other text key         a dimension of the same name in upper case (``MEASURE``, ``HORIZON``,
                       ``AGGREGATE``, ``RULE``, ``STEP``)
``period``             ``TIME_PERIOD``
the table's measure    ``OBS_VALUE`` (``value``, ``deflator``, ``pct``, ``contribution_pp``,
                       ``adjustment``, ``revision`` or ``mr``: the first the table has)
other columns          attributes of the same name in upper case (``AGGREGATE_GROWTH_PCT``,
                       ``RESIDUAL_PP``, ``TOLERANCE``, ``STATUS``, ...)
=====================  ==============================================================

Numbers are written with the shortest text that reads back as the same double; a missing
number is an empty cell.

**Levels read back as accounts.** The levels table holds the accounts as given and what valvol
derived from them. So that an exported levels file is an accounts folder that rebuilds to the
same tables, each derived observation carries the attribute ``VALVOL_DERIVED`` (empty on the
values as given), which the SDMX-CSV reader skips (with a logged count): valvol derives them
again. What was given is read from the vintage's own checks, which exist only for given values:

* ``residual``: the non-additivity residual of an aggregate (items ``<AGGREGATE>_RESIDUAL``);
* ``annual``: a year of a series with quarters in it and no ``annual_vs_quarters_<basis>`` check
  (a year given beside its quarters is checked against them);
* ``aggregate``: an aggregate at current or previous-year prices whose components are all there
  and that has no ``identity_<basis>`` check;
* ``chain_linked``: a chain-linked volume beside previous-year prices with no
  ``chain_linked_given_vs_computed_pct`` check (it was chained by valvol).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd

from valvol.errors import ConfigError

AGENCY = "VALVOL"
PRICES_OUT = {"current": "V", "previous_year": "Y", "chain_linked": "L", "volume_index": "L", "price_index": "D"}
#: The measure written as OBS_VALUE: the first of these a table has.
MEASURES = ("value", "deflator", "pct", "contribution_pp", "adjustment", "revision", "mr")
#: Text columns that are keys of a published table (dimensions); other text columns are attributes.
KEY_TEXT = ("measure", "horizon", "aggregate", "rule", "step")


def table_to_sdmx(table: pd.DataFrame, name: str) -> pd.DataFrame:
    """One published table as SDMX-CSV (3.0) columns, rows in the table's order."""
    n = len(table)
    out: dict[str, object] = {"STRUCTURE": "dataflow", "STRUCTURE_ID": f"{AGENCY}:{name.upper()}(1.0)",
                              "ACTION": "I"}
    if "frequency" in table:
        out["FREQ"] = table["frequency"].to_numpy()
    elif "period" in table:
        period = table["period"].astype("str")
        out["FREQ"] = np.select([period.str.contains("Q"), period.str.fullmatch(r"\d{4}")], ["Q", "A"], "_Z")
    if "economy" in table:
        out["REF_AREA"] = table["economy"].to_numpy()
    for col in KEY_TEXT:
        if col in table:
            out[col.upper()] = table[col].to_numpy()
    if "item" in table:
        split = table["item"].astype("str").str.extract(r"^(?P<sto>.+?)(?:_(?P<sector>S1[0-9A-Z_]*))?$")
        out["STO"] = split["sto"].to_numpy()
        out["REF_SECTOR"] = split["sector"].fillna("S1").to_numpy()
    if "price_basis" in table:
        out["PRICES"] = table["price_basis"].map(PRICES_OUT).fillna(table["price_basis"]).to_numpy()
    if "period" in table:
        out["TIME_PERIOD"] = table["period"].to_numpy()
    measure = next((m for m in MEASURES if m in table), None)
    if measure is not None:
        out["OBS_VALUE"] = table[measure].to_numpy()
    used = {"frequency", "economy", "item", "price_basis", "period", measure, *KEY_TEXT}
    for col in table.columns:
        if col not in used:
            values = table[col]
            if values.dtype == bool or str(values.dtype) == "boolean":
                values = values.map({True: "true", False: "false"})
            out[col.upper()] = values.to_numpy()
    return pd.DataFrame(out, index=pd.RangeIndex(n))


DERIVED = "VALVOL_DERIVED"


def derived_marks(levels: pd.DataFrame, checks: pd.DataFrame, aggregates: dict[str, list[str]]) -> np.ndarray:
    """``VALVOL_DERIVED`` of each levels row: why valvol derived it, or "" where it was given.

    Column-wise merges of the levels with the checks that exist only for given values.
    """
    key = ["economy", "item", "period"]
    lv = levels[["economy", "item", "price_basis", "period", "frequency"]].reset_index(drop=True)
    year = lv["period"].str.slice(0, 4)
    mark = pd.Series("", index=lv.index, dtype="object")

    def checked(rule: pd.Series) -> np.ndarray:
        """Has the check named ``rule`` (one per row) for the row's economy, item and period?"""
        have = checks[["economy", "item", "period", "rule"]].drop_duplicates().assign(_hit=True)
        probe = lv[key].assign(rule=rule.to_numpy())
        return probe.merge(have, on=[*key, "rule"], how="left")["_hit"].fillna(False).to_numpy(dtype=bool)

    mark[lv["item"].str.endswith("_RESIDUAL")] = "residual"
    quarterly = lv[lv["frequency"] == "Q"].assign(year=year).drop_duplicates(["economy", "item", "price_basis", "year"])
    with_quarters = lv.assign(year=year).merge(quarterly[["economy", "item", "price_basis", "year"]].assign(_q=True),
                                               on=["economy", "item", "price_basis", "year"], how="left")["_q"]
    annual = (lv["frequency"] == "A") & with_quarters.fillna(False).to_numpy(dtype=bool)
    annual &= ~checked("annual_vs_quarters_" + lv["price_basis"])
    mark[annual & (mark == "")] = "annual"
    components = pd.DataFrame([(a, c.lstrip("+-")) for a, comps in aggregates.items() for c in comps],
                              columns=["item", "component"])
    if not components.empty:
        present = lv[["economy", "item", "price_basis", "period"]].rename(columns={"item": "component"})
        need = lv.reset_index().merge(components, on="item")
        need = need.merge(present.assign(_c=True), on=["economy", "component", "price_basis", "period"], how="left")
        complete = need.assign(_ok=need["_c"].notna()).groupby("index")["_ok"].all()
        whole = pd.Series(False, index=lv.index)
        whole[complete.index] = complete.to_numpy(dtype=bool)
        agg = whole.to_numpy() & lv["price_basis"].isin(["current", "previous_year"]).to_numpy()
        agg &= ~checked("identity_" + lv["price_basis"])
        mark[agg & (mark == "")] = "aggregate"
    pyp = lv[lv["price_basis"] == "previous_year"][key].assign(_p=True)
    beside = lv[key].merge(pyp, on=key, how="left")["_p"].fillna(False).to_numpy(dtype=bool)
    chained = (lv["price_basis"] == "chain_linked").to_numpy() & beside
    chained &= ~checked(pd.Series("chain_linked_given_vs_computed_pct", index=lv.index))
    mark[chained & (mark == "")] = "chain_linked"
    return mark.to_numpy()


def export_vintage(out_dir: str | Path, to: str | Path, *, vintage: str | None = None,
                   tables: list[str] | None = None, fmt: str = "sdmx-csv") -> list[Path]:
    """Write the tables of a vintage of ``out_dir`` (default latest) as ``to/<table>.csv``.

    ``tables`` default: every table of the vintage. ``to`` must lie outside the output root
    (vintages stay as published). Returns the files written.
    """
    from valvol.vintages import resolve

    if fmt != "sdmx-csv":
        raise ConfigError(f"--format: {fmt!r} is not a format valvol writes (sdmx-csv)")
    out_dir, to = Path(out_dir), Path(to)
    chosen = resolve(out_dir, vintage)
    if to.resolve().is_relative_to(out_dir.resolve()):
        raise ConfigError(f"--to: {to} lies inside the output folder {out_dir}; choose a folder outside it")
    present = sorted(p.stem for p in chosen.path.glob("*.parquet"))
    names = list(dict.fromkeys(tables)) if tables else present
    unknown = [t for t in names if t not in present]
    if unknown:
        raise ConfigError(f"--table: no table {', '.join(unknown)} in vintage {chosen.name}; tables: "
                          f"{', '.join(present)}")
    try:
        to.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ConfigError(f"--to: folder {to} cannot be created: {exc.strerror or exc}") from None
    written = []
    for name in names:
        table = pd.read_parquet(chosen.path / f"{name}.parquet")
        if name == "levels" and (chosen.path / "checks.parquet").exists():
            manifest = json.loads((chosen.path / "manifest.json").read_text())
            table[DERIVED.lower()] = derived_marks(table, pd.read_parquet(chosen.path / "checks.parquet"),
                                                   manifest.get("config", {}).get("aggregates", {}))
        frame = table_to_sdmx(table, name)
        target = to / f"{name}.csv"
        tmp = to / f".{name}.csv.tmp"
        frame.to_csv(tmp, index=False, lineterminator="\n")
        os.replace(tmp, target)
        written.append(target)
    return written
