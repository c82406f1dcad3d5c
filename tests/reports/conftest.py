import datetime as dt
from dataclasses import dataclass

import pytest

from ledger.labs.models import Membership, Role
from ledger.plans import services as plan_services
from ledger.plans.models import Study
from ledger.results import services as result_services
from ledger.results.comparison import study_findings
from tests.factories import MembershipFactory, collecting_study, enrolled_study, sealed_study
from tests.reports.builders import (
    INCONCLUSIVE_ROW,
    NULL_ROW,
    OPPOSITE_ROW,
    SUPPORTED_ROW,
    SWITCHED_NULL_ROW,
    link,
    past_due_plan,
    reported,
    today,
    withdrawn,
)


@pytest.fixture
def files_dir(settings, tmp_path):
    """Generated files go to a temporary directory, never to the real data directory."""
    settings.FOREBOOK_RECORDS_DIR = tmp_path / "files"
    return settings.FOREBOOK_RECORDS_DIR


@dataclass(frozen=True)
class SeededLab:
    """The lab of the counting tests. Its design, study by study (A = `investigator`, B = `other_investigator`):

    supported  S1 (A, published)  S2 (A, not submitted then published)  S3 (B, nothing recorded)
    null       N1 (A, published)  N2 (B, not submitted)  N3 (B, published then not submitted)
               N4 (A, nothing; primary outcome switched, registered retrospectively; both explained)
    opposite   O1 (A and B, nothing)
    inconclusive I1 (A, not submitted)
    within time  W1 (A, sealed)  W2 (B, collecting, registered retrospectively, unexplained)
    overdue      D1 (A, sealed, completion 400 days ago, unexplained)
                 D2 (B, collecting, completion 400 days ago, the delay explained)
    withdrawn    X1 (A, completion 400 days ago: withdrawn, not overdue)
    not counted: a draft of A's, and a reported study of another lab.
    """

    manager: Membership
    a: Membership
    b: Membership
    studies: dict[str, Study]


@pytest.fixture
def seeded_lab(manager, investigator, other_investigator) -> SeededLab:
    a, b = investigator, other_investigator
    retro_start = today() - dt.timedelta(days=10)
    studies = {
        "S1": reported(member=a, row=SUPPORTED_ROW),
        "S2": reported(member=a, row=SUPPORTED_ROW),
        "S3": reported(member=b, row=SUPPORTED_ROW),
        "N1": reported(member=a, row=NULL_ROW),
        "N2": reported(member=b, row=NULL_ROW),
        "N3": reported(member=b, row=NULL_ROW),
        "N4": reported(member=a, row=SWITCHED_NULL_ROW, started_on=retro_start),
        "O1": reported(member=manager, row=OPPOSITE_ROW),
        "I1": reported(member=a, row=INCONCLUSIVE_ROW),
        "W1": sealed_study(member=a),
        "W2": collecting_study(member=b, started_on=today() - dt.timedelta(days=5)),
        "D1": sealed_study(member=a, content=past_due_plan()),
        "D2": collecting_study(member=b, content=past_due_plan()),
        "X1": withdrawn(member=a, content=past_due_plan()),
    }
    plan_services.study_investigators_set(member=manager, study=studies["O1"], investigators=[a, b])
    link(member=a, study=studies["S1"], statuses=("published",))
    link(member=a, study=studies["S2"], statuses=("not_submitted", "published"))
    link(member=a, study=studies["N1"], statuses=("published",))
    link(member=b, study=studies["N2"], statuses=("not_submitted",))
    link(member=b, study=studies["N3"], statuses=("published", "not_submitted"))
    link(member=a, study=studies["I1"], statuses=("not_submitted",))
    (overdue,) = [item for item in study_findings(study=studies["D2"]) if item.finding.code == "RESULTS_OVERDUE"]
    result_services.finding_explain(
        member=b, study=studies["D2"], identity=overdue.finding.identity, text="The last site closed late."
    )
    enrolled_study(member=a, title="A draft is never counted")
    reported(member=MembershipFactory(role=Role.MANAGER), row=SUPPORTED_ROW)  # another lab
    return SeededLab(
        manager=manager, a=a, b=b, studies={code: Study.objects.get(pk=study.pk) for code, study in studies.items()}
    )
