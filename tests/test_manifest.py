"""The rebuild fingerprint and vintage names (valvol/manifest.py).

An equal fingerprint means an unchanged rebuild is skipped, so every input that shapes the
outputs must move it and nothing else may (common practice of reproducible builds).
"""

from __future__ import annotations

import re
import shutil
from datetime import UTC, datetime

import pytest

from valvol.config import load_config
from valvol.errors import ConfigError
from valvol.manifest import check_label, code_fingerprint, fingerprint, input_files, vintage_name


@pytest.fixture
def folder(tmp_path, demo_dir):
    dst = tmp_path / "acc"
    dst.mkdir()
    for name in ("accounts.csv", "cpi.csv", "valvol.toml"):
        shutil.copy(demo_dir / name, dst / name)
    return dst


def fp(folder, options=None):
    return fingerprint(folder, load_config(folder), options)


def test_same_inputs_same_fingerprint_wherever_they_lie(folder, tmp_path):
    copy = tmp_path / "elsewhere"
    shutil.copytree(folder, copy)
    assert fp(folder) == fp(copy)
    assert [f["file"] for f in input_files(folder)] == ["accounts.csv", "cpi.csv", "valvol.toml"]


def test_one_byte_of_data_moves_it(folder):
    before = fp(folder)
    with (folder / "accounts.csv").open("a") as fh:
        fh.write("\n")  # one more (blank) line: the same accounts, another file
    assert fp(folder) != before


def test_config_and_options_move_it(folder):
    before = fp(folder)
    assert fp(folder, {"charts": False}) != before
    toml = folder / "valvol.toml"
    toml.write_text(toml.read_text().replace("reference_year = 2020", "reference_year = 2019"))
    assert fp(folder) != before


def test_a_file_outside_the_inputs_does_not_move_it(folder):
    before = fp(folder)
    (folder / "notes.txt").write_text("not accounts")
    (folder / "sub").mkdir()
    (folder / "sub" / "other.csv").write_text("economy\n")  # sub-folders are not read
    assert fp(folder) == before


def test_code_fingerprint_is_stable_within_a_process():
    assert re.fullmatch(r"[0-9a-f]{64}", code_fingerprint()) and code_fingerprint() == code_fingerprint()


def test_vintage_names_sort_in_time_and_carry_the_label():
    fpr = "0123456789abcdef" * 4
    a = vintage_name(datetime(2026, 1, 2, 3, 4, 5, tzinfo=UTC), fpr, None)
    b = vintage_name(datetime(2026, 1, 2, 3, 4, 6, tzinfo=UTC), fpr, "first")
    assert a == "20260102T030405Z-01234567" and b == "20260102T030406Z-01234567-first" and a < b


@pytest.mark.parametrize("label", ["", "-x", "a b", "x" * 41, "../up", "é"])
def test_bad_labels_are_refused(label):
    with pytest.raises(ConfigError, match="--label"):
        check_label(label)
