"""Seeded generator of the demo economy XQ, the invented Republic of Quillon.

The accounts are built bottom-up from invented elementary products: each
expenditure component is a small basket of products with simulated quarterly
quantities and prices. Values at current prices, at the previous year's
average prices and chain-linked volumes (annual overlap, reference year 2020)
all follow from the same quantities and prices, so the published series are
internally consistent. The economy, its currency (the tessel) and every number
are invented.

Two releases come out of the same simulation and the same code path
(``build_release``): the current release, 2012-Q1 .. 2025-Q4 (``build_accounts``),
and the release of one quarter earlier, 2012-Q1 .. 2025-Q3
(``build_earlier_release``), whose last five quarters are first estimates that
differ from the current release by seeded revisions of quantities and prices.

Each release also carries the income side at current prices (D1, B2A3G, D2X3,
adding up to B1GQ) in its ``accounts.csv`` and a monthly consumer price index
(``build_cpi``) in its own ``cpi.csv``; the CPI is built once from the simulated
household prices and is the same in both releases.

A third folder, ``first_estimate/``, holds a flash estimate of 2025 at current prices
(``build_first_estimate``): the components' 2025 quarters carried forward from 2024-Q4 with
seeded, biased indicators, GDP and the discrepancy as in the later release, and the 2025
annual totals of the components as benchmarks (``build_benchmarks``), for the
reconciliation walkthrough of the README.

Run ``python sample_accounts/generate.py`` to rewrite ``accounts.csv`` and
``cpi.csv`` next to this file and in ``earlier_release/``, and ``accounts.csv`` and
``annual/benchmarks.csv`` in ``first_estimate/``; the output is byte-identical on every run.
Importing the module has no side effects. The generator is standalone (numpy and pandas only) so
that it documents the construction on its own; its parts are in ``quillon/``: ``settings``,
``expenditure``, ``consumer_prices``, ``income``, ``releases`` and ``coicop``.
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))  # the quillon/ modules beside this file

from quillon.coicop import *  # noqa: E402
from quillon.consumer_prices import *  # noqa: E402
from quillon.expenditure import *  # noqa: E402
from quillon.income import *  # noqa: E402
from quillon.releases import *  # noqa: E402
from quillon.settings import *  # noqa: E402


def main(folder: Path = FOLDER) -> None:
    """Write both releases and the flash estimate.

    ``accounts.csv`` and ``cpi.csv`` in ``folder`` and in ``folder/earlier_release``;
    ``accounts.csv`` and ``annual/benchmarks.csv`` in ``folder/first_estimate``.

    Parameters
    ----------
    folder
        Target folder, by default the folder of this file (the committed demo data).
    """
    folder = Path(folder)
    (folder / EARLIER_FOLDER).mkdir(parents=True, exist_ok=True)
    (folder / FLASH_FOLDER / FLASH_BENCHMARKS).parent.mkdir(parents=True, exist_ok=True)
    accounts = build_accounts()
    tables = {
        folder / OUTPUT.name: accounts,
        folder / CPI_OUTPUT: build_cpi(LAST_QUARTER),
        folder / EARLIER_FOLDER / EARLIER_OUTPUT.name: build_earlier_release(),
        folder / EARLIER_FOLDER / CPI_OUTPUT: build_cpi(EARLIER_LAST_QUARTER),
        folder / FLASH_FOLDER / OUTPUT.name: build_first_estimate(accounts),
        folder / FLASH_FOLDER / FLASH_BENCHMARKS: build_benchmarks(accounts),
    }
    household, cpi_coicop = build_coicop(accounts, tables[folder / CPI_OUTPUT])
    tables[folder / COICOP_HOUSEHOLD_OUTPUT] = household
    for path, table in tables.items():
        path.write_text(to_csv_text(table), encoding="utf-8", newline="")
    # sub-indexes with two decimals (the aggregate meets the one-decimal headline within its rounding)
    (folder / COICOP_CPI_OUTPUT).write_text(cpi_coicop.to_csv(index=False, float_format="%.2f", lineterminator="\n"),
                                            encoding="utf-8", newline="")


if __name__ == "__main__":
    main()
