"""Pooled estimates and publication-bias diagnostics of a research line, computed twice: over all
registered results and over the published ones only.

Pure functions over plain values (no Django): every number comes from ``ledger.stats``; this
module picks the subsets, refuses to compute what too few results cannot support (saying so with
the thresholds of ``ledger.stats``), and compares the two pooled estimates.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Generic, Literal, TypeVar

import numpy as np
from scipy import stats

from ledger.lines.conversions import MEASURE_SYMBOLS, Measure, natural_scale
from ledger.stats.bias import (
    MIN_SIGNIFICANT_PCURVE,
    MIN_STUDIES_EGGER,
    MIN_STUDIES_EXCESS_SIGNIFICANCE,
    PCURVE_ALPHA,
    PCURVE_BIN_UPPER_EDGES,
    EggerTest,
    ExcessSignificanceTest,
    PCurve,
    ReportedStatistic,
    egger_test,
    excess_significance_test,
    p_curve,
)
from ledger.stats.errors import StatsInputError
from ledger.stats.meta import MIN_STUDIES_POOLING, PooledEstimate, Tau2Method, fixed_effect, random_effects
from ledger.stats.pvalues import p_from_statistic

TAU2_METHODS: dict[str, str] = {"DL": "DerSimonian-Laird", "REML": "REML"}
Subset = Literal["all", "published"]
SUBSET_LABELS: dict[str, str] = {"all": "All registered results", "published": "Published results only"}
# The headline compares estimates at the two decimals it prints: "matches" means the reader
# could not tell the two numbers apart in the sentence.
HEADLINE_DECIMALS = 2

T = TypeVar("T")


@dataclass(frozen=True)
class LineResult:
    """One usable result of the line: its effect on the line's measure and its test statistic."""

    label: str
    estimate: float
    variance: float
    published: bool
    statistic: ReportedStatistic

    @property
    def standard_error(self) -> float:
        return float(np.sqrt(self.variance))


@dataclass(frozen=True)
class Attempt(Generic[T]):
    """A computed value, or the sentence saying why there is none."""

    value: T | None = None
    problem: str = ""


@dataclass(frozen=True)
class SubsetDiagnostics:
    subset: Subset
    k: int
    k_significant: int
    fixed: Attempt[PooledEstimate]
    random: Attempt[PooledEstimate]
    egger: Attempt[EggerTest]
    excess: Attempt[ExcessSignificanceTest]
    pcurve: Attempt[PCurve]

    @property
    def label(self) -> str:
        return SUBSET_LABELS[self.subset]


Verdict = Literal["overstates", "understates", "matches", "reverses", "unavailable"]


@dataclass(frozen=True)
class Headline:
    """How the published record compares with the whole record (random-effects estimates).

    ``difference`` is published minus all, on the line's measure; None when either cannot be
    pooled.
    """

    verdict: Verdict
    difference: float | None
    sentence: str


@dataclass(frozen=True)
class LineDiagnostics:
    measure: Measure
    tau2_method: Tau2Method
    all_results: SubsetDiagnostics
    published_only: SubsetDiagnostics
    headline: Headline
    # Expected percentage of significant p-values per p-curve bin if every significant result of
    # the whole record came from a study with 33 % power; None without a p-curve.
    pcurve_reference_power: tuple[float, ...] | None

    @property
    def subsets(self) -> tuple[SubsetDiagnostics, SubsetDiagnostics]:
        return (self.all_results, self.published_only)


def line_diagnostics(
    *, results: Sequence[LineResult], measure: Measure, tau2_method: Tau2Method = "DL"
) -> LineDiagnostics:
    """Every diagnostic of the line, over all results and over the published ones."""
    if tau2_method not in TAU2_METHODS:
        raise StatsInputError(
            f"tau2_method must be 'DL' (DerSimonian-Laird) or 'REML'; got {tau2_method!r}", field="tau2_method"
        )
    everything = subset_diagnostics(results=results, subset="all", tau2_method=tau2_method)
    published = subset_diagnostics(
        results=[result for result in results if result.published], subset="published", tau2_method=tau2_method
    )
    return LineDiagnostics(
        measure=measure,
        tau2_method=tau2_method,
        all_results=everything,
        published_only=published,
        headline=headline(all_results=everything, published_only=published, measure=measure, k_total=len(results)),
        pcurve_reference_power=(
            reference_power_percentages(statistics=[result.statistic for result in results])
            if everything.pcurve.value is not None
            else None
        ),
    )


def subset_diagnostics(*, results: Sequence[LineResult], subset: Subset, tau2_method: Tau2Method) -> SubsetDiagnostics:
    y = [result.estimate for result in results]
    v = [result.variance for result in results]
    statistics = [result.statistic for result in results]
    k = len(results)
    k_significant = significant_count(statistics=statistics)
    return SubsetDiagnostics(
        subset=subset,
        k=k,
        k_significant=k_significant,
        fixed=_attempt(k, MIN_STUDIES_POOLING, "pooling", "usable results", lambda: fixed_effect(y=y, v=v)),
        random=_attempt(
            k,
            MIN_STUDIES_POOLING,
            "pooling",
            "usable results",
            lambda: random_effects(y=y, v=v, tau2_method=tau2_method),
        ),
        egger=_attempt(k, MIN_STUDIES_EGGER, "Egger's test", "usable results", lambda: egger_test(y=y, v=v)),
        excess=_attempt(
            k,
            MIN_STUDIES_EXCESS_SIGNIFICANCE,
            "The test of excess significance",
            "usable results",
            lambda: excess_significance_test(y=y, v=v),
        ),
        pcurve=_attempt(
            k_significant,
            MIN_SIGNIFICANT_PCURVE,
            "The p-curve",
            f"results significant at {p_below(PCURVE_ALPHA)}",
            lambda: p_curve(statistics=statistics),
        ),
    )


def _attempt(count: int, minimum: int, purpose: str, what: str, compute: Callable[[], T]) -> Attempt[T]:
    if count < minimum:
        return Attempt(problem=f"{_sentence_start(purpose)} needs at least {minimum} {what}; {there_are(count)}.")
    try:
        return Attempt(value=compute())
    except StatsInputError as error:
        return Attempt(problem=f"{_sentence_start(str(error))}.")


def _sentence_start(text: str) -> str:
    return text[:1].upper() + text[1:]


def p_below(alpha: float) -> str:
    """ "p < .05": a threshold as the pages print p-values, without the leading zero."""
    return f"p < {alpha:.2f}".replace("0.", ".", 1)


def there_are(count: int) -> str:
    """ "there are none", "there is 1", "there are 3": the end of a "needs at least" sentence."""
    return "there " + {0: "are none", 1: "is 1"}.get(count, f"are {count}")


def significant_count(*, statistics: Sequence[ReportedStatistic]) -> int:
    """How many statistics have a two-sided p below the p-curve's .05 (as p_curve counts them)."""
    return sum(1 for statistic in statistics if _two_sided_p(statistic) < PCURVE_ALPHA)


def _two_sided_p(statistic: ReportedStatistic) -> float:
    if statistic.kind == "r":
        return float(p_from_statistic(kind="r", value=statistic.value, n=statistic.df + 2))
    return float(p_from_statistic(kind=statistic.kind, value=statistic.value, df1=statistic.df, df2=statistic.df2))


# --- the headline ---------------------------------------------------------------------------------------


def format_estimate(*, measure: Measure, pooled: PooledEstimate) -> str:
    """ "g = 0.42 [0.21, 0.63]", with the odds ratio, risk ratio or r beside a log or z value."""
    text = f"{MEASURE_SYMBOLS[measure]} = {_interval(pooled.estimate, pooled.ci_low, pooled.ci_high)}"
    natural = [
        natural_scale(measure=measure, value=value) for value in (pooled.estimate, pooled.ci_low, pooled.ci_high)
    ]
    if natural[0] is not None:
        text += f" ({natural[0][0]} {_interval(*(value for _name, value in natural))})"
    return text


def _interval(estimate: float, low: float, high: float) -> str:
    decimals = HEADLINE_DECIMALS
    return f"{estimate:.{decimals}f} [{low:.{decimals}f}, {high:.{decimals}f}]"


def headline(
    *, all_results: SubsetDiagnostics, published_only: SubsetDiagnostics, measure: Measure, k_total: int
) -> Headline:
    everything, published = all_results.random.value, published_only.random.value
    if everything is None:
        return Headline(
            verdict="unavailable",
            difference=None,
            sentence=f"The whole record cannot be pooled yet. {all_results.random.problem}",
        )
    whole = f"all {everything.k} registered results pool to {format_estimate(measure=measure, pooled=everything)}"
    if published is None:
        if published_only.k >= MIN_STUDIES_POOLING:
            reason = f"the published record cannot be pooled ({published_only.random.problem.rstrip('.')})"
        else:
            shown = {0: "None of the", 1: "Only 1 of the"}.get(published_only.k)
            verb = "is" if published_only.k == 1 else "are"
            reason = (
                f"{shown} {k_total} usable results {verb} published, so the published record cannot be pooled "
                f"(pooling needs at least {MIN_STUDIES_POOLING})"
            )
        return Headline(verdict="unavailable", difference=None, sentence=f"{_sentence_start(reason)}; {whole}.")
    difference = published.estimate - everything.estimate
    rounded_all, rounded_published = (
        round(value, HEADLINE_DECIMALS) for value in (everything.estimate, published.estimate)
    )
    both = (
        f"the {published.k} published results pool to {format_estimate(measure=measure, pooled=published)}, {whole} "
        f"(random effects, {published.method})"
    )
    symbol = MEASURE_SYMBOLS[measure]
    size = f"{abs(difference):.{HEADLINE_DECIMALS}f} on the {symbol} scale"
    if rounded_all == rounded_published:
        return Headline("matches", difference, f"The published record matches the whole record: {both}.")
    # A reversal needs a whole record that has a direction: its CI excludes zero and the published
    # estimate visibly points the other way. Against a whole record compatible with no effect
    # (-0.03 [-0.12, 0.06]), a published 0.45 overstates the effect; it does not reverse one.
    whole_has_direction = everything.ci_low > 0.0 or everything.ci_high < 0.0
    if whole_has_direction and rounded_all * rounded_published < 0:
        return Headline(
            "reverses",
            difference,
            f"The published record points the other way from the whole record (a difference of {size}): {both}.",
        )
    if abs(published.estimate) > abs(everything.estimate):
        return Headline("overstates", difference, f"The published record overstates the effect by {size}: {both}.")
    return Headline("understates", difference, f"The published record understates the effect by {size}: {both}.")


# --- the p-curve's 33 %-power reference -----------------------------------------------------------------


def reference_power_percentages(*, statistics: Sequence[ReportedStatistic]) -> tuple[float, ...]:
    """Expected % of significant p-values per p-curve bin at 33 % power, averaged over the
    significant statistics (each with its own kind and degrees of freedom).

    ``p_curve`` already computes, for a statistic with p = c, pp33 = P(p > c | p < .05) under
    the noncentrality that gives 33 % power. Feeding it statistics of the same kind and degrees
    of freedom placed exactly at the inner bin edges (.01 ... .04) therefore yields that
    conditional distribution at the edges, so no noncentral formula is repeated here.
    """
    significant = [statistic for statistic in statistics if _two_sided_p(statistic) < PCURVE_ALPHA]
    if not significant:
        raise StatsInputError("the 33% power reference needs at least one significant result", field="statistics")
    inner_edges = PCURVE_BIN_UPPER_EDGES[:-1]
    shares_by_form: dict[tuple, np.ndarray] = {}
    shares = []
    for statistic in significant:
        form = (statistic.kind, statistic.df, statistic.df2)
        if form not in shares_by_form:
            at_edges = [_statistic_with_p(statistic, p) for p in inner_edges]
            below_edges = 1.0 - np.array(p_curve(statistics=at_edges).pp33_full)
            shares_by_form[form] = np.diff(np.concatenate([[0.0], below_edges, [1.0]]))
        shares.append(shares_by_form[form])
    return tuple(float(share) for share in 100.0 * np.mean(shares, axis=0))


def _statistic_with_p(template: ReportedStatistic, p: float) -> ReportedStatistic:
    """A statistic of the template's kind and degrees of freedom whose two-sided p is ``p``."""
    kind, df, df2 = template.kind, template.df, template.df2
    if kind == "z":
        return ReportedStatistic(kind="z", value=float(stats.norm.isf(p / 2.0)))
    if kind == "t":
        return ReportedStatistic(kind="t", value=float(stats.t.isf(p / 2.0, df)), df=df)
    if kind == "r":
        t = float(stats.t.isf(p / 2.0, df))
        return ReportedStatistic(kind="r", value=t / float(np.sqrt(t**2 + df)), df=df)
    if kind == "F":
        return ReportedStatistic(kind="F", value=float(stats.f.isf(p, df, df2)), df=df, df2=df2)
    return ReportedStatistic(kind="chi2", value=float(stats.chi2.isf(p, df)), df=df)
