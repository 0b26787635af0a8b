"""Fixtures of the demo-economy tests: the generator and the committed files, read once."""

from __future__ import annotations

import pandas as pd
import pytest
from support.quillon import (
    ACCOUNTS,
    CPI,
    EARLIER,
    EARLIER_CPI,
    FLASH_ACCOUNTS,
    FLASH_BENCHMARKS,
    load_generator,
    wide_basis,
)


@pytest.fixture(scope="session")
def gen():
    return load_generator()


@pytest.fixture(scope="session")
def built(gen):
    return gen.build_accounts()


@pytest.fixture(scope="session")
def committed():
    return pd.read_csv(ACCOUNTS, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="session")
def wide(committed):
    """Quarterly values, one column per price basis."""
    df = committed.pivot(index=["item", "period"], columns="price_basis", values="value").reset_index()
    df["year"] = df["period"].str[:4].astype("int64")
    return df


@pytest.fixture(scope="session")
def annual(wide):
    """Annual values as the sum of the four quarters (levels_at_annual_rate = false)."""
    return wide.groupby(["item", "year"])[["current", "previous_year", "chain_linked"]].sum(min_count=4)


@pytest.fixture(scope="session")
def unrounded(gen):
    levels = gen.unrounded_levels()
    return levels.groupby(["item", "year"])[["c", "k"]].sum(min_count=4)


@pytest.fixture(scope="session")
def earlier_built(gen):
    return gen.build_earlier_release()


@pytest.fixture(scope="session")
def earlier(earlier_built):
    return pd.read_csv(EARLIER, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="session")
def vintages(committed, earlier):
    """Both releases on their common periods: columns ``earlier``, ``later``, index item/basis/period."""
    key = ["item", "price_basis", "period"]
    later = committed.set_index(key)["value"].rename("later")
    first = earlier.set_index(key)["value"].rename("earlier")
    return pd.concat([first, later], axis=1, join="inner")


@pytest.fixture(scope="session")
def cpi():
    return pd.read_csv(CPI, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="session")
def earlier_cpi():
    return pd.read_csv(EARLIER_CPI, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="session")
def flash():
    return pd.read_csv(FLASH_ACCOUNTS, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="session")
def flash_wide(flash):
    return wide_basis(flash, "current")


@pytest.fixture(scope="session")
def benchmarks():
    return pd.read_csv(FLASH_BENCHMARKS, dtype={"value": "float64", "period": "str"}, keep_default_na=False)
