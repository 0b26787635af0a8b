"""Tests of valvol.methods.reconcile (multivariate reconciliation).

Independent solves, with dense numpy matrices, of the formulations in docs/methods.md §7.3: the
least-squares adjustment of Stone, Champernowne & Meade (1942), x* = x + V H'(H V H')^+ (h - H x)
with V = diag(x^2) and a pseudo-inverse (which copes with the redundant row), and the
multivariate proportional Denton objective (QNA 2017 §6.5.A, title read; formulation
[DERIVED]) as a dense KKT system solved by least squares. The other checks are the properties
of docs/methods.md §7.3 [DERIVED]: consistency checked first, one redundant row per year, fixed
series unmoved, constraints met.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from valvol.errors import ConfigError, InputError
from valvol.methods.benchmark import denton
from valvol.methods.reconcile import ANNUAL_COLUMNS, REPORT_COLUMNS, RESIDUAL_COLUMNS, reconcile

SETTINGS = settings(max_examples=50, deadline=None)


# --- a synthetic system -----------------------------------------------------------------------


def make_system(seed, n=4, years=3, extra=2, *, negative_sign=True, noise=0.03, inventories=False):
    """True quarterly components, an indicator-based first estimate z (true x noise), the true
    annual benchmarks (first ``years`` years) and the true total (all quarters)."""
    rng = np.random.default_rng(seed)
    Q = 4 * years + extra
    truth = 100 * np.exp(np.cumsum(rng.normal(0.01, 0.02, (n, Q)), axis=1)) * rng.uniform(0.5, 3, (n, 1))
    if inventories:
        truth[-1] = rng.normal(0, 10, Q)  # changes sign
    names = [f"C{i}" for i in range(n)]
    signs = {s: (-1 if negative_sign and i == 1 else 1) for i, s in enumerate(names)}
    z = truth * rng.uniform(1 - noise, 1 + noise, (n, Q))
    if inventories:
        z[-1] = truth[-1] + rng.normal(0, 3, Q)
    t = np.arange(Q) + 4 * 2010
    comp = pd.DataFrame({"series": np.repeat(names, Q), "year": np.tile(t // 4, n), "quarter": np.tile(t % 4 + 1, n),
                         "value": z.ravel()})
    sg = np.array([signs[s] for s in names], float)
    total = pd.DataFrame({"year": t // 4, "quarter": t % 4 + 1, "value": (sg[:, None] * truth).sum(0)})
    ann = truth[:, : 4 * years].reshape(n, years, 4).sum(2)
    annual = pd.DataFrame({"series": np.repeat(names, years), "year": np.tile(2010 + np.arange(years), n),
                           "value": ann.ravel()})
    return dict(comp=comp, signs=signs, total=total, annual=annual, truth=truth, z=z, names=names, sg=sg)


def dense_h(sys_, fixed=(), disc=None):
    """Dense H (temporal rows, then one identity row per quarter) and h, movable series only."""
    z, names, sg = sys_["z"], sys_["names"], sys_["sg"]
    n, Q = z.shape
    free = [i for i, s in enumerate(names) if s not in fixed]
    rows, h = [], []
    ann = sys_["annual"].set_index(["series", "year"])["value"]
    for i in free:
        for (s, y), a in ann.items():
            if s == names[i]:
                r = np.zeros((n, Q))
                r[i, 4 * (y - 2010): 4 * (y - 2010) + 4] = 1
                rows.append(r[free].ravel())
                h.append(a)
    tot = sys_["total"]["value"].to_numpy() - (0 if disc is None else disc)
    for q in range(Q):
        r = np.zeros((n, Q))
        r[free, q] = sg[free]
        rows.append(r[free].ravel())
        h.append(tot[q] - sum(sg[j] * z[j, q] for j in range(n) if j not in free))
    return np.array(rows), np.array(h), free


def wide(result_components, names):
    return np.vstack([result_components.loc[result_components["series"] == s, "value"].to_numpy() for s in names])


# --- independent dense solves -----------------------------------------------------------------


@pytest.mark.parametrize("fixed", [(), ("C2",)])
def test_wls_agrees_with_least_squares_formula_and_pseudo_inverse(fixed):
    """Stone, Champernowne & Meade (1942) as in docs/methods.md §7.3: x* = x + V H'(H V H')^+ (h - H x),
    V = diag(x^2), pseudo-inverse over all rows (redundant ones included); agrees to 1e-9."""
    s = make_system(1)
    if fixed:  # a fixed series must already meet its benchmark
        s["z"][2] = s["truth"][2]
        s["comp"].loc[s["comp"]["series"] == "C2", "value"] = s["truth"][2]
    H, h, free = dense_h(s, fixed)
    x = s["z"][free].ravel()
    V = np.diag(x**2)
    expected = x + V @ H.T @ np.linalg.pinv(H @ V @ H.T) @ (h - H @ x)
    res = reconcile(s["comp"], s["signs"], s["total"], s["annual"], method="wls", fixed=fixed)
    got = wide(res.components, s["names"])
    np.testing.assert_allclose(got[free].ravel(), expected, rtol=1e-9)
    if fixed:
        np.testing.assert_array_equal(got[2], s["z"][2])


@pytest.mark.parametrize("with_discrepancy", [False, True])
def test_proportional_denton_agrees_with_dense_kkt(with_discrepancy):
    """Multivariate proportional Denton, docs/methods.md §7.3: min sum_i sum_t (x_it/z_it -
    x_i,t-1/z_i,t-1)^2 s.t. H x = h, as a dense KKT system with every row (least squares, so the
    redundant row does no harm); the sparse solve agrees to 1e-9."""
    s = make_system(2, n=3, years=4, extra=3)
    Q = s["z"].shape[1]
    disc = np.linspace(-2, 2, Q) if with_discrepancy else None
    if with_discrepancy:  # the total includes the discrepancy: sum_i s_i x_i + d = T
        s["total"]["value"] += disc
    H, h, free = dense_h(s, (), disc)
    zf = s["z"].ravel()
    n = len(zf)
    D = np.zeros((0, n))
    for i in range(3):
        block = np.zeros((Q - 1, n))
        block[:, i * Q: (i + 1) * Q] = np.diff(np.eye(Q), axis=0)
        D = np.vstack([D, block])
    M = H @ np.diag(zf)
    K = np.block([[2 * D.T @ D, M.T], [M, np.zeros((len(h), len(h)))]])
    r = np.linalg.lstsq(K, np.r_[np.zeros(n), h], rcond=None)[0][:n]
    expected = zf * r
    kw = {}
    if with_discrepancy:
        t = np.arange(Q) + 4 * 2010
        kw["discrepancy"] = pd.DataFrame({"year": t // 4, "quarter": t % 4 + 1, "value": disc})
    res = reconcile(s["comp"], s["signs"], s["total"], s["annual"], **kw)
    np.testing.assert_allclose(wide(res.components, s["names"]).ravel(), expected, rtol=1e-9)


# --- properties -------------------------------------------------------------------------------


systems = st.tuples(st.integers(0, 10_000), st.integers(2, 5), st.integers(1, 4), st.integers(0, 3),
                    st.sampled_from(["proportional_denton", "wls"]), st.booleans())


@SETTINGS
@given(systems)
def test_components_add_to_total_and_meet_benchmarks(p):
    """docs/methods.md §7.3: after reconciliation the signed components (plus the discrepancy) add to
    the total within 1e-9 (relative) every quarter, and each component matches its benchmarks."""
    seed, n, years, extra, method, with_fixed = p
    s = make_system(seed, n=n, years=years, extra=extra)
    fixed = ()
    if with_fixed and n > 2:
        fixed = ("C0",)
        s["comp"].loc[s["comp"]["series"] == "C0", "value"] = s["truth"][0]
    res = reconcile(s["comp"], s["signs"], s["total"], s["annual"], method=method, fixed=fixed)
    x = wide(res.components, s["names"])
    tot = s["total"]["value"].to_numpy()
    np.testing.assert_allclose((s["sg"][:, None] * x).sum(0), tot, rtol=1e-9, atol=1e-9 * np.abs(tot).max())
    got = x[:, : 4 * years].reshape(n, years, 4).sum(2).ravel()
    np.testing.assert_allclose(got, s["annual"]["value"], rtol=1e-9)
    assert np.abs(res.residuals["residual_after"]).max() <= 1e-9 * np.abs(tot).max()
    assert np.abs(res.annual_residuals["residual_after"]).max() <= 1e-9 * np.abs(s["annual"]["value"]).max()
    if fixed:
        np.testing.assert_array_equal(x[0], s["truth"][0])
        assert (res.report.loc[res.report["series"] == "C0", "constraint"] == "fixed").all()


@SETTINGS
@given(systems, st.floats(0.01, 50.0), st.booleans())
def test_inconsistent_system_raises_naming_year_and_gap(p, delta, negative):
    """docs/methods.md §7.3: consistency is checked first; an inconsistent year is refused with the
    year and the gap (signed annual benchmarks minus the aggregated total)."""
    seed, n, years, extra, method, _ = p
    s = make_system(seed, n=n, years=years, extra=extra)
    delta = -delta if negative else delta
    row = (seed % n) * years + (seed % years)
    series, year = s["annual"].loc[row, ["series", "year"]]
    s["annual"].loc[row, "value"] += delta
    with pytest.raises(InputError) as err:
        reconcile(s["comp"], s["signs"], s["total"], s["annual"], method=method)
    (prob,) = err.value.problems
    assert prob.period == str(year) and prob.item == "total"
    gap = float(re.search(r"gap ([-+0-9.e]+)", prob.reason).group(1))
    assert gap == pytest.approx(s["signs"][series] * delta, rel=1e-5)


@SETTINGS
@given(systems)
def test_attribution_splits_the_adjustment(p):
    """Report: adjustment = adjustment_annual + adjustment_identity; the identity part sums to
    zero over every benchmark year; growth columns are q/q percent changes."""
    seed, n, years, extra, method, _ = p
    s = make_system(seed, n=n, years=years, extra=extra)
    rep = reconcile(s["comp"], s["signs"], s["total"], s["annual"], method=method).report
    assert list(rep.columns) == REPORT_COLUMNS
    np.testing.assert_allclose(rep["adjustment_annual"] + rep["adjustment_identity"], rep["adjustment"],
                               atol=1e-9 * rep["before"].abs().max())
    yearly = rep[rep["year"] < 2010 + years].groupby(["series", "year"])["adjustment_identity"].sum()
    assert np.abs(yearly).max() <= 1e-8 * rep["before"].abs().max()
    g = rep.groupby("series")["after"]
    np.testing.assert_allclose(rep["growth_after_pct"], 100 * (rep["after"] / g.shift(1) - 1))
    ok = rep["constraint"].str.match(r"^(annual benchmark \d{4}|annual benchmarks \(extrapolated\)|"
                                     r"quarterly identity \d{4}-Q[1-4]|none|fixed)$")
    assert ok.all()


def test_annual_part_is_univariate_denton_and_identity_labels():
    """When the total equals the signed sum of the components benchmarked one by one, the
    multivariate solution is that univariate Denton solution (the objective is separable) and
    every change serves an annual benchmark; when the components already meet their benchmarks,
    every change serves the quarterly identity."""
    s = make_system(4, years=3, extra=0)
    uni = denton(s["comp"], s["annual"])
    u = wide(uni, s["names"])
    t = s["total"].assign(value=(s["sg"][:, None] * u).sum(0))
    res = reconcile(s["comp"], s["signs"], t, s["annual"])
    np.testing.assert_allclose(wide(res.components, s["names"]), u, rtol=1e-9)
    assert res.report["constraint"].str.startswith("annual benchmark ").all()
    comp = s["comp"].assign(value=s["truth"].ravel() + np.tile([1.0, -1.0, 0.5, -0.5], 3 * 4))
    ann = comp.groupby(["series", "year"], as_index=False)["value"].sum()
    res = reconcile(comp, s["signs"], s["total"], ann)
    moved = res.report[res.report["constraint"] != "none"]
    assert len(moved) and moved["constraint"].str.startswith("quarterly identity ").all()
    assert np.abs(res.report["adjustment_annual"]).max() <= 1e-9 * res.report["before"].abs().max()


def test_a_year_without_benchmarks_is_bound_only_by_the_identities():
    """Two benchmarked years and a third (2012) without benchmarks. With the total equal to the
    signed sum of the components benchmarked one by one (Denton 1971 / Cholette 1984, which keep
    each BI ratio flat past 2011-Q4), that solution meets every constraint and minimises each
    series' part of the separable objective, so it is the result: each component's 2012 ratio
    stays at its 2011-Q4 value (derived from the objective; IMF QNA 2017 ch. 6, 6.5.A). Feeding
    2012 its own sums as benchmarks instead makes the year inconsistent with the total. With
    the true total, 2012 meets the identities and no annual row exists for it."""
    s = make_system(9, years=2, extra=4)
    uni = wide(denton(s["comp"], s["annual"]), s["names"])
    r = uni / s["z"]
    np.testing.assert_allclose(r[:, 8:], np.repeat(r[:, [7]], 4, axis=1), rtol=1e-9)  # univariate extrapolation
    t = s["total"].assign(value=(s["sg"][:, None] * uni).sum(0))
    res = reconcile(s["comp"], s["signs"], t, s["annual"])
    x = wide(res.components, s["names"])
    np.testing.assert_allclose(x[:, 8:] / s["z"][:, 8:], np.repeat(r[:, [7]], 4, axis=1), rtol=1e-9)
    rep = res.report[res.report["year"] == 2012]
    assert (rep["constraint"].isin(["annual benchmarks (extrapolated)", "none"])).all()
    own = s["comp"][s["comp"]["year"] == 2012].groupby("series", as_index=False)["value"].sum().assign(year=2012)
    with pytest.raises(InputError, match="inconsistent"):
        reconcile(s["comp"], s["signs"], t, pd.concat([s["annual"], own[["series", "year", "value"]]]))
    res = reconcile(s["comp"], s["signs"], s["total"], s["annual"])
    x = wide(res.components, s["names"])
    np.testing.assert_allclose((s["sg"][:, None] * x).sum(0), s["total"]["value"], rtol=1e-9)
    assert 2012 not in set(res.annual_residuals["year"])
    assert np.abs(x[:, 8:].sum(1) - s["z"][:, 8:].sum(1)).max() > 1.0  # not held to their own sums
    labels = res.report.loc[res.report["year"] == 2012, "constraint"]
    assert labels.str.match(r"^(annual benchmarks \(extrapolated\)|quarterly identity 2012-Q[1-4])$").all()


# --- degenerate cases -------------------------------------------------------------------------


def test_sign_changing_component_moves_additively():
    """Common practice: proportional changes are meaningless for inventories (P52), which change
    sign; they are adjusted additively by default, or refused with on_nonpositive='error'."""
    s = make_system(5, inventories=True)
    res = reconcile(s["comp"], s["signs"], s["total"], s["annual"])
    x = wide(res.components, s["names"])
    np.testing.assert_allclose((s["sg"][:, None] * x).sum(0), s["total"]["value"], rtol=1e-9)
    with pytest.raises(InputError) as err:
        reconcile(s["comp"], s["signs"], s["total"], s["annual"], on_nonpositive="error")
    assert {p.item for p in err.value.problems} == {"C3"}
    assert all(re.fullmatch(r"\d{4}-Q[1-4]", p.period) for p in err.value.problems)


def test_independent_systems_in_one_call():
    """Two systems (``by``) solved together equal the two solved apart."""
    a, b = make_system(6), make_system(7, years=2, extra=1)
    both = [pd.concat([a[k].assign(economy="AA"), b[k].assign(economy="BB")]) for k in ("comp", "total", "annual")]
    res = reconcile(*both[:1], a["signs"], *both[1:], by="economy")
    for code, s in (("AA", a), ("BB", b)):
        alone = reconcile(s["comp"], s["signs"], s["total"], s["annual"])
        got = res.components[res.components["economy"] == code]
        np.testing.assert_allclose(got["value"].to_numpy(), alone.components["value"].to_numpy(), rtol=1e-12)
    assert list(res.residuals.columns) == ["economy"] + RESIDUAL_COLUMNS
    assert list(res.annual_residuals.columns) == ["economy"] + ANNUAL_COLUMNS


def test_residual_frames_before_and_after():
    s = make_system(8)
    res = reconcile(s["comp"], s["signs"], s["total"], s["annual"])
    r = res.residuals
    np.testing.assert_allclose(r["residual_before"], r["total"] - r["discrepancy"] - r["sum_before"])
    np.testing.assert_allclose(r["sum_before"], (s["sg"][:, None] * s["z"]).sum(0))
    assert len(r) == s["z"].shape[1] and r["period"].iloc[0] == "2010-Q1"
    a = res.annual_residuals
    np.testing.assert_allclose(a["residual_before"], a["benchmark"] - a["sum_before"])


def test_configuration_and_input_errors():
    s = make_system(9)
    with pytest.raises(ConfigError, match="no sign"):
        reconcile(s["comp"], {"C0": 1}, s["total"], s["annual"])
    with pytest.raises(ConfigError, match="not among"):
        reconcile(s["comp"], s["signs"], s["total"], s["annual"], fixed=["P99"])
    with pytest.raises(ConfigError):
        reconcile(s["comp"], s["signs"], s["total"], s["annual"], method="ols")
    with pytest.raises(InputError, match="cannot be held fixed") as err:
        reconcile(s["comp"], s["signs"], s["total"], s["annual"], fixed=["C1"])
    assert {p.period for p in err.value.problems} == {"2010", "2011", "2012"}
    with pytest.raises(InputError, match="outside the components"):
        reconcile(s["comp"], s["signs"], pd.concat([s["total"], pd.DataFrame(
            {"year": [2030], "quarter": [1], "value": [1.0]})]), s["annual"])
    short = s["comp"].drop(index=s["comp"].index[(s["comp"]["series"] == "C2")][-1])
    with pytest.raises(InputError, match="not the system's"):
        reconcile(short, s["signs"], s["total"], s["annual"])
