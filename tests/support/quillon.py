"""The demo economy's files, constants and helpers, shared by the tests in tests/sample_accounts.

The demo is the invented Republic of Quillon (economy XQ, currency the tessel), built by
``sample_accounts/generate.py``; the fixtures that read its files are in
``tests/sample_accounts/conftest.py``.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
FOLDER = ROOT / "sample_accounts"
GENERATOR = FOLDER / "generate.py"
ACCOUNTS = FOLDER / "accounts.csv"
EARLIER_FOLDER = FOLDER / "earlier_release"
EARLIER = EARLIER_FOLDER / "accounts.csv"
CPI = FOLDER / "cpi.csv"
EARLIER_CPI = EARLIER_FOLDER / "cpi.csv"
FLASH_FOLDER = FOLDER / "first_estimate"
FLASH_ACCOUNTS = FLASH_FOLDER / "accounts.csv"
FLASH_BENCHMARKS = FLASH_FOLDER / "annual" / "benchmarks.csv"

COLUMNS = ["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]
COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7", "YA1"]
AGGREGATES = {
    "P3": {"P31_S14": 1, "P3_S15": 1, "P3_S13": 1},
    "P5": {"P51G": 1, "P52": 1, "P53": 1},
    "B1GQ": {"P3": 1, "P5": 1, "P6": 1, "P7": -1, "YA1": 1},
}
#: Number of rounded elementary components inside each item (bounds on accumulated rounding).
LEAVES = {"P3": 3, "P5": 3, "B1GQ": 9}
CHAINED = ["P31_S14", "P3_S15", "P3_S13", "P3", "P51G", "P5", "P6", "P7", "B1GQ"]
SIGN_CHANGING = ["P52", "P53", "YA1"]
INCOME = ["D1", "B2A3G", "D2X3"]  # published at current prices only
ROUND_Q = 0.05  # half a unit of the published last decimal, one quarter
ROUND_A = 4 * ROUND_Q  # four rounded quarters in a year


def load_generator():
    spec = importlib.util.spec_from_file_location("xq_demo_generate", GENERATOR)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def deflator_growth(annual: pd.DataFrame, item: str, year: int) -> float:
    """Annual implicit deflator growth, % (docs/methods.md section 1: D = 100*C/CLV, value-weighted)."""
    a = annual.loc[item]
    d = a["current"] / a["chain_linked"]
    return 100.0 * (d.loc[year] / d.loc[year - 1] - 1.0)


def tolerance(item: str) -> float:
    """Worst-case rounding of an annual value at current or previous-year prices."""
    return ROUND_A * LEAVES.get(item, 1)


REVISED = ["2024-Q3", "2024-Q4", "2025-Q1", "2025-Q2", "2025-Q3"]


POSITIVE = ["P31_S14", "P3_S15", "P3_S13", "P3", "P6", "P7", "B1GQ"]  # without investment P51G, P5


def wide_basis(frame: pd.DataFrame, basis: str) -> pd.DataFrame:
    rows = frame[frame["price_basis"] == basis]
    return rows.pivot(index="period", columns="item", values="value")


def qoq(frame: pd.DataFrame, item: str, basis: str = "chain_linked") -> pd.Series:
    """Quarter-on-quarter growth, % (docs/methods.md section 4, growth of a chain-linked volume)."""
    s = wide_basis(frame, basis)[item]
    return 100.0 * (s / s.shift(1) - 1.0)


#: sha256 of the header and expenditure rows of each accounts.csv, as committed before the income
#: rows were appended after them (common practice: a regression pin on committed data).
EXPENDITURE_SHA256 = {
    "accounts.csv": "007d7315596c27f1302d0e8dc2692d3ffece54a971a1413f87e0daa039b4a520",
    "earlier_release/accounts.csv": "42216df64215b432faded5563e6667af0db617cc19b6e4fd680ea05325d423b3",
}


def unit_incomes(annual: pd.DataFrame) -> tuple[pd.Series, pd.DataFrame]:
    """Annual GDP deflator D = Y/X and unit incomes U_k = income_k/X, X the chain-linked GDP (docs/methods.md §4.2)."""
    real = annual.loc["B1GQ", "chain_linked"]
    current = annual["current"].unstack("item")
    return current["B1GQ"] / real, current[INCOME].div(real, axis=0)


def income_contributions(annual: pd.DataFrame) -> pd.DataFrame:
    """ctr_k = 100 (U_k,t - U_k,t-1) / D_t-1, pp (docs/methods.md §4.2, level form)."""
    deflator, units = unit_incomes(annual)
    return 100.0 * units.diff().div(deflator.shift(1), axis=0)


CPI_COLUMNS_FIXED = {
    "economy": "XQ",
    "item": "CPI",
    "price_basis": "index",
    "adjustment": "N",
    "unit": "index 2020=100",
}


def months(last: str) -> list[str]:
    return [f"{y}-{m:02d}" for y in range(2012, 2026) for m in range(1, 13) if f"{y}-{m:02d}" <= last]


def cpi_quarterly(frame: pd.DataFrame) -> pd.Series:
    """Quarterly CPI: the mean of the three monthly levels (docs/methods.md §6 [MEMORY, common practice])."""
    month = frame["period"].str[5:7].astype("int64")
    label = frame["period"].str[:4] + "-Q" + ((month + 2) // 3).astype(str)
    return frame.groupby(label)["value"].mean()


FLASH_COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7"]


FLASH_SIGNS = {item: -1 if item == "P7" else 1 for item in FLASH_COMPONENTS}


INDICATOR_BASED = ["P31_S14", "P3_S15", "P51G", "P6", "P7"]  # carried forward with an indicator


FLASH_Q = [f"2025-Q{q}" for q in range(1, 5)]
