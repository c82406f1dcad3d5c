import sys

from django.core.management.base import BaseCommand

from ledger.chain.verification import verify_ledger


class Command(BaseCommand):
    help = (
        "Recompute every entry hash, link and the Merkle root from the stored rows. Prints the entry "
        "count and head hash, or the first bad entry and what is wrong. Exit status 0 when intact, 1 otherwise."
    )

    def add_arguments(self, parser):
        parser.add_argument("--progress", action="store_true", help="Print progress to stderr while streaming.")

    def handle(self, *args, progress: bool = False, **options):
        def report_progress(count: int) -> None:
            self.stderr.write(f"  … {count:,} entries checked")

        report = verify_ledger(progress=report_progress if progress else None)
        if report.ok:
            self.stdout.write(
                f"ok: {report.count} entries; head {report.head_hash}; merkle root {report.root_hash.hex()}"
            )
            return
        self.stdout.write(f"FAILED at entry {report.bad_seq}: {report.problem}")
        self.stdout.write(f"({report.count} entries before it verified)")
        sys.exit(1)
