"""SQLite for the test suite only: Django's backend plus a flush that lifts the ledger triggers."""

from django.db.backends.sqlite3 import base

from tests.support.db.flush import TriggerLiftingFlushMixin


class DatabaseOperations(TriggerLiftingFlushMixin, base.DatabaseOperations):
    pass


class DatabaseWrapper(base.DatabaseWrapper):
    ops_class = DatabaseOperations
