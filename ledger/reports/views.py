"""The lab report page, its charts (SVG, for <img>), and the report files made in the background."""

from __future__ import annotations

from typing import Any

from django.contrib import messages
from django.http import Http404, HttpResponse, QueryDict
from django.shortcuts import redirect
from django.urls import reverse
from django.utils import timezone
from django.views.generic import TemplateView, View

from ledger.core.errors import ActionRefused
from ledger.core.exports import export_announce, export_download_response, export_status_response
from ledger.labs.mixins import LabMemberMixin
from ledger.labs.models import Lab
from ledger.reports import services
from ledger.reports.charts import CHARTS
from ledger.reports.forms import ReportExportForm, ReportForm, report_query
from ledger.reports.models import FORMAT_FILES, ReportFormat
from ledger.reports.selectors import LabReport, access_report_export, lab_report, recent_report_exports


def report_from_query(*, lab: Lab, query: QueryDict) -> tuple[ReportForm, LabReport]:
    """The report the query string asks for; with a mistake in it, the default report (the form says why)."""
    form = ReportForm(data=query or None)
    parameters = form.parameters() if form.is_valid() else ReportForm().parameters()
    return form, lab_report(lab=lab, today=timezone.localdate(), **parameters)


class LabReportView(LabMemberMixin, TemplateView):
    template_name = "reports/lab_report.html"

    def get_context_data(self, **kwargs: Any) -> dict[str, Any]:
        context = super().get_context_data(**kwargs)
        form, report = report_from_query(lab=self.lab, query=self.request.GET)
        query = report_query(sealed_from=report.sealed_from, sealed_to=report.sealed_to, prior_odds=report.prior_odds)
        charts = {
            name: {
                "src": reverse("reports:chart", kwargs={"lab_slug": self.lab.slug, "chart": name}) + query,
                "alt": alt,
            }
            for name, (alt, _draw) in CHARTS.items()
        }
        context.update(
            form=form,
            report=report,
            charts=charts,
            formats=ReportFormat.choices,
            exports=recent_report_exports(member=self.member, now=timezone.now()),
        )
        return context


class LabReportChartView(LabMemberMixin, View):
    """One chart of the report as image/svg+xml, for an <img> on the page (no inline SVG or style in the HTML)."""

    http_method_names = ["get"]

    def get(self, request, *args, chart: str, **kwargs):
        if chart not in CHARTS:
            raise Http404("No such chart.")
        _form, report = report_from_query(lab=self.lab, query=request.GET)
        response = HttpResponse(CHARTS[chart][1](report=report), content_type="image/svg+xml")
        response["Cache-Control"] = "private, no-store"
        # Opened on its own, the SVG may use its own <style> and nothing else.
        response["Content-Security-Policy"] = "default-src 'none'; style-src 'unsafe-inline'"
        return response


class ReportExportCreateView(LabMemberMixin, View):
    http_method_names = ["post"]

    def post(self, request, *args, **kwargs):
        form = ReportExportForm(data=request.POST)
        query = ""
        if not form.is_valid():
            problems = "; ".join(
                " ".join(errors) if name == "__all__" else f"{form.fields[name].label}: {' '.join(errors)}"
                for name, errors in form.errors.items()
            )
            messages.error(request, f"No report file was requested. {problems}")
        else:
            parameters = form.parameters()
            query = report_query(**parameters)
            try:
                export = services.report_export_request(
                    member=self.member, file_format=form.cleaned_data["file_format"], **parameters
                )
            except ActionRefused as refusal:
                messages.error(request, refusal.message)
            else:
                export_announce(
                    request=request,
                    export=export,
                    what="report",
                    preparing="The report file is being prepared; this page shows when it is ready.",
                )
        return redirect(reverse("reports:lab", kwargs={"lab_slug": self.lab.slug}) + query + "#report-exports")


class ReportExportView(LabMemberMixin, View):
    http_method_names = ["get"]

    def resolve_objects(self, **kwargs: Any) -> None:
        self.export = access_report_export(member=self.member, code=kwargs["export_code"])


class ReportExportStatusView(ReportExportView):
    """What the report page polls (static/js/forebook.js) until the file is ready or failed."""

    def get(self, request, *args, **kwargs):
        arguments = {"lab_slug": self.lab.slug, "export_code": self.export.code}
        return export_status_response(export=self.export, download_url=reverse("reports:download", kwargs=arguments))


class ReportExportDownloadView(ReportExportView):
    def get(self, request, *args, **kwargs):
        suffix, media_type = FORMAT_FILES[ReportFormat(self.export.file_format)]
        return export_download_response(
            export=self.export,
            filename=f"{self.lab.slug}-report-{self.export.created_at:%Y%m%d-%H%M}{suffix}",
            content_type=media_type,
            what="report",
            where="the report page",
        )
