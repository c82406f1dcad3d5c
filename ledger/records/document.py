"""The machine-readable record: the JSON file embedded in every record PDF.

Pure data, no Django: ``ledger.records.render`` writes it, ``ledger.records.verify`` reads it
offline. Shape (``forebook.record/1``)::

    {"schema": "forebook.record/1", "generated_at": "<UTC>", "instance": "<site name>",
     "study": {"code", "title", "state", "lab_uid", "lab_name", "investigators": [{"name", "orcid"}]},
     "authors": {"<user id>": "<name>"},
     "entries": [{"seq", "kind", "lab_uid", "study_code", "author_id", "created_at", "payload",
                  "payload_sha256", "prev_hash", "entry_hash", "inclusion_proof": ["<hex>", ...]}],
     "checkpoint": {"origin", "size", "root_hash", "note", "entry_seq", "entry_hash", "created_at"},
     "log_vkey": "<C2SP verifier key of the log>",
     "verification": {<how each hash is computed, in words>}}

``payload`` is the exact sealed text; every hash is lowercase hex. ``inclusion_proof`` is the
RFC 6962 audit path of leaf ``seq - 1`` in the tree of ``checkpoint.size`` leaves.
"""

from __future__ import annotations

from typing import Any

RECORD_SCHEMA = "forebook.record/1"
ATTACHMENT_NAME = "forebook-record.json"
ATTACHMENT_DESCRIPTION = "Forebook record: entries, inclusion proofs and signed checkpoint (JSON)"

HOW_HASHES_ARE_COMPUTED = {
    "payload_sha256": "SHA-256 of the UTF-8 bytes of payload (RFC 8785 canonical JSON, stored as sealed).",
    "entry_hash": (
        'SHA-256 of the RFC 8785 serialisation of {"author": author_id, "created_at": created_at, '
        '"kind": kind, "lab": lab_uid, "payload_sha256": payload_sha256, "prev": prev_hash, '
        '"seq": seq, "study": study_code, "v": 1}.'
    ),
    "merkle": (
        "RFC 6962 section 2.1: leaf hash = SHA-256(0x00 || the 32 bytes of entry_hash), node hash = "
        "SHA-256(0x01 || left || right); leaf index = seq - 1."
    ),
    "checkpoint": (
        "checkpoint.note is a C2SP signed note (signed-note v1.0.0, Ed25519) whose text is a C2SP "
        "tlog-checkpoint: origin, tree size, base64 root hash. Verify it with log_vkey or, better, with "
        "the key the instance publishes at /log/key.json."
    ),
}

ENTRY_FIELDS = (
    "seq",
    "kind",
    "lab_uid",
    "study_code",
    "author_id",
    "created_at",
    "payload",
    "payload_sha256",
    "prev_hash",
    "entry_hash",
)


def entry_row(
    *,
    seq: int,
    kind: str,
    lab_uid: str,
    study_code: str,
    author_id: int | None,
    created_at: str,
    payload: str,
    payload_sha256: str,
    prev_hash: str,
    entry_hash: str,
    inclusion_proof: list[str],
) -> dict[str, Any]:
    return {
        "seq": seq,
        "kind": kind,
        "lab_uid": lab_uid,
        "study_code": study_code,
        "author_id": author_id,
        "created_at": created_at,
        "payload": payload,
        "payload_sha256": payload_sha256,
        "prev_hash": prev_hash,
        "entry_hash": entry_hash,
        "inclusion_proof": inclusion_proof,
    }
