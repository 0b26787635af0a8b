"""The one internal table shape every method reads and writes: the *levels panel*.

A levels panel is a long pandas DataFrame, one row per value, with columns

============  =========  ====================================================
column        dtype      meaning
============  =========  ====================================================
economy       str        economy code, ``[A-Z0-9_]{2,16}``
item          str        SNA 2008 / SDMX transaction code (B1GQ, P31_S14, ...)
price_basis   str        ``current``, ``previous_year`` or ``chain_linked``
frequency     str        ``Q`` (quarter) or ``A`` (year)
year          int64      calendar year
quarter       int64      1..4 for quarters, 0 for years
period        str        ``YYYY-Qn`` or ``YYYY`` (canonical form)
value         float64    level in the unit of the economy's accounts
============  =========  ====================================================

The key is ``(economy, item, price_basis, frequency, year, quarter)``. Methods
are vectorised over the whole panel (group-wise shifts, merges and cumulative
products), never a Python loop per series.

Derived tables use the same key columns where they apply; method outputs add
their own value columns (``deflator``, ``pct``, ``contribution_pp``, ...).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

KEY = ["economy", "item", "price_basis", "frequency", "year", "quarter"]
LEVEL_COLUMNS = ["economy", "item", "price_basis", "frequency", "year", "quarter", "period", "value"]
PRICE_BASES = ("current", "previous_year", "chain_linked")
#: Index bases accepted in input and turned into ``chain_linked`` (and ``current``) rows by
#: `valvol.methods.index_bases` before staging: they never reach the levels panel.
INDEX_BASES = ("volume_index", "price_index")
#: Price bases of accounts items in the input contract.
INPUT_PRICE_BASES = (*PRICE_BASES, *INDEX_BASES)
#: Columns of the ``checks`` table, wherever checks are made.
CHECK_COLUMNS = ["economy", "period", "rule", "item", "value", "tolerance", "status"]


def period_label(year: np.ndarray | pd.Series, quarter: np.ndarray | pd.Series) -> pd.Series:
    """Canonical period labels: ``YYYY-Qn`` for quarter > 0, ``YYYY`` for quarter 0.

    Each distinct period is labelled once and the labels spread to the rows, so long panels
    cost one take. The one place these labels are formed.

    >>> list(period_label(pd.Series([2020, 2020]), pd.Series([0, 3])))
    ['2020', '2020-Q3']
    """
    code = np.asarray(year, dtype="int64") * 5 + np.asarray(quarter, dtype="int64")
    uniq, inverse = np.unique(code, return_inverse=True)
    y = pd.Series(uniq // 5).astype(str)
    q = pd.Series(uniq % 5)
    labels = y.where(q == 0, y + "-Q" + q.astype(str)).astype("str")
    return labels.take(inverse.reshape(-1)).reset_index(drop=True)


def empty_levels() -> pd.DataFrame:
    """An empty levels panel with the right dtypes."""
    return pd.DataFrame(
        {
            "economy": pd.Series(dtype="str"),
            "item": pd.Series(dtype="str"),
            "price_basis": pd.Series(dtype="str"),
            "frequency": pd.Series(dtype="str"),
            "year": pd.Series(dtype="int64"),
            "quarter": pd.Series(dtype="int64"),
            "period": pd.Series(dtype="str"),
            "value": pd.Series(dtype="float64"),
        }
    )


def sort_levels(df: pd.DataFrame) -> pd.DataFrame:
    """Sort by the full key so that outputs are deterministic."""
    return df.sort_values(KEY, kind="mergesort", ignore_index=True)
