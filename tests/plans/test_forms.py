"""Plan forms: every malformed input is refused with a message on its own field.

A draft may be incomplete, but whatever is entered must be well-formed before it is kept.
"""
from __future__ import annotations

import pytest
from django.urls import reverse

from ledger.plans.forms import HypothesisForm, InvestigatorForm, OutcomeForm, PlanEditor, PlanForm
from ledger.plans.models import PlanDraft
from tests.factories import complete_plan, enrolled_study

NOT_FINITE = "Enter a finite number: NaN and infinity cannot be sealed."
NOT_A_PROBABILITY = "between 0 and 1"
# ORCID's documented examples ("Structure of the ORCID Identifier", ORCID support documentation,
# https://support.orcid.org/hc/en-us/articles/360006897674): the last character is an ISO/IEC 7064
# MOD 11-2 check character, "X" standing for 10.
ORCID_VALID = "0000-0002-1825-0097"
ORCID_VALID_WITH_X = "0000-0002-1694-233X"
ORCID_WRONG_CHECK_DIGIT = "0000-0002-1825-0098"


def plan_post_data(content: dict) -> dict[str, str]:
    """The plan editor's POST body for ``content``, field names as the page sends them."""
    sample_size, design, dates = content["sample_size"], content["design"], content["dates"]
    plan = {
        "title": content["title"], "research_question": content["research_question"],
        "arms": design["arms"], "allocation": design["allocation"], "blinding": design["blinding"],
        "planned_n": sample_size["planned_n"], "stopping_rule": sample_size["stopping_rule"],
        "power_design": sample_size["power_design"], "effect_size": sample_size["effect_size"],
        "ss_alpha": sample_size["alpha"], "target_power": sample_size["target_power"], "ss_sides": sample_size["sides"],
        "groups": sample_size["groups"], "chi_df": sample_size["chi_df"], "justification": sample_size["justification"],
        "exclusion_rules": content["exclusion_rules"], "support_criterion": content["support_criterion"],
        **dates,
    }
    data = {f"plan-{name}": "" if value is None else str(value) for name, value in plan.items()}
    for prefix in ("outcomes", "hypotheses", "investigators"):
        rows = content[prefix]
        data[f"{prefix}-TOTAL_FORMS"] = str(len(rows))
        data[f"{prefix}-INITIAL_FORMS"] = "0"
        for index, row in enumerate(rows):
            data.update(
                {f"{prefix}-{index}-{name}": "" if value is None else str(value) for name, value in row.items()}
            )
    return data


def plan_form(**fields: str) -> PlanForm:
    form = PlanForm(data={"title": "A title", **fields})
    form.is_valid()
    return form


def hypothesis_form(**fields: str) -> HypothesisForm:
    data = {"statement": "The hum increases error.", "direction": "increase", "outcome": "O1", "alpha": "0.05",
            "sides": "two", "multiplicity": "none", **fields}
    form = HypothesisForm(data=data, outcome_choices=[("O1", "O1 · Estimation error")])
    form.is_valid()
    return form


# --- PlanForm -----------------------------------------------------------------------------------------


def test_a_draft_may_be_saved_with_only_a_title():
    assert plan_form().errors == {}


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        ("0", "N must be a positive whole number (1 or more)."),
        ("-3", "N must be a positive whole number (1 or more)."),
        ("2.5", "N must be a whole number of participants, not a fraction."),
        ("abc", "Enter a whole number of participants, such as 120."),
    ],
)
def test_planned_n_must_be_a_positive_whole_number(typed, message):
    assert plan_form(planned_n=typed).errors == {"planned_n": [message]}


@pytest.mark.parametrize(("typed", "value"), [("120", 120), ("120.0", 120), (" 7 ", 7)])
def test_planned_n_accepts_whole_numbers(typed, value):
    form = plan_form(planned_n=typed)
    assert form.errors == {}
    assert form.cleaned_data["planned_n"] == value


@pytest.mark.parametrize("typed", ["nan", "NaN", "inf", "-Infinity", "+inf", "1e999"])
def test_effect_size_must_be_finite(typed):
    assert plan_form(effect_size=typed).errors == {"effect_size": [NOT_FINITE]}


@pytest.mark.parametrize("field", ["ss_alpha", "target_power"])
@pytest.mark.parametrize("typed", ["0", "1", "1.5", "-0.05"])
def test_alpha_and_power_lie_strictly_between_0_and_1(field, typed):
    [message] = plan_form(**{field: typed}).errors[field]
    assert NOT_A_PROBABILITY in message
    assert f"{float(typed):g} is outside that range" in message, "the message repeats what was typed"


@pytest.mark.parametrize("field", ["ss_alpha", "target_power"])
@pytest.mark.parametrize("typed", ["nan", "inf", "-Infinity"])
def test_alpha_and_power_must_be_finite(field, typed):
    assert plan_form(**{field: typed}).errors == {field: [NOT_FINITE]}


def test_completion_before_the_start_of_collection_is_refused_on_the_completion_date():
    form = plan_form(collection_start="2031-05-01", completion="2031-04-30")
    assert form.errors == {
        "completion": ["The expected completion date is before the planned start of data collection."]
    }


def test_completion_on_the_start_day_is_accepted():
    assert plan_form(collection_start="2031-05-01", completion="2031-05-01").errors == {}


# --- HypothesisForm and OutcomeForm ----------------------------------------------------------------


@pytest.mark.parametrize("typed", ["0", "1", "1.5"])
def test_a_hypothesis_alpha_outside_0_1_is_refused(typed):
    [message] = hypothesis_form(alpha=typed).errors["alpha"]
    assert NOT_A_PROBABILITY in message


@pytest.mark.parametrize("typed", ["nan", "inf", "-Infinity"])
def test_a_hypothesis_alpha_must_be_finite(typed):
    assert hypothesis_form(alpha=typed).errors == {"alpha": [NOT_FINITE]}


def test_a_hypothesis_must_be_tested_on_an_outcome_of_the_plan():
    assert list(hypothesis_form(outcome="O7").errors) == ["outcome"]


def test_other_test_needs_a_description():
    assert hypothesis_form(test_family="other").errors == {
        "test_description": ["Describe the test when you choose “Other”."]
    }


@pytest.mark.parametrize(("typed", "kept"), [("h2", "H2"), (" H12 ", "H12"), ("", "")])
def test_hypothesis_keys_are_normalised(typed, kept):
    form = hypothesis_form(key=typed)
    assert form.errors == {}
    assert form.cleaned_data["key"] == kept


@pytest.mark.parametrize("typed", ["H0", "O1", "H1a", "X"])
def test_a_malformed_hypothesis_key_is_refused(typed):
    assert hypothesis_form(key=typed).errors == {"key": ["Keys look like H1, H2 …"]}


@pytest.mark.parametrize(
    ("fields", "field"),
    [({"key": "H1"}, "key"), ({"name": ""}, "name"), ({"role": "tertiary"}, "role")],
    ids=["key-of-a-hypothesis", "no-name", "unknown-role"],
)
def test_outcome_form_refusals(fields, field):
    form = OutcomeForm(data={"key": "O1", "name": "Estimation error", "role": "primary", **fields})
    assert list(form.errors) == [field]


# --- InvestigatorForm: ORCID iD ---------------------------------------------------------------------


@pytest.mark.parametrize(
    ("typed", "kept"),
    [
        (ORCID_VALID, ORCID_VALID),
        (ORCID_VALID_WITH_X, ORCID_VALID_WITH_X),
        (ORCID_VALID_WITH_X.lower(), ORCID_VALID_WITH_X),
        (f"  {ORCID_VALID} ", ORCID_VALID),
        ("", ""),
    ],
)
def test_valid_orcid_ids_are_accepted(typed, kept):
    form = InvestigatorForm(data={"name": "Given Family", "orcid": typed})
    assert form.errors == {}
    assert form.cleaned_data["orcid"] == kept


def test_an_orcid_id_with_a_wrong_check_digit_is_refused():
    form = InvestigatorForm(data={"name": "Given Family", "orcid": ORCID_WRONG_CHECK_DIGIT})
    [message] = form.errors["orcid"]
    assert "check digit" in message and "ISO 7064 MOD 11-2" in message


@pytest.mark.parametrize("typed", ["0000-0002-1825-009", "0000000218250097", "0000-0002-1825-009Y", "https://orcid.org/x"])
def test_a_malformed_orcid_id_is_refused_with_the_expected_shape(typed):
    form = InvestigatorForm(data={"name": "Given Family", "orcid": typed})
    [message] = form.errors["orcid"]
    assert "0000-0002-1825-0097" in message


# --- PlanEditor: the form and its three lists together ---------------------------------------------


def test_the_editor_turns_its_post_body_back_into_the_same_plan():
    content = complete_plan()
    editor = PlanEditor(data=plan_post_data(content))
    assert editor.is_valid()
    assert editor.content() == content


def test_the_editor_numbers_new_rows_after_the_highest_key():
    content = complete_plan()
    content["hypotheses"].append({**content["hypotheses"][0], "key": "", "statement": "A second hypothesis."})
    editor = PlanEditor(data=plan_post_data(content))
    assert editor.is_valid()
    assert [h["key"] for h in editor.content()["hypotheses"]] == ["H1", "H2"]


def test_the_editor_refuses_a_bad_orcid_on_that_investigator_row():
    content = complete_plan()
    content["investigators"] = [
        {"name": "Good", "orcid": ORCID_VALID},
        {"name": "Bad", "orcid": ORCID_WRONG_CHECK_DIGIT},
    ]
    editor = PlanEditor(data=plan_post_data(content))
    assert not editor.is_valid()
    assert editor.investigators.forms[0].errors == {}
    assert list(editor.investigators.forms[1].errors) == ["orcid"]


def test_the_editor_refuses_two_rows_with_one_key():
    content = complete_plan()
    content["hypotheses"].append({**content["hypotheses"][0], "statement": "Same key again."})
    editor = PlanEditor(data=plan_post_data(content))
    assert not editor.is_valid()
    assert editor.hypotheses.non_form_errors() == ["Two items share the key H1; reload the page and try again."]


def test_a_hypothesis_may_not_point_at_a_removed_outcome():
    content = complete_plan()
    content["hypotheses"][0]["outcome"] = "O2"
    data = plan_post_data(content)
    data["outcomes-1-DELETE"] = "on"
    editor = PlanEditor(data=data)
    assert not editor.is_valid()
    assert list(editor.hypotheses.forms[0].errors) == ["outcome"]


def test_the_editor_reports_errors_in_every_part_at_once():
    content = complete_plan()
    data = plan_post_data(content)
    data.update({"plan-planned_n": "2.5", "outcomes-0-name": "", "hypotheses-0-alpha": "nan",
                 "investigators-0-orcid": ORCID_WRONG_CHECK_DIGIT})
    editor = PlanEditor(data=data)
    assert not editor.is_valid()
    assert list(editor.plan.errors) == ["planned_n"]
    assert list(editor.outcomes.forms[0].errors) == ["name"]
    assert editor.hypotheses.forms[0].errors == {"alpha": [NOT_FINITE]}
    assert list(editor.investigators.forms[0].errors) == ["orcid"]


# --- through the view -------------------------------------------------------------------------------


@pytest.mark.django_db
def test_posting_a_bad_orcid_to_the_plan_editor_shows_the_message_and_keeps_the_draft(client, investigator):
    study = enrolled_study(member=investigator)
    before = PlanDraft.objects.values("revision", "content").get(study=study)
    content = complete_plan(title="This title must not be saved")
    content["investigators"] = [{"name": "Given Family", "orcid": ORCID_WRONG_CHECK_DIGIT}]
    client.force_login(investigator.user)
    response = client.post(
        reverse("plans:plan-edit", kwargs={"lab_slug": investigator.lab.slug, "code": study.code}),
        data=plan_post_data(content),
    )
    assert response.status_code == 200
    page = response.content.decode()
    assert "last character does not match its check digit" in page
    assert "the draft was not saved" in page
    assert ORCID_WRONG_CHECK_DIGIT in page, "what was typed is shown back for correcting"
    assert PlanDraft.objects.values("revision", "content").get(study=study) == before
