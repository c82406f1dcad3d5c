"""Template helpers: state and verdict badges (words and a symbol, never colour alone), labels."""

from django import template
from django.utils.html import format_html

from ledger.plans.models import StudyState
from ledger.plans.vocabulary import (
    Allocation,
    Blinding,
    Direction,
    Multiplicity,
    OutcomeRole,
    PowerDesign,
    Sides,
    TestFamily,
)
from ledger.results.models import Verdict
from ledger.results.vocabulary import EffectKind, StatisticKind

register = template.Library()

STATE_SYMBOLS = {
    StudyState.DRAFT: "✎",
    StudyState.SEALED: "◆",
    StudyState.COLLECTING: "▶",
    StudyState.REPORTED: "✔",
    StudyState.WITHDRAWN: "⊘",
}
VERDICT_SYMBOLS = {
    Verdict.SUPPORTED: "▲",
    Verdict.NULL: "○",
    Verdict.OPPOSITE: "▼",
    Verdict.INCONCLUSIVE: "?",
}
VOCABULARIES = {
    "allocation": Allocation,
    "blinding": Blinding,
    "direction": Direction,
    "multiplicity": Multiplicity,
    "role": OutcomeRole,
    "power_design": PowerDesign,
    "sides": Sides,
    "test_family": TestFamily,
    "verdict": Verdict,
    "statistic": StatisticKind,
    "effect": EffectKind,
    "state": StudyState,
}


@register.simple_tag
def state_badge(state: str):
    label = StudyState(state).label if state in StudyState.values else state
    return format_html(
        '<span class="badge state-{}"><span aria-hidden="true">{}</span> {}</span>',
        state,
        STATE_SYMBOLS.get(state, "•"),
        label,
    )


@register.simple_tag
def verdict_badge(verdict: str):
    label = Verdict(verdict).label if verdict in Verdict.values else verdict
    return format_html(
        '<span class="badge verdict-{}"><span aria-hidden="true">{}</span> {}</span>',
        verdict,
        VERDICT_SYMBOLS.get(verdict, "•"),
        label,
    )


SEVERITY_SYMBOLS = {"major": "‼", "minor": "!", "note": "i"}
SEVERITY_LABELS = {"major": "Major", "minor": "Minor", "note": "Note"}


@register.simple_tag
def severity_badge(severity: str):
    return format_html(
        '<span class="badge severity-{}"><span aria-hidden="true">{}</span> {}</span>',
        severity,
        SEVERITY_SYMBOLS.get(severity, "•"),
        SEVERITY_LABELS.get(severity, severity),
    )


@register.filter
def label(value, vocabulary: str):
    """The human label of a stored vocabulary value: {{ row.direction|label:"direction" }}."""
    choices = VOCABULARIES[vocabulary]
    if value in (None, ""):
        return "—"
    return choices(value).label if value in choices.values else value


@register.filter
def short_hash(value: str, length: int = 12) -> str:
    return (value or "")[:length]


@register.filter
def percent(value, digits: int = 0):
    if value is None:
        return "—"
    return f"{value * 100:.{digits}f} %"


@register.filter
def get_item(mapping, key):
    return mapping.get(key) if mapping else None


# The fields that best name a list item, in order of preference.
SUMMARY_FIELDS = ("statement", "name", "outcome_name", "outcome", "hypothesis")


@register.filter
def item_summary(form, length: int = 90) -> str:
    """A one-line name for a folded list item: its statement or name as currently entered."""
    for name in SUMMARY_FIELDS:
        if name in form.fields:
            value = form[name].value()
            if value:
                text = " ".join(str(value).split())
                text = text if len(text) <= length else text[: length - 1] + "…"
                if "role" in form.fields and form["role"].value() == "primary":
                    text += " · primary"
                return text
    return ""
