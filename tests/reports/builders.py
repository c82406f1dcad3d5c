"""Studies with a known outcome for the report tests, built through the services (tests/factories.py).

Every kind below ends in exactly one report outcome, so a test can state the expected counts as
literals from the list of kinds it built.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Callable

from ledger.chain.models import Entry, EntryKind
from ledger.chain.services import NewEntry, entries_append
from ledger.labs.models import Membership
from ledger.plans import services as plan_services
from ledger.plans.models import PlanVersion, Study
from ledger.results import services as result_services
from ledger.results.models import PublicationLink, ResultReport
from tests.factories import REPORT_AS_PLANNED, collecting_study, complete_plan, result_row, sealed_study

SUPPORTED_ROW = result_row(
    statistic=3.2, p_reported="0.002", effect_value=0.57, ci_low=0.21, ci_high=0.92, verdict="supported"
)
NULL_ROW = result_row()
OPPOSITE_ROW = result_row(
    statistic=-2.5, p_reported="0.014", effect_value=-0.44, ci_low=-0.8, ci_high=-0.09, verdict="opposite"
)
INCONCLUSIVE_ROW = result_row(verdict="inconclusive")
# The registered primary outcome O1 goes unreported and the secondary O2 is reported as primary:
# two major findings (PRIMARY_OUTCOME_DROPPED, PRIMARY_OUTCOME_ADDED), both explained when sealed.
SWITCHED_NULL_ROW = result_row(hypothesis="", outcome="O2", reported_as="primary")
DOI = "10.5555/forebook-report-test"


def today() -> dt.date:
    return dt.date.today()


def past_due_plan(title: str = "A study") -> dict:
    """A plan whose expected completion is 400 days ago: past the default 12-month grace period."""
    return complete_plan(
        title=title,
        dates={
            "collection_start": (today() - dt.timedelta(days=500)).isoformat(),
            "completion": (today() - dt.timedelta(days=400)).isoformat(),
            "embargo_until": "",
        },
    )


def report(*, member: Membership, study: Study, rows: list[dict], explain: bool = False) -> Study:
    """Seal ``rows`` as the study's result; with ``explain``, explaining every finding that needs it."""
    explanations = {}
    if explain:
        preview = result_services.result_preview(study=study, rows=rows, report=REPORT_AS_PLANNED)
        explanations = {finding.identity: f"Explained: {finding.code.lower()}." for finding in preview.unexplained({})}
    result_services.result_record(
        member=member, study=study, rows=rows, report=REPORT_AS_PLANNED, explanations=explanations
    )
    return Study.objects.get(pk=study.pk)


def reported(*, member: Membership, row: dict, started_on: dt.date | None = None, **kwargs) -> Study:
    """A reported study; findings that need an explanation (a switched outcome, a late seal) get one."""
    study = collecting_study(member=member, started_on=started_on, **kwargs)
    explain = row is SWITCHED_NULL_ROW or started_on is not None
    return report(member=member, study=study, rows=[row], explain=explain)


def link(*, member: Membership, study: Study, statuses: tuple[str, ...]) -> None:
    """Record publication statuses in order; the last one is the study's current status."""
    for status in statuses:
        result_services.publication_link_add(
            member=member, study=study, status=status, doi=DOI if status == "published" else ""
        )


def withdrawn(*, member: Membership, **kwargs) -> Study:
    study = sealed_study(member=member, **kwargs)
    return plan_services.study_withdraw(member=member, study=study, reason="The lab closed the project.")


def amended(*, member: Membership, **kwargs) -> Study:
    """A study sealed, amended once (version 2), then collecting: an amendment before collection."""
    study = sealed_study(member=member, **kwargs)
    draft = plan_services.plan_amendment_begin(member=member, study=study)
    content = dict(draft.content)
    content["sample_size"] = {**content["sample_size"], "planned_n": 140}
    draft = plan_services.plan_draft_save(member=member, study=study, content=content)
    plan_services.plan_seal(
        member=member,
        study=study,
        revision=draft.revision,
        acknowledge_warnings=True,
        amendment_reason="A larger sample.",
    )
    plan_services.collection_start(member=member, study=study, started_on=today())
    return Study.objects.get(pk=study.pk)


def unpowered_plan(**overrides) -> dict:
    """A plan without a power computation: sealing it skips the power search, most of a seal's time."""
    plan = complete_plan(**overrides)
    plan["sample_size"] = {**plan["sample_size"], "power_design": "", "effect_size": None}
    return plan


def unpowered_past_due_plan() -> dict:
    return unpowered_plan(dates=past_due_plan()["dates"])


# Every kind of study, for the bounded-query test: each query of the report has rows to read, and
# each kind grows with the number of studies. One kind in seven registers a power.
MIXED_KINDS: tuple[Callable[[Membership], Study], ...] = (
    lambda member: reported(member=member, row=SUPPORTED_ROW),
    lambda member: reported(member=member, row=NULL_ROW, content=unpowered_plan()),
    lambda member: reported(
        member=member, row=SWITCHED_NULL_ROW, started_on=today() - dt.timedelta(days=10), content=unpowered_plan()
    ),
    lambda member: sealed_study(member=member, content=unpowered_plan()),
    lambda member: collecting_study(member=member, content=unpowered_past_due_plan()),
    lambda member: withdrawn(member=member, content=unpowered_plan()),
    lambda member: amended(member=member, content=unpowered_plan()),
)


def mixed_studies(*, member: Membership, count: int) -> list[Study]:
    studies = []
    for number in range(count):
        study = MIXED_KINDS[number % len(MIXED_KINDS)](member)
        if number % 3 == 0:
            link(member=member, study=study, statuses=("published",))
        studies.append(study)
    return studies


def copies(*, template: Study, count: int) -> list[Study]:
    """``count`` new studies with the template's ledger history, in bulk: hundreds in seconds.

    Each copy's entries are the template's entries appended again (same kinds and payloads, the
    payload's study code replaced) through ``entries_append``, so the chain rules and triggers see
    every one; the projections (plan versions, result, publication links, the study's dates) are
    copied from the template's and point at the copy's own entries, as the services would have made
    them. For the bounded-query test, where building 500 studies one by one through the services
    would take about a minute.
    """
    history = list(Entry.objects.filter(study=template).select_related("author").order_by("seq"))
    versions = {version.entry_id: version for version in PlanVersion.objects.filter(study=template)}
    results = {result.entry_id: result for result in ResultReport.objects.filter(study=template)}
    links = {item.entry_id: item for item in PublicationLink.objects.filter(study=template)}
    team = list(template.investigators.all())
    study_fields = ("lab_id", "title", "state", "created_by_id", "plan_version", "collection_started_on")
    studies = Study.objects.bulk_create(
        [
            Study(
                expected_completion=template.expected_completion,
                embargo_until=template.embargo_until,
                **{name: getattr(template, name) for name in study_fields},
            )
            for _ in range(count)
        ]
    )
    appended = iter(
        entries_append(
            [
                NewEntry(
                    kind=old.kind,
                    payload={**json.loads(old.payload), "study": study.code},
                    study=study,
                    author=old.author,
                )
                for study in studies
                for old in history
            ]
        )
    )
    new_versions, new_results, new_links = [], [], []
    for study in studies:
        for old in history:
            new = next(appended)
            if old.seq in versions:
                version = versions[old.seq]
                new_versions.append(
                    PlanVersion(
                        study=study,
                        number=version.number,
                        entry=new,
                        sealed_at=new.created_at,
                        planned_n=version.planned_n,
                        registered_power=version.registered_power,
                    )
                )
                if version.number == 1:
                    study.sealed_at = new.created_at
            if old.seq in results:
                result = results[old.seq]
                study.reported_at = new.created_at
                new_results.append(
                    ResultReport(
                        study=study,
                        entry=new,
                        recorded_at=new.created_at,
                        primary_verdict=result.primary_verdict,
                        n_analysed=result.n_analysed,
                        major_findings=result.major_findings,
                        findings_requiring_explanation=result.findings_requiring_explanation,
                    )
                )
            if old.seq in links:
                item = links[old.seq]
                new_links.append(
                    PublicationLink(
                        study=study, entry=new, status=item.status, doi=item.doi, recorded_at=new.created_at
                    )
                )
            if old.kind == EntryKind.STUDY_WITHDRAWN:
                study.withdrawn_at = new.created_at
    PlanVersion.objects.bulk_create(new_versions)
    ResultReport.objects.bulk_create(new_results)
    PublicationLink.objects.bulk_create(new_links)
    Study.objects.bulk_update(studies, ["sealed_at", "reported_at", "withdrawn_at"])
    through = Study.investigators.through
    through.objects.bulk_create([through(study=study, membership=member) for study in studies for member in team])
    return studies
