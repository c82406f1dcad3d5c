"""Settings for the test suite.

The database engine is wrapped (``tests/support/db``) so that emptying the test database between
transactional tests can lift the ledger triggers for that one flush. Production settings refuse
any engine but Django's own PostgreSQL backend, and a test proves it.
"""

import os
import tempfile
from pathlib import Path

from ledger.settings.base import *  # noqa: F403
from ledger.settings.base import DATABASES

TEST_ENGINES = {
    "django.db.backends.postgresql": "tests.support.db.postgresql",
    "django.db.backends.sqlite3": "tests.support.db.sqlite3",
}
DATABASES["default"]["ENGINE"] = TEST_ENGINES[DATABASES["default"]["ENGINE"]]
if DATABASES["default"]["ENGINE"].endswith("sqlite3"):
    # An on-disk test database, so that several threads (and a live server) share one database;
    # one per test process, so that two test runs on one machine never share a file.
    DATABASES["default"]["TEST"] = {"NAME": str(Path(tempfile.gettempdir()) / f"forebook-test-{os.getpid()}.sqlite3")}

PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
CELERY_BROKER_URL = ""
CELERY_TASK_ALWAYS_EAGER = True
CELERY_TASK_EAGER_PROPAGATES = True
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"},
}
