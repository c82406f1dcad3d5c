"""The result document: initial rows from the sealed plan, and the sealed payload.

    rows: [{key, hypothesis, outcome, outcome_name, reported_as, direction, test_family,
            test_description, sides, alpha, multiplicity,
            statistic: {kind, value, df1, df2, decimals} | null, p_reported,
            effect: {kind, value, ci_low, ci_high} | null,
            counts: {events_1, total_1, events_2, total_2}   (only when a 2x2 table was given),
            n_analysed, verdict, comment}]
    stopping_rule_followed, stopping_note, exclusions_as_planned, exclusions_applied, summary

``hypothesis`` and ``outcome`` hold plan keys ("" when the row has none, or reports an outcome
that is not in the plan, named in ``outcome_name``). ``counts`` was added later and is absent,
not null, from a row without a 2x2 table, so rows sealed before it keep exactly their shape.
"""

from __future__ import annotations

from typing import Any

from ledger.plans.vocabulary import OutcomeRole

RESULT_SCHEMA = "forebook.result/1"
# The outcome choice for a row that reports an outcome the plan did not register.
UNPLANNED = "__unplanned__"
ROW_TEXT_FIELDS = (
    "hypothesis",
    "reported_as",
    "direction",
    "test_family",
    "test_description",
    "sides",
    "multiplicity",
    "p_reported",
    "verdict",
    "comment",
)


def initial_rows(plan: dict[str, Any]) -> list[dict[str, Any]]:
    """One row per registered hypothesis, then one per outcome no hypothesis is tested on."""
    outcomes = {item["key"]: item for item in plan.get("outcomes", [])}
    rows = []
    covered = set()
    for hypothesis in plan.get("hypotheses", []):
        outcome = outcomes.get(hypothesis.get("outcome"), {})
        covered.add(outcome.get("key"))
        rows.append(
            {
                "hypothesis": hypothesis["key"],
                "outcome": outcome.get("key", ""),
                "reported_as": outcome.get("role", OutcomeRole.PRIMARY),
                "direction": hypothesis.get("direction", ""),
                "test_family": hypothesis.get("test_family", ""),
                "test_description": hypothesis.get("test_description", ""),
                "sides": hypothesis.get("sides", "two"),
                "alpha": hypothesis.get("alpha"),
                "multiplicity": hypothesis.get("multiplicity", "none"),
            }
        )
    for key, outcome in outcomes.items():
        if key not in covered:
            rows.append(
                {
                    "hypothesis": "",
                    "outcome": key,
                    "reported_as": outcome.get("role"),
                    "direction": "differ",
                    "sides": "two",
                    "alpha": 0.05,
                    "multiplicity": "none",
                }
            )
    return rows


def row_payload(cleaned: dict[str, Any], *, plan: dict[str, Any], key: str) -> dict[str, Any]:
    outcomes = {item["key"]: item for item in plan.get("outcomes", [])}
    planned = cleaned["outcome"] != UNPLANNED
    row = {field: cleaned.get(field) or "" for field in ROW_TEXT_FIELDS}
    row.update(
        key=key,
        outcome=cleaned["outcome"] if planned else "",
        outcome_name=outcomes[cleaned["outcome"]]["name"] if planned else cleaned["outcome_name"].strip(),
        alpha=cleaned["alpha"],
        n_analysed=cleaned["n_analysed"],
        statistic=None,
        effect=None,
    )
    if cleaned.get("statistic_kind"):
        row["statistic"] = {
            "kind": cleaned["statistic_kind"],
            "value": cleaned["statistic"],
            "df1": cleaned.get("df1"),
            "df2": cleaned.get("df2"),
            # As typed: "2.20" stands for every value that rounds to it (see ledger.results.checks).
            "decimals": cleaned.get("statistic_decimals"),
        }
    if cleaned.get("effect_kind"):
        row["effect"] = {
            "kind": cleaned["effect_kind"],
            "value": cleaned.get("effect_value"),
            "ci_low": cleaned.get("ci_low"),
            "ci_high": cleaned.get("ci_high"),
        }
    if cleaned.get("total_1") is not None:
        # ResultRowForm accepts the four counts together or not at all.
        row["counts"] = {name: cleaned[name] for name in ("events_1", "total_1", "events_2", "total_2")}
    return row


def primary_row(rows: list[dict[str, Any]]) -> dict[str, Any]:
    """The row whose verdict counts as the study's outcome: the first one reported as primary."""
    for row in rows:
        if row.get("reported_as") == OutcomeRole.PRIMARY:
            return row
    return rows[0]


def result_payload(
    *,
    study_code: str,
    plan_version: int,
    plan_entry: str,
    rows: list[dict[str, Any]],
    report: dict[str, Any],
    checks: list[dict[str, Any]] | None = None,
    findings: list[dict[str, Any]] | None = None,
) -> dict[str, Any]:
    return {
        "schema": RESULT_SCHEMA,
        "study": study_code,
        "plan_version": plan_version,
        "plan_entry": plan_entry,
        "rows": rows,
        "stopping_rule_followed": report["stopping_rule_followed"],
        "stopping_note": report.get("stopping_note", ""),
        "exclusions_as_planned": report["exclusions_as_planned"],
        "exclusions_applied": report.get("exclusions_applied", ""),
        "summary": report.get("summary", ""),
        "checks": checks or [],
        "findings": findings or [],
    }
