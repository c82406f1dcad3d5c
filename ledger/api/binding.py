"""JSON request bodies bound to the same Django forms the pages use, and those forms described as JSON Schema.

A result row sent by a script is validated by ``ResultRowForm`` exactly as a row typed on the
result page (through ``ResultEditor``, the page's own binding of rows and report), so the API
and the page accept and refuse the same things with the same messages. The OpenAPI document
describes each object from the same form fields, so the document cannot drift from the forms.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

from django import forms
from django.forms.forms import NON_FIELD_ERRORS

from ledger.api.errors import FieldProblems
from ledger.results.forms import (
    FindingExplanationForm,
    PublicationForm,
    ResultEditor,
    ResultReportForm,
    ResultRowForm,
    ResultRowFormSet,
)

MAX_ROWS = ResultRowFormSet.max_num
EXPLANATION_MAX_LENGTH = FindingExplanationForm.base_fields["explanation"].max_length
# Fields whose choices come from the study's sealed plan (hypothesis and outcome keys).
PLAN_KEY_FIELDS = frozenset({"hypothesis", "outcome"})


def _form_value(value: Any) -> str:
    """The text a browser would have sent for this JSON scalar.

    Decimal numbers arrive as ``Decimal`` (ledger.api.parsers), whose text keeps the digits as
    sent: 2.10 stays "2.10". A checkbox reads "true"/"false" like a browser's "on"/absent.
    """
    if isinstance(value, bool):
        return "true" if value else "false"
    return str(value)


def _form_data(
    value: Any, *, fields: Iterable[str], prefix: str, path: str, problems: dict[str, list[str]]
) -> dict[str, str]:
    """One JSON object as form data; unknown names and non-scalar values go to ``problems``."""
    known = list(fields)
    if not isinstance(value, dict):
        problems[path or "body"] = [f"Send {path or 'the body'} as a JSON object with the fields {', '.join(known)}."]
        return {}
    data = {}
    for name, item in value.items():
        where = f"{path}.{name}" if path else str(name)
        if name not in known:
            problems[where] = [f"Unknown field {name!r}: check its spelling; the fields are {', '.join(known)}."]
        elif isinstance(item, dict | list):
            problems[where] = ["Send a number, text, true/false or null here, not a list or an object."]
        elif item is not None:
            data[f"{prefix}-{name}" if prefix else name] = _form_value(item)
    return data


def _form_problems(form: forms.BaseForm, *, path: str, problems: dict[str, list[str]]) -> None:
    for name, errors in form.errors.items():
        where = path if name == NON_FIELD_ERRORS else (f"{path}.{name}" if path else name)
        problems.setdefault(where or "body", []).extend(errors)


@dataclass(frozen=True)
class ResultSubmission:
    """Cleaned rows and report, as ``ResultEditor`` gives them to the page's view, and the explanations."""

    rows: list[dict[str, Any]]
    report: dict[str, Any]
    explanations: dict[str, str]

    @property
    def confirm_checks(self) -> bool:
        return bool(self.report.get("confirm_checks"))


RESULT_BODY_FIELDS = ("rows", "report", "explanations")


def result_submission(*, plan: dict[str, Any], body: Any) -> ResultSubmission:
    """Validate a result body against the study's sealed plan, or raise FieldProblems with every problem."""
    problems: dict[str, list[str]] = {}
    if not isinstance(body, dict):
        raise FieldProblems({"body": ['Send a JSON object: {"rows": [...], "report": {...}, "explanations": {...}}.']})
    for name in body.keys() - set(RESULT_BODY_FIELDS):
        problems[str(name)] = [f"Unknown field {name!r}; the body has {', '.join(RESULT_BODY_FIELDS)}."]
    rows = body.get("rows")
    if not isinstance(rows, list) or not 1 <= len(rows) <= MAX_ROWS:
        problems["rows"] = [
            f"Send rows as a list of 1 to {MAX_ROWS} result rows. A null result is a result: "
            "report it with its verdict."
        ]
        rows = []
    explanations = _explanations(body.get("explanations"), problems)
    # The page's editor names its form prefixes; read them rather than repeat them.
    unbound = ResultEditor(plan=plan)
    rows_prefix, report_prefix = unbound.rows.prefix, unbound.report.prefix
    data = {f"{rows_prefix}-TOTAL_FORMS": str(len(rows)), f"{rows_prefix}-INITIAL_FORMS": str(len(rows))}
    row_fields = list(ResultRowForm.base_fields)
    for index, row in enumerate(rows):
        prefix = f"{rows_prefix}-{index}"
        data.update(_form_data(row, fields=row_fields, prefix=prefix, path=f"rows[{index}]", problems=problems))
    report = body.get("report")
    if report is None:
        problems["report"] = ["Send the report object; at least stopping_rule_followed and exclusions_as_planned."]
    else:
        data.update(
            _form_data(
                report, fields=ResultReportForm.base_fields, prefix=report_prefix, path="report", problems=problems
            )
        )
    # Every row counts as submitted (INITIAL_FORMS = TOTAL_FORMS), so no row is skipped as "unchanged".
    editor = ResultEditor(plan=plan, data=data)
    if not editor.is_valid() or problems:
        for index, form in enumerate(editor.rows.forms):
            _form_problems(form, path=f"rows[{index}]", problems=problems)
        if rows:
            problems.setdefault("rows", []).extend(editor.rows.non_form_errors())
        # A missing or malformed report is already named; its form's "required" messages would only repeat it.
        if isinstance(report, dict):
            _form_problems(editor.report, path="report", problems=problems)
        raise FieldProblems({where: messages for where, messages in problems.items() if messages})
    return ResultSubmission(rows=editor.cleaned_rows(), report=editor.report.cleaned_data, explanations=explanations)


def _explanations(value: Any, problems: dict[str, list[str]]) -> dict[str, str]:
    if value is None:
        return {}
    if not isinstance(value, dict) or not all(
        isinstance(text, str) and len(text) <= EXPLANATION_MAX_LENGTH for text in value.values()
    ):
        problems["explanations"] = [
            'Send explanations as an object from finding identity to text, like {"DIRECTION_CHANGED:R1": "The '
            f'plan had a typo."}}, each at most {EXPLANATION_MAX_LENGTH} characters.'
        ]
        return {}
    return value


def publication_data(*, body: Any) -> dict[str, Any]:
    """A publication body validated by the page's PublicationForm; its cleaned data."""
    problems: dict[str, list[str]] = {}
    form = PublicationForm(
        data=_form_data(body, fields=PublicationForm.base_fields, prefix="", path="", problems=problems)
    )
    if not form.is_valid() or problems:
        _form_problems(form, path="", problems=problems)
        raise FieldProblems(problems, message="The publication status needs attention; nothing was sealed.")
    return form.cleaned_data


# --- the same forms, described for the OpenAPI document ----------------------------------------------------


def field_schema(*, name: str, field: forms.Field) -> dict[str, Any]:
    """JSON Schema (OpenAPI 3.0 dialect) of what a form field accepts from a script."""
    schema: dict[str, Any]
    nullable = not field.required
    if isinstance(field, forms.BooleanField):
        schema = {"type": "boolean"}
    elif isinstance(field, forms.ChoiceField) and name not in PLAN_KEY_FIELDS:
        # A required choice refuses the blank "— choose —" option, so the schema leaves it out too.
        values: list[Any] = [str(value) for value, _label in field.choices if value != "" or not field.required]
        schema = {"type": "string", "enum": values + ([None] if nullable else [])}
    elif isinstance(field, forms.FloatField | forms.IntegerField):
        # FloatField subclasses IntegerField in Django: ask for it first.
        number: dict[str, Any] = {"type": "number" if isinstance(field, forms.FloatField) else "integer"}
        if getattr(field, "min_value", None) is not None:
            number["minimum"] = field.min_value
        if getattr(field, "max_value", None) is not None:
            number["maximum"] = field.max_value
        # OpenAPI 3.0's nullable applies only beside a type, so it goes on the number branch.
        if nullable:
            number["nullable"] = True
        # Text is accepted too: "2.10" keeps its trailing zero through any JSON library.
        schema = {"anyOf": [number, {"type": "string", "maxLength": 40}]}
        nullable = False
    elif isinstance(field, forms.CharField | forms.ChoiceField):
        schema = {"type": "string"}
        if getattr(field, "max_length", None):
            schema["maxLength"] = field.max_length
    else:
        raise TypeError(f"No JSON Schema for {type(field).__name__}; add a case to ledger.api.binding.field_schema.")
    schema["description"] = str(field.label or name.replace("_", " ").capitalize())
    if name in PLAN_KEY_FIELDS:
        schema["description"] += ": a key of the sealed plan (H1, O2 …)"
    if nullable:
        schema["nullable"] = True
    return schema


def form_schema(*, form_class: type[forms.BaseForm]) -> dict[str, Any]:
    fields = form_class.base_fields
    return {
        "type": "object",
        "additionalProperties": False,
        "properties": {name: field_schema(name=name, field=field) for name, field in fields.items()},
        "required": [name for name, field in fields.items() if field.required],
    }


def result_body_schema() -> dict[str, Any]:
    return {
        "type": "object",
        "additionalProperties": False,
        "required": ["rows", "report"],
        "properties": {
            "rows": {
                "type": "array",
                "minItems": 1,
                "maxItems": MAX_ROWS,
                "items": form_schema(form_class=ResultRowForm),
            },
            "report": form_schema(form_class=ResultReportForm),
            "explanations": {
                "type": "object",
                "description": "A written explanation per finding identity (CODE:subject), sealed with the result.",
                "additionalProperties": {"type": "string", "maxLength": EXPLANATION_MAX_LENGTH},
            },
        },
    }


def publication_body_schema() -> dict[str, Any]:
    return form_schema(form_class=PublicationForm)
