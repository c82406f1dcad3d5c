"""The file drawer, simulated end to end through the services.

Every study tests a true effect of exactly zero with a preregistered one-sided t test for an
increase at alpha = .05; only the significant results are published. The published-only pooled
estimate must then sit well above zero while the whole record's estimate covers zero.

Size: the published studies are the 5 % false positives, so a seed needs about 100 studies for
a handful of them (the expected count is 5; P(at least 2) = 0.96 per seed, binomial); 30 studies
would publish 1.5 on average, too few to pool. Three seeds of 100 studies take about 20 s on
SQLite and 35 s on PostgreSQL (five would pass a minute there). Tolerance: at most one seed of
three may miss each property. With coverage near 95 % per seed, P(at least 2 of 3 covering) =
0.99; the bias property fails in a seed essentially only when fewer than 2 results are published,
P(at least 2 of 3) = 0.99. The seeds are fixed, so the test is deterministic; those probabilities
are why it is not fragile.
"""

from __future__ import annotations

import numpy as np
import pytest

from ledger.lines import services
from ledger.lines.selectors import line_analysis
from tests.factories import complete_plan
from tests.lines.builders import study_with_result, t_row

pytestmark = pytest.mark.django_db

SEEDS = (1, 2, 3)
STUDIES_PER_SEED = 100
GROUP_SIZES = (10, 60)  # per group, uniform: the studies differ in precision, as a funnel needs
ONE_SIDED_CRITICAL_P = 0.05


def directional_plan() -> dict:
    """The factory plan with its hypothesis (an increase) registered as a one-sided test."""
    plan = complete_plan()
    plan["hypotheses"][0]["sides"] = "one"
    plan["sample_size"]["sides"] = "one"
    return plan


def file_drawer_line(*, member, seed: int):
    rng = np.random.default_rng(seed)
    plan = directional_plan()
    studies = []
    for index in range(STUDIES_PER_SEED):
        n = 2 * int(rng.integers(GROUP_SIZES[0], GROUP_SIZES[1] + 1))
        # Under no effect, the two-sample t statistic follows Student's t with N - 2 df exactly.
        t = round(float(rng.standard_t(n - 2)), 2)
        row = t_row(t=t, n=n, sides="one")
        significant = row["verdict"] == "supported"
        # Unpublished studies either say so in the ledger or say nothing: both count as unpublished.
        published = True if significant else (False if index % 3 == 0 else None)
        studies.append(study_with_result(member=member, row=row, published=published, content=plan))
    return services.line_create(member=member, name=f"No effect, seed {seed}", measure="smd", studies=studies)


def test_publishing_only_significant_results_inflates_a_null_effect(investigator):
    outcomes = []
    for seed in SEEDS:
        diagnostics = line_analysis(line=file_drawer_line(member=investigator, seed=seed)).diagnostics
        whole, published = diagnostics.all_results.random.value, diagnostics.published_only.random.value
        assert diagnostics.all_results.k == STUDIES_PER_SEED
        outcomes.append(
            {
                "covers_zero": whole.ci_low <= 0.0 <= whole.ci_high,
                "inflated": published is not None and published.ci_low > 0.0 and published.estimate > whole.estimate,
                "headline": diagnostics.headline.verdict,
            }
        )
    assert sum(outcome["covers_zero"] for outcome in outcomes) >= len(SEEDS) - 1, outcomes
    assert sum(outcome["inflated"] for outcome in outcomes) >= len(SEEDS) - 1, outcomes
    assert sum(outcome["headline"] == "overstates" for outcome in outcomes) >= len(SEEDS) - 1, outcomes
