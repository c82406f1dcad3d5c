"""Management commands: seed_demo (twice), verify_ledger on the demo data, list_studies."""
from __future__ import annotations

import io
import json

import pytest
from django.contrib.auth import get_user_model
from django.core.management import CommandError, call_command

from ledger.chain.models import ChainHead, Entry, EntryKind
from ledger.plans.models import Study, StudyState
from ledger.results.models import ResultReport, Verdict
from tests.factories import LabFactory, enrolled_study, sealed_study

pytestmark = pytest.mark.django_db


def run(command: str, *args: str) -> str:
    out = io.StringIO()
    call_command(command, *args, stdout=out, stderr=io.StringIO())
    return out.getvalue()


def parse_seed_output(text: str) -> tuple[str, list[tuple[str, str]]]:
    lab_line, *study_lines = text.splitlines()
    keyword, slug = lab_line.split(" ")
    assert keyword == "lab"
    studies = []
    for line in study_lines:
        keyword, code, state = line.split(" ")
        assert keyword == "study"
        studies.append((code, state))
    return slug, studies


@pytest.fixture
def demo_output() -> str:
    return run("seed_demo")


def test_seed_demo_prints_the_lab_then_one_line_per_study_as_stored(demo_output):
    slug, studies = parse_seed_output(demo_output)
    assert studies, "at least one study line"
    stored = dict(Study.objects.filter(lab__slug=slug).values_list("code", "state"))
    assert dict(studies) == stored
    assert len(studies) == len(stored), "each study printed once"


def test_the_demo_covers_the_whole_lifecycle(demo_output):
    slug, studies = parse_seed_output(demo_output)
    assert len(studies) >= 12
    assert {state for _code, state in studies} == set(StudyState.values)
    lab_studies = Study.objects.filter(lab__slug=slug)
    assert ResultReport.objects.filter(study__in=lab_studies, primary_verdict=Verdict.NULL).count() >= 3
    assert lab_studies.filter(state=StudyState.WITHDRAWN).count() >= 1
    assert Entry.objects.filter(study__in=lab_studies, kind=EntryKind.STUDY_WITHDRAWN).count() >= 1
    assert lab_studies.filter(plan_version=2).exists()
    assert Entry.objects.filter(study__in=lab_studies, kind=EntryKind.PLAN_AMENDED).count() >= 1


def test_the_demo_has_a_study_whose_reported_primary_outcome_was_not_registered_as_primary(demo_output):
    slug, _studies = parse_seed_output(demo_output)
    switched = []
    for result in ResultReport.objects.filter(study__lab__slug=slug).select_related("entry", "study"):
        rows = json.loads(result.entry.payload)["rows"]
        plan = json.loads(
            Entry.objects.get(entry_hash=json.loads(result.entry.payload)["plan_entry"]).payload
        )
        registered_primary = {o["key"] for o in plan["outcomes"] if o["role"] == "primary"}
        reported_primary = {row["outcome"] for row in rows if row["reported_as"] == "primary"}
        if reported_primary - registered_primary:
            switched.append(result.study.code)
    assert len(switched) >= 1


def test_seed_demo_twice_creates_nothing_new(demo_output):
    User = get_user_model()
    def snapshot():
        return Entry.objects.count(), Study.objects.count(), User.objects.count(), ChainHead.objects.get().head_hash

    before = snapshot()
    assert run("seed_demo") == demo_output
    assert snapshot() == before


def test_verify_ledger_passes_on_the_demo_data(demo_output):
    # A failing ledger exits with status 1 (tests/chain/test_tamper.py); call_command would raise
    # SystemExit here.
    out = run("verify_ledger")
    head = ChainHead.objects.get()
    assert out.startswith(f"ok: {Entry.objects.count()} entries; head {head.head_hash}; merkle root ")
    assert head.size == Entry.objects.count() > 0


# --- list_studies ----------------------------------------------------------------------------------------


@pytest.fixture
def two_labs(investigator, outsider):
    return {
        investigator.lab.slug: [
            enrolled_study(member=investigator, title="First study"),
            sealed_study(member=investigator, title="Second study"),
        ],
        outsider.lab.slug: [enrolled_study(member=outsider, title="Elsewhere")],
    }


def listed(*args: str) -> list[list[str]]:
    return [line.split("\t") for line in run("list_studies", *args).splitlines()]


def test_list_studies_prints_code_state_and_title_for_every_study(two_labs):
    expected = [
        [study.code, Study.objects.get(pk=study.pk).state, study.title]
        for studies in two_labs.values()
        for study in studies
    ]
    assert sorted(listed()) == sorted(expected)


def test_list_studies_with_a_lab_lists_only_that_labs_studies(two_labs, investigator):
    rows = listed("--lab", investigator.lab.slug)
    assert {row[0] for row in rows} == {study.code for study in two_labs[investigator.lab.slug]}
    assert {row[1] for row in rows} == {StudyState.DRAFT, StudyState.SEALED}


def test_list_studies_for_an_empty_lab_prints_nothing(two_labs):
    empty = LabFactory()
    assert run("list_studies", "--lab", empty.slug) == ""


def test_list_studies_names_the_unknown_lab_and_the_known_ones(two_labs, investigator, outsider):
    with pytest.raises(CommandError) as error:
        run("list_studies", "--lab", "no-such-lab")
    message = str(error.value)
    assert "No lab with slug 'no-such-lab'" in message
    assert investigator.lab.slug in message and outsider.lab.slug in message
