"""What a deviation rule reports: a Finding, and how serious it is.

A finding's identity is ``code`` plus ``subject`` (a plan or result key such as "O1", "H2", "R3",
"v2", or "study"). Both are derived from the sealed payloads only, never from list positions or
wording, so recomputing the findings of the same plan and result yields the same identities and a
sealed explanation keeps pointing at its finding.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass, field
from typing import Any

# The subject of findings about the study as a whole (dates, stopping rule, exclusions).
STUDY_SUBJECT = "study"


class Severity(enum.StrEnum):
    """How far a finding undermines what the plan was registered to protect.

    * ``major``: the confirmatory claim no longer rests on the registered plan (a switched
      primary outcome, a plan sealed after data collection began, a verdict the numbers
      contradict). Every major finding needs a written explanation.
    * ``minor``: a departure from the plan that readers should see but that does not by itself
      make the registered analysis untrustworthy.
    * ``note``: worth knowing, but not a deviation (for example a stricter alpha than registered).
    """

    NOTE = "note"
    MINOR = "minor"
    MAJOR = "major"

    @property
    def rank(self) -> int:
        """Higher is more serious; for sorting a list of findings."""
        return _RANK[self]


_RANK = {Severity.NOTE: 0, Severity.MINOR: 1, Severity.MAJOR: 2}


@dataclass(frozen=True, kw_only=True)
class Finding:
    """One difference between a sealed plan and what was reported (or not reported in time).

    ``evidence`` holds plain JSON values: the planned and the reported value under ``planned``
    and ``reported`` where the rule compares two values, and the keys of the row, hypothesis or
    outcome concerned under ``row``, ``hypothesis`` and ``outcome``.
    """

    code: str
    severity: Severity
    subject: str
    message: str
    evidence: dict[str, Any] = field(default_factory=dict)
    explanation_required: bool = False

    @property
    def identity(self) -> str:
        """Stable across recomputation; the key a written explanation is attached to."""
        return f"{self.code}:{self.subject}"

    def as_dict(self) -> dict[str, Any]:
        """A JSON-ready copy (plain str severity), for sealing into a ledger payload."""
        return {
            "code": self.code,
            "severity": self.severity.value,
            "subject": self.subject,
            "message": self.message,
            "evidence": self.evidence,
            "explanation_required": self.explanation_required,
        }
