"""How the OpenAPI document describes the API token scheme (registered when the app is ready)."""

from drf_spectacular.extensions import OpenApiAuthenticationExtension


class ApiTokenScheme(OpenApiAuthenticationExtension):
    target_class = "ledger.api.authentication.ApiTokenAuthentication"
    name = "apiToken"

    def get_security_definition(self, auto_schema):
        return {
            "type": "http",
            "scheme": "bearer",
            "bearerFormat": "fb_<8-character prefix>_<40-character secret>",
            "description": "A personal API token from the API tokens page of your lab. It acts with your role.",
        }
