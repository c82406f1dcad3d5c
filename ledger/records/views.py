"""Record pages: start an export, poll its status, download it; and the public check of a record."""

from __future__ import annotations

from django.conf import settings
from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect
from django.urls import reverse
from django.views.generic import FormView, View

from ledger.chain import checkpoints
from ledger.core.errors import ActionRefused
from ledger.core.exports import export_announce, export_download_response, export_status_response
from ledger.labs.mixins import StudyMixin
from ledger.records import services, signing, verify
from ledger.records.forms import RecordUploadForm, upload_limit_text
from ledger.records.selectors import access_record_export


class RecordExportCreateView(StudyMixin, View):
    http_method_names = ["post"]

    def post(self, request, *args, **kwargs):
        try:
            export = services.record_export_request(member=self.member, study=self.study)
        except ActionRefused as refusal:
            messages.error(request, refusal.message)
        else:
            export_announce(
                request=request,
                export=export,
                what="record",
                preparing="The signed record is being prepared; this page shows when it is ready.",
            )
        return redirect(self.study.get_absolute_url() + "#record-exports")


class RecordExportView(StudyMixin, View):
    http_method_names = ["get"]

    def resolve_objects(self, **kwargs):
        super().resolve_objects(**kwargs)
        self.export = access_record_export(member=self.member, study=self.study, code=kwargs["export_code"])


class RecordExportStatusView(RecordExportView):
    """What the study page polls (static/js/forebook.js) until the export is ready or failed."""

    def get(self, request, *args, **kwargs):
        arguments = {"lab_slug": self.lab.slug, "code": self.study.code, "export_code": self.export.code}
        return export_status_response(export=self.export, download_url=reverse("records:download", kwargs=arguments))


class RecordExportDownloadView(RecordExportView):
    def get(self, request, *args, **kwargs):
        return export_download_response(
            export=self.export,
            filename=f"{self.study.code}-record-{self.export.created_at:%Y%m%d-%H%M}.pdf",
            content_type="application/pdf",
            what="record",
            where="the study page",
        )


def instance_keys() -> tuple[list, str | None]:
    """The instance's trusted record certificate and log verifier key, as far as it has them."""
    try:
        trust_roots = signing.record_trust_roots()
    except signing.SigningIdentityError:
        trust_roots = []
    try:
        vkey = checkpoints.log_verifier().to_key_string()
    except checkpoints.LogKeyMissing:
        vkey = None
    return trust_roots, vkey


class RecordVerifyView(FormView):
    """Public: an editor uploads a record and reads every check in words. No sign-in."""

    template_name = "records/verify.html"
    form_class = RecordUploadForm

    def post(self, request, *args, **kwargs):
        # Refuse an oversized body before Django reads it into memory or a temporary file.
        declared = request.META.get("CONTENT_LENGTH") or "0"
        if declared.isdigit() and int(declared) > settings.FOREBOOK_RECORD_UPLOAD_MAX_BYTES + 64 * 1024:
            problem = (
                f"The upload is larger than {upload_limit_text()}, the most this page checks. Check the file with "
                "`python manage.py verify_record FILE` instead."
            )
            return self.render_to_response(self.get_context_data(upload_problem=problem), status=413)
        return super().post(request, *args, **kwargs)

    def form_valid(self, form):
        trust_roots, vkey = instance_keys()
        report = verify.record_verify(pdf=form.cleaned_data["record"], trust_roots=trust_roots, log_vkey=vkey)
        return self.render_to_response(self.get_context_data(form=RecordUploadForm(), report=report, vkey=vkey))

    def get_context_data(self, **kwargs):
        context = super().get_context_data(**kwargs)
        context["upload_limit"] = upload_limit_text()
        return context


class RecordCertificateView(View):
    """Public: the certificate record PDFs are signed with, to pass to `verify_record --cert`."""

    http_method_names = ["get", "head"]

    def get(self, request, *args, **kwargs):
        try:
            certificates = signing.record_certificates()
        except signing.SigningIdentityError:
            return HttpResponse(
                "This instance has no record signing certificate yet.\n",
                status=404,
                content_type="text/plain; charset=utf-8",
            )
        pem = "".join(signing.certificate_pem(certificate=certificate) for certificate in certificates)
        response = HttpResponse(pem, content_type="application/x-pem-file")
        response["Access-Control-Allow-Origin"] = "*"
        return response
