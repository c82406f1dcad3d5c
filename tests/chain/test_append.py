"""entry_append: gap-free, linked, and refused by Python on every change path."""

import hashlib
import json

import pytest

from ledger.chain import merkle
from ledger.chain.errors import LedgerImmutableError
from ledger.chain.models import GENESIS_HASH, ChainHead, Entry, EntryKind, MerkleNode
from ledger.chain.services import entry_append
from ledger.chain.verification import verify_ledger

pytestmark = pytest.mark.django_db


def append(n: int, lab=None) -> list[Entry]:
    return [entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"n": i}, lab=lab) for i in range(n)]


def test_entries_form_a_gap_free_linked_chain(lab):
    entries = append(5, lab=lab)
    assert [e.seq for e in entries] == [1, 2, 3, 4, 5]
    assert entries[0].prev_hash == GENESIS_HASH
    for before, after in zip(entries, entries[1:], strict=False):
        assert after.prev_hash == before.entry_hash
        assert after.created_at >= before.created_at
    head = ChainHead.objects.get()
    assert (head.size, head.head_hash) == (5, entries[-1].entry_hash)


def test_payload_is_stored_as_the_exact_canonical_text_that_was_hashed(lab):
    entry = entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"b": 0.5, "a": "é"}, lab=lab)
    entry.refresh_from_db()
    assert entry.payload == '{"a":"é","b":0.5}'
    assert entry.payload_hash == hashlib.sha256(entry.payload.encode()).hexdigest()
    assert entry.lab_uid == str(lab.uid)


def test_merkle_nodes_and_frontier_follow_every_append(lab):
    entries = append(7, lab=lab)
    leaves = [merkle.leaf_hash(bytes.fromhex(e.entry_hash)) for e in entries]
    stored = {(n.level, n.index): bytes(n.hash) for n in MerkleNode.objects.all()}
    # 7 leaves complete 4 + 2 + 1 perfect subtrees above level 0.
    assert len(stored) == 7 + 3 + 1
    assert stored[(1, 0)] == merkle.node_hash(left=leaves[0], right=leaves[1])
    report = verify_ledger()
    assert report.ok, report.problem
    assert report.count == 7


def test_stored_entries_refuse_save_and_delete(lab):
    entry = append(1, lab=lab)[0]
    entry.payload = json.dumps({"n": 99})
    with pytest.raises(LedgerImmutableError):
        entry.save()
    with pytest.raises(LedgerImmutableError):
        entry.delete()
    with pytest.raises(LedgerImmutableError):
        Entry.objects.filter(seq=1).update(payload="{}")
    with pytest.raises(LedgerImmutableError):
        Entry.objects.all().delete()
    with pytest.raises(LedgerImmutableError):
        MerkleNode.objects.all().delete()


def test_a_bulk_append_is_the_same_chain_as_single_appends(lab):
    from ledger.chain.services import NewEntry, entries_append

    single = append(3, lab=lab)
    bulk = entries_append(
        [NewEntry(kind=EntryKind.PUBLICATION_LINKED, payload={"bulk": i}, lab=lab) for i in range(2500)]
    )
    assert [e.seq for e in bulk] == list(range(4, 2504))
    assert bulk[0].prev_hash == single[-1].entry_hash
    report = verify_ledger()
    assert report.ok, report.problem
    assert report.count == 2503
    assert ChainHead.objects.get().head_hash == bulk[-1].entry_hash


def test_an_empty_bulk_append_writes_nothing(lab):
    from ledger.chain.services import entries_append

    assert entries_append([]) == []
    assert not Entry.objects.exists()
