"""Tests of valvol.methods.revisions (revisions between vintages, summary statistics, triangles).

Sources named beside each check:
- OECD/Eurostat, *Guidelines on Revisions Policy and Analysis*: sign convention R = later - earlier
  and the definitions of MR, MAR, RMAR, RMSR and the bias t-test (as given in docs/methods.md section 8).
  The numeric examples are small hand computations derived from these definitions.
- Newey & West (1987), Econometrica 55(3): Bartlett-weighted HAC variance (formula of docs/methods.md
  section 8, a project convention); checked by hand computation.
- scipy.stats (general-purpose reference library) for critical values.
- OECD Main Economic Indicators revisions database: triangle layout (rows reference periods,
  columns vintages, diagonals k-th estimates; docs/methods.md section 8).
- Reference year = the year where annual chain-linked volume equals current prices: annual overlap
  (docs/methods.md sections 1-2).

Not reproduced: the ONS *GDP revisions in Blue Book 2020* (2023) Table 1 figures named in
docs/methods.md section 8 need the ONS real-time vintages of GDP growth, which the project's reference
data do not hold; no test pretends to check them.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from valvol.errors import ConfigError, InputError
from valvol.methods.reference_year import reference_years
from valvol.methods.revision_statistics import revision_summary
from valvol.methods.revisions import (
    kth_estimates,
    reference_year_changes,
    revision_triangle,
    revisions,
    split_contribution_measure,
)

QUARTERS = ["2020-Q1", "2020-Q2", "2020-Q3", "2020-Q4"]


def growth_table(pct: list[float], periods: list[str] = QUARTERS, item: str = "B1GQ", economy: str = "XX",
                 measure: str = "volume", horizon: str = "prev_period") -> pd.DataFrame:
    return pd.DataFrame({"economy": economy, "period": periods, "frequency": "Q", "item": item,
                         "measure": measure, "horizon": horizon, "pct": pct})


def revs_frame(revision: list[float], later: list[float] | None = None, periods: list[str] | None = None,
               ) -> pd.DataFrame:
    n = len(revision)
    later = later if later is not None else [1.0] * n
    periods = periods if periods is not None else [f"{2000 + i // 4}-Q{i % 4 + 1}" for i in range(n)]
    return pd.DataFrame({"economy": "XX", "period": periods, "frequency": "Q", "item": "B1GQ",
                         "measure": "growth_volume_prev_period",
                         "earlier": np.subtract(later, revision), "later": later, "revision": revision})


def annual_levels(ref: int, years=range(2017, 2023), items=("B1GQ", "P6"), shift: float = 0.0,
                  economy: str = "XX") -> pd.DataFrame:
    """Invented annual accounts, chain-linked volumes equal to current prices in ``ref``."""
    rows = []
    for j, item in enumerate(items):
        for y in years:
            cur = 100.0 * (j + 1) + 7.0 * (y - 2017) + shift
            clv = cur / (1.0 + 0.03 * (y - ref))
            rows += [(economy, str(y), "A", item, "current", cur), (economy, str(y), "A", item, "chain_linked", clv)]
    return pd.DataFrame(rows, columns=["economy", "period", "frequency", "item", "price_basis", "value"])


def with_deflators(levels: pd.DataFrame) -> dict[str, pd.DataFrame]:
    w = levels.pivot_table(index=["economy", "period", "frequency", "item"], columns="price_basis",
                           values="value").reset_index()
    d = w.assign(deflator=100.0 * w["current"] / w["chain_linked"])
    return {"levels": levels, "deflators": d[["economy", "period", "frequency", "item", "deflator"]]}


# --- revisions -------------------------------------------------------------------------------------


def test_sign_is_later_minus_earlier() -> None:
    # OECD/Eurostat Guidelines on Revisions Policy and Analysis: R_t = L_t - P_t (docs/methods.md §8, READ).
    r = revisions({"growth": growth_table([1.0, 2.0, 3.0, 4.0])}, {"growth": growth_table([1.5, 1.5, 3.5, 4.5])})
    assert list(r["measure"].unique()) == ["growth_volume_prev_period"]
    assert r["earlier"].tolist() == [1.0, 2.0, 3.0, 4.0]
    assert r["later"].tolist() == [1.5, 1.5, 3.5, 4.5]
    assert r["revision"].tolist() == [0.5, -0.5, 0.5, 0.5]
    assert not r["reference_year_changed"].any()


def test_growth_revisions_come_from_each_vintage_growth_table() -> None:
    # docs/methods.md §8 pitfall [DERIVED]: revise growth rates computed within each vintage, in pp.
    # Levels are revised, but the revision of growth is the difference of the published growth rates.
    lv = pd.DataFrame({"economy": "XX", "period": ["2020-Q1", "2020-Q2"], "frequency": "Q", "item": "B1GQ",
                       "price_basis": "current", "value": [100.0, 102.0]})
    earlier = {"levels": lv, "growth": growth_table([2.0], ["2020-Q2"], measure="value")}
    later = {"levels": lv.assign(value=[200.0, 206.0]), "growth": growth_table([3.0], ["2020-Q2"], measure="value")}
    r = revisions(earlier, later).set_index(["measure", "period"])["revision"]
    assert r[("growth_value_prev_period", "2020-Q2")] == pytest.approx(1.0)  # 3.0 - 2.0 pp
    assert r[("level_current", "2020-Q1")] == pytest.approx(100.0)
    assert r[("level_current", "2020-Q2")] == pytest.approx(104.0)


def test_common_keys_only() -> None:
    # docs/methods.md §8 pitfall [DERIVED]: common periods only.
    e = growth_table([1.0, 2.0, 3.0], QUARTERS[:3])
    lt = growth_table([2.5, 3.0, 9.0], QUARTERS[1:])
    r = revisions({"growth": e}, {"growth": lt})
    assert r["period"].tolist() == ["2020-Q2", "2020-Q3"]
    assert r["revision"].tolist() == [0.5, 0.0]


def test_measure_labels_of_every_table() -> None:
    # Project convention (module docstring of valvol.methods.revisions).
    lv = pd.DataFrame({"economy": "XX", "period": "2020", "frequency": "A", "item": "P6",
                       "price_basis": ["current", "previous_year", "chain_linked"], "value": [1.0, 2.0, 3.0]})
    de = pd.DataFrame({"economy": "XX", "period": "2020", "frequency": "A", "item": "P6", "deflator": [100.0]})
    gr = pd.concat([growth_table([1.0], ["2020"], item="P6", measure=m, horizon=h).assign(frequency="A")
                    for m in ("volume", "price", "value") for h in ("prev_period", "prev_year")])
    co = pd.DataFrame({"economy": "XX", "period": "2020", "frequency": "A", "aggregate": ["B1GQ", "P3_S13"],
                       "item": "P6", "horizon": "prev_year", "contribution_pp": [0.4, 0.1],
                       "aggregate_growth_pct": 1.0, "residual_pp": 0.0})
    tables = {"levels": lv, "deflators": de, "growth": gr, "volume_contributions": co,
              "deflator_contributions": co}
    r = revisions(tables, tables)
    assert set(r["measure"]) == {
        "level_current", "level_previous_year", "level_chain_linked", "deflator",
        "growth_volume_prev_period", "growth_volume_prev_year", "growth_price_prev_period",
        "growth_price_prev_year", "growth_value_prev_period", "growth_value_prev_year",
        "contribution_volume_B1GQ_prev_year", "contribution_volume_P3_S13_prev_year",
        "contribution_deflator_B1GQ_prev_year", "contribution_deflator_P3_S13_prev_year"}
    assert (r["revision"] == 0).all()
    parts = split_contribution_measure(pd.Series(["contribution_deflator_P3_S13_prev_year", "deflator"]))
    assert parts.iloc[0].tolist() == ["deflator", "P3_S13", "prev_year"]
    assert parts.iloc[1].isna().all()


def test_bad_tables_raise_input_error() -> None:
    with pytest.raises(InputError, match="lacks column"):
        revisions({"growth": growth_table([1.0], ["2020-Q1"]).drop(columns="pct")}, {})
    dup = pd.concat([growth_table([1.0], ["2020-Q1"])] * 2)
    with pytest.raises(InputError, match="2020-Q1"):
        revisions({"growth": dup}, {"growth": dup})


# --- reference year ---------------------------------------------------------------------------------


def test_reference_year_detection() -> None:
    # Annual overlap: the annual chain-linked volume equals current prices in the reference year
    # (docs/methods.md sections 1-2).
    assert reference_years(annual_levels(2019))["reference_year"].tolist() == [2019]
    # Without B1GQ the year where most items match is chosen.
    assert reference_years(annual_levels(2021, items=("P6", "P7")))["reference_year"].tolist() == [2021]


def test_reference_year_change_leaves_out_chain_linked_and_deflators() -> None:
    # docs/methods.md §8 pitfall [DERIVED]: level revisions across a reference-year change are meaningless.
    earlier = with_deflators(annual_levels(2019))
    later = with_deflators(annual_levels(2020, shift=1.0))
    ch = reference_year_changes(earlier, later)
    assert ch[["earlier_reference_year", "later_reference_year"]].iloc[0].tolist() == [2019, 2020]
    assert ch["changed"].tolist() == [True]
    r = revisions(earlier, later)
    assert set(r["measure"]) == {"level_current"}
    assert r["reference_year_changed"].all()
    assert r["revision"].to_numpy() == pytest.approx(1.0)
    assert len(r.attrs["notes"]) == 1 and "2019" in r.attrs["notes"][0] and "2020" in r.attrs["notes"][0]


def test_same_reference_year_keeps_chain_linked_and_deflators() -> None:
    earlier = with_deflators(annual_levels(2019))
    later = with_deflators(annual_levels(2019, shift=1.0))
    r = revisions(earlier, later)
    assert set(r["measure"]) == {"level_current", "level_chain_linked", "deflator"}
    assert not r["reference_year_changed"].any()
    assert r.attrs["notes"] == ()


def test_reference_year_change_is_per_economy() -> None:
    earlier = with_deflators(pd.concat([annual_levels(2019), annual_levels(2019, economy="YY")]))
    later = with_deflators(pd.concat([annual_levels(2020), annual_levels(2019, economy="YY")]))
    r = revisions(earlier, later)
    assert set(r.loc[r["economy"] == "XX", "measure"]) == {"level_current"}
    assert set(r.loc[r["economy"] == "YY", "measure"]) == {"level_current", "level_chain_linked", "deflator"}
    assert r.groupby("economy")["reference_year_changed"].all().to_dict() == {"XX": True, "YY": False}


# --- summary ----------------------------------------------------------------------------------------

# Derived from the definitions in OECD/Eurostat Guidelines on Revisions Policy and Analysis
# (docs/methods.md §8): R = [0.5, -0.5, 0.5, 0.5], L = [1.5, 1.5, 3.5, 4.5].
R = [0.5, -0.5, 0.5, 0.5]
L = [1.5, 1.5, 3.5, 4.5]


def test_summary_by_hand() -> None:
    s = revision_summary(revs_frame(R, L)).iloc[0]
    n = 4
    mr = (0.5 - 0.5 + 0.5 + 0.5) / n                       # 0.25
    mar = (0.5 + 0.5 + 0.5 + 0.5) / n                      # 0.5
    rmar = 2.0 / (1.5 + 1.5 + 3.5 + 4.5)                   # 2/11
    rmsr = math.sqrt((0.25 + 0.25 + 0.25 + 0.25) / n)      # 0.5
    sd = math.sqrt((0.25**2 + 0.75**2 + 0.25**2 + 0.25**2) / (n - 1))  # 0.5
    t = mr / (sd / math.sqrt(n))                           # 1.0
    assert s["n"] == n
    assert s["mr"] == pytest.approx(mr) and mr == 0.25
    assert s["mar"] == pytest.approx(mar)
    assert s["rmar"] == pytest.approx(rmar)
    assert s["rmsr"] == pytest.approx(rmsr)
    assert s["sd"] == pytest.approx(sd) and sd == pytest.approx(0.5)
    assert s["t_stat"] == pytest.approx(t) and t == pytest.approx(1.0)
    assert not s["significant"]
    assert s["test_convention"] == "t = MR/(s/sqrt n), s with n-1, Student-t(n-1), two-tailed 5%"


def test_summary_through_revisions() -> None:
    # The same example built from two vintages' growth tables.
    r = revisions({"growth": growth_table([1.0, 2.0, 3.0, 4.0])}, {"growth": growth_table(L)})
    s = revision_summary(r).iloc[0]
    assert (s["mr"], s["mar"], s["rmsr"], s["t_stat"]) == pytest.approx((0.25, 0.5, 0.5, 1.0))
    assert s["rmar"] == pytest.approx(2.0 / 11.0)


def test_critical_values_match_scipy() -> None:
    # scipy.stats (general-purpose reference library); 3.182 and 1.960: standard t and normal tables
    # (from memory).
    s = revision_summary(revs_frame(R, L)).iloc[0]
    assert s["critical_value"] == pytest.approx(stats.t.ppf(0.975, 3), rel=1e-12)
    assert s["critical_value"] == pytest.approx(3.182, abs=5e-4)
    sn = revision_summary(revs_frame(R, L), test="normal").iloc[0]
    assert sn["critical_value"] == pytest.approx(stats.norm.ppf(0.975), rel=1e-12)
    assert sn["critical_value"] == pytest.approx(1.960, abs=5e-4)
    assert sn["test_convention"] == "t = MR/(s/sqrt n), s with n-1, normal, two-tailed 5%"
    s10 = revision_summary(revs_frame(R, L), alpha=0.10).iloc[0]
    assert s10["critical_value"] == pytest.approx(stats.t.ppf(0.95, 3), rel=1e-12)
    assert s10["test_convention"].endswith("two-tailed 10%")


def test_significant_bias_by_hand() -> None:
    # R = [1.0, 1.1, 0.9, 1.0]: MR = 1, s = sqrt(0.02/3), t = 1/(s/2) = 24.49 > t(3) = 3.18.
    s = revision_summary(revs_frame([1.0, 1.1, 0.9, 1.0])).iloc[0]
    t = 1.0 / (math.sqrt(0.02 / 3) / 2)
    assert s["t_stat"] == pytest.approx(t)
    assert bool(s["significant"])
    # Two-tailed: a negative bias of the same size is significant too.
    s = revision_summary(revs_frame([-1.0, -1.1, -0.9, -1.0])).iloc[0]
    assert s["t_stat"] == pytest.approx(-t) and bool(s["significant"])


def test_hac_by_hand() -> None:
    # docs/methods.md §8 HAC convention (Newey & West 1987 Bartlett weights), L = 1, hand computed.
    e = [0.25, -0.75, 0.25, 0.25]                          # R - MR
    see = sum(x * x for x in e)                            # 0.75
    cross = e[1] * e[0] + e[2] * e[1] + e[3] * e[2]        # -0.3125
    s2 = (see + 2 * (1 - 1 / 2) * cross) / 3               # 0.4375 / 3
    t = 0.25 / math.sqrt(s2 / 4)
    s = revision_summary(revs_frame(R, L), hac_lags=1).iloc[0]
    assert s["t_stat"] == pytest.approx(t) and t == pytest.approx(1.309307, rel=1e-6)
    assert s["sd"] == pytest.approx(math.sqrt(s2))
    assert s["test_convention"] == ("t = MR/sqrt(s2_HAC/n), s2_HAC Newey-West Bartlett L=1 with n-1, "
                                    "Student-t(n-1), two-tailed 5%")
    # Row order of the input does not matter: lags follow the period order.
    shuffled = revs_frame(R, L).iloc[[2, 0, 3, 1]]
    assert revision_summary(shuffled, hac_lags=1).iloc[0]["t_stat"] == pytest.approx(t)
    # L = 0 is the plain test.
    assert revision_summary(revs_frame(R, L), hac_lags=0).iloc[0]["t_stat"] == pytest.approx(1.0)


def test_small_and_degenerate_groups() -> None:
    s = revision_summary(revs_frame([0.3], [2.0])).iloc[0]
    assert s["n"] == 1 and s["mr"] == pytest.approx(0.3) and s["rmar"] == pytest.approx(0.15)
    assert np.isnan(s["t_stat"]) and np.isnan(s["critical_value"]) and np.isnan(s["sd"])
    assert s["significant"] is pd.NA
    z = revision_summary(revs_frame([0.0, 0.0, 0.0], [0.0, 0.0, 0.0])).iloc[0]
    assert z["t_stat"] == 0.0 and not z["significant"] and np.isnan(z["rmar"])
    assert revision_summary(revs_frame([], [])).empty


def test_summary_groups_per_series() -> None:
    a = revs_frame(R, L)
    b = revs_frame([1.0, 1.0], [2.0, 2.0]).assign(item="P6")
    s = revision_summary(pd.concat([a, b]))
    assert s["item"].tolist() == ["B1GQ", "P6"] and s["n"].tolist() == [4, 2]
    s = revision_summary(pd.concat([a.assign(pair="T+3"), a.assign(pair="T+12")]), by=["pair"])
    assert s["pair"].tolist() == ["T+12", "T+3"] and s["n"].tolist() == [4, 4]


def test_summary_bad_options() -> None:
    with pytest.raises(ConfigError):
        revision_summary(revs_frame(R, L), test="z")
    with pytest.raises(ConfigError):
        revision_summary(revs_frame(R, L), hac_lags=-1)
    with pytest.raises(ConfigError):
        revision_summary(revs_frame(R, L), alpha=1.5)
    with pytest.raises(InputError):
        revision_summary(revs_frame(R, L).drop(columns="later"))


# --- triangle ---------------------------------------------------------------------------------------


def _vintage(values: list[float]) -> dict[str, pd.DataFrame]:
    return {"growth": growth_table(values, QUARTERS[: len(values)])}


def test_triangle_layout_and_diagonals() -> None:
    # OECD MEI revisions database layout (docs/methods.md §8): rows reference periods, columns vintages.
    vs = [("20260301T000000Z-c", _vintage([1.2, 0.7, 0.4, 0.9])),
          ("20260101T000000Z-a", _vintage([1.0, 0.5])),
          ("20260201T000000Z-b", _vintage([1.1, 0.6, 0.3]))]
    tri = revision_triangle(vs, item="B1GQ", measure="growth_volume_prev_period", economy="XX")
    assert tri.columns.tolist() == ["20260101T000000Z-a", "20260201T000000Z-b", "20260301T000000Z-c"]
    assert tri.index.tolist() == QUARTERS
    assert tri.isna().to_numpy().tolist() == [[False] * 3, [False] * 3, [True, False, False], [True, True, False]]
    k = kth_estimates(tri)
    assert k["estimate_1"].tolist() == [1.0, 0.5, 0.3, 0.9]    # first estimates: the leading diagonal
    assert k["estimate_2"].tolist()[:3] == [1.1, 0.6, 0.4] and np.isnan(k["estimate_2"].iloc[3])
    assert k["estimate_3"].tolist()[:2] == [1.2, 0.7] and k["estimate_3"].iloc[2:].isna().all()


def test_triangle_refuses_chain_linked_across_reference_change() -> None:
    vs = [("a", with_deflators(annual_levels(2019))), ("b", with_deflators(annual_levels(2020)))]
    with pytest.raises(InputError, match="re-reference"):
        revision_triangle(vs, item="B1GQ", measure="level_chain_linked", economy="XX")
    tri = revision_triangle(vs, item="B1GQ", measure="level_current", economy="XX", frequency="A")
    assert tri.shape == (6, 2)
    with pytest.raises(InputError, match="more than once"):
        revision_triangle([vs[0], vs[0]], item="B1GQ", measure="level_current", economy="XX")


# --- properties -------------------------------------------------------------------------------------

_values = st.lists(st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False), min_size=1, max_size=12)


@settings(max_examples=50, deadline=None)
@given(_values, st.integers(0, 3))
def test_identical_vintages_revise_to_zero(values: list[float], drop: int) -> None:
    # common practice: a vintage compared with itself has no revision.
    periods = [f"{2000 + i // 4}-Q{i % 4 + 1}" for i in range(len(values))]
    lv = pd.DataFrame({"economy": "XX", "period": periods, "frequency": "Q", "item": "P31_S14",
                       "price_basis": "current", "value": values})
    tables = {"levels": lv.iloc[drop:], "growth": growth_table(values, periods)}
    r = revisions(tables, tables)
    assert len(r) == len(lv.iloc[drop:]) + len(values)
    assert (r["revision"] == 0).all()


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(-100, 100, allow_nan=False), min_size=2, max_size=20), st.floats(-50, 50))
def test_shift_by_constant(rev: list[float], c: float) -> None:
    # Derived from the definitions (OECD/Eurostat Guidelines): MR(R + c) = MR(R) + c and
    # RMSR^2 = MR^2 + s^2 (n - 1) / n.
    base = revision_summary(revs_frame(rev)).iloc[0]
    shifted = revision_summary(revs_frame([x + c for x in rev])).iloc[0]
    n = len(rev)
    assert shifted["mr"] == pytest.approx(base["mr"] + c, abs=1e-9)
    assert shifted["sd"] == pytest.approx(base["sd"], abs=1e-7)
    for s in (base, shifted):
        assert s["rmsr"] ** 2 == pytest.approx(s["mr"] ** 2 + s["sd"] ** 2 * (n - 1) / n, rel=1e-9, abs=1e-9)
