"""One-sided p-values in the predicted direction (the tail the plan named, not the one observed)."""

import numpy as np
import pytest
from scipy import stats as sps

from ledger.stats.errors import StatsInputError
from ledger.stats.pvalues import p_consistency, p_from_statistic


def test_a_statistic_against_the_predicted_direction_gets_the_large_tail():
    # Reference: scipy's ttest_1samp with alternative="greater" on a sample whose mean is below 0.
    sample = np.array([-1.2, -0.4, -0.9, 0.3, -1.6, -0.2, -0.8, -1.1, 0.1, -0.5, -0.7])
    reference = sps.ttest_1samp(sample, 0.0, alternative="greater")
    p = p_from_statistic(kind="t", value=reference.statistic, df1=len(sample) - 1, sides="one", tail="upper")
    assert p == pytest.approx(reference.pvalue, rel=1e-12)
    assert p > 0.5


def test_lower_tail_mirrors_upper_tail():
    for kind, extra in (("t", {"df1": 12}), ("z", {}), ("r", {"n": 30})):
        value = 0.4 if kind == "r" else 1.7
        upper = p_from_statistic(kind=kind, value=value, sides="one", tail="upper", **extra)
        lower = p_from_statistic(kind=kind, value=-value, sides="one", tail="lower", **extra)
        observed = p_from_statistic(kind=kind, value=-value, sides="one", **extra)
        assert upper == pytest.approx(lower, rel=1e-12)
        assert observed == pytest.approx(upper, rel=1e-12)


def test_correlation_tail_matches_scipy_pearsonr_alternative():
    rng = np.random.default_rng(7)
    x = rng.normal(size=25)
    y = -0.3 * x + rng.normal(size=25)
    reference = sps.pearsonr(x, y, alternative="greater")
    p = p_from_statistic(kind="r", value=reference.statistic, n=25, sides="one", tail="upper")
    assert p == pytest.approx(reference.pvalue, rel=1e-9)


def test_a_correct_large_one_sided_p_is_consistent():
    # t(10) = -2.00 tested one-sided for an increase: p = t.sf(-2, 10) = 0.963 (scipy).
    check = p_consistency(statistic_kind="t", value="-2.00", df1=10, sides="one", tail="upper", p_reported="0.96")
    assert check.verdict == "consistent"
    assert check.recomputed_p == pytest.approx(sps.t.sf(-2.0, 10), rel=1e-12)
    assert "upper-tail" in check.explanation


def test_unknown_tail_is_refused_with_its_field():
    with pytest.raises(StatsInputError) as error:
        p_from_statistic(kind="t", value=1.0, df1=5, sides="one", tail="left")
    assert error.value.field == "tail"
