"""Django side of the plan-versus-report comparison: gather the facts, run the pure rules.

The rules themselves live in ``ledger.compare`` and never touch the database; this module builds
their inputs from a study's sealed entries and the lab's settings, and reads the explanations that
were sealed for earlier findings.
"""

from __future__ import annotations

import datetime as dt
import json
from dataclasses import dataclass
from typing import Any

from django.utils import timezone

from ledger.chain.models import Entry, EntryKind
from ledger.compare import AmendmentSeal, ComparisonContext, Finding, compare
from ledger.plans.models import PlanVersion, Study, StudyState
from ledger.plans.selectors import sealed_plan

# Findings that stop mattering once a study is withdrawn: nobody owes results for it.
MOOT_WHEN_WITHDRAWN = frozenset({"RESULTS_OVERDUE"})


def comparison_context(*, study: Study, result_exists: bool, today: dt.date | None = None) -> ComparisonContext:
    amendments = tuple(
        AmendmentSeal(version=number, sealed_at=sealed_at)
        for number, sealed_at in PlanVersion.objects.filter(study=study, number__gt=1)
        .order_by("number")
        .values_list("number", "sealed_at")
    )
    return ComparisonContext(
        today=today or timezone.now().date(),
        first_sealed_at=study.sealed_at,
        collection_started_on=study.collection_started_on,
        amendments=amendments,
        result_exists=result_exists,
        sample_size_tolerance_percent=float(study.lab.sample_size_tolerance_pct),
        overdue_grace_months=study.lab.overdue_grace_months,
    )


def current_plan(study: Study) -> dict[str, Any]:
    version = PlanVersion.objects.select_related("entry").get(study=study, number=study.plan_version)
    return sealed_plan(version)


def findings_for(*, study: Study, plan: dict[str, Any], result: dict[str, Any] | None) -> list[Finding]:
    """Every finding for this plan and (proposed or sealed) result of ``study``."""
    if study.state == StudyState.DRAFT or study.sealed_at is None:
        return []
    context = comparison_context(study=study, result_exists=result is not None)
    findings = compare(plan=plan, result=result, context=context)
    if study.state == StudyState.WITHDRAWN:
        findings = [finding for finding in findings if finding.code not in MOOT_WHEN_WITHDRAWN]
    return findings


@dataclass(frozen=True)
class Explanation:
    identity: str
    text: str
    entry: Entry


@dataclass(frozen=True)
class ExplainedFinding:
    finding: Finding
    explanations: list[Explanation]

    @property
    def unexplained(self) -> bool:
        return not self.explanations


def sealed_explanations(*, study: Study) -> dict[str, list[Explanation]]:
    explained: dict[str, list[Explanation]] = {}
    for entry in Entry.objects.filter(study=study, kind=EntryKind.FINDING_EXPLAINED).select_related("author"):
        payload = json.loads(entry.payload)
        explained.setdefault(payload["finding"], []).append(
            Explanation(identity=payload["finding"], text=payload["explanation"], entry=entry)
        )
    return explained


def study_findings(*, study: Study) -> list[ExplainedFinding]:
    """The study's findings now (sealed result if any, else the time-based rules), with explanations."""
    if study.state == StudyState.DRAFT or study.sealed_at is None:
        return []
    result_entry = Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).first()
    result = json.loads(result_entry.payload) if result_entry else None
    findings = findings_for(study=study, plan=current_plan(study), result=result)
    explanations = sealed_explanations(study=study)
    return [ExplainedFinding(finding=f, explanations=explanations.get(f.identity, [])) for f in findings]


# The analysis choices shown side by side: (label, key on the hypothesis and the row, vocabulary
# for the template's label filter, or "" for a number).
COMPARED_CHOICES = (
    ("Direction", "direction", "direction"),
    ("Test", "test_family", "test_family"),
    ("Alpha", "alpha", ""),
    ("Sides", "sides", "sides"),
    ("Correction", "multiplicity", "multiplicity"),
)


def plan_vs_report(*, plan: dict[str, Any], result: dict[str, Any]) -> list[dict[str, Any]]:
    """One line per registered outcome and per reported row: what was planned next to what was reported.

    A registered outcome with no row appears with ``reported`` empty; a row on an outcome the plan
    did not register appears with ``planned`` empty.
    """
    hypotheses = {item["key"]: item for item in plan.get("hypotheses", [])}
    outcomes = {item["key"]: item for item in plan.get("outcomes", [])}
    lines = []
    reported_outcomes = set()
    for row in result.get("rows", []):
        hypothesis = hypotheses.get(row.get("hypothesis") or "")
        outcome = outcomes.get(row.get("outcome") or "")
        reported_outcomes.add(row.get("outcome"))
        choices = [
            {
                "label": label,
                "vocabulary": vocabulary,
                "planned": hypothesis.get(key) if hypothesis else None,
                "reported": row.get(key),
                "differs": hypothesis is not None and hypothesis.get(key) != row.get(key),
            }
            for label, key, vocabulary in COMPARED_CHOICES
        ]
        lines.append(
            {
                "row": row,
                "hypothesis": hypothesis,
                "outcome": outcome,
                "planned_role": outcome.get("role") if outcome else None,
                "choices": choices,
                "planned_n": plan.get("sample_size", {}).get("planned_n"),
            }
        )
    for key, outcome in outcomes.items():
        if key not in reported_outcomes:
            lines.append(
                {
                    "row": None,
                    "hypothesis": None,
                    "outcome": outcome,
                    "planned_role": outcome.get("role"),
                    "choices": [],
                    "planned_n": None,
                }
            )
    return lines
