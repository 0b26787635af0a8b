"""Prefect settings for quiet, offline runs on the embedded default; applied before prefect is imported.

Values are defaults only (``os.environ.setdefault``): a team server (``PREFECT_API_URL``) or
the user's own settings win. Analytics and client telemetry are off, so the embedded server
makes no connection beyond the loopback interface; its start-up timeout is long enough for a
first run on a slow two-core machine (which migrates a new database for about 15 s).

The Prefect home (its SQLite database) is one per user, ``$XDG_CACHE_HOME/valvol/prefect``
(``~/.cache/valvol/prefect``), or ``VALVOL_PREFECT_HOME``: every rebuild, whatever its output
folder, reuses it, so only the very first run pays the database set-up.
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


def default_home() -> Path:
    """The per-user Prefect home valvol uses unless ``PREFECT_HOME`` is set."""
    explicit = os.environ.get("VALVOL_PREFECT_HOME")
    if explicit:
        return Path(explicit)
    cache = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(cache) / "valvol" / "prefect"


def configure(home: str | Path | None = None) -> Path:
    """Set the defaults and ``PREFECT_HOME`` (``home``, else `default_home`); return the home."""
    os.environ.setdefault("PREFECT_HOME", str(Path(home).resolve() if home else default_home()))
    for key, value in DEFAULTS.items():
        os.environ.setdefault(key, value)
    Path(os.environ["PREFECT_HOME"]).mkdir(parents=True, exist_ok=True)
    return Path(os.environ["PREFECT_HOME"])
