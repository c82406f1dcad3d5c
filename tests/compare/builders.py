"""Sealed-shape plan and result payloads for the deviation-rule tests.

The shapes mirror ledger/plans/content.py (sealed_payload) and ledger/results/content.py
(row_payload, result_payload); test_payload_shapes.py checks that they still do. By default the
result reproduces the plan exactly: H1 on the primary outcome O1 and H2 on the secondary outcome
O2, both null results whose reported p matches its statistic, so the defaults yield no finding.
The scenario (a hum and line-length estimates) is invented.
"""

from __future__ import annotations

import copy
import datetime as dt
from typing import Any

from scipy import stats

from ledger.compare import AmendmentSeal, ComparisonContext

PLANNED_N = 128
# Calendar of the default scenario: sealed, then collection starts, then completion.
FIRST_SEALED_AT = dt.datetime(2030, 1, 5, 10, 30, tzinfo=dt.UTC)
COLLECTION_STARTED_ON = dt.date(2030, 1, 10)
COMPLETION = dt.date(2030, 9, 30)
TODAY = dt.date(2030, 11, 2)


def _hypothesis(key: str, outcome: str, **overrides: Any) -> dict[str, Any]:
    hypothesis = {
        "key": key,
        "statement": f"{key}: the hum raises the outcome.",
        "direction": "increase",
        "outcome": outcome,
        "test_family": "t_independent",
        "test_description": "",
        "alpha": 0.05,
        "sides": "two",
        "multiplicity": "none",
        "covariates": "",
    }
    hypothesis.update(overrides)
    return hypothesis


def plan_payload(*, h1: dict | None = None, h2: dict | None = None, **overrides: Any) -> dict[str, Any]:
    """A sealed plan (version 1). ``h1`` / ``h2`` override fields of the two hypotheses."""
    plan = {
        "schema": "forebook.plan/1",
        "study": "Q3T8ZK",
        "version": 1,
        "title": "Humming and line-length estimates",
        "research_question": "Does a low hum bias estimates of line length?",
        "hypotheses": [_hypothesis("H1", "O1", **(h1 or {})), _hypothesis("H2", "O2", **(h2 or {}))],
        "outcomes": [
            {
                "key": "O1",
                "name": "Estimation error",
                "role": "primary",
                "measure": "Percent error",
                "unit": "%",
                "timepoint": "Session end",
            },
            {
                "key": "O2",
                "name": "Confidence",
                "role": "secondary",
                "measure": "1-7 rating",
                "unit": "",
                "timepoint": "Session end",
            },
        ],
        "design": {"arms": "Hum vs silence", "allocation": "randomised", "blinding": "assessors"},
        "sample_size": {
            "planned_n": PLANNED_N,
            "stopping_rule": "Stop at N = 128.",
            "power_design": "t_independent",
            "effect_size": 0.5,
            "alpha": 0.05,
            "target_power": 0.8,
            "sides": "two",
            "groups": None,
            "chi_df": None,
            "justification": "Pilot estimate.",
        },
        "exclusion_rules": "Exclude sessions with more than 20% missing trials.",
        "support_criterion": "p < .05 in the predicted direction.",
        "dates": {"collection_start": "2030-01-10", "completion": COMPLETION.isoformat(), "embargo_until": ""},
        "investigators": [{"name": "Given Family", "orcid": "0000-0002-1825-0097"}],
        "computed": {},
        "warnings": [],
    }
    plan.update(copy.deepcopy(overrides))
    return plan


def two_sided_t_p(value: float, df: float) -> float:
    """Reference two-sided p of a t statistic, straight from SciPy's t distribution."""
    return float(2 * stats.t.sf(abs(value), df))


def row_payload(key: str = "R1", **overrides: Any) -> dict[str, Any]:
    """A sealed result row: by default a null result on H1 / O1, t(126) = 0.84 with its own p.

    ``t`` and ``df`` set a t statistic typed to 2 decimals, with p_reported computed by SciPy
    unless given; ``statistic=None`` or ``effect=None`` drop them.
    """
    t_value, df = overrides.pop("t", 0.84), overrides.pop("df", PLANNED_N - 2.0)
    row = {
        "key": key,
        "hypothesis": "H1",
        "outcome": "O1",
        "outcome_name": "Estimation error",
        "reported_as": "primary",
        "direction": "increase",
        "test_family": "t_independent",
        "test_description": "",
        "sides": "two",
        "alpha": 0.05,
        "multiplicity": "none",
        "statistic": {"kind": "t", "value": t_value, "df1": df, "df2": None, "decimals": 2},
        "p_reported": f"{two_sided_t_p(t_value, df):.3f}",
        "effect": {"kind": "d", "value": round(2 * t_value / df**0.5, 2), "ci_low": None, "ci_high": None},
        "n_analysed": PLANNED_N,
        "verdict": "null",
        "comment": "",
    }
    row.update(overrides)
    return row


def secondary_row(key: str = "R2", **overrides: Any) -> dict[str, Any]:
    """The default row of H2 on the secondary outcome O2."""
    fields = {"hypothesis": "H2", "outcome": "O2", "outcome_name": "Confidence", "reported_as": "secondary"}
    return row_payload(key, **{**fields, **overrides})


def result_payload(*, rows: list[dict] | None = None, **report: Any) -> dict[str, Any]:
    """A sealed result; ``report`` overrides the stopping and exclusion answers."""
    result = {
        "schema": "forebook.result/1",
        "study": "Q3T8ZK",
        "plan_version": 1,
        "plan_entry": "ab" * 32,
        "rows": rows if rows is not None else [row_payload(), secondary_row()],
        "stopping_rule_followed": True,
        "stopping_note": "",
        "exclusions_as_planned": True,
        "exclusions_applied": "",
        "summary": "",
        "checks": [],
        "findings": [],
    }
    result.update(report)
    return result


def context(**overrides: Any) -> ComparisonContext:
    values = {
        "today": TODAY,
        "first_sealed_at": FIRST_SEALED_AT,
        "collection_started_on": COLLECTION_STARTED_ON,
        "amendments": (),
        "result_exists": True,
    }
    values.update(overrides)
    return ComparisonContext(**values)


def amendment(version: int, sealed_on: dt.date) -> AmendmentSeal:
    return AmendmentSeal(version=version, sealed_at=dt.datetime.combine(sealed_on, dt.time(15, 0), tzinfo=dt.UTC))
