"""Form fields with the error messages Forebook wants people to see."""

import math

from django import forms
from django.core.exceptions import ValidationError

from ledger.core.identifiers import doi_problem, normalise_doi, orcid_problem


class FiniteFloatField(forms.FloatField):
    """A float that must be a real, finite number; NaN and infinity get their own message."""

    def to_python(self, value):
        if isinstance(value, str) and value.strip().lower().lstrip("+-") in {"nan", "inf", "infinity"}:
            raise ValidationError("Enter a finite number: NaN and infinity cannot be sealed.", code="not_finite")
        number = super().to_python(value)
        return number

    def validate(self, value):
        if value is not None and not math.isfinite(value):
            raise ValidationError("Enter a finite number: NaN and infinity cannot be sealed.", code="not_finite")
        super().validate(value)


class ProbabilityField(FiniteFloatField):
    """A probability strictly between 0 and 1 (alpha, power) or within [0, 1] (a p-value)."""

    def __init__(self, *, inclusive: bool = False, **kwargs):
        self.inclusive = inclusive
        kwargs.setdefault("widget", forms.NumberInput(attrs={"step": "any", "inputmode": "decimal"}))
        super().__init__(**kwargs)

    def validate(self, value):
        super().validate(value)
        if value is None:
            return
        if self.inclusive and not 0 <= value <= 1:
            raise ValidationError(f"A p-value lies between 0 and 1; {value:g} is outside that range.", code="range")
        if not self.inclusive and not 0 < value < 1:
            raise ValidationError(
                f"Enter a value between 0 and 1 (for example 0.05); {value:g} is outside that range.",
                code="range",
            )


class PositiveCountField(forms.IntegerField):
    """A whole number of participants or observations, at least 1."""

    default_error_messages = {"invalid": "Enter a whole number of participants, such as 120."}

    def __init__(self, **kwargs):
        kwargs.setdefault("min_value", 1)
        kwargs.setdefault("max_value", 100_000_000)
        kwargs.setdefault("widget", forms.NumberInput(attrs={"inputmode": "numeric"}))
        super().__init__(**kwargs)
        self.error_messages["min_value"] = "N must be a positive whole number (1 or more)."

    def to_python(self, value):
        if isinstance(value, str) and value.strip() and "." in value.strip():
            try:
                number = float(value)
            except ValueError:
                number = None
            if number is not None and not number.is_integer():
                raise ValidationError("N must be a whole number of participants, not a fraction.", code="fraction")
        return super().to_python(value)


class DegreesOfFreedomField(FiniteFloatField):
    """Degrees of freedom: positive, possibly fractional (Welch's t)."""

    def validate(self, value):
        super().validate(value)
        if value is not None and value <= 0:
            raise ValidationError("Degrees of freedom must be greater than 0.", code="df")


class OrcidField(forms.CharField):
    def __init__(self, **kwargs):
        kwargs.setdefault("max_length", 19)
        kwargs.setdefault("required", False)
        kwargs.setdefault(
            "widget", forms.TextInput(attrs={"placeholder": "0000-0000-0000-0000", "spellcheck": "false"})
        )
        super().__init__(**kwargs)

    def clean(self, value):
        value = super().clean(value).strip().upper()
        if value:
            problem = orcid_problem(value)
            if problem:
                raise ValidationError(problem, code="orcid")
        return value


class DoiField(forms.CharField):
    def __init__(self, **kwargs):
        kwargs.setdefault("max_length", 300)
        kwargs.setdefault("widget", forms.TextInput(attrs={"placeholder": "10.1234/abcd.5678", "spellcheck": "false"}))
        super().__init__(**kwargs)

    def clean(self, value):
        value = normalise_doi(super().clean(value))
        if value:
            problem = doi_problem(value)
            if problem:
                raise ValidationError(problem, code="doi")
        return value
