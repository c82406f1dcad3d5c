"""Idempotency-Key: a retried submission seals exactly once, and a reused key is caught."""

from __future__ import annotations

import threading
import time

import pytest
from django.db import connection

from ledger.api.models import IdempotentRequest
from ledger.api.services import StoredReply, request_fingerprint, submission_once
from ledger.chain.models import Entry, EntryKind
from ledger.core.errors import ActionRefused
from ledger.results.services import result_record
from tests.api.conftest import result_json, row_json
from tests.factories import REPORT_AS_PLANNED, collecting_study, reported_study, result_row


def results_url(study) -> str:
    return f"/api/v1/studies/{study.code}/results/"


@pytest.mark.django_db
def test_a_retry_with_the_same_key_gets_the_first_reply_and_seals_nothing_more(api_as, investigator):
    study = collecting_study(member=investigator)
    client = api_as(investigator)

    first = client.post(results_url(study), result_json(), format="json", HTTP_IDEMPOTENCY_KEY="run-2026-11-30")
    retry = client.post(results_url(study), result_json(), format="json", HTTP_IDEMPOTENCY_KEY="run-2026-11-30")

    assert first.status_code == retry.status_code == 201
    assert retry.json() == first.json()
    assert "Idempotency-Replayed" not in first
    assert retry["Idempotency-Replayed"] == "true"
    assert Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).count() == 1


@pytest.mark.django_db
def test_the_same_key_with_a_different_body_is_a_422_that_says_to_use_a_new_key(api_as, investigator):
    study = collecting_study(member=investigator)
    client = api_as(investigator)
    client.post(results_url(study), result_json(), format="json", HTTP_IDEMPOTENCY_KEY="k-1")

    changed = client.post(
        results_url(study), result_json(row_json(n_analysed=120)), format="json", HTTP_IDEMPOTENCY_KEY="k-1"
    )

    assert changed.status_code == 422
    assert changed.json()["field"] == "Idempotency-Key"
    assert "Send a new key with a new request" in changed.json()["error"]


@pytest.mark.django_db
def test_a_refused_submission_leaves_its_key_free_for_the_corrected_one(api_as, investigator):
    study = collecting_study(member=investigator)
    client = api_as(investigator)
    switched = row_json(direction="decrease")

    refused = client.post(results_url(study), result_json(switched), format="json", HTTP_IDEMPOTENCY_KEY="k-2")
    explained = client.post(
        results_url(study),
        result_json(switched, explanations={"DIRECTION_CHANGED:R1": "The plan's direction was a typo."}),
        format="json",
        HTTP_IDEMPOTENCY_KEY="k-2",
    )

    assert (refused.status_code, explained.status_code) == (422, 201)
    assert IdempotentRequest.objects.get(key="k-2").status_code == 201


@pytest.mark.django_db
def test_keys_belong_to_their_member(api_as, investigator, manager):
    first_study = collecting_study(member=investigator)
    second_study = collecting_study(member=manager)

    mine = api_as(investigator).post(results_url(first_study), result_json(), format="json", HTTP_IDEMPOTENCY_KEY="k")
    theirs = api_as(manager).post(results_url(second_study), result_json(), format="json", HTTP_IDEMPOTENCY_KEY="k")

    assert mine.status_code == theirs.status_code == 201
    assert mine.json()["entry"]["seq"] != theirs.json()["entry"]["seq"]


@pytest.mark.django_db
def test_a_publication_link_is_idempotent_too(api_as, investigator):
    study = reported_study(member=investigator)
    client = api_as(investigator)
    url = f"/api/v1/studies/{study.code}/publications/"

    replies = [
        client.post(url, {"status": "not_submitted"}, format="json", HTTP_IDEMPOTENCY_KEY="pub-1") for _ in range(3)
    ]

    assert [reply.status_code for reply in replies] == [201, 201, 201]
    assert Entry.objects.filter(study=study, kind=EntryKind.PUBLICATION_LINKED).count() == 1


@pytest.mark.django_db
def test_a_malformed_key_is_refused_before_anything_runs(api_as, investigator):
    study = collecting_study(member=investigator)

    response = api_as(investigator).post(
        results_url(study), result_json(), format="json", HTTP_IDEMPOTENCY_KEY="has spaces in it"
    )

    assert response.status_code == 400
    assert "Idempotency-Key" in response.json()["problems"]
    assert not Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).exists()


def test_the_fingerprint_ignores_key_order_and_spacing_but_not_values():
    one = request_fingerprint(method="post", path="/x/", body={"a": 1, "b": [1, 2]})

    assert one == request_fingerprint(method="POST", path="/x/", body={"b": [1, 2], "a": 1})
    assert one != request_fingerprint(method="POST", path="/x/", body={"a": 2, "b": [1, 2]})
    assert one != request_fingerprint(method="POST", path="/y/", body={"a": 1, "b": [1, 2]})


@pytest.mark.django_db(transaction=True)
def test_a_retry_racing_the_first_request_waits_and_returns_its_reply(investigator):
    """Two requests with one key at the same time: the second must neither seal again nor fail.

    The first holds its transaction open after inserting the key; the second starts meanwhile, so its
    insert of the same key has to wait for the first commit (the unique index on PostgreSQL, the write
    lock on SQLite) and then finds the stored reply.
    """
    study = collecting_study(member=investigator)
    first_is_sealing = threading.Event()
    replies: dict[str, StoredReply] = {}
    failures: list[BaseException] = []

    def seal(*, hold: bool) -> StoredReply:
        if hold:
            first_is_sealing.set()
            time.sleep(0.5)
        result = result_record(member=investigator, study=study, rows=[result_row()], report=REPORT_AS_PLANNED)
        return StoredReply(status=201, body={"seq": result.entry.seq})

    def request(name: str, *, hold: bool) -> None:
        try:
            replies[name] = submission_once(
                member=investigator, key="race", fingerprint="f" * 64, perform=lambda: seal(hold=hold)
            )
        except BaseException as error:  # surfaced in the main thread below
            failures.append(error)
        finally:
            connection.close()

    first = threading.Thread(target=request, args=("first",), kwargs={"hold": True})
    first.start()
    assert first_is_sealing.wait(timeout=10)
    second = threading.Thread(target=request, args=("second",), kwargs={"hold": False})
    second.start()
    first.join(timeout=60)
    second.join(timeout=60)

    assert failures == []
    assert replies["first"].body == replies["second"].body
    assert (replies["first"].replayed, replies["second"].replayed) == (False, True)
    assert Entry.objects.filter(study=study, kind=EntryKind.RESULT_RECORDED).count() == 1


@pytest.mark.django_db
def test_a_refusal_inside_the_submission_keeps_no_key(investigator):
    def refuse() -> StoredReply:
        raise ActionRefused("Refused for the test.")

    with pytest.raises(ActionRefused):
        submission_once(member=investigator, key="refused", fingerprint="0" * 64, perform=refuse)

    assert not IdempotentRequest.objects.filter(key="refused").exists()
