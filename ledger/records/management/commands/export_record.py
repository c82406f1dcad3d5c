from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from ledger.chain.errors import LedgerError
from ledger.core.errors import ActionRefused
from ledger.records import signing
from ledger.records.selectors import study_by_code
from ledger.records.services import record_build


class Command(BaseCommand):
    help = (
        "Write the signed record PDF of a study: every plan version, the results and explanations, each "
        "entry's inclusion proof and a signed checkpoint (signed first if none covers the study yet)."
    )

    def add_arguments(self, parser):
        parser.add_argument("study_code", metavar="STUDY_CODE", help="The study's code, as shown on its page.")
        parser.add_argument("-o", "--output", required=True, metavar="FILE", help="Where to write the PDF.")

    def handle(self, *args, study_code: str, output: str, **options):
        study = study_by_code(code=study_code)
        if study is None:
            raise CommandError(
                f"No study with code {study_code!r}. List the codes with `python manage.py list_studies`."
            )
        target = Path(output)
        if not target.parent.is_dir():
            raise CommandError(f"The folder {target.parent} does not exist; create it or choose another --output.")

        def show_progress(percent: int, stage: str) -> None:
            self.stderr.write(f"  {percent:3d} % {stage}")

        try:
            built = record_build(study=study, progress=show_progress)
        except ActionRefused as refusal:
            raise CommandError(refusal.message) from None
        except (signing.SigningIdentityError, LedgerError) as error:
            raise CommandError(str(error)) from None
        target.write_bytes(built.pdf)
        self.stdout.write(
            f"wrote {target} ({len(built.pdf):,} bytes): study {study.code}, {len(built.document['entries'])} "
            f"entries, checkpoint of size {built.checkpoint_size}"
        )
