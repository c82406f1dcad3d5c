"""Recompute p-values from reported test statistics and check them against the reported p.

Three layers:

* :func:`p_from_statistic` turns a statistic and its degrees of freedom into a p-value. It is
  vectorised: ``value`` and the degrees of freedom may be numpy arrays that broadcast together.
* :func:`parse_reported_p` reads how an author wrote a p-value ("p = .031", "p < .001",
  "n.s." ...) into the interval of true p-values consistent with that text.
* :func:`p_consistency` combines the two, allowing for rounding of the statistic, and gives a
  verdict.

Sidedness: for t, z and r a two-sided p counts both tails; a one-sided p is the tail in the
direction of the observed statistic, i.e. it assumes the result went the predicted way, as a
reported one-sided p almost always does (a result against the prediction would have p = 1 minus
that). F and chi-square tests are non-directional: their p is always the upper tail and
``sides`` must be ``"two"``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from typing import Literal

import numpy as np
from scipy import stats

from ledger.stats import _inputs
from ledger.stats._inputs import Sides
from ledger.stats.errors import StatsInputError

StatisticKind = Literal["t", "F", "chi2", "z", "r"]
Tail = Literal["observed", "upper", "lower"]
TAILS: tuple[str, ...] = ("observed", "upper", "lower")
STATISTIC_KINDS: tuple[str, ...] = ("t", "F", "chi2", "z", "r")
Verdict = Literal["consistent", "inconsistent", "decision_changing"]

_ACCEPTED_P_FORMS = (
    '"0.03", ".03", "p = .031", "p<.001", "< 0.001", "p > .05", "p ≤ .01", "1.2e-5", "1.2 \u00d7 10^-5", "n.s.", "ns"'
)


# --- p from a statistic ---------------------------------------------------------------------------


def _degrees(value: object, *, field: str, minimum: float = 0.0) -> np.ndarray:
    if value is None:
        raise StatsInputError(f"{field} is required for this statistic", field=field)
    array = _inputs.finite_array(value, field=field)
    if np.any(array <= minimum):
        raise StatsInputError(f"{field} must be greater than {minimum:g}; got {value!r}", field=field)
    return array


def _scalar_or_array(array: np.ndarray, *inputs: object) -> float | np.ndarray:
    return float(array) if all(np.ndim(item) == 0 for item in inputs) else array


def p_from_statistic(
    *,
    kind: StatisticKind,
    value: float | np.ndarray,
    df1: float | np.ndarray | None = None,
    df2: float | np.ndarray | None = None,
    n: int | np.ndarray | None = None,
    sides: Sides = "two",
    tail: Tail = "observed",
) -> float | np.ndarray:
    """The p-value of a reported statistic.

    ``tail`` matters only for a one-sided t, z or r: ``"observed"`` takes the tail the statistic
    fell in (the smaller p); ``"upper"`` or ``"lower"`` take the tail the test predicted, so a
    statistic on the wrong side gets its large one-sided p (t = -2 tested for an increase gives
    p near .97, not .03).

    * ``"t"``: t with ``df1`` degrees of freedom (fractional df, as from Welch's test, are fine).
    * ``"F"``: F(``df1``, ``df2``), upper tail.
    * ``"chi2"``: chi-square with ``df1`` degrees of freedom, upper tail.
    * ``"z"``: standard normal.
    * ``"r"``: Pearson's r from ``n`` pairs, tested through t = r sqrt((n - 2) / (1 - r^2)) with
      n - 2 df.

    Returns a float when every input is a scalar, otherwise an array of the broadcast shape.
    """
    if kind not in STATISTIC_KINDS:
        raise StatsInputError(f"kind must be one of {', '.join(STATISTIC_KINDS)}; got {kind!r}", field="kind")
    sides = _inputs.sides(sides)
    statistic = _inputs.finite_array(value, field="value")
    if kind in ("F", "chi2"):
        if sides != "two":
            raise StatsInputError(
                f"a {kind} test has no one-sided p (its p is the upper tail); use "
                'sides="two", or report a directional 1-df test as t or z with its sign',
                field="sides",
            )
        if np.any(statistic < 0):
            raise StatsInputError(f"a {kind} statistic cannot be negative; got {value!r}", field="value")
        if kind == "F":
            p = stats.f.sf(statistic, _degrees(df1, field="df1"), _degrees(df2, field="df2"))
        else:
            p = stats.chi2.sf(statistic, _degrees(df1, field="df1"))
        return _scalar_or_array(np.asarray(p, dtype=float), value, df1, df2)
    if tail not in TAILS:
        raise StatsInputError(f"tail must be one of {', '.join(TAILS)}; got {tail!r}", field="tail")
    # The statistic measured towards the tail whose area is the p-value.
    if sides == "two" or tail == "observed":
        towards = np.abs(statistic)
    else:
        towards = statistic if tail == "upper" else -statistic
    if kind == "z":
        area = stats.norm.sf(towards)
    elif kind == "t":
        area = stats.t.sf(towards, _degrees(df1, field="df1"))
    else:
        if np.any(np.abs(statistic) >= 1):
            raise StatsInputError(f"r must lie between -1 and 1 (exclusive); got {value!r}", field="value")
        pairs = _degrees(n, field="n", minimum=2)
        t_statistic = towards * np.sqrt((pairs - 2) / (1 - statistic**2))
        area = stats.t.sf(t_statistic, pairs - 2)
    p = 2 * area if sides == "two" else area
    return _scalar_or_array(np.asarray(p, dtype=float), value, df1, n)


# --- reading a reported p -------------------------------------------------------------------------

_MINUS_SIGN = "\u2212"
_RELATIONS = {
    "=": "=",
    "==": "=",
    "<": "<",
    ">": ">",
    "<=": "<=",
    "≤": "<=",
    "⩽": "<=",
    ">=": ">=",
    "≥": ">=",
    "⩾": ">=",
}
_NUMBER = r"(?:\d+(?:\.\d*)?|\.\d+)"
# "1.2e-5" or "1.2 x 10^-5"; the re module reads \u00d7 as the multiplication sign papers print.
# The typographic minus sign is replaced by "-" before matching.
_EXPONENT = r"(?:e\s*(?P<e>[-+]?\d+)|\s*[x\u00d7*]\s*10\s*\^?\s*(?P<pow>[-+]?\d+))"
_P_PATTERN = re.compile(
    r"^(?:p(?:\s*-?\s*value)?\s*)?"
    r"(?P<relation>==|<=|>=|=|<|>|≤|≥|⩽|⩾)?\s*"
    rf"(?P<mantissa>{_NUMBER})\s*{_EXPONENT}?$",
    re.IGNORECASE,
)
_NOT_SIGNIFICANT = re.compile(r"^(?:n\.?\s*s\.?|not\s+significant)$", re.IGNORECASE)


@dataclass(frozen=True)
class ReportedP:
    """The interval of true p-values consistent with a reported p.

    ``relation`` is one of ``"="``, ``"<"``, ``"<="``, ``">"``, ``">="`` or ``"ns"``;
    ``stated`` is the number as written and ``decimals`` the number of decimal places it was
    written to (counting the exponent: "1.2e-5" has 6). Only ``"="`` carries rounding: a value
    written to k decimals stands for every p that rounds half-up to it, so "p = .03" means
    0.025 <= p < 0.035. Inequalities are taken literally, and "n.s." means p >= alpha.
    """

    text: str
    relation: str
    stated: float | None
    decimals: int | None
    lower: float
    upper: float
    lower_closed: bool
    upper_closed: bool

    def contains(self, p: float) -> bool:
        above_lower = p >= self.lower if self.lower_closed else p > self.lower
        below_upper = p <= self.upper if self.upper_closed else p < self.upper
        return above_lower and below_upper

    def below(self, alpha: float) -> bool:
        """Every p in the interval is below alpha (the report says: significant)."""
        return self.upper < alpha or (self.upper == alpha and not self.upper_closed)

    def at_or_above(self, alpha: float) -> bool:
        """Every p in the interval is at least alpha (the report says: not significant)."""
        return self.lower >= alpha

    def describe(self) -> str:
        low = "[" if self.lower_closed else "("
        high = "]" if self.upper_closed else ")"
        return f"{low}{self.lower:.6g}, {self.upper:.6g}{high}"


def _unparseable(text: object) -> StatsInputError:
    return StatsInputError(
        f"cannot read {text!r} as a p-value; write it like one of {_ACCEPTED_P_FORMS}",
        field="p_reported",
    )


def parse_reported_p(*, text: str, alpha: float = 0.05) -> ReportedP:
    """Read a reported p-value into the interval of p-values consistent with it.

    ``alpha`` gives "n.s." its meaning (p >= alpha). Raises :class:`StatsInputError` with
    ``field="p_reported"`` for text it cannot read or a number outside [0, 1].
    """
    alpha = _inputs.open_unit(alpha, field="alpha")
    if not isinstance(text, str):
        raise _unparseable(text)
    cleaned = text.strip().replace(_MINUS_SIGN, "-")
    if _NOT_SIGNIFICANT.match(cleaned):
        return ReportedP(text, "ns", None, None, alpha, 1.0, True, True)
    match = _P_PATTERN.match(cleaned)
    if match is None:
        raise _unparseable(text)
    exponent = match["e"] or match["pow"]
    written = match["mantissa"] + (f"e{exponent}" if exponent else "")
    try:
        number = Decimal(written)
    except InvalidOperation:
        raise _unparseable(text) from None
    if number > 1:
        raise StatsInputError(f"a p-value lies between 0 and 1; {text!r} is above 1", field="p_reported")
    stated = float(number)
    relation = _RELATIONS[match["relation"]] if match["relation"] else "="
    if (relation == "<" and stated == 0.0) or (relation == ">" and stated == 1.0):
        raise StatsInputError(
            f"{text!r} describes no possible p-value (p lies between 0 and 1); check the report",
            field="p_reported",
        )
    last_digit = number.as_tuple().exponent
    decimals = max(0, -last_digit)  # type: ignore[operator]
    if relation == "=":
        half_unit = Decimal(1).scaleb(last_digit) / 2  # type: ignore[arg-type]
        lower = max(Decimal(0), number - half_unit)
        upper = number + half_unit
        # Exact Decimal arithmetic keeps .035 from turning into 0.034999999...
        if upper >= 1:
            return ReportedP(text, relation, stated, decimals, float(lower), 1.0, True, True)
        return ReportedP(text, relation, stated, decimals, float(lower), float(upper), True, False)
    if relation in ("<", "<="):
        return ReportedP(text, relation, stated, decimals, 0.0, stated, True, relation == "<=")
    return ReportedP(text, relation, stated, decimals, stated, 1.0, relation == ">=", True)


# --- consistency of a reported p with its statistic -----------------------------------------------


@dataclass(frozen=True)
class PConsistency:
    """Outcome of :func:`p_consistency`.

    ``recomputed_p`` is the p of the statistic as given; ``recomputed_low`` and
    ``recomputed_high`` bound the p of every statistic that rounds to the reported one.
    """

    statistic_kind: str
    value: float
    decimals: int | None
    sides: str
    alpha: float
    recomputed_p: float
    recomputed_low: float
    recomputed_high: float
    reported: ReportedP
    verdict: Verdict
    explanation: str


def _statistic_and_decimals(value: object, decimals: object) -> tuple[float, int | None]:
    if isinstance(value, str):
        if decimals is not None:
            raise StatsInputError(
                "give decimals only with a numeric value; a statistic given as text already "
                "shows how many decimals were reported",
                field="decimals",
            )
        written = value.strip().replace(_MINUS_SIGN, "-")
        try:
            number = Decimal(written)
        except InvalidOperation:
            raise StatsInputError(
                f'value must be a number such as "2.20" or "-4.06"; got {value!r}',
                field="value",
            ) from None
        if not number.is_finite():
            raise StatsInputError("value must be a finite number", field="value")
        # Negative for a statistic written in powers of ten ("1.2e3" is rounded to hundreds).
        return float(number), -number.as_tuple().exponent  # type: ignore[operator]
    number = _inputs.real(value, field="value")
    if decimals is None:
        return number, None
    return number, _inputs.whole(decimals, field="decimals", minimum=0)


def _rounding_range(kind: str, value: float, decimals: int | None) -> tuple[float, float]:
    """Smallest and largest |statistic| that round to ``value`` (both ``|value|`` if exact).

    p falls as |statistic| grows for every kind here (F and chi-square are non-negative), so
    these two ends give the largest and the smallest p.
    """
    if decimals is None:
        return abs(value), abs(value)
    half_unit = 0.5 * 10.0**-decimals
    low, high = value - half_unit, value + half_unit
    smallest = 0.0 if low <= 0.0 <= high else min(abs(low), abs(high))
    largest = max(abs(low), abs(high))
    if kind == "r":
        # A rounded r of .995 could stand for .9954; keep the far end inside (-1, 1).
        largest = min(largest, math.nextafter(1.0, 0.0))
    return smallest, largest


def _signed_rounding_ends(kind: str, value: float, decimals: int | None) -> tuple[float, float]:
    """The smallest and largest signed statistic that round to ``value``."""
    if decimals is None:
        return value, value
    half_unit = 0.5 * 10.0**-decimals
    low, high = value - half_unit, value + half_unit
    if kind == "r":
        bound = math.nextafter(1.0, 0.0)
        low, high = max(low, -bound), min(high, bound)
    return low, high


def p_consistency(
    *,
    statistic_kind: StatisticKind,
    value: float | str,
    df1: float | None = None,
    df2: float | None = None,
    n: int | None = None,
    sides: Sides = "two",
    p_reported: str,
    alpha: float = 0.05,
    decimals: int | None = None,
    tail: Tail = "observed",
) -> PConsistency:
    """Check a reported p against the p recomputed from its statistic.

    ``tail`` is passed on to :func:`p_from_statistic`: give the predicted tail for a one-sided
    test, so that a statistic on the wrong side is checked against its large p.

    Rule: the statistic stands for every value that rounds to it. Given as text ("2.20") or
    with ``decimals``, a statistic reported to k decimals covers value +/- 0.5 * 10^-k, and
    the recomputed p covers the p-values over that range; a number without ``decimals`` is taken
    as exact. Degrees of freedom are taken as exact. The reported p covers the interval of
    :func:`parse_reported_p`. Then:

    * ``"consistent"``: the two ranges overlap.
    * ``"decision_changing"``: they do not overlap, the reported p lies wholly on one side of
      alpha and the recomputed range wholly on the other (a report of p < .05 whose statistic
      gives p = .08, or the reverse).
    * ``"inconsistent"``: they do not overlap, but the significance decision is the same or
      cannot be told (a reported "p = .05" straddles alpha = .05).
    """
    alpha = _inputs.open_unit(alpha, field="alpha")
    statistic, decimals = _statistic_and_decimals(value, decimals)
    reported = parse_reported_p(text=p_reported, alpha=alpha)

    def p_of(statistic_value: float) -> float:
        return float(
            p_from_statistic(kind=statistic_kind, value=statistic_value, df1=df1, df2=df2, n=n, sides=sides, tail=tail)
        )

    recomputed = p_of(statistic)  # validates the statistic, its df, the sides and the tail
    if sides == "one" and tail != "observed" and statistic_kind in ("t", "z", "r"):
        # p is monotone in the signed statistic: the two ends of its rounding give the p range.
        ends = [p_of(end) for end in _signed_rounding_ends(statistic_kind, statistic, decimals)]
        low, high = min(ends), max(ends)
    else:
        smallest, largest = _rounding_range(statistic_kind, statistic, decimals)
        low, high = p_of(largest), p_of(smallest)
    above_lower = high >= reported.lower if reported.lower_closed else high > reported.lower
    below_upper = low <= reported.upper if reported.upper_closed else low < reported.upper
    recomputed_below = high < alpha
    recomputed_at_or_above = low >= alpha
    if above_lower and below_upper:
        verdict: Verdict = "consistent"
    elif (reported.below(alpha) and recomputed_at_or_above) or (reported.at_or_above(alpha) and recomputed_below):
        verdict = "decision_changing"
    else:
        verdict = "inconsistent"

    if statistic_kind in ("F", "chi2"):
        tails = "upper-tail"
    elif sides == "one" and tail != "observed":
        tails = f"one-sided ({tail}-tail)"
    else:
        tails = f"{sides}-sided"
    shown = value if isinstance(value, str) else f"{statistic:g}"
    span = "" if low == high else f" (from {low:.4g} to {high:.4g} allowing for its rounding)"
    findings = {
        "consistent": "which agrees with the reported",
        "inconsistent": "which does not match the reported",
        "decision_changing": f"which falls on the other side of alpha = {alpha:g} from the reported",
    }
    explanation = (
        f"The {tails} p recomputed from {statistic_kind} = {shown} is {recomputed:.4g}{span}, "
        f"{findings[verdict]} {reported.text.strip()!r} {reported.describe()}."
    )
    return PConsistency(
        statistic_kind=statistic_kind,
        value=statistic,
        decimals=decimals,
        sides=sides,
        alpha=alpha,
        recomputed_p=recomputed,
        recomputed_low=low,
        recomputed_high=high,
        reported=reported,
        verdict=verdict,
        explanation=explanation,
    )
