from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from ledger.chain.checkpoints import CheckpointRefused, LogKeyMissing, checkpoint_sign


class Command(BaseCommand):
    help = (
        "Sign a checkpoint of the ledger now (the hourly job does this when there are new entries) and print "
        "the signed note; --out saves it, e.g. for a later `verify_log --from-checkpoint`."
    )

    def add_arguments(self, parser):
        parser.add_argument("--out", metavar="FILE", help="Also write the signed note to this file.")

    def handle(self, *args, out: str | None = None, **options):
        try:
            checkpoint = checkpoint_sign()
        except (LogKeyMissing, CheckpointRefused) as error:
            raise CommandError(str(error)) from error
        self.stdout.write(checkpoint.note, ending="")
        if out:
            Path(out).write_text(checkpoint.note, encoding="utf-8")
            self.stderr.write(f"Checkpoint of size {checkpoint.size} (entry #{checkpoint.entry_seq}) written to {out}.")
