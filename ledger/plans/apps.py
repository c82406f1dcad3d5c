from django.apps import AppConfig


class PlansConfig(AppConfig):
    name = "ledger.plans"
    label = "plans"
