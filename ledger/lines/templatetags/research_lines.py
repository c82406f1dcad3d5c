"""Template helpers for the research line pages."""

from django import template

from ledger.lines.readings import format_p

register = template.Library()


@register.filter
def p_value(p: float | None) -> str:
    """ "p = .044" or "p < .001", as the readings print it."""
    return "—" if p is None else format_p(p)
