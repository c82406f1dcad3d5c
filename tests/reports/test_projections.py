"""The finding projections on ResultReport that the report counts in SQL (major findings, and the
findings that need an explanation), filled when results are sealed and by migration results.0002.

No external computation here: the expected values are read from the sealed payload itself.
"""

import importlib
import json

import pytest
from django.apps import apps

from ledger.results.models import ResultReport
from tests.reports.builders import NULL_ROW, SWITCHED_NULL_ROW, reported, today

pytestmark = pytest.mark.django_db


def from_payload(result: ResultReport) -> tuple[int, list[str]]:
    findings = json.loads(result.entry.payload)["findings"]
    major = sum(1 for finding in findings if finding["severity"] == "major")
    to_explain = [f"{finding['code']}:{finding['subject']}" for finding in findings if finding["explanation_required"]]
    return major, to_explain


def test_sealing_fills_the_projections_from_the_sealed_findings(investigator):
    switched = reported(member=investigator, row=SWITCHED_NULL_ROW, started_on=today())
    faithful = reported(member=investigator, row=NULL_ROW)
    switched_result = ResultReport.objects.select_related("entry").get(study=switched)
    major, to_explain = from_payload(switched_result)
    assert major >= 2 and "PRIMARY_OUTCOME_DROPPED:O1" in to_explain
    assert (switched_result.major_findings, switched_result.findings_requiring_explanation) == (major, to_explain)
    faithful_result = ResultReport.objects.get(study=faithful)
    assert (faithful_result.major_findings, faithful_result.findings_requiring_explanation) == (0, [])


def test_the_migration_fills_results_sealed_before_the_projections_existed(investigator):
    study = reported(member=investigator, row=SWITCHED_NULL_ROW)
    ResultReport.objects.filter(study=study).update(major_findings=0, findings_requiring_explanation=[])
    migration = importlib.import_module("ledger.results.migrations.0002_result_finding_projections")
    migration.fill_from_sealed_findings(apps, schema_editor=None)
    result = ResultReport.objects.select_related("entry").get(study=study)
    assert (result.major_findings, result.findings_requiring_explanation) == from_payload(result)
    assert result.major_findings >= 2
