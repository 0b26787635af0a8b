"""The manifest of a vintage: inputs with their SHA-256, config, versions, row counts, timings.

The vintage name is ``<UTC timestamp>-<fingerprint[:8]>``; the fingerprint is the
SHA-256 of the input files' hashes, the configuration and the valvol version,
so identical inputs under identical code and config share a fingerprint.
"""

from __future__ import annotations

import hashlib
import json
import platform
from datetime import UTC, datetime
from importlib import metadata
from pathlib import Path

from valvol import __version__
from valvol.config import CONFIG_FILE, Config
from valvol.io.publish import sha256_file
from valvol.io.readers import account_files

_PACKAGES = ("pandas", "numpy", "pyarrow", "duckdb", "pandera", "prefect", "scipy")


def input_files(accounts_dir: Path) -> list[dict[str, str]]:
    """Every file that shaped the rebuild (data files and valvol.toml), with SHA-256."""
    files = account_files(accounts_dir)
    if (accounts_dir / CONFIG_FILE).exists():
        files.append(accounts_dir / CONFIG_FILE)
    return [{"file": p.name, "sha256": sha256_file(p)} for p in sorted(files)]


def fingerprint(accounts_dir: Path, config: Config) -> str:
    """SHA-256 over inputs, configuration and valvol version."""
    payload = json.dumps(
        {"inputs": input_files(accounts_dir), "config": _config_for_hash(config), "valvol": __version__},
        sort_keys=True,
    )
    return hashlib.sha256(payload.encode()).hexdigest()


def _config_for_hash(config: Config) -> dict:
    data = config.as_dict()
    data.pop("source", None)
    return data


def build_manifest(
    accounts_dir: Path, config: Config, counts: dict[str, int], checks: dict[str, int], timings: dict[str, float]
) -> dict:
    """The manifest written last into a vintage."""
    now = datetime.now(UTC)
    fp = fingerprint(accounts_dir, config)
    versions = {"valvol": __version__, "python": platform.python_version()}
    for name in _PACKAGES:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = None
    return {
        "vintage": f"{now:%Y%m%dT%H%M%SZ}-{fp[:8]}",
        "created_at": now.isoformat(timespec="seconds"),
        "fingerprint": fp,
        "accounts_dir": str(accounts_dir.resolve()),
        "inputs": input_files(accounts_dir),
        "config": config.as_dict(),
        "versions": versions,
        "row_counts": counts,
        "checks": {"pass": 0, "warn": 0, "fail": 0, **checks},
        "timings_s": timings,
        "caution": "Analytical outputs, not official statistics; the compiling agency's methodology "
                   "and release rules prevail.",
    }
