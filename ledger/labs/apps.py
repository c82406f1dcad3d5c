from django.apps import AppConfig


class LabsConfig(AppConfig):
    name = "ledger.labs"
    label = "labs"
