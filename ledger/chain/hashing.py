"""Canonical payloads and the entry hash: the exact bytes an outsider hashes to verify the ledger.

payload bytes   = RFC 8785 (JSON Canonicalization Scheme) serialisation of the payload, UTF-8
payload_sha256  = hex(SHA-256(payload bytes))
entry preimage  = RFC 8785 serialisation of the header object
                  {"v": 1, "seq": <int>, "kind": <str>, "lab": <lab uid or "">,
                   "study": <study code or "">, "author": <user id or null>,
                   "created_at": "YYYY-MM-DDTHH:MM:SS.ffffffZ", "payload_sha256": <hex>,
                   "prev": <previous entry_hash, or 64 zeros for seq 1>}
entry_hash      = hex(SHA-256(entry preimage))

DEVELOPERS.md repeats this with a worked example; change both together, and bump "v".
"""

import datetime as dt
import hashlib
import json
from typing import Any

import rfc8785

from ledger.chain.errors import LedgerError

HEADER_VERSION = 1


class PayloadNotCanonicalisable(LedgerError):
    """A payload holds a value JSON cannot carry exactly (NaN, infinity, a huge integer, a set ...)."""


def canonical_json(payload: Any) -> str:
    try:
        return rfc8785.dumps(payload).decode("utf-8")
    except (rfc8785.CanonicalizationError, TypeError) as error:
        raise PayloadNotCanonicalisable(
            f"This value cannot be sealed as JSON: {error}. Numbers must be finite and integers "
            "within ±2**53; dates must be written as ISO 8601 text."
        ) from error


def sha256_hex(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def format_timestamp(moment: dt.datetime) -> str:
    """UTC, always six fractional digits, 'Z' suffix: one spelling per instant."""
    if moment.tzinfo is None:
        raise ValueError("Ledger timestamps must be timezone-aware (UTC).")
    return moment.astimezone(dt.UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def entry_header(
    *,
    seq: int,
    kind: str,
    lab_uid: str,
    study_code: str,
    author_id: int | None,
    created_at: dt.datetime,
    payload_hash: str,
    prev_hash: str,
) -> dict[str, Any]:
    return {
        "v": HEADER_VERSION,
        "seq": seq,
        "kind": kind,
        "lab": lab_uid,
        "study": study_code,
        "author": author_id,
        "created_at": format_timestamp(created_at),
        "payload_sha256": payload_hash,
        "prev": prev_hash,
    }


def entry_digest(**header_fields: Any) -> str:
    return sha256_hex(entry_header_bytes(**header_fields))


def entry_header_bytes(**header_fields: Any) -> bytes:
    """The entry preimage, built without the general canonicaliser.

    Every header value is an integer, null, or text made of ASCII letters, digits, '-', ':', '.'
    and '_', for which Python's sorted-key compact JSON and RFC 8785 give the same bytes (a test
    checks this against ``rfc8785``). Verification hashes a million headers, so this path matters.
    """
    return json.dumps(entry_header(**header_fields), sort_keys=True, separators=(",", ":")).encode("ascii")
