"""Forebook: preregistration, a tamper-evident ledger of plans and results, and plan-vs-report checks."""

# Importing the Celery app here makes @shared_task bind to it when Django starts.
from ledger.celery import app as celery_app

__all__ = ["celery_app"]
