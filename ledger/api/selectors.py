"""Reads for the API: a member's tokens, the token a request presents, and pages of ledger entries."""

from __future__ import annotations

import enum
import hmac

from django.db.models import QuerySet
from django.http import Http404

from ledger.api.models import ApiToken
from ledger.api.tokens import PREFIX_PATTERN, token_digest, token_prefix
from ledger.chain.models import Entry
from ledger.chain.selectors import lab_entries
from ledger.labs.models import Membership


def member_api_tokens(*, member: Membership) -> QuerySet[ApiToken]:
    return ApiToken.objects.filter(member=member).order_by("-created_at")


def access_api_token(*, member: Membership, prefix: str) -> ApiToken:
    """One of the member's own tokens, or 404: another member's token looks like a missing one."""
    prefix = prefix.upper()
    token = ApiToken.objects.filter(member=member, prefix=prefix).first() if PREFIX_PATTERN.fullmatch(prefix) else None
    if token is None:
        raise Http404("No such API token.")
    return token


class TokenProblem(enum.Enum):
    UNKNOWN = "unknown"
    REVOKED = "revoked"
    EXPIRED = "expired"
    NOT_A_MEMBER = "not_a_member"


class TokenRefused(Exception):
    """The presented token does not authenticate; ``token`` is set when the token itself was found."""

    def __init__(self, problem: TokenProblem, *, token: ApiToken | None = None):
        super().__init__(problem.value)
        self.problem = problem
        self.token = token


def api_token_presented(*, text: str) -> ApiToken:
    """The usable token whose text this is, or TokenRefused saying why not."""
    prefix = token_prefix(text=text)
    token = (
        ApiToken.objects.select_related("member__lab", "member__user").filter(prefix=prefix).first() if prefix else None
    )
    # Compared in constant time, so response timing tells nothing about how much of a secret matched.
    if token is None or not hmac.compare_digest(token.token_sha256, token_digest(text=text)):
        raise TokenRefused(TokenProblem.UNKNOWN)
    if token.revoked_at is not None:
        raise TokenRefused(TokenProblem.REVOKED, token=token)
    if token.is_expired:
        raise TokenRefused(TokenProblem.EXPIRED, token=token)
    if not token.member.is_active or not token.member.user.is_active:
        raise TokenRefused(TokenProblem.NOT_A_MEMBER, token=token)
    return token


PUBLIC_ENTRY_FIELDS = (
    "seq",
    "kind",
    "created_at",
    "payload_hash",
    "prev_hash",
    "entry_hash",
    "lab_uid",
    "study_code",
    "author_id",
)


def public_entries(*, after: int, limit: int) -> list[Entry]:
    """Entries after ``after`` in sequence order, loading only their public fields: never a payload."""
    return list(Entry.objects.filter(seq__gt=after).order_by("seq").only(*PUBLIC_ENTRY_FIELDS)[:limit])


def lab_entries_after(
    *, member: Membership, after: int, limit: int, kind: str = "", study_code: str = ""
) -> list[Entry]:
    """The member's lab's entries after ``after`` in sequence order (oldest first, for mirroring)."""
    entries = lab_entries(lab=member.lab, kind=kind).filter(seq__gt=after).order_by("seq")
    if study_code:
        entries = entries.filter(study_code=study_code.upper())
    return list(entries[:limit])
