from django.core.management.base import BaseCommand

from ledger.core.demo import DEMO_PASSWORD, PEOPLE, build_demo


class Command(BaseCommand):
    help = (
        "Create the invented demo lab (safe to run twice: the second run creates nothing). Prints "
        "'lab <slug>' and then 'study <code> <state>' for each study."
    )

    def handle(self, *args, **options):
        lab, studies, created = build_demo()
        self.stdout.write(f"lab {lab.slug}")
        for study in studies:
            self.stdout.write(f"study {study.code} {study.state}")
        logins = ", ".join(f"{username} ({role.label.lower()})" for username, _f, _l, role, _o in PEOPLE)
        note = "created" if created else "already present; nothing added"
        self.stderr.write(f"Demo lab {note}. Sign in as {logins} with password {DEMO_PASSWORD!r}.")
