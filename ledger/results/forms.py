"""The result form: one row per hypothesis or outcome, plus what happened to the plan's rules."""

from django import forms
from django.core.exceptions import ValidationError

from ledger.core.fields import DegreesOfFreedomField, DoiField, FiniteFloatField, PositiveCountField, ProbabilityField
from ledger.plans.forms import TEXTAREA_SHORT, blank_choice
from ledger.plans.vocabulary import Direction, Multiplicity, OutcomeRole, Sides, TestFamily
from ledger.results.checks import reported_decimals
from ledger.results.content import UNPLANNED, initial_rows
from ledger.results.models import PublicationStatus, Verdict
from ledger.results.vocabulary import NEEDS_DF1, NEEDS_DF2, EffectKind, StatisticKind
from ledger.stats.errors import StatsInputError
from ledger.stats.pvalues import parse_reported_p

NUMBER = forms.NumberInput(attrs={"step": "any", "inputmode": "decimal"})
COUNT_FIELDS = ("events_1", "total_1", "events_2", "total_2")


class EventCountField(forms.IntegerField):
    """A number of participants with the event: a whole number, 0 allowed."""

    default_error_messages = {
        "invalid": "Enter a whole number of participants with the event, such as 12.",
        "min_value": "A count of events cannot be negative; enter 0 if nobody had the event.",
    }

    def __init__(self, **kwargs):
        kwargs.setdefault("min_value", 0)
        kwargs.setdefault("max_value", 100_000_000)
        kwargs.setdefault("widget", forms.NumberInput(attrs={"inputmode": "numeric"}))
        super().__init__(**kwargs)


class ResultRowForm(forms.Form):
    hypothesis = forms.ChoiceField(required=False, choices=())
    outcome = forms.ChoiceField(choices=())
    outcome_name = forms.CharField(
        label="Outcome name (not in the plan)",
        required=False,
        max_length=300,
    )
    reported_as = forms.ChoiceField(label="Reported as", choices=OutcomeRole.choices)
    direction = forms.ChoiceField(label="Direction tested", choices=Direction.choices)
    test_family = forms.ChoiceField(label="Test used", choices=blank_choice(TestFamily.choices))
    test_description = forms.CharField(label="Test details", required=False, max_length=2000)
    sides = forms.ChoiceField(choices=Sides.choices)
    alpha = ProbabilityField()
    multiplicity = forms.ChoiceField(label="Correction applied", choices=Multiplicity.choices)
    statistic_kind = forms.ChoiceField(label="Statistic", choices=StatisticKind.choices, required=False)
    statistic = FiniteFloatField(label="Value", required=False, widget=NUMBER)
    df1 = DegreesOfFreedomField(label="df", required=False, widget=NUMBER)
    df2 = DegreesOfFreedomField(label="df (denominator)", required=False, widget=NUMBER)
    p_reported = forms.CharField(
        label="p as reported",
        required=False,
        max_length=40,
        widget=forms.TextInput(attrs={"placeholder": "0.21, < .001, n.s.", "spellcheck": "false"}),
    )
    effect_kind = forms.ChoiceField(label="Effect size", choices=EffectKind.choices, required=False)
    effect_value = FiniteFloatField(label="Effect", required=False, widget=NUMBER)
    ci_low = FiniteFloatField(label="CI low", required=False, widget=NUMBER)
    ci_high = FiniteFloatField(label="CI high", required=False, widget=NUMBER)
    # An optional 2x2 table, for binary outcomes: group 1 is the group the effect is about
    # (e.g. the intervention), group 2 the comparison.
    events_1 = EventCountField(label="Events, group 1", required=False)
    total_1 = PositiveCountField(label="Size of group 1", required=False)
    events_2 = EventCountField(label="Events, group 2", required=False)
    total_2 = PositiveCountField(label="Size of group 2", required=False)
    n_analysed = PositiveCountField(label="N analysed")
    verdict = forms.ChoiceField(choices=Verdict.choices)
    comment = forms.CharField(required=False, max_length=5000, widget=TEXTAREA_SHORT)

    def __init__(self, *args, hypothesis_choices=(), outcome_choices=(), **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["hypothesis"].choices = [("", "— none —")] + list(hypothesis_choices)
        self.fields["outcome"].choices = list(outcome_choices) + [(UNPLANNED, "An outcome not in the plan")]

    def clean_p_reported(self):
        text = self.cleaned_data["p_reported"].strip()
        if text:
            try:
                parse_reported_p(text=text)
            except StatsInputError as error:
                raise ValidationError(str(error)) from error
        return text

    def clean(self):
        cleaned = super().clean()
        cleaned["statistic_decimals"] = reported_decimals(self.data.get(self.add_prefix("statistic"), "") or "")
        if cleaned.get("outcome") == UNPLANNED and not cleaned.get("outcome_name"):
            self.add_error("outcome_name", "Name the outcome that was not in the plan.")
        kind = cleaned.get("statistic_kind")
        if kind and self._missing(cleaned, "statistic"):
            self.add_error("statistic", "Enter the value of the statistic, or choose “none” as the statistic.")
        if kind in NEEDS_DF1 and self._missing(cleaned, "df1"):
            self.add_error("df1", f"A {StatisticKind(kind).label} statistic needs its degrees of freedom.")
        if kind in NEEDS_DF2 and self._missing(cleaned, "df2"):
            self.add_error("df2", "An F statistic needs the denominator degrees of freedom too.")
        if kind == StatisticKind.R and cleaned.get("statistic") is not None and not -1 < cleaned["statistic"] < 1:
            self.add_error("statistic", "A correlation lies strictly between -1 and 1.")
        low, high, value = cleaned.get("ci_low"), cleaned.get("ci_high"), cleaned.get("effect_value")
        if low is not None and high is not None:
            if low > high:
                self.add_error("ci_high", "The upper confidence limit is below the lower one.")
            elif value is not None and not low <= value <= high:
                self.add_error("effect_value", "The effect lies outside its own confidence interval.")
        if self._missing(cleaned, "ci_low") != self._missing(cleaned, "ci_high") and not (
            {"ci_low", "ci_high"} & self.errors.keys()
        ):
            self.add_error("ci_high" if high is None else "ci_low", "Give both confidence limits, or neither.")
        self._clean_counts(cleaned)
        return cleaned

    def _missing(self, cleaned, name: str) -> bool:
        """Left empty, as opposed to filled in wrongly (which already has its own message)."""
        return cleaned.get(name) is None and name not in self.errors

    def _clean_counts(self, cleaned):
        given = [name for name in COUNT_FIELDS if cleaned.get(name) is not None]
        if given and len(given) < len(COUNT_FIELDS) and not any(name in self.errors for name in COUNT_FIELDS):
            for name in COUNT_FIELDS:
                if name not in given:
                    self.add_error(
                        name, "Give all four numbers of the 2x2 table (events and size of each group), or none."
                    )
            return
        for group in ("1", "2"):
            events, total = cleaned.get(f"events_{group}"), cleaned.get(f"total_{group}")
            if events is not None and total is not None and events > total:
                self.add_error(
                    f"events_{group}", f"Group {group} has {total} participants, so it cannot have {events} events."
                )


class BaseResultRowFormSet(forms.BaseFormSet):
    def clean(self):
        if any(self.errors):
            return
        kept = [f for f in self.forms if f.cleaned_data and not self._should_delete_form(f)]
        if not kept:
            raise ValidationError("Report at least one result. A null result is a result: record it with its verdict.")


ResultRowFormSet = forms.formset_factory(
    ResultRowForm, formset=BaseResultRowFormSet, extra=0, can_delete=True, max_num=100, validate_max=True
)


class ResultReportForm(forms.Form):
    stopping_rule_followed = forms.TypedChoiceField(
        label="Was the stopping rule followed?",
        choices=[("yes", "Yes, as planned"), ("no", "No")],
        coerce=lambda value: value == "yes",
    )
    stopping_note = forms.CharField(
        label="What happened instead", required=False, max_length=5000, widget=TEXTAREA_SHORT
    )
    exclusions_as_planned = forms.TypedChoiceField(
        label="Were the exclusion rules applied as planned?",
        choices=[("yes", "Yes, as planned"), ("no", "No, they changed")],
        coerce=lambda value: value == "yes",
    )
    exclusions_applied = forms.CharField(
        label="Exclusions as applied",
        required=False,
        max_length=5000,
        widget=TEXTAREA_SHORT,
    )
    summary = forms.CharField(label="Summary (optional)", required=False, max_length=10000, widget=TEXTAREA_SHORT)
    confirm_checks = forms.BooleanField(
        label="I have checked the flagged p-values: seal them as reported, with the check's outcome.",
        required=False,
    )

    def clean(self):
        cleaned = super().clean()
        if cleaned.get("stopping_rule_followed") is False and not cleaned.get("stopping_note"):
            self.add_error("stopping_note", "Say how data collection actually stopped.")
        if cleaned.get("exclusions_as_planned") is False and not cleaned.get("exclusions_applied"):
            self.add_error("exclusions_applied", "Describe the exclusion rules that were actually applied.")
        return cleaned


class PublicationForm(forms.Form):
    status = forms.ChoiceField(choices=PublicationStatus.choices, widget=forms.RadioSelect)
    doi = DoiField(label="DOI", required=False)

    def clean(self):
        cleaned = super().clean()
        if cleaned.get("status") == PublicationStatus.PUBLISHED and not cleaned.get("doi") and "doi" not in self.errors:
            self.add_error("doi", "Give the DOI of the publication, like 10.1000/xyz123.")
        return cleaned


class ResultEditor:
    """The result rows and the report questions, bound and validated together."""

    def __init__(self, *, plan: dict, data=None):
        hypotheses = [(h["key"], f"{h['key']} · {h.get('statement', '')[:80]}") for h in plan.get("hypotheses", [])]
        outcomes = [(o["key"], f"{o['key']} · {o.get('name', '')} ({o.get('role')})") for o in plan.get("outcomes", [])]
        self.rows = ResultRowFormSet(
            data=data,
            initial=initial_rows(plan),
            prefix="rows",
            form_kwargs={"hypothesis_choices": hypotheses, "outcome_choices": outcomes},
        )
        self.report = ResultReportForm(
            data=data, prefix="report", initial={"stopping_rule_followed": "yes", "exclusions_as_planned": "yes"}
        )

    def is_valid(self) -> bool:
        return all([self.rows.is_valid(), self.report.is_valid()])

    def cleaned_rows(self) -> list[dict]:
        return [f.cleaned_data for f in self.rows.forms if f.cleaned_data and f not in self.rows.deleted_forms]


class FindingExplanationForm(forms.Form):
    identity = forms.CharField(max_length=200, widget=forms.HiddenInput)
    explanation = forms.CharField(max_length=10000, widget=TEXTAREA_SHORT)
