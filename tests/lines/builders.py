"""Studies with sealed results for the research line tests, made through the services.

The numbers of each result are given by the test; the p-value and verdict sealed with them are
derived here so that the result agrees with itself and sealing needs no explanation.
"""

from __future__ import annotations

from scipy import stats

from ledger.labs.models import Membership
from ledger.plans.models import Study
from ledger.results import services as result_services
from tests.factories import reported_study, result_row

ALPHA = 0.05
NO_EFFECT = {"effect_kind": "", "effect_value": None, "ci_low": None, "ci_high": None}


def p_text(p: float) -> str:
    return f"{p:.4f}" if p >= 0.0001 else "< 0.0001"


def verdict_for(*, p: float, sign: float) -> str:
    if p >= ALPHA:
        return "null"
    return "supported" if sign > 0 else "opposite"


def t_row(*, t: float, n: int, sides: str = "two", **overrides) -> dict:
    """The primary row of a two-group t test on N participants. A one-sided p is the upper tail:
    the factory plan's hypothesis predicts an increase."""
    p = float(stats.t.sf(t, n - 2)) if sides == "one" else float(2 * stats.t.sf(abs(t), n - 2))
    return result_row(
        statistic_kind="t",
        statistic=t,
        df1=float(n - 2),
        n_analysed=n,
        sides=sides,
        p_reported=p_text(p),
        verdict=verdict_for(p=p, sign=t),
        **{**NO_EFFECT, **overrides},
    )


def counts_row(*, events_1: int, total_1: int, events_2: int, total_2: int, verdict: str = "null") -> dict:
    """A primary row reporting only a 2x2 table (no statistic), as a binary outcome might."""
    return result_row(
        test_family="chi_square",
        statistic_kind="",
        statistic=None,
        df1=None,
        p_reported="",
        n_analysed=total_1 + total_2,
        verdict=verdict,
        events_1=events_1,
        total_1=total_1,
        events_2=events_2,
        total_2=total_2,
        **NO_EFFECT,
    )


def study_with_result(
    *,
    member: Membership,
    row: dict,
    published: bool | None = None,
    title: str = "A study on the line",
    content: dict | None = None,
) -> Study:
    """A reported study whose primary result is ``row``; ``published`` True links a DOI, False
    records "not submitted", None records no publication status at all. ``content`` is the plan
    (the factory's complete plan by default)."""
    study = reported_study(member=member, rows=[row], title=title, content=content)
    if published is True:
        result_services.publication_link_add(
            member=member, study=study, status="published", doi=f"10.5555/forebook.{study.code.lower()}"
        )
    elif published is False:
        result_services.publication_link_add(member=member, study=study, status="not_submitted")
    return study
