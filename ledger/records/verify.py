"""Checking a record PDF offline: no database, no network, only the file and the keys given.

An editor (or ``python manage.py verify_record``, or the public upload page) learns, check by check:

1. **PDF signature**: the PAdES signature is cryptographically intact, covers the whole file (no
   later changes), and its certificate chains to a certificate the caller trusts (pyHanko).
2. **Embedded record data**: the JSON attachment (``ledger.records.document``) is present and well formed.
3. **Entry hashes**: each entry's payload hash and entry hash recompute from its payload and header
   (the preimage in ``ledger.chain.hashing``), and each entry belongs to the record's study.
4. **Inclusion proofs**: each entry's RFC 6962 proof leads to the checkpoint's root.
5. **Checkpoint signature**: the checkpoint's signed note verifies with the log's Ed25519 key and
   names the same tree size and root as the record.
6. Optionally, **consistency with a checkpoint the caller saved**: equal sizes need equal roots;
   different sizes need an RFC 6962 consistency proof (from the instance or its public log).

Every function here takes plain values and never raises on a hostile file: problems become
failed checks whose detail says what was wrong and, where possible, what to do.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import zlib
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from asn1crypto import x509 as asn1_x509

from ledger.chain import merkle, notes
from ledger.chain.hashing import entry_header_bytes, format_timestamp
from ledger.records.document import ATTACHMENT_NAME, ENTRY_FIELDS, RECORD_SCHEMA

if TYPE_CHECKING:
    from pyhanko.pdf_utils.reader import PdfFileReader

CHECK_PDF_SIGNATURE = "PDF signature"
CHECK_RECORD_DATA = "Embedded record data"
CHECK_ENTRY_HASHES = "Entry hashes"
CHECK_INCLUSION = "Inclusion proofs"
CHECK_CHECKPOINT_SIGNATURE = "Checkpoint signature"
CHECK_REFERENCE = "Consistency with your checkpoint"

# The embedded JSON of a study with thousands of entries stays far below this; a larger inflated
# stream is a decompression bomb, not a record.
MAX_RECORD_JSON_BYTES = 64 * 1024 * 1024
MAX_NAME_TREE_DEPTH = 16
TIMESTAMP_FORMAT = "%Y-%m-%dT%H:%M:%S.%fZ"

ConsistencyProofSource = Callable[[int, int], "Sequence[bytes] | None"]
"""(older size, newer size) -> the RFC 6962 consistency proof, or None when it cannot be had."""


@dataclass(frozen=True)
class CheckResult:
    name: str
    passed: bool
    detail: str


@dataclass(frozen=True)
class RecordVerification:
    checks: tuple[CheckResult, ...]
    record: dict[str, Any] | None

    @property
    def ok(self) -> bool:
        return bool(self.checks) and all(check.passed for check in self.checks)

    @property
    def study_code(self) -> str:
        study = (self.record or {}).get("study")
        return study.get("code", "") if isinstance(study, dict) else ""


class RecordUnreadable(ValueError):
    """The file cannot be read as a record at all; the message says why."""


# --- the PDF ---------------------------------------------------------------------------------


def open_pdf(*, pdf: bytes) -> PdfFileReader:
    from pyhanko.pdf_utils.reader import PdfFileReader

    if not pdf.startswith(b"%PDF-"):
        raise RecordUnreadable(
            "This is not a PDF file (it does not start with %PDF-); use the record PDF Forebook exported."
        )
    try:
        reader = PdfFileReader(io.BytesIO(pdf))
        reader.root  # noqa: B018 -- forces the trailer and catalogue to parse now, not in a later check
    except Exception as error:  # pyHanko raises many types on malformed input; all mean the same here.
        raise RecordUnreadable(f"This PDF is damaged and cannot be read ({_short(error)}).") from None
    return reader


def check_pdf_signature(*, reader: PdfFileReader, trust_roots: Sequence[asn1_x509.Certificate] = ()) -> CheckResult:
    """Judge the signature by integrity, coverage and trust; never by ``status.valid`` alone."""
    from pyhanko.sign.validation import validate_pdf_signature
    from pyhanko.sign.validation.status import SignatureCoverageLevel
    from pyhanko_certvalidator import ValidationContext

    try:
        signatures = reader.embedded_signatures
    except Exception as error:
        return CheckResult(CHECK_PDF_SIGNATURE, False, f"The signature fields cannot be read ({_short(error)}).")
    if len(signatures) != 1:
        return CheckResult(
            CHECK_PDF_SIGNATURE,
            False,
            f"The PDF carries {len(signatures)} signatures; a Forebook record carries exactly one.",
        )
    signature = signatures[0]
    try:
        signer_certificate = signature.signer_cert
        roots = list(trust_roots) or [signer_certificate]
        context = ValidationContext(trust_roots=roots, allow_fetching=False)
        status = validate_pdf_signature(signature, context, ts_validation_context=context)
    except Exception as error:
        return CheckResult(CHECK_PDF_SIGNATURE, False, f"The signature cannot be checked ({_short(error)}).")

    subject = signer_certificate.subject.human_friendly
    if not (status.intact and status.valid):
        return CheckResult(
            CHECK_PDF_SIGNATURE,
            False,
            "The signed content was changed after signing (the digest does not match): this is not the "
            "file Forebook signed.",
        )
    if status.coverage != SignatureCoverageLevel.ENTIRE_FILE:
        return CheckResult(
            CHECK_PDF_SIGNATURE,
            False,
            "Something was added to the PDF after it was signed; the signature no longer covers the whole file.",
        )
    if not status.trusted:
        return CheckResult(
            CHECK_PDF_SIGNATURE,
            False,
            f"The signature is intact, but its certificate ({subject}) does not chain to the certificate you "
            "trust for this instance.",
        )
    timestamp = status.timestamp_validity
    if timestamp is not None and not (timestamp.intact and timestamp.valid):
        return CheckResult(CHECK_PDF_SIGNATURE, False, "The signature's timestamp token is damaged.")
    parts = [f"Intact and covers the whole file; signed by {subject}"]
    if not trust_roots:
        parts.append(
            "the certificate was NOT checked against one you trust (pass the instance's certificate, "
            "published at /records/certificate.pem)"
        )
    if timestamp is not None:
        trusted = "trusted" if timestamp.trusted else "not checked against a trusted authority"
        parts.append(f"timestamped {timestamp.timestamp:%Y-%m-%d %H:%M:%S} UTC by an authority ({trusted}) [PAdES B-T]")
    else:
        parts.append("signing time claimed by the signer only [PAdES B-B]")
    return CheckResult(CHECK_PDF_SIGNATURE, True, "; ".join(parts) + ".")


def embedded_record(*, reader: PdfFileReader) -> dict[str, Any]:
    """The parsed JSON attachment; raises RecordUnreadable when it is missing or malformed."""
    try:
        stream = _find_attachment(reader.root["/Names"]["/EmbeddedFiles"], depth=0)
    except (KeyError, TypeError):
        stream = None
    except RecordUnreadable:
        raise
    except Exception as error:
        raise RecordUnreadable(f"The PDF's attachments cannot be read ({_short(error)}).") from None
    if stream is None:
        raise RecordUnreadable(
            f"The PDF has no {ATTACHMENT_NAME} attachment, so it is not a Forebook record (or it was rebuilt "
            "by a program that dropped attachments)."
        )
    raw = _bounded_stream_data(stream)
    try:
        record = json.loads(raw.decode("utf-8"))
    except (UnicodeDecodeError, ValueError, RecursionError) as error:
        raise RecordUnreadable(f"The embedded {ATTACHMENT_NAME} is not valid JSON ({_short(error)}).") from None
    problem = record_shape_problem(record=record)
    if problem:
        raise RecordUnreadable(f"The embedded {ATTACHMENT_NAME} is not a Forebook record: {problem}.")
    return record


def _find_attachment(node, *, depth: int):
    if depth > MAX_NAME_TREE_DEPTH:
        raise RecordUnreadable("The PDF's attachment list is nested too deeply to be a Forebook record.")
    node = node.get_object() if hasattr(node, "get_object") else node
    names = node.get("/Names")
    if names is not None:
        for position in range(0, len(names) - 1, 2):
            if str(names[position]) == ATTACHMENT_NAME:
                spec = names[position + 1].get_object()
                return spec["/EF"]["/F"].get_object()
    for kid in node.get("/Kids") or ():
        found = _find_attachment(kid, depth=depth + 1)
        if found is not None:
            return found
    return None


def _bounded_stream_data(stream) -> bytes:
    """Inflate at most MAX_RECORD_JSON_BYTES, so a hostile stream cannot exhaust memory."""
    filters = stream.get("/Filter")
    if filters is not None and not isinstance(filters, str):
        filters = list(filters)
        filters = filters[0] if len(filters) == 1 else filters
    encoded = stream.encoded_data
    if filters is None:
        data = encoded
    elif filters == "/FlateDecode" and stream.get("/DecodeParms") is None:
        inflater = zlib.decompressobj()
        try:
            data = inflater.decompress(encoded, MAX_RECORD_JSON_BYTES + 1)
        except zlib.error as error:
            raise RecordUnreadable(f"The embedded record data is corrupt ({error}).") from None
    else:
        raise RecordUnreadable(f"The embedded record data uses the PDF filter {filters}, which Forebook never writes.")
    if len(data) > MAX_RECORD_JSON_BYTES:
        raise RecordUnreadable(
            f"The embedded record data is larger than {MAX_RECORD_JSON_BYTES // (1024 * 1024)} MB, which no "
            "Forebook record reaches."
        )
    return data


def record_shape_problem(*, record: Any) -> str:
    """What is structurally wrong with a record document, or "" when its shape is right."""
    if not isinstance(record, dict):
        return "the top level is not a JSON object"
    if record.get("schema") != RECORD_SCHEMA:
        return f"schema is {record.get('schema')!r}, expected {RECORD_SCHEMA!r}"
    study = record.get("study")
    if not isinstance(study, dict) or not isinstance(study.get("code"), str):
        return "study.code is missing"
    entries = record.get("entries")
    if not isinstance(entries, list) or not entries:
        return "entries is missing or empty"
    for position, entry in enumerate(entries, start=1):
        if not isinstance(entry, dict) or any(field not in entry for field in ENTRY_FIELDS):
            return f"entry {position} lacks one of {', '.join(ENTRY_FIELDS)}"
        if not isinstance(entry.get("inclusion_proof"), list):
            return f"entry {position} has no inclusion_proof list"
    checkpoint = record.get("checkpoint")
    if not isinstance(checkpoint, dict) or not all(key in checkpoint for key in ("note", "size", "root_hash")):
        return "checkpoint (note, size, root_hash) is missing"
    return ""


# --- the ledger content ----------------------------------------------------------------------


def _parse_timestamp(text: str) -> dt.datetime:
    moment = dt.datetime.strptime(text, TIMESTAMP_FORMAT).replace(tzinfo=dt.UTC)
    if format_timestamp(moment) != text:
        raise ValueError(f"{text!r} is not in the one spelling the ledger hashes (YYYY-MM-DDTHH:MM:SS.ffffffZ)")
    return moment


def entry_problem(*, entry: dict[str, Any], study_code: str) -> str:
    """Why one embedded entry does not recompute, or "" when it does."""
    try:
        payload_hash = hashlib.sha256(entry["payload"].encode("utf-8")).hexdigest()
        if payload_hash != entry["payload_sha256"]:
            return "its payload does not match its recorded SHA-256 (the payload was changed)"
        header = entry_header_bytes(
            seq=entry["seq"],
            kind=entry["kind"],
            lab_uid=entry["lab_uid"],
            study_code=entry["study_code"],
            author_id=entry["author_id"],
            created_at=_parse_timestamp(entry["created_at"]),
            payload_hash=entry["payload_sha256"],
            prev_hash=entry["prev_hash"],
        )
    except (AttributeError, TypeError, ValueError) as error:
        return f"its fields cannot be hashed ({_short(error)})"
    if hashlib.sha256(header).hexdigest() != entry["entry_hash"]:
        return "its entry hash does not match its header (sequence, kind, lab, study, author, time or link was changed)"
    if entry["study_code"] != study_code:
        return f"it belongs to study {entry['study_code'] or '(none)'}, not to {study_code}"
    return ""


def check_entry_hashes(*, record: dict[str, Any]) -> CheckResult:
    study_code = record["study"]["code"]
    for entry in record["entries"]:
        problem = entry_problem(entry=entry, study_code=study_code)
        if problem:
            return CheckResult(CHECK_ENTRY_HASHES, False, f"Entry {entry.get('seq')}: {problem}.")
    count = len(record["entries"])
    return CheckResult(
        CHECK_ENTRY_HASHES,
        True,
        f"All {count} entries of study {study_code} recompute from their payloads and headers.",
    )


def _hashes(values: Any, *, what: str) -> list[bytes]:
    if not isinstance(values, list):
        raise ValueError(f"{what} is not a list of hashes")
    hashes = [bytes.fromhex(value) for value in values]
    if any(len(value) != merkle.HASH_SIZE for value in hashes):
        raise ValueError(f"{what} holds a value that is not a 32-byte hash")
    return hashes


def _record_tree(record: dict[str, Any]) -> tuple[int, bytes]:
    checkpoint = record["checkpoint"]
    size = checkpoint["size"]
    if not isinstance(size, int) or isinstance(size, bool) or size < 1:
        raise ValueError(f"checkpoint.size must be a positive whole number; got {size!r}")
    (root,) = _hashes([checkpoint["root_hash"]], what="checkpoint.root_hash")
    return size, root


def check_inclusion_proofs(*, record: dict[str, Any]) -> CheckResult:
    try:
        size, root = _record_tree(record)
    except (TypeError, ValueError) as error:
        return CheckResult(CHECK_INCLUSION, False, f"The record's checkpoint is malformed ({_short(error)}).")
    for entry in record["entries"]:
        seq = entry.get("seq")
        try:
            leaf = merkle.leaf_hash(bytes.fromhex(entry["entry_hash"]))
            proof = _hashes(entry["inclusion_proof"], what="inclusion_proof")
            index = seq - 1 if isinstance(seq, int) and not isinstance(seq, bool) else -1
            merkle.check_inclusion(leaf_hash=leaf, index=index, size=size, proof=proof, root=root)
        except (TypeError, ValueError) as error:  # merkle.ProofError is a ValueError
            return CheckResult(
                CHECK_INCLUSION,
                False,
                f"Entry {seq}: its proof does not lead to the checkpoint root of the tree of size {size} "
                f"({_short(error)}).",
            )
    return CheckResult(
        CHECK_INCLUSION,
        True,
        f"Every entry's RFC 6962 proof leads to root {root.hex()} of the log of {size} entries.",
    )


def _open_checkpoint(note: Any, verifier: notes.NoteVerifier) -> notes.Checkpoint:
    if not isinstance(note, (str, bytes)):
        raise notes.MalformedNoteError("the checkpoint note is not text")
    opened = notes.open_note(note=note, verifiers=[verifier])
    checkpoint = notes.parse_checkpoint(opened.text)
    if checkpoint.origin != verifier.name:
        raise notes.NoteError(f"the checkpoint names origin {checkpoint.origin!r}, but the key is {verifier.name!r}")
    return checkpoint


def check_checkpoint_signature(
    *, record: dict[str, Any], log_vkey: str | None
) -> tuple[CheckResult, notes.Checkpoint | None]:
    """Verify the note with ``log_vkey`` (the instance's key), or with the record's own when None."""
    source = "the instance's log key"
    if log_vkey is None:
        log_vkey = record.get("log_vkey")
        source = (
            "the log key written in the record itself (compare it with the key the instance publishes at "
            "/log/key.json, or pass that key)"
        )
    try:
        verifier = notes.NoteVerifier.from_key_string(log_vkey)
    except notes.KeyFormatError as error:
        return CheckResult(CHECK_CHECKPOINT_SIGNATURE, False, f"The log key is malformed ({error})."), None
    try:
        checkpoint = _open_checkpoint(record["checkpoint"]["note"], verifier)
    except notes.NoteError as error:
        return CheckResult(
            CHECK_CHECKPOINT_SIGNATURE,
            False,
            f"The checkpoint is not signed by {verifier.name}+{verifier.key_id:08x}: {error}.",
        ), None
    try:
        size, root = _record_tree(record)
    except (TypeError, ValueError) as error:
        return CheckResult(
            CHECK_CHECKPOINT_SIGNATURE, False, f"The record's checkpoint is malformed ({_short(error)})."
        ), None
    if (checkpoint.size, checkpoint.root_hash) != (size, root):
        return CheckResult(
            CHECK_CHECKPOINT_SIGNATURE,
            False,
            f"The signed checkpoint is for size {checkpoint.size}, root {checkpoint.root_hash.hex()}, but the "
            f"record's proofs use size {size}, root {root.hex()}.",
        ), None
    return CheckResult(
        CHECK_CHECKPOINT_SIGNATURE,
        True,
        f"The checkpoint of size {checkpoint.size} for log {checkpoint.origin} verifies with {source} "
        f"({verifier.name}+{verifier.key_id:08x}).",
    ), checkpoint


def check_reference_checkpoint(
    *,
    checkpoint: notes.Checkpoint,
    reference_note: str | bytes,
    log_vkey: str,
    consistency_proof_for: ConsistencyProofSource | None,
) -> CheckResult:
    """Is the record's checkpoint the same tree as, or consistent with, one the caller saved earlier?"""
    try:
        verifier = notes.NoteVerifier.from_key_string(log_vkey)
        reference = _open_checkpoint(reference_note, verifier)
    except notes.NoteError as error:
        return CheckResult(CHECK_REFERENCE, False, f"Your checkpoint does not verify with the log key: {error}.")
    if reference.origin != checkpoint.origin:
        return CheckResult(
            CHECK_REFERENCE,
            False,
            f"Your checkpoint is for log {reference.origin}, the record's for {checkpoint.origin}.",
        )
    if reference.size == checkpoint.size:
        if reference.root_hash != checkpoint.root_hash:
            return CheckResult(
                CHECK_REFERENCE,
                False,
                f"Both checkpoints are for size {reference.size} but their roots differ: the log forked. Keep both "
                "notes as evidence.",
            )
        return CheckResult(
            CHECK_REFERENCE, True, f"The record's checkpoint is the one you hold (size {reference.size})."
        )
    older, newer = sorted((reference, checkpoint), key=lambda item: item.size)
    proof = consistency_proof_for(older.size, newer.size) if consistency_proof_for is not None else None
    if proof is None:
        return CheckResult(
            CHECK_REFERENCE,
            False,
            f"Checking size {older.size} against size {newer.size} needs a consistency proof: run the check on the "
            f"instance, or save /log/consistency.json?from={older.size}&to={newer.size} and pass it with --proof.",
        )
    try:
        merkle.check_consistency(
            old_size=older.size,
            new_size=newer.size,
            old_root=older.root_hash,
            new_root=newer.root_hash,
            proof=list(proof),
        )
    except merkle.ProofError as error:
        return CheckResult(
            CHECK_REFERENCE,
            False,
            f"The trees of size {older.size} and {newer.size} are not consistent ({error}): the log was rewritten "
            "between them.",
        )
    return CheckResult(
        CHECK_REFERENCE,
        True,
        f"The log of size {newer.size} extends the one of size {older.size} (RFC 6962 consistency proof verified).",
    )


def proof_from_json(document: Any, *, old_size: int, new_size: int) -> list[bytes]:
    """The proof hashes from a saved /log/consistency.json response, checked to be for these sizes."""
    if not isinstance(document, dict) or (document.get("old_size"), document.get("new_size")) != (old_size, new_size):
        raise ValueError(f"the saved proof is not for sizes {old_size} to {new_size}")
    return _hashes(document.get("proof"), what="proof")


# --- everything at once ----------------------------------------------------------------------


def record_verify(
    *,
    pdf: bytes,
    trust_roots: Sequence[asn1_x509.Certificate] = (),
    log_vkey: str | None = None,
    reference_note: str | bytes | None = None,
    consistency_proof_for: ConsistencyProofSource | None = None,
) -> RecordVerification:
    """Run every check on ``pdf``.

    ``trust_roots``: certificates the caller trusts for the PDF signature (the instance's).
    ``log_vkey``: the log's verifier key; None uses the key written in the record (and says so).
    ``reference_note``: a checkpoint note the caller saved earlier, to compare the record's with.
    ``consistency_proof_for(old_size, new_size)``: returns the proof hashes or None when it cannot.
    """
    try:
        reader = open_pdf(pdf=pdf)
    except RecordUnreadable as problem:
        return RecordVerification((CheckResult(CHECK_PDF_SIGNATURE, False, str(problem)),), None)
    checks = [check_pdf_signature(reader=reader, trust_roots=trust_roots)]
    try:
        record = embedded_record(reader=reader)
    except RecordUnreadable as problem:
        checks.append(CheckResult(CHECK_RECORD_DATA, False, str(problem)))
        return RecordVerification(tuple(checks), None)
    checks.append(
        CheckResult(
            CHECK_RECORD_DATA,
            True,
            f"{ATTACHMENT_NAME}: study {record['study']['code']}, {len(record['entries'])} entries.",
        )
    )
    checks.append(check_entry_hashes(record=record))
    checks.append(check_inclusion_proofs(record=record))
    signature_check, checkpoint = check_checkpoint_signature(record=record, log_vkey=log_vkey)
    checks.append(signature_check)
    if reference_note is not None:
        if checkpoint is None:
            checks.append(
                CheckResult(
                    CHECK_REFERENCE,
                    False,
                    "Cannot compare with your checkpoint: the record's own checkpoint did not verify.",
                )
            )
        else:
            checks.append(
                check_reference_checkpoint(
                    checkpoint=checkpoint,
                    reference_note=reference_note,
                    log_vkey=log_vkey if log_vkey is not None else record.get("log_vkey"),
                    consistency_proof_for=consistency_proof_for,
                )
            )
    return RecordVerification(tuple(checks), record)


def _short(error: BaseException, limit: int = 200) -> str:
    text = str(error) or type(error).__name__
    return text if len(text) <= limit else text[: limit - 1] + "…"
