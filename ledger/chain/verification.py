"""Recompute the whole chain from the stored rows and report the first thing that does not hold.

Streams the entries in sequence order (constant memory), recomputing each payload hash, each
entry hash and each link, and the Merkle root over all entry hashes; then compares the result with
the chain head and the stored subtree hashes.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterable
from dataclasses import dataclass

from django.db.models import Q

from ledger.chain import merkle
from ledger.chain.hashing import entry_header_bytes
from ledger.chain.models import GENESIS_HASH, ChainHead, Entry, MerkleNode
from ledger.chain.services import decode_frontier

STREAM_CHUNK = 5000
ENTRY_COLUMNS = (
    "seq",
    "kind",
    "lab_uid",
    "study_code",
    "author_id",
    "created_at",
    "payload",
    "payload_hash",
    "prev_hash",
    "entry_hash",
)


@dataclass(frozen=True)
class VerificationReport:
    count: int
    head_hash: str
    root_hash: bytes
    bad_seq: int | None = None
    problem: str = ""

    @property
    def ok(self) -> bool:
        return self.bad_seq is None and not self.problem


def verify_rows(
    rows: Iterable[tuple],
    *,
    progress: Callable[[int], None] | None = None,
) -> VerificationReport:
    """Check rows shaped like ENTRY_COLUMNS, in the order given (sequence order)."""
    expected_seq = 1
    prev_hash = GENESIS_HASH
    frontier: list[bytes] = []
    for seq, kind, lab_uid, study_code, author_id, created_at, payload, payload_hash, stored_prev, entry_hash in rows:
        problem = _row_problem(
            expected_seq=expected_seq,
            prev_hash=prev_hash,
            seq=seq,
            kind=kind,
            lab_uid=lab_uid,
            study_code=study_code,
            author_id=author_id,
            created_at=created_at,
            payload=payload,
            payload_hash=payload_hash,
            stored_prev=stored_prev,
            entry_hash=entry_hash,
        )
        if problem:
            return VerificationReport(
                count=expected_seq - 1,
                head_hash=prev_hash,
                root_hash=merkle.root_from_frontier(frontier),
                bad_seq=seq,
                problem=problem,
            )
        frontier, _nodes = merkle.frontier_append(
            frontier=frontier, size=seq - 1, leaf=merkle.leaf_hash(bytes.fromhex(entry_hash))
        )
        prev_hash = entry_hash
        expected_seq += 1
        if progress is not None and seq % STREAM_CHUNK == 0:
            progress(seq)
    return VerificationReport(
        count=expected_seq - 1, head_hash=prev_hash, root_hash=merkle.root_from_frontier(frontier)
    )


def _row_problem(
    *, expected_seq: int, prev_hash: str, seq: int, payload: str, stored_prev: str, entry_hash: str, **header
) -> str:
    if seq != expected_seq:
        return f"sequence number {seq} found where {expected_seq} was expected (an entry is missing or was inserted)"
    if hashlib.sha256(payload.encode("utf-8")).hexdigest() != header["payload_hash"]:
        return "the payload does not match its recorded SHA-256 (the payload was changed)"
    if stored_prev != prev_hash:
        return f"prev_hash does not equal the hash of entry {seq - 1} (the chain was broken or reordered)"
    if hashlib.sha256(entry_header_bytes(seq=seq, prev_hash=stored_prev, **header)).hexdigest() != entry_hash:
        return "the entry hash does not match its header (sequence, kind, lab, study, author, time or link was changed)"
    return ""


def verify_ledger(*, progress: Callable[[int], None] | None = None) -> VerificationReport:
    rows = Entry.objects.order_by("seq").values_list(*ENTRY_COLUMNS).iterator(chunk_size=STREAM_CHUNK)
    report = verify_rows(rows, progress=progress)
    if not report.ok:
        return report
    head = ChainHead.objects.filter(pk=1).first()
    head_size = head.size if head else 0
    head_hash = head.head_hash if head else GENESIS_HASH
    if head_size != report.count or head_hash != report.head_hash:
        return _with_problem(
            report,
            f"the chain head says {head_size} entries ending in {head_hash[:16]}…, but the entries end at "
            f"{report.count} with {report.head_hash[:16]}… (entries were removed or the head was changed)",
            bad_seq=min(head_size, report.count) + 1,
        )
    if head is not None and merkle.root_from_frontier(decode_frontier(head.frontier)) != report.root_hash:
        return _with_problem(report, "the stored Merkle frontier does not match the entries (the head row was changed)")
    try:
        stored_root = merkle.root_hash(size=report.count, fetch=stored_nodes)
    except merkle.MissingNodeError as error:
        return _with_problem(report, f"a stored Merkle subtree hash is missing ({error}); proofs cannot be served")
    if stored_root != report.root_hash:
        return _with_problem(
            report, "the stored Merkle subtree hashes do not match the entries (proofs would be wrong)"
        )
    return report


def stored_nodes(positions: set[tuple[int, int]]) -> dict[tuple[int, int], bytes]:
    """Fetch stored subtree hashes for the given (level, index) positions in one query."""
    if not positions:
        return {}
    condition = Q()
    for level, index in positions:
        condition |= Q(level=level, index=index)
    return {
        (level, index): bytes(node)
        for level, index, node in MerkleNode.objects.filter(condition).values_list("level", "index", "hash")
    }


def _with_problem(report: VerificationReport, problem: str, *, bad_seq: int | None = None) -> VerificationReport:
    return VerificationReport(
        count=report.count, head_hash=report.head_hash, root_hash=report.root_hash, bad_seq=bad_seq, problem=problem
    )
