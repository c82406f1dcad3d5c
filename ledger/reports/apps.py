from django.apps import AppConfig


class ReportsConfig(AppConfig):
    name = "ledger.reports"
    label = "reports"
    verbose_name = "Lab outcome reports"
