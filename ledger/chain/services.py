"""The one path into the ledger.

``entry_append`` is the only code that writes ``Entry`` or ``MerkleNode`` rows. It is meant to
be called inside the caller's transaction, so that a domain change (a study becoming sealed)
and the entry that justifies it commit together or not at all.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from django.db import DatabaseError, connection, transaction

from ledger.chain import merkle
from ledger.chain.errors import LedgerWriteError
from ledger.chain.hashing import canonical_json, entry_digest, sha256_hex
from ledger.chain.models import ChainHead, Entry, EntryKind, MerkleNode

if TYPE_CHECKING:
    from django.contrib.auth.models import AbstractBaseUser

    from ledger.labs.models import Lab
    from ledger.plans.models import Study


def encode_frontier(frontier: list[bytes]) -> str:
    return ",".join(node.hex() for node in frontier)


def decode_frontier(text: str) -> list[bytes]:
    return [bytes.fromhex(part) for part in text.split(",") if part]


def database_now() -> dt.datetime:
    """The database server's clock, in UTC: the one clock every app server shares."""
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute("SELECT clock_timestamp()")
            return cursor.fetchone()[0].astimezone(dt.UTC)
        # SQLite's clock gives milliseconds; the extra digits stay zero.
        cursor.execute("SELECT strftime('%Y-%m-%d %H:%M:%f', 'now')")
        return dt.datetime.fromisoformat(cursor.fetchone()[0]).replace(tzinfo=dt.UTC)


def locked_chain_head() -> ChainHead:
    """Lock the chain head row and return it as it is after every earlier append committed.

    The lock is taken on the head row, which every append modifies. A SELECT ... FOR UPDATE that
    waited for another writer re-reads the row it locked, so ``size`` and ``head_hash`` come from
    after that writer's commit. Locking the last entry row instead would not serialise anything:
    entries are never modified, so waiters would all see the same old tip and fork the chain.
    """
    try:
        return ChainHead.objects.select_for_update().get(pk=1)
    except ChainHead.DoesNotExist:
        # Only on an empty database (or after a test flush); two racing first writers both
        # reach here, and ignore_conflicts makes the loser wait for and reuse the winner's row.
        ChainHead.objects.bulk_create([ChainHead(pk=1)], ignore_conflicts=True)
        return ChainHead.objects.select_for_update().get(pk=1)


@dataclass(frozen=True)
class NewEntry:
    """One entry to seal: what ``entry_append`` takes, for sealing several in one go."""

    kind: EntryKind | str
    payload: dict[str, Any]
    lab: Lab | None = None
    study: Study | None = None
    author: AbstractBaseUser | None = None


def entry_append(
    *,
    kind: EntryKind | str,
    payload: dict[str, Any],
    lab: Lab | None = None,
    study: Study | None = None,
    author: AbstractBaseUser | None = None,
) -> Entry:
    """Seal one entry at the tip of the chain and return it.

    Raises ``PayloadNotCanonicalisable`` before touching the database when the payload cannot be
    serialised exactly, and ``LedgerWriteError`` when the database refuses the append; in both
    cases nothing is written.
    """
    return entries_append([NewEntry(kind=kind, payload=payload, lab=lab, study=study, author=author)])[0]


def entries_append(items: Sequence[NewEntry]) -> list[Entry]:
    """Seal several entries at the tip, in order, under one lock and one database time stamp.

    The same rules as for one entry: each is hashed, linked to the one before and added to the
    Merkle tree, and the database's triggers check every row. Bulk loads (the benchmark data,
    imports) use this to write thousands of entries per statement.
    """
    prepared = [_prepared(item) for item in items]
    if not prepared:
        return []
    try:
        with transaction.atomic():
            head = locked_chain_head()
            # The clock can step back (NTP); the chain's timestamps never do.
            created_at = database_now()
            if head.last_created_at is not None and created_at < head.last_created_at:
                created_at = head.last_created_at
            frontier = decode_frontier(head.frontier)
            size, prev_hash = head.size, head.head_hash
            entries, nodes = [], []
            for fields in prepared:
                seq = size + 1
                entry_hash = entry_digest(seq=seq, created_at=created_at, prev_hash=prev_hash, **fields.header)
                entries.append(
                    Entry(seq=seq, created_at=created_at, prev_hash=prev_hash, entry_hash=entry_hash, **fields.row)
                )
                frontier, new_nodes = merkle.frontier_append(
                    frontier=frontier, size=size, leaf=merkle.leaf_hash(bytes.fromhex(entry_hash))
                )
                nodes += [MerkleNode(level=level, index=index, hash=node) for level, index, node in new_nodes]
                size, prev_hash = seq, entry_hash
            Entry.objects.bulk_create(entries, batch_size=BULK_BATCH)
            MerkleNode.objects.bulk_create(nodes, batch_size=BULK_BATCH)
            head.size = size
            head.head_hash = prev_hash
            head.last_created_at = created_at
            head.frontier = encode_frontier(frontier)
            head.save(update_fields=["size", "head_hash", "last_created_at", "frontier"])
    except DatabaseError as error:
        kinds = ", ".join(sorted({EntryKind(item.kind).label.lower() for item in items}))
        raise LedgerWriteError(
            f"The database refused to append ({kinds}), so nothing was sealed: {error}. Try again; if it "
            "keeps failing, ask your administrator to run `python manage.py verify_ledger`."
        ) from error
    return entries


# Rows per INSERT statement in a bulk append: large enough to amortise round trips, small enough
# to stay far below the database's parameter limits.
BULK_BATCH = 1000


@dataclass(frozen=True)
class _Prepared:
    header: dict[str, Any]
    row: dict[str, Any]


def _prepared(item: NewEntry) -> _Prepared:
    """Canonicalise and hash the payload before the lock is taken: no work inside it that can wait."""
    kind = EntryKind(item.kind)
    lab = item.study.lab if item.study is not None and item.lab is None else item.lab
    payload_text = canonical_json(item.payload)
    payload_hash = sha256_hex(payload_text.encode("utf-8"))
    header = {
        "kind": kind.value,
        "lab_uid": str(lab.uid) if lab is not None else "",
        "study_code": item.study.code if item.study is not None else "",
        "author_id": item.author.pk if item.author is not None else None,
        "payload_hash": payload_hash,
    }
    return _Prepared(header=header, row={**header, "lab": lab, "study": item.study, "payload": payload_text})
