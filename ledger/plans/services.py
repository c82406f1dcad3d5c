"""Writes for studies and plans: enrolment, drafting, sealing, amending, collection, withdrawal.

Every transition locks the study row first, so two tabs (or a retried request) cannot both
perform it: the second finds the study already moved on and is refused with a message.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.db import transaction

from ledger.chain.models import EntryKind
from ledger.chain.services import entry_append
from ledger.core.errors import ActionRefused
from ledger.labs.models import Membership
from ledger.labs.services import require
from ledger.plans import content as plan_content
from ledger.plans.models import PlanDraft, PlanVersion, Study, StudyState
from ledger.plans.sample_size import sample_size_assessment
from ledger.plans.selectors import sealed_plan


def _locked(study: Study) -> Study:
    return Study.objects.select_for_update().select_related("lab").get(pk=study.pk)


@transaction.atomic
def study_enrol(*, member: Membership, title: str, investigators: list[Membership] = ()) -> Study:
    require(member, "can_enrol_studies")
    title = title.strip()
    if not title:
        raise ActionRefused("Give the study a title.", field="title")
    study = Study.objects.create(lab=member.lab, title=title, created_by=member.user)
    team = {m.pk: m for m in investigators if m.lab_id == member.lab_id}
    if member.role != "manager" or not team:
        # Whoever enrols a study works on it unless a manager assigned a team.
        team.setdefault(member.pk, member)
    study.investigators.set(team.values())
    PlanDraft.objects.create(study=study, content=plan_content.empty_content(title=title), updated_by=member.user)
    return study


@transaction.atomic
def study_investigators_set(*, member: Membership, study: Study, investigators: list[Membership]) -> Study:
    require(member, "can_assign_investigators", study=study)
    study.investigators.set([m for m in investigators if m.lab_id == study.lab_id])
    return study


@transaction.atomic
def study_discard(*, member: Membership, study: Study) -> None:
    """Delete a study that was never sealed: nothing about it reached the ledger."""
    require(member, "can_edit_plans", study=study)
    study = _locked(study)
    if study.state != StudyState.DRAFT:
        raise ActionRefused("Only a study that was never sealed can be discarded; withdraw it instead.")
    PlanDraft.objects.filter(study=study).delete()
    study.investigators.clear()
    study.delete()


@transaction.atomic
def plan_draft_save(*, member: Membership, study: Study, content: dict[str, Any]) -> PlanDraft:
    require(member, "can_edit_plans", study=study)
    study = _locked(study)
    draft = PlanDraft.objects.filter(study=study).first()
    if draft is None:
        raise ActionRefused(
            "This plan is sealed and can no longer be edited. To change it before data collection "
            "starts, begin an amendment."
        )
    draft.content = content
    draft.revision += 1
    draft.updated_by = member.user
    draft.save()
    if study.state == StudyState.DRAFT and content.get("title") and content["title"] != study.title:
        study.title = content["title"]
        study.save(update_fields=["title"])
    return draft


@transaction.atomic
def plan_seal(
    *,
    member: Membership,
    study: Study,
    revision: int,
    acknowledge_warnings: bool = False,
    amendment_reason: str = "",
) -> PlanVersion:
    """Seal the study's draft as its first plan version or as an amendment.

    ``revision`` is the draft revision the person reviewed: sealing anything else (the draft was
    edited in another tab, or this seal already happened) is refused, so a double submission
    creates exactly one entry.
    """
    require(member, "can_seal_plans", study=study)
    study = _locked(study)
    draft = PlanDraft.objects.filter(study=study).first()
    if draft is None:
        raise ActionRefused("This plan is already sealed; there is no draft to seal.")
    if draft.revision != revision:
        raise ActionRefused("The draft changed after you opened this page. Review the current draft and seal again.")
    if draft.is_amendment:
        if study.state != StudyState.SEALED:
            raise ActionRefused("A plan can be amended only before data collection starts.")
        if not amendment_reason.strip():
            raise ActionRefused("Say why the plan is being amended.", field="amendment_reason")
    elif study.state != StudyState.DRAFT:
        raise ActionRefused("This study's plan has already been sealed.")
    content = draft.content
    problems = plan_content.plan_problems(content)
    if problems:
        raise ActionRefused("The plan cannot be sealed yet: " + " ".join(problems))
    computed, warnings = sample_size_assessment(content)
    if warnings and not acknowledge_warnings:
        raise ActionRefused(
            "Read the warnings and confirm that the plan should be sealed with them.", field="acknowledge_warnings"
        )
    version = study.plan_version + 1
    amendment = None
    if draft.is_amendment:
        previous = PlanVersion.objects.select_related("entry").get(study=study, number=draft.base_version)
        amendment = {
            "reason": amendment_reason.strip(),
            "amends_version": previous.number,
            "amends_entry": previous.entry.entry_hash,
        }
    payload = plan_content.sealed_payload(
        content=content,
        study_code=study.code,
        version=version,
        computed=computed,
        warnings=warnings,
        amendment=amendment,
    )
    entry = entry_append(
        kind=EntryKind.PLAN_AMENDED if amendment else EntryKind.PLAN_SEALED,
        payload=payload,
        study=study,
        author=member.user,
    )
    plan_version = PlanVersion.objects.create(
        study=study,
        number=version,
        entry=entry,
        sealed_at=entry.created_at,
        planned_n=content["sample_size"].get("planned_n"),
        registered_power=computed.get("power_at_n"),
    )
    study.plan_version = version
    study.title = content["title"]
    study.state = StudyState.SEALED
    if version == 1:
        study.sealed_at = entry.created_at
    study.expected_completion = _date_or_none(content["dates"].get("completion"))
    study.embargo_until = _date_or_none(content["dates"].get("embargo_until"))
    study.save()
    draft.delete()
    return plan_version


@transaction.atomic
def plan_amendment_begin(*, member: Membership, study: Study) -> PlanDraft:
    require(member, "can_edit_plans", study=study)
    study = _locked(study)
    if study.state != StudyState.SEALED:
        raise ActionRefused(
            "Only a sealed plan whose data collection has not started can be amended. Changes after "
            "collection starts are reported as deviations with the results."
        )
    existing = PlanDraft.objects.filter(study=study).first()
    if existing is not None:
        return existing
    latest = PlanVersion.objects.select_related("entry").get(study=study, number=study.plan_version)
    sealed = sealed_plan(latest)
    content = {key: sealed[key] for key in plan_content.empty_content() if key in sealed}
    return PlanDraft.objects.create(study=study, base_version=latest.number, content=content, updated_by=member.user)


@transaction.atomic
def plan_amendment_discard(*, member: Membership, study: Study) -> None:
    require(member, "can_edit_plans", study=study)
    study = _locked(study)
    deleted, _ = PlanDraft.objects.filter(study=study, base_version__gt=0).delete()
    if not deleted:
        raise ActionRefused("There is no amendment in progress to discard.")


@transaction.atomic
def collection_start(*, member: Membership, study: Study, started_on: dt.date) -> Study:
    require(member, "can_start_collection", study=study)
    study = _locked(study)
    if study.state != StudyState.SEALED:
        raise ActionRefused("Data collection can be started only for a sealed plan (and only once).")
    if PlanDraft.objects.filter(study=study).exists():
        raise ActionRefused("An amendment is in progress: seal or discard it before data collection starts.")
    entry_append(
        kind=EntryKind.COLLECTION_STARTED,
        payload={
            "schema": "forebook.collection/1",
            "study": study.code,
            "plan_version": study.plan_version,
            "started_on": started_on.isoformat(),
        },
        study=study,
        author=member.user,
    )
    study.state = StudyState.COLLECTING
    study.collection_started_on = started_on
    study.save(update_fields=["state", "collection_started_on"])
    return study


@transaction.atomic
def study_withdraw(*, member: Membership, study: Study, reason: str) -> Study:
    require(member, "can_withdraw_studies", study=study)
    study = _locked(study)
    if study.state == StudyState.DRAFT:
        raise ActionRefused("A study that was never sealed is discarded, not withdrawn.")
    if study.state == StudyState.WITHDRAWN:
        raise ActionRefused("This study is already withdrawn.")
    if not reason.strip():
        raise ActionRefused("Say why the study is withdrawn: the reason is sealed with it.", field="reason")
    entry = entry_append(
        kind=EntryKind.STUDY_WITHDRAWN,
        payload={
            "schema": "forebook.withdrawal/1",
            "study": study.code,
            "from_state": study.state,
            "reason": reason.strip(),
        },
        study=study,
        author=member.user,
    )
    PlanDraft.objects.filter(study=study).delete()
    study.state = StudyState.WITHDRAWN
    study.withdrawn_at = entry.created_at
    study.save(update_fields=["state", "withdrawn_at"])
    return study


def _date_or_none(value: str | None) -> dt.date | None:
    return dt.date.fromisoformat(value) if value else None
