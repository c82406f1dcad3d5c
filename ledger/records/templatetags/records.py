"""The study page's "Signed record" panel, without the study view having to know about records."""

from django import template

from ledger.records.selectors import recent_record_exports

register = template.Library()


@register.inclusion_tag("records/_export_panel.html", takes_context=True)
def record_export_panel(context):
    study, member = context["study"], context["member"]
    return {
        "study": study,
        "lab": context["lab"],
        "exports": recent_record_exports(member=member, study=study),
        "csrf_token": context.get("csrf_token"),
    }
