"""The plan's power justification is recomputed, sealed with its inputs, and false claims need confirming."""

import json

import pytest
from scipy import stats as sps

from ledger.core.errors import ActionRefused
from ledger.plans import services
from ledger.plans.models import PlanVersion
from ledger.plans.sample_size import engine_n, power_figures, sample_size_assessment
from tests.factories import complete_plan, enrolled_study


def noncentral_t_power(n_per_group: int, d: float, alpha: float = 0.05) -> float:
    """Two-sided power of the two-sample t test, written out from the noncentral t (reference)."""
    df = 2 * n_per_group - 2
    ncp = d * (n_per_group / 2) ** 0.5
    critical = sps.t.ppf(1 - alpha / 2, df)
    return sps.nct.sf(critical, df, ncp) + sps.nct.cdf(-critical, df, ncp)


def plan_with(**sample_size):
    plan = complete_plan()
    plan["sample_size"] = {**plan["sample_size"], **sample_size}
    return plan


def test_power_at_the_planned_total_n_splits_two_groups_evenly():
    figures = power_figures(
        {
            "design": "t_independent",
            "effect": 0.5,
            "alpha": 0.05,
            "sides": "two",
            "n_total": 128,
            "groups": None,
            "df": None,
        }
    )
    assert figures["power_at_n"] == pytest.approx(noncentral_t_power(64, 0.5), rel=1e-9)
    # Cohen (1988), table 2.4.1: d = .5, alpha .05 two-sided, power .80 -> 64 per group (128 in all).
    assert figures["n_for_80"] == 128


def test_anova_takes_the_size_of_each_group():
    assert engine_n(design="anova_oneway", total=90, groups=3) == 30
    assert engine_n(design="t_paired", total=40, groups=None) == 40


def test_a_claim_of_80_percent_that_computes_to_about_half_is_a_warning():
    # 64 participants (32 per group) for d = .5 gives about 50 % power (reference: noncentral t above).
    computed, warnings = sample_size_assessment(plan_with(planned_n=64, target_power=0.8))
    assert computed["power_at_n"] == pytest.approx(noncentral_t_power(32, 0.5), rel=1e-9)
    assert len(warnings) == 1
    assert "80%" in warnings[0] and "50%" in warnings[0]


def test_a_claim_that_holds_gives_no_warning():
    computed, warnings = sample_size_assessment(plan_with(planned_n=128, target_power=0.8))
    assert warnings == []
    assert computed["n_for_90"] > computed["n_for_80"] >= 128


def test_uncomputable_inputs_become_a_sealed_warning_not_an_error():
    computed, warnings = sample_size_assessment(plan_with(power_design="anova_oneway", groups=None))
    assert "number of groups" in computed["error"]
    assert warnings and "could not be computed" in warnings[0]


@pytest.mark.django_db
def test_sealing_a_false_power_claim_needs_confirmation_and_seals_the_warning(investigator):
    study = enrolled_study(member=investigator, content=plan_with(planned_n=64, target_power=0.8))
    with pytest.raises(ActionRefused) as refusal:
        services.plan_seal(member=investigator, study=study, revision=study.draft.revision)
    assert refusal.value.field == "acknowledge_warnings"
    assert not PlanVersion.objects.filter(study=study).exists()
    version = services.plan_seal(
        member=investigator, study=study, revision=study.draft.revision, acknowledge_warnings=True
    )
    payload = json.loads(version.entry.payload)
    assert payload["warnings"] and "50%" in payload["warnings"][0]
    assert payload["computed"]["inputs"]["n_total"] == 64
    assert payload["computed"]["power_at_n"] == pytest.approx(noncentral_t_power(32, 0.5), rel=1e-9)
    assert version.registered_power == pytest.approx(payload["computed"]["power_at_n"])


@pytest.mark.django_db
def test_power_preview_endpoint_answers_in_words(client, investigator):
    study = enrolled_study(member=investigator)
    client.force_login(investigator.user)
    url = f"/labs/{investigator.lab.slug}/studies/{study.code}/plan/power/"
    answer = client.get(
        url,
        {
            "plan-planned_n": "64",
            "plan-power_design": "t_independent",
            "plan-effect_size": "0.5",
            "plan-ss_alpha": "0.05",
            "plan-target_power": "0.8",
            "plan-ss_sides": "two",
        },
    ).json()
    assert answer["problem"] is True
    assert "N = 128" in answer["message"]
    bad = client.get(
        url, {"plan-planned_n": "-4", "plan-power_design": "t_independent", "plan-effect_size": "inf"}
    ).json()
    assert bad["problem"] is True and "finite" in bad["message"]
