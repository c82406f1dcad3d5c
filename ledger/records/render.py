"""The record PDF: built by WeasyPrint from a Django template and the record document alone.

Everything printed comes from the record document (``ledger.records.document``) that is embedded
in the same PDF, so what a reader sees and what a program verifies cannot drift apart.
"""

from __future__ import annotations

import json
from typing import Any

from django.template.loader import render_to_string

from ledger.chain.checkpoints import SignedCheckpoint
from ledger.chain.hashing import format_timestamp
from ledger.chain.models import Entry, EntryKind
from ledger.plans.selectors import plan_diff
from ledger.records.document import (
    ATTACHMENT_DESCRIPTION,
    ATTACHMENT_NAME,
    HOW_HASHES_ARE_COMPUTED,
    RECORD_SCHEMA,
    entry_row,
)

PLAN_KINDS = {EntryKind.PLAN_SEALED, EntryKind.PLAN_AMENDED}
# Payload keys every entry carries that add nothing when printed beside the entry itself.
ROUTINE_KEYS = {"schema", "study"}


def record_document(
    *,
    study,
    entries: list[Entry],
    proofs: dict[int, list[bytes]],
    checkpoint: SignedCheckpoint,
    log_vkey: str,
    generated_at: str,
    instance: str,
) -> dict[str, Any]:
    authors = {
        str(entry.author_id): entry.author.get_full_name() or entry.author.username
        for entry in entries
        if entry.author_id is not None
    }
    return {
        "schema": RECORD_SCHEMA,
        "generated_at": generated_at,
        "instance": instance,
        "study": {
            "code": study.code,
            "title": study.title,
            "state": study.state,
            "lab_uid": str(study.lab.uid),
            "lab_name": study.lab.name,
            "investigators": [
                {"name": member.display_name, "orcid": member.orcid} for member in study.investigators.all()
            ],
        },
        "authors": authors,
        "entries": [
            entry_row(
                seq=entry.seq,
                kind=entry.kind,
                lab_uid=entry.lab_uid,
                study_code=entry.study_code,
                author_id=entry.author_id,
                created_at=format_timestamp(entry.created_at),
                payload=entry.payload,
                payload_sha256=entry.payload_hash,
                prev_hash=entry.prev_hash,
                entry_hash=entry.entry_hash,
                inclusion_proof=[node.hex() for node in proofs[entry.seq]],
            )
            for entry in entries
        ],
        "checkpoint": checkpoint.as_json(),
        "log_vkey": log_vkey,
        "verification": HOW_HASHES_ARE_COMPUTED,
    }


def generic_fields(*, item: Any) -> list[tuple[str, str]]:
    """Any JSON object as (name, text) pairs, for payloads whose shape this module does not know.

    Findings and explanations come from the comparison rules, which may add fields at any time;
    printing every field generically keeps the record complete without knowing them.
    """
    if not isinstance(item, dict):
        return [("value", _text(item))]
    return [(str(key).replace("_", " "), _text(value)) for key, value in item.items() if key not in ROUTINE_KEYS]


def _text(value: Any) -> str:
    if value is None:
        return "—"
    if isinstance(value, str):
        return value
    return json.dumps(value, ensure_ascii=False, sort_keys=True)


def record_context(*, document: dict[str, Any]) -> dict[str, Any]:
    """The template context, derived from the record document only."""
    authors = document["authors"]
    timeline, plan_versions, results, explanations, events = [], [], [], [], []
    previous_plan = None
    for row in document["entries"]:
        payload = json.loads(row["payload"])
        kind = EntryKind(row["kind"])
        item = {
            "row": row,
            "kind_label": kind.label,
            "author": authors.get(str(row["author_id"]), "the system")
            if row["author_id"] is not None
            else "the system",
            "payload": payload,
        }
        timeline.append(item)
        if kind in PLAN_KINDS:
            item["changes"] = plan_diff(previous_plan, payload) if previous_plan is not None else None
            plan_versions.append(item)
            previous_plan = payload
        elif kind == EntryKind.RESULT_RECORDED:
            item["findings"] = [generic_fields(item=finding) for finding in payload.get("findings") or []]
            item["checks"] = [generic_fields(item=check) for check in payload.get("checks") or []]
            results.append(item)
        elif kind == EntryKind.FINDING_EXPLAINED:
            item["fields"] = generic_fields(item=payload)
            explanations.append(item)
        else:
            item["fields"] = generic_fields(item=payload)
            events.append(item)
    checkpoint = document["checkpoint"]
    return {
        "document": document,
        "study": document["study"],
        "timeline": timeline,
        "plan_versions": plan_versions,
        "results": results,
        "explanations": explanations,
        "events": events,
        "checkpoint": checkpoint,
        "checkpoint_note_text": checkpoint["note"],
        "how": HOW_HASHES_ARE_COMPUTED,
        "attachment_name": ATTACHMENT_NAME,
    }


def _refuse_fetch(url: str, *args, **kwargs):
    # The record is self-contained; a payload can never make the renderer fetch anything.
    raise ValueError(f"record rendering fetches nothing (asked for {url[:80]})")


def record_pdf(*, document: dict[str, Any]) -> bytes:
    """The unsigned PDF, with the document embedded as a JSON attachment (kept by incremental signing)."""
    import weasyprint

    html = render_to_string("records/record.html", record_context(document=document))
    stylesheet = weasyprint.CSS(
        string=render_to_string("records/record.css", {"study_code": document["study"]["code"]}),
        url_fetcher=_refuse_fetch,
    )
    attachment = weasyprint.Attachment(
        string=json.dumps(document, ensure_ascii=False, indent=1),
        name=ATTACHMENT_NAME,
        description=ATTACHMENT_DESCRIPTION,
        url_fetcher=_refuse_fetch,
    )
    return weasyprint.HTML(string=html, url_fetcher=_refuse_fetch).write_pdf(
        stylesheets=[stylesheet], attachments=[attachment]
    )
