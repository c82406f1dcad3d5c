"""Multiplicity adjustment of p-values: Bonferroni, Holm and Benjamini-Hochberg.

Each function takes a one-dimensional array of p-values and returns the adjusted p-values in the
same order, capped at 1. A hypothesis is rejected at level alpha when its adjusted p is at most
alpha (:func:`reject`), which reproduces each method's original step-wise rule:

* Bonferroni (familywise error): m p.
* Holm (1979, Scand J Statist 6: 65), familywise error: with p sorted ascending, the i-th
  adjusted value is max over j <= i of (m - j + 1) p_(j); the running maximum makes the adjusted
  values non-decreasing in p, as the step-down procedure requires.
* Benjamini & Hochberg (1995, J R Stat Soc B 57: 289), false discovery rate: the i-th adjusted
  value is min over j >= i of m p_(j) / j; the running minimum from the largest p down makes
  them non-decreasing, as the step-up procedure requires.

Always BH <= Holm <= Bonferroni, element by element.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ledger.stats import _inputs
from ledger.stats.errors import StatsInputError


def _p_values(p_values: object) -> np.ndarray:
    array = _inputs.finite_array(p_values, field="p_values")
    if array.ndim != 1 or array.size == 0:
        raise StatsInputError(
            "p_values must be a non-empty one-dimensional list or array of p-values",
            field="p_values",
        )
    if np.any((array < 0) | (array > 1)):
        raise StatsInputError("every p-value must lie between 0 and 1 (inclusive)", field="p_values")
    return array


def _step(p_values: object, *, weights: np.ndarray, step_down: bool) -> np.ndarray:
    """Sort, scale the i-th smallest p by weights[i], enforce monotonicity, and unsort.

    Step-down (Holm) carries the running maximum upward from the smallest p; step-up (BH)
    carries the running minimum downward from the largest.
    """
    array = _p_values(p_values)
    order = np.argsort(array, kind="stable")
    scaled = weights[: array.size] * array[order]
    if step_down:
        monotone = np.maximum.accumulate(scaled)
    else:
        monotone = np.minimum.accumulate(scaled[::-1])[::-1]
    adjusted = np.empty_like(array)
    adjusted[order] = np.minimum(monotone, 1.0)
    return adjusted


def adjust_bonferroni(*, p_values: Sequence[float] | np.ndarray) -> np.ndarray:
    """Bonferroni-adjusted p-values: min(1, m p)."""
    array = _p_values(p_values)
    return np.minimum(array * array.size, 1.0)


def adjust_holm(*, p_values: Sequence[float] | np.ndarray) -> np.ndarray:
    """Holm step-down adjusted p-values."""
    m = np.size(p_values)
    return _step(p_values, weights=np.arange(m, 0, -1, dtype=float), step_down=True)


def adjust_benjamini_hochberg(*, p_values: Sequence[float] | np.ndarray) -> np.ndarray:
    """Benjamini-Hochberg step-up adjusted p-values (q-values in the BH sense)."""
    m = np.size(p_values)
    return _step(p_values, weights=m / np.arange(1, m + 1, dtype=float), step_down=False)


def reject(*, adjusted: Sequence[float] | np.ndarray, alpha: float) -> np.ndarray:
    """Boolean array: which hypotheses are rejected (adjusted p <= alpha)."""
    level = _inputs.open_unit(alpha, field="alpha")
    return _p_values(adjusted) <= level
