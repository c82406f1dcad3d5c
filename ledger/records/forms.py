"""The public upload form for checking a record."""

from django import forms
from django.conf import settings
from django.core.exceptions import ValidationError

PDF_MAGIC = b"%PDF-"


def upload_limit_text() -> str:
    return f"{settings.FOREBOOK_RECORD_UPLOAD_MAX_BYTES / (1024 * 1024):g} MB"


class RecordUploadForm(forms.Form):
    record = forms.FileField(
        label="Record PDF",
        help_text="The signed record PDF exported from Forebook. It is checked in memory and not kept.",
        widget=forms.ClearableFileInput(attrs={"accept": "application/pdf,.pdf"}),
    )

    def clean_record(self) -> bytes:
        upload = self.cleaned_data["record"]
        limit = settings.FOREBOOK_RECORD_UPLOAD_MAX_BYTES
        if upload.size > limit:
            raise ValidationError(
                f"The file is {upload.size / (1024 * 1024):.1f} MB; records up to {upload_limit_text()} can be checked "
                "here. Check larger ones with `python manage.py verify_record FILE`."
            )
        data = upload.read()
        if not data.startswith(PDF_MAGIC):
            raise ValidationError(
                "This is not a PDF file (it does not start with %PDF-). Upload the record PDF that Forebook exported, "
                "not a screenshot, a Word file or the JSON inside it."
            )
        return data
