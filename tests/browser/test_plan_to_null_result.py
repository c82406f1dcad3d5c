"""One study from enrolment to a sealed null result, driven through the pages in Debian's Chromium."""

from __future__ import annotations

import datetime as dt
import json
import re

import pytest
from playwright.sync_api import Page, expect

from ledger.chain.models import Entry, EntryKind
from ledger.labs.models import Role
from ledger.plans.models import Study, StudyState
from tests.factories import LabFactory, MembershipFactory
from tests.support.browser import sign_in

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

STUDY_TITLE = "Lamp flicker and proofreading accuracy"


def fill_hypothesis(page: Page, index: int, statement: str, direction: str) -> None:
    page.fill(f"[name='hypotheses-{index}-statement']", statement)
    page.select_option(f"[name='hypotheses-{index}-direction']", direction)
    page.select_option(f"[name='hypotheses-{index}-outcome']", "O1")
    page.select_option(f"[name='hypotheses-{index}-test_family']", "t_independent")


def test_a_plan_with_two_hypotheses_ends_as_a_null_result_on_the_dashboard(live_server, page):
    lab = LabFactory(name="Glasshouse Reading Group", slug="glasshouse")
    member = MembershipFactory(lab=lab, role=Role.INVESTIGATOR)
    today = dt.date.today()

    sign_in(page, live_server.url, member.user.username)
    expect(page).to_have_url(f"{live_server.url}/labs/glasshouse/")

    # Enrol.
    page.get_by_role("link", name="Enrol a study").click()
    page.fill("input[name='title']", STUDY_TITLE)
    page.get_by_role("button", name="Enrol and draft the plan").click()
    expect(page).to_have_url(re.compile(r"/studies/[0-9A-Z]+/plan/$"))
    code = page.url.rstrip("/").split("/")[-2]

    # Draft: one primary outcome, two hypotheses (the second added with the button), N and dates.
    page.fill("[name='plan-research_question']", "Does a flickering lamp change how many planted typos are caught?")
    page.fill("[name='outcomes-0-name']", "Planted typos caught")
    fill_hypothesis(page, 0, "Flicker lowers the number of typos caught.", "decrease")
    page.get_by_role("button", name="+ Add hypothesis").click()
    expect(page.locator("[name='hypotheses-1-key']")).to_have_value("H2")
    fill_hypothesis(page, 1, "Flicker slows proofreading down.", "increase")
    page.fill("[name='plan-planned_n']", "128")
    page.fill("[name='plan-collection_start']", (today + dt.timedelta(days=7)).isoformat())
    page.fill("[name='plan-completion']", (today + dt.timedelta(days=120)).isoformat())
    page.get_by_role("button", name="Save and review for sealing").click()

    # Review and seal.
    expect(page).to_have_url(re.compile(r"/plan/review/$"))
    expect(page.get_by_text("Not ready to seal yet")).to_have_count(0)
    page.get_by_label(re.compile("I have read the plan above")).check()
    page.get_by_role("button", name="Seal the plan").click()
    expect(page.get_by_text("Plan version 1 sealed")).to_be_visible()
    sealed = json.loads(Entry.objects.get(study__code=code, kind=EntryKind.PLAN_SEALED).payload)
    assert [h["key"] for h in sealed["hypotheses"]] == ["H1", "H2"]
    assert sealed["hypotheses"][1]["statement"] == "Flicker slows proofreading down."

    # Start of data collection.
    page.fill("#started_on", today.isoformat())
    page.get_by_role("button", name="Record start of data collection").click()
    expect(page.get_by_text("Start of data collection sealed")).to_be_visible()

    # A null result on both hypotheses.
    page.get_by_role("link", name="Record results").click()
    expect(page.locator("[name='rows-1-n_analysed']")).to_be_visible()
    for index in (0, 1):
        page.fill(f"[name='rows-{index}-n_analysed']", "126")
        page.select_option(f"[name='rows-{index}-verdict']", "null")
    page.get_by_role("button", name="Seal these results").click()
    expect(page.get_by_text(re.compile(r"Results sealed as ledger entry #\d+"))).to_be_visible()
    assert Study.objects.get(code=code).state == StudyState.REPORTED

    # The dashboard counts it.
    page.goto(f"{live_server.url}/labs/glasshouse/")
    latest = page.get_by_role("region", name="Latest results")
    row = latest.get_by_role("row").filter(has_text=code)
    expect(row).to_contain_text(STUDY_TITLE)
    expect(row).to_contain_text("Not supported (null result)")
