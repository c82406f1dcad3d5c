"""Generated files: what every background export shares, whatever the file contains.

A page asks for a file (a study's signed record, the lab's outcome report). A row of a
``GeneratedFile`` subclass records the request; a Celery task builds the file into
FOREBOOK_RECORDS_DIR (outside the database) and moves the row queued -> running -> ready | failed,
updating ``progress`` and ``stage`` as it goes; the page polls the row's status (one JSON view per
kind, built with ``export_status_response``) until it can offer the download. Files are deleted
when the row expires. What a file contains is the caller's ``build`` function; everything else is
here, so the two kinds of export cannot drift apart.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import logging
import os
import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TypeVar

from django.conf import settings
from django.contrib import messages
from django.db import models, transaction
from django.http import FileResponse, HttpRequest, HttpResponse, JsonResponse
from django.utils import timezone

from ledger.core.identifiers import random_code

logger = logging.getLogger(__name__)


class ExportStatus(models.TextChoices):
    QUEUED = "queued", "Waiting to start"
    RUNNING = "running", "Being generated"
    READY = "ready", "Ready to download"
    FAILED = "failed", "Failed"


UNFINISHED = (ExportStatus.QUEUED, ExportStatus.RUNNING)


def new_export_code() -> str:
    return random_code(12)


class GeneratedFile(models.Model):
    """One request for a generated file, and the file it produced.

    ``status`` only moves queued -> running -> ready | failed (a redelivered task may run a
    ``running`` export again). ``progress`` is a percentage the page shows while it waits.
    Subclasses add ``lab`` (a ForeignKey to labs.Lab: files are stored per lab) and whatever the
    file is about, and give their table a ``progress_percent_constraint``.
    """

    # URLs name exports by this opaque code, never by the sequential id.
    code = models.CharField(max_length=12, unique=True, default=new_export_code, editable=False)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)
    status = models.CharField(max_length=8, choices=ExportStatus.choices, default=ExportStatus.QUEUED)
    progress = models.PositiveSmallIntegerField(default=0)
    stage = models.CharField(max_length=120, blank=True)
    error = models.TextField(blank=True)
    expires_at = models.DateTimeField()
    finished_at = models.DateTimeField(null=True, blank=True)
    # Relative to FOREBOOK_RECORDS_DIR, so moving the data directory keeps every file reachable.
    file_name = models.CharField(max_length=200, blank=True)
    file_size = models.PositiveBigIntegerField(null=True, blank=True)
    file_sha256 = models.CharField(max_length=64, blank=True)

    class Meta:
        abstract = True
        ordering = ["-created_at"]

    @property
    def is_finished(self) -> bool:
        return self.status in (ExportStatus.READY, ExportStatus.FAILED)

    @property
    def file_path(self) -> Path:
        return generated_files_dir() / self.file_name

    def storage_name(self, *, suffix: str) -> str:
        """Where the file goes, relative to FOREBOOK_RECORDS_DIR; one folder per lab."""
        return f"{self.lab.uid}/{self.code}{suffix}"


def progress_percent_constraint(*, name: str) -> models.CheckConstraint:
    return models.CheckConstraint(condition=models.Q(progress__lte=100), name=name)


Export = TypeVar("Export", bound=GeneratedFile)

ProgressCallback = Callable[[int, str], None]
"""(percent done, what is happening now in words)."""


def report_progress(progress: ProgressCallback | None, percent: int, stage: str) -> None:
    if progress is not None:
        progress(percent, stage)


def generated_files_dir() -> Path:
    return Path(settings.FOREBOOK_RECORDS_DIR)


def export_request(
    *,
    model: type[Export],
    created_by: Any,
    match: dict[str, Any],
    fields: dict[str, Any],
    enqueue: Callable[[int], Any],
) -> Export:
    """Queue an export; ``enqueue(export id)`` runs once this transaction commits.

    Asking again while the same person's export with the same ``match`` values is still waiting or
    running returns that export instead of starting a second one (unless it is stale: its worker
    died). ``fields`` are stored on a new export but do not make it a different request.
    """
    with transaction.atomic():
        # An export still unfinished after this long lost its worker (and the broker its message):
        # let the person start a new one instead of waiting for it until it expires.
        stale_before = timezone.now() - dt.timedelta(seconds=2 * settings.CELERY_TASK_TIME_LIMIT)
        pending = (
            model.objects.select_for_update()
            .filter(created_by=created_by, status__in=UNFINISHED, created_at__gte=stale_before, **match)
            .first()
        )
        if pending is not None:
            return pending
        export = model.objects.create(
            created_by=created_by,
            stage="Waiting for a worker",
            expires_at=timezone.now() + dt.timedelta(hours=settings.FOREBOOK_RECORD_EXPIRY_HOURS),
            **match,
            **fields,
        )
        transaction.on_commit(lambda: enqueue(export.pk))
    return export


@dataclass(frozen=True)
class BuiltFile:
    """What a ``build`` function returns: the bytes, the file name's suffix, and extra fields to store."""

    data: bytes
    suffix: str
    fields: dict[str, Any] = field(default_factory=dict)


def _update(model: type[GeneratedFile], export_id: int, **fields: Any) -> None:
    # A plain UPDATE in autocommit: the page polling the status sees each step as it happens.
    model.objects.filter(pk=export_id).update(**fields)


def _write_file(relative: str, data: bytes) -> None:
    # Written to a temporary name and renamed: a reader never sees half a file.
    target = generated_files_dir() / relative
    target.parent.mkdir(parents=True, exist_ok=True)
    descriptor, temporary = tempfile.mkstemp(dir=target.parent, prefix=".partial-")
    try:
        with os.fdopen(descriptor, "wb") as handle:
            handle.write(data)
        os.replace(temporary, target)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def export_run(
    *,
    model: type[Export],
    export_id: int,
    build: Callable[[Export, ProgressCallback], BuiltFile],
    expected_errors: tuple[type[Exception], ...],
    what: str,
) -> Export | None:
    """Build one export's file and store it; every failure ends as a ``failed`` export.

    Runs in a worker (or eagerly after the request's commit). Safe to run again after a crash:
    a finished export is left alone. An ``expected_errors`` exception's text is shown to the
    person as it is, so those errors must say what to do; anything else is logged and reported
    as unexpected. ``what`` names the file in that message ("record", "report").
    """
    export = model.objects.select_related("lab").filter(pk=export_id).first()
    if export is None or export.is_finished:
        return export
    _update(model, export_id, status=ExportStatus.RUNNING, progress=1, stage="Starting", error="")
    try:
        built = build(export, lambda percent, stage: _update(model, export_id, progress=percent, stage=stage))
        relative = export.storage_name(suffix=built.suffix)
        _write_file(relative, built.data)
    except expected_errors as error:
        _fail(model, export_id, str(error))
    except Exception:
        logger.exception("%s export %s failed unexpectedly", what.capitalize(), export.code)
        _fail(
            model,
            export_id,
            f"The {what} could not be generated because of an unexpected error (logged as export {export.code}). "
            "Try again; if it fails again, ask your administrator to look at the server log.",
        )
    else:
        _update(
            model,
            export_id,
            status=ExportStatus.READY,
            progress=100,
            stage="Ready",
            file_name=relative,
            file_size=len(built.data),
            file_sha256=hashlib.sha256(built.data).hexdigest(),
            finished_at=timezone.now(),
            **built.fields,
        )
    return model.objects.get(pk=export_id)


def _fail(model: type[GeneratedFile], export_id: int, message: str) -> None:
    _update(model, export_id, status=ExportStatus.FAILED, stage="Failed", error=message, finished_at=timezone.now())


def exports_purge(*, model: type[GeneratedFile], now: dt.datetime | None = None) -> int:
    """Delete expired exports and their files; returns how many were removed."""
    expired = list(model.objects.filter(expires_at__lte=now or timezone.now()))
    for export in expired:
        if export.file_name:
            export.file_path.unlink(missing_ok=True)
    model.objects.filter(pk__in=[export.pk for export in expired]).delete()
    return len(expired)


# --- the pages around every kind of export ----------------------------------------------------


def export_announce(*, request: HttpRequest, export: GeneratedFile, what: str, preparing: str) -> None:
    """Tell the person, after they asked for an export, how it stands (an eager task may have finished)."""
    export.refresh_from_db()
    if export.status == ExportStatus.FAILED:
        messages.error(request, f"The {what} could not be exported: {export.error}")
    elif export.status != ExportStatus.READY:
        messages.info(request, preparing)


def export_status_response(*, export: GeneratedFile, download_url: str) -> JsonResponse:
    """What a page polls (static/js/forebook.js) until the export is ready or failed.

    ``download_url`` is the export's download address; it is only sent once the file is ready.
    """
    ready = export.status == ExportStatus.READY
    response = JsonResponse(
        {
            "code": export.code,
            "status": export.status,
            "status_label": export.get_status_display(),
            "finished": export.is_finished,
            "progress": export.progress,
            "stage": export.stage,
            "error": export.error,
            "download_url": download_url if ready else "",
            "expires_at": export.expires_at.isoformat(),
        }
    )
    response["Cache-Control"] = "no-store"
    return response


def export_download_response(
    *, export: GeneratedFile, filename: str, content_type: str, what: str, where: str
) -> HttpResponse:
    """The file as an attachment, or 409 (not ready) / 410 (expired) saying what to do from ``where``."""
    if export.status != ExportStatus.READY:
        return HttpResponse(
            f"This {what} is not ready; go back to {where} and wait for it, or export again.",
            status=409,
            content_type="text/plain; charset=utf-8",
        )
    path = export.file_path
    if export.expires_at <= timezone.now() or not path.exists():
        return HttpResponse(
            f"This {what} file has expired and was removed. Export the {what} again from {where}.",
            status=410,
            content_type="text/plain; charset=utf-8",
        )
    return FileResponse(path.open("rb"), as_attachment=True, filename=filename, content_type=content_type)
