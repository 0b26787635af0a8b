"""Vintages of an output root: list them, prune old ones, read their tables.

A vintage is an immutable folder ``DIR/vintages/<name>`` with its manifest; names start with
a UTC timestamp, so sorting names sorts them in time. ``DIR/latest`` names the newest
published one.
"""

from __future__ import annotations

import json
import os
import shutil
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from valvol.errors import ValvolError
from valvol.io import publish as pub


@dataclass(frozen=True)
class Vintage:
    name: str
    path: Path
    created_at: str
    fingerprint: str
    label: str | None
    rows: int
    latest: bool


def list_vintages(out_dir: str | Path) -> list[Vintage]:
    """Every complete vintage of ``out_dir``, oldest first (a folder without manifest is skipped)."""
    out_dir = Path(out_dir)
    root = out_dir / pub.VINTAGES
    latest = os.path.basename(os.readlink(out_dir / pub.LATEST)) if (out_dir / pub.LATEST).is_symlink() else None
    found = []
    for path in sorted(root.iterdir()) if root.is_dir() else []:
        manifest = path / "manifest.json"
        if not manifest.exists():
            continue
        m = json.loads(manifest.read_text())
        found.append(Vintage(path.name, path, m.get("created_at", ""), m.get("fingerprint", ""), m.get("label"),
                             sum(m.get("row_counts", {}).values()), path.name == latest))
    return found


def resolve(out_dir: str | Path, name: str | None) -> Vintage:
    """A vintage by full name, unique prefix or label; ``None`` means latest."""
    vintages = list_vintages(out_dir)
    if not vintages:
        raise ValvolError(f"no vintage in {out_dir}")
    if name is None:
        return next((v for v in vintages if v.latest), vintages[-1])
    hits = [v for v in vintages if v.name == name] or [
        v for v in vintages if v.name.startswith(name) or v.label == name]
    if len(hits) != 1:
        known = ", ".join(v.name for v in vintages)
        raise ValvolError(f"vintage {name!r} {'is ambiguous' if hits else 'not found'}; vintages: {known}")
    return hits[0]


def prune(out_dir: str | Path, keep: int) -> list[str]:
    """Remove all but the ``keep`` newest vintages (never ``latest``); hold the lock while doing it."""
    if keep < 1:
        raise ValvolError("keep at least one vintage")
    with pub.output_lock(Path(out_dir)):
        vintages = list_vintages(out_dir)
        doomed = [v for v in vintages[:-keep] if not v.latest]
        for v in doomed:
            shutil.rmtree(v.path)
    return [v.name for v in doomed]


def read_tables(vintage: Vintage, names: tuple[str, ...]) -> dict[str, pd.DataFrame]:
    """The named tables of a vintage that exist in it."""
    return {n: pd.read_parquet(vintage.path / f"{n}.parquet") for n in names
            if (vintage.path / f"{n}.parquet").exists()}
