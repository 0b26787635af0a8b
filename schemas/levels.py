"""Stage 2, the levels panel: inputs plus derived annual values, aggregates and volumes.

See `valvol.frames` for the columns; the key is unique and every value finite.
"""

from __future__ import annotations

import numpy as np
import pandera.pandas as pa
from valvol.schemas.checks import matches, unique_key

from valvol.frames import KEY, PRICE_BASES

levels = pa.DataFrameSchema(
    {
        "economy": pa.Column(str),
        "item": pa.Column(str),
        "price_basis": pa.Column(str, pa.Check.isin(PRICE_BASES)),
        "frequency": pa.Column(str, pa.Check.isin(["Q", "A"])),
        "year": pa.Column("int64", pa.Check.in_range(1000, 9999)),
        "quarter": pa.Column("int64", pa.Check.in_range(0, 4)),
        "period": pa.Column(str, matches(r"^[0-9]{4}(-Q[1-4])?$")),
        "value": pa.Column(float, pa.Check(np.isfinite, error="value must be finite")),
    },
    checks=[pa.Check(lambda df: (df["frequency"] == "A") == (df["quarter"] == 0), error="frequency/quarter mismatch"),
            unique_key(KEY)],
    strict=True,
    name="levels",
)
