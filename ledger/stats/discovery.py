"""Positive predictive value of a claimed finding (Ioannidis 2005, PLoS Med 2(8): e124).

R is the pre-study odds that a probed relationship is true, 1 - beta the power and alpha the
type I error rate. Without bias

    PPV = (1 - beta) R / (R - beta R + alpha),

and with a share u of analyses that would not have been findings turned into findings by bias

    PPV = ([1 - beta] R + u beta R) / (R + alpha - beta R + u - u alpha + u beta R).

With u = 0 the second formula reduces to the first. The same arithmetic gives the predictive
value of a positive diagnostic test: prevalence odds for R, sensitivity for the power and the
false-positive rate for alpha.
"""

from __future__ import annotations

from ledger.stats import _inputs
from ledger.stats.errors import StatsInputError


def positive_predictive_value(*, power: float, pre_study_odds: float, alpha: float = 0.05, bias: float = 0.0) -> float:
    """PPV of a statistically significant finding; ``bias`` is Ioannidis' u, in [0, 1]."""
    sensitivity = _inputs.open_unit(power, field="power")
    odds = _inputs.positive(pre_study_odds, field="pre_study_odds")
    level = _inputs.open_unit(alpha, field="alpha")
    u = _inputs.real(bias, field="bias")
    if not 0.0 <= u <= 1.0:
        raise StatsInputError(
            f"bias (Ioannidis' u) is a proportion between 0 and 1 (inclusive); got {bias!r}",
            field="bias",
        )
    beta = 1.0 - sensitivity
    true_findings = sensitivity * odds + u * beta * odds
    all_findings = odds + level - beta * odds + u - u * level + u * beta * odds
    return true_findings / all_findings
