"""Prefect settings for quiet, offline runs on the embedded default; applied before prefect is imported.

Values are defaults only (``os.environ.setdefault``): a team server
(``PREFECT_API_URL``) or the user's own settings win. Facts behind each value:
PLATFORM.md section 1.2 (telemetry, ephemeral server start-up timeout, home).
"""

from __future__ import annotations

import os
from pathlib import Path

DEFAULTS = {
    "PREFECT_SERVER_ANALYTICS_ENABLED": "false",
    "DO_NOT_TRACK": "1",
    "PREFECT_SERVER_EPHEMERAL_STARTUP_TIMEOUT_SECONDS": "120",
    "PREFECT_LOGGING_LEVEL": "WARNING",
    "PREFECT_SERVER_UI_SHOW_PROMOTIONAL_CONTENT": "false",
    "PREFECT_LOGGING_TO_API_WHEN_MISSING_FLOW": "ignore",
}


def configure(state_dir: str | Path) -> Path:
    """Set the defaults and a project-local ``PREFECT_HOME`` under ``state_dir``; return the home."""
    home = Path(state_dir).resolve() / ".prefect"
    os.environ.setdefault("PREFECT_HOME", str(home))
    for key, value in DEFAULTS.items():
        os.environ.setdefault(key, value)
    Path(os.environ["PREFECT_HOME"]).mkdir(parents=True, exist_ok=True)
    return Path(os.environ["PREFECT_HOME"])
