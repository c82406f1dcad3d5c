"""Who is calling: a personal API token in ``Authorization: Bearer fb_…``, and nothing else.

The API takes no session cookie, so a page open in the same browser cannot make a script's
request on its own, and no API request needs a CSRF token. Every call acts as the token's
member, with that member's role in the token's lab.
"""

from __future__ import annotations

from django.urls import reverse
from rest_framework.authentication import BaseAuthentication
from rest_framework.exceptions import AuthenticationFailed
from rest_framework.permissions import BasePermission

from ledger.api.models import ApiToken
from ledger.api.selectors import TokenProblem, TokenRefused, api_token_presented
from ledger.api.services import api_token_touch

SCHEME = "Bearer"


def token_page_url(request, token: ApiToken | None = None) -> str:
    """Where the caller makes a new token: their lab's API tokens page, or the site's front page."""
    if token is None:
        return request.build_absolute_uri(reverse("home"))
    return request.build_absolute_uri(reverse("api-tokens:list", kwargs={"lab_slug": token.member.lab.slug}))


def refusal_message(request, refusal: TokenRefused) -> str:
    token = refusal.token
    if refusal.problem is TokenProblem.REVOKED:
        return (
            f"This API token (fb_{token.prefix}_…) was revoked on {token.revoked_at:%Y-%m-%d}. "
            f"Create a new token at {token_page_url(request, token)}."
        )
    if refusal.problem is TokenProblem.EXPIRED:
        return (
            f"This API token (fb_{token.prefix}_…) expired on {token.expires_at:%Y-%m-%d}. "
            f"Create a new token at {token_page_url(request, token)}."
        )
    if refusal.problem is TokenProblem.NOT_A_MEMBER:
        return (
            f"The owner of this API token is no longer a member of {token.member.lab.name}. "
            "Ask a lab manager to add you again, then create a new token on the lab's API tokens page."
        )
    return (
        "This API token is not valid: copy it again from where you saved it (it reads fb_XXXXXXXX_ followed by "
        f"40 letters and digits), or create a new one on the API tokens page of your lab at {token_page_url(request)}."
    )


class ApiTokenAuthentication(BaseAuthentication):
    def authenticate(self, request):
        header = request.META.get("HTTP_AUTHORIZATION", "")
        if not header:
            return None
        scheme, _, text = header.partition(" ")
        if scheme.lower() != SCHEME.lower() or not text.strip():
            raise AuthenticationFailed(
                f"Send the API token as the header 'Authorization: {SCHEME} fb_…'; got a {scheme!r} header. "
                f"Create a token on the API tokens page of your lab at {token_page_url(request)}."
            )
        try:
            token = api_token_presented(text=text.strip())
        except TokenRefused as refusal:
            raise AuthenticationFailed(refusal_message(request, refusal)) from None
        api_token_touch(token=token)
        return token.member.user, token

    def authenticate_header(self, request) -> str:
        # Present, so DRF answers a missing or refused token with 401 rather than 403.
        return f'{SCHEME} realm="forebook-api"'


class HasApiToken(BasePermission):
    """The request came with a usable API token (``request.auth`` is the ApiToken)."""

    def has_permission(self, request, view) -> bool:
        return isinstance(request.auth, ApiToken)
