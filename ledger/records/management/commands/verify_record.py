import json
import sys
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError
from django.db import DatabaseError

from ledger.chain import checkpoints
from ledger.records import signing, verify


class Command(BaseCommand):
    help = (
        "Check a signed record PDF: its PAdES signature, that every embedded entry's hashes recompute, that "
        "each inclusion proof leads to the checkpoint root, and that the checkpoint is signed by the log key. "
        "Runs without the database: on the instance it uses the instance's certificate and log key, elsewhere "
        "pass --cert and --vkey. Prints one PASS/FAIL line per check; exit status 0 when all pass, 1 otherwise."
    )

    def add_arguments(self, parser):
        parser.add_argument("record", metavar="RECORD.pdf")
        parser.add_argument(
            "--checkpoint",
            metavar="FILE",
            help=(
                "A checkpoint note you saved earlier (e.g. from /log/checkpoint): the record's must equal it "
                "or be consistent with it."
            ),
        )
        parser.add_argument(
            "--cert",
            action="append",
            default=[],
            metavar="PEM",
            help=(
                "A certificate you trust for the PDF signature (the instance's /records/certificate.pem, "
                "or a TSA root); repeatable."
            ),
        )
        parser.add_argument("--vkey", default="", help="The log's verifier key (from /log/key.json).")
        parser.add_argument(
            "--proof",
            metavar="FILE",
            help=(
                "A saved /log/consistency.json between the record's checkpoint and --checkpoint, "
                "when not on the instance."
            ),
        )

    def handle(
        self, *args, record: str, checkpoint: str | None, cert: list[str], vkey: str, proof: str | None, **options
    ):
        pdf = self._read(record, "record")
        trust_roots = self._trust_roots(cert)
        log_vkey = vkey or self._instance_vkey()
        reference_note = self._read(checkpoint, "checkpoint") if checkpoint else None
        saved_proof = self._json(proof) if proof else None

        def consistency_proof_for(old_size: int, new_size: int):
            if saved_proof is not None:
                try:
                    return verify.proof_from_json(saved_proof, old_size=old_size, new_size=new_size)
                except ValueError as error:
                    self.stderr.write(f"The saved proof cannot be used: {error}.")
                    return None
            return self._instance_proof(old_size, new_size)

        report = verify.record_verify(
            pdf=pdf,
            trust_roots=trust_roots,
            log_vkey=log_vkey,
            reference_note=reference_note,
            consistency_proof_for=consistency_proof_for,
        )
        for check in report.checks:
            self.stdout.write(f"{'PASS' if check.passed else 'FAIL'}  {check.name}: {check.detail}")
        if report.ok:
            self.stdout.write(f"ok: the record of study {report.study_code} passes every check")
            return
        failed = ", ".join(check.name for check in report.checks if not check.passed)
        self.stdout.write(f"FAILED: {failed}")
        sys.exit(1)

    def _read(self, path: str, what: str) -> bytes:
        try:
            return Path(path).read_bytes()
        except OSError as error:
            raise CommandError(f"Cannot read the {what} file {path}: {error.strerror}.") from None

    def _json(self, path: str):
        try:
            return json.loads(self._read(path, "proof"))
        except ValueError as error:
            raise CommandError(
                f"The proof file {path} is not JSON ({error}); save /log/consistency.json as it is."
            ) from None

    def _trust_roots(self, paths: list[str]) -> list:
        if paths:
            from pyhanko.keys import load_certs_from_pemder

            try:
                return list(load_certs_from_pemder(paths))
            except (OSError, ValueError, TypeError) as error:
                raise CommandError(
                    f"Cannot read the certificate(s) {', '.join(paths)} ({error}); give PEM or DER files."
                ) from None
        try:
            return signing.record_trust_roots()
        except signing.SigningIdentityError:
            self.stderr.write(
                "No certificate given and this machine has no Forebook signing certificate: the signature is checked "
                "for integrity only. Pass --cert with the instance's /records/certificate.pem."
            )
            return []

    def _instance_vkey(self) -> str | None:
        try:
            return checkpoints.log_verifier().to_key_string()
        except checkpoints.LogKeyMissing:
            self.stderr.write(
                "No --vkey given and this machine has no Forebook log key: the checkpoint is checked with the key "
                "written in the record itself. Pass --vkey with the key from the instance's /log/key.json."
            )
            return None

    def _instance_proof(self, old_size: int, new_size: int):
        try:
            proof, _old_root, _new_root = checkpoints.consistency_proof(old_size=old_size, new_size=new_size)
        except (DatabaseError, checkpoints.ProofRequestError) as error:
            self.stderr.write(f"This machine's ledger cannot supply the consistency proof ({error}).")
            return None
        return proof
