"""Rate limits: per API token for a lab's endpoints, per client address for the public mirror.

Rates come from settings at request time (FOREBOOK_API_*_RATE, "N/second|minute|hour|day"), so an
operator changes them without code and a test can pin them. Counts live in the default cache:
set CACHE_URL to a shared Redis when several web processes serve the API.
"""

from __future__ import annotations

from django.conf import settings
from rest_framework.throttling import SimpleRateThrottle

from ledger.api.models import ApiToken


class SettingRateThrottle(SimpleRateThrottle):
    rate_setting: str = ""

    def get_rate(self) -> str:
        return getattr(settings, self.rate_setting)


class TokenRateThrottle(SettingRateThrottle):
    def get_cache_key(self, request, view) -> str | None:
        if not isinstance(request.auth, ApiToken):
            return None
        return self.cache_format % {"scope": self.scope, "ident": request.auth.pk}


class SubmissionRateThrottle(TokenRateThrottle):
    """Requests that seal (or preview sealing) results and publication links."""

    scope = "api-submissions"
    rate_setting = "FOREBOOK_API_SUBMISSION_RATE"


class ReadRateThrottle(TokenRateThrottle):
    scope = "api-reads"
    rate_setting = "FOREBOOK_API_READ_RATE"


class PublicRateThrottle(SettingRateThrottle):
    scope = "api-public"
    rate_setting = "FOREBOOK_API_PUBLIC_RATE"

    def get_cache_key(self, request, view) -> str:
        return self.cache_format % {"scope": self.scope, "ident": self.get_ident(request)}


RATE_SETTINGS = tuple(
    throttle.rate_setting for throttle in (SubmissionRateThrottle, ReadRateThrottle, PublicRateThrottle)
)
