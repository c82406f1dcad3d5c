"""Writes for the API: creating and revoking tokens, and running a submission at most once per key."""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from django.db import IntegrityError, transaction
from django.utils import timezone

from ledger.api.models import ApiToken, IdempotentRequest
from ledger.api.tokens import new_prefix, token_digest, token_text
from ledger.core.errors import ActionRefused
from ledger.labs.models import Membership
from ledger.labs.services import require

IDEMPOTENCY_HEADER = "Idempotency-Key"
# How stale ``last_used_at`` may get before a request writes it again: one write per minute per
# token at most, not one per request.
LAST_USED_RESOLUTION = dt.timedelta(minutes=1)


@transaction.atomic
def api_token_create(*, member: Membership, name: str, expires_on: dt.date | None = None) -> tuple[ApiToken, str]:
    """A new token for the member's lab, and its text: the only time the text exists outside the client.

    The token works until the end of ``expires_on`` (UTC), or until it is revoked when that is None.
    """
    # Any active member may script what their role allows; a removed member may not start to.
    require(member, "can_view_lab")
    name = name.strip()
    if not name:
        raise ActionRefused("Name the token after where it will be used, e.g. “analysis laptop”.", field="name")
    today = timezone.now().date()
    if expires_on is not None and expires_on < today:
        raise ActionRefused(
            f"The expiry date {expires_on.isoformat()} has passed; choose {today.isoformat()} or later, "
            "or leave it empty.",
            field="expires_on",
        )
    prefix = new_prefix()
    while ApiToken.objects.filter(prefix=prefix).exists():
        prefix = new_prefix()
    text = token_text(prefix=prefix)
    expires_at = (
        dt.datetime.combine(expires_on + dt.timedelta(days=1), dt.time.min, tzinfo=dt.UTC) if expires_on else None
    )
    token = ApiToken.objects.create(
        member=member, name=name, prefix=prefix, token_sha256=token_digest(text=text), expires_at=expires_at
    )
    return token, text


@transaction.atomic
def api_token_revoke(*, member: Membership, token: ApiToken) -> ApiToken:
    token = ApiToken.objects.select_for_update().get(pk=token.pk, member=member)
    if token.revoked_at is None:
        token.revoked_at = timezone.now()
        token.save(update_fields=["revoked_at"])
    return token


def api_token_touch(*, token: ApiToken) -> None:
    """Note that the token was just used (shown on the tokens page)."""
    now = timezone.now()
    if token.last_used_at is None or now - token.last_used_at >= LAST_USED_RESOLUTION:
        ApiToken.objects.filter(pk=token.pk).update(last_used_at=now)
        token.last_used_at = now


@dataclass(frozen=True)
class StoredReply:
    status: int
    body: dict[str, Any]
    replayed: bool = False


def request_fingerprint(*, method: str, path: str, body: Any) -> str:
    """SHA-256 of the request as it matters: two bodies that differ only in key order or spacing agree."""
    spelled = json.dumps([method.upper(), path, body], sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(spelled.encode("utf-8")).hexdigest()


def submission_once(
    *, member: Membership, key: str, fingerprint: str, perform: Callable[[], StoredReply]
) -> StoredReply:
    """Run ``perform`` once per (member, key); a retry gets the first success's reply back.

    ``perform`` seals and returns the reply, or raises, and then nothing is kept (the key may be
    used again, for example with the explanations a refusal asked for). A key already used for
    another request is refused. A retry that arrives while the first request is still running
    waits for it: the unique index on (member, key) holds the retry's insert until the first
    request commits, and the retry then answers with the first one's reply.
    """
    with transaction.atomic():
        earlier = _earlier_reply(member=member, key=key, fingerprint=fingerprint)
        if earlier is not None:
            return earlier
        try:
            with transaction.atomic():
                record = IdempotentRequest.objects.create(member=member, key=key, fingerprint=fingerprint)
        except IntegrityError:
            # Committed by a concurrent request while this insert waited on the unique index.
            earlier = _earlier_reply(member=member, key=key, fingerprint=fingerprint)
            if earlier is None:
                raise
            return earlier
        reply = perform()
        record.status_code = reply.status
        record.reply_json = json.dumps(reply.body, ensure_ascii=False)
        record.save(update_fields=["status_code", "reply_json"])
        return reply


def _earlier_reply(*, member: Membership, key: str, fingerprint: str) -> StoredReply | None:
    record = IdempotentRequest.objects.filter(member=member, key=key).first()
    if record is None:
        return None
    if record.fingerprint != fingerprint:
        raise ActionRefused(
            f"The {IDEMPOTENCY_HEADER} {key!r} was already used for a different request (sealed "
            f"{record.created_at:%Y-%m-%d %H:%M} UTC). Send a new key with a new request; reuse a key only "
            "to retry exactly the same request.",
            field=IDEMPOTENCY_HEADER,
        )
    return StoredReply(status=record.status_code, body=json.loads(record.reply_json), replayed=True)
