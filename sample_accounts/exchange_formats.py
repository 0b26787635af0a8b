"""The demo accounts of Quillon (XQ, invented) in the exchange formats valvol reads.

Writes, from ``accounts.csv`` and ``cpi.csv`` of this folder (deterministically; the values are
the same numbers):

* ``sdmx/accounts.csv``: an SDMX-CSV file (SDMX 2.1 layout, ``DATAFLOW`` column) as a download of
  the national-accounts structure would look, with every dimension of it; ``sdmx/cpi.csv`` the
  CPI in the long form;
* ``wide/accounts.xlsx``: an office's workbook, a ``Quarterly`` sheet (a title, one row per
  series in blocks by price basis with blank rows between them, the economy merged down each
  block, footnotes below), a ``CPI`` sheet (one column per month) and a ``Notes`` sheet;
* ``wide_csv/accounts.csv``: the same series in a wide CSV file, ``wide_csv/cpi.csv`` the CPI.

Each folder gets a copy of ``valvol.toml``: rebuilt, each gives the tables of this folder.
Run: ``python sample_accounts/exchange_formats.py``.
"""

from __future__ import annotations

import shutil
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

FOLDER = Path(__file__).resolve().parent
#: Invented dataflow of Quillon's statistical office (agency QSO).
DATAFLOW = "QSO:DF_NAMAIN_Q(1.0)"
PRICES = {"current": "V", "previous_year": "Y", "chain_linked": "L"}
DIMENSIONS = ["FREQ", "ADJUSTMENT", "REF_AREA", "COUNTERPART_AREA", "REF_SECTOR", "COUNTERPART_SECTOR",
              "ACCOUNTING_ENTRY", "STO", "INSTR_ASSET", "ACTIVITY", "EXPENDITURE", "UNIT_MEASURE", "PRICES",
              "TRANSFORMATION"]
TITLE = "Republic of Quillon: quarterly GDP by expenditure (invented data)"
NOTES = ["Source: Statistical Office of Quillon (invented for the valvol demo).",
         "Values in tessel million, seasonally adjusted; chain-linked volumes with reference year 2020."]


def read(name: str) -> pd.DataFrame:
    return pd.read_csv(FOLDER / name, dtype=str, keep_default_na=False)


def to_sdmx(accounts: pd.DataFrame) -> pd.DataFrame:
    """The long accounts as SDMX-CSV observations (codes of the SDMX national-accounts lists)."""
    split = accounts["item"].str.extract(r"^(?P<sto>.+?)(?:_(?P<sector>S1[0-9]+))?$")
    sto, sector = split["sto"], split["sector"].fillna("S1")
    out = pd.DataFrame({
        "DATAFLOW": DATAFLOW,
        "FREQ": "Q",
        "ADJUSTMENT": accounts["adjustment"],
        "REF_AREA": accounts["economy"],
        "COUNTERPART_AREA": np.where(sto.isin(["P6", "P7"]), "W1", "W0"),
        "REF_SECTOR": sector,
        "COUNTERPART_SECTOR": "S1",
        "ACCOUNTING_ENTRY": np.select([sto.str.startswith("B"), sto.isin(["P7", "D1", "D2X3"])], ["B", "C"], "D"),
        "STO": sto,
        "INSTR_ASSET": np.where(sto == "P51G", "N11G", "_Z"),
        "ACTIVITY": "_Z",
        "EXPENDITURE": "_Z",
        "UNIT_MEASURE": "XDC",
        "PRICES": accounts["price_basis"].map(PRICES),
        "TRANSFORMATION": "N",
        "TIME_PERIOD": accounts["period"],
        "OBS_VALUE": accounts["value"],
        "UNIT_MULT": "6",
        "OBS_STATUS": "A",
        "CONF_STATUS": "F",
        "DECIMALS": "1",
    })
    return out


def wide(accounts: pd.DataFrame) -> pd.DataFrame:
    """One row per series (blocks by price basis, items in file order), one column per period."""
    keys = ["economy", "item", "price_basis", "adjustment", "unit"]
    order = {b: i for i, b in enumerate(["current", "previous_year", "chain_linked", "index"])}
    frame = accounts.pivot(index=keys, columns="period", values="value").fillna("")
    items = {item: i for i, item in enumerate(dict.fromkeys(accounts["item"]))}
    frame = frame.reset_index()
    frame = frame.iloc[np.lexsort((frame["item"].map(items), frame["price_basis"].map(order)))]
    return frame.reset_index(drop=True)


def write_workbook(accounts: pd.DataFrame, cpi: pd.DataFrame, path: Path) -> None:
    """The office's workbook (fixed document dates, so that rewriting it changes nothing but the zip times)."""
    from openpyxl import Workbook

    book = Workbook()
    sheet = book.active
    sheet.title = "Quarterly"
    table = wide(accounts)
    sheet.append([TITLE])
    sheet.append([])
    sheet.append(list(table.columns))
    row = 4
    for _, block in table.groupby("price_basis", sort=False):
        first = row
        for values in block.itertuples(index=False):
            sheet.append([v if i < 5 else float(v) if v else None for i, v in enumerate(values)])
            row += 1
        sheet.merge_cells(start_row=first, start_column=1, end_row=row - 1, end_column=1)
        sheet.append([])
        row += 1
    for note in NOTES:
        sheet.append([note])
    index = wide(cpi)
    monthly = book.create_sheet("CPI")
    monthly.append(list(index.columns))
    for values in index.itertuples(index=False):
        monthly.append([v if i < 5 else float(v) for i, v in enumerate(values)])
    notes = book.create_sheet("Notes")
    for note in [TITLE, *NOTES]:
        notes.append([note])
    book.properties.created = book.properties.modified = datetime(2026, 1, 15, 9, 0, 0)
    book.save(path)


def main(folder: Path = FOLDER) -> None:
    accounts, cpi = read("accounts.csv"), read("cpi.csv")
    for sub in ("sdmx", "wide", "wide_csv"):
        (folder / sub).mkdir(exist_ok=True)
        shutil.copyfile(FOLDER / "valvol.toml", folder / sub / "valvol.toml")
    to_sdmx(accounts).to_csv(folder / "sdmx" / "accounts.csv", index=False, lineterminator="\n")
    shutil.copyfile(FOLDER / "cpi.csv", folder / "sdmx" / "cpi.csv")
    write_workbook(accounts, cpi, folder / "wide" / "accounts.xlsx")
    wide(accounts).to_csv(folder / "wide_csv" / "accounts.csv", index=False, lineterminator="\n")
    wide(cpi).to_csv(folder / "wide_csv" / "cpi.csv", index=False, lineterminator="\n")


if __name__ == "__main__":
    main()
