"""Reads of results, scoped to a lab."""

from ledger.labs.models import Lab
from ledger.results.models import ResultReport


def recent_results(*, lab: Lab, limit: int = 10) -> list[ResultReport]:
    return list(
        ResultReport.objects.filter(study__lab=lab).select_related("study", "entry").order_by("-recorded_at")[:limit]
    )


def study_result(*, study) -> ResultReport | None:
    return ResultReport.objects.filter(study=study).select_related("entry").first()
