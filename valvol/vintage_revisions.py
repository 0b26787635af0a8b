"""Revisions between vintages of an output root: the ``valvol revisions`` command's adapter.

Reads two vintages' tables, computes `valvol.methods.revisions` (later minus earlier),
optionally writes the tables and a triangle, and returns a short text report.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from valvol.errors import ValvolError
from valvol.methods.revision_statistics import revision_summary
from valvol.methods.revisions import kth_estimates, revision_triangle, revisions
from valvol.vintages import list_vintages, read_tables, resolve

COMPARED = ("levels", "deflators", "growth", "volume_contributions", "deflator_contributions")
HEADLINE = ("growth_volume_prev_period", "growth_price_prev_period", "level_current")


def compare(out_dir: Path, earlier: str | None, later: str | None, *, write: Path | None = None,
            triangle: str | None = None) -> str:
    """Revisions between two vintages (default: latest and the one before); a text summary."""
    vintages = list_vintages(out_dir)
    late = resolve(out_dir, later)
    if earlier is None:
        older = [v for v in vintages if v.name < late.name]
        if not older:
            raise ValvolError(f"{out_dir} holds no vintage before {late.name}; rebuild a release first")
        early = older[-1]
    else:
        early = resolve(out_dir, earlier)
    revs = revisions(read_tables(early, COMPARED), read_tables(late, COMPARED))
    summary = revision_summary(revs)
    lines = [f"revisions {early.name} -> {late.name} (later minus earlier): {len(revs)} compared values, "
             f"{int((revs['revision'].abs() > 1e-9).sum())} revised"]
    head = summary[summary["measure"].isin(HEADLINE) & (summary["item"] == "B1GQ")]
    for row in head.itertuples(index=False):
        lines.append(f"  {row.economy} {row.item} {row.measure} ({row.frequency}): n={row.n} "
                     f"MR={row.mr:.3f} MAR={row.mar:.3f} RMSR={row.rmsr:.3f} t={row.t_stat:.2f}"
                     + (" significant" if row.significant else ""))
    biggest = revs.loc[revs["measure"] == "growth_volume_prev_period"].assign(a=lambda d: d["revision"].abs())
    for row in biggest.sort_values("a", ascending=False).head(5).itertuples(index=False):
        lines.append(f"  largest volume-growth revision: {row.economy} {row.item} {row.period}: "
                     f"{row.earlier:.2f} -> {row.later:.2f} ({row.revision:+.2f} pp)")
    if write is not None:
        write.mkdir(parents=True, exist_ok=True)
        revs.to_parquet(write / "revisions.parquet", index=False)
        summary.to_parquet(write / "revision_summary.parquet", index=False)
        lines.append(f"  wrote revisions.parquet and revision_summary.parquet in {write}")
    if triangle:
        tri = _triangle(vintages, triangle)
        if write is not None:
            tri.to_parquet(write / "revision_triangle.parquet")
        lines.append(tri.tail(8).round(3).to_string())
        lines.append(kth_estimates(tri).tail(8).round(3).to_string())
    return "\n".join(lines)


def _triangle(vintages, spec: str) -> pd.DataFrame:
    try:
        economy, item, measure = spec.split(":")
    except ValueError:
        raise ValvolError(f"--triangle {spec!r}: expected ECONOMY:ITEM:MEASURE") from None
    loaded = [(v.name, read_tables(v, COMPARED)) for v in vintages]
    return revision_triangle(loaded, item=item, measure=measure, economy=economy)
