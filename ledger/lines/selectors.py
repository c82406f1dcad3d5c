"""Reads for research lines, scoped to a lab, and the analyses computed from sealed entries only.

Everything a line shows comes from the ledger: each study's RESULT_RECORDED payload (its primary
row) and its PUBLICATION_LINKED entries (the latest one decides whether it is published). The
line itself only says which studies to read and on which measure.
"""

from __future__ import annotations

import json
from collections.abc import Iterable
from dataclasses import dataclass

from django.db.models import Count, Prefetch, QuerySet, prefetch_related_objects
from django.http import Http404

from ledger.chain.models import Entry
from ledger.labs.models import Lab, Membership
from ledger.lines import readings
from ledger.lines.conversions import MEASURE_LABELS, MEASURE_SYMBOLS, Converted, row_effect, row_test_statistic
from ledger.lines.diagnostics import TAU2_METHODS, LineDiagnostics, LineResult, line_diagnostics
from ledger.lines.models import ResearchLine
from ledger.plans.models import Study, StudyState
from ledger.results.content import primary_row
from ledger.results.models import PublicationLink, PublicationStatus, ResultReport
from ledger.stats.bias import ReportedStatistic
from ledger.stats.meta import PooledEstimate, Tau2Method

DEFAULT_TAU2_METHOD: Tau2Method = "DL"

# Why a study of the line has no result to convert yet, by state.
NO_RESULT_YET = {
    StudyState.DRAFT: "The plan is still a draft: nothing about this study is sealed yet.",
    StudyState.SEALED: "The plan is sealed but data collection has not started: no result yet.",
    StudyState.COLLECTING: "Data collection is under way: no result is sealed yet.",
    StudyState.WITHDRAWN: "The study was withdrawn before a result was sealed.",
}


def access_line(*, member: Membership, code: str) -> ResearchLine:
    """The line with this code in the member's lab, or 404 (missing and foreign look the same)."""
    line = ResearchLine.objects.select_related("lab").filter(lab=member.lab, code=code.upper()).first()
    if line is None:
        raise Http404("No such research line.")
    return line


def lab_lines(*, lab: Lab) -> QuerySet[ResearchLine]:
    return ResearchLine.objects.filter(lab=lab).annotate(study_count=Count("studies")).order_by("name")


def line_study_choices(*, lab: Lab) -> QuerySet[Study]:
    """The studies a line of this lab may hold: every study of the lab, whatever its state."""
    return Study.objects.filter(lab=lab).order_by("code")


def tau2_method_from(value: str | None) -> Tau2Method:
    """The tau² estimator a request asks for; DerSimonian-Laird unless it names another one."""
    return value if value in TAU2_METHODS else DEFAULT_TAU2_METHOD


# --- evidence: what the sealed entries say about each study of a line ----------------------------------


@dataclass(frozen=True)
class LineStudy:
    """One study of a line: its publication status and its primary result on the line's measure.

    ``effect`` is None when there is no usable result; ``problem`` then says why.
    """

    study: Study
    published: bool
    doi: str
    result_entry: Entry | None
    effect: Converted | None
    problem: str
    # What the p-curve reads for this result, and a note when that is not the sealed statistic.
    statistic: ReportedStatistic | None = None
    statistic_note: str = ""


@dataclass(frozen=True)
class LineEvidence:
    line: ResearchLine
    studies: tuple[LineStudy, ...]

    @property
    def usable(self) -> list[LineStudy]:
        return [item for item in self.studies if item.effect is not None]

    @property
    def unusable(self) -> list[LineStudy]:
        return [item for item in self.studies if item.effect is None]

    def results(self) -> list[LineResult]:
        return [
            LineResult(
                label=item.study.code,
                estimate=item.effect.estimate,
                variance=item.effect.variance,
                published=item.published,
                statistic=item.statistic,
            )
            for item in self.usable
        ]


def _primary(entry: Entry) -> dict:
    return primary_row(json.loads(entry.payload)["rows"])


def lines_evidence(*, lines: Iterable[ResearchLine]) -> dict[int, LineEvidence]:
    """Evidence for several lines in a fixed number of queries, keyed by line id."""
    lines = list(lines)
    # The lab comes along because every study links to its own page.
    prefetch_related_objects(lines, Prefetch("studies", queryset=Study.objects.select_related("lab").order_by("code")))
    studies_by_line = {line.pk: list(line.studies.all()) for line in lines}
    study_ids = {study.pk for studies in studies_by_line.values() for study in studies}
    result_entries = {
        report.study_id: report.entry
        for report in ResultReport.objects.filter(study_id__in=study_ids).select_related("entry")
    }
    # In ledger order, so the latest PUBLICATION_LINKED entry of each study is the one kept.
    publication = {}
    links = PublicationLink.objects.filter(study_id__in=study_ids).select_related("entry").order_by("entry__seq")
    for link in links:
        sealed = json.loads(link.entry.payload)
        publication[link.study_id] = (sealed["status"] == PublicationStatus.PUBLISHED, sealed.get("doi", ""))
    return {
        line.pk: LineEvidence(
            line=line,
            studies=tuple(
                _line_study(
                    study=study,
                    measure=line.measure,
                    result_entry=result_entries.get(study.pk),
                    publication=publication.get(study.pk, (False, "")),
                )
                for study in studies_by_line[line.pk]
            ),
        )
        for line in lines
    }


def line_evidence(*, line: ResearchLine) -> LineEvidence:
    return lines_evidence(lines=[line])[line.pk]


def _line_study(*, study: Study, measure: str, result_entry: Entry | None, publication: tuple[bool, str]) -> LineStudy:
    published, doi = publication
    if result_entry is None:
        problem = NO_RESULT_YET.get(study.state, "No result is sealed for this study.")
        return LineStudy(study=study, published=published, doi=doi, result_entry=None, effect=None, problem=problem)
    row = _primary(result_entry)
    conversion = row_effect(row=row, measure=measure)
    if not isinstance(conversion, Converted):
        return LineStudy(
            study=study, published=published, doi=doi, result_entry=result_entry, effect=None, problem=conversion.reason
        )
    statistic, note = row_test_statistic(row=row, effect=conversion)
    return LineStudy(
        study=study,
        published=published,
        doi=doi,
        result_entry=result_entry,
        effect=conversion,
        problem="",
        statistic=statistic,
        statistic_note=note,
    )


# --- analyses -------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class LineAnalysis:
    evidence: LineEvidence
    diagnostics: LineDiagnostics
    results: tuple[LineResult, ...]

    @property
    def line(self) -> ResearchLine:
        return self.evidence.line

    @property
    def measure_symbol(self) -> str:
        return MEASURE_SYMBOLS[self.line.measure]

    @property
    def funnel_problem(self) -> str:
        return readings.funnel_problem(count=len(self.results))

    @property
    def pcurve_problem(self) -> str:
        return self.diagnostics.all_results.pcurve.problem

    def readings(self) -> dict[str, object]:
        """The plain-language sentences the page prints under each figure; per-subset readings are
        (subset label, sentence) pairs."""
        diagnostics, measure = self.diagnostics, self.line.measure
        return {
            "funnel": readings.funnel_reading(diagnostics=diagnostics, results=self.results),
            "funnel_alt": readings.funnel_alt(diagnostics=diagnostics, results=self.results),
            "egger": [(s.label, readings.egger_reading(subset=s, measure=measure)) for s in diagnostics.subsets],
            "excess": [(s.label, readings.excess_reading(subset=s, measure=measure)) for s in diagnostics.subsets],
            "pcurve": [(s.label, readings.pcurve_reading(subset=s)) for s in diagnostics.subsets],
            "pcurve_alt": readings.pcurve_alt(diagnostics=diagnostics),
            "caution": readings.CAUTION,
        }


def line_analysis(*, line: ResearchLine, tau2_method: Tau2Method = DEFAULT_TAU2_METHOD) -> LineAnalysis:
    return _analysis(evidence=line_evidence(line=line), tau2_method=tau2_method)


def _analysis(*, evidence: LineEvidence, tau2_method: Tau2Method) -> LineAnalysis:
    results = tuple(evidence.results())
    return LineAnalysis(
        evidence=evidence,
        diagnostics=line_diagnostics(results=results, measure=evidence.line.measure, tau2_method=tau2_method),
        results=results,
    )


# --- summaries for the lab report and a study's record ----------------------------------------------------


@dataclass(frozen=True)
class LineSummary:
    """A line in one paragraph: the random-effects estimate of the whole record and of the
    published record, and their difference (published minus all; None when either is missing).

    ``verdict`` is one of "overstates", "understates", "matches", "reverses", "unavailable";
    ``headline`` says it in a sentence with the numbers.
    """

    code: str
    name: str
    measure: str
    measure_label: str
    measure_symbol: str
    tau2_method: str
    k_studies: int
    k_usable: int
    k_published: int
    all_results: PooledEstimate | None
    published_only: PooledEstimate | None
    difference: float | None
    verdict: str
    headline: str


def line_summary(*, analysis: LineAnalysis) -> LineSummary:
    diagnostics = analysis.diagnostics
    return LineSummary(
        code=analysis.line.code,
        name=analysis.line.name,
        measure=analysis.line.measure,
        measure_label=MEASURE_LABELS[analysis.line.measure],
        measure_symbol=analysis.measure_symbol,
        tau2_method=TAU2_METHODS[diagnostics.tau2_method],
        k_studies=len(analysis.evidence.studies),
        k_usable=diagnostics.all_results.k,
        k_published=diagnostics.published_only.k,
        all_results=diagnostics.all_results.random.value,
        published_only=diagnostics.published_only.random.value,
        difference=diagnostics.headline.difference,
        verdict=diagnostics.headline.verdict,
        headline=diagnostics.headline.sentence,
    )


def _summaries(lines: QuerySet[ResearchLine], tau2_method: Tau2Method) -> list[LineSummary]:
    lines = list(lines.select_related("lab").order_by("name"))
    evidence = lines_evidence(lines=lines)
    return [line_summary(analysis=_analysis(evidence=evidence[line.pk], tau2_method=tau2_method)) for line in lines]


def lab_line_summaries(*, lab: Lab, tau2_method: Tau2Method = DEFAULT_TAU2_METHOD) -> list[LineSummary]:
    """Every line of the lab, by name: all-results and published-only pooled estimates and their
    difference (random effects), for the lab report."""
    return _summaries(ResearchLine.objects.filter(lab=lab), tau2_method)


def study_line_summaries(*, study: Study, tau2_method: Tau2Method = DEFAULT_TAU2_METHOD) -> list[LineSummary]:
    """The summaries of every line the study is on (its own lab's lines only), for its record."""
    return _summaries(ResearchLine.objects.filter(lab_id=study.lab_id, studies=study), tau2_method)
