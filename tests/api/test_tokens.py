"""Personal API tokens: their text, how they are stored, and when they stop working."""

from __future__ import annotations

import datetime as dt

import pytest
from django.core.exceptions import PermissionDenied
from django.utils import timezone

from ledger.api.models import ApiToken
from ledger.api.services import api_token_create, api_token_revoke
from ledger.api.tokens import TOKEN_PATTERN, token_digest
from ledger.core.errors import ActionRefused
from ledger.labs import services as lab_services
from tests.api.conftest import client_with, token_text

pytestmark = pytest.mark.django_db


def test_token_digest_is_sha256():
    # FIPS 180-2, Appendix B.1: SHA-256("abc").
    assert token_digest(text="abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


def test_a_new_token_reads_fb_prefix_secret_and_only_its_hash_is_stored(investigator):
    token, text = api_token_create(member=investigator, name="analysis laptop")

    assert TOKEN_PATTERN.match(text)
    assert text.startswith(f"fb_{token.prefix}_")
    stored = ApiToken.objects.filter(pk=token.pk).values().get()
    secret = text.split("_", 2)[2]
    assert all(secret not in str(value) for value in stored.values())
    assert stored["token_sha256"] == token_digest(text=text)


def test_two_tokens_never_share_a_prefix_or_a_secret(investigator):
    texts = [token_text(investigator) for _ in range(20)]

    assert len({text[3:11] for text in texts}) == len({text[12:] for text in texts}) == 20


def test_a_token_acts_as_its_member_and_notes_when_it_was_used(investigator):
    token, text = api_token_create(member=investigator, name="cluster job")

    response = client_with(text).get("/api/v1/studies/")

    assert response.status_code == 200
    token.refresh_from_db()
    assert token.last_used_at is not None


@pytest.mark.parametrize(
    "presented",
    [
        "fb_AAAAAAAA_" + "a" * 40,  # well-formed, unknown
        "fb_short_secret",  # malformed
        "Bearer",  # nothing after the scheme
    ],
)
def test_an_unknown_or_malformed_token_is_a_401_that_says_where_to_make_one(investigator, presented):
    response = client_with(presented).get("/api/v1/studies/")

    assert response.status_code == 401
    assert "create a new one on the API tokens page" in response.json()["error"]


def test_a_known_prefix_with_a_wrong_secret_is_refused(investigator):
    text = token_text(investigator)
    forged = text[:12] + ("b" if text[12] != "b" else "c") + text[13:]

    response = client_with(forged).get("/api/v1/studies/")

    assert response.status_code == 401


def test_another_scheme_than_bearer_is_refused_with_the_right_header_named(investigator):
    text = token_text(investigator)
    client = client_with(text)
    client.credentials(HTTP_AUTHORIZATION=f"Token {text}")

    response = client.get("/api/v1/studies/")

    assert response.status_code == 401
    assert "Authorization: Bearer fb_" in response.json()["error"]


def test_a_revoked_token_is_a_401_pointing_at_the_labs_token_page(investigator):
    token, text = api_token_create(member=investigator, name="old laptop")
    api_token_revoke(member=investigator, token=token)

    response = client_with(text).get("/api/v1/studies/")

    assert response.status_code == 401
    message = response.json()["error"]
    assert "was revoked" in message
    assert f"Create a new token at http://testserver/labs/{investigator.lab.slug}/api-tokens/" in message


def test_a_token_works_through_its_expiry_day_and_is_a_401_after_it(investigator):
    today = timezone.now().date()
    token, text = api_token_create(member=investigator, name="one-day job", expires_on=today)

    assert client_with(text).get("/api/v1/studies/").status_code == 200
    ApiToken.objects.filter(pk=token.pk).update(expires_at=timezone.now() - dt.timedelta(seconds=1))
    response = client_with(text).get("/api/v1/studies/")

    assert response.status_code == 401
    assert "expired on" in response.json()["error"]
    assert "Create a new token at" in response.json()["error"]
    assert token.expires_at == dt.datetime.combine(today + dt.timedelta(days=1), dt.time.min, tzinfo=dt.UTC)


def test_an_expiry_date_in_the_past_is_refused(investigator):
    yesterday = timezone.now().date() - dt.timedelta(days=1)

    with pytest.raises(ActionRefused) as refusal:
        api_token_create(member=investigator, name="too late", expires_on=yesterday)

    assert refusal.value.field == "expires_on"
    assert not ApiToken.objects.exists()


def test_a_removed_member_cannot_create_a_token(manager, investigator):
    lab_services.member_remove(manager=manager, member=investigator)
    investigator.refresh_from_db()

    with pytest.raises(PermissionDenied):
        api_token_create(member=investigator, name="after leaving")


def test_revoking_is_idempotent_and_keeps_the_first_time(investigator):
    token, _text = api_token_create(member=investigator, name="twice revoked")
    first = api_token_revoke(member=investigator, token=token).revoked_at

    again = api_token_revoke(member=investigator, token=token)

    assert again.revoked_at == first
