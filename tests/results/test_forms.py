"""Result forms: malformed numbers, p-values, N, df, confidence limits and DOIs, each on its field."""
from __future__ import annotations

import pytest

from ledger.core.fields import ProbabilityField
from ledger.results.content import UNPLANNED
from ledger.results.forms import PublicationForm, ResultReportForm, ResultRowForm
from tests.factories import result_row

NOT_FINITE = "Enter a finite number: NaN and infinity cannot be sealed."
DF_MESSAGE = "Degrees of freedom must be greater than 0."
DOI_MESSAGE = "A DOI starts with 10., then a number, a slash and a suffix, like 10.1000/xyz123."


def row_form(**overrides) -> ResultRowForm:
    """A ResultRowForm bound to the factory's null-result row, with some fields typed differently."""
    data = {name: "" if value is None else str(value) for name, value in result_row().items()}
    data.update(overrides)
    form = ResultRowForm(
        data=data,
        hypothesis_choices=[("H1", "H1 · The hum increases estimation error.")],
        outcome_choices=[("O1", "O1 · Estimation error (primary)"), ("O2", "O2 · Confidence (secondary)")],
    )
    form.is_valid()
    return form


def test_the_factory_row_is_valid_and_cleans_back_to_itself():
    form = row_form()
    assert form.errors == {}
    assert {name: form.cleaned_data[name] for name in result_row()} == result_row()


# --- p as reported -------------------------------------------------------------------------------------


@pytest.mark.parametrize("typed", ["1.5", "2", "p = 1.2"])
def test_a_reported_p_above_1_is_refused(typed):
    [message] = row_form(p_reported=typed).errors["p_reported"]
    assert "between 0 and 1" in message and typed in message


@pytest.mark.parametrize("typed", ["-0.2", "p = -.01"])
def test_a_negative_reported_p_is_refused_with_examples_of_what_works(typed):
    [message] = row_form(p_reported=typed).errors["p_reported"]
    assert typed in message and '"p<.001"' in message


@pytest.mark.parametrize("typed", ["p > 1", "< 0"])
def test_a_reported_p_that_describes_no_possible_value_is_refused(typed):
    [message] = row_form(p_reported=typed).errors["p_reported"]
    assert "describes no possible p-value" in message


@pytest.mark.parametrize("typed", ["0", "1", "0.40", "p = .4", "< .001", "n.s.", ""])
def test_reported_p_in_0_1_as_papers_write_it_is_accepted(typed):
    form = row_form(p_reported=typed, statistic_kind="", statistic="", df1="")
    assert form.errors == {}
    assert form.cleaned_data["p_reported"] == typed


# --- probabilities: alpha (open interval) and p-values (closed interval) -----------------------------


@pytest.mark.parametrize("typed", ["0", "1", "1.5", "-0.01"])
def test_a_rows_alpha_lies_strictly_between_0_and_1(typed):
    [message] = row_form(alpha=typed).errors["alpha"]
    assert f"{float(typed):g} is outside that range" in message


@pytest.mark.parametrize("typed", ["-0.01", "1.01", "5"])
def test_an_inclusive_probability_field_refuses_values_outside_0_1(typed):
    field = ProbabilityField(inclusive=True)
    with pytest.raises(Exception) as refusal:
        field.clean(typed)
    assert refusal.value.messages == [f"A p-value lies between 0 and 1; {float(typed):g} is outside that range."]


@pytest.mark.parametrize(("typed", "value"), [("0", 0.0), ("1", 1.0), ("0.049", 0.049)])
def test_an_inclusive_probability_field_accepts_its_endpoints(typed, value):
    assert ProbabilityField(inclusive=True).clean(typed) == value


# --- N analysed ----------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        ("0", "N must be a positive whole number (1 or more)."),
        ("-3", "N must be a positive whole number (1 or more)."),
        ("2.5", "N must be a whole number of participants, not a fraction."),
        ("abc", "Enter a whole number of participants, such as 120."),
        ("", "This field is required."),
    ],
)
def test_n_analysed_must_be_a_positive_whole_number(typed, message):
    assert row_form(n_analysed=typed).errors == {"n_analysed": [message]}


# --- degrees of freedom and the statistic ------------------------------------------------------------


@pytest.mark.parametrize("field", ["df1", "df2"])
@pytest.mark.parametrize("typed", ["0", "-1", "-0.5"])
def test_degrees_of_freedom_must_be_positive(field, typed):
    form = row_form(**{"statistic_kind": "F", "statistic": "4.1", "df1": "2", "df2": "60", field: typed})
    assert DF_MESSAGE in form.errors[field]
    assert list(form.errors) == [field]


def test_fractional_degrees_of_freedom_are_accepted_for_welch_tests():
    form = row_form(df1="57.3")
    assert form.errors == {}
    assert form.cleaned_data["df1"] == 57.3


@pytest.mark.parametrize("field", ["statistic", "df1", "effect_value", "ci_low", "ci_high"])
@pytest.mark.parametrize("typed", ["nan", "inf", "-Infinity"])
def test_numbers_must_be_finite(field, typed):
    errors = row_form(**{field: typed}).errors
    assert NOT_FINITE in errors[field]
    assert list(errors) == [field]


@pytest.mark.parametrize(
    ("form", "field"),
    [
        pytest.param(lambda: row_form(statistic="nan"), "statistic", id="statistic"),
        pytest.param(lambda: row_form(df1="inf"), "df1", id="df1"),
        pytest.param(lambda: row_form(ci_low="-Infinity"), "ci_low", id="ci_low"),
        pytest.param(lambda: row_form(ci_high="nan"), "ci_high", id="ci_high"),
        pytest.param(lambda: publication_form("published", "10.123/xyz"), "doi", id="doi"),
    ],
)
def test_a_field_that_failed_its_own_check_gets_only_that_message(form, field):
    assert len(form().errors[field]) == 1


@pytest.mark.parametrize(
    ("fields", "field", "message"),
    [
        ({"statistic_kind": "t", "df1": ""}, "df1", "A t statistic needs its degrees of freedom."),
        ({"statistic_kind": "F", "df1": "2", "df2": ""}, "df2",
         "An F statistic needs the denominator degrees of freedom too."),
        ({"statistic_kind": "t", "statistic": ""}, "statistic",
         "Enter the value of the statistic, or choose “none” as the statistic."),
        ({"statistic_kind": "r", "statistic": "1.2", "df1": ""}, "statistic",
         "A correlation lies strictly between -1 and 1."),
        ({"ci_low": "0.6", "ci_high": "0.1"}, "ci_high", "The upper confidence limit is below the lower one."),
        ({"effect_value": "0.9"}, "effect_value", "The effect lies outside its own confidence interval."),
        ({"ci_high": ""}, "ci_high", "Give both confidence limits, or neither."),
        ({"ci_low": ""}, "ci_low", "Give both confidence limits, or neither."),
        ({"outcome": UNPLANNED, "outcome_name": ""}, "outcome_name", "Name the outcome that was not in the plan."),
    ],
    ids=["t-without-df", "F-without-df2", "kind-without-value", "r-outside-1", "ci-reversed", "effect-outside-ci",
         "ci-high-missing", "ci-low-missing", "unplanned-outcome-unnamed"],
)
def test_row_consistency_messages_land_on_the_field_to_fix(fields, field, message):
    assert row_form(**fields).errors == {field: [message]}


def test_a_null_verdict_needs_nothing_a_positive_one_does_not():
    null, supported = row_form(verdict="null"), row_form(verdict="supported")
    assert null.errors == supported.errors == {}
    assert set(null.cleaned_data) == set(supported.cleaned_data)


# --- the report questions ------------------------------------------------------------------------------


def report_form(**fields: str) -> ResultReportForm:
    form = ResultReportForm(data={"stopping_rule_followed": "yes", "exclusions_as_planned": "yes", **fields})
    form.is_valid()
    return form


def test_answers_as_planned_are_booleans():
    form = report_form(stopping_rule_followed="no", stopping_note="Stopped early: the lab flooded.")
    assert form.errors == {}
    assert (form.cleaned_data["stopping_rule_followed"], form.cleaned_data["exclusions_as_planned"]) == (False, True)


@pytest.mark.parametrize(
    ("fields", "field", "message"),
    [
        ({"stopping_rule_followed": "no"}, "stopping_note", "Say how data collection actually stopped."),
        ({"exclusions_as_planned": "no"}, "exclusions_applied",
         "Describe the exclusion rules that were actually applied."),
        ({"stopping_rule_followed": "maybe"}, "stopping_rule_followed", None),
    ],
)
def test_a_departure_from_the_plan_must_be_described(fields, field, message):
    errors = report_form(**fields).errors
    assert list(errors) == [field]
    if message is not None:
        assert errors[field] == [message]


# --- publication: DOI ----------------------------------------------------------------------------------


def publication_form(status: str, doi: str) -> PublicationForm:
    form = PublicationForm(data={"status": status, "doi": doi})
    form.is_valid()
    return form


# DOI Handbook, section 2.2 (Syntax): a DOI is a prefix and a suffix separated by "/"; the prefix
# is the directory indicator "10." followed by a registrant code, which may be subdivided with
# further "."; DOI names are case-insensitive. Forebook requires a registrant code of at least four
# digits (10.NNNN), as the owners specified. 10.1000 is the prefix of the Handbook's own examples.
@pytest.mark.parametrize(
    ("typed", "kept"),
    [
        ("10.1000/xyz123", "10.1000/xyz123"),
        ("10.1000.10/123456", "10.1000.10/123456"),
        ("https://doi.org/10.1000/xyz123", "10.1000/xyz123"),
        ("HTTPS://DOI.ORG/10.1000/XYZ123", "10.1000/XYZ123"),
        ("https://dx.doi.org/10.1000/xyz123", "10.1000/xyz123"),
        ("doi:10.1000/xyz123", "10.1000/xyz123"),
        ("  10.99999/lab.note-7(2)  ", "10.99999/lab.note-7(2)"),
    ],
)
def test_well_formed_dois_are_accepted_and_resolver_prefixes_dropped(typed, kept):
    form = publication_form("published", typed)
    assert form.errors == {}
    assert form.cleaned_data["doi"] == kept


@pytest.mark.parametrize(
    "typed",
    ["11.1000/xyz123", "10.123/xyz123", "10.1000", "10.1000/", "10.ABCD/xyz", "doi.org/10.1000/xyz", "xyz123",
     "10.1000/has space"],
)
def test_malformed_dois_are_refused(typed):
    errors = publication_form("published", typed).errors
    assert DOI_MESSAGE in errors["doi"]
    assert list(errors) == ["doi"]


def test_published_needs_a_doi():
    assert publication_form("published", "").errors == {
        "doi": ["Give the DOI of the publication, like 10.1000/xyz123."]
    }


def test_not_submitted_needs_no_doi():
    assert publication_form("not_submitted", "").errors == {}


def test_an_unknown_publication_status_is_refused():
    assert list(publication_form("rumoured", "").errors) == ["status"]
