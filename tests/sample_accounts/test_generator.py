"""The committed demo files are the seeded generator's output, and the generator has no side effects.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import tomllib

import numpy as np
import pandas as pd
from support.quillon import (
    ACCOUNTS,
    AGGREGATES,
    COLUMNS,
    FOLDER,
    load_generator,
)

from valvol.io.readers import account_files

# --- the committed file and the generator --------------------------------------------------


def test_committed_file_is_the_generator_output(gen, built, committed):
    # Common practice for committed generated data: the file is reproduced by its generator.
    assert list(committed.columns) == COLUMNS
    assert len(committed) == len(built)
    key = ["economy", "period", "item", "price_basis", "adjustment", "unit"]
    pd.testing.assert_frame_equal(committed[key], built[key].astype(committed[key].dtypes.to_dict()))
    np.testing.assert_allclose(committed["value"].to_numpy(), built["value"].to_numpy(), rtol=0, atol=1e-9)
    assert gen.to_csv_text(built) == ACCOUNTS.read_text(encoding="utf-8")


def test_two_runs_give_identical_frames(gen, built):
    # Common practice: a seeded generator is deterministic.
    pd.testing.assert_frame_equal(gen.build_accounts(), built)


def test_import_has_no_side_effects():
    # Common practice: importing the module only defines names; it must not write the data file.
    before = ACCOUNTS.stat().st_mtime_ns
    module = load_generator()
    assert ACCOUNTS.stat().st_mtime_ns == before
    assert callable(module.build_accounts)


def test_folder_holds_the_accounts_and_the_cpi():
    # The accounts reader takes every .csv and .parquet file of the folder as accounts: the accounts
    # and the CPI (its rows have price basis ``index``), household consumption by purpose and the
    # CPI's sub-indexes with their basket weights (price basis ``weight``), and nothing else.
    files = sorted(p.name for p in FOLDER.iterdir() if p.suffix in {".csv", ".parquet"})
    assert files == ["accounts.csv", "cpi.csv", "cpi_coicop.csv", "household_coicop.csv"]
    assert [p.name for p in account_files(FOLDER)] == files


def test_config_matches_the_generator(gen):
    raw = tomllib.loads((FOLDER / "valvol.toml").read_text(encoding="utf-8"))
    assert set(raw) == {"reference_year", "levels_at_annual_rate", "aggregates", "price_bridge"}
    assert raw["reference_year"] == gen.REFERENCE_YEAR == 2020
    assert raw["levels_at_annual_rate"] is False
    parsed = {
        agg: {c.lstrip("-"): -1 if c.startswith("-") else 1 for c in comps}
        for agg, comps in raw["aggregates"].items()
    }
    assert parsed == AGGREGATES == gen.AGGREGATES
