"""Tests of valvol.methods.benchmark (Denton benchmarking, Chow-Lin temporal disaggregation).

External oracle: IMF, *Quarterly National Accounts Manual, 2017 Edition*, Example 8.8
"Chain-Linking and Benchmarking Quarterly Fisher Indices" (tests/reference_data/
fisher_chain_denton_worked_example.csv; provenance in tests/reference_data/README.md).
Independent solves: the Denton objective (Denton 1971, JASA 66(333), with the Cholette 1984
modification, Survey Methodology 10) as a dense KKT system with numpy, and the Chow-Lin GLS
formulas (Chow & Lin 1971, REStat 53(4)) with dense matrices, both as written in docs/methods.md
7.1 and 7.2. The other checks are the properties docs/methods.md §7.1/7.2 marks [DERIVED].
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from valvol.errors import ConfigError, InputError
from valvol.methods.benchmark import YEAR_FROM_QUARTERS, denton
from valvol.methods.chow_lin import chow_lin

EXAMPLE_8_8 = Path(__file__).resolve().parents[1] / "reference_data" / "fisher_chain_denton_worked_example.csv"
SETTINGS = settings(max_examples=50, deadline=None)


# --- helpers ---------------------------------------------------------------------------------


def quarterly(series, first_year, values):
    values = np.asarray(values, dtype="float64")
    t = np.arange(len(values)) + 4 * first_year
    return pd.DataFrame({"series": series, "year": t // 4, "quarter": t % 4 + 1, "value": values})


def annual(series, years, values):
    return pd.DataFrame({"series": series, "year": np.asarray(years, dtype="int64"),
                         "value": np.asarray(values, dtype="float64")})


def aggregate(frame, how, column="value"):
    w = np.asarray(YEAR_FROM_QUARTERS[how])
    f = frame.assign(_w=frame[column] * w[frame["quarter"].to_numpy() - 1])
    return f.groupby(["series", "year"])["_w"].sum()


def dense_denton(ind, years, bench, first_year, *, proportional, how):
    """min sum (r_t - r_{t-1})^2 (r = X/I, or X - I) s.t. J X = A, solved as a dense KKT system."""
    T = len(ind)
    D = np.diff(np.eye(T), axis=0)
    w = np.asarray(YEAR_FROM_QUARTERS[how])
    J = np.zeros((len(years), T))
    for b, y in enumerate(years):
        J[b, 4 * (y - first_year): 4 * (y - first_year) + 4] = w
    M = J @ np.diag(ind) if proportional else J
    rhs = np.asarray(bench) if proportional else np.asarray(bench) - J @ ind
    K = np.block([[2 * D.T @ D, M.T], [M, np.zeros((len(years), len(years)))]])
    sol = np.linalg.solve(K, np.r_[np.zeros(T), rhs])[:T]
    return ind * sol if proportional else ind + sol


def random_indicator(rng, n):
    return 100.0 * np.exp(np.cumsum(rng.normal(0.01, 0.03, n)))


# --- IMF QNA 2017 Example 8.8 -----------------------------------------------------------------


@pytest.fixture(scope="module")
def example_8_8():
    d = pd.read_csv(EXAMPLE_8_8, dtype={"period": str})
    q = d[d["period"].str.contains("Q")]
    ind = quarterly("FISHER", 2011, q["quarterly_chain_fisher_2010_100"])
    a = d[~d["period"].str.contains("Q") & (d["period"] != "2010")]
    bench = annual("FISHER", a["period"].astype(int), a["annual_chain_fisher_2010_100"])
    return ind, bench, q["benchmarked_quarterly_chain_fisher_2010_100"].to_numpy()


def test_imf_qna_2017_example_8_8_average(example_8_8):
    """IMF QNA 2017 Example 8.8: proportional Denton of column (2), 2011q1-2013q4, quarters
    averaging to column (4), reproduces the published column (6) within 0.02."""
    ind, bench, published = example_8_8
    out = denton(ind, bench, method="proportional", year_from_quarters="mean")
    np.testing.assert_allclose(out["value"], published, atol=0.02, rtol=0)
    # docs/methods.md §10(b) [DERIVED] values from the printed figures (2 decimals)
    derived = [100.74, 100.66, 100.72, 101.04, 101.19, 101.24, 101.82, 102.91, 103.71, 104.27, 104.22, 104.04]
    np.testing.assert_allclose(out["value"], derived, atol=0.005 + 1e-9, rtol=0)


def test_imf_qna_2017_example_8_8_sum_of_four(example_8_8):
    """IMF QNA 2017 Example 8.8: the same with the quarters summing to 4 x column (4)."""
    ind, bench, published = example_8_8
    out = denton(ind, bench.assign(value=4 * bench["value"]), year_from_quarters="total")
    np.testing.assert_allclose(out["value"], published, atol=0.02, rtol=0)
    np.testing.assert_allclose(out.groupby("year")["value"].mean().to_numpy(), bench["value"], rtol=1e-12)


# --- independent dense solve ------------------------------------------------------------------


@pytest.mark.parametrize("how", list(YEAR_FROM_QUARTERS))
@pytest.mark.parametrize("method", ["proportional", "additive"])
def test_sparse_panel_agrees_with_dense_kkt(method, how):
    """Denton (1971) / Cholette (1984) objective, docs/methods.md §7.1 KKT system, dense numpy solve:
    the sparse panel solve agrees to 1e-9 (relative), series of different lengths, a benchmark
    year missing in the middle, quarters before the first and after the last benchmark."""
    rng = np.random.default_rng(7)
    specs = [("A", 2000, 28, [2001, 2002, 2004, 2005]), ("B", 1998, 12, [1998, 1999, 2000]),
             ("C", 2010, 9, [2010])]
    inds, benches, expected = [], [], []
    for name, y0, n, years in specs:
        i = random_indicator(rng, n)
        full_years = np.asarray(years)
        bench = [np.dot(YEAR_FROM_QUARTERS[how], i[4 * (y - y0): 4 * (y - y0) + 4]) * rng.uniform(0.9, 1.1)
                 for y in full_years]
        inds.append(quarterly(name, y0, i))
        benches.append(annual(name, full_years, bench))
        expected.append(dense_denton(i, full_years, bench, y0, proportional=method == "proportional", how=how))
    out = denton(pd.concat(inds), pd.concat(benches), method=method, year_from_quarters=how)
    exp = np.concatenate(expected)
    np.testing.assert_allclose(out["value"], exp, rtol=0, atol=1e-9 * np.abs(exp).max())
    assert (out["method"] == method).all()


# --- extrapolation convention ----------------------------------------------------------------


def test_extrapolation_keeps_the_end_ratio_or_difference_flat():
    """docs/methods.md §7.1 [DERIVED]: past the last benchmark the BI ratio (PFD) or X - I (AFD) stays
    at the last benchmarked quarter's value; likewise before the first benchmark."""
    rng = np.random.default_rng(3)
    i = random_indicator(rng, 24)  # 2000..2005
    ind = quarterly("S", 2000, i)
    bench = annual("S", [2001, 2002, 2003], [i[4:8].sum() * 1.05, i[8:12].sum() * 0.97, i[12:16].sum() * 1.02])
    pfd = denton(ind, bench)
    r = pfd["value"].to_numpy() / i
    np.testing.assert_allclose(r[16:], r[15], rtol=1e-12)
    np.testing.assert_allclose(r[:4], r[4], rtol=1e-12)
    assert not pfd["benchmarked"].to_numpy()[[0, 3, 16, 23]].any() and pfd["benchmarked"].to_numpy()[4:16].all()
    afd = denton(ind, bench, method="additive")
    u = afd["value"].to_numpy() - i
    np.testing.assert_allclose(u[16:], u[15], atol=1e-9)
    np.testing.assert_allclose(u[:4], u[4], atol=1e-9)


def index_and_money(seed=21):
    """An indicator on an index scale (near 100) over 2021..2023 and money benchmarks (near
    5,000) for 2021 and 2022 only, with a benchmark-to-indicator ratio that differs by year."""
    rng = np.random.default_rng(seed)
    i = 100.0 * np.exp(np.cumsum(rng.normal(0.005, 0.01, 12)))
    bench = [i[0:4].sum() * 12.4, i[4:8].sum() * 12.9]  # about 5,000 a year
    return quarterly("P51G", 2021, i), annual("P51G", [2021, 2022], bench), i


def test_index_indicator_money_benchmarks_past_the_last_benchmark():
    """Denton (1971) with the Cholette (1984) modification; IMF QNA 2017 ch. 6. The quarters
    of 2023 (no benchmark) enter the objective only through the terms (r_t - r_{t-1})^2 with
    t past 2022-Q4, which no constraint binds, so the minimum sets each to zero: r stays at
    its 2022-Q4 value (derived from the objective); the same for X - I under the additive
    variant. They are the indicator times the last ratio (about 13), not the indicator's own
    2023 sum (about 420)."""
    ind, bench, i = index_and_money()
    pfd = denton(ind, bench)
    x = pfd["value"].to_numpy()
    np.testing.assert_allclose(x[8:], x[7] / i[7] * i[8:], rtol=1e-9)
    np.testing.assert_allclose([x[:4].sum(), x[4:8].sum()], bench["value"], rtol=1e-12)
    assert x[8:].sum() > 12 * i[8:].sum()  # about 5,500, not 420
    assert pfd["benchmarked"].to_numpy()[:8].all() and not pfd["benchmarked"].to_numpy()[8:].any()
    afd = denton(ind, bench, method="additive")
    u = afd["value"].to_numpy() - i
    np.testing.assert_allclose(u[8:], u[7], rtol=1e-9)
    np.testing.assert_allclose(afd["value"].to_numpy()[8:], i[8:] + u[7], rtol=1e-9)


def test_chow_lin_fixed_rho_extrapolates_the_fit_and_a_decaying_residual():
    """Chow & Lin (1971); IMF QNA 2017 ch. 6. Past the last benchmarked quarter T the result is
    b0 + b1 I_t + rho^(t-T) u_T: the residual is Sigma C' V_a^-1 (y_a - C X b), and for t > T
    every entry of row t of Sigma = rho^|t-s| / (1 - rho^2) over s <= T is rho^(t-T) times
    that of row T (hand derivation)."""
    rho = 0.6
    i, years, bench = chow_lin_case(12, nyears=6, extra=6)
    out, params = chow_lin(quarterly("S", 2000, i), annual("S", years, bench), rho=rho)
    b0, b1 = params[["beta_constant", "beta_indicator"]].to_numpy()[0]
    u = out["value"].to_numpy() - (b0 + b1 * i)
    np.testing.assert_allclose(out["regression"], b0 + b1 * i, rtol=1e-12)
    k = np.arange(1, 7)
    np.testing.assert_allclose(u[24:], rho**k * u[23], rtol=1e-9, atol=1e-9 * np.abs(out["value"]).max())
    assert abs(u[23]) > 1e-3  # a residual to carry


def test_chow_lin_held_years_are_met_but_not_regressed():
    """``held`` years (the pipeline's join years before the first benchmark) bind the result
    but are not observations: beta and the log-likelihood are those of the benchmarks alone,
    and the result is X b + Sigma C' (C Sigma C')^-1 (A - C X b) with C stacking the benchmark
    and held rows (Chow & Lin 1971 formulas, dense)."""
    rho = 0.5
    i, years, bench = chow_lin_case(13, nyears=7, extra=2)
    ind = quarterly("S", 2000, i)
    held = annual("S", [2000], [i[:4].sum()])  # the indicator's own total, index units
    alone, p_alone = chow_lin(ind, annual("S", years[1:], bench[1:]), rho=rho)
    out, params = chow_lin(ind, annual("S", years[1:], bench[1:]), rho=rho, held=held)
    cols = ["beta_constant", "beta_indicator", "loglik", "n_years"]
    np.testing.assert_allclose(params[cols].to_numpy(float), p_alone[cols].to_numpy(float), rtol=1e-12)
    b = params[["beta_constant", "beta_indicator"]].to_numpy()[0]
    T = len(i)
    X = np.column_stack([np.ones(T), i])
    C = np.zeros((7, T))
    for r in range(7):
        C[r, 4 * r: 4 * r + 4] = 1.0
    S = rho ** np.abs(np.subtract.outer(np.arange(T), np.arange(T))) / (1 - rho**2)
    A = np.r_[held["value"], bench[1:]]
    expected = X @ b + S @ C.T @ np.linalg.solve(C @ S @ C.T, A - C @ X @ b)
    np.testing.assert_allclose(out["value"], expected, rtol=1e-9)
    assert out["value"].to_numpy()[:4].sum() == pytest.approx(held["value"].iloc[0], rel=1e-12)
    with pytest.raises(InputError, match="given twice"):
        chow_lin(ind, annual("S", years, bench), rho=rho, held=held)


# --- properties -------------------------------------------------------------------------------


panels = st.tuples(st.integers(0, 10_000), st.integers(1, 3), st.integers(2, 6), st.sampled_from(list(YEAR_FROM_QUARTERS)),
                   st.sampled_from(["proportional", "additive"]))


def random_panel(seed, nseries, nyears, how):
    rng = np.random.default_rng(seed)
    inds, benches = [], []
    for s in range(nseries):
        y0 = 2000 + s
        i = random_indicator(rng, 4 * nyears + 2)  # two extrapolated quarters
        inds.append(quarterly(f"S{s}", y0, i))
        years = y0 + np.arange(nyears)
        agg = np.asarray(YEAR_FROM_QUARTERS[how]) @ i[: 4 * nyears].reshape(nyears, 4).T
        benches.append(annual(f"S{s}", years, agg * rng.uniform(0.8, 1.2, nyears)))
    return pd.concat(inds, ignore_index=True), pd.concat(benches, ignore_index=True)


@SETTINGS
@given(panels)
def test_annual_constraints_hold_exactly(p):
    """docs/methods.md §7.1 [DERIVED]: the benchmarked quarters aggregate to the benchmarks (1e-9 rel.)."""
    seed, nseries, nyears, how, method = p
    ind, bench = random_panel(seed, nseries, nyears, how)
    out = denton(ind, bench, method=method, year_from_quarters=how)
    got = aggregate(out, how).reindex(pd.MultiIndex.from_frame(bench[["series", "year"]])).to_numpy()
    np.testing.assert_allclose(got, bench["value"], rtol=1e-9)


@SETTINGS
@given(panels)
def test_indicator_proportional_to_benchmarks_gives_pro_rata(p):
    """docs/methods.md §7.1 [DERIVED]: benchmarks = k x aggregated indicator (PFD) give X = k I (also
    in the extrapolated quarters); for AFD, benchmarks = aggregated (I + c) give X = I + c."""
    seed, nseries, nyears, how, method = p
    ind, _ = random_panel(seed, nseries, nyears, how)
    k = 1.0 + (seed % 7) / 10.0
    agg = aggregate(ind[ind["year"] < ind.groupby("series")["year"].transform("max")], how)
    if method == "proportional":
        bench = (k * agg).rename("value").reset_index()
        expected = k * ind["value"].to_numpy()
    else:
        bench = (agg + 5.0 * sum(YEAR_FROM_QUARTERS[how])).rename("value").reset_index()
        expected = ind["value"].to_numpy() + 5.0
    out = denton(ind, bench, method=method, year_from_quarters=how)
    np.testing.assert_allclose(out["value"], expected, rtol=1e-9)


@SETTINGS
@given(panels, st.floats(1e-3, 1e4))
def test_scaling_the_indicator_changes_nothing(p, factor):
    """docs/methods.md §7.1 [DERIVED]: PFD results do not depend on the scale of the indicator."""
    seed, nseries, nyears, how, _ = p
    ind, bench = random_panel(seed, nseries, nyears, how)
    base = denton(ind, bench, year_from_quarters=how)
    scaled = denton(ind.assign(value=ind["value"] * factor), bench, year_from_quarters=how)
    np.testing.assert_allclose(scaled["value"], base["value"], rtol=1e-9)


# --- degenerate cases and errors --------------------------------------------------------------


def test_nonpositive_indicator_raises_naming_series_and_period():
    """Common practice (QNA 2017 §6.4.C, title read): PFD needs a positive indicator."""
    i = np.r_[10.0, 12.0, -1.0, 11.0, 9.0, 0.0, 10.0, 12.0]
    ind = pd.concat([quarterly("P52", 2020, i), quarterly("P6", 2020, np.full(8, 10.0))])
    bench = pd.concat([annual("P52", [2020, 2021], [30.0, 35.0]), annual("P6", [2020, 2021], [41.0, 42.0])])
    with pytest.raises(InputError) as err:
        denton(ind, bench)
    found = {(p.item, p.period) for p in err.value.problems}
    assert found == {("P52", "2020-Q3"), ("P52", "2021-Q2")}
    out = denton(ind, bench, on_nonpositive="additive")
    assert set(out.loc[out["series"] == "P52", "method"]) == {"additive"}
    assert set(out.loc[out["series"] == "P6", "method"]) == {"proportional"}
    add = denton(ind[ind["series"] == "P52"], bench[bench["series"] == "P52"], method="additive")
    np.testing.assert_allclose(out.loc[out["series"] == "P52", "value"], add["value"], rtol=1e-12)


def test_input_errors_name_series_and_period():
    ind = quarterly("X", 2020, np.arange(1.0, 9.0)).drop(index=5)  # 2021-Q2 missing
    with pytest.raises(InputError) as err:
        denton(ind, annual("X", [2020], [10.0]))
    assert [(p.item, p.period) for p in err.value.problems] == [("X", "2021-Q3")]
    ind = quarterly("X", 2020, np.arange(1.0, 7.0))
    with pytest.raises(InputError) as err:
        denton(ind, annual("X", [2020, 2021, 2022], [10.0, 20.0, 1.0]))
    assert {(p.item, p.period) for p in err.value.problems} == {("X", "2021"), ("X", "2022")}
    with pytest.raises(InputError, match="no benchmark"):
        denton(pd.concat([ind, quarterly("Y", 2020, np.ones(4))]), annual("X", [2020], [10.0]))
    with pytest.raises(ConfigError):
        denton(ind, annual("X", [2020], [10.0]), year_from_quarters="end")


def test_levels_panel_keys():
    """Key columns of the levels panel fill the Problem fields and are kept in the output."""
    ind = quarterly("x", 2020, [1.0, 2.0, 0.0, 1.0]).drop(columns="series").assign(
        economy="ZZ", item="P31_S14", price_basis="current")
    bench = pd.DataFrame({"economy": ["ZZ"], "item": ["P31_S14"], "price_basis": ["current"], "year": [2020],
                          "value": [5.0]})
    key = ["economy", "item", "price_basis"]
    with pytest.raises(InputError) as err:
        denton(ind, bench, by=key)
    (p,) = err.value.problems
    assert (p.economy, p.item, p.price_basis, p.period) == ("ZZ", "P31_S14", "current", "2020-Q3")
    out = denton(ind, bench, by=key, method="additive")
    assert set(key) <= set(out.columns)
    assert out["value"].sum() == pytest.approx(5.0)


# --- Chow-Lin ---------------------------------------------------------------------------------


def dense_chow_lin(i, years, bench, y0, rho, constant=True, how="total"):
    """docs/methods.md §7.2 formulas with dense matrices (Chow & Lin 1971)."""
    T = len(i)
    X = np.column_stack([np.ones(T), i]) if constant else i[:, None]
    C = np.zeros((len(years), T))
    for b, y in enumerate(years):
        C[b, 4 * (y - y0): 4 * (y - y0) + 4] = YEAR_FROM_QUARTERS[how]
    lag = np.abs(np.subtract.outer(np.arange(T), np.arange(T)))
    S = rho**lag / (1 - rho**2)
    Va = C @ S @ C.T
    Vi = np.linalg.inv(Va)
    CX = C @ X
    beta = np.linalg.solve(CX.T @ Vi @ CX, CX.T @ Vi @ bench)
    u = bench - CX @ beta
    yhat = X @ beta + S @ C.T @ Vi @ u
    N = len(years)
    ll = -0.5 * N * (np.log(2 * np.pi) + 1 + np.log(u @ Vi @ u / N)) - 0.5 * np.linalg.slogdet(Va)[1]
    return yhat, beta, ll


def chow_lin_case(seed, nyears=10, extra=3, phi=0.6):
    rng = np.random.default_rng(seed)
    T = 4 * nyears + extra
    i = random_indicator(rng, T)
    e = np.zeros(T)
    for t in range(1, T):
        e[t] = phi * e[t - 1] + rng.normal(0, 1.0)
    y = 5.0 + 0.8 * i + e
    years = 2000 + np.arange(nyears)
    bench = y[: 4 * nyears].reshape(nyears, 4).sum(1)
    return i, years, bench


@pytest.mark.parametrize("how", ["total", "mean", "q4"])
@pytest.mark.parametrize("rho", [-0.5, 0.0, 0.45, 0.9])
def test_chow_lin_fixed_rho_agrees_with_dense_gls(rho, how):
    """Chow & Lin (1971) GLS formulas of docs/methods.md §7.2 with dense matrices: same fit, beta and
    log-likelihood to 1e-9, including three extrapolated quarters."""
    i, years, bench = chow_lin_case(11)
    bench = bench / 4 if how == "mean" else bench
    out, params = chow_lin(quarterly("S", 2000, i), annual("S", years, bench), rho=rho, year_from_quarters=how)
    yhat, beta, ll = dense_chow_lin(i, years, bench, 2000, rho, how=how)
    np.testing.assert_allclose(out["value"], yhat, rtol=1e-9)
    np.testing.assert_allclose(params[["beta_constant", "beta_indicator"]].to_numpy()[0], beta, rtol=1e-8)
    assert params["loglik"].iloc[0] == pytest.approx(ll, rel=1e-9)
    assert not params["rho_estimated"].iloc[0] and not params["rho_at_bound"].iloc[0]


@SETTINGS
@given(st.integers(0, 10_000), st.integers(3, 8), st.booleans())
def test_chow_lin_rho_zero_is_ols_plus_even_spread(seed, nyears, constant):
    """docs/methods.md §7.2 [DERIVED]: at rho = 0, for flows, the result is the OLS fit on the annual
    data plus each year's residual spread evenly over its four quarters."""
    i, years, bench = chow_lin_case(seed, nyears, extra=0)
    out, params = chow_lin(quarterly("S", 2000, i), annual("S", years, bench), rho=0.0, constant=constant)
    ia = i.reshape(nyears, 4).sum(1)
    Xa = np.column_stack([np.full(nyears, 4.0), ia]) if constant else ia[:, None]
    beta = np.linalg.lstsq(Xa, bench, rcond=None)[0]
    X = np.column_stack([np.ones_like(i), i]) if constant else i[:, None]
    expected = X @ beta + np.repeat((bench - Xa @ beta) / 4.0, 4)
    np.testing.assert_allclose(out["value"], expected, rtol=1e-9, atol=1e-9 * np.abs(expected).max())
    np.testing.assert_allclose(params["beta_indicator"].iloc[0], beta[-1], rtol=1e-8)


@SETTINGS
@given(st.integers(0, 10_000), st.floats(-0.95, 0.95), st.sampled_from(list(YEAR_FROM_QUARTERS)))
def test_chow_lin_fixed_rho_meets_annual_constraints(seed, rho, how):
    """docs/methods.md §7.2: with a fixed rho the disaggregated quarters aggregate to the benchmarks."""
    ind, bench = random_panel(seed, 2, 5, how)
    out, params = chow_lin(ind, bench, rho=rho, year_from_quarters=how)
    got = aggregate(out, how).reindex(pd.MultiIndex.from_frame(bench[["series", "year"]])).to_numpy()
    np.testing.assert_allclose(got, bench["value"], rtol=1e-9)
    assert (params["rho"] == rho).all()


def test_chow_lin_estimated_rho_maximises_the_likelihood():
    """docs/methods.md §7.2: rho by maximum likelihood; the estimate beats a fine grid of the dense
    concentrated log-likelihood, and a panel of series is estimated series by series."""
    cases = [chow_lin_case(s, nyears=16, phi=0.7) for s in (1, 2, 3)]
    ind = pd.concat([quarterly(f"S{k}", 2000, c[0]) for k, c in enumerate(cases)])
    bench = pd.concat([annual(f"S{k}", c[1], c[2]) for k, c in enumerate(cases)])
    out, params = chow_lin(ind, bench)
    grid = np.linspace(-0.99, 0.99, 397)
    for k, (i, years, b) in enumerate(cases):
        lls = [dense_chow_lin(i, years, b, 2000, r)[2] for r in grid]
        row = params.iloc[k]
        assert row["rho_estimated"]
        assert row["loglik"] >= max(lls) - 1e-9
        assert row["loglik"] == pytest.approx(dense_chow_lin(i, years, b, 2000, row["rho"])[2], rel=1e-9)
        assert abs(row["rho"] - grid[int(np.argmax(lls))]) <= 0.01
        if not row["rho_at_bound"]:
            assert -0.99 < row["rho"] < 0.99


def test_chow_lin_reports_rho_at_bound():
    """A random-walk residual pushes rho to the upper bound of a narrow search interval."""
    rng = np.random.default_rng(5)
    i = random_indicator(rng, 64)
    y = 2.0 * i + np.cumsum(rng.normal(0, 3.0, 64))
    bench = y.reshape(16, 4).sum(1)
    _, params = chow_lin(quarterly("S", 2000, i), annual("S", 2000 + np.arange(16), bench), rho_bounds=(-0.3, 0.3))
    assert params["rho"].iloc[0] == pytest.approx(0.3) and params["rho_at_bound"].iloc[0]


def test_chow_lin_errors():
    i, years, bench = chow_lin_case(1, nyears=2, extra=0)
    with pytest.raises(InputError, match="needs at least 3"):
        chow_lin(quarterly("S", 2000, i), annual("S", years, bench))
    with pytest.raises(ConfigError):
        chow_lin(quarterly("S", 2000, i), annual("S", years, bench), rho=1.0)
    with pytest.raises(InputError, match="collinear"):
        chow_lin(quarterly("S", 2000, np.ones(12)), annual("S", [2000, 2001, 2002], [1.0, 2.0, 3.0]))
