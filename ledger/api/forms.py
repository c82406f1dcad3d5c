from django import forms

from ledger.plans.forms import DATE_INPUT


class ApiTokenCreateForm(forms.Form):
    name = forms.CharField(
        max_length=100,
        help_text="Where the token will be used, so you can tell your tokens apart (e.g. “analysis laptop”).",
    )
    expires_on = forms.DateField(
        label="Works until",
        required=False,
        widget=DATE_INPUT,
        help_text="The token stops working after this day (UTC). Leave empty to keep it until you revoke it.",
    )
