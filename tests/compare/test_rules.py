"""Each deviation rule fires on the deviation it names and stays silent on a faithful report.

Every rule has a ``test_<code>_fires`` and a ``test_<code>_stays_silent`` here
(test_every_rule_has_a_firing_and_a_silent_test enforces it). Where a rule turns on a p-value,
the expected significance decision is computed in the test from SciPy's distributions, not from
the code under test.
"""

from __future__ import annotations

import datetime as dt

import pytest
from scipy import stats

from ledger.compare import RULES, RULES_BY_CODE, Severity, compare
from tests.compare.builders import (
    COLLECTION_STARTED_ON,
    COMPLETION,
    PLANNED_N,
    amendment,
    context,
    plan_payload,
    result_payload,
    row_payload,
    secondary_row,
    two_sided_t_p,
)

DF = PLANNED_N - 2.0


def findings_of(*, plan=None, ctx=None, rows=None, r1=None, r2=None, **report):
    """Findings for the default study; ``r1`` / ``r2`` replace its primary / secondary row."""
    if rows is None:
        rows = [r1 or row_payload(), r2 or secondary_row()]
    return compare(plan=plan or plan_payload(), result=result_payload(rows=rows, **report), context=ctx or context())


def only(findings, code):
    return [finding for finding in findings if finding.code == code]


def single(findings, code):
    hits = only(findings, code)
    assert len(hits) == 1, f"expected one {code}, got {findings}"
    return hits[0]


def test_faithful_report_yields_no_finding():
    assert findings_of() == []


def test_every_rule_has_a_firing_and_a_silent_test():
    names = set(globals())
    missing = [
        f"test_{rule.code.lower()}_{outcome}"
        for rule in RULES
        for outcome in ("fires", "stays_silent")
        if f"test_{rule.code.lower()}_{outcome}" not in names
    ]
    assert missing == []


# --- time-based rules ---------------------------------------------------------------------------


def test_retrospective_registration_fires():
    sealed_at = dt.datetime.combine(COLLECTION_STARTED_ON + dt.timedelta(days=2), dt.time(9), tzinfo=dt.UTC)
    finding = single(findings_of(ctx=context(first_sealed_at=sealed_at)), "RETROSPECTIVE_REGISTRATION")
    assert finding.severity is Severity.MAJOR
    assert finding.subject == "study"
    assert finding.evidence["days_after_start"] == 2


def test_retrospective_registration_stays_silent():
    # Sealed on the day collection started: the recorded start has no time, so no order is known.
    same_day = dt.datetime.combine(COLLECTION_STARTED_ON, dt.time(23, 59), tzinfo=dt.UTC)
    assert only(findings_of(ctx=context(first_sealed_at=same_day)), "RETROSPECTIVE_REGISTRATION") == []
    assert only(findings_of(ctx=context(collection_started_on=None)), "RETROSPECTIVE_REGISTRATION") == []


def test_amendment_after_collection_start_fires():
    late = amendment(3, COLLECTION_STARTED_ON + dt.timedelta(days=1))
    ctx = context(amendments=(amendment(2, COLLECTION_STARTED_ON - dt.timedelta(days=3)), late))
    finding = single(findings_of(ctx=ctx), "AMENDMENT_AFTER_COLLECTION_START")
    assert (finding.subject, finding.severity) == ("v3", Severity.MAJOR)


def test_amendment_after_collection_start_stays_silent():
    before, same_day = COLLECTION_STARTED_ON - dt.timedelta(days=1), COLLECTION_STARTED_ON
    ctx = context(amendments=(amendment(2, before), amendment(3, same_day)))
    assert only(findings_of(ctx=ctx), "AMENDMENT_AFTER_COLLECTION_START") == []


def _due_date() -> dt.date:
    # Outside reference for calendar-month arithmetic: dateutil's relativedelta.
    from dateutil.relativedelta import relativedelta

    return COMPLETION + relativedelta(months=12)


def test_results_overdue_fires():
    ctx = context(result_exists=False, today=_due_date() + dt.timedelta(days=1))
    finding = single(compare(plan=plan_payload(), result=None, context=ctx), "RESULTS_OVERDUE")
    assert finding.severity is Severity.MAJOR
    assert finding.evidence["due_on"] == _due_date().isoformat()
    assert finding.evidence["days_overdue"] == 1


def test_results_overdue_stays_silent():
    on_the_due_date = context(result_exists=False, today=_due_date())
    assert compare(plan=plan_payload(), result=None, context=on_the_due_date) == []
    long_after_but_reported = context(result_exists=True, today=_due_date() + dt.timedelta(days=400))
    assert only(compare(plan=plan_payload(), result=None, context=long_after_but_reported), "RESULTS_OVERDUE") == []
    shorter_grace = context(result_exists=False, today=COMPLETION + dt.timedelta(days=1), overdue_grace_months=0)
    assert only(compare(plan=plan_payload(), result=None, context=shorter_grace), "RESULTS_OVERDUE") != []


# --- study-level rules --------------------------------------------------------------------------


def test_stopping_rule_not_followed_fires():
    findings = findings_of(stopping_rule_followed=False, stopping_note="Stopped at N = 90 when p fell below .05.")
    finding = single(findings, "STOPPING_RULE_NOT_FOLLOWED")
    assert finding.severity is Severity.MAJOR
    assert finding.evidence == {"planned": "Stop at N = 128.", "reported": "Stopped at N = 90 when p fell below .05."}


def test_stopping_rule_not_followed_stays_silent():
    assert only(findings_of(stopping_rule_followed=True), "STOPPING_RULE_NOT_FOLLOWED") == []


def test_exclusions_changed_fires():
    findings = findings_of(exclusions_as_planned=False, exclusions_applied="Also excluded the fastest 5%.")
    finding = single(findings, "EXCLUSIONS_CHANGED")
    assert finding.severity is Severity.MAJOR
    assert finding.evidence["reported"] == "Also excluded the fastest 5%."


def test_exclusions_changed_stays_silent():
    assert only(findings_of(exclusions_as_planned=True), "EXCLUSIONS_CHANGED") == []


# --- outcomes and hypotheses --------------------------------------------------------------------


def test_primary_outcome_dropped_fires():
    missing = single(findings_of(rows=[secondary_row()]), "PRIMARY_OUTCOME_DROPPED")
    assert (missing.subject, missing.severity, missing.evidence["rows"]) == ("O1", Severity.MAJOR, [])
    demoted = single(findings_of(r1=row_payload(reported_as="secondary")), "PRIMARY_OUTCOME_DROPPED")
    assert demoted.evidence["rows"] == ["R1"]
    assert "only as secondary" in demoted.message


def test_primary_outcome_dropped_stays_silent():
    assert only(findings_of(), "PRIMARY_OUTCOME_DROPPED") == []


def test_primary_outcome_added_fires():
    promoted = single(findings_of(r2=secondary_row(reported_as="primary")), "PRIMARY_OUTCOME_ADDED")
    assert (promoted.subject, promoted.severity, promoted.evidence["planned"]) == ("R2", Severity.MAJOR, "secondary")
    unregistered = row_payload("R3", hypothesis="", outcome="", outcome_name="Reaction time", reported_as="primary")
    new = single(findings_of(rows=[row_payload(), secondary_row(), unregistered]), "PRIMARY_OUTCOME_ADDED")
    assert (new.subject, new.evidence["planned"], new.evidence["outcome_name"]) == ("R3", None, "Reaction time")


def test_primary_outcome_added_stays_silent():
    assert only(findings_of(), "PRIMARY_OUTCOME_ADDED") == []


def test_secondary_outcome_dropped_fires():
    finding = single(findings_of(rows=[row_payload()]), "SECONDARY_OUTCOME_DROPPED")
    assert (finding.subject, finding.severity) == ("O2", Severity.MINOR)


def test_secondary_outcome_dropped_stays_silent():
    # O2 reported, although without its hypothesis: the outcome is there.
    assert only(findings_of(r2=secondary_row(hypothesis="")), "SECONDARY_OUTCOME_DROPPED") == []


def test_secondary_outcome_added_fires():
    extra = row_payload("R3", hypothesis="", outcome="", outcome_name="Reaction time", reported_as="secondary")
    finding = single(findings_of(rows=[row_payload(), secondary_row(), extra]), "SECONDARY_OUTCOME_ADDED")
    assert (finding.subject, finding.severity, finding.evidence["reported"]) == ("R3", Severity.NOTE, "Reaction time")


def test_secondary_outcome_added_stays_silent():
    assert only(findings_of(), "SECONDARY_OUTCOME_ADDED") == []


def test_hypothesis_unreported_fires():
    plan = plan_payload()
    plan["hypotheses"].append({**plan["hypotheses"][0], "key": "H3", "statement": "H3: a second primary test."})
    on_primary = single(findings_of(plan=plan), "HYPOTHESIS_UNREPORTED")
    assert (on_primary.subject, on_primary.severity) == ("H3", Severity.MAJOR)
    on_secondary = single(findings_of(r2=secondary_row(hypothesis="")), "HYPOTHESIS_UNREPORTED")
    assert (on_secondary.subject, on_secondary.severity) == ("H2", Severity.MINOR)


def test_hypothesis_unreported_stays_silent():
    assert only(findings_of(), "HYPOTHESIS_UNREPORTED") == []


def test_hypothesis_outcome_changed_fires():
    switched = row_payload(outcome="O2", outcome_name="Confidence")
    finding = single(findings_of(r1=switched), "HYPOTHESIS_OUTCOME_CHANGED")
    assert (finding.subject, finding.severity) == ("R1", Severity.MAJOR)
    assert (finding.evidence["planned"], finding.evidence["reported"]) == ("O1", "O2")


def test_hypothesis_outcome_changed_stays_silent():
    assert only(findings_of(), "HYPOTHESIS_OUTCOME_CHANGED") == []


# --- the registered analysis --------------------------------------------------------------------


def test_direction_changed_fires():
    primary = single(findings_of(r1=row_payload(direction="differ")), "DIRECTION_CHANGED")
    assert (primary.subject, primary.severity) == ("R1", Severity.MAJOR)
    assert (primary.evidence["planned"], primary.evidence["reported"]) == ("increase", "differ")
    secondary = single(findings_of(r2=secondary_row(direction="decrease")), "DIRECTION_CHANGED")
    assert (secondary.subject, secondary.severity) == ("R2", Severity.MINOR)


def test_direction_changed_stays_silent():
    assert only(findings_of(), "DIRECTION_CHANGED") == []


def test_test_changed_fires():
    finding = single(findings_of(r1=row_payload(test_family="nonparametric")), "TEST_CHANGED")
    assert (finding.severity, finding.evidence["planned"], finding.evidence["reported"]) == (
        Severity.MINOR,
        "t_independent",
        "nonparametric",
    )


def test_test_changed_stays_silent():
    assert only(findings_of(), "TEST_CHANGED") == []


def test_alpha_raised_fires():
    primary = single(findings_of(r1=row_payload(alpha=0.10)), "ALPHA_RAISED")
    assert (primary.severity, primary.evidence["planned"], primary.evidence["reported"]) == (Severity.MAJOR, 0.05, 0.10)
    secondary = single(findings_of(r2=secondary_row(alpha=0.10)), "ALPHA_RAISED")
    assert secondary.severity is Severity.MINOR


def test_alpha_raised_stays_silent():
    assert only(findings_of(r1=row_payload(alpha=0.01)), "ALPHA_RAISED") == []


def test_alpha_lowered_fires():
    finding = single(findings_of(r1=row_payload(alpha=0.01)), "ALPHA_LOWERED")
    assert finding.severity is Severity.NOTE


def test_alpha_lowered_stays_silent():
    assert only(findings_of(r1=row_payload(alpha=0.10)), "ALPHA_LOWERED") == []


def test_one_sided_not_registered_fires():
    finding = single(findings_of(r1=row_payload(sides="one")), "ONE_SIDED_NOT_REGISTERED")
    assert (finding.subject, finding.severity) == ("R1", Severity.MAJOR)


def test_one_sided_not_registered_stays_silent():
    assert only(findings_of(), "ONE_SIDED_NOT_REGISTERED") == []
    # The reverse switch is stricter and is reported by its own rule.
    plan = plan_payload(h1={"sides": "one"})
    assert only(findings_of(plan=plan), "ONE_SIDED_NOT_REGISTERED") == []


def test_two_sided_not_registered_fires():
    finding = single(findings_of(plan=plan_payload(h1={"sides": "one"})), "TWO_SIDED_NOT_REGISTERED")
    assert finding.severity is Severity.NOTE


def test_two_sided_not_registered_stays_silent():
    assert only(findings_of(r1=row_payload(sides="one")), "TWO_SIDED_NOT_REGISTERED") == []


def test_correction_not_applied_fires():
    finding = single(findings_of(plan=plan_payload(h1={"multiplicity": "holm"})), "CORRECTION_NOT_APPLIED")
    assert (finding.severity, finding.evidence["planned"], finding.evidence["reported"]) == (
        Severity.MAJOR,
        "holm",
        "none",
    )
    assert only(findings_of(plan=plan_payload(h1={"multiplicity": "holm"})), "CORRECTION_CHANGED") == []


def test_correction_not_applied_stays_silent():
    plan = plan_payload(h1={"multiplicity": "holm"})
    assert only(findings_of(plan=plan, r1=row_payload(multiplicity="holm")), "CORRECTION_NOT_APPLIED") == []


def test_correction_changed_fires():
    plan = plan_payload(h1={"multiplicity": "bonferroni"})
    finding = single(findings_of(plan=plan, r1=row_payload(multiplicity="bh")), "CORRECTION_CHANGED")
    assert (finding.severity, finding.evidence["reported"]) == (Severity.MINOR, "bh")


def test_correction_changed_stays_silent():
    plan = plan_payload(h1={"multiplicity": "bh"})
    assert only(findings_of(plan=plan, r1=row_payload(multiplicity="bh")), "CORRECTION_CHANGED") == []


# Tolerance of 10% of the planned N: common practice, no source. 10% of 128 is 12.8, so 13 off
# is beyond it and 12 off is within it.
def test_sample_size_differs_fires():
    for n_analysed in (PLANNED_N - 13, PLANNED_N + 13):
        finding = single(findings_of(r1=row_payload(n_analysed=n_analysed)), "SAMPLE_SIZE_DIFFERS")
        assert (finding.subject, finding.severity) == ("R1", Severity.MINOR)
        assert (finding.evidence["planned"], finding.evidence["reported"]) == (PLANNED_N, n_analysed)
    round_plan = plan_payload(sample_size={**plan_payload()["sample_size"], "planned_n": 100})
    assert only(findings_of(plan=round_plan, r1=row_payload(n_analysed=89)), "SAMPLE_SIZE_DIFFERS")
    stricter = context(sample_size_tolerance_percent=5)
    assert only(findings_of(ctx=stricter, r1=row_payload(n_analysed=PLANNED_N - 7)), "SAMPLE_SIZE_DIFFERS")


def test_sample_size_differs_stays_silent():
    within = [row_payload(n_analysed=PLANNED_N - 12), secondary_row(n_analysed=PLANNED_N + 12)]
    assert only(findings_of(rows=within), "SAMPLE_SIZE_DIFFERS") == []
    # Exactly 10% off is within the tolerance: the rule fires only beyond it.
    round_plan = plan_payload(sample_size={**plan_payload()["sample_size"], "planned_n": 100})
    assert only(findings_of(plan=round_plan, r1=row_payload(n_analysed=90)), "SAMPLE_SIZE_DIFFERS") == []
    # A secondary outcome may lose cases; the planned N is about the primary analysis.
    assert only(findings_of(r2=secondary_row(n_analysed=40)), "SAMPLE_SIZE_DIFFERS") == []


# --- verdicts against the numbers ---------------------------------------------------------------


def test_supported_without_significance_fires():
    # Outside reference: t(126) = 1.80 has a two-sided p of about .074 (SciPy's t distribution).
    assert two_sided_t_p(1.80, DF) >= 0.05
    row = row_payload(t=1.80, verdict="supported")
    finding = single(findings_of(r1=row), "SUPPORTED_WITHOUT_SIGNIFICANCE")
    assert finding.severity is Severity.MAJOR
    assert finding.evidence["recomputed_p"] == pytest.approx(two_sided_t_p(1.80, DF), rel=1e-9)
    # Judged at the registered alpha even when the row reports a more lenient one.
    lenient = row_payload(t=1.80, verdict="supported", alpha=0.10)
    assert only(findings_of(r1=lenient), "SUPPORTED_WITHOUT_SIGNIFICANCE")
    # Without a statistic, the reported p decides: "0.07" stands for [.065, .075), all above .05.
    by_reported_p = row_payload(statistic=None, p_reported="0.07", verdict="supported")
    assert only(findings_of(r1=by_reported_p), "SUPPORTED_WITHOUT_SIGNIFICANCE")


def test_supported_without_significance_stays_silent():
    # Outside reference: t(126) = 2.50 has a two-sided p of about .014.
    assert two_sided_t_p(2.50, DF) < 0.05
    row = row_payload(t=2.50, verdict="supported")
    assert only(findings_of(r1=row), "SUPPORTED_WITHOUT_SIGNIFICANCE") == []
    # Registered one-sided in the predicted direction: the one-sided p of t(126) = 1.80 is the
    # upper tail, about .037.
    assert stats.t.sf(1.80, DF) < 0.05
    one_sided = plan_payload(h1={"sides": "one"})
    row = row_payload(t=1.80, verdict="supported", sides="one", p_reported=f"{stats.t.sf(1.80, DF):.3f}")
    assert only(findings_of(plan=one_sided, r1=row), "SUPPORTED_WITHOUT_SIGNIFICANCE") == []
    by_reported_p = row_payload(statistic=None, p_reported="p < .01", verdict="supported")
    assert only(findings_of(r1=by_reported_p), "SUPPORTED_WITHOUT_SIGNIFICANCE") == []


def test_supported_against_direction_fires():
    assert two_sided_t_p(-2.50, DF) < 0.05
    row = row_payload(t=-2.50, verdict="supported")
    finding = single(findings_of(r1=row), "SUPPORTED_AGAINST_DIRECTION")
    assert (finding.severity, finding.evidence["planned"], finding.evidence["reported"]) == (
        Severity.MAJOR,
        "increase",
        "decrease",
    )
    # An odds ratio below 1 is a decrease; the effect's sign is read before the statistic's.
    odds = row_payload(t=2.50, verdict="supported", effect={"kind": "or", "value": 0.6, "ci_low": 0.4, "ci_high": 0.9})
    assert only(findings_of(r1=odds), "SUPPORTED_AGAINST_DIRECTION")


def test_supported_against_direction_stays_silent():
    assert only(findings_of(r1=row_payload(t=2.50, verdict="supported")), "SUPPORTED_AGAINST_DIRECTION") == []
    # "Any difference" registers no direction to go against.
    plan = plan_payload(h1={"direction": "differ"})
    row = row_payload(t=-2.50, verdict="supported", direction="differ")
    assert only(findings_of(plan=plan, r1=row), "SUPPORTED_AGAINST_DIRECTION") == []


def test_null_despite_significance_fires():
    assert two_sided_t_p(2.50, DF) < 0.05
    finding = single(findings_of(r1=row_payload(t=2.50)), "NULL_DESPITE_SIGNIFICANCE")
    assert finding.severity is Severity.MINOR
    assert finding.explanation_required
    # An F test has only its upper tail, even on a hypothesis registered as one-sided.
    assert stats.f.sf(4.10, 2, 125) < 0.05
    plan = plan_payload(h1={"sides": "one", "test_family": "anova_oneway"})
    anova = row_payload(
        statistic={"kind": "F", "value": 4.10, "df1": 2.0, "df2": 125.0, "decimals": 2},
        p_reported=f"{stats.f.sf(4.10, 2, 125):.3f}",
        sides="one",
        test_family="anova_oneway",
        effect=None,
    )
    finding = single(findings_of(plan=plan, r1=anova), "NULL_DESPITE_SIGNIFICANCE")
    assert finding.evidence["recomputed_p"] == pytest.approx(stats.f.sf(4.10, 2, 125), rel=1e-9)


def test_null_despite_significance_stays_silent():
    assert two_sided_t_p(0.84, DF) >= 0.05
    assert only(findings_of(), "NULL_DESPITE_SIGNIFICANCE") == []
    # Registered one-sided "increase" with t = -2.50: the registered p is the upper tail, about
    # .993 (SciPy), so "not supported" is right even though the two-sided p is below .05.
    registered_p = stats.t.sf(-2.50, DF)
    assert registered_p >= 0.05
    plan = plan_payload(h1={"sides": "one"})
    row = row_payload(t=-2.50, sides="one", p_reported=f"{registered_p:.3f}")
    assert only(findings_of(plan=plan, r1=row), "NULL_DESPITE_SIGNIFICANCE") == []


def test_supported_without_numbers_fires():
    row = row_payload(statistic=None, p_reported="", verdict="supported")
    finding = single(findings_of(r1=row), "SUPPORTED_WITHOUT_NUMBERS")
    assert finding.severity is Severity.MINOR


def test_supported_without_numbers_stays_silent():
    row = row_payload(statistic=None, p_reported="p < .001", verdict="supported")
    assert only(findings_of(r1=row), "SUPPORTED_WITHOUT_NUMBERS") == []
    # A null result with no numbers claims nothing the numbers must back.
    assert only(findings_of(r1=row_payload(statistic=None, p_reported="")), "SUPPORTED_WITHOUT_NUMBERS") == []


def _t_p_range(written: str, df: float) -> tuple[float, float]:
    """Reference p range of every t that rounds to ``written`` (SciPy, two-sided)."""
    half = 0.5 * 10.0 ** -len(written.split(".")[1])
    value = float(written)
    return two_sided_t_p(value + half, df), two_sided_t_p(value - half, df)


def test_p_value_contradicts_decision_fires():
    # t(126) = 1.80 stands for 1.795..1.805: p from about .0734 to .0745, all above .05, while
    # "0.03" stands for [.025, .035), all below it.
    low, high = _t_p_range("1.80", DF)
    assert low >= 0.05
    row = row_payload(t=1.80, p_reported="0.03", verdict="supported")
    finding = single(findings_of(r1=row), "P_VALUE_CONTRADICTS_DECISION")
    assert finding.severity is Severity.MAJOR
    assert finding.evidence["recomputed_range"] == pytest.approx([low, high], rel=1e-9)


def test_p_value_contradicts_decision_stays_silent():
    assert only(findings_of(), "P_VALUE_CONTRADICTS_DECISION") == []
    # Mismatched but on the same side of alpha: the minor rule's case, not this one.
    row = row_payload(t=2.50, p_reported="0.02")
    assert only(findings_of(r1=row), "P_VALUE_CONTRADICTS_DECISION") == []


def test_p_value_mismatch_fires():
    # t(126) = 2.50 stands for p of about .0136 to .0139; "0.02" stands for [.015, .025).
    low, high = _t_p_range("2.50", DF)
    assert high < 0.015
    finding = single(findings_of(r1=row_payload(t=2.50, p_reported="0.02")), "P_VALUE_MISMATCH")
    assert finding.severity is Severity.MINOR


def test_p_value_mismatch_stays_silent():
    low, high = _t_p_range("2.50", DF)
    assert low < 0.0145 and high >= 0.0135  # "0.014" stands for [.0135, .0145): they overlap
    assert only(findings_of(r1=row_payload(t=2.50, p_reported="0.014")), "P_VALUE_MISMATCH") == []


def test_numbers_uncheckable_fires():
    # A correlation needs more than two pairs for its t test (n - 2 degrees of freedom).
    tiny = row_payload(statistic={"kind": "r", "value": 0.5, "df1": None, "df2": None, "decimals": 2}, n_analysed=2)
    finding = single(findings_of(r1=tiny), "NUMBERS_UNCHECKABLE")
    assert finding.severity is Severity.NOTE
    assert "n must be greater than 2" in finding.message
    # A one-sided p against the direction tested is the far tail (scipy: t.sf(-2.50, df) ~ .99);
    # reported correctly, it is checkable and raises no p-value finding.
    plan = plan_payload(h1={"sides": "one"})
    against = row_payload(t=-2.50, sides="one", p_reported=f"{stats.t.sf(-2.50, DF):.3f}")
    findings = findings_of(plan=plan, r1=against)
    assert only(findings, "NUMBERS_UNCHECKABLE") == []
    assert only(findings, "P_VALUE_CONTRADICTS_DECISION") == []
    assert only(findings, "P_VALUE_MISMATCH") == []


def test_numbers_uncheckable_stays_silent():
    assert only(findings_of(), "NUMBERS_UNCHECKABLE") == []


# --- registry and result shape ------------------------------------------------------------------


def test_rule_codes_are_unique_upper_snake_case_with_descriptions():
    codes = [rule.code for rule in RULES]
    assert len(codes) == len(set(codes)) == len(RULES_BY_CODE)
    for rule in RULES:
        assert rule.code.replace("_", "").isalpha() and rule.code.isupper()
        assert rule.title and rule.description.endswith(".")
        if rule.secondary_severity is not None:
            assert rule.secondary_severity.rank < rule.severity.rank


def test_findings_are_sorted_most_serious_first():
    rows = [row_payload(alpha=0.01), secondary_row(reported_as="primary")]
    findings = findings_of(rows=rows, exclusions_as_planned=False, exclusions_applied="More.")
    ranks = [finding.severity.rank for finding in findings]
    assert ranks == sorted(ranks, reverse=True)
    assert {Severity.MAJOR, Severity.NOTE} <= {finding.severity for finding in findings}
