"""Test data builders. Objects with ledger state are made through the services, never by hand,
so the projections (study state, versions) always agree with the entries."""

from __future__ import annotations

import datetime as dt
from typing import Any

import factory
from django.contrib.auth import get_user_model

from ledger.labs.models import Lab, Membership, Role
from ledger.plans import services as plan_services
from ledger.plans.content import empty_content
from ledger.plans.models import Study
from ledger.results import services as result_services

PASSWORD = "correct-horse-battery-staple-42"


class UserFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = get_user_model()
        skip_postgeneration_save = True

    username = factory.Sequence(lambda n: f"person{n}")
    email = factory.LazyAttribute(lambda user: f"{user.username}@example.invalid")
    first_name = factory.Sequence(lambda n: f"Given{n}")
    last_name = factory.Sequence(lambda n: f"Family{n}")
    password = factory.PostGenerationMethodCall("set_password", PASSWORD)

    @factory.post_generation
    def save_password(obj, create, extracted, **kwargs):
        if create:
            obj.save()


class LabFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Lab

    name = factory.Sequence(lambda n: f"Test Lab {n}")
    slug = factory.Sequence(lambda n: f"test-lab-{n}")


class MembershipFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Membership

    lab = factory.SubFactory(LabFactory)
    user = factory.SubFactory(UserFactory)
    role = Role.INVESTIGATOR


def complete_plan(**overrides: Any) -> dict[str, Any]:
    """A plan that can be sealed: two outcomes, one hypothesis, a power justification that holds."""
    today = dt.date.today()
    content = empty_content(title=overrides.pop("title", "Humming and line-length estimates"))
    content.update(
        research_question="Does a low hum bias estimates of line length?",
        outcomes=[
            {
                "key": "O1",
                "name": "Estimation error",
                "role": "primary",
                "measure": "Percent error",
                "unit": "%",
                "timepoint": "Session end",
            },
            {
                "key": "O2",
                "name": "Confidence",
                "role": "secondary",
                "measure": "1-7 rating",
                "unit": "",
                "timepoint": "Session end",
            },
        ],
        hypotheses=[
            {
                "key": "H1",
                "statement": "The hum increases estimation error.",
                "direction": "increase",
                "outcome": "O1",
                "test_family": "t_independent",
                "test_description": "",
                "alpha": 0.05,
                "sides": "two",
                "multiplicity": "none",
                "covariates": "",
            }
        ],
        design={"arms": "Hum vs silence", "allocation": "randomised", "blinding": "assessors"},
        sample_size={
            "planned_n": 128,
            "stopping_rule": "Stop at N",
            "power_design": "t_independent",
            "effect_size": 0.5,
            "alpha": 0.05,
            "target_power": 0.8,
            "sides": "two",
            "groups": None,
            "chi_df": None,
            "justification": "Pilot",
        },
        exclusion_rules="Exclude sessions with >20% missing trials.",
        support_criterion="p < .05 in the predicted direction.",
        dates={
            "collection_start": (today + dt.timedelta(days=7)).isoformat(),
            "completion": (today + dt.timedelta(days=200)).isoformat(),
            "embargo_until": "",
        },
        investigators=[{"name": "Given Family", "orcid": "0000-0002-1825-0097"}],
    )
    content.update(overrides)
    return content


def enrolled_study(*, member: Membership, content: dict | None = None, title: str = "A study") -> Study:
    study = plan_services.study_enrol(member=member, title=title)
    plan_services.plan_draft_save(member=member, study=study, content=content or complete_plan(title=title))
    return Study.objects.get(pk=study.pk)


def sealed_study(*, member: Membership, content: dict | None = None, title: str = "A study") -> Study:
    study = enrolled_study(member=member, content=content, title=title)
    plan_services.plan_seal(member=member, study=study, revision=study.draft.revision, acknowledge_warnings=True)
    return Study.objects.get(pk=study.pk)


def collecting_study(*, member: Membership, started_on: dt.date | None = None, **kwargs) -> Study:
    study = sealed_study(member=member, **kwargs)
    plan_services.collection_start(member=member, study=study, started_on=started_on or dt.date.today())
    return Study.objects.get(pk=study.pk)


def result_row(**overrides: Any) -> dict[str, Any]:
    """A cleaned result row, as ResultRowForm produces it: by default a null result on H1/O1."""
    row = {
        "hypothesis": "H1",
        "outcome": "O1",
        "outcome_name": "",
        "reported_as": "primary",
        "direction": "increase",
        "test_family": "t_independent",
        "test_description": "",
        "sides": "two",
        "alpha": 0.05,
        "multiplicity": "none",
        "statistic_kind": "t",
        "statistic": 0.84,
        "df1": 126.0,
        "df2": None,
        "p_reported": "0.40",
        "effect_kind": "d",
        "effect_value": 0.15,
        "ci_low": -0.2,
        "ci_high": 0.5,
        "n_analysed": 128,
        "verdict": "null",
        "comment": "",
    }
    row.update(overrides)
    return row


REPORT_AS_PLANNED = {
    "stopping_rule_followed": True,
    "stopping_note": "",
    "exclusions_as_planned": True,
    "exclusions_applied": "",
    "summary": "",
}


def reported_study(*, member: Membership, rows: list[dict] | None = None, **kwargs) -> Study:
    study = collecting_study(member=member, **kwargs)
    result_services.result_record(member=member, study=study, rows=rows or [result_row()], report=REPORT_AS_PLANNED)
    return Study.objects.get(pk=study.pk)
