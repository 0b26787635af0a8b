"""Fixtures of the methods tests: the UK release and the synthetic panel builder of `support`.

The UK panels come from the ONS Quarterly National Accounts dataset, release of
31 March 2023 (tests/reference_data/uk_ons_qna_2023-03-31.csv; provenance in
tests/reference_data/README.md).
"""

from __future__ import annotations

import pandas as pd
import pytest
from support import (
    panel_from_quantities,
    uk_additive_panel,
    uk_previous_year_prices,
    uk_published_levels,
    uk_release,
)


@pytest.fixture(scope="session")
def uk_raw() -> pd.DataFrame:
    """The release as stored (long: economy, period, item, measure, unit, adjustment, value)."""
    return uk_release()


@pytest.fixture(scope="session")
def uk_published(uk_raw: pd.DataFrame) -> pd.DataFrame:
    """Levels panel: published current prices and chained volumes (ref. 2019), Q and A."""
    return uk_published_levels(uk_raw)


@pytest.fixture(scope="session")
def uk_pyp(uk_published: pd.DataFrame) -> pd.DataFrame:
    """Derived previous-year prices (`support.uk_previous_year_prices`)."""
    return uk_previous_year_prices(uk_published)


@pytest.fixture(scope="session")
def uk_for_chaining(uk_published: pd.DataFrame, uk_pyp: pd.DataFrame) -> pd.DataFrame:
    """Additive current and previous-year prices (`support.uk_additive_panel`)."""
    return uk_additive_panel(uk_published, uk_pyp)


@pytest.fixture(scope="session")
def make_panel():
    """The synthetic panel builder `support.panel_from_quantities`, as a fixture."""
    return panel_from_quantities
