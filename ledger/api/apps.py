from django.apps import AppConfig


class ApiConfig(AppConfig):
    name = "ledger.api"
    label = "api"
    verbose_name = "API for analysis scripts"

    def ready(self) -> None:
        # Importing registers the OpenAPI description of the token scheme and the settings checks.
        from ledger.api import checks, schema  # noqa: F401
