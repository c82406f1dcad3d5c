"""Positive predictive value, against Ioannidis (2005), PLoS Med 2(8): e124, and Bayes' rule."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ledger.stats.discovery import positive_predictive_value
from ledger.stats.errors import StatsInputError

TABLE_ROUNDING = 0.005  # table 4 prints two decimals


@pytest.mark.parametrize(
    ("power", "odds", "bias", "table_ppv", "tolerance"),
    [
        # Ioannidis (2005), table 4 (memory), alpha = .05:
        (0.80, 1 / 1, 0.10, 0.85, TABLE_ROUNDING),  # adequately powered RCT, little bias
        (0.20, 1 / 5, 0.20, 0.23, TABLE_ROUNDING),  # underpowered phase I/II RCT
        (0.80, 1 / 10, 0.30, 0.20, TABLE_ROUNDING),  # adequately powered epidemiology
        (0.20, 1 / 1000, 0.80, 0.0010, 0.00005),  # discovery-oriented exploratory research
    ],
)
def test_ioannidis_table_4(power, odds, bias, table_ppv, tolerance):
    ppv = positive_predictive_value(power=power, pre_study_odds=odds, alpha=0.05, bias=bias)
    assert ppv == pytest.approx(table_ppv, abs=tolerance)


def _ppv_from_table_2_cells(power, odds, alpha, bias):
    # Ioannidis (2005), table 2: with c relationships probed, true ones number c R / (R + 1).
    # Findings among true: c (1 - beta) R + u c beta R; among false: c alpha + u c (1 - alpha),
    # all over R + 1. Counted here cell by cell for c = 1.
    true_share, false_share = odds / (odds + 1), 1 / (odds + 1)
    true_findings = true_share * (power + bias * (1 - power))
    false_findings = false_share * (alpha + bias * (1 - alpha))
    return true_findings / (true_findings + false_findings)


@given(
    power=st.floats(0.01, 0.99),
    odds=st.floats(1e-4, 100),
    alpha=st.floats(0.001, 0.2),
    bias=st.floats(0, 1),
)
def test_ppv_equals_true_findings_over_all_findings(power, odds, alpha, bias):
    assert positive_predictive_value(power=power, pre_study_odds=odds, alpha=alpha, bias=bias) == pytest.approx(
        _ppv_from_table_2_cells(power, odds, alpha, bias), rel=1e-12
    )


@given(power=st.floats(0.01, 0.99), odds=st.floats(1e-4, 100), alpha=st.floats(0.001, 0.2))
def test_without_bias_ppv_is_bayes_rule(power, odds, alpha):
    prior = odds / (1 + odds)
    # Bayes' rule: P(true | significant) = prior power / (prior power + (1 - prior) alpha)
    expected = prior * power / (prior * power + (1 - prior) * alpha)
    assert positive_predictive_value(power=power, pre_study_odds=odds, alpha=alpha) == pytest.approx(
        expected, rel=1e-12
    )


def test_rare_condition_screening_rule_of_thumb():
    # Common practice, no source: prevalence 1 in 400, sensitivity ~99 %, 1 % false positives:
    # of 400 tested about 5 test positive and about 1 of them has the condition, PPV ~ 0.20.
    prevalence, sensitivity, false_positive_rate = 1 / 400, 0.99, 0.01
    positives = 400 * (prevalence * sensitivity + (1 - prevalence) * false_positive_rate)
    assert positives == pytest.approx(5, abs=0.1)
    ppv = positive_predictive_value(
        power=sensitivity,
        pre_study_odds=prevalence / (1 - prevalence),
        alpha=false_positive_rate,
    )
    assert ppv == pytest.approx(0.20, abs=0.01)


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"power": 0.0}, "power"),
        ({"power": 1.0}, "power"),
        ({"power": float("nan")}, "power"),
        ({"pre_study_odds": 0.0}, "pre_study_odds"),
        ({"pre_study_odds": -1.0}, "pre_study_odds"),
        ({"pre_study_odds": float("inf")}, "pre_study_odds"),
        ({"alpha": 1.5}, "alpha"),
        ({"bias": -0.1}, "bias"),
        ({"bias": 1.1}, "bias"),
    ],
)
def test_impossible_inputs_are_refused(kwargs, field):
    arguments = {"power": 0.8, "pre_study_odds": 1.0, "alpha": 0.05, "bias": 0.0, **kwargs}
    with pytest.raises(StatsInputError) as error:
        positive_predictive_value(**arguments)
    assert error.value.field == field
