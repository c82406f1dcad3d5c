"""Effect sizes, variances and confidence intervals.

Worked examples: Borenstein, Hedges, Higgins & Rothstein (2009), Introduction to Meta-Analysis,
ch. 4-7 (values recalled from memory, asserted to the book's 4 decimals). Hard checks use
statsmodels.stats.meta_analysis and SciPy.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats
from statsmodels.stats.meta_analysis import effectsize_2proportions, effectsize_smd

from ledger.stats.effects import (
    ci_d_noncentral_t,
    ci_d_normal,
    cohens_d_from_means,
    cohens_d_from_t,
    d_to_r,
    fisher_z,
    hedges_g,
    hedges_j,
    log_odds_ratio,
    log_risk_ratio,
    r_to_d,
    variance_d,
    variance_hedges_g,
)
from ledger.stats.errors import StatsInputError

BOOK_ROUNDING = 5e-5  # the book prints 4 decimals

# Borenstein et al. (2009), ch. 4 worked example: means 103 / 100, SD 5.5 / 4.5, n 50 / 50.
MEANS = {"mean1": 103.0, "mean2": 100.0, "sd1": 5.5, "sd2": 4.5, "n1": 50, "n2": 50}


# --- standardised mean differences -----------------------------------------------------------


def test_borenstein_d_variance_j_and_g():
    d = cohens_d_from_means(**MEANS)
    assert d == pytest.approx(0.5970, abs=BOOK_ROUNDING)
    assert variance_d(d=d, n1=50, n2=50) == pytest.approx(0.0418, abs=BOOK_ROUNDING)
    assert hedges_j(df=98, method="approximate") == pytest.approx(0.9923, abs=BOOK_ROUNDING)
    assert hedges_j(df=98) == pytest.approx(0.9923, abs=BOOK_ROUNDING)
    assert hedges_g(d=d, df=98) == pytest.approx(0.5924, abs=BOOK_ROUNDING)


def test_hedges_g_with_approximate_j_matches_statsmodels():
    # statsmodels effectsize_smd: bias correction 1 - 3 / (4 N - 9) = 1 - 3 / (4 df - 1)
    smd, _ = effectsize_smd(103.0, 5.5, 50, 100.0, 4.5, 50)
    d = cohens_d_from_means(**MEANS)
    assert hedges_g(d=d, df=98, method="approximate") == pytest.approx(smd, rel=1e-12)
    assert hedges_g(d=d, df=98, method="exact") == pytest.approx(smd, abs=1e-5)


def test_variance_of_g_is_j_squared_times_variance_of_d():
    # Borenstein et al. (2009), ch. 4: V_g = J^2 V_d.
    d = cohens_d_from_means(**MEANS)
    expected = hedges_j(df=98) ** 2 * variance_d(d=d, n1=50, n2=50)
    assert variance_hedges_g(d=d, n1=50, n2=50) == pytest.approx(expected, rel=1e-12)
    # statsmodels effectsize_smd uses another large-sample form, N / (n1 n2) + g^2 /
    # (2 (N - 3.94)), without the J^2 factor; here the two differ by 1.6 %.
    _, statsmodels_variance = effectsize_smd(103.0, 5.5, 50, 100.0, 4.5, 50)
    assert variance_hedges_g(d=d, n1=50, n2=50) == pytest.approx(statsmodels_variance, rel=0.02)


@pytest.mark.parametrize("df", [2, 5, 10, 38, 98])
def test_exact_j_is_the_gamma_function_ratio(df):
    # Hedges (1981), J Educ Stat 6: 107: J(m) = Gamma(m/2) / (sqrt(m/2) Gamma((m-1)/2)),
    # evaluated with the standard library's gamma function.
    expected = math.gamma(df / 2) / (math.sqrt(df / 2) * math.gamma((df - 1) / 2))
    assert hedges_j(df=df) == pytest.approx(expected, rel=1e-13)


@given(df=st.floats(6, 1e6))
def test_exact_and_approximate_j_agree_to_order_df_squared(df):
    exact, approximate = hedges_j(df=df), hedges_j(df=df, method="approximate")
    # Hedges (1981), J Educ Stat 6: 107: the approximation's error is O(df^-2).
    assert abs(exact - approximate) < 1e-3
    assert abs(exact - approximate) * df**2 < 0.05
    assert 0 < exact < 1


def test_d_from_t_matches_d_from_raw_data():
    rng = np.random.default_rng(5)
    first, second = rng.normal(0.5, 1, 18), rng.normal(0, 1, 25)
    t = stats.ttest_ind(first, second).statistic  # SciPy pooled-variance t
    d_from_data = cohens_d_from_means(
        mean1=first.mean(),
        mean2=second.mean(),
        sd1=first.std(ddof=1),
        sd2=second.std(ddof=1),
        n1=18,
        n2=25,
    )
    assert cohens_d_from_t(t=t, n1=18, n2=25) == pytest.approx(d_from_data, rel=1e-12)


def test_paired_d_from_t_is_mean_difference_over_sd_of_differences():
    rng = np.random.default_rng(6)
    before, after = rng.normal(0, 1, 16), rng.normal(0.3, 1, 16)
    t = stats.ttest_rel(after, before).statistic  # SciPy paired t
    differences = after - before
    d_z = differences.mean() / differences.std(ddof=1)
    assert cohens_d_from_t(t=t, n1=16) == pytest.approx(d_z, rel=1e-12)


# --- conversions ----------------------------------------------------------------------------------


@pytest.mark.parametrize(("d", "r"), [(0.2, 0.100), (0.5, 0.243), (0.8, 0.371)])
def test_d_to_r_matches_cohens_equivalence_table(d, r):
    # Cohen (1988), table 2.2.1, r equivalent to d for equal groups (memory; 3 decimals).
    assert d_to_r(d=d) == pytest.approx(r, abs=5e-4)


@given(d=st.floats(-5, 5), n1=st.integers(2, 500), n2=st.integers(2, 500))
def test_d_to_r_to_d_round_trips_for_equal_groups_and_respects_group_sizes(d, n1, n2):
    assert r_to_d(r=d_to_r(d=d)) == pytest.approx(d, abs=1e-9)
    # Equal groups of any size give the same r as the default a = 4 (Borenstein ch. 7).
    assert d_to_r(d=d, n1=n1, n2=n1) == pytest.approx(d_to_r(d=d), abs=1e-12)
    assert abs(d_to_r(d=d, n1=n1, n2=n2)) <= abs(d_to_r(d=d)) + 1e-12


def test_fisher_z_of_r_05_with_100_pairs():
    # Borenstein et al. (2009), ch. 6: r = .50, n = 100 -> z = 0.5493, V = 0.0103 (memory)
    z = fisher_z(r=0.5, n=100)
    assert z.estimate == pytest.approx(0.5493, abs=BOOK_ROUNDING)
    assert z.variance == pytest.approx(0.0103, abs=BOOK_ROUNDING)
    assert z.estimate == pytest.approx(float(np.arctanh(0.5)), rel=1e-15)  # NumPy


# --- 2x2 tables -----------------------------------------------------------------------------------

# Borenstein et al. (2009), ch. 5: treated 5 events of 100, control 10 of 100.
TABLE = {"events_1": 5, "nonevents_1": 95, "events_2": 10, "nonevents_2": 90}


def test_borenstein_log_odds_ratio_and_variance():
    log_or = log_odds_ratio(**TABLE)
    assert log_or.estimate == pytest.approx(-0.7472, abs=BOOK_ROUNDING)
    assert log_or.variance == pytest.approx(0.3216, abs=BOOK_ROUNDING)
    assert not log_or.continuity_corrected
    # statsmodels effectsize_2proportions(count1, nobs1, count2, nobs2, "odds-ratio")
    estimate, variance = effectsize_2proportions(5, 100, 10, 100, statistic="odds-ratio")
    assert (log_or.estimate, log_or.variance) == pytest.approx((estimate, variance), rel=1e-12)


def test_borenstein_log_risk_ratio_and_variance():
    log_rr = log_risk_ratio(**TABLE)
    # Borenstein et al. (2009), ch. 5: RR = 0.5, ln RR = -0.6931, V = 0.2800 (memory)
    assert log_rr.estimate == pytest.approx(-0.6931, abs=BOOK_ROUNDING)
    assert log_rr.variance == pytest.approx(0.2800, abs=BOOK_ROUNDING)
    estimate, variance = effectsize_2proportions(5, 100, 10, 100, statistic="risk-ratio")
    assert (log_rr.estimate, log_rr.variance) == pytest.approx((estimate, variance), rel=1e-12)


@pytest.mark.parametrize(("function", "statistic"), [(log_odds_ratio, "odds-ratio"), (log_risk_ratio, "risk-ratio")])
@pytest.mark.parametrize("cells", [(0, 100, 10, 90), (5, 95, 0, 100), (5, 0, 10, 90), (0, 20, 0, 30)])
def test_zero_cell_adds_half_to_every_cell_as_statsmodels_does(function, statistic, cells):
    events_1, nonevents_1, events_2, nonevents_2 = cells
    result = function(events_1=events_1, nonevents_1=nonevents_1, events_2=events_2, nonevents_2=nonevents_2)
    assert result.continuity_corrected
    # statsmodels effectsize_2proportions(zero_correction=0.5): 0.5 added to each cell of a
    # table with a zero (or full) cell.
    estimate, variance = effectsize_2proportions(
        events_1,
        events_1 + nonevents_1,
        events_2,
        events_2 + nonevents_2,
        statistic=statistic,
        zero_correction=0.5,
    )
    assert (result.estimate, result.variance) == pytest.approx((estimate, variance), rel=1e-12)


# --- confidence intervals for d -------------------------------------------------------------------


@pytest.mark.parametrize(("d", "n1", "n2"), [(0.597, 50, 50), (1.2, 8, 12), (-0.4, 30, None)])
def test_noncentral_t_limits_leave_the_stated_tail_probabilities(d, n1, n2):
    interval = ci_d_noncentral_t(d=d, n1=n1, n2=n2, confidence=0.95)
    scale = math.sqrt(1 / n1 + 1 / n2) if n2 else math.sqrt(1 / n1)
    df = n1 + n2 - 2 if n2 else n1 - 1
    t_observed = d / scale
    # SciPy nct: under the lower limit t_observed sits at the upper 2.5 % point, under the
    # upper limit at the lower 2.5 % point (Steiger & Fouladi 1997, confidence-interval
    # inversion).
    assert stats.nct.sf(t_observed, df, interval.lower / scale) == pytest.approx(0.025, abs=1e-9)
    assert stats.nct.cdf(t_observed, df, interval.upper / scale) == pytest.approx(0.025, abs=1e-9)
    assert interval.lower < d < interval.upper


def test_noncentral_t_interval_covers_the_true_d_95_percent_of_the_time():
    # Monte Carlo with a fixed seed: 4,000 two-group studies (n = 10 per group, true d = 0.8);
    # coverage should be 0.95 within 4 standard errors.
    rng = np.random.default_rng(2024)
    studies, n, true_d = 4000, 10, 0.8
    first = rng.normal(true_d, 1, (studies, n))
    second = rng.normal(0, 1, (studies, n))
    pooled = np.sqrt((first.var(axis=1, ddof=1) + second.var(axis=1, ddof=1)) / 2)
    d = (first.mean(axis=1) - second.mean(axis=1)) / pooled
    covered = sum(
        interval.lower <= true_d <= interval.upper
        for interval in (ci_d_noncentral_t(d=value, n1=n, n2=n) for value in d)
    )
    assert abs(covered / studies - 0.95) < 4 * math.sqrt(0.95 * 0.05 / studies)


def test_normal_and_noncentral_intervals_converge_in_large_samples():
    exact = ci_d_noncentral_t(d=0.3, n1=5000, n2=5000)
    normal = ci_d_normal(d=0.3, n1=5000, n2=5000)
    assert (exact.lower, exact.upper) == pytest.approx((normal.lower, normal.upper), abs=1e-3)


def test_normal_interval_uses_borenstein_variance():
    d = cohens_d_from_means(**MEANS)
    interval = ci_d_normal(d=d, n1=50, n2=50)
    # Borenstein et al. (2009), ch. 4: SE = sqrt(0.0418) = 0.2044; 95 % CI = d +/- 1.96 SE
    assert interval.upper - d == pytest.approx(1.96 * 0.2044, abs=1e-3)
    assert interval.method == "normal approximation"


# --- bad input ------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("call", "field"),
    [
        (lambda: cohens_d_from_means(**{**MEANS, "sd1": 0}), "sd1"),
        (lambda: cohens_d_from_means(**{**MEANS, "sd2": -1.0}), "sd2"),
        (lambda: cohens_d_from_means(**{**MEANS, "n1": 1}), "n1"),
        (lambda: cohens_d_from_means(**{**MEANS, "n2": 10.5}), "n2"),
        (lambda: cohens_d_from_means(**{**MEANS, "mean1": float("nan")}), "mean1"),
        (lambda: cohens_d_from_t(t=float("inf"), n1=10, n2=10), "t"),
        (lambda: cohens_d_from_t(t=2.0, n1=0), "n1"),
        (lambda: hedges_j(df=1), "df"),
        (lambda: hedges_j(df=20, method="taylor"), "method"),
        (lambda: variance_d(d=0.5, n1=10, n2=1), "n2"),
        (lambda: d_to_r(d=0.5, n1=10), "n2"),
        (lambda: r_to_d(r=1.0), "r"),
        (lambda: r_to_d(r=-1.5), "r"),
        (lambda: fisher_z(r=0.99999 + 1e-5, n=50), "r"),
        (lambda: fisher_z(r=0.5, n=3), "n"),
        (lambda: log_odds_ratio(**{**TABLE, "events_1": -1}), "events_1"),
        (lambda: log_odds_ratio(**{**TABLE, "nonevents_2": 2.5}), "nonevents_2"),
        (lambda: log_risk_ratio(events_1=0, nonevents_1=0, events_2=3, nonevents_2=7), "events_1"),
        (lambda: ci_d_noncentral_t(d=0.5, n1=20, n2=20, confidence=1.0), "confidence"),
        (lambda: ci_d_normal(d=float("nan"), n1=20, n2=20), "d"),
    ],
)
def test_impossible_inputs_are_refused_with_the_argument_named(call, field):
    with pytest.raises(StatsInputError) as error:
        call()
    assert error.value.field == field
