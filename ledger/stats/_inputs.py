"""Input checks shared by the power, p-value, effect-size, multiplicity and discovery modules.

Every check raises :class:`StatsInputError` with ``field`` set to the argument's name and a
message that states what a valid value looks like, so a form can show it beside the input.
"""

from __future__ import annotations

import math
import numbers
from typing import Literal

import numpy as np

from ledger.stats.errors import StatsInputError

Sides = Literal["two", "one"]
SIDES: tuple[str, ...] = ("two", "one")


def real(value: object, *, field: str) -> float:
    """A finite real number. Booleans are refused: ``True`` as an alpha is a form bug, not 1.0."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise StatsInputError(f"{field} must be a number; got {value!r}", field=field)
    number = float(value)
    if not math.isfinite(number):
        raise StatsInputError(f"{field} must be a finite number; got {value!r}", field=field)
    return number


def open_unit(value: object, *, field: str) -> float:
    """A number strictly between 0 and 1 (alpha, power, a confidence level)."""
    number = real(value, field=field)
    if not 0.0 < number < 1.0:
        raise StatsInputError(f"{field} must be between 0 and 1 (exclusive); got {value!r}", field=field)
    return number


def positive(value: object, *, field: str) -> float:
    """A finite number above zero (degrees of freedom, odds, an allocation ratio)."""
    number = real(value, field=field)
    if number <= 0.0:
        raise StatsInputError(f"{field} must be greater than 0; got {value!r}", field=field)
    return number


def whole(value: object, *, field: str, minimum: int) -> int:
    """A whole number of at least ``minimum``; 12.0 is accepted as 12, 12.5 is not."""
    number = real(value, field=field)
    if not number.is_integer():
        raise StatsInputError(
            f"{field} must be a whole number (participants, groups or counts); got {value!r}",
            field=field,
        )
    if number < minimum:
        raise StatsInputError(f"{field} must be at least {minimum}; got {value!r}", field=field)
    return int(number)


def correlation(value: object, *, field: str) -> float:
    """A correlation with |r| < 1: at |r| = 1 Fisher's z and the t statistic diverge."""
    number = real(value, field=field)
    if not -1.0 < number < 1.0:
        raise StatsInputError(
            f"{field} must be a correlation between -1 and 1 (exclusive); got {value!r}",
            field=field,
        )
    return number


def sides(value: object) -> Sides:
    if value not in SIDES:
        raise StatsInputError(
            f'sides must be "two" (two-sided test) or "one" (one-sided test in the predicted direction); got {value!r}',
            field="sides",
        )
    return value  # type: ignore[return-value]


def finite_array(values: object, *, field: str) -> np.ndarray:
    """A float array with no NaN or infinity; scalars become 0-d arrays."""
    try:
        array = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise StatsInputError(f"{field} must be a number or an array of numbers; got {values!r}", field=field) from None
    if not np.all(np.isfinite(array)):
        raise StatsInputError(f"{field} must contain only finite numbers (no NaN or infinity)", field=field)
    return array
