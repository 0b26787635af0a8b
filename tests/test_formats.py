"""Exchange formats end to end (README, input contract; docs/formats.md): the demo accounts as an
SDMX-CSV download, an office's workbook and a wide CSV file rebuild to the tables of the long form,
and any table exports to SDMX-CSV and back."""

from __future__ import annotations

import importlib.util
import shutil
from pathlib import Path

import pandas as pd
import pytest
from openpyxl import load_workbook

from valvol import pipeline
from valvol.cli import main

FOLDER = Path(__file__).resolve().parents[1] / "sample_accounts"
#: The files `sample_accounts/exchange_formats.py` writes the exchange-format folders from.
SOURCES = ("accounts.csv", "cpi.csv", "valvol.toml")
FORMATS = ("sdmx", "wide", "wide_csv")


def _tables(vintage: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(vintage.glob("*.parquet"))}


def _rebuild(accounts: Path, out: Path) -> Path:
    return pipeline.rebuild(accounts, out, charts=False).path


@pytest.fixture(scope="module")
def long_form(tmp_path_factory) -> Path:
    """A rebuild of the long-form files the exchange-format folders are written from."""
    base = tmp_path_factory.mktemp("long")
    (base / "acc").mkdir()
    for name in SOURCES:
        shutil.copyfile(FOLDER / name, base / "acc" / name)
    out = base / "out"
    _rebuild(base / "acc", out)
    return out


@pytest.mark.parametrize("fmt", FORMATS)
def test_demo_formats_rebuild_to_the_long_tables(fmt, long_form, tmp_path):
    tables = _tables(_rebuild(FOLDER / fmt, tmp_path / "out"))
    expected = _tables(long_form / "latest")
    assert sorted(tables) == sorted(expected) and len(tables) >= 9
    for name, data in expected.items():  # byte-identical parquet: same rows, same values, same order
        assert tables[name] == data, name


def test_demo_folders_are_generated_from_the_long_form(tmp_path):
    spec = importlib.util.spec_from_file_location("exchange_formats", FOLDER / "exchange_formats.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.main(tmp_path)
    for fmt in FORMATS:
        committed = sorted(p.name for p in (FOLDER / fmt).iterdir())
        assert sorted(p.name for p in (tmp_path / fmt).iterdir()) == committed
        for name in committed:
            if name.endswith(".xlsx"):  # same cells (the zip's times differ between writes)
                fresh, kept = load_workbook(tmp_path / fmt / name), load_workbook(FOLDER / fmt / name)
                assert fresh.sheetnames == kept.sheetnames
                for sheet in kept.sheetnames:
                    assert list(fresh[sheet].values) == list(kept[sheet].values)
                    assert fresh[sheet].merged_cells.ranges == kept[sheet].merged_cells.ranges
            else:
                assert (tmp_path / fmt / name).read_bytes() == (FOLDER / fmt / name).read_bytes(), name


def test_levels_export_and_back(long_form, tmp_path, capsys):
    to = tmp_path / "sdmx_levels"
    assert main(["-q", "export", str(long_form), "--format", "sdmx-csv", "--table", "levels", "--to", str(to)]) == 0
    assert "wrote 1 table(s) as sdmx-csv" in capsys.readouterr().out
    head = (to / "levels.csv").read_text().splitlines()[0]
    assert head == "STRUCTURE,STRUCTURE_ID,ACTION,FREQ,REF_AREA,STO,REF_SECTOR,PRICES,TIME_PERIOD,OBS_VALUE,VALVOL_DERIVED"
    for name in ("valvol.toml", "cpi.csv"):  # the price index is not in levels
        shutil.copyfile(FOLDER / name, to / name)
    again = _rebuild(to, tmp_path / "out")
    assert _tables(again) == _tables(long_form / "latest")


def test_every_table_exports(long_form, tmp_path):
    to = tmp_path / "all"
    assert main(["-q", "export", str(long_form), "--vintage", "2", "--to", str(to)]) == 0  # a name prefix
    written = sorted(p.stem for p in to.glob("*.csv"))
    assert written == sorted(p.stem for p in (long_form / "latest").glob("*.parquet"))
    growth = pd.read_csv(to / "growth.csv", dtype=str, keep_default_na=False)
    assert list(growth.columns) == ["STRUCTURE", "STRUCTURE_ID", "ACTION", "FREQ", "REF_AREA", "MEASURE", "HORIZON",
                                    "STO", "REF_SECTOR", "TIME_PERIOD", "OBS_VALUE"]
    assert set(growth["STRUCTURE_ID"]) == {"VALVOL:GROWTH(1.0)"}
    original = pd.read_parquet(long_form / "latest" / "growth.parquet")
    assert growth["OBS_VALUE"].astype(float).tolist() == original["pct"].tolist()  # exact doubles
    contributions = pd.read_csv(to / "volume_contributions.csv", nrows=1)
    assert {"AGGREGATE", "OBS_VALUE", "AGGREGATE_GROWTH_PCT", "RESIDUAL_PP"} <= set(contributions.columns)


def test_round_trip_where_valvol_derived_aggregates_years_and_volumes(tmp_path):
    # Components at current and previous-year prices only: P3 (declared), every year and every
    # chain-linked volume are derived, so the exported levels mark them and the rebuild derives them again.
    lines = ["economy,period,item,price_basis,value"]
    for item, base in (("P31_S14", 60.0), ("P3_S13", 20.0)):
        for basis, step in (("current", 0.4), ("previous_year", 0.3)):
            lines += [f"XQ,{y}-Q{q},{item},{basis},{base + step * (4 * i + q):.1f}"
                      for i, y in enumerate((2019, 2020, 2021)) for q in range(1, 5)]
    accounts = tmp_path / "accounts"
    accounts.mkdir()
    (accounts / "accounts.csv").write_text("\n".join(lines) + "\n")
    (accounts / "valvol.toml").write_text('[aggregates]\nP3 = ["P31_S14", "P3_S13"]\n')
    first = tmp_path / "first"
    _rebuild(accounts, first)
    to = tmp_path / "exported"
    assert main(["-q", "export", str(first), "--table", "levels", "--to", str(to)]) == 0
    marks = pd.read_csv(to / "levels.csv", dtype=str, keep_default_na=False)["VALVOL_DERIVED"]
    assert set(marks) == {"", "annual", "aggregate", "chain_linked", "residual"}
    assert (marks == "").sum() == len(lines) - 1
    shutil.copyfile(accounts / "valvol.toml", to / "valvol.toml")
    assert _tables(_rebuild(to, tmp_path / "second")) == _tables(first / "latest")


@pytest.mark.parametrize("argv, says", [
    (["--table", "nope"], "--table: no table nope in vintage"),
    (["--vintage", "nope"], "vintage 'nope' not found"),
])
def test_export_refuses(argv, says, long_form, tmp_path, capsys):
    assert main(["-q", "export", str(long_form), *argv, "--to", str(tmp_path / "x")]) in (1, 2)
    assert says in capsys.readouterr().err


def test_export_refuses_a_folder_inside_the_output_root(long_form, capsys):
    assert main(["-q", "export", str(long_form), "--to", str(long_form / "sdmx")]) == 2
    assert "lies inside the output folder" in capsys.readouterr().err
