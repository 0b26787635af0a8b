"""The bad-input catalogue of the exchange formats (README, input contract: SDMX-CSV, wide tables).

Each case is a malformed SDMX-CSV file, wide CSV file or workbook, or a malformed ``[sdmx]`` /
``[wide]`` section, answered as every bad input is (`test_bad_inputs`): the package function
raises, the message names file (and sheet), row (and cell), series and period, ``valvol check``
and ``valvol rebuild`` exit with code 2, and the earlier outputs stay byte-identical.
"""

from __future__ import annotations

import io
from datetime import datetime

import pytest
from openpyxl import Workbook
from test_bad_inputs import Case, assert_refused, baseline  # noqa: F401 - the shared fixture

from valvol.errors import ConfigError

SDMX_HEAD = "DATAFLOW,FREQ,ADJUSTMENT,REF_AREA,REF_SECTOR,STO,ACTIVITY,PRICES,TIME_PERIOD,OBS_VALUE,OBS_STATUS\n"


def sdmx(*rows: str, head: str = SDMX_HEAD) -> str:
    return head + "".join(f"QSO:DF(1.0),{r}\n" for r in rows)


def obs(sto="P6", prices="V", period="2020-Q1", value="10", freq="Q", activity="_Z", area="XQ", sector="S1"):
    return f"{freq},S,{area},{sector},{sto},{activity},{prices},{period},{value},A"


WIDE_HEAD = "economy,item,price_basis,2020-Q1,2020-Q2,2020-Q3,2020-Q4\n"


def workbook(rows: list[list], *, merge: str | None = None, title: str = "Quarterly") -> bytes:
    book = Workbook()
    sheet = book.active
    sheet.title = title
    for r in rows:
        sheet.append(r)
    if merge:
        sheet.merge_cells(merge)
    buf = io.BytesIO()
    book.save(buf)
    return buf.getvalue()


XL_HEAD = ["economy", "item", "price_basis", "2020-Q1", "2020-Q2", "2020-Q3", "2020-Q4"]

CASES: dict[str, Case] = {
    # --- SDMX-CSV ---
    "sdmx_price_code_not_mapped": Case(
        {"a.csv": sdmx(*(obs(prices="Q", period=f"2020-Q{q}") for q in (1, 2, 3, 4)))},
        ("a.csv:2 XQ/P6/2020-Q1: PRICES 'Q' is not mapped to a price basis; add it to [sdmx.prices]",
         "(4 observations)")),
    "sdmx_breakdown_not_mapped": Case(
        {"a.csv": sdmx(obs(activity="_Z"), obs(activity="A", period="2020-Q2"))},
        ("a.csv:3 XQ/P6/current/2020-Q2: ACTIVITY 'A' is not mapped: list ACTIVITY in [sdmx] item",)),
    "sdmx_frequency_against_period": Case(
        {"a.csv": sdmx(obs(freq="A", period="2020-Q1"))},
        ("a.csv:2 XQ/P6/current/2020-Q1: FREQ 'A' does not fit TIME_PERIOD '2020-Q1'",)),
    "sdmx_weekly": Case(
        {"a.csv": sdmx(obs(freq="W", period="2020-W01"))},
        ("a.csv:2 XQ/P6/current/2020-W01: FREQ 'W' does not fit TIME_PERIOD",)),
    "sdmx_delete_action": Case(
        {"a.csv": "STRUCTURE,STRUCTURE_ID,ACTION,FREQ,REF_AREA,STO,PRICES,TIME_PERIOD,OBS_VALUE\n"
                  "dataflow,QSO:DF(1.0),D,A,XQ,P6,V,2020,10\n"},
        ("a.csv:2 XQ/P6/current/2020: ACTION 'D' (delete) rows carry no accounts",)),
    "sdmx_label_instead_of_code": Case(
        {"a.csv": sdmx(obs(area="Quillon"))},
        ("a.csv:2 Quillon/P6/current/2020-Q1: economy code must be",)),
    "sdmx_label_instead_of_price_code": Case(
        {"a.csv": sdmx(obs(prices="Current prices"))},
        ("a.csv:2 XQ/P6/2020-Q1: PRICES 'Current prices' is not mapped",)),
    "sdmx_without_the_transaction": Case(
        {"a.csv": "DATAFLOW,FREQ,REF_AREA,PRICES,TIME_PERIOD,OBS_VALUE\nQSO:DF(1.0),A,XQ,V,2020,1\n"},
        ("a.csv:1: SDMX-CSV file without the dimension(s) STO", "[sdmx] of valvol.toml")),
    "sdmx_without_obs_value": Case(
        {"a.csv": "DATAFLOW,FREQ,REF_AREA,STO,PRICES,TIME_PERIOD\nQSO:DF(1.0),A,XQ,P6,V,2020\n"},
        ("a.csv:1: SDMX-CSV file without a OBS_VALUE column",)),
    "sdmx_value_not_a_number": Case(
        {"a.csv": sdmx(obs(value="n.a."))},
        ("a.csv:2 XQ/P6/current/2020-Q1: value is not a number (found 'n.a.')",)),
    "sdmx_mixed_multipliers": Case(
        {"a.csv": "DATAFLOW,FREQ,REF_AREA,STO,PRICES,TIME_PERIOD,OBS_VALUE,UNIT_MULT\n"
                  "QSO:DF(1.0),A,XQ,P6,V,2020,10,6\nQSO:DF(1.0),A,XQ,P6,V,2021,11,6\n"
                  "QSO:DF(1.0),A,XQ,P7,V,2020,9000,3\n"},
        ("a.csv:4 XQ/P7/current/2020: UNIT_MULT 3 where the economy's other series have 6",
         "set [sdmx] unit_mult")),
    "sdmx_bad_multiplier": Case(
        {"a.csv": "DATAFLOW,FREQ,REF_AREA,STO,PRICES,TIME_PERIOD,OBS_VALUE,UNIT_MULT\n"
                  "QSO:DF(1.0),A,XQ,P6,V,2020,10,million\n"},
        ("a.csv:2 XQ/P6/current/2020: UNIT_MULT 'million' is not a power of ten",)),
    "sdmx_structure_column_missing": Case(
        {"a.csv": "FREQ,REF_AREA,STO,PRICES,TIME_PERIOD,OBS_VALUE\nA,XQ,P6,V,2020,1\n"},
        ("a.csv:1: missing column(s) economy, period, item, price_basis, value", "looks like SDMX-CSV")),
    "sdmx_unknown_key": Case({"a.csv": sdmx(obs())}, ("[sdmx]: lables",), toml="[sdmx]\nlables = true\n",
                             error=ConfigError),
    "sdmx_bad_price_basis": Case({"a.csv": sdmx(obs())}, ("[sdmx.prices] Q must be one of current",),
                                 toml='[sdmx.prices]\nQ = "constant"\n', error=ConfigError),
    # --- wide CSV ---
    "wide_value_not_a_number": Case(
        {"a.csv": WIDE_HEAD + "XQ,P6,current,1,2,3,4\nXQ,P7,current,1,x,3,4\n"},
        ("a.csv:3 XQ/P7/current/2020-Q2: cell E3: value is not a number (found 'x')",)),
    "wide_key_cell_empty": Case(
        {"a.csv": WIDE_HEAD + "XQ,P6,current,1,2,3,4\nXQ,,current,1,2,3,4\n"},
        ("a.csv:3 XQ: cell B3: item is empty in a row with values",)),
    "wide_period_twice": Case(
        {"a.csv": "economy,item,price_basis,2020-Q1,2020Q1\nXQ,P6,current,1,2\n"},
        ("a.csv:1 2020-Q1: cell E1: period '2020Q1' is also the header of cell D1",)),
    "wide_value_without_header": Case(
        {"a.csv": "economy,item,price_basis,2020,\nXQ,P6,current,1,2\n"},
        ("a.csv:2: cell E2: a value ('2') in a column without a header",)),
    "wide_key_missing_from_header": Case(
        {"a.csv": "economy,item,2020,2021\nXQ,P6,1,2\n"},
        ("a.csv:1: missing column(s) period, price_basis, value", "a wide table also needs the column(s) price_basis")),
    # --- workbooks ---
    "xlsx_formula_without_cached_value": Case(
        {"a.xlsx": workbook([XL_HEAD, ["XQ", "P6", "current", 1, 2, 3, 4], ["XQ", "P7", "current", 1, 2, "=F2*2", 4]])},
        ("a.xlsx[Quarterly]:3: cell F3: formula '=F2*2' has no cached value",)),
    "xlsx_merged_values": Case(
        {"a.xlsx": workbook([XL_HEAD, ["XQ", "P6", "current", 1, 2, 3, 4]], merge="E2:F2")},
        ("a.xlsx[Quarterly]:2: cells E2:F2 are merged", "unmerge them")),
    "xlsx_merged_header": Case(
        {"a.xlsx": workbook([["title"], XL_HEAD, ["XQ", "P6", "current", 1, 2, 3, 4]], merge="D2:E2")},
        ("a.xlsx[Quarterly]:2: cells D2:E2 are merged in the header",)),
    "xlsx_not_a_number": Case(
        {"a.xlsx": workbook([["Quillon accounts"], [], XL_HEAD, ["XQ", "P6", "current", 1, 2, "3 p", 4]])},
        ("a.xlsx[Quarterly]:4 XQ/P6/current/2020-Q3: cell F4: value is not a number (found '3 p')",)),
    "xlsx_error_value": Case(
        {"a.xlsx": workbook([XL_HEAD, ["XQ", "P6", "current", 1, 2, "#DIV/0!", 4]])},
        ("a.xlsx[Quarterly]:2 XQ/P6/current/2020-Q3: cell F2: value is not a number (found '#DIV/0!')",)),
    "xlsx_date_as_period": Case(
        {"a.xlsx": workbook([XL_HEAD[:6] + [datetime(2020, 12, 31)], ["XQ", "P6", "current", 1, 2, 3, 4]])},
        ("a.xlsx[Quarterly]:1: cell G1: a date ('2020-12-31 00:00:00') as a period",)),
    "xlsx_no_wide_sheet": Case(
        {"a.xlsx": workbook([["economy", "period", "value"], ["XQ", "2020", 1]])},
        ("a.xlsx: no sheet with a wide header (Quarterly)",)),
    "xlsx_declared_sheet_missing": Case(
        {"a.xlsx": workbook([XL_HEAD, ["XQ", "P6", "current", 1, 2, 3, 4]])},
        ("a.xlsx: no sheet 'Annual' ([wide] sheets); sheets: Quarterly",), toml='[wide]\nsheets = ["Annual"]\n'),
    "xlsx_not_a_workbook": Case({"a.xlsx": b"PK\x03\x04 not really a zip"},
                                ("a.xlsx: cannot be read as an .xlsx workbook",)),
    "wide_bad_header_row": Case({"a.csv": WIDE_HEAD}, ("[wide] header_row must be a row number",),
                                toml="[wide]\nheader_row = -1\n", error=ConfigError),
}


def test_the_catalogue_covers_every_format():
    assert sum(n.startswith("sdmx") for n in CASES) >= 10
    assert sum(n.startswith(("wide", "xlsx")) for n in CASES) >= 10


@pytest.mark.parametrize("name", list(CASES))
def test_bad_format(name, baseline, tmp_path, capsys):  # noqa: F811 - the shared fixture
    assert_refused(CASES[name], baseline, tmp_path, capsys)
