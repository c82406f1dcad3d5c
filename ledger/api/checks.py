"""Start-up checks of the API's settings, so a mistyped rate fails `manage.py check`, not a request."""

import re

from django.conf import settings
from django.core import checks

from ledger.api.throttling import RATE_SETTINGS

RATE_PATTERN = re.compile(r"^[1-9]\d*/(second|minute|hour|day)$")


@checks.register()
def api_rates_are_well_formed(app_configs=None, **kwargs) -> list[checks.CheckMessage]:
    problems = []
    for name in RATE_SETTINGS:
        value = getattr(settings, name, "")
        if not isinstance(value, str) or not RATE_PATTERN.match(value):
            problems.append(
                checks.Error(
                    f"{name} must read like 30/minute (a whole number, then /second, /minute, /hour or /day); "
                    f"got {value!r}.",
                    id="api.E001",
                )
            )
    return problems
