"""Shared fixtures: the demo folder, tiny hand-checkable accounts, and one Prefect test harness."""

from __future__ import annotations

import os
import textwrap
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "sample_accounts"
REFERENCE = Path(__file__).resolve().parent / "reference_data"


@pytest.fixture(scope="session")
def demo_dir() -> Path:
    return DEMO


def write_accounts(folder: Path, csv_text: str, toml_text: str | None = None, name: str = "accounts.csv") -> Path:
    """Write a tiny accounts folder (CSV text dedented) and return it."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / name).write_text(textwrap.dedent(csv_text).lstrip())
    if toml_text is not None:
        (folder / "valvol.toml").write_text(textwrap.dedent(toml_text).lstrip())
    return folder


@pytest.fixture
def accounts(tmp_path: Path):
    """Factory: ``accounts(csv_text, toml_text=None)`` -> folder."""

    def make(csv_text: str, toml_text: str | None = None, name: str = "accounts.csv") -> Path:
        return write_accounts(tmp_path / "accounts", csv_text, toml_text, name)

    return make


@pytest.fixture(scope="session")
def prefect_harness(tmp_path_factory):
    """One Prefect test server for the whole session (docs/operations.md §4.2: ~18 s set-up)."""
    home = tmp_path_factory.mktemp("prefect-home")
    os.environ.setdefault("PREFECT_HOME", str(home))
    from valvol import prefect_env

    prefect_env.configure(home)
    from prefect.testing.utilities import prefect_test_harness

    with prefect_test_harness(server_startup_timeout=120):
        yield
    try:  # flush log workers before pytest closes its streams (Prefect issue 16626)
        from prefect.logging.handlers import APILogWorker

        APILogWorker.instance().drain()
    except Exception:  # noqa: BLE001 - best effort at teardown
        pass
