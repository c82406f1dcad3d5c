from django.apps import AppConfig


class LinesConfig(AppConfig):
    name = "ledger.lines"
    label = "lines"
    verbose_name = "Research lines"
