"""The study page follows a background export in Debian's Chromium: progress while it runs, then the
download link, or the error, without reloading (static/js/forebook.js)."""

from __future__ import annotations

import datetime as dt

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from ledger.records.models import ExportStatus, RecordExport
from ledger.records.services import record_export_run
from tests.factories import reported_study
from tests.support.browser import sign_in

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def queued_export(study, member) -> RecordExport:
    # Queued as if no worker had picked it up yet: the page must wait for it by polling.
    return RecordExport.objects.create(
        lab=study.lab,
        study=study,
        created_by=member.user,
        stage="Waiting for a worker",
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )


def test_the_page_shows_the_download_link_once_the_worker_finishes(live_server, page, investigator, settings, tmp_path):
    study = reported_study(member=investigator)
    ready_export = queued_export(study, investigator)
    sign_in(page, live_server.url, investigator.user.username)
    page.goto(f"{live_server.url}{study.get_absolute_url()}")

    item = page.locator(f"[data-record-status$='/{ready_export.code}/status/']")
    expect(item.locator(".record-stage")).to_have_text("Waiting for a worker")
    expect(item.locator(".record-download")).to_be_hidden()
    expect(item.locator(".record-progress")).to_be_visible()

    assert record_export_run(export_id=ready_export.pk).status == ExportStatus.READY  # the "worker"
    expect(item.locator(".record-download")).to_be_visible()
    expect(item.locator(".record-stage")).to_have_text("Ready to download")
    expect(item.locator(".record-progress")).to_be_hidden()
    href = item.locator(".record-download").get_attribute("href")
    assert href.endswith(f"/records/{ready_export.code}/download/")
    response = page.request.get(f"{live_server.url}{href}")
    assert response.status == 200 and response.body().startswith(b"%PDF-")

    failing_export = queued_export(study, investigator)
    page.reload()
    failing = page.locator(f"[data-record-status$='/{failing_export.code}/status/']")
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "identity-gone"
    assert record_export_run(export_id=failing_export.pk).status == ExportStatus.FAILED
    expect(failing.locator(".record-error")).to_contain_text("create_signing_identity")
    expect(failing.locator(".record-stage")).to_have_text("Failed")
