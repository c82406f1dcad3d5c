"""The research line form: what the line is about and which of the lab's studies it holds."""

from django import forms

from ledger.lines.models import EffectMeasure
from ledger.lines.selectors import line_study_choices


class LineForm(forms.Form):
    name = forms.CharField(max_length=200, help_text="The effect the studies test, in a few words.")
    description = forms.CharField(
        required=False,
        max_length=5000,
        widget=forms.Textarea(attrs={"rows": 3}),
        help_text="What counts as the same effect here, and why these studies belong together.",
    )
    measure = forms.ChoiceField(
        label="Effect measure",
        choices=EffectMeasure.choices,
        widget=forms.RadioSelect,
        help_text="Every study's primary result is converted to this measure before pooling.",
    )
    studies = forms.ModelMultipleChoiceField(
        queryset=None,
        required=False,
        to_field_name="code",
        widget=forms.CheckboxSelectMultiple,
        help_text="A study may be on several lines. Only sealed results are analysed.",
    )

    def __init__(self, *args, lab, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["studies"].queryset = line_study_choices(lab=lab)
        self.fields["studies"].label_from_instance = lambda study: (
            f"{study.code} · {study.title} ({study.get_state_display().lower()})"
        )
