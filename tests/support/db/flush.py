"""Emptying a test database whose ledger tables refuse DELETE and TRUNCATE.

Django empties the database after each transactional test (and after live-server tests). Here the
flush drops the ledger triggers, empties the tables and reinstalls the same triggers, all in one
transaction. Only these test-only database wrappers do this; production settings cannot load them.
"""

from django.db import transaction

from ledger.chain import triggers


class TriggerLiftingFlushMixin:
    def execute_sql_flush(self, sql_list):
        vendor = self.connection.vendor
        schema = triggers.ledger_schema(self.connection)
        with transaction.atomic(using=self.connection.alias, savepoint=self.connection.features.can_rollback_ddl):
            with self.connection.cursor() as cursor:
                for statement in triggers.drop_statements(vendor):
                    cursor.execute(statement)
                for sql in sql_list:
                    cursor.execute(sql)
                for statement in triggers.install_statements(vendor, schema=schema):
                    cursor.execute(statement)
                # Put back the empty chain head that migrations create, as a fresh database has it.
                cursor.execute(
                    "INSERT INTO chain_chainhead (id, size, head_hash, frontier) VALUES (1, 0, %s, '')",
                    [triggers.GENESIS],
                )
