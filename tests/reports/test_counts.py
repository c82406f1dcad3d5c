"""The report's counts on the seeded lab (tests/reports/conftest.py, SeededLab).

Every expected number below is read off the seeded lab's design, study by study, not computed by
the code under test. No external computation here: these are counts of a known design.
"""

import datetime as dt

import pytest

from ledger.labs.models import Lab
from ledger.reports.selectors import Outcome, Publication, Share, lab_report
from tests.reports.builders import today

pytestmark = pytest.mark.django_db


def counts(row) -> dict[str, int]:
    return {outcome: row.counts.get(outcome, 0) for outcome in Outcome.values}


def test_every_registered_study_counts_once_under_its_outcome(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    assert counts(report.overall) == {
        "supported": 3,
        "null": 4,
        "opposite": 1,
        "inconclusive": 1,
        "within_time": 2,
        "overdue": 2,
        "withdrawn": 1,
    }
    assert report.overall.total == 14  # the draft and the other lab's study are not counted
    assert {study.code for study in report.studies} == {study.code for study in seeded_lab.studies.values()}


def test_outcomes_by_investigator_count_a_shared_study_under_both(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    rows = {row.label: counts(row) for row in report.by_investigator}
    assert rows == {
        seeded_lab.a.display_name: {
            "supported": 2,  # S1 S2
            "null": 2,  # N1 N4
            "opposite": 1,  # O1
            "inconclusive": 1,  # I1
            "within_time": 1,  # W1
            "overdue": 1,  # D1
            "withdrawn": 1,  # X1
        },
        seeded_lab.b.display_name: {
            "supported": 1,  # S3
            "null": 2,  # N2 N3
            "opposite": 1,  # O1
            "inconclusive": 0,
            "within_time": 1,  # W2
            "overdue": 1,  # D2
            "withdrawn": 0,
        },
    }


def test_outcomes_by_year_of_first_sealing(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    sealed_years = {study.sealed_at.astimezone(dt.UTC).year for study in seeded_lab.studies.values()}
    assert [row.label for row in report.by_year] == [str(year) for year in sorted(sealed_years)]
    assert sum(row.total for row in report.by_year) == 14


def test_the_file_drawer_follows_the_latest_publication_link(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    table = {
        row.verdict: (row.published, row.not_submitted, row.nothing_recorded, row.total) for row in report.file_drawer
    }
    assert table == {
        Outcome.SUPPORTED: (2, 0, 1, 3),  # S1 S2 published (S2's latest link), S3 nothing
        Outcome.NULL: (1, 2, 1, 4),  # N1 published; N2, N3 (latest: not submitted); N4 nothing
        Outcome.OPPOSITE: (0, 0, 1, 1),
        Outcome.INCONCLUSIVE: (0, 1, 0, 1),
    }
    assert report.supported_publication_rate == Share(2, 3)
    assert report.null_publication_rate == Share(1, 4)
    assert report.null_share_of_published == Share(1, 3)  # N1 of S1, S2, N1
    lines = {study.code: study for study in report.studies}
    assert lines[seeded_lab.studies["S2"].code].publication == Publication.PUBLISHED
    assert lines[seeded_lab.studies["N3"].code].publication == Publication.NOT_SUBMITTED


def test_findings_retrospective_registrations_and_time_to_result(seeded_lab):
    report = lab_report(lab=seeded_lab.a.lab, today=today())
    assert report.major_findings == Share(4, 14)  # N4 (switched, retrospective), W2, D1, D2
    assert report.unexplained_findings == Share(2, 14)  # W2 (retrospective), D1 (overdue)
    assert report.retrospective == Share(2, 14)  # N4, W2
    lines = {study.code: study for study in report.studies}
    studies = seeded_lab.studies
    assert lines[studies["W2"].code].unexplained_findings == ("RETROSPECTIVE_REGISTRATION:study",)
    assert lines[studies["D1"].code].unexplained_findings == ("RESULTS_OVERDUE:study",)
    assert lines[studies["D2"].code].unexplained_findings == ()  # explained with finding_explain
    assert lines[studies["X1"].code].major_findings == 0  # withdrawn: nobody owes its results
    # Nine results, every one sealed the day its plan was first sealed.
    assert len(report.days_to_result) == 9
    assert report.median_days_to_result == 0
    assert report.supported_rate == Share(3, 9)


def test_the_date_range_selects_by_first_sealing(seeded_lab):
    lab = seeded_lab.a.lab
    assert lab_report(lab=lab, today=today(), sealed_from=today() + dt.timedelta(days=1)).overall.total == 0
    assert lab_report(lab=lab, today=today(), sealed_to=today() - dt.timedelta(days=1)).overall.total == 0
    sealed_on = {study.sealed_at.astimezone(dt.UTC).date() for study in seeded_lab.studies.values()}
    within = lab_report(lab=lab, today=today(), sealed_from=min(sealed_on), sealed_to=max(sealed_on))
    assert within.overall.total == 14


def test_overdue_depends_on_the_lab_grace_period_and_today(seeded_lab):
    lab = seeded_lab.a.lab
    Lab.objects.filter(pk=lab.pk).update(overdue_grace_months=24)
    lab.refresh_from_db()
    report = lab_report(lab=lab, today=today())
    # Completion 400 days ago + 24 months is still ahead: D1 and D2 are within time again.
    assert (report.overall.counts["within_time"], report.overall.counts.get("overdue", 0)) == (4, 0)
    later = lab_report(lab=lab, today=today() + dt.timedelta(days=400))
    # 400 days on, W1 and W2 (completion 200 days after today, + 24 months) are still within time.
    assert (later.overall.counts["within_time"], later.overall.counts.get("overdue", 0)) == (2, 2)


def test_another_lab_sees_none_of_these_studies(seeded_lab, outsider):
    report = lab_report(lab=outsider.lab, today=today())
    assert report.overall.total == 0
    assert report.ppv is None and "No registered study" in report.ppv_problem
