"""Install the database triggers that make the ledger append-only (see ledger/chain/triggers.py)."""
from django.db import migrations

from ledger.chain import triggers


def install(apps, schema_editor):
    connection = schema_editor.connection
    for statement in triggers.install_statements(connection.vendor, schema=triggers.ledger_schema(connection)):
        schema_editor.execute(statement, params=None)
    # The chain head starts empty; appends lock and advance it.
    ChainHead = apps.get_model("chain", "ChainHead")
    ChainHead.objects.using(schema_editor.connection.alias).get_or_create(pk=1)


def remove(apps, schema_editor):
    for statement in triggers.drop_statements(schema_editor.connection.vendor):
        schema_editor.execute(statement, params=None)


class Migration(migrations.Migration):
    dependencies = [("chain", "0002_initial")]

    operations = [migrations.RunPython(install, remove)]
