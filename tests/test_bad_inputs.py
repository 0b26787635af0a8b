"""The bad-input catalogue (README, input contract): every malformed input is answered alike.

Each case is one malformed accounts folder, configuration, output folder or option. For
each, the package function raises `InputError` or `ConfigError`, the message names the
file and row, series and period (or the configuration key, or the paths), ``valvol check``
and ``valvol rebuild --no-flow --no-charts`` exit with code 2 and show no traceback, and
the outputs of an earlier good rebuild into the same folder stay byte-identical.
"""

from __future__ import annotations

import codecs
import hashlib
import io
import os
from dataclasses import dataclass, field
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from valvol import pipeline
from valvol.cli import main
from valvol.errors import ConfigError, InputError

HEADER = "economy,period,item,price_basis,value\n"
YEARS = (2019, 2020, 2021)


def quarters(item: str, basis: str, value: float = 10.0, *, economy: str = "XQ", years=YEARS, step=0.1) -> str:
    """CSV lines of one quarterly series, rising by ``step`` a quarter."""
    return "".join(f"{economy},{y}-Q{q},{item},{basis},{value + step * (4 * i + q):.3f}\n"
                   for i, y in enumerate(years) for q in range(1, 5))


#: The good accounts of the baseline: household and government consumption, two price bases.
GOOD = HEADER + "".join(quarters(i, b, v) for i, v in (("P31_S14", 60.0), ("P3_S13", 20.0))
                        for b in ("current", "previous_year"))


def snapshot(root: Path) -> dict[str, str]:
    """Every file (SHA-256) and symbolic link (its target) under ``root``, not following links;
    the output lock ``.lock`` (and its holder file) aside (a rebuild may take it even when it then refuses)."""
    out = {}
    for folder, dirs, files in os.walk(root):
        for name in dirs + files:
            path = Path(folder) / name
            rel = path.relative_to(root).as_posix()
            if rel in (".lock", ".lock.pid"):
                continue
            if path.is_symlink():
                out[rel] = "-> " + os.readlink(path)
            elif path.is_file():
                out[rel] = hashlib.sha256(path.read_bytes()).hexdigest()
    return out


@pytest.fixture(scope="module")
def baseline(tmp_path_factory):
    """One good rebuild into an output folder, shared by every case of the module, and its snapshot."""
    root = tmp_path_factory.mktemp("baseline")
    good = root / "good"
    good.mkdir()
    (good / "accounts.csv").write_text(GOOD)
    out = root / "out"
    assert main(["-q", "rebuild", str(good), "--out", str(out), "--no-flow", "--no-charts"]) == 0
    before = snapshot(out)
    assert any(k.endswith("levels.parquet") for k in before)
    return good, out, before


def _parquet(table: pa.Table) -> bytes:
    buf = io.BytesIO()
    pq.write_table(table, buf)
    return buf.getvalue()


def _text_table(**columns) -> pa.Table:
    return pa.table({k: pa.array(v, pa.string() if k != "value" else pa.float64()) for k, v in columns.items()})


@dataclass(frozen=True)
class Case:
    """One malformed accounts folder: its files, its valvol.toml, and what the answer must say."""

    files: dict[str, str | bytes]
    says: tuple[str, ...]
    toml: str | bytes | None = None
    error: type = InputError
    subfolders: dict[str, str | bytes] = field(default_factory=dict)


def q4(item: str, basis: str, values, *, economy: str = "XQ", year: int = 2020) -> str:
    return "".join(f"{economy},{year}-Q{q},{item},{basis},{v}\n" for q, v in zip(range(1, 5), values, strict=True))


LATIN1 = (HEADER.replace("value\n", "value,unit\n") + "XQ,2020,P6,current,1,tessel\n"
          + "XQ,2021,P6,current,1,tessel millión\n").encode("latin-1")
CP1252 = (HEADER.replace("value\n", "value,unit\n") + "XQ,2020,P6,current,1,€ million\n").encode("cp1252")
AGGREGATE_P3 = '[aggregates]\nP3 = ["P31_S14", "P3_S13"]\n'
BENCHMARK = '[benchmark]\nitems = ["P31_S14"]\nbenchmarks = "annual/benchmarks.csv"\n'

MONTHS_2020 = "".join(f"XQ,2020-{m:02d},CPI_CP01,index,100\n" for m in range(1, 13))

CASES: dict[str, Case] = {
    # --- price bridge: sub-indexes, basket weights, purposes (valvol.methods.price_bridge) ---
    "sub_index_without_weight": Case(
        {"accounts.csv": GOOD, "cpi.csv": HEADER + MONTHS_2020},
        ("cpi.csv:2 XQ/CPI_CP01/index/2020-01: sub-index of CPI without a basket weight for weight-reference "
         "year 2020",)),
    "quarterly_weight": Case(
        {"accounts.csv": GOOD, "cpi.csv": HEADER + MONTHS_2020 + "XQ,2020-Q1,CPI_CP01,weight,50\n"},
        ("cpi.csv:14 XQ/CPI_CP01/weight/2020-Q1: a basket weight (price_basis weight) is annual",)),
    "weight_of_the_headline": Case(
        {"accounts.csv": GOOD, "cpi.csv": HEADER + "XQ,2020,CPI,weight,1000\n"},
        ("cpi.csv:2 XQ/CPI/weight/2020: a basket weight belongs to a sub-index CPI_<COICOP>",)),
    "purposes_do_not_add_up": Case(
        {"accounts.csv": GOOD, "coicop.csv": HEADER + quarters("P31_S14_CP01", "current", 50.0)
         + quarters("P31_S14_CP042", "current", 5.0)},
        ("accounts.csv:2 XQ/P31_S14/current/2019-Q1: the purposes P31_S14_<COICOP> add up to 55.2, not to the "
         "P31_S14 given (60.1)",)),
    "bridge_pair_not_of_the_form": Case(
        {"accounts.csv": GOOD}, ("[price_bridge] pairs: 'CP0451=P31_S14_CP045' is not CPI_<CODE>=P31_S14_<CODE>",),
        toml='[price_bridge]\npairs = ["CP0451=P31_S14_CP045"]\n', error=ConfigError),
    # --- columns ---
    "missing_column": Case({"a.csv": "economy,period,item,price_basis\nXQ,2020,P6,current\n"},
                           ("a.csv:1: missing column(s) value",)),
    "misspelt_column": Case({"a.csv": "economy,period,item,price_basis,valeu\nXQ,2020,P6,current,1\n"},
                            ("a.csv:1: missing column(s) value",)),
    "misspelt_column_beside_an_unknown_one": Case(
        {"a.csv": "economy,period,item,price_basis,valeu,comment\nXQ,2020,P6,current,1,x\n"},
        ("a.csv:1: missing column(s) value",)),
    "duplicated_column": Case({"a.csv": "economy,period,item,price_basis,value,value\nXQ,2020,P6,current,1,2\n"},
                              ("a.csv:1: column(s) value appear more than once",)),
    "duplicated_column_parquet": Case(
        {"a.parquet": _parquet(pa.Table.from_arrays([pa.array(["XQ"]), pa.array(["2020"]), pa.array(["P6"]),
                                                     pa.array(["current"]), pa.array([1.0]), pa.array([2.0])],
                                                    names=["economy", "period", "item", "price_basis", "value",
                                                           "value"]))},
        ("a.parquet: column(s) value appear more than once",)),
    "too_many_cells": Case({"a.csv": HEADER + "XQ,2020,P6,current,1\nXQ,2021,P6,current,1,9\n"},
                           ("a.csv:3: 6 cells where the header has 5",)),
    "too_few_cells": Case({"a.csv": HEADER + "XQ,2020,P6,current,1\nXQ,2021,P6,current\n"},
                          ("a.csv:3: 4 cells where the header has 5",)),
    "semicolon_separated": Case({"a.csv": HEADER.replace(",", ";") + "XQ;2020;P6;current;1\n"},
                                ("a.csv:1: missing column(s)", "separated by ';'")),
    # --- periods ---
    "quarter_0": Case({"a.csv": HEADER + "XQ,2020-Q0,P6,current,1\n"},
                      ("a.csv:2 XQ/P6/current/2020-Q0: period must be YYYY-Qn, YYYYQn or YYYY (found '2020-Q0')",)),
    "quarter_5": Case({"a.csv": HEADER + "XQ,2020Q5,P6,current,1\n"},
                      ("a.csv:2 XQ/P6/current/2020Q5: period must be YYYY-Qn", "(found '2020Q5')")),
    "month_in_accounts": Case({"a.csv": HEADER + "XQ,2020-03,P6,current,1\n"},
                              ("a.csv:2 XQ/P6/current/2020-03: monthly periods (YYYY-MM) are for price indexes "
                               "only (found '2020-03')",)),
    "period_words": Case({"a.csv": HEADER + "XQ,Q1 2020,P6,current,1\n"},
                         ("a.csv:2 XQ/P6/current/Q1 2020: period must be", "(found 'Q1 2020')")),
    "period_two_digit_year": Case({"a.csv": HEADER + "XQ,20-Q1,P6,current,1\n"},
                                  ("a.csv:2 XQ/P6/current/20-Q1: period must be",)),
    "mixed_period_forms": Case({"a.csv": HEADER + "XQ,2020Q1,P6,current,1\nXQ,2020-Q1,P6,current,1\n"},
                               ("a.csv:3 XQ/P6/current/2020-Q1: duplicate of a.csv:2",
                                "written '2020Q1' there and '2020-Q1' here")),
    # --- duplicated keys, gaps ---
    "duplicate_key_one_file": Case({"a.csv": HEADER + "XQ,2020,P6,current,1\nXQ,2021,P6,current,1\n"
                                    "XQ,2020,P6,current,2\n"},
                                   ("a.csv:4 XQ/P6/current/2020: duplicate of a.csv:2",)),
    "duplicate_key_across_files": Case({"a.csv": HEADER + "XQ,2020,P6,current,1\n",
                                        "b.csv": HEADER + "XQ,2020,P6,current,1\n"},
                                       ("b.csv:2 XQ/P6/current/2020: duplicate of a.csv:2",)),
    "quarter_gap": Case({"a.csv": HEADER + "XQ,2020-Q1,P6,current,1\nXQ,2020-Q2,P6,current,1\n"
                         "XQ,2021-Q1,P6,current,1\n"},
                        ("a.csv XQ/P6/current/2020-Q3 to 2020-Q4: series is not contiguous",)),
    "year_gap": Case({"a.csv": HEADER + "XQ,2019,P6,current,1\nXQ,2021,P6,current,1\n"},
                     ("a.csv XQ/P6/current/2020: series is not contiguous: 2020 missing",)),
    # --- values ---
    "value_not_a_number": Case({"a.csv": HEADER + "XQ,2020,P6,current,abc\n"},
                               ("a.csv:2 XQ/P6/current/2020: value is not a number (found 'abc')",)),
    "value_nan": Case({"a.csv": HEADER + "XQ,2020,P6,current,NaN\n"},
                      ("a.csv:2 XQ/P6/current/2020: value is not a number (found 'NaN')",)),
    "value_empty": Case({"a.csv": HEADER + "XQ,2020,P6,current,\n"},
                        ("a.csv:2 XQ/P6/current/2020: value is not a number (found '')",)),
    "value_thousands_separator": Case({"a.csv": HEADER + 'XQ,2020,P6,current,"1,234"\n'},
                                      ("a.csv:2 XQ/P6/current/2020: value is not a number (found '1,234')",)),
    "value_infinite": Case({"a.csv": HEADER + "XQ,2020,P6,current,inf\n"},
                           ("a.csv:2 XQ/P6/current/2020: value must be a finite number (found 'inf')",)),
    "value_overflows": Case({"a.csv": HEADER + "XQ,2020,P6,current,1e400\n"},
                            ("a.csv:2 XQ/P6/current/2020: value must be a finite number (found '1e400')",)),
    "negative_level": Case({"a.csv": HEADER + "XQ,2020,P31_S14,current,-5\n"},
                           ("a.csv:2 XQ/P31_S14/current/2020: negative level", "sign_changing", "(found '-5')")),
    "negative_level_breakdown": Case({"a.csv": HEADER + "XQ,2020,P51G_BI,current,-1\n"},
                                     ("a.csv:2 XQ/P51G_BI/current/2020: negative level", "sign_changing")),
    "zero_volume_quarter": Case({"a.csv": HEADER + q4("P6", "current", (10, 11, 12, 13))
                                 + q4("P6", "chain_linked", (10, 0, 12, 13))},
                                ("a.csv:7 XQ/P6/chain_linked/2020-Q2: chain_linked value 0 is zero or negative",
                                 "deflator (current / volume) is undefined")),
    "zero_volume_year": Case({"a.csv": HEADER + "XQ,2020,P6,current,1\nXQ,2020,P6,chain_linked,0\n"},
                             ("a.csv:3 XQ/P6/chain_linked/2020: chain_linked value 0 is zero or negative",
                              "deflator (current / volume) is undefined")),
    # --- codes ---
    "unknown_item": Case({"a.csv": HEADER + "XQ,2020,FOO,current,1\n"},
                         ("a.csv:2 XQ/FOO/current/2020: item is not a known SNA code", "[aggregates]")),
    "lowercase_economy": Case({"a.csv": HEADER + "xq,2020,P6,current,1\n"},
                              ("a.csv:2 xq/P6/current/2020: economy code must be 2-16 characters",)),
    "unknown_price_basis": Case({"a.csv": HEADER + "XQ,2020,P6,real,1\n"},
                                ("a.csv:2 XQ/P6/real/2020: price_basis must be one of", "(found 'real')")),
    "index_basis_on_accounts_item": Case({"a.csv": HEADER + "XQ,2020,P6,index,1\n"},
                                         ("a.csv:2 XQ/P6/index/2020: price_basis index is for price indexes",
                                          "(found 'index')")),
    "price_index_zero": Case({"a.csv": GOOD, "cpi.csv": HEADER + "XQ,2020-01,CPI,index,0\n"},
                             ("cpi.csv:2 XQ/CPI/index/2020-01: a price index must be positive",)),
    "price_index_without_accounts": Case({"a.csv": GOOD, "cpi.csv": HEADER + "XR,2020-01,CPI,index,100\n"},
                                         ("cpi.csv:2 XR/CPI/index: price index of an economy that has no accounts",)),
    # --- identities ---
    "aggregate_does_not_add": Case({"a.csv": HEADER + q4("P31_S14", "current", (60, 60, 60, 60))
                                    + q4("P3_S13", "current", (20, 20, 20, 20)) + q4("P3", "current", (80, 80, 90, 80))},
                                   ("a.csv:12 XQ/P3/current/2020-Q3: components do not add to the aggregate: "
                                    "residual 10",), toml=AGGREGATE_P3),
    "annual_total_inconsistent": Case({"a.csv": HEADER + q4("P6", "current", (10, 10, 10, 10))
                                       + "XQ,2020,P6,current,50\n"},
                                      ("a.csv:6 XQ/P6/current/2020: quarters do not add to the year: residual 10",)),
    # --- configuration ---
    "config_cycle": Case({"a.csv": GOOD}, ("valvol.toml: aggregates form a cycle: ",),
                         toml='[aggregates]\nA1 = ["B2"]\nB2 = ["A1"]\n', error=ConfigError),
    "config_unknown_key": Case({"a.csv": GOOD}, ("valvol.toml: unknown key(s) colour",), toml="colour = 1\n",
                               error=ConfigError),
    "config_unknown_section_key": Case({"a.csv": GOOD}, ("valvol.toml: unknown key(s) in [checks]: tolerance",),
                                       toml="[checks]\ntolerance = 1\n", error=ConfigError),
    "config_wrong_type_year": Case({"a.csv": GOOD}, ("valvol.toml: reference_year must be a four-digit year",),
                                   toml='reference_year = "2020"\n', error=ConfigError),
    "config_wrong_type_bool": Case({"a.csv": GOOD}, ("valvol.toml: levels_at_annual_rate must be true or false",),
                                   toml="levels_at_annual_rate = 1\n", error=ConfigError),
    "config_unknown_choice": Case({"a.csv": GOOD}, ("valvol.toml: [volumes] method must be one of",),
                                  toml='[volumes]\nmethod = "chain"\n', error=ConfigError),
    "config_not_finite": Case({"a.csv": GOOD}, ("valvol.toml: [checks] tolerance_abs must be a finite",),
                              toml="[checks]\ntolerance_abs = nan\n", error=ConfigError),
    "config_aggregate_not_a_list": Case({"a.csv": GOOD}, ("valvol.toml: [aggregates] B1GQ must be a list",),
                                        toml="[aggregates]\nB1GQ = { P6 = 1 }\n", error=ConfigError),
    "config_broken_toml": Case({"a.csv": GOOD}, ("valvol.toml: not valid TOML", "line 2"),
                               toml="reference_year = 2020\n[checks\n", error=ConfigError),
    "config_latin1": Case({"a.csv": GOOD}, ("valvol.toml: not UTF-8 text: byte 0xE9 on line 1",
                                            "Latin-1", "save it as UTF-8"),
                          toml="# année de référence\nreference_year = 2020\n".encode("latin-1"), error=ConfigError),
    "config_benchmarks_outside_folder": Case({"a.csv": GOOD}, ("valvol.toml: [benchmark] benchmarks must be a path "
                                                               "inside the accounts folder",),
                                             toml=BENCHMARK.replace("annual/", "../../"), error=ConfigError),
    "benchmarks_file_utf16": Case({"a.csv": GOOD}, ("annual/benchmarks.csv:1: UTF-16 text",),
                                  toml=BENCHMARK, subfolders={"annual/benchmarks.csv": (
                                      HEADER + "XQ,2020,P31_S14,current,250\n").encode("utf-16")}),
    "benchmarks_file_missing_columns": Case({"a.csv": GOOD}, ("annual/benchmarks.csv:1: missing column(s) item",),
                                            toml=BENCHMARK, subfolders={"annual/benchmarks.csv":
                                                                        "economy,period\nXQ,2020\n"}),
    # --- files ---
    "empty_file": Case({"a.csv": ""}, ("a.csv: empty file",)),
    "header_only": Case({"a.csv": GOOD, "b.csv": HEADER}, ("b.csv:1: a header but no data rows",)),
    "parquet_without_rows": Case({"a.parquet": _parquet(_text_table(economy=[], period=[], item=[], price_basis=[],
                                                                    value=[]))},
                                 ("a.parquet: no data rows",)),
    "parquet_corrupt": Case({"a.parquet": b"PAR1 not really"}, ("a.parquet: cannot be read as parquet",)),
    "huge_cell": Case({"a.csv": HEADER + "XQ,2020,P" + "A" * 10_000_000 + ",current,1\n"},
                      ("a.csv:2: not readable as CSV: a cell longer than",)),
    "unterminated_quote": Case({"a.csv": HEADER + 'XQ,2020,P6,current,"1\n'},
                               ("a.csv:2: not readable as CSV",)),
    "utf16_with_bom": Case({"a.csv": GOOD.encode("utf-16")}, ("a.csv:1: UTF-16 text", "save it as UTF-8")),
    "utf16_without_bom": Case({"a.csv": GOOD.encode("utf-16-le")}, ("a.csv:1: likely UTF-16", "save it as UTF-8")),
    "utf32_with_bom": Case({"a.csv": GOOD.encode("utf-32")}, ("a.csv:1: UTF-32 text", "save it as UTF-8")),
    "latin1": Case({"a.csv": LATIN1}, ("a.csv:3: not UTF-8 text: byte 0xF3 on line 3",
                                       "likely Latin-1 or Windows-1252", "save it as UTF-8")),
    "windows1252": Case({"a.csv": CP1252}, ("a.csv:2: not UTF-8 text: byte 0x80 on line 2", "Windows-1252")),
    # --- hostile codes ---
    "economy_path": Case({"a.csv": HEADER + "../../x,2020,P6,current,1\n"},
                         ("a.csv:2 ../../x/P6/current/2020: economy code must be", "(found '../../x')")),
    "economy_sql": Case({"a.csv": HEADER + "XQ'; DROP TABLE levels; --,2020,P6,current,1\n"},
                        ("a.csv:2 XQ'; DROP TABLE levels; --/P6/current/2020: economy code must be",)),
    "item_sql": Case({"a.csv": HEADER + "XQ,2020,XQ'; DROP TABLE levels; --,current,1\n"},
                     ("a.csv:2 XQ/XQ'; DROP TABLE levels; --/current/2020: item is not of the form of an SNA code",)),
    "item_path": Case({"a.csv": HEADER + "XQ,2020,../../P6,current,1\n"},
                      ("a.csv:2 XQ/../../P6/current/2020: item is not of the form of an SNA code",)),
    "nul_byte": Case({"a.csv": HEADER + "XQ\x00,2020,P6,current,1\n"},
                     ("a.csv:2 XQ\\x00/P6/current/2020: economy code must be",)),
    "long_economy": Case({"a.csv": HEADER + "X" * 5000 + ",2020,P6,current,1\n"},
                         ("a.csv:2 XXXX", "(5000 characters)/P6/current/2020: economy code must be")),
    "long_item": Case({"a.csv": HEADER + "XQ,2020,P" + "A" * 100_000 + ",current,1\n"},
                      ("a.csv:2 XQ/PAAAA", "(100001 characters)/current/2020: item is not a known SNA code")),
}


def _folder(root: Path, case: Case) -> Path:
    folder = root / "accounts"
    folder.mkdir(parents=True)
    for name, content in {**case.files, **case.subfolders}.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(content if isinstance(content, bytes) else content.encode())
    if case.toml is not None:
        (folder / "valvol.toml").write_bytes(case.toml if isinstance(case.toml, bytes) else case.toml.encode())
    return folder


def _said(text: str, says: tuple[str, ...]) -> None:
    for fragment in says:
        assert fragment in text, f"{fragment!r} not in:\n{text[:3000]}"
    assert "Traceback" not in text
    assert len(text) < 5000, "the answer must stay short, whatever the input holds"


def test_the_catalogue_is_large_enough():
    assert len(CASES) + len(FOLDER_CASES) + len(OPTION_CASES) >= 40


def assert_refused(case: Case, baseline, tmp_path, capsys) -> None:
    """The package function, ``check`` and ``rebuild`` all refuse ``case`` with its located message
    (exit 2, no traceback), and the earlier outputs stay byte-identical."""
    _, out, before = baseline
    folder = _folder(tmp_path, case)
    work = tmp_path / "work"
    work.mkdir()
    with pytest.raises(case.error) as err:  # the package function
        pipeline.check(folder, work)
    _said(str(err.value), case.says)
    if isinstance(err.value, InputError):
        assert all(p.file for p in err.value.problems), "every problem names its file"
    capsys.readouterr()
    assert main(["-q", "check", str(folder)]) == 2
    _said(capsys.readouterr().err, case.says)
    assert main(["-q", "rebuild", str(folder), "--out", str(out), "--no-flow", "--no-charts"]) == 2
    _said(capsys.readouterr().err, case.says)
    assert snapshot(out) == before, "the earlier outputs changed"


@pytest.mark.parametrize("name", list(CASES))
def test_bad_accounts(name, baseline, tmp_path, capsys):
    assert_refused(CASES[name], baseline, tmp_path, capsys)


def test_unknown_columns_are_dropped_with_a_warning(tmp_path, capsys):
    lines = GOOD.splitlines()
    commented = "".join(f"{line},{'comment' if i == 0 else 'x'}\n" for i, line in enumerate(lines))
    folder = _folder(tmp_path, Case({"a.csv": commented}, ()))
    assert main(["check", str(folder)]) == 0
    assert "a.csv: unknown column(s) comment dropped" in capsys.readouterr().err


def test_utf8_with_bom_is_accepted(tmp_path):
    folder = _folder(tmp_path, Case({"a.csv": codecs.BOM_UTF8 + GOOD.encode()}, (),
                                    toml=codecs.BOM_UTF8 + b"reference_year = 2020\n"))
    work = tmp_path / "work"
    work.mkdir()
    assert pipeline.check(folder, work) == GOOD.count("\n") - 1


def test_blank_lines_keep_line_numbers(tmp_path):
    folder = _folder(tmp_path, Case({"a.csv": HEADER + "XQ,2020,P6,current,1\n\n,,,,\r\nXQ,2021,P6,current,x\n"}, ()))
    work = tmp_path / "work"
    work.mkdir()
    with pytest.raises(InputError) as err:
        pipeline.check(folder, work)
    assert [p.render() for p in err.value.problems] == [
        "a.csv:5 XQ/P6/current/2021: value is not a number (found 'x')"]


# --- output folders: refused before anything is written, naming the path(s) ---

def _out_is_file(root: Path, accounts: Path) -> tuple[Path, Path, tuple[str, ...]]:
    (root / "out.txt").write_text("keep me")
    return root / "out.txt", root, (f"output folder {root / 'out.txt'} exists and is not a folder",)


def _out_under_file(root: Path, accounts: Path):
    (root / "out.txt").write_text("keep me")
    return root / "out.txt" / "out", root, (f"output folder {root / 'out.txt' / 'out'} cannot be created: "
                                            f"{(root / 'out.txt').resolve()} is not a folder",)


def _out_name_too_long(root: Path, accounts: Path):
    return root / ("x" * 300), root, ("cannot be used: File name too long",)


def _out_lock_unwritable(root: Path, accounts: Path):
    (root / "out" / ".lock").mkdir(parents=True)  # the lock cannot be opened: a folder in its way
    return root / "out", root, (f"output folder {root / 'out'} cannot be written",)


def _out_is_accounts(root: Path, accounts: Path):
    return accounts, root, ("the output folder is the accounts folder", f"output folder {accounts}",
                            f"accounts folder {accounts}")


def _out_inside_accounts(root: Path, accounts: Path):
    return accounts / "out", root, ("the output folder lies inside the accounts folder",
                                    f"output folder {accounts / 'out'}", f"accounts folder {accounts}")


def _out_contains_accounts(root: Path, accounts: Path):
    return root, root, ("the output folder contains the accounts folder", f"output folder {root}",
                        f"accounts folder {accounts}")


def _out_is_accounts_by_another_name(root: Path, accounts: Path):
    (root / "alias").symlink_to(accounts)
    return root / "alias" / ".." / "alias", root, ("the output folder is the accounts folder",)


FOLDER_CASES = {
    "out_is_a_file": _out_is_file,
    "out_under_a_file": _out_under_file,
    "out_name_too_long": _out_name_too_long,
    "out_cannot_be_written": _out_lock_unwritable,
    "out_is_accounts": _out_is_accounts,
    "out_inside_accounts": _out_inside_accounts,
    "out_contains_accounts": _out_contains_accounts,
    "out_is_accounts_through_a_link": _out_is_accounts_by_another_name,
}


@pytest.mark.parametrize("flow", [False, True], ids=["no_flow", "flow"])
@pytest.mark.parametrize("name", list(FOLDER_CASES))
def test_bad_output_folder(name, flow, tmp_path, capsys):
    accounts = tmp_path / "accounts"
    accounts.mkdir()
    (accounts / "accounts.csv").write_text(GOOD)
    out, watched, says = FOLDER_CASES[name](tmp_path, accounts)
    before = snapshot(watched)
    if not flow:
        with pytest.raises(ConfigError) as err:  # the package function
            pipeline.rebuild(accounts, out, charts=False)
        _said(str(err.value), ("--out", *says))
        assert snapshot(watched) == before
    capsys.readouterr()
    argv = ["-q", "rebuild", str(accounts), "--out", str(out), "--no-charts"] + ([] if flow else ["--no-flow"])
    assert main(argv) == 2  # the flow path refuses before Prefect starts: no .prefect home is made
    _said(capsys.readouterr().err, ("invalid configuration: --out", *says))
    assert snapshot(watched) == before, "nothing may be written"


def test_flow_path_refuses_out_inside_accounts_before_prefect(tmp_path):
    accounts = tmp_path / "accounts"
    accounts.mkdir()
    (accounts / "accounts.csv").write_text(GOOD)
    assert main(["-q", "rebuild", str(accounts), "--out", str(accounts / "out")]) == 2
    assert sorted(p.name for p in accounts.iterdir()) == ["accounts.csv"]


@pytest.mark.skipif(os.geteuid() == 0, reason="permissions do not bind the superuser")
def test_read_only_output_parent(tmp_path, capsys):
    accounts = tmp_path / "accounts"
    accounts.mkdir()
    (accounts / "accounts.csv").write_text(GOOD)
    parent = tmp_path / "ro"
    parent.mkdir(mode=0o555)
    try:
        assert main(["-q", "rebuild", str(accounts), "--out", str(parent / "out"), "--no-flow"]) == 2
        assert f"output folder {parent / 'out'} cannot be written" in capsys.readouterr().err
    finally:
        parent.chmod(0o755)


# --- hostile options: --charts and --label ---

OPTION_CASES = {
    "charts_path": (["--charts", "../../x"], {"chart_economies": ["../../x"]}, "--charts: economy code '../../x'"),
    "charts_sql": (["--charts", "XQ,XQ'; DROP TABLE levels; --"], {"chart_economies": ["XQ'; DROP TABLE levels; --"]},
                   "--charts: economy code \"XQ'; DROP TABLE levels; --\""),
    "charts_nul": (["--charts", "XQ\x00"], {"chart_economies": ["XQ\x00"]}, "--charts: economy code 'XQ\\x00'"),
    "charts_long": (["--charts", "X" * 5000], {"chart_economies": ["X" * 5000]}, "(5000 characters)"),
    "label_path": (["--label", "../../x"], {"label": "../../x"}, "--label: vintage label '../../x'"),
    "label_sql": (["--label", "x'; DROP TABLE levels; --"], {"label": "x'; DROP TABLE levels; --"},
                  "--label: vintage label"),
    "label_nul": (["--label", "v1\x00"], {"label": "v1\x00"}, "--label: vintage label 'v1\\x00'"),
    "label_newline": (["--label", "v1\n"], {"label": "v1\n"}, "--label: vintage label 'v1\\n'"),
}


@pytest.mark.parametrize("name", list(OPTION_CASES))
def test_hostile_options(name, baseline, capsys):
    argv, kwargs, says = OPTION_CASES[name]
    good, out, before = baseline
    with pytest.raises(ConfigError) as err:  # the package function
        pipeline.rebuild(good, out, force=True, **kwargs)
    _said(str(err.value), (says,))
    capsys.readouterr()
    assert main(["-q", "rebuild", str(good), "--out", str(out), "--no-flow", "--force", *argv]) == 2
    _said(capsys.readouterr().err, ("invalid configuration", says))
    assert main(["-q", "rebuild", str(good), "--out", str(out), "--force", *argv]) == 2  # flow path, before Prefect
    _said(capsys.readouterr().err, (says,))
    assert snapshot(out) == before
