from pathlib import Path

from django.conf import settings
from django.core.management.base import BaseCommand, CommandError

from ledger.records import signing


class Command(BaseCommand):
    help = (
        "Make a self-signed development identity for signing record PDFs (RSA key and X.509 certificate) "
        "and checkpoints (Ed25519 log key, C2SP format) in FOREBOOK_IDENTITY_DIR (under the data directory, "
        "files mode 600). Keeps an existing identity unless --force. For production, configure your own "
        "certificate with FOREBOOK_SIGNING_KEY and FOREBOOK_SIGNING_CERT instead."
    )

    def add_arguments(self, parser):
        parser.add_argument(
            "--force",
            action="store_true",
            help=(
                "Replace the existing identity. Records and checkpoints signed before then verify only "
                "with the old keys."
            ),
        )
        parser.add_argument(
            "--origin",
            default="",
            help=(
                "Name of the log (and of a new log key), e.g. lab.example.org/forebook-log; "
                "default FOREBOOK_LOG_ORIGIN."
            ),
        )

    def handle(self, *args, force: bool = False, origin: str = "", **options):
        directory = Path(settings.FOREBOOK_IDENTITY_DIR)
        try:
            report = signing.identity_create(
                directory=directory, origin=origin or signing.default_log_origin(), force=force
            )
        except signing.SigningIdentityError as error:
            raise CommandError(str(error)) from None
        for path in report.created:
            self.stdout.write(f"created {path}")
        for path in report.kept:
            self.stdout.write(f"kept    {path}")
        self.stdout.write(f"log verifier key: {report.vkey}")
        self.stdout.write(f"record certificate SHA-256: {report.certificate_sha256}")
        if report.kept and not report.created:
            self.stderr.write("An identity already exists; nothing was replaced (use --force to replace it).")
        overridden = [name for name in ("FOREBOOK_SIGNING_KEY", "FOREBOOK_LOG_KEY") if getattr(settings, name)]
        if overridden:
            self.stderr.write(
                f"Note: {', '.join(overridden)} is set, so this instance signs with the files named there, "
                "not with the ones above."
            )
