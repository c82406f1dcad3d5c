"""The daily scan that tells investigators and managers when results are due soon or overdue.

No external computation here: the due dates follow ledger.compare.results_due_on (tested against
calendar arithmetic in tests/compare), and these tests check who is told, and that nobody is told twice.
"""

import datetime as dt

import pytest
from django.core import mail
from django.db import IntegrityError

from ledger.compare import results_due_on
from ledger.plans import services as plan_services
from ledger.reports import tasks
from ledger.reports.models import NoticeThreshold, OverdueNotice
from ledger.reports.services import overdue_scan
from tests.factories import collecting_study, sealed_study
from tests.reports.builders import NULL_ROW, past_due_plan, reported, today

pytestmark = pytest.mark.django_db


def scan(django_capture_on_commit_callbacks, **kwargs) -> list[OverdueNotice]:
    # The e-mails leave only after the notice rows commit.
    with django_capture_on_commit_callbacks(execute=True):
        return overdue_scan(**kwargs)


def test_an_overdue_study_is_notified_once_to_its_investigators_and_the_managers(
    manager, investigator, other_investigator, reader, django_capture_on_commit_callbacks
):
    study = collecting_study(member=investigator, content=past_due_plan(title="Late lanterns"))
    # A reader listed on the study (say, demoted after enrolment) is still never told.
    plan_services.study_investigators_set(member=manager, study=study, investigators=[investigator, reader])

    first = scan(django_capture_on_commit_callbacks)
    second = scan(django_capture_on_commit_callbacks)

    assert [(notice.study_id, notice.threshold) for notice in first] == [(study.pk, NoticeThreshold.OVERDUE)]
    assert second == []
    assert len(mail.outbox) == 1
    message = mail.outbox[0]
    assert sorted(message.to) == sorted([investigator.user.email, manager.user.email])
    assert reader.user.email not in message.to and other_investigator.user.email not in message.to
    assert study.code in message.subject and "overdue" in message.subject.lower()
    due_on = results_due_on(completion=study.expected_completion, grace_months=12)
    assert f"were due by {due_on.isoformat()}" in message.body
    assert "record the results" in message.body and study.get_absolute_url() in message.body


def test_a_study_is_reminded_before_it_is_due_and_told_again_once_overdue(
    manager, investigator, django_capture_on_commit_callbacks
):
    study = sealed_study(member=investigator)
    due_on = results_due_on(completion=study.expected_completion, grace_months=12)
    assert scan(django_capture_on_commit_callbacks, today=due_on - dt.timedelta(days=31)) == []
    (reminder,) = scan(django_capture_on_commit_callbacks, today=due_on - dt.timedelta(days=30))
    assert reminder.threshold == NoticeThreshold.DUE_SOON
    assert scan(django_capture_on_commit_callbacks, today=due_on) == []  # the last day on time: reminded already
    (overdue,) = scan(django_capture_on_commit_callbacks, today=due_on + dt.timedelta(days=1))
    assert overdue.threshold == NoticeThreshold.OVERDUE
    assert scan(django_capture_on_commit_callbacks, today=due_on + dt.timedelta(days=90)) == []
    assert [message.subject.split(":")[0] for message in mail.outbox] == [
        f"[Forebook] Results due by {due_on.isoformat()}",
        "[Forebook] Results overdue",
    ]
    assert "30 day(s) from today" in mail.outbox[0].body


def test_reported_withdrawn_and_draft_studies_are_never_notified(
    manager, investigator, django_capture_on_commit_callbacks
):
    reported(member=investigator, row=NULL_ROW, content=past_due_plan())
    withdrawn_study = sealed_study(member=investigator, content=past_due_plan())
    plan_services.study_withdraw(member=investigator, study=withdrawn_study, reason="Stopped.")
    assert scan(django_capture_on_commit_callbacks, today=today() + dt.timedelta(days=2000)) == []
    assert mail.outbox == []


def test_the_database_refuses_a_second_notice_for_the_same_study_and_threshold(investigator):
    study = sealed_study(member=investigator)
    OverdueNotice.objects.create(study=study, threshold=NoticeThreshold.OVERDUE, due_on=today(), recipients="a@b")
    with pytest.raises(IntegrityError):
        OverdueNotice.objects.create(study=study, threshold=NoticeThreshold.OVERDUE, due_on=today(), recipients="a@b")


def test_no_mail_leaves_before_the_notice_commits(investigator, django_capture_on_commit_callbacks):
    collecting_study(member=investigator, content=past_due_plan())
    with django_capture_on_commit_callbacks(execute=False) as callbacks:
        overdue_scan()
    assert len(callbacks) == 1 and mail.outbox == []  # nothing leaves before the commit


def test_the_daily_task_runs_the_scan_and_is_scheduled(investigator, settings, django_capture_on_commit_callbacks):
    schedule = {entry["task"]: entry["schedule"] for entry in settings.CELERY_BEAT_SCHEDULE.values()}
    assert schedule["ledger.reports.tasks.overdue_scan"] == 24 * 3600
    collecting_study(member=investigator, content=past_due_plan())
    with django_capture_on_commit_callbacks(execute=True):
        assert tasks.overdue_scan.delay().get() == 1
    assert len(mail.outbox) == 1
