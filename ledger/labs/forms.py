from django import forms
from django.contrib.auth import get_user_model
from django.contrib.auth.forms import UserCreationForm

from ledger.labs.models import Lab, Role


class LabCreateForm(forms.Form):
    name = forms.CharField(max_length=200)
    slug = forms.SlugField(
        label="Short name for addresses",
        max_length=50,
        required=False,
        help_text="Letters, digits and hyphens; made from the name when left empty.",
    )


class MemberInviteForm(forms.Form):
    email = forms.EmailField()
    name = forms.CharField(label="Full name", max_length=150, required=False)
    role = forms.ChoiceField(choices=Role.choices, initial=Role.INVESTIGATOR)


class MemberRoleForm(forms.Form):
    role = forms.ChoiceField(choices=Role.choices)


class LabSettingsForm(forms.Form):
    name = forms.CharField(max_length=200)
    sample_size_tolerance_pct = forms.IntegerField(
        label="Sample-size tolerance (%)",
        min_value=0,
        max_value=100,
        help_text=Lab._meta.get_field("sample_size_tolerance_pct").help_text,
    )
    overdue_grace_months = forms.IntegerField(
        label="Grace period for results (months)",
        min_value=0,
        max_value=120,
        help_text=Lab._meta.get_field("overdue_grace_months").help_text,
    )


class SignUpForm(UserCreationForm):
    email = forms.EmailField()
    first_name = forms.CharField(max_length=150, required=False)
    last_name = forms.CharField(max_length=150, required=False)

    class Meta(UserCreationForm.Meta):
        model = get_user_model()
        fields = ("username", "email", "first_name", "last_name")
