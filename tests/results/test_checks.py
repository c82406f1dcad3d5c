"""Reported p-values are recomputed from their statistics; disagreements must be confirmed and are sealed."""

import json

import pytest
from scipy import stats as sps

from ledger.core.errors import ActionRefused
from ledger.plans.models import StudyState
from ledger.results import services
from ledger.results.checks import reported_decimals, row_p_check
from tests.factories import REPORT_AS_PLANNED, collecting_study, result_row


def sealed_shape(kind="t", value=2.20, df1=10, p="0.03", decimals=2, n=12):
    return {
        "key": "R1",
        "statistic": {"kind": kind, "value": value, "df1": df1, "df2": None, "decimals": decimals},
        "p_reported": p,
        "n_analysed": n,
        "sides": "two",
        "alpha": 0.05,
    }


def test_decimals_are_read_as_typed():
    assert reported_decimals("2.20") == 2
    assert reported_decimals("-4.0621") == 4
    assert reported_decimals("3") == 0
    assert reported_decimals("abc") is None


def test_a_matching_report_is_consistent():
    # t(10) = 2.228 is the two-sided .05 critical value (NIST/SEMATECH e-Handbook, t table; memory),
    # so a reported p = .05 to two decimals must agree.
    check = row_p_check(sealed_shape(value=2.228, decimals=3, p="0.05"))
    assert check["verdict"] == "consistent"
    assert check["recomputed_p"] == pytest.approx(2 * sps.t.sf(2.228, 10), rel=1e-12)


def test_a_report_on_the_other_side_of_alpha_changes_the_decision():
    # t(10) = 2.20 gives p = 0.052 (scipy), yet "p = .03" claims significance.
    assert 2 * sps.t.sf(2.20, 10) > 0.05
    check = row_p_check(sealed_shape(p="0.03"))
    assert check["verdict"] == "decision_changing"


def test_rows_without_a_statistic_are_not_checked():
    assert row_p_check({**sealed_shape(), "statistic": None}) is None
    assert row_p_check({**sealed_shape(), "p_reported": ""}) is None


@pytest.mark.django_db
def test_a_decision_changing_p_must_be_confirmed_and_the_check_is_sealed(investigator):
    study = collecting_study(member=investigator)
    # Student's sleep data, paired t = -4.0621, df = 9, p = 0.002833 (R's t.test output, memory);
    # reported here wrongly as "p = .20".
    row = result_row(statistic=-4.0621, df1=9.0, p_reported="p = .20", n_analysed=10, verdict="null")
    with pytest.raises(ActionRefused) as refusal:
        services.result_record(member=investigator, study=study, rows=[row], report=REPORT_AS_PLANNED)
    assert refusal.value.field == "confirm_checks"
    study.refresh_from_db()
    assert study.state == StudyState.COLLECTING
    # The recomputed p is significant while the verdict says null: that finding needs its explanation too.
    preview = services.result_preview(study=study, rows=[row], report=REPORT_AS_PLANNED)
    explanations = {
        finding.identity: "Reported as printed by the analysis script." for finding in preview.unexplained({})
    }
    result = services.result_record(
        member=investigator,
        study=study,
        rows=[row],
        report=REPORT_AS_PLANNED,
        confirm_checks=True,
        explanations=explanations,
    )
    payload = json.loads(result.entry.payload)
    (check,) = payload["checks"]
    assert check["verdict"] == "decision_changing"
    assert check["confirmed"] is True
    assert check["recomputed_p"] == pytest.approx(2 * sps.t.sf(4.0621, 9), rel=1e-9)


@pytest.mark.django_db
def test_a_consistent_null_result_needs_no_confirmation(investigator):
    study = collecting_study(member=investigator)
    row = result_row(statistic=0.84, df1=126.0, p_reported="0.40")
    assert 0.395 <= 2 * sps.t.sf(0.84, 126) < 0.405
    result = services.result_record(member=investigator, study=study, rows=[row], report=REPORT_AS_PLANNED)
    (check,) = json.loads(result.entry.payload)["checks"]
    assert (check["verdict"], check["confirmed"]) == ("consistent", False)
