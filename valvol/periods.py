"""Period labels of the input contract and their calendar arithmetic.

Accepted labels: ``YYYY-Qn`` and ``YYYYQn`` (quarters, n = 1..4), ``YYYY``
(years) and, for price indexes only, ``YYYY-MM`` (months). Everything else is
rejected. Canonical labels are ``YYYY-Qn``, ``YYYY`` and ``YYYY-MM`` (the SDMX
``TIME_PERIOD`` forms for quarterly, annual and monthly data).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

PERIOD_PATTERN = r"^[0-9]{4}(?:-?Q[1-4]|-(?:0[1-9]|1[0-2]))?$"
_PARSE = r"^(?P<year>[0-9]{4})(?:-?Q(?P<quarter>[1-4])|-(?P<month>0[1-9]|1[0-2]))?$"


def parse_periods(labels: pd.Series) -> pd.DataFrame:
    """Split period labels into frequency, year and quarter, vectorised.

    Parameters
    ----------
    labels
        Strings such as ``"2024-Q3"``, ``"2024Q3"`` or ``"2024"``.

    Returns
    -------
    DataFrame
        Columns ``valid`` (bool), ``frequency`` (``Q``/``A``/``M``), ``year``,
        ``quarter`` (0 for years; the quarter of a month), ``month`` (0 unless
        monthly), ``period`` (canonical label), aligned with ``labels``; invalid
        rows have ``valid`` False and year/quarter -1.

    Examples
    --------
    >>> parse_periods(pd.Series(["2024Q3", "2024", "24-Q1"]))[["valid", "period"]].values.tolist()
    [[True, '2024-Q3'], [True, '2024'], [False, '']]
    """
    codes, distinct = pd.factorize(labels.astype("str"), use_na_sentinel=False)
    if len(distinct) < len(labels):  # parse each distinct label once, then spread to the rows
        once = parse_periods(pd.Series(distinct, dtype="str"))
        return once.take(codes).set_axis(labels.index)
    text = labels.astype("str").str.strip()
    parts = text.str.extract(_PARSE)
    valid = parts["year"].notna().to_numpy()
    year = pd.to_numeric(parts["year"], errors="coerce").fillna(-1).astype("int64")
    month = pd.to_numeric(parts["month"], errors="coerce").fillna(0).astype("int64")
    quarter = pd.to_numeric(parts["quarter"], errors="coerce").fillna(0).astype("int64")
    freq = np.where(month > 0, "M", np.where(quarter > 0, "Q", "A"))
    period = year.astype(str).where(quarter == 0, year.astype(str) + "-Q" + quarter.astype(str))
    period = period.where(month == 0, year.astype(str) + "-" + month.astype(str).str.zfill(2))
    quarter = quarter.where(month == 0, (month - 1) // 3 + 1).where(valid, -1)
    return pd.DataFrame(
        {
            "valid": valid,
            "frequency": pd.Series(freq, index=labels.index, dtype="str").where(valid, ""),
            "year": year.where(valid, -1),
            "quarter": quarter,
            "month": month.where(valid, 0),
            "period": period.where(valid, ""),
        },
        index=labels.index,
    )


def quarter_index(year: pd.Series | np.ndarray, quarter: pd.Series | np.ndarray) -> np.ndarray:
    """Running quarter number ``4*year + quarter - 1`` (consecutive quarters differ by 1)."""
    return np.asarray(year, dtype="int64") * 4 + np.asarray(quarter, dtype="int64") - 1
