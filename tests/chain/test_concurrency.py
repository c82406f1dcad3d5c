"""Many writers at once: one chain, no gaps, no forks (PostgreSQL row locks)."""

import threading

import pytest
from django.db import connection, connections

from ledger.chain.models import ChainHead, Entry, EntryKind
from ledger.chain.services import entry_append
from ledger.chain.verification import verify_ledger
from tests.factories import LabFactory

WRITERS = 8
APPENDS_EACH = 200


@pytest.mark.postgres
@pytest.mark.django_db(transaction=True)
def test_eight_writers_appending_200_each_leave_one_gap_free_chain():
    lab = LabFactory()
    errors: list[BaseException] = []
    start = threading.Barrier(WRITERS)

    def writer(number: int) -> None:
        try:
            start.wait()
            for i in range(APPENDS_EACH):
                entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"writer": number, "i": i}, lab=lab)
        except BaseException as error:  # reported below; a thread cannot fail the test itself
            errors.append(error)
        finally:
            connections.close_all()

    threads = [threading.Thread(target=writer, args=(n,)) for n in range(WRITERS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    total = WRITERS * APPENDS_EACH
    assert list(Entry.objects.order_by("seq").values_list("seq", flat=True)) == list(range(1, total + 1))
    assert Entry.objects.values("prev_hash").distinct().count() == total  # no two entries share a parent
    assert ChainHead.objects.get().size == total
    report = verify_ledger()
    assert report.ok, report.problem
    assert report.count == total
    assert connection.vendor == "postgresql"


@pytest.mark.postgres
@pytest.mark.django_db
def test_a_late_first_writer_reuses_the_head_another_writer_created(lab):
    # The fallback of locked_chain_head for a database without a head row: when another writer has
    # already created it and appended, inserting the head again must be skipped, not refused.
    entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"first": True}, lab=lab)
    ChainHead.objects.bulk_create([ChainHead(pk=1)], ignore_conflicts=True)
    assert ChainHead.objects.get().size == 1
