from pathlib import Path

from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from ledger.labs.models import Lab
from ledger.reports.files import report_file
from ledger.reports.forms import ReportForm
from ledger.reports.models import ReportFormat
from ledger.reports.selectors import lab_report

# Command option -> the report form's field, so that errors name the option that was typed.
OPTION_OF_FIELD = {"sealed_from": "--from", "sealed_to": "--to", "prior_odds": "--prior-odds"}


class Command(BaseCommand):
    help = (
        "Write a lab's outcome report: the PDF (--pdf), one CSV row per registered study (--csv) and/or the "
        "summary counts as CSV (--summary-csv), for the studies first sealed within --from/--to (default: all)."
    )

    def add_arguments(self, parser):
        parser.add_argument("lab_slug", metavar="LAB_SLUG", help="The lab's short name, as in its addresses.")
        parser.add_argument("--pdf", metavar="FILE", help="Where to write the PDF report.")
        parser.add_argument("--csv", metavar="FILE", help="Where to write the studies CSV (one row per study).")
        parser.add_argument("--summary-csv", metavar="FILE", help="Where to write the summary counts CSV.")
        parser.add_argument(
            "--from", dest="sealed_from", metavar="YYYY-MM-DD", default="", help="First sealed on or after."
        )
        parser.add_argument(
            "--to", dest="sealed_to", metavar="YYYY-MM-DD", default="", help="First sealed on or before."
        )
        parser.add_argument(
            "--prior-odds", default="1:1", help="Prior odds that a tested hypothesis is true, e.g. 1:4 (default 1:1)."
        )

    def handle(self, *args, lab_slug: str, pdf: str, csv: str, summary_csv: str, **options):
        targets = {
            ReportFormat.PDF: pdf,
            ReportFormat.STUDIES_CSV: csv,
            ReportFormat.SUMMARY_CSV: summary_csv,
        }
        targets = {file_format: Path(name) for file_format, name in targets.items() if name}
        if not targets:
            raise CommandError("Say what to write: --pdf FILE, --csv FILE and/or --summary-csv FILE.")
        for target in targets.values():
            if not target.parent.is_dir():
                raise CommandError(f"The folder {target.parent} does not exist; create it or choose another file.")
        lab = Lab.objects.filter(slug=lab_slug).first()
        if lab is None:
            known = ", ".join(Lab.objects.order_by("slug").values_list("slug", flat=True)) or "none yet"
            raise CommandError(f"No lab with the short name {lab_slug!r}. The labs are: {known}.")
        form = ReportForm(
            data={key: options[key] for key in ("sealed_from", "sealed_to", "prior_odds")},
        )
        if not form.is_valid():
            problems = "; ".join(
                f"{OPTION_OF_FIELD.get(field, 'options')}: {' '.join(errors)}" for field, errors in form.errors.items()
            )
            raise CommandError(f"{problems} (dates are written YYYY-MM-DD).")

        report = lab_report(lab=lab, today=timezone.localdate(), **form.parameters())
        generated_at = timezone.now()
        for file_format, target in targets.items():
            built = report_file(report=report, file_format=file_format, generated_at=generated_at)
            target.write_bytes(built.data)
            self.stdout.write(
                f"wrote {target} ({len(built.data):,} bytes): {ReportFormat(file_format).label} of {lab.name}, "
                f"{len(report.studies)} registered studies, {report.period_text}"
            )
