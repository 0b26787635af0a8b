"""SDMX-CSV in: a downloaded file of observations becomes rows of the long input form.

SDMX-CSV (the CSV format of SDMX 2.1, "version 1.0", and of SDMX 3.0, "version 2.0") has one
row per observation: a structure column (``DATAFLOW``; or ``STRUCTURE`` and ``STRUCTURE_ID``,
optionally ``ACTION``), one column per dimension, ``TIME_PERIOD``, ``OBS_VALUE`` and then the
attributes (``OBS_STATUS``, ``CONF_STATUS``, ``UNIT_MULT``, ``DECIMALS``, ...). The columns
before ``OBS_VALUE`` (``TIME_PERIOD`` aside) are the dimensions, those after it the
attributes, as the format lays them out. With ``labels=both`` a header or a cell reads
``CODE: label``; the code before the colon is used. A cell that is only a label (no code) is
not guessed: it fails as the code it is not, located.

The dimensions of the national-accounts structure of the SDMX global code lists map as
``[sdmx]`` of ``valvol.toml`` says (`valvol.io.formats.SdmxConfig`; the defaults need no
mapping):

* economy <- ``REF_AREA``;
* item <- ``STO`` joined by ``_`` with ``REF_SECTOR`` (``P31`` + ``S14`` -> ``P31_S14``; the
  totals ``S1``, ``_Z``, ``_T``, ``_X`` add nothing: ``B1GQ`` + ``S1`` -> ``B1GQ``);
* price_basis <- ``PRICES`` (and ``UNIT_MEASURE`` for indexes) through ``[sdmx.prices]``;
* adjustment <- ``ADJUSTMENT``; unit <- ``UNIT_MEASURE`` with the multiplier ``UNIT_MULT``
  written out (``XDC`` and 6 -> ``XDC million``), or values scaled (``unit_mult = 6``);
* ``COUNTERPART_AREA``, ``COUNTERPART_SECTOR``, ``ACCOUNTING_ENTRY`` are implied by the
  transaction and not read; any other dimension (``INSTR_ASSET``, ``ACTIVITY``,
  ``EXPENDITURE``, ``TRANSFORMATION``, ...) must hold a total or not-applicable code.

Every observation that cannot be mapped (a price code without a basis, a breakdown no setting
names, a frequency that contradicts its period, a deletion row) is a located problem naming
file, row, series and period, once per series; nothing is dropped silently. Observations whose
value is missing and flagged so (``OBS_STATUS`` ``M``, empty ``OBS_VALUE``) are no observations:
they are skipped with a logged count. All of it is column-wise pandas work; no loop per row.
"""

from __future__ import annotations

import logging
import re

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from valvol.errors import Problem, found
from valvol.io.formats import SdmxConfig

log = logging.getLogger("valvol")

STRUCTURE_21 = ("DATAFLOW",)
STRUCTURE_30 = ("STRUCTURE", "STRUCTURE_ID", "ACTION")
#: Attributes consumed here (the multiplier, the number of decimals, the time format).
CONSUMED = ("UNIT_MULT", "DECIMALS", "TIME_FORMAT")
#: Frequencies and the periods they allow (valvol reads years, quarters and, for price indexes, months).
FREQ_PERIODS = {"A": r"^\d{4}$", "Q": r"^\d{4}-?Q[1-4]$", "M": r"^\d{4}-\d{2}$"}
#: Price bases in money terms (a multiplier applies to them; indexes have none).
MONEY = ("current", "previous_year", "chain_linked")
#: Multipliers written as words in the unit text (common practice).
MULT_WORDS = {0: "", 3: "thousand", 6: "million", 9: "billion", 12: "trillion"}
#: The code part of a ``CODE: label`` header or cell.
_LABELLED = re.compile(r"^\s*([A-Za-z0-9_@$\-]+)\s*:\s.*$", re.DOTALL)


def header_code(text: str) -> str:
    """The SDMX identifier of a header cell (``"FREQ: Frequency"`` -> ``"FREQ"``), upper case."""
    m = _LABELLED.match(str(text))
    return (m.group(1) if m else str(text)).strip().upper()


def sdmx_version(header: list[str]) -> str | None:
    """``"2.1"`` (a ``DATAFLOW`` column first), ``"3.0"`` (``STRUCTURE`` and ``STRUCTURE_ID``) or None."""
    codes = [header_code(h) for h in header]
    if codes[:1] == ["DATAFLOW"]:
        return "2.1"
    if codes[:2] == ["STRUCTURE", "STRUCTURE_ID"]:
        return "3.0"
    return None


def _codes(cells: pd.Series) -> pd.Series:
    """Cells as codes: ``CODE: label`` -> ``CODE`` (only where the form is met; others as written)."""
    if not cells.str.contains(":", regex=False).any():
        return cells
    code = cells.str.extract(_LABELLED, expand=False)
    return code.fillna(cells)


def sdmx_to_long(df: pd.DataFrame, name: str, cfg: SdmxConfig) -> tuple[pd.DataFrame | None, list[Problem]]:
    """The observations of an SDMX-CSV frame (text, ``source_row`` first) as long raw rows.

    Returns a frame with ``source_row, economy, period, item, price_basis, value, adjustment,
    unit`` and the attributes in lower case (``obs_status``, ...; carried or dropped by the
    reader as ``carry_columns`` says), without the rows that cannot be mapped, and the problems.
    """
    header = list(df.columns[1:])
    codes = [header_code(h) for h in header]
    repeated = sorted({c for c in codes if codes.count(c) > 1})
    if repeated:
        return None, [Problem(file=name, row=1, reason=f"SDMX-CSV column(s) {', '.join(repeated)} appear more "
                              "than once")]
    for needed in ("TIME_PERIOD", "OBS_VALUE"):
        if needed not in codes:
            return None, [Problem(file=name, row=1, reason=f"SDMX-CSV file without a {needed} column")]
    cols = dict(zip(codes, header, strict=True))
    text = pd.DataFrame({c: df[h].astype("str").str.strip() for c, h in cols.items()})
    at_value = codes.index("OBS_VALUE")
    structure = set(STRUCTURE_21 + STRUCTURE_30)
    dims = [c for c in codes[:at_value] if c not in structure and c != "TIME_PERIOD"]
    attrs = [c for c in codes[at_value + 1:] if c != "TIME_PERIOD"]
    for c in dims + attrs:
        text[c] = _codes(text[c])
    rows = df["source_row"].to_numpy()
    problems: list[Problem] = []
    missing = [d for d in (cfg.economy, cfg.item[0], cfg.prices_dimension) if d not in dims]
    if missing:
        return None, [Problem(file=name, row=1, reason=f"SDMX-CSV file without the dimension(s) {', '.join(missing)} "
                              f"(dimensions found: {', '.join(dims) or 'none'}); name the dimensions that give the "
                              "economy, item and price basis in [sdmx] of valvol.toml")]
    out = pd.DataFrame({"source_row": rows, "economy": text[cfg.economy], "period": text["TIME_PERIOD"]})
    item = text[cfg.item[0]]
    for d in cfg.item[1:]:
        if d in dims:
            part = text[d]
            item = item.where(part.isin(cfg.totals) | (part == ""), item + "_" + part)
    out["item"] = item
    keep = np.ones(len(df), dtype=bool)

    def report(bad: np.ndarray, reason_of) -> None:
        """One problem per series and reason, at its first bad row (never one per observation)."""
        nonlocal keep
        if not bad.any():
            return
        keep &= ~bad
        hit = out[bad].assign(reason_=reason_of(bad).to_numpy())
        by = [c for c in ("economy", "item", "price_basis") if c in hit] + ["reason_"]
        hit = hit.assign(n_=hit.groupby(by, sort=False)["source_row"].transform("size")).drop_duplicates(by)
        for r in hit.to_dict("records"):
            more = f" ({r['n_']} observations)" if r["n_"] > 1 else ""
            problems.append(Problem(file=name, row=int(r["source_row"]), economy=r["economy"], item=r["item"],
                                    period=r["period"], price_basis=r.get("price_basis", ""),
                                    reason=f"{r['reason_']}{more}"))

    # price basis: PRICES:UNIT_MEASURE first, then PRICES alone
    prices = text[cfg.prices_dimension]
    unit_code = text[cfg.unit] if cfg.unit in dims + attrs else pd.Series("", index=text.index)
    pm = cfg.price_map
    basis = (prices + ":" + unit_code).map(pm).fillna(prices.map(pm))
    report(basis.isna().to_numpy(), lambda b: (f"{cfg.prices_dimension} " + prices[b].map(found)
                                               + (" with " + cfg.unit + " " + unit_code[b].map(found)).where(
                                                   unit_code[b] != "", "")
                                               + " is not mapped to a price basis; add it to [sdmx.prices] of "
                                                 "valvol.toml (e.g. V = \"current\")"))
    out["price_basis"] = basis.fillna("")
    # every other dimension must be a total, implied by the transaction, or read above
    used = {cfg.economy, *cfg.item, cfg.prices_dimension, cfg.adjustment, cfg.unit, "FREQ", *cfg.implied}
    for d in dims:
        if d in used:
            continue
        cells = text[d]
        bad = (~cells.isin(cfg.totals) & (cells != "")).to_numpy()
        report(bad, lambda b, d=d, cells=cells: (f"{d} " + cells[b].map(found) + f" is not mapped: list {d} in "
                                                 "[sdmx] item (to make it part of the item code) or the code in "
                                                 "[sdmx] totals"))
    # frequency against period
    if "FREQ" in dims:
        freq = text["FREQ"]
        ok = pd.Series(False, index=text.index)
        for code, pattern in FREQ_PERIODS.items():
            ok |= (freq == code) & text["TIME_PERIOD"].str.match(pattern)
        report((~ok).to_numpy(), lambda b: ("FREQ " + freq[b].map(found) + " does not fit TIME_PERIOD "
                                            + text["TIME_PERIOD"][b].map(found)
                                            + " (valvol reads A with YYYY, Q with YYYY-Qn, M with YYYY-MM)"))
    if "ACTION" in codes:
        action = text["ACTION"]
        report((action == "D").to_numpy(), lambda b: pd.Series("ACTION 'D' (delete) rows carry no accounts; "
                                                               "download the data without deletions",
                                                               index=text.index[b]))
    # value and unit multiplier
    value = text["OBS_VALUE"]
    mult = pd.Series(0, index=text.index, dtype="int64")
    if "UNIT_MULT" in attrs:
        raw_mult = text["UNIT_MULT"]
        parsed = pd.to_numeric(raw_mult.where(raw_mult != "", "0"), errors="coerce")
        bad = (parsed.isna() | (parsed != parsed.round()) | (parsed.abs() > 15)).to_numpy()
        report(bad, lambda b: "UNIT_MULT " + raw_mult[b].map(found) + " is not a power of ten (a whole number)")
        mult = parsed.fillna(0).round().astype("int64")
    money = out["price_basis"].isin(MONEY).to_numpy()  # indexes carry no multiplier that matters
    if cfg.unit_mult == "keep":
        pick = keep & money
        counts = pd.DataFrame({"economy": out["economy"][pick], "mult": mult[pick]}).value_counts()
        common = (counts.reset_index().sort_values(["economy", "count", "mult"], ascending=[True, False, True],
                                                   kind="mergesort")
                  .drop_duplicates("economy").set_index("economy")["mult"])  # the most common, ties: the smallest
        other = (mult != out["economy"].map(common).fillna(mult)).to_numpy() & pick
        report(other, lambda b: ("UNIT_MULT " + mult[b].astype("str") + " where the economy's other series have "
                                 + out["economy"][b].map(common).astype("int64").astype("str")
                                 + ": values would not add up; set [sdmx] unit_mult to the power of ten to scale "
                                   "them to (e.g. 6)"))
        words = mult.map(MULT_WORDS).fillna("x10^" + mult.astype("str"))
        unit = (unit_code + " " + words.where(money, "")).str.strip()
    else:
        numbers = pd.to_numeric(value, errors="coerce")
        scaled = numbers * np.power(10.0, (mult - int(cfg.unit_mult)).to_numpy())
        as_text = pc.cast(pa.array(scaled.to_numpy()), pa.string()).to_numpy(zero_copy_only=False)  # shortest text
        value = pd.Series(as_text, index=value.index).where(numbers.notna() & money, value)
        words = MULT_WORDS.get(int(cfg.unit_mult), f"x10^{cfg.unit_mult}")
        unit = (unit_code + " " + words).str.strip().where(money, unit_code)
    out["value"] = value
    out["adjustment"] = text[cfg.adjustment] if cfg.adjustment in dims + attrs else ""
    out["unit"] = unit
    for a in attrs:
        if a not in CONSUMED and a != cfg.unit and a != cfg.adjustment:
            out[a.lower()] = text[a]
    # observations valvol derived (an exported levels table, valvol.io.sdmx_export): derived again
    if "VALVOL_DERIVED" in attrs:
        derived = (text["VALVOL_DERIVED"] != "").to_numpy() & keep
        if derived.any():
            log.info("%s: %d observation(s) marked VALVOL_DERIVED skipped (valvol derives them again)", name,
                     int(derived.sum()))
            keep &= ~derived
        out = out.drop(columns="valvol_derived")
    # observations flagged missing with no value: no observation
    if "OBS_STATUS" in attrs:
        absent = ((text["OBS_STATUS"] == "M") & value.isin(["", "NaN", "NA"])).to_numpy() & keep
        if absent.any():
            log.warning("%s: %d observation(s) marked missing (OBS_STATUS M, no value) skipped", name,
                        int(absent.sum()))
            keep &= ~absent
    return out[keep].reset_index(drop=True), problems


def looks_like_sdmx(header: list[str]) -> str:
    """A hint for a file that is refused for missing columns but looks like SDMX-CSV (else "")."""
    codes = {header_code(h) for h in header}
    if {"TIME_PERIOD", "OBS_VALUE"} <= codes:
        return ("; it looks like SDMX-CSV but its first column is neither DATAFLOW nor STRUCTURE "
                "(then STRUCTURE_ID): download it as SDMX-CSV with the structure column")
    return ""
