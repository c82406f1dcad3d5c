"""compare() as a whole: finding identity, what needs an explanation, the time-only mode, input
checks, sealing the findings, and a faithful report of any plan yielding no major finding."""

from __future__ import annotations

import datetime as dt
import subprocess
import sys
from pathlib import Path

import pytest
import rfc8785
from dateutil.relativedelta import relativedelta
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from ledger.compare import (
    RULES_BY_CODE,
    ComparisonContext,
    Severity,
    compare,
    findings_needing_explanation,
    results_due_on,
)
from tests.compare.builders import (
    COLLECTION_STARTED_ON,
    context,
    plan_payload,
    result_payload,
    row_payload,
    secondary_row,
)

REPO = Path(__file__).resolve().parents[2]


def _messy_result():
    """A result with several deviations at once: switched, dropped and added outcomes."""
    return result_payload(
        rows=[
            row_payload(reported_as="secondary", alpha=0.10),
            secondary_row(reported_as="primary", t=2.50, verdict="supported"),
            row_payload("R3", hypothesis="", outcome="", outcome_name="Reaction time", reported_as="secondary"),
        ],
        stopping_rule_followed=False,
        stopping_note="Ran out of lab time.",
    )


def test_identities_are_stable_across_recomputation_and_row_order():
    plan, result = plan_payload(), _messy_result()
    first = compare(plan=plan, result=result, context=context())
    again = compare(plan=plan, result=result, context=context())
    reordered = compare(plan=plan, result={**result, "rows": result["rows"][::-1]}, context=context())
    assert [f.identity for f in first] == [f.identity for f in again]
    assert {f.identity for f in first} == {f.identity for f in reordered}
    assert len({f.identity for f in first}) == len(first), "two findings share one identity"
    assert {"PRIMARY_OUTCOME_DROPPED:O1", "PRIMARY_OUTCOME_ADDED:R2", "STOPPING_RULE_NOT_FOLLOWED:study"} <= {
        f.identity for f in first
    }


def test_every_major_finding_and_nothing_minor_unless_asked_needs_an_explanation():
    rows = [row_payload(t=2.50), secondary_row(reported_as="primary"), row_payload("R3", test_family="other")]
    findings = compare(plan=plan_payload(), result=result_payload(rows=rows), context=context())
    needed = findings_needing_explanation(findings=findings)
    assert {f.code for f in needed} == {
        f.code for f in findings if f.severity is Severity.MAJOR or f.code == "NULL_DESPITE_SIGNIFICANCE"
    }
    assert "NULL_DESPITE_SIGNIFICANCE" in {f.code for f in needed}
    assert "TEST_CHANGED" in {f.code for f in findings} - {f.code for f in needed}


def test_without_a_result_only_time_based_rules_run():
    late_seal = dt.datetime.combine(COLLECTION_STARTED_ON + dt.timedelta(days=5), dt.time(12), tzinfo=dt.UTC)
    ctx = context(first_sealed_at=late_seal, result_exists=False, today=dt.date(2040, 1, 1))
    findings = compare(plan=plan_payload(), result=None, context=ctx)
    assert {f.code for f in findings} == {"RETROSPECTIVE_REGISTRATION", "RESULTS_OVERDUE"}
    assert all(not RULES_BY_CODE[f.code].needs_result for f in findings)


def test_a_result_with_result_exists_false_is_refused_with_the_fix():
    with pytest.raises(ValueError, match="set result_exists=True"):
        compare(plan=plan_payload(), result=result_payload(), context=context(result_exists=False))


@pytest.mark.parametrize(
    ("overrides", "message"),
    [
        ({"sample_size_tolerance_percent": -1}, "from 0 to 100"),
        ({"sample_size_tolerance_percent": True}, "from 0 to 100"),
        ({"overdue_grace_months": 1.5}, "whole number of months"),
        ({"overdue_grace_months": -2}, "whole number of months"),
        ({"amendments": []}, "must be a tuple of AmendmentSeal"),
    ],
)
def test_context_refuses_values_it_cannot_use_and_says_what_fits(overrides, message):
    with pytest.raises(ValueError, match=message):
        context(**overrides)


def test_context_defaults_are_ten_percent_and_twelve_months():
    ctx = ComparisonContext(today=dt.date(2030, 1, 1), first_sealed_at=dt.datetime(2029, 1, 1, tzinfo=dt.UTC))
    assert (ctx.sample_size_tolerance_percent, ctx.overdue_grace_months) == (10.0, 12)


@given(
    completion=st.dates(min_value=dt.date(1990, 1, 1), max_value=dt.date(2090, 12, 31)),
    months=st.integers(min_value=0, max_value=60),
)
def test_results_due_on_matches_dateutil_relativedelta(completion, months):
    # Outside reference: dateutil's relativedelta adds calendar months and clips the day to the
    # end of a shorter month, the documented behaviour we want.
    assert results_due_on(completion=completion, grace_months=months) == completion + relativedelta(months=months)


def test_results_due_on_refuses_a_negative_grace_period():
    with pytest.raises(ValueError, match="0 or more"):
        results_due_on(completion=dt.date(2030, 1, 31), grace_months=-1)


def test_findings_serialise_to_canonical_json_for_sealing():
    findings = compare(plan=plan_payload(), result=_messy_result(), context=context())
    assert findings
    text = rfc8785.dumps([finding.as_dict() for finding in findings]).decode()
    assert '"severity":"major"' in text


def test_ledger_compare_imports_no_django_code():
    # Importing the package `ledger` loads the Celery app (and Django's settings machinery) by
    # design; every ledger module that ledger.compare pulls in must itself stay Django-free.
    probe = (
        "import ast, sys, ledger.compare\n"
        "bad = []\n"
        "for name, module in sorted(sys.modules.items()):\n"
        "    if not name.startswith('ledger.') or name == 'ledger.celery':\n"
        "        continue\n"
        "    tree = ast.parse(open(module.__file__).read())\n"
        "    for node in ast.walk(tree):\n"
        "        names = [a.name for a in node.names] if isinstance(node, ast.Import) else "
        "[node.module or ''] if isinstance(node, ast.ImportFrom) else []\n"
        "        bad += [f'{name}: {n}' for n in names if n.split('.')[0] == 'django']\n"
        "print(bad)\n"
    )
    output = subprocess.run([sys.executable, "-c", probe], cwd=REPO, capture_output=True, text=True, check=True)
    assert output.stdout.strip() == "[]"


# --- property: a result that reproduces its plan has no major finding ---------------------------

STATISTIC_KINDS = ("t", "z", "F", "chi2", "r")


def _reference_p(*, kind: str, value: float, df1: float, df2: float, n: int, sides: str, direction: str) -> float:
    """The registered p straight from SciPy's distributions (the outside reference)."""
    if kind == "F":
        return float(stats.f.sf(value, df1, df2))
    if kind == "chi2":
        return float(stats.chi2.sf(value, df1))
    if kind == "r":
        statistic, distribution = value * ((n - 2) / (1 - value**2)) ** 0.5, stats.t(n - 2)
    elif kind == "t":
        statistic, distribution = value, stats.t(df1)
    else:
        statistic, distribution = value, stats.norm()
    if sides == "two":
        return float(2 * distribution.sf(abs(statistic)))
    # One-sided: the tail in the registered direction.
    return float(distribution.sf(statistic) if direction == "increase" else distribution.cdf(statistic))


@st.composite
def faithful_hypothesis(draw, *, key: str, outcome: str, planned_n: int):
    kind = draw(st.sampled_from(STATISTIC_KINDS))
    directional = kind in ("t", "z", "r")
    sides = draw(st.sampled_from(("two", "one"))) if directional else "two"
    directions = ("increase", "decrease") if sides == "one" else ("increase", "decrease", "differ", "equivalent")
    direction = draw(st.sampled_from(directions))
    alpha = draw(st.sampled_from((0.005, 0.01, 0.05, 0.10)))
    df1 = float(draw(st.integers(1, 6))) if kind in ("F", "chi2") else float(planned_n - 2)
    df2 = float(planned_n - df1 - 1) if kind == "F" else None
    if kind == "r":
        value = draw(st.integers(-95, 95)) / 100
    elif kind in ("F", "chi2"):
        value = draw(st.integers(0, 3000)) / 100
    else:
        value = draw(st.integers(-600, 600)) / 100
    p = _reference_p(kind=kind, value=value, df1=df1, df2=df2, n=planned_n, sides=sides, direction=direction)
    sign = (value > 0) - (value < 0)
    expected = {"increase": 1, "decrease": -1}.get(direction)
    if p >= alpha:
        verdict = "null"
    elif expected is not None and sign != expected:
        verdict = "opposite"
    else:
        verdict = "supported"
    family = {"t": "t_independent", "z": "other", "F": "anova_oneway", "chi2": "chi_square", "r": "correlation"}[kind]
    hypothesis = {
        "key": key,
        "statement": f"{key} holds.",
        "direction": direction,
        "outcome": outcome,
        "test_family": family,
        "test_description": "",
        "alpha": alpha,
        "sides": sides,
        "multiplicity": draw(st.sampled_from(("none", "holm"))),
        "covariates": "",
    }
    effect = {"kind": "d", "value": value, "ci_low": None, "ci_high": None} if kind in ("t", "z") else None
    row = {
        **{name: hypothesis[name] for name in ("direction", "test_family", "test_description", "alpha", "sides")},
        "multiplicity": hypothesis["multiplicity"],
        "hypothesis": key,
        "outcome": outcome,
        "statistic": {"kind": kind, "value": value, "df1": df1, "df2": df2, "decimals": 2},
        "p_reported": f"{p:.6f}",
        "effect": effect,
        "n_analysed": planned_n,
        "verdict": verdict,
        "comment": "",
    }
    return hypothesis, row


@st.composite
def faithful_study(draw):
    planned_n = draw(st.integers(10, 400))
    count = draw(st.integers(1, 4))
    roles = ["primary"] + [draw(st.sampled_from(("primary", "secondary"))) for _ in range(count - 1)]
    plan = plan_payload()
    plan["outcomes"] = [
        {"key": f"O{i}", "name": f"Outcome {i}", "role": role, "measure": "", "unit": "", "timepoint": ""}
        for i, role in enumerate(roles, start=1)
    ]
    plan["sample_size"]["planned_n"] = planned_n
    pairs = [draw(faithful_hypothesis(key=f"H{i}", outcome=f"O{i}", planned_n=planned_n)) for i in range(1, count + 1)]
    plan["hypotheses"] = [hypothesis for hypothesis, _ in pairs]
    rows = [
        {**row, "key": f"R{i}", "outcome_name": f"Outcome {i}", "reported_as": roles[i - 1]}
        for i, (_, row) in enumerate(pairs, start=1)
    ]
    return plan, result_payload(rows=rows)


@settings(max_examples=300, deadline=None)
@given(study=faithful_study())
def test_a_result_that_reproduces_its_plan_has_no_major_finding(study):
    plan, result = study
    findings = compare(plan=plan, result=result, context=context())
    assert [f for f in findings if f.severity is Severity.MAJOR] == []
    # Stronger: a faithful result raises no finding at all.
    assert findings == []


def test_the_property_strategy_covers_every_statistic_and_verdict():
    """Guards the property test against a strategy that never reaches the interesting cases."""
    seen_kinds, seen_verdicts = set(), set()

    @settings(max_examples=300, deadline=None, database=None)
    @given(study=faithful_study())
    def collect(study):
        for row in study[1]["rows"]:
            seen_kinds.add(row["statistic"]["kind"])
            seen_verdicts.add(row["verdict"])

    collect()
    assert seen_kinds == set(STATISTIC_KINDS)
    assert seen_verdicts == {"supported", "null", "opposite"}
