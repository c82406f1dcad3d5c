from django.apps import AppConfig


class CoreConfig(AppConfig):
    name = "ledger.core"
    label = "core"
    verbose_name = "Forebook core"
