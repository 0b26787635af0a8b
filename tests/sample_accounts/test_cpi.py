"""The demo's monthly consumer price index (cpi.csv, 2020 = 100) against the household deflator.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from support.quillon import (
    COLUMNS,
    CPI,
    CPI_COLUMNS_FIXED,
    EARLIER_CPI,
    cpi_quarterly,
    months,
    wide_basis,
)

# --- the consumer price index (cpi.csv, monthly, 2020 = 100) ----------------------------------


def test_cpi_files_are_the_generator_output(gen):
    # Common practice for committed generated data: each release's cpi.csv is reproduced by the generator.
    assert gen.to_csv_text(gen.build_cpi(gen.LAST_QUARTER)) == CPI.read_text(encoding="utf-8")
    assert gen.to_csv_text(gen.build_cpi(gen.EARLIER_LAST_QUARTER)) == EARLIER_CPI.read_text(encoding="utf-8")
    pd.testing.assert_frame_equal(gen.consumer_price_index(), gen.consumer_price_index())


@pytest.mark.parametrize("release", ["later", "earlier"])
def test_cpi_format(cpi, earlier_cpi, release):
    # valvol's price-index input (README of the demo): the input columns, item CPI, price basis index,
    # contiguous months YYYY-MM, one decimal, 2020 average = 100 (within the rounding of 12 months).
    frame, last = (cpi, "2025-12") if release == "later" else (earlier_cpi, "2025-09")
    assert list(frame.columns) == COLUMNS
    for column, value in CPI_COLUMNS_FIXED.items():
        assert (frame[column] == value).all(), column
    assert frame["period"].tolist() == months(last)
    assert (frame["value"] > 0).all()
    tenths = frame["value"].to_numpy() * 10.0
    np.testing.assert_allclose(tenths, np.round(tenths), rtol=0, atol=1e-6)
    assert abs(frame.loc[frame["period"].str.startswith("2020"), "value"].mean() - 100.0) <= 0.05


def test_cpi_is_not_revised(cpi, earlier_cpi):
    # Design (CPIs are usually not revised): the earlier release's CPI is the later one's up to 2025-09.
    assert len(earlier_cpi) == len(cpi) - 3
    pd.testing.assert_frame_equal(earlier_cpi, cpi.iloc[: len(earlier_cpi)])


def test_cpi_moves_smoothly_within_quarters(cpi):
    # Design of the demo: monthly prices interpolate the quarterly ones with a constant monthly change
    # inside each quarter, plus small monthly noise.
    change = 100.0 * (cpi["value"] / cpi["value"].shift(1) - 1.0)
    assert change.abs().max() < 2.0
    by_quarter = change.to_numpy().reshape(-1, 3)  # months 1, 2, 3 of each quarter
    assert np.abs(by_quarter[:, 2] - by_quarter[:, 1]).max() < 0.5


def test_cpi_tracks_the_household_deflator_and_exceeds_it_at_the_energy_peak(cpi, committed):
    # docs/methods.md §6: growth gaps in pp y/y, a monthly CPI entering as the quarterly mean of its levels
    # [MEMORY, common practice]. Coverage (docs/methods.md §6; ECB Economic Bulletin 1/2022, Eiglsperger
    # et al.: no owner-occupied housing in the HICP) and fixed-basket weights (McCully, Moyer & Stewart,
    # SCB Nov 2007, as quoted in docs/methods.md §6) make the CPI run above the household consumption
    # deflator when energy prices jump (design: 1-2 pp at the 2022 peak); otherwise it tracks it.
    quarterly = cpi_quarterly(cpi)
    hh = wide_basis(committed, "current")["P31_S14"] / wide_basis(committed, "chain_linked")["P31_S14"]
    cpi_yoy = 100.0 * (quarterly / quarterly.shift(4) - 1.0)
    hh_yoy = 100.0 * (hh / hh.shift(4) - 1.0)
    gap = (cpi_yoy - hh_yoy).dropna()
    assert len(gap) == 52  # 2013-Q1 .. 2025-Q4
    assert any(0.5 <= gap.loc[q] <= 3.0 for q in ["2022-Q3", "2022-Q4"])
    assert gap.abs().mean() < 0.8
    assert np.corrcoef(cpi_yoy.dropna(), hh_yoy.dropna())[0, 1] > 0.95
