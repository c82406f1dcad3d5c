from django.apps import AppConfig


class RecordsConfig(AppConfig):
    name = "ledger.records"
    label = "records"
    verbose_name = "Signed records"
