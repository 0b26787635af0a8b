"""Readers: extra columns agencies ship are carried when declared, else dropped with a warning
(README, input contract and configuration: carry_columns)."""

from __future__ import annotations

import logging

import pandas as pd

from valvol.io.readers import RAW_COLUMNS, read_accounts


def _folder(tmp_path, toml: str | None = None):
    frame = pd.DataFrame({"economy": ["XQ", "XQ"], "period": ["2020", "2021"], "item": ["P6", "P6"],
                          "price_basis": ["current", "current"], "value": [1.5, 2.0],
                          "obs_status": ["A", None], "conf_status": ["F", "F"]})
    frame.to_parquet(tmp_path / "a.parquet", index=False)
    if toml is not None:
        (tmp_path / "valvol.toml").write_text(toml)
    return tmp_path


def test_declared_columns_are_carried_as_text(tmp_path):
    raw, problems = read_accounts(_folder(tmp_path), ["obs_status"])
    assert problems == []
    assert list(raw.columns) == [*RAW_COLUMNS, "obs_status"]
    assert raw["obs_status"].tolist() == ["A", ""]  # a missing parquet value is empty text
    assert raw["value"].tolist() == ["1.5", "2.0"]


def test_undeclared_columns_are_dropped_with_a_warning(tmp_path, caplog):
    log = logging.getLogger("valvol")
    log.addHandler(caplog.handler)
    try:
        with caplog.at_level("WARNING", logger="valvol"):
            raw, problems = read_accounts(_folder(tmp_path))
    finally:
        log.removeHandler(caplog.handler)
    assert problems == [] and list(raw.columns) == RAW_COLUMNS
    (message,) = {r.getMessage() for r in caplog.records if r.levelname == "WARNING"}
    assert message.startswith("a.parquet: unknown column(s) obs_status, conf_status dropped")


def test_carried_columns_may_be_passed(tmp_path):
    raw, _ = read_accounts(_folder(tmp_path, 'carry_columns = ["obs_status"]\n'), ["conf_status"])
    assert list(raw.columns) == [*RAW_COLUMNS, "conf_status"]


def test_plain_and_quoted_csv_read_alike(tmp_path):
    """A file without quotes is read by pandas' parser, one with quotes by the standard library's:
    the same rows, cells and line numbers either way (blank lines and CRLF line ends included)."""
    lines = ["economy,period,item,price_basis,value", "XQ, 2020,P6,current,1.5", "", ",,,,",
             "XQ,2021,P6,current,2"]
    plain = tmp_path / "plain"
    quoted = tmp_path / "quoted"
    for folder, text in ((plain, "\r\n".join(lines) + "\r\n"),
                         (quoted, "\n".join(lines[:-1] + ['XQ,2021,P6,"current",2']) + "\n")):
        folder.mkdir()
        (folder / "a.csv").write_text(text, newline="")
    (a, pa_), (b, pb) = read_accounts(plain), read_accounts(quoted)
    assert pa_ == pb == []
    pd.testing.assert_frame_equal(a, b)
    assert a["source_row"].tolist() == [2, 5]
    assert a["period"].tolist() == ["2020", "2021"]
