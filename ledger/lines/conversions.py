"""A sealed result row turned into an effect size and its sampling variance on a line's measure.

Pure functions over the sealed row payload (a plain dict, see ``ledger/results/content.py``): no
Django, so the same row always converts the same way and the tests need no database. Every
formula is one of ``ledger.stats.effects``; this module only decides which one applies to a row
and says, in words, what it assumed.

Routes, tried in this order for each measure (the first that applies wins):

* standardised mean difference (Hedges' g): a Hedges' g with its 95 % CI; a t statistic from a
  test of two independent groups with N analysed, equal groups assumed; a Cohen's d with its
  95 % CI and N analysed, corrected to g.
* log odds ratio / log risk ratio: the 2x2 counts; the ratio (or log odds ratio) with its 95 % CI.
* Fisher's z: a correlation r, as the statistic or the effect, with N analysed.

A row no route fits is never dropped: it comes back as :class:`NotConverted` with the reason and
what would make it usable.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from scipy import stats

from ledger.stats import effects
from ledger.stats.bias import ReportedStatistic
from ledger.stats.errors import StatsInputError

Measure = Literal["smd", "log_or", "log_rr", "fisher_z"]
MEASURES: tuple[str, ...] = ("smd", "log_or", "log_rr", "fisher_z")
MEASURE_LABELS: dict[str, str] = {
    "smd": "Standardised mean difference (Hedges' g)",
    "log_or": "Log odds ratio",
    "log_rr": "Log risk ratio",
    "fisher_z": "Fisher's z (correlation)",
}
# The short name used in sentences and on chart axes.
MEASURE_SYMBOLS: dict[str, str] = {"smd": "g", "log_or": "log OR", "log_rr": "log RR", "fisher_z": "Fisher's z"}

# The result form records no confidence level, and 95 % is what nearly every report gives, so a
# CI is read as a 95 % interval and the row's note says so.
ASSUMED_CI_LEVEL = 0.95

# Effect kinds of the result form (ledger.results.vocabulary.EffectKind), spelt out because this
# module imports nothing from Django.
RATIO_KINDS: dict[str, str] = {"log_or": "or", "log_rr": "rr"}
LOG_KINDS: dict[str, str] = {"log_or": "log_or"}
INDEPENDENT_GROUPS_TEST = "t_independent"
_TEST_NAMES = {"t_paired": "a paired t test", "t_one_sample": "a one-sample t test", "": "an unnamed test"}


@dataclass(frozen=True)
class Converted:
    """An effect on the line's measure. ``route`` says where it came from, ``assumptions`` what
    was taken for granted to get it (each a sentence)."""

    estimate: float
    variance: float
    route: str
    assumptions: tuple[str, ...] = ()

    @property
    def standard_error(self) -> float:
        return math.sqrt(self.variance)


@dataclass(frozen=True)
class NotConverted:
    reason: str


Conversion = Converted | NotConverted


def variance_from_ci(*, low: float, high: float, level: float = ASSUMED_CI_LEVEL) -> float:
    """Sampling variance implied by a symmetric normal-theory CI: ((high - low) / (2 z))^2.

    ``low`` and ``high`` must already be on the analysis scale (logs for ratios). z is the
    (1 + level) / 2 quantile of the standard normal, 1.959964 for a 95 % interval.
    """
    if not (math.isfinite(low) and math.isfinite(high)) or high <= low:
        raise StatsInputError(
            f"a confidence interval needs a lower limit below its upper limit; got [{low:g}, {high:g}]",
            field="ci_low",
        )
    if not 0.0 < level < 1.0:
        raise StatsInputError(f"level must be between 0 and 1 (exclusive); got {level!r}", field="level")
    critical_z = float(stats.norm.ppf(0.5 + level / 2.0))
    return ((high - low) / (2.0 * critical_z)) ** 2


def row_effect(*, row: Mapping[str, Any], measure: Measure) -> Conversion:
    """The row's effect on ``measure``, or why it has none."""
    if measure not in MEASURES:
        raise StatsInputError(f"measure must be one of {', '.join(MEASURES)}; got {measure!r}", field="measure")
    # A route that applies but meets bad numbers does not end the search: a later route may
    # still fit (a paired t refused, but a Hedges' g with its CI recorded too).
    first_problem = None
    for route in _ROUTES[measure]:
        try:
            converted = route(row, measure)
        except StatsInputError as error:
            first_problem = first_problem or error
            continue
        if converted is not None:
            return converted
    if first_problem is not None:
        return NotConverted(f"The primary result cannot be converted: {first_problem}.")
    return NotConverted(_MISSING[measure])


def row_test_statistic(*, row: Mapping[str, Any], effect: Converted) -> tuple[ReportedStatistic, str]:
    """The statistic p-curve should read for this row, and a note when it is not simply the sealed one.

    The sealed statistic when the row has one with its degrees of freedom (r takes N analysed
    - 2); otherwise the Wald z = estimate / SE of the converted effect, which is what a test of
    that effect against zero would report.
    """
    statistic = row.get("statistic") or {}
    kind, value = statistic.get("kind"), statistic.get("value")
    df1, df2 = statistic.get("df1"), statistic.get("df2")
    if kind in ("t", "chi2") and value is not None and df1 is not None:
        return ReportedStatistic(kind=kind, value=value, df=df1), ""
    if kind == "F" and value is not None and df1 is not None and df2 is not None:
        return ReportedStatistic(kind="F", value=value, df=df1, df2=df2), ""
    if kind == "z" and value is not None:
        return ReportedStatistic(kind="z", value=value), ""
    n_analysed = row.get("n_analysed")
    if kind == "r" and value is not None and n_analysed is not None and n_analysed > 2:
        note = f"The p-curve reads r with N - 2 = {n_analysed - 2} degrees of freedom."
        return ReportedStatistic(kind="r", value=value, df=n_analysed - 2), note
    wald_z = effect.estimate / effect.standard_error
    note = "No test statistic is sealed, so the p-curve reads the Wald z of the converted effect."
    return ReportedStatistic(kind="z", value=wald_z), note


def natural_scale(*, measure: Measure, value: float) -> tuple[str, float] | None:
    """The value on the scale people read (odds ratio, risk ratio, r), or None for g."""
    if measure == "log_or":
        return "OR", math.exp(value)
    if measure == "log_rr":
        return "RR", math.exp(value)
    if measure == "fisher_z":
        return "r", math.tanh(value)
    return None


# --- routes: each returns a Converted, or None when the row lacks what it needs ----------------------


def _effect(row: Mapping[str, Any], kind: str) -> Mapping[str, Any] | None:
    """The row's effect of this kind when it has a value and both CI limits."""
    effect = row.get("effect") or {}
    if effect.get("kind") != kind:
        return None
    if any(effect.get(name) is None for name in ("value", "ci_low", "ci_high")):
        return None
    return effect


def _ci_note(kind_label: str) -> str:
    return f"The {kind_label}'s confidence interval is read as a 95% interval (the result records no level)."


def _hedges_g_with_ci(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    effect = _effect(row, "g")
    if effect is None:
        return None
    return Converted(
        estimate=float(effect["value"]),
        variance=variance_from_ci(low=effect["ci_low"], high=effect["ci_high"]),
        route=f"Hedges' g = {effect['value']:g} with CI [{effect['ci_low']:g}, {effect['ci_high']:g}]",
        assumptions=(_ci_note("g"),),
    )


def _equal_groups(n_analysed: int) -> tuple[int, int, str]:
    first = n_analysed // 2
    second = n_analysed - first
    return first, second, f"Equal groups assumed: N = {n_analysed} split as {first} and {second}."


def _t_independent(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    statistic = row.get("statistic") or {}
    if statistic.get("kind") != "t" or statistic.get("value") is None:
        return None
    family = row.get("test_family") or ""
    if family != INDEPENDENT_GROUPS_TEST:
        raise StatsInputError(
            f"a t statistic converts to Hedges' g only from a test of two independent groups, and this "
            f"one comes from {_TEST_NAMES.get(family, 'another kind of test')} (a paired or one-sample t "
            "gives d_z, which is on another scale); record Hedges' g with its 95% CI instead",
            field="statistic",
        )
    n_analysed = row.get("n_analysed")
    if n_analysed is None or n_analysed < 4:
        raise StatsInputError(
            f"Hedges' g from t needs N analysed of at least 4 (two per group); got {n_analysed!r}",
            field="n_analysed",
        )
    first, second, split = _equal_groups(n_analysed)
    d = effects.cohens_d_from_t(t=statistic["value"], n1=first, n2=second)
    return Converted(
        estimate=effects.hedges_g(d=d, df=first + second - 2),
        variance=effects.variance_hedges_g(d=d, n1=first, n2=second),
        route=f"t = {statistic['value']:g} with N = {n_analysed}",
        assumptions=(split,),
    )


def _cohens_d_with_ci(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    effect = _effect(row, "d")
    n_analysed = row.get("n_analysed")
    if effect is None or n_analysed is None or n_analysed < 4:
        return None
    first, second, split = _equal_groups(n_analysed)
    correction = effects.hedges_j(df=first + second - 2)
    return Converted(
        estimate=effects.hedges_g(d=effect["value"], df=first + second - 2),
        variance=correction**2 * variance_from_ci(low=effect["ci_low"], high=effect["ci_high"]),
        route=f"Cohen's d = {effect['value']:g} with CI [{effect['ci_low']:g}, {effect['ci_high']:g}], "
        f"corrected to g with J for {first + second - 2} df",
        assumptions=(_ci_note("d"), split),
    )


def _two_by_two(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    counts = row.get("counts")
    if not counts:
        return None
    table = {
        "events_1": counts["events_1"],
        "nonevents_1": counts["total_1"] - counts["events_1"],
        "events_2": counts["events_2"],
        "nonevents_2": counts["total_2"] - counts["events_2"],
    }
    estimate = effects.log_odds_ratio(**table) if measure == "log_or" else effects.log_risk_ratio(**table)
    notes = ("A cell of the 2x2 table is empty, so 0.5 was added to every cell.",)
    return Converted(
        estimate=estimate.estimate,
        variance=estimate.variance,
        route=f"2x2 counts {counts['events_1']}/{counts['total_1']} vs {counts['events_2']}/{counts['total_2']}",
        assumptions=notes if estimate.continuity_corrected else (),
    )


def _ratio_with_ci(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    kind = RATIO_KINDS[measure]
    effect = _effect(row, kind)
    if effect is None:
        return None
    name = {"or": "odds ratio", "rr": "risk ratio"}[kind]
    if min(effect["value"], effect["ci_low"], effect["ci_high"]) <= 0:
        raise StatsInputError(
            f"an {name} and its CI limits must be above 0 to take logs; got {effect['value']:g} "
            f"[{effect['ci_low']:g}, {effect['ci_high']:g}]",
            field="effect_value",
        )
    return Converted(
        estimate=math.log(effect["value"]),
        variance=variance_from_ci(low=math.log(effect["ci_low"]), high=math.log(effect["ci_high"])),
        route=f"{name} = {effect['value']:g} with CI [{effect['ci_low']:g}, {effect['ci_high']:g}], on the log scale",
        assumptions=(_ci_note(name),),
    )


def _log_odds_ratio_with_ci(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    effect = _effect(row, "log_or")
    if effect is None:
        return None
    return Converted(
        estimate=float(effect["value"]),
        variance=variance_from_ci(low=effect["ci_low"], high=effect["ci_high"]),
        route=f"log odds ratio = {effect['value']:g} with CI [{effect['ci_low']:g}, {effect['ci_high']:g}]",
        assumptions=(_ci_note("log odds ratio"),),
    )


def _correlation(row: Mapping[str, Any], measure: Measure) -> Converted | None:
    statistic = row.get("statistic") or {}
    effect = row.get("effect") or {}
    if statistic.get("kind") == "r" and statistic.get("value") is not None:
        r, source = statistic["value"], "statistic"
    elif effect.get("kind") == "r" and effect.get("value") is not None:
        r, source = effect["value"], "effect"
    else:
        return None
    n_analysed = row.get("n_analysed")
    if n_analysed is None:
        raise StatsInputError("Fisher's z needs N analysed", field="n_analysed")
    estimate = effects.fisher_z(r=r, n=n_analysed)
    return Converted(
        estimate=estimate.estimate,
        variance=estimate.variance,
        route=f"r = {r:g} (the {source}) with N = {n_analysed}",
    )


_ROUTES = {
    "smd": (_hedges_g_with_ci, _t_independent, _cohens_d_with_ci),
    "log_or": (_two_by_two, _log_odds_ratio_with_ci, _ratio_with_ci),
    "log_rr": (_two_by_two, _ratio_with_ci),
    "fisher_z": (_correlation,),
}

_MISSING = {
    "smd": "The primary result has nothing that converts to Hedges' g: record Hedges' g with its 95% CI, "
    "a t statistic from a two-group test with N analysed, or Cohen's d with its 95% CI.",
    "log_or": "The primary result has nothing that converts to a log odds ratio: record the 2x2 counts "
    "(events and group sizes), or an odds ratio with its 95% CI.",
    "log_rr": "The primary result has nothing that converts to a log risk ratio: record the 2x2 counts "
    "(events and group sizes), or a risk ratio with its 95% CI.",
    "fisher_z": "The primary result has nothing that converts to Fisher's z: record the correlation r "
    "(as the statistic or the effect) with N analysed.",
}
