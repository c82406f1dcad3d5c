"""Effect sizes, their sampling variances and confidence intervals.

Formulas follow Borenstein, Hedges, Higgins & Rothstein (2009), *Introduction to
Meta-Analysis*, chapters 4-7.

Design convention for the d functions: ``n2=None`` means a one-sample or paired design, where d
is d_z (mean difference / SD of the differences) and ``n1`` is the number of participants or
pairs; with ``n2`` given the design is two independent groups and d uses the pooled SD.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from scipy import optimize, special, stats

from ledger.stats import _inputs
from ledger.stats.errors import StatsInputError

JMethod = Literal["exact", "approximate"]

# The noncentral-t confidence limits are searched within this distance of the observed t.
# A wider interval would need an effect beyond any plausible design, so failing to bracket a
# limit there signals bad input rather than a real limit.
_MAX_NONCENTRALITY_SPAN = 1e6

# Added to every cell of a 2x2 table with an empty cell, where the log odds ratio and log risk
# ratio are otherwise infinite (Borenstein et al. 2009, ch. 5; common practice).
CONTINUITY_CORRECTION = 0.5


@dataclass(frozen=True)
class EffectEstimate:
    """An effect on an approximately normal scale with its sampling variance."""

    estimate: float
    variance: float
    continuity_corrected: bool = False

    @property
    def standard_error(self) -> float:
        return math.sqrt(self.variance)


@dataclass(frozen=True)
class ConfidenceInterval:
    lower: float
    upper: float
    confidence: float
    method: str


@dataclass(frozen=True)
class _Sampling:
    """How d relates to the t statistic in one design: t = d / scale with ``df`` df."""

    scale: float
    df: int
    participants: int


def _sampling(n1: object, n2: object) -> _Sampling:
    if n2 is None:
        n = _inputs.whole(n1, field="n1", minimum=2)
        return _Sampling(scale=math.sqrt(1.0 / n), df=n - 1, participants=n)
    first = _inputs.whole(n1, field="n1", minimum=2)
    second = _inputs.whole(n2, field="n2", minimum=2)
    return _Sampling(
        scale=math.sqrt(1.0 / first + 1.0 / second),
        df=first + second - 2,
        participants=first + second,
    )


# --- standardised mean differences ---------------------------------------------------------------


def cohens_d_from_t(*, t: float, n1: int, n2: int | None = None) -> float:
    """Cohen's d from a t statistic: t sqrt(1/n1 + 1/n2), or t / sqrt(n) for d_z (n2=None)."""
    return _inputs.real(t, field="t") * _sampling(n1, n2).scale


def cohens_d_from_means(*, mean1: float, mean2: float, sd1: float, sd2: float, n1: int, n2: int) -> float:
    """Cohen's d = (mean1 - mean2) / pooled within-group SD (Borenstein et al. 2009, ch. 4)."""
    first = _inputs.whole(n1, field="n1", minimum=2)
    second = _inputs.whole(n2, field="n2", minimum=2)
    spread1 = _inputs.positive(sd1, field="sd1")
    spread2 = _inputs.positive(sd2, field="sd2")
    pooled = math.sqrt(((first - 1) * spread1**2 + (second - 1) * spread2**2) / (first + second - 2))
    return (_inputs.real(mean1, field="mean1") - _inputs.real(mean2, field="mean2")) / pooled


def hedges_j(*, df: float, method: JMethod = "exact") -> float:
    """Small-sample correction factor J for d, with ``df`` degrees of freedom (> 1).

    ``"exact"`` (default): J = Gamma(df/2) / (sqrt(df/2) Gamma((df-1)/2)) (Hedges 1981).
    ``"approximate"``: J = 1 - 3 / (4 df - 1), the form in Borenstein et al. (2009, ch. 4).
    The two differ by less than 1e-3 from df = 6 on, shrinking as about 0.03 / df^2.
    """
    degrees = _inputs.real(df, field="df")
    if degrees <= 1:
        raise StatsInputError(f"df must be greater than 1 for the small-sample correction; got {df!r}", field="df")
    if method == "exact":
        # poch(x, 1/2) = Gamma(x + 1/2) / Gamma(x) as one function: each gamma overflows past
        # df ~ 340, and a difference of log-gammas loses digits (J > 1 by df = 10^9).
        return float(special.poch((degrees - 1) / 2, 0.5)) / math.sqrt(degrees / 2)
    if method == "approximate":
        return 1.0 - 3.0 / (4.0 * degrees - 1.0)
    raise StatsInputError(f'method must be "exact" or "approximate"; got {method!r}', field="method")


def hedges_g(*, d: float, df: float, method: JMethod = "exact") -> float:
    """Hedges' g = J(df) d; df is n1 + n2 - 2 for two groups, n - 1 for d_z."""
    return hedges_j(df=df, method=method) * _inputs.real(d, field="d")


def variance_d(*, d: float, n1: int, n2: int | None = None) -> float:
    """Sampling variance of d: 1/n1 + 1/n2 + d^2 / (2 (n1 + n2)) for two groups
    (Borenstein et al. 2009, ch. 4), 1/n + d^2 / (2 n) for d_z."""
    sampling = _sampling(n1, n2)
    effect = _inputs.real(d, field="d")
    return sampling.scale**2 + effect**2 / (2.0 * sampling.participants)


def variance_hedges_g(*, d: float, n1: int, n2: int | None = None, method: JMethod = "exact") -> float:
    """Sampling variance of g = J^2 V(d), with d the uncorrected effect (Borenstein et al.
    2009, ch. 4)."""
    sampling = _sampling(n1, n2)
    return hedges_j(df=sampling.df, method=method) ** 2 * variance_d(d=d, n1=n1, n2=n2)


# --- conversions ----------------------------------------------------------------------------------


def d_to_r(*, d: float, n1: int | None = None, n2: int | None = None) -> float:
    """Point-biserial r from d: r = d / sqrt(d^2 + a), a = (n1 + n2)^2 / (n1 n2), which is 4
    for equal groups and when the group sizes are not given (Borenstein et al. 2009, ch. 7)."""
    effect = _inputs.real(d, field="d")
    if (n1 is None) != (n2 is None):
        raise StatsInputError(
            "give both n1 and n2 for unequal groups, or neither for equal groups",
            field="n2" if n2 is None else "n1",
        )
    if n1 is None:
        spread = 4.0
    else:
        first = _inputs.whole(n1, field="n1", minimum=1)
        second = _inputs.whole(n2, field="n2", minimum=1)
        spread = (first + second) ** 2 / (first * second)
    return effect / math.sqrt(effect**2 + spread)


def r_to_d(*, r: float) -> float:
    """d from a point-biserial r: d = 2 r / sqrt(1 - r^2) (Borenstein et al. 2009, ch. 7)."""
    correlation = _inputs.correlation(r, field="r")
    return 2.0 * correlation / math.sqrt(1.0 - correlation**2)


def fisher_z(*, r: float, n: int) -> EffectEstimate:
    """Fisher's z = atanh(r) with variance 1 / (n - 3) (Borenstein et al. 2009, ch. 6)."""
    correlation = _inputs.correlation(r, field="r")
    pairs = _inputs.whole(n, field="n", minimum=4)
    return EffectEstimate(estimate=math.atanh(correlation), variance=1.0 / (pairs - 3))


# --- 2x2 tables -----------------------------------------------------------------------------------


def _table(
    events_1: object, nonevents_1: object, events_2: object, nonevents_2: object
) -> tuple[tuple[float, float, float, float], bool]:
    cells = tuple(
        _inputs.whole(value, field=name, minimum=0)
        for name, value in (
            ("events_1", events_1),
            ("nonevents_1", nonevents_1),
            ("events_2", events_2),
            ("nonevents_2", nonevents_2),
        )
    )
    for group, (events, nonevents) in (("1", cells[:2]), ("2", cells[2:])):
        if events + nonevents == 0:
            raise StatsInputError(
                f"group {group} has no participants; give its events and non-events",
                field=f"events_{group}",
            )
    corrected = 0 in cells
    shift = CONTINUITY_CORRECTION if corrected else 0.0
    a, b, c, d = (cell + shift for cell in cells)
    return (a, b, c, d), corrected


def log_odds_ratio(*, events_1: int, nonevents_1: int, events_2: int, nonevents_2: int) -> EffectEstimate:
    """ln OR of group 1 vs group 2 with variance 1/a + 1/b + 1/c + 1/d (Borenstein ch. 5).

    When any cell is zero, 0.5 is added to every cell (``continuity_corrected`` is then True).
    """
    (a, b, c, d), corrected = _table(events_1, nonevents_1, events_2, nonevents_2)
    return EffectEstimate(
        estimate=math.log(a * d / (b * c)),
        variance=1 / a + 1 / b + 1 / c + 1 / d,
        continuity_corrected=corrected,
    )


def log_risk_ratio(*, events_1: int, nonevents_1: int, events_2: int, nonevents_2: int) -> EffectEstimate:
    """ln RR of group 1 vs group 2 with variance 1/a - 1/n1 + 1/c - 1/n2 (Borenstein ch. 5).

    Same zero-cell rule as :func:`log_odds_ratio`.
    """
    (a, b, c, d), corrected = _table(events_1, nonevents_1, events_2, nonevents_2)
    return EffectEstimate(
        estimate=math.log((a / (a + b)) / (c / (c + d))),
        variance=1 / a - 1 / (a + b) + 1 / c - 1 / (c + d),
        continuity_corrected=corrected,
    )


# --- confidence intervals for d -------------------------------------------------------------------


def _noncentrality_with_tail(*, t_observed: float, df: int, upper_tail: float) -> float:
    """The ncp at which P(T >= t_observed) equals ``upper_tail``.

    That probability rises with ncp (noncentral t is stochastically increasing in it), so the
    root is unique; the bracket widens around t_observed until it holds the root.
    """

    def gap(noncentrality: float) -> float:
        return float(stats.nct.sf(t_observed, df, noncentrality)) - upper_tail

    span = 1.0
    while gap(t_observed - span) > 0 or gap(t_observed + span) < 0:
        span *= 2.0
        if span > _MAX_NONCENTRALITY_SPAN:
            raise StatsInputError(
                f"cannot bracket a confidence limit for t = {t_observed:g} with {df} df; check "
                "that d and the group sizes belong together",
                field="d",
            )
    return float(optimize.brentq(gap, t_observed - span, t_observed + span, xtol=1e-12, rtol=1e-12))


def ci_d_noncentral_t(*, d: float, n1: int, n2: int | None = None, confidence: float = 0.95) -> ConfidenceInterval:
    """Confidence interval for d by inverting the noncentral t distribution.

    With t = d / scale observed, the lower limit is the ncp under which t or more has
    probability (1 - confidence) / 2, the upper limit the ncp under which it has probability
    (1 + confidence) / 2; both are mapped back to d by multiplying by the scale.
    """
    level = _inputs.open_unit(confidence, field="confidence")
    sampling = _sampling(n1, n2)
    t_observed = _inputs.real(d, field="d") / sampling.scale
    lower, upper = (
        _noncentrality_with_tail(t_observed=t_observed, df=sampling.df, upper_tail=tail)
        for tail in ((1 - level) / 2, (1 + level) / 2)
    )
    return ConfidenceInterval(
        lower=lower * sampling.scale,
        upper=upper * sampling.scale,
        confidence=level,
        method="noncentral t",
    )


def ci_d_normal(*, d: float, n1: int, n2: int | None = None, confidence: float = 0.95) -> ConfidenceInterval:
    """Confidence interval d +/- z sqrt(V(d)) with V(d) from :func:`variance_d`."""
    level = _inputs.open_unit(confidence, field="confidence")
    effect = _inputs.real(d, field="d")
    half_width = float(stats.norm.isf((1 - level) / 2)) * math.sqrt(variance_d(d=effect, n1=n1, n2=n2))
    return ConfidenceInterval(
        lower=effect - half_width,
        upper=effect + half_width,
        confidence=level,
        method="normal approximation",
    )
