"""The exported record PDF: its PAdES signature, checked by two independent validators, and its content.

External checks:
  - pyHanko's validator (validate_pdf_signature, judged by status.bottom_line) and poppler's pdfsig
    (Debian poppler-utils; its "Signature is Valid." line) must both accept the signature, and both
    must reject the file after one signed byte changes.
  - pdftotext (poppler-utils) extracts the text a reader sees.
  - PAdES B-T: a timestamp token from pyHanko's DummyTimeStamper (an in-process RFC 3161 authority).
"""

import pytest
from django.core.management import CommandError, call_command
from pyhanko.sign.timestamps.dummy_client import DummyTimeStamper

from ledger.chain.checkpoints import latest_checkpoint
from ledger.chain.models import Entry, EntryKind
from ledger.records import signing
from ledger.records.document import ATTACHMENT_DESCRIPTION, ATTACHMENT_NAME, ENTRY_FIELDS
from ledger.records.services import record_build
from ledger.records.verify import embedded_record, open_pdf
from tests.factories import reported_study, sealed_study
from tests.records.support import (
    flip_one_signed_byte,
    make_timestamp_authority,
    pdf_text,
    pdfsig_output,
    record_certificate,
    validate_with_pyhanko,
)

VALID_LINE = "Signature Validation: Signature is Valid."


def test_pyhanko_validates_the_exported_signature(exported_record, instance_identity):
    status = validate_with_pyhanko(exported_record.pdf, [record_certificate(instance_identity)])
    assert status.bottom_line
    assert status.coverage.name == "ENTIRE_FILE"
    assert status.timestamp_validity is None  # no TSA configured: PAdES B-B


def test_pdfsig_validates_the_exported_signature_as_pades(exported_record):
    output = pdfsig_output(exported_record.path)
    assert VALID_LINE in output
    assert "ETSI.CAdES.detached" in output  # the PAdES subfilter, not adbe.pkcs7.detached
    assert "Total document signed" in output


def test_one_changed_signed_byte_fails_both_validators(exported_record, instance_identity, tmp_path):
    tampered = flip_one_signed_byte(exported_record.pdf)
    status = validate_with_pyhanko(tampered, [record_certificate(instance_identity)])
    assert not status.bottom_line
    assert not status.intact
    path = tmp_path / "tampered.pdf"
    path.write_bytes(tampered)
    output = pdfsig_output(path)
    assert VALID_LINE not in output
    assert "Digest Mismatch" in output


def test_a_certificate_nobody_trusts_is_not_trusted(exported_record, tmp_path_factory):
    other = tmp_path_factory.mktemp("other-identity")
    signing.identity_create(directory=other, origin="other.test.invalid/log")
    status = validate_with_pyhanko(exported_record.pdf, [record_certificate(other)])
    assert status.intact
    assert not status.bottom_line


def test_the_text_shows_the_study_code_every_entry_hash_and_the_checkpoint_root(exported_record):
    text = pdf_text(exported_record.path)
    assert exported_record.study_code in text
    for entry_hash in exported_record.entry_hashes:
        assert entry_hash in text
    assert exported_record.checkpoint_root in text
    text = " ".join(text.split())  # sentences wrap across lines
    assert "does not show that the research is sound" in text
    assert "How to check this record" in text
    assert "Pilot attrition was higher than expected." in text  # the amendment's reason
    assert "Attrition in the pilot" in text  # the explanation entry, rendered generically


def test_the_attachment_holds_the_full_rows_and_survives_signing(exported_record, django_db_blocker):
    document = embedded_record(reader=open_pdf(pdf=exported_record.pdf))
    assert document == exported_record.document
    assert [row["entry_hash"] for row in document["entries"]] == exported_record.entry_hashes
    for row in document["entries"]:
        assert set(ENTRY_FIELDS) <= set(row)
    kinds = [row["kind"] for row in document["entries"]]
    assert kinds == [
        EntryKind.PLAN_SEALED,
        EntryKind.PLAN_AMENDED,
        EntryKind.COLLECTION_STARTED,
        EntryKind.RESULT_RECORDED,
        EntryKind.PUBLICATION_LINKED,
        EntryKind.FINDING_EXPLAINED,
    ]
    assert document["checkpoint"]["size"] >= max(row["seq"] for row in document["entries"])


@pytest.mark.django_db
def test_rows_in_the_attachment_equal_the_ledger_rows(investigator):
    study = reported_study(member=investigator)
    built = record_build(study=study)
    embedded = embedded_record(reader=open_pdf(pdf=built.pdf))
    for row, entry in zip(embedded["entries"], Entry.objects.filter(study=study).order_by("seq"), strict=True):
        assert (
            row["seq"],
            row["kind"],
            row["payload"],
            row["payload_sha256"],
            row["prev_hash"],
            row["entry_hash"],
        ) == (entry.seq, entry.kind, entry.payload, entry.payload_hash, entry.prev_hash, entry.entry_hash)
        assert (row["lab_uid"], row["study_code"], row["author_id"]) == (
            entry.lab_uid,
            entry.study_code,
            entry.author_id,
        )


@pytest.mark.django_db
def test_a_checkpoint_is_signed_when_none_covers_the_study_and_reused_when_one_does(investigator):
    study = sealed_study(member=investigator)
    assert latest_checkpoint() is None
    first = record_build(study=study)
    checkpoint = latest_checkpoint()
    assert checkpoint is not None and checkpoint.size == first.checkpoint_size
    second = record_build(study=study)
    assert second.checkpoint_size == first.checkpoint_size
    assert Entry.objects.filter(kind=EntryKind.CHECKPOINT_SIGNED).count() == 1


@pytest.mark.django_db
def test_pades_b_t_with_a_timestamp_authority(investigator, instance_identity, tmp_path):
    tsa_certificate, tsa_key = make_timestamp_authority()
    study = sealed_study(member=investigator)
    built = record_build(study=study, timestamper=DummyTimeStamper(tsa_cert=tsa_certificate, tsa_key=tsa_key))
    status = validate_with_pyhanko(built.pdf, [record_certificate(instance_identity), tsa_certificate])
    assert status.bottom_line
    assert status.timestamp_validity is not None
    assert status.timestamp_validity.intact and status.timestamp_validity.trusted
    path = tmp_path / "bt.pdf"
    path.write_bytes(built.pdf)
    assert VALID_LINE in pdfsig_output(path)


def test_a_configured_tsa_url_makes_an_rfc3161_client(settings):
    settings.FOREBOOK_TSA_URL = "http://tsa.test.invalid/rfc3161"
    timestamper = signing.configured_timestamper()
    assert timestamper is not None and timestamper.url == "http://tsa.test.invalid/rfc3161"
    settings.FOREBOOK_TSA_URL = ""
    assert signing.configured_timestamper() is None


@pytest.mark.django_db
def test_export_record_command_writes_a_signed_pdf(investigator, tmp_path, capsys, instance_identity):
    study = reported_study(member=investigator)
    target = tmp_path / "record.pdf"
    call_command("export_record", study.code.lower(), "-o", str(target))
    out, err = capsys.readouterr()
    assert f"wrote {target}" in out and study.code in out
    assert "Signing the PDF" in err  # progress is reported while it works
    assert validate_with_pyhanko(target.read_bytes(), [record_certificate(instance_identity)]).bottom_line


@pytest.mark.django_db
def test_export_record_names_an_unknown_code_and_how_to_find_codes(tmp_path):
    with pytest.raises(CommandError, match=r"No study with code 'NOPE42'.*list_studies"):
        call_command("export_record", "NOPE42", "-o", str(tmp_path / "x.pdf"))


@pytest.mark.django_db
def test_export_record_without_an_identity_says_which_command_to_run(investigator, settings, tmp_path):
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "empty"
    study = sealed_study(member=investigator)
    with pytest.raises(CommandError, match="python manage.py create_signing_identity"):
        call_command("export_record", study.code, "-o", str(tmp_path / "x.pdf"))
    assert not Entry.objects.filter(kind=EntryKind.CHECKPOINT_SIGNED).exists()  # failed before signing anything


@pytest.mark.django_db
def test_export_record_refuses_a_study_with_nothing_sealed(investigator, tmp_path):
    from tests.factories import enrolled_study

    study = enrolled_study(member=investigator)
    with pytest.raises(CommandError, match="seal its plan first"):
        call_command("export_record", study.code, "-o", str(tmp_path / "x.pdf"))


def test_the_attachment_is_named_and_described(exported_record):
    names = open_pdf(pdf=exported_record.pdf).root["/Names"]["/EmbeddedFiles"]["/Names"]
    assert str(names[0]) == ATTACHMENT_NAME
    assert str(names[1]["/Desc"]) == ATTACHMENT_DESCRIPTION
