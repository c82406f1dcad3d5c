from django.core.management.base import BaseCommand, CommandError

from ledger.labs.models import Lab
from ledger.plans.models import Study


class Command(BaseCommand):
    help = "List studies, one per line: code, state, title (tab-separated)."

    def add_arguments(self, parser):
        parser.add_argument("--lab", metavar="SLUG", help="Only the studies of this lab.")

    def handle(self, *args, lab: str | None = None, **options):
        studies = Study.objects.select_related("lab").order_by("lab__slug", "created_at", "code")
        if lab:
            if not Lab.objects.filter(slug=lab).exists():
                known = ", ".join(Lab.objects.values_list("slug", flat=True)) or "none"
                raise CommandError(f"No lab with slug {lab!r}. Known labs: {known}.")
            studies = studies.filter(lab__slug=lab)
        for study in studies:
            self.stdout.write(f"{study.code}\t{study.state}\t{study.title}")
