"""The lab report lists each research line with its all-results versus published-only difference."""

import datetime as dt

import pytest

from ledger.lines.selectors import lab_line_summaries
from ledger.lines.services import line_create
from ledger.reports.files import report_pdf
from ledger.reports.selectors import lab_report
from ledger.results.services import publication_link_add
from tests.factories import reported_study, result_row

pytestmark = pytest.mark.django_db


def test_the_report_carries_the_lines_summaries(client, manager, investigator):
    studies = [
        reported_study(
            member=investigator, title=f"Hum study {i}", rows=[result_row(statistic=t, p_reported=p, verdict=verdict)]
        )
        for i, (t, p, verdict) in enumerate(
            [(0.84, "0.40", "null"), (2.90, "0.004", "supported"), (-0.30, "0.76", "null")]
        )
    ]
    publication_link_add(member=investigator, study=studies[1], status="published", doi="10.5555/hum.2")
    line_create(member=manager, name="Low hum and length errors", measure="smd", studies=studies)

    report = lab_report(lab=manager.lab, today=dt.date.today())
    (summary,) = report.research_lines
    assert summary == lab_line_summaries(lab=manager.lab)[0]
    assert summary.k_usable == 3

    client.force_login(manager.user)
    page = client.get(f"/labs/{manager.lab.slug}/report/").content.decode()
    assert "Low hum and length errors" in page and summary.headline in page
    assert b"%PDF" in report_pdf(report=report, generated_at=dt.datetime.now(dt.UTC))[:8]
