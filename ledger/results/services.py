"""Writes for results and publication links."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from django.db import transaction

from ledger.chain.models import Entry, EntryKind
from ledger.chain.services import entry_append
from ledger.compare import Finding, Severity, findings_needing_explanation
from ledger.core.errors import ActionRefused
from ledger.labs.models import Membership
from ledger.labs.services import require
from ledger.plans.models import PlanVersion, Study, StudyState
from ledger.plans.selectors import sealed_plan
from ledger.results import content as result_content
from ledger.results.checks import checks_needing_confirmation, row_p_check
from ledger.results.comparison import findings_for, study_findings
from ledger.results.models import PublicationLink, PublicationStatus, ResultReport


def _locked(study: Study) -> Study:
    return Study.objects.select_for_update().select_related("lab").get(pk=study.pk)


@dataclass(frozen=True)
class ResultPreview:
    """What sealing these rows would record: the payload, the p-value checks and the findings."""

    plan_version: PlanVersion
    payload: dict[str, Any]
    checks: list[dict[str, Any]]
    findings: list[Finding]

    @property
    def unconfirmed(self) -> list[dict[str, Any]]:
        return checks_needing_confirmation(self.checks)

    def unexplained(self, explanations: dict[str, str]) -> list[Finding]:
        """Findings that need a written explanation and have none in ``explanations``."""
        return [
            finding
            for finding in findings_needing_explanation(findings=self.findings)
            if not explanations.get(finding.identity, "").strip()
        ]


def result_preview(*, study: Study, rows: list[dict[str, Any]], report: dict[str, Any]) -> ResultPreview:
    """The result as it would be sealed, each reported p checked, and the result held against the plan."""
    version = PlanVersion.objects.select_related("entry").get(study=study, number=study.plan_version)
    plan = sealed_plan(version)
    sealed_rows = [
        result_content.row_payload(row, plan=plan, key=f"R{number}") for number, row in enumerate(rows, start=1)
    ]
    checks = [check for check in map(row_p_check, sealed_rows) if check is not None]
    payload = result_content.result_payload(
        study_code=study.code,
        plan_version=version.number,
        plan_entry=version.entry.entry_hash,
        rows=sealed_rows,
        report=report,
        checks=checks,
    )
    findings = findings_for(study=study, plan=plan, result=payload)
    return ResultPreview(plan_version=version, payload=payload, checks=checks, findings=findings)


@transaction.atomic
def result_record(
    *,
    member: Membership,
    study: Study,
    rows: list[dict[str, Any]],
    report: dict[str, Any],
    confirm_checks: bool = False,
    explanations: dict[str, str] | None = None,
) -> ResultReport:
    """Seal the study's results (null results included) and mark the study reported.

    ``rows`` are cleaned result-row dicts (see ``ledger.results.forms.ResultRowForm``);
    ``report`` the cleaned ``ResultReportForm`` data. A reported p that disagrees with its own
    statistic must be confirmed (``confirm_checks``) or corrected. Every finding that needs an
    explanation must have one in ``explanations`` (keyed by ``Finding.identity``); each explanation
    given is sealed as its own entry after the result, linked to its finding.
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
    explanations = {identity: text.strip() for identity, text in (explanations or {}).items() if text.strip()}
    preview = result_preview(study=study, rows=rows, report=report)
    if preview.unconfirmed and not confirm_checks:
        raise ActionRefused(
            "Some reported p-values do not agree with their statistics (see the checks). Correct them, "
            "or confirm that they are reported as the analysis gave them.",
            field="confirm_checks",
        )
    missing = preview.unexplained(explanations)
    if missing:
        raise ActionRefused(
            "Explain every major deviation before sealing: " + "; ".join(f.message.rstrip(".") for f in missing) + ".",
            field="explanations",
        )
    flagged = {check["row"] for check in preview.unconfirmed}
    payload = {
        **preview.payload,
        "checks": [{**check, "confirmed": check["row"] in flagged} for check in preview.checks],
        "findings": [finding.as_dict() for finding in preview.findings],
    }
    entry = entry_append(kind=EntryKind.RESULT_RECORDED, payload=payload, study=study, author=member.user)
    for finding in preview.findings:
        if finding.identity in explanations:
            _seal_explanation(
                member=member, study=study, finding=finding, text=explanations[finding.identity], result_entry=entry
            )
    primary = result_content.primary_row(payload["rows"])
    result = ResultReport.objects.create(
        study=study,
        entry=entry,
        recorded_at=entry.created_at,
        primary_verdict=primary["verdict"],
        n_analysed=primary.get("n_analysed"),
        major_findings=sum(1 for finding in preview.findings if finding.severity is Severity.MAJOR),
        findings_requiring_explanation=[
            finding.identity for finding in findings_needing_explanation(findings=preview.findings)
        ],
    )
    study.state = StudyState.REPORTED
    study.reported_at = entry.created_at
    study.save(update_fields=["state", "reported_at"])
    return result


@transaction.atomic
def finding_explain(*, member: Membership, study: Study, identity: str, text: str) -> Entry:
    """Seal an explanation of one of the study's current findings (e.g. why results are late)."""
    require(member, "can_record_results", study=study)
    study = _locked(study)
    if not text.strip():
        raise ActionRefused("Write the explanation; it is sealed as written.", field="explanation")
    finding = next((item.finding for item in study_findings(study=study) if item.finding.identity == identity), None)
    if finding is None:
        raise ActionRefused("That finding no longer applies to this study; reload the page.")
    result = ResultReport.objects.filter(study=study).select_related("entry").first()
    return _seal_explanation(
        member=member, study=study, finding=finding, text=text.strip(), result_entry=result.entry if result else None
    )


def _seal_explanation(
    *, member: Membership, study: Study, finding: Finding, text: str, result_entry: Entry | None
) -> Entry:
    return entry_append(
        kind=EntryKind.FINDING_EXPLAINED,
        payload={
            "schema": "forebook.explanation/1",
            "study": study.code,
            "finding": finding.identity,
            "code": finding.code,
            "severity": finding.severity.value,
            "message": finding.message,
            "explanation": text,
            "result_entry": result_entry.entry_hash if result_entry else "",
        },
        study=study,
        author=member.user,
    )


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
