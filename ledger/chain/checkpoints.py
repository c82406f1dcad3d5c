"""Signed checkpoints of the ledger's Merkle log, and the proofs that tie entries to them.

A checkpoint is a C2SP tlog-checkpoint body (origin, tree size, base64 root hash) wrapped in a
C2SP signed note (v1.0.0) signed with the instance's Ed25519 log key; witnesses can add their
own cosignature lines to the same note. The log's leaves are the entries in ``seq`` order (leaf
input: the 32 raw bytes of the entry hash, RFC 6962 section 2.1), and the origin is the log key's
name, so the note's signer and its origin always agree.

Each checkpoint is itself sealed as a ``CHECKPOINT_SIGNED`` entry. It is appended *after* the tree
it signs, so **the checkpoint of size n is entry n + 1**: it is never covered by itself, only by
the next checkpoint. "New entries exist" therefore means the ledger holds more than the previous
checkpoint's size + 1 entries.

Invariant: no two signed checkpoints disagree. Before signing size n the previous checkpoint
(size m) is proved to be a prefix of the current tree with an RFC 6962 consistency proof built
from stored nodes, and n >= m; when that fails nothing is signed and ``CheckpointRefused`` is
raised (and logged as critical), because signing would hand witnesses proof of a forked log.

Cost: every proof here is assembled from stored perfect-subtree nodes fetched in one query. An
inclusion or consistency proof plus the root it leads to needs at most 2 * ceil(log2 n) + popcount(n)
nodes (``ledger.chain.merkle`` gives the exact bounds), i.e. O(log n) rows, whatever the ledger size.
"""

from __future__ import annotations

import json
import logging
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from django.conf import settings
from django.db import transaction

from ledger.chain import merkle, notes
from ledger.chain.errors import LedgerError
from ledger.chain.hashing import format_timestamp
from ledger.chain.models import ChainHead, Entry, EntryKind
from ledger.chain.services import decode_frontier, entry_append, locked_chain_head
from ledger.chain.verification import stored_nodes

logger = logging.getLogger(__name__)

CHECKPOINT_SCHEMA = "forebook.checkpoint/1"
LOG_KEY_FILE_NAME = "log.key"


class LogKeyMissing(LedgerError):
    """The instance has no usable Ed25519 log key; the message says how to make one."""


class CheckpointRefused(LedgerError):
    """Signing was refused because the new tree does not extend the last signed one."""


class ProofRequestError(LedgerError):
    """A proof was asked for sizes or entries the log cannot prove; the message says what fits."""


@dataclass(frozen=True)
class SignedCheckpoint:
    """A checkpoint as stored in its ledger entry."""

    entry_seq: int
    entry_hash: str
    created_at: str
    origin: str
    size: int
    root_hash: bytes
    note: str

    @classmethod
    def from_entry(cls, entry: Entry) -> SignedCheckpoint:
        payload = json.loads(entry.payload)
        return cls(
            entry_seq=entry.seq,
            entry_hash=entry.entry_hash,
            created_at=format_timestamp(entry.created_at),
            origin=payload["origin"],
            size=payload["size"],
            root_hash=bytes.fromhex(payload["root"]),
            note=payload["note"],
        )

    def as_json(self) -> dict[str, Any]:
        return {
            "origin": self.origin,
            "size": self.size,
            "root_hash": self.root_hash.hex(),
            "note": self.note,
            "entry_seq": self.entry_seq,
            "entry_hash": self.entry_hash,
            "created_at": self.created_at,
        }


# --- the log key -----------------------------------------------------------------------------


def log_key_path() -> Path:
    """FOREBOOK_LOG_KEY when set, else ``log.key`` in the identity directory."""
    configured = getattr(settings, "FOREBOOK_LOG_KEY", "")
    if configured:
        return Path(configured)
    return Path(settings.FOREBOOK_IDENTITY_DIR) / LOG_KEY_FILE_NAME


def log_signer() -> notes.NoteSigner:
    path = log_key_path()
    try:
        key_text = path.read_text(encoding="ascii").strip()
    except FileNotFoundError:
        raise LogKeyMissing(
            f"No log signing key at {path}. Run `python manage.py create_signing_identity` to make "
            "one, or set FOREBOOK_LOG_KEY to a file holding a PRIVATE+KEY+… signer key."
        ) from None
    except (OSError, UnicodeDecodeError) as error:
        raise LogKeyMissing(
            f"The log signing key at {path} cannot be read ({error}); check the file's owner and "
            "permissions (it should be readable by the Forebook user only, mode 600)."
        ) from None
    try:
        return notes.NoteSigner.from_private_key_string(key_text)
    except notes.KeyFormatError as error:
        raise LogKeyMissing(
            f"The file {path} does not hold a valid log signing key: {error}. Restore it from "
            "your backup, or make a new one with `python manage.py create_signing_identity --force` "
            "(witnesses must then be given the new verifier key)."
        ) from None


def log_verifier() -> notes.NoteVerifier:
    return log_signer().verifier


# --- reading the tree ------------------------------------------------------------------------


def _assemble_from_store(plans: list[merkle.ProofPlan]) -> list[list[bytes]]:
    """Every plan's hashes, from one batched query for the union of the nodes they need."""
    needed: set[merkle.NodeId] = set()
    for plan in plans:
        needed |= merkle.plan_node_ids(plan)
    nodes = stored_nodes(needed)
    return [merkle.assemble_proof(plan=plan, nodes=nodes) for plan in plans]


def _root_plan(size: int) -> merkle.ProofPlan:
    return [merkle.subtrees_of_range(start=0, end=size)] if size else []


def _root_from(assembled: list[bytes]) -> bytes:
    return assembled[0] if assembled else merkle.EMPTY_ROOT


def log_size() -> int:
    head = ChainHead.objects.filter(pk=1).only("size").first()
    return head.size if head else 0


def _require_size_in_log(size: int, *, what: str) -> None:
    current = log_size()
    if not 0 <= size <= current:
        raise ProofRequestError(f"{what} must be between 0 and the log's current size {current}; got {size}.")


def inclusion_proofs(*, seqs: Iterable[int], size: int) -> tuple[dict[int, list[bytes]], bytes]:
    """Inclusion proofs of entries ``seqs`` in the tree of ``size`` entries, and that tree's root.

    One query for all of them: a study record with k entries reads O(k log n) nodes at once.
    """
    _require_size_in_log(size, what="The tree size")
    seqs = sorted(set(seqs))
    for seq in seqs:
        if not 1 <= seq <= size:
            raise ProofRequestError(
                f"Entry {seq} is not in the tree of size {size}: entries 1 to {size} are. Ask for a "
                "later tree size (the next checkpoint covers it)."
            )
    plans = [merkle.inclusion_proof_plan(index=seq - 1, size=size) for seq in seqs]
    *proofs, root = _assemble_from_store([*plans, _root_plan(size)])
    return dict(zip(seqs, proofs, strict=True)), _root_from(root)


def consistency_proof(*, old_size: int, new_size: int) -> tuple[list[bytes], bytes, bytes]:
    """The RFC 6962 consistency proof from ``old_size`` to ``new_size`` and both roots (one query)."""
    _require_size_in_log(new_size, what="The newer tree size")
    if not 0 <= old_size <= new_size:
        raise ProofRequestError(f"The older tree size must be between 0 and the newer size {new_size}; got {old_size}.")
    proof, old_root, new_root = _assemble_from_store(
        [
            merkle.consistency_proof_plan(old_size=old_size, new_size=new_size),
            _root_plan(old_size),
            _root_plan(new_size),
        ]
    )
    return proof, _root_from(old_root), _root_from(new_root)


# --- stored checkpoints ----------------------------------------------------------------------


def _checkpoint_entries():
    return Entry.objects.filter(kind=EntryKind.CHECKPOINT_SIGNED)


def latest_checkpoint() -> SignedCheckpoint | None:
    entry = _checkpoint_entries().order_by("-seq").first()
    return SignedCheckpoint.from_entry(entry) if entry else None


def checkpoint_of_size(*, size: int) -> SignedCheckpoint | None:
    # Sizes strictly grow from one checkpoint to the next, and the checkpoint of size n comes
    # after entry n (usually as entry n + 1), so only the first checkpoint after entry n can match.
    entry = _checkpoint_entries().filter(seq__gt=size).order_by("seq").first()
    if entry is None:
        return None
    checkpoint = SignedCheckpoint.from_entry(entry)
    return checkpoint if checkpoint.size == size else None


def checkpoint_is_due() -> bool:
    """True when entries were appended since the last checkpoint, other than that checkpoint itself."""
    previous = latest_checkpoint()
    size = log_size()
    if previous is None:
        return size > 0
    return size > previous.entry_seq


# --- signing ---------------------------------------------------------------------------------


@transaction.atomic
def checkpoint_sign() -> SignedCheckpoint:
    """Sign the current tree and seal the checkpoint as a CHECKPOINT_SIGNED entry.

    Refuses (``CheckpointRefused``) when the current tree does not extend the last signed one.
    """
    signer = log_signer()
    head = locked_chain_head()
    size = head.size
    if size == 0:
        raise CheckpointRefused("The ledger is empty: there is nothing to sign yet.")
    previous = latest_checkpoint()
    old_size = previous.size if previous else 0
    if size < old_size:
        _refuse(f"the log has {size} entries but a checkpoint of size {old_size} was already signed")
    proof, old_root, new_root = consistency_proof(old_size=old_size, new_size=size)
    if new_root != merkle.root_from_frontier(decode_frontier(head.frontier)):
        _refuse("the stored Merkle nodes do not match the chain head")
    if previous is not None and old_root != previous.root_hash:
        _refuse(f"the stored tree of size {old_size} has a different root from the checkpoint signed for it")
    if previous is not None and not merkle.verify_consistency(
        old_size=old_size, new_size=size, old_root=previous.root_hash, new_root=new_root, proof=proof
    ):
        _refuse(f"the tree of size {size} is not consistent with the checkpoint of size {old_size}")
    body = notes.format_checkpoint(origin=signer.name, size=size, root_hash=new_root)
    note = notes.sign_note(text=body, signer=signer)
    entry = entry_append(
        kind=EntryKind.CHECKPOINT_SIGNED,
        payload={
            "schema": CHECKPOINT_SCHEMA,
            "origin": signer.name,
            "size": size,
            "root": new_root.hex(),
            "note": note,
        },
    )
    return SignedCheckpoint.from_entry(entry)


def _refuse(reason: str) -> None:
    message = (
        f"Checkpoint refused: {reason}. Nothing was signed. Run `python manage.py verify_ledger` to "
        "find the damaged entry, and do not sign again until the ledger is restored from a backup."
    )
    logger.critical(message)
    raise CheckpointRefused(message)


def checkpoint_sign_if_due() -> SignedCheckpoint | None:
    """The scheduled job: sign only when entries other than the last checkpoint were appended."""
    with transaction.atomic():
        # Serialise with appends and other signers, so two workers never sign the same size.
        locked_chain_head()
        if not checkpoint_is_due():
            return None
        return checkpoint_sign()


def checkpoint_covering(*, seq: int) -> SignedCheckpoint:
    """A signed checkpoint whose tree contains entry ``seq``: the latest one, or a new one."""
    with transaction.atomic():
        locked_chain_head()
        latest = latest_checkpoint()
        if latest is not None and latest.size >= seq:
            return latest
        return checkpoint_sign()
