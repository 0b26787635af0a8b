"""The manifest of a vintage: inputs with their SHA-256, config, versions, row counts, timings.

The vintage name is ``<UTC timestamp>-<fingerprint[:8]>``; the fingerprint is the
SHA-256 of the input files' hashes, the configuration and the valvol version,
so identical inputs under identical code and config share a fingerprint.
"""

from __future__ import annotations

import hashlib
import json
import platform
import re
from datetime import UTC, datetime
from functools import cache
from importlib import metadata, resources
from pathlib import Path

from valvol import __version__
from valvol.config import CONFIG_FILE, Config
from valvol.errors import ConfigError, found
from valvol.io.publish import sha256_file
from valvol.io.readers import account_files

_PACKAGES = ("pandas", "numpy", "pyarrow", "duckdb", "pandera", "prefect", "scipy", "openpyxl")


def input_files(accounts_dir: Path, config: Config | None = None) -> list[dict[str, str]]:
    """Every file that shaped the rebuild (data files, valvol.toml, benchmarks files), with SHA-256."""
    files = account_files(accounts_dir)
    if (accounts_dir / CONFIG_FILE).exists():
        files.append(accounts_dir / CONFIG_FILE)
    if config is not None:
        files += [accounts_dir / n for n in sorted({config.benchmark.benchmarks, config.reconcile.benchmarks} - {""})
                  if (accounts_dir / n).is_file()]
    return [{"file": p.relative_to(accounts_dir).as_posix(), "sha256": sha256_file(p)} for p in sorted(files)]


@cache
def code_fingerprint() -> str:
    """SHA-256 over valvol's own installed source (modules, flows, schemas, SQL statements)."""
    root = resources.files("valvol")
    h = hashlib.sha256(__version__.encode())
    for path in sorted(Path(str(root)).rglob("*")):
        if path.suffix in (".py", ".sql", ".j2"):  # .j2: the report's template
            h.update(path.as_posix().split("/valvol/")[-1].encode())
            h.update(path.read_bytes())
    for sub in ("flows", "schemas", "sql"):  # mapped sub-packages may live elsewhere (editable installs)
        base = Path(str(resources.files(f"valvol.{sub}")))
        if not base.is_relative_to(Path(str(root))):
            for path in sorted(base.rglob("*")):
                if path.suffix in (".py", ".sql"):
                    h.update(f"{sub}/{path.name}".encode())
                    h.update(path.read_bytes())
    return h.hexdigest()


def package_versions() -> dict[str, str | None]:
    """Versions of Python, valvol and the libraries that shape the outputs."""
    versions: dict[str, str | None] = {"valvol": __version__, "python": platform.python_version()}
    for name in _PACKAGES:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = None
    return versions


def fingerprint(accounts_dir: Path, config: Config, options: dict | None = None) -> str:
    """SHA-256 over inputs, configuration, rebuild options, valvol's code and library versions.

    Equal fingerprints mean equal outputs, so a rebuild with an equal fingerprint is skipped.
    """
    payload = json.dumps(
        {"inputs": input_files(accounts_dir, config), "config": _config_for_hash(config),
         "options": options or {}, "code": code_fingerprint(), "versions": package_versions()},
        sort_keys=True,
    )
    return hashlib.sha256(payload.encode()).hexdigest()


def _config_for_hash(config: Config) -> dict:
    data = config.as_dict()
    data.pop("source", None)
    return data


LABEL = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.-]{0,39}$")


def check_label(label: str | None) -> str | None:
    """A vintage label, checked: 1-40 characters of A-Z, a-z, 0-9, _ . - (ConfigError otherwise)."""
    if label is not None and not LABEL.fullmatch(label):
        raise ConfigError(f"--label: vintage label {found(label)}: use 1-40 characters of A-Z, a-z, 0-9, _ . -")
    return label


def check_chart_economies(economies: list[str] | None) -> list[str] | None:
    """Economy codes asked for with ``--charts``, checked like economy codes of the accounts (ConfigError)."""
    from valvol.schemas.input import ECONOMY_PATTERN

    for code in economies or ():
        if not isinstance(code, str) or not re.fullmatch(ECONOMY_PATTERN, code):
            raise ConfigError(f"--charts: economy code {found(code)} must be 2-16 characters of A-Z, 0-9, _ "
                              "(comma-separated, e.g. XQ,XR)")
    return economies


def vintage_name(now: datetime, fp: str, label: str | None) -> str:
    """``<UTC timestamp>-<fingerprint[:8]>[-<label>]``; names sort in time order."""
    check_label(label)
    return f"{now:%Y%m%dT%H%M%SZ}-{fp[:8]}" + (f"-{label}" if label else "")


def build_manifest(
    accounts_dir: Path,
    config: Config,
    counts: dict[str, int],
    checks: dict[str, int],
    timings: dict[str, float],
    *,
    options: dict | None = None,
) -> dict:
    """The manifest written last into a vintage (``options``: label and charts of the rebuild)."""
    now = datetime.now(UTC)
    options = options or {}
    label = options.get("label")
    fp = fingerprint(accounts_dir, config, options)
    return {
        "vintage": vintage_name(now, fp, label),
        "label": label,
        "created_at": now.isoformat(timespec="seconds"),
        "fingerprint": fp,
        "accounts_dir": str(accounts_dir.resolve()),
        "inputs": input_files(accounts_dir, config),
        "config": config.as_dict(),
        "options": options,
        "versions": package_versions(),
        "row_counts": counts,
        "checks": {"pass": 0, "warn": 0, "fail": 0, "info": 0, **checks},
        "timings_s": timings,
        "caution": "Analytical outputs, not official statistics; the compiling agency's methodology "
                   "and release rules prevail.",
    }
