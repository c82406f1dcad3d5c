"""Results and publication links through their services. A null result is sealed like any other."""
from __future__ import annotations

import json

import pytest
from django.core.exceptions import PermissionDenied

from ledger.chain.models import Entry, EntryKind
from ledger.chain.verification import verify_ledger
from ledger.core.errors import ActionRefused
from ledger.plans import services as plan_services
from ledger.plans.models import PlanVersion, Study, StudyState
from ledger.results import services
from ledger.results.content import UNPLANNED
from ledger.results.models import PublicationLink, ResultReport
from ledger.results.selectors import recent_results
from tests.factories import (
    REPORT_AS_PLANNED,
    collecting_study,
    complete_plan,
    enrolled_study,
    reported_study,
    result_row,
    sealed_study,
)

pytestmark = pytest.mark.django_db

# A positive result whose numbers support it: t(126) = 3.12 gives two-sided p = .002 (the factory's
# null row has t(126) = 0.84, p = .40). Results whose verdict contradicts their own numbers are
# deviations that must be explained, so each fixture row is internally consistent.
SUPPORTED_NUMBERS = {"statistic": 3.12, "p_reported": "0.002", "effect_value": 0.55, "ci_low": 0.2, "ci_high": 0.9}
OPPOSITE_NUMBERS = {"statistic": -3.12, "p_reported": "0.002", "effect_value": -0.55, "ci_low": -0.9, "ci_high": -0.2}


def shape(value):
    """The structure of a JSON value: keys and list lengths kept, every scalar replaced by its kind."""
    if isinstance(value, dict):
        return {key: shape(item) for key, item in value.items()}
    if isinstance(value, list):
        return [shape(item) for item in value]
    if isinstance(value, bool) or value is None:
        return value
    return "number" if isinstance(value, int | float) else type(value).__name__


def record(member, study: Study, rows: list[dict] | None = None) -> ResultReport:
    return services.result_record(member=member, study=study, rows=rows or [result_row()], report=REPORT_AS_PLANNED)


def kind_entries(study: Study, kind: EntryKind) -> list[Entry]:
    return list(Entry.objects.filter(study=study, kind=kind))


# --- recording results -------------------------------------------------------------------------------


def test_results_are_sealed_against_the_plan_version_they_test(investigator):
    study = collecting_study(member=investigator)
    result = record(investigator, study)
    [entry] = kind_entries(study, EntryKind.RESULT_RECORDED)
    plan_entry = PlanVersion.objects.get(study=study, number=1).entry
    payload = json.loads(entry.payload)
    assert (payload["schema"], payload["study"], payload["plan_version"], payload["plan_entry"]) == (
        "forebook.result/1", study.code, 1, plan_entry.entry_hash,
    )
    [row] = payload["rows"]
    assert row["key"] == "R1"
    assert (row["hypothesis"], row["outcome"], row["outcome_name"], row["verdict"]) == (
        "H1", "O1", "Estimation error", "null",
    )
    # Compared field by field: the statistic and effect may gain fields, these must stay as entered.
    assert {key: row["statistic"][key] for key in ("kind", "value", "df1", "df2")} == {
        "kind": "t", "value": 0.84, "df1": 126.0, "df2": None,
    }
    assert {key: row["effect"][key] for key in ("kind", "value", "ci_low", "ci_high")} == {
        "kind": "d", "value": 0.15, "ci_low": -0.2, "ci_high": 0.5,
    }
    assert (payload["stopping_rule_followed"], payload["exclusions_as_planned"]) == (True, True)
    assert entry.author_id == investigator.user_id
    assert (result.entry, result.primary_verdict, result.n_analysed, result.recorded_at) == (
        entry, "null", 128, entry.created_at,
    )
    study.refresh_from_db()
    assert (study.state, study.reported_at) == (StudyState.REPORTED, entry.created_at)
    assert verify_ledger().ok


def test_results_after_an_amendment_refer_to_the_amended_plan(investigator):
    study = sealed_study(member=investigator)
    plan_services.plan_amendment_begin(member=investigator, study=study)
    plan_services.plan_draft_save(member=investigator, study=study, content=complete_plan(title="Amended"))
    study.refresh_from_db()
    plan_services.plan_seal(
        member=investigator, study=study, revision=study.draft.revision, amendment_reason="Retitled."
    )
    plan_services.collection_start(member=investigator, study=study, started_on=study.created_at.date())
    result = record(investigator, study)
    payload = json.loads(result.entry.payload)
    assert payload["plan_version"] == 2
    assert payload["plan_entry"] == PlanVersion.objects.get(study=study, number=2).entry.entry_hash


def test_a_null_result_is_recorded_exactly_like_a_positive_one(investigator):
    null_study = collecting_study(member=investigator, title="Null study")
    positive_study = collecting_study(member=investigator, title="Positive study")
    null_result = record(investigator, null_study, [result_row(verdict="null")])
    positive_result = record(investigator, positive_study, [result_row(verdict="supported", **SUPPORTED_NUMBERS)])

    assert null_result.entry.kind == positive_result.entry.kind == EntryKind.RESULT_RECORDED
    null_payload, positive_payload = json.loads(null_result.entry.payload), json.loads(positive_result.entry.payload)
    # Same fields, same checks, same findings: a null result meets no extra hurdle and loses nothing.
    assert shape(null_payload) == shape(positive_payload)
    assert [c["verdict"] for c in null_payload["checks"]] == [c["verdict"] for c in positive_payload["checks"]]
    assert null_payload["findings"] == positive_payload["findings"]
    assert (null_payload["rows"][0]["verdict"], positive_payload["rows"][0]["verdict"]) == ("null", "supported")
    for study in (null_study, positive_study):
        study.refresh_from_db()
        assert study.state == StudyState.REPORTED
    assert (null_result.primary_verdict, positive_result.primary_verdict) == ("null", "supported")
    assert {r.study_id for r in recent_results(lab=investigator.lab)} == {null_study.pk, positive_study.pk}


def test_the_study_outcome_is_the_first_row_reported_as_primary(investigator):
    study = collecting_study(member=investigator)
    result = record(investigator, study, [
        result_row(hypothesis="", outcome="O2", reported_as="secondary", verdict="supported", n_analysed=120,
                   **SUPPORTED_NUMBERS),
        result_row(verdict="opposite", n_analysed=126, **OPPOSITE_NUMBERS),
    ])
    assert (result.primary_verdict, result.n_analysed) == ("opposite", 126)


def test_an_outcome_not_in_the_plan_is_sealed_under_its_own_name(investigator):
    study = collecting_study(member=investigator)
    result = record(investigator, study, [
        result_row(),
        result_row(hypothesis="", outcome=UNPLANNED, outcome_name="  Mood after the session ", reported_as="secondary"),
    ])
    planned, unplanned = json.loads(result.entry.payload)["rows"]
    assert (planned["outcome"], planned["outcome_name"]) == ("O1", "Estimation error")
    assert (unplanned["outcome"], unplanned["outcome_name"]) == ("", "Mood after the session")


def test_results_need_at_least_one_row(investigator):
    study = collecting_study(member=investigator)
    with pytest.raises(ActionRefused, match="A null result is a result"):
        services.result_record(member=investigator, study=study, rows=[], report=REPORT_AS_PLANNED)
    assert kind_entries(study, EntryKind.RESULT_RECORDED) == []


@pytest.mark.parametrize(
    ("builder", "message"),
    [
        pytest.param(enrolled_study, "study that is draft", id="draft"),
        pytest.param(sealed_study, "Record the start of data collection", id="sealed"),
    ],
)
def test_results_are_refused_before_collection(investigator, builder, message):
    study = builder(member=investigator)
    with pytest.raises(ActionRefused, match=message):
        record(investigator, study)
    assert Entry.objects.filter(kind=EntryKind.RESULT_RECORDED).count() == 0
    assert Study.objects.get(pk=study.pk).state == study.state


def test_results_are_refused_for_a_withdrawn_study(investigator):
    study = collecting_study(member=investigator)
    plan_services.study_withdraw(member=investigator, study=study, reason="Recruitment failed.")
    with pytest.raises(ActionRefused, match="study that is withdrawn"):
        record(investigator, study)
    assert kind_entries(study, EntryKind.RESULT_RECORDED) == []


def test_a_double_submission_seals_one_result(investigator):
    study = collecting_study(member=investigator)
    record(investigator, study)
    with pytest.raises(ActionRefused, match="already sealed"):
        record(investigator, study, [result_row(verdict="supported")])
    [entry] = kind_entries(study, EntryKind.RESULT_RECORDED)
    assert json.loads(entry.payload)["rows"][0]["verdict"] == "null"
    assert ResultReport.objects.filter(study=study).count() == 1


@pytest.mark.parametrize("stranger_fixture", ["other_investigator", "reader"])
def test_only_the_studys_investigators_and_managers_record_results(request, investigator, manager, stranger_fixture):
    study = collecting_study(member=investigator)
    with pytest.raises(PermissionDenied):
        record(request.getfixturevalue(stranger_fixture), study)
    assert kind_entries(study, EntryKind.RESULT_RECORDED) == []
    assert record(manager, study).entry.author_id == manager.user_id


# --- publication links -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "builder", [sealed_study, collecting_study, reported_study], ids=["sealed", "collecting", "reported"]
)
def test_a_published_doi_is_sealed(investigator, builder):
    study = builder(member=investigator)
    link = services.publication_link_add(member=investigator, study=study, status="published", doi="10.1000/xyz123")
    [entry] = kind_entries(study, EntryKind.PUBLICATION_LINKED)
    assert json.loads(entry.payload) == {
        "schema": "forebook.publication/1", "study": study.code, "status": "published", "doi": "10.1000/xyz123",
    }
    assert (link.entry, link.doi, link.status, entry.author_id) == (
        entry, "10.1000/xyz123", "published", investigator.user_id,
    )


def test_not_submitted_is_sealed_without_a_doi(investigator):
    study = reported_study(member=investigator)
    link = services.publication_link_add(
        member=investigator, study=study, status="not_submitted", doi="10.1000/ignored"
    )
    assert link.doi == ""
    assert json.loads(link.entry.payload)["doi"] == ""


def test_published_without_a_doi_is_refused(investigator):
    study = reported_study(member=investigator)
    with pytest.raises(ActionRefused) as refusal:
        services.publication_link_add(member=investigator, study=study, status="published", doi="")
    assert refusal.value.field == "doi"
    assert kind_entries(study, EntryKind.PUBLICATION_LINKED) == []


def test_a_draft_study_has_no_publication_to_link(investigator):
    study = enrolled_study(member=investigator)
    with pytest.raises(ActionRefused, match="Seal the plan first"):
        services.publication_link_add(member=investigator, study=study, status="not_submitted")
    assert not PublicationLink.objects.exists()
    assert Entry.objects.count() == 0


def test_a_reader_cannot_link_a_publication(investigator, reader):
    study = reported_study(member=investigator)
    with pytest.raises(PermissionDenied):
        services.publication_link_add(member=reader, study=study, status="not_submitted")
    assert kind_entries(study, EntryKind.PUBLICATION_LINKED) == []
