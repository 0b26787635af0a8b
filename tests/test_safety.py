"""Safety under faults and concurrency, with real processes (issue: scheduled rebuilds, vintages).

A rebuild killed at any point (SIGKILL included) leaves the previous vintage and ``latest``
intact and no half-written vintage visible; the next run cleans up. Two rebuilds into one
output root at once: one fails at once with a clear message (exit 3), nothing is corrupted.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import time
from pathlib import Path

import pytest
from support import valvol_command

from valvol import pipeline

CLI = valvol_command()


def _start(demo_dir: Path, out: Path, *extra: str) -> subprocess.Popen:
    return subprocess.Popen([*CLI, "-q", "rebuild", str(demo_dir), "--out", str(out), "--no-flow", "--force",
                             *extra], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=out.parent)


def _published_state(out: Path) -> dict:
    latest = (out / "latest").resolve()
    assert (latest / "manifest.json").exists()
    for vintage in (out / "vintages").iterdir():  # every visible vintage is complete
        assert (vintage / "manifest.json").exists(), vintage
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(latest.glob("*.parquet"))}


@pytest.mark.slow
def test_sigkill_at_any_point_leaves_previous_vintage_intact(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, charts=False)
    for delay in (0.5, 1.5, 2.5, 3.5, 4.5, 6.0):
        before_latest = (out / "latest").resolve()
        proc = _start(demo_dir, out, "--no-charts")
        time.sleep(delay)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        state = _published_state(out)
        now_latest = (out / "latest").resolve()
        # either the old vintage is still latest, or the killed run finished publishing in full
        assert now_latest == before_latest or (now_latest / "manifest.json").exists()
        assert state
    done = subprocess.run([*CLI, "-q", "rebuild", str(demo_dir), "--out", str(out), "--no-flow", "--force"],
                          capture_output=True, text=True, timeout=300, cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert not (out / ".staging").exists() or not any((out / ".staging").iterdir())
    _published_state(out)


def test_two_rebuilds_at_once_one_waits_nothing_corrupted(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, charts=False)
    before = _published_state(out)
    first = _start(demo_dir, out)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:  # wait until the first one holds the lock
        text = (out / ".lock.pid").read_text() if (out / ".lock.pid").exists() else ""
        if text.strip() == str(first.pid):
            break
        time.sleep(0.05)
    second = subprocess.run([*CLI, "-q", "rebuild", str(demo_dir), "--out", str(out), "--no-flow", "--force"],
                            capture_output=True, text=True, timeout=120, cwd=tmp_path)
    first_out, first_err = first.communicate(timeout=300)
    assert second.returncode == 3
    assert "another rebuild is writing to" in second.stderr and "Traceback" not in second.stderr
    assert first.returncode == 0, first_err
    after = _published_state(out)
    assert set(before) <= set(after)  # the second vintage adds its revisions tables
    vintages = sorted(p.name for p in (out / "vintages").iterdir())
    assert len(vintages) == 2


def test_invalid_input_leaves_outputs_untouched_from_the_cli(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, charts=False)
    before = _published_state(out)
    bad = tmp_path / "bad"
    bad.mkdir()
    (bad / "a.csv").write_text("economy,period,item,price_basis,value\nXQ,2020-Q1,P6,current,-1\n")
    proc = subprocess.run([*CLI, "-q", "rebuild", str(bad), "--out", str(out), "--no-flow"],
                          capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert proc.returncode == 2 and "a.csv:2 XQ/P6/current/2020-Q1: negative level" in proc.stderr
    assert _published_state(out) == before


@pytest.mark.flow
@pytest.mark.slow
def test_scheduled_rebuild_fires_and_stops_cleanly(demo_dir, tmp_path):
    """A real local Prefect server and a 10-second interval schedule (docs/operations.md §5)."""
    out = tmp_path / "out"
    env = {k: v for k, v in os.environ.items() if not k.startswith("PREFECT_")}
    proc = subprocess.Popen([*CLI, "serve", str(demo_dir), "--out", str(out), "--interval", "10"],
                            stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True, env=env,
                            start_new_session=True, cwd=tmp_path)
    try:
        deadline = time.monotonic() + 240
        while time.monotonic() < deadline and not (out / "latest" / "manifest.json").exists():
            assert proc.poll() is None, proc.stdout.read()
            time.sleep(1)
        assert (out / "latest" / "manifest.json").exists(), "the schedule did not fire within 240 s"
        server_pid = int((out / ".prefect-server" / "server.pid").read_text())
        manifest = json.loads((out / "latest" / "manifest.json").read_text())
        assert manifest["row_counts"]["levels"] > 0
    finally:
        proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=60)
    time.sleep(1)
    with pytest.raises(ProcessLookupError):  # no server left behind
        os.kill(server_pid, 0)
    assert not (out / ".prefect-server" / "server.pid").exists()
