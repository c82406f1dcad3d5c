from django.apps import AppConfig


class ChainConfig(AppConfig):
    name = "ledger.chain"
    label = "chain"
