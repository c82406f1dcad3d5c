"""Publication-bias diagnostics checked against published values, statsmodels and scipy.

Fixtures (tests/stats/fixtures, full citations in each file's header):
* magnesium_trials_egger2001.csv -- Egger, Davey Smith & Altman (2001), table 18.2.
* ibs_cam_trials_dorn2007.csv -- Dorn et al. (2007), Neurogastroenterol Motil 19: 630, table I.
"""

from pathlib import Path

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import optimize, stats

from ledger.stats.bias import (
    MIN_SIGNIFICANT_PCURVE,
    ReportedStatistic,
    egger_test,
    excess_significance_test,
    p_curve,
)
from ledger.stats.errors import StatsInputError
from ledger.stats.meta import fixed_effect

FIXTURES = Path(__file__).parent / "fixtures"


def printed(value: float, decimals: int):
    """Match a value published rounded to ``decimals`` places (half a unit in the last place)."""
    return pytest.approx(value, abs=0.5 * 10.0**-decimals * 1.001)


def read_fixture(name: str) -> np.ndarray:
    """A fixture CSV as a structured array; lines starting with '#' are its citation header."""
    lines = (FIXTURES / name).read_text(encoding="utf-8").splitlines()
    table = [line for line in lines if not line.startswith("#")]
    return np.genfromtxt(table, delimiter=",", names=True, dtype=None, encoding="utf-8")


# ----------------------------------------------------------------------------- Egger's test


@pytest.fixture(scope="module")
def magnesium_log_odds_ratios() -> tuple[np.ndarray, np.ndarray]:
    trials = read_fixture("magnesium_trials_egger2001.csv")
    trials = trials[trials["study"] != "ISIS-4"]  # why: see the fixture header
    a = trials["deaths_magnesium"].astype(float)
    b = trials["n_magnesium"] - a
    c = trials["deaths_control"].astype(float)
    d = trials["n_control"] - c
    # 0.5 added to every cell of a trial with a zero cell (only trial 8, Bertschat).
    has_zero = (a == 0) | (b == 0) | (c == 0) | (d == 0)
    assert has_zero.sum() == 1
    a, b, c, d = (cell + 0.5 * has_zero for cell in (a, b, c, d))
    return np.log(a * d / (b * c)), 1 / a + 1 / b + 1 / c + 1 / d


def test_egger_matches_the_published_magnesium_values(magnesium_log_odds_ratios):
    y, v = magnesium_log_odds_ratios
    result = egger_test(y=y, v=v)
    # Owners' reference values for Egger, Davey Smith & Altman (2001) table 18.2 without ISIS-4,
    # as reported by metafor's regtest(model="lm"): "test for funnel plot asymmetry"
    # t = -3.1783, df = 13, p = 0.0073, and "limit estimate" b = -0.1512. The t/df/p are the
    # t test of the intercept of y/se on 1/se; the limit estimate is its slope.
    assert result.k == 15
    assert result.df == 13
    assert result.t == printed(-3.1783, 4)
    assert result.p == printed(0.0073, 4)
    assert result.slope == printed(-0.1512, 4)


def test_egger_agrees_with_statsmodels_ols_and_the_weighted_form(magnesium_log_odds_ratios):
    y, v = magnesium_log_odds_ratios
    se = np.sqrt(v)
    result = egger_test(y=y, v=v)
    # statsmodels OLS of y/se on [1, 1/se]: Egger et al. (1997) as published.
    ols = sm.OLS(y / se, sm.add_constant(1 / se)).fit()
    assert (result.intercept, result.slope) == pytest.approx(tuple(ols.params), rel=1e-10)
    assert (result.intercept_se, result.slope_se) == pytest.approx(tuple(ols.bse), rel=1e-10)
    assert result.t == pytest.approx(ols.tvalues[0], rel=1e-10)
    assert result.p == pytest.approx(ols.pvalues[0], rel=1e-9)
    # statsmodels WLS of y on [1, se] with weights 1/v (metafor's regtest(model="lm") form):
    # the coefficient of se is Egger's intercept and its intercept is Egger's slope.
    wls = sm.WLS(y, sm.add_constant(se), weights=1 / v).fit()
    assert result.intercept == pytest.approx(wls.params[1], rel=1e-10)
    assert result.t == pytest.approx(wls.tvalues[1], rel=1e-10)
    assert result.slope == pytest.approx(wls.params[0], rel=1e-10)


def test_egger_needs_studies_of_different_precision():
    with pytest.raises(StatsInputError, match="different precision"):
        egger_test(y=[0.1, 0.4, -0.2], v=[0.05, 0.05, 0.05])


# --------------------------------------------------------------- test of excess significance


@pytest.fixture(scope="module")
def ibs_log_risk_ratios() -> tuple[np.ndarray, np.ndarray]:
    trials = read_fixture("ibs_cam_trials_dorn2007.csv")
    x_a, n_a = trials["responders_active"], trials["n_active"]
    x_p, n_p = trials["responders_placebo"], trials["n_placebo"]
    y = np.log((x_a / n_a) / (x_p / n_p))
    v = 1 / x_a - 1 / n_a + 1 / x_p - 1 / n_p
    assert y.size == 19
    return y, v


def test_excess_significance_matches_metafor_on_dorn2007(ibs_log_risk_ratios):
    y, v = ibs_log_risk_ratios
    result = excess_significance_test(y=y, v=v)
    # metafor tests/testthat/test_misc_tes.r: tes(yi, vi, test="chi2") and test="binom" on
    # dat.dorn2007 (log RR). Those values come from metafor's defaults, which are ours: theta =
    # the fixed-effect (equal-effects) estimate, two-sided Wald tests of each study at .05.
    assert result.theta == printed(0.3123, 4)
    assert result.observed == 10
    assert result.expected == printed(4.923333, 6)
    assert result.chi2 == printed(7.065648, 6)
    assert result.chi2_p == printed(0.003928794, 9)
    assert result.binomial_p == printed(0.01159554, 8)


def test_excess_significance_agrees_with_scipy(ibs_log_risk_ratios):
    y, v = ibs_log_risk_ratios
    result = excess_significance_test(y=y, v=v)
    assert result.theta == pytest.approx(fixed_effect(y=y, v=v).estimate, rel=1e-12)
    # scipy.stats.binomtest, one-sided: P(X >= O) for X ~ Binomial(k, E / k).
    binomial = stats.binomtest(result.observed, result.k, result.expected / result.k, "greater")
    assert result.binomial_p == pytest.approx(binomial.pvalue, rel=1e-9)
    # Ioannidis & Trikalinos (2007): X2 = (O-E)^2/E + (O-E)^2/(k-E), chi-square with 1 df.
    assert result.chi2_p == pytest.approx(stats.chi2.sf(result.chi2, 1) / 2, rel=1e-12)


def test_excess_significance_power_at_theta_zero_is_the_size_of_each_test(ibs_log_risk_ratios):
    y, v = ibs_log_risk_ratios
    # With no true effect, a test's chance of being significant is its alpha (its size).
    for alternative in ("two-sided", "greater", "less"):
        result = excess_significance_test(y=y, v=v, theta=0.0, alternative=alternative)
        assert result.power == pytest.approx((0.05,) * 19, rel=1e-12)


def test_excess_significance_two_sided_power_is_the_sum_of_one_sided_powers(ibs_log_risk_ratios):
    y, v = ibs_log_risk_ratios
    both = excess_significance_test(y=y, v=v, alpha=0.10)
    upper = excess_significance_test(y=y, v=v, alpha=0.05, alternative="greater")
    lower = excess_significance_test(y=y, v=v, alpha=0.05, alternative="less")
    assert both.power == pytest.approx(np.add(upper.power, lower.power), rel=1e-12)
    assert both.observed == upper.observed + lower.observed


def test_fewer_significant_results_than_expected_give_a_large_one_sided_p(ibs_log_risk_ratios):
    y, v = ibs_log_risk_ratios
    result = excess_significance_test(y=y, v=v, theta=1.0)
    assert result.expected > result.observed
    assert result.chi2_p == pytest.approx(1 - stats.chi2.sf(result.chi2, 1) / 2, rel=1e-12)


@pytest.mark.parametrize(
    ("arguments", "field", "message"),
    [
        ({"alpha": 1.5}, "alpha", r"alpha must be between 0 and 1 \(exclusive\)"),
        ({"theta": float("nan")}, "theta", "theta must be a finite number"),
        ({"alternative": "both"}, "alternative", "alternative must be 'two-sided'"),
    ],
)
def test_excess_significance_refuses_bad_settings(arguments, field, message):
    with pytest.raises(StatsInputError, match=message) as refused:
        excess_significance_test(y=[0.3, 0.5, 0.1], v=[0.04, 0.05, 0.06], **arguments)
    assert refused.value.field == field


# ------------------------------------------------------------ bad input, common to all three


EFFECT_BASED_DIAGNOSTICS = [
    pytest.param(egger_test, 3, "Egger's test", id="egger"),
    pytest.param(excess_significance_test, 2, "the test of excess significance", id="tes"),
]


@pytest.mark.parametrize(("diagnostic", "minimum", "purpose"), EFFECT_BASED_DIAGNOSTICS)
def test_too_few_studies_are_refused(diagnostic, minimum, purpose):
    y, v = [0.3] * (minimum - 1), [0.04 + 0.01 * i for i in range(minimum - 1)]
    with pytest.raises(StatsInputError, match=f"{purpose} needs at least {minimum} usable"):
        diagnostic(y=y, v=v)


@pytest.mark.parametrize(("diagnostic", "minimum", "purpose"), EFFECT_BASED_DIAGNOSTICS)
@pytest.mark.parametrize(
    ("y", "v", "message"),
    [
        ([0.3, 0.1, 0.2], [0.1, 0.0, 0.2], "must be greater than 0"),
        ([0.3, 0.1, 0.2], [0.1, -0.3, 0.2], "must be greater than 0"),
        ([0.3, float("nan"), 0.2], [0.1, 0.2, 0.3], "y must contain only finite numbers"),
        ([0.3, 0.1, 0.2], [0.1, float("inf"), 0.3], "v must contain only finite numbers"),
        ([0.3, 0.1, 0.2], [0.1, 0.2], "got 3 effects and 2 variances"),
    ],
)
def test_impossible_effects_are_refused(diagnostic, minimum, purpose, y, v, message):
    with pytest.raises(StatsInputError, match=message):
        diagnostic(y=y, v=v)


# -------------------------------------------------------------------------------- p-curve


def z_statistics_for(p_values: list[float]) -> list[ReportedStatistic]:
    """Two-sided z statistics whose p-values are the given ones (scipy's normal quantile)."""
    return [ReportedStatistic(kind="z", value=float(stats.norm.isf(p / 2))) for p in p_values]


def test_p_curve_constructed_example_matches_hand_computation():
    # Constructed example, hand-computed: p = .001 .002 .004 .01 .03 give full-curve
    # pp = p/.05 = .02 .04 .08 .2 .6 and Stouffer Z = sum(probit(pp)) / sqrt(5) = -2.5928,
    # p = Phi(Z) = .00476; the half curve (p < .025) has pp = p/.025 = .04 .08 .16 .4 and
    # Z = -4.4036 / 2 = -2.2018, p = .0138. One non-significant result (p = .20) is dropped.
    result = p_curve(statistics=z_statistics_for([0.001, 0.002, 0.004, 0.01, 0.03, 0.20]))
    assert result.k_significant == 5
    assert result.k_excluded == 1
    assert result.pp_full == pytest.approx((0.02, 0.04, 0.08, 0.2, 0.6), rel=1e-9)
    assert result.right_skew_full.z == printed(-2.5928, 4)
    assert result.right_skew_full.p == printed(0.00476, 5)
    assert result.in_half_curve == (True, True, True, True, False)
    assert result.pp_half == pytest.approx((0.04, 0.08, 0.16, 0.4), rel=1e-9)
    assert result.right_skew_half.z == printed(-2.2018, 4)
    assert result.right_skew_half.p == printed(0.0138, 4)
    assert result.bin_counts == (4, 0, 1, 0, 0)
    assert result.bin_percentages == pytest.approx((80.0, 0.0, 20.0, 0.0, 0.0))


def t_power_two_sided(delta: float, df: float, alpha: float) -> float:
    critical = stats.t.isf(alpha / 2, df)
    return stats.nct.sf(critical, df, delta) + stats.nct.cdf(-critical, df, delta)


def pp33_by_noncentral_t(t: float, df: float, alpha: float) -> float:
    """pp-value under 33 % power, computed with scipy's noncentral t (not the F route)."""
    delta = optimize.brentq(lambda d: t_power_two_sided(d, df, 0.05) - 1 / 3, 0.0, 8.0, xtol=1e-13)
    critical = stats.t.isf(alpha / 2, df)

    def abs_cdf(x: float) -> float:  # P(|T| <= x) for T ~ noncentral t(df, delta)
        return stats.nct.cdf(x, df, delta) - stats.nct.cdf(-x, df, delta)

    return (abs_cdf(abs(t)) - abs_cdf(critical)) / (1 - abs_cdf(critical))


def test_flatness_pp_values_for_t_match_scipy_noncentral_t():
    observed = [(2.5, 20), (3.1, 35), (4.2, 50), (-2.1, 28), (2.9, 12)]  # (t, df), constructed
    result = p_curve(statistics=[ReportedStatistic(kind="t", value=t, df=df) for t, df in observed])
    assert result.pp33_full == pytest.approx([pp33_by_noncentral_t(t, df, 0.05) for t, df in observed], abs=1e-7)
    in_half = [(t, df) for (t, df), half in zip(observed, result.in_half_curve, strict=True) if half]
    assert result.pp33_half == pytest.approx([pp33_by_noncentral_t(t, df, 0.025) for t, df in in_half], abs=1e-7)
    expected_z = np.sum(stats.norm.ppf(result.pp33_full)) / np.sqrt(5)
    assert result.flatness_full.z == pytest.approx(expected_z, rel=1e-10)
    assert result.flatness_full.p == pytest.approx(stats.norm.cdf(expected_z), rel=1e-10)


def test_flatness_pp_values_for_z_match_a_shifted_normal():
    p_values = [0.001, 0.004, 0.02, 0.045]
    critical = stats.norm.isf(0.025)
    # Shift mu giving two-sided power 1/3: Phi(mu - c) + Phi(-mu - c) = 1/3 (scipy brentq).
    mu = optimize.brentq(
        lambda m: stats.norm.sf(critical - m) + stats.norm.cdf(-critical - m) - 1 / 3,
        0.0,
        10.0,
        xtol=1e-14,
    )

    def abs_cdf(x: float) -> float:  # P(|Z + mu| <= x)
        return stats.norm.cdf(x - mu) - stats.norm.cdf(-x - mu)

    expected = [(abs_cdf(stats.norm.isf(p / 2)) - abs_cdf(critical)) / (1 - abs_cdf(critical)) for p in p_values]
    result = p_curve(statistics=z_statistics_for(p_values))
    assert result.pp33_full == pytest.approx(expected, abs=1e-7)


def test_equivalent_statistics_give_the_same_curve():
    # t(df) squared is F(1, df), r(df) maps to t = r sqrt(df) / sqrt(1 - r^2), and z squared is
    # chi-square(1): textbook identities, so each pair must produce the same pp-values.
    t_values, df = [2.4, 3.3, 2.8], 30
    r_values = [t / np.sqrt(df + t**2) for t in t_values]
    as_t = p_curve(statistics=[ReportedStatistic(kind="t", value=t, df=df) for t in t_values])
    as_f = p_curve(statistics=[ReportedStatistic(kind="F", value=t**2, df=1, df2=df) for t in t_values])
    as_r = p_curve(statistics=[ReportedStatistic(kind="r", value=r, df=df) for r in r_values])
    for other in (as_f, as_r):
        assert other.p_values == pytest.approx(as_t.p_values, rel=1e-9)
        assert other.pp33_full == pytest.approx(as_t.pp33_full, rel=1e-7)
    as_z = p_curve(statistics=z_statistics_for([0.01, 0.02, 0.003]))
    as_chi2 = p_curve(
        statistics=[
            ReportedStatistic(kind="chi2", value=s.value**2, df=1) for s in z_statistics_for([0.01, 0.02, 0.003])
        ]
    )
    assert as_chi2.pp33_full == pytest.approx(as_z.pp33_full, rel=1e-9)


def test_p_values_for_f_and_chi2_follow_scipy():
    result = p_curve(
        statistics=[
            ReportedStatistic(kind="F", value=4.1, df=3, df2=60),
            ReportedStatistic(kind="chi2", value=12.5, df=4),
            ReportedStatistic(kind="F", value=9.0, df=2, df2=25),
        ]
    )
    assert result.p_values == pytest.approx(
        (stats.f.sf(4.1, 3, 60), stats.chi2.sf(12.5, 4), stats.f.sf(9.0, 2, 25)), rel=1e-12
    )


def test_results_bunched_just_below_05_read_as_flat_not_right_skewed():
    # Constructed: t(40) values with p between .03 and .049 -- what p-hacking leaves behind.
    p_values = [0.049, 0.041, 0.038, 0.045, 0.033, 0.047]
    statistics = [ReportedStatistic(kind="t", value=float(stats.t.isf(p / 2, 40)), df=40) for p in p_values]
    result = p_curve(statistics=statistics)
    assert result.right_skew_full.p > 0.5
    assert result.flatness_full.p < 0.05
    assert result.right_skew_half is None and result.flatness_half is None


def test_p_curve_needs_three_significant_results():
    statistics = z_statistics_for([0.01, 0.03, 0.2, 0.5, 0.07])
    with pytest.raises(
        StatsInputError,
        match=f"p-curve needs at least {MIN_SIGNIFICANT_PCURVE} results significant at p < .05; got 2 of 5",
    ):
        p_curve(statistics=statistics)


@pytest.mark.parametrize(
    ("statistic", "field", "message"),
    [
        (ReportedStatistic(kind="t", value=2.5), "df", r"t statistics need df \(write t\(df\)"),
        (ReportedStatistic(kind="F", value=6.0, df=1), "df2", "F statistics need df2"),
        (ReportedStatistic(kind="t", value=2.5, df=-3), "df", r"df must be greater than 0"),
        (ReportedStatistic(kind="z", value=2.5, df=10), "df", "z statistics take no df"),
        (ReportedStatistic(kind="r", value=1.2, df=30), "value", "between -1 and 1"),
        (ReportedStatistic(kind="F", value=-1.0, df=1, df2=20), "value", "cannot be negative"),
        (ReportedStatistic(kind="z", value=float("nan")), "value", "must be a finite number"),
        (ReportedStatistic(kind="q", value=2.5, df=3), "kind", "kind must be one of"),
    ],
)
def test_p_curve_refuses_malformed_statistics(statistic, field, message):
    statistics = [*z_statistics_for([0.01, 0.02, 0.03]), statistic]
    with pytest.raises(StatsInputError, match=rf"statistics\[3\].*{message}") as refused:
        p_curve(statistics=statistics)
    assert refused.value.field == f"statistics[3].{field}"


# ------------------------------------------------------------------------------ simulation

PUBLISHED_PER_LINE = 40
SEEDS = range(20)


def simulate_null_research_line(seed: int):
    """A line of two-group studies of an effect that is truly zero, run until 40 are published.

    n per group is drawn from 10..60; a study is published only if its standardised mean
    difference d is significantly positive (z = d / se > 1.96). d is drawn exactly: the mean
    difference is N(0, 2/n) and the pooled variance chi-square(2n - 2) / (2n - 2). Its variance
    is 2/n + d^2 / (4n) (Hedges & Olkin 1985, equal groups).
    """
    rng = np.random.default_rng(seed)
    n = rng.integers(10, 61, size=6000)
    mean_difference = rng.normal(0.0, np.sqrt(2 / n))
    pooled_variance = rng.chisquare(2 * n - 2) / (2 * n - 2)
    d = mean_difference / np.sqrt(pooled_variance)
    v = 2 / n + d**2 / (4 * n)
    published = np.flatnonzero(d / np.sqrt(v) > stats.norm.isf(0.025))[:PUBLISHED_PER_LINE]
    assert published.size == PUBLISHED_PER_LINE
    everything_run = slice(0, published[-1] + 1)
    return (d[everything_run], v[everything_run]), (d[published], v[published])


def test_selective_publication_of_a_null_effect_is_biased_and_detected():
    # Tolerances: all-results 95 % CIs must cover 0 in >= 18 of 20 seeds (expected 19 of 20);
    # the diagnostics must flag the published set in >= 18 of 20 seeds.
    all_cover_zero = published_biased = egger_flags = tes_flags = 0
    pcurve_flat = pcurve_not_right_skewed = 0
    for seed in SEEDS:
        (all_y, all_v), (published_y, published_v) = simulate_null_research_line(seed)
        everything = fixed_effect(y=all_y, v=all_v)
        all_cover_zero += everything.ci_low < 0 < everything.ci_high
        published = fixed_effect(y=published_y, v=published_v)
        published_biased += published.ci_low > 0 and published.estimate > 0.3
        egger_flags += egger_test(y=published_y, v=published_v).p < 0.05
        tes_flags += excess_significance_test(y=published_y, v=published_v).chi2_p < 0.05
        curve = p_curve(
            statistics=[ReportedStatistic(kind="z", value=float(z)) for z in published_y / np.sqrt(published_v)]
        )
        pcurve_flat += curve.flatness_full.p < 0.05
        pcurve_not_right_skewed += curve.right_skew_full.p >= 0.05
    assert all_cover_zero >= 18
    assert published_biased == 20
    assert egger_flags >= 18
    assert tes_flags >= 18
    assert pcurve_flat >= 18
    assert pcurve_not_right_skewed >= 17  # a uniform p-curve trips a .05 test 1 time in 20
