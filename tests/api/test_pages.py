"""The API tokens page, and the pages the API serves to browsers (the documentation)."""

from __future__ import annotations

import re

import pytest
from django.contrib.staticfiles import finders

from ledger.api.models import ApiToken
from ledger.api.services import api_token_create
from ledger.api.tokens import TOKEN_PATTERN

pytestmark = pytest.mark.django_db

INLINE_SCRIPT = re.compile(rb"<script(?![^>]*\bsrc=)[^>]*>", re.IGNORECASE)
INLINE_STYLE = re.compile(rb"<style\b|\sstyle=", re.IGNORECASE)
EXTERNAL_URL = re.compile(rb"""(?:src|href)=["']?(?:https?:)?//""", re.IGNORECASE)


def tokens_url(member) -> str:
    return f"/labs/{member.lab.slug}/api-tokens/"


def test_the_lab_navigation_links_to_the_api_tokens_page(client, reader):
    client.force_login(reader.user)

    page = client.get(f"/labs/{reader.lab.slug}/").content.decode()

    assert f'href="{tokens_url(reader)}"' in page


def test_creating_a_token_shows_its_text_once_and_never_again(client, reader):
    client.force_login(reader.user)

    created = client.post(tokens_url(reader), {"name": "reading script", "expires_on": ""})
    listed = client.get(tokens_url(reader))

    assert created.status_code == 200
    shown = re.search(rb'id="new-token">([^<]+)<', created.content).group(1).decode()
    assert TOKEN_PATTERN.match(shown)
    assert "no-store" in created["Cache-Control"]
    token = ApiToken.objects.get(member=reader)
    assert shown.encode() not in listed.content
    assert f"fb_{token.prefix}_…".encode() in listed.content
    assert b"reading script" in listed.content


def test_a_token_form_with_a_past_expiry_shows_the_services_message(client, investigator):
    client.force_login(investigator.user)

    page = client.post(tokens_url(investigator), {"name": "late", "expires_on": "2000-01-01"})

    assert b"has passed" in page.content
    assert not ApiToken.objects.exists()


def test_revoking_from_the_page_stops_the_token(client, investigator):
    token, _text = api_token_create(member=investigator, name="to revoke")
    client.force_login(investigator.user)

    response = client.post(tokens_url(investigator), {"revoke": token.prefix})

    assert response.status_code == 302
    token.refresh_from_db()
    assert token.revoked_at is not None


def test_a_member_cannot_revoke_or_see_another_members_token(client, investigator, other_investigator):
    theirs, _text = api_token_create(member=other_investigator, name="not yours")
    client.force_login(investigator.user)

    listed = client.get(tokens_url(investigator))
    response = client.post(tokens_url(investigator), {"revoke": theirs.prefix})

    assert theirs.prefix.encode() not in listed.content
    assert response.status_code == 404
    theirs.refresh_from_db()
    assert theirs.revoked_at is None


def test_the_token_page_has_no_inline_script_or_style(client, investigator):
    client.force_login(investigator.user)

    page = client.post(tokens_url(investigator), {"name": "csp check"}).content

    assert not INLINE_SCRIPT.search(page)
    assert not INLINE_STYLE.search(page)


def test_the_api_documentation_runs_from_this_sites_files_only(client):
    page = client.get("/api/v1/docs/")
    script = client.get("/api/v1/docs/", {"script": ""})

    assert page.status_code == script.status_code == 200
    assert not INLINE_SCRIPT.search(page.content)
    assert not INLINE_STYLE.search(page.content)
    assert not EXTERNAL_URL.search(page.content)
    assert script["Content-Type"].startswith("application/javascript")
    assert b"/api/v1/schema/" in script.content
    for asset in re.findall(rb'(?:src|href)="/static/([^"]+)"', page.content):
        assert finders.find(asset.decode()), f"{asset!r} is not among the static files"
