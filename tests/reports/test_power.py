"""Registered power and the expected PPV on the report.

External checks:
  - The registered power of each seeded plan (independent-samples t test, two-sided, alpha .05,
    two equal groups of N/2) is recomputed with statsmodels' TTestIndPower (statsmodels
    stats/power.py), and the report's median must equal statistics.median of those values.
  - The PPV shown on the page must equal ledger.stats.discovery.positive_predictive_value for the
    median power, the prior odds typed in the form and alpha .05 (the formula of Ioannidis 2005,
    PLoS Med 2(8): e124, itself checked against that paper in tests/stats/test_discovery.py).
"""

import re
import statistics

import pytest
from django.urls import reverse
from statsmodels.stats.power import TTestIndPower

from ledger.reports.selectors import PPV_ALPHA, lab_report
from ledger.stats.discovery import positive_predictive_value
from tests.factories import PASSWORD, complete_plan, sealed_study
from tests.reports.builders import today

pytestmark = pytest.mark.django_db

# (Cohen's d, total N) of the seeded plans.
DESIGNS = [(0.5, 128), (0.3, 100), (0.8, 60), (0.4, 200), (0.6, 90)]


def plan_with_design(effect: float, total_n: int) -> dict:
    plan = complete_plan()
    plan["sample_size"] = {**plan["sample_size"], "effect_size": effect, "planned_n": total_n}
    return plan


def statsmodels_power(effect: float, total_n: int) -> float:
    return TTestIndPower().power(effect_size=effect, nobs1=total_n // 2, alpha=0.05, ratio=1.0, alternative="two-sided")


@pytest.fixture
def powered_lab(investigator):
    for effect, total_n in DESIGNS:
        sealed_study(member=investigator, content=plan_with_design(effect, total_n))
    without_power = complete_plan()
    without_power["sample_size"] = {**without_power["sample_size"], "power_design": "", "effect_size": None}
    sealed_study(member=investigator, content=without_power)
    return investigator.lab


def test_median_registered_power_is_the_median_of_the_sealed_figures(powered_lab):
    report = lab_report(lab=powered_lab, today=today())
    expected = [statsmodels_power(effect, total_n) for effect, total_n in DESIGNS]
    assert sorted(report.power.values) == pytest.approx(sorted(expected), rel=1e-6)
    assert report.power.median == pytest.approx(statistics.median(expected), rel=1e-6)
    assert report.power.without_power == 1
    bands = dict(report.power.bands)
    assert sum(bands.values()) == len(DESIGNS)
    assert bands["95 % or more"] == sum(1 for power in expected if power >= 0.95)
    assert bands["below 50 %"] == sum(1 for power in expected if power < 0.5)


def test_the_page_shows_the_ppv_for_the_median_power_and_the_chosen_prior_odds(client, powered_lab, investigator):
    assert client.login(username=investigator.user.username, password=PASSWORD)
    page = client.get(reverse("reports:lab", kwargs={"lab_slug": powered_lab.slug}), {"prior_odds": "1:4"})
    assert page.status_code == 200
    text = page.content.decode()
    median = statistics.median(statsmodels_power(effect, total_n) for effect, total_n in DESIGNS)
    expected_ppv = positive_predictive_value(power=median, pre_study_odds=0.25, alpha=PPV_ALPHA)
    shown_ppv = float(re.search(r'<dd id="ppv">([0-9.]+) ', text).group(1))
    shown_median = float(re.search(r'<dd id="median-power">([0-9.]+) ', text).group(1))
    assert shown_ppv == pytest.approx(expected_ppv, abs=5e-4)  # shown with three decimals
    assert shown_median == pytest.approx(median, abs=5e-4)
    assert "1:4 (R = 0.25)" in text
    # The PPV is not the observed supported rate, and the page says so.
    assert "It is not the supported rate" in text and "Ioannidis 2005" in text


def test_prior_odds_change_the_ppv_as_the_formula_says(powered_lab):
    even = lab_report(lab=powered_lab, today=today(), prior_odds=1.0)
    long_shot = lab_report(lab=powered_lab, today=today(), prior_odds=0.1)
    for report in (even, long_shot):
        assert report.ppv == positive_predictive_value(
            power=report.power.median, pre_study_odds=report.prior_odds, alpha=0.05
        )
    assert long_shot.ppv < even.ppv


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        ("1:0", "as true:false"),
        ("0", "positive, finite"),
        ("lots", "as true:false"),
        ("-1:4", "positive, finite"),
    ],
)
def test_impossible_prior_odds_are_refused_with_how_to_write_them(client, powered_lab, investigator, typed, message):
    assert client.login(username=investigator.user.username, password=PASSWORD)
    page = client.get(reverse("reports:lab", kwargs={"lab_slug": powered_lab.slug}), {"prior_odds": typed})
    text = page.content.decode()
    assert message in text
    assert "uses the defaults" in text
