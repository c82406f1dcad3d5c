"""Statistics engine: pure functions over numbers and numpy arrays (SciPy underneath).

Nothing here imports Django; every impossible input raises
:class:`ledger.stats.errors.StatsInputError` naming the offending argument.

* :mod:`ledger.stats.power`: a-priori power and sample size.
* :mod:`ledger.stats.pvalues`: p-values recomputed from statistics, reported-p parsing,
  consistency checks.
* :mod:`ledger.stats.effects`: effect sizes, variances, confidence intervals.
* :mod:`ledger.stats.multiplicity`: Bonferroni, Holm and Benjamini-Hochberg adjustment.
* :mod:`ledger.stats.discovery`: positive predictive value of a finding.
"""

from ledger.stats.errors import StatsInputError
from ledger.stats.power import PowerSolution, plan_power_summary
from ledger.stats.pvalues import p_consistency, p_from_statistic, parse_reported_p

__all__ = [
    "PowerSolution",
    "StatsInputError",
    "p_consistency",
    "p_from_statistic",
    "parse_reported_p",
    "plan_power_summary",
]
