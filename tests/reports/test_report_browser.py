"""A switched primary outcome, from the result form to the lab report, in Debian's Chromium.

The investigator reports the registered secondary outcome in the primary row, checks the result
against the plan, explains every major finding, seals, and the report page counts the study among
those with major findings. No external computation here: the counts follow from the one study.
"""

from __future__ import annotations

import re

import pytest
from playwright.sync_api import expect

from ledger.labs.models import Role
from ledger.plans.models import Study, StudyState
from tests.factories import LabFactory, MembershipFactory, collecting_study
from tests.support.browser import sign_in

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def test_a_switched_primary_outcome_shows_in_the_report_as_a_major_finding(live_server, page):
    lab = LabFactory(name="Quiet Meadow Perception Lab", slug="quiet-meadow")
    member = MembershipFactory(lab=lab, role=Role.INVESTIGATOR)
    study = collecting_study(member=member, title="Birdsong and reading speed")

    console = []
    page.on("console", lambda message: console.append(message.text))
    sign_in(page, live_server.url, member.user.username)
    page.goto(f"{live_server.url}/labs/{lab.slug}/studies/{study.code}/results/")

    # The primary row (H1, registered on O1) now reports the secondary outcome O2.
    page.select_option("[name='rows-0-outcome']", "O2")
    for index in (0, 1):
        page.fill(f"[name='rows-{index}-n_analysed']", "124")
        page.select_option(f"[name='rows-{index}-verdict']", "null")
    page.select_option("[name='rows-1-test_family']", "t_independent")  # O2's own row names no test yet
    page.get_by_role("button", name="Check against the plan").click()

    findings = page.locator("#findings")
    expect(findings).to_contain_text("O1")
    expect(findings.locator(".badge.severity-major").first).to_be_visible()
    required = findings.locator("textarea[required]")
    assert required.count() >= 1
    for index in range(required.count()):
        required.nth(index).fill("The registered measure failed in the first week; O2 was the only usable one.")
    page.get_by_role("button", name="Seal these results").click()
    expect(page.get_by_text(re.compile(r"Results sealed as ledger entry #\d+"))).to_be_visible()
    assert Study.objects.get(pk=study.pk).state == StudyState.REPORTED

    page.get_by_role("link", name="Report").click()
    expect(page).to_have_url(f"{live_server.url}/labs/{lab.slug}/report/")
    expect(page.locator("#major-findings")).to_have_text("1 of 1 (100 %)")
    expect(page.locator("#unexplained-findings")).to_have_text("0 of 1 (0 %)")
    expect(page.locator("#outcomes table").first).to_contain_text("Not supported (null result)")
    # The charts are images the browser loaded from the chart URLs.
    expect(page.locator(".report-chart img")).to_have_count(3)
    page.wait_for_function(
        "() => [...document.querySelectorAll('.report-chart img')].every(img => img.complete && img.naturalWidth > 0)"
    )
    # Nothing on the way was blocked by the Content-Security-Policy (ledger/core/middleware.py).
    assert not [text for text in console if "Content Security Policy" in text or "Refused to" in text]
