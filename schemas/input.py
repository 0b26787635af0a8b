"""Stage 1, the parsed input rows: one row of an accounts file each.

Columns: ``source_file``, ``source_row``, ``economy``, ``period_text`` (as
written), ``item``, ``price_basis``, ``value`` (float, NaN where the text was
not a number), ``value_text``, plus the parsed ``frequency``, ``year``,
``quarter``, ``period``. Row-level rules only; rules across rows (unique keys,
contiguous quarters, identities) are in `valvol.validate`.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd
import pandera.pandas as pa
from valvol.schemas.checks import matches

from valvol.frames import INDEX_BASES, INPUT_PRICE_BASES
from valvol.hierarchy import ITEM_CODE, extended_code
from valvol.periods import PERIOD_PATTERN

ECONOMY_PATTERN = r"^[A-Z0-9_]{2,16}$"


INDEX_BASIS = "index"
#: Basket weight of a price sub-index in a weight-reference year (`valvol.methods.price_bridge`).
WEIGHT_BASIS = "weight"


def _per_code(predicate: Callable[[str], bool]) -> Callable[[pd.Series], pd.Series]:
    """A vectorised test of item codes: ``predicate`` runs once per distinct code."""
    def test(items: pd.Series) -> pd.Series:
        return items.isin([u for u in pd.unique(items) if predicate(u)])
    return test


def input_rows(
    is_allowed: Callable[[str], bool], is_sign_changing: Callable[[str], bool],
    price_indexes: frozenset[str] = frozenset({"CPI"}),
) -> pa.DataFrameSchema:
    """Schema of parsed input rows for one configuration's allowed, sign-changing and index items.

    ``is_allowed`` and ``is_sign_changing`` judge an item code (`valvol.hierarchy.Hierarchy`:
    a breakdown such as ``P52_PRIV`` follows its transaction ``P52``). Price indexes (e.g. a
    consumer price index ``CPI``) come with ``price_basis`` ``index``, monthly (``YYYY-MM``)
    or quarterly, strictly positive; accounts items never do. Accounts items may come as a
    ``volume_index`` or a ``price_index`` (reference year = 100; `valvol.methods.index_bases`),
    strictly positive, and never for a sign-changing item: a deflator of a series that
    changes sign does not exist and a chain index of it is meaningless.
    """
    indexes = sorted(price_indexes)
    is_index = _per_code(lambda code: extended_code(code, price_indexes) is not None)
    allowed = _per_code(lambda code: extended_code(code, price_indexes) is not None or is_allowed(code))
    changes_sign = _per_code(is_sign_changing)
    bases = (*INPUT_PRICE_BASES, INDEX_BASIS, WEIGHT_BASIS)
    return pa.DataFrameSchema(
        {
            "source_file": pa.Column(str),
            "source_row": pa.Column("int64"),
            "economy": pa.Column(
                str, matches(ECONOMY_PATTERN, error="economy code must be 2-16 characters of A-Z, 0-9, _")
            ),
            "period_text": pa.Column(
                str, matches(PERIOD_PATTERN, error="period must be YYYY-Qn, YYYYQn or YYYY")
            ),
            "item": pa.Column(
                str,
                [
                    matches(ITEM_CODE.pattern, error="item is not of the form of an SNA code"),
                    pa.Check(
                        allowed,
                        error="item is not a known SNA code nor a breakdown of one (CODE_SUFFIX, e.g. P52_PRIV): "
                              "declare it in [aggregates] of valvol.toml",
                        name="known_item",
                    ),
                ],
            ),
            "price_basis": pa.Column(
                str, pa.Check.isin(bases, error=f"price_basis must be one of {', '.join(bases)}")
            ),
            "value": pa.Column(
                float,
                pa.Check(lambda v: np.isfinite(v) | v.isna(), error="value must be a finite number"),
                nullable=True,
            ),
            "value_text": pa.Column(str),
        },
        checks=[
            pa.Check(
                lambda df: df["value"].notna(),
                error="value is not a number",
                name="value_is_number",
            ),
            pa.Check(
                lambda df: ~(df["value"] < 0) | changes_sign(df["item"]),
                error="negative level of an item that cannot be negative (if this transaction changes "
                      "sign, list it in sign_changing of valvol.toml)",
                name="non_negative",
            ),
            pa.Check(
                lambda df: is_index(df["item"]) == df["price_basis"].isin([INDEX_BASIS, WEIGHT_BASIS]),
                error=f"price_basis index is for price indexes ({', '.join(indexes)}) and only for them",
                name="index_basis",
            ),
            pa.Check(
                lambda df: ~df["price_basis"].eq(WEIGHT_BASIS) | (df["frequency"].eq("A") & ~(df["value"] < 0)),
                error="a basket weight (price_basis weight) is annual (period YYYY, the weight-reference year) "
                      "and not negative",
                name="weight_annual",
            ),
            pa.Check(
                lambda df: ~df["frequency"].eq("M") | df["price_basis"].eq(INDEX_BASIS),
                error="monthly periods (YYYY-MM) are for price indexes only",
                name="monthly_only_indexes",
            ),
            pa.Check(
                lambda df: ~df["price_basis"].eq(INDEX_BASIS) | ~(df["value"] <= 0),
                error="a price index must be positive",
                name="index_positive",
            ),
            pa.Check(
                lambda df: ~df["price_basis"].isin(INDEX_BASES) | ~(df["value"] <= 0),
                error="a volume_index or price_index must be positive (reference year = 100)",
                name="index_basis_positive",
            ),
            pa.Check(
                lambda df: ~df["price_basis"].isin(INDEX_BASES) | ~changes_sign(df["item"]),
                error="an item that changes sign (inventories, valuables, discrepancy, external balance, net "
                      "taxes, their breakdowns, sign_changing) has no price index and no meaningful volume "
                      "index: give it at current and previous-year prices or as chain_linked",
                name="index_basis_sign_changing",
            ),
        ],
        strict=False,
    )
