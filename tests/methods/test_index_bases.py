"""Volume and price indexes into money terms (valvol.methods.index_bases), on small tables.

Every expected value is a hand derivation from the rules of the module docstring, whose
published sources are BEA, Survey of Current Business, November 1998, box 4 (chained dollars
= reference-year value x chain quantity index / 100) and the implicit deflator D = 100 C / CLV
(ONS, Blue Book 2013, ch. 1). The arithmetic is shown beside each check.
"""

from __future__ import annotations

import pandas as pd
import pytest

from valvol.methods.index_bases import to_money_terms


def rows_of(*spec, economy="XQ", file="a.csv", first_row=2, **extra) -> pd.DataFrame:
    """Validated rows from (item, price_basis, period, value) tuples, one file row each."""
    out = []
    for n, (item, basis, period, value) in enumerate(spec):
        quarter = int(period[-1]) if "Q" in period else 0
        out.append({"source_file": file, "source_row": first_row + n, "economy": economy, "item": item,
                    "price_basis": basis, "frequency": "Q" if quarter else "A", "year": int(period[:4]),
                    "quarter": quarter, "period": period, "value": float(value), "adjustment": "S", "unit": "",
                    **extra})
    return pd.DataFrame(out).astype({"year": "int64", "quarter": "int64", "source_row": "int64"})


def quarters(item, basis, year, values):
    return [(item, basis, f"{year}-Q{q}", v) for q, v in enumerate(values, start=1)]


def values(out: pd.DataFrame, basis: str, item: str | None = None) -> dict[str, float]:
    sel = out[(out["price_basis"] == basis) & ((out["item"] == item) if item else True)]
    return dict(zip(sel["period"], sel["value"], strict=True))


def reasons(problems) -> list[str]:
    return [p.reason for p in problems]


# ------------------------------------------------------------------------------ volume index
def test_annual_volume_index_times_reference_year_value():
    # CLV_y = VI_y C_2020 / 100: 100 x 50 / 100 = 50, 104 x 50 / 100 = 52
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "volume_index", "2020", 100),
                   ("P6", "volume_index", "2021", 104))
    out, problems = to_money_terms(rows)
    assert problems == []
    assert values(out, "chain_linked") == pytest.approx({"2020": 50.0, "2021": 52.0})
    derived = out[out["price_basis"] == "chain_linked"]
    assert derived["derived_from"].tolist() == ["volume_index", "volume_index"]
    assert derived["source_row"].tolist() == [3, 4]  # the index rows they come from
    assert "volume_index" not in set(out["price_basis"])
    assert out.loc[out["price_basis"] == "current", "derived_from"].tolist() == [""]


def test_quarterly_volume_index_quarters_add_to_the_year():
    # C_2020 = 10 + 11 + 12 + 13 = 46; quarters of 2020 average 100, so CLV_q = VI_q x 46 / 400:
    # 96 -> 11.04, 98 -> 11.27, 102 -> 11.73, 104 -> 11.96 (sum 46 = C_2020), 106 -> 12.19
    rows = rows_of(*quarters("P6", "current", 2020, [10, 11, 12, 13]),
                   *quarters("P6", "volume_index", 2020, [96, 98, 102, 104]), ("P6", "volume_index", "2021-Q1", 106),
                   ("P6", "volume_index", "2020", 100))
    out, problems = to_money_terms(rows)
    assert problems == []
    got = values(out, "chain_linked")
    assert got == pytest.approx({"2020-Q1": 11.04, "2020-Q2": 11.27, "2020-Q3": 11.73, "2020-Q4": 11.96,
                                 "2021-Q1": 12.19})
    # the annual index of a year with four quarters is checked, not converted: the year's volume is
    # formed downstream as the sum of the converted quarters, as for money-terms input
    assert "2020" not in got


def test_quarterly_volume_index_at_annual_rate():
    # levels at annual rate: C_2020 = mean(40, 44, 48, 52) = 46, CLV_q = VI_q x 46 / 100
    rows = rows_of(*quarters("P6", "current", 2020, [40, 44, 48, 52]),
                   *quarters("P6", "volume_index", 2020, [96, 98, 102, 104]))
    out, problems = to_money_terms(rows, annual_rate=True)
    assert problems == []
    assert values(out, "chain_linked") == pytest.approx(
        {"2020-Q1": 44.16, "2020-Q2": 45.08, "2020-Q3": 46.92, "2020-Q4": 47.84})


def test_rounded_index_keeps_the_reference_year_exact():
    # quarters of 2020 average 100.0375 (rounding of a published index, within +-0.05): CLV_q =
    # VI_q x 46 / (4 x 100.0375), so the four quarters of 2020 add to C_2020 = 46 exactly
    rows = rows_of(*quarters("P6", "current", 2020, [10, 11, 12, 13]),
                   *quarters("P6", "volume_index", 2020, [96.1, 98, 102, 104.05]))
    out, problems = to_money_terms(rows)
    assert problems == []
    got = values(out, "chain_linked")
    assert sum(got.values()) == pytest.approx(46.0, abs=1e-12)
    assert got["2020-Q1"] == pytest.approx(96.1 * 46 / (4 * 100.0375))


def test_reference_year_is_found_per_series():
    # P6 is 100 in 2020 (annual row), P7 in 2019 (mean of its quarters 99.5, 99.9, 100.1, 100.5):
    # CLV(P6, 2019) = 95 x 80 / 100 = 76; CLV(P7, 2019-Q1) = 99.5 x 40 / 400 = 9.95
    rows = rows_of(("P6", "current", "2020", 80), ("P6", "volume_index", "2019", 95),
                   ("P6", "volume_index", "2020", 100), ("P6", "volume_index", "2021", 103),
                   *quarters("P7", "current", 2019, [9, 10, 10, 11]),
                   *quarters("P7", "volume_index", 2019, [99.5, 99.9, 100.1, 100.5]))
    out, problems = to_money_terms(rows)
    # two series of one economy on two reference years, both used: a located error
    assert len(problems) == 1 and "reference year 2019 differs from 2020" in problems[0].reason
    assert values(out, "chain_linked", "P6") == pytest.approx({"2019": 76.0, "2020": 80.0, "2021": 82.4})
    assert values(out, "chain_linked", "P7")["2019-Q1"] == pytest.approx(9.95)


def test_index_without_a_year_at_100():
    # 99.9 is 0.1 off 100: beyond the rounding +-0.05 of a one-decimal index
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "volume_index", "2020", 99.9),
                   ("P6", "volume_index", "2021", 102))
    out, problems = to_money_terms(rows)
    (p,) = problems
    assert (p.file, p.row, p.economy, p.item, p.price_basis) == ("a.csv", 3, "XQ", "P6", "volume_index")
    assert "no year at 100" in p.reason and "the closest is 99.9 in 2020" in p.reason
    # with indexes of two decimals declared as rounded to +-0.1 the year qualifies
    assert to_money_terms(rows, index_tolerance=0.1)[1] == []


def test_two_years_at_100_are_ambiguous():
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "volume_index", "2020", 100),
                   ("P6", "volume_index", "2021", 100))
    (p,) = to_money_terms(rows)[1]
    assert "several years at 100 (2020, 2021)" in p.reason


def test_missing_reference_year_value_at_current_prices():
    rows = rows_of(("P6", "current", "2021", 52), ("P6", "volume_index", "2020", 100),
                   ("P6", "volume_index", "2021", 104))
    (p,) = to_money_terms(rows)[1]
    assert (p.row, p.period, p.price_basis) == (3, "2020", "volume_index")
    assert "needs the annual current-price value of its reference year (C_ref" in p.reason
    assert p.reason.endswith("missing")


def test_annual_index_must_be_the_mean_of_its_quarters():
    # 2021: quarters average 104, the annual row says 104.5: off by more than 2 x 0.05
    rows = rows_of(*quarters("P6", "current", 2020, [10, 11, 12, 13]),
                   *quarters("P6", "volume_index", 2020, [96, 98, 102, 104]),
                   *quarters("P6", "volume_index", 2021, [103, 104, 104, 105]), ("P6", "volume_index", "2021", 104.5))
    (p,) = to_money_terms(rows)[1]
    assert (p.row, p.period) == (14, "2021") and "is not the mean of its quarters (104)" in p.reason


# ------------------------------------------------------------------------------- price index
def test_price_index_and_current_prices_give_volumes():
    # CLV = 100 C / P: 2020: 100 x 50 / 100 = 50; 2021: 100 x 55 / 110 = 50
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "current", "2021", 55),
                   ("P6", "price_index", "2020", 100), ("P6", "price_index", "2021", 110))
    out, problems = to_money_terms(rows)
    assert problems == []
    assert values(out, "chain_linked") == pytest.approx({"2020": 50.0, "2021": 50.0})
    assert set(out.loc[out["price_basis"] == "chain_linked", "derived_from"]) == {"price_index"}


def test_quarterly_price_index_reference_year_is_value_weighted():
    # 2020: C = 30, 20, 25, 25 and P = 120, 80, 100, 100: volumes 100 C / P = 25, 25, 25, 25, so the
    # annual deflator is 100 x 100 / 100 = 100 (value-weighted), though the plain mean of P is too;
    # 2021-Q1: C = 33, P = 110 -> CLV = 30
    rows = rows_of(*quarters("P6", "current", 2020, [30, 20, 25, 25]), ("P6", "current", "2021-Q1", 33),
                   *quarters("P6", "price_index", 2020, [120, 80, 100, 100]), ("P6", "price_index", "2021-Q1", 110))
    out, problems = to_money_terms(rows)
    assert problems == []
    assert values(out, "chain_linked") == pytest.approx(
        {"2020-Q1": 25.0, "2020-Q2": 25.0, "2020-Q3": 25.0, "2020-Q4": 25.0, "2021-Q1": 30.0})
    # weighted: C = 40, 20, 20, 20 with P = 200, 100, 50, 100 -> V = 20, 20, 40, 20, annual P =
    # 100 x 100 / 100 = 100 while the plain mean of P is 112.5: 2020 is the reference year
    rows = rows_of(*quarters("P6", "current", 2020, [40, 20, 20, 20]),
                   *quarters("P6", "price_index", 2020, [200, 100, 50, 100]))
    out, problems = to_money_terms(rows)
    assert problems == [] and values(out, "chain_linked")["2020-Q3"] == pytest.approx(40.0)


def test_price_index_and_volume_give_current_prices():
    # C = CLV x P / 100 where current prices are missing: 2020: 50 x 100 / 100 = 50; 2021: 52 x 105 / 100 = 54.6
    rows = rows_of(("P6", "chain_linked", "2020", 50), ("P6", "chain_linked", "2021", 52),
                   ("P6", "price_index", "2020", 100), ("P6", "price_index", "2021", 105))
    out, problems = to_money_terms(rows)
    assert problems == []
    assert values(out, "current") == pytest.approx({"2020": 50.0, "2021": 54.6})
    assert values(out, "chain_linked") == {"2020": 50.0, "2021": 52.0}  # as given


def test_volume_index_and_price_index_with_current_prices_of_the_reference_year_only():
    # any two of three: C_2020 = 50 given; CLV from the volume index (50, 52), then C_2021 =
    # 52 x 105 / 100 = 54.6 from the price index
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "volume_index", "2020", 100),
                   ("P6", "volume_index", "2021", 104), ("P6", "price_index", "2020", 100),
                   ("P6", "price_index", "2021", 105))
    out, problems = to_money_terms(rows)
    assert problems == []
    assert values(out, "chain_linked") == pytest.approx({"2020": 50.0, "2021": 52.0})
    assert values(out, "current") == pytest.approx({"2020": 50.0, "2021": 54.6})
    assert out.loc[out["period"].eq("2021") & out["price_basis"].eq("current"), "source_row"].tolist() == [6]


def test_price_index_alone_is_an_error():
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "price_index", "2020", 100),
                   ("P6", "price_index", "2021", 105))
    (p,) = to_money_terms(rows)[1]
    assert (p.row, p.period) == (4, "2021") and "needs current prices or a volume" in p.reason


# ---------------------------------------------------------------- all three given: checked
def _three(p_2020, p_2021):
    # C 50, 55; CLV 50, 52: implied deflator 100, 100 x 55 / 52 = 105.769...
    return rows_of(("P6", "current", "2020", 50), ("P6", "current", "2021", 55),
                   ("P6", "chain_linked", "2020", 50), ("P6", "chain_linked", "2021", 52),
                   ("P6", "price_index", "2020", p_2020), ("P6", "price_index", "2021", p_2021))


def test_consistent_price_index_is_only_checked():
    out, problems = to_money_terms(_three(100, 105.8))  # 105.769 published with one decimal
    assert problems == []
    assert values(out, "current") == {"2020": 50.0, "2021": 55.0}
    assert values(out, "chain_linked") == {"2020": 50.0, "2021": 52.0}
    assert not out["derived_from"].astype(bool).any()


def test_price_index_on_another_reference_year_is_checked_re_referenced():
    # referenced to 2021 = 100 while the volumes are referenced to 2020: P_2020 = 100 (50/50) /
    # (55/52) = 94.545... -> 94.5 published, P_2021 = 100; consistent after re-referencing
    assert to_money_terms(_three(94.5, 100))[1] == []


def test_inconsistent_price_index_is_a_located_error():
    # 106.5 against the implied 105.769: 0.73 off. The tolerance 0.05 + 106.5 (h/55 + h/52 + h/50
    # + h/50 + 0.05/100) is about 4.2 for money values rounded to h = 0.5 (such small numbers
    # cannot pin a deflator down), 0.19 for h = 0.01
    (p,) = to_money_terms(_three(100, 106.5), value_tolerance=0.01)[1]
    assert (p.file, p.row, p.price_basis, p.period) == ("a.csv", 7, "price_index", "2021")
    assert "does not match current prices and volume: they imply 105.769" in p.reason


def test_volume_index_beside_chain_linked_volume_is_checked():
    # CLV 50, 52 on 2020: the index implies 100, 104
    base = [("P6", "current", "2020", 50), ("P6", "chain_linked", "2020", 50), ("P6", "chain_linked", "2021", 52)]
    ok = rows_of(*base, ("P6", "volume_index", "2020", 100), ("P6", "volume_index", "2021", 104))
    out, problems = to_money_terms(ok)
    assert problems == [] and values(out, "chain_linked") == {"2020": 50.0, "2021": 52.0}
    bad = rows_of(*base, ("P6", "volume_index", "2020", 100), ("P6", "volume_index", "2021", 105))
    (p,) = to_money_terms(bad, value_tolerance=0.01)[1]
    assert (p.row, p.period) == (6, "2021") and "does not match the given chain_linked volume" in p.reason
    beyond = rows_of(*base, ("P6", "volume_index", "2020", 100), ("P6", "volume_index", "2021", 104),
                     ("P6", "volume_index", "2022", 107))
    (p,) = to_money_terms(beyond)[1]
    assert p.period == "2022" and "not for this period" in p.reason


# ------------------------------------------------------------------------ panels, guards
def test_economies_are_converted_at_once_each_on_its_own_reference_year():
    # XQ references 2020, XR 2021: no conflict across economies
    xq = rows_of(("P6", "current", "2020", 50), ("P6", "volume_index", "2020", 100),
                 ("P6", "volume_index", "2021", 104))
    xr = rows_of(("P6", "current", "2021", 30), ("P6", "volume_index", "2020", 90),
                 ("P6", "volume_index", "2021", 100), economy="XR", file="b.csv")
    out, problems = to_money_terms(pd.concat([xq, xr], ignore_index=True))
    assert problems == []
    got = out[out["price_basis"] == "chain_linked"].set_index(["economy", "period"])["value"]
    assert got.to_dict() == pytest.approx({("XQ", "2020"): 50.0, ("XQ", "2021"): 52.0,
                                           ("XR", "2020"): 27.0, ("XR", "2021"): 30.0})
    alone = to_money_terms(xr)[0]
    assert alone.loc[alone["price_basis"] == "chain_linked", "value"].tolist() == pytest.approx([27.0, 30.0])


def test_carried_columns_follow_the_index_row():
    rows = pd.concat([
        rows_of(("P6", "current", "2020", 50), obs_status="A"),
        rows_of(("P6", "volume_index", "2020", 100), ("P6", "volume_index", "2021", 104), first_row=3,
                obs_status="P"),
    ], ignore_index=True)
    out, _ = to_money_terms(rows)
    assert out.set_index(["price_basis", "period"])["obs_status"].to_dict() == {
        ("current", "2020"): "A", ("chain_linked", "2020"): "P", ("chain_linked", "2021"): "P"}
    assert (out["adjustment"] == "S").all()


def test_rows_without_indexes_pass_unchanged():
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "chain_linked", "2020", 50))
    out, problems = to_money_terms(rows)
    assert problems == [] and out.drop(columns="derived_from").equals(rows)
    assert (out["derived_from"] == "").all()


def test_non_positive_index_is_an_error():
    rows = rows_of(("P6", "current", "2020", 50), ("P6", "price_index", "2020", 100),
                   ("P6", "price_index", "2021", 0))
    problems = to_money_terms(rows)[1]
    assert (problems[0].row, problems[0].period) == (4, "2021") and "must be positive" in problems[0].reason
