"""The line's diagnostics as pure functions: the subsets they run on, the thresholds below which
they refuse, the headline's reading, and the p-curve's 33 %-power reference line."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import optimize, stats

from ledger.lines.diagnostics import LineResult, line_diagnostics, reference_power_percentages
from ledger.lines.readings import egger_reading, excess_reading, funnel_reading, pcurve_reading
from ledger.stats.bias import ReportedStatistic

# Effects (g) and variances of an invented line: the small studies are the published, positive ones.
EFFECTS = [0.82, 0.64, 0.55, 0.12, 0.05, -0.04, 0.20, -0.10, 0.71, 0.02, 0.15, -0.06]
VARIANCES = [0.090, 0.070, 0.060, 0.020, 0.015, 0.012, 0.030, 0.018, 0.085, 0.010, 0.025, 0.014]
PUBLISHED = [True, True, True, False, False, False, True, False, True, False, False, False]


def results(effects=EFFECTS, variances=VARIANCES, published=PUBLISHED) -> list[LineResult]:
    return [
        LineResult(
            label=f"S{i}",
            estimate=y,
            variance=v,
            published=flag,
            statistic=ReportedStatistic(kind="z", value=y / np.sqrt(v)),
        )
        for i, (y, v, flag) in enumerate(zip(effects, variances, published, strict=True))
    ]


def test_egger_runs_on_each_subset_and_matches_an_ols_fit_in_statsmodels():
    diagnostics = line_diagnostics(results=results(), measure="smd")
    for subset, keep in ((diagnostics.all_results, [True] * 12), (diagnostics.published_only, PUBLISHED)):
        y = np.array([e for e, k in zip(EFFECTS, keep, strict=True) if k])
        se = np.sqrt([v for v, k in zip(VARIANCES, keep, strict=True) if k])
        # Egger et al. (1997): OLS of y/se on 1/se; the intercept's t test is the asymmetry test.
        fit = sm.OLS(y / se, sm.add_constant(1 / se)).fit()
        assert subset.egger.value.intercept == pytest.approx(fit.params[0], rel=1e-9)
        assert subset.egger.value.t == pytest.approx(fit.tvalues[0], rel=1e-9)
        assert subset.egger.value.p == pytest.approx(fit.pvalues[0], rel=1e-9)


def test_excess_significance_counts_the_subset_against_the_power_of_its_own_studies():
    published = line_diagnostics(results=results(), measure="smd").published_only.excess.value
    y = np.array([e for e, k in zip(EFFECTS, PUBLISHED, strict=True) if k])
    se = np.sqrt([v for v, k in zip(VARIANCES, PUBLISHED, strict=True) if k])
    theta = float(np.sum(y / se**2) / np.sum(1 / se**2))
    critical = stats.norm.isf(0.025)
    # Ioannidis & Trikalinos (2007): E = sum of each study's power to detect theta (two-sided z test).
    power = stats.norm.sf(critical - theta / se) + stats.norm.cdf(-critical - theta / se)
    assert published.expected == pytest.approx(float(np.sum(power)), rel=1e-12)
    assert published.observed == int(np.sum(np.abs(y / se) > critical))


@pytest.mark.parametrize(
    ("k", "pooled", "egger", "pcurve"),
    [
        (
            0,
            "Pooling needs at least 2 usable results; there are none.",
            "at least 3 usable results; there are none.",
            "there are none.",
        ),
        (
            1,
            "Pooling needs at least 2 usable results; there is 1.",
            "at least 3 usable results; there is 1.",
            "there is 1.",
        ),
        (2, "", "at least 3 usable results; there are 2.", "there are 2."),
    ],
)
def test_too_few_results_are_said_in_words(k, pooled, egger, pcurve):
    subset = line_diagnostics(results=results()[:k], measure="smd").all_results
    assert subset.random.problem == pooled
    assert (subset.random.value is None) == bool(pooled)
    assert subset.egger.value is None and subset.egger.problem.endswith(egger)
    assert subset.pcurve.value is None and "significant at p < .05" in subset.pcurve.problem
    assert subset.pcurve.problem.endswith(pcurve)


def headline_for(effects, variances, published):
    return line_diagnostics(results=results(effects, variances, published), measure="smd").headline


def test_headline_says_the_published_record_overstates_a_null_effect():
    headline = headline_for(EFFECTS, VARIANCES, PUBLISHED)
    assert headline.verdict == "overstates"
    assert headline.sentence.startswith(f"The published record overstates the effect by {headline.difference:.2f}")
    assert "DerSimonian-Laird" in headline.sentence


def test_headline_says_understates_matches_and_reverses_when_that_is_what_the_numbers_show():
    variances = [0.02] * 4
    assert headline_for([0.5, 0.5, 0.1, 0.1], variances, [False, False, True, True]).verdict == "understates"
    assert headline_for([0.3, 0.3, 0.3, 0.3], variances, [True, True, False, False]).verdict == "matches"
    reversed_record = headline_for(
        [0.5, 0.5, 0.5, -0.15, -0.15], [0.005, 0.006, 0.005, 0.05, 0.05], [False, False, False, True, True]
    )
    assert reversed_record.verdict == "reverses"
    assert reversed_record.sentence.startswith("The published record points the other way")
    # A whole record compatible with no effect is not "reversed" by a published record of the other sign.
    assert headline_for([-0.02, 0.0, 0.4, 0.5], variances, [False, False, True, True]).verdict == "overstates"


def test_headline_explains_a_published_record_too_small_to_pool():
    headline = headline_for(EFFECTS[:3], VARIANCES[:3], [True, False, False])
    assert headline.verdict == "unavailable" and headline.difference is None
    assert headline.sentence.startswith("Only 1 of the 3 usable results is published")


def test_log_measures_also_print_the_ratio():
    diagnostics = line_diagnostics(results=results(), measure="log_or")
    assert "log OR = " in diagnostics.headline.sentence and "(OR " in diagnostics.headline.sentence


def test_readings_carry_the_cautions_and_the_numbers():
    diagnostics = line_diagnostics(results=results(), measure="smd")
    everything, published = diagnostics.subsets
    assert "Sterne et al. 2011; from memory" in egger_reading(subset=published, measure="smd")
    assert f"t({everything.egger.value.df})" in egger_reading(subset=everything, measure="smd")
    assert f"{published.excess.value.observed} significant of {published.k}" in excess_reading(
        subset=published, measure="smd"
    )
    assert "Simonsohn, Simmons & Nelson 2015" in pcurve_reading(subset=everything)
    assert "Of the 5 published results" in funnel_reading(diagnostics=diagnostics, results=results())


def test_an_unknown_tau2_estimator_is_refused_with_the_choices():
    with pytest.raises(ValueError, match="'DL' \\(DerSimonian-Laird\\) or 'REML'"):
        line_diagnostics(results=results(), measure="smd", tau2_method="PM")


# --- the p-curve's 33 %-power reference, recomputed with scipy's noncentral distributions -----------


def conditional_shares_at_one_third_power(distribution, central):
    """Expected share of significant p-values per .01 bin when power at .05 is 1/3 (Simonsohn,
    Nelson & Simmons 2014): solve the noncentrality, then P(p in bin | p < .05)."""
    critical = central.isf(0.05)
    noncentrality = optimize.brentq(lambda nc: distribution(nc).sf(critical) - 1 / 3, 1e-9, 100.0, xtol=1e-12)
    shifted = distribution(noncentrality)
    below = [shifted.sf(central.isf(edge)) / shifted.sf(critical) for edge in (0.01, 0.02, 0.03, 0.04)]
    return 100 * np.diff([0.0, *below, 1.0])


def test_the_33_percent_power_line_matches_scipy_for_t_and_z():
    df = 38
    t_shares = conditional_shares_at_one_third_power(lambda nc: stats.ncf(1, df, nc), stats.f(1, df))
    z_shares = conditional_shares_at_one_third_power(lambda nc: stats.ncx2(1, nc), stats.chi2(1))
    significant = [ReportedStatistic(kind="t", value=2.9, df=df), ReportedStatistic(kind="z", value=2.2)]
    not_significant = [ReportedStatistic(kind="t", value=0.4, df=df)]
    computed = reference_power_percentages(statistics=significant + not_significant)
    assert computed == pytest.approx((t_shares + z_shares) / 2, rel=1e-6)
    # Any true effect makes small p-values likelier than large ones, so the share falls bin by bin.
    assert all(np.diff(computed) < 0)


def pcurve_of(z_values):
    line = [
        LineResult(
            label=f"S{i}",
            estimate=z * 0.1,
            variance=0.01,
            published=True,
            statistic=ReportedStatistic(kind="z", value=z),
        )
        for i, z in enumerate(z_values)
    ]
    return line_diagnostics(results=line, measure="smd").all_results


def test_the_p_curve_reading_follows_the_right_skew_and_flatness_tests():
    # Very small p-values throughout: right skew, as a true effect gives.
    strong = pcurve_of([4.1, 3.8, 4.5, 3.6, 5.0])
    assert strong.pcurve.value.right_skew_half.p < 0.05
    assert pcurve_reading(subset=strong).startswith("The significant results are right-skewed")
    # Every p just under .05 (z from 1.97 to 2.05): flatter than 33 % power gives.
    flat = pcurve_of([1.97, 2.0, 2.02, 2.05, 1.99, 2.01])
    assert flat.pcurve.value.flatness_full.p < 0.05
    assert pcurve_reading(subset=flat).startswith("The significant results are flatter than studies with 33% power")
