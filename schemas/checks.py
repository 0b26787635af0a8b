"""Checks shared by the pandera models, written to stay fast on tables of tens of millions of rows."""

from __future__ import annotations

import re
from collections.abc import Sequence

import numpy as np
import pandas as pd
import pandera.pandas as pa


def key_codes(frame: pd.DataFrame, columns: Sequence[str]) -> np.ndarray:
    """One int64 code per row, equal exactly when the rows agree on every column of ``columns``.

    Each column is factorised once (in C for Arrow-backed strings); the codes are combined pair
    by pair and re-factorised, so they never overflow.
    """
    combined = np.zeros(len(frame), dtype="int64")
    for col in columns:
        codes, uniques = pd.factorize(frame[col], use_na_sentinel=False)
        combined = combined * max(len(uniques), 1) + codes
        if len(uniques) and combined.max(initial=0) > 2**40:
            combined = pd.factorize(combined)[0].astype("int64")
    return combined


def unique_key(columns: Sequence[str]) -> pa.Check:
    """Table-level check: no two rows share the values of ``columns`` (both rows are reported)."""
    cols = list(columns)

    def unique(frame: pd.DataFrame) -> pd.Series:
        return pd.Series(~pd.Series(key_codes(frame, cols)).duplicated(keep=False).to_numpy(), index=frame.index)

    return pa.Check(unique, name="unique_key", error=f"key ({', '.join(cols)}) not unique")


def matches(pattern: str, error: str | None = None) -> pa.Check:
    """Column check: every value matches the regular expression ``pattern`` (tested once per
    distinct value, so a column of millions of rows with a few hundred labels costs little)."""
    compiled = re.compile(pattern)

    def match(values: pd.Series) -> pd.Series:
        distinct = pd.unique(values)
        good = [v for v in distinct if isinstance(v, str) and compiled.fullmatch(v)]
        return values.isin(good)

    return pa.Check(match, name="matches", error=error or f"does not match {pattern}")
