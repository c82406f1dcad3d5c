"""Diagnostics for publication bias and selective reporting.

* :func:`egger_test` -- Egger's regression test for funnel-plot asymmetry (Egger, Davey Smith,
  Schneider & Minder 1997, BMJ 315: 629).
* :func:`excess_significance_test` -- test of excess significance (Ioannidis & Trikalinos
  2007, Clin Trials 4: 245).
* :func:`p_curve` -- p-curve right-skew and flatness tests (Simonsohn, Nelson & Simmons 2014,
  J Exp Psychol Gen 143: 534; Simonsohn, Simmons & Nelson 2015, J Exp Psychol Gen 144: 1146).

Reading the results in plain language is the page's job; this module only computes.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from scipy import optimize, stats

from ledger.stats import _inputs
from ledger.stats.errors import StatsInputError
from ledger.stats.meta import (
    MIN_STUDIES_POOLING,
    FloatArray,
    checked_effects_and_variances,
    fixed_effect,
)

# Egger's regression fits an intercept and a slope, so it needs k - 2 >= 1 residual degrees of
# freedom. That is the arithmetic floor only: the test has little power with few studies, and
# guidance such as Sterne et al. 2011 (BMJ 343: d4002; from memory) asks for about 10 before
# reading it at all -- a reading the page makes, not this module.
MIN_STUDIES_EGGER = 3

# The default theta is the fixed-effect pooled estimate, which needs MIN_STUDIES_POOLING
# results; comparing observed with expected significant counts over fewer is meaningless.
MIN_STUDIES_EXCESS_SIGNIFICANCE = MIN_STUDIES_POOLING

# Stouffer's combination over one or two pp-values is dominated by a single result, so the
# right-skew and flatness tests say nothing about the set (common practice, no source).
MIN_SIGNIFICANT_PCURVE = 3

# p-curve works on results significant at .05; the half curve on those below .025.
PCURVE_ALPHA = 0.05
PCURVE_HALF_ALPHA = 0.025
# The flatness test asks whether the results are flatter than studies run at 33 % power would
# produce: the benchmark of "very low power" proposed by Simonsohn, Nelson & Simmons (2014).
PCURVE_REFERENCE_POWER = 1.0 / 3.0
PCURVE_BIN_UPPER_EDGES = (0.01, 0.02, 0.03, 0.04, 0.05)
# pp-values of exactly 0 or 1 (p underflowing for huge statistics) would give an infinite
# Stouffer Z; they are kept inside [eps, 1 - eps]. The p-curve app does the same with 2.2e-16
# (from memory).
PP_VALUE_BOUND = float(np.finfo(float).eps)

Alternative = Literal["two-sided", "greater", "less"]
StatisticKind = Literal["t", "F", "z", "chi2", "r"]


# --------------------------------------------------------------------------- Egger's test


@dataclass(frozen=True)
class EggerTest:
    """Egger's regression of y/se on 1/se by ordinary least squares.

    ``intercept`` measures funnel asymmetry (0 when small and large studies agree); its t test
    with ``df`` = k - 2 is the test for asymmetry. ``slope`` is the effect implied for a study
    of infinite precision (metafor calls it the "limit estimate"; Stanley & Doucouliagos call
    its test PET).
    """

    k: int
    intercept: float
    intercept_se: float
    t: float
    df: int
    p: float
    slope: float
    slope_se: float


def egger_test(
    *,
    y: Sequence[float] | FloatArray,
    v: Sequence[float] | FloatArray,
) -> EggerTest:
    """Egger's regression test for funnel-plot asymmetry.

    Regresses the standardised effect y/se on precision 1/se by OLS. The same numbers come
    from the weighted form -- y regressed on se with weights 1/v, as metafor's
    ``regtest(model="lm")`` does -- with the roles swapped: the coefficient of se there is this
    intercept (same t, df and p; metafor's "test for funnel plot asymmetry") and the intercept
    there is this slope (metafor's "limit estimate"). Only this parameterisation is offered.
    """
    effects, variances = checked_effects_and_variances(y=y, v=v, minimum_k=MIN_STUDIES_EGGER, purpose="Egger's test")
    standard_errors = np.sqrt(variances)
    precision = 1.0 / standard_errors
    if np.ptp(precision) <= 1e-12 * np.max(precision):
        raise StatsInputError(
            "Egger's test needs studies of different precision; all standard errors are equal, "
            "so asymmetry cannot be separated from the mean effect",
            field="v",
        )
    design = np.column_stack([np.ones_like(precision), precision])
    coefficients, *_ = np.linalg.lstsq(design, effects / standard_errors, rcond=None)
    residuals = effects / standard_errors - design @ coefficients
    df = effects.size - 2
    residual_variance = float(residuals @ residuals) / df
    if residual_variance == 0.0:
        raise StatsInputError(
            "Egger's test cannot estimate a standard error: the standardised effects lie exactly "
            "on a line; check the effects and variances for copied or constructed values",
            field="y",
        )
    covariance = residual_variance * np.linalg.inv(design.T @ design)
    intercept, slope = (float(c) for c in coefficients)
    intercept_se, slope_se = (float(s) for s in np.sqrt(np.diag(covariance)))
    t = intercept / intercept_se
    return EggerTest(
        k=effects.size,
        intercept=intercept,
        intercept_se=intercept_se,
        t=t,
        df=df,
        p=float(2.0 * stats.t.sf(abs(t), df)),
        slope=slope,
        slope_se=slope_se,
    )


# --------------------------------------------------------------- test of excess significance


@dataclass(frozen=True)
class ExcessSignificanceTest:
    """Observed (O) against expected (E) number of significant results.

    ``power`` holds each study's power to detect ``theta`` with its own standard error, in
    input order; E is their sum. ``chi2_p`` is one-sided (is O larger than E?), as is
    ``binomial_p`` = P(X >= O) for X ~ Binomial(k, E / k).
    """

    k: int
    theta: float
    alpha: float
    alternative: Alternative
    power: tuple[float, ...]
    significant: tuple[bool, ...]
    observed: int
    expected: float
    chi2: float
    chi2_p: float
    binomial_p: float


def excess_significance_test(
    *,
    y: Sequence[float] | FloatArray,
    v: Sequence[float] | FloatArray,
    theta: float | None = None,
    alpha: float = 0.05,
    alternative: Alternative = "two-sided",
) -> ExcessSignificanceTest:
    """Test of excess significance (Ioannidis & Trikalinos 2007).

    Each study is tested against 0 with a Wald z test (z = y / se) at ``alpha`` in the
    direction given by ``alternative``; its power is the probability of that test being
    significant if the true effect were ``theta`` (default: the fixed-effect pooled estimate,
    as Ioannidis & Trikalinos propose). With O significant results and E = sum of powers,
    X2 = (O - E)**2 / E + (O - E)**2 / (k - E) is referred to chi-square with 1 df; the
    one-sided p for an excess is half the upper tail when O > E and one minus that half
    otherwise.
    """
    effects, variances = checked_effects_and_variances(
        y=y,
        v=v,
        minimum_k=MIN_STUDIES_EXCESS_SIGNIFICANCE,
        purpose="the test of excess significance",
    )
    alpha = _inputs.open_unit(alpha, field="alpha")
    if theta is None:
        theta = fixed_effect(y=effects, v=variances).estimate
    else:
        theta = _inputs.real(theta, field="theta")
    standard_errors = np.sqrt(variances)
    z_observed = effects / standard_errors
    shift = theta / standard_errors
    if alternative == "two-sided":
        critical = stats.norm.isf(alpha / 2.0)
        significant = np.abs(z_observed) > critical
        power = stats.norm.sf(critical - shift) + stats.norm.cdf(-critical - shift)
    elif alternative == "greater":
        critical = stats.norm.isf(alpha)
        significant = z_observed > critical
        power = stats.norm.sf(critical - shift)
    elif alternative == "less":
        critical = stats.norm.isf(alpha)
        significant = z_observed < -critical
        power = stats.norm.cdf(-critical - shift)
    else:
        raise StatsInputError(
            f"alternative must be 'two-sided', 'greater' or 'less'; got {alternative!r}",
            field="alternative",
        )
    k = effects.size
    observed = int(np.sum(significant))
    expected = float(np.sum(power))
    if not 0.0 < expected < k:
        raise StatsInputError(
            f"every study has power {'1' if expected >= k else '0'} to detect theta = {theta:g}, "
            "so observed and expected counts cannot be compared; check that theta is on the "
            "same scale as y",
            field="theta",
        )
    chi2 = (observed - expected) ** 2 / expected + (observed - expected) ** 2 / (k - expected)
    half_upper_tail = float(stats.chi2.sf(chi2, 1)) / 2.0
    return ExcessSignificanceTest(
        k=k,
        theta=float(theta),
        alpha=float(alpha),
        alternative=alternative,
        power=tuple(float(p) for p in power),
        significant=tuple(bool(s) for s in significant),
        observed=observed,
        expected=expected,
        chi2=float(chi2),
        chi2_p=half_upper_tail if observed > expected else 1.0 - half_upper_tail,
        binomial_p=float(stats.binom.sf(observed - 1, k, expected / k)),
    )


# -------------------------------------------------------------------------------- p-curve


@dataclass(frozen=True, kw_only=True)
class ReportedStatistic:
    """A test statistic as reported: t(df), F(df, df2), z, chi2(df) or r(df).

    For r, ``df`` is n - 2. Tests are taken as two-sided and the sign of t, z and r is ignored:
    p-curve assumes each result is the one that tested the hypothesis, in its predicted
    direction; choosing such results is the user's part.
    """

    kind: StatisticKind
    value: float
    df: float | None = None
    df2: float | None = None


@dataclass(frozen=True)
class StoufferTest:
    """Stouffer's combination Z = sum(probit(pp)) / sqrt(k), with p = Phi(Z)."""

    k: int
    z: float
    p: float


@dataclass(frozen=True)
class PCurve:
    """p-curve of the significant results, in input order (non-significant ones dropped).

    ``pp_full`` = p / .05; ``pp_half`` = p / .025 for the results flagged in ``in_half_curve``
    (p < .025). ``pp33_full`` / ``pp33_half`` are the probabilities, under the noncentrality
    that gives 33 % power at .05, of a significant (resp. p < .025) result less extreme than
    the one observed. Small right-skew p: the curve is right-skewed (evidential value). Small
    flatness p: the curve is flatter than 33 % power would give. The half-curve tests are None
    when no result has p < .025. ``bin_counts`` / ``bin_percentages`` count p in (0, .01],
    (.01, .02], (.02, .03], (.03, .04] and (.04, .05).
    """

    k_significant: int
    k_excluded: int
    p_values: tuple[float, ...]
    pp_full: tuple[float, ...]
    in_half_curve: tuple[bool, ...]
    pp_half: tuple[float, ...]
    pp33_full: tuple[float, ...]
    pp33_half: tuple[float, ...]
    right_skew_full: StoufferTest
    right_skew_half: StoufferTest | None
    flatness_full: StoufferTest
    flatness_half: StoufferTest | None
    bin_upper_edges: tuple[float, ...]
    bin_counts: tuple[int, ...]
    bin_percentages: tuple[float, ...]


@dataclass(frozen=True)
class _ReferenceForm:
    """A statistic restated as F(df1, df2), or as chi-square(df1) when df2 is None.

    Two noncentral families then cover every kind: t and r become F(1, df), z becomes
    chi-square(1), both with the same two-sided p-value.
    """

    value: float
    df1: float
    df2: float | None

    def distribution(self, noncentrality: float):
        # The central law is used at noncentrality 0: scipy's ncf.sf returns garbage there.
        if self.df2 is None:
            if noncentrality == 0.0:
                return stats.chi2(self.df1)
            return stats.ncx2(self.df1, noncentrality)
        if noncentrality == 0.0:
            return stats.f(self.df1, self.df2)
        return stats.ncf(self.df1, self.df2, noncentrality)


def p_curve(*, statistics: Sequence[ReportedStatistic]) -> PCurve:
    """p-curve analysis with Stouffer's method, following Simonsohn, Simmons & Nelson (2015).

    Each statistic's two-sided p-value is recomputed from the statistic; those with p < .05
    form the curve. Right skew: Stouffer's Z over pp = p / .05 (full) and p / .025 (half).
    Flatness: Stouffer's Z over the pp-values under the noncentrality that gives 33 % power
    (t and r via noncentral F(1, df), z via noncentral chi-square(1)).

    Departures from the p-curve web app (version 4; what it does is stated from memory, not
    checked against its code) are limited to what the app reports on top: no binomial tests
    on the share of p < .025, no estimate of average power or its interval, no rule combining
    full and half curve into a verdict (the page does the reading), and only the observed bin
    counts, not the expected curves drawn in the app's plot. Non-significant results are
    dropped and counted in ``k_excluded``, as the app does.
    """
    reference_forms = [_reference_form(statistic, index) for index, statistic in enumerate(statistics)]
    p_all = np.array([form.distribution(0.0).sf(form.value) for form in reference_forms])
    keep = p_all < PCURVE_ALPHA
    significant_forms = [form for form, kept in zip(reference_forms, keep, strict=True) if kept]
    p_values = p_all[keep]
    if p_values.size < MIN_SIGNIFICANT_PCURVE:
        raise StatsInputError(
            f"p-curve needs at least {MIN_SIGNIFICANT_PCURVE} results significant at p < .05; got "
            f"{p_values.size} of {len(reference_forms)}",
            field="statistics",
        )
    in_half = p_values < PCURVE_HALF_ALPHA

    pp33_full, pp33_half = [], []
    for form, half in zip(significant_forms, in_half, strict=True):
        noncentrality = _noncentrality_for_reference_power(form.df1, form.df2)
        distribution = form.distribution(noncentrality)
        pp33_full.append(_share_less_extreme(distribution, form, PCURVE_ALPHA))
        if half:
            pp33_half.append(_share_less_extreme(distribution, form, PCURVE_HALF_ALPHA))

    pp_full = p_values / PCURVE_ALPHA
    pp_half = p_values[in_half] / PCURVE_HALF_ALPHA
    # A p recomputed from a statistic carries rounding noise (.03 may come back as
    # .03000000000000004); shrinking it by a relative 1e-9 keeps it in the bin ending at .03.
    bins = np.searchsorted(PCURVE_BIN_UPPER_EDGES, p_values * (1.0 - 1e-9), side="left")
    bin_counts = np.bincount(bins, minlength=len(PCURVE_BIN_UPPER_EDGES))
    return PCurve(
        k_significant=int(p_values.size),
        k_excluded=len(reference_forms) - int(p_values.size),
        p_values=tuple(float(p) for p in p_values),
        pp_full=tuple(float(pp) for pp in pp_full),
        in_half_curve=tuple(bool(h) for h in in_half),
        pp_half=tuple(float(pp) for pp in pp_half),
        pp33_full=tuple(pp33_full),
        pp33_half=tuple(pp33_half),
        right_skew_full=_stouffer(pp_full),
        right_skew_half=_stouffer(pp_half) if pp_half.size else None,
        flatness_full=_stouffer(np.array(pp33_full)),
        flatness_half=_stouffer(np.array(pp33_half)) if pp33_half else None,
        bin_upper_edges=PCURVE_BIN_UPPER_EDGES,
        bin_counts=tuple(int(c) for c in bin_counts),
        bin_percentages=tuple(float(c) for c in 100.0 * bin_counts / p_values.size),
    )


def _reference_form(statistic: ReportedStatistic, index: int) -> _ReferenceForm:
    where = f"statistics[{index}]"
    if not isinstance(statistic, ReportedStatistic):
        raise StatsInputError(
            f"{where}: expected a ReportedStatistic(kind=..., value=..., df=...); got {statistic!r}",
            field="statistics",
        )
    kind = statistic.kind
    if kind not in ("t", "F", "z", "chi2", "r"):
        raise StatsInputError(
            f"{where}: kind must be one of 't', 'F', 'z', 'chi2', 'r'; got {kind!r}",
            field=f"{where}.kind",
        )
    degrees = {"df": kind != "z", "df2": kind == "F"}
    for name, needed in degrees.items():
        given = getattr(statistic, name)
        if needed and given is None:
            raise StatsInputError(
                f"{where}: {kind} statistics need {name} (write t(df), F(df, df2), chi2(df) or r(df) with df = n - 2)",
                field=f"{where}.{name}",
            )
        if not needed and given is not None:
            raise StatsInputError(
                f"{where}: {kind} statistics take no {name}; got {given!r}",
                field=f"{where}.{name}",
            )
    df = _inputs.positive(statistic.df, field=f"{where}.df") if degrees["df"] else None
    df2 = _inputs.positive(statistic.df2, field=f"{where}.df2") if degrees["df2"] else None
    if kind == "r":
        r = _inputs.correlation(statistic.value, field=f"{where}.value")
        return _ReferenceForm(value=df * r**2 / (1.0 - r**2), df1=1.0, df2=df)
    value = _inputs.real(statistic.value, field=f"{where}.value")
    if kind in ("F", "chi2") and value < 0:
        raise StatsInputError(
            f"{where}: {kind} is a squared statistic and cannot be negative; got {value!r}",
            field=f"{where}.value",
        )
    if kind == "t":
        return _ReferenceForm(value=value**2, df1=1.0, df2=df)
    if kind == "z":
        return _ReferenceForm(value=value**2, df1=1.0, df2=None)
    if kind == "chi2":
        return _ReferenceForm(value=value, df1=df, df2=None)
    return _ReferenceForm(value=value, df1=df, df2=df2)


# Cached because the answer depends on the degrees of freedom only, and a set of results often
# shares them (every z is chi-square(1)); each solve costs dozens of noncentral evaluations.
@functools.lru_cache(maxsize=256)
def _noncentrality_for_reference_power(df1: float, df2: float | None) -> float:
    form = _ReferenceForm(value=0.0, df1=df1, df2=df2)
    critical = form.distribution(0.0).isf(PCURVE_ALPHA)

    def power_gap(noncentrality: float) -> float:
        return form.distribution(noncentrality).sf(critical) - PCURVE_REFERENCE_POWER

    upper = 1.0
    # Power rises monotonically from alpha (< 1/3) at 0 towards 1, so doubling brackets the root.
    while power_gap(upper) < 0.0:
        upper *= 2.0
    return float(optimize.brentq(power_gap, 0.0, upper, xtol=1e-12))


def _share_less_extreme(distribution, form: _ReferenceForm, alpha: float) -> float:
    """P(critical < X < observed | X > critical): the pp-value under the given noncentrality."""
    critical = form.distribution(0.0).isf(alpha)
    return float(1.0 - distribution.sf(form.value) / distribution.sf(critical))


def _stouffer(pp_values: FloatArray) -> StoufferTest:
    bounded = np.clip(pp_values, PP_VALUE_BOUND, 1.0 - PP_VALUE_BOUND)
    z = float(np.sum(stats.norm.ppf(bounded)) / np.sqrt(bounded.size))
    return StoufferTest(k=int(bounded.size), z=z, p=float(stats.norm.cdf(z)))
