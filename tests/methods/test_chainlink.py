"""Tests of valvol.methods.chainlink.

External oracles: the ONS Quarterly National Accounts release of 31 March 2023
(tests/reference_data/uk_ons_qna_2023-03-31.csv). Formulas: docs/methods.md sections 1, 2.1-2.4
(QNA 2017 ch. 8; ABS 5216.0 ch. 6). Properties are marked [DERIVED] as in docs/methods.md.
"""

from __future__ import annotations

import doctest

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import valvol.methods.chainlink as cl
from valvol.errors import ConfigError, InputError
from valvol.frames import LEVEL_COLUMNS
from valvol.hierarchy import Hierarchy
from valvol.methods.chainlink import (
    chain_link,
    compare_chain_linked,
    nonadditivity_residual,
)
from valvol.methods.reference_year import rereference

UK_POSITIVE_AND_GDP = ["B1GQ", "P31_S14", "P3_S15", "P3_S13", "P51G", "P6", "P7"]
UK_HIERARCHY = Hierarchy.from_mapping(
    {"B1GQ": ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "-P7", "YA1"]})
PROPS = settings(max_examples=25, deadline=None)


def _rows(spec):
    """Levels panel from (economy, item, basis, year, quarter, value) tuples."""
    out = []
    for e, i, b, y, q, v in spec:
        out.append((e, i, b, "Q" if q else "A", y, q, f"{y}-Q{q}" if q else str(y), float(v)))
    return pd.DataFrame(out, columns=LEVEL_COLUMNS)


def _value(df, item, year, quarter=0, economy=None):
    sel = (df["item"] == item) & (df["year"] == year) & (df["quarter"] == quarter)
    if economy is not None:
        sel &= df["economy"] == economy
    assert sel.sum() == 1, (item, year, quarter)
    return float(df.loc[sel, "value"].iloc[0])


def test_docstring_examples():
    assert doctest.testmod(cl).failed == 0


# ------------------------------------------------------------------ published UK release
def test_uk_annual_overlap_rebuilds_published_volumes(uk_for_chaining, uk_published):
    """ONS QNA release of 31 March 2023: chained volume measures, reference year 2019.

    Previous-year prices derived as the reference README explains (PYP = CVM x CP(y-1) /
    CVM(y-1) for GDP and the positive components, P52/P53 at GDP's deflator, YA1 closing).
    chain_link(annual_overlap, 2019) must give back the published volumes of GDP and the
    positive components, annual from 1995 and quarters from 1996 (1995 is the first year).
    Tolerance +-1 GBP million, the published rounding (observed: about 1e-9).
    """
    ch = chain_link(uk_for_chaining, hierarchy=UK_HIERARCHY, reference_year=2019)
    cmp = compare_chain_linked(uk_published, ch)
    cmp = cmp[cmp["item"].isin(UK_POSITIVE_AND_GDP) & ((cmp["frequency"] == "A") | (cmp["year"] >= 1996))]
    assert len(cmp) == 7 * (28 + 27 * 4)
    assert cmp["diff"].abs().max() <= 1.0


def test_uk_first_year_quarters(uk_for_chaining, uk_published):
    """First year 1995 (no PYP): annual volume from the 1996 link (docs/methods.md §2.1), equal to
    the published 1995 volume (ONS QNA 31 March 2023); quarters valued at 1995 average
    prices from current values: CLV(s,1995) = c(s,1995) CLV_1995 / C_1995 (docs/methods.md §2.2)."""
    ch = chain_link(uk_for_chaining, hierarchy=UK_HIERARCHY, reference_year=2019)
    clv95 = _value(ch, "B1GQ", 1995)
    assert clv95 == pytest.approx(_value(uk_published[uk_published["price_basis"] == "chain_linked"],
                                         "B1GQ", 1995), abs=1.0)
    cur = uk_for_chaining[uk_for_chaining["price_basis"] == "current"]
    c95 = _value(cur, "B1GQ", 1995)
    quarters = [_value(ch, "B1GQ", 1995, s) for s in range(1, 5)]
    for s, v in enumerate(quarters, start=1):
        assert v == pytest.approx(_value(cur, "B1GQ", 1995, s) * clv95 / c95, rel=1e-12)
    assert sum(quarters) == pytest.approx(clv95, rel=1e-12)


def test_uk_additivity_pattern_of_rebuilt_volumes(uk_for_chaining):
    """docs/methods.md §2.3 [DERIVED]: under annual overlap the annual values and the quarters of
    r+1 add up (r = 2019; the series start in 1995, so the quarters of r do not). In r the
    positive series have CLV_r = C_r, the sign-changing ones k_i CLV^Z_{r-1}/C^Z_{r-1}
    (docs/methods.md §2.4 convention), so the annual residual of r is the signed sum of
    C_i,r - CLV_i,r over the sign-changing items (here only YA1, which closes the PYP
    identity: P52 and P53 were valued at GDP's deflator)."""
    ch = chain_link(uk_for_chaining, hierarchy=UK_HIERARCHY, reference_year=2019)
    res = nonadditivity_residual(ch, UK_HIERARCHY)
    assert set(res["item"]) == {"B1GQ_RESIDUAL"}
    add = res[((res["frequency"] == "A") & (res["year"] == 2020))
              | ((res["frequency"] == "Q") & (res["year"] == 2020))]
    assert len(add) == 5 and add["value"].abs().max() < 1e-6
    q2019 = res[(res["frequency"] == "Q") & (res["year"] == 2019)]
    assert (q2019["value"].abs() > 1.0).all()
    cur = uk_for_chaining[uk_for_chaining["price_basis"] == "current"]
    expected = sum(_value(cur, i, 2019) - _value(ch, i, 2019) for i in ("P52", "P53", "YA1"))
    assert abs(_value(cur, "P52", 2019) - _value(ch, "P52", 2019)) < 1.0
    assert _value(res, "B1GQ_RESIDUAL", 2019) == pytest.approx(expected, abs=1e-6)


def test_uk_published_nonadditivity_pattern(uk_published):
    """ONS QNA release of 31 March 2023, chained volumes (reference year 2019): GDP minus the
    signed sum of its expenditure components is zero in the annual values of 2019 on and in
    the quarters from 2020-Q1 on, within the rounding of ten published values (+-5), and
    clearly not in the quarters of 2019 (docs/methods.md §1 and 2.3 [DERIVED; reproduces published
    figures])."""
    res = nonadditivity_residual(uk_published, UK_HIERARCHY)
    annual = res[res["frequency"] == "A"].set_index("year")["value"]
    quarterly = res[res["frequency"] == "Q"]
    assert annual.loc[2019:].abs().max() <= 5.0
    assert quarterly.loc[quarterly["year"] >= 2020, "value"].abs().max() <= 5.0
    assert (quarterly.loc[quarterly["year"] == 2019, "value"].abs() > 100.0).all()
    assert annual.loc[:2018].abs().max() > 1000.0


def test_uk_rereference_to_2022_reproduces_published_deflator(uk_published, uk_raw):
    """ONS QNA release of 31 March 2023: the GDP implied deflator at 2022 = 100 (measure
    implicit_deflator_ref2022, 4 decimals) is, quarter by quarter, 100 x CP / CVM with CVM
    re-referenced to 2022, within 5e-4 (docs/methods.md §1 [DERIVED; reproduces published
    figures]). The file's annual values of that measure are the means of its quarterly
    values rounded to 4 decimals (checked below), so they are compared with the mean of ours."""
    chained = uk_published[uk_published["price_basis"] == "chain_linked"]
    moved = rereference(chained, uk_published, 2022, hierarchy=UK_HIERARCHY)
    cur = uk_published[(uk_published["price_basis"] == "current") & (uk_published["item"] == "B1GQ")]
    gdp = moved[moved["item"] == "B1GQ"].merge(cur, on=["economy", "item", "frequency", "year", "quarter"])
    gdp["deflator"] = 100.0 * gdp["value_y"] / gdp["value_x"]
    pub = uk_raw[(uk_raw["item"] == "B1GQ") & (uk_raw["measure"] == "implicit_deflator_ref2022")]
    both = gdp.merge(pub, on=["year", "quarter"])
    quarterly = both[both["quarter"] > 0]
    assert len(quarterly) == 112
    assert (quarterly["deflator"] - quarterly["value"]).abs().max() <= 5e-4
    annual = both[both["quarter"] == 0].set_index("year")["value"]
    assert (pub[pub["quarter"] > 0].groupby("year")["value"].mean() - annual).abs().max() <= 5e-5 + 1e-12
    ours_mean = quarterly.groupby("year")["deflator"].mean()
    assert (ours_mean - annual).abs().max() <= 5e-4 + 5e-5
    # the new reference year's annual volume equals its current-price value
    assert _value(moved, "B1GQ", 2022) == pytest.approx(_value(cur, "B1GQ", 2022), rel=1e-12)


def test_uk_techniques_agree_on_own_deflator_components(uk_for_chaining):
    """docs/methods.md §2.2 [DERIVED]: for series whose PYP are own-deflator links (the UK positive
    components as derived here, k = P_{y-1} q for a single price) the three techniques give
    identical series; the GDP aggregate differs (its quarters are not one price)."""
    out = {m: chain_link(uk_for_chaining, hierarchy=UK_HIERARCHY, reference_year=2019, method=m)
           .set_index(["item", "frequency", "year", "quarter"])["value"] for m in cl.METHODS}
    comp = out["annual_overlap"].loc[["P31_S14", "P6", "P7"]]
    for m in ("one_quarter_overlap", "over_the_year"):
        other = out[m].loc[comp.index]
        assert np.allclose(other, comp, rtol=1e-10)
        gdp_q = (out[m].loc["B1GQ"] / out["annual_overlap"].loc["B1GQ"]).loc["Q"]
        assert (gdp_q - 1).abs().max() > 1e-4


# --------------------------------------------------------------------- hand-checked cases
def test_annual_links_hand_example():
    """docs/methods.md §2.1: L_y = K_y / C_{y-1}; CLV_r = C_r; forward and backward."""
    h = Hierarchy.from_mapping({"T": ["X"]})
    lv = _rows([("E", "X", "current", 2020, 0, 100), ("E", "X", "current", 2021, 0, 120),
                ("E", "X", "current", 2022, 0, 150), ("E", "X", "previous_year", 2021, 0, 110),
                ("E", "X", "previous_year", 2022, 0, 132)])
    out = chain_link(lv, hierarchy=h, reference_year=2021)
    assert _value(out, "X", 2021) == pytest.approx(120.0)
    assert _value(out, "X", 2022) == pytest.approx(120.0 * 132 / 120)
    assert _value(out, "X", 2020) == pytest.approx(120.0 / (110 / 100))
    # default reference year: the latest complete year (2022)
    dflt = chain_link(lv, hierarchy=h)
    assert _value(dflt, "X", 2022) == pytest.approx(150.0)


def test_default_reference_year_is_per_economy(make_panel):
    """Reference year None: the latest year with an annual current-price value, per economy."""
    h = Hierarchy.from_mapping({"T": ["X"]})
    rng = np.random.default_rng(1)
    a = make_panel({"X": rng.uniform(1, 2, 16)}, {"X": rng.uniform(5, 10, 16)}, h, economy="AA")
    b = make_panel({"X": rng.uniform(1, 2, 12)}, {"X": rng.uniform(5, 10, 12)}, h, economy="BB")
    out = chain_link(pd.concat([a, b]), hierarchy=h)
    cur = pd.concat([a, b])
    cur = cur[cur["price_basis"] == "current"]
    assert _value(out, "X", 2003, economy="AA") == pytest.approx(_value(cur, "X", 2003, economy="AA"))
    assert _value(out, "X", 2002, economy="BB") == pytest.approx(_value(cur, "X", 2002, economy="BB"))


def test_one_quarter_and_over_the_year_against_direct_formulas(make_panel):
    """docs/methods.md §2.2: one-quarter overlap CLV(s,y) = k(s,y) CLV(4,y-1)/k^{(y-1)}(4,y-1) and
    over-the-year CLV(s,y) = CLV(s,y-1) k(s,y)/k^{(y-1)}(s,y-1), with k^{(y-1)} the quarter
    valued at the average prices of y-1 (sum of P_{y-1} q over the elementary items),
    computed here directly from prices and quantities; the first link is annual overlap."""
    rng = np.random.default_rng(7)
    n = 20
    h = Hierarchy.from_mapping({"T": ["A", "B", "-M"]})
    p = {i: np.cumprod(rng.uniform(0.95, 1.08, n)) for i in "ABM"}
    q = {"A": rng.uniform(50, 60, n), "B": rng.uniform(30, 45, n), "M": rng.uniform(10, 20, n)}
    lv = make_panel(p, q, h)
    years = 2000 + np.arange(n) // 4
    unit = {i: pd.Series(p[i] * q[i]).groupby(years).sum() / pd.Series(q[i]).groupby(years).sum() for i in p}
    sgn = {"A": 1, "B": 1, "M": -1}

    def at_prices_of(y, t):  # aggregate T in quarter t valued at the average prices of year y
        return sum(sgn[i] * unit[i][y] * q[i][t] for i in p)

    base = chain_link(lv, hierarchy=h, reference_year=2000)
    fa = {y: _value(base, "T", y) / _value(lv[lv["price_basis"] == "current"], "T", y) for y in range(2000, 2005)}
    k_t = np.array([at_prices_of(years[t] - 1, t) if years[t] > 2000 else np.nan for t in range(n)])
    first = np.array([sgn_sum for sgn_sum in (sum(sgn[i] * p[i][t] * q[i][t] for i in p) for t in range(4))])
    for method in ("one_quarter_overlap", "over_the_year"):
        clv = np.empty(n)
        clv[:4] = first * fa[2000]
        clv[4:8] = k_t[4:8] * fa[2000]
        for t in range(8, n):
            o = (t // 4) * 4 - 1 if method == "one_quarter_overlap" else t - 4
            clv[t] = k_t[t] * clv[o] / at_prices_of(years[o], o)
        out = chain_link(lv, hierarchy=h, method=method, reference_year=2000)
        got = out[(out["item"] == "T") & (out["frequency"] == "Q")]["value"].to_numpy()
        np.testing.assert_allclose(got, clv, rtol=1e-11)
        # annual values are the annual links under every technique
        assert _value(out, "T", 2004) == pytest.approx(_value(base, "T", 2004), rel=1e-12)


def test_overlap_quarters_scaled_to_reference_year(make_panel):
    """Unbenchmarked one-quarter-overlap quarters are scaled so that the reference year's
    quarters add up to C_r (average to it at annual rate)."""
    rng = np.random.default_rng(3)
    h = Hierarchy.from_mapping({"T": ["A", "B"]})
    p = {i: np.cumprod(rng.uniform(0.9, 1.1, 24)) for i in "AB"}
    q = {i: rng.uniform(10, 20, 24) for i in "AB"}
    for annual_rate in (False, True):
        lv = make_panel(p, q, h, annual_rate=annual_rate)
        out = chain_link(lv, hierarchy=h, method="one_quarter_overlap", reference_year=2003,
                         annual_rate=annual_rate)
        tq = out[(out["item"] == "T") & (out["year"] == 2003) & (out["frequency"] == "Q")]["value"]
        agg = tq.mean() if annual_rate else tq.sum()
        assert agg == pytest.approx(_value(lv[lv["price_basis"] == "current"], "T", 2003), rel=1e-12)


def test_sign_changing_item_uses_top_aggregate_deflator():
    """docs/methods.md §2.4 (option (c) variant, common practice): CLV_i(t) = k_i(t) CLV^Z_{y-1}/C^Z_{y-1}
    with Z the top aggregate containing the item (B1GQ, not P5, for P52); first year c_i CLV^Z_y/C^Z_y."""
    h = Hierarchy.default()
    spec = []
    vals = {  # item: (C_2020, C_2021, K_2021)
        "P31_S14": (60, 66, 63), "P3_S15": (2, 2, 2), "P3_S13": (20, 22, 21), "P51G": (20, 21, 20),
        "P52": (1, -2, -1.5), "P53": (0.5, 0.4, 0.45), "P6": (30, 33, 31), "P7": (33, 35, 34), "YA1": (0, 1, 1)}
    for i, (c0, c1, k1) in vals.items():
        spec += [("E", i, "current", 2020, 0, c0), ("E", i, "current", 2021, 0, c1),
                 ("E", i, "previous_year", 2021, 0, k1)]
    for agg in h.order():
        for basis, y in (("current", 2020), ("current", 2021), ("previous_year", 2021)):
            tot = sum(x.sign * next(v for e, it, b, yy, qq, v in spec if it == x.item and b == basis and yy == y)
                      for x in h.aggregates[agg])
            spec.append(("E", agg, basis, y, 0, tot))
    out = chain_link(_rows(spec), hierarchy=h, reference_year=2021)
    cur = _rows(spec)
    c_gdp = {y: _value(cur[cur["price_basis"] == "current"], "B1GQ", y) for y in (2020, 2021)}
    clv_gdp = {y: _value(out, "B1GQ", y) for y in (2020, 2021)}
    assert _value(out, "P52", 2021) == pytest.approx(-1.5 * clv_gdp[2020] / c_gdp[2020])
    assert _value(out, "P52", 2020) == pytest.approx(1.0 * clv_gdp[2020] / c_gdp[2020])
    # P5 contains P52 but is not the top aggregate
    c_p5 = _value(cur[cur["price_basis"] == "current"], "P5", 2020)
    assert _value(out, "P52", 2021) != pytest.approx(-1.5 * _value(out, "P5", 2020) / c_p5)


def test_sign_changing_item_without_parent_keeps_its_pyp():
    """An item with no positive ancestor with data keeps its own PYP unscaled (current
    values in its first year)."""
    h = Hierarchy.from_mapping({"B11": ["P6", "-P7"]})
    lv = _rows([("E", "B11", "current", 2020, 0, -3), ("E", "B11", "current", 2021, 0, 2),
                ("E", "B11", "previous_year", 2021, 0, 1.5)])
    out = chain_link(lv, hierarchy=h)
    assert _value(out, "B11", 2021) == 1.5 and _value(out, "B11", 2020) == -3


def test_quarters_before_first_complete_year_are_dropped(make_panel):
    """A series starting mid-year: its quarters before the first complete year get no volume."""
    h = Hierarchy.from_mapping({"T": ["X"]})
    rng = np.random.default_rng(5)
    lv = make_panel({"X": rng.uniform(1, 2, 14)}, {"X": rng.uniform(5, 10, 14)}, h, start_year=2000)
    lv = lv[~((lv["year"] == 2000) & (lv["quarter"].isin([1, 2])))]
    lv = lv[~((lv["year"] == 2000) & (lv["frequency"] == "A"))]
    lv = lv[~((lv["year"] == 2001) & (lv["price_basis"] == "previous_year"))]
    out = chain_link(lv, hierarchy=h, reference_year=2002)
    assert out.loc[out["item"] == "X", "year"].min() == 2001
    assert len(out[(out["item"] == "X") & (out["frequency"] == "Q")]) == 10


# --------------------------------------------------------------------------------- errors
def test_negative_value_of_positive_series_is_located():
    h = Hierarchy.from_mapping({"T": ["X"]})
    lv = _rows([("E", "X", "current", 2020, 0, -5), ("E", "X", "current", 2021, 0, 120),
                ("E", "X", "previous_year", 2021, 0, 110)])
    with pytest.raises(InputError) as exc:
        chain_link(lv, hierarchy=h)
    p = exc.value.problems[0]
    assert (p.economy, p.item, p.price_basis, p.period) == ("E", "X", "current", "2020")


def test_zero_previous_year_quarter_is_located(make_panel):
    h = Hierarchy.from_mapping({"T": ["X"]})
    lv = make_panel({"X": np.ones(12)}, {"X": np.full(12, 5.0)}, h)
    lv.loc[(lv["item"] == "X") & (lv["price_basis"] == "previous_year") & (lv["period"] == "2001-Q3"),
           "value"] = 0.0
    with pytest.raises(InputError) as exc:
        chain_link(lv, hierarchy=h)
    assert ("E", "X", "previous_year", "2001-Q3") in {(p.economy, p.item, p.price_basis, p.period)
                                                      for p in exc.value.problems}


def test_one_quarter_overlap_missing_q4_is_located(make_panel):
    """docs/methods.md §2.2: one-quarter overlap needs Q4 of y-1 at y-1 prices: an error naming the
    series and the year whose quarters cannot be linked."""
    h = Hierarchy.from_mapping({"T": ["X"]})
    lv = make_panel({"X": np.linspace(1, 2, 16)}, {"X": np.linspace(5, 9, 16)}, h)
    lv = lv[~((lv["price_basis"] == "previous_year") & (lv["period"] == "2001-Q4"))]
    with pytest.raises(InputError) as exc:
        chain_link(lv, hierarchy=h, method="one_quarter_overlap")
    located = {(p.item, p.period) for p in exc.value.problems}
    assert ("X", "2001-Q4") in located  # the quarter itself cannot be linked
    assert any(p.item == "X" and p.period.startswith("2002") and "Q4 of the year before" in p.reason
               for p in exc.value.problems)


def test_gap_and_missing_reference_year_are_errors():
    h = Hierarchy.from_mapping({"T": ["X"]})
    gap = _rows([("E", "X", "current", 2019, 0, 100), ("E", "X", "current", 2021, 0, 120),
                 ("E", "X", "previous_year", 2021, 0, 110)])
    with pytest.raises(InputError, match="gap"):
        chain_link(gap, hierarchy=h)
    late = _rows([("E", "X", "current", 2020, 0, 100), ("E", "X", "current", 2021, 0, 120),
                  ("E", "X", "previous_year", 2021, 0, 110)])
    with pytest.raises(InputError, match="reference year"):
        chain_link(late, hierarchy=h, reference_year=2015)
    with pytest.raises(ConfigError):
        chain_link(late, hierarchy=h, method="quarterly_magic")


def test_rereference_missing_year_is_an_error():
    h = Hierarchy.from_mapping({"T": ["X"]})
    lv = _rows([("E", "X", "current", 2020, 0, 100), ("E", "X", "chain_linked", 2020, 0, 90)])
    with pytest.raises(InputError) as exc:
        rereference(lv, lv, 2021, hierarchy=h)
    assert exc.value.problems[0].item == "X" and exc.value.problems[0].period == "2021"


def test_compare_chain_linked_columns():
    given = _rows([("E", "X", "chain_linked", 2020, 0, 100), ("E", "X", "chain_linked", 2021, 0, 0)])
    comp = _rows([("E", "X", "chain_linked", 2020, 0, 101), ("E", "X", "chain_linked", 2021, 0, 1)])
    out = compare_chain_linked(given, comp)
    assert list(out.columns) == cl.COMPARE_COLUMNS
    assert out["diff"].tolist() == [1.0, 1.0]
    assert out["pct_diff"].iloc[0] == pytest.approx(1.0) and np.isnan(out["pct_diff"].iloc[1])


# ----------------------------------------------------------------------------- properties
def _economies(make_panel, seed, n, hierarchy, spec, n_econ=3, **kw):
    """Several independent random economies in one panel (one vectorised call tests them all).

    ``spec``: item -> (start price low, high, quantity low, high); prices then follow a
    random walk of -1% to +2% a quarter."""
    rng = np.random.default_rng(seed)
    panels = []
    for e in range(n_econ):
        p = {i: rng.uniform(lo_p, hi_p) * np.cumprod(rng.uniform(0.99, 1.02, n))
             for i, (lo_p, hi_p, _, _) in spec.items()}
        q = {i: rng.uniform(lo, hi, n) for i, (_, _, lo, hi) in spec.items()}
        panels.append((make_panel(p, q, hierarchy, economy=f"E{e}", **kw), p, q))
    return panels


@PROPS
@given(seed=st.integers(0, 2**32 - 1), n=st.sampled_from([12, 16, 20]), fy=st.booleans(),
       r_offset=st.integers(0, 2))
def test_elementary_series_techniques_coincide(make_panel, seed, n, fy, r_offset):
    """docs/methods.md §2.2 [DERIVED]: for a single elementary series (k = P_{y-1} q) the three
    techniques give identical series; with PYP in the first year CLV = P_r q exactly."""
    h = Hierarchy.from_mapping({"T": ["X"]})
    panels = _economies(make_panel, seed, n, h, {"X": (0.5, 2.0, 1.0, 50.0)}, first_year_price=0.9 if fy else None)
    lv = pd.concat([x[0] for x in panels], ignore_index=True)
    r = 2000 + r_offset
    key = ["economy", "item", "frequency", "year", "quarter"]
    outs = [chain_link(lv, hierarchy=h, method=m, reference_year=r).set_index(key)["value"] for m in cl.METHODS]
    for other in outs[1:]:
        np.testing.assert_allclose(other.to_numpy(), outs[0].to_numpy(), rtol=1e-9)
    if fy:
        years = 2000 + np.arange(n) // 4
        for e, (_, p, q) in enumerate(panels):
            unit_r = (p["X"] * q["X"])[years == r].sum() / q["X"][years == r].sum()
            got = outs[0].loc[(f"E{e}", "X", "Q")].to_numpy()
            np.testing.assert_allclose(got, unit_r * q["X"], rtol=1e-9)


@PROPS
@given(seed=st.integers(0, 2**32 - 1), n=st.sampled_from([12, 16]), annual_rate=st.booleans())
def test_annual_overlap_quarters_add_up_to_annual(make_panel, seed, n, annual_rate):
    """docs/methods.md §2.2 [DERIVED]: annual-overlap quarters sum to the annual CLV (average to it
    when levels are at annual rate), aggregates and sign-changing items included."""
    h = Hierarchy.from_mapping({"T": ["A", "B", "P52", "-M"], "B": ["B1", "B2"]})
    spec = {"A": (0.8, 1.2, 30, 40), "B1": (0.8, 1.2, 5, 10), "B2": (0.8, 1.2, 5, 10),
            "P52": (0.8, 1.2, -3, 3), "M": (0.8, 1.2, 1, 5)}
    lv = pd.concat([x[0] for x in _economies(make_panel, seed, n, h, spec, annual_rate=annual_rate)])
    out = chain_link(lv, hierarchy=h, annual_rate=annual_rate, reference_year=2001)
    qs = out[out["frequency"] == "Q"].groupby(["economy", "item", "year"])["value"]
    qs = qs.mean() if annual_rate else qs.sum()
    ann = out[out["frequency"] == "A"].set_index(["economy", "item", "year"])["value"]
    assert len(ann) == 3 * 7 * (n // 4)
    np.testing.assert_allclose(qs.loc[ann.index].to_numpy(), ann.to_numpy(), rtol=1e-9, atol=1e-9)


@PROPS
@given(seed=st.integers(0, 2**32 - 1), new_r=st.integers(2000, 2003))
def test_rereferencing_keeps_growth_rates(make_panel, seed, new_r):
    """docs/methods.md §1 [DERIVED]: re-referencing leaves growth rates unchanged (one factor per
    series) and sets the new reference year's annual volume to its current-price value."""
    h = Hierarchy.from_mapping({"T": ["A", "-M"]})
    lv = pd.concat([x[0] for x in _economies(make_panel, seed, 16, h, {"A": (0.8, 1.2, 30, 40),
                                                                        "M": (0.8, 1.2, 1, 10)})])
    ch = chain_link(lv, hierarchy=h, reference_year=2001)
    moved = rereference(ch, lv, new_r, hierarchy=h)
    key = ["economy", "item", "frequency", "year", "quarter"]
    a = ch.set_index(key)["value"]
    b = moved.set_index(key)["value"].loc[a.index]
    ratio = (b / a).groupby(level=["economy", "item"]).agg(["min", "max"])
    np.testing.assert_allclose(ratio["min"], ratio["max"], rtol=1e-12)
    cur = lv[lv["price_basis"] == "current"]
    for e in ("E0", "E1", "E2"):
        assert _value(moved, "T", new_r, economy=e) == pytest.approx(_value(cur, "T", new_r, economy=e), rel=1e-12)
