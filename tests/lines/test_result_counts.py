"""The optional 2x2 counts of a result row: all four or none, sealed as ``counts`` only when given,
so rows without a table keep exactly the shape they had before."""

from __future__ import annotations

import json

import pytest

from ledger.results.content import row_payload
from ledger.results.forms import ResultEditor, ResultRowForm
from ledger.results.models import ResultReport
from tests.factories import complete_plan, reported_study, result_row

OUTCOMES = [("O1", "O1"), ("O2", "O2")]


def row_form(**overrides) -> ResultRowForm:
    data = {name: "" if value is None else str(value) for name, value in result_row().items()}
    data.update({name: str(value) for name, value in overrides.items()})
    return ResultRowForm(data=data, hypothesis_choices=[("H1", "H1")], outcome_choices=OUTCOMES)


def test_a_row_without_counts_is_valid_and_seals_no_counts_key():
    form = row_form()
    assert form.is_valid(), form.errors
    assert "counts" not in row_payload(form.cleaned_data, plan=complete_plan(), key="R1")


def test_all_four_counts_are_sealed_together():
    form = row_form(events_1=4, total_1=50, events_2=0, total_2=52)
    assert form.is_valid(), form.errors
    row = row_payload(form.cleaned_data, plan=complete_plan(), key="R1")
    assert row["counts"] == {"events_1": 4, "total_1": 50, "events_2": 0, "total_2": 52}


def test_some_counts_without_the_others_are_refused_on_the_missing_fields():
    form = row_form(events_1=4, total_1=50)
    assert not form.is_valid()
    assert set(form.errors) == {"events_2", "total_2"}
    assert "all four numbers of the 2x2 table" in form.errors["total_2"][0]


@pytest.mark.parametrize(
    ("overrides", "field", "message"),
    [
        ({"events_1": 51, "total_1": 50, "events_2": 3, "total_2": 50}, "events_1", "cannot have 51 events"),
        ({"events_1": -1, "total_1": 50, "events_2": 3, "total_2": 50}, "events_1", "cannot be negative"),
        ({"events_1": 1, "total_1": 0, "events_2": 3, "total_2": 50}, "total_1", "positive whole number"),
        ({"events_1": 1.5, "total_1": 10, "events_2": 3, "total_2": 50}, "events_1", "whole number"),
    ],
)
def test_impossible_counts_say_what_to_fix(overrides, field, message):
    form = row_form(**overrides)
    assert not form.is_valid()
    assert message in " ".join(form.errors[field])


@pytest.mark.django_db
def test_counts_reach_the_sealed_result_entry(investigator):
    study = reported_study(member=investigator, rows=[result_row(events_1=7, total_1=64, events_2=15, total_2=64)])
    payload = json.loads(ResultReport.objects.get(study=study).entry.payload)
    assert payload["rows"][0]["counts"] == {"events_1": 7, "total_1": 64, "events_2": 15, "total_2": 64}


def test_the_result_page_offers_the_count_fields():
    editor = ResultEditor(plan=complete_plan())
    assert {"events_1", "total_1", "events_2", "total_2"} <= set(editor.rows.forms[0].fields)
