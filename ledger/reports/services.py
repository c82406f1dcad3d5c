"""Writes for lab reports: the report exported as a file in the background, and the daily overdue scan."""

from __future__ import annotations

import datetime as dt
import logging
import math
from collections import defaultdict

from django.conf import settings
from django.core.mail import EmailMessage
from django.db import IntegrityError, transaction
from django.utils import timezone

from ledger.compare import results_due_on
from ledger.core import exports
from ledger.core.errors import ActionRefused
from ledger.core.exports import report_progress
from ledger.labs.models import Membership, Role
from ledger.labs.services import require
from ledger.plans.models import Study, StudyState
from ledger.reports.files import report_file
from ledger.reports.models import NoticeThreshold, OverdueNotice, ReportExport, ReportFormat
from ledger.reports.selectors import lab_report

logger = logging.getLogger(__name__)


def report_parameters_problem(
    *, sealed_from: dt.date | None, sealed_to: dt.date | None, prior_odds: float
) -> tuple[str, str] | None:
    """(field, message) when the report cannot be made for these parameters, else None."""
    if isinstance(prior_odds, bool) or not isinstance(prior_odds, int | float) or not math.isfinite(prior_odds):
        return (
            "prior_odds",
            f"The prior odds must be a number such as 1 (for 1:1) or 0.25 (for 1:4); got {prior_odds!r}.",
        )
    if prior_odds <= 0:
        return "prior_odds", (
            "The prior odds must be above 0 (1:1 is 1, 1:4 is 0.25): some tested hypotheses must be true; "
            f"got {prior_odds:g}."
        )
    if sealed_from is not None and sealed_to is not None and sealed_from > sealed_to:
        return "sealed_to", (
            f"The range ends ({sealed_to.isoformat()}) before it starts ({sealed_from.isoformat()}): "
            "swap the two dates, or clear one of them."
        )
    return None


def report_export_request(
    *,
    member: Membership,
    file_format: str,
    sealed_from: dt.date | None = None,
    sealed_to: dt.date | None = None,
    prior_odds: float = 1.0,
) -> ReportExport:
    """Queue the lab's report as a file; the task starts once this transaction commits.

    Asking again for the same file while the member's previous request is still waiting or running
    returns that request instead of starting a second one.
    """
    require(member, "can_view_lab")
    if file_format not in ReportFormat.values:
        raise ActionRefused(
            f"Choose one of the report files ({', '.join(ReportFormat.labels)}); {file_format!r} is not one.",
            field="file_format",
        )
    problem = report_parameters_problem(sealed_from=sealed_from, sealed_to=sealed_to, prior_odds=prior_odds)
    if problem is not None:
        field, message = problem
        raise ActionRefused(message, field=field)
    from ledger.reports.tasks import report_export  # the tasks module imports this one

    return exports.export_request(
        model=ReportExport,
        created_by=member.user,
        match={
            "lab": member.lab,
            "file_format": file_format,
            "sealed_from": sealed_from,
            "sealed_to": sealed_to,
            "prior_odds": float(prior_odds),
        },
        fields={},
        enqueue=report_export.delay,
    )


def _build_export(export: ReportExport, progress: exports.ProgressCallback) -> exports.BuiltFile:
    report_progress(progress, 10, "Counting the registered studies")
    report = lab_report(
        lab=export.lab,
        today=timezone.localdate(),
        sealed_from=export.sealed_from,
        sealed_to=export.sealed_to,
        prior_odds=export.prior_odds,
    )
    return report_file(report=report, file_format=export.file_format, generated_at=timezone.now(), progress=progress)


def report_export_run(*, export_id: int) -> ReportExport | None:
    """Make the file of one report export; every failure ends as a ``failed`` export (see export_run)."""
    return exports.export_run(
        model=ReportExport, export_id=export_id, build=_build_export, expected_errors=(ActionRefused,), what="report"
    )


def report_exports_purge(*, now: dt.datetime | None = None) -> int:
    """Delete expired report exports and their files; returns how many were removed."""
    return exports.exports_purge(model=ReportExport, now=now)


# --- the daily overdue scan -------------------------------------------------------------------

# How long before results are due the reminder goes out. Common practice, no source: a month
# leaves time to finish an analysis or to explain a delay.
DUE_SOON_DAYS = 30
OPEN_STATES = (StudyState.SEALED, StudyState.COLLECTING)


def notice_threshold(*, due_on: dt.date, today: dt.date) -> NoticeThreshold | None:
    """Which notice a study with results due on ``due_on`` has earned by ``today``, if any.

    Overdue means today is past the last day results were on time (as in the deviation rule
    RESULTS_OVERDUE); the reminder covers the ``DUE_SOON_DAYS`` days up to and including that day.
    """
    if today > due_on:
        return NoticeThreshold.OVERDUE
    if (due_on - today).days <= DUE_SOON_DAYS:
        return NoticeThreshold.DUE_SOON
    return None


def _notice_message(*, study: Study, threshold: NoticeThreshold, due_on: dt.date, today: dt.date) -> tuple[str, str]:
    site = settings.FOREBOOK_SITE_NAME
    where = f"the study's page in {site} ({settings.FOREBOOK_BASE_URL.rstrip('/')}{study.get_absolute_url()})"
    basis = (
        f"expected completion {study.expected_completion.isoformat()} plus the lab's grace period of "
        f"{study.lab.overdue_grace_months} months"
    )
    if threshold == NoticeThreshold.OVERDUE:
        subject = f"[{site}] Results overdue: {study.code} {study.title}"
        opening = (
            f"The results of study {study.code}, “{study.title}” ({study.lab.name}), were due by "
            f"{due_on.isoformat()} ({basis}). No result has been sealed, so the lab report now counts the study "
            "as overdue."
        )
    else:
        days = (due_on - today).days
        subject = f"[{site}] Results due by {due_on.isoformat()}: {study.code} {study.title}"
        opening = (
            f"The results of study {study.code}, “{study.title}” ({study.lab.name}), are due by "
            f"{due_on.isoformat()}, {days} day(s) from today ({basis})."
        )
    body = (
        f"{opening}\n\n"
        f"What to do, on {where}:\n"
        "- record the results: a null result is a result, recorded with its verdict like any other;\n"
        "- if they will be late, seal an explanation of the delay with the finding about it;\n"
        "- if the study was abandoned, withdraw it and say why.\n\n"
        "You receive this because you are an investigator on the study or a manager of the lab. "
        "This notice is sent once.\n"
    )
    return subject, body


def overdue_scan(*, today: dt.date | None = None) -> list[OverdueNotice]:
    """Notify the people responsible for every study whose results just became due soon or overdue.

    Runs daily (Celery beat). Each study gets each notice once: the notice row is inserted first,
    in the transaction that schedules the e-mail for after its commit, and a unique constraint on
    (study, threshold) refuses a second row, even from a scan running at the same time. A study
    first seen overdue gets only the overdue notice. Returns the notices recorded by this run.
    """
    today = today or timezone.localdate()
    # Results cannot be due within DUE_SOON_DAYS unless completion is that close: the grace
    # period only moves the due date later.
    candidates = Study.objects.filter(
        state__in=OPEN_STATES, expected_completion__lte=today + dt.timedelta(days=DUE_SOON_DAYS)
    )
    studies = list(candidates.select_related("lab").order_by("pk"))
    sent = set(OverdueNotice.objects.filter(study__in=candidates).values_list("study_id", "threshold"))
    # Investigators and managers are told; readers never are, even if one is still listed on a study.
    told = {"membership__is_active": True, "membership__role__in": [Role.MANAGER, Role.INVESTIGATOR]}
    investigators: dict[int, list[Membership]] = defaultdict(list)
    for link in Study.investigators.through.objects.filter(study__in=candidates, **told).select_related(
        "membership__user"
    ):
        investigators[link.study_id].append(link.membership)
    managers: dict[int, list[Membership]] = defaultdict(list)
    for manager in Membership.objects.filter(
        lab__in=candidates.values("lab_id"), role=Role.MANAGER, is_active=True
    ).select_related("user"):
        managers[manager.lab_id].append(manager)

    notices = []
    for study in studies:
        due_on = results_due_on(completion=study.expected_completion, grace_months=study.lab.overdue_grace_months)
        threshold = notice_threshold(due_on=due_on, today=today)
        if threshold is None or (study.pk, threshold) in sent:
            continue
        recipients = sorted(
            {member.user.email for member in investigators[study.pk] + managers[study.lab_id] if member.user.email}
        )
        if not recipients:
            logger.warning("Study %s: %s, but nobody on it has an e-mail address", study.code, threshold.label.lower())
            continue
        subject, body = _notice_message(study=study, threshold=threshold, due_on=due_on, today=today)
        message = EmailMessage(subject=subject, body=body, to=recipients)
        try:
            with transaction.atomic():
                notice = OverdueNotice.objects.create(
                    study=study, threshold=threshold, due_on=due_on, recipients="\n".join(recipients)
                )
                # robust: one failed delivery is logged and does not stop the other notices. The row
                # stays, so a failed e-mail is not retried: "never twice" wins over "always once".
                transaction.on_commit(message.send, robust=True)
        except IntegrityError:
            continue  # a scan running at the same time recorded this notice first; it sends it
        notices.append(notice)
    return notices
