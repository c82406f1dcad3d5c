"""The database itself refuses to change or remove ledger rows, whoever asks."""

import os
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest
from django.db import DatabaseError, connection, transaction

from ledger.chain.models import EntryKind
from ledger.chain.services import entry_append

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def two_entries(lab):
    return [entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"n": i}, lab=lab) for i in range(2)]


def refused(sql: str, params=()) -> bool:
    try:
        with transaction.atomic(), connection.cursor() as cursor:
            cursor.execute(sql, params)
    except DatabaseError as error:
        return "forebook ledger" in str(error)
    return False


@pytest.mark.django_db
@pytest.mark.parametrize(
    "sql",
    [
        "UPDATE chain_entry SET payload = '{}' WHERE seq = 1",
        "DELETE FROM chain_entry WHERE seq = 2",
        "UPDATE chain_merklenode SET level = level",
        "DELETE FROM chain_merklenode",
        "DELETE FROM chain_chainhead",
        "UPDATE chain_chainhead SET size = 1",
    ],
)
def test_raw_sql_changes_are_refused(two_entries, sql):
    assert refused(sql)


@pytest.mark.django_db
def test_an_entry_that_does_not_extend_the_tip_is_refused(two_entries):
    columns = (
        "seq, kind, lab_id, study_id, lab_uid, study_code, author_id, created_at, payload, payload_hash, "
        "prev_hash, entry_hash"
    )
    values = "%s, 'PUBLICATION_LINKED', NULL, NULL, '', '', NULL, %s, '{}', %s, %s, %s"
    insert = f"INSERT INTO chain_entry ({columns}) VALUES ({values})"
    now = two_entries[-1].created_at
    fork = (2 + 2, now, "a" * 64, two_entries[-1].entry_hash, "b" * 64)  # skips seq 3: a gap
    wrong_link = (3, now, "a" * 64, "c" * 64, "d" * 64)  # prev is not entry 2's hash: a fork
    assert refused(insert, fork)
    assert refused(insert, wrong_link)


@pytest.mark.django_db
@pytest.mark.postgres
@pytest.mark.parametrize("table", ["chain_entry", "chain_merklenode", "chain_chainhead"])
def test_truncate_is_refused_on_postgres(two_entries, table):
    with connection.cursor() as cursor:
        # Django's deferred foreign-key checks from the inserts above would block TRUNCATE for
        # an unrelated reason ("pending trigger events"); run them now.
        cursor.execute("SET CONSTRAINTS ALL IMMEDIATE")
    assert refused(f"TRUNCATE {table} CASCADE")


@pytest.mark.django_db
@pytest.mark.postgres
def test_replica_session_role_does_not_skip_the_triggers(two_entries):
    # session_replication_role = replica skips ordinary triggers; ours are ENABLE ALWAYS.
    with transaction.atomic(), connection.cursor() as cursor:
        cursor.execute("SET LOCAL session_replication_role = replica")
        with pytest.raises(DatabaseError, match="forebook ledger"), transaction.atomic():
            cursor.execute("DELETE FROM chain_entry")


@pytest.mark.django_db
@pytest.mark.postgres
def test_every_ledger_trigger_is_enabled_always():
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT tgname, tgenabled FROM pg_trigger WHERE NOT tgisinternal "
            "AND tgrelid::regclass::text IN ('chain_entry', 'chain_merklenode', 'chain_chainhead')"
        )
        states = dict(cursor.fetchall())
    assert len(states) == 7
    assert set(states.values()) == {"A"}, states


def test_sqlite_triggers_refuse_change_after_a_real_migration(tmp_path):
    """Migrate a fresh SQLite file with the production code path and poke it with raw SQL."""
    database = tmp_path / "ledger.sqlite3"
    env = {**os.environ, "DATABASE_URL": f"sqlite:///{database}", "DJANGO_SETTINGS_MODULE": "ledger.settings.base"}
    script = (
        "import django; django.setup();"
        "from django.core.management import call_command; call_command('migrate', verbosity=0);"
        "from ledger.chain.services import entry_append;"
        "entry_append(kind='PUBLICATION_LINKED', payload={'n': 1})"
    )
    subprocess.run([sys.executable, "-c", script], cwd=ROOT, env=env, check=True)
    db = sqlite3.connect(database)
    for sql in (
        "UPDATE chain_entry SET payload = '{}'",
        "DELETE FROM chain_entry",
        "DELETE FROM chain_merklenode",
        "DELETE FROM chain_chainhead",
    ):
        with pytest.raises(sqlite3.IntegrityError, match="forebook ledger"):
            db.execute(sql)
    assert db.execute("SELECT count(*) FROM chain_entry").fetchone() == (1,)


@pytest.mark.django_db
@pytest.mark.postgres
def test_a_temporary_table_cannot_stand_in_for_the_chain_tip(two_entries):
    # Without a pinned search_path a session's temporary chain_entry would be found first by the
    # INSERT trigger, and a forged tip there would let a fork through.
    forged_tip = "e" * 64
    with connection.cursor() as cursor:
        cursor.execute("CREATE TEMPORARY TABLE chain_entry (seq bigint, entry_hash text)")
        cursor.execute("INSERT INTO pg_temp.chain_entry VALUES (2, %s)", [forged_tip])
    columns = (
        "seq, kind, lab_id, study_id, lab_uid, study_code, author_id, created_at, payload, payload_hash, "
        "prev_hash, entry_hash"
    )
    insert = (
        f"INSERT INTO public.chain_entry ({columns}) "
        "VALUES (3, 'PUBLICATION_LINKED', NULL, NULL, '', '', NULL, now(), '{}', %s, %s, %s)"
    )
    assert refused(insert, ("a" * 64, forged_tip, "f" * 64))
