"""The test builders still produce the sealed shapes the services write.

The deviation rules read sealed payloads, so a builder that drifted from
ledger/plans/content.py or ledger/results/content.py would let the rule tests pass on a shape the
application no longer writes.
"""

from __future__ import annotations

from ledger.plans.content import sealed_payload
from ledger.results.content import result_payload as sealed_result_payload
from ledger.results.content import row_payload as sealed_row_payload
from tests.compare.builders import plan_payload, result_payload, row_payload
from tests.factories import REPORT_AS_PLANNED, complete_plan, result_row


def _real_plan() -> dict:
    return sealed_payload(
        content=complete_plan(), study_code="Q3T8ZK", version=1, computed={}, warnings=[], amendment=None
    )


def _key_shape(value):
    """Nested key structure, ignoring values: dicts by key, lists by their first item."""
    if isinstance(value, dict):
        return {key: _key_shape(item) for key, item in value.items()}
    if isinstance(value, list):
        return [_key_shape(value[0])] if value else []
    return None


def test_plan_builder_has_the_sealed_plan_shape():
    assert _key_shape(plan_payload()) == _key_shape(_real_plan())


def test_row_builder_has_the_sealed_row_shape():
    real = sealed_row_payload({**result_row(), "statistic_decimals": 2}, plan=_real_plan(), key="R1")
    assert _key_shape(row_payload()) == _key_shape(real)


def test_result_builder_has_the_sealed_result_shape():
    plan = _real_plan()
    real = sealed_result_payload(
        study_code="Q3T8ZK",
        plan_version=1,
        plan_entry="ab" * 32,
        rows=[sealed_row_payload({**result_row(), "statistic_decimals": 2}, plan=plan, key="R1")],
        report=REPORT_AS_PLANNED,
    )
    built = result_payload(rows=[row_payload()])
    assert _key_shape(built) == _key_shape(real)
