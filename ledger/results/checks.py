"""Recompute each reported p-value from its statistic and judge whether the two agree.

The outcome of every check is sealed with the result, so a reader sees what Forebook found at
the moment of sealing, and whether the investigator confirmed a flagged value.
"""

from __future__ import annotations

from decimal import Decimal, InvalidOperation
from typing import Any

from ledger.stats.errors import StatsInputError
from ledger.stats.pvalues import p_consistency

# A one-sided test's p is the area in the predicted tail; a positive statistic means "increase".
PREDICTED_TAIL = {"increase": "upper", "decrease": "lower"}
# Verdicts that must be confirmed (or corrected) before the result can be sealed.
NEEDS_CONFIRMATION = frozenset({"inconsistent", "decision_changing"})
VERDICT_LABELS = {
    "consistent": "consistent",
    "inconsistent": "does not match the statistic",
    "decision_changing": "changes the significance decision",
    "not_checked": "could not be checked",
}


def reported_decimals(text: str) -> int | None:
    """How many decimals a number was typed with ("2.20" -> 2); None when it is not a number."""
    try:
        number = Decimal(text.strip().replace("−", "-"))
    except (InvalidOperation, AttributeError):
        return None
    if not number.is_finite():
        return None
    return max(-number.as_tuple().exponent, 0)


def row_p_check(row: dict[str, Any]) -> dict[str, Any] | None:
    """The check of one sealed-shape result row, or None when it reports no statistic or no p."""
    statistic = row.get("statistic")
    if not statistic or not row.get("p_reported") or statistic.get("value") is None:
        return None
    decimals = statistic.get("decimals")
    # Passed as the text it was typed as, so the explanation shows "2.20", not 2.2.
    value = statistic["value"] if decimals is None else f"{statistic['value']:.{decimals}f}"
    try:
        outcome = p_consistency(
            statistic_kind=statistic["kind"],
            value=value,
            df1=statistic.get("df1"),
            df2=statistic.get("df2"),
            n=row.get("n_analysed"),
            sides=row.get("sides") or "two",
            tail=PREDICTED_TAIL.get(row.get("direction"), "observed"),
            p_reported=row["p_reported"],
            alpha=row.get("alpha") or 0.05,
        )
    except StatsInputError as error:
        return {"row": row.get("key", ""), "verdict": "not_checked", "explanation": f"Not checked: {error}."}
    return {
        "row": row.get("key", ""),
        "verdict": outcome.verdict,
        "recomputed_p": outcome.recomputed_p,
        "recomputed_range": [outcome.recomputed_low, outcome.recomputed_high],
        "reported_interval": outcome.reported.describe(),
        "explanation": outcome.explanation,
    }


def checks_needing_confirmation(checks: list[dict[str, Any]]) -> list[dict[str, Any]]:
    return [check for check in checks if check["verdict"] in NEEDS_CONFIRMATION]
