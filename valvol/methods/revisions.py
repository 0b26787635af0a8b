"""Revisions between published vintages: revision table, summary statistics, triangles.

A vintage is given as its tables keyed by name (``levels``, ``deflators``, ``growth``,
``volume_contributions``, ``deflator_contributions``; a missing table is skipped). Every
table is first put in one long shape, one row per (economy, period, frequency, item,
measure), where ``measure`` names what is compared:

==============================================  ===============================================
measure                                         from
==============================================  ===============================================
``level_current``, ``level_previous_year``,     ``levels.value`` by ``price_basis``
``level_chain_linked``
``deflator``                                    ``deflators.deflator``
``growth_<m>_<horizon>``                        ``growth.pct``, m in volume / price / value,
                                                horizon in prev_period / prev_year (percent)
``contribution_volume_<aggregate>_<horizon>``   ``volume_contributions.contribution_pp``
``contribution_deflator_<aggregate>_<horizon>`` ``deflator_contributions.contribution_pp``
``bridge_<order>_<horizon>`` (item: the effect)   ``price_bridge.value_pp``
==============================================  ===============================================

The contributing component is the ``item``; the aggregate (an SDMX code, which may itself
hold underscores) sits between the prefix and the horizon, which is always the last
``prev_period`` / ``prev_year`` suffix, so `split_contribution_measure` recovers both.
Growth revisions are revisions of the growth rates published *within* each vintage (never
growth recomputed from revised levels), in percentage points, as are contribution revisions.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from valvol.errors import InputError, Problem
from valvol.methods.reference_year import REFERENCE_TOLERANCE, reference_year_candidates

#: Output columns of `revisions`.
REVISION_COLUMNS = ["economy", "period", "frequency", "item", "measure", "earlier", "later", "revision",
                    "reference_year_changed"]
#: Measures that depend on the reference year (revised when it moves).
REFERENCE_DEPENDENT = ("level_chain_linked", "deflator")

_KEY = ["economy", "period", "frequency", "item", "measure"]
_SOURCES = {  # table -> (columns it must have, value column)
    "levels": (["economy", "period", "frequency", "item", "price_basis", "value"], "value"),
    "deflators": (["economy", "period", "frequency", "item", "deflator"], "deflator"),
    "growth": (["economy", "period", "frequency", "item", "measure", "horizon", "pct"], "pct"),
    "volume_contributions": (["economy", "period", "frequency", "aggregate", "item", "horizon",
                              "contribution_pp"], "contribution_pp"),
    "deflator_contributions": (["economy", "period", "frequency", "aggregate", "item", "horizon",
                                "contribution_pp"], "contribution_pp"),
    "price_bridge": (["economy", "period", "frequency", "horizon", "order", "effect", "value_pp"], "value_pp"),
}


def long_measures(tables: Mapping[str, pd.DataFrame], *, vintage: str = "") -> pd.DataFrame:
    """All comparable values of one vintage in long form (module docstring for the labels).

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, item, measure, value; rows with a missing value
        are dropped.

    Raises
    ------
    InputError
        A table lacks columns, or gives the same series and period twice.
    """
    parts = []
    for name, (cols, value) in _SOURCES.items():  # over the six table kinds, not over series
        t = tables.get(name)
        if t is None:
            continue
        missing = [c for c in cols if c not in t.columns]
        if missing:
            raise InputError([Problem(file=name, reason=f"vintage {vintage or '?'}: table lacks column(s) "
                                                          f"{', '.join(missing)}")])
        if name == "levels":
            label = "level_" + t["price_basis"].astype(str)
        elif name == "deflators":
            label = pd.Series("deflator", index=t.index)
        elif name == "price_bridge":  # the effect is the item: bridge_<order>_<horizon>
            label = "bridge_" + t["order"].astype(str) + "_" + t["horizon"].astype(str)
        elif name == "growth":
            label = "growth_" + t["measure"].astype(str) + "_" + t["horizon"].astype(str)
        else:
            kind = "volume" if name == "volume_contributions" else "deflator"
            label = f"contribution_{kind}_" + t["aggregate"].astype(str) + "_" + t["horizon"].astype(str)
        item = t["effect"] if name == "price_bridge" else t["item"]
        part = pd.DataFrame({"economy": t["economy"].astype(str), "period": t["period"].astype(str),
                             "frequency": t["frequency"].astype(str), "item": item.astype(str),
                             "measure": label.astype(str), "value": t[value].astype("float64"),
                             "table": name})
        parts.append(part)
    if not parts:
        return pd.DataFrame({c: pd.Series(dtype="str") for c in _KEY} | {"value": pd.Series(dtype="float64")})
    d = pd.concat(parts, ignore_index=True)
    dup = d.duplicated(_KEY, keep="first")
    if dup.any():
        raise InputError([Problem(file=r.table, economy=r.economy, item=r.item, period=r.period,
                                  reason=f"vintage {vintage or '?'}: {r.measure} given more than once")
                          for r in d.loc[dup].itertuples(index=False)])
    return d.dropna(subset=["value"]).drop(columns="table").reset_index(drop=True)


def reference_year_changes(earlier: Mapping[str, pd.DataFrame], later: Mapping[str, pd.DataFrame],
                           *, tolerance: float = REFERENCE_TOLERANCE) -> pd.DataFrame:
    """Economies whose chain-linked reference year differs between two vintages.

    Returns
    -------
    DataFrame
        Columns economy, earlier_reference_year, later_reference_year (Int64, NA when not
        found), changed: True when a reference year was found in both vintages and no year tied
        for first in one is tied for first in the other. Not found in either: not changed.
    """
    empty = pd.DataFrame({"economy": pd.Series(dtype="str"), "year": pd.Series(dtype="int64")})
    ce, cl = (reference_year_candidates(t["levels"], tolerance=tolerance) if "levels" in t else empty
              for t in (earlier, later))
    shared = ce.merge(cl, on=["economy", "year"])["economy"].unique()
    m = (ce.drop_duplicates("economy").merge(cl.drop_duplicates("economy"), on="economy", how="outer",
                                               suffixes=("_e", "_l"), sort=True))
    both = m["year_e"].notna() & m["year_l"].notna()
    return pd.DataFrame({"economy": m["economy"].astype(str),
                         "earlier_reference_year": m["year_e"].astype("Int64"),
                         "later_reference_year": m["year_l"].astype("Int64"),
                         "changed": (both & ~m["economy"].isin(shared)).astype(bool)})


def revisions(earlier: dict[str, pd.DataFrame], later: dict[str, pd.DataFrame]) -> pd.DataFrame:
    """Revisions, later minus earlier, of every value the two vintages have in common.

    Parameters
    ----------
    earlier, later
        The tables of two vintages keyed by table name; ``later`` is the more recent vintage.

    Returns
    -------
    DataFrame
        Table ``revisions``: economy, period, frequency, item, measure (labels in the module
        docstring), earlier, later, revision, reference_year_changed. Only keys present with a
        value in both vintages appear. ``reference_year_changed`` is True for every row of an
        economy whose chain-linked reference year differs between the vintages; for those
        economies the ``level_chain_linked`` and ``deflator`` rows are left out (their revisions
        would mix a re-referencing with a revision). ``attrs["notes"]`` repeats this in words.

    Raises
    ------
    InputError
        A table lacks columns or repeats a key.

    Notes
    -----
    R_t = L_t - P_t, L the later and P the earlier estimate of the same period and measure;
    a positive revision means the earlier estimate was too low. Growth rates and contributions
    are those published within each vintage, so their revisions are in percentage points.
    The reference year is found by `valvol.methods.reference_year.reference_year_candidates`
    (every year tied for first rank), through `reference_year_changes`.

    References
    ----------
    OECD/Eurostat, *Guidelines on Revisions Policy and Analysis* (names and sign convention);
    Office for Statistics Regulation, review of UK GDP revisions, Annex A (docs/methods.md section 8).
    """
    e = long_measures(earlier, vintage="earlier")
    lt = long_measures(later, vintage="later")
    m = e.merge(lt, on=_KEY, how="inner", suffixes=("_e", "_l"))
    changes = reference_year_changes(earlier, later)
    rebased = changes.loc[changes["changed"]]
    flag = m["economy"].isin(rebased["economy"])
    m = m.loc[~(flag & m["measure"].isin(REFERENCE_DEPENDENT))]
    out = pd.DataFrame({**{c: m[c] for c in _KEY}, "earlier": m["value_e"], "later": m["value_l"],
                        "revision": m["value_l"] - m["value_e"], "reference_year_changed": flag.loc[m.index]})
    out = out.sort_values(["economy", "item", "measure", "frequency", "period"], kind="mergesort",
                          ignore_index=True)
    out["reference_year_changed"] = out["reference_year_changed"].astype(bool)
    out.attrs["notes"] = tuple(
        f"{r.economy}: chain-linked reference year {r.earlier_reference_year} in the earlier vintage, "
        f"{r.later_reference_year} in the later; level_chain_linked and deflator revisions left out"
        for r in rebased.itertuples(index=False))
    return out


def revision_triangle(vintages: list[tuple[str, dict[str, pd.DataFrame]]], *, item: str, measure: str,
                      economy: str, frequency: str | None = None) -> pd.DataFrame:
    """Revision triangle of one series: reference periods by vintages.

    Parameters
    ----------
    vintages
        (name, tables) pairs; columns are ordered by name (names start with a UTC timestamp).
    item, measure, economy
        The series; ``measure`` is a label of the module docstring.
    frequency
        ``"Q"`` or ``"A"``; None keeps every frequency the series has.

    Returns
    -------
    DataFrame
        Index ``period`` (sorted by frequency then period), one column per vintage name, values
        the estimate of that period in that vintage (NaN where the vintage has none).

    Raises
    ------
    InputError
        Two vintages share a name; a table is malformed; or ``measure`` is ``level_chain_linked``
        or ``deflator`` and the chain-linked reference year changes between vintages.

    References
    ----------
    OECD, Main Economic Indicators revisions database (layout: rows reference periods, columns
    vintages, diagonals k-th estimates); ONS revisions triangles; docs/methods.md section 8.
    """
    names = [str(v[0]) for v in vintages]
    dupes = sorted({x for x in names if names.count(x) > 1})
    if dupes:
        raise InputError([Problem(economy=economy, item=item, reason=f"vintage {x} given more than once")
                          for x in dupes])
    order = sorted(range(len(vintages)), key=lambda i: names[i])
    parts = []
    for i in order:  # over vintages, each vectorised
        d = long_measures(vintages[i][1], vintage=names[i])
        sel = d["economy"].eq(economy) & d["item"].eq(item) & d["measure"].eq(measure)
        if frequency is not None:
            sel &= d["frequency"].eq(frequency)
        parts.append(d.loc[sel, ["frequency", "period", "value"]].assign(vintage=names[i]))
    if measure in REFERENCE_DEPENDENT:
        _require_same_reference(vintages, order, names, economy, item)
    cols = [names[i] for i in order]
    if not parts:
        return pd.DataFrame(columns=cols, index=pd.Index([], name="period"), dtype="float64")
    d = pd.concat(parts, ignore_index=True)
    tri = d.pivot_table(index=["frequency", "period"], columns="vintage", values="value", aggfunc="first")
    tri = tri.reindex(columns=cols).sort_index(kind="mergesort").droplevel("frequency")
    tri.columns.name = None
    return tri.astype("float64")


def _require_same_reference(vintages, order, names, economy, item) -> None:
    """No change of chain-linked reference year between consecutive vintages (by name)."""
    tabs = [vintages[i][1] for i in order]
    for k in range(1, len(tabs)):  # over consecutive vintage pairs, each vectorised
        ch = reference_year_changes(tabs[k - 1], tabs[k])
        ch = ch.loc[ch["changed"] & ch["economy"].eq(economy)]
        if len(ch):
            r = ch.iloc[0]
            raise InputError([Problem(economy=economy, item=item, price_basis="chain_linked",
                                      reason=f"reference year {r['earlier_reference_year']} in vintage "
                                             f"{names[order[k - 1]]} but {r['later_reference_year']} in "
                                             f"{names[order[k]]}: re-reference before a triangle of "
                                             "chain-linked levels or deflators")])


def kth_estimates(triangle: pd.DataFrame) -> pd.DataFrame:
    """First, second, ... estimate of each reference period (the diagonals of a triangle).

    Returns
    -------
    DataFrame
        Same index as ``triangle``; columns ``estimate_1`` ... ``estimate_K`` (K the number of
        vintages): the k-th non-missing value of each row, in column (vintage) order; NaN when a
        period has fewer than k estimates.
    """
    v = triangle.to_numpy(dtype="float64")
    has = ~np.isnan(v)
    pos = np.argsort(~has, axis=1, kind="stable")
    vals = np.take_along_axis(v, pos, axis=1)
    vals[np.arange(v.shape[1])[None, :] >= has.sum(axis=1)[:, None]] = np.nan
    cols = [f"estimate_{k}" for k in range(1, v.shape[1] + 1)]
    return pd.DataFrame(vals, index=triangle.index, columns=cols)


def split_contribution_measure(measure: pd.Series) -> pd.DataFrame:
    """Kind (volume / deflator), aggregate and horizon of ``contribution_*`` measure labels.

    Other labels give missing values.
    """
    s = measure.astype(str)
    ext = s.str.extract(r"^contribution_(volume|deflator)_(.+)_(prev_period|prev_year)$")
    ext.columns = ["kind", "aggregate", "horizon"]
    return ext
