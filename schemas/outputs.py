"""Stage 3, the published tables: one model per output table."""

from __future__ import annotations

import numpy as np
import pandera.pandas as pa
from valvol.schemas.checks import matches, unique_key

_PERIOD = pa.Column(str, matches(r"^[0-9]{4}(-Q[1-4])?$", error="period must be YYYY or YYYY-Qn"))
_FREQ = pa.Column(str, pa.Check.isin(["Q", "A"]))
_FINITE = pa.Check(np.isfinite, error="must be finite")

levels = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "frequency": _FREQ,
        "item": pa.Column(str),
        "price_basis": pa.Column(str, pa.Check.isin(["current", "previous_year", "chain_linked"])),
        "value": pa.Column(float, _FINITE),
    },
    checks=[unique_key(["economy", "period", "item", "price_basis"])],
    strict=True,
    name="levels",
)

deflators = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "frequency": _FREQ,
        "item": pa.Column(str),
        "deflator": pa.Column(float, [_FINITE, pa.Check.gt(0)]),
    },
    checks=[unique_key(["economy", "period", "item"])],
    strict=True,
    name="deflators",
)

growth = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "frequency": _FREQ,
        "item": pa.Column(str),
        "measure": pa.Column(str, pa.Check.isin(["volume", "price", "value"])),
        "horizon": pa.Column(str, pa.Check.isin(["prev_period", "prev_year"])),
        "pct": pa.Column(float, _FINITE),
    },
    checks=[unique_key(["economy", "period", "item", "measure", "horizon"])],
    strict=True,
    name="growth",
)

checks = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": pa.Column(str),
        "rule": pa.Column(str),
        "item": pa.Column(str),
        "value": pa.Column(float, nullable=True),
        "tolerance": pa.Column(float, nullable=True),
        "status": pa.Column(str, pa.Check.isin(["pass", "warn", "fail", "info"])),
    },
    strict=True,
    name="checks",
)

contributions = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "frequency": _FREQ,
        "aggregate": pa.Column(str),
        "item": pa.Column(str),
        "horizon": pa.Column(str, pa.Check.isin(["prev_period", "prev_year"])),
        "contribution_pp": pa.Column(float, _FINITE),
        "aggregate_growth_pct": pa.Column(float, _FINITE),
        "residual_pp": pa.Column(float, _FINITE),
    },
    checks=[unique_key(["economy", "period", "aggregate", "item", "horizon"])],
    strict=True,
    name="contributions",
)

price_gaps = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "frequency": _FREQ,
        "measure": pa.Column(str),
        "horizon": pa.Column(str),
        "value": pa.Column(float, _FINITE),
    },
    checks=[unique_key(["economy", "period", "measure", "horizon"])],
    strict=True,
    name="price_gaps",
)


def _bridge(name: str, item: bool) -> pa.DataFrameSchema:
    cols = {"economy": pa.Column(str), "period": _PERIOD, "frequency": _FREQ, "horizon": pa.Column(str),
            "order": pa.Column(str, pa.Check.isin(["formula_on_common", "formula_on_accounts"])),
            "effect": pa.Column(str, pa.Check.isin(["gap", "residual", "scope_index_only", "weight", "formula",
                                                    "scope_accounts_only"]))}
    if item:
        cols["item"] = pa.Column(str)
    cols["value_pp"] = pa.Column(float, _FINITE)
    key = ["economy", "period", "horizon", "order", "effect", *(["item"] if item else [])]
    return pa.DataFrameSchema(cols, checks=[unique_key(key)], strict=True, name=name)


price_bridge = _bridge("price_bridge", item=False)
price_bridge_items = _bridge("price_bridge_items", item=True)

identity_residuals = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "item": pa.Column(str),
        "price_basis": pa.Column(str),
        "period": pa.Column(str),
        "residual": pa.Column(float),
        "tolerance": pa.Column(float),
    },
    checks=[
        pa.Check(
            lambda df: df["residual"].abs() <= df["tolerance"],
            error="components do not add to the aggregate",
            name="identity",
        )
    ],
    name="identity_residuals",
)

reconciliation = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "item": pa.Column(str),
        "price_basis": pa.Column(str, pa.Check.isin(["current", "previous_year"])),
        "step": pa.Column(str, pa.Check.isin(["benchmark", "reconcile"])),
        "before": pa.Column(float, _FINITE),
        "after": pa.Column(float, _FINITE),
        "adjustment": pa.Column(float, _FINITE),
        "adjustment_pct": pa.Column(float, nullable=True),
        "adjustment_annual": pa.Column(float, _FINITE),
        "adjustment_identity": pa.Column(float, _FINITE),
        "constraint": pa.Column(str),
        "growth_before_pct": pa.Column(float, nullable=True),
        "growth_after_pct": pa.Column(float, nullable=True),
    },
    checks=[unique_key(["economy", "period", "item", "price_basis", "step"])],
    strict=True,
    name="reconciliation",
)

revisions = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "period": _PERIOD,
        "frequency": _FREQ,
        "item": pa.Column(str),
        "measure": pa.Column(str),
        "earlier": pa.Column(float, nullable=True),
        "later": pa.Column(float, nullable=True),
        "revision": pa.Column(float, nullable=True),
        "reference_year_changed": pa.Column(bool),
    },
    strict=True,
    name="revisions",
)

revision_summary = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "frequency": _FREQ,
        "item": pa.Column(str),
        "measure": pa.Column(str),
        "n": pa.Column("int64", pa.Check.ge(1)),
        "mr": pa.Column(float),
        "mar": pa.Column(float, pa.Check.ge(0)),
        "rmar": pa.Column(float, nullable=True),
        "rmsr": pa.Column(float, pa.Check.ge(0)),
        "sd": pa.Column(float, nullable=True),
        "t_stat": pa.Column(float, nullable=True),
        "critical_value": pa.Column(float, nullable=True),
        "significant": pa.Column("boolean", nullable=True),
        "test_convention": pa.Column(str),
    },
    strict=True,
    name="revision_summary",
)

#: Every published table and its model; a table without a model is never written.
TABLES = {
    "levels": levels,
    "deflators": deflators,
    "growth": growth,
    "checks": checks,
    "volume_contributions": contributions,
    "deflator_contributions": contributions,
    "income_contributions": contributions,
    "price_gaps": price_gaps,
    "price_bridge": price_bridge,
    "price_bridge_items": price_bridge_items,
    "reconciliation": reconciliation,
    "revisions": revisions,
    "revision_summary": revision_summary,
}
