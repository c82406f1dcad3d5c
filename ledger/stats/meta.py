"""Inverse-variance meta-analysis: fixed-effect and random-effects pooling.

Every function takes per-study effect estimates ``y`` (on a scale where they are roughly
normal: log risk ratio, log odds ratio, standardised mean difference, Fisher z ...) and their
sampling variances ``v``, and returns a frozen :class:`PooledEstimate`.

Conventions (chosen so that results line up with the R package metafor, which the tests
check against):

* Cochran's Q always uses the fixed-effect weights 1/v, whatever the model.
* Confidence intervals and the test of the pooled effect use the normal distribution.
* Fixed-effect model: I2 = max(0, (Q - df) / Q) and H2 = Q / df (Higgins & Thompson 2002,
  Stat Med 21: 1539).
* Random-effects models: I2 = tau2 / (tau2 + s2) and H2 = (tau2 + s2) / s2, where s2 is the
  "typical" within-study variance (k - 1) * sum(w) / (sum(w)**2 - sum(w**2)) of Higgins &
  Thompson (2002). For DerSimonian-Laird this equals the Q-based I2 above; for REML it uses the
  REML tau2, so I2 differs slightly from the Q-based value.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from scipy import stats

from ledger.stats import _inputs
from ledger.stats.errors import StatsInputError

# Pooling is an average over results; with one result there is nothing to pool and Q has zero
# degrees of freedom.
MIN_STUDIES_POOLING = 2

# REML by Fisher scoring (see _reml_tau2). The tolerance is on the absolute change in tau2
# between iterations; 1e-10 is far below any reported precision yet reachable in double
# precision. Fisher scoring for this one-parameter likelihood normally converges in fewer than
# 20 steps, so hitting the cap signals a pathological input rather than slow progress.
REML_TOLERANCE = 1e-10
REML_MAX_ITERATIONS = 100

FloatArray = np.ndarray
Tau2Method = Literal["DL", "REML"]


@dataclass(frozen=True)
class PooledEstimate:
    """One pooled estimate with its heterogeneity statistics.

    ``i2`` is a percentage (0-100). ``tau2`` is 0.0 for the fixed-effect model, which assumes
    no between-study variance.
    """

    method: str
    k: int
    estimate: float
    se: float
    ci_low: float
    ci_high: float
    level: float
    z: float
    p: float
    q: float
    q_df: int
    q_p: float
    tau2: float
    i2: float
    h2: float


def checked_effects_and_variances(
    *,
    y: Sequence[float] | FloatArray,
    v: Sequence[float] | FloatArray,
    minimum_k: int,
    purpose: str,
) -> tuple[FloatArray, FloatArray]:
    """Validate per-study effects and sampling variances and return them as float arrays.

    ``purpose`` completes the sentence "<purpose> needs at least N usable results" in the
    error message (e.g. "pooling", "Egger's test").
    """
    effects = _inputs.finite_array(y, field="y")
    variances = _inputs.finite_array(v, field="v")
    if effects.ndim != 1 or variances.ndim != 1:
        raise StatsInputError(
            "effects (y) and variances (v) must be flat lists of numbers, one per study",
            field="y" if effects.ndim != 1 else "v",
        )
    if effects.shape != variances.shape:
        raise StatsInputError(
            f"effects (y) and variances (v) must have one entry per study each; got {effects.size} "
            f"effects and {variances.size} variances",
            field="v",
        )
    if np.any(variances <= 0):
        raise StatsInputError(
            "every sampling variance (v) must be greater than 0; a zero or negative variance "
            "usually means a standard error was entered as 0 or a variance was computed from a "
            "zero cell (add 0.5 to each cell of such a 2x2 table)",
            field="v",
        )
    if effects.size < minimum_k:
        raise StatsInputError(
            f"{purpose} needs at least {minimum_k} usable results; got {effects.size}",
            field="y",
        )
    return effects, variances


def fixed_effect(
    *,
    y: Sequence[float] | FloatArray,
    v: Sequence[float] | FloatArray,
    level: float = 0.95,
) -> PooledEstimate:
    """Inverse-variance fixed-effect (common-effect) pooled estimate."""
    effects, variances = checked_effects_and_variances(y=y, v=v, minimum_k=MIN_STUDIES_POOLING, purpose="pooling")
    critical_z = _critical_z(level)
    q, q_df = _cochran_q(effects, variances)
    i2 = 100.0 * max(0.0, (q - q_df) / q) if q > 0 else 0.0
    return _pooled(
        method="fixed-effect",
        effects=effects,
        total_variances=variances,
        tau2=0.0,
        q=q,
        q_df=q_df,
        i2=i2,
        h2=q / q_df,
        level=level,
        critical_z=critical_z,
    )


def random_effects(
    *,
    y: Sequence[float] | FloatArray,
    v: Sequence[float] | FloatArray,
    tau2_method: Tau2Method = "REML",
    level: float = 0.95,
) -> PooledEstimate:
    """Random-effects pooled estimate with tau2 by DerSimonian-Laird ("DL") or REML.

    DL: the method-of-moments estimator of DerSimonian & Laird (1986, Control Clin Trials 7:
    177), truncated at 0.

    REML: restricted maximum likelihood (one of the estimators compared by Viechtbauer 2005,
    J Educ Behav Stat 30: 261), found here by Fisher scoring from the DL value. Each step is
    ``tau2 += (sum(w**2 * (y - mu)**2) - tr(P)) / tr(P @ P)`` with w = 1 / (v + tau2), mu the
    weighted mean and P the REML projection matrix (its traces have the closed forms in
    _reml_tau2), truncated at 0. It stops when tau2 changes by less than REML_TOLERANCE and
    raises StatsInputError after REML_MAX_ITERATIONS steps without converging.
    """
    effects, variances = checked_effects_and_variances(y=y, v=v, minimum_k=MIN_STUDIES_POOLING, purpose="pooling")
    critical_z = _critical_z(level)
    if tau2_method == "DL":
        tau2, method = _dersimonian_laird_tau2(effects, variances), "DerSimonian-Laird"
    elif tau2_method == "REML":
        tau2, method = _reml_tau2(effects, variances), "REML"
    else:
        raise StatsInputError(
            f"tau2_method must be 'DL' (DerSimonian-Laird) or 'REML'; got {tau2_method!r}",
            field="tau2_method",
        )
    q, q_df = _cochran_q(effects, variances)
    typical_variance = _typical_within_study_variance(variances)
    return _pooled(
        method=method,
        effects=effects,
        total_variances=variances + tau2,
        tau2=tau2,
        q=q,
        q_df=q_df,
        i2=100.0 * tau2 / (tau2 + typical_variance),
        h2=(tau2 + typical_variance) / typical_variance,
        level=level,
        critical_z=critical_z,
    )


def _critical_z(level: float) -> float:
    return float(stats.norm.ppf(0.5 + _inputs.open_unit(level, field="level") / 2.0))


def _weighted_mean(effects: FloatArray, weights: FloatArray) -> float:
    return float(np.sum(weights * effects) / np.sum(weights))


def _cochran_q(effects: FloatArray, variances: FloatArray) -> tuple[float, int]:
    weights = 1.0 / variances
    mean = _weighted_mean(effects, weights)
    return float(np.sum(weights * (effects - mean) ** 2)), effects.size - 1


def _typical_within_study_variance(variances: FloatArray) -> float:
    weights = 1.0 / variances
    # Positive whenever k >= 2 because sum(w)**2 > sum(w**2) for positive weights.
    return float((variances.size - 1) * np.sum(weights) / (np.sum(weights) ** 2 - np.sum(weights**2)))


def _dersimonian_laird_tau2(effects: FloatArray, variances: FloatArray) -> float:
    weights = 1.0 / variances
    q, q_df = _cochran_q(effects, variances)
    scaling = np.sum(weights) - np.sum(weights**2) / np.sum(weights)
    return max(0.0, float((q - q_df) / scaling))


def _reml_tau2(effects: FloatArray, variances: FloatArray) -> float:
    tau2 = _dersimonian_laird_tau2(effects, variances)
    change = np.inf
    for _ in range(REML_MAX_ITERATIONS):
        weights = 1.0 / (variances + tau2)
        sum_w, sum_w2, sum_w3 = np.sum(weights), np.sum(weights**2), np.sum(weights**3)
        residuals = effects - _weighted_mean(effects, weights)
        # P = W - w w' / sum(w); P y = w * residuals, so y'PPy = sum(w**2 * residuals**2).
        trace_p = sum_w - sum_w2 / sum_w
        trace_pp = sum_w2 - 2.0 * sum_w3 / sum_w + (sum_w2 / sum_w) ** 2
        score_numerator = np.sum(weights**2 * residuals**2) - trace_p
        new_tau2 = max(0.0, float(tau2 + score_numerator / trace_pp))
        change = abs(new_tau2 - tau2)
        tau2 = new_tau2
        if change < REML_TOLERANCE:
            return tau2
    raise StatsInputError(
        f"the REML estimate of tau2 did not converge within {REML_MAX_ITERATIONS} Fisher-scoring "
        f"iterations (last change {change:.3g}, tolerance {REML_TOLERANCE:g}); check the effects "
        "and variances for data-entry errors, or use tau2_method='DL', which needs no iteration",
        field="tau2_method",
    )


def _pooled(
    *,
    method: str,
    effects: FloatArray,
    total_variances: FloatArray,
    tau2: float,
    q: float,
    q_df: int,
    i2: float,
    h2: float,
    level: float,
    critical_z: float,
) -> PooledEstimate:
    weights = 1.0 / total_variances
    estimate = _weighted_mean(effects, weights)
    se = float(1.0 / np.sqrt(np.sum(weights)))
    z = estimate / se
    return PooledEstimate(
        method=method,
        k=effects.size,
        estimate=estimate,
        se=se,
        ci_low=estimate - critical_z * se,
        ci_high=estimate + critical_z * se,
        level=float(level),
        z=z,
        p=float(2.0 * stats.norm.sf(abs(z))),
        q=q,
        q_df=q_df,
        q_p=float(stats.chi2.sf(q, q_df)),
        tau2=tau2,
        i2=i2,
        h2=h2,
    )
