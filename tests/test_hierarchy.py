"""Item codes: breakdowns follow their transaction (sign, acceptance, the aggregate that values them).

Codes are those of the SNA 2008 / SDMX national-accounts code lists; a breakdown suffix joined
by ``_`` (sector, product) is common practice in agency releases (e.g. P52 split by sector).
"""

from __future__ import annotations

import pandas as pd
import pytest

from valvol.hierarchy import Hierarchy
from valvol.methods.panel import top_aggregates


@pytest.mark.parametrize("item, transaction", [
    ("P52", "P52"), ("P52_PRIV", "P52"), ("P52_S11", "P52"), ("P53_PUB", "P53"), ("YA1_X", "YA1"),
    ("B11_GOODS", "B11"), ("D2X3_S13", "D2X3"), ("P52_P53", "P52_P53"), ("P52_P53_S1", "P52_P53"),
    ("P51G", None), ("P5", None), ("P52X", None), ("P6_S2", None),
])
def test_sign_follows_the_transaction(item, transaction):
    h = Hierarchy.default()
    assert h.sign_changing_transaction(item) == transaction
    assert h.is_sign_changing(item) is (transaction is not None)


def test_declared_sign_changing_code_extends_too():
    h = Hierarchy.from_mapping({"T": ["A", "B"]}, sign_changing=["B"])
    assert h.is_sign_changing("B_S11") and not h.is_sign_changing("A_S11")


def test_breakdowns_of_known_codes_are_accepted():
    h = Hierarchy.default()
    assert h.is_allowed("P52_PRIV") and h.is_allowed("P3_S13_X") and h.is_allowed("B1GQ")
    assert not h.is_allowed("FOO") and not h.is_allowed("P52X") and not h.is_allowed("GDP")


def test_undeclared_breakdown_is_valued_like_its_transaction():
    # P52_PRIV is not in the hierarchy: it climbs from P52 (P5, then B1GQ), as P52 does
    h = Hierarchy.default()
    series = pd.DataFrame({"economy": ["XQ", "XQ"], "item": ["P52_PRIV", "P52"]})
    available = pd.DataFrame({"economy": ["XQ", "XQ"], "item": ["B1GQ", "P5"]})
    tops = top_aggregates(h, series, available).set_index("item")["top"]
    assert tops.to_dict() == {"P52": "B1GQ", "P52_PRIV": "B1GQ"}
