"""The Celery application.

With no ``CELERY_BROKER_URL`` in the environment, tasks run eagerly in the calling process
(see ``ledger.settings.base``), so the embedded quick-start needs no broker.
"""

import os

from celery import Celery

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "ledger.settings.base")

app = Celery("ledger")
app.config_from_object("django.conf:settings", namespace="CELERY")
app.autodiscover_tasks()
