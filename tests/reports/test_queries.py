"""The report reads a fixed number of SQL queries, however many studies the lab has.

No external computation here: the check is the query count at 10 and at 500 studies. The first 10
are built through the services, every kind of study among them (results with explained findings,
publication links, amendments, overdue, withdrawn and retrospective ones); the other 490 are bulk
copies of those kinds (tests/reports/builders.py, ``copies``), so every kind grows with the lab.
"""

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse

from ledger.reports.charts import CHARTS
from ledger.reports.files import studies_csv, summary_csv
from ledger.reports.selectors import lab_report
from tests.factories import PASSWORD
from tests.reports.builders import MIXED_KINDS, copies, mixed_studies, today

pytestmark = pytest.mark.django_db


def report_queries(lab) -> tuple[int, int]:
    """(queries to compute the report and make its CSVs and charts, registered studies counted)."""
    with CaptureQueriesContext(connection) as queries:
        report = lab_report(lab=lab, today=today())
        studies_csv(report=report)
        summary_csv(report=report)
        for _alt, draw in CHARTS.values():
            draw(report=report)
    return len(queries), len(report.studies)


def page_queries(client, lab, name: str, **kwargs) -> int:
    with CaptureQueriesContext(connection) as queries:
        response = client.get(reverse(name, kwargs={"lab_slug": lab.slug, **kwargs}))
    assert response.status_code == 200
    return len(queries)


def test_the_same_number_of_queries_at_10_and_at_500_studies(client, investigator):
    lab = investigator.lab
    assert client.login(username=investigator.user.username, password=PASSWORD)

    templates = mixed_studies(member=investigator, count=10)[: len(MIXED_KINDS)]
    small, counted = report_queries(lab)
    assert counted == 10
    small_page = page_queries(client, lab, "reports:lab")
    small_chart = page_queries(client, lab, "reports:chart", chart="outcomes")

    for template in templates:
        copies(template=template, count=490 // len(MIXED_KINDS))
    large, counted = report_queries(lab)
    assert counted == 500
    # The copies count like the studies they copy: 10 built (kinds 0-6, then 0-2) + 70 of each kind.
    assert dict(lab_report(lab=lab, today=today()).overall.counts) == {
        "supported": 2 + 70,
        "null": 4 + 140,  # the plain null and the switched one
        "within_time": 2 + 140,  # the sealed one and the amended, collecting one
        "overdue": 1 + 70,
        "withdrawn": 1 + 70,
    }
    assert large == small == 5  # studies, investigators, amendments, explanations, research lines
    assert page_queries(client, lab, "reports:lab") == small_page
    assert page_queries(client, lab, "reports:chart", chart="outcomes") == small_chart
