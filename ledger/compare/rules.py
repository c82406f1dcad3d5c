"""The deviation rules: every way a reported result can differ from its sealed plan.

Pure functions over the sealed payloads (plain dicts, see ``ledger/plans/content.py`` and
``ledger/results/content.py``) and a :class:`~ledger.compare.context.ComparisonContext`. Nothing
here reads the database, so the same payloads always give the same findings.

Conventions the rules rely on:

* A result row is matched to the plan by its ``hypothesis`` and ``outcome`` keys. A row whose
  outcome key is blank or not in the plan reports an unregistered outcome.
* A row is *on a primary outcome* when it is reported as primary, its outcome was registered as
  primary, or the hypothesis it reports was registered on a primary outcome. Rules with a
  ``secondary_severity`` use the lower severity for every other row.
* Whether a verdict is backed by the numbers is judged under the *registered* analysis: the
  registered alpha and sides of the row's hypothesis (the row's own when it reports no registered
  hypothesis). Changes of alpha or sides are flagged by their own rules.
* Sign convention: a positive statistic (t, z, r) or effect (d, g, r, log odds ratio; odds or
  risk ratio above 1) means the outcome went up, matching a registered ``increase``.
* For an ``equivalent`` hypothesis the statistic and p are taken to be those of the equivalence
  test, so "supported" still needs p below alpha; no direction is checked.
"""

from __future__ import annotations

import calendar
import datetime as dt
import math
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from ledger.compare.context import ComparisonContext, check_whole_months
from ledger.compare.findings import STUDY_SUBJECT, Finding, Severity
from ledger.results.checks import PREDICTED_TAIL, row_p_check
from ledger.stats.errors import StatsInputError
from ledger.stats.pvalues import p_from_statistic, parse_reported_p

Payload = dict[str, Any]

# Stored vocabulary values (ledger.plans.vocabulary, ledger.results.models), spelt out because
# this package imports nothing from Django.
PRIMARY = "primary"
SUPPORTED = "supported"
NULL_VERDICT = "null"
TWO_SIDED = "two"
ONE_SIDED = "one"
NO_CORRECTION = "none"
SIGN_OF_DIRECTION = {"increase": 1, "decrease": -1}
# Effect sizes whose sign tells which way the outcome moved, with the value that means no effect.
NO_EFFECT_VALUE = {"d": 0.0, "g": 0.0, "r": 0.0, "log_or": 0.0, "or": 1.0, "rr": 1.0}
SIGNED_STATISTICS = frozenset({"t", "z", "r"})
# F and chi-square p-values are always the upper tail: they have no one-sided version.
UPPER_TAIL_STATISTICS = frozenset({"F", "chi2"})


# --- dates -----------------------------------------------------------------------------------


def results_due_on(*, completion: dt.date, grace_months: int) -> dt.date:
    """The last day results are on time: ``grace_months`` calendar months after completion.

    A day that does not exist in the target month becomes that month's last day
    (31 January + 1 month = 28 or 29 February), so a due date never skips into the month after.
    """
    check_whole_months(grace_months, field="grace_months")
    month_index = completion.month - 1 + grace_months
    year, month = completion.year + month_index // 12, month_index % 12 + 1
    return dt.date(year, month, min(completion.day, calendar.monthrange(year, month)[1]))


def _days_after_collection_start(sealed_at: dt.datetime, context: ComparisonContext) -> int:
    """Whole days from the recorded collection start to a seal; 0 when not after it.

    Calendar dates only: a seal on the day collection started is not counted as after it,
    because the recorded start has no time of day to order the two by.
    """
    if context.collection_started_on is None:
        return 0
    return max(0, (sealed_at.date() - context.collection_started_on).days)


def _plan_date(plan: Payload, name: str) -> dt.date | None:
    value = (plan.get("dates") or {}).get(name)
    return dt.date.fromisoformat(value) if value else None


# --- the comparison: payloads plus the lookups every rule needs ------------------------------


@dataclass(frozen=True, kw_only=True)
class RowDecision:
    """What a row's numbers say under the registered analysis.

    ``significant`` is None when there are no numbers, when they could not be read (``error``
    says why), or when a reported p straddles alpha ("p = .05" at alpha .05). ``p`` is the p
    recomputed from the statistic; None when the decision rests on the reported p.
    """

    alpha: float | None
    sides: str
    significant: bool | None = None
    p: float | None = None
    basis: str = ""
    error: str = ""


@dataclass(frozen=True, kw_only=True)
class RowView:
    """A result row with the plan items it reports and what its numbers say."""

    row: Payload
    key: str
    hypothesis: Payload | None
    outcome: Payload | None
    on_primary: bool
    decision: RowDecision
    # The p check of this row (ledger.results.checks), None without both a statistic and a reported p.
    p_check: dict[str, Any] | None

    def registered(self, name: str) -> Any:
        return _registered_value(hypothesis=self.hypothesis, row=self.row, name=name)


@dataclass(frozen=True, kw_only=True)
class Comparison:
    plan: Payload
    result: Payload | None
    context: ComparisonContext
    outcomes: dict[str, Payload]
    hypotheses: dict[str, Payload]
    rows: list[RowView]


def _p_under_plan(*, statistic: Payload, n: int | None, sides: str, direction: str) -> float:
    kind, value = statistic["kind"], statistic["value"]
    tails = TWO_SIDED if kind in UPPER_TAIL_STATISTICS else sides
    # A registered one-sided test takes the tail it predicted, even when the statistic fell in
    # the other one (its p is then above .5).
    return float(
        p_from_statistic(
            kind=kind,
            value=value,
            df1=statistic.get("df1"),
            df2=statistic.get("df2"),
            n=n,
            sides=tails,
            tail=PREDICTED_TAIL.get(direction, "observed"),
        )
    )


def _statistic_text(statistic: Payload, *, n: int | None) -> str:
    """The statistic as a reader would write it: "t(126) = 1.80", "F(2, 60) = 3.10", "r(40) = .31"."""
    decimals = statistic.get("decimals")
    value = f"{statistic['value']:.{decimals}f}" if decimals is not None else f"{statistic['value']:g}"
    degrees = [f"{df:g}" for df in (statistic.get("df1"), statistic.get("df2")) if df is not None]
    if statistic["kind"] == "r" and n is not None:
        degrees = [f"N = {n}"]
    return f"{statistic['kind']}({', '.join(degrees)}) = {value}" if degrees else f"{statistic['kind']} = {value}"


def _row_decision(*, row: Payload, alpha: Any, sides: str, direction: str) -> RowDecision:
    statistic = row.get("statistic")
    has_statistic = bool(statistic) and statistic.get("value") is not None
    p_text = (row.get("p_reported") or "").strip()
    if not has_statistic and not p_text:
        return RowDecision(alpha=alpha, sides=sides)
    if alpha is None:
        return RowDecision(
            alpha=None,
            sides=sides,
            error="neither the plan nor the row gives an alpha level; give it in the result row",
        )
    try:
        if has_statistic:
            p = _p_under_plan(statistic=statistic, n=row.get("n_analysed"), sides=sides, direction=direction)
            shown = _statistic_text(statistic, n=row.get("n_analysed"))
            return RowDecision(alpha=alpha, sides=sides, significant=p < alpha, p=p, basis=shown)
        reported = parse_reported_p(text=p_text, alpha=alpha)
    except StatsInputError as error:
        return RowDecision(alpha=alpha, sides=sides, error=str(error))
    significant = True if reported.below(alpha) else False if reported.at_or_above(alpha) else None
    return RowDecision(alpha=alpha, sides=sides, significant=significant, basis=f"reported p {p_text!r}")


def _registered_value(*, hypothesis: Payload | None, row: Payload, name: str) -> Any:
    """The hypothesis's registered value of ``name``, else the row's own."""
    if hypothesis is not None and hypothesis.get(name) not in (None, ""):
        return hypothesis[name]
    return row.get(name)


def _row_view(*, row: Payload, number: int, hypotheses: dict[str, Payload], outcomes: dict[str, Payload]) -> RowView:
    hypothesis = hypotheses.get(row.get("hypothesis") or "")
    outcome = outcomes.get(row.get("outcome") or "")
    registered_outcome = outcomes.get(hypothesis.get("outcome") or "") if hypothesis else None
    on_primary = (
        row.get("reported_as") == PRIMARY
        or (outcome is not None and outcome.get("role") == PRIMARY)
        or (registered_outcome is not None and registered_outcome.get("role") == PRIMARY)
    )
    return RowView(
        row=row,
        # Sealed rows always carry their key; the fallback repeats result_record's numbering.
        key=row.get("key") or f"R{number}",
        hypothesis=hypothesis,
        outcome=outcome,
        on_primary=on_primary,
        decision=_row_decision(
            row=row,
            alpha=_registered_value(hypothesis=hypothesis, row=row, name="alpha"),
            sides=_registered_value(hypothesis=hypothesis, row=row, name="sides") or TWO_SIDED,
            direction=_registered_value(hypothesis=hypothesis, row=row, name="direction") or "",
        ),
        p_check=row_p_check(row),
    )


def _comparison(*, plan: Payload, result: Payload | None, context: ComparisonContext) -> Comparison:
    outcomes = {item["key"]: item for item in plan.get("outcomes", []) if item.get("key")}
    hypotheses = {item["key"]: item for item in plan.get("hypotheses", []) if item.get("key")}
    rows = [
        _row_view(row=row, number=number, hypotheses=hypotheses, outcomes=outcomes)
        for number, row in enumerate((result or {}).get("rows", []), start=1)
    ]
    return Comparison(plan=plan, result=result, context=context, outcomes=outcomes, hypotheses=hypotheses, rows=rows)


# --- what a check reports, and the registry entry that turns it into a finding ---------------


@dataclass(frozen=True, kw_only=True)
class Flag:
    """One hit of a check; its Rule adds the code and the registered severity."""

    subject: str
    message: str
    evidence: dict[str, Any]
    on_primary: bool = True


Check = Callable[[Comparison], Iterable[Flag]]


@dataclass(frozen=True, kw_only=True)
class Rule:
    code: str
    title: str
    description: str
    severity: Severity
    # The severity of a hit on a secondary or unregistered outcome, when lower than ``severity``.
    secondary_severity: Severity | None = None
    # False for the rules that need only dates, so they run before any result exists.
    needs_result: bool = True
    # Major findings always need an explanation; a rule can ask for one at a lower severity.
    asks_for_explanation: bool = False
    check: Check

    def findings(self, comparison: Comparison) -> list[Finding]:
        found = []
        for flag in self.check(comparison):
            severity = self.severity
            if not flag.on_primary and self.secondary_severity is not None:
                severity = self.secondary_severity
            found.append(
                Finding(
                    code=self.code,
                    severity=severity,
                    subject=flag.subject,
                    message=flag.message,
                    evidence=flag.evidence,
                    explanation_required=severity is Severity.MAJOR or self.asks_for_explanation,
                )
            )
        return found


def _outcome_label(outcome: Payload) -> str:
    return f"{outcome['key']} ({outcome.get('name') or 'unnamed'})"


def _row_outcome_label(view: RowView) -> str:
    if view.outcome is not None:
        return _outcome_label(view.outcome)
    return repr(view.row.get("outcome_name") or "an outcome without a name")


def _row_evidence(view: RowView, **values: Any) -> dict[str, Any]:
    return {
        "row": view.key,
        "hypothesis": view.hypothesis["key"] if view.hypothesis else "",
        "outcome": view.outcome["key"] if view.outcome else "",
        **values,
    }


# --- time-based rules (no result needed) ------------------------------------------------------


def _retrospective_registration(comparison: Comparison) -> Iterator[Flag]:
    context = comparison.context
    days = _days_after_collection_start(context.first_sealed_at, context)
    if days:
        sealed_on = context.first_sealed_at.date().isoformat()
        started_on = context.collection_started_on.isoformat()
        yield Flag(
            subject=STUDY_SUBJECT,
            message=(
                f"The plan was first sealed on {sealed_on}, {days} day(s) after data collection started "
                f"on {started_on}."
            ),
            evidence={"sealed_on": sealed_on, "collection_started_on": started_on, "days_after_start": days},
        )


def _amendment_after_collection_start(comparison: Comparison) -> Iterator[Flag]:
    context = comparison.context
    for amendment in context.amendments:
        days = _days_after_collection_start(amendment.sealed_at, context)
        if days:
            sealed_on = amendment.sealed_at.date().isoformat()
            started_on = context.collection_started_on.isoformat()
            yield Flag(
                subject=f"v{amendment.version}",
                message=(
                    f"Plan version {amendment.version} was sealed on {sealed_on}, {days} day(s) after "
                    f"data collection started on {started_on}."
                ),
                evidence={
                    "version": amendment.version,
                    "sealed_on": sealed_on,
                    "collection_started_on": started_on,
                    "days_after_start": days,
                },
            )


def _results_overdue(comparison: Comparison) -> Iterator[Flag]:
    context = comparison.context
    completion = _plan_date(comparison.plan, "completion")
    if context.result_exists or completion is None:
        return
    due_on = results_due_on(completion=completion, grace_months=context.overdue_grace_months)
    if context.today > due_on:
        yield Flag(
            subject=STUDY_SUBJECT,
            message=(
                f"No result has been recorded; results were due by {due_on.isoformat()} (expected completion "
                f"{completion.isoformat()} plus {context.overdue_grace_months} months)."
            ),
            evidence={
                "completion": completion.isoformat(),
                "grace_months": context.overdue_grace_months,
                "due_on": due_on.isoformat(),
                "days_overdue": (context.today - due_on).days,
            },
        )


# --- study-level rules ------------------------------------------------------------------------


def _stopping_rule_not_followed(comparison: Comparison) -> Iterator[Flag]:
    if comparison.result.get("stopping_rule_followed") is False:
        planned = (comparison.plan.get("sample_size") or {}).get("stopping_rule") or ""
        reported = comparison.result.get("stopping_note") or ""
        yield Flag(
            subject=STUDY_SUBJECT,
            message=(
                f"Data collection did not stop as registered ({planned or 'no rule stated'!r}): "
                f"{reported.rstrip('.') or 'no note given'}."
            ),
            evidence={"planned": planned, "reported": reported},
        )


def _exclusions_changed(comparison: Comparison) -> Iterator[Flag]:
    if comparison.result.get("exclusions_as_planned") is False:
        planned = comparison.plan.get("exclusion_rules") or ""
        reported = comparison.result.get("exclusions_applied") or ""
        yield Flag(
            subject=STUDY_SUBJECT,
            message=(
                f"Exclusions were applied as {reported or 'not described'!r} instead of the registered "
                f"{planned or 'none'!r}."
            ),
            evidence={"planned": planned, "reported": reported},
        )


# --- outcomes and hypotheses ------------------------------------------------------------------


def _registered_outcomes(comparison: Comparison, *, primary: bool) -> Iterator[Payload]:
    for outcome in comparison.outcomes.values():
        if (outcome.get("role") == PRIMARY) == primary:
            yield outcome


def _primary_outcome_dropped(comparison: Comparison) -> Iterator[Flag]:
    for outcome in _registered_outcomes(comparison, primary=True):
        rows_on_outcome = [view for view in comparison.rows if view.outcome and view.outcome["key"] == outcome["key"]]
        if any(view.row.get("reported_as") == PRIMARY for view in rows_on_outcome):
            continue
        demoted_in = [view.key for view in rows_on_outcome]
        where = f"is reported only as secondary ({', '.join(demoted_in)})" if demoted_in else "has no result"
        yield Flag(
            subject=outcome["key"],
            message=f"The registered primary outcome {_outcome_label(outcome)} {where}.",
            evidence={
                "outcome": outcome["key"],
                "planned": PRIMARY,
                "reported": "secondary" if demoted_in else None,
                "rows": demoted_in,
            },
        )


def _primary_outcome_added(comparison: Comparison) -> Iterator[Flag]:
    for view in comparison.rows:
        if view.row.get("reported_as") != PRIMARY:
            continue
        if view.outcome is None:
            registered = "it was not in the plan"
        elif view.outcome.get("role") != PRIMARY:
            registered = f"it was registered as {view.outcome.get('role') or 'secondary'}"
        else:
            continue
        yield Flag(
            subject=view.key,
            message=f"{view.key} reports {_row_outcome_label(view)} as primary; {registered}.",
            evidence=_row_evidence(
                view,
                planned=view.outcome.get("role") if view.outcome else None,
                reported=PRIMARY,
                outcome_name=view.row.get("outcome_name") or "",
            ),
        )


def _secondary_outcome_dropped(comparison: Comparison) -> Iterator[Flag]:
    reported = {view.outcome["key"] for view in comparison.rows if view.outcome is not None}
    for outcome in _registered_outcomes(comparison, primary=False):
        if outcome["key"] not in reported:
            yield Flag(
                subject=outcome["key"],
                message=f"The registered secondary outcome {_outcome_label(outcome)} has no result.",
                evidence={"outcome": outcome["key"], "planned": outcome.get("role"), "reported": None},
                on_primary=False,
            )


def _secondary_outcome_added(comparison: Comparison) -> Iterator[Flag]:
    for view in comparison.rows:
        if view.outcome is None and view.row.get("reported_as") != PRIMARY:
            yield Flag(
                subject=view.key,
                message=f"{view.key} reports {_row_outcome_label(view)}, an outcome the plan did not register.",
                evidence=_row_evidence(view, planned=None, reported=view.row.get("outcome_name") or ""),
                on_primary=False,
            )


def _hypothesis_unreported(comparison: Comparison) -> Iterator[Flag]:
    reported = {view.hypothesis["key"] for view in comparison.rows if view.hypothesis is not None}
    for hypothesis in comparison.hypotheses.values():
        if hypothesis["key"] in reported:
            continue
        outcome = comparison.outcomes.get(hypothesis.get("outcome") or "")
        yield Flag(
            subject=hypothesis["key"],
            message=f"The registered hypothesis {hypothesis['key']} has no result.",
            evidence={"hypothesis": hypothesis["key"], "outcome": hypothesis.get("outcome") or "", "reported": None},
            on_primary=outcome is not None and outcome.get("role") == PRIMARY,
        )


def _hypothesis_outcome_changed(comparison: Comparison) -> Iterator[Flag]:
    for view in comparison.rows:
        if view.hypothesis is None:
            continue
        planned = view.hypothesis.get("outcome") or ""
        reported = view.outcome["key"] if view.outcome else ""
        if planned != reported:
            registered = comparison.outcomes.get(planned)
            planned_label = _outcome_label(registered) if registered else planned or "no outcome"
            yield Flag(
                subject=view.key,
                message=(
                    f"{view.key} tests {view.hypothesis['key']} on {_row_outcome_label(view)}; "
                    f"it was registered on {planned_label}."
                ),
                evidence=_row_evidence(view, planned=planned, reported=reported or view.row.get("outcome_name") or ""),
                on_primary=view.on_primary,
            )


# --- the registered analysis of each hypothesis -----------------------------------------------


def _analysis_rule(*, name: str, describe: Callable[[Any], str], differs: Callable[[Any, Any], bool]) -> Check:
    """A check comparing one analysis setting of each row with its registered hypothesis.

    ``differs(planned, reported)`` decides which differences this rule reports; ``describe``
    words a value for the message. Rows without a registered hypothesis, and hypotheses that
    registered no value, have nothing to compare.
    """

    def shown(value: Any) -> str:
        return "nothing" if value in (None, "") else describe(value)

    def check(comparison: Comparison) -> Iterator[Flag]:
        for view in comparison.rows:
            if view.hypothesis is None:
                continue
            planned, reported = view.hypothesis.get(name), view.row.get(name)
            if planned in (None, "") or not differs(planned, reported):
                continue
            yield Flag(
                subject=view.key,
                message=f"{view.key} reports {shown(reported)}; {view.hypothesis['key']} registered {shown(planned)}.",
                evidence=_row_evidence(view, planned=planned, reported=reported),
                on_primary=view.on_primary,
            )

    return check


def _differs(planned: Any, reported: Any) -> bool:
    return planned != reported


def _alpha_shown(value: float) -> str:
    return f"alpha = {value:g}"


def _sides_shown(value: str) -> str:
    return f"a {value}-sided test"


def _correction_shown(value: str) -> str:
    return "no multiplicity correction" if value == NO_CORRECTION else f"the {value!r} correction"


def _alpha_raised(planned: float, reported: float | None) -> bool:
    return reported is not None and reported > planned and not math.isclose(reported, planned)


def _alpha_lowered(planned: float, reported: float | None) -> bool:
    return reported is not None and reported < planned and not math.isclose(reported, planned)


def _correction_dropped(planned: str, reported: str | None) -> bool:
    return planned != NO_CORRECTION and reported == NO_CORRECTION


def _correction_changed(planned: str, reported: str | None) -> bool:
    return planned != reported and not _correction_dropped(planned, reported)


def _sample_size_differs(comparison: Comparison) -> Iterator[Flag]:
    planned_n = (comparison.plan.get("sample_size") or {}).get("planned_n")
    tolerance = comparison.context.sample_size_tolerance_percent
    if not planned_n:
        return
    for view in comparison.rows:
        n_analysed = view.row.get("n_analysed")
        # Secondary outcomes may lose cases the plan did not count on; the planned N is about
        # the primary analysis.
        if not view.on_primary or n_analysed is None:
            continue
        # Integer-exact form of |n - planned| / planned * 100 > tolerance.
        if 100 * abs(n_analysed - planned_n) > tolerance * planned_n:
            percent = 100 * (n_analysed - planned_n) / planned_n
            yield Flag(
                subject=view.key,
                message=(
                    f"{view.key} analysed N = {n_analysed}; the plan called for N = {planned_n} "
                    f"({percent:+.0f}%, beyond the {tolerance:g}% tolerance)."
                ),
                evidence=_row_evidence(view, planned=planned_n, reported=n_analysed, tolerance_percent=tolerance),
            )


# --- verdicts and the numbers behind them -----------------------------------------------------


def _observed_sign(row: Payload) -> tuple[int, str] | None:
    """Which way the outcome moved (+1 up, -1 down) and what says so; None if nothing signed."""
    effect = row.get("effect") or {}
    if effect.get("kind") in NO_EFFECT_VALUE and effect.get("value") is not None:
        shift = effect["value"] - NO_EFFECT_VALUE[effect["kind"]]
        if shift:
            return (1 if shift > 0 else -1), f"effect {effect['kind']} = {effect['value']:g}"
    statistic = row.get("statistic") or {}
    if statistic.get("kind") in SIGNED_STATISTICS and statistic.get("value"):
        return (1 if statistic["value"] > 0 else -1), f"{statistic['kind']} = {statistic['value']:g}"
    return None


def _decision_evidence(view: RowView) -> dict[str, Any]:
    decision = view.decision
    return _row_evidence(
        view,
        verdict=view.row.get("verdict"),
        alpha=decision.alpha,
        sides=decision.sides,
        recomputed_p=decision.p,
        p_reported=view.row.get("p_reported") or "",
        basis=decision.basis,
    )


def _p_phrase(decision: RowDecision) -> str:
    if decision.p is None:
        return f"the {decision.basis}"
    return f"p = {decision.p:.4g} recomputed from {decision.basis} ({decision.sides}-sided)"


def _rows_with_verdict(comparison: Comparison, verdict: str) -> Iterator[RowView]:
    return (view for view in comparison.rows if view.row.get("verdict") == verdict)


def _supported_without_significance(comparison: Comparison) -> Iterator[Flag]:
    for view in _rows_with_verdict(comparison, SUPPORTED):
        if view.decision.significant is False:
            yield Flag(
                subject=view.key,
                message=(
                    f"{view.key} is reported as supported, but {_p_phrase(view.decision)} is not below "
                    f"the registered alpha = {view.decision.alpha:g}."
                ),
                evidence=_decision_evidence(view),
                on_primary=view.on_primary,
            )


def _supported_against_direction(comparison: Comparison) -> Iterator[Flag]:
    for view in _rows_with_verdict(comparison, SUPPORTED):
        direction = view.registered("direction")
        observed = _observed_sign(view.row)
        if direction not in SIGN_OF_DIRECTION or observed is None:
            continue
        sign, shown = observed
        if sign != SIGN_OF_DIRECTION[direction]:
            went = "increase" if sign > 0 else "decrease"
            yield Flag(
                subject=view.key,
                message=(
                    f"{view.key} is reported as supported, but {shown} shows a {went} where a {direction} "
                    "was registered."
                ),
                evidence=_row_evidence(view, planned=direction, reported=went, basis=shown),
                on_primary=view.on_primary,
            )


def _null_despite_significance(comparison: Comparison) -> Iterator[Flag]:
    for view in _rows_with_verdict(comparison, NULL_VERDICT):
        if view.decision.significant is True:
            yield Flag(
                subject=view.key,
                message=(
                    f"{view.key} is reported as not supported, but {_p_phrase(view.decision)} is below "
                    f"the registered alpha = {view.decision.alpha:g}."
                ),
                evidence=_decision_evidence(view),
                on_primary=view.on_primary,
            )


def _supported_without_numbers(comparison: Comparison) -> Iterator[Flag]:
    for view in _rows_with_verdict(comparison, SUPPORTED):
        if not view.decision.basis and not view.decision.error:
            yield Flag(
                subject=view.key,
                message=f"{view.key} is reported as supported without a test statistic or a p-value.",
                evidence=_row_evidence(view, verdict=SUPPORTED),
                on_primary=view.on_primary,
            )


def _consistency_rule(verdict: str) -> Check:
    """A check reporting rows whose p-value check (ledger.results.checks) gave ``verdict``."""

    def check(comparison: Comparison) -> Iterator[Flag]:
        for view in comparison.rows:
            outcome = view.p_check
            if outcome is not None and outcome["verdict"] == verdict:
                yield Flag(
                    subject=view.key,
                    message=f"{view.key}: {outcome['explanation']}",
                    evidence=_row_evidence(
                        view,
                        reported=view.row.get("p_reported"),
                        alpha=view.row.get("alpha"),
                        sides=view.row.get("sides"),
                        recomputed_p=outcome["recomputed_p"],
                        recomputed_range=outcome["recomputed_range"],
                        reported_interval=outcome["reported_interval"],
                    ),
                    on_primary=view.on_primary,
                )

    return check


def _numbers_uncheckable(comparison: Comparison) -> Iterator[Flag]:
    for view in comparison.rows:
        problem = view.decision.error
        if not problem and view.p_check is not None and view.p_check["verdict"] == "not_checked":
            problem = view.p_check["explanation"]
        if problem:
            yield Flag(
                subject=view.key,
                message=f"{view.key}: the reported numbers could not be checked: {problem}",
                evidence=_row_evidence(view, problem=problem),
                on_primary=view.on_primary,
            )


# --- the registry -----------------------------------------------------------------------------
# Severity policy: major when the confirmatory claim no longer rests on the registered plan, or
# the change can only make a positive finding easier (on a primary outcome); minor for a
# departure readers should see; note for changes that make the test stricter or add information.

RULES: tuple[Rule, ...] = (
    # Data seen before the plan was fixed: the registration cannot show the plan was made blind.
    Rule(
        code="RETROSPECTIVE_REGISTRATION",
        title="Registered after data collection began",
        description="The plan was first sealed after the recorded start of data collection.",
        severity=Severity.MAJOR,
        needs_result=False,
        check=_retrospective_registration,
    ),
    # The services refuse this; an entry that still shows it (a back-dated collection start, a
    # direct write) changed the plan when data could already be seen.
    Rule(
        code="AMENDMENT_AFTER_COLLECTION_START",
        title="Amended after data collection began",
        description="An amendment was sealed after the recorded start of data collection.",
        severity=Severity.MAJOR,
        needs_result=False,
        check=_amendment_after_collection_start,
    ),
    # The file drawer Forebook exists to empty: a missing result hides its outcome from the count.
    Rule(
        code="RESULTS_OVERDUE",
        title="Results overdue",
        description="No result was recorded by the expected completion date plus the lab's grace period.",
        severity=Severity.MAJOR,
        needs_result=False,
        check=_results_overdue,
    ),
    Rule(
        code="PRIMARY_OUTCOME_DROPPED",
        title="Registered primary outcome not reported as primary",
        description="A registered primary outcome has no result, or is reported only as secondary.",
        severity=Severity.MAJOR,
        check=_primary_outcome_dropped,
    ),
    Rule(
        code="PRIMARY_OUTCOME_ADDED",
        title="Primary outcome not registered as primary",
        description="A result is reported as primary on an outcome registered as secondary or not registered.",
        severity=Severity.MAJOR,
        check=_primary_outcome_added,
    ),
    # Leaving out a registered secondary outcome is selective reporting, but the study's claim
    # rests on its primary outcomes.
    Rule(
        code="SECONDARY_OUTCOME_DROPPED",
        title="Registered secondary outcome not reported",
        description="A registered secondary outcome has no result.",
        severity=Severity.MINOR,
        check=_secondary_outcome_dropped,
    ),
    # The form labels such a row as unregistered, so it adds information without hiding any;
    # readers should still know it was not planned.
    Rule(
        code="SECONDARY_OUTCOME_ADDED",
        title="Unregistered outcome reported",
        description="A result is reported as secondary on an outcome the plan did not register.",
        severity=Severity.NOTE,
        check=_secondary_outcome_added,
    ),
    Rule(
        code="HYPOTHESIS_UNREPORTED",
        title="Registered hypothesis not reported",
        description="A registered hypothesis has no result row.",
        severity=Severity.MAJOR,
        secondary_severity=Severity.MINOR,
        check=_hypothesis_unreported,
    ),
    Rule(
        code="HYPOTHESIS_OUTCOME_CHANGED",
        title="Hypothesis tested on another outcome",
        description="A hypothesis is reported on a different outcome from the one it was registered on.",
        severity=Severity.MAJOR,
        secondary_severity=Severity.MINOR,
        check=_hypothesis_outcome_changed,
    ),
    Rule(
        code="DIRECTION_CHANGED",
        title="Direction of the hypothesis changed",
        description="The direction tested differs from the registered direction of the hypothesis.",
        severity=Severity.MAJOR,
        secondary_severity=Severity.MINOR,
        check=_analysis_rule(name="direction", describe=lambda value: f"the direction {value!r}", differs=_differs),
    ),
    # Switching tests is often forced by the data (assumptions not met) and favours no result by
    # itself; readers should still see it.
    Rule(
        code="TEST_CHANGED",
        title="Statistical test changed",
        description="The test used differs from the registered test of the hypothesis.",
        severity=Severity.MINOR,
        check=_analysis_rule(name="test_family", describe=lambda value: f"the test {value!r}", differs=_differs),
    ),
    Rule(
        code="ALPHA_RAISED",
        title="Alpha raised",
        description="The alpha used is higher (more lenient) than the registered alpha.",
        severity=Severity.MAJOR,
        secondary_severity=Severity.MINOR,
        check=_analysis_rule(name="alpha", describe=_alpha_shown, differs=_alpha_raised),
    ),
    Rule(
        code="ALPHA_LOWERED",
        title="Alpha lowered",
        description="The alpha used is lower (stricter) than the registered alpha.",
        severity=Severity.NOTE,
        check=_analysis_rule(name="alpha", describe=_alpha_shown, differs=_alpha_lowered),
    ),
    # A one-sided p is half the two-sided one: the switch alone can cross alpha.
    Rule(
        code="ONE_SIDED_NOT_REGISTERED",
        title="One-sided test where two-sided was registered",
        description="A one-sided test is reported where a two-sided test was registered.",
        severity=Severity.MAJOR,
        secondary_severity=Severity.MINOR,
        check=_analysis_rule(
            name="sides",
            describe=_sides_shown,
            differs=lambda planned, reported: planned == TWO_SIDED and reported == ONE_SIDED,
        ),
    ),
    Rule(
        code="TWO_SIDED_NOT_REGISTERED",
        title="Two-sided test where one-sided was registered",
        description="A two-sided test is reported where a one-sided test was registered (stricter).",
        severity=Severity.NOTE,
        check=_analysis_rule(
            name="sides",
            describe=_sides_shown,
            differs=lambda planned, reported: planned == ONE_SIDED and reported == TWO_SIDED,
        ),
    ),
    Rule(
        code="CORRECTION_NOT_APPLIED",
        title="Multiplicity correction not applied",
        description="A multiplicity correction was registered for the hypothesis but none was applied.",
        severity=Severity.MAJOR,
        secondary_severity=Severity.MINOR,
        check=_analysis_rule(name="multiplicity", describe=_correction_shown, differs=_correction_dropped),
    ),
    # Holm, Bonferroni and Benjamini-Hochberg control different error rates; a swap changes
    # what the result claims without removing the control altogether.
    Rule(
        code="CORRECTION_CHANGED",
        title="Multiplicity correction changed",
        description="The multiplicity correction applied differs from the registered one.",
        severity=Severity.MINOR,
        check=_analysis_rule(name="multiplicity", describe=_correction_shown, differs=_correction_changed),
    ),
    # Attrition and over-recruitment are common and not a claim by themselves; the stopping rule
    # below covers data-dependent stopping.
    Rule(
        code="SAMPLE_SIZE_DIFFERS",
        title="N analysed differs from the planned N",
        description="N analysed for a primary result differs from the planned N by more than the lab's tolerance.",
        severity=Severity.MINOR,
        check=_sample_size_differs,
    ),
    # Stopping when the data look good inflates the false-positive rate well beyond alpha
    # (Armitage, McPherson & Rowe 1969, J R Stat Soc A 132: 235).
    Rule(
        code="STOPPING_RULE_NOT_FOLLOWED",
        title="Stopping rule not followed",
        description="Data collection did not stop as the registered stopping rule said.",
        severity=Severity.MAJOR,
        check=_stopping_rule_not_followed,
    ),
    # Flexible exclusions alone can make a false positive likely (Simmons, Nelson & Simonsohn
    # 2011, Psychol Sci 22: 1359), so a change needs its reason on record.
    Rule(
        code="EXCLUSIONS_CHANGED",
        title="Exclusion rules changed",
        description="The exclusion rules applied differ from the registered ones.",
        severity=Severity.MAJOR,
        check=_exclusions_changed,
    ),
    # A claim of support the numbers contradict misreports the study, whatever the outcome's role.
    Rule(
        code="SUPPORTED_WITHOUT_SIGNIFICANCE",
        title="Supported, but p is not below alpha",
        description="A result reported as supported has a p (recomputed, else as reported) at or above the alpha.",
        severity=Severity.MAJOR,
        check=_supported_without_significance,
    ),
    Rule(
        code="SUPPORTED_AGAINST_DIRECTION",
        title="Supported, but the effect went the other way",
        description="A result reported as supported shows an effect opposite to the registered direction.",
        severity=Severity.MAJOR,
        check=_supported_against_direction,
    ),
    # A significant result may still be judged unsupported (a trivial effect, a failed
    # manipulation check), so this is no deviation, but the judgement needs its reason.
    Rule(
        code="NULL_DESPITE_SIGNIFICANCE",
        title="Not supported, although p is below alpha",
        description="A result reported as not supported has a p-value below the registered alpha.",
        severity=Severity.MINOR,
        asks_for_explanation=True,
        check=_null_despite_significance,
    ),
    Rule(
        code="SUPPORTED_WITHOUT_NUMBERS",
        title="Supported without numbers",
        description="A result reported as supported gives neither a test statistic nor a p-value.",
        severity=Severity.MINOR,
        check=_supported_without_numbers,
    ),
    # The reported p is on the other side of alpha from its own statistic: one of the two is
    # wrong, and the significance decision with it.
    Rule(
        code="P_VALUE_CONTRADICTS_DECISION",
        title="Reported p on the wrong side of alpha",
        description="The reported p-value and the p recomputed from the statistic fall on opposite sides of alpha.",
        severity=Severity.MAJOR,
        check=_consistency_rule("decision_changing"),
    ),
    # A mismatch that leaves the decision unchanged is usually a typo or a rounding slip.
    Rule(
        code="P_VALUE_MISMATCH",
        title="Reported p does not match the statistic",
        description="The reported p-value does not match the p recomputed from the statistic (same decision).",
        severity=Severity.MINOR,
        check=_consistency_rule("inconsistent"),
    ),
    Rule(
        code="NUMBERS_UNCHECKABLE",
        title="Numbers could not be checked",
        description="A statistic or reported p-value could not be recomputed or read, so no check ran on it.",
        severity=Severity.NOTE,
        check=_numbers_uncheckable,
    ),
)
RULES_BY_CODE: dict[str, Rule] = {rule.code: rule for rule in RULES}


def compare(*, plan: Payload, result: Payload | None, context: ComparisonContext) -> list[Finding]:
    """Every finding for a sealed plan and its sealed result, most serious first.

    With ``result=None`` only the time-based rules run (registration, amendments, overdue).
    Within one severity, findings keep registry order, and within a rule, plan or row order.
    """
    if result is not None and not context.result_exists:
        raise ValueError(
            "a result payload was given but context.result_exists is False; set result_exists=True "
            "whenever the study has a sealed result"
        )
    comparison = _comparison(plan=plan, result=result, context=context)
    findings = [
        finding
        for rule in RULES
        if result is not None or not rule.needs_result
        for finding in rule.findings(comparison)
    ]
    return sorted(findings, key=lambda finding: -finding.severity.rank)


def findings_needing_explanation(*, findings: Iterable[Finding]) -> list[Finding]:
    """The findings a written explanation must answer: every major one, and those a rule asks for."""
    return [finding for finding in findings if finding.explanation_required]
