"""Exchange formats read as long rows (README, input contract: SDMX-CSV, wide tables)."""

from __future__ import annotations

import io
import re
import zipfile

import pandas as pd
import pytest
from openpyxl import Workbook

from valvol.config import config_from_mapping
from valvol.errors import ConfigError
from valvol.io.formats import SdmxConfig, WideConfig, sdmx_config
from valvol.io.readers import read_accounts
from valvol.io.sdmx import header_code, sdmx_version
from valvol.io.wide import column_letter

LONG = ["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]

SDMX21 = """DATAFLOW,FREQ,ADJUSTMENT,REF_AREA,COUNTERPART_AREA,REF_SECTOR,COUNTERPART_SECTOR,ACCOUNTING_ENTRY,STO,INSTR_ASSET,ACTIVITY,EXPENDITURE,UNIT_MEASURE,PRICES,TRANSFORMATION,TIME_PERIOD,OBS_VALUE,UNIT_MULT,OBS_STATUS,CONF_STATUS,DECIMALS
QSO:DF(1.0),Q,S,XQ,W0,S14,S1,D,P31,_Z,_Z,_T,XDC,V,N,2024-Q1,100.5,6,A,F,1
QSO:DF(1.0),Q,S,XQ,W0,S13,S1,D,P3,_Z,_Z,_Z,XDC,Y,N,2024-Q1,50.25,6,A,F,2
QSO:DF(1.0),Q,S,XQ,W0,S1,S1,D,P51G,N11G,_Z,_Z,XDC,L,N,2024-Q1,20,6,A,F,0
QSO:DF(1.0),A,N,XQ,W2,S1,S1,B,B1GQ,_Z,_Z,_Z,IX,L,N,2024,101.3,0,A,F,1
QSO:DF(1.0),A,N,XQ,W2,S1,S1,B,B1GQ,_Z,_Z,_Z,IX,D,N,2024,104.1,0,A,F,1
QSO:DF(1.0),A,N,XQ,W2,S1,S1,B,B1GQ,_Z,_Z,_Z,XDC,V,N,2023,,6,M,F,1
"""

EXPECTED = [
    ["XQ", "2024-Q1", "P31_S14", "current", "100.5", "S", "XDC million"],
    ["XQ", "2024-Q1", "P3_S13", "previous_year", "50.25", "S", "XDC million"],
    ["XQ", "2024-Q1", "P51G", "chain_linked", "20", "S", "XDC million"],
    ["XQ", "2024", "B1GQ", "volume_index", "101.3", "N", "IX"],
    ["XQ", "2024", "B1GQ", "price_index", "104.1", "N", "IX"],
]


def _read(tmp_path, files: dict[str, str | bytes], **kwargs):
    for name, content in files.items():
        (tmp_path / name).write_bytes(content if isinstance(content, bytes) else content.encode())
    return read_accounts(tmp_path, **kwargs)


def test_sdmx_21_national_accounts_dimensions(tmp_path, caplog):
    raw, problems = _read(tmp_path, {"a.csv": SDMX21}, carry_columns=["obs_status"])
    assert problems == []
    assert raw[LONG].to_numpy().tolist() == EXPECTED
    assert raw["source_row"].tolist() == [2, 3, 4, 5, 6]  # the missing observation (line 7) is no observation
    assert raw["obs_status"].tolist() == ["A"] * 5


def _as_30(text: str, labels: bool = False) -> str:
    lines = text.splitlines()
    head = "STRUCTURE,STRUCTURE_ID,ACTION," + lines[0].split(",", 1)[1]
    body = ["dataflow,QSO:DF(1.0),I," + line.split(",", 1)[1] for line in lines[1:]]
    if labels:  # labels=both: "code: label" in the header and in the cells of a dimension
        head = head.replace("REF_AREA", "REF_AREA: Reference area").replace("PRICES", "PRICES: Prices")
        body = [re.sub(r",XQ,", ",XQ: Quillon,", b).replace(",V,", ",V: Current prices,") for b in body]
    return "\n".join([head, *body]) + "\n"


@pytest.mark.parametrize("labels", [False, True], ids=["codes", "code_and_label"])
def test_sdmx_30_reads_as_21(tmp_path, labels):
    raw, problems = _read(tmp_path, {"a.csv": _as_30(SDMX21, labels)})
    assert problems == []
    assert raw[LONG].to_numpy().tolist() == EXPECTED


def test_sdmx_values_scaled_to_a_unit(tmp_path):
    text = ("DATAFLOW,FREQ,REF_AREA,STO,UNIT_MEASURE,PRICES,TIME_PERIOD,OBS_VALUE,UNIT_MULT\n"
            "F,A,XQ,P6,XDC,V,2020,1.5,9\nF,A,XQ,P7,XDC,V,2020,900,6\n")
    cfg = SdmxConfig(unit_mult=6)
    raw, problems = _read(tmp_path, {"a.csv": text}, sdmx=cfg)
    assert problems == []
    assert raw["value"].astype(float).tolist() == [1500.0, 900.0]
    assert raw["unit"].tolist() == ["XDC million", "XDC million"]


def test_sdmx_mapping_from_the_configuration(tmp_path):
    text = ("DATAFLOW,FREQ,GEO,STO,ACTIVITY,PRICES,TIME_PERIOD,OBS_VALUE\n"
            "F,A,XQ,B1G,A,CP,2020,10\nF,A,XQ,B1G,_T,CP,2020,30\n")
    cfg = config_from_mapping({"aggregates": {}, "sdmx": {"economy": "GEO", "item": ["STO", "ACTIVITY"],
                                                          "prices": {"CP": "current"}}})
    raw, problems = _read(tmp_path, {"a.csv": text}, sdmx=cfg.sdmx)
    assert problems == []
    assert raw["item"].tolist() == ["B1G_A", "B1G"]
    assert raw["price_basis"].tolist() == ["current", "current"]


@pytest.mark.parametrize("raw, says", [
    ({"economy": "REF AREA"}, "[sdmx] economy must be an SDMX identifier"),
    ({"item": []}, "[sdmx] item must be a list of SDMX codes"),
    ({"unit_mult": "million"}, "[sdmx] unit_mult must be \"keep\" or a power of ten"),
    ({"prices": {"A:B:C": "current"}}, "a PRICES code, or PRICES:UNIT_MEASURE"),
    ({"economy": "STO"}, "must name distinct dimensions"),
])
def test_bad_sdmx_settings(raw, says):
    with pytest.raises(ConfigError) as err:
        sdmx_config(raw, "valvol.toml")
    assert says in str(err.value)


def test_header_codes_and_versions():
    assert header_code("FREQ: Frequency") == "FREQ"
    assert header_code(" obs_value ") == "OBS_VALUE"
    assert sdmx_version(["DATAFLOW", "FREQ"]) == "2.1"
    assert sdmx_version(["STRUCTURE", "STRUCTURE_ID", "ACTION"]) == "3.0"
    assert sdmx_version(["economy", "period"]) is None
    assert [column_letter(i) for i in (0, 25, 26, 701, 702)] == ["A", "Z", "AA", "ZZ", "AAA"]


# ----------------------------------------------------------------------------- wide tables
WIDE = "Economy,Item,Price_basis,unit,2020-Q1,2020Q2,2020-Q3\nXQ,P6,current,tessel million,1.5,2,\nXQ,P7,current,,3,4,5\n"


def test_wide_csv(tmp_path):
    raw, problems = _read(tmp_path, {"a.csv": WIDE})
    assert problems == []
    assert raw[["source_row", "economy", "period", "item", "value", "unit"]].to_numpy().tolist() == [
        [2, "XQ", "2020-Q1", "P6", "1.5", "tessel million"], [2, "XQ", "2020-Q2", "P6", "2", "tessel million"],
        [3, "XQ", "2020-Q1", "P7", "3", ""], [3, "XQ", "2020-Q2", "P7", "4", ""], [3, "XQ", "2020-Q3", "P7", "5", ""]]


def test_wide_columns_declared(tmp_path):
    text = "Country,Series,Prices,2020,2021\nXQ,P6,current,1,2\n"
    raw, problems = _read(tmp_path, {"a.csv": text}, wide=WideConfig(columns=(
        ("Country", "economy"), ("Series", "item"), ("Prices", "price_basis"))))
    assert problems == []
    assert raw["period"].tolist() == ["2020", "2021"] and raw["item"].tolist() == ["P6", "P6"]


def _with_cached_values(data: bytes, cached: dict[str, str]) -> bytes:
    """The workbook with the cached values a spreadsheet program stores beside formulas."""
    src, out = zipfile.ZipFile(io.BytesIO(data)), io.BytesIO()
    with zipfile.ZipFile(out, "w") as dst:
        for info in src.infolist():
            body = src.read(info)
            if info.filename.startswith("xl/worksheets/"):
                text = body.decode()
                for ref, value in cached.items():
                    text = re.sub(rf'(<c r="{ref}"[^>]*>)(<f>[^<]*</f>)<v\s*/>', rf"\1\2<v>{value}</v>", text)
                body = text.encode()
            dst.writestr(info, body)
    return out.getvalue()


def test_workbook_layout_of_an_office(tmp_path, caplog):
    book = Workbook()
    sheet = book.active
    sheet.title = "Quarterly"
    rows = [["Quillon: quarterly accounts (invented)"], [],
            ["economy", "item", "price_basis", 2020, "2021"],
            ["XQ", "P6", "current", 10.5, 11],
            [None, "P7", "current", 4, "=D5*2"],
            [],
            ["XQ", "B1GQ", "current", 100, 110],
            ["1) provisional"]]
    for r in rows:
        sheet.append(r)
    sheet.merge_cells("A1:E1")  # a title above the table
    sheet.merge_cells("A4:A5")  # the economy merged down a block
    notes = book.create_sheet("Notes")
    notes.append(["Nothing to read here"])
    buf = io.BytesIO()
    book.save(buf)
    raw, problems = _read(tmp_path, {"a.xlsx": _with_cached_values(buf.getvalue(), {"E5": "8"})})
    assert problems == []
    assert raw[["source_file", "source_row", "economy", "item", "period", "value"]].to_numpy().tolist() == [
        ["a.xlsx[Quarterly]", 4, "XQ", "P6", "2020", "10.5"], ["a.xlsx[Quarterly]", 4, "XQ", "P6", "2021", "11"],
        ["a.xlsx[Quarterly]", 5, "XQ", "P7", "2020", "4"], ["a.xlsx[Quarterly]", 5, "XQ", "P7", "2021", "8"],
        ["a.xlsx[Quarterly]", 7, "XQ", "B1GQ", "2020", "100"], ["a.xlsx[Quarterly]", 7, "XQ", "B1GQ", "2021", "110"]]


def test_long_files_are_read_as_before(tmp_path):
    text = "economy,period,item,price_basis,value\nXQ,2020,P6,current,1\n"
    raw, problems = _read(tmp_path, {"a.csv": text})
    assert problems == [] and raw["value"].tolist() == ["1"] and raw["source_file"].tolist() == ["a.csv"]
    assert isinstance(raw, pd.DataFrame)
