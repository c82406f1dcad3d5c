"""Rate limits per token on submissions and reads, per address on the public mirror."""

from __future__ import annotations

import pytest
from django.core.management import call_command
from django.core.management.base import SystemCheckError
from rest_framework.test import APIClient

from tests.api.conftest import client_with, token_text
from tests.factories import collecting_study

pytestmark = pytest.mark.django_db


def preview(client, study):
    return client.post(f"/api/v1/studies/{study.code}/results/preview/", {"rows": []}, format="json")


def test_submissions_beyond_the_rate_get_429_with_retry_after(settings, investigator):
    settings.FOREBOOK_API_SUBMISSION_RATE = "2/minute"
    study = collecting_study(member=investigator)
    client = client_with(token_text(investigator))

    statuses = [preview(client, study).status_code for _ in range(3)]
    refused = preview(client, study)

    assert statuses == [400, 400, 429]
    assert refused.status_code == 429
    assert 0 < int(refused["Retry-After"]) <= 60
    assert "Retry-After" in refused.json()["error"]


def test_the_limit_counts_per_token(settings, investigator):
    settings.FOREBOOK_API_SUBMISSION_RATE = "1/minute"
    study = collecting_study(member=investigator)
    first, second = client_with(token_text(investigator)), client_with(token_text(investigator))

    assert preview(first, study).status_code == 400
    assert preview(first, study).status_code == 429
    assert preview(second, study).status_code == 400


def test_reads_have_their_own_budget(settings, investigator):
    settings.FOREBOOK_API_SUBMISSION_RATE = "1/minute"
    settings.FOREBOOK_API_READ_RATE = "3/minute"
    study = collecting_study(member=investigator)
    client = client_with(token_text(investigator))
    preview(client, study)

    reads = [client.get("/api/v1/studies/").status_code for _ in range(4)]

    assert reads == [200, 200, 200, 429]


def test_the_public_mirror_counts_per_client_address(settings, db):
    settings.FOREBOOK_API_PUBLIC_RATE = "2/minute"

    here = [APIClient().get("/api/v1/public/entries/", REMOTE_ADDR="192.0.2.10").status_code for _ in range(3)]
    elsewhere = APIClient().get("/api/v1/public/entries/", REMOTE_ADDR="192.0.2.11").status_code

    assert here == [200, 200, 429]
    assert elsewhere == 200


def test_a_malformed_rate_fails_the_system_check(settings):
    settings.FOREBOOK_API_SUBMISSION_RATE = "thirty a minute"

    with pytest.raises(SystemCheckError, match="FOREBOOK_API_SUBMISSION_RATE must read like 30/minute"):
        call_command("check")
