"""The plan document: how a draft is stored, what sealing requires, and the sealed payload.

A draft's ``content`` and a sealed payload share one shape (below), so an amendment starts as a
copy of the sealed plan and two versions can be compared field by field.

    title, research_question,
    hypotheses: [{key, statement, direction, outcome, test_family, test_description,
                  alpha, sides, multiplicity, covariates}],
    outcomes:   [{key, name, role, measure, unit, timepoint}],
    design:     {arms, allocation, blinding},
    sample_size:{planned_n, stopping_rule, power_design, effect_size, alpha, target_power,
                 sides, groups, chi_df, justification},
    exclusion_rules, support_criterion,
    dates:      {collection_start, completion, embargo_until}   (ISO 8601 dates or "")
    investigators: [{name, orcid}]

The sealed payload adds ``schema``, ``study``, ``version``, ``computed`` figures, ``warnings``
and, for an amendment, ``amendment: {reason, amends_version, amends_entry}``.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from ledger.plans.vocabulary import OutcomeRole

PLAN_SCHEMA = "forebook.plan/1"

SAMPLE_SIZE_FIELDS = {
    # form field -> key in content["sample_size"]
    "planned_n": "planned_n",
    "stopping_rule": "stopping_rule",
    "power_design": "power_design",
    "effect_size": "effect_size",
    "ss_alpha": "alpha",
    "target_power": "target_power",
    "ss_sides": "sides",
    "groups": "groups",
    "chi_df": "chi_df",
    "justification": "justification",
}
DESIGN_FIELDS = ("arms", "allocation", "blinding")
DATE_FIELDS = ("collection_start", "completion", "embargo_until")
TEXT_FIELDS = ("title", "research_question", "exclusion_rules", "support_criterion")
HYPOTHESIS_FIELDS = (
    "key",
    "statement",
    "direction",
    "outcome",
    "test_family",
    "test_description",
    "alpha",
    "sides",
    "multiplicity",
    "covariates",
)
OUTCOME_FIELDS = ("key", "name", "role", "measure", "unit", "timepoint")
INVESTIGATOR_FIELDS = ("name", "orcid")


def empty_content(*, title: str = "") -> dict[str, Any]:
    return {
        "title": title,
        "research_question": "",
        "hypotheses": [],
        "outcomes": [],
        "design": {field: "" for field in DESIGN_FIELDS},
        "sample_size": {key: None for key in SAMPLE_SIZE_FIELDS.values()},
        "exclusion_rules": "",
        "support_criterion": "",
        "dates": {field: "" for field in DATE_FIELDS},
        "investigators": [],
    }


def _iso(value: dt.date | None) -> str:
    return value.isoformat() if value else ""


def _none_if_blank(value: Any) -> Any:
    return None if value in ("", None) else value


def assign_keys(items: list[dict[str, Any]], prefix: str) -> list[dict[str, Any]]:
    """Give every item without a key the next free key, keeping existing keys stable."""
    used = {int(item["key"][1:]) for item in items if item.get("key")}
    next_number = max(used, default=0) + 1
    for item in items:
        if not item.get("key"):
            item["key"] = f"{prefix}{next_number}"
            next_number += 1
    return items


def content_from_forms(*, plan: dict, outcomes: list[dict], hypotheses: list[dict], investigators: list[dict]) -> dict:
    """Build draft content from cleaned form data (deleted formset rows already removed)."""
    content = empty_content()
    for field in TEXT_FIELDS:
        content[field] = (plan.get(field) or "").strip()
    content["design"] = {field: plan.get(field) or "" for field in DESIGN_FIELDS}
    content["sample_size"] = {key: _none_if_blank(plan.get(field)) for field, key in SAMPLE_SIZE_FIELDS.items()}
    for text_key in ("stopping_rule", "justification", "power_design", "sides"):
        content["sample_size"][text_key] = content["sample_size"][text_key] or ""
    content["dates"] = {field: _iso(plan.get(field)) for field in DATE_FIELDS}
    content["outcomes"] = assign_keys(
        [{field: row.get(field) or "" for field in OUTCOME_FIELDS} for row in outcomes], "O"
    )
    content["hypotheses"] = assign_keys(
        [
            {field: (row.get(field) if field == "alpha" else row.get(field) or "") for field in HYPOTHESIS_FIELDS}
            for row in hypotheses
        ],
        "H",
    )
    content["investigators"] = [{field: row.get(field) or "" for field in INVESTIGATOR_FIELDS} for row in investigators]
    return content


def plan_initial(content: dict) -> dict[str, Any]:
    """Initial data for PlanForm from stored content (the inverse of content_from_forms)."""
    initial = {field: content.get(field, "") for field in TEXT_FIELDS}
    initial.update({field: content.get("design", {}).get(field, "") for field in DESIGN_FIELDS})
    sample_size = content.get("sample_size", {})
    initial.update({field: sample_size.get(key) for field, key in SAMPLE_SIZE_FIELDS.items()})
    for field in DATE_FIELDS:
        value = content.get("dates", {}).get(field)
        initial[field] = dt.date.fromisoformat(value) if value else None
    return initial


def outcome_choices(outcomes: list[dict]) -> list[tuple[str, str]]:
    return [(item["key"], f"{item['key']} · {item.get('name') or 'unnamed'}") for item in outcomes if item.get("key")]


def plan_problems(content: dict) -> list[str]:
    """What must be added before this plan can be sealed. An empty list means it can be sealed."""
    problems = []
    if not content.get("title", "").strip():
        problems.append("Give the study a title.")
    hypotheses = content.get("hypotheses", [])
    outcomes = content.get("outcomes", [])
    if not hypotheses:
        problems.append("Add at least one hypothesis: a plan without a hypothesis has nothing to test.")
    if not any(item.get("role") == OutcomeRole.PRIMARY for item in outcomes):
        problems.append("Mark at least one outcome as primary: it is what the study will be judged on.")
    outcome_keys = {item["key"] for item in outcomes}
    for item in hypotheses:
        label = item.get("key") or "A hypothesis"
        if not item.get("statement", "").strip():
            problems.append(f"{label} has no statement.")
        if not item.get("outcome"):
            problems.append(f"{label}: choose the outcome it is tested on.")
        elif item["outcome"] not in outcome_keys:
            problems.append(f"{label} is tested on outcome {item['outcome']}, which is no longer in the plan.")
        if not item.get("test_family"):
            problems.append(f"{label}: choose the test that will be used.")
        if item.get("alpha") is None:
            problems.append(f"{label}: give the alpha level (for example 0.05).")
    if not content.get("sample_size", {}).get("planned_n"):
        problems.append("Give the planned sample size (N).")
    dates = content.get("dates", {})
    if not dates.get("collection_start"):
        problems.append("Give the planned start of data collection.")
    if not dates.get("completion"):
        problems.append("Give the expected completion date (when results are due).")
    return problems


def sealed_payload(
    *,
    content: dict,
    study_code: str,
    version: int,
    computed: dict[str, Any] | None,
    warnings: list[str],
    amendment: dict[str, Any] | None,
) -> dict[str, Any]:
    payload = {
        "schema": PLAN_SCHEMA,
        "study": study_code,
        "version": version,
        **content,
        "computed": computed or {},
        "warnings": warnings,
    }
    if amendment is not None:
        payload["amendment"] = amendment
    return payload
