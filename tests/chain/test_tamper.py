"""Someone with full database rights lifts the triggers and edits a row: verify_ledger must notice."""

import pytest
from django.core.management import call_command
from django.db import connection

from ledger.chain import triggers
from ledger.chain.models import EntryKind
from ledger.chain.services import entry_append

pytestmark = pytest.mark.django_db


@pytest.fixture
def ledger_of_ten(lab):
    return [entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"note": f"entry {i}"}, lab=lab) for i in range(10)]


def lift_triggers():
    # What a superuser (or the table owner) can do; rolled back with the test's transaction.
    with connection.cursor() as cursor:
        for statement in triggers.drop_statements(connection.vendor):
            cursor.execute(statement)


def run_verify(capsys) -> tuple[int, str]:
    try:
        call_command("verify_ledger")
    except SystemExit as exit_:
        return exit_.code, capsys.readouterr().out
    return 0, capsys.readouterr().out


def test_intact_ledger_verifies(ledger_of_ten, capsys):
    status, out = run_verify(capsys)
    assert status == 0
    assert out.startswith(f"ok: 10 entries; head {ledger_of_ten[-1].entry_hash}")


def test_one_changed_byte_in_a_payload_is_named(ledger_of_ten, capsys):
    lift_triggers()
    with connection.cursor() as cursor:
        cursor.execute("UPDATE chain_entry SET payload = replace(payload, 'entry 6', 'entry 7') WHERE seq = 7")
    status, out = run_verify(capsys)
    assert status == 1
    assert "FAILED at entry 7" in out
    assert "payload" in out


def test_a_deleted_entry_is_named(ledger_of_ten, capsys):
    lift_triggers()
    with connection.cursor() as cursor:
        cursor.execute("DELETE FROM chain_entry WHERE seq = 4")
    status, out = run_verify(capsys)
    assert status == 1
    assert "FAILED at entry 5" in out
    assert "missing" in out


def test_a_truncated_tail_is_caught_by_the_head(ledger_of_ten, capsys):
    lift_triggers()
    with connection.cursor() as cursor:
        cursor.execute("DELETE FROM chain_entry WHERE seq > 8")
    status, out = run_verify(capsys)
    assert status == 1
    assert "FAILED at entry 9" in out
