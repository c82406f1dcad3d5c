"""Bonferroni, Holm and Benjamini-Hochberg adjustment, against the BH (1995) example and
statsmodels.stats.multitest.multipletests."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.stats.multitest import multipletests

from ledger.stats.errors import StatsInputError
from ledger.stats.multiplicity import (
    adjust_benjamini_hochberg,
    adjust_bonferroni,
    adjust_holm,
    reject,
)

# Benjamini & Hochberg (1995), J R Stat Soc B 57: 289-300: the 15 p-values of the paper's
# worked example (memory).
BH_1995 = np.array(
    [
        0.0001,
        0.0004,
        0.0019,
        0.0095,
        0.0201,
        0.0278,
        0.0298,
        0.0344,
        0.0459,
        0.3240,
        0.4262,
        0.5719,
        0.6528,
        0.7590,
        1.0000,
    ]
)
ADJUSTERS = {
    "bonferroni": adjust_bonferroni,
    "holm": adjust_holm,
    "fdr_bh": adjust_benjamini_hochberg,
}


def test_bh_1995_example_rejections():
    # Benjamini & Hochberg (1995), worked example: BH rejects 4 at q = .05, Bonferroni and
    # Holm 3 (memory; statsmodels agrees in the next tests).
    assert reject(adjusted=adjust_benjamini_hochberg(p_values=BH_1995), alpha=0.05).sum() == 4
    assert reject(adjusted=adjust_bonferroni(p_values=BH_1995), alpha=0.05).sum() == 3
    assert reject(adjusted=adjust_holm(p_values=BH_1995), alpha=0.05).sum() == 3


def test_bh_1995_adjusted_p_of_the_first_five():
    # BH-adjusted p for the BH (1995) data to 4 decimals (memory); statsmodels is the hard
    # check below.
    np.testing.assert_allclose(
        adjust_benjamini_hochberg(p_values=BH_1995)[:5],
        [0.0015, 0.0030, 0.0095, 0.0356, 0.0603],
        atol=5e-5,
    )


@pytest.mark.parametrize("method", sorted(ADJUSTERS))
def test_bh_1995_example_matches_statsmodels(method):
    # statsmodels multipletests(method=...)
    expected_reject, expected_adjusted, _, _ = multipletests(BH_1995, alpha=0.05, method=method)
    adjusted = ADJUSTERS[method](p_values=BH_1995)
    np.testing.assert_allclose(adjusted, expected_adjusted, rtol=1e-12)
    np.testing.assert_array_equal(reject(adjusted=adjusted, alpha=0.05), expected_reject)


_p_lists = st.lists(st.floats(0, 1), min_size=1, max_size=60)


@settings(max_examples=200, deadline=None)
@given(p=_p_lists, method=st.sampled_from(sorted(ADJUSTERS)), alpha=st.floats(0.001, 0.5))
def test_any_p_values_match_statsmodels_in_original_order(p, method, alpha):
    expected_reject, expected_adjusted, _, _ = multipletests(p, alpha=alpha, method=method)
    adjusted = ADJUSTERS[method](p_values=p)
    np.testing.assert_allclose(adjusted, expected_adjusted, rtol=1e-12, atol=1e-15)
    np.testing.assert_array_equal(reject(adjusted=adjusted, alpha=alpha), expected_reject)


@settings(max_examples=200, deadline=None)
@given(p=_p_lists)
def test_bh_at_most_holm_at_most_bonferroni_all_capped_at_one(p):
    bh = adjust_benjamini_hochberg(p_values=p)
    holm = adjust_holm(p_values=p)
    bonferroni = adjust_bonferroni(p_values=p)
    assert np.all(bh <= holm + 1e-15)
    assert np.all(holm <= bonferroni + 1e-15)
    assert np.all(bonferroni <= 1.0)
    assert np.all(bh >= np.asarray(p) - 1e-15)


@settings(max_examples=200, deadline=None)
@given(p=_p_lists, method=st.sampled_from(sorted(ADJUSTERS)))
def test_adjusted_values_keep_the_order_of_the_raw_p_values(p, method):
    raw = np.asarray(p)
    adjusted = ADJUSTERS[method](p_values=raw)
    order = np.argsort(raw, kind="stable")
    assert np.all(np.diff(adjusted[order]) >= 0)


@pytest.mark.parametrize("p_values", [[], [[0.1, 0.2]], [0.1, 1.2], [-0.01, 0.5], [0.1, float("nan")], "abc"])
@pytest.mark.parametrize("method", sorted(ADJUSTERS))
def test_impossible_p_value_lists_are_refused(p_values, method):
    with pytest.raises(StatsInputError) as error:
        ADJUSTERS[method](p_values=p_values)
    assert error.value.field == "p_values"


@pytest.mark.parametrize("alpha", [0.0, 1.0, -0.5, float("nan")])
def test_reject_refuses_alpha_outside_open_unit_interval(alpha):
    with pytest.raises(StatsInputError) as error:
        reject(adjusted=[0.01, 0.2], alpha=alpha)
    assert error.value.field == "alpha"
