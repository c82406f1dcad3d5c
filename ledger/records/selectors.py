"""Reads of record exports, scoped to the asking member's lab."""

from __future__ import annotations

from django.http import Http404
from django.utils import timezone

from ledger.labs.models import Membership
from ledger.plans.models import Study
from ledger.records.models import RecordExport

RECENT_EXPORTS_SHOWN = 3


def access_record_export(*, member: Membership, study: Study, code: str) -> RecordExport:
    """The export with this code of this study in the member's lab, or 404 (missing and foreign look the same)."""
    export = RecordExport.objects.filter(lab=member.lab, study=study, code=code).select_related("study").first()
    if export is None:
        raise Http404("No such record export.")
    return export


def recent_record_exports(*, member: Membership, study: Study) -> list[RecordExport]:
    """The member's own unexpired exports of this study, newest first."""
    return list(
        RecordExport.objects.filter(
            lab=member.lab, study=study, created_by=member.user, expires_at__gt=timezone.now()
        ).order_by("-created_at")[:RECENT_EXPORTS_SHOWN]
    )


def study_by_code(*, code: str) -> Study | None:
    """Any lab's study, for operator commands run on the server (never for requests)."""
    return (
        Study.objects.select_related("lab")
        .prefetch_related("investigators__user")
        .filter(code=code.strip().upper())
        .first()
    )
