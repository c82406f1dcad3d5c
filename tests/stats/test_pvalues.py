"""p-values recomputed from statistics, reported-p parsing and the consistency verdict."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from ledger.stats.errors import StatsInputError
from ledger.stats.pvalues import p_consistency, p_from_statistic, parse_reported_p

# Student's sleep data: extra hours of sleep under two drugs, ten patients (Cushny & Peebles
# 1905, analysed by Student 1908, Biometrika 6: 1); as shipped in R's datasets::sleep
# (Rdatasets csv/datasets/sleep.csv). Used purely as a test fixture.
SLEEP_DRUG_1 = np.array([0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0])
SLEEP_DRUG_2 = np.array([1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4])


# --- p from a statistic: published critical values --------------------------------------------


def _half_unit(written: str) -> float:
    return 0.5 * 10.0 ** -len(written.split(".")[1])


@pytest.mark.parametrize(
    ("kind", "written", "df1", "df2"),
    [
        # NIST/SEMATECH e-Handbook of Statistical Methods, sec. 1.3.6.7 tables (memory):
        ("t", "2.228", 10, None),  # 1.3.6.7.2, t(10), two-sided .05
        ("z", "1.96", None, None),  # 1.3.6.7.1, normal, two-sided .05
        ("F", "3.49", 2, 20),  # 1.3.6.7.3, F(2, 20), upper .05
        ("chi2", "3.841", 1, None),  # 1.3.6.7.4, chi-square(1), upper .05
        ("chi2", "5.991", 2, None),  # 1.3.6.7.4, chi-square(2), upper .05
        ("chi2", "18.307", 10, None),  # 1.3.6.7.4, chi-square(10), upper .05
    ],
)
def test_table_critical_values_give_p_of_05_within_the_tables_rounding(kind, written, df1, df2):
    value, half = float(written), _half_unit(written)
    # The tabled value is the rounded critical value, so the exact p = .05 point lies within
    # half a unit of its last digit: p just below it is above .05, p just above it below.
    assert p_from_statistic(kind=kind, value=value - half, df1=df1, df2=df2) > 0.05
    assert p_from_statistic(kind=kind, value=value + half, df1=df1, df2=df2) < 0.05
    # Hard check against SciPy's quantile functions: the exact critical value gives p = .05.
    exact = {
        "t": lambda: stats.t.isf(0.025, df1),
        "z": lambda: stats.norm.isf(0.025),
        "F": lambda: stats.f.isf(0.05, df1, df2),
        "chi2": lambda: stats.chi2.isf(0.05, df1),
    }[kind]()
    assert round(exact, len(written.split(".")[1])) == value
    assert p_from_statistic(kind=kind, value=exact, df1=df1, df2=df2) == pytest.approx(0.05, rel=1e-10)


def test_sleep_data_paired_t_p_matches_r_and_scipy():
    result = stats.ttest_rel(SLEEP_DRUG_1, SLEEP_DRUG_2)
    # R: t.test(extra ~ group, data = sleep, paired = TRUE): t = -4.0621, df = 9,
    # p-value = 0.002833 (R documentation example output, memory)
    assert result.statistic == pytest.approx(-4.0621, abs=5e-5)
    p = p_from_statistic(kind="t", value=result.statistic, df1=9)
    assert p == pytest.approx(result.pvalue, rel=1e-12)  # SciPy ttest_rel
    assert p == pytest.approx(0.002833, abs=5e-7)


def test_sleep_data_welch_t_p_with_fractional_df_matches_r_and_scipy():
    result = stats.ttest_ind(SLEEP_DRUG_1, SLEEP_DRUG_2, equal_var=False)
    # R: t.test(extra ~ group, data = sleep): t = -1.8608, df = 17.776, p-value = 0.07939
    # (R documentation example output, memory)
    assert result.statistic == pytest.approx(-1.8608, abs=5e-5)
    assert result.df == pytest.approx(17.776, abs=5e-4)
    p = p_from_statistic(kind="t", value=result.statistic, df1=result.df)
    assert p == pytest.approx(result.pvalue, rel=1e-12)  # SciPy ttest_ind(equal_var=False)
    assert p == pytest.approx(0.07939, abs=5e-6)


def test_likelihood_ratio_chi_square_for_party_identification_by_sex():
    # Agresti (2002), Categorical Data Analysis, 2nd ed.: party identification by sex, 1991
    # General Social Survey (Democrat / Independent / Republican), G^2 = 7.00 on 2 df (memory;
    # the brief cites table 3.11, not confirmed here). SciPy computes G^2 from the counts.
    table = np.array([[279, 73, 225], [165, 47, 191]])
    g_squared = stats.chi2_contingency(table, lambda_="log-likelihood")
    assert g_squared.statistic == pytest.approx(7.003, abs=5e-4)
    assert g_squared.dof == 2
    p = p_from_statistic(kind="chi2", value=g_squared.statistic, df1=2)
    assert p == pytest.approx(g_squared.pvalue, rel=1e-12)
    assert p_consistency(statistic_kind="chi2", value="7.00", df1=2, p_reported="p = .03").verdict == "consistent"


def test_correlation_p_matches_scipy_pearsonr():
    rng = np.random.default_rng(7)
    x = rng.standard_normal(23)
    y = 0.4 * x + rng.standard_normal(23)
    result = stats.pearsonr(x, y)  # SciPy: exact null distribution of r
    assert p_from_statistic(kind="r", value=result.statistic, n=23) == pytest.approx(result.pvalue, rel=1e-10)


def test_one_sided_p_matches_scipy_directional_test():
    rng = np.random.default_rng(11)
    sample = rng.normal(0.4, 1.0, size=15)
    result = stats.ttest_1samp(sample, 0.0, alternative="greater")  # SciPy
    assert result.statistic > 0  # the one-sided p is taken in the observed direction
    assert p_from_statistic(kind="t", value=result.statistic, df1=14, sides="one") == (
        pytest.approx(result.pvalue, rel=1e-12)
    )


def test_z_one_sided_critical_value_gives_05():
    # NIST/SEMATECH e-Handbook 1.3.6.7.1: one-sided .05 critical z = 1.645 (memory)
    assert p_from_statistic(kind="z", value=1.645, sides="one") == pytest.approx(0.05, abs=1e-4)


def test_recomputation_is_vectorised_over_10000_statistics():
    rng = np.random.default_rng(3)
    t = rng.normal(0, 3, size=10_000)
    df = rng.integers(2, 200, size=10_000)
    p = p_from_statistic(kind="t", value=t, df1=df)
    assert isinstance(p, np.ndarray) and p.shape == (10_000,)
    # SciPy, one call per statistic
    expected = np.array([2 * stats.t.sf(abs(v), d) for v, d in zip(t[:200], df[:200], strict=True)])
    np.testing.assert_allclose(p[:200], expected, rtol=1e-12)
    assert np.all((p >= 0) & (p <= 1))


def test_scalar_inputs_give_a_float():
    assert isinstance(p_from_statistic(kind="z", value=1.0), float)


@settings(max_examples=100, deadline=None)
@given(
    a=st.floats(0, 40),
    b=st.floats(0, 40),
    df=st.floats(1, 500),
    kind=st.sampled_from(["t", "z", "chi2", "F"]),
)
def test_p_never_rises_as_the_statistic_grows(a, b, df, kind):
    small, large = sorted((a, b))
    p = [p_from_statistic(kind=kind, value=v, df1=df, df2=df + 3) for v in (small, large)]
    assert p[1] <= p[0]


@settings(max_examples=100, deadline=None)
@given(a=st.floats(0, 0.999), b=st.floats(0, 0.999), n=st.integers(3, 1000))
def test_p_never_rises_as_r_grows(a, b, n):
    small, large = sorted((a, b))
    assert p_from_statistic(kind="r", value=large, n=n) <= p_from_statistic(kind="r", value=small, n=n)


# --- parsing reported p ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "relation", "decimals", "lower", "upper", "lower_closed", "upper_closed"),
    [
        # Rounding rule: a value written to k decimals stands for [x - 0.5e-k, x + 0.5e-k)
        # (round half up); inequalities are literal; "n.s." means p >= alpha.
        ("0.03", "=", 2, 0.025, 0.035, True, False),
        (".03", "=", 2, 0.025, 0.035, True, False),
        ("p = .031", "=", 3, 0.0305, 0.0315, True, False),
        ("p<.001", "<", 3, 0.0, 0.001, True, False),
        ("< 0.001", "<", 3, 0.0, 0.001, True, False),
        ("p = .05", "=", 2, 0.045, 0.055, True, False),
        ("n.s.", "ns", None, 0.05, 1.0, True, True),
        ("ns", "ns", None, 0.05, 1.0, True, True),
        ("p > .05", ">", 2, 0.05, 1.0, False, True),
        ("1.2e-5", "=", 6, 1.15e-5, 1.25e-5, True, False),
        ("p = 1.2 \u00d7 10^\u22125", "=", 6, 1.15e-5, 1.25e-5, True, False),
        ("P ≤ .01", "<=", 2, 0.0, 0.01, True, True),
        ("p-value >= 0.10", ">=", 2, 0.10, 1.0, True, True),
        ("p = .000", "=", 3, 0.0, 0.0005, True, False),
        ("p = 1.00", "=", 2, 0.995, 1.0, True, True),
    ],
)
def test_reported_p_becomes_the_interval_it_stands_for(
    text, relation, decimals, lower, upper, lower_closed, upper_closed
):
    reported = parse_reported_p(text=text)
    assert (reported.relation, reported.decimals) == (relation, decimals)
    assert reported.lower == pytest.approx(lower, abs=1e-15)
    assert reported.upper == pytest.approx(upper, abs=1e-15)
    assert (reported.lower_closed, reported.upper_closed) == (lower_closed, upper_closed)


def test_rounding_interval_edges_follow_half_up_rounding():
    reported = parse_reported_p(text="p = .03")
    assert reported.contains(0.025) and reported.contains(0.0349999)
    assert not reported.contains(0.035) and not reported.contains(0.0249999)


def test_not_significant_uses_the_given_alpha():
    assert parse_reported_p(text="n.s.", alpha=0.01).lower == 0.01


@pytest.mark.parametrize("text", ["", "significant", "p = ", "p = .03x", "p = 1.5", "p < 0", "p = -0.2", "0.03 0.04"])
def test_unreadable_or_impossible_p_text_is_refused_with_examples(text):
    with pytest.raises(StatsInputError) as error:
        parse_reported_p(text=text)
    assert error.value.field == "p_reported"


def test_unreadable_p_error_lists_accepted_forms():
    with pytest.raises(StatsInputError) as error:
        parse_reported_p(text="about five percent")
    assert '"p<.001"' in str(error.value) and '"n.s."' in str(error.value)


# --- consistency verdicts -------------------------------------------------------------------------


def test_report_matching_recomputation_is_consistent():
    result = p_consistency(statistic_kind="t", value="2.20", df1=28, p_reported="p = .04")
    assert result.verdict == "consistent"
    # SciPy: two-sided p for t(28) = 2.20
    assert result.recomputed_p == pytest.approx(2 * stats.t.sf(2.20, 28), rel=1e-12)
    assert "agrees" in result.explanation


def test_rounding_of_the_statistic_is_allowed_for_before_calling_a_report_inconsistent():
    # t(28) = 2.2 exactly gives p = .03623, outside "p = .0359" = [.03585, .03595); but a t
    # reported as 2.20 may be anything in [2.195, 2.205), whose p-values reach below .0359.
    exact = p_consistency(statistic_kind="t", value=2.2, df1=28, p_reported="p = .0359")
    rounded = p_consistency(statistic_kind="t", value="2.20", df1=28, p_reported="p = .0359")
    also_rounded = p_consistency(statistic_kind="t", value=2.2, decimals=2, df1=28, p_reported="p = .0359")
    assert exact.verdict == "inconsistent"
    assert rounded.verdict == "consistent" and also_rounded.verdict == "consistent"
    assert rounded.recomputed_low == pytest.approx(2 * stats.t.sf(2.205, 28), rel=1e-12)
    assert rounded.recomputed_high == pytest.approx(2 * stats.t.sf(2.195, 28), rel=1e-12)


def test_report_on_same_side_of_alpha_but_wrong_is_inconsistent():
    result = p_consistency(statistic_kind="t", value="2.20", df1=28, p_reported="p = .01")
    assert result.verdict == "inconsistent"


def test_significant_report_whose_statistic_is_not_significant_is_decision_changing():
    result = p_consistency(statistic_kind="t", value="1.80", df1=28, p_reported="p < .05")
    assert result.verdict == "decision_changing"
    assert "other side of alpha" in result.explanation


def test_non_significant_report_whose_statistic_is_significant_is_decision_changing():
    result = p_consistency(statistic_kind="F", value="6.50", df1=1, df2=40, p_reported="n.s.")
    assert result.verdict == "decision_changing"


def test_report_straddling_alpha_cannot_change_a_decision():
    # "p = .05" stands for [.045, .055), which straddles alpha = .05.
    result = p_consistency(statistic_kind="t", value="1.00", df1=28, p_reported="p = .05")
    assert result.verdict == "inconsistent"


def test_sleep_data_report_is_consistent_as_r_prints_it():
    # R prints t = -4.0621, df = 9, p-value = 0.002833 for the paired sleep data (memory).
    assert p_consistency(statistic_kind="t", value="-4.0621", df1=9, p_reported="p = 0.002833").verdict == "consistent"


def test_statistic_straddling_zero_allows_p_up_to_one():
    result = p_consistency(statistic_kind="t", value="0.0", df1=20, p_reported="p = 1.00")
    assert result.recomputed_high == pytest.approx(1.0)
    assert result.verdict == "consistent"


# --- bad input ------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"kind": "t", "value": 2.0, "df1": 0}, "df1"),
        ({"kind": "t", "value": 2.0, "df1": -3}, "df1"),
        ({"kind": "t", "value": 2.0}, "df1"),
        ({"kind": "t", "value": float("nan"), "df1": 5}, "value"),
        ({"kind": "t", "value": np.array([1.0, np.inf]), "df1": 5}, "value"),
        ({"kind": "F", "value": 2.0, "df1": 2}, "df2"),
        ({"kind": "F", "value": -1.0, "df1": 2, "df2": 10}, "value"),
        ({"kind": "F", "value": 4.0, "df1": 1, "df2": 10, "sides": "one"}, "sides"),
        ({"kind": "chi2", "value": 4.0, "df1": 1, "sides": "one"}, "sides"),
        ({"kind": "r", "value": 1.0, "n": 30}, "value"),
        ({"kind": "r", "value": -1.2, "n": 30}, "value"),
        ({"kind": "r", "value": 0.3, "n": 2}, "n"),
        ({"kind": "r", "value": 0.3}, "n"),
        ({"kind": "q", "value": 0.3}, "kind"),
        ({"kind": "z", "value": 1.0, "sides": "left"}, "sides"),
    ],
)
def test_impossible_statistic_inputs_are_refused(kwargs, field):
    with pytest.raises(StatsInputError) as error:
        p_from_statistic(**kwargs)
    assert error.value.field == field


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"value": "2.2x"}, "value"),
        ({"value": "2.20", "decimals": 2}, "decimals"),
        ({"value": 2.2, "decimals": -1}, "decimals"),
        ({"value": 2.2, "alpha": 1.0}, "alpha"),
        ({"value": 2.2, "p_reported": "maybe"}, "p_reported"),
    ],
)
def test_impossible_consistency_inputs_are_refused(kwargs, field):
    arguments = {"statistic_kind": "t", "df1": 20, "p_reported": "p = .04", **kwargs}
    with pytest.raises(StatsInputError) as error:
        p_consistency(**arguments)
    assert error.value.field == field
