"""Plan-versus-report comparison: the deviation rules over sealed plan and result payloads.

Pure functions over plain values (no Django, no database): ``compare`` returns every
:class:`Finding` for a plan, its result (or None) and a :class:`ComparisonContext`; ``RULES`` lists
every rule with its code, severity and description for the report and the study page.
"""

from ledger.compare.context import AmendmentSeal, ComparisonContext
from ledger.compare.findings import STUDY_SUBJECT, Finding, Severity
from ledger.compare.rules import RULES, RULES_BY_CODE, Rule, compare, findings_needing_explanation, results_due_on

__all__ = [
    "RULES",
    "RULES_BY_CODE",
    "STUDY_SUBJECT",
    "AmendmentSeal",
    "ComparisonContext",
    "Finding",
    "Rule",
    "Severity",
    "compare",
    "findings_needing_explanation",
    "results_due_on",
]
