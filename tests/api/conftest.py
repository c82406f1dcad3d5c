"""Fixtures for the API tests: tokens, clients that send them, and JSON result bodies."""

from __future__ import annotations

from typing import Any

import pytest
from django.core.cache import cache
from rest_framework.test import APIClient

from ledger.api.services import api_token_create
from ledger.labs.models import Membership
from tests.factories import result_row

REPORT_JSON = {"stopping_rule_followed": "yes", "exclusions_as_planned": "yes"}


@pytest.fixture(autouse=True)
def fresh_rate_counts():
    # Rate-limit counts live in the cache; each test starts with none.
    cache.clear()
    yield
    cache.clear()


def token_text(member: Membership, **kwargs: Any) -> str:
    kwargs.setdefault("name", "analysis laptop")
    _token, text = api_token_create(member=member, **kwargs)
    return text


def client_with(text: str) -> APIClient:
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Bearer {text}")
    return client


@pytest.fixture
def api_as():
    """api_as(member) -> an APIClient sending a fresh token of that member."""
    return lambda member: client_with(token_text(member))


def row_json(**overrides: Any) -> dict[str, Any]:
    """A result row as a script sends it: the factory's null result on H1/O1, without the empty fields."""
    row = {name: value for name, value in result_row().items() if value not in (None, "")}
    row.update(overrides)
    return {name: value for name, value in row.items() if value is not None}


def result_json(*rows: dict[str, Any], **extra: Any) -> dict[str, Any]:
    return {"rows": list(rows) or [row_json()], "report": dict(REPORT_JSON), **extra}
