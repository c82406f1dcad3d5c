"""Writes for signed records: building one, and the export records the study page offers.

Building a record (``record_build``) is shared by the page's background export and by
``python manage.py export_record``:

1. load the signing identity first, so a missing key fails before anything is written;
2. make sure a signed checkpoint covers every entry of the study (signing one if needed);
3. fetch every entry's inclusion proof against that checkpoint (one query for all of them);
4. render the PDF with the record document embedded, and sign it (PAdES B-B, or B-T with a TSA).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from django.conf import settings
from django.utils import timezone
from pyhanko.sign.timestamps import TimeStamper

from ledger.chain import checkpoints
from ledger.chain.errors import LedgerError
from ledger.chain.hashing import format_timestamp
from ledger.chain.models import Entry
from ledger.core import exports
from ledger.core.errors import ActionRefused
from ledger.core.exports import report_progress
from ledger.labs.models import Membership
from ledger.labs.services import require
from ledger.plans.models import Study, StudyState
from ledger.records import render, signing
from ledger.records.models import RecordExport


@dataclass(frozen=True)
class BuiltRecord:
    pdf: bytes
    document: dict[str, Any]
    checkpoint_size: int


def record_build(
    *, study: Study, progress: exports.ProgressCallback | None = None, timestamper: TimeStamper | None = None
) -> BuiltRecord:
    """The signed record PDF of ``study``. ``timestamper`` defaults to FOREBOOK_TSA_URL's (if set)."""
    report_progress(progress, 5, "Loading the signing identity")
    pdf_signer = signing.record_signer()
    log_vkey = checkpoints.log_verifier().to_key_string()
    timestamper = timestamper or signing.configured_timestamper()

    entries = list(Entry.objects.filter(study=study).select_related("author").order_by("seq"))
    if not entries:
        raise ActionRefused(
            f"Nothing about study {study.code} is sealed yet, so there is no record to export: seal its plan first."
        )
    report_progress(progress, 15, "Signing a checkpoint of the ledger")
    checkpoint = checkpoints.checkpoint_covering(seq=entries[-1].seq)
    report_progress(progress, 30, "Computing the inclusion proofs")
    proofs, root = checkpoints.inclusion_proofs(seqs=[entry.seq for entry in entries], size=checkpoint.size)
    if root != checkpoint.root_hash:
        raise LedgerError(
            f"The stored tree of size {checkpoint.size} no longer has the root signed for it; nothing was exported. "
            "Ask your administrator to run `python manage.py verify_ledger`."
        )
    document = render.record_document(
        study=study,
        entries=entries,
        proofs=proofs,
        checkpoint=checkpoint,
        log_vkey=log_vkey,
        generated_at=format_timestamp(timezone.now()),
        instance=settings.FOREBOOK_SITE_NAME,
    )
    report_progress(progress, 45, "Laying out the PDF")
    unsigned = render.record_pdf(document=document)
    report_progress(progress, 85, "Signing the PDF" + (" and timestamping it" if timestamper else ""))
    signed = signing.pdf_sign(pdf=unsigned, signer=pdf_signer, timestamper=timestamper)
    return BuiltRecord(pdf=signed, document=document, checkpoint_size=checkpoint.size)


# --- exports from the study page -------------------------------------------------------------

# A failure of these kinds says in its message what to do; anything else is logged as unexpected.
EXPECTED_ERRORS = (ActionRefused, signing.SigningIdentityError, LedgerError)


def record_file_path(*, export: RecordExport) -> Path:
    return export.file_path


def record_export_request(*, member: Membership, study: Study) -> RecordExport:
    """Queue an export of the study's record; the task starts once this transaction commits.

    Asking again while the member's previous export of this study is still waiting or running
    returns that export instead of starting a second one (unless it is stale: its worker died).
    """
    require(member, "can_view_lab")
    if study.lab_id != member.lab_id:
        raise ActionRefused("This study belongs to another lab.")
    if study.state == StudyState.DRAFT:
        raise ActionRefused("Nothing about this study is sealed yet: seal its plan, then export its record.")
    from ledger.records.tasks import record_export  # the tasks module imports this one

    return exports.export_request(
        model=RecordExport,
        created_by=member.user,
        match={"study": study},
        fields={"lab": member.lab},
        enqueue=record_export.delay,
    )


def _build_export(export: RecordExport, progress: exports.ProgressCallback) -> exports.BuiltFile:
    built = record_build(study=export.study, progress=progress)
    return exports.BuiltFile(data=built.pdf, suffix=".pdf", fields={"checkpoint_size": built.checkpoint_size})


def record_export_run(*, export_id: int) -> RecordExport | None:
    """Build the record of one export and store the file; every failure ends as a ``failed`` export.

    Runs in a worker (or eagerly after the request's commit). Safe to run again after a crash:
    a finished export is left alone.
    """
    return exports.export_run(
        model=RecordExport, export_id=export_id, build=_build_export, expected_errors=EXPECTED_ERRORS, what="record"
    )


def record_exports_purge(*, now: dt.datetime | None = None) -> int:
    """Delete expired exports and their files; returns how many were removed."""
    return exports.exports_purge(model=RecordExport, now=now)
