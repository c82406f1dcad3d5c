"""Every API error is a JSON object with an ``error`` sentence that says what to change.

Statuses: 400 a field or the body needs fixing (``problems`` maps each field to what is wrong with it);
401 no usable token; 403 the token's role does not allow this; 404 no such object in the token's
lab (missing and foreign look the same); 409 the study's state does not allow this now; 422 the
request needs more from the client (explanations of major deviations, confirmed p-value checks)
or reuses an Idempotency-Key; 429 too many requests (Retry-After says for how long).
"""

from __future__ import annotations

from typing import Any

from rest_framework import exceptions, status
from rest_framework.response import Response
from rest_framework.views import exception_handler

from ledger.api.authentication import SCHEME, token_page_url
from ledger.api.services import IDEMPOTENCY_HEADER
from ledger.core.errors import ActionRefused

# Refusals a client answers by sending more in the same request, rather than by waiting for the
# study to change state.
UNPROCESSABLE_FIELDS = frozenset({"explanations", "confirm_checks", IDEMPOTENCY_HEADER})


class ApiRefusal(exceptions.APIException):
    """A refused request: the message, the field it concerns, and what the client needs to answer it."""

    def __init__(self, *, status_code: int, message: str, field: str | None = None, **extra: Any):
        super().__init__(detail=message)
        self.status_code = status_code
        self.body: dict[str, Any] = {"error": message, **({"field": field} if field else {}), **extra}


class FieldProblems(ApiRefusal):
    """Input that does not validate (400), with every problem keyed by where it is (``rows[0].statistic``)."""

    def __init__(
        self, problems: dict[str, list[str]], *, message: str = "Some fields need attention; nothing was sealed."
    ):
        super().__init__(status_code=status.HTTP_400_BAD_REQUEST, message=message, problems=problems)


def refusal_from(refusal: ActionRefused, **extra: Any) -> ApiRefusal:
    if refusal.field in UNPROCESSABLE_FIELDS:
        return ApiRefusal(status_code=422, message=refusal.message, field=refusal.field, **extra)
    if refusal.field:
        return FieldProblems({refusal.field: [refusal.message]}, message=refusal.message)
    return ApiRefusal(status_code=status.HTTP_409_CONFLICT, message=refusal.message, **extra)


def api_exception_handler(exc: Exception, context: dict[str, Any]) -> Response | None:
    if isinstance(exc, ActionRefused):
        exc = refusal_from(exc)
    if isinstance(exc, ApiRefusal):
        return Response(exc.body, status=exc.status_code)
    response = exception_handler(exc, context)
    if response is None:
        return None
    response.data = {"error": _message(exc, context)}
    if isinstance(exc, exceptions.ValidationError):
        response.data["problems"] = _problems(exc.detail)
    return response


def _message(exc: Exception, context: dict[str, Any]) -> str:
    request = context.get("request")
    if isinstance(exc, exceptions.NotAuthenticated):
        return (
            f"Send your API token as the header 'Authorization: {SCHEME} fb_…'. Create one on the API tokens "
            f"page of your lab at {token_page_url(request)}."
        )
    if isinstance(exc, exceptions.Throttled):
        return (
            f"Too many requests with this token: wait {exc.wait} seconds (the Retry-After header) and try again. "
            "A retried submission with the same Idempotency-Key still seals only once."
        )
    if isinstance(exc, exceptions.MethodNotAllowed):
        allowed = ", ".join(method for method in context["view"].allowed_methods if method != "OPTIONS")
        return f"{request.method} is not allowed here; this endpoint takes {allowed}."
    if isinstance(exc, exceptions.ValidationError):
        return "Some parameters need attention; see problems."
    if isinstance(exc, exceptions.UnsupportedMediaType):
        return "Send the body as JSON, with the header 'Content-Type: application/json'."
    if isinstance(exc, exceptions.NotAcceptable):
        return "The API answers in JSON only: send 'Accept: application/json' or no Accept header."
    # Http404 and PermissionDenied carry the selector's or require()'s sentence as their argument.
    detail = getattr(exc, "detail", None) or str(exc)
    return str(detail) or "Not found."


def _problems(detail: Any) -> dict[str, list[str]]:
    """DRF's error detail of a flat query serializer as {"parameter": ["problem", ...]}."""
    if isinstance(detail, dict):
        return {
            str(name): [str(m) for m in (messages if isinstance(messages, list) else [messages])]
            for name, messages in detail.items()
        }
    return {"body": [str(m) for m in (detail if isinstance(detail, list) else [detail])]}
