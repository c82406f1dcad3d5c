"""Reads for the lab outcome report: how many registered studies reached each outcome, and why.

"Registered" means sealed at least once (drafts are never counted); the date range selects studies
by the date of their first seal. Every figure comes from four queries, however many studies the lab
has (``tests/reports/test_queries.py`` holds that):

1. the studies, with their result projection, the registered power of their latest plan version
   and their latest publication link (subqueries), and the retrospective flag computed in SQL;
2. their investigators (the through table, with membership and user);
3. the seal times of their amendments (an amendment sealed after collection started is a finding);
4. the explanations sealed for their findings.

Everything after that is arithmetic over those rows. A study's outcome is its primary verdict once
results are sealed; before that it is "overdue" when today is past the expected completion plus
the lab's grace months (``ledger.compare.results_due_on``), else "still within time". A withdrawn
study is "withdrawn", whatever happened before.
"""

from __future__ import annotations

import datetime as dt
import json
import statistics
from collections import Counter, defaultdict
from collections.abc import Iterable
from dataclasses import dataclass
from functools import cached_property

from django.db import models
from django.db.models import BooleanField, ExpressionWrapper, F, OuterRef, Q, QuerySet, Subquery
from django.db.models.functions import TruncDate
from django.http import Http404

from ledger.chain.models import Entry, EntryKind
from ledger.compare import STUDY_SUBJECT, results_due_on
from ledger.labs.models import Lab, Membership
from ledger.lines.selectors import LineSummary, lab_line_summaries
from ledger.plans.models import PlanVersion, Study, StudyState
from ledger.reports.models import ReportExport
from ledger.results.models import PublicationLink, PublicationStatus, ResultReport, Verdict
from ledger.stats.discovery import positive_predictive_value
from ledger.stats.errors import StatsInputError

# The significance level the PPV assumes: the conventional .05 most registered tests use.
PPV_ALPHA = 0.05
DEFAULT_PRIOR_ODDS = 1.0
RECENT_EXPORTS_SHOWN = 5


class Outcome(models.TextChoices):
    """Where a registered study stands, in the order the report lists them."""

    SUPPORTED = Verdict.SUPPORTED.value, Verdict.SUPPORTED.label
    NULL = Verdict.NULL.value, Verdict.NULL.label
    OPPOSITE = Verdict.OPPOSITE.value, Verdict.OPPOSITE.label
    INCONCLUSIVE = Verdict.INCONCLUSIVE.value, Verdict.INCONCLUSIVE.label
    WITHIN_TIME = "within_time", "Still within time"
    OVERDUE = "overdue", "Overdue"
    WITHDRAWN = "withdrawn", "Withdrawn"


VERDICT_OUTCOMES = (Outcome.SUPPORTED, Outcome.NULL, Outcome.OPPOSITE, Outcome.INCONCLUSIVE)


class Publication(models.TextChoices):
    """What the latest publication link of a study says (or that there is none)."""

    PUBLISHED = PublicationStatus.PUBLISHED.value, PublicationStatus.PUBLISHED.label
    NOT_SUBMITTED = PublicationStatus.NOT_SUBMITTED.value, PublicationStatus.NOT_SUBMITTED.label
    NOTHING_RECORDED = "none", "Nothing recorded"


# The findings the rules raise from dates alone, for studies without a sealed result (a sealed
# result carries its own findings, projected onto ResultReport). All three are major, so each
# needs an explanation; the identities match the rules' (code:subject), so sealed explanations
# are matched to them exactly.
RETROSPECTIVE = "RETROSPECTIVE_REGISTRATION"
AMENDMENT_AFTER_START = "AMENDMENT_AFTER_COLLECTION_START"
RESULTS_OVERDUE = "RESULTS_OVERDUE"
DATE_FINDINGS = (RETROSPECTIVE, AMENDMENT_AFTER_START, RESULTS_OVERDUE)

# Bands of registered power. 80 % is the conventional minimum Cohen proposed (Cohen 1988, Statistical
# Power Analysis for the Behavioral Sciences, 2nd ed.; from memory) and 90 % the usual stricter
# target; 50 % and 95 % close the scale. Common practice for the bands themselves, no source.
POWER_BANDS = (
    (0.0, 0.5, "below 50 %"),
    (0.5, 0.8, "50 to 79 %"),
    (0.8, 0.9, "80 to 89 %"),
    (0.9, 0.95, "90 to 94 %"),
    (0.95, 1.0, "95 % or more"),
)


@dataclass(frozen=True)
class Share:
    """``count`` of ``of`` things, shown as "3 of 10 (30 %)" (as the percent filter writes percentages).

    Without anything to share (``of`` = 0) there is no value, rather than a made-up 0 %.
    """

    count: int
    of: int

    @property
    def value(self) -> float | None:
        return self.count / self.of if self.of else None

    def __str__(self) -> str:
        return f"{self.count} of {self.of} ({100 * self.value:.0f} %)" if self.of else f"{self.count} of {self.of}"


@dataclass(frozen=True)
class StudyLine:
    """One registered study as the report counts it."""

    code: str
    title: str
    state: str
    outcome: Outcome
    verdict: str
    sealed_at: dt.datetime
    result_recorded_at: dt.datetime | None
    due_on: dt.date | None
    investigators: tuple[str, ...]
    publication: Publication
    doi: str
    major_findings: int
    unexplained_findings: tuple[str, ...]
    retrospective: bool
    registered_power: float | None

    @property
    def days_to_result(self) -> int | None:
        """Calendar days (UTC) from the first seal to the sealed result."""
        if self.result_recorded_at is None:
            return None
        return (self.result_recorded_at.astimezone(dt.UTC).date() - self.sealed_at.astimezone(dt.UTC).date()).days


@dataclass(frozen=True)
class OutcomeRow:
    """Counts per outcome for one group of studies (all, one year, one investigator)."""

    label: str
    counts: dict[str, int]

    @property
    def total(self) -> int:
        return sum(self.counts.values())

    @property
    def cells(self) -> list[int]:
        return [self.counts.get(outcome, 0) for outcome in Outcome.values]


@dataclass(frozen=True)
class FileDrawerRow:
    """For one verdict: how many studies were published, not submitted, or have nothing recorded."""

    verdict: Outcome
    published: int
    not_submitted: int
    nothing_recorded: int

    @property
    def total(self) -> int:
        return self.published + self.not_submitted + self.nothing_recorded

    @property
    def publication_rate(self) -> Share:
        return Share(self.published, self.total)


@dataclass(frozen=True)
class PowerSummary:
    """The registered power of the studies whose plan computed one (latest plan version)."""

    values: tuple[float, ...]
    without_power: int

    @property
    def median(self) -> float | None:
        return statistics.median(self.values) if self.values else None

    @property
    def lowest(self) -> float | None:
        return min(self.values, default=None)

    @property
    def highest(self) -> float | None:
        return max(self.values, default=None)

    @property
    def bands(self) -> list[tuple[str, int]]:
        return [
            (label, sum(1 for value in self.values if low <= value < high or (high == 1.0 and value == 1.0)))
            for low, high, label in POWER_BANDS
        ]


@dataclass(frozen=True)
class LabReport:
    lab_name: str
    today: dt.date
    sealed_from: dt.date | None
    sealed_to: dt.date | None
    prior_odds: float
    grace_months: int
    studies: tuple[StudyLine, ...]
    # The lab's research lines, pooled over every sealed result (not limited to the date range:
    # a line's evidence is the whole record of its effect).
    research_lines: tuple[LineSummary, ...] = ()

    # --- counts of outcomes -------------------------------------------------------------------

    @cached_property
    def overall(self) -> OutcomeRow:
        return OutcomeRow("All registered studies", Counter(study.outcome.value for study in self.studies))

    @property
    def overall_rows(self) -> list[OutcomeRow]:
        """The overall counts as a one-row table."""
        return [self.overall]

    @cached_property
    def by_year(self) -> list[OutcomeRow]:
        return _grouped((str(study.sealed_at.astimezone(dt.UTC).year), study) for study in self.studies)

    @cached_property
    def by_investigator(self) -> list[OutcomeRow]:
        """A study counts once under each of its investigators, so the rows may add up to more than all."""
        return _grouped((name, study) for study in self.studies for name in study.investigators)

    @cached_property
    def results_by_year(self) -> list[OutcomeRow]:
        """Sealed results per year of sealing the result, by verdict (whatever the study's state now)."""
        return _grouped(
            (str(study.result_recorded_at.astimezone(dt.UTC).year), study)
            for study in self.studies
            if study.result_recorded_at is not None
        )

    # --- the file drawer ----------------------------------------------------------------------

    @cached_property
    def file_drawer(self) -> list[FileDrawerRow]:
        rows = []
        for verdict in VERDICT_OUTCOMES:
            publications = Counter(study.publication for study in self.studies if study.outcome == verdict)
            rows.append(
                FileDrawerRow(
                    verdict=verdict,
                    published=publications[Publication.PUBLISHED],
                    not_submitted=publications[Publication.NOT_SUBMITTED],
                    nothing_recorded=publications[Publication.NOTHING_RECORDED],
                )
            )
        return rows

    def publication_rate(self, verdict: Outcome) -> Share:
        return next(row.publication_rate for row in self.file_drawer if row.verdict == verdict)

    @property
    def null_publication_rate(self) -> Share:
        return self.publication_rate(Outcome.NULL)

    @property
    def supported_publication_rate(self) -> Share:
        return self.publication_rate(Outcome.SUPPORTED)

    @property
    def null_share_of_published(self) -> Share:
        """Of the lab's published findings (studies with a verdict whose latest link is a DOI), the null ones."""
        rows = self.file_drawer
        published = {row.verdict: row.published for row in rows}
        return Share(published[Outcome.NULL], sum(published.values()))

    # --- findings, registration, timing -------------------------------------------------------

    @property
    def major_findings(self) -> Share:
        return Share(sum(1 for study in self.studies if study.major_findings), len(self.studies))

    @property
    def unexplained_findings(self) -> Share:
        return Share(sum(1 for study in self.studies if study.unexplained_findings), len(self.studies))

    @property
    def retrospective(self) -> Share:
        return Share(sum(1 for study in self.studies if study.retrospective), len(self.studies))

    @property
    def days_to_result(self) -> list[int]:
        return [days for study in self.studies if (days := study.days_to_result) is not None]

    @property
    def median_days_to_result(self) -> float | None:
        days = self.days_to_result
        return statistics.median(days) if days else None

    # --- power and the positive predictive value ----------------------------------------------

    @cached_property
    def power(self) -> PowerSummary:
        values = tuple(study.registered_power for study in self.studies if study.registered_power is not None)
        return PowerSummary(values=values, without_power=len(self.studies) - len(values))

    @property
    def alpha(self) -> float:
        return PPV_ALPHA

    @property
    def ppv(self) -> float | None:
        return self._ppv[0]

    @property
    def ppv_problem(self) -> str:
        return self._ppv[1]

    @cached_property
    def _ppv(self) -> tuple[float | None, str]:
        median = self.power.median
        if median is None:
            return None, "No registered study has a computed power yet, so there is no median power to use."
        try:
            return positive_predictive_value(power=median, pre_study_odds=self.prior_odds, alpha=PPV_ALPHA), ""
        except StatsInputError as error:
            return None, f"The PPV cannot be computed from a median power of {median:.3f}: {error}."

    @property
    def supported_rate(self) -> Share:
        """Supported results among the studies with a verdict (withdrawn studies excluded)."""
        with_verdict = [study for study in self.studies if study.outcome in VERDICT_OUTCOMES]
        return Share(sum(1 for study in with_verdict if study.outcome == Outcome.SUPPORTED), len(with_verdict))

    @property
    def prior_odds_text(self) -> str:
        """The prior odds as true : false ("1:4" for 0.25, "3:1" for 3)."""
        if self.prior_odds >= 1:
            return f"{self.prior_odds:g}:1"
        return f"1:{1 / self.prior_odds:g}"

    @property
    def outcome_columns(self) -> list[tuple[str, str]]:
        return list(Outcome.choices)

    @property
    def period_text(self) -> str:
        if self.sealed_from and self.sealed_to:
            return f"studies first sealed from {self.sealed_from.isoformat()} to {self.sealed_to.isoformat()}"
        if self.sealed_from:
            return f"studies first sealed on or after {self.sealed_from.isoformat()}"
        if self.sealed_to:
            return f"studies first sealed up to {self.sealed_to.isoformat()}"
        return "all registered studies (any date of first sealing)"


def _grouped(pairs: Iterable[tuple[str, StudyLine]]) -> list[OutcomeRow]:
    groups: dict[str, Counter] = defaultdict(Counter)
    for label, study in pairs:
        groups[label][study.outcome.value] += 1
    return [OutcomeRow(label, counts) for label, counts in sorted(groups.items())]


# --- the queries ------------------------------------------------------------------------------


def registered_studies(
    *, lab: Lab, sealed_from: dt.date | None = None, sealed_to: dt.date | None = None
) -> QuerySet[Study]:
    """The lab's studies sealed at least once, first sealed within the dates.

    Dates are UTC calendar days, as the deviation rules compare them (a seal on the day collection
    started is not after it), whatever the server's TIME_ZONE.
    """
    studies = Study.objects.filter(lab=lab, sealed_at__isnull=False).annotate(
        first_sealed_on=TruncDate("sealed_at", tzinfo=dt.UTC)
    )
    if sealed_from is not None:
        studies = studies.filter(first_sealed_on__gte=sealed_from)
    if sealed_to is not None:
        studies = studies.filter(first_sealed_on__lte=sealed_to)
    return studies


def _study_rows(studies: QuerySet[Study]) -> list[Study]:
    # The latest link decides; entry ids (ledger sequence numbers) order links exactly, even
    # when two share a time stamp.
    latest_link = PublicationLink.objects.filter(study=OuterRef("pk")).order_by("-entry_id")
    latest_version = PlanVersion.objects.filter(study=OuterRef("pk"), number=OuterRef("plan_version"))
    return list(
        studies.select_related("result_report")
        .annotate(
            latest_registered_power=Subquery(latest_version.values("registered_power")[:1]),
            latest_publication=Subquery(latest_link.values("status")[:1]),
            latest_doi=Subquery(latest_link.values("doi")[:1]),
            sealed_after_start=ExpressionWrapper(
                Q(collection_started_on__lt=F("first_sealed_on")), output_field=BooleanField()
            ),
        )
        .order_by("sealed_at", "pk")
    )


def _investigator_names(studies: QuerySet[Study]) -> dict[int, list[str]]:
    links = (
        Study.investigators.through.objects.filter(study__in=studies)
        .select_related("membership__user")
        .order_by("membership__user__last_name", "membership__user__first_name", "membership__user__username")
    )
    names: dict[int, list[str]] = defaultdict(list)
    for link in links:
        names[link.study_id].append(link.membership.display_name)
    return names


def _amendment_seals(studies: QuerySet[Study]) -> dict[int, list[tuple[int, dt.datetime]]]:
    seals: dict[int, list[tuple[int, dt.datetime]]] = defaultdict(list)
    rows = PlanVersion.objects.filter(study__in=studies, number__gt=1).values_list("study_id", "number", "sealed_at")
    for study_id, number, sealed_at in rows:
        seals[study_id].append((number, sealed_at))
    return seals


def _explained_findings(studies: QuerySet[Study]) -> dict[int, set[str]]:
    explained: dict[int, set[str]] = defaultdict(set)
    rows = Entry.objects.filter(study__in=studies, kind=EntryKind.FINDING_EXPLAINED).values_list("study_id", "payload")
    for study_id, payload in rows:
        explained[study_id].add(json.loads(payload).get("finding", ""))
    return explained


def _result_of(study: Study) -> ResultReport | None:
    try:
        return study.result_report
    except ResultReport.DoesNotExist:
        return None


def _date_findings(*, study: Study, amendments: list[tuple[int, dt.datetime]], overdue: bool) -> list[str]:
    """Identities of the major findings dates alone raise for a study without a sealed result."""
    found = [f"{RETROSPECTIVE}:{STUDY_SUBJECT}"] if study.sealed_after_start else []
    started = study.collection_started_on
    if started is not None:
        found += [
            f"{AMENDMENT_AFTER_START}:v{number}"
            for number, sealed_at in sorted(amendments)
            if sealed_at.astimezone(dt.UTC).date() > started
        ]
    # Nobody owes results for a withdrawn study (ledger.results.comparison.MOOT_WHEN_WITHDRAWN).
    if overdue and study.state != StudyState.WITHDRAWN:
        found.append(f"{RESULTS_OVERDUE}:{STUDY_SUBJECT}")
    return found


def _study_line(
    *,
    study: Study,
    lab: Lab,
    today: dt.date,
    investigators: list[str],
    amendments: list[tuple[int, dt.datetime]],
    explained: set[str],
) -> StudyLine:
    result = _result_of(study)
    due_on = (
        results_due_on(completion=study.expected_completion, grace_months=lab.overdue_grace_months)
        if study.expected_completion
        else None
    )
    overdue = result is None and due_on is not None and today > due_on
    if study.state == StudyState.WITHDRAWN:
        outcome = Outcome.WITHDRAWN
    elif result is not None:
        outcome = Outcome(result.primary_verdict)
    else:
        outcome = Outcome.OVERDUE if overdue else Outcome.WITHIN_TIME
    if result is not None:
        major, to_explain = result.major_findings, list(result.findings_requiring_explanation)
    else:
        to_explain = _date_findings(study=study, amendments=amendments, overdue=overdue)
        major = len(to_explain)
    return StudyLine(
        code=study.code,
        title=study.title,
        state=study.state,
        outcome=outcome,
        verdict=result.primary_verdict if result else "",
        sealed_at=study.sealed_at,
        result_recorded_at=result.recorded_at if result else None,
        due_on=due_on,
        investigators=tuple(investigators),
        publication=Publication(study.latest_publication or Publication.NOTHING_RECORDED),
        doi=study.latest_doi or "",
        major_findings=major,
        unexplained_findings=tuple(identity for identity in to_explain if identity not in explained),
        retrospective=bool(study.sealed_after_start),
        registered_power=study.latest_registered_power,
    )


def lab_report(
    *,
    lab: Lab,
    today: dt.date,
    sealed_from: dt.date | None = None,
    sealed_to: dt.date | None = None,
    prior_odds: float = DEFAULT_PRIOR_ODDS,
) -> LabReport:
    """The outcome report of ``lab`` as of ``today``, for the studies first sealed within the dates."""
    studies = registered_studies(lab=lab, sealed_from=sealed_from, sealed_to=sealed_to)
    rows = _study_rows(studies)
    investigators = _investigator_names(studies)
    amendments = _amendment_seals(studies)
    explained = _explained_findings(studies)
    return LabReport(
        lab_name=lab.name,
        today=today,
        sealed_from=sealed_from,
        sealed_to=sealed_to,
        prior_odds=prior_odds,
        grace_months=lab.overdue_grace_months,
        studies=tuple(
            _study_line(
                study=study,
                lab=lab,
                today=today,
                investigators=investigators.get(study.pk, []),
                amendments=amendments.get(study.pk, []),
                explained=explained.get(study.pk, set()),
            )
            for study in rows
        ),
        research_lines=tuple(lab_line_summaries(lab=lab)),
    )


# --- report exports ---------------------------------------------------------------------------


def access_report_export(*, member: Membership, code: str) -> ReportExport:
    """The report export with this code in the member's lab, or 404 (missing and foreign look the same)."""
    export = ReportExport.objects.filter(lab=member.lab, code=code).select_related("lab").first()
    if export is None:
        raise Http404("No such report export.")
    return export


def recent_report_exports(*, member: Membership, now: dt.datetime) -> list[ReportExport]:
    """The member's own unexpired report exports, newest first."""
    return list(
        ReportExport.objects.filter(lab=member.lab, created_by=member.user, expires_at__gt=now).order_by("-created_at")[
            :RECENT_EXPORTS_SHOWN
        ]
    )
