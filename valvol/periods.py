"""Period labels of the input contract and their calendar arithmetic.

Accepted labels: ``YYYY-Qn`` and ``YYYYQn`` (quarters, n = 1..4) and ``YYYY``
(years). Everything else is rejected. Canonical output labels are ``YYYY-Qn``
and ``YYYY`` (the SDMX ``TIME_PERIOD`` forms for quarterly and annual data).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

PERIOD_PATTERN = r"^[0-9]{4}(?:-?Q[1-4])?$"
_PARSE = r"^(?P<year>[0-9]{4})(?:-?Q(?P<quarter>[1-4]))?$"


def parse_periods(labels: pd.Series) -> pd.DataFrame:
    """Split period labels into frequency, year and quarter, vectorised.

    Parameters
    ----------
    labels
        Strings such as ``"2024-Q3"``, ``"2024Q3"`` or ``"2024"``.

    Returns
    -------
    DataFrame
        Columns ``valid`` (bool), ``frequency`` (``Q``/``A``), ``year`` and
        ``quarter`` (0 for years), ``period`` (canonical label), aligned with
        ``labels``; invalid rows have ``valid`` False and year/quarter -1.

    Examples
    --------
    >>> parse_periods(pd.Series(["2024Q3", "2024", "24-Q1"]))[["valid", "period"]].values.tolist()
    [[True, '2024-Q3'], [True, '2024'], [False, '']]
    """
    text = labels.astype("str").str.strip()
    parts = text.str.extract(_PARSE)
    valid = parts["year"].notna().to_numpy()
    year = pd.to_numeric(parts["year"], errors="coerce").fillna(-1).astype("int64")
    quarter = pd.to_numeric(parts["quarter"], errors="coerce").fillna(0).astype("int64")
    quarter = quarter.where(valid, -1)
    freq = np.where(quarter > 0, "Q", "A")
    period = year.astype(str).where(quarter == 0, year.astype(str) + "-Q" + quarter.astype(str))
    return pd.DataFrame(
        {
            "valid": valid,
            "frequency": pd.Series(freq, index=labels.index, dtype="str").where(valid, ""),
            "year": year.where(valid, -1),
            "quarter": quarter,
            "period": period.where(valid, ""),
        },
        index=labels.index,
    )


def quarter_index(year: pd.Series | np.ndarray, quarter: pd.Series | np.ndarray) -> np.ndarray:
    """Running quarter number ``4*year + quarter - 1`` (consecutive quarters differ by 1)."""
    return np.asarray(year, dtype="int64") * 4 + np.asarray(quarter, dtype="int64") - 1
