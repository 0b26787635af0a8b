"""Atomic publication and the output lock (README, outputs: "Publication is atomic")."""

from __future__ import annotations

import os

import pytest

from valvol.errors import OutputBusyError, PublishError
from valvol.io import publish as pub


def _vintage(out, name, content):
    work = pub.new_staging_dir(out)
    (work / "levels.parquet").write_text(content)
    return pub.publish(work, out, name, ["levels.parquet"])


def test_latest_moves_and_top_level_links_follow(tmp_path):
    out = tmp_path / "out"
    with pub.output_lock(out):
        _vintage(out, "v1", "one")
    assert (out / "levels.parquet").read_text() == "one"
    with pub.output_lock(out):
        _vintage(out, "v2", "two")
    assert (out / "levels.parquet").read_text() == "two"
    assert os.readlink(out / "latest") == os.path.join("vintages", "v2")
    assert (out / "vintages" / "v1" / "levels.parquet").read_text() == "one"


def test_second_writer_fails_at_once_with_clear_message(tmp_path):
    out = tmp_path / "out"
    with pub.output_lock(out):
        with pytest.raises(OutputBusyError, match="another rebuild is writing to"):
            with pub.output_lock(out):
                pass


def test_leftover_staging_is_cleaned_and_never_visible(tmp_path):
    out = tmp_path / "out"
    with pub.output_lock(out):
        _vintage(out, "v1", "one")
        crashed = pub.new_staging_dir(out)
        (crashed / "levels.parquet").write_text("half")
    with pub.output_lock(out):
        fresh = pub.new_staging_dir(out)
    assert not crashed.exists() and fresh.exists()
    assert (out / "levels.parquet").read_text() == "one"
    assert sorted(p.name for p in (out / "vintages").iterdir()) == ["v1"]


def test_existing_foreign_file_is_not_overwritten(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "levels.parquet").write_text("user file")
    with pub.output_lock(out), pytest.raises(PublishError):
        _vintage(out, "v1", "one")
    assert (out / "levels.parquet").read_text() == "user file"
    assert not (out / "latest").exists()
