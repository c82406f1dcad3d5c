"""The report page's parameters (a GET form) and the request for a report file (the same, plus a format)."""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

from django import forms
from django.core.exceptions import ValidationError
from django.utils.http import urlencode

from ledger.reports.models import ReportFormat
from ledger.reports.selectors import DEFAULT_PRIOR_ODDS
from ledger.reports.services import report_parameters_problem


class PriorOddsField(forms.Field):
    """Pre-study odds that a tested hypothesis is true, typed as "true:false" (1:4) or one number (0.25)."""

    widget = forms.TextInput

    def to_python(self, value: Any) -> float | None:
        text = str(value if value is not None else "").strip()
        if not text:
            return None
        try:
            if ":" in text:
                true_part, false_part = text.split(":", 1)
                odds = float(true_part) / float(false_part)
            else:
                odds = float(text)
        except (ValueError, ZeroDivisionError):
            raise ValidationError(
                f"Write the prior odds as true:false, such as 1:4, or as one number such as 0.25; “{text}” is neither.",
                code="invalid",
            ) from None
        if not math.isfinite(odds) or odds <= 0:
            raise ValidationError(
                f"The prior odds must be a positive, finite number (1:1, 1:4, 0.25 ...); “{text}” is not.",
                code="range",
            )
        return odds


class ReportForm(forms.Form):
    sealed_from = forms.DateField(
        label="First sealed from",
        required=False,
        widget=forms.DateInput(attrs={"type": "date"}),
        help_text="Empty: from the lab's first registration.",
    )
    sealed_to = forms.DateField(
        label="First sealed up to",
        required=False,
        widget=forms.DateInput(attrs={"type": "date"}),
        help_text="Inclusive. Empty: up to today.",
    )
    prior_odds = PriorOddsField(
        label="Prior odds that a tested hypothesis is true",
        required=False,
        initial="1:1",
        help_text="true : false, e.g. 1:4 when one in five of the hypotheses the lab tests is true. Default 1:1.",
    )

    def clean(self) -> dict[str, Any]:
        cleaned = super().clean()
        if self.errors:
            return cleaned
        problem = report_parameters_problem(**self.parameters())
        if problem is not None:
            field, message = problem
            self.add_error(field, message)
        return cleaned

    def parameters(self) -> dict[str, Any]:
        """The report's inputs from the cleaned data, with the defaults for what was left empty."""
        data = getattr(self, "cleaned_data", {})
        odds = data.get("prior_odds")
        return {
            "sealed_from": data.get("sealed_from"),
            "sealed_to": data.get("sealed_to"),
            "prior_odds": DEFAULT_PRIOR_ODDS if odds is None else odds,
        }


def report_query(*, sealed_from: dt.date | None, sealed_to: dt.date | None, prior_odds: float) -> str:
    """The query string ("?..." or "") that reproduces a report: for its chart URLs and its files' page."""
    query = {}
    if sealed_from is not None:
        query["sealed_from"] = sealed_from.isoformat()
    if sealed_to is not None:
        query["sealed_to"] = sealed_to.isoformat()
    if prior_odds != DEFAULT_PRIOR_ODDS:
        # str() of a float reads back as the same float, so a chart shows exactly this report.
        query["prior_odds"] = str(prior_odds)
    return f"?{urlencode(query)}" if query else ""


class ReportExportForm(ReportForm):
    file_format = forms.ChoiceField(choices=ReportFormat.choices)
