"""An invented lab for trying Forebook: people, studies and numbers are all made up.

The Lantern Row Perception Lab and everyone in it are fictional. The studies cover every state
of the lifecycle, several null results, an amendment, a withdrawal and one study whose reported
primary outcome is not the one that was registered.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import Any

from django.contrib.auth import get_user_model
from django.db import transaction

from ledger.labs.models import Lab, Membership, Role
from ledger.labs.services import lab_create, member_add
from ledger.plans import services as plan_services
from ledger.plans.content import empty_content
from ledger.plans.models import Study
from ledger.results import services as result_services
from ledger.stats.pvalues import p_from_statistic

DEMO_LAB_SLUG = "lantern-row"
REPORT_AS_PLANNED = {
    "stopping_rule_followed": True,
    "stopping_note": "",
    "exclusions_as_planned": True,
    "exclusions_applied": "",
    "summary": "",
}
SWITCH_EXPLANATION = (
    "Recall of the items themselves hit the ceiling in most sessions, so the write-up led with recall order instead."
)
DEMO_PASSWORD = "lantern-demo-2026"
PEOPLE = [
    # username, first, last, role, ORCID iD (invented, with a valid check digit)
    ("maren", "Maren", "Quillfeather", Role.MANAGER, "0000-0001-5000-0007"),
    ("otis", "Otis", "Brannagh", Role.INVESTIGATOR, "0000-0002-7000-0009"),
    ("lumi", "Lumi", "Sarkanyi", Role.INVESTIGATOR, ""),
    ("pell", "Pell", "Ardent", Role.READER, ""),
]


@dataclass
class DemoStudy:
    title: str
    question: str
    outcome: str
    secondary: str
    design: str
    effect: float
    planned_n: int
    target: str  # draft / sealed / collecting / reported / withdrawn
    investigator: str = "otis"
    verdict: str = ""
    statistic: float = 0.0
    p: str = ""
    amend: bool = False
    withdraw_reason: str = ""
    switch_primary: bool = False
    publication: str = ""  # "", "not_submitted" or a DOI
    started_days_before_seal: int = 0
    extra: dict[str, Any] = field(default_factory=dict)


STUDIES = [
    DemoStudy(
        "Birdsong playback and simple reaction time",
        "Does recorded birdsong in the testing room shorten simple reaction times?",
        "Median simple reaction time (ms)",
        "Self-rated alertness",
        "t_independent",
        0.4,
        200,
        "draft",
    ),
    DemoStudy(
        "Screen colour temperature and proofreading errors",
        "Do warmer screen colours change how many planted typos are caught?",
        "Planted typos detected (of 40)",
        "Reading time",
        "t_paired",
        0.35,
        70,
        "draft",
        investigator="lumi",
    ),
    DemoStudy(
        "Fidget objects and sustained attention",
        "Does holding a fidget object reduce lapses in a 20-minute vigilance task?",
        "Lapses (responses slower than 500 ms)",
        "Self-rated boredom",
        "t_independent",
        0.5,
        128,
        "sealed",
        amend=True,
    ),
    DemoStudy(
        "Peppermint scent and mental rotation",
        "Does peppermint scent speed up mental rotation judgements?",
        "Mean correct response time (ms)",
        "Accuracy",
        "t_independent",
        0.45,
        160,
        "sealed",
        investigator="lumi",
    ),
    DemoStudy(
        "Standing desks and working-memory span",
        "Do people standing at a desk reach longer digit spans than sitting?",
        "Backward digit span",
        "Forward digit span",
        "t_paired",
        0.3,
        90,
        "collecting",
    ),
    DemoStudy(
        "Handwritten or typed notes and next-day recall",
        "Do handwritten lecture notes lead to better recall a day later?",
        "Free-recall idea units",
        "Recognition accuracy",
        "t_independent",
        0.4,
        200,
        "collecting",
        investigator="lumi",
        started_days_before_seal=12,
    ),
    DemoStudy(
        "Spaced quizzes and retention of invented words",
        "Do three spaced quizzes improve one-week retention of invented vocabulary?",
        "Words recalled after one week (of 30)",
        "Quiz enjoyment",
        "t_independent",
        0.5,
        128,
        "reported",
        verdict="supported",
        statistic=3.12,
        p="0.002",
        publication="10.55555/lantern.2026.014",
    ),
    DemoStudy(
        "Background hum pitch and length estimation",
        "Does a low background hum bias estimates of line length?",
        "Estimation error (%)",
        "Confidence",
        "t_independent",
        0.4,
        200,
        "reported",
        verdict="null",
        statistic=0.61,
        p="0.54",
        publication="not_submitted",
    ),
    DemoStudy(
        "Evening gratitude notes and sleep onset",
        "Does writing three gratitude notes before bed shorten sleep onset?",
        "Sleep onset latency from actigraphy (min)",
        "Sleep quality rating",
        "t_independent",
        0.35,
        260,
        "reported",
        investigator="lumi",
        verdict="null",
        statistic=-0.88,
        p="0.38",
    ),
    DemoStudy(
        "Desk plants and error monitoring",
        "Do desk plants change the number of self-corrected errors in data entry?",
        "Self-corrected errors per 100 entries",
        "Uncorrected errors",
        "t_independent",
        0.4,
        200,
        "reported",
        verdict="null",
        statistic=1.21,
        p="0.23",
    ),
    DemoStudy(
        "Time-pressure cues and estimation of quantities",
        "Does a visible countdown make quantity estimates more accurate?",
        "Absolute estimation error",
        "Response time",
        "t_independent",
        0.4,
        200,
        "reported",
        verdict="opposite",
        statistic=-2.35,
        p="0.020",
    ),
    DemoStudy(
        "Music tempo and puzzle persistence",
        "Does fast-tempo music change how long people persist on an unsolvable puzzle?",
        "Persistence time (s)",
        "Puzzle enjoyment",
        "t_independent",
        0.3,
        350,
        "reported",
        investigator="lumi",
        verdict="inconclusive",
        statistic=1.71,
        p="0.09",
    ),
    DemoStudy(
        "Font weight and memory for shopping lists",
        "Are items printed in a heavier font remembered better?",
        "Items recalled (of 20)",
        "Recall order accuracy",
        "t_independent",
        0.4,
        200,
        "reported",
        verdict="supported",
        statistic=2.41,
        p="0.017",
        switch_primary=True,
    ),
    DemoStudy(
        "Cold-water hand immersion and colour-word interference",
        "Does a brief cold-water hand immersion reduce colour-word interference?",
        "Interference effect (ms)",
        "Error rate",
        "t_paired",
        0.35,
        70,
        "withdrawn",
        withdraw_reason="The ethics approval for the immersion procedure lapsed before any data were collected.",
    ),
]


def demo_plan(spec: DemoStudy, *, today: dt.date) -> dict[str, Any]:
    content = empty_content(title=spec.title)
    start = today + dt.timedelta(days=14)
    content.update(
        research_question=spec.question,
        outcomes=[
            {
                "key": "O1",
                "name": spec.outcome,
                "role": "primary",
                "measure": "Computer-based task in the lab booth",
                "unit": "",
                "timepoint": "End of session",
            },
            {
                "key": "O2",
                "name": spec.secondary,
                "role": "secondary",
                "measure": "Questionnaire after the task",
                "unit": "",
                "timepoint": "End of session",
            },
        ],
        hypotheses=[
            {
                "key": "H1",
                "statement": f"{spec.question[:-1]} (predicted: yes).",
                "direction": "differ",
                "outcome": "O1",
                "test_family": spec.design,
                "test_description": "",
                "alpha": 0.05,
                "sides": "two",
                "multiplicity": "none",
                "covariates": "",
            }
        ],
        design={"arms": "Condition vs. matched control", "allocation": "randomised", "blinding": "assessors"},
        sample_size={
            "planned_n": spec.planned_n,
            "stopping_rule": "Stop at the planned N.",
            "power_design": spec.design,
            "effect_size": spec.effect,
            "alpha": 0.05,
            "target_power": 0.8,
            "sides": "two",
            "groups": None,
            "chi_df": None,
            "justification": "Smallest effect the lab considers worth acting on.",
        },
        exclusion_rules="Exclude sessions with more than 20 % missing trials.",
        support_criterion="Two-sided p below .05 in the predicted direction.",
        dates={
            "collection_start": start.isoformat(),
            "completion": (start + dt.timedelta(days=180)).isoformat(),
            "embargo_until": "",
        },
        investigators=[{"name": "Maren Quillfeather", "orcid": "0000-0001-5000-0007"}],
    )
    return content


def result_rows(spec: DemoStudy) -> list[dict[str, Any]]:
    df = spec.planned_n - 2
    primary = {
        "hypothesis": "H1",
        "outcome": "O1",
        "outcome_name": "",
        "reported_as": "primary",
        "direction": "differ",
        "test_family": spec.design,
        "test_description": "",
        "sides": "two",
        "alpha": 0.05,
        "multiplicity": "none",
        "statistic_kind": "t",
        "statistic": spec.statistic,
        "df1": df,
        "df2": None,
        "p_reported": spec.p,
        "effect_kind": "d",
        "effect_value": round(2 * spec.statistic / (df**0.5), 2),
        "ci_low": None,
        "ci_high": None,
        "n_analysed": spec.planned_n,
        "verdict": spec.verdict,
        "comment": "",
    }
    if spec.switch_primary:
        # The registered primary outcome (O1) goes unreported; the secondary one is reported as primary.
        return [
            {**primary, "hypothesis": "", "outcome": "O2", "comment": "Reported as the main result in the write-up."}
        ]
    secondary_t = 0.52
    secondary = {
        **primary,
        "hypothesis": "",
        "outcome": "O2",
        "reported_as": "secondary",
        "statistic": secondary_t,
        "p_reported": f"{p_from_statistic(kind='t', value=secondary_t, df1=df):.2f}",
        "effect_value": round(2 * secondary_t / (df**0.5), 2),
        "verdict": "null",
    }
    return [primary, secondary]


@transaction.atomic
def build_demo(*, today: dt.date | None = None) -> tuple[Lab, list[Study], bool]:
    """Create the demo lab once; on later runs return what exists. Returns (lab, studies, created)."""
    existing = Lab.objects.filter(slug=DEMO_LAB_SLUG).first()
    if existing is not None:
        return existing, list(existing.studies.order_by("created_at", "code")), False
    today = today or dt.date.today()
    User = get_user_model()
    users = {}
    for username, first, last, _role, _orcid in PEOPLE:
        user, created = User.objects.get_or_create(
            username=username,
            defaults={"first_name": first, "last_name": last, "email": f"{username}@lantern-row.invalid"},
        )
        if created:
            user.set_password(DEMO_PASSWORD)
            user.save()
        users[username] = user
    lab = lab_create(user=users["maren"], name="Lantern Row Perception Lab", slug=DEMO_LAB_SLUG)
    manager = Membership.objects.get(lab=lab, user=users["maren"])
    members = {"maren": manager}
    for username, _first, _last, role, _orcid in PEOPLE[1:]:
        members[username] = member_add(manager=manager, user=users[username], role=role)
    for username, *_rest, orcid in PEOPLE:
        if orcid:
            Membership.objects.filter(pk=members[username].pk).update(orcid=orcid)
    for spec in STUDIES:
        _build_study(spec, manager=manager, investigator=members[spec.investigator], today=today)
    return lab, list(lab.studies.order_by("created_at", "code")), True


def _build_study(spec: DemoStudy, *, manager: Membership, investigator: Membership, today: dt.date) -> None:
    """Walk one study through the services up to its target state."""
    study = plan_services.study_enrol(member=manager, title=spec.title, investigators=[investigator])
    draft = plan_services.plan_draft_save(member=investigator, study=study, content=demo_plan(spec, today=today))
    if spec.target == "draft":
        return
    plan_services.plan_seal(member=investigator, study=study, revision=draft.revision, acknowledge_warnings=True)
    study.refresh_from_db()
    if spec.amend:
        draft = plan_services.plan_amendment_begin(member=investigator, study=study)
        content = dict(draft.content)
        content["sample_size"] = {
            **content["sample_size"],
            "planned_n": spec.planned_n + 40,
            "justification": "Raised N after a pilot showed more lapses variance than expected.",
        }
        draft = plan_services.plan_draft_save(member=investigator, study=study, content=content)
        plan_services.plan_seal(
            member=investigator,
            study=study,
            revision=draft.revision,
            acknowledge_warnings=True,
            amendment_reason="A pilot of 12 sessions showed larger variance; N raised by 40.",
        )
        study.refresh_from_db()
    if spec.target == "withdrawn":
        plan_services.study_withdraw(member=manager, study=study, reason=spec.withdraw_reason)
        return
    if spec.target == "sealed":
        return
    started = today - dt.timedelta(days=spec.started_days_before_seal)
    plan_services.collection_start(member=investigator, study=study, started_on=started)
    if spec.target == "collecting":
        return
    rows = result_rows(spec)
    preview = result_services.result_preview(study=study, rows=rows, report=REPORT_AS_PLANNED)
    # The demo's one switched outcome is explained the way an investigator might; nothing else needs it.
    explanations = {finding.identity: SWITCH_EXPLANATION for finding in preview.unexplained({})}
    result_services.result_record(
        member=investigator, study=study, rows=rows, report=REPORT_AS_PLANNED, explanations=explanations
    )
    if spec.publication:
        status = "not_submitted" if spec.publication == "not_submitted" else "published"
        doi = "" if status == "not_submitted" else spec.publication
        result_services.publication_link_add(member=investigator, study=study, status=status, doi=doi)
