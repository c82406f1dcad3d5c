"""Results are held against the sealed plan when they are sealed; major deviations need explanations."""

import datetime as dt
import json

import pytest

from ledger.chain.models import Entry, EntryKind
from ledger.core.demo import build_demo
from ledger.core.errors import ActionRefused
from ledger.plans.models import Study
from ledger.results import services
from ledger.results.comparison import study_findings
from tests.factories import REPORT_AS_PLANNED, collecting_study, result_row

pytestmark = pytest.mark.django_db

# The primary outcome O1 goes unreported; the registered secondary outcome O2 is reported as primary.
SWITCHED = result_row(hypothesis="", outcome="O2", reported_as="primary")


def test_a_switched_primary_outcome_cannot_be_sealed_unexplained(investigator):
    study = collecting_study(member=investigator)
    with pytest.raises(ActionRefused) as refusal:
        services.result_record(member=investigator, study=study, rows=[SWITCHED], report=REPORT_AS_PLANNED)
    assert refusal.value.field == "explanations"
    assert "O1" in refusal.value.message
    assert not Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).exists()


def test_explanations_are_sealed_as_entries_linked_to_their_findings(investigator):
    study = collecting_study(member=investigator)
    preview = services.result_preview(study=study, rows=[SWITCHED], report=REPORT_AS_PLANNED)
    required = preview.unexplained({})
    assert {f.code for f in required} >= {"PRIMARY_OUTCOME_DROPPED", "PRIMARY_OUTCOME_ADDED"}
    explanations = {f.identity: f"Because of {f.code.lower()}." for f in required}
    result = services.result_record(
        member=investigator, study=study, rows=[SWITCHED], report=REPORT_AS_PLANNED, explanations=explanations
    )
    sealed = json.loads(result.entry.payload)
    assert {f["code"] for f in sealed["findings"]} >= {"PRIMARY_OUTCOME_DROPPED", "PRIMARY_OUTCOME_ADDED"}
    explained = [json.loads(e.payload) for e in Entry.objects.filter(study=study, kind=EntryKind.FINDING_EXPLAINED)]
    assert {e["finding"] for e in explained} == set(explanations)
    assert all(e["result_entry"] == result.entry.entry_hash for e in explained)
    on_page = {item.finding.identity: item for item in study_findings(study=study)}
    assert all(not on_page[identity].unexplained for identity in explanations)


def test_a_faithful_null_result_has_no_findings(investigator):
    study = collecting_study(member=investigator)
    rows = [result_row(), result_row(hypothesis="", outcome="O2", reported_as="secondary", direction="increase")]
    result = services.result_record(member=investigator, study=study, rows=rows, report=REPORT_AS_PLANNED)
    assert json.loads(result.entry.payload)["findings"] == []


def test_a_retrospective_registration_can_be_explained_later(investigator):
    study = collecting_study(member=investigator, started_on=dt.date.today() - dt.timedelta(days=30))
    (item,) = study_findings(study=study)
    assert item.finding.code == "RETROSPECTIVE_REGISTRATION" and item.unexplained
    services.finding_explain(member=investigator, study=study, identity=item.finding.identity, text="Pilot data.")
    (item,) = study_findings(study=study)
    assert not item.unexplained
    with pytest.raises(ActionRefused):
        services.finding_explain(member=investigator, study=study, identity="NOT_A_FINDING:study", text="x")


def test_the_demo_switched_outcome_study_is_flagged_major():
    lab, _studies, _created = build_demo()
    study = Study.objects.get(lab=lab, title__startswith="Font weight")
    codes = {(item.finding.code, item.finding.severity.value) for item in study_findings(study=study)}
    assert ("PRIMARY_OUTCOME_DROPPED", "major") in codes
    assert ("PRIMARY_OUTCOME_ADDED", "major") in codes


def test_the_result_form_shows_findings_before_sealing(client, investigator):
    study = collecting_study(member=investigator)
    client.force_login(investigator.user)
    url = f"/labs/{investigator.lab.slug}/studies/{study.code}/results/"
    form = {
        "rows-TOTAL_FORMS": "1",
        "rows-INITIAL_FORMS": "0",
        "rows-MIN_NUM_FORMS": "0",
        "rows-MAX_NUM_FORMS": "100",
        **{f"rows-0-{name}": "" if value is None else str(value) for name, value in SWITCHED.items()},
        "report-stopping_rule_followed": "yes",
        "report-exclusions_as_planned": "yes",
        "preview": "1",
    }
    page = client.post(url, form)
    assert page.status_code == 200
    text = page.content.decode()
    assert "PRIMARY_OUTCOME_DROPPED" in text and "explain:PRIMARY_OUTCOME_DROPPED:O1" in text
    study.refresh_from_db()
    assert study.state == "collecting"
