from django.apps import AppConfig


class ResultsConfig(AppConfig):
    name = "ledger.results"
    label = "results"
