"""The plain facts the deviation rules need besides the sealed plan and result payloads.

They come from the ledger (seal times, the recorded collection start), the calendar (today) and
the lab's settings (tolerances). The caller gathers them; the rules never query anything.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

# How far N analysed may stray from the planned N, in percent of the planned N, before it is a
# finding. Common practice, no source: a small shortfall from attrition is usual and not a
# deviation worth flagging.
DEFAULT_SAMPLE_SIZE_TOLERANCE_PERCENT = 10.0
# Months after the expected completion date before missing results count as overdue. After the
# common clinical-trial reporting rule that summary results are due within 12 months of primary
# completion (the US FDAAA 801 requirement, 42 CFR 11.44).
DEFAULT_OVERDUE_GRACE_MONTHS = 12


def check_whole_months(value: object, *, field: str) -> None:
    if isinstance(value, bool) or not isinstance(value, int) or value < 0:
        raise ValueError(f"{field} must be a whole number of months, 0 or more; got {value!r}")


@dataclass(frozen=True, kw_only=True)
class AmendmentSeal:
    """When an amendment was sealed; ``version`` is its plan version number (2, 3 ...)."""

    version: int
    sealed_at: dt.datetime


@dataclass(frozen=True, kw_only=True)
class ComparisonContext:
    """Everything besides the payloads that decides a finding.

    Date comparisons use calendar dates: ``first_sealed_at.date()`` and each
    ``sealed_at.date()`` are taken in the time zone the datetimes carry, so pass them in the zone
    the collection start date was recorded in (the lab's local time).
    """

    today: dt.date
    first_sealed_at: dt.datetime
    # The recorded start of data collection (the COLLECTION_STARTED entry), None before it.
    collection_started_on: dt.date | None = None
    amendments: tuple[AmendmentSeal, ...] = ()
    result_exists: bool = False
    sample_size_tolerance_percent: float = DEFAULT_SAMPLE_SIZE_TOLERANCE_PERCENT
    overdue_grace_months: int = DEFAULT_OVERDUE_GRACE_MONTHS

    def __post_init__(self) -> None:
        tolerance = self.sample_size_tolerance_percent
        if isinstance(tolerance, bool) or not isinstance(tolerance, int | float) or not 0 <= tolerance <= 100:
            raise ValueError(
                "sample_size_tolerance_percent must be a number from 0 to 100 (percent of the "
                f"planned N); got {tolerance!r}"
            )
        check_whole_months(self.overdue_grace_months, field="overdue_grace_months")
        if not isinstance(self.amendments, tuple):
            raise ValueError(
                "amendments must be a tuple of AmendmentSeal (use () when there are none); "
                f"got {type(self.amendments).__name__}"
            )
