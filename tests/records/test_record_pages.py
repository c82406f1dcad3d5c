"""The study page's export (button, background task, status polling, download) and the public
record check page. No external computation here: these tests check behaviour and permissions."""

import datetime as dt

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse
from django.utils import timezone

from ledger.records import tasks
from ledger.records.models import ExportStatus, RecordExport
from ledger.records.services import record_exports_purge, record_file_path
from tests.factories import PASSWORD, enrolled_study, reported_study

pytestmark = pytest.mark.django_db


def login(client, member):
    assert client.login(username=member.user.username, password=PASSWORD)


def export_url(study):
    return reverse("records:export", kwargs={"lab_slug": study.lab.slug, "code": study.code})


def status_url(export):
    return reverse(
        "records:status", kwargs={"lab_slug": export.lab.slug, "code": export.study.code, "export_code": export.code}
    )


def download_url(export):
    return reverse(
        "records:download", kwargs={"lab_slug": export.lab.slug, "code": export.study.code, "export_code": export.code}
    )


@pytest.fixture
def study(investigator):
    return reported_study(member=investigator)


def test_the_button_exports_in_the_background_and_offers_the_file(
    client, investigator, study, django_capture_on_commit_callbacks
):
    login(client, investigator)
    page = client.get(study.get_absolute_url())
    assert b"Export signed record" in page.content
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        response = client.post(export_url(study))
    assert len(callbacks) == 1  # the task is queued only after the request's transaction commits
    assert response.status_code == 302 and response["Location"].endswith("#record-exports")
    export = RecordExport.objects.get(study=study)
    assert (export.status, export.progress, export.created_by, export.lab) == (
        ExportStatus.READY,
        100,
        investigator.user,
        study.lab,
    )
    assert export.expires_at > timezone.now() + dt.timedelta(hours=1)

    status = client.get(status_url(export)).json()
    assert status["status"] == "ready" and status["finished"] and status["download_url"] == download_url(export)

    download = client.get(download_url(export))
    assert download["Content-Type"] == "application/pdf"
    assert f"{study.code}-record-" in download["Content-Disposition"]
    body = b"".join(download.streaming_content)
    assert body.startswith(b"%PDF-") and len(body) == export.file_size
    page = client.get(study.get_absolute_url())
    assert download_url(export).encode() in page.content


def test_an_unfinished_export_is_polled_by_the_page(client, investigator, study):
    export = RecordExport.objects.create(
        lab=study.lab,
        study=study,
        created_by=investigator.user,
        status=ExportStatus.RUNNING,
        progress=45,
        stage="Laying out the PDF",
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    login(client, investigator)
    page = client.get(study.get_absolute_url()).content.decode()
    assert f'data-record-status="{status_url(export)}"' in page
    assert 'data-finished="false"' in page
    status = client.get(status_url(export)).json()
    assert (status["status"], status["progress"], status["stage"], status["finished"], status["download_url"]) == (
        "running",
        45,
        "Laying out the PDF",
        False,
        "",
    )
    assert client.get(download_url(export)).status_code == 409


def test_asking_again_while_an_export_is_pending_does_not_start_another(
    client, investigator, study, django_capture_on_commit_callbacks
):
    RecordExport.objects.create(
        lab=study.lab,
        study=study,
        created_by=investigator.user,
        status=ExportStatus.QUEUED,
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    login(client, investigator)
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        client.post(export_url(study))
    assert callbacks == []
    assert RecordExport.objects.filter(study=study).count() == 1


def test_a_stale_pending_export_does_not_block_a_new_one(
    client, investigator, study, settings, django_capture_on_commit_callbacks
):
    stale = RecordExport.objects.create(
        lab=study.lab,
        study=study,
        created_by=investigator.user,
        status=ExportStatus.RUNNING,
        expires_at=timezone.now() + dt.timedelta(hours=1),
    )
    long_ago = timezone.now() - dt.timedelta(seconds=2 * settings.CELERY_TASK_TIME_LIMIT + 60)
    RecordExport.objects.filter(pk=stale.pk).update(created_at=long_ago)
    login(client, investigator)
    with django_capture_on_commit_callbacks(execute=True) as callbacks:
        client.post(export_url(study))
    assert len(callbacks) == 1
    assert RecordExport.objects.filter(study=study, status=ExportStatus.READY).count() == 1


def test_a_failed_export_shows_its_error(
    client, investigator, study, settings, tmp_path, django_capture_on_commit_callbacks
):
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "no-identity"
    login(client, investigator)
    with django_capture_on_commit_callbacks(execute=True):
        client.post(export_url(study))
    export = RecordExport.objects.get(study=study)
    assert export.status == ExportStatus.FAILED
    assert "create_signing_identity" in export.error
    status = client.get(status_url(export)).json()
    assert status["status"] == "failed" and status["finished"] and "create_signing_identity" in status["error"]
    assert b"create_signing_identity" in client.get(study.get_absolute_url()).content


def test_a_reader_may_export_but_a_draft_study_has_nothing_to_export(
    client, reader, investigator, django_capture_on_commit_callbacks
):
    draft = enrolled_study(member=investigator)
    login(client, reader)
    with django_capture_on_commit_callbacks(execute=True):
        response = client.post(export_url(draft), follow=True)
    assert b"Nothing about this study is sealed yet" in response.content
    assert not RecordExport.objects.exists()


def test_outsiders_get_404_and_anonymous_visitors_sign_in(client, outsider, investigator, study):
    export = RecordExport.objects.create(
        lab=study.lab, study=study, created_by=investigator.user, expires_at=timezone.now() + dt.timedelta(hours=1)
    )
    for url in (status_url(export), download_url(export)):
        assert client.get(url).status_code == 302
    assert client.post(export_url(study)).status_code == 302
    login(client, outsider)
    for url in (status_url(export), download_url(export)):
        assert client.get(url).status_code == 404
    assert client.post(export_url(study)).status_code == 404
    assert RecordExport.objects.count() == 1


def test_an_expired_file_is_gone_and_purged(client, investigator, study, django_capture_on_commit_callbacks):
    login(client, investigator)
    with django_capture_on_commit_callbacks(execute=True):
        client.post(export_url(study))
    export = RecordExport.objects.get(study=study)
    path = record_file_path(export=export)
    assert path.exists()
    RecordExport.objects.filter(pk=export.pk).update(expires_at=timezone.now() - dt.timedelta(seconds=1))
    assert client.get(download_url(export)).status_code == 410
    assert record_exports_purge() == 1
    assert not path.exists() and not RecordExport.objects.exists()


def test_the_export_task_acknowledges_late_and_takes_an_id(investigator, study):
    assert tasks.record_export.acks_late is True
    export = RecordExport.objects.create(
        lab=study.lab, study=study, created_by=investigator.user, expires_at=timezone.now() + dt.timedelta(hours=1)
    )
    tasks.record_export.delay(export.pk)
    export.refresh_from_db()
    assert export.status == ExportStatus.READY
    tasks.record_export.delay(export.pk)  # a redelivered message leaves a finished export alone
    assert RecordExport.objects.get(pk=export.pk).file_sha256 == export.file_sha256


# --- the public record check ---------------------------------------------------------------


def upload(client, data: bytes, name: str = "record.pdf"):
    return client.post(reverse("public-records:verify"), {"record": SimpleUploadedFile(name, data, "application/pdf")})


def test_the_check_page_needs_no_sign_in_and_passes_a_fresh_record(client, exported_record):
    assert client.get(reverse("public-records:verify")).status_code == 200
    response = upload(client, exported_record.pdf)
    assert response.status_code == 200
    text = response.content.decode()
    assert "This record passes every check" in text
    assert exported_record.study_code in text
    assert text.count("✔ Passed") == 5
    assert "does not show that the research was sound" in text


def test_the_check_page_explains_a_tampered_record(client, exported_record):
    from tests.records.support import flip_one_signed_byte

    text = upload(client, flip_one_signed_byte(exported_record.pdf)).content.decode()
    assert "This record fails at least one check" in text
    assert "✖ Failed" in text and "changed after signing" in text


@pytest.mark.parametrize(
    ("data", "message"),
    [
        (b"\x89PNG\r\n\x1a\n not a pdf", "This is not a PDF file"),
        (b"%PDF-1.7\n" + bytes(range(256)) * 20, "damaged"),
    ],
)
def test_the_check_page_answers_wrong_or_hostile_files_in_words(client, data, message):
    response = upload(client, data)
    assert response.status_code == 200
    assert message in response.content.decode()


def test_the_check_page_enforces_its_size_limit(client, settings):
    settings.FOREBOOK_RECORD_UPLOAD_MAX_BYTES = 1024
    response = upload(client, b"%PDF-1.7\n" + b"0" * 4096)
    assert response.status_code == 200
    assert "can be checked here" in response.content.decode()
    huge = upload(client, b"%PDF-1.7\n" + b"0" * (200 * 1024))
    assert huge.status_code == 413 and "larger than" in huge.content.decode()


def test_the_certificate_is_published(client, instance_identity):
    response = client.get(reverse("public-records:certificate"))
    assert response.status_code == 200
    assert response.content.strip() == (instance_identity / "record-signing.crt").read_bytes().strip()
