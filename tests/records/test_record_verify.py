"""verify_record and ledger.records.verify: a fresh record passes; each kind of forgery fails the check
that guards against it, and says so by name.

The forgeries are made the way an insider with the signing key would make them (edit the embedded
JSON, re-render, re-sign), so that the PDF signature passes and the deeper check must catch it.
Proof checks rely on ledger.chain.merkle, itself tested against the RFC 6962 / RFC 9162 algorithms
and published vectors (tests/chain/test_merkle.py); note signatures on ledger.chain.notes, tested
against the Go sumdb/note vectors (tests/chain/test_notes.py).
"""

import copy
import hashlib
import json
import zlib

import pytest
from django.core.management import call_command

from ledger.chain import merkle, notes
from ledger.chain.checkpoints import checkpoint_sign, consistency_proof, log_signer
from ledger.chain.models import EntryKind
from ledger.chain.services import entry_append
from ledger.records import render, signing, verify
from ledger.records.services import record_build
from tests.factories import sealed_study
from tests.records.support import flip_one_signed_byte, record_certificate

CHECK_NAMES = [
    verify.CHECK_PDF_SIGNATURE,
    verify.CHECK_RECORD_DATA,
    verify.CHECK_ENTRY_HASHES,
    verify.CHECK_INCLUSION,
    verify.CHECK_CHECKPOINT_SIGNATURE,
]


def resigned(document: dict) -> bytes:
    """What an insider holding the signing key could produce from an edited document."""
    return signing.pdf_sign(pdf=render.record_pdf(document=document), signer=signing.record_signer())


def run_verify(tmp_path, pdf: bytes, *options: str, capsys) -> tuple[int, str, str]:
    path = tmp_path / "record.pdf"
    path.write_bytes(pdf)
    try:
        call_command("verify_record", str(path), *options)
        code = 0
    except SystemExit as exit_:
        code = exit_.code
    out, err = capsys.readouterr()
    return code, out, err


def line_of(out: str, check: str) -> str:
    (line,) = [line for line in out.splitlines() if line[6:].startswith(check + ":")]
    return line


def entry_of_kind(document: dict, kind: str) -> dict:
    return next(row for row in document["entries"] if row["kind"] == kind)


def test_a_fresh_record_passes_every_check(exported_record, tmp_path, capsys):
    code, out, _err = run_verify(tmp_path, exported_record.pdf, capsys=capsys)
    assert code == 0
    for check in CHECK_NAMES:
        assert line_of(out, check).startswith("PASS")
    assert f"ok: the record of study {exported_record.study_code} passes every check" in out


def test_a_changed_payload_fails_the_entry_hash_check(exported_record, tmp_path, capsys):
    document = copy.deepcopy(exported_record.document)
    result = entry_of_kind(document, EntryKind.RESULT_RECORDED)
    assert '"verdict":"null"' in result["payload"]
    result["payload"] = result["payload"].replace('"verdict":"null"', '"verdict":"supported"')
    code, out, _err = run_verify(tmp_path, resigned(document), capsys=capsys)
    assert code == 1
    assert line_of(out, verify.CHECK_PDF_SIGNATURE).startswith("PASS")  # re-signed by the insider
    failure = line_of(out, verify.CHECK_ENTRY_HASHES)
    assert failure.startswith("FAIL") and f"Entry {result['seq']}" in failure and "payload" in failure
    assert out.rstrip().endswith(f"FAILED: {verify.CHECK_ENTRY_HASHES}")


def test_a_changed_payload_with_a_matching_payload_hash_still_fails(exported_record):
    document = copy.deepcopy(exported_record.document)
    result = entry_of_kind(document, EntryKind.RESULT_RECORDED)
    result["payload"] = result["payload"].replace('"verdict":"null"', '"verdict":"supported"')
    result["payload_sha256"] = hashlib.sha256(result["payload"].encode()).hexdigest()
    check = verify.check_entry_hashes(record=document)
    assert not check.passed and "entry hash does not match its header" in check.detail


def _proofs_from_another_tree(size: int, seqs: list[int]) -> dict[int, list[str]]:
    nodes, frontier = {}, []
    for index in range(size):
        leaf = merkle.leaf_hash(hashlib.sha256(f"another log, leaf {index}".encode()).digest())
        frontier, completed = merkle.frontier_append(frontier=frontier, size=index, leaf=leaf)
        nodes.update({(level, position): node for level, position, node in completed})
    return {
        seq: [node.hex() for node in merkle.inclusion_proof(index=seq - 1, size=size, fetch=lambda ids: nodes)]
        for seq in seqs
    }


def test_proofs_from_another_tree_fail_the_inclusion_check(exported_record, tmp_path, capsys):
    document = copy.deepcopy(exported_record.document)
    foreign = _proofs_from_another_tree(document["checkpoint"]["size"], [row["seq"] for row in document["entries"]])
    for row in document["entries"]:
        row["inclusion_proof"] = foreign[row["seq"]]
    code, out, _err = run_verify(tmp_path, resigned(document), capsys=capsys)
    assert code == 1
    assert line_of(out, verify.CHECK_ENTRY_HASHES).startswith("PASS")
    failure = line_of(out, verify.CHECK_INCLUSION)
    assert failure.startswith("FAIL") and "does not lead to the checkpoint root" in failure


def test_a_checkpoint_signed_by_another_key_fails_the_checkpoint_check(exported_record, tmp_path, capsys):
    document = copy.deepcopy(exported_record.document)
    body = notes.open_note(note=document["checkpoint"]["note"], verifiers=[log_signer().verifier]).text
    impostor = notes.NoteSigner.generate(name=log_signer().name)  # same name, another key
    document["checkpoint"]["note"] = notes.sign_note(text=body, signer=impostor)
    document["log_vkey"] = impostor.verifier.to_key_string()  # the impostor vouches for itself
    code, out, _err = run_verify(tmp_path, resigned(document), capsys=capsys)
    assert code == 1
    failure = line_of(out, verify.CHECK_CHECKPOINT_SIGNATURE)
    assert failure.startswith("FAIL") and "not signed by" in failure
    # The same file checked elsewhere with the key the instance publishes fails the same way.
    settings_free = verify.record_verify(
        pdf=resigned(document),
        log_vkey=log_signer().verifier.to_key_string(),
    )
    assert not {check.name for check in settings_free.checks if not check.passed} - {verify.CHECK_CHECKPOINT_SIGNATURE}
    assert not settings_free.ok


def test_without_any_instance_key_the_embedded_key_is_used_and_the_output_says_so(
    exported_record, tmp_path, capsys, settings
):
    settings.FOREBOOK_IDENTITY_DIR = tmp_path / "no-identity-here"
    code, out, err = run_verify(tmp_path, exported_record.pdf, capsys=capsys)
    assert code == 0
    assert "written in the record itself" in line_of(out, verify.CHECK_CHECKPOINT_SIGNATURE)
    assert "Pass --vkey" in err and "--cert" in err
    assert "NOT checked against one you trust" in line_of(out, verify.CHECK_PDF_SIGNATURE)


def test_one_changed_signed_byte_fails_the_pdf_signature_check(exported_record, tmp_path, capsys):
    code, out, _err = run_verify(tmp_path, flip_one_signed_byte(exported_record.pdf), capsys=capsys)
    assert code == 1
    failure = line_of(out, verify.CHECK_PDF_SIGNATURE)
    assert failure.startswith("FAIL") and "changed after signing" in failure


def test_a_record_signed_with_another_certificate_is_not_trusted(exported_record, tmp_path, capsys, tmp_path_factory):
    other = tmp_path_factory.mktemp("other-identity")
    signing.identity_create(directory=other, origin="other.test.invalid/log")
    code, out, _err = run_verify(
        tmp_path, exported_record.pdf, "--cert", str(other / "record-signing.crt"), capsys=capsys
    )
    assert code == 1
    assert "does not chain to the certificate you trust" in line_of(out, verify.CHECK_PDF_SIGNATURE)


def test_the_same_checkpoint_as_the_one_held_passes(exported_record, tmp_path, capsys):
    held = tmp_path / "held.note"
    held.write_text(exported_record.checkpoint_note)
    code, out, _err = run_verify(tmp_path, exported_record.pdf, "--checkpoint", str(held), capsys=capsys)
    assert code == 0
    assert "is the one you hold" in line_of(out, verify.CHECK_REFERENCE)


def test_a_forged_checkpoint_of_the_same_size_reveals_a_fork(exported_record, tmp_path, capsys):
    size = exported_record.document["checkpoint"]["size"]
    forged_body = notes.format_checkpoint(
        origin=log_signer().name, size=size, root_hash=hashlib.sha256(b"fork").digest()
    )
    held = tmp_path / "forged.note"
    held.write_text(notes.sign_note(text=forged_body, signer=log_signer()))
    code, out, _err = run_verify(tmp_path, exported_record.pdf, "--checkpoint", str(held), capsys=capsys)
    assert code == 1
    assert "the log forked" in line_of(out, verify.CHECK_REFERENCE)


@pytest.mark.django_db
def test_an_earlier_checkpoint_is_proved_consistent_on_the_instance(investigator, tmp_path, capsys):
    study = sealed_study(member=investigator)
    earlier = checkpoint_sign()
    for number in range(5):
        entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"n": number}, lab=investigator.lab)
    checkpoint_sign()  # the record uses the latest checkpoint that covers the study
    built = record_build(study=study)
    assert built.checkpoint_size > earlier.size
    held = tmp_path / "earlier.note"
    held.write_text(earlier.note)
    code, out, _err = run_verify(tmp_path, built.pdf, "--checkpoint", str(held), capsys=capsys)
    assert code == 0, out
    assert f"extends the one of size {earlier.size}" in line_of(out, verify.CHECK_REFERENCE)

    forged_body = notes.format_checkpoint(
        origin=earlier.origin, size=earlier.size, root_hash=hashlib.sha256(b"rewritten").digest()
    )
    held.write_text(notes.sign_note(text=forged_body, signer=log_signer()))
    code, out, _err = run_verify(tmp_path, built.pdf, "--checkpoint", str(held), capsys=capsys)
    assert code == 1
    assert "not consistent" in line_of(out, verify.CHECK_REFERENCE)


@pytest.mark.django_db
def test_a_saved_consistency_proof_works_off_the_instance(investigator, tmp_path, capsys):
    study = sealed_study(member=investigator)
    earlier = checkpoint_sign()
    entry_append(kind=EntryKind.PUBLICATION_LINKED, payload={"n": 1}, lab=investigator.lab)
    checkpoint_sign()
    built = record_build(study=study)
    proof, _old_root, _new_root = consistency_proof(old_size=earlier.size, new_size=built.checkpoint_size)
    saved = tmp_path / "consistency.json"
    saved.write_text(
        json.dumps(
            {"old_size": earlier.size, "new_size": built.checkpoint_size, "proof": [node.hex() for node in proof]}
        )
    )
    held = tmp_path / "earlier.note"
    held.write_text(earlier.note)
    code, out, _err = run_verify(tmp_path, built.pdf, "--checkpoint", str(held), "--proof", str(saved), capsys=capsys)
    assert code == 0, out


# --- offline: no database (pytest-django refuses any query in these tests) -----------------


def test_verification_runs_without_a_database(exported_record, instance_identity):
    report = verify.record_verify(
        pdf=exported_record.pdf,
        trust_roots=[record_certificate(instance_identity)],
        log_vkey=log_signer().verifier.to_key_string(),
    )
    assert report.ok, report.checks
    assert [check.name for check in report.checks] == CHECK_NAMES


@pytest.mark.parametrize(
    ("upload", "expected"),
    [
        (b"GIF89a not a pdf", "not a PDF file"),
        (b"%PDF-1.7\n" + b"\x00garbage" * 50, "damaged"),
        (b"%PDF-", "damaged"),
    ],
)
def test_hostile_or_broken_files_fail_with_a_message_never_an_exception(upload, expected):
    report = verify.record_verify(pdf=upload)
    assert not report.ok
    assert expected in report.checks[0].detail


def test_a_truncated_record_fails_cleanly(exported_record):
    report = verify.record_verify(pdf=exported_record.pdf[: len(exported_record.pdf) // 2])
    assert not report.ok


def test_a_pdf_without_the_attachment_is_not_a_record():
    import weasyprint

    plain = weasyprint.HTML(string="<p>An ordinary invented document.</p>").write_pdf()
    report = verify.record_verify(pdf=plain)
    names = {check.name: check for check in report.checks}
    assert "0 signatures" in names[verify.CHECK_PDF_SIGNATURE].detail
    assert "no forebook-record.json attachment" in names[verify.CHECK_RECORD_DATA].detail


def test_an_inflated_attachment_is_bounded(monkeypatch):
    from pyhanko.pdf_utils import generic

    monkeypatch.setattr(verify, "MAX_RECORD_JSON_BYTES", 1000)
    bomb = generic.StreamObject(
        {generic.NameObject("/Filter"): generic.NameObject("/FlateDecode")}, encoded_data=zlib.compress(b"0" * 5000)
    )
    with pytest.raises(verify.RecordUnreadable, match="larger than"):
        verify._bounded_stream_data(bomb)


@pytest.mark.parametrize(
    ("mangle", "problem"),
    [
        (lambda record: record.update(schema="something/2"), "schema"),
        (lambda record: record.update(entries=[]), "entries"),
        (lambda record: record["entries"][0].pop("payload"), "entry 1 lacks"),
        (lambda record: record.pop("checkpoint"), "checkpoint"),
    ],
)
def test_record_shape_problems_are_named(exported_record, mangle, problem):
    record = copy.deepcopy(exported_record.document)
    mangle(record)
    assert problem in verify.record_shape_problem(record=record)


def test_anything_appended_after_signing_fails_the_pdf_signature_check(exported_record, instance_identity):
    import io

    from pyhanko.pdf_utils import generic
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter

    writer = IncrementalPdfFileWriter(io.BytesIO(exported_record.pdf))
    writer.root["/Lang"] = generic.TextStringObject("en")  # a harmless-looking later revision
    writer.update_root()
    extended = io.BytesIO()
    writer.write(extended)
    report = verify.record_verify(pdf=extended.getvalue(), trust_roots=[record_certificate(instance_identity)])
    (signature_check,) = [check for check in report.checks if check.name == verify.CHECK_PDF_SIGNATURE]
    assert not signature_check.passed and "added to the PDF after it was signed" in signature_check.detail


@pytest.mark.django_db
def test_a_timestamped_record_reports_its_authority(investigator, instance_identity):
    from pyhanko.sign.timestamps.dummy_client import DummyTimeStamper

    from tests.records.support import make_timestamp_authority

    tsa_certificate, tsa_key = make_timestamp_authority()
    built = record_build(
        study=sealed_study(member=investigator),
        timestamper=DummyTimeStamper(tsa_cert=tsa_certificate, tsa_key=tsa_key),
    )
    report = verify.record_verify(pdf=built.pdf, trust_roots=[record_certificate(instance_identity), tsa_certificate])
    assert report.ok
    assert "[PAdES B-T]" in report.checks[0].detail and "(trusted)" in report.checks[0].detail
