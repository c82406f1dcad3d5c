"""Writes for results and publication links."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from django.db import transaction

from ledger.chain.models import EntryKind
from ledger.chain.services import entry_append
from ledger.core.errors import ActionRefused
from ledger.labs.models import Membership
from ledger.labs.services import require
from ledger.plans.models import PlanVersion, Study, StudyState
from ledger.plans.selectors import sealed_plan
from ledger.results import content as result_content
from ledger.results.checks import checks_needing_confirmation, row_p_check
from ledger.results.models import PublicationLink, PublicationStatus, ResultReport


def _locked(study: Study) -> Study:
    return Study.objects.select_for_update().select_related("lab").get(pk=study.pk)


@dataclass(frozen=True)
class ResultPreview:
    """What sealing these rows would record: the sealed-shape rows and the p-value checks."""

    plan_version: PlanVersion
    rows: list[dict[str, Any]]
    checks: list[dict[str, Any]]

    @property
    def unconfirmed(self) -> list[dict[str, Any]]:
        return checks_needing_confirmation(self.checks)


def result_preview(*, study: Study, rows: list[dict[str, Any]]) -> ResultPreview:
    """Build the rows as they would be sealed, and check every reported p against its statistic."""
    version = PlanVersion.objects.select_related("entry").get(study=study, number=study.plan_version)
    plan = sealed_plan(version)
    sealed_rows = [
        result_content.row_payload(row, plan=plan, key=f"R{number}") for number, row in enumerate(rows, start=1)
    ]
    checks = [check for check in map(row_p_check, sealed_rows) if check is not None]
    return ResultPreview(plan_version=version, rows=sealed_rows, checks=checks)


@transaction.atomic
def result_record(
    *,
    member: Membership,
    study: Study,
    rows: list[dict[str, Any]],
    report: dict[str, Any],
    confirm_checks: bool = False,
) -> ResultReport:
    """Seal the study's results (null results included) and mark the study reported.

    ``rows`` are cleaned result-row dicts (see ``ledger.results.forms.ResultRowForm``);
    ``report`` the cleaned ``ResultReportForm`` data. A reported p that disagrees with its own
    statistic must be confirmed (``confirm_checks``) or corrected; the checks are sealed either way.
    """
    require(member, "can_record_results", study=study)
    study = _locked(study)
    if study.state == StudyState.SEALED:
        raise ActionRefused("Record the start of data collection before recording results.")
    if study.state == StudyState.REPORTED:
        raise ActionRefused("Results for this study are already sealed; nothing more was recorded.")
    if study.state != StudyState.COLLECTING:
        raise ActionRefused(f"Results cannot be recorded for a study that is {study.get_state_display().lower()}.")
    if not rows:
        raise ActionRefused("Report at least one result. A null result is a result: record it with its verdict.")
    preview = result_preview(study=study, rows=rows)
    if preview.unconfirmed and not confirm_checks:
        raise ActionRefused(
            "Some reported p-values do not agree with their statistics (see the checks). Correct them, "
            "or confirm that they are reported as the analysis gave them.",
            field="confirm_checks",
        )
    flagged = {check["row"] for check in preview.unconfirmed}
    checks = [{**check, "confirmed": check["row"] in flagged} for check in preview.checks]
    sealed_rows = preview.rows
    payload = result_content.result_payload(
        study_code=study.code,
        plan_version=preview.plan_version.number,
        plan_entry=preview.plan_version.entry.entry_hash,
        rows=sealed_rows,
        report=report,
        checks=checks,
    )
    entry = entry_append(kind=EntryKind.RESULT_RECORDED, payload=payload, study=study, author=member.user)
    primary = result_content.primary_row(sealed_rows)
    result = ResultReport.objects.create(
        study=study,
        entry=entry,
        recorded_at=entry.created_at,
        primary_verdict=primary["verdict"],
        n_analysed=primary.get("n_analysed"),
    )
    study.state = StudyState.REPORTED
    study.reported_at = entry.created_at
    study.save(update_fields=["state", "reported_at"])
    return result


@transaction.atomic
def publication_link_add(*, member: Membership, study: Study, status: str, doi: str = "") -> PublicationLink:
    require(member, "can_link_publications", study=study)
    study = _locked(study)
    if study.state == StudyState.DRAFT:
        raise ActionRefused("Seal the plan first: a publication is linked to a registered study.")
    status = PublicationStatus(status)
    if status == PublicationStatus.PUBLISHED and not doi:
        raise ActionRefused("Give the DOI of the publication.", field="doi")
    doi = doi if status == PublicationStatus.PUBLISHED else ""
    entry = entry_append(
        kind=EntryKind.PUBLICATION_LINKED,
        payload={
            "schema": "forebook.publication/1",
            "study": study.code,
            "status": status.value,
            "doi": doi,
        },
        study=study,
        author=member.user,
    )
    return PublicationLink.objects.create(
        study=study, entry=entry, status=status, doi=doi, recorded_at=entry.created_at
    )
