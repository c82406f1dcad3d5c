"""The API's endpoints: what a lab member's token reads and seals, and what it is refused."""

from __future__ import annotations

import hashlib
import json

import pytest
import rfc8785
from rest_framework.test import APIClient

from ledger.chain.models import Entry, EntryKind
from ledger.labs import services as lab_services
from ledger.plans import services as plan_services
from ledger.plans.models import Study, StudyState
from ledger.results.forms import ResultRowForm
from tests.api.conftest import REPORT_JSON, result_json, row_json, token_text
from tests.factories import (
    collecting_study,
    complete_plan,
    enrolled_study,
    reported_study,
    sealed_study,
)

pytestmark = pytest.mark.django_db


def results_url(study: Study) -> str:
    return f"/api/v1/studies/{study.code}/results/"


def documented_entry_hash(entry: dict) -> str:
    """The entry hash recomputed from the API's fields alone, as DEVELOPERS.md documents the preimage.

    Independent of ledger.chain.hashing: RFC 8785 serialisation by the `rfc8785` package (PyPI), SHA-256
    by hashlib.
    """
    header = {
        "v": 1,
        "seq": entry["seq"],
        "kind": entry["kind"],
        "lab": entry["lab_uid"],
        "study": entry["study_code"],
        "author": entry["author"],
        "created_at": entry["created_at"],
        "payload_sha256": entry["payload_sha256"],
        "prev": entry["prev_hash"],
    }
    return hashlib.sha256(rfc8785.dumps(header)).hexdigest()


# --- studies and plans ---------------------------------------------------------------------------------------


def test_the_study_list_shows_the_labs_studies_with_their_states_and_nothing_of_other_labs(
    api_as, investigator, other_investigator, outsider
):
    draft = enrolled_study(member=investigator, title="Still drafting")
    collecting = collecting_study(member=other_investigator, title="Collecting now")
    foreign = sealed_study(member=outsider, title="Another lab's study")

    body = api_as(investigator).get("/api/v1/studies/").json()

    states = {study["code"]: study["state"] for study in body["studies"]}
    assert states == {draft.code: "draft", collecting.code: "collecting"}
    assert foreign.code not in states
    mine = {study["code"]: study["can_record_results"] for study in body["studies"]}
    assert mine == {draft.code: True, collecting.code: False}


def test_the_study_list_filters_by_state_and_by_the_tokens_own_studies(api_as, investigator, other_investigator):
    own = collecting_study(member=investigator)
    theirs = collecting_study(member=other_investigator)
    client = api_as(investigator)

    only_mine = client.get("/api/v1/studies/", {"mine": "true"}).json()["studies"]
    collecting = client.get("/api/v1/studies/", {"state": "collecting"}).json()["studies"]
    refused = client.get("/api/v1/studies/", {"state": "finished"})

    assert [study["code"] for study in only_mine] == [own.code]
    assert {study["code"] for study in collecting} == {own.code, theirs.code}
    assert refused.status_code == 400
    assert "state" in refused.json()["problems"]


def test_a_sealed_plan_is_returned_as_the_exact_text_that_was_hashed(api_as, investigator):
    study = sealed_study(member=investigator)
    entry = Entry.objects.get(study=study, kind=EntryKind.PLAN_SEALED)

    body = api_as(investigator).get(f"/api/v1/studies/{study.code}/plan/").json()

    assert body["payload"] == entry.payload
    # The text is the RFC 8785 form of itself (checked with the reference package) and hashes to the entry's hash.
    assert rfc8785.dumps(json.loads(body["payload"])).decode() == body["payload"]
    assert hashlib.sha256(body["payload"].encode()).hexdigest() == body["entry"]["payload_sha256"]
    assert body["entry"]["entry_hash"] == entry.entry_hash
    assert (body["study"], body["version"], body["latest"]) == (study.code, 1, True)


def test_every_sealed_plan_version_can_be_read_and_a_missing_one_is_a_404(api_as, investigator):
    study = sealed_study(member=investigator)
    plan_services.plan_amendment_begin(member=investigator, study=study)
    content = complete_plan()
    content["sample_size"]["planned_n"] = 168
    draft = plan_services.plan_draft_save(member=investigator, study=study, content=content)
    plan_services.plan_seal(member=investigator, study=study, revision=draft.revision, amendment_reason="Larger N.")
    client = api_as(investigator)

    first = client.get(f"/api/v1/studies/{study.code}/plan/1/").json()
    latest = client.get(f"/api/v1/studies/{study.code}/plan/").json()
    missing = client.get(f"/api/v1/studies/{study.code}/plan/3/")

    assert (first["version"], first["latest"]) == (1, False)
    assert (latest["version"], latest["latest"]) == (2, True)
    assert json.loads(latest["payload"])["sample_size"]["planned_n"] == 168
    assert missing.status_code == 404
    assert "plan versions 1 to 2" in missing.json()["error"]


def test_a_draft_study_has_no_sealed_plan_to_read(api_as, investigator):
    study = enrolled_study(member=investigator)

    response = api_as(investigator).get(f"/api/v1/studies/{study.code}/plan/")

    assert response.status_code == 404
    assert "no sealed plan yet" in response.json()["error"]


# --- token scoping -----------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("method", "suffix"),
    [
        ("get", ""),
        ("get", "plan/"),
        ("get", "plan/1/"),
        ("post", "results/"),
        ("post", "results/preview/"),
        ("post", "publications/"),
    ],
)
def test_a_token_of_one_lab_gets_404_for_another_labs_study_like_for_a_made_up_code(
    api_as, investigator, outsider, method, suffix
):
    victim = collecting_study(member=investigator)
    made_up = "Z" * len(victim.code)
    assert not Study.objects.filter(code=made_up).exists()
    entries_before = Entry.objects.count()
    client = api_as(outsider)  # a manager, in another lab

    replies = [
        getattr(client, method)(f"/api/v1/studies/{code}/{suffix}", result_json(), format="json")
        for code in (victim.code, made_up)
    ]

    assert [reply.status_code for reply in replies] == [404, 404]
    assert replies[0].json() == replies[1].json()
    assert Entry.objects.count() == entries_before
    assert Study.objects.get(pk=victim.pk).state == StudyState.COLLECTING


def test_the_lab_entries_of_a_token_are_its_own_labs_only(api_as, investigator, outsider):
    own = sealed_study(member=investigator)
    sealed_study(member=outsider)

    entries = api_as(investigator).get("/api/v1/entries/").json()["entries"]

    assert {entry["lab_uid"] for entry in entries} == {str(own.lab.uid)}


def test_a_browser_session_does_not_authenticate_api_calls(client, investigator):
    client.force_login(investigator.user)

    response = client.get("/api/v1/studies/")

    assert response.status_code == 401
    assert "Authorization: Bearer" in response.json()["error"]
    assert response["WWW-Authenticate"].startswith("Bearer")


def test_token_calls_need_no_csrf_token(investigator):
    study = collecting_study(member=investigator)
    client = APIClient(enforce_csrf_checks=True)
    client.credentials(HTTP_AUTHORIZATION=f"Bearer {token_text(investigator)}")

    response = client.post(results_url(study), result_json(), format="json")

    assert response.status_code == 201


# --- recording results -------------------------------------------------------------------------------------


def test_a_null_result_is_sealed_and_the_study_is_reported(api_as, investigator):
    study = collecting_study(member=investigator)

    response = api_as(investigator).post(results_url(study), result_json(), format="json")

    assert response.status_code == 201
    body = response.json()
    entry = Entry.objects.get(study=study, kind=EntryKind.RESULT_RECORDED)
    assert body["entry"]["entry_hash"] == entry.entry_hash
    assert (body["state"], body["primary_verdict"]) == ("reported", "null")
    assert Study.objects.get(pk=study.pk).state == StudyState.REPORTED
    sealed = json.loads(entry.payload)
    assert sealed["rows"][0]["verdict"] == "null"
    # The findings answered are the ones sealed with the result, with their identities.
    assert [finding["identity"] for finding in body["findings"]] == [
        f"{finding['code']}:{finding['subject']}" for finding in sealed["findings"]
    ]
    assert body["checks"] == sealed["checks"]


def test_a_major_deviation_is_refused_with_its_findings_and_sealed_with_the_explanation(api_as, investigator):
    study = collecting_study(member=investigator)
    client = api_as(investigator)
    switched = row_json(direction="decrease")

    refused = client.post(results_url(study), result_json(switched), format="json")

    assert refused.status_code == 422
    refusal = refused.json()
    assert refusal["field"] == "explanations"
    assert refusal["unexplained"] == ["DIRECTION_CHANGED:R1"]
    finding = next(item for item in refusal["findings"] if item["identity"] == "DIRECTION_CHANGED:R1")
    assert (finding["severity"], finding["explanation_required"], finding["explained"]) == ("major", True, False)
    assert not Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).exists()

    why = "The registered direction was a typo in the plan; the theory predicts a decrease."
    accepted = client.post(
        results_url(study), result_json(switched, explanations={"DIRECTION_CHANGED:R1": why}), format="json"
    )

    assert accepted.status_code == 201
    body = accepted.json()
    explanation = Entry.objects.get(study=study, kind=EntryKind.FINDING_EXPLAINED)
    assert json.loads(explanation.payload)["explanation"] == why
    assert [item["finding"] for item in body["explanations"]] == ["DIRECTION_CHANGED:R1"]
    assert body["explanations"][0]["entry"]["entry_hash"] == explanation.entry_hash
    assert next(item for item in body["findings"] if item["identity"] == "DIRECTION_CHANGED:R1")["explained"]


def test_a_p_value_that_disagrees_with_its_statistic_must_be_confirmed(api_as, investigator):
    study = collecting_study(member=investigator)
    client = api_as(investigator)
    # t(126) = 0.84 gives a two-sided p near 0.40 (ledger.results.checks recomputes it); 0.02 cannot be right.
    row = row_json(p_reported="0.02")

    refused = client.post(results_url(study), result_json(row), format="json")

    assert refused.status_code == 422
    assert refused.json()["field"] == "confirm_checks"
    assert [check["row"] for check in refused.json()["checks"]] == ["R1"]
    assert refused.json()["checks"][0]["verdict"] != "consistent"


def test_field_problems_carry_the_result_forms_own_messages(api_as, investigator):
    study = collecting_study(member=investigator)
    row = row_json(n_analysed="12.5", ci_low=0.6, ci_high=0.1, statistic_kind="F", statistic=3.1, df2=None)

    response = api_as(investigator).post(results_url(study), result_json(row), format="json")

    assert response.status_code == 400
    problems = response.json()["problems"]
    form = ResultRowForm(
        data={name: str(value) for name, value in row.items()},
        hypothesis_choices=[("H1", "H1")],
        outcome_choices=[("O1", "O1"), ("O2", "O2")],
    )
    assert not form.is_valid()
    assert {f"rows[0].{name}": messages for name, messages in form.errors.items()} == problems
    assert not Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).exists()


def test_unknown_fields_a_missing_report_and_an_empty_row_list_are_named(api_as, investigator):
    study = collecting_study(member=investigator)

    response = api_as(investigator).post(
        results_url(study), {"rows": [], "p_value": 0.3, "explanations": "none"}, format="json"
    )

    problems = response.json()["problems"]
    assert response.status_code == 400
    assert set(problems) == {"rows", "report", "p_value", "explanations"}
    assert "A null result is a result" in problems["rows"][0]


def test_a_misspelt_row_field_is_refused_rather_than_ignored(api_as, investigator):
    study = collecting_study(member=investigator)
    row = row_json()
    row["p_value"] = row.pop("p_reported")

    response = api_as(investigator).post(results_url(study), result_json(row), format="json")

    assert response.status_code == 400
    assert "check its spelling" in response.json()["problems"]["rows[0].p_value"][0]


def test_a_statistic_keeps_the_decimals_it_was_sent_with(api_as, investigator):
    study = collecting_study(member=investigator)
    # Spliced in as text, so that 2.10 reaches the server as the JSON number 2.10, trailing zero included.
    row = row_json(statistic="STATISTIC", p_reported="0.04", verdict="supported")
    body = json.dumps({"rows": [row], "report": REPORT_JSON}).replace('"STATISTIC"', "2.10")

    response = api_as(investigator).post(results_url(study), body, content_type="application/json")

    assert response.status_code == 201, response.json()
    sealed = json.loads(Entry.objects.get(study=study, kind=EntryKind.RESULT_RECORDED).payload)
    assert sealed["rows"][0]["statistic"] == {"kind": "t", "value": 2.1, "df1": 126.0, "df2": None, "decimals": 2}


def test_results_of_a_study_that_is_not_collecting_are_refused_with_the_services_reason(api_as, investigator):
    reported = reported_study(member=investigator)
    draft = enrolled_study(member=investigator)
    client = api_as(investigator)

    again = client.post(results_url(reported), result_json(), format="json")
    too_early = client.post(results_url(draft), result_json(), format="json")

    assert again.status_code == too_early.status_code == 409
    assert again.json()["error"] == "Results for this study are already sealed; nothing more was recorded."
    assert "still a draft" in too_early.json()["error"]


@pytest.mark.parametrize("who", ["reader", "other_investigator"])
def test_a_role_without_the_capability_gets_403(api_as, investigator, who, request):
    study = collecting_study(member=investigator)
    member = request.getfixturevalue(who)

    response = api_as(member).post(results_url(study), result_json(), format="json")

    assert response.status_code == 403
    assert "does not allow this" in response.json()["error"]
    assert Study.objects.get(pk=study.pk).state == StudyState.COLLECTING


def test_a_preview_shows_the_findings_and_seals_nothing(api_as, investigator):
    study = collecting_study(member=investigator)
    entries_before = Entry.objects.count()

    response = api_as(investigator).post(
        f"/api/v1/studies/{study.code}/results/preview/", result_json(row_json(direction="decrease")), format="json"
    )

    body = response.json()
    assert response.status_code == 200
    assert body["unexplained"] == ["DIRECTION_CHANGED:R1"]
    assert body["ready_to_seal"] is False
    assert body["result"]["rows"][0]["direction"] == "decrease"
    assert Entry.objects.count() == entries_before


# --- publication links -------------------------------------------------------------------------------------


def test_a_publication_doi_is_sealed(api_as, investigator):
    study = reported_study(member=investigator)

    response = api_as(investigator).post(
        f"/api/v1/studies/{study.code}/publications/",
        {"status": "published", "doi": "https://doi.org/10.1234/Example.5678"},
        format="json",
    )

    assert response.status_code == 201
    entry = Entry.objects.get(study=study, kind=EntryKind.PUBLICATION_LINKED)
    assert response.json()["entry"]["entry_hash"] == entry.entry_hash
    assert json.loads(entry.payload)["doi"] == response.json()["doi"]


def test_a_published_status_without_a_doi_gets_the_forms_message(api_as, investigator):
    study = reported_study(member=investigator)

    response = api_as(investigator).post(
        f"/api/v1/studies/{study.code}/publications/", {"status": "published"}, format="json"
    )

    assert response.status_code == 400
    assert response.json()["problems"] == {"doi": ["Give the DOI of the publication, like 10.1000/xyz123."]}


def test_a_publication_of_a_draft_is_refused_by_state(api_as, investigator):
    study = enrolled_study(member=investigator)

    response = api_as(investigator).post(
        f"/api/v1/studies/{study.code}/publications/", {"status": "not_submitted"}, format="json"
    )

    assert response.status_code == 409
    assert response.json()["error"] == "Seal the plan first: a publication is linked to a registered study."


# --- entries -----------------------------------------------------------------------------------------------


def test_lab_entries_page_by_sequence_and_each_entry_verifies_from_its_fields(api_as, investigator):
    reported_study(member=investigator)  # plan, collection start, result: three entries after the founder's
    client = api_as(investigator)

    first = client.get("/api/v1/entries/", {"limit": 2}).json()
    rest = client.get(first["next"]).json()

    entries = first["entries"] + rest["entries"]
    stored = list(Entry.objects.filter(lab=investigator.lab).order_by("seq"))
    assert [entry["seq"] for entry in entries] == [entry.seq for entry in stored]
    assert first["next_after"] == entries[1]["seq"]
    assert rest["next"] is None
    for entry, row in zip(entries, stored, strict=True):
        assert documented_entry_hash(entry) == entry["entry_hash"] == row.entry_hash
        assert hashlib.sha256(entry["payload"].encode()).hexdigest() == entry["payload_sha256"]


def test_lab_entries_filter_by_kind_and_study(api_as, investigator):
    one = reported_study(member=investigator)
    sealed_study(member=investigator)
    client = api_as(investigator)

    results = client.get("/api/v1/entries/", {"kind": "RESULT_RECORDED"}).json()["entries"]
    of_one = client.get("/api/v1/entries/", {"study": one.code.lower()}).json()["entries"]
    bad = client.get("/api/v1/entries/", {"after": -1, "limit": 0})

    assert [entry["study_code"] for entry in results] == [one.code]
    assert {entry["study_code"] for entry in of_one} == {one.code}
    assert bad.status_code == 400
    assert set(bad.json()["problems"]) == {"after", "limit"}


def test_the_public_mirror_lists_every_labs_entries_without_payloads(investigator, outsider):
    embargoed = complete_plan()
    embargoed["dates"]["embargo_until"] = "2099-01-01"
    sealed_study(member=investigator, content=embargoed)
    sealed_study(member=outsider)
    client = APIClient()
    # A bogus token is ignored, not refused: the mirror takes no authentication at all.
    client.credentials(HTTP_AUTHORIZATION="Bearer fb_nonsense")

    response = client.get("/api/v1/public/entries/", {"limit": 500})

    assert response.status_code == 200
    entries = response.json()["entries"]
    assert [entry["seq"] for entry in entries] == list(Entry.objects.order_by("seq").values_list("seq", flat=True))
    assert {entry["lab_uid"] for entry in entries} >= {str(investigator.lab.uid), str(outsider.lab.uid)}
    assert all(
        set(entry)
        == {"seq", "kind", "created_at", "payload_sha256", "prev_hash", "entry_hash", "lab_uid", "study_code", "author"}
        for entry in entries
    )
    assert "Humming" not in response.content.decode()
    assert response["Access-Control-Allow-Origin"] == "*"


def test_the_public_mirror_chains_each_entry_to_the_one_before(investigator):
    reported_study(member=investigator)

    first = APIClient().get("/api/v1/public/entries/", {"limit": 1}).json()
    following = APIClient().get(first["next"]).json()

    entries = first["entries"] + following["entries"]
    assert entries[0]["prev_hash"] == "0" * 64
    for earlier, later in zip(entries, entries[1:], strict=False):
        assert later["prev_hash"] == earlier["entry_hash"]
    # The public fields alone recompute every entry hash (the preimage in DEVELOPERS.md, via rfc8785).
    for entry in entries:
        header = {
            "v": 1,
            "seq": entry["seq"],
            "kind": entry["kind"],
            "lab": entry["lab_uid"],
            "study": entry["study_code"],
            "author": entry["author"],
            "created_at": entry["created_at"],
            "payload_sha256": entry["payload_sha256"],
            "prev": entry["prev_hash"],
        }
        assert hashlib.sha256(rfc8785.dumps(header)).hexdigest() == entry["entry_hash"]


# --- addresses that are not endpoints ---------------------------------------------------------------------


def test_an_unknown_api_address_is_a_json_404_and_a_missing_slash_is_pointed_out(api_as, investigator):
    client = api_as(investigator)

    unknown = client.get("/api/v1/nothing-here/")
    no_slash = client.post("/api/v1/studies", {}, format="json")

    assert unknown.status_code == no_slash.status_code == 404
    assert unknown.json()["error"].startswith("No API endpoint at /api/v1/nothing-here/.")
    assert "end with a slash: /api/v1/studies/." in no_slash.json()["error"]


def test_a_removed_members_token_stops_working(api_as, manager, investigator):
    client = api_as(investigator)
    lab_services.member_remove(manager=manager, member=investigator)

    response = client.get("/api/v1/studies/")

    assert response.status_code == 401
    assert "no longer a member" in response.json()["error"]
