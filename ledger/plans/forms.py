"""Forms for enrolling a study and editing its plan.

A draft may be saved incomplete: fields are optional here, and what sealing needs is checked by
``ledger.plans.content.plan_problems`` when the plan is reviewed. What is entered must still be
well-formed (finite numbers, valid ORCID iDs, dates in order) before it is kept.
"""

import re

from django import forms
from django.core.exceptions import ValidationError

from ledger.core.fields import FiniteFloatField, OrcidField, PositiveCountField, ProbabilityField
from ledger.plans import content as plan_content
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

TEXTAREA_SHORT = forms.Textarea(attrs={"rows": 2})
TEXTAREA = forms.Textarea(attrs={"rows": 4})
DATE_INPUT = forms.DateInput(attrs={"type": "date"}, format="%Y-%m-%d")
KEY_PATTERN = {"H": re.compile(r"^H[1-9]\d{0,3}$"), "O": re.compile(r"^O[1-9]\d{0,3}$")}


def blank_choice(choices) -> list[tuple[str, str]]:
    return [("", "—")] + [(value, label) for value, label in choices if value]


class StudyEnrolForm(forms.Form):
    title = forms.CharField(max_length=300, help_text="A working title; you can change it until the plan is sealed.")
    investigators = forms.ModelMultipleChoiceField(
        queryset=None,
        required=False,
        widget=forms.CheckboxSelectMultiple,
        help_text="Members who will draft, seal and report this study.",
    )

    def __init__(self, *args, lab, **kwargs):
        super().__init__(*args, **kwargs)
        from ledger.labs.selectors import investigator_candidates

        self.fields["investigators"].queryset = investigator_candidates(lab=lab)
        self.fields["investigators"].label_from_instance = lambda member: member.display_name


class PlanForm(forms.Form):
    title = forms.CharField(max_length=300)
    research_question = forms.CharField(required=False, widget=TEXTAREA, max_length=5000)
    arms = forms.CharField(
        label="Conditions or groups",
        required=False,
        widget=TEXTAREA_SHORT,
        max_length=5000,
        help_text="What each group or condition receives or does.",
    )
    allocation = forms.ChoiceField(choices=blank_choice(Allocation.choices), required=False)
    blinding = forms.ChoiceField(choices=blank_choice(Blinding.choices), required=False)
    planned_n = PositiveCountField(label="Planned N (total)", required=False)
    stopping_rule = forms.CharField(
        required=False,
        widget=TEXTAREA_SHORT,
        max_length=5000,
        help_text="When data collection stops: at the planned N, a date, a sequential rule …",
    )
    power_design = forms.ChoiceField(label="Power computed for", choices=PowerDesign.choices, required=False)
    effect_size = FiniteFloatField(
        label="Target effect size",
        required=False,
        widget=forms.NumberInput(attrs={"step": "any", "inputmode": "decimal"}),
        help_text="On the scale of the design: d, h, r, f or w.",
    )
    ss_alpha = ProbabilityField(label="Alpha", required=False)
    target_power = ProbabilityField(label="Target power", required=False)
    ss_sides = forms.ChoiceField(label="Sides", choices=Sides.choices, required=False)
    groups = forms.IntegerField(label="Groups (ANOVA)", min_value=2, max_value=1000, required=False)
    chi_df = forms.IntegerField(label="Degrees of freedom (chi-square)", min_value=1, max_value=10000, required=False)
    justification = forms.CharField(
        label="Justification in words",
        required=False,
        widget=TEXTAREA_SHORT,
        max_length=5000,
        help_text="Where the target effect comes from (pilot data, earlier studies, smallest effect of interest).",
    )
    exclusion_rules = forms.CharField(required=False, widget=TEXTAREA, max_length=5000)
    support_criterion = forms.CharField(
        label="What result counts as support",
        required=False,
        widget=TEXTAREA_SHORT,
        max_length=5000,
    )
    collection_start = forms.DateField(label="Planned start of data collection", required=False, widget=DATE_INPUT)
    completion = forms.DateField(label="Expected completion (results due)", required=False, widget=DATE_INPUT)
    embargo_until = forms.DateField(
        label="Embargo until",
        required=False,
        widget=DATE_INPUT,
        help_text="Optional: the plan's content stays out of public records until this date.",
    )

    def clean(self):
        cleaned = super().clean()
        start, completion = cleaned.get("collection_start"), cleaned.get("completion")
        if start and completion and completion < start:
            self.add_error("completion", "The expected completion date is before the planned start of data collection.")
        return cleaned


SAMPLE_SIZE_FORM_FIELDS = (
    "planned_n",
    "power_design",
    "effect_size",
    "ss_alpha",
    "target_power",
    "ss_sides",
    "groups",
    "chi_df",
)


class PowerPreviewForm(forms.Form):
    """The sample-size inputs alone, as the edit page sends them for the live power figures."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, prefix="plan", **kwargs)
        for name in SAMPLE_SIZE_FORM_FIELDS:
            self.fields[name] = PlanForm.base_fields[name]


class KeyedForm(forms.Form):
    """A list item with a stable key (H1, O2 …) that survives reordering and amendments."""

    key_prefix = ""
    key = forms.CharField(required=False, widget=forms.HiddenInput)

    def clean_key(self):
        key = self.cleaned_data["key"].strip().upper()
        if key and not KEY_PATTERN[self.key_prefix].match(key):
            raise ValidationError(f"Keys look like {self.key_prefix}1, {self.key_prefix}2 …")
        return key


class OutcomeForm(KeyedForm):
    key_prefix = "O"
    name = forms.CharField(max_length=300)
    role = forms.ChoiceField(choices=OutcomeRole.choices, initial=OutcomeRole.PRIMARY)
    measure = forms.CharField(label="How it is measured", required=False, max_length=2000, widget=TEXTAREA_SHORT)
    unit = forms.CharField(required=False, max_length=100)
    timepoint = forms.CharField(label="Time point", required=False, max_length=200)


class HypothesisForm(KeyedForm):
    key_prefix = "H"
    statement = forms.CharField(max_length=3000, widget=TEXTAREA_SHORT)
    direction = forms.ChoiceField(choices=Direction.choices)
    outcome = forms.ChoiceField(label="Tested on outcome", required=False, choices=())
    test_family = forms.ChoiceField(label="Test", choices=blank_choice(TestFamily.choices), required=False)
    test_description = forms.CharField(label="Test details", required=False, max_length=2000)
    alpha = ProbabilityField(required=False, initial=0.05)
    sides = forms.ChoiceField(choices=Sides.choices, initial=Sides.TWO)
    multiplicity = forms.ChoiceField(
        label="Multiplicity correction", choices=Multiplicity.choices, initial=Multiplicity.NONE
    )
    covariates = forms.CharField(required=False, max_length=2000)

    def __init__(self, *args, outcome_choices=(), **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["outcome"].choices = [("", "—")] + list(outcome_choices)

    def clean(self):
        cleaned = super().clean()
        if cleaned.get("test_family") == TestFamily.OTHER and not cleaned.get("test_description"):
            self.add_error("test_description", "Describe the test when you choose “Other”.")
        return cleaned


class InvestigatorForm(forms.Form):
    name = forms.CharField(max_length=200)
    orcid = OrcidField(label="ORCID iD")


class BaseKeyedFormSet(forms.BaseFormSet):
    """Checks that keys are unique; blank keys are filled in by the content builder."""

    def clean(self):
        if any(self.errors):
            return
        seen = set()
        for form in self.forms:
            if self.can_delete and self._should_delete_form(form):
                continue
            key = form.cleaned_data.get("key")
            if key and key in seen:
                raise ValidationError(f"Two items share the key {key}; reload the page and try again.")
            seen.add(key)


OutcomeFormSet = forms.formset_factory(
    OutcomeForm, formset=BaseKeyedFormSet, extra=0, can_delete=True, max_num=50, validate_max=True
)
HypothesisFormSet = forms.formset_factory(
    HypothesisForm, formset=BaseKeyedFormSet, extra=0, can_delete=True, max_num=50, validate_max=True
)
InvestigatorFormSet = forms.formset_factory(InvestigatorForm, extra=0, can_delete=True, max_num=100, validate_max=True)


class SealForm(forms.Form):
    revision = forms.IntegerField(widget=forms.HiddenInput)
    confirm = forms.BooleanField(
        label="I have read the plan above and understand that once sealed it cannot be changed, only amended "
        "before data collection starts.",
    )
    acknowledge_warnings = forms.BooleanField(required=False)
    amendment_reason = forms.CharField(required=False, widget=TEXTAREA_SHORT, max_length=5000)

    def __init__(self, *args, is_amendment: bool, has_warnings: bool, **kwargs):
        super().__init__(*args, **kwargs)
        if is_amendment:
            self.fields["amendment_reason"].required = True
            self.fields["amendment_reason"].label = "Why is the plan being amended?"
        else:
            del self.fields["amendment_reason"]
        if has_warnings:
            self.fields["acknowledge_warnings"].required = True
            self.fields["acknowledge_warnings"].label = "Seal anyway: the warnings above are sealed with the plan."
        else:
            del self.fields["acknowledge_warnings"]


class CollectionStartForm(forms.Form):
    started_on = forms.DateField(
        label="Data collection started on",
        widget=DATE_INPUT,
        help_text="The real first day of data collection, even if it was before the plan was sealed.",
    )


class WithdrawForm(forms.Form):
    reason = forms.CharField(
        widget=TEXTAREA_SHORT, max_length=5000, help_text="Sealed with the withdrawal and shown on the study."
    )


class PlanEditor:
    """The plan form and its three lists, bound and validated together."""

    def __init__(self, *, data=None, content: dict | None = None):
        content = content or plan_content.empty_content()
        initial_outcomes = content.get("outcomes") or [{"key": "O1", "role": "primary"}]
        initial_hypotheses = content.get("hypotheses") or [{"key": "H1", "alpha": 0.05, "sides": "two"}]
        self.plan = PlanForm(data=data, initial=plan_content.plan_initial(content), prefix="plan")
        self.outcomes = OutcomeFormSet(data=data, initial=initial_outcomes, prefix="outcomes")
        choices = self._bound_outcome_choices() if data is not None else plan_content.outcome_choices(initial_outcomes)
        self.hypotheses = HypothesisFormSet(
            data=data, initial=initial_hypotheses, prefix="hypotheses", form_kwargs={"outcome_choices": choices}
        )
        self.investigators = InvestigatorFormSet(
            data=data, initial=content.get("investigators") or [], prefix="investigators"
        )

    def _bound_outcome_choices(self) -> list[tuple[str, str]]:
        choices = []
        for form in self.outcomes.forms:
            key = (form.data.get(form.add_prefix("key")) or "").strip().upper()
            if not key or form.data.get(form.add_prefix("DELETE")):
                continue
            name = form.data.get(form.add_prefix("name")) or "unnamed"
            choices.append((key, f"{key} · {name}"))
        return choices

    def is_valid(self) -> bool:
        results = [part.is_valid() for part in (self.plan, self.outcomes, self.hypotheses, self.investigators)]
        return all(results)

    def content(self) -> dict:
        def kept(formset):
            return [
                form.cleaned_data for form in formset.forms if form.cleaned_data and form not in formset.deleted_forms
            ]

        return plan_content.content_from_forms(
            plan=self.plan.cleaned_data,
            outcomes=kept(self.outcomes),
            hypotheses=kept(self.hypotheses),
            investigators=kept(self.investigators),
        )
