"""The report page, its chart URLs and the report files made in the background (shared export machinery).

No external computation here: these tests check behaviour, permissions and the page's markup under
the coming Content-Security-Policy (no inline style attributes, no inline SVG, no inline script).
"""

import csv
import datetime as dt
import io
import re

import pytest
from django.urls import reverse
from django.utils import timezone

from ledger.core.exports import ExportStatus
from ledger.reports import tasks
from ledger.reports.models import ReportExport, ReportFormat
from ledger.reports.services import report_exports_purge
from tests.factories import PASSWORD, sealed_study

pytestmark = pytest.mark.django_db


def login(client, member):
    assert client.login(username=member.user.username, password=PASSWORD)


def page_url(lab):
    return reverse("reports:lab", kwargs={"lab_slug": lab.slug})


def export_url(lab):
    return reverse("reports:export", kwargs={"lab_slug": lab.slug})


def status_url(export):
    return reverse("reports:status", kwargs={"lab_slug": export.lab.slug, "export_code": export.code})


def download_url(export):
    return reverse("reports:download", kwargs={"lab_slug": export.lab.slug, "export_code": export.code})


def test_the_page_embeds_its_charts_as_images_served_as_svg(client, seeded_lab, reader):
    login(client, reader)  # every member of the lab may read the report
    response = client.get(page_url(seeded_lab.a.lab), {"prior_odds": "1:4"})
    assert response.status_code == 200
    html = response.content.decode()
    assert " style=" not in html and "<svg" not in html and "<script>" not in html
    sources = re.findall(r'<img src="([^"]+)" alt="([^"]+)"', html)
    assert len(sources) == 3
    for source, alt in sources:
        assert "prior_odds=0.25" in source and alt  # the chart shows this report, and says what it shows
        chart = client.get(source.replace("&amp;", "&"))
        assert chart.status_code == 200
        assert chart["Content-Type"] == "image/svg+xml"
        assert chart["Content-Security-Policy"].startswith("default-src 'none'")
        assert chart.content.startswith(b"<?xml")
    assert 'aria-current="page">Report</a>' in html


def test_an_unknown_chart_is_404(client, seeded_lab):
    login(client, seeded_lab.a)
    url = reverse("reports:chart", kwargs={"lab_slug": seeded_lab.a.lab.slug, "chart": "pie"})
    assert client.get(url).status_code == 404


def test_a_bad_date_range_is_refused_on_the_page_with_how_to_fix_it(client, seeded_lab):
    login(client, seeded_lab.a)
    html = client.get(page_url(seeded_lab.a.lab), {"sealed_from": "2026-05-01", "sealed_to": "2026-04-01"})
    assert "swap the two dates" in html.content.decode()


def test_a_file_is_made_in_the_background_and_offered_for_download(
    client, seeded_lab, files_dir, django_capture_on_commit_callbacks
):
    member, lab = seeded_lab.a, seeded_lab.a.lab
    login(client, member)
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        response = client.post(
            export_url(lab), {"file_format": ReportFormat.STUDIES_CSV, "prior_odds": "0.25", "sealed_to": ""}
        )
    assert len(callbacks) == 1  # queued only after the request's transaction committed
    assert response.status_code == 302
    assert response["Location"] == page_url(lab) + "?prior_odds=0.25#report-exports"
    export = ReportExport.objects.get(lab=lab)
    assert (export.status, export.progress, export.file_format, export.prior_odds) == (
        ExportStatus.READY,
        100,
        ReportFormat.STUDIES_CSV,
        0.25,
    )
    assert export.file_path.is_relative_to(files_dir / str(lab.uid) / "reports")

    status = client.get(status_url(export)).json()
    assert status["status"] == "ready" and status["finished"] and status["download_url"] == download_url(export)
    download = client.get(download_url(export))
    assert download["Content-Type"] == "text/csv; charset=utf-8"
    assert (
        f"{lab.slug}-report-" in download["Content-Disposition"] and "-studies.csv" in download["Content-Disposition"]
    )
    rows = list(csv.DictReader(io.StringIO(b"".join(download.streaming_content).decode())))
    assert len(rows) == 14

    page = client.get(page_url(lab)).content.decode()
    assert f'data-record-status="{status_url(export)}"' in page  # polled by static/js/forebook.js
    assert download_url(export) in page


def test_asking_again_while_the_same_file_is_pending_does_not_start_another(
    client, investigator, files_dir, django_capture_on_commit_callbacks
):
    lab = investigator.lab
    ReportExport.objects.create(
        lab=lab,
        created_by=investigator.user,
        file_format=ReportFormat.PDF,
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    login(client, investigator)
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        client.post(export_url(lab), {"file_format": ReportFormat.PDF})
    assert callbacks == []
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        client.post(export_url(lab), {"file_format": ReportFormat.SUMMARY_CSV})  # another file: a new export
    assert len(callbacks) == 1
    assert ReportExport.objects.filter(lab=lab).count() == 2


def test_an_unfinished_export_reports_progress_and_cannot_be_downloaded(client, investigator):
    export = ReportExport.objects.create(
        lab=investigator.lab,
        created_by=investigator.user,
        file_format=ReportFormat.PDF,
        status=ExportStatus.RUNNING,
        progress=50,
        stage="Laying out the PDF",
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    login(client, investigator)
    status = client.get(status_url(export)).json()
    assert (status["progress"], status["stage"], status["finished"], status["download_url"]) == (
        50,
        "Laying out the PDF",
        False,
        "",
    )
    refused = client.get(download_url(export))
    assert refused.status_code == 409 and b"go back to the report page" in refused.content


def test_an_invalid_request_says_what_to_fix(client, investigator):
    login(client, investigator)
    response = client.post(export_url(investigator.lab), {"file_format": "xlsx"}, follow=True)
    assert "No report file was requested" in response.content.decode()
    assert not ReportExport.objects.exists()


def test_outsiders_get_404_and_anonymous_visitors_sign_in(client, outsider, investigator):
    lab = investigator.lab
    export = ReportExport.objects.create(
        lab=lab, created_by=investigator.user, file_format=ReportFormat.PDF, expires_at=timezone.now()
    )
    chart = reverse("reports:chart", kwargs={"lab_slug": lab.slug, "chart": "outcomes"})
    urls = (page_url(lab), chart, status_url(export), download_url(export))
    for url in urls:
        assert client.get(url).status_code == 302
    login(client, outsider)
    for url in urls:
        assert client.get(url).status_code == 404
    assert client.post(export_url(lab), {"file_format": ReportFormat.PDF}).status_code == 404
    assert ReportExport.objects.count() == 1


def test_an_expired_file_is_gone_and_purged(client, investigator, files_dir, django_capture_on_commit_callbacks):
    sealed_study(member=investigator)
    login(client, investigator)
    with django_capture_on_commit_callbacks(execute=True):
        client.post(export_url(investigator.lab), {"file_format": ReportFormat.SUMMARY_CSV})
    export = ReportExport.objects.get()
    assert export.file_path.exists()
    ReportExport.objects.filter(pk=export.pk).update(expires_at=timezone.now() - dt.timedelta(seconds=1))
    assert client.get(download_url(export)).status_code == 410
    assert report_exports_purge() == 1
    assert not export.file_path.exists() and not ReportExport.objects.exists()


def test_the_export_task_acknowledges_late_and_leaves_a_finished_export_alone(investigator, files_dir):
    assert tasks.report_export.acks_late is True
    export = ReportExport.objects.create(
        lab=investigator.lab,
        created_by=investigator.user,
        file_format=ReportFormat.PDF,
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    tasks.report_export.delay(export.pk)
    export.refresh_from_db()
    assert export.status == ExportStatus.READY and export.file_path.read_bytes().startswith(b"%PDF-")
    tasks.report_export.delay(export.pk)  # a redelivered message
    assert ReportExport.objects.get(pk=export.pk).file_sha256 == export.file_sha256


def test_an_unexpected_failure_is_logged_and_reported_as_such(investigator, files_dir, monkeypatch, caplog):
    from ledger.reports import services

    def broken(**kwargs):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(services, "report_file", broken)
    export = ReportExport.objects.create(
        lab=investigator.lab,
        created_by=investigator.user,
        file_format=ReportFormat.PDF,
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    finished = services.report_export_run(export_id=export.pk)
    assert finished.status == ExportStatus.FAILED
    assert f"logged as export {export.code}" in finished.error and "disk on fire" not in finished.error
    assert "disk on fire" in caplog.text
