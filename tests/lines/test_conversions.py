"""A sealed row converted to the line's measure, checked against statsmodels, published worked
examples and the normal table."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.meta_analysis import effectsize_2proportions, effectsize_smd

from ledger.lines.conversions import (
    Converted,
    NotConverted,
    row_effect,
    row_test_statistic,
    variance_from_ci,
)
from ledger.stats import effects

# The shape of a sealed primary row (ledger/results/content.py); each test sets what it reports.
BARE_ROW = {"reported_as": "primary", "test_family": "t_independent", "statistic": None, "effect": None}


def sealed_row(**fields) -> dict:
    return {**BARE_ROW, **fields}


def t_statistic(value: float, df: float) -> dict:
    return {"kind": "t", "value": value, "df1": df, "df2": None, "decimals": 2}


def effect(kind: str, value: float, low: float, high: float) -> dict:
    return {"kind": kind, "value": value, "ci_low": low, "ci_high": high}


# --- standardised mean difference ------------------------------------------------------------------


@pytest.mark.parametrize(("t", "n"), [(2.10, 128), (-0.84, 40), (3.5, 31)])
def test_t_and_n_give_hedges_g_as_ledger_stats_computes_it(t, n):
    converted = row_effect(row=sealed_row(statistic=t_statistic(t, n - 2), n_analysed=n), measure="smd")
    first, second = n // 2, n - n // 2
    d = effects.cohens_d_from_t(t=t, n1=first, n2=second)
    assert converted.estimate == effects.hedges_g(d=d, df=n - 2)
    assert converted.variance == effects.variance_hedges_g(d=d, n1=first, n2=second)
    assert any("Equal groups assumed" in note for note in converted.assumptions)


@pytest.mark.parametrize(("t", "n"), [(2.10, 128), (-0.84, 40), (3.5, 60)])
def test_t_and_n_agree_with_statsmodels_effectsize_smd(t, n):
    # statsmodels' effectsize_smd takes means and SDs; unit SDs and a mean difference of d give
    # the same t. Its bias correction is the approximate J = 1 - 3 / (4 N - 9) and its variance
    # N / (n1 n2) + g^2 / (2 (N - 3.94)) (statsmodels/stats/meta_analysis.py), against the exact J
    # (Hedges 1981) and J^2 (1/n1 + 1/n2 + d^2 / (2 N)) (Borenstein et al. 2009, ch. 4) used
    # here: the estimates agree to ~0.03 / df^2, the variances to the order of 1.5 / N.
    first, second = n // 2, n - n // 2
    d = t * math.sqrt(1 / first + 1 / second)
    g_reference, variance_reference = effectsize_smd(d, 1.0, first, 0.0, 1.0, second)
    converted = row_effect(row=sealed_row(statistic=t_statistic(t, n - 2), n_analysed=n), measure="smd")
    assert converted.estimate == pytest.approx(g_reference, rel=1e-4)
    assert converted.variance == pytest.approx(variance_reference, rel=2.0 / n)


def test_t_and_n_reproduce_the_borenstein_worked_example():
    # Borenstein, Hedges, Higgins & Rothstein (2009), Introduction to Meta-Analysis, ch. 4: means
    # 103 and 100, SDs 5.5 and 4.5, 50 per group give d = 0.5970, J = 0.9923, g = 0.5924 and
    # V(g) = 0.0411 (values from memory, hence the tolerance of the printed digits). The t of that
    # comparison is computed here from the same summary data.
    pooled_sd = math.sqrt((49 * 5.5**2 + 49 * 4.5**2) / 98)
    t = (103 - 100) / (pooled_sd * math.sqrt(1 / 50 + 1 / 50))
    converted = row_effect(row=sealed_row(statistic=t_statistic(t, 98), n_analysed=100), measure="smd")
    assert converted.estimate == pytest.approx(0.5924, abs=5e-4)
    assert converted.variance == pytest.approx(0.0411, abs=5e-4)


def test_odd_n_is_split_as_evenly_as_whole_participants_allow():
    converted = row_effect(row=sealed_row(statistic=t_statistic(2.0, 125), n_analysed=127), measure="smd")
    d = effects.cohens_d_from_t(t=2.0, n1=63, n2=64)
    assert converted.estimate == effects.hedges_g(d=d, df=125)
    assert "split as 63 and 64" in converted.assumptions[0]


def test_a_paired_t_is_not_turned_into_a_between_groups_g():
    row = sealed_row(test_family="t_paired", statistic=t_statistic(2.5, 29), n_analysed=30)
    converted = row_effect(row=row, measure="smd")
    assert isinstance(converted, NotConverted)
    assert "paired t test" in converted.reason and "Hedges' g with its 95% CI" in converted.reason


def test_a_reported_g_with_its_ci_wins_over_the_equal_groups_assumption():
    # The paired t alone would be refused; the g with its CI is used instead, with no group split.
    row = sealed_row(
        test_family="t_paired", statistic=t_statistic(2.5, 29), effect=effect("g", 0.42, 0.05, 0.79), n_analysed=30
    )
    converted = row_effect(row=row, measure="smd")
    assert converted.estimate == 0.42
    assert converted.variance == pytest.approx(((0.79 - 0.05) / (2 * stats.norm.ppf(0.975))) ** 2, rel=1e-12)
    assert not any("Equal groups" in note for note in converted.assumptions)


def test_cohens_d_with_ci_is_corrected_to_g():
    row = sealed_row(statistic=None, effect=effect("d", 0.5, 0.1, 0.9), n_analysed=80)
    converted = row_effect(row=row, measure="smd")
    correction = effects.hedges_j(df=78)
    assert converted.estimate == pytest.approx(correction * 0.5, rel=1e-12)
    assert converted.variance == pytest.approx(correction**2 * variance_from_ci(low=0.1, high=0.9), rel=1e-12)


# --- 2x2 tables ----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("measure", "statistic"),
    [("log_or", "odds-ratio"), ("log_rr", "risk-ratio")],
)
@pytest.mark.parametrize("table", [(5, 100, 10, 100), (31, 60, 17, 58), (12, 40, 3, 45)])
def test_counts_agree_with_statsmodels_effectsize_2proportions(measure, statistic, table):
    events_1, total_1, events_2, total_2 = table
    counts = {"events_1": events_1, "total_1": total_1, "events_2": events_2, "total_2": total_2}
    converted = row_effect(row=sealed_row(counts=counts, n_analysed=total_1 + total_2), measure=measure)
    # statsmodels/stats/meta_analysis.py: log OR / log RR of sample 1 against sample 2.
    estimate, variance = effectsize_2proportions(
        np.array(events_1), np.array(total_1), np.array(events_2), np.array(total_2), statistic=statistic
    )
    assert converted.estimate == pytest.approx(float(estimate), rel=1e-12)
    assert converted.variance == pytest.approx(float(variance), rel=1e-12)
    assert converted.assumptions == ()


def test_a_zero_cell_gets_half_added_to_every_cell_as_statsmodels_does_with_0_5():
    counts = {"events_1": 0, "total_1": 40, "events_2": 6, "total_2": 42}
    converted = row_effect(row=sealed_row(counts=counts, n_analysed=82), measure="log_or")
    # statsmodels adds zero_correction to each count and twice it to each group total.
    estimate, variance = effectsize_2proportions(
        np.array(0), np.array(40), np.array(6), np.array(42), statistic="odds-ratio", zero_correction=0.5
    )
    assert converted.estimate == pytest.approx(float(estimate), rel=1e-12)
    assert converted.variance == pytest.approx(float(variance), rel=1e-12)
    assert "0.5 was added" in converted.assumptions[0]


def test_counts_reproduce_the_borenstein_odds_ratio_example():
    # Borenstein et al. (2009), ch. 5: 5/100 events against 10/100 give OR = 0.4737,
    # ln OR = -0.7472, V = 0.3216 (values from memory; tolerance of the printed digits).
    counts = {"events_1": 5, "total_1": 100, "events_2": 10, "total_2": 100}
    converted = row_effect(row=sealed_row(counts=counts, n_analysed=200), measure="log_or")
    assert converted.estimate == pytest.approx(-0.7472, abs=5e-5)
    assert converted.variance == pytest.approx(0.3216, abs=5e-5)


def test_counts_are_preferred_to_a_reported_ratio():
    counts = {"events_1": 5, "total_1": 100, "events_2": 10, "total_2": 100}
    row = sealed_row(counts=counts, effect=effect("or", 0.9, 0.5, 1.6), n_analysed=200)
    converted = row_effect(row=row, measure="log_or")
    assert converted.route.startswith("2x2 counts")


# --- an effect with its confidence interval --------------------------------------------------------


def test_ci_width_round_trips_a_known_variance():
    # 1.959964 is the .975 quantile of the standard normal (any normal table); scipy gives it to
    # double precision.
    standard_error = 0.2
    low, high = 0.3 - 1.959964 * standard_error, 0.3 + 1.959964 * standard_error
    assert variance_from_ci(low=low, high=high) == pytest.approx(standard_error**2, rel=1e-6)
    z = stats.norm.ppf(0.975)
    assert variance_from_ci(low=0.3 - z * standard_error, high=0.3 + z * standard_error) == pytest.approx(
        0.04, rel=1e-12
    )


@pytest.mark.parametrize(("kind", "measure"), [("or", "log_or"), ("rr", "log_rr")])
def test_a_ratio_with_its_ci_round_trips_on_the_log_scale(kind, measure):
    z, log_variance = stats.norm.ppf(0.975), 0.09
    ratio = 1.5
    low, high = (math.exp(math.log(ratio) + sign * z * math.sqrt(log_variance)) for sign in (-1, 1))
    converted = row_effect(row=sealed_row(effect=effect(kind, ratio, low, high), n_analysed=200), measure=measure)
    assert converted.estimate == pytest.approx(math.log(ratio), rel=1e-12)
    assert converted.variance == pytest.approx(log_variance, rel=1e-9)
    assert "95% interval" in converted.assumptions[0]


def test_a_ratio_at_or_below_zero_is_refused_with_the_reason():
    converted = row_effect(row=sealed_row(effect=effect("or", 0.0, 0.0, 1.2), n_analysed=90), measure="log_or")
    assert isinstance(converted, NotConverted)
    assert "must be above 0" in converted.reason


def test_a_ci_of_zero_width_is_refused():
    converted = row_effect(row=sealed_row(effect=effect("g", 0.3, 0.3, 0.3), n_analysed=90), measure="smd")
    assert isinstance(converted, NotConverted)
    assert "lower limit below its upper limit" in converted.reason


# --- correlations ----------------------------------------------------------------------------------


@pytest.mark.parametrize("where", ["statistic", "effect"])
def test_r_and_n_give_fisher_z_with_variance_one_over_n_minus_3(where):
    # Borenstein et al. (2009), ch. 6: z = atanh(r), V = 1 / (n - 3); numpy's arctanh is the reference.
    reported = {"kind": "r", "value": 0.3, "df1": None, "df2": None, "decimals": 2}
    row = sealed_row(test_family="correlation", n_analysed=50, **{where: reported})
    if where == "effect":
        row["effect"] = effect("r", 0.3, 0.03, 0.53)
    converted = row_effect(row=row, measure="fisher_z")
    assert converted.estimate == pytest.approx(float(np.arctanh(0.3)), rel=1e-12)
    assert converted.variance == pytest.approx(1 / 47, rel=1e-12)


# --- what cannot be converted --------------------------------------------------------------------


@pytest.mark.parametrize(
    ("measure", "advice"),
    [
        ("smd", "record Hedges' g with its 95% CI"),
        ("log_or", "record the 2x2 counts"),
        ("log_rr", "record the 2x2 counts"),
        ("fisher_z", "record the correlation r"),
    ],
)
def test_a_row_with_nothing_to_convert_says_what_would_make_it_usable(measure, advice):
    converted = row_effect(row=sealed_row(n_analysed=60), measure=measure)
    assert isinstance(converted, NotConverted)
    assert advice in converted.reason


def test_a_t_statistic_does_not_become_a_log_odds_ratio():
    converted = row_effect(row=sealed_row(statistic=t_statistic(2.2, 98), n_analysed=100), measure="log_or")
    assert isinstance(converted, NotConverted)


# --- the statistic p-curve reads -------------------------------------------------------------------


def test_p_curve_reads_the_sealed_statistic_and_falls_back_to_the_wald_z():
    row = sealed_row(statistic=t_statistic(2.4, 58), n_analysed=60)
    converted = row_effect(row=row, measure="smd")
    statistic, source = row_test_statistic(row=row, effect=converted)
    assert (statistic.kind, statistic.value, statistic.df, source) == ("t", 2.4, 58, "")

    bare = sealed_row(effect=effect("g", 0.5, 0.1, 0.9), n_analysed=60)
    from_ci = row_effect(row=bare, measure="smd")
    statistic, source = row_test_statistic(row=bare, effect=from_ci)
    assert statistic.kind == "z"
    assert statistic.value == pytest.approx(0.5 / math.sqrt(from_ci.variance), rel=1e-12)
    assert "reads the Wald z" in source


def test_conversions_are_plain_values():
    converted = row_effect(row=sealed_row(statistic=t_statistic(2.0, 98), n_analysed=100), measure="smd")
    assert isinstance(converted, Converted)
    assert converted.standard_error == pytest.approx(math.sqrt(converted.variance))
