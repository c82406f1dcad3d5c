"""The study lifecycle through its services: each transition allowed once, refused otherwise.

A refused action must leave everything as it was: no entry, the draft and its revision unchanged.
"""
from __future__ import annotations

import contextlib
import datetime as dt
import json

import pytest
from django.core.exceptions import PermissionDenied
from statsmodels.stats.power import TTestIndPower

from ledger.chain.models import ChainHead, Entry, EntryKind
from ledger.chain.verification import verify_ledger
from ledger.core.errors import ActionRefused
from ledger.plans import services
from ledger.plans.models import PlanDraft, PlanVersion, Study, StudyState
from ledger.plans.selectors import access_plan_version, plan_diff, sealed_plan
from ledger.results import services as result_services
from tests.factories import (
    REPORT_AS_PLANNED,
    MembershipFactory,
    collecting_study,
    complete_plan,
    enrolled_study,
    reported_study,
    result_row,
    sealed_study,
)

pytestmark = pytest.mark.django_db


@contextlib.contextmanager
def nothing_sealed(study: Study | None = None):
    """Assert that the block writes no ledger entry and leaves the study's draft untouched."""
    def draft_and_state():
        if study is None:
            return None
        draft = PlanDraft.objects.filter(study=study).values("revision", "content", "base_version").first()
        return draft, Study.objects.get(pk=study.pk).state

    size_before, before = Entry.objects.count(), draft_and_state()
    yield
    assert Entry.objects.count() == size_before
    assert (ChainHead.objects.filter(pk=1).values_list("size", flat=True).first() or 0) == size_before
    assert draft_and_state() == before


def study_entries(study: Study, kind: EntryKind) -> list[Entry]:
    return list(Entry.objects.filter(study=study, kind=kind).order_by("seq"))


def seal(member, study: Study, **kwargs) -> PlanVersion:
    study = Study.objects.get(pk=study.pk)
    return services.plan_seal(member=member, study=study, revision=study.draft.revision, **kwargs)


def amended_content(study: Study) -> dict:
    """The open amendment draft with the planned N raised by 40 and a second hypothesis added."""
    content = json.loads(json.dumps(PlanDraft.objects.get(study=study).content))
    content["sample_size"]["planned_n"] += 40
    content["hypotheses"].append({
        **content["hypotheses"][0], "key": "H2", "statement": "The hum lowers confidence.", "outcome": "O2",
        "direction": "decrease",
    })
    return content


# --- enrolment ---------------------------------------------------------------------------------------


def test_an_investigator_enrols_a_draft_study_with_themselves_on_it(investigator):
    study = services.study_enrol(member=investigator, title="  Lamp flicker and reading speed ")
    assert (study.state, study.title, study.plan_version, study.lab) == (
        StudyState.DRAFT, "Lamp flicker and reading speed", 0, investigator.lab,
    )
    assert list(study.investigators.all()) == [investigator]
    assert study.draft.content["title"] == "Lamp flicker and reading speed"
    assert study.draft.base_version == 0
    assert Entry.objects.count() == 0, "enrolling seals nothing"


def test_a_manager_enrolling_for_a_team_is_not_added_to_it(manager, investigator, outsider):
    study = services.study_enrol(member=manager, title="Team study", investigators=[investigator, outsider])
    # The outsider belongs to another lab and is dropped.
    assert list(study.investigators.all()) == [investigator]


def test_a_manager_enrolling_alone_is_on_the_study(manager):
    study = services.study_enrol(member=manager, title="Solo study")
    assert list(study.investigators.all()) == [manager]


def test_a_reader_cannot_enrol(reader):
    with pytest.raises(PermissionDenied):
        services.study_enrol(member=reader, title="Not allowed")
    assert not Study.objects.exists()


def test_enrolment_needs_a_title(investigator):
    with pytest.raises(ActionRefused) as refusal:
        services.study_enrol(member=investigator, title="   ")
    assert refusal.value.field == "title"
    assert not Study.objects.exists()


# --- saving the draft --------------------------------------------------------------------------------


def test_saving_the_draft_bumps_its_revision_and_seals_nothing(investigator):
    study = services.study_enrol(member=investigator, title="First title")
    revision = study.draft.revision
    content = complete_plan(title="Second title")
    draft = services.plan_draft_save(member=investigator, study=study, content=content)
    assert (draft.revision, draft.content) == (revision + 1, content)
    study.refresh_from_db()
    assert study.title == "Second title"
    assert Entry.objects.count() == 0


def test_only_the_studys_investigators_and_managers_edit_the_draft(investigator, other_investigator, reader, manager):
    study = enrolled_study(member=investigator)
    for stranger in (other_investigator, reader):
        with nothing_sealed(study), pytest.raises(PermissionDenied):
            services.plan_draft_save(member=stranger, study=study, content=complete_plan(title="Hijacked"))
    services.plan_draft_save(member=manager, study=study, content=complete_plan(title="Edited by the manager"))


def test_a_sealed_plan_cannot_be_saved_as_a_draft(investigator):
    study = sealed_study(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="begin an amendment"):
        services.plan_draft_save(member=investigator, study=study, content=complete_plan())


# --- sealing -----------------------------------------------------------------------------------------


def test_sealing_writes_one_plan_entry_and_moves_the_study_to_sealed(investigator):
    study = enrolled_study(member=investigator)
    content = study.draft.content
    version = seal(investigator, study)
    [entry] = study_entries(study, EntryKind.PLAN_SEALED)
    payload = json.loads(entry.payload)
    assert (payload["schema"], payload["study"], payload["version"]) == ("forebook.plan/1", study.code, 1)
    assert {key: payload[key] for key in content} == content
    assert "amendment" not in payload
    assert entry.author_id == investigator.user_id
    assert (version.number, version.entry, version.planned_n, version.sealed_at) == (1, entry, 128, entry.created_at)
    study.refresh_from_db()
    assert (study.state, study.plan_version, study.sealed_at) == (StudyState.SEALED, 1, entry.created_at)
    assert study.expected_completion == dt.date.fromisoformat(content["dates"]["completion"])
    assert not PlanDraft.objects.filter(study=study).exists()
    assert verify_ledger().ok


def test_the_sealed_power_agrees_with_statsmodels(investigator):
    # complete_plan(): N = 128 in two equal groups, d = 0.5, alpha .05 two-sided.
    version = seal(investigator, enrolled_study(member=investigator))
    expected = TTestIndPower().power(effect_size=0.5, nobs1=64, alpha=0.05, ratio=1.0, alternative="two-sided")
    assert version.registered_power == pytest.approx(expected, abs=1e-4)
    assert json.loads(version.entry.payload)["computed"]["power_at_n"] == pytest.approx(expected, abs=1e-4)


@pytest.mark.parametrize(
    ("change", "message"),
    [
        pytest.param({"hypotheses": []}, "at least one hypothesis", id="no-hypothesis"),
        pytest.param(
            {"outcomes": [
                {"key": "O1", "name": "Estimation error", "role": "secondary", "measure": "", "unit": "",
                 "timepoint": ""},
                {"key": "O2", "name": "Confidence", "role": "secondary", "measure": "", "unit": "", "timepoint": ""},
            ]},
            "at least one outcome as primary",
            id="no-primary-outcome",
        ),
    ],
)
def test_an_incomplete_plan_is_refused_and_the_draft_stays(investigator, change, message):
    study = enrolled_study(member=investigator, content=complete_plan(**change))
    with nothing_sealed(study), pytest.raises(ActionRefused, match=message):
        seal(investigator, study)


def test_sealing_a_stale_revision_is_refused(investigator):
    study = enrolled_study(member=investigator)
    seen = study.draft.revision
    services.plan_draft_save(member=investigator, study=study, content=complete_plan(title="Edited in another tab"))
    with nothing_sealed(study), pytest.raises(ActionRefused, match="changed after you opened"):
        services.plan_seal(member=investigator, study=study, revision=seen)


def test_sealing_twice_writes_exactly_one_entry(investigator):
    study = enrolled_study(member=investigator)
    revision = study.draft.revision
    services.plan_seal(member=investigator, study=study, revision=revision)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="already sealed"):
        services.plan_seal(member=investigator, study=study, revision=revision)
    assert len(study_entries(study, EntryKind.PLAN_SEALED)) == 1


def test_a_power_warning_must_be_acknowledged_and_is_sealed_with_the_plan(investigator):
    content = complete_plan()
    content["sample_size"]["planned_n"] = 40
    study = enrolled_study(member=investigator, content=content)
    with nothing_sealed(study), pytest.raises(ActionRefused) as refusal:
        seal(investigator, study)
    assert refusal.value.field == "acknowledge_warnings"
    version = seal(investigator, study, acknowledge_warnings=True)
    payload = json.loads(version.entry.payload)
    assert len(payload["warnings"]) == 1
    assert "N = 40" in payload["warnings"][0]
    expected = TTestIndPower().power(effect_size=0.5, nobs1=20, alpha=0.05, ratio=1.0, alternative="two-sided")
    assert version.registered_power == pytest.approx(expected, abs=1e-4)


@pytest.mark.parametrize("stranger_fixture", ["other_investigator", "reader"])
def test_only_the_studys_investigators_and_managers_seal(request, investigator, stranger_fixture):
    study = enrolled_study(member=investigator)
    stranger = request.getfixturevalue(stranger_fixture)
    with nothing_sealed(study), pytest.raises(PermissionDenied):
        seal(stranger, study)


# --- amendments --------------------------------------------------------------------------------------


def test_an_amendment_starts_as_a_copy_of_the_sealed_plan(investigator):
    study = sealed_study(member=investigator)
    with nothing_sealed():
        draft = services.plan_amendment_begin(member=investigator, study=study)
    assert draft.base_version == 1
    sealed = sealed_plan(access_plan_version(study=study, number=1))
    assert draft.content == {key: sealed[key] for key in draft.content}
    assert plan_diff(sealed, draft.content) == []
    assert services.plan_amendment_begin(member=investigator, study=study).pk == draft.pk, "a second begin reuses it"


def test_an_amendment_needs_a_reason(investigator):
    study = sealed_study(member=investigator)
    services.plan_amendment_begin(member=investigator, study=study)
    services.plan_draft_save(member=investigator, study=study, content=amended_content(study))
    with nothing_sealed(study), pytest.raises(ActionRefused) as refusal:
        seal(investigator, study, amendment_reason="  ")
    assert refusal.value.field == "amendment_reason"


def test_a_sealed_amendment_is_version_2_and_both_versions_stay_readable(investigator, manager):
    study = sealed_study(member=investigator)
    first = access_plan_version(study=study, number=1)
    services.plan_amendment_begin(member=investigator, study=study)
    services.plan_draft_save(member=investigator, study=study, content=amended_content(study))
    second = seal(manager, study, amendment_reason=" A pilot showed larger variance. ")

    assert second.number == 2
    [entry] = study_entries(study, EntryKind.PLAN_AMENDED)
    assert (entry, entry.author_id) == (second.entry, manager.user_id)
    payload = json.loads(entry.payload)
    assert payload["amendment"] == {
        "reason": "A pilot showed larger variance.", "amends_version": 1, "amends_entry": first.entry.entry_hash,
    }
    old = sealed_plan(access_plan_version(study=study, number=1))
    new = sealed_plan(access_plan_version(study=study, number=2))
    assert (old["version"], old["sample_size"]["planned_n"]) == (1, 128)
    assert (new["version"], new["sample_size"]["planned_n"]) == (2, 168)
    study.refresh_from_db()
    assert (study.state, study.plan_version, study.sealed_at) == (StudyState.SEALED, 2, first.sealed_at)
    assert second.planned_n == 168

    changes = plan_diff(old, new)
    assert {"path": "sample_size.planned_n", "change": "changed", "old": 128, "new": 168} in changes
    [added] = [c for c in changes if c["path"] == "hypotheses[H2]"]
    assert (added["change"], added["new"]["statement"]) == ("added", "The hum lowers confidence.")
    assert not any(c["path"].startswith(("title", "outcomes", "dates")) for c in changes)
    assert verify_ledger().ok


def test_an_amendment_can_be_discarded_and_only_then(investigator):
    study = sealed_study(member=investigator)
    with nothing_sealed(), pytest.raises(ActionRefused, match="no amendment in progress"):
        services.plan_amendment_discard(member=investigator, study=study)
    services.plan_amendment_begin(member=investigator, study=study)
    with nothing_sealed():
        services.plan_amendment_discard(member=investigator, study=study)
    assert not PlanDraft.objects.filter(study=study).exists()


@pytest.mark.parametrize(
    "builder", [enrolled_study, collecting_study, reported_study], ids=["draft", "collecting", "reported"]
)
def test_only_a_sealed_plan_before_collection_can_be_amended(investigator, builder):
    study = builder(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="Only a sealed plan"):
        services.plan_amendment_begin(member=investigator, study=study)


# --- start of data collection ------------------------------------------------------------------------


def test_collection_start_seals_the_date_against_the_current_plan_version(investigator):
    study = sealed_study(member=investigator)
    started = dt.date(2031, 3, 4)
    services.collection_start(member=investigator, study=study, started_on=started)
    [entry] = study_entries(study, EntryKind.COLLECTION_STARTED)
    assert json.loads(entry.payload) == {
        "schema": "forebook.collection/1", "study": study.code, "plan_version": 1, "started_on": "2031-03-04",
    }
    assert entry.author_id == investigator.user_id
    study.refresh_from_db()
    assert (study.state, study.collection_started_on) == (StudyState.COLLECTING, started)


def test_collection_starts_only_once(investigator):
    study = collecting_study(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="only once"):
        services.collection_start(member=investigator, study=study, started_on=dt.date.today())
    assert len(study_entries(study, EntryKind.COLLECTION_STARTED)) == 1


def test_collection_cannot_start_before_the_plan_is_sealed(investigator):
    study = enrolled_study(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="only for a sealed plan"):
        services.collection_start(member=investigator, study=study, started_on=dt.date.today())


def test_collection_cannot_start_while_an_amendment_is_open(investigator):
    study = sealed_study(member=investigator)
    services.plan_amendment_begin(member=investigator, study=study)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="amendment is in progress"):
        services.collection_start(member=investigator, study=study, started_on=dt.date.today())


def test_a_reader_cannot_start_collection(investigator, reader):
    study = sealed_study(member=investigator)
    with nothing_sealed(study), pytest.raises(PermissionDenied):
        services.collection_start(member=reader, study=study, started_on=dt.date.today())


# --- withdrawal --------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("builder", "state"),
    [
        (sealed_study, StudyState.SEALED),
        (collecting_study, StudyState.COLLECTING),
        (reported_study, StudyState.REPORTED),
    ],
    ids=["sealed", "collecting", "reported"],
)
def test_a_registered_study_can_be_withdrawn_with_a_reason(investigator, builder, state):
    study = builder(member=investigator)
    services.study_withdraw(member=investigator, study=study, reason="  Funding ended before recruitment.  ")
    [entry] = study_entries(study, EntryKind.STUDY_WITHDRAWN)
    assert json.loads(entry.payload) == {
        "schema": "forebook.withdrawal/1", "study": study.code, "from_state": state,
        "reason": "Funding ended before recruitment.",
    }
    assert entry.author_id == investigator.user_id
    study.refresh_from_db()
    assert (study.state, study.withdrawn_at) == (StudyState.WITHDRAWN, entry.created_at)


def test_withdrawing_during_an_amendment_drops_the_amendment_draft(investigator):
    study = sealed_study(member=investigator)
    services.plan_amendment_begin(member=investigator, study=study)
    services.study_withdraw(member=investigator, study=study, reason="Ethics approval lapsed.")
    assert not PlanDraft.objects.filter(study=study).exists()


def test_a_draft_study_is_discarded_not_withdrawn(investigator):
    study = enrolled_study(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="discarded, not withdrawn"):
        services.study_withdraw(member=investigator, study=study, reason="Changed our minds.")


def test_a_study_is_withdrawn_only_once(investigator):
    study = sealed_study(member=investigator)
    services.study_withdraw(member=investigator, study=study, reason="Lab closed.")
    with nothing_sealed(study), pytest.raises(ActionRefused, match="already withdrawn"):
        services.study_withdraw(member=investigator, study=study, reason="Again.")
    assert len(study_entries(study, EntryKind.STUDY_WITHDRAWN)) == 1


@pytest.mark.parametrize("reason", ["", "   \n "])
def test_withdrawal_needs_a_reason(investigator, reason):
    study = sealed_study(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused) as refusal:
        services.study_withdraw(member=investigator, study=study, reason=reason)
    assert refusal.value.field == "reason"


# --- discarding a draft study ------------------------------------------------------------------------


def test_a_draft_study_can_be_discarded_and_leaves_no_trace(investigator):
    study = enrolled_study(member=investigator)
    with nothing_sealed():
        services.study_discard(member=investigator, study=study)
    assert not Study.objects.filter(pk=study.pk).exists()
    assert not PlanDraft.objects.filter(study_id=study.pk).exists()


def test_a_sealed_study_cannot_be_discarded(investigator):
    study = sealed_study(member=investigator)
    with nothing_sealed(study), pytest.raises(ActionRefused, match="withdraw it instead"):
        services.study_discard(member=investigator, study=study)
    assert Study.objects.filter(pk=study.pk).exists()


def test_another_investigator_cannot_discard_the_study(investigator, other_investigator):
    study = enrolled_study(member=investigator)
    with pytest.raises(PermissionDenied):
        services.study_discard(member=other_investigator, study=study)
    assert Study.objects.filter(pk=study.pk).exists()


# --- authorship --------------------------------------------------------------------------------------


def test_every_sealed_entry_records_who_sealed_it(lab, investigator, manager):
    deputy = MembershipFactory(lab=lab, role="investigator")
    study = services.study_enrol(member=manager, title="Authored study", investigators=[investigator, deputy])
    services.plan_draft_save(member=investigator, study=study, content=complete_plan())
    steps = [
        (investigator, lambda who: seal(who, study)),
        (deputy, lambda who: services.plan_amendment_begin(member=who, study=study)),
        (deputy, lambda who: services.plan_draft_save(member=who, study=study, content=amended_content(study))),
        (manager, lambda who: seal(who, study, amendment_reason="More power.")),
        (deputy, lambda who: services.collection_start(member=who, study=study, started_on=dt.date.today())),
        (investigator, lambda who: result_services.result_record(
            member=who, study=study, rows=[result_row()], report=REPORT_AS_PLANNED,
        )),
        (manager, lambda who: result_services.publication_link_add(member=who, study=study, status="not_submitted")),
        (deputy, lambda who: services.study_withdraw(member=who, study=study, reason="Superseded by a larger study.")),
    ]
    sealing_authors = []
    for who, step in steps:
        before = Entry.objects.count()
        step(who)
        if Entry.objects.count() > before:
            sealing_authors.append(who.user_id)
    entries = list(Entry.objects.filter(study=study).order_by("seq"))
    assert [e.kind for e in entries] == [
        EntryKind.PLAN_SEALED, EntryKind.PLAN_AMENDED, EntryKind.COLLECTION_STARTED, EntryKind.RESULT_RECORDED,
        EntryKind.PUBLICATION_LINKED, EntryKind.STUDY_WITHDRAWN,
    ]
    assert [e.author_id for e in entries] == sealing_authors
    assert sealing_authors == [
        investigator.user_id, manager.user_id, deputy.user_id, investigator.user_id, manager.user_id, deputy.user_id,
    ]
    assert verify_ledger().ok
